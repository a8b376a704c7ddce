/* src/quality/decision.c - decision rules with measurement uncertainty and Cpk confidence intervals (no I/O) */
#include <math.h>
#include <string.h>

#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>

#include "decision.h"

/*
 * ILAC-G8:09/2019 section 4.2 (checked against a public copy of pages 9-10
 * through the search tool):
 *   4.2.1 simple acceptance, w = 0: pass below AL = TL, fail above;
 *   4.2.2 binary with guard band: pass below AL = TL - w, fail above;
 *   4.2.3 non-binary with guard band: pass below TL - w, conditional pass in
 *         [TL - w, TL], conditional fail in [TL, TL + w], fail above TL + w.
 * Its closed intervals share their end points, so a choice is needed there:
 * a value ON a boundary takes the outcome on the conforming side, the same
 * convention as src/quality.c's inclusive limits (a value on TL passes).
 * Written here for an upper limit; a lower limit mirrors it.
 */

static const double REL_ON_LIMIT = 1e-12; /* as src/quality.c: limits from a nominal carry rounding */

/* a <= b, a value within rounding of b counting as on it */
static bool le(double a, double b)
{
	return a <= b || fabs(a - b) <= REL_ON_LIMIT * fmax(fabs(a), fabs(b));
}

void hb_decision_spec_init(hb_decision_spec *spec)
{
	if (!spec)
		return;
	spec->tl_low = NAN;
	spec->tl_high = NAN;
	spec->rule = HB_DECISION_SIMPLE;
	spec->r = 1;
}

/* P(true value outside the tolerance) for N(measured, u^2), each tail
 * computed directly so a small risk keeps its digits. */
static double p_outside(double y, double u, double lo, double hi)
{
	double p = 0;
	if (u == 0)
		return (!isnan(lo) && !le(lo, y)) || (!isnan(hi) && !le(y, hi)) ? 1 : 0;
	if (!isnan(lo))
		p += gsl_cdf_ugaussian_P((lo - y) / u);
	if (!isnan(hi))
		p += gsl_cdf_ugaussian_Q((hi - y) / u);
	return fmin(p, 1);
}

double hb_decision_p_conform(double measured, double u, double tl_low, double tl_high)
{
	if (!isfinite(measured) || !(u >= 0) || !isfinite(u) || (isnan(tl_low) && isnan(tl_high)))
		return NAN;
	gsl_set_error_handler_off();
	return 1 - p_outside(measured, u, tl_low, tl_high);
}

/* Where y stands against one upper limit tl with half-width w (w = 0 for
 * the binary rules' tolerance check). */
static hb_decision_outcome zone_upper(double y, double tl, double w)
{
	if (le(y, tl))
		return le(y + w, tl) ? HB_DECISION_PASS : HB_DECISION_CONDITIONAL_PASS;
	return le(y - w, tl) ? HB_DECISION_CONDITIONAL_FAIL : HB_DECISION_FAIL;
}

static hb_decision_outcome zone(double y, double lo, double hi, double w)
{
	hb_decision_outcome a = isnan(hi) ? HB_DECISION_PASS : zone_upper(y, hi, w);
	hb_decision_outcome b = isnan(lo) ? HB_DECISION_PASS : zone_upper(-y, -lo, w);
	/* the enum runs from best to worst: the worse side decides */
	return a > b ? a : b;
}

