/* tests/test_part_report_extras.c - the demo's part report: the lot stream of its supplier, and the design lines wired to the `design` command */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "cli_json.h"

static char out_dir[400], db_path[420];
static char *page;

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("part-report-extras") != 0)
		return -1;
	snprintf(out_dir, sizeof out_dir, "%s/demo", tmpdir);
	snprintf(db_path, sizeof db_path, "%s/bench.db", out_dir);
	run r;
	hb_run(&r, station_bare, "demo", "--out", out_dir, NULL);
	int rc = r.status;
	if (rc != 0)
		fprintf(stderr, "demo exited %d: %s\n", rc, r.err);
	run_free(&r);
	char p[460];
	snprintf(p, sizeof p, "%s/part-report.html", out_dir);
	page = rc == 0 ? slurp(p) : NULL;
	return page ? 0 : -1;
}

static int group_teardown(void **state)
{
	free(page);
	return cli_fixture_teardown(state);
}

/* The text of the section headed `heading` (its <h2> to its </section>), copied. */
static char *section(const char *heading)
{
	char h[120];
	snprintf(h, sizeof h, "<h2>%s</h2>", heading);
	const char *a = strstr(page, h);
	if (!a)
		fail_msg("the part report has no section '%s'", heading);
	const char *b = strstr(a, "</section>");
	assert_non_null(b);
	return strndup(a, (size_t)(b - a));
}

/* The cells of the table row that holds `needle` in one of its cells. */
static int row_cells(const char *sec, const char *needle, char cells[][200], int max)
{
	const char *hit = strstr(sec, needle);
	if (!hit)
		fail_msg("no row with '%s'", needle);
	const char *tr = hit;
	while (tr > sec && strncmp(tr, "<tr", 3) != 0)
		tr--;
	const char *end = strstr(hit, "</tr>");
	assert_non_null(end);
	int n = 0;
	for (const char *p = tr; n < max && (p = strstr(p, "<td")) && p < end;) {
		p = strchr(p, '>') + 1;
		const char *q = strstr(p, "</td>");
		snprintf(cells[n++], 200, "%.*s", (int)(q - p), p);
		p = q;
	}
	return n;
}

/* The demo's lot (src/cli/demo_extras.c, an invented scenario): 40 chokes
 * from the supplier Brackenfold Windings, level II, normal, AQL 1.0, one
 * unit of the draw nonconforming. */
static void test_stream_table_shows_the_demo_lot(void **state)
{
	(void)state;
	char *sec = section("Lot streams");
	assert_non_null(strstr(sec, "<caption>Lot stream, supplier Brackenfold Windings:"));
	char c[10][200];
	assert_int_equal(row_cells(sec, ">LOT-2611-A<", c, 10), 10);
	assert_string_equal(c[1], "LOT-2611-A");
	assert_string_equal(c[2], "normal"); /* ISO 2859-1:1999 9.1: a stream starts on normal inspection */
	/* MIL-STD-105E Table I: lot size 26 to 50 at level II is code letter D;
	 * Table II-A: D at AQL 1.0 points down to E, n 13, Ac 0, Re 1 (the
	 * same plan in ISO 2859-1 tables 1 and 2-A). */
	assert_string_equal(c[3], "E");
	assert_string_equal(c[4], "13");
	assert_string_equal(c[5], "0 / 1");
	assert_string_equal(c[6], "1");
	/* d = 1 >= Re = 1: the lot is not accepted (ISO 2859-1 clause 6.2) */
	assert_string_equal(c[7], "REJECT");
	/* ISO 2859-1:1999 9.3.3.2, from memory: the switching score is set
	 * to 0 when a lot is not accepted */
	assert_string_equal(c[8], "0");
	/* 9.3.2: one rejected lot alone does not tighten (two of five do) */
	assert_string_equal(c[9], "normal");
	free(sec);

	/* the supplier is the stored one, not only a caption */
	run r;
	hb_run(&r, station_bare, "--db", db_path, "history", "HBX-108G", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	run_free(&r);
	json_t *streams = json_object_get(j, "lot_streams");
	assert_int_equal(json_array_size(streams), 1);
	static const char *const k_supplier[] = { "supplier", NULL };
	assert_string_equal(jtext(json_array_get(streams, 0), k_supplier), "Brackenfold Windings");
	json_decref(j);
}

/* A wiring test, not a check of the design arithmetic (tests/test_design.c
 * does that against its sources): the report's design lines and `henrybench
 * design --json` rest on the same stored fit, so they must give the same
 * numbers, to the digits the report prints. */
static void test_design_lines_match_the_design_command(void **state)
{
	(void)state;
	static const char *const k_turns[] = { "turns", NULL }, *const k_U[] = { "U", NULL }, *const k_k[] = { "k", NULL },
				 *const k_L0[] = { "L0_H", NULL };
	char *sec = section("Design");
	/* the part's rated current 3 A and nominal 108 uH (demo part HBX-108G) */
	assert_non_null(strstr(sec, "nominal 108 uH at the rated current 3 A"));
	char c[8][200];
	assert_int_equal(row_cells(sec, "(as drawn)", c, 8), 8);
	/* held "gap 500 um at centre (as drawn)": given to the command as it is */
	char gap[64];
	const char *g = c[0] + strlen("gap ");
	const char *at = strstr(g, " at ");
	assert_non_null(at);
	snprintf(gap, sizeof gap, "%.*s", (int)(at - g), g);
	char *sp = strchr(gap, ' ');
	if (sp)
		memmove(sp, sp + 1, strlen(sp));
	run r;
	hb_run(&r, station_bare, "--db", db_path, "design", "--part", "HBX-108G", "--target-l", "108uH", "--at", "3A",
	       "--gap", gap, "--json", NULL);
	if (r.status != 0)
		fail_msg("design --gap %s exited %d: %s", gap, r.status, r.err);
	json_t *j = parse_out(&r);
	run_free(&r);
	double turns = jnum(j, k_turns), U = jnum(j, k_U), k = jnum(j, k_k), L0 = jnum(j, k_L0);
	/* printed: turns to 5 significant digits, U to 2, k to 2 decimals, L0 to 4 digits in uH */
	assert_true(fabs(atof(c[2]) - turns) <= 5e-5 * turns);
	assert_true(fabs(atof(c[3]) - U) <= 0.05 * U);
	assert_true(fabs(atof(c[4]) - k) <= 0.006);
	assert_non_null(strstr(c[5], " uH"));
	assert_true(fabs(atof(c[5]) * 1e-6 - L0) <= 5e-4 * L0);
	json_decref(j);

	/* the turns held: the report says why there is no gap, in the command's words */
	assert_int_equal(row_cells(sec, "(the part&#39;s)", c, 8), 8);
	hb_run(&r, station_bare, "--db", db_path, "design", "--part", "HBX-108G", "--target-l", "108uH", "--at", "3A",
	       NULL);
	if (r.status == 0) {
		/* a gap exists: the report must print it, not a reason */
		assert_non_null(strstr(c[1], "gap at "));
	} else {
		const char *why = strstr(r.err, "design: ");
		assert_non_null(why);
		why += strlen("design: ");
		char w[300];
		snprintf(w, sizeof w, "%.*s", (int)strcspn(why, "\n"), why);
		assert_string_equal(c[2], w);
	}
	run_free(&r);
	free(sec);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_stream_table_shows_the_demo_lot),
		cmocka_unit_test(test_design_lines_match_the_design_command),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
