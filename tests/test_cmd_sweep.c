/* tests/test_cmd_sweep.c - the `sweep` and `fsweep` commands end to end: ./henrybench against `henrybench sim` over TCP, signals, faults, limits, exit codes */
/* posix_openpt and friends (the fixture's terminal) */
#define _XOPEN_SOURCE 700
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <ctype.h>
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <poll.h>
#include <signal.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <jansson.h>

#include "src/cli/sweep_opts.h"
#include "cli_fixture.h"
#include "sim_witness.h"

static char station_limits[320];

static bool contains_nocase(const char *hay, const char *needle)
{
	size_t n = strlen(needle);
	for (; *hay; hay++) {
		size_t i = 0;
		while (i < n && hay[i] && tolower((unsigned char)hay[i]) == tolower((unsigned char)needle[i]))
			i++;
		if (i == n)
			return true;
	}
	return false;
}

/* The log from the last "supply output ON" on: "supply setpoint X A",
 * "supply output OFF", "supply disconnect" ... in order of events. */
static const char *after_last(const char *log, const char *what)
{
	const char *last = NULL;
	for (const char *p = log; (p = strstr(p, what)); p++)
		last = p;
	return last;
}

/* The supply shut-down rule as the simulator saw it: after the output was
 * last switched on, the setpoint came down to zero and the output went off
 * before the connection closed, and it never stood on at the end. Returns
 * the setpoints logged on the way down from the highest one. */
static int assert_shut_down_in_order(const char *log, double *down, int cap)
{
	const char *on = after_last(log, "supply output ON");
	assert_non_null(on);
	const char *off = strstr(on, "supply output OFF");
	const char *gone = strstr(on, "supply disconnect");
	assert_non_null(off);
	assert_non_null(gone);
	assert_true(off < gone);
	const char *zero = strstr(on, "supply setpoint 0.0000 A");
	assert_non_null(zero);
	assert_true(zero < off);
	assert_null(strstr(log, "supply exit output ON"));
	/* The setpoints from the highest one to the zero. */
	double top = -1;
	const char *top_at = on;
	for (const char *p = on; (p = strstr(p, "supply setpoint ")) && p <= zero; p++) {
		double v = atof(p + strlen("supply setpoint "));
		if (v >= top) {
			top = v;
			top_at = p;
		}
	}
	int n = 0;
	for (const char *p = top_at; (p = strstr(p, "supply setpoint ")) && p <= zero; p++)
		if (n < cap)
			down[n++] = atof(p + strlen("supply setpoint "));
	return n;
}

/* ------------------------------------------------------------------ */
/* fixtures                                                            */

static char db_path[400];
static int db_counter;

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("cmd-sweep") != 0)
		return -1;
	snprintf(station_limits, sizeof station_limits, "%s/station.ini", tmpdir);
	write_file(station_limits, "# test station\n[station]\nname = test-bench\noperator = tester\n"
				   "[limits]\nmax_current = 5\nmax_voltage = 2\nmax_power = 10\nramp_rate = 50\n");
	return 0;
}

/* A fresh store holding part P-CLI. */
static int store_setup(void **state)
{
	(void)state;
	snprintf(db_path, sizeof db_path, "%s/cli-%d.db", tmpdir, ++db_counter);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "part", "add", "P-CLI", "--nominal", "108uH", "--tol", "10%",
	       "--freq", "100kHz", "--level", "0.5V", NULL);
	int st = r.status;
	run_free(&r);
	return st == 0 ? 0 : -1;
}

static int store_teardown(void **state)
{
	(void)state;
	kill_leftovers();
	return 0;
}

