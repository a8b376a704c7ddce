/* tests/test_decision.c - src/quality/decision.c: ILAC-G8 decision rules, JCGM 106 probabilities, Cpk intervals */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "src/quality/decision.h"

static void check_near_at(double got, double want, double tol, int line)
{
	if (!(fabs(got - want) <= tol))
		fail_msg("line %d: got %.15g, want %.15g (tolerance %g)", line, got, want, tol);
}
#define check_near(got, want, tol) check_near_at((got), (want), (tol), __LINE__)

static hb_decision decide(hb_decision_rule rule, double lo, double hi, double r, double y, double U, double k)
{
	hb_decision_spec s;
	hb_decision_spec_init(&s);
	s.rule = rule;
	s.tl_low = lo;
	s.tl_high = hi;
	s.r = r;
	hb_decision d;
	int rc = hb_decision_evaluate(&s, y, U, k, &d);
	if (rc != HB_OK)
		fail_msg("rule %d, y %g: status %d", rule, y, rc);
	return d;
}

/*
 * Upper limit TU = 100, U = 2 at k = 2 (u = 1). Expected outcomes from the
 * zone definitions of ILAC-G8:09/2019 4.2.1-4.2.3 (checked against a public
 * copy of pages 9-10 via the search tool); probabilities from JCGM 106:2012
 * 7.3, p_c = Phi((TU - y)/u), hand-computed with Phi values from memory:
 * Phi(2) = 0.977250, Phi(1) = 0.841345, Phi(0.01) = 0.503989.
 */
static void test_simple(void **state)
{
	(void)state;
	hb_decision d = decide(HB_DECISION_SIMPLE, NAN, 100, 1, 99.99, 2, 2);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	assert_true(d.accepted);
	check_near(d.w, 0, 0);
	check_near(d.al_high, 100, 0); /* AL = TL (4.2.1) */
	assert_true(isnan(d.al_low));
	check_near(d.p_conform, 0.503989, 1e-6);
	check_near(d.p_false_accept, 0.496011, 1e-6);
	/* on the limit: passes (inclusive), with the 50 % shared risk 4.2.1 implies */
	d = decide(HB_DECISION_SIMPLE, NAN, 100, 1, 100, 2, 2);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	check_near(d.p_false_accept, 0.5, 1e-15);
	d = decide(HB_DECISION_SIMPLE, NAN, 100, 1, 100.01, 2, 2);
	assert_int_equal(d.outcome, HB_DECISION_FAIL);
	check_near(d.p_false_accept, 0, 0);
	/* simple acceptance needs no U: it is then stated without probabilities */
	d = decide(HB_DECISION_SIMPLE, NAN, 100, 1, 50, NAN, NAN);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	assert_true(d.flags & HB_DECISION_NO_UNCERTAINTY);
	assert_true(isnan(d.p_false_accept));
}

static void test_guarded(void **state)
{
	(void)state;
	/* w = r U = 2, AL = TU - w = 98 (ILAC-G8 4.2.2) */
	hb_decision d = decide(HB_DECISION_GUARDED, NAN, 100, 1, 98, 2, 2);
	check_near(d.w, 2, 0);
	check_near(d.al_high, 98, 0);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	/* at the acceptance limit PFA = 1 - Phi(2) = 2.275 %: below the 2.5 % that
	 * ILAC-G8 guidance quotes for w = U at 95 % (JCGM 106 7.3 by hand) */
	check_near(d.p_false_accept, 0.0227501, 1e-7);
	assert_true(d.p_false_accept < 0.025);
	d = decide(HB_DECISION_GUARDED, NAN, 100, 1, 98.01, 2, 2);
	assert_int_equal(d.outcome, HB_DECISION_FAIL);
	assert_false(d.accepted);
	check_near(d.p_false_accept, 0, 0);
	/* inside the tolerance but in the guard band: rejected, though likely conforming */
	d = decide(HB_DECISION_GUARDED, NAN, 100, 1, 99, 2, 2);
	assert_int_equal(d.outcome, HB_DECISION_FAIL);
	check_near(d.p_conform, 0.841345, 1e-6);
	/* r = 0.5: w = 1, AL = 99, PFA = 1 - Phi(1) */
	d = decide(HB_DECISION_GUARDED, NAN, 100, 0.5, 99, 2, 2);
	check_near(d.al_high, 99, 0);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	check_near(d.p_false_accept, 0.158655, 1e-6);
	/* lower limit mirrors: TL = 10, w = 0.5, AL = 10.5 */
	d = decide(HB_DECISION_GUARDED, 10, NAN, 1, 10.5, 0.5, 2);
	check_near(d.al_low, 10.5, 1e-15);
	assert_true(isnan(d.al_high));
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	check_near(d.p_false_accept, 0.0227501, 1e-7);
	d = decide(HB_DECISION_GUARDED, 10, NAN, 1, 10.49, 0.5, 2);
	assert_int_equal(d.outcome, HB_DECISION_FAIL);
}

