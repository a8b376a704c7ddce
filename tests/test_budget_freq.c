/* tests/test_budget_freq.c - the frequency fit's GUM budgets: a meter gain error through impedance scaling, Type A degrees of freedom, no resonance beyond the data */
#include <complex.h>
#undef I /* budget.h names its currents I */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include <gsl/gsl_cdf.h>

#include "fit/hb_fit.h"
#include "src/quality/analysis.h"
#include "src/quality/budget.h"

static void check_near_at(double got, double want, double tol, int line)
{
	if (!(fabs(got - want) <= tol))
		fail_msg("line %d: got %.15g, want %.15g (tolerance %g)", line, got, want, tol);
}
#define check_near(got, want, tol) check_near_at((got), (want), (tol), __LINE__)

/* A winding: series R + j w L in parallel with C, written here from the
 * circuit (textbook impedance algebra, common practice), not from fit/. */
enum { N = 41 };
static const double R_TRUE = 0.05, L_TRUE = 100e-6, C_TRUE = 12e-12;

static void winding(double f_lo, double f_hi, double *f, double *Ls, double *Rs)
{
	for (int i = 0; i < N; i++) {
		f[i] = f_lo * pow(f_hi / f_lo, (double)i / (N - 1));
		double w = 2 * M_PI * f[i];
		double complex zs = R_TRUE + _Complex_I * w * L_TRUE, zc = 1 / (_Complex_I * w * C_TRUE);
		double complex z = zs * zc / (zs + zc);
		/* a small, fixed ripple so the fit has residuals to count */
		double ripple = 1 + 2e-4 * sin(1.7 * i);
		Ls[i] = cimag(z) * ripple / w;
		Rs[i] = creal(z) * ripple;
	}
}

static const hb_budget *find(const hb_budget *b, size_t n, const char *name)
{
	for (size_t i = 0; i < n; i++)
		if (strcmp(b[i].name, name) == 0)
			return &b[i];
	return NULL;
}

static const hb_budget_input *input(const hb_budget *b, const char *name)
{
	for (size_t i = 0; b && i < b->n; i++)
		if (strcmp(b->in[i].input, name) == 0)
			return &b->in[i];
	return NULL;
}

/*
 * A gain error g of the meter multiplies every impedance it reads by
 * (1 + g). (R + j w L) || 1/(j w C) times (1 + g) is the same circuit with
 * R, L times (1 + g) and C divided by it, and 1/(2 pi sqrt(LC)) unchanged
 * (impedance scaling, common practice). So the gain's contribution to L is
 * L a/sqrt(3) for a +-a rectangular accuracy (JCGM 100:2008 4.3.7), the same
 * for R and C, and none for the self-resonance.
 */
static void gain_follows_impedance_scaling(void **state)
{
	(void)state;
	double f[N], Ls[N], Rs[N];
	winding(1e3, 20e6, f, Ls, Rs);
	hb_fit_ws *ws = hb_fit_ws_new();
	assert_non_null(ws);
	hb_fit_freq_options fo = { .parallel_r = false, .within = 0.05 };
	hb_fit_freq_result q;
	assert_int_equal(hb_fit_freq(ws, f, Ls, Rs, N, &fo, &q), HB_OK);
	hb_fit_ws_free(ws);

	hb_budget_context ctx;
	hb_budget_context_init(&ctx);
	ctx.meter_rel = 0.003;
	hb_budget b[8];
	size_t n = hb_budget_freq(&q, f, Ls, Rs, N, &fo, &ctx, b, 8);
	assert_int_equal(n, 4);
	double u_rel = 0.003 / sqrt(3);
	const struct { const char *name; double value; } scaled[] = {
		{ "L", q.param[HB_FREQ_L] }, { "R", q.param[HB_FREQ_R] }, { "C", q.param[HB_FREQ_C] },
	};
	for (size_t i = 0; i < 3; i++) {
		const hb_budget_input *g = input(find(b, n, scaled[i].name), "meter gain");
		assert_non_null(g);
		check_near(g->contribution, scaled[i].value * u_rel, 1e-3 * scaled[i].value * u_rel);
	}
	/* C goes the other way: its sensitivity is negative */
	assert_true(input(find(b, n, "C"), "meter gain")->c < 0);
	const hb_budget *srf = find(b, n, "srf");
	assert_non_null(srf);
	check_near(input(srf, "meter gain")->contribution, 0, 1e-6 * srf->value * u_rel);
	/* the truth is within the expanded uncertainty of each value */
	check_near(find(b, n, "L")->value, L_TRUE, find(b, n, "L")->U);
	check_near(find(b, n, "C")->value, C_TRUE, find(b, n, "C")->U);
	check_near(srf->value, 1 / (2 * M_PI * sqrt(L_TRUE * C_TRUE)), srf->U);
	/* combined: root sum of squares of the two contributions (GUM 5.1.2) */
	const hb_budget *L = find(b, n, "L");
	check_near(L->u_c, hypot(L->in[0].contribution, L->in[1].contribution), 1e-12 * L->value);
	check_near(L->U, L->k * L->u_c, 1e-12 * L->value);
}

/*
 * Without a stated meter accuracy only the fit's scatter is left: its degrees
 * of freedom are the fit's, and k is Student's t at 95.45 % for them
 * (JCGM 100:2008 G.3.2, Table G.2: t_95.45(inf) = 2, t_95.45(10) = 2.28).
 */
static void type_a_only_uses_student_t(void **state)
{
	(void)state;
	double f[N], Ls[N], Rs[N];
	winding(1e3, 20e6, f, Ls, Rs);
	hb_fit_ws *ws = hb_fit_ws_new();
	hb_fit_freq_options fo = { .parallel_r = false, .within = 0.05 };
	hb_fit_freq_result q;
	assert_int_equal(hb_fit_freq(ws, f, Ls, Rs, N, &fo, &q), HB_OK);
	hb_fit_ws_free(ws);
	hb_budget_context ctx;
	hb_budget_context_init(&ctx);
	hb_budget b[8];
	size_t n = hb_budget_freq(&q, f, Ls, Rs, N, &fo, &ctx, b, 8);
	assert_int_equal(n, 4);
	const hb_budget *L = find(b, n, "L");
	assert_int_equal(L->n, 1);
	check_near(L->dof, (double)q.dof, 1e-9);
	/* 2 N residuals (real and imaginary) less 3 parameters */
	assert_int_equal(q.dof, 2 * N - 3);
	double t = gsl_cdf_tdist_Pinv(0.5 + 0.9545 / 2, L->dof);
	check_near(L->k, t, 2e-3);
	assert_true(L->k > 2.0 && L->k < 2.1);
	assert_non_null(strstr(L->note, "no meter accuracy stated"));
}

/* A sweep that stops below the resonance: the model's resonance is beyond
 * the data, so it is not a measured value (honest output). */
static void resonance_beyond_the_data_is_flagged(void **state)
{
	(void)state;
	hb_analysis_summary *s = calloc(1, sizeof *s);
	assert_non_null(s);
	s->kind = HB_DB_SWEEP_FREQUENCY;
	s->freq.srf = 4.6e6;
	s->freq_f_max = 2e6;
	assert_true(hb_analysis_srf_beyond(s));
	s->freq_f_max = 10e6;
	assert_false(hb_analysis_srf_beyond(s));
	free(s);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(gain_follows_impedance_scaling),
		cmocka_unit_test(type_a_only_uses_student_t),
		cmocka_unit_test(resonance_beyond_the_data_is_flagged),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
