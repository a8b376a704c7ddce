/* src/quality/analysis.c - from stored points to stored fit values and verdicts; the meeting point of db/ and fit/ */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis.h"
#include "../../common/hb_text.h"
#include "../bench/bench.h" /* HB_SWEEP_DCR_FRACTION: the points the settle rule holds still for V/I */

void hb_analysis_options_init(hb_analysis_options *opt)
{
	memset(opt, 0, sizeof *opt);
	opt->knee = true;
	opt->core = true;
	opt->fix_mu_i = opt->fix_gap = opt->fix_bsat = NAN;
	opt->store = true;
	opt->default_rule = HB_DECISION_SIMPLE;
	opt->default_r = NAN;
}

hb_db_outcome hb_analysis_db_outcome(hb_decision_outcome o)
{
	switch (o) {
	case HB_DECISION_PASS:
		return HB_DB_PASS;
	case HB_DECISION_CONDITIONAL_PASS:
		return HB_DB_CONDITIONAL_PASS;
	case HB_DECISION_CONDITIONAL_FAIL:
		return HB_DB_CONDITIONAL_FAIL;
	case HB_DECISION_FAIL:
		return HB_DB_FAIL;
	case HB_DECISION_NOT_TESTED:
	default:
		return HB_DB_NOT_TESTED;
	}
}

const char *hb_analysis_rule_text(const hb_analysis_check *k, char *buf, size_t cap)
{
	if (k->decision.rule == HB_DECISION_SIMPLE)
		snprintf(buf, cap, "%s", hb_decision_rule_statement(k->decision.rule));
	else
		snprintf(buf, cap, "%s (r = %g): %s", hb_decision_rule_name(k->decision.rule), k->guard_r,
			 hb_decision_rule_statement(k->decision.rule));
	return buf;
}

/*
 * The spread of the supply's read-backs bracketing a point's accepted
 * readings (A): how far the current moved while the meter read. Points
 * stored before the engine kept it read NAN, and the residual check then
 * reports the cause "current moving" as not checked.
 */
static double point_bias_spread(const hb_db_point *p)
{
	/* NAN for points stored before the read-back spread was kept. */
	return p->bias_spread_a;
}

/* The rising points as hb_analysis_bias_arrays takes them, with each one's
 * bias spread (NAN when unknown) when spread is not NULL. */
static int bias_arrays_spread(const hb_db_point *points, size_t n, double **current, double **inductance,
			      double **spread, size_t *count)
{
	double *I = malloc(sizeof *I * (n ? n : 1));
	double *L = malloc(sizeof *L * (n ? n : 1));
	double *S = spread ? malloc(sizeof *S * (n ? n : 1)) : NULL;
	if (!I || !L || (spread && !S)) {
		free(I);
		free(L);
		free(S);
		return HB_ERR_NOMEM;
	}
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		const hb_db_point *p = &points[i];
		if (p->direction != HB_DB_DIR_UP || !isfinite(p->primary) || p->primary <= 0)
			continue;
		double amps = isfinite(p->bias_meas_a) ? p->bias_meas_a : p->bias_set_a;
		if (!isfinite(amps))
			continue;
		/* At zero the supply's read-back is offset noise around zero. */
		if (amps < 0)
			amps = 0;
		if (m > 0 && amps <= I[m - 1])
			continue;
		I[m] = amps;
		L[m] = p->primary;
		if (S)
			S[m] = point_bias_spread(p);
		m++;
	}
	*current = I;
	*inductance = L;
	if (spread)
		*spread = S;
	*count = m;
	return HB_OK;
}

int hb_analysis_bias_arrays(const hb_db_point *points, size_t n, double **current, double **inductance,
			    size_t *count)
{
	return bias_arrays_spread(points, n, current, inductance, NULL, count);
}

/* Winding resistance from the supply's read-back: slope of V against I over
 * the low-current points, so a fixed offset of the read-back drops out.
 * Two-wire: leads and fixture contacts are included. */
static double dcr_from_points(const hb_db_point *pts, size_t n, double l_top_current)
{
	double sx = 0, sy = 0, sxx = 0, sxy = 0;
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		double I = pts[i].bias_meas_a, V = pts[i].supply_v;
		if (pts[i].direction != HB_DB_DIR_UP || !isfinite(I) || !isfinite(V))
			continue;
		/* Low current keeps self-heating out of the estimate. */
		if (I > HB_SWEEP_DCR_FRACTION * l_top_current)
			continue;
		sx += I;
		sy += V;
		sxx += I * I;
		sxy += I * V;
		m++;
	}
	if (m < 2)
		return NAN;
	double den = m * sxx - sx * sx;
	if (den <= 0)
		return NAN;
	double r = (m * sxy - sx * sy) / den;
	return r > 0 ? r : NAN;
}

static double interp_at(const double *x, const double *y, size_t n, double at)
{
	if (n < 2 || at < x[0] || at > x[n - 1])
		return NAN;
	for (size_t i = 1; i < n; i++)
		if (at <= x[i])
			return y[i - 1] + (y[i] - y[i - 1]) * (at - x[i - 1]) / (x[i] - x[i - 1]);
	return NAN;
}