static void test_nonbinary(void **state)
{
	(void)state;
	/* ILAC-G8 4.2.3 with w = U = 2 on TU = 100 */
	const struct {
		double y;
		hb_decision_outcome want;
	} c[] = {
		{ 97, HB_DECISION_PASS },
		{ 98, HB_DECISION_PASS },               /* on AL: the conforming side's outcome */
		{ 98.5, HB_DECISION_CONDITIONAL_PASS },
		{ 100, HB_DECISION_CONDITIONAL_PASS },  /* on TL: inside, as the limits are inclusive */
		{ 100.5, HB_DECISION_CONDITIONAL_FAIL },
		{ 102, HB_DECISION_CONDITIONAL_FAIL },  /* on TL + w: its interval still touches TL */
		{ 102.01, HB_DECISION_FAIL },
	};
	for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
		hb_decision d = decide(HB_DECISION_NONBINARY, NAN, 100, 1, c[i].y, 2, 2);
		if (d.outcome != c[i].want)
			fail_msg("y = %g: %s, want %s", c[i].y, hb_decision_outcome_name(d.outcome),
				 hb_decision_outcome_name(c[i].want));
		check_near(d.al_high, 98, 0);
		check_near(d.rl_high, 102, 0);
	}
	/* two-sided 90..110, w = 2: each side, and the middle */
	check_near(decide(HB_DECISION_NONBINARY, 90, 110, 1, 100, 2, 2).outcome, HB_DECISION_PASS, 0);
	check_near(decide(HB_DECISION_NONBINARY, 90, 110, 1, 91, 2, 2).outcome, HB_DECISION_CONDITIONAL_PASS, 0);
	check_near(decide(HB_DECISION_NONBINARY, 90, 110, 1, 89, 2, 2).outcome, HB_DECISION_CONDITIONAL_FAIL, 0);
	check_near(decide(HB_DECISION_NONBINARY, 90, 110, 1, 87, 2, 2).outcome, HB_DECISION_FAIL, 0);
	check_near(decide(HB_DECISION_NONBINARY, 90, 110, 1, 109, 2, 2).outcome, HB_DECISION_CONDITIONAL_PASS, 0);
	hb_decision d = decide(HB_DECISION_NONBINARY, 90, 110, 1, 109, 2, 2);
	/* JCGM 106 7.4 two-sided: p_c = Phi(1) - Phi(-19) = 0.841345 */
	check_near(d.p_conform, 0.841345, 1e-6);
	check_near(d.p_false_accept, 0.158655, 1e-6);
	check_near(d.al_low, 92, 0);
	check_near(d.rl_low, 88, 0);

	/*
	 * The issue's case: a part 0.01 % inside its limit with 0.25 % expanded
	 * uncertainty "passes" under plain comparison. Here L = 100 uH +-10 %,
	 * measured 0.01 % below the upper limit, U = 0.25 % of the reading.
	 */
	double tu = 110e-6, y = tu * (1 - 1e-4), U = 0.0025 * y;
	assert_int_equal(decide(HB_DECISION_SIMPLE, 90e-6, tu, 1, y, U, 2).outcome, HB_DECISION_PASS);
	assert_int_equal(decide(HB_DECISION_NONBINARY, 90e-6, tu, 1, y, U, 2).outcome, HB_DECISION_CONDITIONAL_PASS);
	assert_int_equal(decide(HB_DECISION_GUARDED, 90e-6, tu, 1, y, U, 2).outcome, HB_DECISION_FAIL);
}

