/* drivers/profile_search.c - where profiles are looked for, found by name or path, and matched to an instrument's identity */
#include <dirent.h>
#include <errno.h>
#include <limits.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "../common/hb_text.h"
#include "profile_internal.h"

#ifndef HB_PROFILE_DIR
#define HB_PROFILE_DIR "/usr/local/share/henrybench/profiles"
#endif

/* ------------------------------------------------------------------ */
/* search path, lookup and matching                                    */
/* ------------------------------------------------------------------ */

#define MAX_DIRS 32

typedef struct dir_list {
	char *dirs[MAX_DIRS];
	size_t count;
} dir_list;

static void dirs_free(dir_list *d)
{
	for (size_t i = 0; i < d->count; i++)
		free(d->dirs[i]);
	d->count = 0;
}

static bool is_dir(const char *path)
{
	struct stat st;
	return stat(path, &st) == 0 && S_ISDIR(st.st_mode);
}

static int dirs_add(dir_list *d, const char *dir, size_t len, bool must_exist)
{
	if (len == 0 || d->count >= MAX_DIRS)
		return HB_OK;
	char *copy = strndup(dir, len);
	if (!copy)
		return HB_ERR_NOMEM;
	char resolved[PATH_MAX];
	if (realpath(copy, resolved)) {
		free(copy);
		copy = strdup(resolved);
		if (!copy)
			return HB_ERR_NOMEM;
	} else if (must_exist) {
		free(copy);
		return HB_OK;
	}
	for (size_t i = 0; i < d->count; i++) {
		if (strcmp(d->dirs[i], copy) == 0) {
			free(copy);
			return HB_OK;
		}
	}
	d->dirs[d->count++] = copy;
	return HB_OK;
}

static int dirs_build(dir_list *d)
{
	d->count = 0;
	const char *env = getenv("HENRYBENCH_PROFILE_PATH");
	int rc = HB_OK;
	if (env) {
		for (const char *s = env; rc == HB_OK;) {
			const char *colon = strchr(s, ':');
			size_t len = colon ? (size_t)(colon - s) : strlen(s);
			rc = dirs_add(d, s, len, false);
			if (!colon)
				break;
			s = colon + 1;
		}
	}
	if (rc == HB_OK)
		rc = dirs_add(d, HB_PROFILE_DIR, strlen(HB_PROFILE_DIR), true);
	/* So ./henrybench, build/henrybench and build/tests/test_x all find
	 * the profiles of the source tree they were built from. */
	char exe[PATH_MAX];
	ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
	if (rc == HB_OK && n > 0) {
		exe[n] = '\0';
		char *slash = strrchr(exe, '/');
		for (int up = 0; up < 3 && slash && rc == HB_OK; up++) {
			*slash = '\0';
			char cand[PATH_MAX + 32];
			snprintf(cand, sizeof cand, "%s/drivers/profiles", exe[0] ? exe : "");
			if (is_dir(cand))
				rc = dirs_add(d, cand, strlen(cand), true);
			/* An installed tree moved elsewhere (DESTDIR, another PREFIX):
			 * bin/henrybench next to share/henrybench/profiles. */
			snprintf(cand, sizeof cand, "%s/share/henrybench/profiles", exe[0] ? exe : "");
			if (up == 1 && rc == HB_OK && is_dir(cand))
				rc = dirs_add(d, cand, strlen(cand), true);
			slash = strrchr(exe, '/');
		}
	}
	if (rc < 0)
		dirs_free(d);
	return rc;
}

int hb_profile_search_path(char *buf, size_t cap)
{
	dir_list d;
	int rc = dirs_build(&d);
	if (rc < 0)
		return rc;
	size_t used = 0;
	if (cap)
		buf[0] = '\0';
	for (size_t i = 0; i < d.count; i++) {
		int n = snprintf(buf + used, cap - used, "%s%s", i ? ":" : "", d.dirs[i]);
		if (n < 0 || (size_t)n >= cap - used) {
			rc = HB_ERR_ARG;
			break;
		}
		used += (size_t)n;
	}
	dirs_free(&d);
	return rc;
}

static bool looks_like_path(const char *s)
{
	size_t len = strlen(s);
	return strchr(s, '/') || (len > 4 && strcmp(s + len - 4, ".ini") == 0);
}

int hb_profile_find(const char *name_or_path, hb_profile **out, char *err, size_t errlen)
{
	*out = NULL;
	if (!name_or_path || !*name_or_path) {
		hb_set_err(err, errlen, "empty profile name");
		return HB_ERR_ARG;
	}
	if (looks_like_path(name_or_path))
		return hb_profile_load(name_or_path, out, err, errlen);
	dir_list d;
	int rc = dirs_build(&d);
	if (rc < 0) {
		hb_set_err(err, errlen, "out of memory");
		return rc;
	}
	rc = HB_ERR_NOTFOUND;
	for (size_t i = 0; i < d.count; i++) {
		char path[PATH_MAX + 300];
		snprintf(path, sizeof path, "%s/%s.ini", d.dirs[i], name_or_path);
		if (access(path, F_OK) == 0) {
			rc = hb_profile_load(path, out, err, errlen);
			break;
		}
	}
	if (rc == HB_ERR_NOTFOUND) {
		char sp[2048];
		if (hb_profile_search_path(sp, sizeof sp) < 0)
			snprintf(sp, sizeof sp, "(too long to show)");
		hb_set_err(err, errlen, "profile '%s' not found (searched %s)", name_or_path, *sp ? sp : "nothing");
	}
	dirs_free(&d);
	return rc;
}

