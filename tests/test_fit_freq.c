/* tests/test_fit_freq.c - fit/freq.c: series L, R with parallel C (and Rp), self-resonance, Q, flat band */
#include <complex.h>
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#undef I /* <complex.h>'s unit; we use J */
#define J _Complex_I

#include "fit/hb_fit.h"

#define NP 41

/* invented part: 100 uH, 0.5 ohm, 20 pF -> SRF 3.559 MHz */
static void make_sweep(double L, double R, double C, double Rp, double rel, gsl_rng *r, double *f, double *Ls,
		       double *Rs)
{
	for (int i = 0; i < NP; i++) {
		f[i] = 1e3 * pow(3e3, (double)i / (NP - 1)); /* 1 kHz .. 3 MHz */
		double w = 2 * M_PI * f[i];
		double complex y = 1 / (R + J * w * L) + J * w * C + (isfinite(Rp) ? 1 / Rp : 0);
		double complex z = 1 / y;
		if (r)
			z *= 1 + gsl_ran_gaussian(r, rel) + J * gsl_ran_gaussian(r, rel);
		Ls[i] = cimag(z) / w;
		Rs[i] = creal(z);
	}
}

static void test_recovery(void **state)
{
	(void)state;
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 17);
	hb_fit_ws *ws = hb_fit_ws_new();
	double f[NP], Ls[NP], Rs[NP];
	make_sweep(100e-6, 0.5, 20e-12, INFINITY, 1e-4, r, f, Ls, Rs);
	hb_fit_freq_result res;
	assert_int_equal(hb_fit_freq(ws, f, Ls, Rs, NP, NULL, &res), HB_OK);
	assert_int_equal(res.p, 3);
	assert_int_equal(res.dof, 2 * NP - 3);
	assert_true(fabs(res.param[HB_FREQ_L] - 100e-6) < 4 * res.std_err[HB_FREQ_L]);
	assert_true(fabs(res.param[HB_FREQ_R] - 0.5) < 4 * res.std_err[HB_FREQ_R]);
	assert_true(fabs(res.param[HB_FREQ_C] - 20e-12) < 4 * res.std_err[HB_FREQ_C]);
	assert_true(isinf(res.param[HB_FREQ_RP]));
	/* Thomson's resonance f = 1 / (2 pi sqrt(L C)) (common practice) */
	double srf = 1 / (2 * M_PI * sqrt(100e-6 * 20e-12));
	assert_true(fabs(res.srf - srf) < 4 * res.srf_se + 1e-6 * srf);
	/* Q = X/R of a reading (definition of Q, any handbook): the highest is
	 * one of the readings, at that reading's frequency */
	double qm = 0, fm = 0;
	for (int i = 0; i < NP; i++)
		if (Rs[i] > 0 && 2 * M_PI * f[i] * Ls[i] / Rs[i] > qm) {
			qm = 2 * M_PI * f[i] * Ls[i] / Rs[i];
			fm = f[i];
		}
	assert_true(fabs(res.q_max - qm) <= 1e-12 * qm);
	assert_true(res.q_max_freq == fm);
	/* Ls = L / (1 - w^2 L C) for small R: 5 % high at f = SRF sqrt(1 - 1/1.05) */
	double f5 = srf * sqrt(1 - 1 / 1.05);
	assert_true(fabs(res.model_band_hi - f5) < 0.01 * f5);
	assert_true(fabs(res.band_hi - f5) < 0.1 * f5);
	assert_true(res.band_lo == f[0]);
	hb_fit_ws_free(ws);
	gsl_rng_free(r);
}

static void test_parallel_r(void **state)
{
	(void)state;
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 19);
	hb_fit_ws *ws = hb_fit_ws_new();
	double f[NP], Ls[NP], Rs[NP];
	make_sweep(100e-6, 0.5, 20e-12, 20e3, 1e-4, r, f, Ls, Rs);
	hb_fit_freq_options opt = { .parallel_r = true, .within = 0.05 };
	hb_fit_freq_result res;
	assert_int_equal(hb_fit_freq(ws, f, Ls, Rs, NP, &opt, &res), HB_OK);
	assert_int_equal(res.p, 4);
	assert_true(fabs(res.param[HB_FREQ_RP] - 20e3) < 4 * res.std_err[HB_FREQ_RP]);
	assert_true(fabs(res.param[HB_FREQ_L] - 100e-6) < 4 * res.std_err[HB_FREQ_L]);
	hb_fit_ws_free(ws);
	gsl_rng_free(r);
}

