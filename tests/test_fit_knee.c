/* tests/test_fit_knee.c - fit/knee.c: model-free results, the knee model, derived curves, the sweep analysis */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "fit/hb_fit.h"

#define NP 41

/* invented: L0 400 uH, floor 40 uH, knee at 1.2 A, sharpness 3 */
static const double truth[4] = { 400e-6, 40e-6, 1.2, 3.0 };

static void make_knee_sweep(double imax, double sig, gsl_rng *r, double *I, double *L)
{
	for (int i = 0; i < NP; i++) {
		I[i] = imax * i / (NP - 1);
		L[i] = hb_fit_knee_eval(truth, I[i]) + (r ? gsl_ran_gaussian(r, sig) : 0);
	}
}

/* closed form of the knee model's drop current */
static double drop_current(const double *p, double frac)
{
	double t = (1 - frac) * p[0];
	return p[2] * pow((p[0] - p[1]) / (t - p[1]) - 1, 1 / p[3]);
}

static void test_knee_recovery(void **state)
{
	(void)state;
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 11);
	hb_fit_ws *ws = hb_fit_ws_new();
	double I[NP], L[NP], sigma[NP];
	const double sig = 0.4e-6;
	int inside = 0, total = 0;
	for (int trial = 0; trial < 60; trial++) {
		make_knee_sweep(4.0, sig, r, I, L);
		for (int i = 0; i < NP; i++)
			sigma[i] = sig;
		hb_fit_knee_result k;
		assert_int_equal(hb_fit_knee(ws, I, L, sigma, NP, NULL, &k), HB_OK);
		assert_int_equal(k.dof, NP - 4);
		for (int j = 0; j < 4; j++, total++)
			if (fabs(k.param[j] - truth[j]) <= 2 * k.std_err[j])
				inside++;
		/* drop currents from brent agree with the closed form on the fitted model */
		assert_int_equal(k.n_drops, 3);
		for (size_t d = 0; d < k.n_drops; d++) {
			assert_true(k.drop[d].reached);
			double want = drop_current(k.param, k.drop[d].fraction);
			assert_true(fabs(k.drop[d].current - want) < 1e-9 * want);
			assert_true(k.drop[d].std_err > 0 && k.drop[d].std_err < 0.05 * want);
		}
		assert_true(k.knee_current > 0 && k.knee_current < truth[2]);
		assert_int_equal(k.undetermined, 0);
	}
	double frac = (double)inside / total;
	print_message("knee coverage %.3f\n", frac);
	assert_true(frac > 0.85 && frac < 1.0);
	hb_fit_ws_free(ws);
	gsl_rng_free(r);
}

/* The knee is scale-free: scaling L and I moves it only by the I scale. */
static void test_knee_scale_free(void **state)
{
	(void)state;
	hb_fit_ws *ws = hb_fit_ws_new();
	double I[NP], L[NP], I2[NP], L2[NP];
	make_knee_sweep(4.0, 0, NULL, I, L);
	for (int i = 0; i < NP; i++) {
		I2[i] = 10 * I[i];
		L2[i] = 1000 * L[i];
		/* a trace of deterministic ripple keeps the residuals non-zero */
		L[i] *= 1 + 1e-5 * sin(3.0 * i);
		L2[i] *= 1 + 1e-5 * sin(3.0 * i);
	}
	hb_fit_knee_result a, b;
	assert_int_equal(hb_fit_knee(ws, I, L, NULL, NP, NULL, &a), HB_OK);
	assert_int_equal(hb_fit_knee(ws, I2, L2, NULL, NP, NULL, &b), HB_OK);
	assert_true(fabs(b.knee_current - 10 * a.knee_current) < 1e-6 * b.knee_current);
	assert_true(fabs(a.param[HB_KNEE_IK] - truth[2]) < 1e-3);
	hb_fit_ws_free(ws);
}