static int cmp_names(const void *a, const void *b)
{
	return strcmp(*(char *const *)a, *(char *const *)b);
}

/* The .ini names in one directory, sorted so matching does not depend on
 * the order the file system lists them. */
static int list_ini(const char *dir, char ***names, size_t *count)
{
	*names = NULL;
	*count = 0;
	DIR *dh = opendir(dir);
	if (!dh)
		return HB_OK; /* a missing directory on the path is not an error */
	size_t cap = 0;
	int rc = HB_OK;
	struct dirent *de;
	while ((de = readdir(dh))) {
		size_t len = strlen(de->d_name);
		if (len <= 4 || strcmp(de->d_name + len - 4, ".ini") != 0 || de->d_name[0] == '.')
			continue;
		if (*count == cap) {
			cap = cap ? cap * 2 : 16;
			char **grown = realloc(*names, cap * sizeof **names);
			if (!grown) {
				rc = HB_ERR_NOMEM;
				break;
			}
			*names = grown;
		}
		(*names)[*count] = strdup(de->d_name);
		if (!(*names)[*count]) {
			rc = HB_ERR_NOMEM;
			break;
		}
		(*count)++;
	}
	closedir(dh);
	if (*count)
		qsort(*names, *count, sizeof **names, cmp_names);
	return rc;
}

static void names_free(char **names, size_t count)
{
	for (size_t i = 0; i < count; i++)
		free(names[i]);
	free(names);
}

int hb_profile_match(hb_instrument_kind kind, const hb_idn *idn, hb_profile **out, char *err, size_t errlen)
{
	*out = NULL;
	dir_list d;
	int rc = dirs_build(&d);
	if (rc < 0) {
		hb_set_err(err, errlen, "out of memory");
		return rc;
	}
	hb_profile *best = NULL;
	/* File names seen in earlier directories shadow later ones, so a user
	 * copy of generic-lcr.ini replaces the installed one. */
	char **seen = NULL;
	size_t nseen = 0, capseen = 0;
	for (size_t i = 0; i < d.count && rc == HB_OK; i++) {
		char **names;
		size_t count;
		rc = list_ini(d.dirs[i], &names, &count);
		for (size_t j = 0; j < count && rc == HB_OK; j++) {
			bool shadowed = false;
			for (size_t k = 0; k < nseen; k++)
				shadowed |= strcmp(seen[k], names[j]) == 0;
			if (shadowed)
				continue;
			if (nseen == capseen) {
				capseen = capseen ? capseen * 2 : 16;
				char **grown = realloc(seen, capseen * sizeof *seen);
				if (!grown) {
					rc = HB_ERR_NOMEM;
					break;
				}
				seen = grown;
			}
			seen[nseen] = strdup(names[j]);
			if (!seen[nseen]) {
				rc = HB_ERR_NOMEM;
				break;
			}
			nseen++;
			char path[PATH_MAX + 300];
			snprintf(path, sizeof path, "%s/%s", d.dirs[i], names[j]);
			hb_profile *p;
			/* A broken profile on the path is skipped with a warning
			 * naming file:line: one bad file must not block every
			 * instrument, and saying so keeps the mistake visible. */
			char why[512];
			rc = hb_profile_load(path, &p, why, sizeof why);
			if (rc == HB_ERR_NOMEM)
				break;
			if (rc < 0) {
				fprintf(stderr, "henrybench: warning: profile skipped: %s\n", why);
				rc = HB_OK;
				continue;
			}
			int m = p->kind == kind ? hb_profile_match_check(p, idn, why, sizeof why) : 0;
			if (m == HB_ERR_NOMEM) {
				hb_profile_free(p);
				rc = m;
				break;
			}
			if (m < 0)
				fprintf(stderr, "henrybench: warning: profile skipped: %s\n", why);
			if (m == 1 && (!best || p->priority > best->priority)) {
				hb_profile_free(best);
				best = p;
			} else {
				hb_profile_free(p);
			}
		}
		names_free(names, count);
	}
	names_free(seen, nseen);
	dirs_free(&d);
	if (rc < 0) {
		if (rc == HB_ERR_NOMEM)
			hb_set_err(err, errlen, "out of memory");
		hb_profile_free(best);
		return rc;
	}
	if (best) {
		*out = best;
		return HB_OK;
	}
	return hb_profile_find(kind == HB_KIND_LCR ? "generic-lcr" : "generic-supply", out, err, errlen);
}