/* show --json SWEEP of the one sweep in the store. */
static json_t *show_only_sweep(void)
{
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweeps", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_error_t jerr;
	json_t *list = json_loads(r.out, 0, &jerr);
	run_free(&r);
	assert_non_null(list);
	assert_int_equal(json_array_size(list), 1);
	char id[32];
	snprintf(id, sizeof id, "%lld", (long long)json_integer_value(json_object_get(json_array_get(list, 0), "id")));
	json_decref(list);
	hb_run(&r, station_limits, "--db", db_path, "show", id, "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *sw = json_loads(r.out, 0, &jerr);
	if (!sw)
		fail_msg("show --json gave no JSON: %s", jerr.text);
	run_free(&r);
	return sw;
}

static const char *jstr(json_t *o, const char *key)
{
	const char *s = json_string_value(json_object_get(o, key));
	assert_non_null(s);
	return s;
}

static int count_prefix(const char *s, const char *prefix)
{
	int n = 0;
	size_t pl = strlen(prefix);
	for (const char *line = s; line && *line;) {
		if (strncmp(line, prefix, pl) == 0)
			n++;
		line = strchr(line, '\n');
		if (line)
			line++;
	}
	return n;
}

/* ------------------------------------------------------------------ */
/* tests                                                               */

/* A sweep killed with SIGKILL leaves the current flowing (nobody could
 * ramp it down); each following run finds it, says so, and ramps it down
 * at the ramp rate before anything else. Three kills at different
 * currents, then a run to the end: the log shows no switch-off under
 * current anywhere. */
static void test_restart_after_sigkill_ramps_down_first(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	char err_path[420];
	snprintf(err_path, sizeof err_path, "%s/kill.err", tmpdir);
	const int kill_after[] = { 3, 6, 8 };
	for (size_t k = 0; k <= sizeof kill_after / sizeof kill_after[0]; k++) {
		char unit[16];
		snprintf(unit, sizeof unit, "K-%zu", k);
		char *argv[] = { NULL, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", unit, "--lcr", sim.lcr,
				 "--supply", sim.supply, "--to", "4", "--steps", "11", "--ramp", "2", "--yes", "--no-fit",
				 NULL };
		int fd;
		pid_t pid = spawn(argv, station_limits, &fd, err_path);
		text out = { 0 };
		if (k < sizeof kill_after / sizeof kill_after[0]) {
			assert_int_equal(read_until(fd, &out, "point ", kill_after[k]), kill_after[k]);
			kill(pid, SIGKILL);
			close(fd);
			assert_int_equal(exit_of(wait_exit(pid)), 128 + SIGKILL);
		} else {
			read_until(fd, &out, NULL, 0);
			close(fd);
			assert_int_equal(exit_of(wait_exit(pid)), 0);
		}
		free(out.s);
		char *err = slurp(err_path);
		/* Each run after a kill found the current the last one left. */
		if (k > 0)
			assert_non_null(strstr(err, "already sourcing"));
		free(err);
	}
	sim_stop(&sim);
	/* Only the last run switched off, and only once the current had gone. */
	assert_int_equal(witness_every_off_below(sim.log, 0.02), 1);
	/* After each reconnection, the set-point walks down from where the
	 * killed run left it, 0.1 A (2 A/s * 50 ms) at a time, to zero. */
	int reconnections = 0;
	for (const char *p = strstr(sim.log, "supply cmd *IDN?"); p; p = strstr(p + 1, "supply cmd *IDN?")) {
		double sp[128];
		int n = 0;
		const char *next_idn = strstr(p + 1, "supply cmd *IDN?");
		for (const char *q = p; (q = strstr(q, "supply setpoint ")) && (!next_idn || q < next_idn) && n < 128; q++)
			sp[n++] = atof(q + strlen("supply setpoint "));
		if (n == 0 || sp[0] < 0.5)
			continue; /* nothing was flowing when this run began */
		reconnections++;
		for (int i = 1; i < n && sp[i - 1] > 0; i++)
			assert_true(sp[i - 1] - sp[i] <= 0.1 + 2e-3);
	}
	assert_int_equal(reconnections, 3);
	sim_free(&sim);
}

/* A supply that speaks only plain SCPI-1999 (SOURce, OUTPut, MEASure; no
 * STATus:QUEStionable) works with the generic profile: the sweep completes
 * and compliance is judged from V and I. */
static void test_plain_scpi_supply_with_generic_profile(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, "--param", "status_subsystem=0", NULL);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "PLAIN-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "4", "--steps", "9", "--yes", "--no-fit", NULL);
	sim_stop(&sim);
	if (r.status != 0)
		print_error("%s\n", r.err);
	assert_int_equal(r.status, 0);
	/* The simulator did refuse the status query at least once (the probe). */
	assert_non_null(strstr(sim.log, "STAT:QUES:COND?"));
	json_t *sw = show_only_sweep();
	assert_string_equal(jstr(sw, "status"), "complete");
	assert_int_equal(json_array_size(json_object_get(sw, "points")), 9);
	json_decref(sw);
	witness_every_off_below(sim.log, 0.02);
	run_free(&r);
	sim_free(&sim);
}

/* The README's own commands, read from README.md and run as written
 * (the sweep there is a --dry-run): they must not be refused. */
static int readme_command(const char *readme, const char *start, char **argv, int cap, char *buf, size_t buflen)
{
	const char *p = strstr(readme, start);
	assert_non_null(p);
	size_t k = 0;
	/* Join continuation lines; stop at the end of the command or a comment. */
	while (*p && *p != '\n' && *p != '#' && k + 1 < buflen) {
		if (p[0] == '\\' && p[1] == '\n') {
			p += 2;
			continue;
		}
		buf[k++] = *p++;
	}
	buf[k] = '\0';
	int n = 0;
	for (char *save = NULL, *tok = strtok_r(buf, " \t", &save); tok && n < cap - 1;
	     tok = strtok_r(NULL, " \t", &save))
		argv[n++] = tok;
	argv[n] = NULL;
	return n;
}

