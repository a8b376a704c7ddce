/* src/quality/analysis_print.c - a sweep's analysis told: text for the operator, JSON for scripts */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis.h"
#include "../../common/hb_text.h"

static json_t *num(double v);

static void print_value(FILE *out, const char *label, double v, double se, const char *unit)
{
	char a[96];
	if (!isfinite(v)) {
		fprintf(out, "  %-28s %s\n", label, HB_TEXT_ABSENT);
		return;
	}
	/* value and standard error by GUM 7.2.6: the digits the uncertainty supports */
	fprintf(out, "  %-28s %s\n", label, hb_format_unc(a, sizeof a, v, se, unit, 5));
}

/* The expanded uncertainty under a value that has a budget. */
static void print_unc(FILE *out, const hb_analysis_summary *s, const char *name)
{
	const hb_budget *bg = hb_analysis_budget(s, name);
	if (!bg || !isfinite(bg->U))
		return;
	char a[40];
	/* an expanded uncertainty to two significant digits (GUM 7.2.6) */
	hb_format_u(a, sizeof a, bg->U, bg->unit);
	fprintf(out, "  %-28s U = %s (k = %.2f, 95.45 %%)%s%s\n", "", a, bg->k, bg->note[0] ? "; " : "", bg->note);
}

size_t hb_analysis_misfit_lines(const char *model, const hb_misfit_diag *d, char lines[4][HB_ANALYSIS_LINE])
{
	snprintf(lines[0], HB_ANALYSIS_LINE,
		 "residuals of the %s are %.1f x the reading noise; causes checked, in order:", model, d->noise_ratio);
	char pc[32] = "", ph[32] = "";
	if (d->current_points)
		snprintf(pc, sizeof pc, " (%zu points)", d->current_points);
	if (d->heating_points)
		snprintf(ph, sizeof ph, " (%zu points)", d->heating_points);
	if (!isfinite(d->current_ratio))
		snprintf(lines[1], HB_ANALYSIS_LINE,
			 "1. current moving during the readings: not checked (no bias spread stored for these points)");
	else
		snprintf(lines[1], HB_ANALYSIS_LINE,
			 "1. current moving during the readings: bias spread x |dL/dI| is %.2g x the residuals%s: %s",
			 d->current_ratio, pc,
			 d->cause == HB_MISFIT_CURRENT_MOVED ? "THE CAUSE - the current moved while the meter read; "
							       "re-measure with the bias settled" : "not the cause");
	if (d->cause == HB_MISFIT_CURRENT_MOVED)
		snprintf(lines[2], HB_ANALYSIS_LINE, "2. heating: not needed (the current's movement explains the residuals)");
	else if (!isfinite(d->heating_ratio))
		snprintf(lines[2], HB_ANALYSIS_LINE, "2. heating: not checked (no falling-bias points to compare)");
	else
		snprintf(lines[2], HB_ANALYSIS_LINE,
			 "2. heating: the falling-bias readings differ from the rising ones by %.2g x the residuals%s: %s",
			 d->heating_ratio, ph,
			 d->cause == HB_MISFIT_HEATING ? "THE CAUSE - the part warmed during the sweep" : "not the cause");
	if (d->cause == HB_MISFIT_LAW)
		snprintf(lines[3], HB_ANALYSIS_LINE,
			 "3. law mismatch: what remains - the %s does not follow this part; rely on the model-free values", model);
	else
		snprintf(lines[3], HB_ANALYSIS_LINE, "3. law mismatch: not blamed (a measurement cause explains the residuals)");
	return 4;
}

static void print_misfit(FILE *out, const char *model, const hb_misfit_diag *d)
{
	char lines[4][HB_ANALYSIS_LINE];
	size_t k = hb_analysis_misfit_lines(model, d, lines);
	for (size_t i = 0; i < k; i++)
		fprintf(out, "  %s%s\n", i ? "  " : "", lines[i]);
}

/* A verdict's measured value to the digits its expanded uncertainty
 * supports (GUM 7.2.6), or five without one. */
static const char *verdict_measured(char *buf, size_t cap, double v, double U, const char *unit)
{
	double vr, ur;
	if (!isfinite(v))
		return HB_TEXT_ABSENT;
	if (hb_gum_round(v, U, &vr, &ur) == HB_ERR_ARG)
		return hb_format_si(buf, cap, v, unit, 5);
	char both[96];
	hb_format_unc(both, sizeof both, v, U, unit, 5);
	char *sep = strstr(both, " +- ");
	if (sep)
		*sep = '\0';
	snprintf(buf, cap, "%s", both);
	return buf;
}

