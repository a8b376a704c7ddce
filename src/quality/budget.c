/* src/quality/budget.c - GUM budgets of a bias sweep's reported quantities: each input, its standard uncertainty, sensitivity and source */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "budget.h"
#include "budget_internal.h"
#include "../../common/hb_text.h"
#include "../bench/bench.h" /* hb_fixture_lead_inductance */

void hb_budget_context_init(hb_budget_context *c)
{
	memset(c, 0, sizeof *c);
	c->meter_rel = NAN;
	c->supply_rel = NAN;
	c->supply_offset = 0;
	c->temperature_c = NAN;
	c->t_ref_c = HB_BUDGET_T_REF;
	c->fringing_spread = HB_BUDGET_FRINGING_SPREAD;
	c->fixture_l_half = NAN;
}

void hb_budget_context_from_sweep(hb_budget_context *c, const hb_db_sweep *sw)
{
	hb_budget_context_init(c);
	c->meter_rel = sw->meter_accuracy_rel;
	snprintf(c->meter_spec, sizeof c->meter_spec, "%s", sw->meter_accuracy);
	c->supply_rel = sw->supply_accuracy_rel;
	c->supply_offset = isfinite(sw->supply_accuracy_offset_a) ? sw->supply_accuracy_offset_a : 0;
	snprintf(c->supply_spec, sizeof c->supply_spec, "%s", sw->supply_accuracy);
	c->temperature_c = sw->ambient_c;
	c->dcr_from_meter = isfinite(sw->dcr_meter_ohm);
}

typedef hb_budget_pending pending;

/* Evaluates the inputs (c given) into bg; false when the budget cannot be
 * evaluated (no finite input). */
static bool evaluate(hb_unc_budget *ub, hb_budget *bg, const pending *in, size_t n)
{
	hb_unc_reset(ub);
	bg->n = 0;
	for (size_t i = 0; i < n && bg->n < HB_BUDGET_MAX_INPUTS; i++) {
		if (!isfinite(in[i].u) || !isfinite(in[i].c))
			continue;
		if (hb_unc_add(ub, in[i].input, in[i].type, in[i].value, in[i].u, in[i].c, in[i].dof) < 0)
			return false;
		hb_budget_input *o = &bg->in[bg->n++];
		snprintf(o->input, sizeof o->input, "%s", in[i].input);
		snprintf(o->unit, sizeof o->unit, "%s", in[i].unit);
		snprintf(o->source, sizeof o->source, "%s", in[i].source);
		o->type = in[i].type;
		o->value = in[i].value;
		o->u = in[i].u;
		o->c = in[i].c;
		o->dof = in[i].dof;
	}
	if (bg->n == 0)
		return false;
	hb_unc_result r;
	if (hb_unc_evaluate(ub, 0, &r) != HB_OK)
		return false;
	for (size_t i = 0; i < bg->n; i++)
		bg->in[i].contribution = hb_unc_input_at(ub, i)->contribution;
	bg->u_c = r.u_c;
	bg->dof = r.dof_eff;
	bg->k = r.k;
	bg->U = r.U;
	bg->p = r.p;
	return true;
}

static void budget_start(hb_budget *bg, const char *name, const char *unit, double value, double se)
{
	memset(bg, 0, sizeof *bg);
	snprintf(bg->name, sizeof bg->name, "%s", name);
	snprintf(bg->unit, sizeof bg->unit, "%s", unit);
	bg->value = value;
	bg->std_err = se;
	bg->u_c = bg->dof = bg->k = bg->U = bg->p = NAN;
}

/* The degrees of freedom of the model-free L0: its points less the
 * polynomial's terms (the basis text lists them, comma-separated). */
static double l0_dof(const hb_fit_modelfree_result *mf)
{
	size_t terms = 1;
	for (const char *p = mf->L0_basis; *p; p++)
		terms += *p == ',';
	return mf->L0_points > terms ? (double)(mf->L0_points - terms) : INFINITY;
}

static void meter_source(const hb_budget_context *c, char *buf, size_t cap)
{
	snprintf(buf, cap, "meter accuracy +-%.3g %% of reading, rectangular (GUM 4.3.7)%s%s", c->meter_rel * 100,
		 c->meter_spec[0] ? ": " : "", c->meter_spec);
}