static void test_readme_examples_run_as_written(void **state)
{
	(void)state;
	char *readme = slurp("README.md");
	assert_non_null(readme);
	char db[420];
	snprintf(db, sizeof db, "%s/readme.db", tmpdir);
	const char *commands[] = { "henrybench part add HBX-108G", "henrybench sweep --part HBX-108G" };
	for (size_t c = 0; c < 2; c++) {
		char buf[2048];
		char *words[64];
		int n = readme_command(readme, commands[c], words, 60, buf, sizeof buf);
		assert_true(n > 3);
		char *argv[64] = { NULL, "--db", db };
		for (int i = 1; i < n; i++)
			argv[2 + i] = words[i];
		argv[2 + n] = NULL;
		char err_path[420];
		snprintf(err_path, sizeof err_path, "%s/readme.err", tmpdir);
		int fd;
		/* No station file: the README's limits must stand on their own. */
		pid_t pid = spawn(argv, station_bare, &fd, err_path);
		text out = { 0 };
		read_until(fd, &out, NULL, 0);
		close(fd);
		int status = exit_of(wait_exit(pid));
		char *err = slurp(err_path);
		if (status != 0)
			print_error("README command '%s ...' exited %d: %s\n", commands[c], status, err);
		assert_int_equal(status, 0);
		if (c == 1)
			assert_non_null(strstr(out.s, "dry run"));
		free(err);
		free(out.s);
	}
	free(readme);
}

static void test_sigint_ramps_down_then_exits_130(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	char err_path[420];
	snprintf(err_path, sizeof err_path, "%s/sweep.err", tmpdir);
	/* 0.05 A steps and a 2 A/s ramp: the way down takes a few 0.1 A slices. */
	char *argv[] = { NULL, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "SIG-1", "--lcr", sim.lcr,
			 "--supply", sim.supply, "--to", "2", "--steps", "41", "--settle", "100ms", "--ramp", "2",
			 "--yes", "--no-fit", NULL };
	int fd;
	pid_t pid = spawn(argv, station_limits, &fd, err_path);
	text out = { 0 };
	int seen = read_until(fd, &out, "point ", 4);
	kill(pid, SIGINT);
	read_until(fd, &out, NULL, 0);
	close(fd);
	int status = exit_of(wait_exit(pid));
	sim_stop(&sim);
	assert_int_equal(seen, 4);
	assert_int_equal(status, 130);
	int printed = count_prefix(out.s, "point ");

	double down[64];
	int n = assert_shut_down_in_order(sim.log, down, 64);
	/* Ramped: every step down at most 2 A/s * 50 ms from the current the
	 * supply measured, which lies within one 0.05 A sweep step below the
	 * highest setpoint; the last step is to zero. */
	assert_true(n >= 3);
	for (int i = 1; i < n; i++) {
		assert_true(down[i] <= down[i - 1] + 1e-9);
		assert_true(down[i - 1] - down[i] <= 0.1 * 1.02 + 2e-3 + (i == 1 ? 0.05 : 0));
	}
	assert_true(down[n - 1] == 0);

	json_t *sw = show_only_sweep();
	assert_string_equal(jstr(sw, "status"), "aborted");
	assert_true(contains_nocase(jstr(sw, "status_reason"), "SIGINT"));
	json_t *data = json_object_get(sw, "points");
	/* Every point reported on the screen is in the store, and only those. */
	assert_int_equal(json_array_size(data), printed);
	assert_true(printed >= 4 && printed < 41);
	for (size_t i = 0; i < json_array_size(data); i++)
		assert_int_equal(json_integer_value(json_object_get(json_array_get(data, i), "seq")), (json_int_t)i);
	json_decref(sw);
	free(out.s);
	sim_free(&sim);
}

static void test_compliance_stop(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	/* 30 mOhm needs 0.12 V at 4 A; the 0.05 V limit runs out near 1.7 A. */
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "CV-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "4", "--steps", "11", "--settle", "5ms", "--max-voltage", "0.05",
	       "--ramp", "50", "--yes", "--no-fit", NULL);
	sim_stop(&sim);
	assert_int_equal(r.status, 1);
	/* the end of an aborted sweep is an error: on stderr */
	assert_non_null(strstr(r.err, "henrybench: sweep "));
	assert_non_null(strstr(r.err, " aborted: "));
	assert_non_null(strstr(sim.log, "supply mode CV"));
	double down[64];
	int n = assert_shut_down_in_order(sim.log, down, 64);
	assert_true(down[n - 1] == 0);
	/* The stop came once the supply went into CV, not at the end of the plan. */
	assert_true(strstr(sim.log, "supply mode CV") < after_last(sim.log, "supply setpoint 0.0000 A"));
	json_t *sw = show_only_sweep();
	assert_string_equal(jstr(sw, "status"), "aborted");
	assert_true(contains_nocase(jstr(sw, "status_reason"), "compliance"));
	assert_true(json_array_size(json_object_get(sw, "points")) < 11);
	json_decref(sw);
	run_free(&r);
	sim_free(&sim);
}