static void add_check(hb_analysis_summary *s, const char *name, const char *unit, hb_check c, const char *note)
{
	if (s->n_checks >= HB_ANALYSIS_MAX_CHECKS)
		return;
	hb_analysis_check *k = &s->checks[s->n_checks++];
	snprintf(k->name, sizeof k->name, "%s", name);
	snprintf(k->unit, sizeof k->unit, "%s", unit);
	k->check = c;
	snprintf(k->note, sizeof k->note, "%s", note ? note : "");
}

static hb_check untested(void)
{
	return hb_verdict_limits(NAN, NAN, NAN);
}

bool hb_analysis_srf_beyond(const hb_analysis_summary *s)
{
	return s->kind == HB_DB_SWEEP_FREQUENCY && isfinite(s->freq.srf) && isfinite(s->freq_f_max) &&
	       s->freq.srf > s->freq_f_max;
}

const hb_budget *hb_analysis_budget(const hb_analysis_summary *s, const char *name)
{
	for (size_t i = 0; s && i < s->n_budgets; i++)
		if (strcmp(s->budgets[i].name, name) == 0)
			return &s->budgets[i];
	return NULL;
}

static void judge_bias(hb_analysis_summary *s, const hb_db_part *part, const hb_db_sweep *sw, const double *I,
		       const double *L, size_t n, const hb_budget_context *bc)
{
	const hb_fit_modelfree_result *mf = &s->bias.modelfree;
	/* L0 counts only when measured at the spec's test frequency. */
	bool at_spec_freq = !isfinite(part->test_freq_hz) ||
			    (isfinite(sw->test_freq_hz) && fabs(sw->test_freq_hz / part->test_freq_hz - 1) < 0.01);
	if (isfinite(part->nominal_h) && isfinite(part->tolerance)) {
		if (at_spec_freq && s->fit_status == HB_OK)
			add_check(s, "L0", "H", hb_verdict_tolerance(mf->L0, part->nominal_h, part->tolerance),
				  "zero-bias inductance within the nominal tolerance");
		else
			add_check(s, "L0", "H", untested(),
				  at_spec_freq ? "no zero-bias value" :
				  !isfinite(sw->test_freq_hz) ? "no test frequency stored with the sweep" :
								"sweep not at the spec's test frequency");
	}
	if (isfinite(part->sat_current_a) && isfinite(part->sat_drop) && s->fit_status == HB_OK) {
		double l_at = interp_at(I, L, n, part->sat_current_a);
		/* dL/dI of the segment the spec current falls in: how far a current error moves L there */
		double slope = NAN;
		for (size_t i = 1; i < n && isfinite(l_at); i++)
			if (part->sat_current_a <= I[i]) {
				slope = (L[i] - L[i - 1]) / (I[i] - I[i - 1]);
				break;
			}
		if (isfinite(l_at) && s->n_budgets < HB_BUDGET_MAX && bc)
			hb_budget_lsat(&s->bias, part->sat_current_a, l_at, slope, part->sat_drop, bc,
				       &s->budgets[s->n_budgets++]);
		if (isfinite(l_at))
			add_check(s, "Lsat", "H", hb_verdict_min(l_at, (1 - part->sat_drop) * mf->L0),
				  "L at the saturation-spec current at least (1 - drop) L0");
		else
			add_check(s, "Lsat", "H", untested(), "sweep did not reach the saturation-spec current");
	}
	if (isfinite(part->dcr_max_ohm)) {
		if (isfinite(s->dcr_ohm)) {
			/* a spec's DCR holds at 20 C: referred there when a temperature is stored */
			char note[160], ref[96];
			bool referred = isfinite(s->dcr_ref_ohm);
			if (referred)
				snprintf(ref, sizeof ref, "referred to 20 C from %.1f C (copper 0.00393/K)", s->temperature_c);
			else
				snprintf(ref, sizeof ref, "uncorrected: no temperature stored");
			snprintf(note, sizeof note, "%s; %s", s->dcr_from_meter ? "the meter's DC-resistance reading, at zero bias"
							: "two-wire from the supply's V/I at low current, leads included", ref);
			add_check(s, "DCR", "ohm", hb_verdict_max(referred ? s->dcr_ref_ohm : s->dcr_ohm, part->dcr_max_ohm), note);
		} else
			add_check(s, "DCR", "ohm", untested(), "no voltage read-back at low current");
	}
}

/* Why a flagged model misfits: its residuals at the rising points, the
 * points' bias spread and the falling-bias points go to the checks. */
static int diagnose_one(hb_misfit_diag *dg, const double *I, const double *L, const double *model, const double *spread,
			size_t m, const double *Id, const double *Ld, size_t nd, double noise, double *resid)
{
	for (size_t i = 0; i < m; i++)
		resid[i] = L[i] - model[i];
	/* the model already failed its own noise test: always look for the cause */
	return hb_fit_misfit_diagnose(I, L, resid, spread, m, Id, Ld, nd, noise, 1e-300, dg);
}