int hb_decision_evaluate(const hb_decision_spec *spec, double measured, double U, double k, hb_decision *out)
{
	if (!spec || !out)
		return HB_ERR_ARG;
	gsl_set_error_handler_off();
	double lo = spec->tl_low, hi = spec->tl_high;
	if ((isnan(lo) && isnan(hi)) || isinf(lo) || isinf(hi) || (!isnan(lo) && !isnan(hi) && !(lo < hi)) ||
	    !(spec->r >= 0) || !isfinite(spec->r) || (unsigned)spec->rule >= HB_DECISION_NRULES)
		return HB_ERR_ARG;
	bool have_u = isfinite(U) && U >= 0 && isfinite(k) && k > 0;
	if (!isnan(U) && !have_u)
		return HB_ERR_ARG; /* a U was given but it, or its k, is unusable */
	if (spec->rule != HB_DECISION_SIMPLE && !have_u)
		return HB_ERR_DATA; /* a guard band needs U */

	*out = (hb_decision){
		.rule = spec->rule, .outcome = HB_DECISION_NOT_TESTED, .measured = measured,
		.U = have_u ? U : NAN, .k = have_u ? k : NAN, .u = have_u ? U / k : NAN,
		.w = spec->rule == HB_DECISION_SIMPLE ? 0 : spec->r * U,
		.al_low = NAN, .al_high = NAN, .rl_low = NAN, .rl_high = NAN,
		.p_conform = NAN, .p_false_accept = NAN,
		.flags = have_u ? 0 : HB_DECISION_NO_UNCERTAINTY,
	};
	double w = out->w;
	if (!isnan(lo))
		out->al_low = lo + w;
	if (!isnan(hi))
		out->al_high = hi - w;
	if (spec->rule == HB_DECISION_NONBINARY) {
		if (!isnan(lo))
			out->rl_low = lo - w;
		if (!isnan(hi))
			out->rl_high = hi + w;
	}
	/* w eats the whole two-sided tolerance: no measured value can be accepted
	 * under the guarded rule (ILAC-G8 4.2.2 with too large a U) */
	if (!isnan(lo) && !isnan(hi) && !(out->al_low < out->al_high) && w > 0)
		out->flags |= HB_DECISION_NO_ACCEPTANCE_ZONE;
	if (!isfinite(measured))
		return HB_OK;

	switch (spec->rule) {
	case HB_DECISION_SIMPLE:
		out->outcome = zone(measured, lo, hi, 0) == HB_DECISION_PASS ? HB_DECISION_PASS : HB_DECISION_FAIL;
		break;
	case HB_DECISION_GUARDED: {
		bool in = (isnan(lo) || le(out->al_low, measured)) && (isnan(hi) || le(measured, out->al_high));
		if (out->flags & HB_DECISION_NO_ACCEPTANCE_ZONE)
			in = false;
		out->outcome = in ? HB_DECISION_PASS : HB_DECISION_FAIL;
		break;
	}
	case HB_DECISION_NONBINARY:
	default:
		out->outcome = zone(measured, lo, hi, w);
		break;
	}
	out->accepted = out->outcome == HB_DECISION_PASS || out->outcome == HB_DECISION_CONDITIONAL_PASS;
	if (have_u) {
		double po = p_outside(measured, out->u, lo, hi);
		out->p_conform = 1 - po;
		out->p_false_accept = out->accepted ? po : 0;
	}
	return HB_OK;
}

bool hb_decision_counts_conforming(hb_decision_outcome o, hb_conditional_policy policy)
{
	if (o == HB_DECISION_PASS)
		return true;
	return o == HB_DECISION_CONDITIONAL_PASS && policy == HB_CONDITIONAL_BY_SIDE;
}

const char *hb_conditional_policy_name(hb_conditional_policy policy)
{
	return policy == HB_CONDITIONAL_BY_SIDE ? "by-side" : "nonconforming";
}

const char *hb_decision_rule_name(hb_decision_rule rule)
{
	switch (rule) {
	case HB_DECISION_SIMPLE:
		return "simple";
	case HB_DECISION_GUARDED:
		return "guarded";
	case HB_DECISION_NONBINARY:
		return "non-binary";
	default:
		return "unknown";
	}
}

