/* tests/test_hostile.c - hostile input replayed from tests/data/hostile: profile patterns, text fields, CSV cells, echoing instruments, instrument replies */
/* posix_openpt, grantpt, unlockpt, ptsname (the fixture's terminal) */
#define _XOPEN_SOURCE 700
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <signal.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "cli_fixture.h"
#include "hostile_fixture.h"
#include "scripted_peer.h"
#include "common/hb_text.h"
#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "drivers/profile_internal.h"
#include "src/io/io.h"

/* ------------------------------------------------------------------ */
/* profile patterns                                                    */

/* An IDN model of 90 'a' and a 'b': "(a+)+$" tries every split of the
 * a's before failing (common practice: the classic catastrophic
 * backtracking case), far beyond the match limit. */
static void long_subject(char *buf, size_t cap, bool with_b)
{
	assert_true(cap > 92);
	memset(buf, 'a', 90);
	buf[90] = with_b ? 'b' : '\0';
	buf[91] = '\0';
}

/* Every case in tests/data/hostile/profiles: reject-* fails to load with
 * file:line naming match.model (line 6 in each), limit-* loads and its
 * match stops at the limit (no memory blow-up, no unbounded time: the
 * return code says the limit was hit), accept-* matches. */
static void test_profile_corpus(void **state)
{
	(void)state;
	char names[64][128];
	size_t n = corpus("profiles", names, 64);
	int rejected = 0, limited = 0, accepted = 0;
	hb_idn idn;
	memset(&idn, 0, sizeof idn);
	snprintf(idn.maker, sizeof idn.maker, "hostile");
	for (size_t i = 0; i < n; i++) {
		char path[1400], err[600], want[1500];
		snprintf(path, sizeof path, "%s/profiles/%s", data_dir, names[i]);
		snprintf(want, sizeof want, "%s:6: key 'match.model': ", path);
		hb_profile *p = NULL;
		int rc = hb_profile_load(path, &p, err, sizeof err);
		if (starts_with(names[i], "reject-")) {
			if (rc != HB_ERR_PROFILE || !starts_with(err, want))
				fail_msg("%s: rc %d, message: %s", names[i], rc, err);
			assert_null(p);
			rejected++;
			continue;
		}
		if (rc != HB_OK)
			fail_msg("%s: rc %d, message: %s", names[i], rc, err);
		bool limit_case = starts_with(names[i], "limit-");
		long_subject(idn.model, sizeof idn.model, limit_case);
		rc = hb_profile_match_check(p, &idn, err, sizeof err);
		if (limit_case) {
			if (rc != HB_ERR_LIMIT || !starts_with(err, want))
				fail_msg("%s: rc %d, message: %s", names[i], rc, err);
			assert_false(hb_profile_matches(p, &idn));
			limited++;
		} else {
			assert_int_equal(rc, 1);
			accepted++;
		}
		hb_profile_free(p);
	}
	/* the corpus holds each kind: the 22 and 30 '+', deep nesting,
	 * two backtracking patterns, one ordinary */
	assert_int_equal(rejected, 3);
	assert_int_equal(limited, 2);
	assert_int_equal(accepted, 1);
}

/* One bad profile file on the search path must not block the others: the
 * search skips the broken and the giving-up ones (with a warning) and still
 * chooses the good one, or the generic profile. */
