/* src/quality/decision.h - decision rules with measurement uncertainty (ILAC-G8:2019, JCGM 106:2012), Cpk with confidence */
#ifndef HB_DECISION_H
#define HB_DECISION_H

#include <stdbool.h>
#include <stddef.h>

#include "../../common/hb_status.h"

/*
 * A verdict that states its rule. The tolerance interval is [tl_low,
 * tl_high] (NAN = no limit on that side: one-sided). U is the expanded
 * uncertainty of the measured value and k its coverage factor; the normal
 * approximation behind the probabilities takes u = U / k.
 *
 * Limits are inclusive on the conforming side, as in src/quality.c: a value
 * equal to a limit is inside it, and a value within 1e-12 relative of a
 * limit counts as on it (limits computed from a nominal carry rounding).
 */

typedef enum hb_decision_rule {
	HB_DECISION_SIMPLE = 0,    /* simple acceptance, w = 0: binary, the risk of a wrong decision
				    * is shared between the two parties (ILAC-G8:2019 4.2.1) */
	HB_DECISION_GUARDED = 1,   /* guarded acceptance, w = r U: binary, accept only inside the
				    * acceptance limits AL = TL -+ w (ILAC-G8:2019 4.2.2, JCGM 106 8.3.2) */
	HB_DECISION_NONBINARY = 2, /* pass / conditional pass / conditional fail / fail with
				    * w = r U either side of each limit (ILAC-G8:2019 4.2.3) */
	HB_DECISION_NRULES = 3
} hb_decision_rule;

typedef enum hb_decision_outcome {
	HB_DECISION_NOT_TESTED = 0, /* no finite measured value: never a pass */
	HB_DECISION_PASS,
	HB_DECISION_CONDITIONAL_PASS, /* inside the tolerance, but within w of a limit */
	HB_DECISION_CONDITIONAL_FAIL, /* outside the tolerance, but within w of a limit */
	HB_DECISION_FAIL,
} hb_decision_outcome;

typedef struct hb_decision_spec {
	double tl_low, tl_high; /* tolerance limits; NAN = none on that side (at least one finite) */
	hb_decision_rule rule;
	double r;               /* guard band factor, w = r U (>= 0); hb_decision_spec_init sets 1 */
} hb_decision_spec;

/* Simple acceptance, no limits, r = 1. */
void hb_decision_spec_init(hb_decision_spec *spec);

enum { /* hb_decision.flags */
	HB_DECISION_NO_ACCEPTANCE_ZONE = 1 << 0, /* two-sided, 2w >= TU - TL: the guarded rule can
						  * accept nothing at this uncertainty */
	HB_DECISION_NO_UNCERTAINTY = 1 << 1,     /* simple rule without a (finite) U: no probabilities */
};

typedef struct hb_decision {
	hb_decision_rule rule;
	hb_decision_outcome outcome;
	bool accepted;            /* pass or conditional pass */
	double measured, U, k, u; /* u = U / k; NAN when U was not given (simple rule only) */
	double w;                 /* guard band used: 0 simple, r U otherwise */
	double al_low, al_high;   /* acceptance limits produced: TL + w, TU - w (the tolerance limits
				   * for the simple rule); NAN where the tolerance has no limit */
	double rl_low, rl_high;   /* non-binary rule: TL - w, TU + w, beyond which it fails; NAN otherwise */
	double p_conform;         /* P(true value inside the tolerance | measured, u), normal
				   * (JCGM 106:2012 7.3 one-sided, 7.4 two-sided) */
	double p_false_accept;    /* 1 - p_conform when accepted, 0 when rejected (nothing was falsely
				   * accepted); NAN without u */
	int flags;
} hb_decision;

/*
 * HB_OK with out filled (outcome NOT_TESTED for a NAN measurement);
 * HB_ERR_ARG for a bad spec (no limit, tl_low >= tl_high, r < 0, unknown
 * rule) or a bad U / k; HB_ERR_DATA when the guarded or non-binary rule is
 * asked for without a finite U >= 0 and k > 0.
 */
int hb_decision_evaluate(const hb_decision_spec *spec, double measured, double U, double k, hb_decision *out);

/* P(true value inside [tl_low, tl_high] | measured, u) for a normal
 * distribution (JCGM 106:2012 7.3, 7.4); NAN limits are open sides. */
double hb_decision_p_conform(double measured, double u, double tl_low, double tl_high);

/*
 * How a lot inspection counts conditional units; the plan states it.
 * Default (0): every conditional outcome counts as nonconforming, the
 * consumer-safe reading. By side: conditional pass conforms, conditional
 * fail does not (the measured value's own side of the limit).
 */
typedef enum hb_conditional_policy {
	HB_CONDITIONAL_NONCONFORMING = 0,
	HB_CONDITIONAL_BY_SIDE = 1,
} hb_conditional_policy;

/* True when the outcome counts as conforming under the policy; NOT_TESTED never does. */
bool hb_decision_counts_conforming(hb_decision_outcome o, hb_conditional_policy policy);
const char *hb_conditional_policy_name(hb_conditional_policy policy); /* "nonconforming", "by-side" */
/* Those names back; HB_ERR_ARG for anything else. */
int hb_conditional_policy_parse(const char *text, hb_conditional_policy *policy);

const char *hb_decision_rule_name(hb_decision_rule rule);       /* "simple", "guarded", "non-binary" */
/* The names above (also "nonbinary"); HB_ERR_ARG for anything else. */
int hb_decision_rule_parse(const char *text, hb_decision_rule *rule);
const char *hb_decision_rule_statement(hb_decision_rule rule);  /* one sentence naming the rule and its source */
const char *hb_decision_outcome_name(hb_decision_outcome o);    /* "pass", "conditional-pass", ... */

/* ---------------- Cpk with confidence ---------------- */

#define HB_CPK_MIN_N 30 /* below this the interval is wide and the normal approximation rough */

typedef struct hb_cpk_interval {
	double cpk;          /* as given, a negative zero made +0 */
	double lower, upper; /* two-sided interval; NAN when n < 2 or cpk not finite */
	double confidence;   /* e.g. 0.95 */
	size_t n;
	bool small_sample;   /* n < HB_CPK_MIN_N: say so wherever the index is shown */
} hb_cpk_interval;

/*
 * Bissell's normal approximation (A. F. Bissell, "How reliable is your
 * capability index?", Applied Statistics 39 (1990) 331-340):
 *   Cpk +- z_{1-a/2} sqrt(1/(9n) + Cpk^2 / (2(n-1))).
 * confidence 0 -> 0.95. HB_ERR_DATA for n < 2 or a non-finite cpk (out
 * still filled, bounds NAN); HB_ERR_ARG for confidence outside (0, 1).
 */
int hb_cpk_confidence(double cpk, size_t n, double confidence, hb_cpk_interval *out);

/* x with no sign left on a zero that prints with `decimals` places: -0.0 and
 * -0.004 (2 places) both give +0.0, so "%.2f" never shows "-0.00". */
double hb_cpk_unsigned_zero(double x, int decimals);

#endif
