/* src/quality/mask.c - the measured L-against-current curve judged at each point of the data sheet's mask; the gap-as-drawn sentence */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "mask.h"
#include "../../common/hb_text.h"

/* Worse outcomes rank higher; not-tested never competes for "worst". */
static int severity(hb_decision_outcome o)
{
	switch (o) {
	case HB_DECISION_FAIL:
		return 4;
	case HB_DECISION_CONDITIONAL_FAIL:
		return 3;
	case HB_DECISION_CONDITIONAL_PASS:
		return 2;
	case HB_DECISION_PASS:
		return 1;
	case HB_DECISION_NOT_TESTED:
	default:
		return 0;
	}
}

/* Second divided difference at point j (needs j - 1 and j + 1): an estimate of L''. */
static double second_diff(const double *I, const double *L, size_t n, size_t j)
{
	if (j == 0 || j + 1 >= n)
		return NAN;
	double s1 = (L[j] - L[j - 1]) / (I[j] - I[j - 1]);
	double s2 = (L[j + 1] - L[j]) / (I[j + 1] - I[j]);
	return 2 * (s2 - s1) / (I[j + 1] - I[j - 1]);
}

/* Half-width of linear interpolation's remainder on segment [a, a + 1] at
 * fraction t: t (1 - t) h^2 |L''| / 2 with the larger |L''| of the two
 * neighbouring second differences (0 when neither exists). */
static double interp_half_width(const double *I, const double *L, size_t n, size_t a, double t)
{
	double d2 = 0;
	double c[2] = { second_diff(I, L, n, a), second_diff(I, L, n, a + 1) };
	for (int i = 0; i < 2; i++)
		if (isfinite(c[i]) && fabs(c[i]) > d2)
			d2 = fabs(c[i]);
	double h = I[a + 1] - I[a];
	return t * (1 - t) * h * h * d2 / 2;
}

