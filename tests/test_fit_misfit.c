/* tests/test_fit_misfit.c - fit/misfit.c: the current's movement and heating are checked before the law */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "fit/hb_fit.h"

#define NP 25

/* invented knee law: L0 400 uH, floor 40 uH, Ik 1.2 A, sharpness 3 */
static const double knee[4] = { 400e-6, 40e-6, 1.2, 3.0 };

/* L of the knee law L = Lf + (L0 - Lf) / (1 + (I/Ik)^p), written here */
static double law(double I)
{
	return knee[1] + (knee[0] - knee[1]) / (1 + pow(I / knee[2], knee[3]));
}

/*
 * A reading taken while the current sat delta away from the recorded one
 * is off by about delta dL/dI (first-order Taylor, from memory). Here every
 * point is read half its bias spread off, alternating in sign; the residuals
 * against the true law are then that movement alone.
 */
static void sweep(double spread_a, double *I, double *L, double *resid, double *spread)
{
	for (int i = 0; i < NP; i++) {
		I[i] = 3.0 * i / (NP - 1);
		double delta = (i % 2 ? 0.5 : -0.5) * spread_a;
		L[i] = law(fmax(0, I[i] + delta));
		resid[i] = L[i] - law(I[i]);
		spread[i] = spread_a;
	}
}

static void test_current_moved(void **state)
{
	(void)state;
	double I[NP], L[NP], r[NP], s[NP];
	sweep(0.02, I, L, r, s);
	hb_misfit_diag d;
	/* noise far below the residuals: the model is flagged */
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, NULL, NULL, 0, 1e-9, 3, &d), HB_OK);
	assert_true(d.noise_ratio > 3);
	print_message("current ratio %.2f over %zu points\n", d.current_ratio, d.current_points);
	/* spread |dL/dI| is twice the half-spread error: ratio near 2 */
	assert_true(d.current_ratio > 1 && d.current_ratio < 3);
	assert_int_equal(d.current_points, NP);
	assert_int_equal(d.cause, HB_MISFIT_CURRENT_MOVED);
	assert_string_equal(hb_misfit_cause_name(d.cause), "current-moved");
}

/* Same residuals, but the store has no bias spread (older stores: NAN):
 * not checked, and with no falling points either the law is what remains. */
static void test_unknown_spread_blames_law(void **state)
{
	(void)state;
	double I[NP], L[NP], r[NP], s[NP];
	sweep(0.02, I, L, r, s);
	for (int i = 0; i < NP; i++)
		s[i] = NAN;
	hb_misfit_diag d;
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, NULL, NULL, 0, 1e-9, 3, &d), HB_OK);
	assert_true(isnan(d.current_ratio));
	assert_int_equal(d.current_points, 0);
	assert_true(isnan(d.heating_ratio));
	assert_int_equal(d.cause, HB_MISFIT_LAW);
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, NULL, NP, NULL, NULL, 0, 1e-9, 3, &d), HB_OK);
	assert_int_equal(d.cause, HB_MISFIT_LAW);
	/* a spread far too small to matter does not excuse the law */
	for (int i = 0; i < NP; i++)
		s[i] = 1e-5;
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, NULL, NULL, 0, 1e-9, 3, &d), HB_OK);
	assert_true(d.current_ratio < 0.5);
	assert_int_equal(d.cause, HB_MISFIT_LAW);
}

/* A smooth law mismatch (the part bends 1 % off the law, invented) read on
 * the way up and again on the way down at the same currents: the falling
 * readings repeat the rising ones, so the law is blamed. Read warmer on the
 * way down, off by twice the residuals: heating, not the law. */
static void test_heating(void **state)
{
	(void)state;
	double I[NP], L[NP], r[NP], Id[NP], Ld[NP];
	double rms = 0;
	for (int i = 0; i < NP; i++) {
		I[i] = 3.0 * i / (NP - 1);
		L[i] = law(I[i]) * (1 + 0.01 * sin(2.0 * I[i]));
		r[i] = L[i] - law(I[i]);
		rms += r[i] * r[i] / NP;
	}
	rms = sqrt(rms);
	for (int i = 0; i < NP; i++) {
		Id[i] = I[NP - 1 - i];
		Ld[i] = L[NP - 1 - i];
	}
	hb_misfit_diag d;
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, NULL, NP, Id, Ld, NP, 1e-9, 3, &d), HB_OK);
	assert_true(d.heating_ratio < 1e-9);
	assert_int_equal(d.heating_points, NP);
	assert_int_equal(d.cause, HB_MISFIT_LAW);
	for (int i = 0; i < NP; i++)
		Ld[i] -= 2 * rms;
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, NULL, NP, Id, Ld, NP, 1e-9, 3, &d), HB_OK);
	print_message("heating ratio %.2f over %zu points\n", d.heating_ratio, d.heating_points);
	assert_true(fabs(d.heating_ratio - 2) < 1e-6);
	assert_int_equal(d.cause, HB_MISFIT_HEATING);
	/* the current's movement is checked first and wins when it explains it */
	double s[NP];
	for (int i = 0; i < NP; i++)
		s[i] = 0.1;
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, Id, Ld, NP, 1e-9, 3, &d), HB_OK);
	print_message("current ratio %.2f with a 0.1 A spread\n", d.current_ratio);
	assert_int_equal(d.cause, HB_MISFIT_CURRENT_MOVED);
}

static void test_within_noise_and_errors(void **state)
{
	(void)state;
	double I[NP], L[NP], r[NP], s[NP];
	sweep(0.02, I, L, r, s);
	hb_misfit_diag d;
	/* noise as large as the residuals: nothing to explain */
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, NULL, NULL, 0, 1, 3, &d), HB_OK);
	assert_int_equal(d.cause, HB_MISFIT_NONE);
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, NULL, NULL, 0, 0, 3, &d), HB_ERR_DATA);
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, 2, NULL, NULL, 0, 1e-9, 3, &d), HB_ERR_ARG);
	assert_int_equal(hb_fit_misfit_diagnose(NULL, L, r, s, NP, NULL, NULL, 0, 1e-9, 3, &d), HB_ERR_ARG);
	r[3] = NAN;
	assert_int_equal(hb_fit_misfit_diagnose(I, L, r, s, NP, NULL, NULL, 0, 1e-9, 3, &d), HB_ERR_DATA);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_current_moved),
		cmocka_unit_test(test_unknown_spread_blames_law),
		cmocka_unit_test(test_heating),
		cmocka_unit_test(test_within_noise_and_errors),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