static double supply_half_width(const hb_budget_context *c, double amps)
{
	return c->supply_rel * fabs(amps) + c->supply_offset;
}

static void supply_source(const hb_budget_context *c, const char *how, char *buf, size_t cap)
{
	char off[32];
	snprintf(buf, cap, "supply read-back +-(%.3g %% + %s), rectangular%s; %s", c->supply_rel * 100,
		 hb_format_si(off, sizeof off, c->supply_offset, "A", 3), how, c->supply_spec);
}

/* ---------------- refits for the core model's sensitivities ---------------- */

typedef struct core_point {
	bool ok;
	double param[HB_CORE_NP];
	double gap_physical;
} core_point;

/* The best law refitted with every reading times gain_l and every current
 * times gain_i. */
static core_point refit_core(hb_fit_ws *ws, const hb_fit_bias_result *b, const double *I, const double *L,
			     const double *sigma, size_t n, const hb_fit_options *fo, double gain_l, double gain_i)
{
	core_point cp = { .ok = false };
	double *buf = malloc(sizeof *buf * 3 * (n ? n : 1));
	hb_fit_core_result *res = malloc(sizeof *res);
	if (!buf || !res)
		goto out;
	double *I2 = buf, *L2 = buf + n, *S2 = sigma ? buf + 2 * n : NULL;
	for (size_t i = 0; i < n; i++) {
		I2[i] = I[i] * gain_i;
		L2[i] = L[i] * gain_l;
		if (S2)
			S2[i] = sigma[i] * gain_l;
	}
	hb_fit_options o = *fo;
	o.laws = 1u << b->core.best;
	o.noise_sigma *= gain_l;
	o.rated_current *= gain_i;
	if (hb_fit_core(ws, I2, L2, S2, n, &o, res) == HB_OK && res->law[b->core.best].status == HB_OK) {
		memcpy(cp.param, res->law[b->core.best].param, sizeof cp.param);
		cp.gap_physical = res->gap_physical;
		cp.ok = true;
	}
out:
	free(buf);
	free(res);
	return cp;
}

/* Relative step of the central differences: large against the fit's
 * convergence tolerance, small against the curvature of the model. */
#define REFIT_STEP 0.01

/* g with g / (1 + s (F(g) - 1)) = g_eff, F McLyman's factor: s scales the
 * fringing term (s = 1 is hb_fit_gap_physical). Bisection: the left side
 * rises with g between g_eff and 2G. */
static double gap_physical_scaled(double g_eff, double Ae, double G, double s)
{
	if (!(g_eff > 0) || !(Ae > 0) || !(G > 0) || !(g_eff < 2 * G))
		return NAN;
	double lo = g_eff, hi = 2 * G;
	for (int it = 0; it < 200 && hi - lo > 1e-15 * hi; it++) {
		double mid = 0.5 * (lo + hi);
		double F = 1 + s * (hb_fit_fringing_factor(mid, Ae, G) - 1);
		if (mid / F < g_eff)
			lo = mid;
		else
			hi = mid;
	}
	return 0.5 * (lo + hi);
}

/* ---------------- the budgets ---------------- */

static void budget_l0(hb_unc_budget *ub, const hb_fit_bias_result *b, const hb_budget_context *c, hb_budget *bg)
{
	const hb_fit_modelfree_result *mf = &b->modelfree;
	budget_start(bg, "L0", "H", mf->L0, mf->L0_std_err);
	pending in[3] = {
		{ "L0 fit (Type A)", "H", HB_UNC_TYPE_A, mf->L0, mf->L0_std_err, 1, l0_dof(mf), "" },
		{ "meter gain", "", HB_UNC_TYPE_B, 1, hb_unc_rectangular(c->meter_rel), mf->L0, INFINITY, "" },
		/* a series inductance left by the compensation adds to Ls one for one */
		{ "fixture residual", "H", HB_UNC_TYPE_B, 0, hb_unc_rectangular(c->fixture_l_half), 1, INFINITY, "" },
	};
	snprintf(in[0].source, sizeof in[0].source, "fit: polynomial %s through %zu points at zero bias", mf->L0_basis,
		 mf->L0_points);
	/* L0 is a reading: a gain error of the meter scales it one for one */
	meter_source(c, in[1].source, sizeof in[1].source);
	snprintf(in[2].source, sizeof in[2].source, "%s", c->fixture_source);
	evaluate(ub, bg, in, isfinite(c->fixture_l_half) ? 3 : 2);
}

