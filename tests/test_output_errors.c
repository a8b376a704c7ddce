/* tests/test_output_errors.c - output paths and write errors: FIFOs, links, devices and directories refused, writes failing part-way, standard output full or closed */
/* posix_openpt, grantpt, unlockpt, ptsname (the fixture's terminal) */
#define _XOPEN_SOURCE 700
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <signal.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include "cli_fixture.h"
#include "hostile_fixture.h"
#include "common/hb_text.h"
#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "drivers/profile_internal.h"
#include "src/io/io.h"

/* ------------------------------------------------------------------ */
/* output paths                                                        */


/* report --out, export --out and compare --plot refuse a FIFO, a symbolic
 * link, a directory and a device: exit 2 (a bad value given), the thing
 * at the path untouched, no temporary left behind. */
static void test_output_refuses_non_regular(void **state)
{
	(void)state;
	char dir[500], fifo[560], link[560], target[560], sub[560];
	snprintf(dir, sizeof dir, "%s/outs", tmpdir);
	assert_int_equal(mkdir(dir, 0700), 0);
	snprintf(fifo, sizeof fifo, "%s/pipe.html", dir);
	snprintf(link, sizeof link, "%s/link.html", dir);
	snprintf(target, sizeof target, "%s/target.txt", dir);
	snprintf(sub, sizeof sub, "%s/sub", dir);
	assert_int_equal(mkfifo(fifo, 0600), 0);
	write_file(target, "keep me\n");
	assert_int_equal(symlink(target, link), 0);
	assert_int_equal(mkdir(sub, 0700), 0);
	size_t before = entries_in(dir);
	const char *paths[] = { fifo, link, sub, "/dev/full", "/dev/null" };
	for (size_t i = 0; i < sizeof paths / sizeof paths[0]; i++) {
		run r;
		hb_run(&r, station_bare, "--db", db_path, "report", "2", "--out", paths[i], NULL);
		if (r.status != 2)
			fail_msg("report --out %s: exit %d, stderr %s", paths[i], r.status, r.err);
		assert_one_error_line(&r);
		run_free(&r);
		hb_run(&r, station_bare, "--db", db_path, "export", "--csv", "2", "--out", paths[i], NULL);
		assert_int_equal(r.status, 2);
		assert_one_error_line(&r);
		run_free(&r);
		hb_run(&r, station_bare, "--db", db_path, "compare", "2", "3", "--plot", paths[i], NULL);
		/* was an abort ("double free") when the close failed */
		assert_int_equal(r.status, 2);
		assert_one_error_line(&r);
		run_free(&r);
	}
	struct stat st;
	assert_int_equal(lstat(fifo, &st), 0);
	assert_true(S_ISFIFO(st.st_mode));
	assert_int_equal(lstat(link, &st), 0);
	assert_true(S_ISLNK(st.st_mode));
	char *kept = slurp(target);
	assert_string_equal(kept, "keep me\n");
	free(kept);
	assert_int_equal(lstat("/dev/full", &st), 0);
	assert_true(S_ISCHR(st.st_mode));
	assert_int_equal(entries_in(dir), before);
	/* a directory that does not exist: a runtime failure, exit 1 */
	char missing[600];
	snprintf(missing, sizeof missing, "%s/no-such-dir/plot.svg", dir);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "compare", "2", "3", "--plot", missing, NULL);
	assert_int_equal(r.status, 1);
	assert_one_error_line(&r);
	run_free(&r);
}

/* Runs henrybench with files limited to fsize bytes (RLIMIT_FSIZE; SIGXFSZ
 * ignored, which exec keeps, so a write past it fails with EFBIG): a write
 * or close of an output file that fails part-way. stdout is a pipe, read
 * to its end. */
static void run_fsize_limited(run *r, rlim_t fsize, char **argv)
{
	char err_path[400];
	snprintf(err_path, sizeof err_path, "%s/stderr-fsize", tmpdir);
	int fds[2];
	assert_int_equal(pipe(fds), 0);
	fflush(NULL);
	pid_t pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		setenv("HENRYBENCH_STATION", station_bare, 1);
		unsetenv("HENRYBENCH_DB");
		unsetenv("HENRYBENCH_PROFILE_PATH");
		int err = open(err_path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
		int in = open("/dev/null", O_RDONLY);
		if (err < 0 || in < 0)
			_exit(127);
		dup2(in, STDIN_FILENO);
		dup2(fds[1], STDOUT_FILENO);
		dup2(err, STDERR_FILENO);
		close(fds[0]);
		close(fds[1]);
		signal(SIGXFSZ, SIG_IGN);
		struct rlimit rl = { fsize, fsize };
		if (setrlimit(RLIMIT_FSIZE, &rl) != 0)
			_exit(126);
		argv[0] = (char *)hb_bin;
		execv(hb_bin, argv);
		_exit(127);
	}
	close(fds[1]);
	live_add(pid);
	text out = { 0 };
	read_until(fds[0], &out, NULL, 0);
	close(fds[0]);
	r->status = exit_of(wait_exit(pid));
	r->out = out.s;
	r->err = slurp(err_path);
}

