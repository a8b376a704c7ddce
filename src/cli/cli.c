/* src/cli/cli.c - options every command shares (--db, --trace) and the one-line error printer */
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

hb_global_opts hb_global;
static FILE *trace_file_owned;

/* A message names the value it refuses, and a value typed or read from a file may hold terminal
 * escapes or line breaks: control characters (C0, DEL, C1 in UTF-8) go out as \xNN, so the
 * message is one line and the terminal shows what was typed instead of obeying it. */
static void put_visible(const char *s, FILE *out)
{
	for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
		if (*p < 0x20 || *p == 0x7f)
			fprintf(out, "\\x%02x", *p);
		else if (*p == 0xc2 && p[1] >= 0x80 && p[1] <= 0x9f)
			fprintf(out, "\\u%04x", *++p);
		else
			fputc(*p, out);
	}
}

void hb_cli_error(const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	char small[1024];
	va_list again;
	va_copy(again, ap);
	int n = vsnprintf(small, sizeof small, fmt, ap);
	/* a long message is formatted whole, never cut */
	char *msg = n >= (int)sizeof small ? malloc((size_t)n + 1) : NULL;
	if (msg)
		vsnprintf(msg, (size_t)n + 1, fmt, again);
	va_end(again);
	va_end(ap);
	fputs("henrybench: ", stderr);
	put_visible(msg ? msg : small, stderr);
	fputc('\n', stderr);
	free(msg);
}

int hb_cli_global_option(const char *name, const char *value)
{
	if (strcmp(name, "db") == 0) {
		if (!value || !*value) {
			hb_cli_error("--db needs a PATH");
			return -1;
		}
		hb_global.db_path = value;
		return 1;
	}
	if (strcmp(name, "trace") == 0) {
		if (!value || !*value || strcmp(value, "-") == 0) {
			hb_global.trace = stderr;
			return 1;
		}
		FILE *f = fopen(value, "a");
		if (!f) {
			hb_cli_error("--trace=%s: cannot open: %s", value, strerror(errno));
			return -1;
		}
		setvbuf(f, NULL, _IOLBF, 0);
		if (trace_file_owned)
			fclose(trace_file_owned);
		trace_file_owned = f;
		hb_global.trace = f;
		return 1;
	}
	return 0;
}

void hb_cli_global_cleanup(void)
{
	if (trace_file_owned)
		fclose(trace_file_owned);
	trace_file_owned = NULL;
	hb_global.trace = NULL;
}

/* Set once standard output's failure has been reported, so main's final
 * check does not say it twice. */
static bool stdout_reported;

void hb_cli_stdout_error(const char *cmd)
{
	int e = errno;
	if (stdout_reported)
		return;
	stdout_reported = true;
	hb_cli_error("%s%scannot write to standard output: %s", cmd ? cmd : "", cmd ? ": " : "",
		     e ? strerror(e) : "write error");
}

int hb_cli_finish_stdout(int status)
{
	errno = 0;
	bool failed = fflush(stdout) != 0 || ferror(stdout);
	int e = errno;
	/* fclose reports what a deferred write (NFS, a pipe) kept back */
	if (fclose(stdout) != 0 && !failed) {
		failed = true;
		e = errno;
	}
	if (!failed)
		return status;
	if (!stdout_reported && status == HB_EXIT_OK) {
		stdout_reported = true;
		hb_cli_error("standard output lost: %s (what was stored is kept)", e ? strerror(e) : "write error");
	}
	return status == HB_EXIT_OK ? HB_EXIT_RUNTIME : status;
}
