/* src/quality/history.h - a part's measured history: per-lot statistics, capability, the trend across lots */
#ifndef HB_HISTORY_H
#define HB_HISTORY_H

#include <stdbool.h>
#include <stddef.h>

#include "../../db/hb_db.h"
#include "rules.h"

typedef struct hb_history_lot {
	char lot_code[HB_DB_ID_LEN];   /* "" = units measured without a lot */
	double first_started;          /* unix s of its first unit; lots are in this order */
	char first_iso[HB_DB_TIME_LEN], last_iso[HB_DB_TIME_LEN];
	size_t n_units, n_pass, n_fail, n_not_tested;
	hb_stats l0;                   /* n = 0 when no unit gave L0 */
	double cp, cpk;                /* against nominal +- tolerance; NAN when not computable */
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

#endif
