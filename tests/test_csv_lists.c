/* tests/test_csv_lists.c - `sweeps --csv` and `compare --csv`: RFC 4180 rows through the one CSV writer, every stored sweep once, numbers that read back exactly */
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

#include <cmocka.h>

#include "cli_fixture.h"
#include "db/hb_db.h"

static char db_path[400];

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("csv-lists") != 0)
		return -1;
	char dir[400];
	snprintf(dir, sizeof dir, "%s/demo", tmpdir);
	run r;
	hb_run(&r, station_bare, "demo", "--out", dir, NULL);
	int st = r.status;
	run_free(&r);
	snprintf(db_path, sizeof db_path, "%s/bench.db", dir);
	return st == 0 ? 0 : -1;
}

/* Splits CSV text into rows of fields: RFC 4180 section 2 (CRLF between
 * records, fields quoted when they hold a comma, quote or line break). The
 * demo's fields hold none of those, which the test asserts. */
typedef struct rows {
	size_t n;
	char *field[64][32];
	size_t nf[64];
} rows;

static void split(char *text, rows *out)
{
	memset(out, 0, sizeof *out);
	assert_null(strchr(text, '"'));
	for (char *line = text; *line && out->n < 64;) {
		char *crlf = strstr(line, "\r\n");
		/* every record ends in CRLF (RFC 4180 section 2, rule 1) */
		assert_non_null(crlf);
		*crlf = '\0';
		size_t k = 0;
		for (char *f = line; k < 32;) {
			char *comma = strchr(f, ',');
			out->field[out->n][k++] = f;
			if (!comma)
				break;
			*comma = '\0';
			f = comma + 1;
		}
		out->nf[out->n++] = k;
		line = crlf + 2;
	}
}

static int column(const rows *r, const char *name)
{
	for (size_t k = 0; k < r->nf[0]; k++)
		if (strcmp(r->field[0][k], name) == 0)
			return (int)k;
	fail_msg("no column %s", name);
	return -1;
}

/* One row per stored sweep, newest first as the listing; id, status and
 * point count as the store holds them. */
static void test_sweeps_csv(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", db_path, "sweeps", "--csv", NULL);
	assert_int_equal(r.status, 0);
	rows t;
	split(r.out, &t);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	hb_db_close(db);
	assert_int_equal(t.n, n + 1);
	int cid = column(&t, "sweep_id"), cst = column(&t, "status"), cpt = column(&t, "points"),
	    cf = column(&t, "test_freq_Hz");
	for (size_t i = 0; i < n; i++) {
		/* every record has as many fields as the header (RFC 4180 section 2, rule 4) */
		assert_int_equal(t.nf[i + 1], t.nf[0]);
		assert_int_equal(atoll(t.field[i + 1][cid]), list[i].id);
		assert_string_equal(t.field[i + 1][cst], hb_db_sweep_status_name(list[i].status));
		assert_int_equal(atol(t.field[i + 1][cpt]), list[i].n_points);
		/* a frequency sweep has no single test frequency: an empty cell, not "nan" */
		if (list[i].kind == HB_DB_SWEEP_FREQUENCY)
			assert_string_equal(t.field[i + 1][cf], "");
		else
			assert_true(strtod(t.field[i + 1][cf], NULL) == list[i].test_freq_hz);
	}
	hb_db_sweeps_free(list);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "sweeps", "--csv", "--json", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

/* One row per compared sweep; L0 as the newest fit stored it, written so
 * that it reads back as the same double (the CSV writer's promise). */
static void test_compare_csv(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.kind = HB_DB_SWEEP_BIAS;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_true(n >= 2);
	int64_t ids[2] = { list[0].id, list[1].id };
	hb_db_sweeps_free(list);
	double l0[2];
	hb_db_fit *fit = calloc(1, sizeof *fit);
	assert_non_null(fit);
	for (int k = 0; k < 2; k++) {
		assert_int_equal(hb_db_fit_get_latest(db, ids[k], NULL, fit), HB_OK);
		l0[k] = NAN;
		for (size_t v = 0; v < fit->n_values; v++)
			if (strcmp(fit->values[v].name, "L0") == 0)
				l0[k] = fit->values[v].value;
		assert_true(isfinite(l0[k]));
	}
	free(fit);
	hb_db_close(db);
	char a[32], b[32];
	snprintf(a, sizeof a, "%lld", (long long)ids[0]);
	snprintf(b, sizeof b, "%lld", (long long)ids[1]);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "compare", a, b, "--csv", "--currents", "3", NULL);
	if (r.status != 0)
		fail_msg("compare --csv exited %d: %s", r.status, r.err);
	rows t;
	split(r.out, &t);
	assert_int_equal(t.n, 3);
	int cid = column(&t, "sweep_id"), cl0 = column(&t, "L0_H");
	/* three "L_H_at_<I>_A" columns after the fixed ones */
	int at = 0;
	for (size_t k = 0; k < t.nf[0]; k++)
		at += strncmp(t.field[0][k], "L_H_at_", 7) == 0;
	assert_int_equal(at, 3);
	for (int k = 0; k < 2; k++) {
		assert_int_equal(t.nf[k + 1], t.nf[0]);
		assert_int_equal(atoll(t.field[k + 1][cid]), ids[k]);
		assert_true(strtod(t.field[k + 1][cl0], NULL) == l0[k]);
	}
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_sweeps_csv),
		cmocka_unit_test(test_compare_csv),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