static int diagnose_misfits(hb_analysis_summary *s, const hb_db_point *pts, size_t n, const double *I, const double *L,
			    const double *spread, size_t m, const hb_fit_options *fo)
{
	const hb_fit_bias_result *b = &s->bias;
	bool knee_bad = b->knee_status == HB_OK && (b->knee.flags & HB_KNEE_MISFIT);
	bool core_bad = b->core_status == HB_OK && (b->core.flags & HB_CORE_NO_LAW_FITS);
	if (!knee_bad && !core_bad)
		return HB_OK;
	int rc = HB_ERR_NOMEM;
	double *model = malloc(sizeof *model * (m ? m : 1)), *resid = malloc(sizeof *resid * (m ? m : 1));
	double *Id = malloc(sizeof *Id * (n ? n : 1)), *Ld = malloc(sizeof *Ld * (n ? n : 1));
	if (!model || !resid || !Id || !Ld)
		goto cleanup;
	size_t nd = 0;
	for (size_t i = 0; i < n; i++) {
		const hb_db_point *p = &pts[i];
		double amps = isfinite(p->bias_meas_a) ? p->bias_meas_a : p->bias_set_a;
		if (p->direction != HB_DB_DIR_DOWN || !isfinite(p->primary) || !isfinite(amps))
			continue;
		Id[nd] = amps;
		Ld[nd++] = p->primary;
	}
	if (knee_bad) {
		for (size_t i = 0; i < m; i++)
			model[i] = hb_fit_knee_eval(b->knee.param, I[i]);
		if (diagnose_one(&s->knee_diag, I, L, model, spread, m, Id, Ld, nd, b->knee.noise_sigma, resid) == HB_OK) {
			s->knee_diagnosed = true;
			/* one figure everywhere: the one the model was flagged with */
			s->knee_diag.noise_ratio = b->knee.noise_ratio;
		}
	}
	if (core_bad) {
		const hb_fit_core_law_result *lr = &b->core.law[b->core.best];
		hb_core_params par = { lr->param[HB_CORE_MU_I], lr->param[HB_CORE_GAP], lr->param[HB_CORE_BSAT] };
		if (hb_core_model_eval(b->core.best, &par, &fo->geo, I, m, model, NULL) == HB_OK) {
			/* the reading the model predicts, Cp in parallel, as the fit compared */
			double w = 2 * M_PI * fo->test_freq, w2c = w * w * fo->parallel_c;
			for (size_t i = 0; i < m; i++)
				model[i] /= 1 - w2c * model[i];
			if (diagnose_one(&s->core_diag, I, L, model, spread, m, Id, Ld, nd, b->core.noise_sigma, resid) ==
			    HB_OK) {
				s->core_diagnosed = true;
				s->core_diag.noise_ratio = b->core.noise_ratio;
			}
		}
	}
	rc = HB_OK;
cleanup:
	free(model);
	free(resid);
	free(Id);
	free(Ld);
	return rc;
}

/* The winding's parallel capacitance, from the newest frequency sweep of
 * the same unit, else of any unit of the part: the meter reads
 * L/(1 - w^2 L C) at the test frequency, and the core fit corrects for it. */
static double winding_capacitance(hb_db *db, const hb_db_sweep *sw, int64_t *from_sweep)
{
	*from_sweep = 0;
	const char *serials[2] = { sw->serial, NULL };
	for (int pass = 0; pass < 2; pass++) {
		hb_db_sweep_filter f;
		hb_db_sweep_filter_init(&f);
		f.part_number = sw->part_number;
		f.serial = serials[pass];
		f.kind = HB_DB_SWEEP_FREQUENCY;
		f.status = HB_DB_COMPLETE;
		f.limit = 5;
		hb_db_sweep *list = NULL;
		size_t n = 0;
		if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK)
			continue;
		double c = NAN;
		for (size_t i = 0; i < n && !isfinite(c); i++) {
			hb_db_fit *fit = calloc(1, sizeof *fit);
			if (!fit)
				break;
			if (hb_db_fit_get_latest(db, list[i].id, NULL, fit) == HB_OK) {
				for (size_t k = 0; k < fit->n_values; k++)
					if (strcmp(fit->values[k].name, "C") == 0 && fit->values[k].value > 0) {
						c = fit->values[k].value;
						*from_sweep = list[i].id;
					}
			}
			free(fit);
		}
		hb_db_sweeps_free(list);
		if (isfinite(c))
			return c;
	}
	return NAN;
}

static void covariance_json(char *buf, size_t cap, const double *cov, size_t p)
{
	size_t len = 0;
	len += (size_t)snprintf(buf + len, cap - len, "[");
	for (size_t i = 0; i < p && len < cap; i++) {
		len += (size_t)snprintf(buf + len, cap - len, "%s[", i ? "," : "");
		for (size_t j = 0; j < p && len < cap; j++)
			len += (size_t)snprintf(buf + len, cap - len, "%s%.10g", j ? "," : "", cov[i * p + j]);
		if (len < cap)
			len += (size_t)snprintf(buf + len, cap - len, "]");
	}
	if (len < cap)
		snprintf(buf + len, cap - len, "]");
}

/* A value without a number is stored only when it has a reason (stored
 * as NULL, the reason rebuilt on reading by hb_analysis_value_reason). */
static void fit_value_k(hb_db_fit *f, const char *name, double value, double se, const char *unit, bool keep_null)
{
	if (f->n_values >= HB_DB_FIT_MAX_VALUES || (!isfinite(value) && !keep_null))
		return;
	hb_db_fit_value *v = &f->values[f->n_values++];
	snprintf(v->name, sizeof v->name, "%s", name);
	v->value = isfinite(value) ? value : NAN;
	v->std_error = se;
	snprintf(v->unit, sizeof v->unit, "%s", unit);
}

