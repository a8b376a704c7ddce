/* tests/test_text_operands.c - part numbers, serials and ids typed to read-only lookups are checked like the writing commands' (exit 2, never echoed raw); $USER as the default operator is checked too */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>
#include <pwd.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli_fixture.h"
#include "common/hb_text.h"
#include "src/bench/station.h"

static char db_path[400];

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("text-operands") != 0)
		return -1;
	snprintf(db_path, sizeof db_path, "%s/ops.db", tmpdir);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "add", "OK-1", "--nominal", "100uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.1V", NULL);
	int rc = r.status;
	run_free(&r);
	return rc == 0 ? 0 : -1;
}

static int group_teardown(void **state)
{
	return cli_fixture_teardown(state);
}

/* An ANSI escape sequence (ECMA-48 CSI "ESC [ 3 1 m", sets red text) in
 * the middle of an operand, and one over the stated 63-byte limit of
 * identifiers (common/hb_text.h, HB_TEXT_ID_MAX). */
static const char escaped[] = "AB\x1b[31mCD";

static void over_limit(char *buf, size_t n)
{
	memset(buf, 'a', n);
	buf[n] = '\0';
}

/* Exit 2 (usage, the writing commands' convention), one line on stderr that
 * names the field and the reason, and the raw bytes never echoed. */
static void expect_refused(const char *field, const char *reason, const char *const *args)
{
	char *argv[16] = { NULL, "--db", db_path };
	int n = 3;
	for (; *args && n < 15; args++)
		argv[n++] = (char *)*args;
	argv[n] = NULL;
	run r;
	hb_runv(&r, station_bare, STDIN_NULL, NULL, argv);
	if (r.status != 2)
		fail_msg("%s %s: exit %d (want 2): %s", argv[3], argv[4], r.status, r.err);
	if (strchr(r.err, '\x1b') || strchr(r.out, '\x1b'))
		fail_msg("%s: the escape sequence was echoed", argv[3]);
	if (strstr(r.err, "aaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaaa"))
		fail_msg("%s: the over-long operand was echoed", argv[3]);
	char want[160];
	snprintf(want, sizeof want, "henrybench: %s: %s", field, reason);
	if (strncmp(r.err, want, strlen(want)) != 0)
		fail_msg("%s: stderr '%s', want it to start '%s'", argv[3], r.err, want);
	assert_non_null(strchr(r.err, '\n'));
	assert_int_equal(strchr(r.err, '\n')[1], '\0'); /* one line */
	run_free(&r);
}

static void test_history_part_number(void **state)
{
	(void)state;
	const char *a[] = { "history", escaped, NULL };
	expect_refused("part number", "control character 0x1b at byte 3", a);
	char big[100];
	over_limit(big, 80);
	const char *b[] = { "history", big, NULL };
	expect_refused("part number", "80 bytes, limit 63", b);
}

static void test_part_show_part_number(void **state)
{
	(void)state;
	const char *a[] = { "part", "show", escaped, NULL };
	expect_refused("part number", "control character 0x1b at byte 3", a);
	char big[100];
	over_limit(big, 64);
	const char *b[] = { "part", "show", big, NULL };
	expect_refused("part number", "64 bytes, limit 63", b);
	/* invalid UTF-8: 0xff never occurs in UTF-8 (RFC 3629 section 1) */
	const char *c[] = { "part", "show", "OK\xff", NULL };
	expect_refused("part number", "not valid UTF-8 at byte 3", c);
}

static void test_show_sweep_id(void **state)
{
	(void)state;
	const char *a[] = { "show", escaped, NULL };
	expect_refused("sweep id", "control character 0x1b at byte 3", a);
	char big[100];
	over_limit(big, 90);
	const char *b[] = { "show", big, NULL };
	expect_refused("sweep id", "90 bytes, limit 63", b);
}

static void test_sweeps_unit_and_stream(void **state)
{
	(void)state;
	const char *a[] = { "sweeps", "--unit", escaped, NULL };
	expect_refused("serial (--unit)", "control character 0x1b at byte 3", a);
	const char *b[] = { "stream", escaped, NULL };
	expect_refused("part number", "control character 0x1b at byte 3", b);
}

/* A well-formed unknown part is still a plain "no part" (exit 2), named. */
static void test_clean_operand_still_looked_up(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", db_path, "history", "NO-SUCH", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "'NO-SUCH'"));
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "part", "show", "OK-1", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
}

/* ---------------- $USER as the default operator ---------------- */

static void load_with_user(const char *user, hb_station *st)
{
	char station[400];
	snprintf(station, sizeof station, "%s/no-operator.ini", tmpdir);
	write_file(station, "[station]\nname = op-bench\n");
	setenv("HENRYBENCH_STATION", station, 1);
	if (user)
		setenv("USER", user, 1);
	else
		unsetenv("USER");
	char err[300];
	assert_int_equal(hb_station_load(st, err, sizeof err), HB_OK);
}

/* The account name as the system's user database gives it, or "-". */
static const char *account(void)
{
	const struct passwd *pw = getpwuid(geteuid());
	return pw && pw->pw_name && *pw->pw_name ? pw->pw_name : "-";
}

static void test_user_with_escape_not_recorded(void **state)
{
	(void)state;
	hb_station st;
	load_with_user("ev\x1b]0;owned\x07il", &st);
	assert_string_equal(st.operator_name, account());
	assert_null(strchr(st.operator_name, '\x1b'));
	/* said, naming the cause checked, without the raw bytes */
	assert_non_null(strstr(st.operator_warning, "$USER: control character 0x1b at byte 3"));
	assert_null(strchr(st.operator_warning, '\x1b'));

	char big[200];
	over_limit(big, 150);
	load_with_user(big, &st);
	assert_string_equal(st.operator_name, account());
	assert_non_null(strstr(st.operator_warning, "$USER: 150 bytes, limit 63"));
}

static void test_user_clean_is_the_operator(void **state)
{
	(void)state;
	hb_station st;
	load_with_user("jdoe", &st);
	assert_string_equal(st.operator_name, "jdoe");
	assert_string_equal(st.operator_warning, "");
	/* unset: the account name, and nothing to warn about */
	load_with_user(NULL, &st);
	assert_string_equal(st.operator_name, account());
	assert_string_equal(st.operator_warning, "");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_history_part_number),
		cmocka_unit_test(test_part_show_part_number),
		cmocka_unit_test(test_show_sweep_id),
		cmocka_unit_test(test_sweeps_unit_and_stream),
		cmocka_unit_test(test_clean_operand_still_looked_up),
		cmocka_unit_test(test_user_with_escape_not_recorded),
		cmocka_unit_test(test_user_clean_is_the_operator),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