/* A value shown without a standard error, with the reason there is none. */
static void print_reason(FILE *out, const char *label, double v, const char *unit, const char *reason)
{
	char a[40];
	if (!isfinite(v)) {
		fprintf(out, "  %-28s %s\n", label, reason);
		return;
	}
	hb_format_si(a, sizeof a, v, unit, 5);
	fprintf(out, "  %-28s %s  (%s)\n", label, a, reason);
}

void hb_analysis_print_check(FILE *out, const hb_analysis_check *k, bool with_statement)
{
	char mv[64], u[40], al[140];
	const hb_decision *d = &k->decision;
	if (with_statement) {
		char rule[400];
		fprintf(out, "  decision rule: %s\n", hb_analysis_rule_text(k, rule, sizeof rule));
	}
	char lim[140];
	fprintf(out, "  %-5s %-16s measured %-14s", k->name, hb_decision_outcome_name(d->outcome),
		verdict_measured(mv, sizeof mv, k->check.measured, d->U, k->unit));
	if (isfinite(d->U))
		fprintf(out, " U %s (k = %.2f)", hb_format_u(u, sizeof u, d->U, k->unit), d->k);
	else
		fprintf(out, " U %s", HB_TEXT_ABSENT);
	fprintf(out, " limits %s", hb_format_limits(lim, sizeof lim, k->check.low, k->check.high, k->unit, 5));
	if (d->rule != HB_DECISION_SIMPLE && (isfinite(d->al_low) || isfinite(d->al_high)))
		fprintf(out, " acceptance %s", hb_format_limits(al, sizeof al, d->al_low, d->al_high, k->unit, 5));
	if (isfinite(k->check.margin_frac))
		fprintf(out, " margin %+.1f %%", k->check.margin_frac * 100);
	if (d->rule == HB_DECISION_GUARDED && isfinite(d->p_false_accept))
		fprintf(out, " P(false accept) %.2g %%", d->p_false_accept * 100);
	fprintf(out, "\n");
	if (k->rule_note[0])
		fprintf(out, "        (%s)\n", k->rule_note);
}

json_t *hb_analysis_check_json(const hb_analysis_check *k)
{
	const hb_decision *d = &k->decision;
	json_t *o = json_object();
	json_object_set_new(o, "check", json_string(k->name));
	json_object_set_new(o, "outcome", json_string(hb_decision_outcome_name(d->outcome)));
	json_object_set_new(o, "measured", num(k->check.measured));
	json_object_set_new(o, "limit_low", num(k->check.low));
	json_object_set_new(o, "limit_high", num(k->check.high));
	json_object_set_new(o, "margin_fraction", num(k->check.margin_frac));
	json_object_set_new(o, "unit", json_string(k->unit));
	json_object_set_new(o, "note", json_string(k->note));
	json_t *r = json_object();
	json_object_set_new(r, "name", json_string(hb_decision_rule_name(d->rule)));
	json_object_set_new(r, "statement", json_string(hb_decision_rule_statement(d->rule)));
	json_object_set_new(r, "r", d->rule == HB_DECISION_SIMPLE ? json_null() : num(k->guard_r));
	json_object_set_new(r, "guard_band", num(d->w));
	if (k->rule_note[0])
		json_object_set_new(r, "note", json_string(k->rule_note));
	json_object_set_new(o, "decision_rule", r);
	json_object_set_new(o, "U", num(d->U));
	json_object_set_new(o, "k", num(d->k));
	json_object_set_new(o, "acceptance_low", num(d->al_low));
	json_object_set_new(o, "acceptance_high", num(d->al_high));
	if (d->rule == HB_DECISION_NONBINARY) {
		json_object_set_new(o, "rejection_low", num(d->rl_low));
		json_object_set_new(o, "rejection_high", num(d->rl_high));
	}
	json_object_set_new(o, "p_conform", num(d->p_conform));
	json_object_set_new(o, "p_false_accept", num(d->p_false_accept));
	return o;
}

