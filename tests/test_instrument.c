/* tests/test_instrument.c - the instrument register: recorded from *IDN?, calibration due dates warn or refuse a sweep, --allow-overdue recorded, the register's accuracy wins, reverse traceability */
#define _XOPEN_SOURCE 700
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include <jansson.h>

#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "src/bench/bench.h"
#include "cli_fixture.h"

static char station_warn[400], station_refuse[400];
static char db_path[600];
static int db_counter;

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("instrument") != 0)
		return -1;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	static const char limits[] = "[limits]\nmax_current = 5\nmax_voltage = 2\nmax_power = 10\nramp_rate = 50\n";
	snprintf(station_warn, sizeof station_warn, "%s/warn.ini", tmpdir);
	snprintf(station_refuse, sizeof station_refuse, "%s/refuse.ini", tmpdir);
	char text[400];
	snprintf(text, sizeof text, "[station]\nname = test-bench\n%s", limits);
	write_file(station_warn, text);
	snprintf(text, sizeof text, "[station]\nname = test-bench\n%s[calibration]\noverdue = refuse\n", limits);
	write_file(station_refuse, text);
	return 0;
}

/* A fresh store with part P-CAL, the simulated instruments registered by
 * `identify` and the meter's calibration due long ago. */
static int store_setup(void **state)
{
	(void)state;
	snprintf(db_path, sizeof db_path, "%s/cal-%d.db", tmpdir, ++db_counter);
	return 0;
}

static void add_part(void)
{
	run r;
	hb_run(&r, station_warn, "--db", db_path, "part", "add", "P-CAL", "--nominal", "108uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.5V", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
}

static void run_sweep(run *r, const char *station, const sim_server *sim, const char *unit, bool allow)
{
	char *argv[] = { NULL, "--db", db_path, "sweep", "--part", "P-CAL", "--unit", (char *)unit, "--lcr",
			 (char *)sim->lcr, "--supply", (char *)sim->supply, "--to", "2", "--steps", "5", "--settle", "20ms",
			 "--yes", "--no-fit", allow ? "--allow-overdue" : NULL, NULL };
	hb_runv(r, station, STDIN_NULL, NULL, argv);
}

static int64_t only_sweep_id(void)
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &rows, &n), HB_OK);
	int64_t id = n == 1 ? rows[0].id : 0;
	hb_db_sweeps_free(rows);
	hb_db_close(db);
	return id;
}

/* A due date in the past refuses the sweep where the station file says so:
 * exit 1 before the supply output is ever switched on; --allow-overdue
 * goes ahead and the sweep records that it was allowed. */
static void test_overdue_refused_then_allowed(void **state)
{
	(void)state;
	add_part();
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_warn, "--db", db_path, "identify", sim.lcr, sim.supply, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "instrument", "edit", "SL0001", "--cal-date", "2000-01-01",
	       "--due-date", "2001-01-01", "--certificate", "T-1", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);

	run_sweep(&r, station_refuse, &sim, "OD-1", false);
	assert_int_equal(r.status, 1);
	assert_non_null(strstr(r.err, "henrybench: sweep not started: refused: an instrument is past its calibration due date"));
	run_free(&r);
	sim_stop(&sim);
	/* The simulator's log is the witness: no output was switched on. */
	assert_null(strstr(sim.log, "supply output ON"));
	assert_int_equal(only_sweep_id(), 0);
	sim_free(&sim);

	sim_start(&sim, NULL);
	run_sweep(&r, station_refuse, &sim, "OD-2", true);
	if (r.status != 0)
		print_error("%s\n", r.err);
	assert_int_equal(r.status, 0);
	run_free(&r);
	sim_free(&sim);
	int64_t id = only_sweep_id();
	assert_true(id > 0);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_sweep_trace t;
	assert_int_equal(hb_db_sweep_trace_get(db, id, &t), HB_OK);
	assert_true(t.overdue_allowed);
	hb_db_instrument meter, source;
	assert_int_equal(hb_db_instrument_find(db, "SL0001", &meter), HB_OK);
	assert_int_equal(hb_db_instrument_find(db, "SD0001", &source), HB_OK);
	assert_int_equal(t.lcr_instrument_id, meter.id);
	assert_int_equal(t.supply_instrument_id, source.id);
	hb_db_close(db);
}

/* Without refuse in the station file the sweep goes ahead with one warning
 * line naming the serial and the due date; an instrument with nothing
 * recorded gets "calibration status unknown". */