int hb_mask_evaluate(const double *I, const double *L, size_t n, const hb_db_part_drawing *d, double noise_rel,
		     double noise_sigma, double noise_dof, const hb_budget_context *ctx, hb_decision_rule rule, double r,
		     hb_mask_result *out, hb_budget *worst_budget)
{
	if (!I || !L || !d || !ctx || !out || n < 2)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	out->worst = -1;
	out->outcome = HB_DECISION_NOT_TESTED;
	if (d->n_curve == 0 || d->n_curve > HB_DB_MASK_MAX)
		return HB_ERR_DATA;
	out->swept_low = I[0];
	out->swept_high = I[n - 1];
	double slack = isfinite(ctx->supply_rel) ? ctx->supply_rel * fabs(I[0]) + ctx->supply_offset : HB_MASK_LOW_SLACK_A;
	if (!(slack > 0))
		slack = HB_MASK_LOW_SLACK_A;
	hb_budget bg;
	for (size_t k = 0; k < d->n_curve; k++) {
		hb_mask_point_result *p = &out->pt[out->n++];
		p->current = d->curve[k].current_a;
		p->nominal = d->curve[k].inductance_h;
		p->tol = hb_db_curve_point_tol(d, k);
		p->low = p->nominal * (1 - p->tol);
		p->high = p->nominal * (1 + p->tol);
		p->measured = p->t = p->dl_di = p->u_c = p->k = p->U = NAN;
		/* which segment: a, a + 1 bracket the current */
		size_t a = 0;
		double t = NAN;
		if (p->current < I[0]) {
			if (I[0] - p->current <= slack)
				t = 0; /* the first reading stands for currents within its read-back accuracy */
		} else if (p->current <= I[n - 1]) {
			while (a + 2 < n && p->current > I[a + 1])
				a++;
			t = (p->current - I[a]) / (I[a + 1] - I[a]);
			if (t < 0)
				t = 0;
		}
		if (!isfinite(t)) {
			p->check = hb_verdict_limits(NAN, p->low, p->high);
			memset(&p->decision, 0, sizeof p->decision);
			p->decision.rule = rule;
			p->decision.outcome = HB_DECISION_NOT_TESTED;
			p->decision.measured = p->decision.U = p->decision.k = p->decision.u = p->decision.w = NAN;
			p->decision.al_low = p->decision.al_high = p->decision.rl_low = p->decision.rl_high = NAN;
			p->decision.p_conform = p->decision.p_false_accept = NAN;
			out->n_untested++;
			continue;
		}
		p->tested = true;
		p->t = t;
		p->measured = L[a] + t * (L[a + 1] - L[a]);
		p->dl_di = (L[a + 1] - L[a]) / (I[a + 1] - I[a]);
		p->check = hb_verdict_limits(p->measured, p->low, p->high);
		double sigma = noise_rel > 0 ? noise_rel * p->measured : noise_sigma;
		char name[32];
		snprintf(name, sizeof name, "mask@%gA", p->current);
		hb_budget_mask_point(name, p->current, p->measured, t, p->dl_di, interp_half_width(I, L, n, a, t), sigma,
				     noise_dof, ctx, &bg);
		p->u_c = bg.u_c;
		p->k = bg.k;
		p->U = bg.U;
		hb_decision_spec spec;
		hb_decision_spec_init(&spec);
		spec.tl_low = p->low;
		spec.tl_high = p->high;
		spec.rule = rule;
		spec.r = r;
		double U = p->U, kf = p->k;
		if (!(isfinite(U) && isfinite(kf) && kf > 0)) {
			U = kf = NAN;
			if (rule != HB_DECISION_SIMPLE) {
				spec.rule = HB_DECISION_SIMPLE;
				p->rule_fell_back = true;
			}
		}
		int rc = hb_decision_evaluate(&spec, p->measured, U, kf, &p->decision);
		if (rc != HB_OK)
			return rc;
		out->n_tested++;
		if (p->decision.outcome == HB_DECISION_FAIL)
			out->n_fail++;
		if (p->decision.outcome == HB_DECISION_CONDITIONAL_PASS ||
		    p->decision.outcome == HB_DECISION_CONDITIONAL_FAIL)
			out->n_conditional++;
		bool worse = out->worst < 0;
		if (!worse) {
			const hb_mask_point_result *w = &out->pt[out->worst];
			int sp = severity(p->decision.outcome), sw = severity(w->decision.outcome);
			worse = sp > sw || (sp == sw && p->check.margin_frac < w->check.margin_frac);
		}
		if (worse) {
			out->worst = (int)(out->n - 1);
			if (worst_budget) {
				*worst_budget = bg;
				snprintf(worst_budget->name, sizeof worst_budget->name, "mask");
				snprintf(worst_budget->note, sizeof worst_budget->note,
					 "L of the measured curve at %g A, the mask point with the least margin", p->current);
			}
		}
	}
	if (out->n_fail > 0)
		out->outcome = HB_DECISION_FAIL;
	else if (out->n_untested > 0 || out->worst < 0)
		out->outcome = HB_DECISION_NOT_TESTED;
	else
		out->outcome = out->pt[out->worst].decision.outcome;
	return HB_OK;
}

const char *hb_mask_summary_text(const hb_mask_result *m, char *buf, size_t cap)
{
	size_t len = 0;
	buf[0] = 0;
	if (m->worst >= 0) {
		const hb_mask_point_result *w = &m->pt[m->worst];
		char a[32], b[32], c[32], e[32];
		len += (size_t)snprintf(buf, cap, "worst margin %+.2f %% at %s (L %s, band %s to %s); %zu of %zu points inside",
					w->check.margin_frac * 100, hb_format_si(e, sizeof e, w->current, "A", 3),
					hb_format_si(a, sizeof a, w->measured, "H", 4), hb_format_si(b, sizeof b, w->low, "H", 4),
					hb_format_si(c, sizeof c, w->high, "H", 4), m->n_tested - m->n_fail, m->n);
	} else {
		len += (size_t)snprintf(buf, cap, "no mask point within the sweep");
	}
	if (m->n_untested > 0 && len < cap) {
		char lo[32], hi[32];
		snprintf(buf + len, cap - len, "; %zu beyond the swept %s to %s: untested", m->n_untested,
			 hb_format_si(lo, sizeof lo, m->swept_low, "A", 3), hb_format_si(hi, sizeof hi, m->swept_high, "A", 3));
	}
	return buf;
}