void hb_analysis_print(FILE *out, const hb_analysis_summary *s)
{
	if (!s->ran)
		return;
	/* A fit that was not stored (--no-store) has no number to name. */
	if (s->fit_id > 0)
		fprintf(out, "fit of sweep %lld (stored as fit %lld, %s):\n", (long long)s->sweep_id,
			(long long)s->fit_id, HB_FIT_CODE_VERSION);
	else
		fprintf(out, "fit of sweep %lld (not stored, %s):\n", (long long)s->sweep_id, HB_FIT_CODE_VERSION);
	if (s->kind == HB_DB_SWEEP_FREQUENCY) {
		const hb_fit_freq_result *q = &s->freq;
		if (s->fit_status != HB_OK) {
			fprintf(out, "  %s\n", s->message);
			return;
		}
		print_value(out, "L (low-frequency)", q->param[HB_FREQ_L], q->std_err[HB_FREQ_L], "H");
		print_unc(out, s, "L");
		print_value(out, "R (series)", q->param[HB_FREQ_R], q->std_err[HB_FREQ_R], "ohm");
		print_unc(out, s, "R");
		print_value(out, "C (parallel)", q->param[HB_FREQ_C], q->std_err[HB_FREQ_C], "F");
		print_unc(out, s, "C");
		if (hb_analysis_srf_beyond(s)) {
			/* the model would place it, but no reading was taken there */
			char fmax[32];
			fprintf(out, "  %-28s above the highest frequency swept (%s): not measured\n", "self-resonance",
				hb_format_si(fmax, sizeof fmax, s->freq_f_max, "Hz", 4));
		} else {
			print_value(out, "self-resonance", q->srf, q->srf_se, "Hz");
			print_unc(out, s, "srf");
		}
		print_value(out, "Q highest measured (X/R)", q->q_max, NAN, "");
		print_value(out, "  at", q->q_max_freq, NAN, "Hz");
		print_value(out, "L within 5 % from", q->band_lo, NAN, "Hz");
		print_value(out, "  up to", q->band_hi, NAN, "Hz");
		return;
	}
	const hb_fit_bias_result *b = &s->bias;
	const hb_fit_modelfree_result *mf = &b->modelfree;
	fprintf(out, "  (%s)\n", HB_FIT_INCREMENTAL_NOTE);
	if (s->fit_status != HB_OK && !isfinite(mf->L0)) {
		fprintf(out, "  %s\n", s->message);
		return;
	}
	print_value(out, mf->cp_corrected ? "L0 (zero bias, as read)" : "L0 (zero bias)", mf->L0, mf->L0_std_err, "H");
	print_unc(out, s, "L0");
	char beyond[72];
	snprintf(beyond, sizeof beyond, HB_FIT_REASON_BEYOND " (highest bias %#.3g A)", mf->I_max);
	if (mf->cp_corrected) {
		char cbuf[32];
		fprintf(out, "  (drop currents from the part's own L: readings corrected for the winding capacitance\n"
			     "   %s from frequency sweep %lld; cp_corrected: true)\n",
			hb_format_si(cbuf, sizeof cbuf, s->cp_farad, "F", 3), (long long)s->cp_sweep_id);
		print_value(out, "L0 of the part (Cp removed)", mf->L0_part, mf->L0_part_std_err, "H");
	} else {
		fprintf(out, "  (no winding capacitance known for this unit: drop currents from the readings as they are;\n"
			     "   cp_corrected: false)\n");
	}
	for (size_t i = 0; i < mf->n_drops; i++) {
		char label[48];
		snprintf(label, sizeof label, "current at -%g %% L", mf->drop[i].fraction * 100);
		if (mf->drop[i].reached) {
			print_value(out, label, mf->drop[i].current, mf->drop[i].std_err, "A");
			char name[32];
			snprintf(name, sizeof name, "I_drop%g", mf->drop[i].fraction * 100);
			print_unc(out, s, name);
		} else
			fprintf(out, "  %-28s %s\n", label, beyond);
	}
	if (b->knee_status == HB_OK) {
		const hb_fit_knee_result *k = &b->knee;
		bool misfit = k->flags & HB_KNEE_MISFIT;
		/* a misfitting model's numbers never stand unmarked beside the measured ones */
		const char *tag = misfit ? "knee model (MISFIT):" : "knee model:";
		if (misfit)
			fprintf(out, "  knee model MISFIT: residuals %.1f x the reading noise; its values do not describe "
				     "this part\n", k->noise_ratio);
		char label[64];
		snprintf(label, sizeof label, "%s knee current", tag);
		if (isfinite(k->knee_current))
			print_value(out, label, k->knee_current, NAN, "A");
		else
			fprintf(out, "  %-28s %s\n", label, beyond);
		snprintf(label, sizeof label, "%s floor Lf", tag);
		if (k->flags & HB_KNEE_FLOOR_HELD)
			print_reason(out, label, k->param[HB_KNEE_LF], "H", HB_FIT_REASON_FLOOR_HELD);
		else if (k->undetermined & (1u << HB_KNEE_LF))
			print_reason(out, label, k->param[HB_KNEE_LF], "H", HB_FIT_REASON_UNDETERMINED);
		else
			print_value(out, label, k->param[HB_KNEE_LF], k->std_err[HB_KNEE_LF], "H");
	}
	if (b->core_status == HB_OK) {
		const hb_fit_core_result *c = &b->core;
		const hb_fit_core_law_result *lr = &c->law[c->best];
		fprintf(out, "  core model, law chosen by AICc: %s (", hb_core_law_name(c->best));
		for (int l = 0; l < HB_CORE_NLAWS; l++)
			if (c->law[l].status == HB_OK)
				fprintf(out, "%s%s %.1f", l ? ", " : "", hb_core_law_name((hb_core_law)l), c->law[l].aicc);
		fprintf(out, ")\n");
		if (c->flags & HB_CORE_NO_LAW_FITS)
			fprintf(out, "  core model MISFIT: residuals %.1f x the reading noise; its values (marked) do not "
				     "describe this part\n", c->noise_ratio);
		if (isfinite(s->cp_farad)) {
			char cbuf[32];
			fprintf(out, "  corrected for the winding capacitance %s (frequency sweep %lld)\n",
				hb_format_si(cbuf, sizeof cbuf, s->cp_farad, "F", 3), (long long)s->cp_sweep_id);
		}
		bool mis = c->flags & HB_CORE_NO_LAW_FITS;
		static const char *const plabel[] = { "mu_i (material)", "gap, magnetic (effective)",
						      "Js (saturation polarisation)" };
		static const char *const punit[] = { "", "m", "T" };
		for (int j = 0; j < HB_CORE_NP; j++) {
			char label[64];
			snprintf(label, sizeof label, "%s%s", plabel[j], mis ? " (misfit)" : "");
			if (lr->undetermined & (1u << j))
				print_reason(out, label, lr->param[j], punit[j], HB_FIT_REASON_UNDETERMINED);
			else
				print_value(out, label, lr->param[j], lr->std_err[j], punit[j]);
			static const char *const bname[] = { "core.mu_i", "core.gap", "core.Js" };
			print_unc(out, s, bname[j]);
			if (j == HB_CORE_GAP) {
				snprintf(label, sizeof label, "gap, physical (fringing)%s", mis ? " (misfit)" : "");
				if (lr->undetermined & (1u << HB_CORE_GAP))
					print_reason(out, label, c->gap_physical, "m", HB_FIT_REASON_UNDETERMINED);
				else
					print_value(out, label, c->gap_physical, c->gap_physical_se, "m");
				print_unc(out, s, "core.gap_physical");
			}
		}
		print_value(out, "mu_e", c->mu_e, c->mu_e_se, "");
		print_unc(out, s, "core.mu_e");
		print_value(out, "AL", c->AL, c->AL_se, "H");
		print_unc(out, s, "core.AL");
		if (c->rated_current > mf->I_max)
			fprintf(out, "  %-28s %s\n", "B peak at rated current", beyond);
		else
			print_value(out, mis ? "B peak at rated (misfit)" : "B peak at rated current", c->B_peak, c->B_peak_se,
				    "T");
		if (lr->undetermined) {
			fprintf(out, "  not determined by these data:");
			static const char *names[] = { "mu_i", "gap", "Js" };
			for (int j = 0; j < HB_CORE_NP; j++)
				if (lr->undetermined & (1u << j))
					fprintf(out, " %s", names[j]);
			fprintf(out, " (the sweep may not reach the knee; mu_e and AL still hold)\n");
		}
	}
	if (b->rated_current > mf->I_max && isfinite(b->H_rated))
		fprintf(out, "  %-28s %s\n", "applied N I / le at rated", beyond);
	else if (isfinite(b->H_rated))
		/* N I / le is what the winding applies per path length; the core
		 * itself sees less when a gap takes its share */
		print_value(out, "applied N I / le at rated", b->H_rated, NAN, "A/m");
	if (b->core_status == HB_OK) {
		const hb_fit_core_result *c = &b->core;
		if (c->rated_current > mf->I_max)
			fprintf(out, "  %-28s %s\n", "core field H at rated (model)", beyond);
		else
			print_value(out, c->flags & HB_CORE_NO_LAW_FITS ? "core field H (model, misfit)" :
				    "core field H at rated (model)", c->H_core_rated, NAN, "A/m");
	}
	if (s->knee_diagnosed)
		print_misfit(out, "knee model", &s->knee_diag);
	if (s->core_diagnosed)
		print_misfit(out, "core model", &s->core_diag);
	if (b->rated_current > mf->I_max)
		fprintf(out, "  %-28s %s\n", "stored energy at rated", beyond);
	else
		print_value(out, "stored energy at rated", b->W_rated, NAN, "J");
	if (isfinite(s->dcr_ohm)) {
		print_value(out, s->dcr_from_meter ? "DCR (meter)" : "DCR (two-wire, leads incl.)", s->dcr_ohm, NAN, "ohm");
		if (isfinite(s->dcr_ref_ohm))
			print_value(out, "DCR referred to 20 C", s->dcr_ref_ohm, NAN, "ohm");
		print_unc(out, s, "DCR");
	}
	if (s->n_checks) {
		fprintf(out, "verdicts:\n");
		for (size_t i = 0; i < s->n_checks; i++)
			hb_analysis_print_check(out, &s->checks[i], i == 0 || s->checks[i].decision.rule != s->checks[i - 1].decision.rule);
		fprintf(out, "  overall: %s\n", hb_overall_name(s->overall));
	}
	if (s->have_mask)
		hb_mask_print(out, &s->mask);
	if (s->have_gap_drawn)
		fprintf(out, "gap as drawn: %s\n", s->gap_sentence);
}

