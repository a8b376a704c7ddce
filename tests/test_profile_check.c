/* tests/test_profile_check.c - `profile check` against the simulated meter and supply (every operation works, the supply changed only when energised, ramped and off), `profile new` from an *IDN? reply */
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
#include "sim_witness.h"

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("profile-check");
}

/* The line "OP<blanks>RESULT" of the report. */
static const char *op_line(const char *out, const char *op)
{
	size_t len = strlen(op);
	for (const char *line = out; line && *line;) {
		if (strncmp(line, op, len) == 0 && line[len] == ' ') {
			const char *r = line + len;
			while (*r == ' ')
				r++;
			return r;
		}
		line = strchr(line, '\n');
		if (line)
			line++;
	}
	return NULL;
}

static void expect_op(const char *out, const char *op, const char *result)
{
	const char *r = op_line(out, op);
	if (!r)
		fail_msg("operation %s missing from the report:\n%s", op, out);
	if (strncmp(r, result, strlen(result)) != 0 || (r[strlen(result)] != '\n'))
		fail_msg("operation %s: '%.20s', want '%s'", op, r, result);
}

/* The meter operations of a profile (drivers/profile.c, hb_profile_operations). */
static const char *const lcr_ops[] = { "reset", "frequency", "level.voltage", "level.current", "function",
				       "averaging", "aperture", "measure", "dcr", "bias.current", "bias.state",
				       "correct.open", "correct.short", "errors", NULL };
static const char *const supply_ops[] = { "reset", "voltage", "current", "current.query", "output.on", "output.off",
					  "output.state", "measure.current", "measure.voltage", "mode", "protection",
					  "errors", NULL };

/* Every operation of the simulated meter works; the corrections only with
 * --corrections (they replace the meter's stored correction). */
static void test_sim_lcr_every_operation_works(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "profile", "check", "sim:lcr", "--corrections", NULL);
	if (r.status != 0)
		fail_msg("profile check sim:lcr exited %d: %s", r.status, r.err);
	for (int i = 0; lcr_ops[i]; i++)
		expect_op(r.out, lcr_ops[i], "works");
	assert_non_null(strstr(r.out, "\n14 work, 0 fail, 0 not in profile, 0 held back\n"));
	/* IEEE 488.2 section 10.18: *OPC? answers "1"; SCPI-1999 vol. 2, SYSTem:ERRor:
	 * an empty queue answers 0,"No error". Both seen as sent and received. */
	assert_non_null(strstr(r.out, "\n    > *RST\n    > *OPC?\n    < 1\n"));
	assert_non_null(strstr(r.out, "\n    < 0,\"No error\"\n"));
	/* The measurement as received and as read: the first field is L in H,
	 * shown with its SI prefix (u = 1e-6, SI Brochure 9th ed. table 7). */
	const char *m = strstr(r.out, "\nmeasure ");
	assert_non_null(m);
	const char *reply = strstr(m, "    < ");
	const char *read = strstr(m, "    read as: L ");
	assert_non_null(reply);
	assert_non_null(read);
	double henry = atof(reply + 6), shown = atof(read + 15);
	assert_non_null(strstr(read, " uH,"));
	assert_true(fabs(shown * 1e-6 - henry) <= 5e-5 * henry);
	run_free(&r);

	/* Plain `profile check sim:lcr` (issue 15, done when): the built-in
	 * simulator keeps no stored correction to lose, so every operation is
	 * sent and works, and the report says why the corrections went out. */
	hb_run(&r, station_bare, "profile", "check", "sim:lcr", NULL);
	if (r.status != 0)
		fail_msg("profile check sim:lcr exited %d: %s", r.status, r.err);
	for (int i = 0; lcr_ops[i]; i++)
		expect_op(r.out, lcr_ops[i], "works");
	assert_non_null(strstr(r.out, "\n14 work, 0 fail, 0 not in profile, 0 held back\n"));
	assert_non_null(strstr(r.out, "\n    sent without --corrections: the built-in simulator keeps no stored open "
				       "correction to lose"));
	run_free(&r);
}

/* A meter reached over the wire is a real one as far as the check knows:
 * without --corrections its stored corrections are held back and no
 * correction command goes out (the simulator's own log is the witness). */
static void test_real_meter_corrections_held_back(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_bare, "profile", "check", sim.lcr, NULL);
	if (r.status != 0)
		fail_msg("profile check %s exited %d: %s", sim.lcr, r.status, r.err);
	expect_op(r.out, "correct.open", "held back");
	expect_op(r.out, "correct.short", "held back");
	expect_op(r.out, "measure", "works");
	assert_null(strstr(r.out, "> IMP:CORR:"));
	run_free(&r);
	sim_stop(&sim);
	sim_free(&sim);
}

/* The supply is only read unless --energise; energised, every operation
 * works, the set-point never passes the check current, it is walked down
 * and the output goes off only once the current has decayed (the
 * simulator's log is the witness, docs/simulator.md). */
