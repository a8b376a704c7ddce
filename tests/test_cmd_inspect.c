/* tests/test_cmd_inspect.c - `inspect` on the command line (prompts answered through stdin, --auto, the plan it stores), the confirm_above question, --stop-below; against `henrybench sim` over TCP */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "data/mil_std_105e_single.h"
#include "db/hb_db.h"

/* confirm_above = 1 A: sweeps above 1 A must be confirmed. */
static char station[320];
static char db_path[400];
static int db_counter;

static int store_setup(void **state)
{
	(void)state;
	snprintf(db_path, sizeof db_path, "%s/inspect-%d.db", tmpdir, ++db_counter);
	run r;
	/* The simulator's default part is a 27-turn gapped ferrite choke near
	 * 108 uH (docs/simulator.md): nominal 108 uH +- 10 % holds it. */
	hb_run(&r, station, "--db", db_path, "part", "add", "P-CLI", "--nominal", "108uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.5V", NULL);
	int st = r.status;
	run_free(&r);
	return st == 0 ? 0 : -1;
}

static int store_teardown(void **state)
{
	(void)state;
	kill_leftovers();
	return 0;
}

static hb_db *open_store(void)
{
	hb_db *db = NULL;
	if (hb_db_open(db_path, &db) != HB_OK)
		fail_msg("cannot open %s", db_path);
	return db;
}

static bool lot_of(hb_db *db, const char *code, hb_db_lot *lot)
{
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "P-CLI", &part), HB_OK);
	return hb_db_lot_find(db, part.id, code, lot) == HB_OK;
}

/* ------------------------------------------------------------------ */
/* inspect --auto                                                      */

/* A lot of 10 at AQL 10, level II, normal: MIL-STD-105E Table I gives
 * letter B (9 to 15 units), Table II-A the plan for B at 10 after its arrow (copied in
 * tests/data/mil_std_105e_single.h; ISO 2859-1 has the same). Every unit
 * is the simulator's conforming part, so every sample unit passes and the
 * lot is accepted after exactly n units. */
static void test_inspect_auto_follows_the_table_plan(void **state)
{
	(void)state;
	const ref_plan *want = NULL;
	for (size_t i = 0; i < sizeof ref_normal / sizeof ref_normal[0]; i++)
		if (ref_normal[i].letter == 'B' && strcmp(ref_normal[i].aql, "10") == 0)
			want = &ref_normal[i];
	assert_non_null(want);
	assert_false(want->uncertain);
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station, "--db", db_path, "inspect", "--part", "P-CLI", "--lot", "LOT-A", "--lot-size", "10", "--aql",
	       "10", "--lcr", sim.lcr, "--supply", sim.supply, "--first-serial", "A-0001", "--auto", "--to", "0.8",
	       "--steps", "4", NULL);
	sim_stop(&sim);
	if (r.status != 0)
		fail_msg("inspect --auto exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_db *db = open_store();
	hb_db_lot lot;
	assert_true(lot_of(db, "LOT-A", &lot));
	/* (B at AQL 10 is an arrow down: the plan is the next row's, so the
	 * stored letter is that row's; n, Ac and Re say which.) */
	assert_int_equal(lot.sample_size, want->n);
	assert_int_equal(lot.accept_number, want->ac);
	assert_int_equal(lot.reject_number, want->re);
	assert_int_equal(lot.decision, HB_DB_LOT_ACCEPT);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(db, lot.id, &recs, &n), HB_OK);
	assert_int_equal(n, (size_t)want->n);
	for (size_t i = 0; i < n; i++) {
		char serial[32];
		snprintf(serial, sizeof serial, "A-%04zu", i + 1);
		assert_string_equal(recs[i].serial, serial);
		assert_int_equal(recs[i].outcome, HB_DB_PASS);
	}
	hb_db_inspections_free(recs);
	hb_db_close(db);
	sim_free(&sim);
}

/* --auto with no serial source: nobody could name the units (the help:
 * "needs a serial source"); usage error, nothing begun. */
static void test_inspect_auto_needs_serials(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station, "--db", db_path, "inspect", "--part", "P-CLI", "--lot", "LOT-X", "--lot-size", "10", "--aql",
	       "10", "--lcr", "tcp://127.0.0.1:1", "--supply", "tcp://127.0.0.1:1", "--auto", "--to", "0.8", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	hb_db *db = open_store();
	hb_db_lot lot;
	assert_false(lot_of(db, "LOT-X", &lot));
	hb_db_close(db);
}

