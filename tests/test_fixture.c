/* tests/test_fixture.c - fixture compensation: residuals measured against the simulated fixture's modelled leads, applied to the readings, the meter's own correction, the record each sweep references */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <jansson.h>

#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "src/bench/bench.h"
#include "src/cli/demo.h"
#include "src/quality/budget.h"
#include "store_fixture.h"
/* after budget.h, whose parameter I the macro would rename */
#include <complex.h>

/* The invented fixture: leads of 50 mOhm and 200 nH in series, 20 pF of
 * stray capacitance across the terminals (the simulator's model,
 * docs/simulator.md "Fixture"). */
#define R_LEAD 0.05
#define L_LEAD 200e-9
#define C_FIX 20e-12

static char dir[300], path[400];
static hb_db *db;
static hb_station station;

static void set_param(const char *key, double v)
{
	hb_sim *sim = hb_sim_inproc();
	hb_sim_inproc_lock();
	int rc = hb_sim_set_param(sim, key, v);
	hb_sim_inproc_unlock();
	assert_int_equal(rc, HB_OK);
}

static int setup(void **state)
{
	(void)state;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	if (temp_store_open(dir, sizeof dir, "fixture", path, sizeof path, &db) != 0)
		return -1;
	hb_db_part part;
	hb_demo_part(&part);
	if (hb_db_part_put(db, &part) != HB_OK)
		return -1;
	hb_demo_station(&station);
	if (hb_demo_configure_sim(1e-3, 3, 0) != HB_OK || hb_sim_inproc_virtual(true) != HB_OK)
		return -1;
	hb_sim *sim = hb_sim_inproc();
	hb_sim_inproc_lock();
	int rc = hb_sim_set_param(sim, "rlead", R_LEAD);
	rc = rc ? rc : hb_sim_set_param(sim, "llead", L_LEAD);
	rc = rc ? rc : hb_sim_set_param(sim, "cfix", C_FIX);
	/* quiet enough that a 1e-5 comparison sees the model, not the noise */
	rc = rc ? rc : hb_sim_set_param(sim, "noise", 1e-8);
	hb_sim_inproc_unlock();
	return rc == HB_OK ? 0 : -1;
}

static int teardown(void **state)
{
	(void)state;
	hb_sim_inproc_shutdown();
	return temp_store_remove(dir, db);
}

static void freq_plan(hb_sweep_plan *plan)
{
	hb_sweep_plan_defaults(plan);
	plan->kind = HB_SWEEP_FREQUENCY;
	plan->f_from = 10e3;
	plan->f_to = 100e3;
	plan->f_points = 3;
	plan->settle = HB_SETTLE_FIXED;
	plan->settle_time = 0.001;
	plan->limits.max_current = 5;
	plan->limits.max_voltage = 2;
	plan->limits.max_power = 10;
	plan->limits.ramp_rate = 50;
}

static int64_t measure(hb_lcr *lcr, const char *fixture, const char *serial)
{
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &part), HB_OK);
	hb_sweep_plan plan;
	freq_plan(&plan);
	hb_session s = { .db = db, .lcr = lcr, .station = &station, .ambient_c = NAN, .fixture = fixture };
	int64_t id = 0;
	hb_sweep_result res;
	assert_int_equal(hb_session_measure(&s, &part, serial, 0, &plan, "fixture test", &id, &res), HB_OK);
	return id;
}

static void points(int64_t id, hb_db_point **pts, size_t *n)
{
	assert_int_equal(hb_db_points_get(db, id, pts, n), HB_OK);
	assert_int_equal(*n, 3);
}

static void run_comp(hb_lcr *lcr, const char *fixture, hb_correction which, bool measure_only, hb_db_fixture_comp *rec)
{
	static const double freqs[] = { 10e3, 100e3 };
	hb_fixture_request req = { .fixture = fixture, .which = which, .freqs = freqs, .n_freqs = 2,
				   .measure_only = measure_only };
	char err[400] = "";
	int rc = hb_fixture_run(db, lcr, &req, rec, err, sizeof err);
	if (rc != HB_OK)
		print_error("%s\n", err);
	assert_int_equal(rc, HB_OK);
}

