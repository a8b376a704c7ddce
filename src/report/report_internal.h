/* src/report/report_internal.h - what the report files share inside the report room: a sweep loaded whole, page sections */
#ifndef HB_REPORT_INTERNAL_H
#define HB_REPORT_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "html.h"
#include "plot.h"

/* One sweep with everything stored about it (report.c). */
typedef struct sweep_data {
	hb_db_sweep sweep;
	bool have_part;
	hb_db_part part;
	hb_db_point *pts;
	size_t n;
	bool have_fit;
	hb_db_fit *fit;
	hb_db_verdict *verdicts;
	size_t nv;
	hb_db_fit_unc *unc;     /* the fit's GUM budgets (empty for a fit stored before them) */
	size_t nunc;
} sweep_data;

int rpt_load_sweep(hb_db *db, int64_t id, sweep_data *d, char *err, size_t errlen);
void rpt_sweep_data_free(sweep_data *d);
bool rpt_part_has_geometry(const hb_db_part *p);
int rpt_render(hb_plot *plot, char **svg, char *err, size_t errlen);
void rpt_part_section(hb_html *h, const hb_db_part *p);
void rpt_fit_section(hb_html *h, const sweep_data *d);
void rpt_measurement_section(hb_html *h, const hb_db_sweep *s);
void rpt_points_section(hb_html *h, const sweep_data *d);
void rpt_verdict_section(hb_html *h, const sweep_data *d);
/* Appendix: the uncertainty budget of every budgeted value. */
void rpt_budget_section(hb_html *h, const sweep_data *d);
void rpt_figure(hb_html *h, int rc, char *svg, const char *caption, const char *err);
void rpt_trace_paragraph(hb_html *h, hb_db *db, const char *what);
const char *rpt_or_dash(const char *s);
const char *rpt_si(char *buf, size_t cap, double v, const char *unit, int digits);
const char *rpt_pct(char *buf, size_t cap, double frac);
void rpt_stats_row(hb_html *h, const char *name, const double *vals, size_t n, double lsl, double usl,
		      const char *unit);

/* Column heads of the statistics tables of the lot and part reports. */
extern const char *const rpt_stats_head[9];

/* ---------------- filed reports (report_file.c) ---------------- */
/* While hb_report_file writes a page: its report number, data hash and the
 * sweeps the page rests on; NULL otherwise (a page not filed). */
typedef struct rpt_stamp {
	const char *number;     /* report number, a global identity */
	const char *kind;       /* "sweep", "lot", "part" */
	const char *data_sha256;
	const int64_t *sweeps;  /* ascending */
	size_t n_sweeps;
} rpt_stamp;
const rpt_stamp *rpt_current_stamp(void);
/* hb_html_open with the stamp's machine-readable head (meta hb-report, hb-data-sha256, hb-software). */
hb_html *rpt_html_open(FILE *out, const char *title, const char *subtitle);
/* The traceability table of a filed page: report number, software, the global
 * identities of part, spec revision, unit, lot, sweeps, point sets and fits, the hashes. */
void rpt_trace_identities(hb_html *h, hb_db *db);
/* issue 13: the part's drawn gap and data-sheet curve mask against this sweep
 * (report_mask.c); nothing when the part has neither. */
void rpt_drawing_section(hb_html *h, hb_db *db, const sweep_data *d);
/* ---- what the sweep ran with (report_instruments.c) ---- */
/* Instruments with their calibration status, the fixture compensation in
 * force and the settings read back at start and end, flagged when they
 * differ. Nothing when the store holds no record of it (older sweeps). */
void rpt_instruments_section(hb_html *h, hb_db *db, int64_t sweep_id);

/* ---- the part's lot streams (report_stream.c) ---- */
/* One table per supplier: every decided lot in order with its severity,
 * decision, switching score and the severity after it (ISO 2859-1 clause
 * 9), then the next lot's severity and why. Nothing when no lot is decided.
 * HB_OK, or the store's error. */
int rpt_stream_section(hb_html *h, hb_db *db, const hb_db_part *part);

/* ---- the part's design lines (report_design.c) ---- */
/* When the part has a rated current: the gap (its turns held) and the
 * turns (its drawn gap held) that give the nominal L at that current, from
 * its latest core fit, with U and k and what they rest on; why not, when
 * there is no core fit. */
void rpt_design_section(hb_html *h, hb_db *db, const hb_db_part *part);
/* ---- the lot and part reports' instruments (report_instruments.c) ---- */
/* Every instrument that measured one of the sweeps, once, with the sweeps,
 * the calibration status recorded at their start and the status now;
 * caption names the table. */
void rpt_sweeps_instruments_section(hb_html *h, hb_db *db, const int64_t *sweep_ids, size_t n, const char *caption);

#endif
