/* src/quality/analysis_drawing.c - a bias sweep's checks against the part's drawing and data sheet: the curve mask (check "mask") and the gap as drawn (check "gap") */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis_internal.h"
#include "../../common/hb_text.h"

/* The data sheet's curve mask: one check "mask" carrying the worst point
 * (its budget goes in as "mask", so apply_rules judges it as the mask
 * evaluation did); the gap measured against the drawn one. */
void hb_analysis_judge_drawing(hb_analysis_summary *s, const hb_db_part *part, hb_decision_rule rule, double r,
			       const hb_db_part_drawing *drw, const double *I, const double *L, size_t n, double noise_rel,
			       const hb_budget_context *bc)
{
	if (drw->n_curve > 0) {
		const hb_fit_modelfree_result *mf = &s->bias.modelfree;
		hb_budget wb;
		int rc = s->fit_status == HB_OK && n >= 2 ?
			hb_mask_evaluate(I, L, n, drw, noise_rel, mf->noise_sigma,
					 noise_rel > 0 ? INFINITY : hb_budget_noise_dof(mf), bc, rule, r, &s->mask, &wb) :
			HB_ERR_DATA;
		if (rc == HB_OK) {
			s->have_mask = true;
			hb_check c = hb_analysis__untested();
			char note[160];
			hb_mask_summary_text(&s->mask, note, sizeof note);
			if (s->mask.worst >= 0) {
				c = s->mask.pt[s->mask.worst].check;
				if (s->n_budgets < HB_BUDGET_MAX)
					s->budgets[s->n_budgets++] = wb;
				/* a point beyond the sweep leaves the mask untested unless another failed */
				if (s->mask.outcome == HB_DECISION_NOT_TESTED)
					c.outcome = HB_OUTCOME_NOT_TESTED;
			}
			hb_analysis__add_check(s, "mask", "H", c, note);
		} else {
			hb_analysis__add_check(s, "mask", "H", hb_analysis__untested(), "no bias data to judge the data sheet's curve mask against");
		}
	}
	if (isfinite(drw->gap_m)) {
		hb_gap_drawn *g = &s->gap_drawn;
		g->drawn = drw->gap_m;
		g->tol = isfinite(drw->gap_tol_m) ? drw->gap_tol_m : 0;
		g->measured = g->U = g->k = g->mu_i_fit = g->js_fit = NAN;
		g->mu_i_part = part->mu_i;
		g->bsat_part = part->bsat_t;
		const char *why = NULL;
		const hb_budget *bg = hb_analysis_budget(s, "core.gap_physical");
		if (s->bias.core_status != HB_OK)
			why = "no core fit: the part needs turns, Ae and le";
		else if (!(part->window_m > 0))
			why = "no physical gap: the fringing correction needs the winding window height (--window)";
		else if (!bg || !isfinite(s->bias.core.gap_physical))
			why = "the core fit did not determine the gap from these data";
		if (s->bias.core_status == HB_OK) {
			const hb_fit_core_law_result *lr = &s->bias.core.law[s->bias.core.best];
			if (!(lr->undetermined & (1u << HB_CORE_MU_I)))
				g->mu_i_fit = lr->param[HB_CORE_MU_I];
			if (!(lr->undetermined & (1u << HB_CORE_BSAT)))
				g->js_fit = lr->param[HB_CORE_BSAT];
		}
		char note[160];
		char a[32], b[32];
		if (why) {
			hb_analysis__add_check(s, "gap", "m", hb_analysis__untested(), why);
		} else {
			g->measured = s->bias.core.gap_physical;
			g->U = bg->U;
			g->k = bg->k;
			snprintf(note, sizeof note, "physical gap from the core fit against the drawn %s +- %s%s",
				 hb_format_si(a, sizeof a, g->drawn, "m", 3), hb_format_si(b, sizeof b, g->tol, "m", 3),
				 (s->bias.core.flags & HB_CORE_NO_LAW_FITS) ? "; the core model MISFITS this part" : "");
			hb_analysis__add_check(s, "gap", "m", hb_verdict_limits(g->measured, g->drawn - g->tol, g->drawn + g->tol), note);
		}
		s->have_gap_drawn = true;
		hb_gap_drawn_sentence(g, s->gap_sentence, sizeof s->gap_sentence);
	}
}