static void test_modelfree(void **state)
{
	(void)state;
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 21);
	double I[NP], L[NP];
	const double sig = 0.4e-6;
	make_knee_sweep(4.0, sig, r, I, L);
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.noise_sigma = sig;
	hb_fit_modelfree_result mf;
	assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &mf), HB_OK);
	assert_true(fabs(mf.L0 - truth[0]) < 4 * mf.L0_std_err);
	for (size_t d = 0; d < mf.n_drops; d++) {
		assert_true(mf.drop[d].reached);
		double want = drop_current(truth, mf.drop[d].fraction);
		/* interpolation between 0.1 A steps adds its own error */
		assert_true(fabs(mf.drop[d].current - want) < 4 * mf.drop[d].std_err + 0.01);
	}
	/* the sweep stops short: a clear "not reached" */
	make_knee_sweep(0.7, sig, r, I, L);
	assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &mf), HB_OK);
	assert_true(mf.drop[0].reached);
	assert_false(mf.drop[1].reached);
	assert_false(mf.drop[2].reached);
	assert_true(isnan(mf.drop[2].current));
	/* requested fractions; noise estimated when not given */
	hb_fit_options_init(&opt);
	opt.n_fractions = 2;
	opt.fractions[0] = 0.05;
	opt.fractions[1] = 0.5;
	make_knee_sweep(4.0, sig, r, I, L);
	assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &mf), HB_OK);
	assert_int_equal(mf.n_drops, 2);
	assert_true(mf.flags & HB_MF_NOISE_ESTIMATED);
	assert_true(mf.noise_sigma > 0.2 * sig && mf.noise_sigma < 5 * sig);
	assert_true(fabs(mf.drop[1].current - drop_current(truth, 0.5)) < 0.02);
	opt.fractions[1] = 1.5;
	assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &mf), HB_ERR_ARG);
	gsl_rng_free(r);
}

/* Trapezoid integration is exact for a constant L: psi = L I, W = L I^2 / 2,
 * B = psi / (N Ae), H = N I / le. */
static void test_curves(void **state)
{
	(void)state;
	double I[5] = { 0.5, 1, 1.5, 2, 3 }, L[5] = { 1e-3, 1e-3, 1e-3, 1e-3, 1e-3 };
	double psi[5], B[5], H[5], W[5];
	hb_core_geometry g = { 10, 1e-4, 0.1, 0 };
	assert_int_equal(hb_fit_curves(I, L, 5, NAN, &g, psi, B, H, W), HB_OK);
	for (int i = 0; i < 5; i++) {
		assert_true(fabs(psi[i] - 1e-3 * I[i]) < 1e-15);
		assert_true(fabs(W[i] - 0.5e-3 * I[i] * I[i]) < 1e-15);
		assert_true(fabs(B[i] - psi[i] / (10 * 1e-4)) < 1e-12);
		assert_true(fabs(H[i] - 10 * I[i] / 0.1) < 1e-12);
	}
	assert_int_equal(hb_fit_curves(I, L, 5, NAN, NULL, psi, B, NULL, NULL), HB_ERR_ARG);
	double Ibad[5] = { 0, 1, 1, 2, 3 };
	assert_int_equal(hb_fit_curves(Ibad, L, 5, NAN, NULL, psi, NULL, NULL, W), HB_ERR_DATA);
}

