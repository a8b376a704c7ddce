/* tests/test_watch.c - `watch` follows a simulated sweep from another process: every stored point printed, the end said, the store only read */
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
#include <sys/stat.h>
#include <unistd.h>

#include <cmocka.h>

#include "cli_fixture.h"
#include "db/hb_db.h"

static char db_path[400];
static char station[320];
static int db_counter;

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("watch") != 0)
		return -1;
	snprintf(station, sizeof station, "%s/station.ini", tmpdir);
	write_file(station, "# test station\n[station]\nname = watch-bench\noperator = tester\n"
			    "[limits]\nmax_current = 5\nmax_voltage = 2\nmax_power = 10\nramp_rate = 50\n");
	return 0;
}

static int store_setup(void **state)
{
	(void)state;
	snprintf(db_path, sizeof db_path, "%s/watch-%d.db", tmpdir, ++db_counter);
	run r;
	hb_run(&r, station, "--db", db_path, "part", "add", "P-W", "--nominal", "108uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.5V", NULL);
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

/* The id of the sweep still running in the store, read through a read-only
 * handle of our own: one whose process is gone reads as interrupted "owner
 * process gone; not yet recorded" there (db/hb_db.h), stored as running. */
static long long running_sweep_id(void)
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open_as(db_path, HB_DB_OPEN_READONLY, &db), HB_OK);
	hb_db_sweep *list = NULL;
	size_t n = 0, found = 0;
	assert_int_equal(hb_db_sweep_list(db, NULL, &list, &n), HB_OK);
	long long id = 0;
	for (size_t i = 0; i < n; i++)
		if (list[i].status == HB_DB_RUNNING ||
		    (list[i].status == HB_DB_INTERRUPTED &&
		     strcmp(list[i].status_reason, "owner process gone; not yet recorded") == 0)) {
			id = list[i].id;
			found++;
		}
	assert_int_equal(found, 1);
	hb_db_sweeps_free(list);
	hb_db_close(db);
	return id;
}

static int count_lines_with_prefix(const char *s, const char *prefix)
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

static bool has_line_starting(const char *s, const char *start)
{
	size_t len = strlen(start);
	for (const char *line = s; line && *line;) {
		if (strncmp(line, start, len) == 0)
			return true;
		line = strchr(line, '\n');
		if (line)
			line++;
	}
	return false;
}

/* A sweep in one process, `watch` in another: the watcher starts while the
 * sweep runs, prints every point the store holds when the sweep has ended,
 * in order, says "complete" and exits 0. */
static void test_watch_follows_a_running_sweep(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	char sweep_err[420], watch_err[420];
	snprintf(sweep_err, sizeof sweep_err, "%s/sweep.err", tmpdir);
	snprintf(watch_err, sizeof watch_err, "%s/watch.err", tmpdir);
	char *sweep_argv[] = { NULL, "--db", db_path, "sweep", "--part", "P-W", "--unit", "W-1", "--lcr", sim.lcr,
			       "--supply", sim.supply, "--to", "2", "--steps", "21", "--settle", "100ms", "--yes",
			       "--no-fit", NULL };
	int sweep_fd;
	pid_t sweep = spawn(sweep_argv, station, &sweep_fd, sweep_err);
	text sweep_out = { 0 };
	/* The first point is stored before its line is printed. */
	assert_int_equal(read_until(sweep_fd, &sweep_out, "point ", 1), 1);
	char id[32];
	snprintf(id, sizeof id, "%lld", running_sweep_id());
	char *watch_argv[] = { NULL, "--db", db_path, "watch", id, "--interval", "20ms", NULL };
	int watch_fd;
	pid_t watch = spawn(watch_argv, station, &watch_fd, watch_err);
	text watch_out = { 0 };
	read_until(watch_fd, &watch_out, NULL, 0);
	close(watch_fd);
	int watch_status = exit_of(wait_exit(watch));
	read_until(sweep_fd, &sweep_out, NULL, 0);
	close(sweep_fd);
	int sweep_status = exit_of(wait_exit(sweep));
	sim_stop(&sim);
	assert_int_equal(sweep_status, 0);
	if (watch_status != 0)
		fail_msg("watch exited %d: %s", watch_status, slurp(watch_err));

	/* It began while the sweep ran (the sweep had 20 points, 100 ms each, to go). */
	char head[80];
	snprintf(head, sizeof head, "watching sweep %s: bias, part P-W, unit W-1", id);
	assert_true(has_line_starting(watch_out.s, head));
	assert_non_null(strstr(watch_out.s, "planned (running)\n"));

	/* Every stored point, once, in order, and nothing else. */
	hb_db *db = NULL;
	assert_int_equal(hb_db_open_as(db_path, HB_DB_OPEN_READONLY, &db), HB_OK);
	hb_db_point *pts = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_points_get(db, atoll(id), &pts, &n), HB_OK);
	hb_db_close(db);
	assert_int_equal(n, 21);
	assert_int_equal(count_lines_with_prefix(watch_out.s, "point "), (int)n);
	const char *at = watch_out.s;
	for (size_t i = 0; i < n; i++) {
		char want[64];
		/* "point k/21" then the current the supply read back, as the sweep prints it */
		double amps = isfinite(pts[i].bias_meas_a) ? pts[i].bias_meas_a : pts[i].bias_set_a;
		if (fabs(amps) < 5e-5)
			amps = 0;
		snprintf(want, sizeof want, "point %zu/21 %8.4f A L ", i + 1, amps);
		const char *hit = strstr(at, want);
		if (!hit)
			fail_msg("point %zu (%s) missing or out of order in:\n%s", i + 1, want, watch_out.s);
		at = hit + 1;
	}
	hb_db_points_free(pts);
	char end[80];
	snprintf(end, sizeof end, "sweep %s ended: complete (21 points stored", id);
	assert_true(has_line_starting(watch_out.s, end));
	free(watch_out.s);
	free(sweep_out.s);
	sim_free(&sim);
}

