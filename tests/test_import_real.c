/* tests/test_import_real.c - import meets real meter logs: metadata above the header, UTF-16 and BOMs, checks after unit scaling, a negative L, no row limit, a missing test frequency */
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
#include <unistd.h>

#include <cmocka.h>

#include "cli_fixture.h"
#include "db/hb_db.h"
#include "src/io/io.h"

static char data_dir[1024]; /* tests/data/import */
static char db_path[400];
static hb_db *db;

/* The fixtures live in the source tree: found from the test binary. */
static void find_data(void)
{
	char exe[900];
	ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
	assert_true(n > 0);
	exe[n] = '\0';
	for (int up = 0; up < 3; up++) {
		char *slash = strrchr(exe, '/');
		assert_non_null(slash);
		*slash = '\0';
		snprintf(data_dir, sizeof data_dir, "%s/tests/data/import", exe);
		if (access(data_dir, F_OK) == 0)
			return;
	}
	snprintf(data_dir, sizeof data_dir, "tests/data/import");
}

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("import-real") != 0)
		return -1;
	find_data();
	snprintf(db_path, sizeof db_path, "%s/bench.db", tmpdir);
	if (hb_db_open(db_path, &db) != HB_OK)
		return -1;
	/* Two parts: one without a spec frequency, one whose L0 holds at 100 kHz. */
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "LOG-1");
	p.nominal_h = 100e-6;
	p.tolerance = 0.2;
	if (hb_db_part_put(db, &p) != HB_OK)
		return -1;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "LOG-F");
	p.nominal_h = 100e-6;
	p.tolerance = 0.2;
	p.test_freq_hz = 100e3;
	return hb_db_part_put(db, &p) == HB_OK ? 0 : -1;
}

static int group_teardown(void **state)
{
	hb_db_close(db);
	return cli_fixture_teardown(state);
}

static size_t sweep_count(void)
{
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	hb_db_sweeps_free(list);
	return n;
}

static int import_file(const char *path, const char *part, int skip, double freq, hb_import_result *res, char *err,
		       size_t errlen)
{
	hb_import_options opt;
	hb_import_options_init(&opt);
	opt.part_number = part;
	opt.serial = "U-1";
	opt.analyse = false;
	opt.skip_lines = skip;
	opt.test_freq_hz = freq;
	return hb_import_csv(db, path, &opt, res, err, errlen);
}

static const char *data(const char *name)
{
	static char path[1200];
	snprintf(path, sizeof path, "%s/%s", data_dir, name);
	return path;
}

/* The seven rows of meter_log_metadata.csv, in SI (README.md there):
 * "100" under "L (uH)" is 100e-6 H, "20" under "Rs (mOhm)" 0.020 ohm
 * (SI prefixes u = 1e-6, m = 1e-3: SI Brochure, 9th ed., table 7). */
static void check_log_points(int64_t sweep_id)
{
	hb_db_point *p = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_points_get(db, sweep_id, &p, &n), HB_OK);
	assert_int_equal(n, 7);
	assert_true(fabs(p[0].primary - 100e-6) < 1e-15);
	assert_true(fabs(p[0].secondary - 0.020) < 1e-12);
	assert_true(fabs(p[6].bias_set_a - 3.0) < 1e-12);
	assert_true(fabs(p[6].primary - 70e-6) < 1e-15);
	hb_db_points_free(p);
}

/* Metadata lines above the header are found and skipped: the header is
 * the first line naming an inductance column with a value below it. */