static void test_analyse(void **state)
{
	(void)state;
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 31);
	double I[NP], L[NP];
	/* core data so that both models apply */
	hb_core_geometry g = { 30, 49e-6, 60e-3, 4e-3 };
	hb_core_params par = { 2000, 0.1e-3, 0.4 };
	for (int i = 0; i < NP; i++)
		I[i] = 2.0 * i / (NP - 1);
	assert_int_equal(hb_core_model_eval(HB_CORE_TANH, &par, &g, I, NP, L, NULL), HB_OK);
	for (int i = 0; i < NP; i++)
		L[i] += gsl_ran_gaussian(r, 0.5e-6);
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.geo = g;
	opt.noise_sigma = 0.5e-6;
	opt.rated_current = 1.5;
	hb_fit_bias_result res;
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	assert_string_equal(res.code_version, HB_FIT_CODE_VERSION);
	assert_int_equal(res.knee_status, HB_OK);
	assert_int_equal(res.core_status, HB_OK);
	assert_string_equal(res.model, "core:tanh");
	assert_int_equal(res.p, 3);
	assert_true(res.rss > 0);
	const hb_fit_value *v = hb_fit_values_find(&res.values, "core.mu_e");
	assert_non_null(v);
	assert_string_equal(v->unit, "");
	assert_non_null(hb_fit_values_find(&res.values, "knee.Ik"));
	assert_non_null(hb_fit_values_find(&res.values, "I_drop10"));
	assert_non_null(hb_fit_values_find(&res.values, "core.aicc.langevin"));
	assert_non_null(hb_fit_values_find(&res.values, "core.gap_physical"));
	assert_null(hb_fit_values_find(&res.values, "no.such"));
	/* data and model flux linkage at the rated current agree */
	assert_true(fabs(res.psi_rated - res.core.psi_rated) < 0.01 * res.psi_rated);
	assert_true(fabs(res.W_rated - res.core.W_rated) < 0.02 * res.W_rated);
	assert_true(fabs(res.H_rated - 30 * 1.5 / 60e-3) < 1e-9);

	/* zero turns: model-free and knee still stand, the core part says why not */
	opt.geo.turns = 0;
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	assert_int_equal(res.core_status, HB_ERR_UNSUPPORTED);
	assert_string_equal(res.model, "knee");
	gsl_rng_free(r);
}

static void test_failure_paths(void **state)
{
	(void)state;
	double I[NP], L[NP];
	make_knee_sweep(4.0, 0, NULL, I, L);
	hb_fit_ws *ws = hb_fit_ws_new();
	hb_fit_knee_result k;
	hb_fit_modelfree_result mf;
	hb_fit_bias_result br;
	/* too few points */
	assert_int_equal(hb_fit_modelfree(I, L, NULL, 2, NULL, &mf), HB_ERR_DATA);
	assert_int_equal(hb_fit_knee(ws, I, L, NULL, 4, NULL, &k), HB_ERR_DATA);
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, 1, NULL, &br), HB_ERR_DATA);
	assert_true(strlen(br.message) > 0);
	/* non-monotone bias */
	double Ib[NP];
	memcpy(Ib, I, sizeof Ib);
	Ib[10] = Ib[12];
	assert_int_equal(hb_fit_knee(ws, Ib, L, NULL, NP, NULL, &k), HB_ERR_DATA);
	assert_non_null(strstr(hb_fit_ws_error(ws), "increasing"));
	/* NaN, negative L, bad sigma */
	double Lb[NP];
	memcpy(Lb, L, sizeof Lb);
	Lb[3] = NAN;
	assert_int_equal(hb_fit_knee(ws, I, Lb, NULL, NP, NULL, &k), HB_ERR_DATA);
	Lb[3] = -1e-6;
	assert_int_equal(hb_fit_modelfree(I, Lb, NULL, NP, NULL, &mf), HB_ERR_DATA);
	double sg[NP] = { 0 };
	assert_int_equal(hb_fit_modelfree(I, L, sg, NP, NULL, &mf), HB_ERR_DATA);
	assert_int_equal(hb_fit_knee(NULL, I, L, NULL, NP, NULL, &k), HB_ERR_ARG);
	assert_int_equal(hb_fit_modelfree(NULL, L, NULL, NP, NULL, &mf), HB_ERR_ARG);
	/* flat data: the knee model cannot be pinned, but nothing crashes */
	double Lf[NP];
	for (int i = 0; i < NP; i++)
		Lf[i] = 1e-4 * (1 + 1e-4 * sin(i));
	int rc = hb_fit_knee(ws, I, Lf, NULL, NP, NULL, &k);
	assert_true(rc == HB_OK || rc == HB_ERR_FIT);
	assert_int_equal(hb_fit_modelfree(I, Lf, NULL, NP, NULL, &mf), HB_OK);
	assert_false(mf.drop[0].reached);
	hb_fit_ws_free(ws);
}