static void test_overdue_warns(void **state)
{
	(void)state;
	add_part();
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_warn, "--db", db_path, "identify", sim.lcr, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "instrument", "edit", "SL0001", "--cal-date", "2000-01-01",
	       "--due-date", "2001-01-01", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	run_sweep(&r, station_warn, &sim, "W-1", false);
	sim_free(&sim);
	assert_int_equal(r.status, 0);
	assert_non_null(strstr(r.out, "\nwarning: meter SL0001 calibration due 2001-01-01 is past\n"));
	/* the supply was first seen by this sweep: nothing recorded for it */
	assert_non_null(strstr(r.out, "\nwarning: supply SD0001: calibration status unknown (no calibration date recorded;"));
	run_free(&r);
}

/* The due date itself is still in calibration; the day after it is
 * overdue (common practice: "due" is the last day of the interval). */
static void test_cal_state_dates(void **state)
{
	(void)state;
	hb_db_instrument in;
	memset(&in, 0, sizeof in);
	snprintf(in.serial, sizeof in.serial, "X1");
	char text[300];
	assert_int_equal(hb_trace_cal_state(&in, "2026-05-01", text, sizeof text), HB_CAL_UNKNOWN);
	snprintf(in.cal_date, sizeof in.cal_date, "2025-05-01");
	snprintf(in.due_date, sizeof in.due_date, "2026-05-01");
	assert_int_equal(hb_trace_cal_state(&in, "2026-04-30", text, sizeof text), HB_CAL_OK);
	assert_int_equal(hb_trace_cal_state(&in, "2026-05-01", text, sizeof text), HB_CAL_OK);
	assert_int_equal(hb_trace_cal_state(&in, "2026-05-02", text, sizeof text), HB_CAL_OVERDUE);
	assert_int_equal(hb_trace_cal_state(&in, "2027-01-01", text, sizeof text), HB_CAL_OVERDUE);
	assert_true(hb_trace_valid_date("2024-02-29"));
	assert_false(hb_trace_valid_date("2024-13-01"));
	assert_false(hb_trace_valid_date("24-01-01"));
}

/* ---------------- reverse traceability on a generated store ---------------- */

static int64_t add_sweep(hb_db *db, int64_t unit_id, int64_t lcr_id, int64_t sup_id, int verdicts)
{
	hb_db_sweep sw;
	hb_db_sweep_init(&sw);
	sw.kind = HB_DB_SWEEP_BIAS;
	sw.unit_id = unit_id;
	assert_int_equal(hb_db_sweep_begin(db, &sw), HB_OK);
	assert_int_equal(hb_db_sweep_end(db, sw.id, HB_DB_COMPLETE, ""), HB_OK);
	hb_db_sweep_trace t;
	hb_db_sweep_trace_init(&t);
	t.sweep_id = sw.id;
	t.lcr_instrument_id = lcr_id;
	t.supply_instrument_id = sup_id;
	assert_int_equal(hb_db_sweep_trace_put(db, &t), HB_OK);
	static const char *const checks[] = { "L0", "Lsat", "DCR" };
	for (int i = 0; i < verdicts; i++) {
		hb_db_verdict v;
		hb_db_verdict_init(&v);
		v.sweep_id = sw.id;
		snprintf(v.check_name, sizeof v.check_name, "%s", checks[i]);
		v.outcome = i == 1 ? HB_DB_FAIL : HB_DB_PASS;
		assert_int_equal(hb_db_verdict_put(db, &v), HB_OK);
	}
	return sw.id;
}

/* Two meters, one supply: the query for meter A lists exactly the sweeps
 * made with A (not B's), each one's verdicts, and the lot sampled with A;
 * the supply's query lists every sweep; a later --since lists nothing. */
