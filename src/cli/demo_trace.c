/* src/cli/demo_trace.c - the demo's traceability: the simulated instruments in the register with an invented calibration, and an open/short compensation of the invented fixture */
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "cli.h"
#include "demo.h"

/* The invented fixture: 20 nH of lead inductance in series with the
 * preset's lead resistance (the illustrative fixture residual). */
#define DEMO_LEAD_L 20e-9

static void date_days_from_now(char *buf, size_t cap, int days)
{
	time_t t = time(NULL) + (time_t)days * 86400;
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(buf, cap, "%Y-%m-%d", &tm);
}

/* An invented calibration: done 120 days ago, due a year after it. */
static int invent_calibration(hb_db *db, hb_db_instrument *in, const char *certificate)
{
	date_days_from_now(in->cal_date, sizeof in->cal_date, -120);
	date_days_from_now(in->due_date, sizeof in->due_date, 365 - 120);
	snprintf(in->certificate, sizeof in->certificate, "%s", certificate);
	return hb_db_instrument_update(db, in);
}

static int set_fixture_state(double state)
{
	hb_sim *sim = hb_sim_inproc();
	hb_sim_inproc_lock();
	int rc = hb_sim_set_param(sim, "fixture_state", state);
	if (rc == HB_OK)
		rc = hb_sim_set_param(sim, "llead", DEMO_LEAD_L);
	hb_sim_inproc_unlock();
	return rc;
}

int hb_demo_traceability(hb_db *db, hb_lcr *lcr, hb_supply *supply, const hb_station *st)
{
	hb_db_instrument meter, source;
	if (hb_trace_register_lcr(db, lcr, &meter, NULL) != HB_OK ||
	    hb_trace_register_supply(db, supply, &source, NULL) != HB_OK ||
	    invent_calibration(db, &meter, "DEMO-CAL-0417 (invented)") != HB_OK ||
	    invent_calibration(db, &source, "DEMO-CAL-0418 (invented)") != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		return HB_ERR_DB;
	}
	printf("instrument register: meter %s due %s, supply %s due %s (invented calibrations)\n", meter.serial,
	       meter.due_date, source.serial, source.due_date);
	static const double freqs[] = { 10e3, 100e3 };
	static const struct {
		double state;
		hb_correction which;
		const char *what;
	} steps[] = { { 1, HB_CORRECTION_OPEN, "open (nothing in the fixture)" },
		      { 2, HB_CORRECTION_SHORT, "short (shorting bar in the fixture)" } };
	for (size_t i = 0; i < 2; i++) {
		printf("fixture compensation, %s:\n", steps[i].what);
		if (set_fixture_state(steps[i].state) != HB_OK)
			return HB_ERR_ARG;
		hb_fixture_request req = { .fixture = HB_FIXTURE_DEFAULT, .which = steps[i].which, .freqs = freqs,
					   .n_freqs = 2, .operator_name = st->operator_name, .out = stdout };
		hb_db_fixture_comp rec;
		char err[400];
		int rc = hb_fixture_run(db, lcr, &req, &rec, err, sizeof err);
		if (rc != HB_OK) {
			hb_cli_error("demo fixture %s: %s", rec.kind, err);
			return rc;
		}
		printf("  stored as compensation %lld: %s\n", (long long)rec.id, rec.note);
	}
	/* The part goes back in. */
	int rc = set_fixture_state(0);
	printf("\n");
	return rc;
}