/*
 * Laws even in I, written here in closed form and not through fit/: an
 * ungapped toroid, H = N I / le (Ampere's law), L = N^2 Ae / le * dB/dH,
 * B = mu0 H + J(H) with a = mu0 (mu_i - 1):
 *  - Langevin: J = Js Lang(3 a H / Js), Lang(y) = coth y - 1/y,
 *    Lang'(y) = 1/y^2 - 1/sinh^2 y (Langevin function, from memory);
 *  - Frohlich-Kennelly: J = a H Js / (Js + a |H|), dJ/dH = a Js^2 / (Js + a |H|)^2
 *    (Frohlich 1881 / Kennelly 1891 reluctivity law, from memory).
 * L0 = mu0 mu_i N^2 Ae / le (the inductance of a toroid, any handbook).
 */
static const double EV_N = 20, EV_AE = 50e-6, EV_LE = 0.05, EV_MUI = 2000, EV_JS = 0.4;

static double even_law_L(int law, double I)
{
	const double mu0 = 1.25663706212e-6; /* CODATA 2018 */
	double a = mu0 * (EV_MUI - 1), H = EV_N * fabs(I) / EV_LE, dJ;
	if (law == 0) {
		double y = 3 * a * H / EV_JS;
		double lp = y < 1e-4 ? 1.0 / 3 - y * y / 15 : 1 / (y * y) - 1 / (sinh(y) * sinh(y));
		dJ = 3 * a * lp;
	} else {
		double d = EV_JS + a * H;
		dJ = a * EV_JS * EV_JS / (d * d);
	}
	return EV_N * EV_N * EV_AE / EV_LE * (mu0 + dJ);
}

/* L0 is unbiased for a smooth even law (no odd term) and for the cusp of
 * Frohlich-Kennelly, and its stated error covers the truth. */
static void test_modelfree_L0_even_laws(void **state)
{
	(void)state;
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 41);
	const double mu0 = 1.25663706212e-6;
	const double L0 = mu0 * EV_MUI * EV_N * EV_N * EV_AE / EV_LE;
	const double sig = 1e-4 * L0;
	double I[NP], L[NP];
	for (int law = 0; law < 2; law++) {
		double imax = law == 0 ? 0.5 : 0.1;
		int inside = 0, trials = 200;
		double bias = 0, se_mean = 0;
		for (int t = 0; t < trials; t++) {
			for (int i = 0; i < NP; i++) {
				I[i] = imax * i / (NP - 1);
				L[i] = even_law_L(law, I[i]) + gsl_ran_gaussian(r, sig);
			}
			hb_fit_options opt;
			hb_fit_options_init(&opt);
			opt.noise_sigma = sig;
			hb_fit_modelfree_result mf;
			assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &mf), HB_OK);
			assert_true(mf.L0_std_err > 0);
			if (fabs(mf.L0 - L0) < 2 * mf.L0_std_err)
				inside++;
			bias += (mf.L0 - L0) / trials;
			se_mean += mf.L0_std_err / trials;
		}
		print_message("%s: L0 coverage %.3f, bias %.2g of the stated error\n", law ? "frohlich" : "langevin",
			      (double)inside / trials, bias / se_mean);
		/* 2 sd holds 95 % of a normal; a biased fit falls well short */
		assert_true(inside >= 0.88 * trials);
		/* the mean of 200 runs: bias below a third of one run's error */
		assert_true(fabs(bias) < se_mean / 3);
	}
	gsl_rng_free(r);
}

/*
 * The meter reads L / (1 - w^2 L Cp) with the winding capacitance in
 * parallel (series-equivalent of L || C, circuit theory, from memory):
 * with Cp given, the drop currents are those of the part's own L (here the
 * knee law in closed form above), without it they are visibly off.
 */
