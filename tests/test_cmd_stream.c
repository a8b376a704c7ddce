/* tests/test_cmd_stream.c - `plan` with the reduced table and the lot stream, `stream`, `history` and `inspect` under the switching rules, end to end */
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
#include "cli_json.h"
#include "data/mil_std_105e_examples.h"
#include "db/hb_db.h"
#include "src/quality/quality.h"

static char station[320];
static char db_path[400];
static int db_counter;

/* The whole line `line` appears in text (not a part of a longer line). */
static bool has_line(const char *text, const char *line)
{
	size_t n = strlen(line);
	for (const char *p = text; p && *p; p = strchr(p, '\n') ? strchr(p, '\n') + 1 : NULL)
		if (strncmp(p, line, n) == 0 && (p[n] == '\n' || p[n] == '\0'))
			return true;
	return false;
}

/* A line of text that starts with prefix, or NULL. */
static const char *line_starting(const char *text, const char *prefix)
{
	size_t n = strlen(prefix);
	for (const char *p = text; p && *p; p = strchr(p, '\n') ? strchr(p, '\n') + 1 : NULL)
		if (strncmp(p, prefix, n) == 0)
			return p;
	return NULL;
}

static const ref_example *example(int number)
{
	for (size_t i = 0; i < sizeof ref_examples / sizeof ref_examples[0]; i++)
		if (ref_examples[i].number == number)
			return &ref_examples[i];
	fail_msg("no reference example %d", number);
	return NULL;
}

/* The check, reference example 3: 1000 units, AQL 1.0, reduced ->
 * J, n 32, Ac 1, Re 3 (MIL-STD-105E Table II-C; confirmed by S1, S2 (Ac),
 * S5), with the accept-and-reinstate rule for d = 2 explained. */