static void test_metadata_lines_skipped(void **state)
{
	(void)state;
	hb_import_result res;
	char err[600] = "";
	int rc = import_file(data("meter_log_metadata.csv"), "LOG-1", -1, NAN, &res, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_int_equal(res.header_line, 7);
	assert_int_equal(res.n_points, 7);
	check_log_points(res.sweep_id);
	/* --skip 5 leaves the blank line 6, passed over; --skip 6 names line 7. */
	rc = import_file(data("meter_log_metadata.csv"), "LOG-1", 5, NAN, &res, err, sizeof err);
	assert_int_equal(rc, HB_OK);
	assert_int_equal(res.header_line, 7);
	rc = import_file(data("meter_log_metadata.csv"), "LOG-1", 6, NAN, &res, err, sizeof err);
	assert_int_equal(rc, HB_OK);
	assert_int_equal(res.header_line, 7);
	/* --skip 2 makes line 3 ("Date,...") the header: it has no inductance column. */
	size_t before = sweep_count();
	rc = import_file(data("meter_log_metadata.csv"), "LOG-1", 2, NAN, &res, err, sizeof err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "no inductance column"));
	assert_int_equal(sweep_count(), before);
}

/* A bad cell below metadata is named by the file's own line number. */
static void test_line_numbers_count_the_metadata(void **state)
{
	(void)state;
	char path[500];
	snprintf(path, sizeof path, "%s/bad-row.csv", tmpdir);
	write_file(path, "Logger,bench 3\nDate,2026-11-30\nBias (A),L (uH)\n0,100\n1,9x9\n");
	hb_import_result res;
	char err[600] = "";
	size_t before = sweep_count();
	assert_int_equal(import_file(path, "LOG-1", -1, NAN, &res, err, sizeof err), HB_ERR_ARG);
	/* the fifth physical line of the file, counted by hand */
	assert_int_equal(res.line, 5);
	assert_non_null(strstr(err, "line 5, column 2"));
	assert_int_equal(sweep_count(), before);
}

/* The byte-order marks of the Unicode Standard (section 23.8) and RFC 2781:
 * EF BB BF for UTF-8, FF FE for UTF-16 little-endian, FE FF big-endian. */
static void test_boms_and_utf16(void **state)
{
	(void)state;
	static const struct {
		const char *file, *encoding;
	} cases[] = {
		{ "meter_log_utf8_bom.csv", "UTF-8 with BOM" },
		{ "meter_log_utf16le_bom.csv", "UTF-16LE with BOM" },
		{ "meter_log_utf16be_bom.csv", "UTF-16BE with BOM" },
	};
	for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
		hb_import_result res;
		char err[600] = "";
		int rc = import_file(data(cases[i].file), "LOG-1", -1, NAN, &res, err, sizeof err);
		if (rc != HB_OK)
			fail_msg("%s: %s", cases[i].file, err);
		assert_string_equal(res.encoding, cases[i].encoding);
		assert_int_equal(res.header_line, 7);
		check_log_points(res.sweep_id);
	}
	/* UTF-16LE without a BOM: each ASCII character is its byte and a NUL
	 * (RFC 2781 section 2), recognised from the NULs. */
	char path[500];
	snprintf(path, sizeof path, "%s/nobom16.csv", tmpdir);
	static const char ascii[] = "Bias (A),L (uH)\n0,100\n1,98\n";
	FILE *f = fopen(path, "wb");
	assert_non_null(f);
	for (const char *c = ascii; *c; c++) {
		fputc(*c, f);
		fputc(0, f);
	}
	fclose(f);
	hb_import_result res;
	char err[600] = "";
	int rc = import_file(path, "LOG-1", -1, NAN, &res, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_string_equal(res.encoding, "UTF-16LE");
	assert_int_equal(res.n_points, 2);
}

/* 1e300 under "(TH)": tera is 1e12 (SI Brochure 9th ed., table 7), and
 * 1e312 is beyond the largest IEEE 754 binary64 (about 1.8e308), so the
 * scaled value is infinite and refused, by line and value. */
static void test_scaled_to_infinity_refused(void **state)
{
	(void)state;
	hb_import_result res;
	char err[600] = "";
	size_t before = sweep_count();
	assert_int_equal(import_file(data("header_unit_overflow.csv"), "LOG-1", -1, NAN, &res, err, sizeof err),
			 HB_ERR_ARG);
	assert_int_equal(res.line, 3);
	assert_int_equal(res.field, 2);
	assert_non_null(strstr(err, "'1e300'"));
	assert_int_equal(sweep_count(), before);
}

/* An inductance is not negative (common practice: a negative L reading is a
 * capacitive part or a lost sign); refused by line, nothing stored. */