static void test_modelfree_cp_corrected(void **state)
{
	(void)state;
	double I[NP], L[NP];
	const double cp = 300e-12, f = 100e3, w2c = pow(2 * M_PI * f, 2) * cp;
	for (int i = 0; i < NP; i++) {
		I[i] = 4.0 * i / (NP - 1);
		double Lt = hb_fit_knee_eval(truth, I[i]);
		L[i] = Lt / (1 - w2c * Lt);
	}
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.noise_sigma = 1e-9;
	hb_fit_modelfree_result plain, corr;
	assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &plain), HB_OK);
	opt.parallel_c = cp;
	opt.test_freq = f;
	assert_int_equal(hb_fit_modelfree(I, L, NULL, NP, &opt, &corr), HB_OK);
	assert_false(plain.cp_corrected);
	assert_true(corr.cp_corrected);
	print_message("L0 of the part %.6g (%s), as read %.6g, law %.6g H\n", corr.L0_part, corr.L0_basis, corr.L0,
		      truth[0]);
	/* w^2 L0 Cp = 4.7 %: a 0.1 % match tells corrected from not */
	assert_true(fabs(corr.L0_part - truth[0]) < 1e-3 * truth[0]);
	assert_true(fabs(corr.L0 - truth[0] / (1 - w2c * truth[0])) < 1e-3 * truth[0]);
	assert_true(fabs(plain.L0 - corr.L0) < 1e-3 * corr.L0);
	assert_true(plain.L0_part == plain.L0);
	for (size_t d = 0; d < 3; d++) {
		double want = drop_current(truth, corr.drop[d].fraction);
		print_message("drop %g: corrected %.4f, reading %.4f, law %.4f A\n", corr.drop[d].fraction,
			      corr.drop[d].current, plain.drop[d].current, want);
		/* linear-ish interpolation between 0.1 A steps: a few mA */
		assert_true(fabs(corr.drop[d].current - want) < 0.002);
	}
	/* uncorrected, the 30 % point moves by 16 mA, far past the interpolation error */
	assert_true(fabs(plain.drop[2].current - drop_current(truth, 0.3)) > 0.01);
}

/* Every current in the filed values lies within the measured range, or
 * carries no number and says why; a parameter not determined carries no
 * standard error. (Rule of the issue "honest outputs"; the crossings'
 * places come from the knee law's closed form above.) */
static void assert_no_value_beyond(const hb_fit_bias_result *res, double i_max)
{
	char want[80];
	snprintf(want, sizeof want, "beyond the data (highest bias %#.3g A)", i_max);
	for (size_t i = 0; i < res->values.count; i++) {
		const hb_fit_value *v = &res->values.v[i];
		if (strcmp(v->unit, "A") != 0 || strcmp(v->name, "rated_current") == 0)
			continue;
		if (isfinite(v->value)) {
			assert_true(v->value <= i_max);
		} else {
			assert_true(isnan(v->std_err));
			assert_string_equal(v->reason, want);
		}
	}
}

