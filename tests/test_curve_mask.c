/* tests/test_curve_mask.c - a measured L-against-current curve judged against a data-sheet mask: at, just inside and just outside the band, beyond the sweep, through the decision rule, stored and reported */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db/hb_db.h"
#include "src/quality/quality.h"
#include "src/report/report.h"
#include "store_fixture.h"

/*
 * The measured curve is a swinging (stepped-gap) choke's characteristic as
 * choke data sheets state it: L flat up to a step current, then falling
 * linearly with current (piecewise-linear L(I), common practice):
 *     L(I) = L0                    for I <= I1,
 *     L(I) = L0 - S (I - I1)       for I >  I1.
 * The sweep's points sit every 0.5 A and the break I1 = 1 A is one of them,
 * so between any two points the curve is a straight line and linear
 * interpolation gives its value exactly (the interpolation remainder
 * t (1 - t) h^2 L''/2 is zero where L'' = 0: common practice). Every
 * expected number below comes from this formula, not from the code.
 */
static void near_at(double got, double want, double tol, int line)
{
	if (!(fabs(got - want) <= tol))
		fail_msg("line %d: got %.15g, want %.15g (tolerance %g)", line, got, want, tol);
}
#define assert_double_equal(got, want, tol) near_at((got), (want), (tol), __LINE__)

#define L0_H 100e-6
#define I1_A 1.0
#define S_H_PER_A 10e-6
#define STEP_A 0.5
#define N_PTS 9 /* 0 ... 4 A */

static double swinging_choke(double amps)
{
	return amps <= I1_A ? L0_H : L0_H - S_H_PER_A * (amps - I1_A);
}

static void curve(double *I, double *L)
{
	for (int i = 0; i < N_PTS; i++) {
		I[i] = STEP_A * i;
		L[i] = swinging_choke(I[i]);
	}
}

/* One mask point at amps whose band edge on side (+1 upper, -1 lower) sits
 * at the formula's L times (1 + shift): shift > 0 moves the upper edge
 * above the curve (the curve inside), < 0 below it (outside). */
static void one_point_mask(hb_db_part_drawing *d, double amps, double tol, int side, double shift)
{
	hb_db_part_drawing_init(d);
	d->curve_tol = tol;
	d->n_curve = 1;
	d->curve[0].current_a = amps;
	d->curve[0].tol = NAN;
	double edge = swinging_choke(amps) * (1 + side * shift);
	d->curve[0].inductance_h = edge / (1 + side * tol);
}

/* No noise, no instrument accuracy stated: the plain comparison. */
static void plain_ctx(hb_budget_context *c)
{
	hb_budget_context_init(c);
}

static hb_mask_result *evaluate(const hb_db_part_drawing *d, hb_decision_rule rule, const hb_budget_context *ctx,
				double noise_sigma)
{
	double I[N_PTS], L[N_PTS];
	curve(I, L);
	hb_mask_result *m = calloc(1, sizeof *m);
	assert_non_null(m);
	assert_int_equal(hb_mask_evaluate(I, L, N_PTS, d, 0, noise_sigma, INFINITY, ctx, rule, 1.0, m, NULL), HB_OK);
	return m;
}

/* 2.25 A lies halfway between the points at 2.0 and 2.5 A on the falling
 * segment: L = 100 uH - 10 uH/A x 1.25 A = 87.5 uH by the formula. */
#define AT_A 2.25

static void test_interpolation_is_exact_on_a_segment(void **state)
{
	(void)state;
	hb_db_part_drawing d;
	one_point_mask(&d, AT_A, 0.10, +1, 0.05);
	hb_budget_context c;
	plain_ctx(&c);
	hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
	assert_true(m->pt[0].tested);
	/* the formula's value: 87.5 uH */
	assert_double_equal(m->pt[0].measured, 87.5e-6, 1e-15);
	free(m);
}

static void test_on_the_band_edge_passes(void **state)
{
	(void)state;
	hb_budget_context c;
	plain_ctx(&c);
	for (int side = -1; side <= 1; side += 2) {
		hb_db_part_drawing d;
		one_point_mask(&d, AT_A, 0.10, side, 0);
		hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
		/* ILAC-G8:2019 4.2.1 simple acceptance with limits inclusive (a value on the limit conforms) */
		assert_int_equal(m->pt[0].decision.outcome, HB_DECISION_PASS);
		assert_int_equal(m->outcome, HB_DECISION_PASS);
		assert_true(fabs(m->pt[0].check.margin_frac) < 1e-9);
		free(m);
	}
}