static void fit_value(hb_db_fit *f, const char *name, double value, double se, const char *unit)
{
	fit_value_k(f, name, value, se, unit, false);
}

static const hb_db_fit_value *stored_find(const hb_db_fit *f, const char *name)
{
	for (size_t i = 0; i < f->n_values; i++)
		if (strcmp(f->values[i].name, name) == 0)
			return &f->values[i];
	return NULL;
}

static bool flag_set(const hb_db_fit *f, const char *token)
{
	size_t len = strlen(token);
	for (const char *p = f->flags; (p = strstr(p, token)) != NULL; p += len)
		if ((p == f->flags || p[-1] == ' ') && (p[len] == 0 || p[len] == ' '))
			return true;
	return false;
}

static bool undetermined_bit(const hb_db_fit *f, const char *which, int bit)
{
	const hb_db_fit_value *u = stored_find(f, which);
	return u && isfinite(u->value) && ((unsigned)u->value & (1u << bit));
}

/* Values that lie at a current: without a number they lie beyond the data. */
static bool current_bound(const char *name, const char *unit)
{
	static const char *const at_current[] = { "psi_rated",	 "W_rated",	   "B_rated",
						 "H_rated",	 "knee.L_knee",	   "core.B_peak",
						 "core.psi_rated", "core.W_rated", "core.H_core_rated" };
	if (strcmp(unit, "A") == 0)
		return true;
	for (size_t i = 0; i < sizeof at_current / sizeof at_current[0]; i++)
		if (strcmp(name, at_current[i]) == 0)
			return true;
	return false;
}

const char *hb_analysis_value_reason(const hb_db_fit *f, const hb_db_fit_value *v, char *buf, size_t cap)
{
	if (!isfinite(v->value)) {
		const hb_db_fit_value *top = stored_find(f, "I_max");
		if (current_bound(v->name, v->unit) && top && isfinite(top->value))
			snprintf(buf, cap, HB_FIT_REASON_BEYOND " (highest bias %#.3g A)", top->value);
		else if (current_bound(v->name, v->unit))
			snprintf(buf, cap, HB_FIT_REASON_BEYOND);
		else
			snprintf(buf, cap, "no value");
		return buf;
	}
	if (isfinite(v->std_error))
		return NULL;
	const hb_db_fit_value *kf = stored_find(f, "knee.flags");
	if (strcmp(v->name, "knee.Lf") == 0 && kf && isfinite(kf->value) && ((unsigned)kf->value & HB_KNEE_FLOOR_HELD)) {
		snprintf(buf, cap, HB_FIT_REASON_FLOOR_HELD);
		return buf;
	}
	static const struct { const char *name, *bits; int bit; } params[] = {
		{ "knee.L0", "knee.undetermined", HB_KNEE_L0 },   { "knee.Lf", "knee.undetermined", HB_KNEE_LF },
		{ "knee.Ik", "knee.undetermined", HB_KNEE_IK },   { "knee.p", "knee.undetermined", HB_KNEE_P },
		{ "core.mu_i", "core.undetermined", HB_CORE_MU_I }, { "core.gap", "core.undetermined", HB_CORE_GAP },
		{ "core.Js", "core.undetermined", HB_CORE_BSAT }, { "core.gap_implied", "core.undetermined", HB_CORE_MU_I },
		{ "core.gap_physical", "core.undetermined", HB_CORE_GAP },
		{ HB_DB_FV_GAP, "core.undetermined", HB_CORE_GAP }, { HB_DB_FV_GAP, "core.undetermined", HB_CORE_MU_I },
	};
	for (size_t i = 0; i < sizeof params / sizeof params[0]; i++)
		if (strcmp(v->name, params[i].name) == 0 && undetermined_bit(f, params[i].bits, params[i].bit)) {
			snprintf(buf, cap, HB_FIT_REASON_UNDETERMINED);
			return buf;
		}
	return NULL;
}

bool hb_analysis_stored_diag(const hb_db_fit *f, const char *which, hb_misfit_diag *d)
{
	memset(d, 0, sizeof *d);
	char token[48], name[48];
	bool found = false;
	for (int c = HB_MISFIT_CURRENT_MOVED; c <= HB_MISFIT_LAW && !found; c++) {
		snprintf(token, sizeof token, "%s-cause:%s", which, hb_misfit_cause_name((hb_misfit_cause)c));
		if (flag_set(f, token)) {
			d->cause = (hb_misfit_cause)c;
			found = true;
		}
	}
	if (!found)
		return false;
	const hb_db_fit_value *v;
	snprintf(name, sizeof name, "%s.noise_ratio", which);
	d->noise_ratio = (v = stored_find(f, name)) ? v->value : NAN;
	snprintf(name, sizeof name, "%s.misfit.current_ratio", which);
	d->current_ratio = (v = stored_find(f, name)) ? v->value : NAN;
	snprintf(name, sizeof name, "%s.misfit.heating_ratio", which);
	d->heating_ratio = (v = stored_find(f, name)) ? v->value : NAN;
	d->residual_rms = NAN;
	return true;
}

