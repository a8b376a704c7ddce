/* src/report/report.h - filed reports (sweep, lot, part) as self-contained HTML and their plots: the report room's public face */
#ifndef HB_REPORT_H
#define HB_REPORT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "../../db/hb_db.h"

/*
 * Every function reads the store only and writes into a
 * caller's FILE or a malloc'd string. On error a one-line explanation is
 * left in err (which may be NULL). The pages fetch nothing: styles inline,
 * figures inline SVG (html.h, plot.h). PLplot keeps global state,
 * so reports are built from one thread at a time.
 */

/* ---------------- plots (SVG documents, *svg malloc'd) ---------------- */

/* L against bias: measured points, the stored knee and/or core model, the
 * currents of the stored drop fractions, the part's L0 tolerance limits and
 * the (1 - drop) L0 minimum at the saturation-spec current. */
int hb_report_bias_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen);
/* B-H derived from a bias sweep (needs turns, Ae and le of the part):
 * HB_ERR_DATA when the part has no geometry. */
int hb_report_bh_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen);
/* Series L and R against frequency (log axis), the fitted model and the
 * self-resonance. */
int hb_report_freq_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen);
/* Histogram of values (H) with the tolerance band [lsl, usl] (NaN = none). */
int hb_report_histogram_svg(const double *values, size_t n, double lsl, double usl, const char *title,
			    char **svg, char *err, size_t errlen);
/*
 * Overlay of several sweeps of one kind: L against bias for bias sweeps,
 * L against frequency for frequency sweeps, one series per sweep labelled
 * "#id serial". HB_ERR_ARG when the kinds are mixed or n is 0 or > 12.
 * (For `compare --plot FILE.svg`.)
 */
int hb_report_compare_svg(hb_db *db, const int64_t *ids, size_t n, char **svg);

/* ---------------- pages ---------------- */

/* One sweep: part and spec, unit, instruments, settings, verdicts with
 * margins, fit values with uncertainties, plots, points, traceability. */
int hb_report_sweep(hb_db *db, int64_t sweep_id, FILE *out, char *err, size_t errlen);
/* One inspected lot: plan (code letter, n, Ac, Re), every sample position
 * with its sweep id and result, decision, L0 statistics and Cpk against the
 * tolerance, histogram. part_number NULL: the lot code must be unique. */
int hb_report_lot(hb_db *db, const char *part_number, const char *lot_code, FILE *out, char *err, size_t errlen);
/* A part's history: every unit's latest bias sweep, per-lot statistics and
 * the L0 trend in measurement order. */
int hb_report_part(hb_db *db, const char *part_number, FILE *out, char *err, size_t errlen);

/* Finds the lot by code (and part when part_number is not NULL); a code
 * used by several parts is HB_ERR_ARG (name the part). */
int hb_report_find_lot(hb_db *db, const char *part_number, const char *lot_code, hb_db_lot *lot, char *err,
		       size_t errlen);

#endif
