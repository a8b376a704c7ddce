/* src/report/report_part.c - the filed record of one part's history: every unit's latest sweep, lot statistics, L0 trend */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../fit/hb_fit.h"
#include "../quality/quality.h"
#include "../../common/hb_text.h"
#include "html.h"
#include "plot.h"
#include "report.h"
#include "report_internal.h"


/* ---------------- part report ---------------- */

int hb_report_part(hb_db *db, const char *part_number, FILE *out, char *err, size_t errlen)
{
	hb_db_part part;
	int rc = hb_db_part_get(db, part_number, &part);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "part '%s' is not in the store", part_number);
		return rc;
	}
	hb_db_history_filter f;
	hb_db_history_filter_init(&f);
	f.part_number = part_number;
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	rc = hb_db_history(db, &f, &rows, &n);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "history of %s: %s", part_number, hb_db_errmsg(db));
		return rc;
	}
	double *l0 = calloc(n ? n : 1, sizeof *l0), *order = calloc(n ? n : 1, sizeof *order);
	double *sel = calloc(n ? n : 1, sizeof *sel);
	hb_html *h = NULL;
	if (!l0 || !order || !sel) {
		rc = HB_ERR_NOMEM;
		hb_set_err(err, errlen, "out of memory");
		goto out;
	}
	char title[200], line[400], a[48];
	snprintf(title, sizeof title, "Part history: %s", part.part_number);
	snprintf(line, sizeof line, "%zu units, each by its latest complete bias sweep", n);
	h = rpt_html_open(out, title, line);
	if (!h) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	rpt_part_section(h, &part);

	hb_html_section_begin(h, "Units measured");
	char d0[24], d1[24], d2[24];
	snprintf(d0, sizeof d0, "I at -%d %%", f.drop_percent[0]);
	snprintf(d1, sizeof d1, "I at -%d %%", f.drop_percent[1]);
	snprintf(d2, sizeof d2, "I at -%d %%", f.drop_percent[2]);
	const char *head[] = { "Sweep", "Started (UTC)", "Station", "Lot", "Serial", "L0", d0, d1, d2, "mu_e", "Gap",
			       "Verdict" };
	hb_html_table_begin(h, "Oldest first. L is the incremental inductance; currents where L has fallen the stated "
			    "fraction below L0.", head, 12);
	for (size_t i = 0; i < n; i++) {
		const hb_db_history_row *r = &rows[i];
		char c[12][40];
		snprintf(c[0], sizeof c[0], "%lld", (long long)r->sweep_id);
		const char *cells[12] = { c[0], rpt_or_dash(r->started_iso), rpt_or_dash(r->station), rpt_or_dash(r->lot_code),
					  rpt_or_dash(r->serial), rpt_si(c[5], sizeof c[5], r->l0_h, "H", 5),
					  rpt_si(c[6], sizeof c[6], r->i_drop_a[0], "A", 4), rpt_si(c[7], sizeof c[7], r->i_drop_a[1], "A", 4),
					  rpt_si(c[8], sizeof c[8], r->i_drop_a[2], "A", 4), rpt_si(c[9], sizeof c[9], r->mu_e, "", 4),
					  rpt_si(c[10], sizeof c[10], r->gap_m, "m", 4), hb_db_outcome_name(r->verdict) };
		hb_html_table_row_class(h, hb_db_outcome_name(r->verdict), cells, 12);
		l0[i] = r->l0_h;
		order[i] = (double)(i + 1);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);

	double lsl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 - part.tolerance) : NAN;
	double usl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 + part.tolerance) : NAN;
	hb_html_section_begin(h, "Statistics per lot");
	hb_html_table_begin(h, "L0 against the tolerance; Cp and Cpk with the sample standard deviation (ISO 22514-2); "
			    "Cpk's two-sided 95 % interval by Bissell's normal approximation (1990), rough below 30 units.",
			    rpt_stats_head, 9);
	/* Lots in order of first appearance; rows of one lot gathered into sel. */
	for (size_t i = 0; i < n; i++) {
		bool seen = false;
		for (size_t j = 0; j < i && !seen; j++)
			seen = strcmp(rows[j].lot_code, rows[i].lot_code) == 0;
		if (seen)
			continue;
		size_t m = 0;
		for (size_t j = i; j < n; j++)
			if (strcmp(rows[j].lot_code, rows[i].lot_code) == 0)
				sel[m++] = rows[j].l0_h;
		char name[96];
		snprintf(name, sizeof name, rows[i].lot_code[0] ? "lot %s" : "no lot%s", rows[i].lot_code);
		hb_db_lot lot;
		if (rows[i].lot_code[0] && hb_db_lot_find(db, part.id, rows[i].lot_code, &lot) == HB_OK &&
		    lot.decision != HB_DB_LOT_OPEN) {
			size_t len = strlen(name);
			snprintf(name + len, sizeof name - len, " (%s)", hb_db_lot_decision_name(lot.decision));
		}
		rpt_stats_row(h, name, sel, m, lsl, usl, "H");
	}
	if (n > 0)
		rpt_stats_row(h, "all units", l0, n, lsl, usl, "H");
	hb_html_table_end(h);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Trend and distribution");
	char *svg = NULL, e[200] = "";
	if (n > 0) {
		hb_plot *plot = hb_plot_new("L0 in measurement order");
		if (!plot) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
		hb_plot_set_axis(plot, HB_AXIS_X, "Unit, in order of measurement", "", false);
		hb_plot_set_axis(plot, HB_AXIS_Y, "Zero-bias inductance L0", "H", false);
		hb_plot_add_series(plot, HB_AXIS_Y, order, l0, n, "L0 per unit", HB_PLOT_LINE_POINTS);
		if (isfinite(usl))
			hb_plot_add_hline(plot, HB_AXIS_Y, usl, "upper limit");
		if (isfinite(lsl))
			hb_plot_add_hline(plot, HB_AXIS_Y, lsl, "lower limit");
		if (isfinite(part.nominal_h))
			hb_plot_add_hline(plot, HB_AXIS_Y, part.nominal_h, "nominal");
		rc = rpt_render(plot, &svg, e, sizeof e);
		snprintf(line, sizeof line, "%s: L0 of each unit in the order measured (the sweep ids are in the table "
			 "above), with the tolerance limits.", part.part_number);
		rpt_figure(h, rc, svg, line, e);
		rc = hb_report_histogram_svg(l0, n, lsl, usl, "L0 of every unit", &svg, e, sizeof e);
		snprintf(line, sizeof line, "%s: distribution of L0 against the tolerance band %s +-%g %%.",
			 part.part_number, rpt_si(a, sizeof a, part.nominal_h, "H", 4), part.tolerance * 100);
		rpt_figure(h, rc, svg, line, e);
	} else {
		hb_html_paragraph(h, "No complete bias sweep of this part is stored yet.");
	}
	hb_html_section_end(h);

	/* issue 13: what gap or turns would give the nominal L at the rated current */
	rpt_design_section(h, db, &part);

	/* issue 13: the lots as the switching rules saw them, per supplier */
	rc = rpt_stream_section(h, db, &part);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "lot streams of %s: %s", part_number, hb_db_errmsg(db));
		goto out;
	}
	{
		int64_t *ids = calloc(n ? n : 1, sizeof *ids);
		for (size_t i = 0; ids && i < n; i++)
			ids[i] = rows[i].sweep_id;
		if (ids)
			rpt_sweeps_instruments_section(h, db, ids, n,
						       "Every instrument that measured a unit's sweep above, once each");
		free(ids);
	}

	hb_html_section_begin(h, "Traceability");
	rpt_trace_paragraph(h, db, "Each row: the unit's latest complete bias sweep (id in the first column) and its "
			       "latest fit.");
	hb_html_section_end(h);
	rc = hb_html_close(h);
	h = NULL;
	if (rc != HB_OK)
		hb_set_err(err, errlen, "writing the report failed");
out:
	if (h)
		hb_html_close(h);
	free(l0);
	free(order);
	free(sel);
	hb_db_history_free(rows);
	return rc;
}
