/* tests/test_cmd_unc.c - the uncertainty and decision-rule options end to end: fit --budget, part --decision-rule/--guard-r, show's verdicts, history's Cpk interval */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "cli_json.h"
#include "db/hb_db.h"

/* One demo store for the whole group: `demo` runs in virtual time. */
static char demo_db[400];
static char part_db[400];
static int part_counter;
static long long bias_id; /* the demo's first bias sweep (its first sweep is a frequency sweep) */

static int part_setup(void **state)
{
	(void)state;
	snprintf(part_db, sizeof part_db, "%s/part-%d.db", tmpdir, ++part_counter);
	return 0;
}

/* The whole line of `text` holding `needle`, copied into buf; NULL when none does. */
static const char *line_with(const char *text, const char *needle, char *buf, size_t cap)
{
	const char *at = strstr(text, needle);
	if (!at)
		return NULL;
	const char *start = at;
	while (start > text && start[-1] != '\n')
		start--;
	const char *end = strchr(at, '\n');
	size_t len = end ? (size_t)(end - start) : strlen(start);
	if (len >= cap)
		len = cap - 1;
	memcpy(buf, start, len);
	buf[len] = '\0';
	return buf;
}

/* `fit ID --budget` prints, after the fit, the stored budget: L0's block
 * has the meter's gain term whose standard uncertainty is the sweep's
 * stored accuracy a taken as rectangular, a / sqrt(3) (GUM 4.3.7). */
