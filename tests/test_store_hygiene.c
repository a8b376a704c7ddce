/* tests/test_store_hygiene.c - no store created by a read or a dry run, writability checked first, sweep and part delete refused where records depend (unless forced, logged), a decided lot's size kept, --fix refused on a frequency sweep */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cmocka.h>

#include "cli_fixture.h"
#include "db/hb_db.h"

static char db_path[400];
static int demo_counter;

/* A fresh store from `demo`: a part, bias sweeps with verdicts, a frequency
 * sweep, and a decided lot whose inspection records name their sweeps. */
static int demo_setup(void **state)
{
	(void)state;
	char dir[400];
	snprintf(dir, sizeof dir, "%s/demo-%d", tmpdir, ++demo_counter);
	run r;
	hb_run(&r, station_bare, "demo", "--out", dir, NULL);
	int st = r.status;
	run_free(&r);
	snprintf(db_path, sizeof db_path, "%s/bench.db", dir);
	return st == 0 ? 0 : -1;
}

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("store-hygiene");
}

static hb_db *open_store(void)
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	return db;
}

/* The first sweep of the kind with (or without) inspection records naming it
 * and, for a bias sweep, with at least one verdict. */
static int64_t find_sweep(hb_db *db, hb_db_sweep_kind kind, bool inspected, hb_db_sweep_deps *deps)
{
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.kind = (int)kind;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	int64_t id = 0;
	for (size_t i = 0; i < n && !id; i++) {
		assert_int_equal(hb_db_sweep_dependents(db, list[i].id, deps), HB_OK);
		if ((deps->verdicts > 0 || kind == HB_DB_SWEEP_FREQUENCY) && (deps->inspections > 0) == inspected)
			id = list[i].id;
	}
	hb_db_sweeps_free(list);
	if (!id)
		fail_msg("the demo store has no such sweep");
	return id;
}

/* SQLite opens without SQLITE_OPEN_CREATE only a file that exists
 * (sqlite.org/c3ref/open.html); issue 15 item 5: every command that only
 * reads, and every dry run, is an error naming the path, exit 2, and
 * leaves no file behind. */
static void test_reads_and_dry_runs_create_no_store(void **state)
{
	(void)state;
	char missing[500];
	snprintf(missing, sizeof missing, "%s/mistyped.db", tmpdir);
	const char *const cmds[][12] = {
		{ "sweeps", NULL },
		{ "sweeps", "--csv", NULL },
		{ "show", "1", NULL },
		{ "part", "list", NULL },
		{ "part", "show", "P", NULL },
		{ "history", "P", NULL },
		{ "compare", "1", "2", NULL },
		{ "export", "1", "--csv", NULL },
		{ "fit", "1", NULL },
		{ "watch", "1", NULL },
		{ "sweep", "delete", "1", NULL },
		{ "part", "delete", "P", NULL },
		{ "part", "edit", "P", "--tol", "5%", NULL },
		{ "import", "/dev/null", "--part", "P", "--unit", "U", NULL },
		{ "sweep", "--part", "P", "--unit", "U", "--lcr", "sim:lcr", "--supply", "sim:supply", "--to", "1",
		  "--dry-run" },
		{ "fsweep", "--part", "P", "--unit", "U", "--lcr", "sim:lcr", "--from", "1k", "--to", "1M", "--dry-run" },
	};
	for (size_t c = 0; c < sizeof cmds / sizeof cmds[0]; c++) {
		char *argv[20] = { NULL, "--db", missing };
		int n = 3;
		for (int k = 0; k < 12 && cmds[c][k]; k++)
			argv[n++] = (char *)cmds[c][k];
		argv[n] = NULL;
		run r;
		hb_runv(&r, station_bare, STDIN_NULL, NULL, argv);
		if (r.status != 2 || !strstr(r.err, missing))
			fail_msg("%s: exit %d, stderr '%s' (want 2 naming %s)", cmds[c][0], r.status, r.err, missing);
		if (access(missing, F_OK) == 0)
			fail_msg("%s created %s", cmds[c][0], missing);
		run_free(&r);
	}
}

/* A handle that cannot write says so before anything else happens
 * (SQLite: a read-only connection cannot begin a write transaction,
 * sqlite.org/lang_transaction.html), and a writable one passes. */