static void test_negative_inductance_refused(void **state)
{
	(void)state;
	hb_import_result res;
	char err[600] = "";
	size_t before = sweep_count();
	assert_int_equal(import_file(data("negative_inductance.csv"), "LOG-1", -1, NAN, &res, err, sizeof err),
			 HB_ERR_ARG);
	assert_int_equal(res.line, 4);
	assert_non_null(strstr(err, "negative"));
	assert_int_equal(sweep_count(), before);
}

/* A part whose L is specified at a frequency cannot have its L0 judged
 * from a sweep at an unknown one: the import asks for --freq. */
static void test_frequency_required_by_the_spec(void **state)
{
	(void)state;
	hb_import_result res;
	char err[600] = "";
	size_t before = sweep_count();
	assert_int_equal(import_file(data("no_frequency.csv"), "LOG-F", -1, NAN, &res, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "--freq"));
	assert_int_equal(sweep_count(), before);
	/* given, it is the sweep's test frequency */
	int rc = import_file(data("no_frequency.csv"), "LOG-F", -1, 100e3, &res, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(db, res.sweep_id, &s), HB_OK);
	assert_true(fabs(s.test_freq_hz - 100e3) < 1e-6);
	/* a part without a spec frequency imports without it */
	assert_int_equal(import_file(data("no_frequency.csv"), "LOG-1", -1, NAN, &res, err, sizeof err), HB_OK);
}

/* No row limit but memory: 150,000 rows, every one stored. */
static void test_150000_rows(void **state)
{
	(void)state;
	enum { ROWS = 150000 };
	char path[500];
	snprintf(path, sizeof path, "%s/long.csv", tmpdir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs("current,inductance\n", f);
	/* row i: i/10000 A and (1000 + i mod 1000) nH, integers the test knows */
	for (int i = 0; i < ROWS; i++)
		fprintf(f, "%d.%04d,%dn\n", i / 10000, i % 10000, 1000 + i % 1000);
	fclose(f);
	hb_import_result res;
	char err[600] = "";
	int rc = import_file(path, "LOG-1", -1, NAN, &res, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_int_equal(res.n_points, ROWS);
	hb_db_point *p = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_points_get(db, res.sweep_id, &p, &n), HB_OK);
	assert_int_equal(n, ROWS);
	/* the last row, i = 149999: 14.9999 A and 1999 nH */
	assert_true(fabs(p[ROWS - 1].bias_set_a - 14.9999) < 1e-9);
	assert_true(fabs(p[ROWS - 1].primary - 1999e-9) < 1e-18);
	assert_int_equal(p[ROWS - 1].seq, ROWS - 1);
	hb_db_points_free(p);
}

/* The command says on stderr which lines it skipped and what it converted. */
static void test_cli_says_what_it_skipped(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", db_path, "import", data("meter_log_utf16le_bom.csv"), "--part", "LOG-1", "--unit",
	       "U-9", "--no-fit", NULL);
	if (r.status != 0)
		fail_msg("import exited %d: %s", r.status, r.err);
	assert_non_null(strstr(r.err, "header on line 7"));
	assert_non_null(strstr(r.err, "the 6 lines above it skipped"));
	assert_non_null(strstr(r.err, "read as UTF-16LE with BOM"));
	run_free(&r);
	/* --skip out of range: one line naming the accepted range, exit 2 */
	hb_run(&r, station_bare, "--db", db_path, "import", data("no_frequency.csv"), "--part", "LOG-1", "--unit", "U-9",
	       "--skip", "-1", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--skip"));
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_metadata_lines_skipped),
		cmocka_unit_test(test_line_numbers_count_the_metadata),
		cmocka_unit_test(test_boms_and_utf16),
		cmocka_unit_test(test_scaled_to_infinity_refused),
		cmocka_unit_test(test_negative_inductance_refused),
		cmocka_unit_test(test_frequency_required_by_the_spec),
		cmocka_unit_test(test_150000_rows),
		cmocka_unit_test(test_cli_says_what_it_skipped),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
