/* src/bench/traceability.h - what a sweep ran with: the instrument register and calibration status, fixture compensation, settings read back */
#ifndef HB_TRACEABILITY_H
#define HB_TRACEABILITY_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../../drivers/hb_drivers.h"

/* The age past which a fixture compensation counts as stale when the
 * station file says nothing ([fixture] max_age_hours): one working day
 * (common practice: compensate at the start of each shift or day, and
 * whenever the fixture or its cables are changed). */
#define HB_FIXTURE_MAX_AGE_HOURS 24.0
/* The fixture a sweep uses when none is named. */
#define HB_FIXTURE_DEFAULT "default"
/* At most this many frequencies per compensation. */
#define HB_FIXTURE_MAX_FREQS 16

typedef enum hb_cal_state { HB_CAL_OK, HB_CAL_OVERDUE, HB_CAL_UNKNOWN } hb_cal_state;

/* Today's date in UTC as YYYY-MM-DD. */
void hb_trace_today(char *buf, size_t cap);
/* Whether text is a calendar date YYYY-MM-DD (month 1..12, day 1..31). */
bool hb_trace_valid_date(const char *text);
/* The instrument's calibration status on the date today ("" = now):
 * unknown without a due date (no calibration date recorded is unknown as
 * well), overdue once today is past the due date. text gets one line such
 * as "calibrated 2026-01-10, due 2027-01-10 (in calibration)". */
hb_cal_state hb_trace_cal_state(const hb_db_instrument *in, const char *today, char *text, size_t cap);
/* The register's accuracy override of the instrument (rel NAN when it
 * states none); HB_ERR_ARG when the stored text does not parse. */
int hb_trace_instrument_accuracy(const hb_db_instrument *in, hb_accuracy *out, char *err, size_t errlen);
/* Records the instrument behind an open meter or supply (either may be
 * NULL) in the register; out gets its row. */
int hb_trace_register_lcr(hb_db *db, hb_lcr *lcr, hb_db_instrument *out, bool *created);
int hb_trace_register_supply(hb_db *db, hb_supply *supply, hb_db_instrument *out, bool *created);

/* ---- fixture compensation (fixture.c) ---- */

/* The lumped fixture model of a stored open/short pair: a series lead
 * impedance Zs = R + jwL from the short, a stray admittance Yo = G + jwC
 * from the open; each residual stored per frequency, the one measured at
 * the frequency nearest a point's (on a log scale) applied. */
typedef struct hb_fixture_model {
	int n_open, n_short;
	double f_open[HB_FIXTURE_MAX_FREQS], g_open[HB_FIXTURE_MAX_FREQS], c_open[HB_FIXTURE_MAX_FREQS];
	double f_short[HB_FIXTURE_MAX_FREQS], r_short[HB_FIXTURE_MAX_FREQS], l_short[HB_FIXTURE_MAX_FREQS];
} hb_fixture_model;

/* Reads the residuals of stored compensations (either may be NULL). */
int hb_fixture_model_load(hb_fixture_model *m, const hb_db_fixture_comp *open, const hb_db_fixture_comp *shrt);
/* The largest lead inductance |L| of a short compensation's residuals, H (NAN when none). */
double hb_fixture_lead_inductance(const hb_db_fixture_comp *shrt);
/*
 * Open/short compensation of one reading (common practice): the measured
 * impedance Zm less the lead impedance Zs, then the stray admittance Yo
 * taken off in parallel: Zdut = (Zm - Zs) / (1 - (Zm - Zs) Yo). The
 * reading is turned into Zm and back through its pair and circuit.
 */
int hb_fixture_compensate(const hb_fixture_model *m, double freq_hz, hb_equiv equiv, hb_pair pair, double *primary,
			  double *secondary);
typedef struct hb_fixture_request {
	const char *fixture;      /* NULL = HB_FIXTURE_DEFAULT */
	hb_correction which;
	const double *freqs;      /* Hz; the meter's frequency when n_freqs is 0 */
	int n_freqs;
	bool measure_only;        /* measure and store the residuals even where the meter could correct */
	const char *operator_name;
	FILE *out;                /* one line per frequency; NULL = quiet */
} hb_fixture_request;

/*
 * Reads the open (admittance G + jB, so C = B/w) or short (R + jX, so
 * L = X/w) residual at each frequency, then runs the meter's own
 * correction where its profile has one (and measure_only is not set):
 * method "meter" (the residuals are what the meter removes), else method
 * "henrybench" (applied to later sweeps' readings). Stores the record.
 */
int hb_fixture_run(hb_db *db, hb_lcr *lcr, const hb_fixture_request *req, hb_db_fixture_comp *rec, char *err,
		   size_t errlen);

#endif
