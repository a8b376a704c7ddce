/* src/quality/analysis_store.c - a fit and its verdicts as the store keeps them: written after analysis, and the reasons, misfits and diagnoses read back from values and flags */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis.h"
#include "analysis_internal.h"

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

int hb_analysis__store_results(hb_db *db, hb_analysis_summary *s)
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