static void test_limit_refusals_switch_nothing_on(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	/* No limit anywhere: the bare station file has none. */
	hb_run(&r, station_bare, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "L-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "1", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "current limit"));
	assert_non_null(strstr(r.err, "--max-current"));
	run_free(&r);

	/* Above the limit given. */
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "L-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "6", "--max-current", "5", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "6 A"));
	assert_non_null(strstr(r.err, "current limit 5 A"));
	run_free(&r);

	/* Voltage limit times the top current over the power limit. */
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "L-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "4", "--max-power", "1", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "power limit"));
	run_free(&r);

	sim_stop(&sim);
	assert_null(strstr(sim.log, "output ON"));
	assert_null(strstr(sim.log, "OUTP ON"));
	hb_run(&r, station_limits, "--db", db_path, "sweeps", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *list = json_loads(r.out, 0, NULL);
	assert_non_null(list);
	assert_int_equal(json_array_size(list), 0);
	json_decref(list);
	run_free(&r);
	sim_free(&sim);
}

static void test_meter_timeout_mid_sweep(void **state)
{
	(void)state;
	sim_server sim;
	/* Every 40th meter reply is lost, and every 41st garbled: the first
	 * lost one is a reading a few points into the sweep (after the five
	 * settings read back at the start and the noise learnt from 24
	 * readings at the first point), and the reading asked for again after
	 * the drain is the garbled one. Two failures in a row end it. */
	sim_start(&sim, "--fault-lcr", "drop=40,garble=41", NULL);
	char lcr[200];
	snprintf(lcr, sizeof lcr, "%s?timeout=300", sim.lcr);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "T-1", "--lcr", lcr,
	       "--supply", sim.supply, "--to", "4", "--steps", "11", "--settle", "5ms", "--yes", "--no-fit", NULL);
	sim_stop(&sim);
	assert_int_equal(r.status, 1);
	assert_non_null(strstr(sim.log, "lcr fault drop"));
	assert_non_null(strstr(sim.log, "lcr fault garble"));
	/* the retry was a second IMP:READ? right after the lost one */
	const char *drop = strstr(sim.log, "lcr fault drop");
	const char *next = strstr(drop, "lcr cmd ");
	assert_non_null(next);
	assert_int_equal(strncmp(next, "lcr cmd IMP:READ?", 17), 0);
	double down[64];
	int n = assert_shut_down_in_order(sim.log, down, 64);
	assert_true(down[n - 1] == 0);
	assert_true(strstr(sim.log, "lcr fault drop") < after_last(sim.log, "supply output OFF"));
	json_t *sw = show_only_sweep();
	assert_string_equal(jstr(sw, "status"), "failed");
	size_t pts = json_array_size(json_object_get(sw, "points"));
	assert_true(pts >= 1 && pts < 11);
	json_decref(sw);
	assert_false(contains_nocase(r.err, "current may still be flowing"));
	run_free(&r);
	sim_free(&sim);
}

static void test_one_lost_reading_is_asked_again(void **state)
{
	(void)state;
	sim_server sim;
	/* Every 20th meter reply lost, never two in a row: each is asked for
	 * once more after a drain, and the sweep completes. */
	sim_start(&sim, "--fault-lcr", "drop=20", NULL);
	char lcr[200];
	snprintf(lcr, sizeof lcr, "%s?timeout=300", sim.lcr);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "T-2", "--lcr", lcr,
	       "--supply", sim.supply, "--to", "4", "--steps", "11", "--settle", "5ms", "--yes", "--no-fit", NULL);
	sim_stop(&sim);
	assert_int_equal(r.status, 0);
	assert_non_null(strstr(sim.log, "lcr fault drop"));
	json_t *sw = show_only_sweep();
	assert_string_equal(jstr(sw, "status"), "complete");
	assert_int_equal(json_array_size(json_object_get(sw, "points")), 11);
	json_decref(sw);
	run_free(&r);
	sim_free(&sim);
}

static void test_lost_supply_link_is_loud(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, "--fault-supply", "disconnect=40", NULL);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "D-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "4", "--steps", "11", "--settle", "5ms", "--yes", "--no-fit", NULL);
	sim_stop(&sim);
	assert_true(r.status != 0);
	assert_true(contains_nocase(r.err, "current may still be flowing"));
	assert_non_null(strstr(sim.log, "supply fault disconnect"));
	/* What the warning is about: the simulated supply was left driving current. */
	assert_non_null(strstr(sim.log, "supply exit output ON"));
	json_t *sw = show_only_sweep();
	assert_string_equal(jstr(sw, "status"), "failed");
	json_decref(sw);
	run_free(&r);
	sim_free(&sim);
}

