/* tests/test_unc_wiring.c - uncertainty wired into the bench: accuracy specifications from profiles and the station file, stored with each sweep (issue 10) */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "src/cli/demo.h"
#include "src/bench/bench.h"

#define TIME_SCALE 0.01

static char tmpdir[256];
static int db_counter;

static void db_path_new(char *buf, size_t cap)
{
	snprintf(buf, cap, "%s/unc-%d.db", tmpdir, ++db_counter);
}

static int group_setup(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/hb-test-unc-XXXXXX");
	if (!mkdtemp(tmpdir))
		return -1;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	unsetenv("HENRYBENCH_STATION");
	signal(SIGPIPE, SIG_IGN);
	return 0;
}

static int group_teardown(void **state)
{
	(void)state;
	DIR *d = opendir(tmpdir);
	if (d) {
		struct dirent *e;
		while ((e = readdir(d))) {
			if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
				continue;
			char p[600];
			snprintf(p, sizeof p, "%s/%s", tmpdir, e->d_name);
			unlink(p);
		}
		closedir(d);
	}
	rmdir(tmpdir);
	return 0;
}

static int bench_setup(void **state)
{
	(void)state;
	return hb_demo_configure_sim(TIME_SCALE, 7, 0) == HB_OK ? 0 : -1;
}

static int bench_teardown(void **state)
{
	(void)state;
	hb_sim_inproc_shutdown();
	return 0;
}

/* ---------------- accuracy as data (drivers/accuracy.c) ---------------- */

