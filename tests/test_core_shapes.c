/* tests/test_core_shapes.c - fit/shapes.c: IEC 60205 effective parameters of core sets against handbook tables, the sections path, and gap placement */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include <cmocka.h>

#include "fit/hb_fit.h"

/*
 * Sources. Dimensions are the means of the limits in the IEC dimension
 * tables (IEC 63093 / IEC 62317 series; IEC 60205 clause 2.4 takes the
 * mean), in mm. Effective parameters are the makers' handbook tables,
 * which state IEC 60205 values to three figures; each is marked "from
 * memory" where it was recalled, and the ETD 44 / ETD 54 values are also
 * written out in a public boost-converter design script (HDialani,
 * Boost-converter, Inductor_Design/Code/ETD44.py and ETD54.py).
 * The tolerances: the tables round to three figures and were computed
 * from drawings whose mean dimensions differ from the IEC limits by up to
 * about 1 %; le is allowed more where the handbook's corner treatment of
 * a round leg differs (stated at each table).
 */

static void near_rel(double got, double want, double rel, const char *what)
{
	if (!(fabs(got - want) <= rel * fabs(want)))
		fail_msg("%s: got %.6g, want %.6g (within %.1f %%)", what, got, want, rel * 100);
}

#define MM 1e-3
#define MM2 1e-6

static hb_core_shape_result eval(hb_core_shape s, const double *letters_mm, const int *idx, size_t n)
{
	hb_core_dims d;
	hb_core_dims_init(&d);
	for (size_t i = 0; i < n; i++)
		d.v[idx[i]] = idx[i] == HB_DIM_TYPE ? letters_mm[i] : letters_mm[i] * MM;
	hb_core_shape_result r;
	char err[160] = "";
	int rc = hb_core_shape_eval(s, &d, &r, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("%s: %s", hb_core_shape_name(s), err);
	return r;
}

static const int ABCDEF[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F };

typedef struct table_row {
	const char *name;
	double dims[9];
	double le_mm, ae_mm2;
} table_row;

static void check_rows(hb_core_shape s, const int *idx, size_t nidx, const table_row *rows, size_t n, double tol_le,
		       double tol_ae)
{
	for (size_t i = 0; i < n; i++) {
		hb_core_shape_result r = eval(s, rows[i].dims, idx, nidx);
		char what[64];
		snprintf(what, sizeof what, "%s le", rows[i].name);
		near_rel(r.eff.le, rows[i].le_mm * MM, tol_le, what);
		snprintf(what, sizeof what, "%s Ae", rows[i].name);
		near_rel(r.eff.Ae, rows[i].ae_mm2 * MM2, tol_ae, what);
		/* IEC 60205: Ve = le Ae, and C1 = le/Ae, C2 = le/Ae^2 by definition */
		near_rel(r.eff.Ve, r.eff.le * r.eff.Ae, 1e-12, "Ve");
		near_rel(r.eff.C1, r.eff.le / r.eff.Ae, 1e-12, "C1");
		near_rel(r.eff.C2, r.eff.le / (r.eff.Ae * r.eff.Ae), 1e-12, "C2");
		assert_true(r.Amin <= r.eff.Ae * 1.0001 || r.Amin < r.A_centre * 1.0001);
	}
}

/* E 42/21/15 (IEC 61246): le 97 mm, Ae 178 mm^2, Ve 17300 mm^3 (handbook, from memory) */
static void test_e_pair(void **state)
{
	(void)state;
	static const table_row rows[] = {
		{ "E 42/21/15", { 42.15, 21.0, 14.95, 15.15, 30.1, 11.95 }, 97, 178 },
	};
	check_rows(HB_SHAPE_E, ABCDEF, 6, rows, 1, 0.015, 0.015);
	hb_core_shape_result r = eval(HB_SHAPE_E, rows[0].dims, ABCDEF, 6);
	near_rel(r.eff.Ve, 17300e-9, 0.03, "E 42/21/15 Ve");
	/* the window of the pair is 2D */
	near_rel(r.window_height, 2 * 15.15 * MM, 1e-12, "window");
}

/* ETD (IEC 61185 sizes): handbook le/Ae, from memory; ETD 44 (103 mm,
 * 173 mm^2, Amin 172 mm^2) and ETD 54 (127 mm, 280 mm^2) also in the
 * public script named above. Ae agrees to 1 %; le is longer by up to
 * 2.5 % (the round leg's corner, see docs/cores.md). */
static void test_etd_table(void **state)
{
	(void)state;
	static const table_row rows[] = {
		{ "ETD 29", { 29.8, 15.8, 9.5, 11.0, 22.7, 9.5 }, 72.0, 76.0 },
		{ "ETD 34", { 34.2, 17.3, 10.8, 12.1, 26.3, 10.8 }, 78.6, 97.1 },
		{ "ETD 39", { 39.1, 19.8, 12.5, 14.6, 30.1, 12.5 }, 92.2, 125 },
		{ "ETD 44", { 44.0, 22.3, 14.8, 16.5, 33.3, 14.8 }, 103, 173 },
		{ "ETD 49", { 48.7, 24.7, 16.3, 18.1, 37.0, 16.3 }, 114, 211 },
		{ "ETD 54", { 54.5, 27.6, 18.9, 20.2, 41.2, 18.9 }, 127, 280 },
	};
	check_rows(HB_SHAPE_ETD, ABCDEF, 6, rows, sizeof rows / sizeof rows[0], 0.025, 0.01);
	hb_core_shape_result r = eval(HB_SHAPE_ETD, rows[3].dims, ABCDEF, 6);
	near_rel(r.Amin, 172 * MM2, 0.01, "ETD 44 Amin");
}

/* EFD (IEC 62317-? sizes; handbook values from memory) */
static void test_efd_table(void **state)
{
	(void)state;
	static const int idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_F2, HB_DIM_K, HB_DIM_q };
	static const table_row rows[] = {
		{ "EFD 15", { 15.0, 7.5, 4.65, 5.5, 11.0, 5.3, 2.4, -0.2, 0.45 }, 34, 15 },
		{ "EFD 20", { 20.0, 10.0, 6.65, 7.7, 15.4, 8.9, 3.6, 0.17, 0.75 }, 47, 31 },
		{ "EFD 25", { 25.0, 12.5, 9.1, 9.3, 18.7, 11.4, 5.2, 0.6, 1.0 }, 57, 58 },
		{ "EFD 30", { 30.0, 15.0, 9.1, 11.2, 22.4, 14.6, 4.9, 0.75, 1.0 }, 68, 69 },
	};
	check_rows(HB_SHAPE_EFD, idx, 9, rows, sizeof rows / sizeof rows[0], 0.015, 0.015);
}