static void test_edges(void **state)
{
	(void)state;
	hb_decision_spec s;
	hb_decision d;
	hb_decision_spec_init(&s);
	check_near(s.r, 1, 0);
	assert_int_equal(s.rule, HB_DECISION_SIMPLE);
	assert_int_equal(hb_decision_evaluate(&s, 1, 0.1, 2, &d), HB_ERR_ARG); /* no limit */
	s.tl_low = 5;
	s.tl_high = 5;
	assert_int_equal(hb_decision_evaluate(&s, 1, 0.1, 2, &d), HB_ERR_ARG); /* empty tolerance */
	s.tl_high = 10;
	s.r = -1;
	assert_int_equal(hb_decision_evaluate(&s, 1, 0.1, 2, &d), HB_ERR_ARG);
	s.r = 1;
	assert_int_equal(hb_decision_evaluate(&s, 7, 0.1, 0, &d), HB_ERR_ARG); /* U without a usable k */
	s.rule = HB_DECISION_GUARDED;
	assert_int_equal(hb_decision_evaluate(&s, 7, NAN, NAN, &d), HB_ERR_DATA); /* a guard band needs U */
	/* not measured: not tested, never a pass; the limits are still stated */
	assert_int_equal(hb_decision_evaluate(&s, NAN, 1, 2, &d), HB_OK);
	assert_int_equal(d.outcome, HB_DECISION_NOT_TESTED);
	assert_false(d.accepted);
	check_near(d.al_low, 6, 0);
	check_near(d.al_high, 9, 0);
	/* U so large the guard bands meet: nothing can be accepted */
	assert_int_equal(hb_decision_evaluate(&s, 7.5, 3, 2, &d), HB_OK);
	assert_true(d.flags & HB_DECISION_NO_ACCEPTANCE_ZONE);
	assert_int_equal(d.outcome, HB_DECISION_FAIL);
	/* a value within 1e-12 relative of a limit is on it (as src/quality.c) */
	d = decide(HB_DECISION_SIMPLE, NAN, 100 * (1 + 0.1), 1, 110, 2, 2);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	/* zero uncertainty: the probabilities are certainties */
	d = decide(HB_DECISION_GUARDED, NAN, 100, 1, 99, 0, 2);
	assert_int_equal(d.outcome, HB_DECISION_PASS);
	check_near(d.p_false_accept, 0, 0);
	check_near(hb_decision_p_conform(101, 0, NAN, 100), 0, 0);
	assert_true(isnan(hb_decision_p_conform(1, 1, NAN, NAN)));

	assert_string_equal(hb_decision_rule_name(HB_DECISION_GUARDED), "guarded");
	assert_string_equal(hb_decision_outcome_name(HB_DECISION_CONDITIONAL_FAIL), "conditional-fail");
	assert_non_null(strstr(hb_decision_rule_statement(HB_DECISION_SIMPLE), "shared"));
	assert_non_null(strstr(hb_decision_rule_statement(HB_DECISION_NONBINARY), "4.2.3"));
}

/* The issue: conditional units count as nonconforming unless the plan says otherwise. */
static void test_conditional_policy(void **state)
{
	(void)state;
	hb_conditional_policy def = 0;
	assert_true(hb_decision_counts_conforming(HB_DECISION_PASS, def));
	assert_false(hb_decision_counts_conforming(HB_DECISION_CONDITIONAL_PASS, def));
	assert_false(hb_decision_counts_conforming(HB_DECISION_CONDITIONAL_FAIL, def));
	assert_false(hb_decision_counts_conforming(HB_DECISION_NOT_TESTED, def));
	assert_true(hb_decision_counts_conforming(HB_DECISION_CONDITIONAL_PASS, HB_CONDITIONAL_BY_SIDE));
	assert_false(hb_decision_counts_conforming(HB_DECISION_CONDITIONAL_FAIL, HB_CONDITIONAL_BY_SIDE));
	assert_false(hb_decision_counts_conforming(HB_DECISION_FAIL, HB_CONDITIONAL_BY_SIDE));
	assert_string_equal(hb_conditional_policy_name(def), "nonconforming");
}

/*
 * Bissell (1990): Cpk +- z sqrt(1/(9n) + Cpk^2/(2(n-1))).
 * The issue's example, n = 3, Cpk 0.79, "about -0.07 to 1.66": by hand
 * sqrt(1/27 + 0.6241/4) = 0.439388, x 1.959964 = 0.861184, so -0.0712 to
 * 1.6512. The issue's upper 1.66 matches the unrounded Cpk the printed 0.79
 * came from (0.794 gives -0.0707 to 1.6587), so both are checked.
 */
