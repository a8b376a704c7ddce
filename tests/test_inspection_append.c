/* tests/test_inspection_append.c - lot inspection records are appended: a sample recorded again supersedes the earlier record, which stays with its time and operator; the tally counts the records in force */
#include <math.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "store_fixture.h"

static char dir[128], path[200];

static int setup(void **state)
{
	(void)state;
	hb_db *db = NULL;
	if (temp_store_open(dir, sizeof dir, "inspappend", path, sizeof path, &db) != 0)
		return -1;
	hb_db_close(db);
	return 0;
}

static int teardown(void **state)
{
	(void)state;
	return temp_store_remove(dir, NULL);
}

static int64_t make_lot(hb_db *db, const char *pn, const char *code)
{
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "%s", pn);
	p.nominal_h = 100e-6;
	p.tolerance = 0.1;
	p.test_freq_hz = 100e3;
	p.test_level = 0.5;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	int64_t lot = 0;
	assert_int_equal(hb_db_lot_ensure(db, p.id, code, &lot), HB_OK);
	return lot;
}

static void put(hb_db *db, int64_t lot, int seq, hb_db_outcome outcome, const char *op, double at, int64_t *id)
{
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	rec.lot_id = lot;
	rec.sequence = seq;
	rec.outcome = outcome;
	rec.at = at;
	snprintf(rec.operator_name, sizeof rec.operator_name, "%s", op);
	assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);
	if (id)
		*id = rec.id;
}

/* Issue 11 item 5 and ISO 9001:2015 7.5.3.2 (retained documented information
 * protected from unintended alteration): recording sample 2 again keeps the
 * first record of it, superseded, with its own time and operator. ISO 2859-1
 * counts each sample unit once: the tally (passed, failed, next position) is
 * over the records in force, so the one fail that was recorded again as a pass
 * no longer counts. */
static void test_recorded_again_supersedes(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	int64_t lot = make_lot(db, "APP-1", "L-1");
	int64_t first = 0, again = 0;
	put(db, lot, 1, HB_DB_PASS, "op-a", 1.7e9, NULL);
	put(db, lot, 2, HB_DB_FAIL, "op-a", 1.7e9 + 60, &first);
	int next = 0, passed = -1, failed = -1;
	assert_int_equal(hb_db_inspection_progress(db, lot, &next, &passed, &failed), HB_OK);
	assert_int_equal(failed, 1);
	put(db, lot, 2, HB_DB_PASS, "op-b", 1.7e9 + 3600, &again);
	assert_true(again != first);
	hb_db_close(db);

	assert_int_equal(hb_db_open(path, &db), HB_OK);
	assert_int_equal(hb_db_inspection_progress(db, lot, &next, &passed, &failed), HB_OK);
	assert_int_equal(next, 3);
	assert_int_equal(passed, 2);
	assert_int_equal(failed, 0);

	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(db, lot, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_int_equal(recs[1].id, again);
	assert_int_equal(recs[1].outcome, HB_DB_PASS);
	assert_string_equal(recs[1].operator_name, "op-b");
	assert_int_equal(recs[1].superseded_by, 0);
	hb_db_inspections_free(recs);

	assert_int_equal(hb_db_inspection_list_all(db, lot, &recs, &n), HB_OK);
	assert_int_equal(n, 3);
	/* sequence 2 as first recorded: kept, its outcome, time and operator unchanged */
	assert_int_equal(recs[1].id, first);
	assert_int_equal(recs[1].sequence, 2);
	assert_int_equal(recs[1].outcome, HB_DB_FAIL);
	assert_string_equal(recs[1].operator_name, "op-a");
	assert_true(fabs(recs[1].at - (1.7e9 + 60)) < 1e-3);
	assert_int_equal(recs[1].superseded_by, again);
	assert_int_equal(recs[2].id, again);
	assert_int_equal(recs[2].superseded_by, 0);
	assert_int_equal(recs[0].superseded_by, 0);
	hb_db_inspections_free(recs);

	/* each record keeps its own global identity */
	char u1[HB_DB_UID_LEN] = "", u2[HB_DB_UID_LEN] = "";
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_INSPECTION, first, u1), HB_OK);
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_INSPECTION, again, u2), HB_OK);
	assert_true(u1[0] && u2[0]);
	assert_string_not_equal(u1, u2);
	hb_db_close(db);
}

/* A store made before append-only records (the schema step before the last)
 * keeps every record through the migration, each in force. */
static void test_migration_keeps_records(void **state)
{
	(void)state;
	char old[220];
	snprintf(old, sizeof old, "%s/old.db", dir);
	hb_db *db = NULL;
	int before = hb_db_latest_version() - 1;
	assert_int_equal(hb_db_open_version(old, before, &db), HB_OK);
	int64_t lot = make_lot(db, "APP-2", "L-2");
	put(db, lot, 1, HB_DB_PASS, "", 1.7e9, NULL);
	put(db, lot, 2, HB_DB_FAIL, "", 1.7e9 + 1, NULL);
	hb_db_close(db);
	assert_int_equal(hb_db_open(old, &db), HB_OK);
	int v = 0;
	assert_int_equal(hb_db_schema_version(db, &v), HB_OK);
	assert_int_equal(v, hb_db_latest_version());
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(db, lot, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_int_equal(recs[1].outcome, HB_DB_FAIL);
	hb_db_inspections_free(recs);
	/* recorded again after the migration: superseded, not replaced */
	put(db, lot, 2, HB_DB_PASS, "op-c", 1.7e9 + 2, NULL);
	assert_int_equal(hb_db_inspection_list_all(db, lot, &recs, &n), HB_OK);
	assert_int_equal(n, 3);
	assert_int_equal(recs[1].outcome, HB_DB_FAIL);
	assert_true(recs[1].superseded_by == recs[2].id);
	hb_db_inspections_free(recs);
	hb_db_close(db);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_recorded_again_supersedes),
		cmocka_unit_test(test_migration_keeps_records),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
