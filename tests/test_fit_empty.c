/* tests/test_fit_empty.c - `fit` of a sweep with no points, or none usable: "no points to fit", exit 1, no fit stored */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "db/hb_db.h"

static char db_path[400];
static int64_t empty_id, overloaded_id, empty_freq_id;

/* A sweep of part E-1 unit S1: n points, each an overload reading when
 * overload is set (the meter's not-a-number value, nothing to fit). */
static int add_sweep(hb_db *db, int64_t unit, hb_db_sweep_kind kind, int n, bool overload, int64_t *id)
{
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = kind;
	s.unit_id = unit;
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	if (kind == HB_DB_SWEEP_BIAS)
		s.test_freq_hz = 100e3;
	int rc = hb_db_sweep_begin(db, &s);
	for (int i = 0; rc == HB_OK && i < n; i++) {
		hb_db_point pt;
		hb_db_point_init(&pt);
		pt.sweep_id = s.id;
		pt.seq = i;
		pt.bias_set_a = 0.5 * i;
		pt.bias_meas_a = 0.5 * i;
		pt.freq_hz = 100e3;
		pt.primary = overload ? NAN : 100e-6;
		pt.secondary = overload ? NAN : 0.03;
		pt.reading_status = overload ? HB_ERR_OVERLOAD : HB_OK;
		pt.t_s = i;
		rc = hb_db_point_add(db, &pt);
	}
	if (rc == HB_OK)
		rc = hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, "");
	*id = s.id;
	return rc;
}

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("fit-empty") != 0)
		return -1;
	snprintf(db_path, sizeof db_path, "%s/empty.db", tmpdir);
	hb_db *db = NULL;
	if (hb_db_open(db_path, &db) != HB_OK)
		return -1;
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "E-1");
	p.nominal_h = 100e-6;
	p.tolerance = 0.1;
	int64_t unit = 0;
	int rc = hb_db_part_put(db, &p);
	if (rc == HB_OK)
		rc = hb_db_unit_ensure(db, p.id, "S1", 0, &unit);
	if (rc == HB_OK)
		rc = add_sweep(db, unit, HB_DB_SWEEP_BIAS, 0, false, &empty_id);
	if (rc == HB_OK)
		rc = add_sweep(db, unit, HB_DB_SWEEP_BIAS, 4, true, &overloaded_id);
	if (rc == HB_OK)
		rc = add_sweep(db, unit, HB_DB_SWEEP_FREQUENCY, 0, false, &empty_freq_id);
	hb_db_close(db);
	return rc == HB_OK ? 0 : -1;
}

static int group_teardown(void **state)
{
	(void)state;
	return cli_fixture_teardown(state);
}

/* No fit row of the sweep in the store. */
static void expect_no_fit(int64_t sweep_id)
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_fit f;
	hb_db_fit_init(&f);
	int rc = hb_db_fit_get_latest(db, sweep_id, NULL, &f);
	hb_db_close(db);
	if (rc != HB_ERR_NOTFOUND)
		fail_msg("sweep %lld: a fit was stored (status %d)", (long long)sweep_id, rc);
}

/* A data problem is a runtime failure (exit 1, the project's convention
 * for "the data cannot give the answer"), said on one line; nothing stored,
 * no "L0 0 H" invented from nothing. */
static void expect_refused(int64_t sweep_id)
{
	char id[32];
	snprintf(id, sizeof id, "%lld", (long long)sweep_id);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "fit", id, NULL);
	if (r.status != 1)
		fail_msg("fit %s exited %d (want 1): %s %s", id, r.status, r.out, r.err);
	if (strstr(r.out, "L0 "))
		fail_msg("fit %s printed an L0 from no points: %s", id, r.out);
	expect_no_fit(sweep_id);
	if (!strstr(r.err, "no points to fit"))
		fail_msg("fit %s: stderr does not say 'no points to fit': %s", id, r.err);
	run_free(&r);
}

static void test_no_points(void **state)
{
	(void)state;
	expect_refused(empty_id);
}

static void test_no_usable_points(void **state)
{
	(void)state;
	expect_refused(overloaded_id);
}

static void test_frequency_sweep_no_points(void **state)
{
	(void)state;
	expect_refused(empty_freq_id);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_no_points),
		cmocka_unit_test(test_no_usable_points),
		cmocka_unit_test(test_frequency_sweep_no_points),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