static void test_json_summary_of_complete_sweep(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "J-1", "--lcr", sim.lcr,
	       "--supply", sim.supply, "--to", "4", "--steps", "11", "--yes", "--json", NULL);
	sim_stop(&sim);
	assert_int_equal(r.status, 0);
	json_error_t jerr;
	json_t *j = json_loads(r.out, 0, &jerr);
	if (!j)
		fail_msg("--json output does not parse: %s (line %d)", jerr.text, jerr.line);
	assert_string_equal(jstr(j, "status"), "complete");
	assert_string_equal(jstr(j, "kind"), "bias");
	assert_string_equal(jstr(j, "unit"), "J-1");
	assert_int_equal(json_integer_value(json_object_get(j, "points")), 11);
	assert_true(json_integer_value(json_object_get(j, "sweep_id")) > 0);
	assert_true(json_is_false(json_object_get(j, "current_may_flow")));
	double l_first = json_real_value(json_object_get(j, "L_first_H"));
	assert_true(l_first > 90e-6 && l_first < 130e-6); /* the default sim part is about 108 uH */
	json_decref(j);
	double down[64];
	assert_shut_down_in_order(sim.log, down, 64);
	run_free(&r);
	sim_free(&sim);
}

static void test_fsweep_without_supply(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_limits, "--db", db_path, "fsweep", "--part", "P-CLI", "--unit", "F-1", "--lcr", sim.lcr,
	       "--from", "1kHz", "--to", "1MHz", "--points", "7", "--settle", "1ms", "--json", NULL);
	sim_stop(&sim);
	assert_int_equal(r.status, 0);
	json_t *j = json_loads(r.out, 0, NULL);
	assert_non_null(j);
	assert_string_equal(jstr(j, "kind"), "frequency");
	assert_string_equal(jstr(j, "status"), "complete");
	assert_int_equal(json_integer_value(json_object_get(j, "points")), 7);
	json_decref(j);
	/* No bias asked: the supply was never spoken to. */
	assert_null(strstr(sim.log, "supply cmd"));
	run_free(&r);
	sim_free(&sim);
}

static void test_dry_run_touches_nothing(void **state)
{
	(void)state;
	run r;
	/* Nothing listens on port 1: opening either instrument would fail. */
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "X-1", "--lcr",
	       "tcp://127.0.0.1:1", "--supply", "tcp://127.0.0.1:1", "--to", "3", "--steps", "7", "--return",
	       "--dry-run", NULL);
	assert_int_equal(r.status, 0);
	assert_non_null(strstr(r.out, "plan: 13 points"));
	/* each limit with its source (station_limits sets them) */
	assert_non_null(strstr(r.out, "current        5 A        the station file's max_current"));
	assert_non_null(strstr(r.out, "ramp           50 A/s     the station file's ramp_rate"));
	assert_non_null(strstr(r.out, "off threshold  0.02 A     default"));
	assert_non_null(strstr(r.out, "dry run"));
	run_free(&r);
	hb_run(&r, station_limits, "--db", db_path, "sweeps", "--json", NULL);
	json_t *list = json_loads(r.out, 0, NULL);
	assert_non_null(list);
	assert_int_equal(json_array_size(list), 0);
	json_decref(list);
	run_free(&r);
}

static void test_bad_input_is_usage_error(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "B-1", "--lcr",
	       "tcp://127.0.0.1:1", "--supply", "tcp://127.0.0.1:1", "--to", "garbage", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "--to"));
	assert_non_null(strstr(r.err, "garbage"));
	run_free(&r);

	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "NO-SUCH-PART", "--unit", "B-1", "--lcr",
	       "tcp://127.0.0.1:1", "--supply", "tcp://127.0.0.1:1", "--to", "1", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "NO-SUCH-PART"));
	run_free(&r);

	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "B-1", "--lcr",
	       "tcp://127.0.0.1:1", "--to", "1", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--supply"));
	run_free(&r);

	hb_run(&r, station_limits, "--db", db_path, "sweep", "--bogus", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--bogus"));
	run_free(&r);
}


/* ------------------------------------------------------------------ */
/* limit resolution (hb_sweep_opts_resolve, in-process)               */

/* The demo part HBX-108G as README.md adds it: rated 3 A, saturation-spec 3.2 A. */
static void demo_part(hb_db_part *part)
{
	hb_db_part_init(part);
	part->rated_current_a = 3.0;
	part->sat_current_a = 3.2;
}