static void test_fit_budget_prints_the_meter_term_of_L0(void **state)
{
	(void)state;
	char id[24];
	snprintf(id, sizeof id, "%lld", bias_id);
	run r;
	hb_run(&r, station_bare, "--db", demo_db, "fit", id, "--budget", NULL);
	if (r.status != 0)
		fail_msg("fit --budget exited %d: %s", r.status, r.err);
	const char *table = strstr(r.out, "uncertainty budget of fit");
	if (!table)
		fail_msg("no budget table after the fit:\n%s", r.out);
	const char *l0 = strstr(table, "\nL0 = ");
	assert_non_null(l0);
	const char *l0_end = strstr(l0 + 1, "\n\n");
	char block[4096];
	size_t len = l0_end ? (size_t)(l0_end - l0) : strlen(l0);
	if (len >= sizeof block)
		len = sizeof block - 1;
	memcpy(block, l0, len);
	block[len] = '\0';
	char line[512];
	if (!line_with(block, "meter gain", line, sizeof line))
		fail_msg("L0's budget has no meter term:\n%s", block);
	assert_non_null(strstr(line, "meter accuracy"));
	/* "  meter gain  B  1  u(x)  c  u_i(y)  source": the u(x) column */
	char name1[16], name2[16], type[8];
	double x, u;
	assert_int_equal(sscanf(line, "%15s %15s %7s %lf %lf", name1, name2, type, &x, &u), 5);
	assert_string_equal(type, "B");

	hb_db *db = NULL;
	assert_int_equal(hb_db_open(demo_db, &db), HB_OK);
	hb_db_sweep sw;
	assert_int_equal(hb_db_sweep_get(db, bias_id, &sw), HB_OK);
	hb_db_close(db);
	assert_true(isfinite(sw.meter_accuracy_rel) && sw.meter_accuracy_rel > 0);
	double want = sw.meter_accuracy_rel / sqrt(3.0);
	if (!(fabs(u - want) <= 0.005 * want)) /* printed to 3 digits */
		fail_msg("meter term u(x) %g, want %g (accuracy %g / sqrt 3)", u, want, sw.meter_accuracy_rel);
	assert_non_null(strstr(block, "u_c = "));
	assert_non_null(strstr(block, "U = "));
	run_free(&r);

	/* --budget reads the store: with --no-store there is nothing to read */
	hb_run(&r, station_bare, "--db", demo_db, "fit", id, "--budget", "--no-store", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	run_free(&r);

	/* A fit that is not stored names no fit number (it used to say "stored
	 * as fit 0"), and the store gains no fit. */
	hb_db_fit before, after;
	assert_int_equal(hb_db_open(demo_db, &db), HB_OK);
	assert_int_equal(hb_db_fit_get_latest(db, bias_id, NULL, &before), HB_OK);
	hb_db_close(db);
	hb_run(&r, station_bare, "--db", demo_db, "fit", id, "--no-store", NULL);
	assert_int_equal(r.status, 0);
	assert_non_null(strstr(r.out, "(not stored,"));
	assert_null(strstr(r.out, "stored as fit"));
	run_free(&r);
	assert_int_equal(hb_db_open(demo_db, &db), HB_OK);
	assert_int_equal(hb_db_fit_get_latest(db, bias_id, NULL, &after), HB_OK);
	hb_db_close(db);
	assert_true(after.id == before.id);
}

/* The rule a part states is stored under its canonical name and shown. */
static void test_part_decision_rule_is_stored_and_shown(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", part_db, "part", "add", "PR1", "--nominal", "10uH", "--tol", "20%", "--freq",
	       "100kHz", "--level", "0.1V", "--decision-rule", "non-binary", "--guard-r", "1", NULL);
	if (r.status != 0)
		fail_msg("part add exited %d: %s", r.status, r.err);
	run_free(&r);

	hb_db *db = NULL;
	assert_int_equal(hb_db_open(part_db, &db), HB_OK);
	hb_db_part p;
	assert_int_equal(hb_db_part_get(db, "PR1", &p), HB_OK);
	hb_db_close(db);
	assert_string_equal(p.decision_rule, "non-binary");
	assert_true(p.guard_r == 1.0);

	hb_run(&r, station_bare, "--db", part_db, "part", "show", "PR1", NULL);
	assert_int_equal(r.status, 0);
	char line[256];
	if (!line_with(r.out, "decision rule", line, sizeof line))
		fail_msg("part show names no decision rule:\n%s", r.out);
	assert_non_null(strstr(line, "non-binary"));
	assert_non_null(strstr(line, "r = 1"));
	run_free(&r);

	/* edit changes the rule and r and nothing else; "nonbinary" is the same rule */
	hb_run(&r, station_bare, "--db", part_db, "part", "edit", "PR1", "--decision-rule", "guarded", "--guard-r", "0.5",
	       NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "--db", part_db, "part", "show", "PR1", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *o = parse_out(&r);
	assert_string_equal(jtext(o, (const char *const[]){ "decision_rule", NULL }), "guarded");
	assert_true(jnum(o, (const char *const[]){ "guard_r", NULL }) == 0.5);
	assert_true(jnum(o, (const char *const[]){ "nominal_H", NULL }) == 10e-6);
	json_decref(o);
	run_free(&r);
}

/* A bad rule or r: exit 2, one line naming the value and what is accepted,
 * and the stored part unchanged. */
static void test_bad_rule_and_r_exit_2(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", part_db, "part", "add", "PR2", "--nominal", "10uH", "--tol", "20%", "--freq",
	       "100kHz", "--level", "0.1V", "--decision-rule", "x", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "'x'"));
	assert_non_null(strstr(r.err, "simple"));
	assert_non_null(strstr(r.err, "guarded"));
	assert_non_null(strstr(r.err, "non-binary"));
	run_free(&r);

	static const char *const bad_r[] = { "0", "-1", "3.5", "abc" };
	for (size_t i = 0; i < sizeof bad_r / sizeof bad_r[0]; i++) {
		hb_run(&r, station_bare, "--db", part_db, "part", "add", "PR2", "--nominal", "10uH", "--tol", "20%",
		       "--freq", "100kHz", "--level", "0.1V", "--guard-r", bad_r[i], NULL);
		if (r.status != 2)
			fail_msg("--guard-r %s exited %d", bad_r[i], r.status);
		assert_int_equal(count_lines(r.err), 1);
		assert_non_null(strstr(r.err, bad_r[i]));
		run_free(&r);
	}
	/* the edge is accepted: r = 3 */
	hb_run(&r, station_bare, "--db", part_db, "part", "add", "PR2", "--nominal", "10uH", "--tol", "20%", "--freq",
	       "100kHz", "--level", "0.1V", "--guard-r", "3", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);

	hb_run(&r, station_bare, "inspect", "--conditional-policy", "sometimes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "sometimes"));
	assert_non_null(strstr(r.err, "nonconforming"));
	assert_non_null(strstr(r.err, "by-side"));
	run_free(&r);
}

