/* src/cli/compare.h - the `compare` table: stored sweeps side by side at common currents */
#ifndef HB_COMPARE_H
#define HB_COMPARE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../quality/quality.h"

/* ---------------- compare: sweeps side by side ---------------- */

enum { HB_COMPARE_MAX_CURRENTS = 16, HB_COMPARE_MAX_SWEEPS = 32 };

typedef struct hb_compare_column {
	int64_t sweep_id;
	char sweep_uid[HB_DB_UID_LEN], unit_uid[HB_DB_UID_LEN]; /* global identities ("" if the store has none) */
	char part_number[HB_DB_ID_LEN], serial[HB_DB_ID_LEN], lot_code[HB_DB_ID_LEN], station[HB_DB_ID_LEN];
	char started_iso[HB_DB_TIME_LEN];
	char status[16];
	double l0_h, i_drop_a[HB_DB_HISTORY_DROPS], mu_e, gap_m; /* newest fit; NAN if none */
	hb_db_outcome verdict;         /* fail if a check failed, pass if all passed, else not-tested */
	double i_min, i_max;           /* measured current range of the up-going points */
	double l_at[HB_COMPARE_MAX_CURRENTS]; /* L interpolated at the table's currents */
} hb_compare_column;

typedef struct hb_compare_table {
	size_t n;
	hb_compare_column *cols;
	int drop_percent[HB_DB_HISTORY_DROPS];
	size_t n_currents;
	double currents[HB_COMPARE_MAX_CURRENTS]; /* evenly over the range every sweep covers */
} hb_compare_table;

/* Loads bias sweeps ids[0..n) with their newest fit, verdicts and L at
 * n_currents (2 ... HB_COMPARE_MAX_CURRENTS) common currents. HB_ERR_NOTFOUND
 * / HB_ERR_ARG with a one-line err for an unknown id or a frequency sweep. */
int hb_compare_load(hb_db *db, const int64_t *ids, size_t n, size_t n_currents, hb_compare_table *out, char *err,
		    size_t errlen);
void hb_compare_free(hb_compare_table *table);
json_t *hb_compare_json(const hb_compare_table *table);

#endif