static void test_profile_search_survives_corpus(void **state)
{
	(void)state;
	char dir[1200], err[600];
	snprintf(dir, sizeof dir, "%s/profiles", data_dir);
	setenv("HENRYBENCH_PROFILE_PATH", dir, 1);
	hb_idn idn;
	memset(&idn, 0, sizeof idn);
	snprintf(idn.maker, sizeof idn.maker, "hostile");
	long_subject(idn.model, sizeof idn.model, false);
	hb_profile *p = NULL;
	assert_int_equal(hb_profile_match(HB_KIND_LCR, &idn, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "accept-plain");
	hb_profile_free(p);
	long_subject(idn.model, sizeof idn.model, true);
	p = NULL;
	assert_int_equal(hb_profile_match(HB_KIND_LCR, &idn, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "generic-lcr");
	hb_profile_free(p);
	unsetenv("HENRYBENCH_PROFILE_PATH");
}

/* ------------------------------------------------------------------ */
/* CSV cells                                                           */

/* OWASP "CSV Injection": cells starting with =, +, -, @, tab or CR are
 * read as formulas by spreadsheets; a leading single quote makes them
 * text (common practice). Numbers keep their sign: -5.5 is a number. */
static void test_csv_formula_cells_inert(void **state)
{
	(void)state;
	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	assert_non_null(f);
	hb_csv_writer w;
	hb_csv_begin(&w, f);
	const char *cells[] = { "=1+1", "+1", "-1", "@SUM(A1:A2)", "\tx", "\rx", "plain", "a=b", "=HYPERLINK(\"h\")" };
	for (size_t i = 0; i < sizeof cells / sizeof cells[0]; i++)
		hb_csv_text(&w, cells[i]);
	hb_csv_num(&w, -5.5);
	hb_csv_int(&w, -3);
	hb_csv_row_end(&w);
	assert_int_equal(hb_csv_end(&w), HB_OK);
	fclose(f);
	/* RFC 4180 quoting still applies around the neutralised cell (CR,
	 * quotes) */
	assert_string_equal(buf, "'=1+1,'+1,'-1,'@SUM(A1:A2),'\tx,\"'\rx\",plain,a=b,\"'=HYPERLINK(\"\"h\"\")\",-5.5,-3\r\n");
	free(buf);
	assert_true(hb_csv_formula_like("=A1"));
	assert_false(hb_csv_formula_like("A1"));
	assert_false(hb_csv_formula_like(""));
}

/* ------------------------------------------------------------------ */
/* text fields                                                         */

/* RFC 3629 section 3 and 10: overlong forms, surrogates (U+D800..DFFF)
 * and code points above U+10FFFF are not UTF-8. */
static void test_text_check_messages(void **state)
{
	(void)state;
	char err[200];
	assert_int_equal(hb_text_check("serial", "ABC", HB_TEXT_ID_MAX, err, sizeof err), HB_OK);
	assert_int_equal(hb_text_check("serial", "\xc3\xa9t\xc3\xa9", 5, err, sizeof err), HB_OK); /* "été", 5 bytes */
	assert_int_equal(hb_text_check("serial", "\xc3\xa9t\xc3\xa9", 4, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "serial: 5 bytes, limit 4");
	assert_int_equal(hb_text_check("part number", "AB\x1b[m", 0, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "part number: control character 0x1b at byte 3 (one line of printable text)");
	assert_int_equal(hb_text_check("note", "x\xc0\xaf", 0, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "note: not valid UTF-8 at byte 2");
	assert_int_equal(hb_text_check("note", "\xed\xa0\x80", 0, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_text_check("note", "\xf4\x90\x80\x80", 0, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_text_check("note", "\xf4\x8f\xbf\xbf", 0, err, sizeof err), HB_OK); /* U+10FFFF */
	assert_int_equal(hb_text_check("note", "\xc2\x85", 0, err, sizeof err), HB_ERR_ARG);     /* C1 NEL */
}

/* Every value in tests/data/hostile/text given as a serial (sweeps --unit)
 * and as a part number (part add): reject-* exits 2 with one line naming
 * the field, nothing stored; accept-* is taken and read back whole. */
static void test_text_corpus(void **state)
{
	(void)state;
	char names[64][128];
	size_t n = corpus("text", names, 64);
	int rejected = 0, accepted = 0;
	for (size_t i = 0; i < n; i++) {
		char path[1400];
		snprintf(path, sizeof path, "%s/text/%s", data_dir, names[i]);
		char *value = read_bytes(path);
		bool reject = starts_with(names[i], "reject-");
		size_t vlen = strlen(value);
		char *unit_opt = malloc(vlen + 8);
		assert_non_null(unit_opt);
		snprintf(unit_opt, vlen + 8, "--unit=%s", value);
		run r;
		hb_run(&r, station_bare, "--db", db_path, "sweeps", unit_opt, NULL);
		if (reject) {
			if (r.status != 2 || !starts_with(r.err, "henrybench: serial (--unit): "))
				fail_msg("%s: sweeps --unit exit %d, stderr %s", names[i], r.status, r.err);
			assert_one_error_line(&r);
		} else if (r.status != 0) {
			fail_msg("%s: sweeps --unit exit %d, stderr %s", names[i], r.status, r.err);
		}
		run_free(&r);
		hb_run(&r, station_bare, "--db", db_path, "part", "add", "--nominal", "100uH", "--tol", "10%", "--freq",
		       "10kHz", "--level", "0.1V", "--", value, NULL);
		if (reject) {
			if (r.status != 2 || !starts_with(r.err, "henrybench: part number: "))
				fail_msg("%s: part add exit %d, stderr %s", names[i], r.status, r.err);
			assert_one_error_line(&r);
			rejected++;
		} else {
			if (r.status != 0)
				fail_msg("%s: part add exit %d, stderr %s", names[i], r.status, r.err);
			run_free(&r);
			/* stored whole: `part show` starts with "part VALUE\n" */
			hb_run(&r, station_bare, "--db", db_path, "part", "show", "--", value, NULL);
			assert_int_equal(r.status, 0);
			assert_true(starts_with(r.out, "part "));
			assert_memory_equal(r.out + 5, value, vlen);
			assert_int_equal(r.out[5 + vlen], '\n');
			accepted++;
		}
		run_free(&r);
		free(unit_opt);
		free(value);
	}
	assert_int_equal(rejected, 14);
	assert_int_equal(accepted, 5);
}

/* A serials file for inspect is held to the same rules, line by line,
 * before anything is measured or stored. */
static void test_serials_file_checked(void **state)
{
	(void)state;
	char path[420], want[600];
	snprintf(path, sizeof path, "%s/serials.txt", tmpdir);
	write_file(path, "S-1\nS-\0332\n");
	run r;
	hb_run(&r, station_bare, "--db", db_path, "inspect", "--part", "HBX-108G", "--lot", "L-HOSTILE", "--lot-size",
	       "50", "--aql", "1", "--serials", path, "--lcr", "sim:lcr", "--supply", "sim:supply", NULL);
	assert_int_equal(r.status, 2);
	assert_one_error_line(&r);
	snprintf(want, sizeof want, "henrybench: %s:2: serial: control character 0x1b at byte 3", path);
	assert_true(starts_with(r.err, want));
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "sweeps", "--lot", "L-HOSTILE", "--json", NULL);
	assert_int_equal(r.status, 0);
	assert_string_equal(r.out, "[]\n");
	run_free(&r);
}

/* A refused value is named in the message, but a terminal escape or a line break in it is shown, not
 * obeyed: control characters come out as \xNN on one line (common practice: ECMA-48 ESC sequences
 * are how a terminal is made to do things). */
static void test_error_line_shows_controls(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "completion", "fi\033[2Jsh\nsecond", NULL);
	assert_int_equal(r.status, 2);
	assert_one_error_line(&r);
	assert_null(strchr(r.err, '\033'));
	assert_non_null(strstr(r.err, "'fi\\x1b[2Jsh\\x0asecond'"));
	run_free(&r);
}

/* The store itself refuses a serial or lot code longer than the field it is
 * read back into, whoever calls it (a value cut on the way back is how
 * `sweeps --unit` once found nothing). */
static void test_store_refuses_long_ids(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &part), HB_OK);
	char id[HB_DB_ID_LEN + 1];
	memset(id, 'L', HB_DB_ID_LEN);
	id[HB_DB_ID_LEN] = '\0';
	int64_t got = 0;
	assert_int_equal(hb_db_unit_ensure(db, part.id, id, 0, &got), HB_ERR_ARG);
	assert_string_equal(hb_db_errmsg(db), "serial: 64 bytes, limit 63");
	assert_int_equal(hb_db_lot_ensure(db, part.id, id, &got), HB_ERR_ARG);
	assert_string_equal(hb_db_errmsg(db), "lot code: 64 bytes, limit 63");
	id[HB_DB_ID_LEN - 1] = '\0';
	assert_int_equal(hb_db_unit_ensure(db, part.id, id, 0, &got), HB_OK);
	assert_true(got > 0);
	hb_db_close(db);
}

/* A note over its stated limit is refused, not cut (it used to be cut at
 * 511 bytes without a word). */
static void test_note_limit(void **state)
{
	(void)state;
	char note[HB_TEXT_NOTE_MAX + 2];
	memset(note, 'n', HB_TEXT_NOTE_MAX + 1);
	note[HB_TEXT_NOTE_MAX + 1] = '\0';
	run r;
	hb_run(&r, station_bare, "--db", db_path, "sweep", "--part", "HBX-108G", "--unit", "N-1", "--lcr", "sim:lcr",
	       "--supply", "sim:supply", "--to", "1", "--dry-run", "--note", note, NULL);
	assert_int_equal(r.status, 2);
	assert_string_equal(r.err, "henrybench: note (--note): 512 bytes, limit 511\n");
	run_free(&r);
}

/* ------------------------------------------------------------------ */
/* echoing instruments                                                 */

static void write_echo_profile(char *path, size_t cap)
{
	char src[1200];
	snprintf(src, sizeof src, "%s/generic-lcr.ini", profiles_dir);
	char *text = slurp(src);
	assert_non_null(text);
	char *sec = strstr(text, "[profile]\n");
	assert_non_null(sec);
	snprintf(path, cap, "%s/echo-lcr.ini", tmpdir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	size_t head = (size_t)(sec - text) + strlen("[profile]\n");
	fwrite(text, 1, head, f);
	fputs("link.echo = yes\n", f);
	fputs(text + head, f);
	fclose(f);
	free(text);
}

/* An instrument that sends each command back before its reply: named at
 * open with both ways to handle it; handled by the resource's echo=yes or
 * by a profile's link.echo = yes; echo=yes on a quiet instrument is a clear
 * protocol error rather than shifted replies. */
static void test_echoing_instrument(void **state)
{
	(void)state;
	hb_sim *sim = hb_sim_inproc();
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "echo"), HB_OK);
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "set link.echo = yes in [profile] of "));
	hb_lcr_close(lcr);

	const char *ok[2] = { "sim:lcr?echo=yes", NULL };
	char profile[600], forced[700];
	write_echo_profile(profile, sizeof profile);
	snprintf(forced, sizeof forced, "sim:lcr?profile=%s", profile);
	ok[1] = forced;
	for (int i = 0; i < 2; i++) {
		lcr = NULL;
		if (hb_lcr_open(ok[i], NULL, &lcr) != HB_OK)
			fail_msg("%s: %s", ok[i], hb_lcr_errmsg(lcr));
		assert_int_equal(hb_lcr_set_frequency(lcr, 1e3), HB_OK);
		hb_lcr_reading rd;
		assert_int_equal(hb_lcr_measure(lcr, &rd), HB_OK);
		assert_true(rd.primary > 0);
		hb_lcr_close(lcr);
	}
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);
	lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr?echo=yes&timeout=300", NULL, &lcr), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "expected the echo of '*IDN?'"));
	hb_lcr_close(lcr);
}

