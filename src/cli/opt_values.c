/* src/cli/opt_values.c - engineering values and whole numbers as option arguments: parsed, range-checked, the one-line error */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"

int hb_opt_value(const char *option, const char *text, const char *unit, double min, double max, double *value)
{
	char err[256];
	double v;
	const char *u = unit ? unit : "";
	if (hb_parse_value(text, u, &v, err, sizeof err) != HB_OK) {
		hb_cli_error("%s: %s", option, err);
		return HB_ERR_ARG;
	}
	if (v < min || v > max || isnan(v)) {
		char range[128];
		hb_cli_error("%s %s is out of range: accepted %s", option, text, hb_opt_range_text(range, sizeof range, u, min, max));
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
