/* tests/test_store_plans.c - every query the store runs, on the demo's store, read through an index: no full scan of a table that grows with the sweeps */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>

#include <cmocka.h>

#include "db/hb_db.h"

static char dir[256], path[320];

static int make_demo_store(void **state)
{
	(void)state;
	const char *bin = getenv("HENRYBENCH_BIN");
	snprintf(dir, sizeof dir, "/tmp/hb-test-plans-XXXXXX");
	if (!mkdtemp(dir))
		return -1;
	char cmd[1024];
	snprintf(cmd, sizeof cmd, "'%s' demo --out '%s/out' >'%s/demo.log' 2>&1", bin ? bin : "./henrybench", dir, dir);
	if (system(cmd) != 0)
		return -1;
	snprintf(path, sizeof path, "%s/out/bench.db", dir);
	return 0;
}

static int remove_store(void **state)
{
	(void)state;
	char cmd[400];
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
	return system(cmd) == 0 ? 0 : -1;
}

/*
 * A query that reads a growing table from end to end costs more with every
 * sweep stored: the issue measured 30-46 ms per fit at 40,000 sweeps for one
 * such plan. SQLite's EXPLAIN QUERY PLAN names it "SCAN t" without an index
 * (SQLite documentation, "EXPLAIN QUERY PLAN"). Every read function of the
 * store's API is called here, with each of its filters, so that every
 * statement is prepared under the watch.
 */
static void test_no_full_scans(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	assert_int_equal(hb_db_plan_watch(db, true), HB_OK);

	hb_db_part *parts = NULL;
	size_t n_parts = 0;
	assert_int_equal(hb_db_part_list(db, &parts, &n_parts), HB_OK);
	assert_true(n_parts > 0);
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, parts[0].part_number, &part), HB_OK);
	assert_int_equal(hb_db_part_get_id(db, part.id, &part), HB_OK);

	/* every combination of the sweep list's filters, the way sweeps, fit and report combine them */
	for (unsigned mask = 0; mask < 64; mask++) {
		hb_db_sweep_filter f;
		hb_db_sweep_filter_init(&f);
		if (mask & 1)
			f.part_number = part.part_number;
		if (mask & 2)
			f.serial = "A2611-0001";
		if (mask & 4)
			f.lot_code = "LOT-2611-A";
		if (mask & 8)
			f.status = HB_DB_COMPLETE;
		if (mask & 16)
			f.kind = HB_DB_SWEEP_FREQUENCY;
		if (mask & 32)
			f.since = 1;
		f.limit = 50;
		hb_db_sweep *list = NULL;
		size_t n = 0;
		assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
		hb_db_sweeps_free(list);
	}
	hb_db_sweep *all = NULL;
	size_t n_sweeps = 0;
	assert_int_equal(hb_db_sweep_list(db, NULL, &all, &n_sweeps), HB_OK);
	assert_true(n_sweeps > 0);
	int64_t sweep_id = all[0].id, unit_id = all[0].unit_id;
	hb_db_sweeps_free(all);

	hb_db_sweep sw;
	assert_int_equal(hb_db_sweep_get(db, sweep_id, &sw), HB_OK);
	hb_db_unit unit;
	assert_int_equal(hb_db_unit_get(db, unit_id, &unit), HB_OK);
	hb_db_point *pts = NULL;
	size_t n_pts = 0;
	assert_int_equal(hb_db_points_get(db, sweep_id, &pts, &n_pts), HB_OK);
	hb_db_points_free(pts);
	hb_db_fit fit;
	assert_int_equal(hb_db_fit_get_latest(db, sweep_id, NULL, &fit), HB_OK);
	int rc = hb_db_fit_get_latest(db, sweep_id, "core", &fit);
	assert_true(rc == HB_OK || rc == HB_ERR_NOTFOUND);
	hb_db_fit_unc *unc = NULL;
	size_t n_unc = 0;
	assert_int_equal(hb_db_fit_unc_list(db, fit.id, &unc, &n_unc), HB_OK);
	hb_db_fit_uncs_free(unc);
	hb_db_verdict *v = NULL;
	size_t n_v = 0;
	assert_int_equal(hb_db_verdict_list(db, sweep_id, &v, &n_v), HB_OK);
	hb_db_verdicts_free(v);

	hb_db_lot lot;
	assert_int_equal(hb_db_lot_find(db, part.id, "LOT-2611-A", &lot), HB_OK);
	assert_int_equal(hb_db_lot_get(db, lot.id, &lot), HB_OK);
	hb_db_inspection *recs = NULL;
	size_t n_recs = 0;
	assert_int_equal(hb_db_inspection_list(db, lot.id, &recs, &n_recs), HB_OK);
	hb_db_inspections_free(recs);
	int next = 0, passed = 0, failed = 0;
	assert_int_equal(hb_db_inspection_progress(db, lot.id, &next, &passed, &failed), HB_OK);

	for (int k = 0; k < 4; k++) {
		hb_db_history_filter hf;
		hb_db_history_filter_init(&hf);
		hf.part_number = part.part_number;
		if (k & 1)
			hf.lot_code = "LOT-2611-A";
		if (k & 2)
			hf.serial = "A2611-0001";
		hb_db_history_row *rows = NULL;
		size_t n_rows = 0;
		assert_int_equal(hb_db_history(db, &hf, &rows, &n_rows), HB_OK);
		hb_db_history_free(rows);
	}

	print_message("%zu statements checked\n", hb_db_plan_checked(db));
	assert_true(hb_db_plan_checked(db) >= 20);
	const char *findings = hb_db_plan_findings(db);
	if (findings[0]) {
		/* cmocka's message buffer is short: the findings go to stderr whole */
		fprintf(stderr, "full scans of growing tables:\n%s", findings);
		fail_msg("full scans of growing tables (listed above)");
	}
	hb_db_parts_free(parts);
	hb_db_close(db);
}