/* history --json: each lot's Cpk with its 95 % interval around it, and the
 * warning of a lot under 30 units (the demo's lots are small); the text
 * states the interval and never prints "-0.00". */
static void test_history_cpk_interval(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", demo_db, "history", "HBX-108G", "--json", NULL);
	if (r.status != 0)
		fail_msg("history exited %d: %s", r.status, r.err);
	json_t *j = parse_out(&r);
	json_t *lots = json_object_get(j, "lots");
	assert_true(json_is_array(lots) && json_array_size(lots) > 0);
	size_t with_cpk = 0;
	for (size_t i = 0; i < json_array_size(lots); i++) {
		json_t *lot = json_array_get(lots, i);
		json_t *ci = jget(lot, (const char *const[]){ "Cpk_interval", "Cpk_confidence", NULL });
		if (!json_is_object(ci))
			fail_msg("lot %zu has no Cpk interval", i);
		json_t *cpk = json_object_get(ci, "Cpk");
		if (!json_is_number(cpk))
			continue;
		with_cpk++;
		double c = json_number_value(cpk);
		double lo = jnum(ci, (const char *const[]){ "Cpk_lower", NULL });
		double hi = jnum(ci, (const char *const[]){ "Cpk_upper", NULL });
		assert_true(lo < c && c < hi);
		assert_true(jnum(ci, (const char *const[]){ "confidence", NULL }) == 0.95);
		double n = jnum(ci, (const char *const[]){ "n", NULL });
		if (n < 30)
			assert_non_null(json_string_value(json_object_get(ci, "warning")));
		/* the lot's own Cpk is the interval's centre */
		assert_true(jnum(lot, (const char *const[]){ "Cpk", NULL }) == c);
	}
	assert_true(with_cpk > 0);
	json_decref(j);
	run_free(&r);

	hb_run(&r, station_bare, "--db", demo_db, "history", "HBX-108G", NULL);
	assert_int_equal(r.status, 0);
	assert_non_null(strstr(r.out, "(95 %: "));
	assert_non_null(strstr(r.out, "< 30"));
	assert_null(strstr(r.out, "-0.00"));
	run_free(&r);
}

/* show: every verdict states its rule with U; a part switched to the
 * guarded rule and refitted gets acceptance limits inside its tolerance
 * limits (w = r U), in JSON and text alike. The fit's values carry their
 * stored budgets. */