/* A station with every limit set; path names it in messages. */
static void limits_station(hb_station *st)
{
	hb_station_defaults(st);
	snprintf(st->path, sizeof st->path, "station.ini");
	st->max_current = 10;
	st->max_voltage = 5;
	st->max_power = 50;
	st->ramp_rate = 5;
	st->off_threshold = 0.01;
}

static int resolve(const hb_sweep_opts *o, const hb_station *st, const hb_db_part *part, double to,
		   hb_sweep_plan *plan, hb_limit_report *rep, char *err, size_t errlen)
{
	hb_sweep_plan_defaults(plan);
	plan->kind = HB_SWEEP_BIAS;
	plan->from = 0;
	plan->to = to;
	return hb_sweep_opts_resolve(o, st, part, plan, rep, err, errlen);
}

static void test_limits_station_binds_command_line(void **state)
{
	(void)state;
	hb_station st;
	limits_station(&st);
	hb_db_part part;
	demo_part(&part);
	hb_sweep_opts o;
	hb_sweep_plan plan;
	hb_limit_report rep;
	char err[400];

	/* the station file alone */
	hb_sweep_opts_init(&o);
	assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(plan.limits.ramp_rate == 5);
	assert_non_null(strstr(rep.limit[HB_LIMIT_RAMP].source, "station file's ramp_rate (station.ini)"));
	assert_true(rep.limit[HB_LIMIT_OFF_THRESHOLD].value == 0.01);

	/* the command line tightens each of them */
	o.ramp = 2;
	o.max_voltage = 3;
	o.max_power = 20;
	o.off_threshold = 0.005;
	assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(plan.limits.ramp_rate == 2 && plan.limits.max_voltage == 3 && plan.limits.max_power == 20);
	assert_true(rep.limit[HB_LIMIT_OFF_THRESHOLD].value == 0.005);
	assert_non_null(strstr(rep.limit[HB_LIMIT_RAMP].source, "--ramp"));

	/* and may not loosen any: the brief's own example, --ramp 1000 against 5 A/s */
	static const struct {
		int id;
		double value;
		const char *says;
	} loose[] = {
		{ HB_LIMIT_RAMP, 1000, "--ramp 1000 A/s is looser than the station file's ramp_rate 5 A/s (station.ini)" },
		{ HB_LIMIT_VOLTAGE, 6, "--max-voltage 6 V is looser than the station file's max_voltage 5 V" },
		{ HB_LIMIT_POWER, 51, "--max-power 51 W is looser than the station file's max_power 50 W" },
		{ HB_LIMIT_OFF_THRESHOLD, 0.05, "--off-threshold 0.05 A is looser than the station file's off_threshold 0.01 A" },
	};
	for (size_t i = 0; i < sizeof loose / sizeof loose[0]; i++) {
		hb_sweep_opts_init(&o);
		double *field[] = { &o.max_current, &o.max_voltage, &o.max_power, &o.ramp, &o.off_threshold };
		*field[loose[i].id] = loose[i].value;
		assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_ERR_ARG);
		if (!strstr(err, loose[i].says))
			fail_msg("got '%s', expected it to contain '%s'", err, loose[i].says);
		assert_non_null(strstr(err, "the command line may only tighten limits"));
		assert_null(strchr(err, '\n'));
		/* even refused, the plan never holds the looser value */
		assert_true(rep.limit[loose[i].id].value < loose[i].value);
	}
	assert_true(plan.limits.max_power == 50);
}

static void test_limits_part_cap(void **state)
{
	(void)state;
	hb_station st;
	limits_station(&st);
	hb_db_part part;
	demo_part(&part);
	hb_sweep_opts o;
	hb_sweep_opts_init(&o);
	hb_sweep_plan plan;
	hb_limit_report rep;
	char err[400];

	/* the part tightens the station's 10 A: 2.5 x 3.2 A (default part_overdrive) */
	assert_int_equal(resolve(&o, &st, &part, 8, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(fabs(plan.limits.max_current - 8) < 1e-9);
	assert_non_null(strstr(rep.limit[HB_LIMIT_CURRENT].source,
			       "2.5 x the part's saturation-spec current 3.2 A (default part_overdrive"));

	/* the station's part_overdrive tightens it to 6.4 A; the refusal of an
	 * 8 A sweep names the derived cap and the key that changes it */
	st.part_overdrive = 2;
	st.part_overdrive_set = true;
	assert_int_equal(resolve(&o, &st, &part, 8, &plan, &rep, err, sizeof err), HB_ERR_LIMIT);
	assert_non_null(strstr(err, "top current 8 A exceeds the current limit 6.4 A: the part cap = 2 x the part's "
				    "saturation-spec current 3.2 A (station part_overdrive, station.ini)"));

	/* a station limit below the part cap binds instead */
	st.max_current = 4;
	assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(plan.limits.max_current == 4);
	assert_non_null(strstr(rep.limit[HB_LIMIT_CURRENT].source, "station file's max_current"));
	st.max_current = 10;

	/* the command line tightens the part cap, never loosens it */
	o.max_current = 5;
	assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(plan.limits.max_current == 5);
	o.max_current = 7;
	assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "--max-current 7 A is looser than the part cap 6.4 A = 2 x the part's "
				    "saturation-spec current 3.2 A"));
	assert_true(fabs(plan.limits.max_current - 6.4) < 1e-9);

	/* a part with only a rated current names that rating */
	part.sat_current_a = NAN;
	hb_sweep_opts_init(&o);
	assert_int_equal(resolve(&o, &st, &part, 4, &plan, &rep, err, sizeof err), HB_OK);
	assert_non_null(strstr(rep.limit[HB_LIMIT_CURRENT].source, "2 x the part's rated current 3 A"));
}

