/* src/quality/rules.h - lot sampling plans (ISO 2859-1 single sampling), capability statistics, part verdicts */
#ifndef HB_RULES_H
#define HB_RULES_H

#include <stdbool.h>
#include <stddef.h>

#include "../../common/hb_status.h"

/* ---------------- ISO 2859-1 single sampling ---------------- */

typedef enum hb_insp_level {
	HB_LEVEL_S1,
	HB_LEVEL_S2,
	HB_LEVEL_S3,
	HB_LEVEL_S4,
	HB_LEVEL_I,
	HB_LEVEL_II, /* the level to use when the contract names none */
	HB_LEVEL_III,
} hb_insp_level;

typedef enum hb_severity {
	HB_SEVERITY_NORMAL,    /* Table 2-A */
	HB_SEVERITY_TIGHTENED, /* Table 2-B */
	HB_SEVERITY_REDUCED,   /* Table 2-C */
} hb_severity;

typedef struct hb_sampling_plan {
	long lot_size;
	double aql; /* as given, one of the standard series */
	hb_insp_level level;
	hb_severity severity;
	char initial_letter;     /* from Table 1 */
	char letter;             /* after following the arrows of Table 2 */
	int arrow;               /* 0 none, +1 followed down, -1 followed up */
	long table_sample_size;  /* sample size of the row the plan sits in */
	long sample_size;        /* units to inspect: table size, or the lot under 100 % */
	bool full_inspection;    /* table size reached or exceeded the lot: inspect every unit */
	int ac;                  /* accept the lot with <= ac nonconforming units in the sample */
	int re;                  /* reject the lot with >= re nonconforming units; a reduced plan may
				  * have re > ac + 1: ac < d < re accepts and reinstates normal */
	bool uncertain;          /* the cell (or the plan its arrow leads to) is one the verified
				  * reference leaves unsettled; uncertain_note says why */
	const char *uncertain_note; /* static text, NULL when certain */
} hb_sampling_plan;

/*
 * Chooses the single sampling plan of MIL-STD-105E Tables I, II-A, II-B and
 * II-C (the same as ISO 2859-1:1989 and ANSI/ASQ Z1.4 for these tables; the
 * reduced table is 105E's, with Re - Ac up to 3) for a lot. aql must be one of the standard series
 * (hb_iso2859_aql_series); anything else, or lot_size < 2, gives HB_ERR_ARG
 * with a message in err naming the value and the accepted range.
 */
int hb_iso2859_plan(long lot_size, double aql, hb_insp_level level, hb_severity severity,
		    hb_sampling_plan *out, char *err, size_t errlen);

/* Table 1 code letter for lot_size (>= 2) and level; 0 when out of range. */
char hb_iso2859_code_letter(long lot_size, hb_insp_level level);
/* Sample size printed against a code letter in Table 2-A/B/C; 0 if none. */
long hb_iso2859_sample_size(char letter, hb_severity severity);

/* Ac of the normal plan one AQL step tighter in the same code letter row
 * (the switching score of ISO 2859-1:1999 9.3.3 asks whether the lot would
 * have been accepted there); -1 when that cell is an arrow or none. */
int hb_iso2859_tighter_ac(char letter, double aql);

/* The standard AQL series 0.010 ... 1000, ascending; returns its length. */
size_t hb_iso2859_aql_series(const double **series);
/* Index of aql in the series (tolerant to decimal rounding), or -1. */
int hb_iso2859_aql_index(double aql);
/* Writes aql as the standard prints it ("0.010", "1.0", "10"); returns buf. */
char *hb_iso2859_aql_format(double aql, char *buf, size_t cap);
/* Writes "0.010, 0.015, ..., 1000" into buf; returns buf. */
char *hb_iso2859_aql_series_text(char *buf, size_t cap);

/* "S-1" ... "III" and "normal" / "tightened" / "reduced", both ways.
 * The parsers return HB_OK or HB_ERR_ARG (case-insensitive). */
const char *hb_iso2859_level_name(hb_insp_level level);
int hb_iso2859_parse_level(const char *text, hb_insp_level *level);
const char *hb_iso2859_severity_name(hb_severity severity);
int hb_iso2859_parse_severity(const char *text, hb_severity *severity);