static void test_writability_checked(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open_as(db_path, HB_DB_OPEN_READONLY, &db), HB_OK);
	assert_int_equal(hb_db_check_writable(db), HB_ERR_IO);
	assert_non_null(strstr(hb_db_errmsg(db), db_path));
	hb_db_close(db);
	assert_int_equal(hb_db_open_as(db_path, HB_DB_OPEN_EXISTING, &db), HB_OK);
	assert_int_equal(hb_db_check_writable(db), HB_OK);
	hb_db_close(db);

	/* A store file the user may not write (a non-root user only: root
	 * writes through a 0444 mode): the sweep stops before any instrument. */
	if (geteuid() == 0)
		return;
	sim_server sim;
	sim_start(&sim, NULL);
	assert_int_equal(chmod(db_path, 0444), 0);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "sweep", "--part", "HBX-108G", "--unit", "RO-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "1", "--yes", NULL);
	assert_int_equal(r.status, 1);
	assert_non_null(strstr(r.err, "no instrument was opened"));
	run_free(&r);
	sim_stop(&sim);
	assert_null(strstr(sim.log, "*IDN?"));
	assert_int_equal(chmod(db_path, 0644), 0);
	sim_free(&sim);
}

/* A sweep with verdicts, named by a decided lot's inspection record, is kept
 * unless forced with a reason; forced, it goes with its points, the lot's
 * record keeps its outcome, and the deletions log says who, what and why. */
static void test_sweep_delete(void **state)
{
	(void)state;
	hb_db *db = open_store();
	hb_db_sweep_deps deps;
	int64_t id = find_sweep(db, HB_DB_SWEEP_BIAS, true, &deps);
	assert_true(deps.points > 0);
	hb_db_close(db);
	char ids[32];
	snprintf(ids, sizeof ids, "%lld", (long long)id);

	run r;
	hb_run(&r, station_bare, "--db", db_path, "sweep", "delete", ids, NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "kept"));
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "sweep", "delete", ids, "--force", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--reason"));
	run_free(&r);
	db = open_store();
	hb_db_sweep_deps still;
	assert_int_equal(hb_db_sweep_dependents(db, id, &still), HB_OK);
	assert_int_equal(still.points, deps.points);
	assert_int_equal(still.verdicts, deps.verdicts);
	hb_db_deletion *log = NULL;
	size_t nlog = 0;
	assert_int_equal(hb_db_deletion_list(db, &log, &nlog), HB_OK);
	assert_int_equal(nlog, 0);
	hb_db_deletions_free(log);
	hb_db_close(db);

	hb_run(&r, station_bare, "--db", db_path, "sweep", "delete", ids, "--force", "--reason", "wrong fixture", NULL);
	if (r.status != 0)
		fail_msg("forced delete exited %d: %s", r.status, r.err);
	run_free(&r);
	db = open_store();
	assert_int_equal(hb_db_sweep_dependents(db, id, &still), HB_ERR_NOTFOUND);
	hb_db_point *pts = NULL;
	size_t npts = 0;
	assert_int_equal(hb_db_points_get(db, id, &pts, &npts), HB_OK);
	assert_int_equal(npts, 0);
	hb_db_points_free(pts);
	assert_int_equal(hb_db_deletion_list(db, &log, &nlog), HB_OK);
	assert_int_equal(nlog, 1);
	assert_true(log[0].forced);
	assert_string_equal(log[0].reason, "wrong fixture");
	char what[48];
	snprintf(what, sizeof what, "sweep %lld (bias,", (long long)id);
	assert_memory_equal(log[0].what, what, strlen(what));
	hb_db_deletions_free(log);
	/* The lot's record of that sample stays, unlinked, and says why. */
	hb_db_sweep *s = calloc(1, sizeof *s);
	assert_non_null(s);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	hb_db_lot lot;
	bool found = false;
	for (size_t i = 0; i < n && !found; i++)
		found = list[i].lot_code[0] && hb_db_lot_find(db, list[i].part_id, list[i].lot_code, &lot) == HB_OK;
	hb_db_sweeps_free(list);
	free(s);
	assert_true(found);
	hb_db_inspection *recs = NULL;
	size_t nrec = 0;
	assert_int_equal(hb_db_inspection_list(db, lot.id, &recs, &nrec), HB_OK);
	int unlinked = 0;
	for (size_t i = 0; i < nrec; i++) {
		char note[64];
		snprintf(note, sizeof note, "sweep %lld deleted", (long long)id);
		if (recs[i].sweep_id == 0 && strstr(recs[i].note, note))
			unlinked++;
	}
	assert_int_equal(unlinked, 1);
	hb_db_inspections_free(recs);
	hb_db_close(db);
}

/* A part with verdicts and a decided lot is kept unless forced; forced, the
 * part, its sweeps and its lots are gone and the deletion logged. */
