/* src/quality/analysis_judge.c - a sweep's checks against its part's spec and the decision rule in force: the verdicts and the overall outcome */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "analysis.h"
#include "analysis_internal.h"

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

static double interp_at(const double *x, const double *y, size_t n, double at)
{
	if (n < 2 || at < x[0] || at > x[n - 1])
		return NAN;
	for (size_t i = 1; i < n; i++)
		if (at <= x[i])
			return y[i - 1] + (y[i] - y[i - 1]) * (at - x[i - 1]) / (x[i] - x[i - 1]);
	return NAN;
}

void hb_analysis__add_check(hb_analysis_summary *s, const char *name, const char *unit, hb_check c, const char *note)
{
	if (s->n_checks >= HB_ANALYSIS_MAX_CHECKS)
		return;
	hb_analysis_check *k = &s->checks[s->n_checks++];
	snprintf(k->name, sizeof k->name, "%s", name);
	snprintf(k->unit, sizeof k->unit, "%s", unit);
	k->check = c;
	snprintf(k->note, sizeof k->note, "%s", note ? note : "");
}

hb_check hb_analysis__untested(void)
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

void hb_analysis__judge_bias(hb_analysis_summary *s, const hb_db_part *part, const hb_db_sweep *sw, const double *I,
			     const double *L, size_t n, const hb_budget_context *bc)
{
	const hb_fit_modelfree_result *mf = &s->bias.modelfree;
	/* L0 counts only when measured at the spec's test frequency. */
	bool at_spec_freq = !isfinite(part->test_freq_hz) ||
			    (isfinite(sw->test_freq_hz) && fabs(sw->test_freq_hz / part->test_freq_hz - 1) < 0.01);
	if (isfinite(part->nominal_h) && isfinite(part->tolerance)) {
		if (at_spec_freq && s->fit_status == HB_OK)
			hb_analysis__add_check(s, "L0", "H", hb_verdict_tolerance(mf->L0, part->nominal_h, part->tolerance),
				  "zero-bias inductance within the nominal tolerance");
		else
			hb_analysis__add_check(s, "L0", "H", hb_analysis__untested(),
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
			hb_analysis__add_check(s, "Lsat", "H", hb_verdict_min(l_at, (1 - part->sat_drop) * mf->L0),
				  "L at the saturation-spec current at least (1 - drop) L0");
		else
			hb_analysis__add_check(s, "Lsat", "H", hb_analysis__untested(), "sweep did not reach the saturation-spec current");
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
			hb_analysis__add_check(s, "DCR", "ohm", hb_verdict_max(referred ? s->dcr_ref_ohm : s->dcr_ohm, part->dcr_max_ohm), note);
		} else
			hb_analysis__add_check(s, "DCR", "ohm", hb_analysis__untested(), "no voltage read-back at low current");
	}
}

/* The rule in force: the part's, else the station's default recorded with
 * the sweep, else the caller's default (simple acceptance). */
void hb_analysis__resolve_rule(const hb_db_part *part, const hb_db_sweep *sw, const hb_analysis_options *opt,
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
void hb_analysis__apply_rules(hb_analysis_summary *s, const hb_db_part *part, const hb_db_sweep *sw,
			      const hb_analysis_options *opt)
{
	hb_decision_rule rule;
	double r;
	hb_analysis__resolve_rule(part, sw, opt, &rule, &r);
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