/* Pot cores (IEC 60133 sizes; handbook values from memory). Ae within
 * 3 %: the handbook takes the slots' share of the ring differently. */
static void test_pot_table(void **state)
{
	(void)state;
	static const int idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_H, HB_DIM_G };
	static const table_row rows[] = {
		{ "P 18/11", { 18.0, 5.275, 3.7, 15.15, 7.45, 3.1, 3.55 }, 25.8, 43.3 },
		{ "P 22/13", { 21.6, 6.7, 4.7, 18.2, 9.25, 4.55, 3.7 }, 31.5, 63.4 },
		{ "P 26/16", { 25.5, 8.05, 5.6, 21.6, 11.3, 5.55, 3.7 }, 37.5, 93.9 },
		{ "P 30/19", { 30.0, 9.4, 6.6, 25.4, 13.3, 5.55, 4.4 }, 45.2, 136 },
	};
	check_rows(HB_SHAPE_P, idx, 7, rows, sizeof rows / sizeof rows[0], 0.01, 0.03);
}

/* PQ (IEC 62317-13 sizes; handbook values from memory) */
static void test_pq_table(void **state)
{
	(void)state;
	static const int idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_G, HB_DIM_J, HB_DIM_L };
	static const table_row rows[] = {
		{ "PQ 20/16", { 20.5, 8.1, 14.0, 5.15, 18.0, 8.8, 12.5, 4.8, 10.5 }, 37.4, 62.6 },
		{ "PQ 20/20", { 20.5, 10.1, 14.0, 7.15, 18.0, 8.8, 12.5, 4.8, 10.5 }, 45.7, 62.6 },
		{ "PQ 26/25", { 26.5, 12.375, 19.0, 8.05, 22.5, 12.0, 16.0, 7.3, 13.9 }, 54.3, 120 },
		{ "PQ 50/50", { 50.0, 24.975, 32.0, 18.05, 44.0, 20.0, 32.0, 10.0, 22.0 }, 113, 328 },
	};
	check_rows(HB_SHAPE_PQ, idx, 9, rows, sizeof rows / sizeof rows[0], 0.02, 0.03);
}

/* RM (IEC 60431 sizes, outline type 3; handbook values from memory,
 * recalled less surely: within 5 %) and EP 7 (from memory, 3 %) */