/* ------------------------------------------------------------------ */
/* inspect prompts                                                     */

/* The prompt's answers (the command's help): a typed serial replaces the
 * proposed one, 's' records the position skipped, 'q' pauses with the lot
 * open (exit 1, docs/inspection.md). The same command resumes at the
 * first position not recorded, with the serial --first-serial gives it. */
static void test_inspect_prompts_through_stdin(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run_input(&r, station, STDIN_TEXT, "MY-7\ns\nq\n", "--db", db_path, "inspect", "--part", "P-CLI", "--lot",
		     "LOT-B", "--lot-size", "10", "--aql", "10", "--lcr", sim.lcr, "--supply", sim.supply,
		     "--first-serial", "B-0001", "--to", "0.8", "--steps", "4", NULL);
	int paused = r.status;
	run_free(&r);
	hb_db *db = open_store();
	hb_db_lot lot;
	assert_true(lot_of(db, "LOT-B", &lot));
	assert_int_equal(lot.decision, HB_DB_LOT_OPEN);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(db, lot.id, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_int_equal(recs[0].sequence, 1);
	assert_string_equal(recs[0].serial, "MY-7");
	assert_int_equal(recs[0].outcome, HB_DB_PASS);
	assert_int_equal(recs[1].sequence, 2);
	assert_int_equal(recs[1].outcome, HB_DB_SKIPPED);
	hb_db_inspections_free(recs);
	hb_db_close(db);
	if (paused != 1)
		fail_msg("a paused inspection exited %d", paused);

	/* Resume, unattended: position 3 on, serials counted from B-0003. */
	hb_run(&r, station, "--db", db_path, "inspect", "--part", "P-CLI", "--lot", "LOT-B", "--lot-size", "10", "--aql",
	       "10", "--lcr", sim.lcr, "--supply", sim.supply, "--first-serial", "B-0001", "--auto", "--to", "0.8",
	       "--steps", "4", NULL);
	sim_stop(&sim);
	if (r.status != 0)
		fail_msg("resumed inspect exited %d: %s", r.status, r.err);
	run_free(&r);
	db = open_store();
	assert_true(lot_of(db, "LOT-B", &lot));
	assert_int_equal(lot.decision, HB_DB_LOT_ACCEPT);
	assert_int_equal(hb_db_inspection_list(db, lot.id, &recs, &n), HB_OK);
	assert_true(n >= 3);
	assert_int_equal(recs[2].sequence, 3);
	assert_string_equal(recs[2].serial, "B-0003");
	/* tested units: all but the skipped one */
	long tested = 0;
	for (size_t i = 0; i < n; i++)
		tested += recs[i].outcome != HB_DB_SKIPPED;
	assert_int_equal(tested, lot.sample_size);
	hb_db_inspections_free(recs);
	hb_db_close(db);
	sim_free(&sim);
}

/* ------------------------------------------------------------------ */
/* confirm_above                                                       */

static int sweeps_stored(void)
{
	hb_db *db = open_store();
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *sw = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &sw, &n), HB_OK);
	hb_db_sweeps_free(sw);
	hb_db_close(db);
	return (int)n;
}

/* One sweep to `to` with stdin as given; returns the exit status. The
 * simulator's log says whether the output was ever switched on. */
static int sweep_asking(const char *to, stdin_kind kind, const char *answer, bool yes, bool *switched_on)
{
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	char unit[32];
	static int units;
	snprintf(unit, sizeof unit, "C-%d", ++units);
	if (yes)
		hb_run_input(&r, station, kind, answer, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", unit, "--lcr",
			     sim.lcr, "--supply", sim.supply, "--to", to, "--steps", "3", "--no-fit", "--yes", NULL);
	else
		hb_run_input(&r, station, kind, answer, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", unit, "--lcr",
			     sim.lcr, "--supply", sim.supply, "--to", to, "--steps", "3", "--no-fit", NULL);
	sim_stop(&sim);
	int status = r.status;
	if (getenv("HB_TEST_VERBOSE"))
		print_message("sweep to %s: exit %d: %s\n", to, status, r.err);
	*switched_on = strstr(sim.log, "supply output ON") != NULL;
	run_free(&r);
	sim_free(&sim);
	return status;
}