int hb_conditional_policy_parse(const char *text, hb_conditional_policy *policy)
{
	if (!text || !policy)
		return HB_ERR_ARG;
	if (strcmp(text, "nonconforming") == 0)
		*policy = HB_CONDITIONAL_NONCONFORMING;
	else if (strcmp(text, "by-side") == 0)
		*policy = HB_CONDITIONAL_BY_SIDE;
	else
		return HB_ERR_ARG;
	return HB_OK;
}

int hb_decision_rule_parse(const char *text, hb_decision_rule *rule)
{
	if (!text || !rule)
		return HB_ERR_ARG;
	for (int r = 0; r < HB_DECISION_NRULES; r++)
		if (strcmp(text, hb_decision_rule_name((hb_decision_rule)r)) == 0) {
			*rule = (hb_decision_rule)r;
			return HB_OK;
		}
	if (strcmp(text, "nonbinary") == 0) {
		*rule = HB_DECISION_NONBINARY;
		return HB_OK;
	}
	return HB_ERR_ARG;
}

const char *hb_decision_rule_statement(hb_decision_rule rule)
{
	switch (rule) {
	case HB_DECISION_SIMPLE:
		return "simple acceptance (ILAC-G8:09/2019 4.2.1, w = 0): pass when the measured value lies "
		       "within the tolerance limits; the risk of a wrong decision is shared, up to 50 % at a limit";
	case HB_DECISION_GUARDED:
		return "guarded acceptance (ILAC-G8:09/2019 4.2.2, JCGM 106:2012 8.3.2): pass only within "
		       "the acceptance limits, the tolerance limits narrowed by the guard band w = r U";
	case HB_DECISION_NONBINARY:
		return "non-binary statement with guard band (ILAC-G8:09/2019 4.2.3): pass, conditional pass, "
		       "conditional fail or fail as the measured value lies within w = r U of a tolerance limit or not";
	default:
		return "unknown decision rule";
	}
}

const char *hb_decision_outcome_name(hb_decision_outcome o)
{
	switch (o) {
	case HB_DECISION_PASS:
		return "pass";
	case HB_DECISION_CONDITIONAL_PASS:
		return "conditional-pass";
	case HB_DECISION_CONDITIONAL_FAIL:
		return "conditional-fail";
	case HB_DECISION_FAIL:
		return "fail";
	case HB_DECISION_NOT_TESTED:
	default:
		return "not-tested";
	}
}

/* ---------------- Cpk with confidence ---------------- */

double hb_cpk_unsigned_zero(double x, int decimals)
{
	if (isnan(x) || isinf(x))
		return x;
	if (decimals < 0)
		decimals = 0;
	/* what printf would round to zero prints with its sign ("-0.00"): make it +0 */
	if (fabs(x) < 0.5 * pow(10, -decimals))
		return 0.0;
	return x;
}

int hb_cpk_confidence(double cpk, size_t n, double confidence, hb_cpk_interval *out)
{
	if (!out)
		return HB_ERR_ARG;
	gsl_set_error_handler_off();
	if (confidence == 0)
		confidence = 0.95;
	*out = (hb_cpk_interval){
		.cpk = cpk == 0 ? 0.0 : cpk, .lower = NAN, .upper = NAN, .confidence = confidence,
		.n = n, .small_sample = n < HB_CPK_MIN_N,
	};
	if (!(confidence > 0 && confidence < 1))
		return HB_ERR_ARG;
	if (n < 2 || !isfinite(cpk))
		return HB_ERR_DATA;
	double z = gsl_cdf_ugaussian_Pinv(0.5 * (1 + confidence));
	double se = sqrt(1.0 / (9.0 * (double)n) + cpk * cpk / (2.0 * (double)(n - 1)));
	if (!isfinite(z) || !isfinite(se))
		return HB_ERR_DATA;
	/* a bound that lands on zero must not carry a sign either */
	double lo = cpk - z * se, hi = cpk + z * se;
	out->lower = lo == 0 ? 0.0 : lo;
	out->upper = hi == 0 ? 0.0 : hi;
	return HB_OK;
}