/* A plot or report whose write fails part-way (the file system refuses
 * more bytes): exit 1 with one line, the stream closed once (compare
 * --plot closed it twice and aborted with "double free"), no target and
 * no temporary left. The plots (drawn through temporary files), the page
 * and the JSON export are larger than 36 kB; the store's own files
 * stay below it. */
static void test_output_write_failure(void **state)
{
	(void)state;
	char dir[500], plot[560], page[560], data[560];
	snprintf(dir, sizeof dir, "%s/efbig", tmpdir);
	snprintf(data, sizeof data, "%s/all.json", dir);
	assert_int_equal(mkdir(dir, 0700), 0);
	snprintf(plot, sizeof plot, "%s/overlay.svg", dir);
	snprintf(page, sizeof page, "%s/report.html", dir);
	char *a1[] = { NULL, "--db", db_path, "compare", "2", "3", "--plot", plot, NULL };
	char *a2[] = { NULL, "--db", db_path, "report", "2", "--out", page, NULL };
	char *a3[] = { NULL, "--db", db_path, "export", "--json", "--part", "HBX-108G", "--out", data, NULL };
	char **cmds[] = { a1, a2, a3 };
	for (int i = 0; i < 3; i++) {
		run r;
		run_fsize_limited(&r, 36000, cmds[i]);
		if (r.status != 1)
			fail_msg("%s with a failing write: exit %d, stderr %s", cmds[i][3], r.status, r.err);
		assert_one_error_line(&r);
		run_free(&r);
	}
	assert_int_equal(entries_in(dir), 0);
}

/* hb_out_commit when the bytes are refused only at the flush (all of them
 * waited in the stream's buffer): HB_ERR_IO naming the path and EFBIG, the
 * stream closed exactly once (a second fclose aborts: "double free"), the
 * temporary removed. In a child, whose file-size limit it sets. */
static void test_out_commit_failure(void **state)
{
	(void)state;
	char dir[500], path[560];
	snprintf(dir, sizeof dir, "%s/commit", tmpdir);
	assert_int_equal(mkdir(dir, 0700), 0);
	snprintf(path, sizeof path, "%s/out.txt", dir);
	fflush(NULL);
	pid_t pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		signal(SIGXFSZ, SIG_IGN);
		struct rlimit rl = { 1000, 1000 };
		if (setrlimit(RLIMIT_FSIZE, &rl) != 0)
			_exit(10);
		char err[300];
		hb_out *o = NULL;
		if (hb_out_open(path, &o, err, sizeof err) != HB_OK)
			_exit(11);
		static char buf[65536];
		if (setvbuf(hb_out_stream(o), buf, _IOFBF, sizeof buf) != 0)
			_exit(12);
		for (int i = 0; i < 200; i++)
			if (fputs("0123456789", hb_out_stream(o)) == EOF)
				_exit(13); /* must wait in the buffer */
		int rc = hb_out_commit(o, err, sizeof err);
		char want[700];
		snprintf(want, sizeof want, "cannot write %s: File too large", path);
		_exit(rc == HB_ERR_IO && strcmp(err, want) == 0 ? 0 : 14);
	}
	int status = 0;
	assert_int_equal(waitpid(pid, &status, 0), pid);
	assert_int_equal(exit_of(status), 0);
	assert_int_equal(entries_in(dir), 0);
}

/* A regular file is replaced whole through a temporary beside it, with its
 * permissions kept, and no temporary left. */
static void test_output_replaces_regular_file(void **state)
{
	(void)state;
	char dir[500], path[560];
	snprintf(dir, sizeof dir, "%s/regular", tmpdir);
	assert_int_equal(mkdir(dir, 0700), 0);
	snprintf(path, sizeof path, "%s/report.html", dir);
	write_file(path, "old\n");
	assert_int_equal(chmod(path, 0640), 0);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "report", "2", "--out", path, NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	struct stat st;
	assert_int_equal(lstat(path, &st), 0);
	assert_true(S_ISREG(st.st_mode));
	assert_int_equal(st.st_mode & 0777, 0640);
	assert_true(st.st_size > 1000);
	assert_int_equal(entries_in(dir), 1);
}