static json_t *num(double v)
{
	return isfinite(v) ? json_real(v) : json_null();
}

json_t *hb_analysis_value_object(double value, double std_err, const char *unit, const char *reason, bool misfit)
{
	json_t *o = json_object();
	json_object_set_new(o, "value", num(value));
	json_object_set_new(o, "std_err", num(std_err));
	json_object_set_new(o, "unit", json_string(unit));
	if (reason && *reason)
		json_object_set_new(o, "reason", json_string(reason));
	if (misfit)
		json_object_set_new(o, "misfit", json_true());
	return o;
}

json_t *hb_analysis_value_json(const hb_fit_value *v)
{
	return hb_analysis_value_object(v->value, v->std_err, v->unit, v->reason, v->misfit);
}

json_t *hb_analysis_summary_json(const hb_analysis_summary *s)
{
	json_t *j = json_object();
	json_object_set_new(j, "fit_id", json_integer(s->fit_id));
	json_object_set_new(j, "fit_code", json_string(HB_FIT_CODE_VERSION));
	json_object_set_new(j, "status", json_string(hb_status_name(s->fit_status)));
	if (s->message[0])
		json_object_set_new(j, "message", json_string(s->message));
	json_t *vals = json_object();
	if (s->kind == HB_DB_SWEEP_BIAS) {
		json_object_set_new(j, "model", json_string(s->bias.model));
		json_object_set_new(j, "note", json_string(HB_FIT_INCREMENTAL_NOTE));
		json_object_set_new(j, "cp_corrected", json_boolean(s->bias.modelfree.cp_corrected));
		json_object_set_new(j, "L0_basis", json_string(s->bias.modelfree.L0_basis));
		for (size_t i = 0; i < s->bias.values.count; i++) {
			json_t *o = hb_analysis_value_json(&s->bias.values.v[i]);
			const hb_budget *bg = hb_analysis_budget(s, s->bias.values.v[i].name);
			if (bg && isfinite(s->bias.values.v[i].value))
				hb_budget_add_json(o, bg);
			json_object_set_new(vals, s->bias.values.v[i].name, o);
		}
		if (s->bias.core_status == HB_OK) {
			const hb_fit_core_result *c = &s->bias.core;
			json_object_set_new(j, "law", json_string(hb_core_law_name(c->best)));
			/* the history's names, with the same honesty as core.* */
			const hb_fit_core_law_result *lr = &c->law[c->best];
			bool mis = c->flags & HB_CORE_NO_LAW_FITS;
			bool u_mu = lr->undetermined & (1u << HB_CORE_MU_I), u_g = lr->undetermined & (1u << HB_CORE_GAP);
			json_t *mu = hb_analysis_value_object(lr->param[HB_CORE_MU_I], u_mu ? NAN : lr->std_err[HB_CORE_MU_I],
							      "", u_mu ? HB_FIT_REASON_UNDETERMINED : NULL, mis);
			if (hb_analysis_budget(s, "core.mu_i"))
				hb_budget_add_json(mu, hb_analysis_budget(s, "core.mu_i"));
			json_object_set_new(vals, "mu_i", mu);
			json_t *gp = hb_analysis_value_object(c->gap_physical, u_g ? NAN : c->gap_physical_se, "m",
							      u_g && isfinite(c->gap_physical) ? HB_FIT_REASON_UNDETERMINED : NULL,
							      mis);
			if (hb_analysis_budget(s, "core.gap_physical"))
				hb_budget_add_json(gp, hb_analysis_budget(s, "core.gap_physical"));
			json_object_set_new(vals, "gap", gp);
		}
		json_object_set_new(j, "DCR_ohm", num(s->dcr_ohm));
		if (hb_analysis_budget(s, "DCR")) {
			/* value: referred to 20 C when a temperature is stored, else as measured ("uncertainty_note" says which) */
			const hb_budget *bg = hb_analysis_budget(s, "DCR");
			json_t *o = hb_analysis_value_object(bg->value, NAN, "ohm", NULL, false);
			json_object_set_new(o, "as_measured", num(s->dcr_ohm));
			json_object_set_new(o, "temperature_C", num(s->temperature_c));
			json_object_set_new(o, "referred", json_boolean(isfinite(s->dcr_ref_ohm)));
			json_object_set_new(vals, "DCR", hb_budget_add_json(o, bg));
		}
		json_t *mis = json_object();
		const hb_misfit_diag *dg[2] = { s->knee_diagnosed ? &s->knee_diag : NULL,
						s->core_diagnosed ? &s->core_diag : NULL };
		static const char *const which[2] = { "knee", "core" };
		for (int k = 0; k < 2; k++) {
			if (!dg[k])
				continue;
			json_t *o = json_object();
			json_object_set_new(o, "noise_ratio", num(dg[k]->noise_ratio));
			json_object_set_new(o, "cause", json_string(hb_misfit_cause_name(dg[k]->cause)));
			json_object_set_new(o, "current_moved_ratio", num(dg[k]->current_ratio));
			json_object_set_new(o, "current_moved_points", json_integer((json_int_t)dg[k]->current_points));
			json_object_set_new(o, "heating_ratio", num(dg[k]->heating_ratio));
			json_object_set_new(o, "heating_points", json_integer((json_int_t)dg[k]->heating_points));
			json_object_set_new(mis, which[k], o);
		}
		json_object_set_new(j, "misfit_diagnosis", mis);
	} else {
		const hb_fit_freq_result *q = &s->freq;
		bool beyond = hb_analysis_srf_beyond(s);
		json_object_set_new(vals, "L_H", num(q->param[HB_FREQ_L]));
		json_object_set_new(vals, "R_ohm", num(q->param[HB_FREQ_R]));
		json_object_set_new(vals, "C_F", num(q->param[HB_FREQ_C]));
		json_object_set_new(vals, "srf_Hz", num(beyond ? NAN : q->srf));
		json_object_set_new(vals, "srf_std_err_Hz", num(beyond ? NAN : q->srf_se));
		if (beyond)
			json_object_set_new(vals, "srf_above_Hz", num(s->freq_f_max));
		/* the same values with their uncertainty budgets, in the one value shape */
		static const char *const fnames[] = { "L", "R", "C", "srf" };
		static const char *const funits[] = { "H", "ohm", "F", "Hz" };
		const double fv[] = { q->param[HB_FREQ_L], q->param[HB_FREQ_R], q->param[HB_FREQ_C], q->srf };
		const double fse[] = { q->std_err[HB_FREQ_L], q->std_err[HB_FREQ_R], q->std_err[HB_FREQ_C], q->srf_se };
		for (size_t i = 0; i < 4; i++) {
			bool out_of_data = i == 3 && beyond;
			json_t *o = hb_analysis_value_object(out_of_data ? NAN : fv[i], out_of_data ? NAN : fse[i], funits[i],
							     out_of_data ? HB_FIT_REASON_BEYOND : NULL, false);
			const hb_budget *bg = hb_analysis_budget(s, fnames[i]);
			if (bg && !out_of_data)
				hb_budget_add_json(o, bg);
			json_object_set_new(vals, fnames[i], o);
		}
		/* measured X/R of the readings: the model's constant R would overstate Q */
		json_object_set_new(vals, "q_max_measured", num(q->q_max));
		json_object_set_new(vals, "q_max_measured_freq_Hz", num(q->q_max_freq));
		json_object_set_new(vals, "band_lo_Hz", num(q->band_lo));
		json_object_set_new(vals, "band_hi_Hz", num(q->band_hi));
	}
	json_object_set_new(j, "values", vals);
	json_t *checks = json_array();
	for (size_t i = 0; i < s->n_checks; i++)
		json_array_append_new(checks, hb_analysis_check_json(&s->checks[i]));
	json_object_set_new(j, "verdicts", checks);
	if (s->n_checks)
		json_object_set_new(j, "overall", json_string(hb_overall_name(s->overall)));
	if (s->have_mask)
		json_object_set_new(j, "curve_mask", hb_mask_json(&s->mask));
	if (s->have_gap_drawn)
		json_object_set_new(j, "gap_as_drawn", hb_gap_drawn_json(&s->gap_drawn, s->gap_sentence));
	return j;
}