bool hb_analysis_value_misfit(const hb_db_fit *f, const char *name, double *noise_ratio)
{
	const char *which = NULL;
	if (hb_fit_value_is_diagnostic(name))
		return false;
	if (strncmp(name, "knee.", 5) == 0 && flag_set(f, "knee-misfit"))
		which = "knee.noise_ratio";
	else if (strncmp(name, "core.", 5) == 0 && flag_set(f, "no-law-fits"))
		which = "core.noise_ratio";
	if (!which)
		return false;
	if (noise_ratio) {
		const hb_db_fit_value *r = stored_find(f, which);
		*noise_ratio = r ? r->value : NAN;
	}
	return true;
}

static int store_results(hb_db *db, hb_analysis_summary *s)
{
	hb_db_fit *f = calloc(1, sizeof *f);
	if (!f)
		return HB_ERR_NOMEM;
	hb_db_fit_init(f);
	f->sweep_id = s->sweep_id;
	snprintf(f->code_version, sizeof f->code_version, "%s", HB_FIT_CODE_VERSION);
	if (s->kind == HB_DB_SWEEP_BIAS) {
		const hb_fit_bias_result *b = &s->bias;
		snprintf(f->model, sizeof f->model, "%s", b->model);
		if (b->core_status == HB_OK)
			snprintf(f->law, sizeof f->law, "%s", hb_core_law_name(b->core.best));
		f->rss = b->rss;
		f->dof = (int)b->dof;
		if (b->core_status == HB_OK)
			f->aic = b->core.law[b->core.best].aicc;
		covariance_json(f->covariance_json, sizeof f->covariance_json, b->cov, b->p);
		for (size_t i = 0; i < b->values.count; i++)
			fit_value_k(f, b->values.v[i].name, b->values.v[i].value, b->values.v[i].std_err, b->values.v[i].unit,
				    b->values.v[i].reason[0] != 0);
		/* The names the history query picks, whichever model gave them. */
		if (b->core_status == HB_OK) {
			fit_value(f, HB_DB_FV_MU_E, b->core.mu_e, b->core.mu_e_se, "");
			double gap = isfinite(b->core.gap_physical) ? b->core.gap_physical : b->core.gap_implied;
			double gap_se = isfinite(b->core.gap_physical) ? b->core.gap_physical_se : b->core.gap_implied_se;
			/* from a parameter not determined: no standard error */
			unsigned und = b->core.law[b->core.best].undetermined;
			if (und & (1u << (isfinite(b->core.gap_physical) ? HB_CORE_GAP : HB_CORE_MU_I)))
				gap_se = NAN;
			fit_value(f, HB_DB_FV_GAP, gap, gap_se, "m");
		}
		fit_value(f, "DCR", s->dcr_ohm, NAN, "ohm");
		fit_value(f, "DCR_20C", s->dcr_ref_ohm, NAN, "ohm");
		fit_value(f, "DCR_temperature_C", s->temperature_c, NAN, "C");
		fit_value(f, "Cp_used", s->cp_farad, NAN, "F");
		fit_value(f, "Cp_from_sweep", s->cp_sweep_id > 0 ? (double)s->cp_sweep_id : NAN, NAN, "");
		size_t len = 0;
		if (b->core_status == HB_OK && (b->core.flags & HB_CORE_NO_LAW_FITS))
			len += (size_t)snprintf(f->flags + len, sizeof f->flags - len, "no-law-fits ");
		if (b->core_status == HB_OK && (b->core.flags & HB_CORE_KNEE_UNREACHED))
			len += (size_t)snprintf(f->flags + len, sizeof f->flags - len, "knee-unreached ");
		if (b->knee_status == HB_OK && (b->knee.flags & HB_KNEE_MISFIT))
			len += (size_t)snprintf(f->flags + len, sizeof f->flags - len, "knee-misfit ");
		if (b->modelfree.cp_corrected)
			len += (size_t)snprintf(f->flags + len, sizeof f->flags - len, "cp-corrected ");
		/* the cause of a misfit, and the two ratios that decided it */
		const hb_misfit_diag *dg[2] = { s->knee_diagnosed ? &s->knee_diag : NULL,
						s->core_diagnosed ? &s->core_diag : NULL };
		static const char *const which[2] = { "knee", "core" };
		for (int k = 0; k < 2; k++) {
			if (!dg[k])
				continue;
			char name[48];
			len += (size_t)snprintf(f->flags + len, sizeof f->flags - len, "%s-cause:%s ", which[k],
						hb_misfit_cause_name(dg[k]->cause));
			snprintf(name, sizeof name, "%s.misfit.current_ratio", which[k]);
			fit_value(f, name, dg[k]->current_ratio, NAN, "");
			snprintf(name, sizeof name, "%s.misfit.heating_ratio", which[k]);
			fit_value(f, name, dg[k]->heating_ratio, NAN, "");
		}
		if (b->modelfree.flags & HB_MF_NONMONOTONE)
			snprintf(f->flags + len, sizeof f->flags - len, "non-monotone");
	} else {
		const hb_fit_freq_result *q = &s->freq;
		snprintf(f->model, sizeof f->model, "series-LR-parallel-C%s", isfinite(q->param[HB_FREQ_RP]) ? "-Rp" : "");
		f->rss = q->rss;
		f->dof = (int)q->dof;
		covariance_json(f->covariance_json, sizeof f->covariance_json, q->cov, q->p);
		fit_value(f, "L", q->param[HB_FREQ_L], q->std_err[HB_FREQ_L], "H");
		fit_value(f, "R", q->param[HB_FREQ_R], q->std_err[HB_FREQ_R], "ohm");
		fit_value(f, "C", q->param[HB_FREQ_C], q->std_err[HB_FREQ_C], "F");
		fit_value(f, "Rp", q->param[HB_FREQ_RP], q->std_err[HB_FREQ_RP], "ohm");
		fit_value(f, "srf", q->srf, q->srf_se, "Hz");
		fit_value(f, "q_max_measured", q->q_max, NAN, "");
		fit_value(f, "q_max_measured_freq", q->q_max_freq, NAN, "Hz");
		fit_value(f, "band_lo", q->band_lo, NAN, "Hz");
		fit_value(f, "band_hi", q->band_hi, NAN, "Hz");
		fit_value(f, "model_band_hi", q->model_band_hi, NAN, "Hz");
	}
	int rc = hb_db_fit_put(db, f);
	if (rc == HB_OK)
		s->fit_id = f->id;
	else
		snprintf(s->message, sizeof s->message, "could not store the fit: %s", hb_db_errmsg(db));
	free(f);
	if (rc != HB_OK)
		return rc;
	for (size_t i = 0; i < s->n_budgets; i++) {
		hb_db_fit_unc u;
		hb_budget_to_db(&s->budgets[i], s->fit_id, &u);
		rc = hb_db_fit_unc_put(db, &u);
		if (rc != HB_OK) {
			snprintf(s->message, sizeof s->message, "could not store the uncertainty of %s: %s", u.name,
				 hb_db_errmsg(db));
			return rc;
		}
	}
	for (size_t i = 0; i < s->n_checks; i++) {
		hb_db_verdict v;
		hb_db_verdict_init(&v);
		v.sweep_id = s->sweep_id;
		const hb_analysis_check *k = &s->checks[i];
		snprintf(v.check_name, sizeof v.check_name, "%s", k->name);
		v.measured = k->check.measured;
		v.limit_low = k->check.low;
		v.limit_high = k->check.high;
		v.margin = k->check.margin_frac;
		v.outcome = hb_analysis_db_outcome(k->decision.outcome);
		snprintf(v.note, sizeof v.note, "%s%s%s", k->note, k->rule_note[0] ? "; " : "", k->rule_note);
		snprintf(v.decision_rule, sizeof v.decision_rule, "%s", hb_decision_rule_name(k->decision.rule));
		v.guard_r = k->decision.rule == HB_DECISION_SIMPLE ? NAN : k->guard_r;
		v.expanded_u = k->decision.U;
		v.coverage_k = k->decision.k;
		v.accept_low = k->decision.al_low;
		v.accept_high = k->decision.al_high;
		v.p_false_accept = k->decision.rule == HB_DECISION_SIMPLE && isnan(k->decision.U) ? NAN :
				   k->decision.p_false_accept;
		rc = hb_db_verdict_put(db, &v);
		if (rc != HB_OK) {
			snprintf(s->message, sizeof s->message, "could not store verdict %s: %s", k->name, hb_db_errmsg(db));
			return rc;
		}
	}
	return HB_OK;
}