static void test_cpk_issue(void **state)
{
	(void)state;
	hb_cpk_interval ci;
	assert_int_equal(hb_cpk_confidence(0.79, 3, 0, &ci), HB_OK);
	check_near(ci.confidence, 0.95, 0);
	check_near(ci.lower, -0.0712, 0.0001);
	check_near(ci.upper, 1.6512, 0.0001);
	assert_true(ci.small_sample);
	assert_int_equal(hb_cpk_confidence(0.794, 3, 0.95, &ci), HB_OK);
	check_near(ci.lower, -0.07, 0.005);
	check_near(ci.upper, 1.66, 0.005);
}

/* Textbook: Montgomery, Introduction to Statistical Quality Control, the
 * Cpk confidence interval example with Bissell's approximation: n = 20,
 * Cpk = 1.33, 95 %: 0.88 <= Cpk <= 1.78 (from memory; by hand 0.8826 to 1.7774). */
static void test_cpk_textbook(void **state)
{
	(void)state;
	hb_cpk_interval ci;
	assert_int_equal(hb_cpk_confidence(1.33, 20, 0.95, &ci), HB_OK);
	check_near(ci.lower, 0.88, 0.005);
	check_near(ci.upper, 1.78, 0.005);
	assert_true(ci.small_sample);
	/* A published example: Quality Digest, May 2000, "The Last Word" (Cpk
	 * confidence intervals): n = 45, Cpk 1.15, 95 %: "between 0.89 and 1.41". */
	assert_int_equal(hb_cpk_confidence(1.15, 45, 0.95, &ci), HB_OK);
	check_near(ci.lower, 0.89, 0.005);
	check_near(ci.upper, 1.41, 0.005);
	assert_int_equal(hb_cpk_confidence(1.33, 30, 0.95, &ci), HB_OK);
	assert_false(ci.small_sample);
	assert_int_equal(hb_cpk_confidence(1.33, 29, 0.95, &ci), HB_OK);
	assert_true(ci.small_sample);
	/* a wider confidence gives a wider interval: 99 % z = 2.575829 */
	assert_int_equal(hb_cpk_confidence(1.33, 20, 0.99, &ci), HB_OK);
	check_near(ci.upper - 1.33, 2.575829 * sqrt(1.0 / 180 + 1.33 * 1.33 / 38), 1e-6);
	assert_int_equal(hb_cpk_confidence(1.33, 1, 0.95, &ci), HB_ERR_DATA);
	assert_true(isnan(ci.lower));
	assert_int_equal(hb_cpk_confidence(NAN, 10, 0.95, &ci), HB_ERR_DATA);
	assert_int_equal(hb_cpk_confidence(1, 10, 1.0, &ci), HB_ERR_ARG);
}

/* The issue: Cpk printed "-0.00" when the mean sat on a limit. */
static void test_no_signed_zero(void **state)
{
	(void)state;
	hb_cpk_interval ci;
	assert_int_equal(hb_cpk_confidence(-0.0, 10, 0.95, &ci), HB_OK);
	assert_false(signbit(ci.cpk));
	char buf[32];
	const double xs[] = { -0.0, -1e-300, -0.001, -0.004, -0.00499, 0.004, -0.006, -0.005 };
	for (size_t i = 0; i < sizeof xs / sizeof xs[0]; i++) {
		snprintf(buf, sizeof buf, "%.2f", hb_cpk_unsigned_zero(xs[i], 2));
		if (strcmp(buf, "-0.00") == 0)
			fail_msg("%g printed as %s", xs[i], buf);
	}
	snprintf(buf, sizeof buf, "%.2f", hb_cpk_unsigned_zero(-0.004, 2));
	assert_string_equal(buf, "0.00");
	snprintf(buf, sizeof buf, "%.2f", hb_cpk_unsigned_zero(-0.006, 2));
	assert_string_equal(buf, "-0.01");
	snprintf(buf, sizeof buf, "%.3f", hb_cpk_unsigned_zero(-0.004, 3));
	assert_string_equal(buf, "-0.004");
	assert_true(isnan(hb_cpk_unsigned_zero(NAN, 2)));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_simple),
		cmocka_unit_test(test_guarded),
		cmocka_unit_test(test_nonbinary),
		cmocka_unit_test(test_edges),
		cmocka_unit_test(test_conditional_policy),
		cmocka_unit_test(test_cpk_issue),
		cmocka_unit_test(test_cpk_textbook),
		cmocka_unit_test(test_no_signed_zero),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