const char *hb_analysis_budget_unit(const char *name, json_t *inputs, char *buf, size_t cap)
{
	/* that of an input entering with c = 1 (same dimension), else the verdict check's */
	const char *unit = NULL;
	size_t m = json_is_array(inputs) ? json_array_size(inputs) : 0;
	for (size_t i = 0; i < m && !unit; i++) {
		json_t *o = json_array_get(inputs, i);
		json_t *c = json_object_get(o, "c");
		const char *u = json_string_value(json_object_get(o, "unit"));
		if (u && json_is_number(c) && json_number_value(c) == 1)
			unit = u;
	}
	if (!unit)
		unit = strncmp(name, "mu", 2) == 0 ? "" : hb_analysis_check_unit(name);
	snprintf(buf, cap, "%s", unit);
	return buf;
}

static double jnum_or_nan(json_t *o, const char *key)
{
	json_t *v = json_object_get(o, key);
	return json_is_number(v) ? json_number_value(v) : NAN;
}

void hb_analysis_budget_cells(json_t *input, const char *y_unit, char cells[4][48])
{
	const char *xu = json_string_value(json_object_get(input, "unit"));
	if (!xu)
		xu = "";
	/* c carries y's unit per x's unit; a shared unit cancels */
	char cu[40];
	if (strcmp(xu, y_unit) == 0)
		cu[0] = '\0';
	else if (!*xu)
		snprintf(cu, sizeof cu, "%s", y_unit);
	else
		snprintf(cu, sizeof cu, "%s/%s", *y_unit ? y_unit : "1", xu);
	hb_format_si(cells[0], 48, jnum_or_nan(input, "value"), xu, 6);
	hb_format_u(cells[1], 48, jnum_or_nan(input, "u"), xu);
	hb_format_si(cells[2], 48, jnum_or_nan(input, "c"), cu, 4);
	hb_format_u(cells[3], 48, jnum_or_nan(input, "contribution"), y_unit);
}

