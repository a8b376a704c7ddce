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

/* ---------------- filed reports and their integrity (report_file.c) ---------------- */

typedef enum { HB_REPORT_SWEEP = 0, HB_REPORT_LOT, HB_REPORT_PART } hb_report_kind;

typedef struct hb_report_request {
	hb_report_kind kind;
	int64_t sweep_id;          /* HB_REPORT_SWEEP */
	const char *part_number;   /* HB_REPORT_LOT (NULL: the lot code is unique) and HB_REPORT_PART */
	const char *lot_code;      /* HB_REPORT_LOT */
	const char *path;          /* the page; "-" = standard output (then no file hash is stored) */
} hb_report_request;

/*
 * Writes a filed report: gives it a report number (a global identity), embeds
 * the number, the software version and the SHA-256 of the canonical export of
 * its points in the page's head and its traceability section, writes the page
 * beside path and renames it into place, and stores in the reports table the
 * number, kind, subject, path, the SHA-256 of the file as written and the data
 * hash. number (may be NULL) gets the report number.
 */
int hb_report_file(hb_db *db, const hb_report_request *rq, char number[HB_DB_UID_LEN], char *err, size_t errlen);

/*
 * The canonical export of the raw points of sweeps (docs/store.md): a first
 * line "henrybench-points 1", then per sweep in ascending local id a line
 * "sweep SWEEP_UID POINTS_UID N" and its N points in sequence order, one line
 * each, fields separated by one space: seq, direction (up/down), bias_set_a,
 * bias_meas_a, supply_v, freq_hz, primary, secondary, reading_status, t_s,
 * settle_readings, settle_s, bias_spread_a, settled (0/1); reals as "%.17g" in
 * the C locale, a value not known as "null"; every line ends in "\n".
 * Written to out when out is not NULL; its SHA-256 into hex; *points (may be
 * NULL) gets the number of points.
 */
int hb_report_points_canonical(hb_db *db, const int64_t *sweep_ids, size_t n, FILE *out, char hex[65], size_t *points,
			       char *err, size_t errlen);

/* The report number in the head of a filed page (meta hb-report): HB_ERR_IO if
 * the file cannot be read, HB_ERR_DATA if it carries none. */
int hb_report_read_number(const char *path, char number[HB_DB_UID_LEN], char *err, size_t errlen);

typedef struct hb_report_check {
	char number[HB_DB_UID_LEN];
	hb_db_report filed;        /* the store's record of it */
	char file_sha256[65];      /* recomputed over the file given */
	char data_sha256[65];      /* recomputed from the stored points */
	size_t n_points;
	bool file_intact, data_intact;
} hb_report_check;

/* Recomputes both hashes of the filed page at path and compares them with the
 * store's record. HB_OK when the comparison could be made (see file_intact and
 * data_intact); HB_ERR_NOTFOUND when the store has no such report. */
int hb_report_verify(hb_db *db, const char *path, hb_report_check *out, char *err, size_t errlen);
void hb_report_check_clear(hb_report_check *c);

#endif