static int analyse_frequency(hb_analysis_summary *s, const hb_db_sweep *sw, const hb_db_point *pts, size_t n)
{
	double *f = malloc(sizeof *f * (n ? n : 1));
	double *Ls = malloc(sizeof *Ls * (n ? n : 1));
	double *Rs = malloc(sizeof *Rs * (n ? n : 1));
	int rc = HB_ERR_NOMEM;
	if (!f || !Ls || !Rs)
		goto out;
	bool zth = strcmp(sw->measured_pair, "Z-theta") == 0;
	bool lr = strncmp(sw->measured_pair, "Ls-Rs", 5) == 0;
	if (!zth && !lr) {
		rc = HB_ERR_DATA;
		snprintf(s->message, sizeof s->message,
			 "the frequency model needs series L-R or Z-theta readings, this sweep has %s", sw->measured_pair);
		goto out;
	}
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(pts[i].primary) || !isfinite(pts[i].secondary) || !(pts[i].freq_hz > 0))
			continue;
		if (m > 0 && pts[i].freq_hz <= f[m - 1])
			continue;
		f[m] = pts[i].freq_hz;
		if (zth)
			hb_fit_z_to_series(f[m], pts[i].primary, pts[i].secondary * M_PI / 180.0, &Ls[m], &Rs[m]);
		else {
			Ls[m] = pts[i].primary;
			Rs[m] = pts[i].secondary;
		}
		m++;
	}
	hb_fit_ws *ws = hb_fit_ws_new();
	if (!ws)
		goto out;
	hb_fit_freq_options fo = { .parallel_r = false, .within = 0.05 };
	rc = hb_fit_freq(ws, f, Ls, Rs, m, &fo, &s->freq);
	if (rc != HB_OK) {
		snprintf(s->message, sizeof s->message, "frequency fit: %s", hb_fit_ws_error(ws));
	} else {
		hb_budget_context bc;
		hb_budget_context_from_sweep(&bc, sw);
		s->n_budgets = hb_budget_freq(&s->freq, f, Ls, Rs, m, &fo, &bc, s->budgets, HB_BUDGET_MAX);
		s->freq_f_max = f[m - 1];
	}
	hb_fit_ws_free(ws);
out:
	free(f);
	free(Ls);
	free(Rs);
	return rc;
}