void hb_analysis_print_budget(FILE *out, const hb_db_fit_unc *list, size_t n)
{
	if (n == 0) {
		fprintf(out, "no uncertainty budget stored with this fit (fitted before budgets were kept: refit it)\n");
		return;
	}
	for (size_t q = 0; q < n; q++) {
		const hb_db_fit_unc *u = &list[q];
		json_error_t err;
		json_t *a = json_loads(u->budget, 0, &err);
		char yu[24]; /* copied: the name lives in a, dropped before the footer */
		hb_analysis_budget_unit(u->name, a, yu, sizeof yu);
		char head[96];
		fprintf(out, "%s%s = %s\n", q ? "\n" : "", u->name, hb_format_unc(head, sizeof head, u->value, u->u_c, yu, 7));
		fprintf(out, "  %-24s %-4s %-13s %-11s %-12s %-11s %s\n", "input", "type", "value", "u(x)", "c", "u_i(y)",
			"source");
		size_t m = json_is_array(a) ? json_array_size(a) : 0;
		for (size_t i = 0; i < m; i++) {
			json_t *o = json_array_get(a, i);
			const char *name = json_string_value(json_object_get(o, "input"));
			const char *type = json_string_value(json_object_get(o, "type"));
			const char *src = json_string_value(json_object_get(o, "source"));
			char c[4][48];
			hb_analysis_budget_cells(o, yu, c);
			fprintf(out, "  %-24s %-4s %-13s %-11s %-12s %-11s %s\n", name ? name : "?", type ? type : "?", c[0], c[1],
				c[2], c[3], src ? src : "");
		}
		json_decref(a);
		char dof[24], uc[40], U[40];
		if (isfinite(u->dof))
			snprintf(dof, sizeof dof, "%.1f", u->dof);
		else
			snprintf(dof, sizeof dof, "infinite");
		fprintf(out, "  u_c = %s   nu_eff = %s   k = %.3f (95.45 %%)   U = %s", hb_format_u(uc, sizeof uc, u->u_c, yu),
			dof, u->k, hb_format_u(U, sizeof U, u->U, yu));
		if (isfinite(u->value) && u->value != 0 && isfinite(u->U))
			fprintf(out, "   (%.2g %% of the value)", 100 * u->U / fabs(u->value));
		fprintf(out, "\n");
		if (u->note[0])
			fprintf(out, "  %s\n", u->note);
	}
}