static void budget_drop(hb_unc_budget *ub, const hb_fit_bias_result *b, const hb_fit_drop *d,
			const hb_budget_context *c, hb_budget *bg)
{
	char name[32];
	snprintf(name, sizeof name, "I_drop%g", d->fraction * 100);
	budget_start(bg, name, "A", d->current, d->std_err);
	pending in[3] = {
		{ "drop current (Type A)", "A", HB_UNC_TYPE_A, d->current, d->std_err, 1, l0_dof(&b->modelfree),
		  "fit: the crossing of (1 - drop) L0 with its L0's and readings' scatter" },
		/* the drop is a ratio of L to L0: a gain error of the meter cancels */
		{ "meter gain", "", HB_UNC_TYPE_B, 1, hb_unc_rectangular(c->meter_rel), 0, INFINITY, "" },
		{ "bias current", "A", HB_UNC_TYPE_B, d->current, hb_unc_rectangular(supply_half_width(c, d->current)), 1,
		  INFINITY, "" },
	};
	char ms[140];
	meter_source(c, ms, sizeof ms);
	snprintf(in[1].source, sizeof in[1].source, "c = 0: a gain error scales L and L0 alike; %s", ms);
	supply_source(c, " at the drop current; c = 1 (dI = dL / (dL/dI))", in[2].source, sizeof in[2].source);
	evaluate(ub, bg, in, 3);
}

