/* tests/test_readonly_store.c - read commands on a read-only store and a read-only file system: same output as on the writable store, a dead sweep shown interrupted without writing, report refused */
#define _GNU_SOURCE /* realpath */
#include <limits.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmocka.h>

#include "cli_fixture.h"
#include "db/hb_db.h"

static char demo_dir[400], store[460], report_html[460];
static long long dead_id;

/* What a read-only open shows for a running sweep whose process is gone
 * (db/hb_db.h, docs/store.md). */
static const char dead_reason[] = "owner process gone; not yet recorded";

/* A child process begins a sweep of the demo part, stores two points and
 * closes the store cleanly (no journal left beside it), then ends without
 * ending the sweep: the sweep stays "running" with a process that is gone. */
static long long make_dead_sweep(const char *path)
{
	int fds[2];
	assert_int_equal(pipe(fds), 0);
	pid_t pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		close(fds[0]);
		hb_db *db = NULL;
		hb_db_part part;
		int64_t unit = 0;
		if (hb_db_open(path, &db) != HB_OK || hb_db_part_get(db, "HBX-108G", &part) != HB_OK ||
		    hb_db_unit_ensure(db, part.id, "RO-DEAD-1", 0, &unit) != HB_OK)
			_exit(3);
		hb_db_sweep s;
		hb_db_sweep_init(&s);
		s.kind = HB_DB_SWEEP_BIAS;
		s.unit_id = unit;
		s.started = 1.7e9;
		snprintf(s.station, sizeof s.station, "ro-bench");
		snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
		s.test_freq_hz = 100e3;
		s.test_level = 0.5;
		s.plan_from = 0;
		s.plan_to = 2;
		s.plan_steps = 5;
		snprintf(s.plan_spacing, sizeof s.plan_spacing, "lin");
		if (hb_db_sweep_begin(db, &s) != HB_OK)
			_exit(4);
		for (int i = 0; i < 2; i++) {
			hb_db_point p;
			hb_db_point_init(&p);
			p.sweep_id = s.id;
			p.seq = i;
			p.bias_set_a = p.bias_meas_a = 0.5 * i;
			p.freq_hz = 100e3;
			p.primary = 108e-6;
			p.secondary = 0.1;
			p.t_s = i;
			if (hb_db_point_add(db, &p) != HB_OK)
				_exit(5);
		}
		hb_db_close(db);
		long long id = s.id;
		if (write(fds[1], &id, sizeof id) != sizeof id)
			_exit(6);
		_exit(0);
	}
	close(fds[1]);
	long long id = 0;
	assert_int_equal(read(fds[0], &id, sizeof id), sizeof id);
	close(fds[0]);
	int st = 0;
	assert_int_equal(waitpid(pid, &st, 0), pid);
	assert_true(WIFEXITED(st) && WEXITSTATUS(st) == 0);
	return id;
}

static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("rostore") != 0)
		return -1;
	snprintf(demo_dir, sizeof demo_dir, "%s/demo", tmpdir);
	run r;
	hb_run(&r, station_bare, "demo", "--out", demo_dir, NULL);
	int st = r.status;
	run_free(&r);
	if (st != 0)
		return -1;
	snprintf(store, sizeof store, "%s/bench.db", demo_dir);
	snprintf(report_html, sizeof report_html, "%s/report.html", demo_dir);
	return 0;
}

static bool same_file_state(const struct stat *a, const struct stat *b)
{
	return a->st_size == b->st_size && a->st_mtim.tv_sec == b->st_mtim.tv_sec &&
	       a->st_mtim.tv_nsec == b->st_mtim.tv_nsec;
}

static void copy_file(const char *from, const char *to)
{
	char *data = slurp(from);
	assert_non_null(data);
	free(data);
	char cmd[1100];
	snprintf(cmd, sizeof cmd, "cp '%s' '%s'", from, to);
	assert_int_equal(system(cmd), 0);
}

/* The library forced read-only (the way a store another user owns, or a
 * read-only medium, is opened): the dead sweep reads as interrupted with the
 * stated reason, and the store file is not written. The next writing open
 * still finds it running and records it: nothing was recorded before. */