const char *hb_analysis_check_unit(const char *check)
{
	if (strcmp(check, "DCR") == 0)
		return "ohm";
	if (strcmp(check, "gap") == 0)
		return "m";
	if (strncmp(check, "I", 1) == 0)
		return "A";
	return "H";
}

void hb_analysis_print_stored_verdict(FILE *out, const hb_db_verdict *v, const char *unit)
{
	char mv[64], u[40], lim[140], al[140];
	fprintf(out, "  %-5s %-16s measured %-14s", v->check_name, hb_db_outcome_name(v->outcome),
		verdict_measured(mv, sizeof mv, v->measured, v->expanded_u, unit));
	if (isfinite(v->expanded_u))
		fprintf(out, " U %s (k = %.2f)", hb_format_u(u, sizeof u, v->expanded_u, unit), v->coverage_k);
	else
		fprintf(out, " U %s", HB_TEXT_ABSENT);
	fprintf(out, " limits %s", hb_format_limits(lim, sizeof lim, v->limit_low, v->limit_high, unit, 5));
	fprintf(out, " rule %s", v->decision_rule[0] ? v->decision_rule : "simple");
	if (isfinite(v->guard_r))
		fprintf(out, " (r = %g)", v->guard_r);
	if (strcmp(v->decision_rule, "simple") != 0 && (isfinite(v->accept_low) || isfinite(v->accept_high)))
		fprintf(out, " acceptance %s", hb_format_limits(al, sizeof al, v->accept_low, v->accept_high, unit, 5));
	if (strcmp(v->decision_rule, "guarded") == 0 && isfinite(v->p_false_accept))
		fprintf(out, " P(false accept) %.2g %%", v->p_false_accept * 100);
	fprintf(out, "\n");
}