size_t hb_budget_bias(const hb_fit_bias_result *b, const double *I, const double *L, const double *sigma, size_t n,
		      const hb_fit_options *fo, double dcr_ohm, const hb_budget_context *ctx, hb_budget *out, size_t cap)
{
	hb_unc_budget *ub = hb_unc_new();
	if (!ub)
		return 0;
	size_t m = 0;
	const hb_fit_modelfree_result *mf = &b->modelfree;
	if (m < cap && isfinite(mf->L0))
		budget_l0(ub, b, ctx, &out[m++]);
	for (size_t i = 0; i < mf->n_drops && m < cap; i++)
		if (mf->drop[i].reached && isfinite(mf->drop[i].current))
			budget_drop(ub, b, &mf->drop[i], ctx, &out[m++]);

	if (b->core_status == HB_OK && m < cap) {
		const hb_fit_core_result *cr = &b->core;
		const hb_fit_core_law_result *lr = &cr->law[cr->best];
		/* sensitivities to a gain error of the meter and of the current read-back, by refitting */
		double dp_dgl[HB_CORE_NP], dp_dgi[HB_CORE_NP], dgp_dgl = NAN, dgp_dgi = NAN;
		bool have_l = false, have_i = false;
		hb_fit_ws *ws = hb_fit_ws_new();
		if (ws && isfinite(ctx->meter_rel)) {
			core_point up = refit_core(ws, b, I, L, sigma, n, fo, 1 + REFIT_STEP, 1);
			core_point dn = refit_core(ws, b, I, L, sigma, n, fo, 1 - REFIT_STEP, 1);
			if ((have_l = up.ok && dn.ok)) {
				for (int j = 0; j < HB_CORE_NP; j++)
					dp_dgl[j] = (up.param[j] - dn.param[j]) / (2 * REFIT_STEP);
				dgp_dgl = (up.gap_physical - dn.gap_physical) / (2 * REFIT_STEP);
			}
		}
		if (ws && isfinite(ctx->supply_rel)) {
			core_point up = refit_core(ws, b, I, L, sigma, n, fo, 1, 1 + REFIT_STEP);
			core_point dn = refit_core(ws, b, I, L, sigma, n, fo, 1, 1 - REFIT_STEP);
			if ((have_i = up.ok && dn.ok)) {
				for (int j = 0; j < HB_CORE_NP; j++)
					dp_dgi[j] = (up.param[j] - dn.param[j]) / (2 * REFIT_STEP);
				dgp_dgi = (up.gap_physical - dn.gap_physical) / (2 * REFIT_STEP);
			}
		}
		hb_fit_ws_free(ws);
		/* the current's accuracy as a relative error where the knee is: its offset taken at the 20 % drop */
		double i_ref = mf->I_max;
		for (size_t i = 0; i < mf->n_drops; i++)
			if (mf->drop[i].reached && fabs(mf->drop[i].fraction - 0.2) < 1e-9)
				i_ref = mf->drop[i].current;
		double u_gi = hb_unc_rectangular(supply_half_width(ctx, i_ref) / i_ref);
		double u_gl = hb_unc_rectangular(ctx->meter_rel);
		char ms[140], ss[160];
		meter_source(ctx, ms, sizeof ms);
		char how[64], iref[32];
		snprintf(how, sizeof how, " taken as relative at %s", hb_format_si(iref, sizeof iref, i_ref, "A", 3));
		supply_source(ctx, how, ss, sizeof ss);
		static const char *const names[HB_CORE_NP] = { "core.mu_i", "core.gap", "core.Js" };
		static const char *const units[HB_CORE_NP] = { "", "m", "T" };
		for (int j = 0; j < HB_CORE_NP && m < cap; j++) {
			if (lr->undetermined & (1u << j) || lr->fixed[j])
				continue;
			hb_budget *bg = &out[m++];
			budget_start(bg, names[j], units[j], lr->param[j], lr->std_err[j]);
			pending in[3] = {
				{ "core fit (Type A)", units[j], HB_UNC_TYPE_A, lr->param[j], lr->std_err[j], 1, (double)lr->dof, "" },
				{ "meter gain", "", HB_UNC_TYPE_B, 1, u_gl, have_l ? dp_dgl[j] : NAN, INFINITY, "" },
				{ "current gain", "", HB_UNC_TYPE_B, 1, u_gi, have_i ? dp_dgi[j] : NAN, INFINITY, "" },
			};
			snprintf(in[0].source, sizeof in[0].source, "fit covariance, %s law", hb_core_law_name(cr->best));
			snprintf(in[1].source, sizeof in[1].source, "c by refitting with the readings scaled +-1 %%; %s", ms);
			snprintf(in[2].source, sizeof in[2].source, "c by refitting with the currents scaled +-1 %%; %s", ss);
			evaluate(ub, bg, in, 3);
		}
		/* mu_e and AL are L0 in other units: its budget scaled (the fit gives them from the model-free L0) */
		static const char *const lnames[2] = { "core.mu_e", "core.AL" };
		static const char *const lunits[2] = { "", "H" };
		const double lval[2] = { cr->mu_e, cr->AL }, lse[2] = { cr->mu_e_se, cr->AL_se };
		for (int j = 0; j < 2 && m < cap && isfinite(mf->L0) && mf->L0 > 0; j++) {
			if (!isfinite(lval[j]))
				continue;
			hb_budget *bg = &out[m++];
			budget_start(bg, lnames[j], lunits[j], lval[j], lse[j]);
			pending in[2] = {
				{ "from L0 (Type A)", lunits[j], HB_UNC_TYPE_A, lval[j], lse[j], 1, l0_dof(mf), "" },
				{ "meter gain", "", HB_UNC_TYPE_B, 1, u_gl, lval[j], INFINITY, "" },
			};
			snprintf(in[0].source, sizeof in[0].source, "the zero-bias L0's standard error (polynomial %s), scaled",
				 mf->L0_basis);
			snprintf(in[1].source, sizeof in[1].source, "%s", ms);
			evaluate(ub, bg, in, 2);
		}
		if (isfinite(cr->gap_physical) && !(lr->undetermined & (1u << HB_CORE_GAP)) && fo->geo.window_height > 0 &&
		    m < cap) {
			hb_budget *bg = &out[m++];
			budget_start(bg, "core.gap_physical", "m", cr->gap_physical, cr->gap_physical_se);
			double g_eff = lr->param[HB_CORE_GAP], s = ctx->fringing_spread;
			double g_lo = gap_physical_scaled(g_eff, fo->geo.Ae, fo->geo.window_height, 1 - s);
			double g_hi = gap_physical_scaled(g_eff, fo->geo.Ae, fo->geo.window_height, 1 + s);
			pending in[4] = {
				{ "gap fit (Type A)", "m", HB_UNC_TYPE_A, cr->gap_physical, cr->gap_physical_se, 1, (double)lr->dof,
				  "fit covariance through g/F(g) = effective gap" },
				{ "meter gain", "", HB_UNC_TYPE_B, 1, u_gl, have_l ? dgp_dgl : NAN, INFINITY, "" },
				{ "current gain", "", HB_UNC_TYPE_B, 1, u_gi, have_i ? dgp_dgi : NAN, INFINITY, "" },
				{ "fringing model", "m", HB_UNC_TYPE_B, cr->gap_physical, hb_unc_rectangular(0.5 * fabs(g_hi - g_lo)), 1,
				  INFINITY, "" },
			};
			snprintf(in[1].source, sizeof in[1].source, "c by refitting with the readings scaled +-1 %%; %s", ms);
			snprintf(in[2].source, sizeof in[2].source, "c by refitting with the currents scaled +-1 %%; %s", ss);
			snprintf(in[3].source, sizeof in[3].source,
				 "McLyman's (F - 1) varied +-%.0f %%, rectangular (from memory: the expression is an approximation "
				 "good to tens of percent)", s * 100);
			evaluate(ub, bg, in, 4);
		}
	}

	if (isfinite(dcr_ohm) && m < cap) {
		hb_budget *bg = &out[m++];
		double rel = ctx->dcr_from_meter ? ctx->meter_rel : ctx->supply_rel;
		double u_r = isfinite(rel) ? hb_unc_rectangular(rel * dcr_ohm) : 0;
		char rs[160];
		if (ctx->dcr_from_meter)
			snprintf(rs, sizeof rs, "the meter's accuracy +-%.3g %% taken for its DC-resistance reading (no DC "
				 "accuracy stated), rectangular", rel * 100);
		else
			snprintf(rs, sizeof rs, "V/I slope: the supply's current accuracy +-%.3g %% (its offset drops out; the "
				 "voltage read-back accuracy is not stated), rectangular", rel * 100);
		if (!isfinite(rel))
			snprintf(rs, sizeof rs, "no accuracy stated for the instrument: u taken as 0");
		if (isfinite(ctx->temperature_c)) {
			hb_unc_dcr in = { .R_T = dcr_ohm, .u_R = u_r, .dof_R = INFINITY,
					  .T = ctx->temperature_c, .u_T = hb_unc_rectangular(HB_BUDGET_T_HALF_WIDTH), .dof_T = INFINITY,
					  .T_ref = ctx->t_ref_c, .alpha20 = HB_UNC_ALPHA_CU20,
					  .u_alpha = hb_unc_rectangular(HB_BUDGET_ALPHA_HALF_WIDTH) };
			hb_unc_result r;
			if (hb_unc_dcr_budget(ub, &in, 0, &r) == HB_OK) {
				char measured[40];
				budget_start(bg, "DCR", "ohm", r.y, NAN);
				bg->u_c = r.u_c;
				bg->dof = r.dof_eff;
				bg->k = r.k;
				bg->U = r.U;
				bg->p = r.p;
				static const char *const srcs[3] = { NULL,
					"the ambient taken for the winding's temperature, +-2 K rectangular (assumption)",
					"copper 0.00393/K at 20 C (common practice), +-0.0001/K rectangular (from memory)" };
				for (size_t i = 0; i < hb_unc_count(ub) && i < HB_BUDGET_MAX_INPUTS; i++) {
					const hb_unc_input *x = hb_unc_input_at(ub, i);
					hb_budget_input *o = &bg->in[bg->n++];
					snprintf(o->input, sizeof o->input, "%s", x->name);
					snprintf(o->unit, sizeof o->unit, "%s", x->unit);
					o->type = HB_UNC_TYPE_B;
					o->value = x->value;
					o->u = x->u;
					o->c = x->c;
					o->contribution = x->contribution;
					o->dof = x->dof;
					snprintf(o->source, sizeof o->source, "%s", i < 3 && srcs[i] ? srcs[i] : rs);
				}
				snprintf(bg->note, sizeof bg->note,
					 "referred to %.0f C from %.1f C with copper's 0.00393/K: %s as measured",
					 ctx->t_ref_c, ctx->temperature_c, hb_format_si(measured, sizeof measured, dcr_ohm, "ohm", 6));
			}
		} else {
			budget_start(bg, "DCR", "ohm", dcr_ohm, NAN);
			pending in[1] = { { "R as measured", "ohm", HB_UNC_TYPE_B, dcr_ohm, u_r, 1, INFINITY, "" } };
			snprintf(in[0].source, sizeof in[0].source, "%s", rs);
			evaluate(ub, bg, in, 1);
			snprintf(bg->note, sizeof bg->note,
				 "uncorrected: no temperature stored, the resistance is as measured (not referred to %.0f C)",
				 ctx->t_ref_c);
		}
	}
	hb_unc_free(ub);
	return m;
}