static void test_dead_sweep_shown_not_written(void **state)
{
	(void)state;
	char path[480];
	snprintf(path, sizeof path, "%s/lib.db", tmpdir);
	copy_file(store, path);
	long long id = make_dead_sweep(path);
	struct stat before, after;
	assert_int_equal(stat(path, &before), 0);

	hb_db *db = NULL;
	assert_int_equal(hb_db_open_as(path, HB_DB_OPEN_READONLY, &db), HB_OK);
	assert_true(hb_db_is_readonly(db));
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(db, id, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_INTERRUPTED);
	assert_string_equal(s.status_reason, dead_reason);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, NULL, &list, &n), HB_OK);
	size_t seen = 0;
	for (size_t i = 0; i < n; i++)
		if (list[i].id == id) {
			assert_int_equal(list[i].status, HB_DB_INTERRUPTED);
			seen++;
		}
	assert_int_equal(seen, 1);
	hb_db_sweeps_free(list);
	/* a status filter matches the status shown: the demo stored no other
	 * running or interrupted sweep */
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.status = HB_DB_RUNNING;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 0);
	hb_db_sweeps_free(list);
	f.status = HB_DB_INTERRUPTED;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(list[0].id, id);
	hb_db_sweeps_free(list);
	int64_t matched = 0;
	assert_int_equal(hb_db_sweep_count(db, &f, &matched), HB_OK);
	assert_int_equal(matched, 1);
	assert_int_equal(hb_db_recovered_count(db), 0);
	hb_db_close(db);
	assert_int_equal(stat(path, &after), 0);
	assert_true(same_file_state(&before, &after));

	/* the writing open is the one that records it */
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	assert_int_equal(hb_db_recovered_count(db), 1);
	assert_int_equal(hb_db_sweep_get(db, id, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_INTERRUPTED);
	assert_string_not_equal(s.status_reason, dead_reason);
	hb_db_close(db);
}

/* The read commands, each with the same output on both stores. */
static const char *const read_cmds[][8] = {
	{ "sweeps" },
	{ "show", "2" },
	{ "history", "HBX-108G" },
	{ "compare", "2", "3" },
	{ "export", "2", "--csv" },
	{ "part", "list" },
	{ "part", "show", "HBX-108G" },
	{ "instrument", "list" },
	{ "instrument", "show", "SL0001" },
	{ "instrument", "affected", "SL0001", "--since", "2000-01-01" },
	{ "stream", "HBX-108G" },
	{ "plan", "--lot-size", "500", "--aql", "1.0", "--part", "HBX-108G" },
	{ "verify", report_html },
};
enum { N_READ = sizeof read_cmds / sizeof read_cmds[0] };

static bool can_unshare(void)
{
	return system("unshare -rm true >/dev/null 2>&1") == 0;
}

/* A read-only file system: a tmpfs mounted read-only in a user and mount
 * namespace of our own (unshare(1)), holding a copy of the store with its dead
 * sweep (no -wal, no -shm: a WAL store there can only be read immutable; SQLite
 * "Read-Only Databases", https://www.sqlite.org/wal.html). Every read command
 * gives what it gives on the writable store (exit 0, same text); the dead
 * sweep is shown interrupted; report refuses (it must file what it writes). */
