/* tests/test_settings_readback.c - the settings the instruments report at a sweep's start and end: stored, compared, a level changed mid-sweep flagged in the record, the text output and the report */
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
#include "src/report/report.h"
#include "store_fixture.h"

static char dir[300], path[400];
static hb_db *db;

static int setup(void **state)
{
	(void)state;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	if (temp_store_open(dir, sizeof dir, "readback", path, sizeof path, &db) != 0)
		return -1;
	hb_db_part part;
	hb_demo_part(&part);
	return hb_db_part_put(db, &part) == HB_OK ? 0 : -1;
}

static int teardown(void **state)
{
	(void)state;
	return temp_store_remove(dir, db);
}

static int bench_setup(void **state)
{
	(void)state;
	if (hb_demo_configure_sim(1e-3, 5, 0) != HB_OK || hb_sim_inproc_virtual(true) != HB_OK)
		return -1;
	return 0;
}

static int bench_teardown(void **state)
{
	(void)state;
	hb_sim_inproc_shutdown();
	return 0;
}

/* A short bias sweep at 0.5 V, as the user asked it; the text output
 * (progress) is returned for reading. */
static int64_t sweep(const char *serial, char **text)
{
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &part), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	hb_sweep_plan plan;
	hb_sweep_plan_defaults(&plan);
	plan.from = 0;
	plan.to = 2;
	plan.steps = 5;
	plan.level = 0.5;
	plan.level_kind = HB_LEVEL_VOLTAGE;
	plan.settle = HB_SETTLE_FIXED;
	plan.settle_time = 0.01;
	plan.limits.max_current = 5;
	plan.limits.max_voltage = 2;
	plan.limits.max_power = 10;
	plan.limits.ramp_rate = 50;
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &supply), HB_OK);
	FILE *progress = tmpfile();
	assert_non_null(progress);
	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = &st, .progress = progress, .ambient_c = 23 };
	int64_t id = 0;
	hb_sweep_result res;
	assert_int_equal(hb_session_measure(&s, &part, serial, 0, &plan, NULL, &id, &res), HB_OK);
	*text = stream_read_back(progress, NULL);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	return id;
}

static const char *snap(json_t *o, const char *key)
{
	const char *v = json_string_value(json_object_get(o, key));
	assert_non_null(v);
	return v;
}

/* Undisturbed: both snapshots hold what the sweep set (0.5 V, 100 kHz,
 * series L-R, the supply's voltage limit 2 V, output on) and agree. */
static void test_same_settings_not_flagged(void **state)
{
	(void)state;
	char *text = NULL;
	int64_t id = sweep("RB-1", &text);
	hb_db_sweep_trace t;
	assert_int_equal(hb_db_sweep_trace_get(db, id, &t), HB_OK);
	assert_string_equal(t.settings_changed, "");
	json_error_t e;
	json_t *a = json_loads(t.settings_start, 0, &e), *b = json_loads(t.settings_end, 0, &e);
	assert_non_null(a);
	assert_non_null(b);
	assert_true(fabs(atof(snap(a, "meter.level.voltage")) - 0.5) < 1e-9);
	assert_true(fabs(atof(snap(a, "meter.frequency")) - 100e3) < 1e-6);
	assert_string_equal(snap(a, "meter.function"), "SER,LR");
	assert_true(fabs(atof(snap(a, "supply.voltage")) - 2.0) < 1e-9);
	assert_true(json_equal(a, b));
	json_decref(a);
	json_decref(b);
	assert_null(strstr(text, "WARNING: settings read back changed"));
	free(text);
}

/* The meter's level halved mid-sweep (sim fault relevel): the end
 * snapshot reads 0.25 V, the sweep record names the change, the text
 * output warns and the report flags it. */
static void test_level_change_flagged(void **state)
{
	(void)state;
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_LCR, "relevel=5"), HB_OK);
	char *text = NULL;
	int64_t id = sweep("RB-2", &text);
	hb_db_sweep_trace t;
	assert_int_equal(hb_db_sweep_trace_get(db, id, &t), HB_OK);
	json_error_t e;
	json_t *b = json_loads(t.settings_end, 0, &e);
	assert_true(fabs(atof(snap(b, "meter.level.voltage")) - 0.25) < 1e-9);
	json_decref(b);
	assert_int_equal(strncmp(t.settings_changed, "meter.level.voltage ", 20), 0);
	assert_non_null(strstr(text, "\nWARNING: settings read back changed during the sweep: meter.level.voltage "));
	free(text);
	char *html = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&html, &len);
	char err[200];
	assert_int_equal(hb_report_sweep(db, id, f, err, sizeof err), HB_OK);
	fclose(f);
	assert_non_null(strstr(html, "FLAG: settings changed during the sweep: meter.level.voltage "));
	free(html);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_same_settings_not_flagged, bench_setup, bench_teardown),
		cmocka_unit_test_setup_teardown(test_level_change_flagged, bench_setup, bench_teardown),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