/* The data-sheet forms of docs/profiles.md "Accuracy". */
static void test_accuracy_parse(void **state)
{
	(void)state;
	double rel, off, hz;
	char err[200];
	assert_int_equal(hb_accuracy_parse_rel("0.05% + 1mA", "A", &rel, &off, err, sizeof err), HB_OK);
	assert_true(fabs(rel - 0.0005) < 1e-15);
	assert_true(fabs(off - 0.001) < 1e-15);
	assert_int_equal(hb_accuracy_parse_rel("0.1%", NULL, &rel, &off, err, sizeof err), HB_OK);
	assert_true(fabs(rel - 0.001) < 1e-15 && off == 0);
	/* a meter's basic accuracy has no offset term; wrong units are errors */
	assert_int_equal(hb_accuracy_parse_rel("0.1% + 1mA", NULL, &rel, &off, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_accuracy_parse_rel("0.05% + 1mV", "A", &rel, &off, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_accuracy_parse_rel("much", NULL, &rel, &off, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_accuracy_parse_freq_above("100kHz:0.05%", &hz, &rel, err, sizeof err), HB_OK);
	assert_true(hz == 100e3 && fabs(rel - 0.0005) < 1e-15);
	assert_int_equal(hb_accuracy_parse_freq_above("100kHz", &hz, &rel, err, sizeof err), HB_ERR_ARG);

	hb_accuracy a;
	hb_accuracy_init(&a);
	assert_true(isnan(hb_accuracy_rel_at(&a, 1e3)));
	a.rel = 0.001;
	a.freq_above_hz = 100e3;
	a.freq_above_rel = 0.0005;
	/* "above": at the corner the basic term holds */
	assert_true(fabs(hb_accuracy_rel_at(&a, 100e3) - 0.001) < 1e-15);
	assert_true(fabs(hb_accuracy_rel_at(&a, 200e3) - 0.0015) < 1e-15);
}

/* The generic profiles carry illustrative values marked as placeholders. */
static void test_generic_profiles_carry_placeholders(void **state)
{
	(void)state;
	char err[400];
	hb_profile *p = NULL;
	assert_int_equal(hb_profile_find("generic-lcr", &p, err, sizeof err), HB_OK);
	hb_accuracy a;
	hb_profile_lcr_accuracy(p, &a);
	assert_true(fabs(a.rel - 0.001) < 1e-15);
	assert_true(a.freq_above_hz == 100e3);
	assert_true(a.placeholder);
	hb_profile_free(p);
	assert_int_equal(hb_profile_find("generic-supply", &p, err, sizeof err), HB_OK);
	hb_profile_supply_accuracy(p, &a);
	assert_true(fabs(a.rel - 0.0005) < 1e-15 && fabs(a.offset - 0.001) < 1e-15);
	assert_true(a.placeholder);
	hb_profile_free(p);
}

/* A malformed accuracy is an error at load naming the key. */
static void test_profile_rejects_bad_accuracy(void **state)
{
	(void)state;
	char path[512], err[400];
	snprintf(path, sizeof path, "%s/bad.ini", tmpdir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fprintf(f, "[profile]\nname = bad\nkind = supply\n[supply]\nvoltage = VOLT {volts:real}\n"
		   "current = CURR {amps:real}\noutput.on = OUTP ON\noutput.off = OUTP OFF\n"
		   "measure.current = MEAS:CURR?\naccuracy.current = 0.05 percent\n");
	fclose(f);
	hb_profile *p = NULL;
	assert_int_not_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_non_null(strstr(err, "accuracy.current"));
	hb_profile_free(p);
}

static void small_plan(hb_sweep_plan *plan)
{
	hb_sweep_plan_defaults(plan);
	plan->from = 0;
	plan->to = 4;
	plan->steps = 5;
	plan->settle = HB_SETTLE_FIXED;
	plan->settle_time = 0.03;
	plan->limits.max_current = 5;
	plan->limits.max_voltage = 2;
	plan->limits.max_power = 10;
	plan->limits.ramp_rate = 50;
}

static int64_t measure(hb_db *db, const hb_station *st, const char *serial)
{
	hb_db_part part;
	hb_demo_part(&part);
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &supply), HB_OK);
	hb_sweep_plan plan;
	small_plan(&plan);
	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = st, .ambient_c = 23 };
	int64_t id = 0;
	hb_sweep_result res;
	assert_int_equal(hb_session_measure(&s, &part, serial, 0, &plan, NULL, &id, &res), HB_OK);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	return id;
}

/* src/bench/session.c records the accuracy in force: the profile's, and the
 * station file's [accuracy] where it states one. */
static void test_session_records_accuracy(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	int64_t id = measure(db, &st, "A-1");
	hb_db_sweep sw;
	assert_int_equal(hb_db_sweep_get(db, id, &sw), HB_OK);
	assert_true(fabs(sw.meter_accuracy_rel - 0.001) < 1e-15);
	assert_non_null(strstr(sw.meter_accuracy, "placeholder"));
	assert_true(fabs(sw.supply_accuracy_rel - 0.0005) < 1e-15);
	assert_true(fabs(sw.supply_accuracy_offset_a - 0.001) < 1e-15);

	/* the station file overrides the profile */
	char spath[512];
	snprintf(spath, sizeof spath, "%s/station.ini", tmpdir);
	FILE *f = fopen(spath, "w");
	assert_non_null(f);
	fprintf(f, "[station]\nname = s\ndecision_rule = guarded\nguard_r = 1\n[accuracy]\nmeter = 0.25%%\n"
		   "supply.current = 0.1%% + 2mA\n");
	fclose(f);
	setenv("HENRYBENCH_STATION", spath, 1);
	char err[300];
	hb_station fs;
	assert_int_equal(hb_station_load(&fs, err, sizeof err), HB_OK);
	unsetenv("HENRYBENCH_STATION");
	st.meter_accuracy = fs.meter_accuracy;
	st.supply_accuracy = fs.supply_accuracy;
	snprintf(st.decision_rule, sizeof st.decision_rule, "%s", fs.decision_rule);
	st.guard_r = fs.guard_r;
	id = measure(db, &st, "A-2");
	assert_int_equal(hb_db_sweep_get(db, id, &sw), HB_OK);
	assert_true(fabs(sw.meter_accuracy_rel - 0.0025) < 1e-15);
	assert_non_null(strstr(sw.meter_accuracy, "station file"));
	assert_true(fabs(sw.supply_accuracy_offset_a - 0.002) < 1e-15);
	assert_string_equal(sw.station_decision_rule, "guarded");
	assert_true(sw.station_guard_r == 1);
	hb_db_close(db);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_accuracy_parse),
		cmocka_unit_test(test_generic_profiles_carry_placeholders),
		cmocka_unit_test(test_profile_rejects_bad_accuracy),
		cmocka_unit_test_setup_teardown(test_session_records_accuracy, bench_setup, bench_teardown),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
