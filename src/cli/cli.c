/* src/cli/cli.c - options every command shares (--db, --trace) and the one-line error printer */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

hb_global_opts hb_global;
static FILE *trace_file_owned;

void hb_cli_error(const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	fputs("henrybench: ", stderr);
	vfprintf(stderr, fmt, ap);
	fputc('\n', stderr);
	va_end(ap);
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

/* ---------------- engineering values as option arguments ---------------- */

int hb_opt_value(const char *option, const char *text, const char *unit, double min, double max, double *value)
{
	char err[256];
	char lo[48], hi[48];
	double v;
	const char *u = unit ? unit : "";
	if (hb_parse_value(text, u, &v, err, sizeof err) != HB_OK) {
		hb_cli_error("%s: %s", option, err);
		return HB_ERR_ARG;
	}
	if (v < min || v > max || isnan(v)) {
		int pct = strcmp(u, "%") == 0;
		if (pct) {
			snprintf(lo, sizeof lo, "%g%%", min * 100);
			snprintf(hi, sizeof hi, "%g%%", max * 100);
		} else {
			hb_format_si(lo, sizeof lo, min, u, 4);
			hb_format_si(hi, sizeof hi, max, u, 4);
		}
		if (isinf(min))
			hb_cli_error("%s %s is out of range: accepted up to %s", option, text, hi);
		else if (isinf(max))
			hb_cli_error("%s %s is out of range: accepted from %s", option, text, lo);
		else
			hb_cli_error("%s %s is out of range: accepted %s to %s", option, text, lo, hi);
		return HB_ERR_ARG;
	}
	*value = v;
	return HB_OK;
}

int hb_opt_int(const char *option, const char *text, long min, long max, long *value)
{
	if (!text || !*text) {
		hb_cli_error("%s needs a whole number (%ld to %ld)", option, min, max);
		return HB_ERR_ARG;
	}
	char *end = NULL;
	errno = 0;
	long v = strtol(text, &end, 10);
	if (errno || !end || *end != '\0') {
		hb_cli_error("%s '%s' is not a whole number (accepted %ld to %ld)", option, text, min, max);
		return HB_ERR_ARG;
	}
	if (v < min || v > max) {
		hb_cli_error("%s %s is out of range: accepted %ld to %ld", option, text, min, max);
		return HB_ERR_ARG;
	}
	*value = v;
	return HB_OK;
}