static void test_limits_defaults_and_lock(void **state)
{
	(void)state;
	hb_station st;
	hb_station_defaults(&st);
	hb_db_part part;
	hb_db_part_init(&part); /* no ratings: no part cap */
	hb_sweep_opts o;
	hb_sweep_opts_init(&o);
	hb_sweep_plan plan;
	hb_limit_report rep;
	char err[400];
	/* nothing set: ramp and off threshold fall back to their defaults (5 A/s
	 * from hb_sweep_plan_defaults, 20 mA), the rest stays unset */
	assert_int_equal(resolve(&o, &st, &part, 1, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(isnan(plan.limits.max_current));
	assert_true(plan.limits.ramp_rate == 5);
	assert_true(rep.limit[HB_LIMIT_OFF_THRESHOLD].value == 0.02);
	assert_non_null(strstr(rep.limit[HB_LIMIT_OFF_THRESHOLD].source, "--off-threshold or off_threshold"));
	/* defaults do not bind: the command line may choose a faster ramp */
	o.ramp = 10;
	assert_int_equal(resolve(&o, &st, &part, 1, &plan, &rep, err, sizeof err), HB_OK);
	assert_true(plan.limits.ramp_rate == 10);

	/* lock_limits: not even a tighter value is taken */
	st.lock_limits = true;
	st.ramp_rate = 5;
	snprintf(st.path, sizeof st.path, "station.ini");
	o.ramp = 2;
	assert_int_equal(resolve(&o, &st, &part, 1, &plan, &rep, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "--ramp 2 A/s: the station file station.ini sets lock_limits = yes"));
	assert_true(plan.limits.ramp_rate == 5);
}

static void test_station_file_limit_keys(void **state)
{
	(void)state;
	char path[400], err[400];
	snprintf(path, sizeof path, "%s/keys.ini", tmpdir);
	write_file(path, "[limits]\noff_threshold = 15mA\npart_overdrive = 2\nlock_limits = yes\n");
	setenv("HENRYBENCH_STATION", path, 1);
	hb_station st;
	assert_int_equal(hb_station_load(&st, err, sizeof err), HB_OK);
	assert_true(fabs(st.off_threshold - 0.015) < 1e-12);
	assert_true(st.part_overdrive == 2 && st.part_overdrive_set);
	assert_true(st.lock_limits);
	write_file(path, "[limits]\nlock_limits = maybe\n");
	assert_int_equal(hb_station_load(&st, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "'maybe' is not yes or no"));
	unsetenv("HENRYBENCH_STATION");
}

static void test_looser_command_line_refused_end_to_end(void **state)
{
	(void)state;
	run r;
	/* station_limits has ramp_rate = 50; nothing listens on port 1, so
	 * anything opened would fail with exit 1, not 2 */
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "R-1", "--lcr",
	       "tcp://127.0.0.1:1", "--supply", "tcp://127.0.0.1:1", "--to", "2", "--ramp", "1000", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "--ramp 1000 A/s is looser than the station file's ramp_rate 50 A/s"));
	run_free(&r);
}

static void test_swapped_instruments_refused(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	/* The simulated instruments answer *IDN? as SIM-LCR1 and SIM-DCS1
	 * (drivers/sim/sim_scpi.c), claimed by generic-lcr and generic-supply. */
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "W-1", "--lcr", sim.supply,
	       "--supply", sim.lcr, "--to", "1", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "SIM-DCS1"));
	assert_non_null(strstr(r.err, "is a supply, not a meter"));
	assert_non_null(strstr(r.err, "SIM-LCR1"));
	assert_non_null(strstr(r.err, "is a meter, not a supply"));
	assert_non_null(strstr(r.err, "swap"));
	run_free(&r);
	/* only the supply on --lcr: still refused, both named */
	hb_run(&r, station_limits, "--db", db_path, "fsweep", "--part", "P-CLI", "--unit", "W-1", "--lcr", sim.supply,
	       "--from", "1kHz", "--to", "10kHz", "--points", "3", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "is a supply, not a meter"));
	run_free(&r);
	sim_stop(&sim);
	/* nothing was switched or set, and no sweep was stored */
	assert_null(strstr(sim.log, "OUTP ON"));
	assert_null(strstr(sim.log, "IMP:"));
	assert_null(strstr(sim.log, "SOUR:"));
	hb_run(&r, station_limits, "--db", db_path, "sweeps", "--json", NULL);
	json_t *list = json_loads(r.out, 0, NULL);
	assert_non_null(list);
	assert_int_equal(json_array_size(list), 0);
	json_decref(list);
	run_free(&r);
	sim_free(&sim);
}

