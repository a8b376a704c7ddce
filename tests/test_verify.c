/* tests/test_verify.c - filed reports: report number in the page, the canonical points as documented, and verify failing on one changed byte of the page or of a stored point */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
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

#include "cli_fixture.h"
#include "common/hb_sha256.h"
#include "common/hb_uid.h"
#include "db/hb_db.h"
#include "src/report/report.h"

static char db_path[400], page[400];
static int64_t sweep_id;
static int counter;

/* Two points with values chosen to need all 17 digits, and one field not known. */
static const double primary[2] = { 2.2e-5, 1.0 / 3.0 * 1e-5 };

static int store_setup(void **state)
{
	(void)state;
	counter++;
	snprintf(db_path, sizeof db_path, "%s/verify-%d.db", tmpdir, counter);
	snprintf(page, sizeof page, "%s/report-%d.html", tmpdir, counter);
	hb_db *db = NULL;
	if (hb_db_open(db_path, &db) != HB_OK)
		return -1;
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "V-1");
	p.nominal_h = 22e-6;
	p.tolerance = 0.2;
	int64_t unit = 0;
	int rc = hb_db_part_put(db, &p);
	if (rc == HB_OK)
		rc = hb_db_unit_ensure(db, p.id, "S1", 0, &unit);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = HB_DB_SWEEP_BIAS;
	s.unit_id = unit;
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	if (rc == HB_OK)
		rc = hb_db_sweep_begin(db, &s);
	for (int i = 0; rc == HB_OK && i < 2; i++) {
		hb_db_point pt;
		hb_db_point_init(&pt);
		pt.sweep_id = s.id;
		pt.seq = i;
		pt.bias_set_a = 0.5 * i;
		pt.bias_meas_a = 0.5 * i + 0.001;
		pt.primary = primary[i];
		pt.secondary = 0.031;
		pt.t_s = 1.25 * i;
		pt.settle_readings = 2;
		pt.settle_s = 0.1;
		rc = hb_db_point_add(db, &pt);
	}
	if (rc == HB_OK)
		rc = hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, "");
	sweep_id = s.id;
	hb_db_close(db);
	return rc == HB_OK ? 0 : -1;
}

static void file_report(char number[HB_DB_UID_LEN])
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_report_request rq = { .kind = HB_REPORT_SWEEP, .sweep_id = sweep_id, .path = page };
	char err[300] = "";
	int rc = hb_report_file(db, &rq, number, err, sizeof err);
	hb_db_close(db);
	if (rc != HB_OK)
		fail_msg("report: %s", err);
}

static hb_report_check verify(void)
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_report_check c;
	char err[300] = "";
	int rc = hb_report_verify(db, page, &c, err, sizeof err);
	hb_db_close(db);
	if (rc != HB_OK)
		fail_msg("verify: %s", err);
	hb_report_check_clear(&c);
	return c;
}

/* Flips one byte of the page at offset (XOR, so a second call restores it). */
static void flip_byte(long offset)
{
	FILE *f = fopen(page, "r+b");
	assert_non_null(f);
	assert_int_equal(fseek(f, offset, SEEK_SET), 0);
	int c = fgetc(f);
	assert_true(c != EOF);
	assert_int_equal(fseek(f, offset, SEEK_SET), 0);
	fputc(c ^ 0x01, f);
	fclose(f);
}

/* The page carries the number it was filed under, and a library verify of the
 * untouched page and points says intact; one byte changed anywhere in the page
 * (head, body or the last byte) is found, the data still intact. */
static void test_page_byte_changed(void **state)
{
	(void)state;
	char number[HB_DB_UID_LEN], in_page[HB_DB_UID_LEN];
	file_report(number);
	assert_true(hb_uid_is_v7(number));
	assert_int_equal(hb_report_read_number(page, in_page, NULL, 0), HB_OK);
	assert_string_equal(in_page, number);
	hb_report_check c = verify();
	assert_true(c.file_intact);
	assert_true(c.data_intact);
	assert_int_equal(c.n_points, 2);
	FILE *f = fopen(page, "rb");
	assert_non_null(f);
	fseek(f, 0, SEEK_END);
	long size = ftell(f);
	fclose(f);
	const long where[] = { 300, size / 2, size - 1 };
	for (size_t i = 0; i < sizeof where / sizeof *where; i++) {
		flip_byte(where[i]);
		c = verify();
		if (c.file_intact)
			fail_msg("byte %ld of %ld changed, the file still reads intact", where[i], size);
		assert_true(c.data_intact);
		flip_byte(where[i]);
		c = verify();
		assert_true(c.file_intact);
	}
}