static void test_z_to_series(void **state)
{
	(void)state;
	double Ls, Rs;
	/* 100 uH at 1 kHz: |Z| = 0.6283 ohm at +90 degrees */
	hb_fit_z_to_series(1e3, 2 * M_PI * 1e3 * 100e-6, M_PI / 2, &Ls, &Rs);
	assert_true(fabs(Ls - 100e-6) < 1e-15);
	assert_true(fabs(Rs) < 1e-15);
	hb_fit_z_to_series(1e3, 2.0, M_PI / 4, &Ls, &Rs);
	assert_true(fabs(Rs - sqrt(2)) < 1e-12);
}

static void test_failure_paths(void **state)
{
	(void)state;
	hb_fit_ws *ws = hb_fit_ws_new();
	double f[NP], Ls[NP], Rs[NP];
	make_sweep(100e-6, 0.5, 20e-12, INFINITY, 0, NULL, f, Ls, Rs);
	hb_fit_freq_result res;
	assert_int_equal(hb_fit_freq(ws, f, Ls, Rs, 3, NULL, &res), HB_ERR_DATA);
	double fb[NP];
	memcpy(fb, f, sizeof fb);
	fb[4] = fb[3];
	assert_int_equal(hb_fit_freq(ws, fb, Ls, Rs, NP, NULL, &res), HB_ERR_DATA);
	double Lb[NP];
	memcpy(Lb, Ls, sizeof Lb);
	Lb[9] = NAN;
	assert_int_equal(hb_fit_freq(ws, f, Lb, Rs, NP, NULL, &res), HB_ERR_DATA);
	Lb[9] = Ls[9];
	Lb[0] = -1e-6;
	assert_int_equal(hb_fit_freq(ws, f, Lb, Rs, NP, NULL, &res), HB_ERR_DATA);
	assert_int_equal(hb_fit_freq(NULL, f, Ls, Rs, NP, NULL, &res), HB_ERR_ARG);
	hb_fit_ws_free(ws);
}

/* A winding whose R rises with frequency (skin and proximity effect,
 * here R = 0.5 ohm sqrt(1 + f / 1 kHz), invented): the highest Q reported
 * is the highest of the readings, Q = X/R of (R + jwL) || C in closed form
 * (definition of Q and circuit theory, from memory), never the fit's
 * constant-R model, which here overstates it many times near resonance. */
static void test_q_measured(void **state)
{
	(void)state;
	hb_fit_ws *ws = hb_fit_ws_new();
	double f[NP], Ls[NP], Rs[NP];
	const double L = 100e-6, C = 20e-12;
	double qtrue = 0;
	for (int i = 0; i < NP; i++) {
		f[i] = 1e3 * pow(3e3, (double)i / (NP - 1));
		double w = 2 * M_PI * f[i], R = 0.5 * sqrt(1 + f[i] / 1e3);
		double complex z = 1 / (1 / (R + J * w * L) + J * w * C);
		Ls[i] = cimag(z) / w;
		Rs[i] = creal(z);
		if (cimag(z) / creal(z) > qtrue)
			qtrue = cimag(z) / creal(z);
	}
	hb_fit_freq_result res;
	assert_int_equal(hb_fit_freq(ws, f, Ls, Rs, NP, NULL, &res), HB_OK);
	print_message("highest measured Q %.1f at %.4g Hz (closed form %.1f)\n", res.q_max, res.q_max_freq, qtrue);
	assert_true(fabs(res.q_max - qtrue) < 1e-9 * qtrue);
	/* the constant-R model at that frequency says more: that is why it is not reported */
	double qmodel;
	hb_fit_freq_eval(&res, res.q_max_freq, NULL, NULL, &qmodel);
	assert_true(qmodel > res.q_max);
	hb_fit_ws_free(ws);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_recovery),
		cmocka_unit_test(test_parallel_r),
		cmocka_unit_test(test_z_to_series),
		cmocka_unit_test(test_q_measured),
		cmocka_unit_test(test_failure_paths),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
