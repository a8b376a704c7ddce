/* src/quality/history.h - a part's measured history: per-lot statistics, capability, the trend across lots */
#ifndef HB_HISTORY_H
#define HB_HISTORY_H

#include <stdbool.h>
#include <stddef.h>

#include "../../db/hb_db.h"
#include <jansson.h>

#include "decision.h"
#include "rules.h"

typedef struct hb_history_lot {
	char lot_code[HB_DB_ID_LEN];   /* "" = units measured without a lot */
	double first_started;          /* unix s of its first unit; lots are in this order */
	char first_iso[HB_DB_TIME_LEN], last_iso[HB_DB_TIME_LEN];
	size_t n_units, n_pass, n_fail, n_not_tested;
	hb_stats l0;                   /* n = 0 when no unit gave L0 */
	double cp, cpk;                /* against nominal +- tolerance; NAN when not computable; never -0 */
	hb_cpk_interval cpk_ci;        /* Cpk's two-sided 95 % interval (Bissell 1990) and the small-sample
				        * warning (n < HB_CPK_MIN_N); bounds NAN when Cpk is */
	hb_stats isat;                 /* current at the part's saturation drop */
	/* Trend, against the first lot with a code (NAN for that lot and for ""): */
	double l0_change_h, l0_change_rel, isat_change_a, isat_change_rel;
	bool l0_shift;                 /* |L0 mean change| > one third of the tolerance band half-width */
	bool isat_shift;               /* |Isat mean change| > 10 % of the first lot's mean */
} hb_history_lot;

typedef struct hb_history_summary {
	size_t n_lots;
	hb_history_lot *lots;
	int sat_drop_index;            /* which i_drop_a column is "saturation" */
	int sat_drop_percent;
	size_t n_trend_lots;           /* lots with a code and an L0 mean */
	int l0_drift, isat_drift;      /* +1 / -1: lot means rose / fell at every lot (3 lots or more); 0 = no */
	bool l0_shift, isat_shift;     /* some lot shifted (see hb_history_lot) */
} hb_history_summary;

/* Groups the rows by lot, computes each lot's L0 statistics and Cpk against
 * the part's tolerance, and the trend of L0 and the saturation current (the
 * drop column matching part->sat_drop, else the last) across lots in time
 * order. drop_percent is the filter's, in column order. */
int hb_history_summarise(const hb_db_part *part, const hb_db_history_row *rows, size_t n,
			 const int drop_percent[HB_DB_HISTORY_DROPS], hb_history_summary *out);
void hb_history_summary_free(hb_history_summary *summary);

/* Cpk of a lot with its confidence, for every output (text, JSON, HTML):
 * {"Cpk": 0.79 | null, "Cpk_lower": -0.07 | null, "Cpk_upper": 1.66 | null,
 *  "confidence": 0.95, "n": 3, "small_sample": true,
 *  "warning": "n = 3 < 30: the interval is wide and the normal approximation rough" (only when small),
 *  "method": "Bissell (1990) normal approximation"}.
 * The history JSON in src/cli calls this for each lot. */
json_t *hb_history_cpk_json(const hb_history_lot *lot);
/* The same in one line for text and HTML: "0.79 (95 %: -0.07 to 1.66; n = 3 < 30, rough)" or
 * "1.52 (95 %: 1.21 to 1.83)"; "-" when there is no Cpk. Two decimals, no "-0.00". */
char *hb_history_cpk_text(const hb_history_lot *lot, char *buf, size_t cap);
/* Same from a Cpk and its n, for callers that compute their own (the lot report). */
char *hb_cpk_text(double cpk, size_t n, char *buf, size_t cap);

#endif
