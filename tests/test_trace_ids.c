/* tests/test_trace_ids.c - global identities (UUID version 7 layout, RFC 9562), SHA-256 vectors (FIPS 180-4), identities across two stores, spec revisions and append-only verdicts */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <sqlite3.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "common/hb_sha256.h"
#include "common/hb_uid.h"
#include "db/hb_db.h"
#include "store_fixture.h"

/* ---------------- UUID version 7 ---------------- */

/* RFC 9562 Appendix A.6 "Example of a UUIDv7 Value": unix_ts_ms 0x017F22E279B0
 * (Tuesday, February 22, 2022 2:22:22.00 PM GMT-05:00), ver 0x7, rand_a 0xCC3,
 * var 0b10, rand_b 0x18C4DC0C0C07398F give 017F22E2-79B0-7CC3-98C4-DC0C0C07398F. */
static void test_uid_rfc9562_example(void **state)
{
	(void)state;
	uint8_t b[16];
	char text[HB_UID_TEXT_LEN];
	hb_uid_layout(0x017F22E279B0LL, 0xCC3, 0x18C4DC0C0C07398FULL, b);
	hb_uid_format(b, text);
	assert_string_equal(text, "017f22e2-79b0-7cc3-98c4-dc0c0c07398f");
	assert_true(hb_uid_is_v7("017F22E2-79B0-7CC3-98C4-DC0C0C07398F"));
	assert_int_equal(hb_uid_time_ms("017F22E2-79B0-7CC3-98C4-DC0C0C07398F"), 1645557742000LL);
	/* a version 4 value (RFC 9562 Appendix A.3 example) is not version 7 */
	assert_false(hb_uid_is_v7("919108f7-52d1-4320-9bac-f847db4148a8"));
	assert_false(hb_uid_is_v7("017f22e2-79b0-7cc3-98c4-dc0c0c07398"));
	assert_false(hb_uid_is_v7("017f22e2x79b0-7cc3-98c4-dc0c0c07398f"));
}

/* RFC 9562 section 5.7: 48-bit ms timestamp, version 7 in bits 48-51, variant
 * 0b10 in bits 64-65; section 6.2: identities made by one generator sort in
 * the order made (the monotonicity this store promises within a process). */
static void test_uid_layout_and_order(void **state)
{
	(void)state;
	enum { N = 20000 };
	char prev[HB_UID_TEXT_LEN] = "", cur[HB_UID_TEXT_LEN];
	struct timespec t0, t1;
	clock_gettime(CLOCK_REALTIME, &t0);
	for (int i = 0; i < N; i++) {
		assert_int_equal(hb_uid_new(cur), HB_OK);
		uint8_t b[16];
		assert_int_equal(hb_uid_parse(cur, b), HB_OK);
		if ((b[6] >> 4) != 7 || (b[8] >> 6) != 2)
			fail_msg("%s: version %d, variant bits %d", cur, b[6] >> 4, b[8] >> 6);
		if (i > 0 && strcmp(prev, cur) >= 0)
			fail_msg("not increasing: %s then %s", prev, cur);
		memcpy(prev, cur, sizeof cur);
	}
	clock_gettime(CLOCK_REALTIME, &t1);
	int64_t ms0 = (int64_t)t0.tv_sec * 1000 + t0.tv_nsec / 1000000;
	int64_t ms1 = (int64_t)t1.tv_sec * 1000 + t1.tv_nsec / 1000000;
	int64_t last = hb_uid_time_ms(cur);
	/* 20000 in one run may borrow a little time from the counter's carry, never more than a millisecond or so */
	assert_true(last >= ms0 && last <= ms1 + 2);
	/* identities for old records carry the given time */
	assert_int_equal(hb_uid_at(1645557742000LL, cur), HB_OK);
	assert_int_equal(hb_uid_time_ms(cur), 1645557742000LL);
}

/* ---------------- SHA-256 ---------------- */

/* FIPS 180-4 examples (NIST "SHA256.pdf", Cryptographic Standards and
 * Guidelines: Examples with Intermediate Values): one block "abc", two blocks
 * "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq"; the empty
 * message's digest from memory (widely published). */