/* ---------------- stored form and JSON ---------------- */

static json_t *num(double v)
{
	return isfinite(v) ? json_real(v) : json_null();
}

json_t *hb_budget_inputs_json(const hb_budget *bg)
{
	json_t *a = json_array();
	for (size_t i = 0; i < bg->n; i++) {
		const hb_budget_input *x = &bg->in[i];
		json_t *o = json_object();
		json_object_set_new(o, "input", json_string(x->input));
		json_object_set_new(o, "type", json_string(x->type == HB_UNC_TYPE_A ? "A" : "B"));
		json_object_set_new(o, "value", num(x->value));
		json_object_set_new(o, "unit", json_string(x->unit));
		json_object_set_new(o, "u", num(x->u));
		json_object_set_new(o, "c", num(x->c));
		json_object_set_new(o, "contribution", num(x->contribution));
		json_object_set_new(o, "dof", num(x->dof));
		json_object_set_new(o, "source", json_string(x->source));
		json_array_append_new(a, o);
	}
	return a;
}

void hb_budget_to_db(const hb_budget *bg, int64_t fit_id, hb_db_fit_unc *out)
{
	hb_db_fit_unc_init(out);
	out->fit_id = fit_id;
	snprintf(out->name, sizeof out->name, "%s", bg->name);
	out->value = bg->value;
	out->u_c = bg->u_c;
	out->dof = bg->dof;
	out->k = bg->k;
	out->U = bg->U;
	snprintf(out->note, sizeof out->note, "%s", bg->note);
	json_t *a = hb_budget_inputs_json(bg);
	char *text = json_dumps(a, JSON_COMPACT | JSON_REAL_PRECISION(10));
	if (text && strlen(text) < sizeof out->budget)
		snprintf(out->budget, sizeof out->budget, "%s", text);
	free(text);
	json_decref(a);
}