static void test_plan_reduced_prints_the_gap_plan(void **state)
{
	(void)state;
	const ref_example *x = example(3);
	run r;
	hb_run(&r, station, "plan", "--severity", "reduced", "--lot-size", "1000", "--aql", "1.0", NULL);
	assert_int_equal(r.status, 0);
	char want[64];
	snprintf(want, sizeof want, "code letter       %c", x->letter);
	assert_true(has_line(r.out, want));
	snprintf(want, sizeof want, "sample size       %d", x->n);
	assert_true(has_line(r.out, want));
	snprintf(want, sizeof want, "acceptance Ac     %d  ", x->ac);
	assert_non_null(line_starting(r.out, want));
	snprintf(want, sizeof want, "rejection Re      %d  ", x->re);
	assert_non_null(line_starting(r.out, want));
	/* Ac 1 < d < Re 3: d = 2 accepts and reinstates normal. */
	assert_non_null(line_starting(r.out, "accept, reinstate normal: d = 2 nonconforming (Ac < d < Re)"));
	run_free(&r);

	hb_run(&r, station, "plan", "--severity", "reduced", "--lot-size", "1000", "--aql", "1.0", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	assert_int_equal((int)json_integer_value(json_object_get(j, "sample_size")), x->n);
	assert_int_equal((int)json_integer_value(json_object_get(j, "ac")), x->ac);
	assert_int_equal((int)json_integer_value(json_object_get(j, "re")), x->re);
	json_t *zone = json_object_get(j, "accept_reinstate_normal");
	assert_int_equal(json_array_size(zone), 2);
	assert_int_equal((int)json_integer_value(json_array_get(zone, 0)), 2);
	assert_int_equal((int)json_integer_value(json_array_get(zone, 1)), 2);
	assert_false(json_is_true(json_object_get(j, "uncertain")));
	json_decref(j);
	run_free(&r);
}

/* Reference example 22 (A at AQL 10, normal) is disputed between the
 * sources: `plan` says so, in text and JSON. */
static void test_plan_flags_an_uncertain_cell(void **state)
{
	(void)state;
	const ref_example *x = example(22);
	assert_true(x->disputed);
	char lot[16];
	snprintf(lot, sizeof lot, "%ld", x->lot_size);
	run r;
	hb_run(&r, station, "plan", "--lot-size", lot, "--aql", "10", NULL);
	assert_int_equal(r.status, 0);
	assert_non_null(line_starting(r.out, "UNCERTAIN cell    "));
	run_free(&r);
	hb_run(&r, station, "plan", "--lot-size", lot, "--aql", "10", "--json", NULL);
	json_t *j = parse_out(&r);
	assert_true(json_is_true(json_object_get(j, "uncertain")));
	assert_true(json_is_string(json_object_get(j, "uncertain_note")));
	json_decref(j);
	run_free(&r);
	/* A settled cell (example 1) carries no such line. */
	hb_run(&r, station, "plan", "--lot-size", "1000", "--aql", "1.0", NULL);
	assert_null(line_starting(r.out, "UNCERTAIN"));
	run_free(&r);
}

/* ------------------------------------------------------------------ */
/* a stored stream                                                     */

static int store_setup(void **state)
{
	(void)state;
	snprintf(db_path, sizeof db_path, "%s/stream-%d.db", tmpdir, ++db_counter);
	run r;
	/* The simulator's default part, 27 turns near 108 uH (docs/simulator.md). */
	hb_run(&r, station, "--db", db_path, "part", "add", "P-ST", "--nominal", "108uH", "--tol", "10%", "--freq",
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

/* A lot of 1000 at AQL 1.0, level II, decided with d nonconforming. */
static void put_lot(hb_db *db, const char *code, const char *supplier, hb_severity sev, int d)
{
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "P-ST", &part), HB_OK);
	hb_sampling_plan p;
	char err[200];
	assert_int_equal(hb_iso2859_plan(1000, 1.0, HB_LEVEL_II, sev, &p, err, sizeof err), HB_OK);
	int64_t id = 0;
	assert_int_equal(hb_db_lot_ensure(db, part.id, code, &id), HB_OK);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(db, id, &lot), HB_OK);
	lot.lot_size = 1000;
	lot.aql = 1.0;
	snprintf(lot.inspection_level, sizeof lot.inspection_level, "II");
	snprintf(lot.severity, sizeof lot.severity, "%s", hb_iso2859_severity_name(sev));
	snprintf(lot.code_letter, sizeof lot.code_letter, "%c", p.letter);
	lot.sample_size = p.sample_size;
	lot.accept_number = p.ac;
	lot.reject_number = p.re;
	for (int k = 1; k <= d; k++) {
		hb_db_inspection rec;
		hb_db_inspection_init(&rec);
		rec.lot_id = id;
		rec.sequence = k;
		rec.outcome = HB_DB_FAIL;
		assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);
	}
	lot.decision = d >= p.re ? HB_DB_LOT_REJECT : HB_DB_LOT_ACCEPT;
	assert_int_equal(hb_db_lot_update(db, &lot), HB_OK);
	assert_int_equal(hb_db_lot_set_stream(db, id, supplier, false), HB_OK);
	assert_int_equal(hb_db_lot_stamp_decided(db, id), HB_OK);
}

static hb_db *open_store(void)
{
	hb_db *db = NULL;
	if (hb_db_open(db_path, &db) != HB_OK)
		fail_msg("cannot open %s", db_path);
	return db;
}

/* Two lots of supplier ACME not accepted in a row: `plan --part --supplier`
 * gives the tightened plan (ISO 2859-1:1999 9.3.1; MIL-STD-105E 8.3.1),
 * reference example 2: J, n 80, 1/2; the other supplier stays normal
 * (example 1: 2/3). `history --json` lists both streams with severities. */