/* The rule in force: the part's, else the station's default recorded with
 * the sweep, else the caller's default (simple acceptance). */
static void resolve_rule(const hb_db_part *part, const hb_db_sweep *sw, const hb_analysis_options *opt,
			 hb_decision_rule *rule, double *r)
{
	*rule = opt->default_rule;
	*r = isfinite(opt->default_r) ? opt->default_r : 1;
	hb_decision_rule parsed;
	if (sw->station_decision_rule[0] && hb_decision_rule_parse(sw->station_decision_rule, &parsed) == HB_OK) {
		*rule = parsed;
		*r = isfinite(sw->station_guard_r) ? sw->station_guard_r : 1;
	}
	if (part->decision_rule[0] && hb_decision_rule_parse(part->decision_rule, &parsed) == HB_OK) {
		*rule = parsed;
		*r = isfinite(part->guard_r) ? part->guard_r : 1;
	}
}

/* The budget a check's U comes from: its own name, except the gap against
 * the drawing, which is the core fit's physical gap. */
static const char *check_budget_name(const char *check)
{
	return strcmp(check, "gap") == 0 ? "core.gap_physical" : check;
}

/* Each check judged by the rule with its value's U; the overall verdict
 * from the rule's outcomes. */
static void apply_rules(hb_analysis_summary *s, const hb_db_part *part, const hb_db_sweep *sw,
			const hb_analysis_options *opt)
{
	hb_decision_rule rule;
	double r;
	resolve_rule(part, sw, opt, &rule, &r);
	bool failed = false, untested = s->n_checks == 0, conditional = false;
	for (size_t i = 0; i < s->n_checks; i++) {
		hb_analysis_check *k = &s->checks[i];
		const hb_budget *bg = hb_analysis_budget(s, check_budget_name(k->name));
		double U = bg ? bg->U : NAN, kf = bg ? bg->k : NAN;
		k->guard_r = r;
		k->rule_note[0] = 0;
		hb_decision_spec spec;
		hb_decision_spec_init(&spec);
		spec.tl_low = k->check.low;
		spec.tl_high = k->check.high;
		spec.rule = rule;
		spec.r = r;
		if (!(isfinite(U) && isfinite(kf) && kf > 0)) {
			U = kf = NAN;
			if (rule != HB_DECISION_SIMPLE) {
				spec.rule = HB_DECISION_SIMPLE;
				snprintf(k->rule_note, sizeof k->rule_note,
					 "no expanded uncertainty for this value: judged by simple acceptance instead of %s",
					 hb_decision_rule_name(rule));
			}
		}
		if (k->check.outcome == HB_OUTCOME_NOT_TESTED ||
		    hb_decision_evaluate(&spec, k->check.measured, U, kf, &k->decision) != HB_OK) {
			memset(&k->decision, 0, sizeof k->decision);
			k->decision.rule = spec.rule;
			k->decision.outcome = HB_DECISION_NOT_TESTED;
			k->decision.measured = k->check.measured;
			k->decision.U = U;
			k->decision.k = kf;
			k->decision.u = k->decision.w = NAN;
			k->decision.al_low = k->decision.al_high = k->decision.rl_low = k->decision.rl_high = NAN;
			k->decision.p_conform = k->decision.p_false_accept = NAN;
		}
		switch (k->decision.outcome) {
		case HB_DECISION_FAIL:
			failed = true;
			break;
		case HB_DECISION_CONDITIONAL_PASS:
		case HB_DECISION_CONDITIONAL_FAIL:
			conditional = true;
			break;
		case HB_DECISION_NOT_TESTED:
			untested = true;
			break;
		case HB_DECISION_PASS:
			break;
		}
	}
	s->overall = failed ? HB_OVERALL_FAIL : untested ? HB_OVERALL_INCOMPLETE : conditional ? HB_OVERALL_CONDITIONAL
												 : HB_OVERALL_PASS;
}

/* Nothing to fit: no fit is stored and no value printed (an empty fit
 * would show L0 0 H, a number from no data). */
static int no_points(hb_analysis_summary *s, size_t n)
{
	snprintf(s->message, sizeof s->message, n == 0 ? "no points to fit: the sweep has none" :
			 "no points to fit: none of its %zu points is a usable reading (overload, not finite, "
			 "or not positive)", n);
	s->fit_status = HB_ERR_DATA;
	return HB_ERR_DATA;
}

