/* src/report/report_mask.c - the sweep report's section on the part's drawing and data sheet: the curve mask point by point and the gap as drawn */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../quality/quality.h"
#include "../../common/hb_text.h"
#include "html.h"
#include "report.h"
#include "report_internal.h"

static const hb_db_verdict *verdict_of(const sweep_data *d, const char *name)
{
	for (size_t i = 0; i < d->nv; i++)
		if (strcmp(d->verdicts[i].check_name, name) == 0)
			return &d->verdicts[i];
	return NULL;
}

static double fit_value(const sweep_data *d, const char *name)
{
	for (size_t i = 0; d->have_fit && i < d->fit->n_values; i++)
		if (strcmp(d->fit->values[i].name, name) == 0)
			return d->fit->values[i].value;
	return NAN;
}

/* The mask recomputed from the stored points by the analysis' own function,
 * with the rule the stored verdict names. */
static void mask_table(hb_html *h, const sweep_data *d, const hb_db_part_drawing *dr)
{
	const hb_db_verdict *v = verdict_of(d, "mask");
	double *I = NULL, *L = NULL;
	size_t m = 0;
	hb_mask_result *res = calloc(1, sizeof *res);
	if (!res || hb_analysis_bias_arrays(d->pts, d->n, &I, &L, &m) != HB_OK || m < 2) {
		hb_html_paragraph(h, "Curve mask: no rising bias points to judge it against.");
		goto out;
	}
	hb_decision_rule rule = HB_DECISION_SIMPLE;
	double r = 1;
	if (v && hb_decision_rule_parse(v->decision_rule, &rule) != HB_OK)
		rule = HB_DECISION_SIMPLE;
	if (v && isfinite(v->guard_r))
		r = v->guard_r;
	hb_budget_context bc;
	hb_budget_context_from_sweep(&bc, &d->sweep);
	double noise_rel = isfinite(d->sweep.reading_noise_rel) ? d->sweep.reading_noise_rel : 0;
	if (hb_mask_evaluate(I, L, m, dr, noise_rel, fit_value(d, "noise_sigma"), INFINITY, &bc, rule, r, res, NULL) !=
	    HB_OK) {
		hb_html_paragraph(h, "Curve mask: could not be evaluated.");
		goto out;
	}
	char line[400], sum[240];
	snprintf(line, sizeof line,
		 "Data sheet curve mask (%s, %zu points): %s. Verdict as stored: %s. L at each mask current is "
		 "interpolated linearly between the two measured points that bracket it; a point beyond the swept "
		 "current is not tested, never extrapolated.",
		 dr->curve_source[0] ? dr->curve_source : "source not stated", dr->n_curve,
		 hb_mask_summary_text(res, sum, sizeof sum), v ? hb_db_outcome_name(v->outcome) : "none stored");
	hb_html_paragraph(h, line);
	static const char *const head[] = { "Current", "Data sheet L", "Band", "Measured L", "U (k)", "Margin", "Result" };
	hb_html_table_begin(h, "U recomputed from the stored points and the sweep's accuracy record (reading noise "
			       "taken as known); margin: distance to the nearer band limit as a fraction of it.",
			    head, 7);
	for (size_t i = 0; i < res->n; i++) {
		const hb_mask_point_result *p = &res->pt[i];
		char c[32], nom[32], lo[32], hi[32], band[80], mv[32], uu[32], uk[64], mg[24];
		snprintf(band, sizeof band, "%s ... %s", rpt_si(lo, sizeof lo, p->low, "H", 4),
			 rpt_si(hi, sizeof hi, p->high, "H", 4));
		if (isfinite(p->U))
			snprintf(uk, sizeof uk, "%s (k = %.2f)", rpt_si(uu, sizeof uu, p->U, "H", 3), p->k);
		else
			snprintf(uk, sizeof uk, "-");
		const char *outcome = p->tested ? hb_decision_outcome_name(p->decision.outcome) : "not-tested";
		const char *cells[7] = { rpt_si(c, sizeof c, p->current, "A", 3), rpt_si(nom, sizeof nom, p->nominal, "H", 4),
					 band, p->tested ? rpt_si(mv, sizeof mv, p->measured, "H", 5) : "beyond the sweep",
					 uk, rpt_pct(mg, sizeof mg, p->check.margin_frac), outcome };
		hb_html_table_row_class(h, outcome, cells, 7);
	}
	hb_html_table_end(h);
out:
	free(res);
	free(I);
	free(L);
}

void rpt_drawing_section(hb_html *h, hb_db *db, const sweep_data *d)
{
	if (!d->have_part || d->sweep.kind != HB_DB_SWEEP_BIAS)
		return;
	hb_db_part_drawing dr;
	if (hb_db_part_drawing_get(db, d->part.id, &dr) != HB_OK || (dr.n_curve == 0 && !isfinite(dr.gap_m)))
		return;
	hb_html_section_begin(h, "Against the drawing and the data sheet");
	if (isfinite(dr.gap_m)) {
		const hb_db_verdict *v = verdict_of(d, "gap");
		hb_gap_drawn g = { .drawn = dr.gap_m, .tol = dr.gap_tol_m, .measured = v ? v->measured : NAN,
				   .U = v ? v->expanded_u : NAN, .k = v ? v->coverage_k : NAN,
				   .mu_i_fit = fit_value(d, "core.mu_i"), .mu_i_part = d->part.mu_i,
				   .js_fit = fit_value(d, "core.Js"), .bsat_part = d->part.bsat_t };
		char s[400], line[520];
		hb_gap_drawn_sentence(&g, s, sizeof s);
		snprintf(line, sizeof line, "Gap as drawn (%s): %s.", v ? hb_db_outcome_name(v->outcome) : "not judged", s);
		hb_html_paragraph(h, line);
	}
	if (dr.n_curve > 0)
		mask_table(h, d, &dr);
	hb_html_section_end(h);
}
