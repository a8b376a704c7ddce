/* tests/test_history_uids.c - `history --json` rows carry the sweep's and the unit's global identities, the same ones `show` gives and resolves */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>
#include <ctype.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "cli_json.h"

static char db_path[400];

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("history-uids") != 0)
		return -1;
	snprintf(db_path, sizeof db_path, "%s/uids.db", tmpdir);
	char csv[420];
	snprintf(csv, sizeof csv, "%s/log.csv", tmpdir);
	/* an invented meter log: L falling with bias, six points */
	write_file(csv, "current (A),L (uH),R (mohm)\n0,100,20\n0.5,99.5,20\n1,98,20\n1.5,95,20\n2,90,21\n2.5,80,21\n");
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "add", "UID-1", "--nominal", "100uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.1V", NULL);
	int rc = r.status;
	run_free(&r);
	/* U-1 twice: its newest sweep (2) is not its unit's id (1), so a sweep
	 * id taken for a unit id shows */
	const char *serials[] = { "U-1", "U-1", "U-2" };
	for (int i = 0; rc == 0 && i < 3; i++) {
		hb_run(&r, station_bare, "--db", db_path, "import", csv, "--part", "UID-1", "--unit", serials[i], "--freq",
		       "100kHz", NULL);
		rc = r.status;
		if (rc != 0)
			fprintf(stderr, "import: %s\n", r.err);
		run_free(&r);
	}
	return rc == 0 ? 0 : -1;
}

static int group_teardown(void **state)
{
	return cli_fixture_teardown(state);
}

/* 8-4-4-4-12 hexadecimal digits with hyphens: the UUID text form of
 * RFC 9562 section 4. */
static void expect_uuid_text(const char *s)
{
	assert_int_equal(strlen(s), 36);
	for (int i = 0; i < 36; i++) {
		if (i == 8 || i == 13 || i == 18 || i == 23)
			assert_int_equal(s[i], '-');
		else if (!isxdigit((unsigned char)s[i]))
			fail_msg("'%s' is not a UUID text (byte %d)", s, i);
	}
}

static void test_history_rows_carry_uids(void **state)
{
	(void)state;
	static const char *const k_sweep_uid[] = { "sweep_uid", NULL }, *const k_unit_uid[] = { "unit_uid", NULL },
				 *const k_sweep_id[] = { "sweep_id", NULL }, *const k_uid[] = { "uid", NULL },
				 *const k_id[] = { "id", NULL }, *const k_serial[] = { "serial", NULL };
	run r;
	hb_run(&r, station_bare, "--db", db_path, "history", "UID-1", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	run_free(&r);
	json_t *units = json_object_get(j, "units");
	assert_int_equal(json_array_size(units), 2);
	char seen_unit[2][40];
	for (size_t i = 0; i < 2; i++) {
		json_t *row = json_array_get(units, i);
		const char *suid = jtext(row, k_sweep_uid), *uuid = jtext(row, k_unit_uid);
		expect_uuid_text(suid);
		expect_uuid_text(uuid);
		snprintf(seen_unit[i], sizeof seen_unit[i], "%s", uuid);
		long long sid = (long long)jnum(row, k_sweep_id);
		/* the same sweep as `show` gives it: by its local id ... */
		char id[32];
		snprintf(id, sizeof id, "%lld", sid);
		hb_run(&r, station_bare, "--db", db_path, "show", id, "--json", NULL);
		assert_int_equal(r.status, 0);
		json_t *s = parse_out(&r);
		run_free(&r);
		assert_string_equal(jtext(s, k_uid), suid);
		assert_string_equal(jtext(s, k_unit_uid), uuid);
		assert_string_equal(jtext(s, k_serial), jtext(row, k_serial));
		json_decref(s);
		/* ... and by the identity history gave */
		hb_run(&r, station_bare, "--db", db_path, "show", suid, "--json", NULL);
		assert_int_equal(r.status, 0);
		s = parse_out(&r);
		run_free(&r);
		assert_int_equal((long long)jnum(s, k_id), sid);
		json_decref(s);
	}
	/* two units, two identities */
	assert_string_not_equal(seen_unit[0], seen_unit[1]);
	json_decref(j);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_history_rows_carry_uids),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