int hb_analysis_sweep(hb_db *db, int64_t sweep_id, const hb_analysis_options *opt, hb_analysis_summary *s)
{
	memset(s, 0, sizeof *s);
	s->sweep_id = sweep_id;
	s->dcr_ohm = NAN;
	s->dcr_ref_ohm = NAN;
	s->freq_f_max = NAN;
	s->temperature_c = NAN;
	s->cp_farad = NAN;
	s->overall = HB_OVERALL_INCOMPLETE;
	hb_db_sweep sw;
	hb_db_part part;
	hb_db_point *pts = NULL;
	size_t n = 0;
	double *I = NULL, *L = NULL, *sigma = NULL, *spread = NULL;
	int rc = hb_db_sweep_get(db, sweep_id, &sw);
	if (rc != HB_OK) {
		snprintf(s->message, sizeof s->message, "%s", hb_db_errmsg(db));
		return rc;
	}
	s->kind = sw.kind;
	hb_db_part_init(&part);
	if (sw.part_id > 0 && hb_db_part_get_id(db, sw.part_id, &part) != HB_OK)
		hb_db_part_init(&part);
	rc = hb_db_points_get(db, sweep_id, &pts, &n);
	if (rc != HB_OK) {
		snprintf(s->message, sizeof s->message, "%s", hb_db_errmsg(db));
		return rc;
	}
	if (sw.kind == HB_DB_SWEEP_FREQUENCY) {
		size_t usable = 0;
		for (size_t i = 0; i < n; i++)
			usable += isfinite(pts[i].primary) && isfinite(pts[i].secondary) && pts[i].freq_hz > 0;
		if (usable == 0) {
			rc = no_points(s, n);
			goto out;
		}
		s->fit_status = analyse_frequency(s, &sw, pts, n);
		s->ran = true;
		goto store;
	}
	size_t m = 0;
	rc = bias_arrays_spread(pts, n, &I, &L, &spread, &m);
	if (rc == HB_OK && m == 0)
		rc = no_points(s, n);
	if (rc != HB_OK)
		goto out;
	/* The noise the sweep learnt weighs a refit the way the sweep did. */
	double noise_rel = opt->noise_rel > 0 ? opt->noise_rel :
			   (isfinite(sw.reading_noise_rel) && sw.reading_noise_rel > 0 ? sw.reading_noise_rel : 0);
	if (noise_rel > 0) {
		sigma = malloc(sizeof *sigma * (m ? m : 1));
		if (!sigma) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
		for (size_t i = 0; i < m; i++)
			sigma[i] = noise_rel * L[i];
	}
	hb_fit_options fo;
	hb_fit_options_init(&fo);
	if (opt->n_drops > 0) {
		fo.n_fractions = opt->n_drops;
		memcpy(fo.fractions, opt->drops, sizeof fo.fractions[0] * opt->n_drops);
	}
	if (noise_rel > 0 && m > 0)
		fo.noise_sigma = noise_rel * L[0];
	if (isfinite(part.rated_current_a) && part.rated_current_a > 0)
		fo.rated_current = part.rated_current_a;
	fo.knee = opt->knee;
	if (opt->core && part.turns > 0 && part.ae_m2 > 0 && part.le_m > 0) {
		fo.geo.turns = part.turns;
		fo.geo.Ae = part.ae_m2;
		fo.geo.le = part.le_m;
		fo.geo.window_height = isfinite(part.window_m) ? part.window_m : 0;
	}
	if (part.part_number[0] && isfinite(sw.test_freq_hz)) {
		double c = winding_capacitance(db, &sw, &s->cp_sweep_id);
		if (isfinite(c)) {
			fo.parallel_c = c;
			fo.test_freq = sw.test_freq_hz;
			s->cp_farad = c;
		}
	}
	fo.fix_mu_i = opt->fix_mu_i;
	fo.fix_gap = opt->fix_gap;
	fo.fix_bsat = opt->fix_bsat;
	double top = 0;
	for (size_t i = 0; i < n; i++)
		if (isfinite(pts[i].bias_meas_a) && pts[i].bias_meas_a > top)
			top = pts[i].bias_meas_a;
	if (isfinite(sw.dcr_meter_ohm)) {
		s->dcr_ohm = sw.dcr_meter_ohm;
		s->dcr_from_meter = true;
	} else {
		s->dcr_ohm = dcr_from_points(pts, n, top);
	}
	s->fit_status = hb_fit_bias_analyse(I, L, sigma, m, &fo, &s->bias);
	s->ran = true;
	if (s->fit_status != HB_OK && !s->message[0])
		snprintf(s->message, sizeof s->message, "fit: %s", s->bias.message[0] ? s->bias.message :
			 hb_status_name(s->fit_status));
	if (s->fit_status == HB_OK && diagnose_misfits(s, pts, n, I, L, spread, m, &fo) == HB_ERR_NOMEM) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	hb_budget_context bc;
	{
		hb_budget_context_from_sweep(&bc, &sw);
		hb_budget_context_fixture(&bc, db, sweep_id);
		s->n_budgets = hb_budget_bias(&s->bias, I, L, sigma, m, &fo, s->dcr_ohm, &bc,
					      s->budgets, HB_BUDGET_MAX);
		const hb_budget *dcr = hb_analysis_budget(s, "DCR");
		if (dcr && isfinite(bc.temperature_c)) {
			s->dcr_ref_ohm = dcr->value;
			s->temperature_c = bc.temperature_c;
		}
	}
	judge_bias(s, &part, &sw, I, L, m, &bc);
	if (part.id > 0) {
		hb_db_part_drawing drw;
		hb_decision_rule rule;
		double r;
		resolve_rule(&part, &sw, opt, &rule, &r);
		if (hb_db_part_drawing_get(db, part.id, &drw) == HB_OK)
			hb_analysis_judge_drawing(s, &part, rule, r, &drw, I, L, m, noise_rel, &bc);
	}
	apply_rules(s, &part, &sw, opt);
store:
	rc = HB_OK;
	if (opt->store && (s->fit_status == HB_OK || s->n_checks > 0))
		rc = store_results(db, s);
	if (rc == HB_OK)
		rc = s->fit_status;
out:
	free(I);
	free(L);
	free(sigma);
	free(spread);
	hb_db_points_free(pts);
	return rc;
}