static void test_rm_ep_table(void **state)
{
	(void)state;
	static const int rm_idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_G, HB_DIM_H, HB_DIM_J };
	static const table_row rm[] = {
		{ "RM 10", { 27.85, 9.3, 13.25, 6.35, 21.65, 10.7, 10.9, 5.5, 24.15 }, 44.0, 83 },
		{ "RM 12", { 36.75, 12.25, 15.85, 8.55, 25.5, 12.55, 12.9, 0, 29.25 }, 56.6, 146 },
	};
	check_rows(HB_SHAPE_RM, rm_idx, 9, rm, 2, 0.05, 0.05);
	static const int ep_idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_K };
	static const table_row ep[] = {
		{ "EP 7", { 9.2, 3.7, 6.35, 2.6, 7.4, 3.3, 1.7 }, 15.5, 10.7 },
	};
	check_rows(HB_SHAPE_EP, ep_idx, 7, ep, 1, 0.03, 0.03);
}

/* The E pair decomposed by hand into uniform sections (IEC 60205: per
 * half two outer legs in parallel, the yoke split both ways, the centre
 * leg and two kinds of corner at pi/8 (w1 + w2) with the mean section)
 * and summed by the existing sections path must agree to rounding. */
static void test_e_against_sections(void **state)
{
	(void)state;
	const double A = 42.15, B = 21.0, C = 14.95, D = 15.15, E = 30.1, F = 11.95;
	double p = (A - E) / 2, h = B - D, s = F / 2;
	double outer = 2 * p * C, yoke = 2 * h * C, centre = F * C;
	double len[10], area[10];
	for (int half = 0; half < 2; half++) {
		double *l = len + 5 * half, *a = area + 5 * half;
		l[0] = D, a[0] = outer;
		l[1] = (E - F) / 2, a[1] = yoke;
		l[2] = D, a[2] = centre;
		l[3] = M_PI / 8 * (p + h), a[3] = (outer + yoke) / 2;
		l[4] = M_PI / 8 * (s + h), a[4] = (yoke + centre) / 2;
	}
	for (int i = 0; i < 10; i++)
		len[i] *= MM, area[i] *= MM2;
	hb_core_effective ref;
	assert_int_equal(hb_fit_geom_sections(len, area, 10, &ref), HB_OK);
	const double dims[] = { A, B, C, D, E, F };
	hb_core_shape_result r = eval(HB_SHAPE_E, dims, ABCDEF, 6);
	near_rel(r.eff.C1, ref.C1, 1e-12, "C1");
	near_rel(r.eff.C2, ref.C2, 1e-12, "C2");
	near_rel(r.eff.le, ref.le, 1e-12, "le");
	near_rel(r.eff.Ae, ref.Ae, 1e-12, "Ae");
}

/* A U pair of square-section legs by hand: four legs and two yokes in
 * series, four corners (IEC 60205 2.6); and a U with an I equal to the
 * U's yoke closing a window of 2D is the same circuit as the pair. */
static void test_u_against_sections(void **state)
{
	(void)state;
	const double A = 30, B = 20, C = 8, D = 12, E = 14; /* legs 8 x 8, yoke 8 x 8 */
	double p = (A - E) / 2, h = B - D;
	double leg = p * C, yoke = h * C, cor = M_PI / 8 * (p + h);
	double len[] = { 2 * D, E, 2 * cor, 2 * D, E, 2 * cor };
	double area[] = { leg, yoke, (leg + yoke) / 2, leg, yoke, (leg + yoke) / 2 };
	for (int i = 0; i < 6; i++)
		len[i] *= MM, area[i] *= MM2;
	hb_core_effective ref;
	assert_int_equal(hb_fit_geom_sections(len, area, 6, &ref), HB_OK);
	static const int idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E };
	const double dims[] = { A, B, C, D, E };
	hb_core_shape_result r = eval(HB_SHAPE_U, dims, idx, 5);
	near_rel(r.eff.le, ref.le, 1e-12, "U le");
	near_rel(r.eff.Ae, ref.Ae, 1e-12, "U Ae");
	/* uniform 8 x 8 section all round: Ae is the section, le the mean path
	 * 2 (2D + E) + 4 quarter circles of radius 4 (common practice) */
	near_rel(r.eff.Ae, 64 * MM2, 1e-12, "U uniform Ae");
	near_rel(r.eff.le, (2 * (2 * D + E) + 2 * M_PI * 4) * MM, 1e-12, "U uniform le");
	static const int ui_idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_B2 };
	const double ui[] = { A, 2 * D + h, C, 2 * D, E, h };
	hb_core_shape_result r2 = eval(HB_SHAPE_UI, ui, ui_idx, 6);
	near_rel(r2.eff.le, r.eff.le, 1e-12, "UI le");
	near_rel(r2.eff.Ae, r.eff.Ae, 1e-12, "UI Ae");
	/* the same for E + I against the E pair */
	static const int ei_idx[] = { HB_DIM_A, HB_DIM_B, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_B2 };
	const double e[] = { 42.15, 21.0, 14.95, 15.15, 30.1, 11.95 };
	const double ei[] = { 42.15, 2 * 15.15 + 5.85, 14.95, 2 * 15.15, 30.1, 11.95, 5.85 };
	hb_core_shape_result re = eval(HB_SHAPE_E, e, ABCDEF, 6), rei = eval(HB_SHAPE_EI, ei, ei_idx, 7);
	near_rel(rei.eff.le, re.eff.le, 1e-12, "EI le");
	near_rel(rei.eff.Ae, re.eff.Ae, 1e-12, "EI Ae");
	near_rel(rei.window_height, re.window_height, 1e-12, "EI window");
}