static void test_just_inside_passes_just_outside_fails(void **state)
{
	(void)state;
	hb_budget_context c;
	plain_ctx(&c);
	for (int side = -1; side <= 1; side += 2) {
		hb_db_part_drawing d;
		one_point_mask(&d, AT_A, 0.10, side, 1e-4);
		hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
		assert_int_equal(m->pt[0].decision.outcome, HB_DECISION_PASS);
		/* the edge sits 1e-4 of L beyond the curve, at L (1 + side 1e-4): margin 1e-4 L over the edge */
		assert_double_equal(m->pt[0].check.margin_frac, 1e-4 / (1 + side * 1e-4), 1e-9);
		free(m);

		one_point_mask(&d, AT_A, 0.10, side, -1e-4);
		m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
		assert_int_equal(m->pt[0].decision.outcome, HB_DECISION_FAIL);
		assert_int_equal(m->outcome, HB_DECISION_FAIL);
		assert_double_equal(m->pt[0].check.margin_frac, -1e-4 / (1 - side * 1e-4), 1e-9);
		free(m);
	}
}

static void test_beyond_the_sweep_is_untested(void **state)
{
	(void)state;
	hb_budget_context c;
	plain_ctx(&c);
	hb_db_part_drawing d;
	one_point_mask(&d, AT_A, 0.10, +1, 0.02);
	/* a second point at 5 A: the sweep ends at 4 A, so nothing is known there */
	d.curve[1].current_a = 5.0;
	d.curve[1].inductance_h = swinging_choke(5.0);
	d.curve[1].tol = NAN;
	d.n_curve = 2;
	hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
	assert_false(m->pt[1].tested);
	assert_true(isnan(m->pt[1].measured));
	assert_int_equal(m->pt[1].decision.outcome, HB_DECISION_NOT_TESTED);
	assert_int_equal(m->n_untested, 1);
	/* one point inside, one untested: the mask is not tested as a whole, never a pass */
	assert_int_equal(m->outcome, HB_DECISION_NOT_TESTED);
	assert_int_equal(m->worst, 0);
	free(m);
	/* a failing point decides, whatever else was not tested */
	one_point_mask(&d, AT_A, 0.10, +1, -0.02);
	d.curve[1].current_a = 5.0;
	d.curve[1].inductance_h = swinging_choke(5.0);
	d.curve[1].tol = NAN;
	d.n_curve = 2;
	m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
	assert_int_equal(m->outcome, HB_DECISION_FAIL);
	free(m);
}

static void test_worst_point_and_its_current(void **state)
{
	(void)state;
	hb_budget_context c;
	plain_ctx(&c);
	hb_db_part_drawing d;
	hb_db_part_drawing_init(&d);
	d.curve_tol = 0.10;
	/* the data sheet's points: 3 % above the curve at 0.5 A, 6 % below at 3 A (both inside +-10 %) */
	const double at[2] = { 0.5, 3.0 }, off[2] = { 1.03, 0.94 };
	for (int i = 0; i < 2; i++) {
		d.curve[i].current_a = at[i];
		d.curve[i].inductance_h = swinging_choke(at[i]) * off[i];
		d.curve[i].tol = NAN;
	}
	d.n_curve = 2;
	hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
	/* margins from the formula: L/N = 1/1.03 against the lower edge 0.9 N: (1/1.03 - 0.9)/0.9;
	 * L/N = 1/0.94 against the upper edge 1.1 N: (1.1 - 1/0.94)/1.1 - the smaller one */
	double m0 = (1 / 1.03 - 0.9) / 0.9, m1 = (1.1 - 1 / 0.94) / 1.1;
	assert_double_equal(m->pt[0].check.margin_frac, m0, 1e-9);
	assert_double_equal(m->pt[1].check.margin_frac, m1, 1e-9);
	assert_int_equal(m->worst, m1 < m0 ? 1 : 0);
	assert_double_equal(m->pt[m->worst].current, m1 < m0 ? 3.0 : 0.5, 0);
	free(m);
}

static void test_first_point_stands_for_zero_within_its_accuracy(void **state)
{
	(void)state;
	hb_budget_context c;
	plain_ctx(&c);
	hb_db_part_drawing d;
	one_point_mask(&d, 0.0, 0.10, +1, 0.02);
	double I[N_PTS], L[N_PTS];
	curve(I, L);
	hb_mask_result *m = calloc(1, sizeof *m);
	assert_non_null(m);
	/* the supply read back 0.5 mA at the zero set-point: within HB_MASK_LOW_SLACK_A (1 mA) */
	I[0] = 0.5e-3;
	assert_int_equal(hb_mask_evaluate(I, L, N_PTS, &d, 0, 0, INFINITY, &c, HB_DECISION_SIMPLE, 1, m, NULL), HB_OK);
	assert_true(m->pt[0].tested);
	assert_double_equal(m->pt[0].measured, L0_H, 1e-15);
	/* 20 mA: no reading stands for zero current */
	I[0] = 20e-3;
	assert_int_equal(hb_mask_evaluate(I, L, N_PTS, &d, 0, 0, INFINITY, &c, HB_DECISION_SIMPLE, 1, m, NULL), HB_OK);
	assert_false(m->pt[0].tested);
	free(m);
}

