/* src/io/out_file.c - output files written to a temporary beside the target and renamed over a regular file only */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "../../common/hb_status.h"
#include "io.h"

struct hb_out {
	char *path;  /* as given */
	char *tmp;   /* NULL for standard output */
	FILE *f;
};

/* What stands at the path when it is not a regular file, or NULL. */
static const char *kind_refused(mode_t m)
{
	if (S_ISREG(m))
		return NULL;
	if (S_ISLNK(m))
		return "a symbolic link";
	if (S_ISFIFO(m))
		return "a FIFO";
	if (S_ISCHR(m) || S_ISBLK(m))
		return "a device";
	if (S_ISDIR(m))
		return "a directory";
	if (S_ISSOCK(m))
		return "a socket";
	return "not a regular file";
}

/* HB_OK when nothing or a regular file is at path (*mode then its
 * permissions, or -1 for nothing); HB_ERR_ARG when something else is. */
static int check_target(const char *path, int *mode, char *err, size_t errlen)
{
	struct stat st;
	*mode = -1;
	if (lstat(path, &st) != 0) {
		if (errno == ENOENT)
			return HB_OK;
		snprintf(err, errlen, "cannot write %s: %s", path, strerror(errno));
		return HB_ERR_IO;
	}
	const char *what = kind_refused(st.st_mode);
	if (what) {
		snprintf(err, errlen, "%s is %s: only a regular file is replaced (give a file path)", path, what);
		return HB_ERR_ARG;
	}
	*mode = (int)(st.st_mode & 07777);
	return HB_OK;
}

int hb_out_open(const char *path, hb_out **out, char *err, size_t errlen)
{
	*out = NULL;
	if (!path || !*path) {
		snprintf(err, errlen, "empty output path");
		return HB_ERR_ARG;
	}
	hb_out *o = calloc(1, sizeof *o);
	if (!o || !(o->path = strdup(path))) {
		free(o);
		snprintf(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	if (strcmp(path, "-") == 0) {
		o->f = stdout;
		*out = o;
		return HB_OK;
	}
	int mode;
	int rc = check_target(path, &mode, err, errlen);
	if (rc != HB_OK)
		goto fail;
	/* ".NAME.XXXXXX" in the target's own directory: rename() is atomic
	 * only within one file system. */
	const char *slash = strrchr(path, '/');
	size_t dirlen = slash ? (size_t)(slash - path) + 1 : 0;
	const char *base = slash ? slash + 1 : path;
	if (!*base) {
		snprintf(err, errlen, "%s is a directory: only a regular file is replaced (give a file path)", path);
		rc = HB_ERR_ARG;
		goto fail;
	}
	size_t cap = strlen(path) + 16;
	o->tmp = malloc(cap);
	if (!o->tmp) {
		snprintf(err, errlen, "out of memory");
		rc = HB_ERR_NOMEM;
		goto fail;
	}
	snprintf(o->tmp, cap, "%.*s.%s.XXXXXX", (int)dirlen, path, base);
	int fd = mkstemp(o->tmp);
	if (fd < 0) {
		snprintf(err, errlen, "cannot write %s: %s", path, strerror(errno));
		free(o->tmp);
		o->tmp = NULL;
		rc = HB_ERR_IO;
		goto fail;
	}
	/* The permissions a plain fopen would give (or the replaced file's),
	 * not mkstemp's owner-only 0600. */
	if (mode < 0) {
		mode_t mask = umask(0);
		umask(mask);
		mode = (int)(0666 & ~mask);
	}
	if (fchmod(fd, (mode_t)mode) != 0 || !(o->f = fdopen(fd, "w"))) {
		snprintf(err, errlen, "cannot write %s: %s", path, strerror(errno));
		close(fd);
		rc = HB_ERR_IO;
		goto fail;
	}
	*out = o;
	return HB_OK;
fail:
	hb_out_abort(o);
	return rc;
}

FILE *hb_out_stream(hb_out *o)
{
	return o ? o->f : NULL;
}

const char *hb_out_path(const hb_out *o)
{
	return o ? o->path : NULL;
}

static void out_free(hb_out *o)
{
	free(o->tmp);
	free(o->path);
	free(o);
}

/* Flushes, syncs and closes the temporary file (once). */
static int close_tmp(hb_out *o, char *err, size_t errlen)
{
	if (!o->f)
		return HB_OK;
	int failed = fflush(o->f) != 0 || ferror(o->f) || fsync(fileno(o->f)) != 0;
	int saved = errno;
	/* fclose frees the stream whatever it returns: never closed twice */
	if (fclose(o->f) != 0 && !failed) {
		failed = 1;
		saved = errno;
	}
	o->f = NULL;
	if (failed) {
		snprintf(err, errlen, "cannot write %s: %s", o->path, strerror(saved));
		return HB_ERR_IO;
	}
	return HB_OK;
}

int hb_out_close_data(hb_out *o, char *err, size_t errlen)
{
	if (!o)
		return HB_ERR_ARG;
	if (!o->tmp) {
		if (fflush(stdout) != 0 || ferror(stdout)) {
			snprintf(err, errlen, "write to standard output failed: %s", strerror(errno));
			return HB_ERR_IO;
		}
		return HB_OK;
	}
	return close_tmp(o, err, errlen);
}

const char *hb_out_data_path(const hb_out *o)
{
	return o ? o->tmp : NULL;
}

int hb_out_commit(hb_out *o, char *err, size_t errlen)
{
	if (!o)
		return HB_ERR_ARG;
	int rc = HB_OK;
	if (!o->tmp) {
		/* standard output: in place; its close is main's job */
		if (fflush(stdout) != 0 || ferror(stdout)) {
			snprintf(err, errlen, "write to standard output failed: %s", strerror(errno));
			rc = HB_ERR_IO;
		}
		out_free(o);
		return rc;
	}
	rc = close_tmp(o, err, errlen);
	if (rc != HB_OK)
		goto done;
	/* Checked again just before the rename: something put at the path
	 * meanwhile is refused all the same. */
	int mode;
	rc = check_target(o->path, &mode, err, errlen);
	if (rc != HB_OK)
		goto done;
	if (rename(o->tmp, o->path) != 0) {
		snprintf(err, errlen, "cannot rename %s to %s: %s", o->tmp, o->path, strerror(errno));
		rc = HB_ERR_IO;
	}
done:
	if (rc != HB_OK)
		unlink(o->tmp);
	out_free(o);
	return rc;
}

void hb_out_abort(hb_out *o)
{
	if (!o)
		return;
	if (o->tmp) {
		if (o->f)
			fclose(o->f);
		unlink(o->tmp);
	}
	out_free(o);
}