/* "2300 (the part states 2300: +0.0 %)" */
static void beside(char *buf, size_t cap, double fit, double stated, const char *unit, const char *label)
{
	char a[32], b[32];
	if (!isfinite(fit)) {
		snprintf(buf, cap, "%s not fitted", label);
		return;
	}
	if (unit[0])
		hb_format_si(a, sizeof a, fit, unit, 3);
	else
		snprintf(a, sizeof a, "%.4g", fit);
	if (!isfinite(stated) || stated == 0) {
		snprintf(buf, cap, "%s %s (the part states none)", label, a);
		return;
	}
	if (unit[0])
		hb_format_si(b, sizeof b, stated, unit, 3);
	else
		snprintf(b, sizeof b, "%.4g", stated);
	double pct = (fit / stated - 1) * 100;
	snprintf(buf, cap, "%s %s (the part states %s: %+.1f %%)", label, a, b, fabs(pct) < 0.05 ? 0.0 : pct);
}

const char *hb_gap_drawn_sentence(const hb_gap_drawn *g, char *buf, size_t cap)
{
	char d[32], t[32], m[32], u[32], diff[32], mu[96], js[96];
	hb_format_si(d, sizeof d, g->drawn, "m", 3);
	hb_format_si(t, sizeof t, g->tol, "m", 3);
	if (!isfinite(g->measured)) {
		snprintf(buf, cap, "gap as drawn (%s +- %s): not measured", d, t);
		return buf;
	}
	double delta = g->measured - g->drawn;
	hb_format_si(m, sizeof m, g->measured, "m", 4);
	hb_format_si(diff, sizeof diff, fabs(delta), "m", 3);
	if (isfinite(g->U))
		hb_format_si(u, sizeof u, g->U, "m", 2);
	beside(mu, sizeof mu, g->mu_i_fit, g->mu_i_part, "", "mu_i");
	beside(js, sizeof js, g->js_fit, g->bsat_part, "T", "Js");
	const char *way = delta > 0 ? "wider than" : delta < 0 ? "narrower than" : "exactly as";
	char Utext[80] = "";
	if (isfinite(g->U))
		snprintf(Utext, sizeof Utext, " +- %s (k = %.2g)", u, g->k);
	const char *vs_u = !isfinite(g->U) ? "" : fabs(delta) > g->U ? ", more than its U" : ", within its U";
	if (delta == 0)
		snprintf(buf, cap, "measured gap %s%s, exactly as drawn (%s +- %s); fitted %s, %s", m, Utext, d, t, mu, js);
	else
		snprintf(buf, cap, "measured gap %s%s is %s (%+.1f %%) %s drawn (%s +- %s)%s; fitted %s, %s", m, Utext,
			 diff, fabs(delta / g->drawn) < 5e-4 ? 0.0 : delta / g->drawn * 100, way, d, t, vs_u, mu, js);
	return buf;
}

void hb_mask_print(FILE *out, const hb_mask_result *m)
{
	fprintf(out, "curve mask (L interpolated linearly between the bracketing points):\n");
	fprintf(out, "  %-10s %-12s %-26s %-12s %-9s %-16s %s\n", "current", "data sheet", "band", "measured", "margin",
		"U (k)", "outcome");
	for (size_t i = 0; i < m->n; i++) {
		const hb_mask_point_result *p = &m->pt[i];
		char c[32], nom[32], lo[32], hi[32], band[72], mv[32], mg[24], u[48];
		hb_format_si(c, sizeof c, p->current, "A", 3);
		hb_format_si(nom, sizeof nom, p->nominal, "H", 4);
		snprintf(band, sizeof band, "%s to %s", hb_format_si(lo, sizeof lo, p->low, "H", 4),
			 hb_format_si(hi, sizeof hi, p->high, "H", 4));
		if (!p->tested) {
			fprintf(out, "  %-10s %-12s %-26s %-12s %-9s %-16s %s\n", c, nom, band, "-", "-", "-",
				"not-tested (beyond the swept current)");
			continue;
		}
		hb_format_si(mv, sizeof mv, p->measured, "H", 4);
		snprintf(mg, sizeof mg, "%+.2f %%", p->check.margin_frac * 100);
		if (isfinite(p->U)) {
			char ub[32];
			snprintf(u, sizeof u, "%s (%.2g)", hb_format_si(ub, sizeof ub, p->U, "H", 3), p->k);
		} else {
			snprintf(u, sizeof u, "-");
		}
		fprintf(out, "  %-10s %-12s %-26s %-12s %-9s %-16s %s%s\n", c, nom, band, mv, mg, u,
			hb_decision_outcome_name(p->decision.outcome), p->rule_fell_back ? " (no U: simple acceptance)" : "");
	}
	char buf[200];
	fprintf(out, "  %s\n", hb_mask_summary_text(m, buf, sizeof buf));
}

