/* tests/test_fit_nlls.c - fit/nlls.c: the common NLLS wrapper against NIST StRD certified values */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "fit/hb_fit.h"

/* NIST StRD, Misra1a: y = b1 (1 - exp(-b2 x)), n = 14 */
static const double misra_x[] = { 77.6, 114.9, 141.1, 190.8, 239.9, 289.0, 332.8,
				  378.4, 434.8, 477.3, 536.8, 593.1, 689.1, 760.0 };
static const double misra_y[] = { 10.07, 14.73, 17.94, 23.93, 29.61, 35.18, 40.02,
				  44.82, 50.76, 55.05, 61.01, 66.40, 75.47, 81.78 };
static const double misra_b[] = { 2.3894212918E+02, 5.5015643181E-04 };
static const double misra_sd[] = { 2.7070075241E+00, 7.2668688436E-06 };
static const double misra_rss = 1.2455138894E-01;

/* NIST StRD, Thurber: rational cubic / cubic, n = 37 */
static const double thurber_x[] = {
	-3.067, -2.981, -2.921, -2.912, -2.840, -2.797, -2.702, -2.699, -2.633, -2.481,
	-2.363, -2.322, -1.501, -1.460, -1.274, -1.212, -1.100, -1.046, -0.915, -0.714,
	-0.566, -0.545, -0.400, -0.309, -0.109, -0.103, 0.010,  0.119,  0.377,  0.790,
	0.963,  1.006,  1.115,  1.572,  1.841,  2.047,  2.200 };
static const double thurber_y[] = {
	80.574,   84.248,   87.264,   87.195,   89.076,   89.608,   89.868,   90.101,
	92.405,   95.854,   100.696,  101.060,  401.672,  390.724,  567.534,  635.316,
	733.054,  759.087,  894.206,  990.785,  1090.109, 1080.914, 1122.643, 1178.351,
	1260.531, 1273.514, 1288.339, 1327.543, 1353.863, 1414.509, 1425.208, 1421.384,
	1442.962, 1464.350, 1468.705, 1447.894, 1457.628 };
static const double thurber_b[] = { 1.2881396800E+03, 1.4910792535E+03, 5.8323836877E+02, 7.5416644291E+01,
				    9.6629502864E-01, 3.9797285797E-01, 4.9727297349E-02 };
static const double thurber_sd[] = { 4.6647963344E+00, 3.9571156086E+01, 2.8698696102E+01, 5.5675370270E+00,
				     3.1333340687E-02, 1.4984928198E-02, 6.5842344623E-03 };
static const double thurber_rss = 5.6427082397E+03;

/* NIST StRD, BoxBOD: y = b1 (1 - exp(-b2 x)), n = 6 */
static const double boxbod_x[] = { 1, 2, 3, 5, 7, 10 };
static const double boxbod_y[] = { 109, 149, 149, 191, 213, 224 };
static const double boxbod_b[] = { 2.1380940889E+02, 5.4723748542E-01 };
static const double boxbod_sd[] = { 1.2354515176E+01, 1.0455993237E-01 };
static const double boxbod_rss = 1.1680088766E+03;

typedef struct xs {
	const double *x;
	size_t n;
} xs;

static int exp_model(const double *b, void *ctx, double *f, double *jac)
{
	const xs *d = ctx;
	for (size_t i = 0; i < d->n; i++) {
		double e = exp(-b[1] * d->x[i]);
		f[i] = b[0] * (1 - e);
		if (jac) {
			jac[2 * i] = 1 - e;
			jac[2 * i + 1] = b[0] * d->x[i] * e;
		}
	}
	return 0;
}

static int thurber_model(const double *b, void *ctx, double *f, double *jac)
{
	const xs *d = ctx;
	for (size_t i = 0; i < d->n; i++) {
		double x = d->x[i], x2 = x * x, x3 = x2 * x;
		double num = b[0] + b[1] * x + b[2] * x2 + b[3] * x3;
		double den = 1 + b[4] * x + b[5] * x2 + b[6] * x3;
		f[i] = num / den;
		if (jac) {
			double *r = jac + 7 * i;
			r[0] = 1 / den;
			r[1] = x / den;
			r[2] = x2 / den;
			r[3] = x3 / den;
			r[4] = -num * x / (den * den);
			r[5] = -num * x2 / (den * den);
			r[6] = -num * x3 / (den * den);
		}
	}
	return 0;
}

static void check_certified(const hb_fit_nlls_result *r, const double *b, const double *sd, size_t p, double rss)
{
	for (size_t j = 0; j < p; j++) {
		assert_true(fabs(r->theta[j] - b[j]) <= 1e-6 * fabs(b[j]));
		assert_true(fabs(r->std_err[j] - sd[j]) <= 1e-5 * fabs(sd[j]));
	}
	assert_true(fabs(r->rss - rss) <= 1e-8 * rss);
}

static void fit_case(hb_fit_model_fn model, const double *x, const double *y, size_t n, size_t p,
		     const double *start, const double *b, const double *sd, double rss)
{
	hb_fit_nlls *w = hb_fit_nlls_new();
	assert_non_null(w);
	xs d = { x, n };
	hb_fit_problem pr = { .n = n, .p = p, .y = y, .sigma = NULL, .model = model, .ctx = &d };
	hb_fit_nlls_result r;
	assert_int_equal(hb_fit_nlls_run(w, &pr, start, &r), HB_OK);
	assert_int_equal(r.dof, n - p);
	check_certified(&r, b, sd, p, rss);
	hb_fit_nlls_free(w);
}