static void test_sim_supply_stays_off_unless_energised(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_bare, "profile", "check", sim.supply, NULL);
	if (r.status != 0)
		fail_msg("profile check exited %d: %s", r.status, r.err);
	static const char *const changing[] = { "voltage", "output.on", "current", "output.off", "reset" };
	for (size_t i = 0; i < 5; i++)
		expect_op(r.out, changing[i], "held back");
	expect_op(r.out, "measure.current", "works");
	expect_op(r.out, "output.state", "works");
	run_free(&r);

	hb_run(&r, station_bare, "profile", "check", sim.supply, "--energise", "--max-current", "10mA", NULL);
	if (r.status != 0)
		fail_msg("profile check --energise exited %d: %s", r.status, r.err);
	for (int i = 0; supply_ops[i]; i++)
		expect_op(r.out, supply_ops[i], "works");
	assert_non_null(strstr(r.out, " 0 fail, 0 not in profile, 0 held back\n"));
	run_free(&r);
	sim_stop(&sim);

	/* Nothing changed before --energise: the first set-point comes after
	 * the second connection's *IDN?. */
	const char *second = strstr(sim.log, "supply cmd *IDN?");
	for (int k = 0; second && k < 2; k++)
		second = strstr(second + 1, "supply cmd *IDN?");
	assert_non_null(second);
	const char *first_sp = strstr(sim.log, "supply setpoint ");
	assert_non_null(first_sp);
	assert_true(first_sp > second);
	double sp[64];
	int n = witness_setpoints_after(sim.log, sp, 64);
	assert_true(n >= 3);
	for (int i = 0; i < n; i++)
		assert_true(sp[i] <= 0.010 + 1e-9);
	assert_true(sp[n - 1] == 0);
	/* Two switch-offs, each below the off threshold the check uses (half
	 * the check current): the shut-down's, and the reset's sent only after
	 * it (common practice: a supply's *RST state has the output off). */
	assert_int_equal(witness_every_off_below(sim.log, 0.005), 2);
	sim_free(&sim);
}

/* Limits only tighten: above the station file's max_current is refused
 * before anything is opened; --energise on a meter is a usage error. */
static void test_energise_limits(void **state)
{
	(void)state;
	char station[400];
	snprintf(station, sizeof station, "%s/tight.ini", tmpdir);
	write_file(station, "[station]\nname = tight\n[limits]\nmax_current = 5mA\n");
	run r;
	hb_run(&r, station, "profile", "check", "sim:supply", "--energise", "--max-current", "10mA", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "only tighten"));
	run_free(&r);
	hb_run(&r, station_bare, "profile", "check", "sim:supply", "--energise", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--max-current"));
	run_free(&r);
	hb_run(&r, station_bare, "profile", "check", "sim:lcr", "--energise", "--max-current", "10mA", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	/* nobody at the port: exit 1 */
	hb_run(&r, station_bare, "profile", "check", "tcp://127.0.0.1:1", NULL);
	assert_int_equal(r.status, 1);
	run_free(&r);
}

/* profile new: match keys from the *IDN? fields (IEEE 488.2 section 10.14:
 * manufacturer, model, serial, firmware), the generic operations, never an
 * existing file overwritten; the new profile is the one chosen and works. */
static void test_profile_new(void **state)
{
	(void)state;
	char path[500];
	snprintf(path, sizeof path, "%s/new-meter.ini", tmpdir);
	run r;
	hb_run(&r, station_bare, "profile", "new", "--from", "sim:lcr", "--out", path, NULL);
	if (r.status != 0)
		fail_msg("profile new exited %d: %s", r.status, r.err);
	run_free(&r);
	char *text = slurp(path);
	/* The simulated meter answers Henrybench,SIM-LCR1,... (docs/simulator.md). */
	assert_non_null(strstr(text, "\nmatch.maker = ^Henrybench$\n"));
	assert_non_null(strstr(text, "\nmatch.model = ^SIM-LCR1$\n"));
	assert_non_null(strstr(text, "\nkind = lcr\n"));
	assert_non_null(strstr(text, "\n[lcr]\n"));
	hb_run(&r, station_bare, "profile", "new", "--from", "sim:lcr", "--out", path, NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "not overwritten"));
	run_free(&r);
	char *again = slurp(path);
	assert_string_equal(again, text);
	free(again);
	free(text);
	hb_run(&r, station_bare, "profile", "check", "sim:lcr", "--profile", path, NULL);
	if (r.status != 0)
		fail_msg("checking the new profile exited %d: %s", r.status, r.err);
	assert_non_null(strstr(r.out, "profile henrybench-sim-lcr1 ("));
	/* the simulator: the corrections are sent too (no stored correction to lose) */
	assert_non_null(strstr(r.out, " 0 fail, 0 not in profile, 0 held back\n"));
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_sim_lcr_every_operation_works),
		cmocka_unit_test(test_real_meter_corrections_held_back),
		cmocka_unit_test(test_sim_supply_stays_off_unless_energised),
		cmocka_unit_test(test_energise_limits),
		cmocka_unit_test(test_profile_new),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