static json_t *add_common(json_t *o, double u_c, double k, double U, double dof, const char *note)
{
	json_object_set_new(o, "u_c", num(u_c));
	json_object_set_new(o, "k", num(k));
	json_object_set_new(o, "U", num(U));
	json_object_set_new(o, "dof", num(dof)); /* null: infinite */
	json_object_set_new(o, "coverage", json_real(HB_UNC_P_K2));
	if (note && *note)
		json_object_set_new(o, "uncertainty_note", json_string(note));
	return o;
}

json_t *hb_budget_add_stored_json(json_t *o, const hb_db_fit_unc *u)
{
	if (!o || !u)
		return o;
	add_common(o, u->u_c, u->k, u->U, u->dof, u->note);
	json_error_t err;
	json_t *a = json_loads(u->budget, 0, &err);
	json_object_set_new(o, "budget", a ? a : json_array());
	return o;
}

json_t *hb_budget_add_json(json_t *o, const hb_budget *bg)
{
	if (!o || !bg)
		return o;
	add_common(o, bg->u_c, bg->k, bg->U, bg->dof, bg->note);
	json_object_set_new(o, "budget", hb_budget_inputs_json(bg));
	return o;
}

void hb_budget_lsat(const hb_fit_bias_result *b, double i_sat, double l_at, double dl_di, double drop,
		    const hb_budget_context *c, hb_budget *bg)
{
	const hb_fit_modelfree_result *mf = &b->modelfree;
	budget_start(bg, "Lsat", "H", l_at, NAN);
	hb_unc_budget *ub = hb_unc_new();
	if (!ub)
		return;
	pending in[4] = {
		{ "reading noise", "H", HB_UNC_TYPE_A, l_at, mf->noise_sigma, 1, l0_dof(mf),
		  "one reading's scatter (the sweep's noise), interpolated between points" },
		{ "limit from L0 (Type A)", "H", HB_UNC_TYPE_A, mf->L0, mf->L0_std_err, -(1 - drop), l0_dof(mf),
		  "the limit (1 - drop) L0 moves with the fitted L0" },
		{ "meter gain", "", HB_UNC_TYPE_B, 1, hb_unc_rectangular(c->meter_rel), l_at - (1 - drop) * mf->L0, INFINITY,
		  "" },
		{ "bias current", "A", HB_UNC_TYPE_B, i_sat, hb_unc_rectangular(supply_half_width(c, i_sat)), dl_di, INFINITY,
		  "" },
	};
	char ms[140];
	meter_source(c, ms, sizeof ms);
	snprintf(in[2].source, sizeof in[2].source, "c = L - (1 - drop) L0: the gain scales reading and limit alike; %s",
		 ms);
	supply_source(c, " at the spec current; c = dL/dI there", in[3].source, sizeof in[3].source);
	evaluate(ub, bg, in, 4);
	hb_unc_free(ub);
}

