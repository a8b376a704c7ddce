/* src/bench/trace.c - the instrument register seen from the bench: recording what *IDN? names, calibration status, the register's accuracy override */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "traceability.h"

void hb_trace_today(char *buf, size_t cap)
{
	time_t now = time(NULL);
	struct tm tm;
	gmtime_r(&now, &tm);
	strftime(buf, cap, "%Y-%m-%d", &tm);
}

bool hb_trace_valid_date(const char *text)
{
	int y, m, d;
	char tail;
	if (!text || strlen(text) != 10 || sscanf(text, "%4d-%2d-%2d%c", &y, &m, &d, &tail) != 3)
		return false;
	return text[4] == '-' && text[7] == '-' && y >= 1900 && m >= 1 && m <= 12 && d >= 1 && d <= 31;
}

hb_cal_state hb_trace_cal_state(const hb_db_instrument *in, const char *today, char *text, size_t cap)
{
	char now[16];
	if (!today || !*today) {
		hb_trace_today(now, sizeof now);
		today = now;
	}
	if (!in->cal_date[0] || !in->due_date[0]) {
		snprintf(text, cap, "calibration status unknown (%s)",
			 !in->cal_date[0] ? "no calibration date recorded" : "no due date recorded");
		return HB_CAL_UNKNOWN;
	}
	/* ISO dates compare as text. */
	bool overdue = strcmp(today, in->due_date) > 0;
	snprintf(text, cap, "calibrated %s, due %s (%s)%s%s", in->cal_date, in->due_date,
		 overdue ? "OVERDUE" : "in calibration", in->certificate[0] ? ", certificate " : "", in->certificate);
	return overdue ? HB_CAL_OVERDUE : HB_CAL_OK;
}

int hb_trace_instrument_accuracy(const hb_db_instrument *in, hb_accuracy *out, char *err, size_t errlen)
{
	hb_accuracy_init(out);
	if (!in || !in->accuracy[0])
		return HB_OK;
	bool meter = strcmp(in->kind, "lcr") == 0;
	int rc = hb_accuracy_parse_rel(in->accuracy, meter ? NULL : "A", &out->rel, &out->offset, err, errlen);
	if (rc == HB_OK && meter && in->accuracy_freq_above[0])
		rc = hb_accuracy_parse_freq_above(in->accuracy_freq_above, &out->freq_above_hz, &out->freq_above_rel, err,
						  errlen);
	if (rc != HB_OK) {
		hb_accuracy_init(out);
		return rc;
	}
	snprintf(out->source, sizeof out->source, "instrument register: %s %s serial %s", in->maker, in->model,
		 in->serial);
	return HB_OK;
}

static int register_idn(hb_db *db, const char *kind, const hb_idn *idn, hb_db_instrument *out, bool *created)
{
	if (!idn)
		return HB_ERR_ARG;
	return hb_db_instrument_ensure(db, kind, idn->maker, idn->model, idn->serial, idn->firmware, out, created);
}

int hb_trace_register_lcr(hb_db *db, hb_lcr *lcr, hb_db_instrument *out, bool *created)
{
	return register_idn(db, "lcr", lcr ? hb_lcr_idn(lcr) : NULL, out, created);
}

int hb_trace_register_supply(hb_db *db, hb_supply *supply, hb_db_instrument *out, bool *created)
{
	return register_idn(db, "supply", supply ? hb_supply_idn(supply) : NULL, out, created);
}
