/* src/cli/opt_words.c - option arguments several commands share: sweep kind, ISO 2859-1 level, severity and AQL */
#include <math.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../quality/quality.h"
#include "cli.h"

const char *const hb_opt_kind_words[] = { "bias", "frequency", NULL };
const char *const hb_opt_level_words[] = { "S-1", "S-2", "S-3", "S-4", "I", "II", "III", NULL };
const char *const hb_opt_severity_words[] = { "normal", "tightened", "reduced", NULL };

/* The store's own parser decides, so an option takes what the store names. */
int hb_opt_match_kind(const char *text, int *code)
{
	hb_db_sweep_kind k;
	if (hb_db_sweep_kind_parse(text, &k) != HB_OK)
		return HB_ERR_ARG;
	*code = (int)k;
	return HB_OK;
}

/* "S1" as well as "S-1", in either case (drawings drop the hyphen). */
int hb_opt_match_level(const char *text, int *code)
{
	hb_insp_level level;
	if (hb_iso2859_parse_level(text, &level) != HB_OK)
		return HB_ERR_ARG;
	*code = (int)level;
	return HB_OK;
}

int hb_opt_match_severity(const char *text, int *code)
{
	hb_severity severity;
	if (hb_iso2859_parse_severity(text, &severity) != HB_OK)
		return HB_ERR_ARG;
	*code = (int)severity;
	return HB_OK;
}

/* An AQL must be one of the ISO 2859-1 series, not any number. */
int hb_opt_take_aql(const hb_opt *o, const char *text, void *field)
{
	double *aql = field;
	char option[64], series[200];
	snprintf(option, sizeof option, "--%s", o->name);
	if (hb_opt_value(option, text, "", -INFINITY, INFINITY, aql) != HB_OK)
		return HB_ERR_ARG;
	if (hb_iso2859_aql_index(*aql) < 0) {
		hb_cli_error("%s %s is not in the ISO 2859-1 series (accepted: %s)", option, text,
			     hb_iso2859_aql_series_text(series, sizeof series));
		*aql = NAN;
		return HB_ERR_ARG;
	}
	return HB_OK;
}