static void test_plan_and_history_follow_the_stream(void **state)
{
	(void)state;
	hb_db *db = open_store();
	put_lot(db, "A-1", "ACME", HB_SEVERITY_NORMAL, 3);
	put_lot(db, "B-1", "BETA", HB_SEVERITY_NORMAL, 0);
	put_lot(db, "A-2", "ACME", HB_SEVERITY_NORMAL, 5);
	hb_db_close(db);

	const ref_example *tight = example(2), *normal = example(1);
	run r;
	hb_run(&r, station, "--db", db_path, "plan", "--part", "P-ST", "--supplier", "ACME", "--lot-size", "1000", "--aql",
	       "1.0", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	assert_string_equal(json_string_value(json_object_get(j, "severity")), "tightened");
	assert_int_equal((int)json_integer_value(json_object_get(j, "sample_size")), tight->n);
	assert_int_equal((int)json_integer_value(json_object_get(j, "ac")), tight->ac);
	assert_int_equal((int)json_integer_value(json_object_get(j, "re")), tight->re);
	json_t *st = json_object_get(j, "lot_stream");
	assert_string_equal(json_string_value(json_object_get(st, "rule")), "normal-to-tightened");
	json_decref(j);
	run_free(&r);

	hb_run(&r, station, "--db", db_path, "plan", "--part", "P-ST", "--supplier", "BETA", "--lot-size", "1000", "--aql",
	       "1.0", "--json", NULL);
	j = parse_out(&r);
	assert_string_equal(json_string_value(json_object_get(j, "severity")), "normal");
	assert_int_equal((int)json_integer_value(json_object_get(j, "ac")), normal->ac);
	json_decref(j);
	run_free(&r);

	hb_run(&r, station, "--db", db_path, "history", "P-ST", "--json", NULL);
	assert_int_equal(r.status, 0);
	j = parse_out(&r);
	json_t *streams = json_object_get(j, "lot_streams");
	assert_int_equal(json_array_size(streams), 2);
	json_t *acme = json_array_get(streams, 0); /* suppliers sorted */
	assert_string_equal(json_string_value(json_object_get(acme, "supplier")), "ACME");
	assert_string_equal(json_string_value(json_object_get(acme, "severity_next")), "tightened");
	json_t *lots = json_object_get(acme, "lots");
	assert_int_equal(json_array_size(lots), 2);
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, 0), "lot")), "A-1");
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, 0), "severity")), "normal");
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, 1), "severity_after")), "tightened");
	json_decref(j);
	run_free(&r);

	/* The text shows the lot sequence with each lot's severity. */
	hb_run(&r, station, "--db", db_path, "history", "P-ST", NULL);
	assert_int_equal(r.status, 0);
	assert_true(has_line(r.out, "lot stream, supplier ACME (switching rules, ISO 2859-1:1999 clause 9):"));
	assert_non_null(line_starting(r.out, "lot stream of P-ST, supplier ACME (2 decided lots): next lot on tightened inspection"));
	run_free(&r);
}

/* ISO 2859-1:1999 9.4: 5 lots not accepted on tightened discontinue
 * inspection; `inspect` refuses a new lot (exit 1, nothing begun, no bench
 * contacted) until `stream --resume-sampling` records the supplier's
 * action; then the next lot is tightened. */