/* One stored point changed in its last digit (an UPDATE behind the store's
 * back) makes the data hash differ; the page itself still matches. */
static void test_stored_point_changed(void **state)
{
	(void)state;
	char number[HB_DB_UID_LEN];
	file_report(number);
	sqlite3 *c = NULL;
	assert_int_equal(sqlite3_open(db_path, &c), SQLITE_OK);
	char sql[200];
	snprintf(sql, sizeof sql, "UPDATE points SET primary_value = %.17g WHERE sweep_id = %lld AND seq = 1",
		 nextafter(primary[1], 1.0), (long long)sweep_id);
	assert_int_equal(sqlite3_exec(c, sql, NULL, NULL, NULL), SQLITE_OK);
	assert_int_equal(sqlite3_changes(c), 1);
	sqlite3_close(c);
	hb_report_check r = verify();
	assert_true(r.file_intact);
	assert_false(r.data_intact);
}

/* The canonical export is exactly the text docs/store.md defines, built here
 * from that definition: so a second program can recompute the data hash. */
static void test_canonical_form_as_documented(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	char su[HB_DB_UID_LEN], pu[HB_DB_UID_LEN];
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_SWEEP, sweep_id, su), HB_OK);
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_POINTS, sweep_id, pu), HB_OK);
	char want[2048];
	int len = snprintf(want, sizeof want, "henrybench-points 1\nsweep %s %s 2\n", su, pu);
	for (int i = 0; i < 2; i++)
		len += snprintf(want + len, sizeof want - (size_t)len,
				"%d up %.17g %.17g null null %.17g %.17g 0 %.17g 2 %.17g null 1\n", i, 0.5 * i,
				0.5 * i + 0.001, primary[i], 0.031, 1.25 * i, 0.1);
	char *got = NULL;
	size_t got_len = 0;
	FILE *f = open_memstream(&got, &got_len);
	assert_non_null(f);
	char hex[65], want_hex[65];
	size_t points = 0;
	assert_int_equal(hb_report_points_canonical(db, &sweep_id, 1, f, hex, &points, NULL, 0), HB_OK);
	fclose(f);
	hb_db_close(db);
	assert_string_equal(got, want);
	assert_int_equal(points, 2);
	/* and the hash is the SHA-256 of that text */
	assert_int_equal(hb_sha256_hex(want, strlen(want), want_hex), HB_OK);
	assert_string_equal(hex, want_hex);
	free(got);
}

/* The command: 0 intact, 1 naming what changed, 2 for usage. */
static void test_verify_command(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", db_path, "report", "1", "--out", page, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "verify", page, NULL);
	if (r.status != 0)
		fail_msg("verify of an untouched report: exit %d\n%s%s", r.status, r.out, r.err);
	run_free(&r);
	flip_byte(1000);
	hb_run(&r, station_bare, "--db", db_path, "verify", page, NULL);
	assert_int_equal(r.status, 1);
	assert_non_null(strstr(r.out, "\n  file      ALTERED  sha256 "));
	assert_non_null(strstr(r.out, "\n  data      intact   sha256 "));
	run_free(&r);
	flip_byte(1000);
	hb_run(&r, station_bare, "--db", db_path, "verify", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	run_free(&r);
	/* a page that is no filed report */
	hb_run(&r, station_bare, "--db", db_path, "verify", station_bare, NULL);
	assert_int_equal(r.status, 1);
	assert_int_equal(count_lines(r.err), 1);
	run_free(&r);
}

/* A sweep is found by its global identity as by its local number; an identity
 * the store does not hold is a usage error of one line. */
static void test_show_by_identity(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	char uid[HB_DB_UID_LEN];
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_SWEEP, sweep_id, uid), HB_OK);
	hb_db_close(db);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "show", uid, "--csv", NULL);
	assert_int_equal(r.status, 0);
	run by_number;
	hb_run(&by_number, station_bare, "--db", db_path, "show", "1", "--csv", NULL);
	assert_int_equal(by_number.status, 0);
	assert_string_equal(r.out, by_number.out);
	run_free(&r);
	run_free(&by_number);
	/* RFC 9562's example identity: well formed, in no store of ours */
	hb_run(&r, station_bare, "--db", db_path, "show", "017f22e2-79b0-7cc3-98c4-dc0c0c07398f", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("verify");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup(test_page_byte_changed, store_setup),
		cmocka_unit_test_setup(test_stored_point_changed, store_setup),
		cmocka_unit_test_setup(test_canonical_form_as_documented, store_setup),
		cmocka_unit_test_setup(test_verify_command, store_setup),
		cmocka_unit_test_setup(test_show_by_identity, store_setup),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