/* NIST StRD, Misra1a, start 1 and start 2 */
static void test_misra1a(void **state)
{
	(void)state;
	static const double s1[] = { 500, 0.0001 }, s2[] = { 250, 0.0005 };
	fit_case(exp_model, misra_x, misra_y, 14, 2, s1, misra_b, misra_sd, misra_rss);
	fit_case(exp_model, misra_x, misra_y, 14, 2, s2, misra_b, misra_sd, misra_rss);
}

/* NIST StRD, Thurber, start 1 and start 2 */
static void test_thurber(void **state)
{
	(void)state;
	static const double s1[] = { 1000, 1000, 400, 40, 0.7, 0.3, 0.03 };
	static const double s2[] = { 1300, 1500, 500, 75, 1, 0.4, 0.05 };
	fit_case(thurber_model, thurber_x, thurber_y, 37, 7, s1, thurber_b, thurber_sd, thurber_rss);
	fit_case(thurber_model, thurber_x, thurber_y, 37, 7, s2, thurber_b, thurber_sd, thurber_rss);
}

/* NIST StRD, BoxBOD, start 1: a plain LM run stalls where exp(-b2 x) has
 * vanished; the wrapper must not believe it. */
static void test_boxbod_false_convergence(void **state)
{
	(void)state;
	static const double s1[] = { 1, 1 };
	hb_fit_nlls *w = hb_fit_nlls_new();
	assert_non_null(w);
	xs d = { boxbod_x, 6 };
	hb_fit_problem pr = { .n = 6, .p = 2, .y = boxbod_y, .sigma = NULL, .model = exp_model, .ctx = &d };
	hb_fit_nlls_result r;

	hb_fit_nlls_set_check(w, false);
	int plain = hb_fit_nlls_run(w, &pr, s1, &r);
	bool plain_wrong = plain == HB_OK && fabs(r.theta[0] - boxbod_b[0]) > 1e-3 * boxbod_b[0];
	print_message("plain LM: status %d b1 %.6g b2 %.6g rss %.6g\n", plain, r.theta[0], r.theta[1], r.rss);

	hb_fit_nlls_set_check(w, true);
	int st = hb_fit_nlls_run(w, &pr, s1, &r);
	print_message("checked: status %d b1 %.10g b2 %.10g rss %.10g starts %d flags %#x\n", st, r.theta[0],
		      r.theta[1], r.rss, r.starts, (unsigned)r.flags);
	if (st == HB_OK)
		check_certified(&r, boxbod_b, boxbod_sd, 2, boxbod_rss);
	else
		assert_int_equal(st, HB_ERR_FIT);
	/* NIST StRD, BoxBOD notes: plain LM stops near b1 = 172.5, b2 = 114.8 and says success */
	assert_true(plain_wrong);
	assert_true(r.flags & HB_NLLS_FALSE_CAUGHT);
	hb_fit_nlls_free(w);
}

/* NIST StRD, BoxBOD, start 2 converges directly. */
static void test_boxbod_start2(void **state)
{
	(void)state;
	static const double s2[] = { 100, 0.75 };
	fit_case(exp_model, boxbod_x, boxbod_y, 6, 2, s2, boxbod_b, boxbod_sd, boxbod_rss);
}

static int bad_model(const double *b, void *ctx, double *f, double *jac)
{
	(void)b;
	(void)ctx;
	(void)f;
	(void)jac;
	return -1;
}

static void test_failure_paths(void **state)
{
	(void)state;
	hb_fit_nlls *w = hb_fit_nlls_new();
	hb_fit_nlls_result r;
	xs d = { misra_x, 14 };
	double start[] = { 500, 0.0001 };
	hb_fit_problem pr = { .n = 1, .p = 2, .y = misra_y, .model = exp_model, .ctx = &d };
	assert_int_equal(hb_fit_nlls_run(w, &pr, start, &r), HB_ERR_DATA);
	assert_true(strlen(hb_fit_nlls_error(w)) > 0);

	double ynan[14];
	memcpy(ynan, misra_y, sizeof ynan);
	ynan[3] = NAN;
	pr.n = 14;
	pr.y = ynan;
	assert_int_equal(hb_fit_nlls_run(w, &pr, start, &r), HB_ERR_DATA);

	pr.y = misra_y;
	pr.model = bad_model;
	assert_int_equal(hb_fit_nlls_run(w, &pr, start, &r), HB_ERR_FIT);

	assert_int_equal(hb_fit_nlls_run(NULL, &pr, start, &r), HB_ERR_ARG);
	hb_fit_nlls_free(w);
	hb_fit_nlls_free(NULL);
}

/* Weights: sigma scaled uniformly must not change parameters or the
 * chi2/dof-scaled standard errors. */
static void test_weights_invariance(void **state)
{
	(void)state;
	hb_fit_nlls *w = hb_fit_nlls_new();
	xs d = { misra_x, 14 };
	double sig[14];
	for (int i = 0; i < 14; i++)
		sig[i] = 0.37;
	double start[] = { 250, 0.0005 };
	hb_fit_problem pr = { .n = 14, .p = 2, .y = misra_y, .sigma = sig, .model = exp_model, .ctx = &d };
	hb_fit_nlls_result r;
	assert_int_equal(hb_fit_nlls_run(w, &pr, start, &r), HB_OK);
	check_certified(&r, misra_b, misra_sd, 2, misra_rss);
	assert_true(fabs(r.chi2 - misra_rss / (0.37 * 0.37)) < 1e-6 * r.chi2);
	hb_fit_nlls_free(w);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_misra1a),
		cmocka_unit_test(test_thurber),
		cmocka_unit_test(test_boxbod_false_convergence),
		cmocka_unit_test(test_boxbod_start2),
		cmocka_unit_test(test_failure_paths),
		cmocka_unit_test(test_weights_invariance),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