json_t *hb_analysis_stored_verdict_json(const hb_db_verdict *v, const char *unit)
{
	json_t *o = json_object();
	json_object_set_new(o, "check", json_string(v->check_name));
	json_object_set_new(o, "outcome", json_string(hb_db_outcome_name(v->outcome)));
	json_object_set_new(o, "measured", num(v->measured));
	json_object_set_new(o, "limit_low", num(v->limit_low));
	json_object_set_new(o, "limit_high", num(v->limit_high));
	json_object_set_new(o, "margin_fraction", num(v->margin));
	json_object_set_new(o, "unit", json_string(unit ? unit : ""));
	json_object_set_new(o, "note", json_string(v->note));
	hb_decision_rule rule = HB_DECISION_SIMPLE;
	hb_decision_rule_parse(v->decision_rule, &rule);
	json_t *r = json_object();
	json_object_set_new(r, "name", json_string(hb_decision_rule_name(rule)));
	json_object_set_new(r, "statement", json_string(hb_decision_rule_statement(rule)));
	json_object_set_new(r, "r", num(v->guard_r));
	json_object_set_new(o, "decision_rule", r);
	json_object_set_new(o, "U", num(v->expanded_u));
	json_object_set_new(o, "k", num(v->coverage_k));
	json_object_set_new(o, "acceptance_low", num(v->accept_low));
	json_object_set_new(o, "acceptance_high", num(v->accept_high));
	json_object_set_new(o, "p_false_accept", num(v->p_false_accept));
	return o;
}