/* ------------------------------------------------------------------ */
/* write errors                                                        */

/* Output to a full device: every command exits 1 with one line on stderr
 * (they exited 0 in silence, or 1 without a word). */
static void test_stdout_full(void **state)
{
	(void)state;
	const char *cmds[][4] = { { "show", "1", "--csv", NULL }, { "show", "1", NULL, NULL },
				  { "sweeps", NULL, NULL, NULL },  { "show", "1", "--json", NULL },
				  { "export", "--csv", "2", NULL }, { "history", "HBX-108G", NULL, NULL },
				  { "--help", NULL, NULL, NULL } };
	for (size_t i = 0; i < sizeof cmds / sizeof cmds[0]; i++) {
		char *argv[12] = { NULL, "--db", db_path };
		int n = 3;
		for (int k = 0; k < 4 && cmds[i][k]; k++)
			argv[n++] = (char *)cmds[i][k];
		argv[n] = NULL;
		run r;
		run_stdout_to(&r, "full", argv);
		if (r.status != 1)
			fail_msg("%s > /dev/full: exit %d, stderr %s", cmds[i][0], r.status, r.err);
		assert_one_error_line(&r);
		/* ENOSPC is what a write to /dev/full gives (full(4)) */
		assert_non_null(strstr(r.err, "No space left on device"));
		run_free(&r);
	}
}

/* A reader that went away (EPIPE; SIGPIPE is ignored): exit 1 and said. */
static void test_stdout_closed_pipe(void **state)
{
	(void)state;
	char *argv[] = { NULL, "--db", db_path, "sweeps", NULL };
	run r;
	run_stdout_to(&r, "closed", argv);
	assert_int_equal(r.status, 1);
	assert_one_error_line(&r);
	assert_non_null(strstr(r.err, "Broken pipe"));
	run_free(&r);
}

/* `sweep ... | head -1`: the reader goes away; the sweep still
 * runs to its end, switches the supply off through its state machine and
 * stores everything, then says its output was lost and exits 1. */
static void test_sweep_output_lost_is_said(void **state)
{
	(void)state;
	char station[400];
	snprintf(station, sizeof station, "%s/limits.ini", tmpdir);
	write_file(station, "# test station\n[station]\nname = test-bench\noperator = tester\n"
			    "[limits]\nmax_current = 5\nmax_voltage = 2\nmax_power = 10\nramp_rate = 50\n");
	sim_server sim;
	sim_start(&sim, NULL);
	char err_path[420];
	snprintf(err_path, sizeof err_path, "%s/lost.err", tmpdir);
	char *argv[] = { NULL, "--db", db_path, "sweep", "--part", "HBX-108G", "--unit", "LOST-1", "--lcr", sim.lcr,
			 "--supply", sim.supply, "--to", "2", "--steps", "11", "--yes", "--no-fit", NULL };
	int fd;
	pid_t pid = spawn(argv, station, &fd, err_path);
	/* The reader leaves at once: standard output to a pipe is written in
	 * blocks, so the sweep meets EPIPE at its first write, long after. */
	close(fd);
	int status = exit_of(wait_exit(pid));
	char *err = slurp(err_path);
	if (status != 1)
		fail_msg("sweep with its reader gone: exit %d, stderr %s", status, err);
	assert_non_null(strstr(err, "henrybench: standard output lost: Broken pipe"));
	free(err);
	sim_stop(&sim);
	/* the supply was switched off by the state machine, as in any sweep */
	assert_non_null(strstr(sim.log, "supply cmd OUTP OFF"));
	sim_free(&sim);
	run r;
	hb_run(&r, station_bare, "--db", db_path, "sweeps", "--unit", "LOST-1", "--json", NULL);
	assert_int_equal(r.status, 0);
	assert_non_null(strstr(r.out, "\"status\": \"complete\""));
	assert_non_null(strstr(r.out, "\"n_points\": 11"));
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	return hostile_setup("output_errors");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_output_refuses_non_regular),
		cmocka_unit_test(test_output_write_failure),
		cmocka_unit_test(test_out_commit_failure),
		cmocka_unit_test(test_output_replaces_regular_file),
		cmocka_unit_test(test_stdout_full),
		cmocka_unit_test(test_stdout_closed_pipe),
		cmocka_unit_test(test_sweep_output_lost_is_said),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