static void test_read_commands_on_readonly_fs(void **state)
{
	(void)state;
	if (!can_unshare()) {
		fprintf(stderr, "SKIP read-only file system case: 'unshare -rm' (user and mount namespaces) is not "
				"available here; the library-level read-only case still ran\n");
		skip();
	}
	char bin[PATH_MAX];
	assert_non_null(realpath(hb_bin, bin));
	char src[480], mnt[480], script[480], ro_report[480];
	snprintf(src, sizeof src, "%s/fs-src.db", tmpdir);
	snprintf(mnt, sizeof mnt, "%s/ro", tmpdir);
	snprintf(script, sizeof script, "%s/ro.sh", tmpdir);
	snprintf(ro_report, sizeof ro_report, "%s/ro-report.html", tmpdir);
	assert_int_equal(mkdir(mnt, 0755), 0);
	copy_file(store, src);
	dead_id = make_dead_sweep(src);
	char journal[500];
	snprintf(journal, sizeof journal, "%s-wal", src);
	assert_int_not_equal(access(journal, F_OK), 0);

	/* the script: mount, copy, remount read-only, run every command */
	FILE *f = fopen(script, "w");
	assert_non_null(f);
	fprintf(f, "set -e\nmount -t tmpfs none '%s'\ncp '%s' '%s/bench.db'\nmount -o remount,ro '%s'\n"
		   "touch '%s/probe' 2>/dev/null && exit 9\nset +e\n",
		mnt, src, mnt, mnt, mnt);
	char dead[32];
	snprintf(dead, sizeof dead, "%lld", dead_id);
	for (int i = 0; i <= N_READ + 2; i++) {
		fprintf(f, "'%s' --db '%s/bench.db'", bin, mnt);
		if (i < N_READ)
			for (int k = 0; k < 8 && read_cmds[i][k]; k++)
				fprintf(f, " '%s'", read_cmds[i][k]);
		else if (i == N_READ)
			fprintf(f, " show %s", dead);
		else if (i == N_READ + 1)
			fprintf(f, " report 2 --out '%s'", ro_report);
		else
			fprintf(f, " part edit HBX-108G --desc 'edited where nothing can be written'");
		fprintf(f, " >'%s/ro-%d.out' 2>'%s/ro-%d.err'; echo $? >'%s/ro-%d.rc'\n", tmpdir, i, tmpdir, i, tmpdir,
			i);
	}
	fclose(f);
	char cmd[700];
	snprintf(cmd, sizeof cmd, "HENRYBENCH_STATION='%s' unshare -rm sh '%s'", station_bare, script);
	assert_int_equal(system(cmd), 0);

	/* the same commands on the writable copy (this records the dead sweep) */
	for (int i = 0; i < N_READ; i++) {
		char *argv[16] = { NULL, "--db", src };
		int n = 3;
		for (int k = 0; k < 8 && read_cmds[i][k]; k++)
			argv[n++] = (char *)read_cmds[i][k];
		argv[n] = NULL;
		run r;
		hb_runv(&r, station_bare, STDIN_NULL, NULL, argv);
		char path[520];
		snprintf(path, sizeof path, "%s/ro-%d.rc", tmpdir, i);
		char *rc = slurp(path);
		snprintf(path, sizeof path, "%s/ro-%d.out", tmpdir, i);
		char *out = slurp(path);
		snprintf(path, sizeof path, "%s/ro-%d.err", tmpdir, i);
		char *err = slurp(path);
		assert_non_null(rc);
		assert_non_null(out);
		if (strcmp(rc, "0\n") != 0 || r.status != 0 || strcmp(out, r.out) != 0)
			fprintf(stderr, "command %d (%s %s): read-only exit %s stderr: %s\n--- read-only\n%s--- writable "
					"(exit %d)\n%s",
				i, read_cmds[i][0], read_cmds[i][1] ? read_cmds[i][1] : "", rc, err ? err : "", out,
				r.status, r.out);
		assert_string_equal(rc, "0\n");
		assert_int_equal(r.status, 0);
		assert_string_equal(out, r.out);
		free(rc);
		free(out);
		free(err);
		run_free(&r);
	}

	/* the dead sweep: interrupted, and said why it is not recorded */
	char path[520], first[200];
	snprintf(path, sizeof path, "%s/ro-%d.rc", tmpdir, N_READ);
	char *rc = slurp(path);
	snprintf(path, sizeof path, "%s/ro-%d.out", tmpdir, N_READ);
	char *out = slurp(path);
	assert_non_null(rc);
	assert_non_null(out);
	assert_string_equal(rc, "0\n");
	snprintf(first, sizeof first, "sweep %lld: bias, interrupted - %s\n", dead_id, dead_reason);
	assert_true(strncmp(out, first, strlen(first)) == 0);
	free(rc);
	free(out);

	/* report: exit 1, nothing written, the cause named */
	snprintf(path, sizeof path, "%s/ro-%d.rc", tmpdir, N_READ + 1);
	rc = slurp(path);
	snprintf(path, sizeof path, "%s/ro-%d.err", tmpdir, N_READ + 1);
	char *err = slurp(path);
	assert_non_null(rc);
	assert_non_null(err);
	assert_string_equal(rc, "1\n");
	char want[700];
	snprintf(want, sizeof want, "henrybench: report: store %s/bench.db is read-only, so the report could not be filed",
		 mnt);
	assert_true(strncmp(err, want, strlen(want)) == 0);
	assert_int_not_equal(access(ro_report, F_OK), 0);
	free(rc);
	free(err);

	/* a writing command: exit 1 and one line naming the store and why (not the library's words) */
	snprintf(path, sizeof path, "%s/ro-%d.rc", tmpdir, N_READ + 2);
	rc = slurp(path);
	snprintf(path, sizeof path, "%s/ro-%d.err", tmpdir, N_READ + 2);
	err = slurp(path);
	assert_non_null(rc);
	assert_non_null(err);
	assert_string_equal(rc, "1\n");
	snprintf(want, sizeof want, "store %s/bench.db cannot be written (read-only file, directory or file system)", mnt);
	if (!strstr(err, want))
		fprintf(stderr, "part edit on a read-only file system said: %s", err);
	assert_non_null(strstr(err, want));
	assert_null(strstr(err, "attempt to write"));
	free(rc);
	free(err);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_dead_sweep_shown_not_written),
		cmocka_unit_test(test_read_commands_on_readonly_fs),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