static json_t *jnum(double v)
{
	return isfinite(v) ? json_real(v) : json_null();
}

json_t *hb_mask_json(const hb_mask_result *m)
{
	json_t *o = json_object();
	json_object_set_new(o, "outcome", json_string(hb_decision_outcome_name(m->outcome)));
	json_object_set_new(o, "interpolation", json_string("linear in L against I between the bracketing points"));
	const hb_mask_point_result *w = m->worst >= 0 ? &m->pt[m->worst] : NULL;
	json_object_set_new(o, "worst_margin_fraction", jnum(w ? w->check.margin_frac : NAN));
	json_object_set_new(o, "worst_current_A", jnum(w ? w->current : NAN));
	json_t *sw = json_array();
	json_array_append_new(sw, jnum(m->swept_low));
	json_array_append_new(sw, jnum(m->swept_high));
	json_object_set_new(o, "swept_A", sw);
	json_t *a = json_array();
	for (size_t i = 0; i < m->n; i++) {
		const hb_mask_point_result *p = &m->pt[i];
		json_t *q = json_object();
		json_object_set_new(q, "current_A", jnum(p->current));
		json_object_set_new(q, "nominal_H", jnum(p->nominal));
		json_object_set_new(q, "tol", jnum(p->tol));
		json_object_set_new(q, "low_H", jnum(p->low));
		json_object_set_new(q, "high_H", jnum(p->high));
		json_object_set_new(q, "measured_H", jnum(p->measured));
		json_object_set_new(q, "margin_fraction", jnum(p->check.margin_frac));
		json_object_set_new(q, "U_H", jnum(p->U));
		json_object_set_new(q, "k", jnum(p->k));
		json_object_set_new(q, "outcome", json_string(hb_decision_outcome_name(p->decision.outcome)));
		if (!p->tested)
			json_object_set_new(q, "reason", json_string("beyond the swept current: not extrapolated"));
		else if (p->rule_fell_back)
			json_object_set_new(q, "reason", json_string("no expanded uncertainty: judged by simple acceptance"));
		json_array_append_new(a, q);
	}
	json_object_set_new(o, "points", a);
	return o;
}

json_t *hb_gap_drawn_json(const hb_gap_drawn *g, const char *sentence)
{
	json_t *o = json_object();
	json_object_set_new(o, "drawn_m", jnum(g->drawn));
	json_object_set_new(o, "tol_m", jnum(g->tol));
	json_object_set_new(o, "measured_m", jnum(g->measured));
	json_object_set_new(o, "U_m", jnum(g->U));
	json_object_set_new(o, "k", jnum(g->k));
	json_object_set_new(o, "difference_m", jnum(g->measured - g->drawn));
	json_object_set_new(o, "mu_i_fit", jnum(g->mu_i_fit));
	json_object_set_new(o, "mu_i_part", jnum(g->mu_i_part));
	json_object_set_new(o, "Js_fit_T", jnum(g->js_fit));
	json_object_set_new(o, "Bsat_part_T", jnum(g->bsat_part));
	json_object_set_new(o, "sentence", json_string(sentence ? sentence : ""));
	return o;
}