static void test_affected_lists_what_an_instrument_made(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_part part;
	hb_db_part_init(&part);
	snprintf(part.part_number, sizeof part.part_number, "P-REV");
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	hb_db_instrument a, b, s;
	assert_int_equal(hb_db_instrument_ensure(db, "lcr", "Maker", "M1", "A-1", "1", &a, NULL), HB_OK);
	assert_int_equal(hb_db_instrument_ensure(db, "lcr", "Maker", "M1", "B-2", "1", &b, NULL), HB_OK);
	assert_int_equal(hb_db_instrument_ensure(db, "supply", "Maker", "S1", "S-3", "1", &s, NULL), HB_OK);
	bool created = true;
	hb_db_instrument again;
	assert_int_equal(hb_db_instrument_ensure(db, "lcr", "Maker", "M1", "A-1", "2", &again, &created), HB_OK);
	assert_false(created);
	assert_int_equal(again.id, a.id);
	assert_string_equal(again.firmware, "2");

	int64_t lot_id = 0, u1 = 0, u2 = 0, u3 = 0;
	assert_int_equal(hb_db_lot_ensure(db, part.id, "LOT-R", &lot_id), HB_OK);
	assert_int_equal(hb_db_unit_ensure(db, part.id, "R-1", lot_id, &u1), HB_OK);
	assert_int_equal(hb_db_unit_ensure(db, part.id, "R-2", 0, &u2), HB_OK);
	assert_int_equal(hb_db_unit_ensure(db, part.id, "R-3", 0, &u3), HB_OK);
	int64_t s1 = add_sweep(db, u1, a.id, s.id, 3);
	int64_t s2 = add_sweep(db, u2, b.id, s.id, 2);
	int64_t s3 = add_sweep(db, u3, a.id, 0, 1);
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	rec.lot_id = lot_id;
	rec.sequence = 1;
	rec.unit_id = u1;
	rec.sweep_id = s1;
	rec.outcome = HB_DB_FAIL;
	assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(db, lot_id, &lot), HB_OK);
	lot.decision = HB_DB_LOT_REJECT;
	assert_int_equal(hb_db_lot_update(db, &lot), HB_OK);

	hb_db_affected *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_instrument_affected(db, a.id, 0, &rows, &n), HB_OK);
	/* s1 + 3 verdicts, s3 + 1 verdict, the lot */
	assert_int_equal(n, 7);
	assert_string_equal(rows[0].what, "sweep");
	assert_int_equal(rows[0].id, s1);
	for (int i = 1; i <= 3; i++) {
		assert_string_equal(rows[i].what, "verdict");
		assert_int_equal(rows[i].sweep_id, s1);
	}
	assert_string_equal(rows[4].what, "sweep");
	assert_int_equal(rows[4].id, s3);
	assert_string_equal(rows[5].what, "verdict");
	assert_string_equal(rows[6].what, "lot");
	assert_int_equal(rows[6].id, lot_id);
	assert_string_equal(rows[6].detail, "reject");
	for (size_t i = 0; i < n; i++)
		assert_true(rows[i].sweep_id != s2);
	free(rows);

	assert_int_equal(hb_db_instrument_affected(db, s.id, 0, &rows, &n), HB_OK);
	size_t sweeps = 0;
	for (size_t i = 0; i < n; i++)
		if (strcmp(rows[i].what, "sweep") == 0) {
			sweeps++;
			assert_string_equal(rows[i].role, "supply");
		}
	assert_int_equal(sweeps, 2);
	free(rows);

	/* a day from now: nothing was made since */
	assert_int_equal(hb_db_instrument_affected(db, a.id, (double)time(NULL) + 86400, &rows, &n), HB_OK);
	assert_int_equal(n, 0);
	free(rows);
	hb_db_close(db);

	/* the command says the same in JSON */
	run r;
	hb_run(&r, station_warn, "--db", db_path, "instrument", "affected", "A-1", "--since", "2000-01-01", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_error_t je;
	json_t *root = json_loads(r.out, 0, &je);
	assert_non_null(root);
	assert_int_equal(json_array_size(json_object_get(root, "sweeps")), 2);
	assert_int_equal(json_array_size(json_object_get(root, "verdicts")), 4);
	json_t *lots = json_object_get(root, "lots");
	assert_int_equal(json_array_size(lots), 1);
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, 0), "decision")), "reject");
	json_decref(root);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "instrument", "affected", "A-1", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

/* ---------------- the register's accuracy wins ---------------- */

/* Station file 0.3 %, register 0.07 %: the sweep records 0.07 % (and the
 * station's 0.3 % once the register's entry is cleared). */