/* An *IDN? reply carrying escape sequences and a bell (a confused or
 * hostile peer): the fields printed, stored and matched hold '?' in their
 * place, so no reply can drive the operator's terminal. */
static void test_idn_control_characters(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Evil\x1b[2J Co,Model\x07" "X,SN\x7f" "1,fw\x1b]0;t\x07\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, sizeof steps / sizeof steps[0]), 0);
	char res[160];
	snprintf(res, sizeof res, "tcp://127.0.0.1:%d?timeout=2000", p.port);
	hb_scpi *s = NULL;
	assert_int_equal(hb_scpi_open(res, &s), HB_OK);
	hb_idn idn;
	assert_int_equal(hb_scpi_idn(s, &idn), HB_OK);
	assert_string_equal(idn.maker, "Evil?[2J Co");
	assert_string_equal(idn.model, "Model?X");
	assert_string_equal(idn.serial, "SN?1");
	assert_string_equal(idn.firmware, "fw?]0;t?");
	hb_scpi_close(s);
	peer_finish(&p);
	assert_int_equal(p.mismatches, 0);
}

/* identify says the instrument echoes and names the option. */
static void test_identify_names_echo(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, "--fault-lcr", "echo", NULL);
	run r;
	hb_run(&r, station_bare, "identify", sim.lcr, NULL);
	assert_int_equal(r.status, 0);
	const char *line = strstr(r.out, "\n  echo:        the instrument sends each command back");
	assert_non_null(line);
	run_free(&r);
	sim_free(&sim);
}

static int group_setup(void **state)
{
	(void)state;
	return hostile_setup("hostile");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_profile_corpus),
		cmocka_unit_test(test_profile_search_survives_corpus),
		cmocka_unit_test(test_csv_formula_cells_inert),
		cmocka_unit_test(test_text_check_messages),
		cmocka_unit_test(test_text_corpus),
		cmocka_unit_test(test_serials_file_checked),
		cmocka_unit_test(test_error_line_shows_controls),
		cmocka_unit_test(test_store_refuses_long_ids),
		cmocka_unit_test(test_note_limit),
		cmocka_unit_test(test_echoing_instrument),
		cmocka_unit_test(test_idn_control_characters),
		cmocka_unit_test(test_identify_names_echo),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