/* The residuals henrybench reads are the fixture's modelled terms: open
 * Y = jwC (C = B/w), short Z = R + jwL in parallel with the same C
 * (textbook: Z || C = Z / (1 + jwC Z)). Applied to a sweep, the readings
 * are the part's alone: adding the leads and the stray C back to them by
 * the series and parallel impedance formulas gives the uncompensated
 * readings of the same part. */
static void test_measured_residuals_are_applied(void **state)
{
	(void)state;
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	hb_db_fixture_comp open, shrt;
	set_param("fixture_state", 1);
	run_comp(lcr, "jig-A", HB_CORRECTION_OPEN, true, &open);
	set_param("fixture_state", 2);
	run_comp(lcr, "jig-A", HB_CORRECTION_SHORT, true, &shrt);
	set_param("fixture_state", 0);
	assert_string_equal(open.method, "henrybench");
	assert_string_equal(shrt.method, "henrybench");

	json_error_t je;
	json_t *o = json_loads(open.residuals, 0, &je), *s = json_loads(shrt.residuals, 0, &je);
	assert_int_equal(json_array_size(o), 2);
	assert_int_equal(json_array_size(s), 2);
	for (size_t i = 0; i < 2; i++) {
		double f = json_number_value(json_object_get(json_array_get(s, i), "freq_hz"));
		double w = 2 * M_PI * f;
		double c = json_number_value(json_object_get(json_array_get(o, i), "c_f"));
		assert_true(fabs(c / C_FIX - 1) < 1e-4);
		double complex zs = R_LEAD + I * w * L_LEAD;
		double complex zexp = zs / (1.0 + I * w * C_FIX * zs);
		double r = json_number_value(json_object_get(json_array_get(s, i), "r_ohm"));
		double l = json_number_value(json_object_get(json_array_get(s, i), "l_h"));
		assert_true(fabs(r / creal(zexp) - 1) < 1e-4);
		assert_true(fabs(l / (cimag(zexp) / w) - 1) < 1e-4);
	}
	json_decref(o);
	json_decref(s);

	int64_t comp = measure(lcr, "jig-A", "F-1");
	int64_t raw = measure(lcr, "jig-none", "F-2");
	hb_db_sweep_trace t;
	assert_int_equal(hb_db_sweep_trace_get(db, comp, &t), HB_OK);
	assert_int_equal(t.open_comp_id, open.id);
	assert_int_equal(t.short_comp_id, shrt.id);
	assert_true(t.fixture_applied);
	assert_string_equal(t.fixture_status, "");
	assert_int_equal(hb_db_sweep_trace_get(db, raw, &t), HB_OK);
	assert_int_equal(t.open_comp_id, 0);
	assert_false(t.fixture_applied);
	assert_int_equal(strncmp(t.fixture_status, "missing: ", 9), 0);

	hb_db_point *pc = NULL, *pr = NULL;
	size_t nc = 0, nr = 0;
	points(comp, &pc, &nc);
	points(raw, &pr, &nr);
	for (size_t i = 0; i < nc; i++) {
		double w = 2 * M_PI * pc[i].freq_hz;
		/* series L-R: Z = Rs + jwLs */
		double complex zpart = pc[i].secondary + I * w * pc[i].primary;
		double complex zs = zpart + R_LEAD + I * w * L_LEAD;
		double complex zm = 1.0 / (1.0 / zs + I * w * C_FIX);
		assert_true(fabs(pr[i].primary / (cimag(zm) / w) - 1) < 2e-5);
		/* The simulator puts the stray C outside the leads, the compensation
		 * (common practice) inside: the two differ by terms of the order
		 * |Zs Yo| (here 1.6e-6) of |Z|, which is what R is held to. */
		assert_true(fabs(pr[i].secondary - creal(zm)) < 1e-5 * cabs(zm));
		/* and the compensation moved the reading by far more than that */
		assert_true(fabs(pr[i].primary / pc[i].primary - 1) > 1e-3);
	}
	hb_db_points_free(pc);
	hb_db_points_free(pr);
	hb_lcr_close(lcr);
}