/* The station's confirm_above (docs/sweeps.md, "Ask before high
 * currents"): above it the sweep asks for `yes` on a terminal; without a
 * terminal it refuses unless --yes; not confirmed is exit 2, nothing
 * stored, nothing switched on. */
static void test_confirm_above(void **state)
{
	(void)state;
	bool on = true;
	/* no terminal, no --yes: refused */
	assert_int_equal(sweep_asking("2", STDIN_NULL, NULL, false, &on), 2);
	assert_false(on);
	/* no terminal, even with "yes" piped in: a pipe is nobody at the bench */
	assert_int_equal(sweep_asking("2", STDIN_TEXT, "yes\n", false, &on), 2);
	assert_false(on);
	int asked = 0;
	if (terminal_available()) {
		/* a terminal answering no */
		assert_int_equal(sweep_asking("2", STDIN_TERMINAL, "no\n", false, &on), 2);
		assert_false(on);
		assert_int_equal(sweeps_stored(), 0);
		/* a terminal answering yes */
		assert_int_equal(sweep_asking("2", STDIN_TERMINAL, "yes\n", false, &on), 0);
		assert_true(on);
		assert_int_equal(sweeps_stored(), 1);
		asked = 1;
	} else {
		print_message("no pseudo-terminals here: the answers on a terminal are not tried\n");
	}
	/* --yes without a terminal */
	assert_int_equal(sweep_asking("2", STDIN_NULL, NULL, true, &on), 0);
	assert_true(on);
	/* at or below the threshold nothing is asked */
	assert_int_equal(sweep_asking("0.8", STDIN_NULL, NULL, false, &on), 0);
	assert_true(on);
	assert_int_equal(sweeps_stored(), 2 + asked);
}

/* ------------------------------------------------------------------ */
/* --stop-below                                                        */

/* docs/sweeps.md: `--stop-below 50%` ends the sweep early, as complete,
 * once L falls under that share of its first value. The simulated choke
 * (Js 0.39 T, 0.5 mm gap) saturates well before 8 A, so the stop must
 * come: every point before the last holds at least half the first L, the
 * last one is under it, and the plan's later points are not taken. */
static void test_stop_below(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "S-1", "--lcr", sim.lcr, "--supply",
	       sim.supply, "--to", "8", "--steps", "33", "--stop-below", "50%", "--max-current", "9", "--yes",
	       "--no-fit", NULL);
	sim_stop(&sim);
	if (r.status != 0)
		fail_msg("sweep --stop-below exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_db *db = open_store();
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *sw = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &sw, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(sw[0].status, HB_DB_COMPLETE);
	hb_db_point *pts = NULL;
	size_t k = 0;
	assert_int_equal(hb_db_points_get(db, sw[0].id, &pts, &k), HB_OK);
	assert_true(k >= 3 && k < 33);
	double first = fabs(pts[0].primary);
	for (size_t i = 0; i + 1 < k; i++)
		if (!(fabs(pts[i].primary) >= 0.5 * first))
			fail_msg("point %zu: L %.4g under half the first %.4g, yet the sweep went on", i + 1,
				 pts[i].primary, first);
	if (!(fabs(pts[k - 1].primary) < 0.5 * first))
		fail_msg("the sweep stopped at L %.4g, not under half the first %.4g", pts[k - 1].primary, first);
	hb_db_points_free(pts);
	hb_db_sweeps_free(sw);
	hb_db_close(db);
	sim_free(&sim);
}

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("cmd-inspect") != 0)
		return -1;
	snprintf(station, sizeof station, "%s/station.ini", tmpdir);
	write_file(station, "# test station\n[station]\nname = test-bench\noperator = tester\n"
			    "[limits]\nmax_current = 10\nmax_voltage = 2\nmax_power = 20\nramp_rate = 50\nconfirm_above = 1\n");
	return 0;
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_inspect_auto_follows_the_table_plan, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_inspect_auto_needs_serials, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_inspect_prompts_through_stdin, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_confirm_above, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_stop_below, store_setup, store_teardown),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