static void test_part_delete(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "delete", "HBX-108G", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "kept"));
	run_free(&r);
	hb_db *db = open_store();
	hb_db_part p;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &p), HB_OK);
	hb_db_close(db);
	hb_run(&r, station_bare, "--db", db_path, "part", "delete", "HBX-108G", "--force", "--reason", "demo data", NULL);
	if (r.status != 0)
		fail_msg("forced part delete exited %d: %s", r.status, r.err);
	run_free(&r);
	db = open_store();
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &p), HB_ERR_NOTFOUND);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 0);
	hb_db_sweeps_free(list);
	hb_db_deletion *log = NULL;
	size_t nlog = 0;
	assert_int_equal(hb_db_deletion_list(db, &log, &nlog), HB_OK);
	assert_int_equal(nlog, 1);
	assert_memory_equal(log[0].what, "part HBX-108G:", strlen("part HBX-108G:"));
	assert_string_equal(log[0].reason, "demo data");
	hb_db_deletions_free(log);
	hb_db_close(db);
	/* a part without anything depending on it goes without --force */
	hb_run(&r, station_bare, "--db", db_path, "part", "add", "EMPTY-1", "--nominal", "1uH", "--tol", "10%", "--freq",
	       "1kHz", "--level", "0.1V", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "part", "delete", "EMPTY-1", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
}

/* A decided lot keeps the size it was decided with (ISO 2859-1: the sample
 * size follows from the lot size, so a decision holds for that size only):
 * a different --lot-size is exit 2 naming both, before any instrument. */
static void test_decided_lot_size_kept(void **state)
{
	(void)state;
	hb_db *db = open_store();
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &part), HB_OK);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	hb_db_lot lot;
	bool found = false;
	for (size_t i = 0; i < n && !found; i++)
		found = list[i].lot_code[0] && hb_db_lot_find(db, part.id, list[i].lot_code, &lot) == HB_OK;
	hb_db_sweeps_free(list);
	hb_db_close(db);
	assert_true(found);
	assert_int_not_equal(lot.decision, HB_DB_LOT_OPEN);
	char size[32], aql[32];
	snprintf(size, sizeof size, "%ld", lot.lot_size + 1);
	snprintf(aql, sizeof aql, "%g", lot.aql);
	run r;
	/* port 1 answers nobody: reaching the instruments would be exit 1 */
	hb_run(&r, station_bare, "--db", db_path, "inspect", "--part", "HBX-108G", "--lot", lot.lot_code, "--lot-size",
	       size, "--aql", aql, "--level", lot.inspection_level, "--lcr", "tcp://127.0.0.1:1", "--supply",
	       "tcp://127.0.0.1:1", "--yes", NULL);
	assert_int_equal(r.status, 2);
	char old_size[64], new_size[64];
	snprintf(old_size, sizeof old_size, "with lot size %ld", lot.lot_size);
	snprintf(new_size, sizeof new_size, "--lot-size %ld", lot.lot_size + 1);
	assert_non_null(strstr(r.err, old_size));
	assert_non_null(strstr(r.err, new_size));
	run_free(&r);
	db = open_store();
	hb_db_lot after;
	assert_int_equal(hb_db_lot_get(db, lot.id, &after), HB_OK);
	assert_int_equal(after.lot_size, lot.lot_size);
	hb_db_close(db);
}

/* --fix holds a core parameter of the bias model; a frequency sweep has none
 * to hold: said, exit 2, no fit stored. */
static void test_fix_on_frequency_sweep_refused(void **state)
{
	(void)state;
	hb_db *db = open_store();
	hb_db_sweep_deps deps;
	int64_t id = find_sweep(db, HB_DB_SWEEP_FREQUENCY, false, &deps);
	long fits = deps.fits;
	hb_db_close(db);
	char ids[32];
	snprintf(ids, sizeof ids, "%lld", (long long)id);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "fit", ids, "--fix", "mu_i=2000", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "does not apply to frequency sweep"));
	run_free(&r);
	db = open_store();
	assert_int_equal(hb_db_sweep_dependents(db, id, &deps), HB_OK);
	assert_int_equal(deps.fits, fits);
	hb_db_close(db);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_reads_and_dry_runs_create_no_store),
		cmocka_unit_test_setup(test_writability_checked, demo_setup),
		cmocka_unit_test_setup(test_sweep_delete, demo_setup),
		cmocka_unit_test_setup(test_part_delete, demo_setup),
		cmocka_unit_test_setup(test_decided_lot_size_kept, demo_setup),
		cmocka_unit_test_setup(test_fix_on_frequency_sweep_refused, demo_setup),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