typedef enum hb_lot_decision {
	HB_LOT_CONTINUE, /* keep inspecting */
	HB_LOT_ACCEPT,
	HB_LOT_REJECT,
	HB_LOT_ACCEPT_REINSTATE, /* reduced plan, ac < d < re: lot accepted, normal inspection reinstated */
} hb_lot_decision;

/*
 * Decision after units_tested units of the sample with nonconforming of
 * them nonconforming. Rejects as soon as nonconforming >= re (the lot can no
 * longer be accepted, and further testing adds only cost); accepts only once
 * the whole sample is inspected with nonconforming <= ac, as single
 * sampling prescribes (no curtailment on the acceptance side); a whole
 * sample with ac < nonconforming < re (reduced plans only) gives
 * HB_LOT_ACCEPT_REINSTATE.
 * HB_ERR_ARG for impossible counts.
 */
int hb_lot_decide(const hb_sampling_plan *plan, long units_tested, long nonconforming,
		  hb_lot_decision *decision);
const char *hb_lot_decision_name(hb_lot_decision decision);

/* ---------------- statistics and capability ---------------- */

typedef struct hb_stats {
	size_t n;        /* finite values used */
	size_t n_missing; /* NaN / infinite values left out (untested parts) */
	double mean;
	double stddev;   /* sample standard deviation (n - 1); NaN when n < 2 */
	double min, max;
} hb_stats;

/* HB_ERR_DATA when no finite value is present. */
int hb_stats_compute(const double *values, size_t n, hb_stats *out);

/*
 * Process capability against the tolerance [lsl, usl] (ISO 22514-2 / common
 * practice, with the sample standard deviation as the estimate of sigma):
 *   Cp  = (USL - LSL) / (6 s)
 *   Cpk = min(USL - mean, mean - LSL) / (3 s)
 * A NaN limit means one-sided tolerance: Cp is then NaN and Cpk uses the
 * given side only. HB_ERR_DATA when n < 2 or s == 0; HB_ERR_ARG when both
 * limits are missing or lsl >= usl.
 */
int hb_capability(const hb_stats *stats, double lsl, double usl, double *cp, double *cpk);

/* ---------------- verdicts ---------------- */

typedef enum hb_outcome {
	HB_OUTCOME_NOT_TESTED, /* no (finite) measurement: never a pass */
	HB_OUTCOME_PASS,
	HB_OUTCOME_FAIL,
} hb_outcome;

typedef enum hb_overall {
	HB_OVERALL_PASS,       /* every check tested and passed */
	HB_OVERALL_FAIL,       /* at least one check failed */
	HB_OVERALL_INCOMPLETE, /* nothing failed, but something was not tested */
	HB_OVERALL_CONDITIONAL, /* every check tested, none failed outright, at least one conditional
				 * (the non-binary decision rule, decision.h): a lot counts it by its policy */
} hb_overall;

typedef struct hb_check {
	double measured;    /* NaN when not measured */
	double low, high;   /* inclusive limits; NaN = no limit on that side */
	hb_outcome outcome;
	double margin;      /* signed distance to the nearest limit, > 0 inside, < 0 outside; NaN untested */
	double margin_frac; /* margin / |that limit|; NaN when the limit is 0 or untested */
} hb_check;

/*
 * Limits are inclusive: a value equal to a limit passes. Limits computed from
 * a nominal and a fraction carry binary rounding, so a value within
 * 1e-12 relative of a limit counts as on it.
 */
hb_check hb_verdict_limits(double measured, double low, double high);
/* nominal * (1 - tol_frac) <= measured <= nominal * (1 + tol_frac), e.g. L0. */
hb_check hb_verdict_tolerance(double measured, double nominal, double tol_frac);
/* measured >= min, e.g. L at the saturation current >= (1 - drop) * L0. */
hb_check hb_verdict_min(double measured, double min);
/* measured <= max, e.g. DCR. */
hb_check hb_verdict_max(double measured, double max);

/* Fail if any check failed, else incomplete if any was not tested (or there
 * are no checks at all), else pass. */
hb_overall hb_verdict_overall(const hb_check *checks, size_t n);
const char *hb_outcome_name(hb_outcome outcome);  /* "pass", "fail", "not-tested" */
const char *hb_overall_name(hb_overall overall);  /* "pass", "fail", "incomplete", "conditional" */

#endif