/* The meter's own correction (the profile has correct.open and
 * correct.short): afterwards the meter reads the part as it would without
 * any fixture, the record says "meter" and nothing is subtracted twice. */
static void test_meter_correction_removes_the_leads(void **state)
{
	(void)state;
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	hb_db_fixture_comp open, shrt;
	set_param("fixture_state", 1);
	run_comp(lcr, "jig-B", HB_CORRECTION_OPEN, false, &open);
	set_param("fixture_state", 2);
	run_comp(lcr, "jig-B", HB_CORRECTION_SHORT, false, &shrt);
	set_param("fixture_state", 0);
	assert_string_equal(open.method, "meter");
	assert_string_equal(shrt.method, "meter");
	int64_t corrected = measure(lcr, "jig-B", "M-1");
	hb_db_sweep_trace t;
	assert_int_equal(hb_db_sweep_trace_get(db, corrected, &t), HB_OK);
	assert_int_equal(t.short_comp_id, shrt.id);
	assert_false(t.fixture_applied);
	/* The same part with no fixture at all. */
	set_param("rlead", 0);
	set_param("llead", 0);
	set_param("cfix", 0);
	int64_t bare = measure(lcr, "jig-B", "M-2");
	set_param("rlead", R_LEAD);
	set_param("llead", L_LEAD);
	set_param("cfix", C_FIX);
	hb_db_point *a = NULL, *b = NULL;
	size_t na = 0, nb = 0;
	points(corrected, &a, &na);
	points(bare, &b, &nb);
	for (size_t i = 0; i < na; i++)
		assert_true(fabs(a[i].primary / b[i].primary - 1) < 2e-5);
	hb_db_points_free(a);
	hb_db_points_free(b);
	/* Compensating again with the correction in force: the open reads
	 * beyond the meter's range, is recorded so, and the correction runs. */
	hb_db_fixture_comp again;
	set_param("fixture_state", 1);
	run_comp(lcr, "jig-B", HB_CORRECTION_OPEN, false, &again);
	set_param("fixture_state", 0);
	json_error_t je;
	json_t *list = json_loads(again.residuals, 0, &je);
	assert_int_equal(json_array_size(list), 2);
	assert_true(json_is_true(json_object_get(json_array_get(list, 0), "overload")));
	json_decref(list);
	hb_lcr_close(lcr);
}

/* A compensation older than the station's limit is stale and said so. */
static void test_stale_compensation_is_flagged(void **state)
{
	(void)state;
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	hb_db_fixture_comp open, shrt;
	set_param("fixture_state", 1);
	run_comp(lcr, "jig-C", HB_CORRECTION_OPEN, true, &open);
	set_param("fixture_state", 2);
	run_comp(lcr, "jig-C", HB_CORRECTION_SHORT, true, &shrt);
	set_param("fixture_state", 0);
	double keep = station.fixture_max_age_h;
	station.fixture_max_age_h = 1e-12; /* any age is older than that */
	int64_t id = measure(lcr, "jig-C", "S-1");
	station.fixture_max_age_h = keep;
	hb_db_sweep_trace t;
	assert_int_equal(hb_db_sweep_trace_get(db, id, &t), HB_OK);
	assert_int_equal(strncmp(t.fixture_status, "stale: open compensation ", 25), 0);
	/* the budget's fixture term rests on the short's recorded lead L */
	hb_budget_context bc;
	hb_budget_context_init(&bc);
	hb_budget_context_fixture(&bc, db, id);
	assert_true(fabs(bc.fixture_l_half / L_LEAD - 1) < 1e-3);
	hb_lcr_close(lcr);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_measured_residuals_are_applied),
		/* before the meter's correction, which stays in force in the meter */
		cmocka_unit_test(test_stale_compensation_is_flagged),
		cmocka_unit_test(test_meter_correction_removes_the_leads),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
