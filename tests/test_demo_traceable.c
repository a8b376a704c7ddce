/* tests/test_demo_traceable.c - issue 11's done-when, as a user runs it: the demo's report verifies, fails after one byte is changed, and the demo meter's reverse query lists the demo's sweeps and its lot decision */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "cli_fixture.h"
#include "cli_json.h"

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("demotrace");
}

/* The last line of a command's output. */
static const char *last_line(const char *out, char *buf, size_t cap)
{
	size_t len = strlen(out);
	while (len > 0 && out[len - 1] == '\n')
		len--;
	size_t start = len;
	while (start > 0 && out[start - 1] != '\n')
		start--;
	snprintf(buf, cap, "%.*s", (int)(len - start), out + start);
	return buf;
}

static void flip_byte(const char *path, long at)
{
	FILE *f = fopen(path, "r+b");
	assert_non_null(f);
	assert_int_equal(fseek(f, at, SEEK_SET), 0);
	int c = fgetc(f);
	assert_true(c != EOF);
	assert_int_equal(fseek(f, at, SEEK_SET), 0);
	assert_int_equal(fputc(c ^ 0x01, f), c ^ 0x01);
	assert_int_equal(fclose(f), 0);
}

static long file_size(const char *path)
{
	FILE *f = fopen(path, "rb");
	assert_non_null(f);
	assert_int_equal(fseek(f, 0, SEEK_END), 0);
	long n = ftell(f);
	fclose(f);
	return n;
}

/* SHA-256 (FIPS 180-4) of the page as filed: any change of one bit of the
 * file changes the digest, so one byte changed anywhere is found; changed
 * back, the page is intact again. The demo's meter is the simulator's
 * (serial SL0001, docs/resources.md); the demo's scenario rejects its lot
 * (src/cli/demo_extras.c: one unit of the sample far above tolerance). */
static void test_demo_verify_and_affected(void **state)
{
	(void)state;
	char out_dir[400], page[460], store[460], line[400];
	snprintf(out_dir, sizeof out_dir, "%s/demo-out", tmpdir);
	snprintf(page, sizeof page, "%s/report.html", out_dir);
	snprintf(store, sizeof store, "%s/bench.db", out_dir);
	run r;
	hb_run(&r, station_bare, "demo", "--out", out_dir, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);

	/* no --db: the store beside the report is the one it was filed in */
	hb_run(&r, station_bare, "verify", page, NULL);
	if (r.status != 0)
		fail_msg("verify of the demo's report exited %d: %s%s", r.status, r.out, r.err);
	assert_string_equal(last_line(r.out, line, sizeof line),
			    "verify: intact - the report file and the stored points are as filed");
	run_free(&r);

	long mid = file_size(page) / 2;
	flip_byte(page, mid);
	hb_run(&r, station_bare, "verify", page, NULL);
	assert_int_equal(r.status, 1);
	assert_string_equal(last_line(r.out, line, sizeof line),
			    "verify: NOT intact - the report file differs from the one filed");
	run_free(&r);
	flip_byte(page, mid);
	hb_run(&r, station_bare, "verify", page, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);

	/* every sweep the demo stored, as `sweeps` lists them */
	hb_run(&r, station_bare, "--db", store, "sweeps", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *list = parse_out(&r);
	json_t *arr = json_is_array(list) ? list : json_object_get(list, "sweeps");
	size_t stored = json_array_size(arr);
	assert_true(stored >= 4);
	long long *ids = calloc(stored, sizeof *ids);
	assert_non_null(ids);
	for (size_t i = 0; i < stored; i++)
		ids[i] = (long long)json_integer_value(json_object_get(json_array_get(arr, i), "id"));
	json_decref(list);
	run_free(&r);

	/* the command line of the issue, --db after the command */
	hb_run(&r, station_bare, "instrument", "affected", "SL0001", "--since", "2000-01-01", "--db", store, "--json",
	       NULL);
	if (r.status != 0)
		fail_msg("instrument affected exited %d: %s", r.status, r.err);
	json_t *root = parse_out(&r);
	json_t *sw = json_object_get(root, "sweeps");
	assert_int_equal(json_array_size(sw), stored);
	for (size_t i = 0; i < stored; i++) {
		bool found = false;
		for (size_t k = 0; k < json_array_size(sw); k++)
			found |= (long long)json_integer_value(json_object_get(json_array_get(sw, k), "id")) == ids[i];
		if (!found)
			fail_msg("sweep %lld of the demo is not listed as measured with SL0001", ids[i]);
	}
	json_t *lots = json_object_get(root, "lots");
	assert_int_equal(json_array_size(lots), 1);
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, 0), "decision")), "reject");
	json_decref(root);
	free(ids);
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_demo_verify_and_affected),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