static void test_register_accuracy_wins(void **state)
{
	(void)state;
	add_part();
	char station_acc[500];
	snprintf(station_acc, sizeof station_acc, "%s/acc.ini", tmpdir);
	write_file(station_acc, "[station]\nname = test-bench\n[limits]\nmax_current = 5\nmax_voltage = 2\n"
				"max_power = 10\nramp_rate = 50\n[accuracy]\nmeter = 0.3%\n");
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_warn, "--db", db_path, "identify", sim.lcr, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "instrument", "edit", "SL0001", "--accuracy", "0.07%", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "instrument", "edit", "SL0001", "--accuracy", "lots", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	run_sweep(&r, station_acc, &sim, "ACC-1", false);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "instrument", "edit", "SL0001", "--accuracy", "none", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	run_sweep(&r, station_acc, &sim, "ACC-2", false);
	assert_int_equal(r.status, 0);
	run_free(&r);
	sim_free(&sim);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &rows, &n), HB_OK);
	assert_int_equal(n, 2);
	for (size_t i = 0; i < n; i++) {
		hb_db_sweep sw;
		assert_int_equal(hb_db_sweep_get(db, rows[i].id, &sw), HB_OK);
		bool first = strcmp(sw.serial, "ACC-1") == 0;
		assert_true(fabs(sw.meter_accuracy_rel - (first ? 0.0007 : 0.003)) < 1e-12);
	}
	hb_db_sweeps_free(rows);
	hb_db_close(db);
}

/* The demo registers its simulated meter, and the reverse query on it
 * lists every sweep the demo stored (as `sweeps` lists them) and the lot
 * it rejected (the demo's scenario, src/cli/demo_extras.c: one unit of
 * the sample far above tolerance reaches Re). */
static void test_demo_meter_affected(void **state)
{
	(void)state;
	char out_dir[600], demo_db[700];
	snprintf(out_dir, sizeof out_dir, "%s/demo", tmpdir);
	snprintf(demo_db, sizeof demo_db, "%s/bench.db", out_dir);
	run r;
	hb_run(&r, station_warn, "demo", "--out", out_dir, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_warn, "--db", demo_db, "sweeps", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_error_t je;
	json_t *list = json_loads(r.out, 0, &je);
	assert_non_null(list);
	size_t stored = json_array_size(json_is_array(list) ? list : json_object_get(list, "sweeps"));
	json_decref(list);
	run_free(&r);
	assert_true(stored >= 4);
	hb_run(&r, station_warn, "--db", demo_db, "instrument", "affected", "SL0001", "--since", "2000-01-01", "--json",
	       NULL);
	assert_int_equal(r.status, 0);
	json_t *root = json_loads(r.out, 0, &je);
	assert_non_null(root);
	assert_int_equal(json_array_size(json_object_get(root, "sweeps")), stored);
	json_t *lots = json_object_get(root, "lots");
	assert_int_equal(json_array_size(lots), 1);
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, 0), "decision")), "reject");
	/* the demo gave its meter an invented calibration, in force today */
	assert_string_equal(json_string_value(json_object_get(json_object_get(root, "instrument"), "calibration")),
			    "in-calibration");
	json_decref(root);
	run_free(&r);
}

/* `fixture open` end to end against a simulated fixture holding nothing
 * but 20 pF of stray capacitance: the stored residual is that C (open:
 * Y = jwC, so C = B / w); a frequency out of range is a usage error. */
static void test_fixture_command(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, "--param", "fixture_state=1", "--param", "cfix=20pF", "--param", "noise=1e-7", NULL);
	run r;
	hb_run(&r, station_warn, "--db", db_path, "fixture", "open", "--lcr", sim.lcr, "--fixture", "jig-7", "--freq",
	       "10kHz,100kHz", "--measure-only", "--json", NULL);
	if (r.status != 0)
		print_error("%s\n", r.err);
	assert_int_equal(r.status, 0);
	json_error_t je;
	json_t *o = json_loads(r.out, 0, &je);
	assert_non_null(o);
	assert_string_equal(json_string_value(json_object_get(o, "method")), "henrybench");
	assert_string_equal(json_string_value(json_object_get(o, "fixture")), "jig-7");
	json_t *res = json_object_get(o, "residuals");
	assert_int_equal(json_array_size(res), 2);
	for (size_t i = 0; i < 2; i++)
		assert_true(fabs(json_number_value(json_object_get(json_array_get(res, i), "c_f")) / 20e-12 - 1) < 1e-4);
	json_decref(o);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "fixture", "open", "--lcr", sim.lcr, "--freq", "5Hz", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	hb_run(&r, station_warn, "--db", db_path, "fixture", "sideways", "--lcr", sim.lcr, NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	sim_free(&sim);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup(test_overdue_refused_then_allowed, store_setup),
		cmocka_unit_test_setup(test_overdue_warns, store_setup),
		cmocka_unit_test(test_cal_state_dates),
		cmocka_unit_test_setup(test_affected_lists_what_an_instrument_made, store_setup),
		cmocka_unit_test_setup(test_register_accuracy_wins, store_setup),
		cmocka_unit_test(test_demo_meter_affected),
		cmocka_unit_test_setup(test_fixture_command, store_setup),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