/* GUM (JCGM 100:2008) 5.1.2, the law of propagation for y = (1 - t) x1 + t x2
 * with independent readings of sd s: u^2 = ((1 - t)^2 + t^2) s^2; halfway,
 * u = s / sqrt(2). A meter accuracy +-a of reading, rectangular (GUM 4.3.7):
 * u = a L / sqrt(3). With infinite degrees of freedom k = 2 for 95.45 %
 * (GUM G.3, Table G.2). */
static void test_uncertainty_from_noise_and_meter(void **state)
{
	(void)state;
	hb_db_part_drawing d;
	one_point_mask(&d, AT_A, 0.10, +1, 0.05);
	hb_budget_context c;
	plain_ctx(&c);
	const double s = 50e-9;
	hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, s);
	assert_double_equal(m->pt[0].u_c, s / sqrt(2), 1e-15);
	assert_double_equal(m->pt[0].U, 2 * s / sqrt(2), 1e-14);
	free(m);
	c.meter_rel = 0.001;
	m = evaluate(&d, HB_DECISION_SIMPLE, &c, s);
	double um = 0.001 * 87.5e-6 / sqrt(3);
	assert_double_equal(m->pt[0].u_c, sqrt(s * s / 2 + um * um), 1e-15);
	free(m);
}

/* The verdict goes through the decision rule: just inside the band with a
 * margin smaller than U passes simple acceptance and fails the guarded
 * rule w = U (ILAC-G8:2019 4.2.2: accept only inside TL + w ... TU - w). */
static void test_guarded_rule_refuses_a_margin_within_u(void **state)
{
	(void)state;
	hb_db_part_drawing d;
	one_point_mask(&d, AT_A, 0.10, +1, 1e-4);
	hb_budget_context c;
	plain_ctx(&c);
	c.meter_rel = 0.002; /* U = 2 x 0.002 L / sqrt(3), about 2.3e-3 L: far more than the 1e-4 margin */
	hb_mask_result *m = evaluate(&d, HB_DECISION_SIMPLE, &c, 0);
	assert_int_equal(m->outcome, HB_DECISION_PASS);
	free(m);
	m = evaluate(&d, HB_DECISION_GUARDED, &c, 0);
	assert_int_equal(m->outcome, HB_DECISION_FAIL);
	free(m);
	m = evaluate(&d, HB_DECISION_NONBINARY, &c, 0);
	assert_int_equal(m->outcome, HB_DECISION_CONDITIONAL_PASS);
	free(m);
}

/* ------------------------------------------------------------------ */
/* stored: part drawing, analysis verdict, report                      */
/* ------------------------------------------------------------------ */

/* The swinging choke's points stored as a complete bias sweep of a unit of
 * the part, and analysed as a measurement would be. */
static int64_t store_and_analyse(hb_db *db, int64_t part_id, const char *serial)
{
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(db, part_id, serial, 0, &unit), HB_OK);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = HB_DB_SWEEP_BIAS;
	s.unit_id = unit;
	s.test_freq_hz = 100e3;
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	assert_int_equal(hb_db_sweep_begin(db, &s), HB_OK);
	for (int k = 0; k < N_PTS; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = k;
		p.bias_set_a = p.bias_meas_a = STEP_A * k;
		p.freq_hz = 100e3;
		p.primary = swinging_choke(p.bias_meas_a);
		p.secondary = 0.1;
		assert_int_equal(hb_db_point_add(db, &p), HB_OK);
	}
	assert_int_equal(hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, NULL), HB_OK);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *an = calloc(1, sizeof *an);
	assert_non_null(an);
	hb_analysis_sweep(db, s.id, &opt, an);
	assert_true(an->have_mask);
	free(an);
	return s.id;
}

static const hb_db_verdict *find_verdict(const hb_db_verdict *v, size_t n, const char *name)
{
	for (size_t i = 0; i < n; i++)
		if (strcmp(v[i].check_name, name) == 0)
			return &v[i];
	fail_msg("no stored verdict %s", name);
	return NULL;
}