/* ---------------- shared with the other budget files of quality/ ---------------- */

bool hb_budget__evaluate(hb_unc_budget *ub, hb_budget *bg, const hb_budget_pending *in, size_t n)
{
	return evaluate(ub, bg, in, n);
}

void hb_budget__start(hb_budget *bg, const char *name, const char *unit, double value, double se)
{
	budget_start(bg, name, unit, value, se);
}

void hb_budget__meter_source(const hb_budget_context *c, char *buf, size_t cap)
{
	meter_source(c, buf, cap);
}

/* ---------------- curve masks (issue 13) ---------------- */

double hb_budget_noise_dof(const hb_fit_modelfree_result *mf)
{
	return mf ? l0_dof(mf) : INFINITY;
}

void hb_budget_mask_point(const char *name, double i_mask, double l_at, double t, double dl_di, double interp_hw,
			  double noise_sigma, double noise_dof, const hb_budget_context *c, hb_budget *bg)
{
	budget_start(bg, name, "H", l_at, NAN);
	hb_unc_budget *ub = hb_unc_new();
	if (!ub)
		return;
	/* the interpolated value is (1 - t) L_a + t L_b: independent readings add in quadrature */
	double w = sqrt((1 - t) * (1 - t) + t * t);
	pending in[4] = {
		{ "reading noise", "H", HB_UNC_TYPE_A, l_at, noise_sigma * w, 1, noise_dof, "" },
		{ "meter gain", "", HB_UNC_TYPE_B, 1, hb_unc_rectangular(c->meter_rel), l_at, INFINITY, "" },
		{ "bias current", "A", HB_UNC_TYPE_B, i_mask, hb_unc_rectangular(supply_half_width(c, i_mask)), dl_di,
		  INFINITY, "" },
		{ "linear interpolation", "H", HB_UNC_TYPE_B, l_at, hb_unc_rectangular(interp_hw), 1, INFINITY,
		  "t (1 - t) h^2 |L''| / 2 with L'' from the neighbouring points' second differences, rectangular "
		  "(the remainder of linear interpolation, common practice)" },
	};
	snprintf(in[0].source, sizeof in[0].source,
		 "one reading's scatter (the sweep's noise) x sqrt((1 - t)^2 + t^2), t = %.3f between the bracketing points",
		 t);
	char ms[140];
	meter_source(c, ms, sizeof ms);
	snprintf(in[1].source, sizeof in[1].source, "c = L: the data sheet's band stays where it is; %s", ms);
	supply_source(c, " at the mask current; c = dL/dI of the segment", in[2].source, sizeof in[2].source);
	evaluate(ub, bg, in, 4);
	hb_unc_free(ub);
}

void hb_budget_context_fixture(hb_budget_context *c, hb_db *db, int64_t sweep_id)
{
	hb_db_sweep_trace t;
	hb_db_fixture_comp shrt;
	c->fixture_l_half = NAN;
	c->fixture_source[0] = '\0';
	if (hb_db_sweep_trace_get(db, sweep_id, &t) != HB_OK || t.short_comp_id <= 0 ||
	    hb_db_fixture_comp_get(db, t.short_comp_id, &shrt) != HB_OK)
		return;
	double l = hb_fixture_lead_inductance(&shrt);
	if (!isfinite(l))
		return;
	c->fixture_l_half = l;
	snprintf(c->fixture_source, sizeof c->fixture_source,
		 "+-%.3g nH, rectangular: the lead L of short compensation %lld (%s), taken whole as the bound of what is left",
		 l * 1e9, (long long)shrt.id, shrt.method);
}