/* Runs the binary on the demo store; returns the exit status, stdout and
 * stderr in files under dir. */
static int run_sweeps(const char *args)
{
	const char *bin = getenv("HENRYBENCH_BIN");
	char cmd[1024];
	snprintf(cmd, sizeof cmd, "'%s' --db '%s' sweeps %s >'%s/out.txt' 2>'%s/err.txt'", bin ? bin : "./henrybench",
		 path, args, dir, dir);
	int rc = system(cmd);
	return WIFEXITED(rc) ? WEXITSTATUS(rc) : -1;
}

static char *slurp_file(const char *name)
{
	char p[400];
	snprintf(p, sizeof p, "%s/%s", dir, name);
	FILE *f = fopen(p, "r");
	assert_non_null(f);
	static char buf[65536];
	size_t n = fread(buf, 1, sizeof buf - 1, f);
	buf[n] = 0;
	fclose(f);
	return buf;
}

static int count_lines(const char *s)
{
	int n = 0;
	for (; *s; s++)
		n += *s == '\n';
	return n;
}

/* A listing says when it shows fewer than matched, and how many matched
 * (the store's own count, checked against --all's rows). */
static void test_sweeps_listing_is_limited_and_says_so(void **state)
{
	(void)state;
	assert_int_equal(run_sweeps("--all"), 0);
	int every = count_lines(slurp_file("out.txt")) - 1; /* less the header */
	assert_true(every > 3);
	assert_string_equal(slurp_file("err.txt"), "");
	assert_int_equal(run_sweeps("--limit 3"), 0);
	assert_int_equal(count_lines(slurp_file("out.txt")), 1 + 3);
	char want[96];
	snprintf(want, sizeof want, "sweeps: the newest 3 of %d matching sweeps shown", every);
	assert_non_null(strstr(slurp_file("err.txt"), want));
	/* no note when everything fits */
	assert_int_equal(run_sweeps(""), 0);
	assert_int_equal(count_lines(slurp_file("out.txt")), 1 + every);
	assert_string_equal(slurp_file("err.txt"), "");
	/* contradicting options: usage */
	assert_int_equal(run_sweeps("--all --limit 3"), 2);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_no_full_scans),
		cmocka_unit_test(test_sweeps_listing_is_limited_and_says_so),
	};
	return cmocka_run_group_tests(tests, make_demo_store, remove_store);
}