/* Gap placement with McLyman's fringing factor F = 1 + (t/sqrt(A))
 * ln(2G/t) (Transformer and Inductor Design Handbook, from memory) per
 * gapped leg: a centre gap t is t Ae/(A_c F_c) referred to Ae; a spacer
 * adds t Ae/(A_o F_o) for the outer legs in series (each leg fringing on
 * its own section). */
static void test_gap_placement(void **state)
{
	(void)state;
	const double dims[] = { 42.15, 21.0, 14.95, 15.15, 30.1, 11.95 };
	hb_core_shape_result r = eval(HB_SHAPE_E, dims, ABCDEF, 6);
	const double t = 0.5e-3, G = 2 * 15.15e-3, Ae = r.eff.Ae;
	const double Ac = 11.95 * 14.95e-6, Ao = (42.15 - 30.1) * 14.95e-6;
	double Fc = 1 + t / sqrt(Ac) * log(2 * G / t), Fo = 1 + t / sqrt(Ao / 2) * log(2 * G / t);
	double centre = t * Ae / (Ac * Fc), spacer = centre + t * Ae / (Ao * Fo);
	near_rel(hb_core_gap_effective(&r, HB_GAP_CENTRE, t), centre, 1e-12, "centre gap");
	near_rel(hb_core_gap_effective(&r, HB_GAP_SPACER, t), spacer, 1e-12, "spacer gap");
	/* a spacer about doubles the gap of an E pair whose legs match */
	assert_true(spacer > 1.8 * centre && spacer < 2.2 * centre);
	double back;
	assert_int_equal(hb_core_gap_physical(&r, HB_GAP_SPACER, spacer, &back), HB_OK);
	near_rel(back, t, 1e-9, "spacer inverse");
	assert_int_equal(hb_core_gap_physical(&r, HB_GAP_CENTRE, centre, &back), HB_OK);
	near_rel(back, t, 1e-9, "centre inverse");
	/* a core known only by Ae/le has no outer legs: no spacer gap */
	hb_core_shape_result bare;
	hb_core_shape_from_effective(50e-6, 60e-3, 9e-3, &bare);
	assert_true(isnan(hb_core_gap_effective(&bare, HB_GAP_SPACER, t)));
	/* and its centre gap is fit/'s fringing on Ae: g/F(g) */
	near_rel(hb_core_gap_effective(&bare, HB_GAP_CENTRE, t), t / hb_fit_fringing_factor(t, 50e-6, 9e-3), 1e-12,
		 "bare centre");
}

static void test_bad_dimensions(void **state)
{
	(void)state;
	hb_core_dims d;
	hb_core_dims_init(&d);
	hb_core_shape_result r;
	char err[160];
	/* a missing letter is named */
	d.v[HB_DIM_A] = 42e-3;
	assert_int_equal(hb_core_shape_eval(HB_SHAPE_E, &d, &r, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "needs B"));
	/* B <= D leaves no yoke */
	const double v[] = { 42e-3, 15e-3, 15e-3, 15.15e-3, 30e-3, 12e-3 };
	for (int i = 0; i < 6; i++)
		d.v[ABCDEF[i]] = v[i];
	assert_int_equal(hb_core_shape_eval(HB_SHAPE_E, &d, &r, err, sizeof err), HB_ERR_ARG);
	hb_core_shape s;
	assert_int_equal(hb_core_shape_parse("ER", &s), HB_OK);
	assert_int_equal(s, HB_SHAPE_ETD);
	assert_int_equal(hb_core_shape_parse("pot", &s), HB_OK);
	assert_int_equal(s, HB_SHAPE_P);
	assert_int_equal(hb_core_shape_parse("x", &s), HB_ERR_ARG);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_e_pair),		     cmocka_unit_test(test_etd_table),
		cmocka_unit_test(test_efd_table),	     cmocka_unit_test(test_pot_table),
		cmocka_unit_test(test_pq_table),	     cmocka_unit_test(test_rm_ep_table),
		cmocka_unit_test(test_e_against_sections), cmocka_unit_test(test_u_against_sections),
		cmocka_unit_test(test_gap_placement),	     cmocka_unit_test(test_bad_dimensions),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