static void test_nothing_beyond_the_data(void **state)
{
	(void)state;
	double I[NP], L[NP];
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.noise_sigma = 0.4e-6;
	hb_fit_bias_result res;
	/* stopped at 0.85 A: the 10 % and 20 % crossings (0.600, 0.790 A by the
	 * closed form) lie inside, the 30 % one (0.952 A) beyond */
	assert_true(drop_current(truth, 0.3) > 0.85 && drop_current(truth, 0.2) < 0.85);
	make_knee_sweep(0.85, 0, NULL, I, L);
	for (int i = 0; i < NP; i++)
		L[i] *= 1 + 1e-6 * sin(3.0 * i); /* keeps the residuals non-zero */
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	assert_int_equal(res.knee_status, HB_OK);
	assert_no_value_beyond(&res, I[NP - 1]);
	const hb_fit_value *v = hb_fit_values_find(&res.values, "knee.I_drop30");
	assert_non_null(v);
	assert_true(isnan(v->value));
	assert_string_equal(v->reason, "beyond the data (highest bias 0.850 A)");
	v = hb_fit_values_find(&res.values, "I_drop30");
	assert_true(isnan(v->value));
	v = hb_fit_values_find(&res.values, "knee.I_drop20");
	assert_true(fabs(v->value - drop_current(truth, 0.2)) < 1e-3);
	/* Ik = 1.2 A lies beyond 0.85 A too */
	v = hb_fit_values_find(&res.values, "knee.Ik");
	assert_true(isnan(v->value));
	/* a rated current above the sweep: nothing evaluated there is a number */
	opt.rated_current = 1.0;
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	static const char *const at_rated[] = { "psi_rated", "W_rated" };
	for (int k = 0; k < 2; k++) {
		v = hb_fit_values_find(&res.values, at_rated[k]);
		assert_non_null(v);
		assert_true(isnan(v->value));
		assert_string_equal(v->reason, "beyond the data (highest bias 0.850 A)");
	}
	opt.rated_current = 0;

	/* stopped at 0.29 A, far below the knee: no knee current as a number */
	make_knee_sweep(0.29, 0.4e-6, NULL, I, L);
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 51);
	for (int i = 0; i < NP; i++)
		L[i] += gsl_ran_gaussian(r, 0.4e-6);
	gsl_rng_free(r);
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	assert_no_value_beyond(&res, I[NP - 1]);
	v = hb_fit_values_find(&res.values, "knee.I_knee");
	if (v) {
		assert_true(isnan(v->value));
		assert_string_equal(v->reason, "beyond the data (highest bias 0.290 A)");
	}
	/* what the data do not determine has no standard error */
	static const char *const names[] = { "knee.L0", "knee.Lf", "knee.Ik", "knee.p" };
	if (res.knee_status == HB_OK) {
		assert_true(res.knee.undetermined != 0);
		for (int j = 0; j < 4; j++) {
			v = hb_fit_values_find(&res.values, names[j]);
			if ((res.knee.undetermined & (1u << j)) && isfinite(v->value)) {
				assert_true(isnan(v->std_err));
				assert_string_equal(v->reason, HB_FIT_REASON_UNDETERMINED);
			}
		}
	}
}

/* A model whose residuals exceed the reading noise is flagged on every value
 * it gives. Limit: residual rms 3 x the noise (a fit within the noise has a
 * residual rms near the noise; common practice). */
static void test_knee_misfit_flagged(void **state)
{
	(void)state;
	double I[NP], L[NP];
	const double sig = 0.4e-6;
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.noise_sigma = sig;
	hb_fit_bias_result res;
	/* the knee law itself plus noise: no flag */
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	gsl_rng_set(r, 61);
	make_knee_sweep(4.0, sig, r, I, L);
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	assert_false(res.knee.flags & HB_KNEE_MISFIT);
	assert_true(res.knee.noise_ratio < 1.5);
	assert_false(hb_fit_values_find(&res.values, "knee.I_drop10")->misfit);
	/* a ripple of 10 noise sd the law cannot follow: flagged */
	for (int i = 0; i < NP; i++)
		L[i] += 10 * sig * sin(1.7 * i);
	assert_int_equal(hb_fit_bias_analyse(I, L, NULL, NP, &opt, &res), HB_OK);
	print_message("misfit ratio %.2f\n", res.knee.noise_ratio);
	assert_true(res.knee.flags & HB_KNEE_MISFIT);
	assert_true(hb_fit_values_find(&res.values, "knee.I_drop10")->misfit);
	assert_true(hb_fit_values_find(&res.values, "knee.Ik")->misfit);
	/* the model-free values are the data's, never flagged */
	assert_false(hb_fit_values_find(&res.values, "I_drop10")->misfit);
	assert_false(hb_fit_values_find(&res.values, "L0")->misfit);
	gsl_rng_free(r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_knee_recovery), cmocka_unit_test(test_knee_scale_free),
		cmocka_unit_test(test_modelfree),     cmocka_unit_test(test_curves),
		cmocka_unit_test(test_analyse),       cmocka_unit_test(test_failure_paths),
		cmocka_unit_test(test_modelfree_L0_even_laws), cmocka_unit_test(test_modelfree_cp_corrected),
		cmocka_unit_test(test_nothing_beyond_the_data), cmocka_unit_test(test_knee_misfit_flagged),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