/* A sweep whose process was killed never ends by itself: the watcher sees
 * the owner gone, says "interrupted" and exits 0; the store is untouched
 * (the sweep stays "running" until a writing command recovers it). */
static void test_watch_sees_a_dead_owner(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	char sweep_err[420];
	snprintf(sweep_err, sizeof sweep_err, "%s/sweep2.err", tmpdir);
	char *sweep_argv[] = { NULL, "--db", db_path, "sweep", "--part", "P-W", "--unit", "W-2", "--lcr", sim.lcr,
			       "--supply", sim.supply, "--to", "2", "--steps", "21", "--settle", "100ms", "--yes",
			       "--no-fit", NULL };
	int fd;
	pid_t sweep = spawn(sweep_argv, station, &fd, sweep_err);
	text out = { 0 };
	assert_int_equal(read_until(fd, &out, "point ", 3), 3);
	kill(sweep, SIGKILL);
	close(fd);
	assert_int_equal(exit_of(wait_exit(sweep)), 128 + SIGKILL);
	free(out.s);
	sim_stop(&sim);
	char id[32];
	snprintf(id, sizeof id, "%lld", running_sweep_id());
	struct stat before, after;
	assert_int_equal(stat(db_path, &before), 0);
	run r;
	hb_run(&r, station, "--db", db_path, "watch", id, NULL);
	assert_int_equal(r.status, 0);
	char end[80];
	snprintf(end, sizeof end, "sweep %s ended: interrupted", id);
	assert_true(has_line_starting(r.out, end));
	run_free(&r);
	/* Read-only: still running in the store, the file not written. */
	assert_int_equal(running_sweep_id(), atoll(id));
	assert_int_equal(stat(db_path, &after), 0);
	assert_true(before.st_mtim.tv_sec == after.st_mtim.tv_sec && before.st_mtim.tv_nsec == after.st_mtim.tv_nsec);
	sim_free(&sim);
}

/* No store, no sweep: exit 2 naming what is missing; no store created. */
static void test_watch_usage_errors(void **state)
{
	(void)state;
	char missing[500];
	snprintf(missing, sizeof missing, "%s/no-such.db", tmpdir);
	run r;
	hb_run(&r, station, "--db", missing, "watch", "1", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, missing));
	assert_int_not_equal(access(missing, F_OK), 0);
	run_free(&r);
	hb_run(&r, station, "--db", db_path, "watch", "999", NULL);
	assert_int_equal(r.status, 2);
	assert_non_null(strstr(r.err, "no sweep 999"));
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_watch_follows_a_running_sweep, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_watch_sees_a_dead_owner, store_setup, store_teardown),
		cmocka_unit_test_setup_teardown(test_watch_usage_errors, store_setup, store_teardown),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