static void test_stored_mask_verdict_and_report(void **state)
{
	(void)state;
	char dir[128], path[256];
	hb_db *db = NULL;
	assert_int_equal(temp_store_open(dir, sizeof dir, "mask", path, sizeof path, &db), 0);
	hb_db_part part;
	hb_db_part_init(&part);
	snprintf(part.part_number, sizeof part.part_number, "SWING-1");
	part.test_freq_hz = 100e3;
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	/* mask: 2.25 A just outside (upper edge 1e-3 below the curve), 0.5 A inside, 6 A beyond the sweep */
	hb_db_part_drawing d;
	one_point_mask(&d, AT_A, 0.10, +1, -1e-3);
	d.curve[1] = d.curve[0];
	d.curve[0].current_a = 0.5;
	d.curve[0].inductance_h = swinging_choke(0.5);
	d.curve[2].current_a = 6.0;
	d.curve[2].inductance_h = 50e-6;
	d.curve[2].tol = 0.2;
	d.n_curve = 3;
	d.part_id = part.id;
	assert_int_equal(hb_db_part_drawing_put(db, &d), HB_OK);
	hb_db_part_drawing back;
	assert_int_equal(hb_db_part_drawing_get(db, part.id, &back), HB_OK);
	assert_int_equal(back.n_curve, 3);
	assert_double_equal(back.curve[2].tol, 0.2, 0);
	assert_true(isnan(back.curve[0].tol));

	int64_t sweep = store_and_analyse(db, part.id, "U1");
	hb_db_verdict *v = NULL;
	size_t nv = 0;
	assert_int_equal(hb_db_verdict_list(db, sweep, &v, &nv), HB_OK);
	const hb_db_verdict *mask = find_verdict(v, nv, "mask");
	/* the failing point decides over the untested one; it is the worst, at 2.25 A, 87.5 uH by the formula */
	assert_int_equal(mask->outcome, HB_DB_FAIL);
	assert_double_equal(mask->measured, 87.5e-6, 1e-15);
	assert_double_equal(mask->margin, -1e-3 / (1 - 1e-3), 1e-9);
	hb_db_verdicts_free(v);

	/* the report carries the section and the per-point table */
	FILE *f = tmpfile();
	assert_non_null(f);
	char err[200] = "";
	assert_int_equal(hb_report_sweep(db, sweep, f, err, sizeof err), HB_OK);
	char *html = stream_read_back(f, NULL);
	assert_non_null(strstr(html, "<h2>Against the drawing and the data sheet</h2>"));
	assert_non_null(strstr(html, "<td>beyond the sweep</td>"));
	free(html);
	assert_int_equal(temp_store_remove(dir, db), 0);
}

/* A mask point beyond the swept current leaves the stored verdict
 * not-tested even when every tested point passes: never a pass on what
 * was not measured. */
static void test_stored_untested_point_is_no_pass(void **state)
{
	(void)state;
	char dir[128], path[256];
	hb_db *db = NULL;
	assert_int_equal(temp_store_open(dir, sizeof dir, "mask2", path, sizeof path, &db), 0);
	hb_db_part part;
	hb_db_part_init(&part);
	snprintf(part.part_number, sizeof part.part_number, "SWING-2");
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	hb_db_part_drawing d;
	one_point_mask(&d, AT_A, 0.10, +1, 0.02);
	d.curve[1].current_a = 6.0;
	d.curve[1].inductance_h = 50e-6;
	d.curve[1].tol = NAN;
	d.n_curve = 2;
	d.part_id = part.id;
	assert_int_equal(hb_db_part_drawing_put(db, &d), HB_OK);
	int64_t sweep = store_and_analyse(db, part.id, "U2");
	hb_db_verdict *v = NULL;
	size_t nv = 0;
	assert_int_equal(hb_db_verdict_list(db, sweep, &v, &nv), HB_OK);
	const hb_db_verdict *mask = find_verdict(v, nv, "mask");
	assert_int_equal(mask->outcome, HB_DB_NOT_TESTED);
	/* the worst tested point is still stated: 2.25 A, 87.5 uH by the formula */
	assert_double_equal(mask->measured, 87.5e-6, 1e-15);
	hb_db_verdicts_free(v);
	assert_int_equal(temp_store_remove(dir, db), 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_interpolation_is_exact_on_a_segment),
		cmocka_unit_test(test_on_the_band_edge_passes),
		cmocka_unit_test(test_just_inside_passes_just_outside_fails),
		cmocka_unit_test(test_beyond_the_sweep_is_untested),
		cmocka_unit_test(test_worst_point_and_its_current),
		cmocka_unit_test(test_first_point_stands_for_zero_within_its_accuracy),
		cmocka_unit_test(test_uncertainty_from_noise_and_meter),
		cmocka_unit_test(test_guarded_rule_refuses_a_margin_within_u),
		cmocka_unit_test(test_stored_mask_verdict_and_report),
		cmocka_unit_test(test_stored_untested_point_is_no_pass),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