static void test_discontinued_stream_refuses_lots(void **state)
{
	(void)state;
	hb_db *db = open_store();
	put_lot(db, "C-1", "ACME", HB_SEVERITY_NORMAL, 3);
	put_lot(db, "C-2", "ACME", HB_SEVERITY_NORMAL, 3);
	for (int i = 3; i <= 7; i++) {
		char code[8];
		snprintf(code, sizeof code, "C-%d", i);
		put_lot(db, code, "ACME", HB_SEVERITY_TIGHTENED, 2); /* tightened 1/2: d 2 rejects */
	}
	hb_db_close(db);
	run r;
	hb_run(&r, station, "--db", db_path, "inspect", "--part", "P-ST", "--supplier", "ACME", "--lot", "C-8",
	       "--lot-size", "1000", "--aql", "1.0", "--lcr", "tcp://127.0.0.1:1", "--supply", "tcp://127.0.0.1:1",
	       "--first-serial", "C8-001", "--auto", "--to", "0.8", NULL);
	assert_int_equal(r.status, 1);
	assert_non_null(strstr(r.err, "discontinued"));
	run_free(&r);
	db = open_store();
	hb_db_part part;
	hb_db_lot lot;
	assert_int_equal(hb_db_part_get(db, "P-ST", &part), HB_OK);
	assert_int_equal(hb_db_lot_find(db, part.id, "C-8", &lot), HB_ERR_NOTFOUND);
	hb_db_close(db);

	hb_run(&r, station, "--db", db_path, "plan", "--part", "P-ST", "--supplier", "ACME", "--lot-size", "1000",
	       "--aql", "1.0", NULL);
	assert_int_equal(r.status, 1);
	run_free(&r);
	hb_run(&r, station, "--db", db_path, "stream", "P-ST", "--supplier", "ACME", "--resume-sampling",
	       "winding tension fixed, 8D report 41", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	assert_string_equal(json_string_value(json_object_get(j, "severity_next")), "tightened");
	assert_string_equal(json_string_value(json_object_get(j, "rule")), "resume");
	json_decref(j);
	run_free(&r);
	/* Resuming a stream that is not discontinued is refused. */
	hb_run(&r, station, "--db", db_path, "stream", "P-ST", "--supplier", "ACME", "--resume-sampling", "again", NULL);
	assert_int_equal(r.status, 1);
	run_free(&r);
}

/* A lot inspected at the bench takes the stream's severity and records its
 * supplier: ACME's stream is tightened (9.3.1), so a lot of 8 at AQL 6.5
 * gets Table II-B's plan for A at 6.5 (down arrow to B: n 3, 0/1; the
 * reference Table II-B). The simulator's part conforms: accepted. */
static void test_inspect_uses_the_stream_severity(void **state)
{
	(void)state;
	hb_db *db = open_store();
	put_lot(db, "D-1", "ACME", HB_SEVERITY_NORMAL, 3);
	put_lot(db, "D-2", "ACME", HB_SEVERITY_NORMAL, 3);
	hb_db_close(db);
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station, "--db", db_path, "inspect", "--part", "P-ST", "--supplier", "ACME", "--lot", "D-3",
	       "--lot-size", "8", "--aql", "6.5", "--lcr", sim.lcr, "--supply", sim.supply, "--first-serial", "D3-001",
	       "--auto", "--to", "0.8", "--steps", "4", NULL);
	sim_stop(&sim);
	if (r.status != 0)
		fail_msg("inspect exited %d: %s", r.status, r.err);
	run_free(&r);
	sim_free(&sim);
	db = open_store();
	hb_db_part part;
	hb_db_lot lot;
	assert_int_equal(hb_db_part_get(db, "P-ST", &part), HB_OK);
	assert_int_equal(hb_db_lot_find(db, part.id, "D-3", &lot), HB_OK);
	assert_string_equal(lot.severity, "tightened");
	assert_int_equal(lot.sample_size, 3);
	assert_int_equal(lot.accept_number, 0);
	assert_int_equal(lot.reject_number, 1);
	assert_int_equal(lot.decision, HB_DB_LOT_ACCEPT);
	char supplier[HB_DB_ID_LEN];
	assert_int_equal(hb_db_lot_get_stream(db, lot.id, supplier, sizeof supplier, NULL), HB_OK);
	assert_string_equal(supplier, "ACME");
	hb_db_close(db);
}

/* The responsible authority's approval (ISO 2859-1:1999 9.3.3 c) is
 * recorded and shown; with a score below 30 the stream stays normal. */
static void test_stream_records_approval(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station, "--db", db_path, "stream", "P-ST", "--supplier", "ACME", "--approve-reduced",
	       "quality manager, memo 7", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	assert_true(json_is_true(json_object_get(j, "reduced_approved")));
	assert_string_equal(json_string_value(json_object_get(j, "severity_next")), "normal");
	json_decref(j);
	run_free(&r);
	hb_run(&r, station, "--db", db_path, "stream", "P-ST", "--supplier", "ACME", "--approve-reduced", "", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("cmd-stream") != 0)
		return -1;
	snprintf(station, sizeof station, "%s/station.ini", tmpdir);
	write_file(station, "# test station\n[station]\nname = test-bench\noperator = tester\n"
			    "[limits]\nmax_current = 10\nmax_voltage = 2\nmax_power = 20\nramp_rate = 50\nconfirm_above = 1\n");
	return 0;
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_plan_reduced_prints_the_gap_plan),
		cmocka_unit_test(test_plan_flags_an_uncertain_cell),
		cmocka_unit_test_setup_teardown(test_plan_and_history_follow_the_stream, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_discontinued_stream_refuses_lots, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_inspect_uses_the_stream_severity, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_stream_records_approval, store_setup, store_teardown),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