/* A meter profile without averaging and aperture, and one that measures
 * only parallel L-R: a sweep asking for what they cannot do is refused
 * before anything is switched on, and nothing is stored as applied. */
static void test_unsupported_meter_settings_refused(void **state)
{
	(void)state;
	char bare[400], fixed[400];
	snprintf(bare, sizeof bare, "%s/bare-lcr.ini", tmpdir);
	write_file(bare, "[profile]\nname = bare-lcr\nkind = lcr\n[lcr]\nfrequency = IMP:FREQ {hz:real}\n"
			 "level.voltage = IMP:LEV:VOLT {volts:real}\nfunction = IMP:FUNC {equiv:enum},{pair:enum}\n"
			 "equiv.series = SER\nequiv.parallel = PAR\npair.lr = LR\nmeasure = IMP:READ?\n"
			 "measure.fields = 3\nmeasure.status = 3\nmeasure.status.overload = 1\n");
	snprintf(fixed, sizeof fixed, "%s/fixed-lcr.ini", tmpdir);
	write_file(fixed, "[profile]\nname = fixed-lcr\nkind = lcr\n[lcr]\nfrequency = IMP:FREQ {hz:real}\n"
			  "level.voltage = IMP:LEV:VOLT {volts:real}\nfunction.fixed = lp-rp\nmeasure = IMP:READ?\n"
			  "measure.fields = 3\nmeasure.status = 3\n");
	sim_server sim;
	sim_start(&sim, NULL);
	char lcr[800];
	run r;
	snprintf(lcr, sizeof lcr, "%s?profile=%s", sim.lcr, bare);
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "U-1", "--lcr", lcr,
	       "--supply", sim.supply, "--to", "1", "--avg", "8", "--aperture", "long", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_int_equal(count_lines(r.err), 1);
	assert_non_null(strstr(r.err, "--avg 8: the meter's profile 'bare-lcr' has no 'averaging' operation"));
	run_free(&r);
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "U-1", "--lcr", lcr,
	       "--supply", sim.supply, "--to", "1", "--aperture", "long", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--aperture long: the meter's profile 'bare-lcr' cannot select it"));
	run_free(&r);
	snprintf(lcr, sizeof lcr, "%s?profile=%s", sim.lcr, fixed);
	hb_run(&r, station_limits, "--db", db_path, "sweep", "--part", "P-CLI", "--unit", "U-1", "--lcr", lcr,
	       "--supply", sim.supply, "--to", "1", "--yes", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "--circuit series --pair LR: the meter's profile 'fixed-lcr' cannot measure it"));
	run_free(&r);
	sim_stop(&sim);
	assert_null(strstr(sim.log, "OUTP ON"));
	assert_null(strstr(sim.log, "IMP:AVER"));
	assert_null(strstr(sim.log, "IMP:APER"));
	hb_run(&r, station_limits, "--db", db_path, "sweeps", "--json", NULL);
	json_t *list = json_loads(r.out, 0, NULL);
	assert_non_null(list);
	assert_int_equal(json_array_size(list), 0);
	json_decref(list);
	run_free(&r);
	sim_free(&sim);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_sigint_ramps_down_then_exits_130, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_compliance_stop, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_limit_refusals_switch_nothing_on, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_restart_after_sigkill_ramps_down_first, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_plain_scpi_supply_with_generic_profile, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_readme_examples_run_as_written, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_meter_timeout_mid_sweep, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_one_lost_reading_is_asked_again, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_lost_supply_link_is_loud, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_json_summary_of_complete_sweep, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_fsweep_without_supply, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_dry_run_touches_nothing, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_bad_input_is_usage_error, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_swapped_instruments_refused, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_unsupported_meter_settings_refused, store_setup, store_teardown),
		cmocka_unit_test(test_limits_station_binds_command_line),
		cmocka_unit_test(test_limits_part_cap),
		cmocka_unit_test(test_limits_defaults_and_lock),
		cmocka_unit_test(test_station_file_limit_keys),
		cmocka_unit_test_setup_teardown(test_looser_command_line_refused_end_to_end, store_setup, store_teardown),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
