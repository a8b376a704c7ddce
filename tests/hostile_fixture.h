/* tests/hostile_fixture.h - shared by the hostile-input tests: the corpus folder, the demo's store, runs with stdout on a full device or a closed pipe, one-line error checks */
#ifndef HB_TESTS_HOSTILE_FIXTURE_H
#define HB_TESTS_HOSTILE_FIXTURE_H

/* Include after <cmocka.h> and cli_fixture.h: the helpers assert. */

#include <dirent.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

static char data_dir[1024];      /* tests/data/hostile */
static char profiles_dir[1024];  /* drivers/profiles */
static char demo_dir[400], db_path[480];

/* ------------------------------------------------------------------ */
/* helpers                                                             */

/* The .ini or .bin files of a corpus folder, sorted; returns how many. */
static inline size_t corpus(const char *sub, char names[][128], size_t cap)
{
	char dir[1200];
	snprintf(dir, sizeof dir, "%s/%s", data_dir, sub);
	DIR *d = opendir(dir);
	assert_non_null(d);
	size_t n = 0;
	struct dirent *e;
	while ((e = readdir(d)) && n < cap) {
		if (e->d_name[0] == '.')
			continue;
		snprintf(names[n++], 128, "%s", e->d_name);
	}
	closedir(d);
	qsort(names, n, 128, (int (*)(const void *, const void *))strcmp);
	return n;
}

static inline bool starts_with(const char *s, const char *prefix)
{
	return strncmp(s, prefix, strlen(prefix)) == 0;
}

/* A whole file as a string (the corpus values hold no NUL). */
static inline char *read_bytes(const char *path)
{
	char *s = slurp(path);
	assert_non_null(s);
	return s;
}

/* The stderr of a run is exactly one line starting with "henrybench: ". */
static inline void assert_one_error_line(const run *r)
{
	if (count_lines(r->err) != 1 || !starts_with(r->err, "henrybench: "))
		fail_msg("expected one error line on stderr, got: %s", r->err);
}

/* Runs henrybench with stdout on target: "full" (/dev/full) or "closed"
 * (a pipe whose reading end is already closed: EPIPE). */
static inline void run_stdout_to(run *r, const char *target, char **argv)
{
	char err_path[400];
	snprintf(err_path, sizeof err_path, "%s/stderr-out", tmpdir);
	int fds[2] = { -1, -1 };
	int out = -1;
	if (strcmp(target, "full") == 0) {
		out = open("/dev/full", O_WRONLY);
		assert_true(out >= 0);
	} else {
		assert_int_equal(pipe(fds), 0);
		close(fds[0]);
		out = fds[1];
	}
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
		dup2(out, STDOUT_FILENO);
		dup2(err, STDERR_FILENO);
		argv[0] = (char *)hb_bin;
		execv(hb_bin, argv);
		_exit(127);
	}
	close(out);
	live_add(pid);
	r->status = exit_of(wait_exit(pid));
	r->out = NULL;
	r->err = slurp(err_path);
}

/* Entries of dir other than . and .. */
static inline size_t entries_in(const char *dir)
{
	DIR *d = opendir(dir);
	assert_non_null(d);
	size_t n = 0;
	struct dirent *e;
	while ((e = readdir(d)))
		n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
	closedir(d);
	return n;
}

/* ------------------------------------------------------------------ */

/* Group setup: the corpus and profile folders found from the test binary,
 * the fixture's temp dir, and the demo's store (a part, bias and
 * frequency sweeps, a lot) in it. */
static inline int hostile_setup(const char *name)
{
	char exe[900];
	ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
	if (n <= 0)
		return -1;
	exe[n] = '\0';
	for (int up = 0; up < 3; up++) {
		char *slash = strrchr(exe, '/');
		if (!slash)
			return -1;
		*slash = '\0';
		snprintf(data_dir, sizeof data_dir, "%s/tests/data/hostile", exe);
		snprintf(profiles_dir, sizeof profiles_dir, "%s/drivers/profiles", exe);
		if (access(data_dir, F_OK) == 0)
			break;
	}
	if (cli_fixture_setup(name) != 0)
		return -1;
	/* the demo's store: a part, bias and frequency sweeps, a lot */
	snprintf(demo_dir, sizeof demo_dir, "%s/demo", tmpdir);
	snprintf(db_path, sizeof db_path, "%s/bench.db", demo_dir);
	run r;
	hb_run(&r, station_bare, "demo", "--out", demo_dir, NULL);
	int rc = r.status == 0 ? 0 : -1;
	if (rc)
		fprintf(stderr, "demo failed: %s\n", r.err);
	run_free(&r);
	return rc;
}

#endif