static void test_show_verdicts_state_the_rule(void **state)
{
	(void)state;
	char id[24];
	snprintf(id, sizeof id, "%lld", bias_id);
	run r;
	hb_run(&r, station_bare, "--db", demo_db, "show", id, "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *j = parse_out(&r);
	json_t *vs = json_object_get(j, "verdicts");
	assert_true(json_is_array(vs) && json_array_size(vs) > 0);
	for (size_t i = 0; i < json_array_size(vs); i++) {
		json_t *rule = json_object_get(json_array_get(vs, i), "decision_rule");
		assert_true(json_is_object(rule));
		assert_non_null(json_string_value(json_object_get(rule, "name")));
		assert_true(strlen(json_string_value(json_object_get(rule, "statement"))) > 20);
	}
	json_t *l0 = json_object_get(json_object_get(json_object_get(j, "fit"), "values"), "L0");
	assert_true(jnum(l0, (const char *const[]){ "U", NULL }) > 0);
	assert_true(json_array_size(json_object_get(l0, "budget")) >= 2);
	json_t *mu_e = json_object_get(json_object_get(json_object_get(j, "fit"), "values"), "mu_e");
	if (mu_e)
		assert_true(jnum(mu_e, (const char *const[]){ "U", NULL }) > 0);
	json_decref(j);
	run_free(&r);

	hb_run(&r, station_bare, "--db", demo_db, "part", "edit", "HBX-108G", "--decision-rule", "guarded", "--guard-r",
	       "1", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "--db", demo_db, "fit", id, NULL);
	run_free(&r);
	hb_run(&r, station_bare, "--db", demo_db, "show", id, "--json", NULL);
	assert_int_equal(r.status, 0);
	j = parse_out(&r);
	vs = json_object_get(j, "verdicts");
	json_t *l0v = NULL;
	for (size_t i = 0; i < json_array_size(vs); i++)
		if (strcmp(json_string_value(json_object_get(json_array_get(vs, i), "check")), "L0") == 0)
			l0v = json_array_get(vs, i);
	assert_non_null(l0v);
	assert_string_equal(json_string_value(json_object_get(json_object_get(l0v, "decision_rule"), "name")),
			    "guarded");
	double U = jnum(l0v, (const char *const[]){ "U", NULL });
	double tl = jnum(l0v, (const char *const[]){ "limit_low", NULL });
	double al = jnum(l0v, (const char *const[]){ "acceptance_low", "accept_low", NULL });
	if (!(fabs((al - tl) - U) <= 1e-9 * fabs(tl)))
		fail_msg("guarded, r = 1: acceptance limit %.9g, want TL + U = %.9g", al, tl + U);
	json_decref(j);
	run_free(&r);

	hb_run(&r, station_bare, "--db", demo_db, "show", id, NULL);
	assert_int_equal(r.status, 0);
	char line[512];
	if (!line_with(r.out, "  L0 ", line, sizeof line))
		fail_msg("show prints no L0 verdict:\n%s", r.out);
	assert_non_null(strstr(line, "rule guarded"));
	/* L0 has both limits, so its acceptance interval reads "acceptance <low> to <high>" */
	const char *acc = strstr(line, " acceptance ");
	assert_non_null(acc);
	assert_non_null(strstr(acc, " to "));
	assert_non_null(strstr(r.out, "meter accuracy"));
	assert_non_null(strstr(r.out, "supply accuracy"));
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("cmd-unc") != 0)
		return -1;
	char dir[320];
	snprintf(dir, sizeof dir, "%s/demo", tmpdir);
	snprintf(demo_db, sizeof demo_db, "%s/bench.db", dir);
	char *argv[] = { NULL, "demo", "--out", dir, NULL };
	run r;
	hb_runv(&r, station_bare, STDIN_NULL, NULL, argv);
	int status = r.status;
	if (status != 0)
		fprintf(stderr, "demo exited %d: %s\n", status, r.err);
	run_free(&r);
	if (status != 0)
		return -1;
	hb_db *db = NULL;
	if (hb_db_open(demo_db, &db) != HB_OK)
		return -1;
	/* the lowest bias sweep's id, whatever the demo's order */
	for (long long id = 1; id < 100 && !bias_id; id++) {
		hb_db_sweep sw;
		if (hb_db_sweep_get(db, id, &sw) == HB_OK && sw.kind == HB_DB_SWEEP_BIAS)
			bias_id = id;
	}
	hb_db_close(db);
	return bias_id ? 0 : -1;
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_fit_budget_prints_the_meter_term_of_L0),
		cmocka_unit_test_setup(test_part_decision_rule_is_stored_and_shown, part_setup),
		cmocka_unit_test_setup(test_bad_rule_and_r_exit_2, part_setup),
		cmocka_unit_test(test_history_cpk_interval),
		cmocka_unit_test(test_show_verdicts_state_the_rule),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