static void test_sha256_known_vectors(void **state)
{
	(void)state;
	char hex[HB_SHA256_HEX_LEN];
	assert_int_equal(hb_sha256_hex("abc", 3, hex), HB_OK);
	assert_string_equal(hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
	const char *two = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
	assert_int_equal(hb_sha256_hex(two, strlen(two), hex), HB_OK);
	assert_string_equal(hex, "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
	assert_int_equal(hb_sha256_hex("", 0, hex), HB_OK);
	assert_string_equal(hex, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
	/* the same two-block message fed in uneven pieces, and from a file */
	hb_sha256 *h = hb_sha256_create();
	assert_non_null(h);
	assert_int_equal(hb_sha256_update(h, two, 5), HB_OK);
	assert_int_equal(hb_sha256_update(h, two + 5, strlen(two) - 5), HB_OK);
	assert_int_equal(hb_sha256_finish(h, hex), HB_OK);
	assert_string_equal(hex, "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
	char path[] = "/tmp/hb-test-sha-XXXXXX";
	int fd = mkstemp(path);
	assert_true(fd >= 0);
	FILE *f = fdopen(fd, "w");
	fputs("abc", f);
	fclose(f);
	assert_int_equal(hb_sha256_file(path, hex), HB_OK);
	assert_string_equal(hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
	unlink(path);
	hb_sha256_free(NULL);
}

/* ---------------- a small store ---------------- */

static int64_t make_part(hb_db *db, const char *pn, double tol)
{
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "%s", pn);
	p.nominal_h = 22e-6;
	p.tolerance = tol;
	p.test_freq_hz = 100e3;
	p.test_level = 0.5;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	return p.id;
}

/* A part, a lot, a unit, a complete bias sweep of three points, a fit and a verdict. */
static int64_t fill(hb_db *db, const char *pn)
{
	int64_t part = make_part(db, pn, 0.2), lot = 0, unit = 0;
	assert_int_equal(hb_db_lot_ensure(db, part, "L1", &lot), HB_OK);
	assert_int_equal(hb_db_unit_ensure(db, part, "U1", lot, &unit), HB_OK);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = HB_DB_SWEEP_BIAS;
	s.unit_id = unit;
	assert_int_equal(hb_db_sweep_begin(db, &s), HB_OK);
	for (int i = 0; i < 3; i++) {
		hb_db_point pt;
		hb_db_point_init(&pt);
		pt.sweep_id = s.id;
		pt.seq = i;
		pt.bias_set_a = i;
		pt.bias_meas_a = i;
		pt.primary = 22e-6 - 1e-6 * i;
		pt.secondary = 0.03;
		assert_int_equal(hb_db_point_add(db, &pt), HB_OK);
	}
	assert_int_equal(hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, ""), HB_OK);
	hb_db_fit *fit = calloc(1, sizeof *fit);
	assert_non_null(fit);
	hb_db_fit_init(fit);
	fit->sweep_id = s.id;
	snprintf(fit->model, sizeof fit->model, "knee");
	assert_int_equal(hb_db_fit_put(db, fit), HB_OK);
	free(fit);
	hb_db_verdict v;
	hb_db_verdict_init(&v);
	v.sweep_id = s.id;
	snprintf(v.check_name, sizeof v.check_name, "L0");
	v.measured = 22e-6;
	v.outcome = HB_DB_PASS;
	assert_int_equal(hb_db_verdict_put(db, &v), HB_OK);
	return s.id;
}

static const char *const uid_queries[] = {
	"SELECT uid FROM parts", "SELECT uid FROM spec_revisions", "SELECT uid FROM lots", "SELECT uid FROM units",
	"SELECT uid FROM sweeps", "SELECT points_uid FROM sweeps", "SELECT uid FROM fits", "SELECT uid FROM verdicts",
};

/* Every identity of the store at path appended to list (strdup'd). */
static void collect(const char *path, char **list, size_t *n, size_t cap)
{
	sqlite3 *c = NULL;
	assert_int_equal(sqlite3_open_v2(path, &c, SQLITE_OPEN_READONLY, NULL), SQLITE_OK);
	for (size_t q = 0; q < sizeof uid_queries / sizeof *uid_queries; q++) {
		sqlite3_stmt *st = NULL;
		assert_int_equal(sqlite3_prepare_v2(c, uid_queries[q], -1, &st, NULL), SQLITE_OK);
		int rows = 0;
		while (sqlite3_step(st) == SQLITE_ROW) {
			const char *u = (const char *)sqlite3_column_text(st, 0);
			if (!u)
				fail_msg("%s: a record without identity", uid_queries[q]);
			if (!hb_uid_is_v7(u))
				fail_msg("%s: '%s' is not a version 7 identity", uid_queries[q], u);
			assert_true(*n < cap);
			list[(*n)++] = strdup(u);
			rows++;
		}
		sqlite3_finalize(st);
		if (rows == 0)
			fail_msg("%s: no rows", uid_queries[q]);
	}
	sqlite3_close(c);
}

static int cmp_str(const void *a, const void *b)
{
	return strcmp(*(char *const *)a, *(char *const *)b);
}

/* Two benches make their stores independently, the same part numbers, serials
 * and local ids 1, 2, ... in both: brought together, no identity collides. */
static void test_two_stores_no_collision(void **state)
{
	(void)state;
	char dir[2][128], path[2][256];
	hb_db *db[2] = { NULL, NULL };
	for (int k = 0; k < 2; k++) {
		assert_int_equal(temp_store_open(dir[k], sizeof dir[k], "ids", path[k], sizeof path[k], &db[k]), 0);
		assert_int_equal(fill(db[k], "P-100"), 1);
		fill(db[k], "P-200");
		hb_db_close(db[k]);
		db[k] = NULL;
	}
	char *list[256];
	size_t n = 0;
	collect(path[0], list, &n, 256);
	size_t n0 = n;
	collect(path[1], list, &n, 256);
	assert_int_equal(n, 2 * n0);
	qsort(list, n, sizeof *list, cmp_str);
	for (size_t i = 1; i < n; i++)
		if (strcmp(list[i - 1], list[i]) == 0)
			fail_msg("identity %s occurs twice", list[i]);
	for (size_t i = 0; i < n; i++)
		free(list[i]);
	for (int k = 0; k < 2; k++)
		temp_store_remove(dir[k], NULL);
}

/* ---------------- append-only verdicts and spec revisions ---------------- */

static void test_rejudge_keeps_both_and_revisions(void **state)
{
	(void)state;
	char dir[128], path[256];
	hb_db *db = NULL;
	assert_int_equal(temp_store_open(dir, sizeof dir, "rejudge", path, sizeof path, &db), 0);
	int64_t sweep = fill(db, "P-300");
	hb_db_verdict *v = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_verdict_list(db, sweep, &v, &n), HB_OK);
	assert_int_equal(n, 1);
	int64_t first = v[0].id;
	assert_int_equal(v[0].spec_revision, 1);
	assert_int_equal(v[0].superseded_by, 0);
	hb_db_verdicts_free(v);

	/* the spec changes: a new revision, the first kept */
	hb_db_part p;
	assert_int_equal(hb_db_part_get(db, "P-300", &p), HB_OK);
	p.tolerance = 0.1;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	/* storing the same spec again is no new revision */
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	hb_db_spec_revision r1, r2;
	assert_int_equal(hb_db_spec_revision_get(db, p.id, 0, &r2), HB_OK);
	assert_int_equal(r2.revision, 2);
	assert_true(fabs(r2.spec.tolerance - 0.1) < 1e-15);
	assert_int_equal(hb_db_spec_revision_get(db, p.id, 1, &r1), HB_OK);
	assert_true(fabs(r1.spec.tolerance - 0.2) < 1e-15);
	assert_string_not_equal(r1.uid, r2.uid);
	assert_int_equal(hb_db_spec_revision_get(db, p.id, 3, &r1), HB_ERR_NOTFOUND);

	/* judged again: a second verdict supersedes the first, which stays with its revision */
	hb_db_verdict w;
	hb_db_verdict_init(&w);
	w.sweep_id = sweep;
	snprintf(w.check_name, sizeof w.check_name, "L0");
	w.measured = 22e-6;
	w.outcome = HB_DB_FAIL;
	snprintf(w.operator_name, sizeof w.operator_name, "inspector-b");
	assert_int_equal(hb_db_verdict_put(db, &w), HB_OK);
	assert_int_equal(hb_db_verdict_list(db, sweep, &v, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(v[0].id, w.id);
	assert_int_equal(v[0].outcome, HB_DB_FAIL);
	assert_int_equal(v[0].spec_revision, 2);
	assert_string_equal(v[0].operator_name, "inspector-b");
	hb_db_verdicts_free(v);
	assert_int_equal(hb_db_verdict_list_all(db, sweep, &v, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_int_equal(v[0].id, first);
	assert_int_equal(v[0].outcome, HB_DB_PASS);
	assert_int_equal(v[0].superseded_by, w.id);
	assert_int_equal(v[0].spec_revision, 1);
	assert_int_equal(v[1].superseded_by, 0);
	assert_string_not_equal(v[0].uid, v[1].uid);
	hb_db_verdicts_free(v);

	/* the history query counts the verdict in force: the unit now fails */
	hb_db_history_filter f;
	hb_db_history_filter_init(&f);
	f.part_number = "P-300";
	hb_db_history_row *rows = NULL;
	assert_int_equal(hb_db_history(db, &f, &rows, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(rows[0].verdict, HB_DB_FAIL);
	hb_db_history_free(rows);
	hb_db_close(db);

	/* nothing overwrites a stored verdict, not even a direct UPDATE */
	sqlite3 *c = NULL;
	assert_int_equal(sqlite3_open(path, &c), SQLITE_OK);
	char sql[120];
	snprintf(sql, sizeof sql, "UPDATE verdicts SET outcome = 'pass' WHERE id = %lld", (long long)w.id);
	assert_int_not_equal(sqlite3_exec(c, sql, NULL, NULL, NULL), SQLITE_OK);
	sqlite3_close(c);
	temp_store_remove(dir, NULL);
}

/* A store made before step 9 gets identities stamped with each record's own time. */
static void test_migration_gives_identities(void **state)
{
	(void)state;
	char dir[128], path[256];
	snprintf(dir, sizeof dir, "/tmp/hb-test-idmig-XXXXXX");
	assert_non_null(mkdtemp(dir));
	snprintf(path, sizeof path, "%s/bench.db", dir);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open_version(path, 6, &db), HB_OK);
	int64_t part = make_part(db, "P-OLD", 0.2), unit = 0;
	assert_int_equal(hb_db_unit_ensure(db, part, "U9", 0, &unit), HB_OK);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = HB_DB_SWEEP_BIAS;
	s.unit_id = unit;
	assert_int_equal(hb_db_sweep_begin(db, &s), HB_OK);
	assert_int_equal(hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, ""), HB_OK);
	hb_db_verdict v;
	hb_db_verdict_init(&v);
	v.sweep_id = s.id;
	snprintf(v.check_name, sizeof v.check_name, "L0");
	v.outcome = HB_DB_PASS;
	assert_int_equal(hb_db_verdict_put(db, &v), HB_OK);
	hb_db_close(db);

	assert_int_equal(hb_db_open(path, &db), HB_OK);
	int version = 0;
	assert_int_equal(hb_db_schema_version(db, &version), HB_OK);
	assert_int_equal(version, hb_db_latest_version());
	char uid[HB_DB_UID_LEN];
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_SWEEP, s.id, uid), HB_OK);
	assert_true(hb_uid_is_v7(uid));
	/* the identity's time is the sweep's start (to the millisecond) */
	hb_db_sweep back;
	assert_int_equal(hb_db_sweep_get(db, s.id, &back), HB_OK);
	assert_true(llabs(hb_uid_time_ms(uid) - (int64_t)(back.started * 1000)) <= 1);
	int64_t found = 0;
	assert_int_equal(hb_db_uid_find(db, HB_DB_REC_SWEEP, uid, &found), HB_OK);
	assert_int_equal(found, s.id);
	assert_int_equal(hb_db_resolve_id(db, HB_DB_REC_SWEEP, uid, &found), HB_OK);
	assert_int_equal(found, s.id);
	assert_int_equal(hb_db_resolve_id(db, HB_DB_REC_SWEEP, "sweep-one", &found), HB_ERR_ARG);
	assert_int_equal(hb_db_resolve_id(db, HB_DB_REC_SWEEP, "017f22e2-79b0-7cc3-98c4-dc0c0c07398f", &found),
			 HB_ERR_NOTFOUND);
	/* the old verdict is revision 1's, and a re-judgement now supersedes it */
	hb_db_verdict *vs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_verdict_list(db, s.id, &vs, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(vs[0].spec_revision, 1);
	assert_true(hb_uid_is_v7(vs[0].uid));
	hb_db_verdicts_free(vs);
	assert_int_equal(hb_db_verdict_put(db, &v), HB_OK);
	assert_int_equal(hb_db_verdict_list_all(db, s.id, &vs, &n), HB_OK);
	assert_int_equal(n, 2);
	hb_db_verdicts_free(vs);
	temp_store_remove(dir, db);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_uid_rfc9562_example),
		cmocka_unit_test(test_uid_layout_and_order),
		cmocka_unit_test(test_sha256_known_vectors),
		cmocka_unit_test(test_two_stores_no_collision),
		cmocka_unit_test(test_rejudge_keeps_both_and_revisions),
		cmocka_unit_test(test_migration_gives_identities),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
