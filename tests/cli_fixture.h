/* tests/cli_fixture.h - running ./henrybench from the command-line tests: spawn with stdin from /dev/null, a text or a terminal, wait with a hang guard, a `henrybench sim` over TCP, a temp dir */
#ifndef HB_TESTS_CLI_FIXTURE_H
#define HB_TESTS_CLI_FIXTURE_H

/* Include after <cmocka.h>: the helpers assert. */
#include <dirent.h>
#include <errno.h>
#include <fcntl.h>
#include <poll.h>
#include <signal.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <termios.h>
#include <time.h>
#include <unistd.h>

/* Only to stop a broken test from hanging; never a pass/fail criterion. */
#define CLI_HANG_GUARD_S 120

static const char *hb_bin = "./henrybench";
static char tmpdir[256];
/* A station file with no limits: the user's own never changes a result. */
static char station_bare[320];

/* ------------------------------------------------------------------ */
/* processes                                                           */

/* Children still alive; teardown kills what a failed test left behind. */
static pid_t live[8];

static inline void live_add(pid_t pid)
{
	for (size_t i = 0; i < sizeof live / sizeof live[0]; i++)
		if (!live[i]) {
			live[i] = pid;
			return;
		}
}

static inline void live_remove(pid_t pid)
{
	for (size_t i = 0; i < sizeof live / sizeof live[0]; i++)
		if (live[i] == pid)
			live[i] = 0;
}

static inline void kill_leftovers(void)
{
	for (size_t i = 0; i < sizeof live / sizeof live[0]; i++)
		if (live[i]) {
			kill(live[i], SIGKILL);
			waitpid(live[i], NULL, 0);
			live[i] = 0;
		}
}

static inline double monotonic(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* Whether this machine gives out pseudo-terminals (a container may not). */
static inline bool terminal_available(void)
{
	int m = posix_openpt(O_RDWR | O_NOCTTY);
	if (m < 0)
		return false;
	close(m);
	return true;
}

/* Where a child's stdin comes from. */
typedef enum { STDIN_NULL, STDIN_TEXT, STDIN_TERMINAL } stdin_kind;

/* Starts henrybench with argv (argv[0] ignored); stdout comes back through
 * *out_fd, stderr goes to err_path. stdin: /dev/null, the text `input`
 * (through a file), or a terminal (a pseudo-terminal without echo) into
 * which `input` is typed before the program starts: a terminal in
 * canonical mode hands out one line per read, so the answers wait for
 * their questions. The station file is always the test's own. */
static inline pid_t spawn_in(char **argv, const char *station, stdin_kind kind, const char *input, int *out_fd,
		      const char *err_path, int *master_fd)
{
	int fds[2];
	assert_int_equal(pipe(fds), 0);
	int in = -1, master = -1;
	if (kind == STDIN_TEXT) {
		char in_path[400];
		snprintf(in_path, sizeof in_path, "%s/stdin-XXXXXX", tmpdir);
		in = mkstemp(in_path);
		assert_true(in >= 0);
		unlink(in_path);
		size_t len = input ? strlen(input) : 0;
		assert_true(write(in, input ? input : "", len) == (ssize_t)len);
		assert_int_equal(lseek(in, 0, SEEK_SET), 0);
	} else if (kind == STDIN_TERMINAL) {
		master = posix_openpt(O_RDWR | O_NOCTTY);
		assert_true(master >= 0);
		assert_int_equal(grantpt(master), 0);
		assert_int_equal(unlockpt(master), 0);
		in = open(ptsname(master), O_RDWR | O_NOCTTY);
		assert_true(in >= 0);
		struct termios t;
		assert_int_equal(tcgetattr(in, &t), 0);
		t.c_lflag &= ~(tcflag_t)(ECHO | ECHONL);
		assert_int_equal(tcsetattr(in, TCSANOW, &t), 0);
		size_t len = input ? strlen(input) : 0;
		if (len)
			assert_true(write(master, input, len) == (ssize_t)len);
	} else {
		in = open("/dev/null", O_RDONLY);
		assert_true(in >= 0);
	}
	fflush(NULL);
	pid_t pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		setenv("HENRYBENCH_STATION", station, 1);
		unsetenv("HENRYBENCH_DB");
		unsetenv("HENRYBENCH_PROFILE_PATH");
		int err = open(err_path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
		if (err < 0)
			_exit(127);
		dup2(in, STDIN_FILENO);
		dup2(fds[1], STDOUT_FILENO);
		dup2(err, STDERR_FILENO);
		close(fds[0]);
		close(fds[1]);
		argv[0] = (char *)hb_bin;
		execv(hb_bin, argv);
		_exit(127);
	}
	close(fds[1]);
	close(in);
	/* The master stays open until the child is gone: closing it would hang
	 * up the child's terminal. */
	if (master_fd)
		*master_fd = master;
	else if (master >= 0)
		close(master);
	live_add(pid);
	*out_fd = fds[0];
	return pid;
}

static inline pid_t spawn(char **argv, const char *station, int *out_fd, const char *err_path)
{
	return spawn_in(argv, station, STDIN_NULL, NULL, out_fd, err_path, NULL);
}

static inline int wait_exit(pid_t pid)
{
	int status = 0;
	double end = monotonic() + CLI_HANG_GUARD_S;
	while (monotonic() < end) {
		pid_t got = waitpid(pid, &status, WNOHANG);
		if (got == pid) {
			live_remove(pid);
			return status;
		}
		/* The poll interval between looks, not a criterion. */
		struct timespec ts = { 0, 5000000L };
		nanosleep(&ts, NULL);
	}
	kill(pid, SIGKILL);
	waitpid(pid, &status, 0);
	live_remove(pid);
	fail_msg("henrybench (pid %d) hung", (int)pid);
	return status;
}

typedef struct text {
	char *s;
	size_t len, cap;
} text;

static inline void text_add(text *t, const char *data, size_t n)
{
	if (t->len + n + 1 > t->cap) {
		t->cap = (t->len + n + 1) * 2;
		t->s = realloc(t->s, t->cap);
		assert_non_null(t->s);
	}
	memcpy(t->s + t->len, data, n);
	t->len += n;
	t->s[t->len] = '\0';
}

/* Reads fd into t until EOF, or until `lines` complete lines starting with
 * prefix (NULL: any lines) have arrived (0 = read to EOF). Returns how
 * many such lines. */
static inline int read_until(int fd, text *t, const char *prefix, int lines)
{
	double end = monotonic() + CLI_HANG_GUARD_S;
	int seen = 0;
	size_t scanned = 0;
	if (!t->s)
		text_add(t, "", 0);
	for (;;) {
		char *nl;
		while ((nl = memchr(t->s + scanned, '\n', t->len - scanned))) {
			if (!prefix || strncmp(t->s + scanned, prefix, strlen(prefix)) == 0)
				seen++;
			scanned = (size_t)(nl + 1 - t->s);
		}
		if (lines > 0 && seen >= lines)
			return seen;
		if (monotonic() > end)
			return seen;
		struct pollfd p = { fd, POLLIN, 0 };
		int pr = poll(&p, 1, 500);
		if (pr < 0 && errno != EINTR)
			return seen;
		if (pr <= 0)
			continue;
		char buf[4096];
		ssize_t n = read(fd, buf, sizeof buf);
		if (n < 0 && errno == EINTR)
			continue;
		if (n <= 0)
			return seen;
		text_add(t, buf, (size_t)n);
	}
}

static inline char *slurp(const char *path)
{
	text t = { 0 };
	text_add(&t, "", 0);
	FILE *f = fopen(path, "r");
	if (f) {
		char buf[4096];
		size_t n;
		while ((n = fread(buf, 1, sizeof buf, f)) > 0)
			text_add(&t, buf, n);
		fclose(f);
	}
	return t.s;
}

typedef struct run {
	int status; /* exit status, or 128 + signal */
	char *out, *err;
} run;

static inline void run_free(run *r)
{
	free(r->out);
	free(r->err);
	memset(r, 0, sizeof *r);
}

static inline int exit_of(int status)
{
	return WIFEXITED(status) ? WEXITSTATUS(status) : 128 + WTERMSIG(status);
}

/* Runs henrybench with argv (NULL-terminated, argv[0] ignored) to its end. */
static inline void hb_runv(run *r, const char *station, stdin_kind kind, const char *input, char **argv)
{
	char err_path[400];
	snprintf(err_path, sizeof err_path, "%s/stderr", tmpdir);
	int fd, master = -1;
	pid_t pid = spawn_in(argv, station, kind, input, &fd, err_path, &master);
	text out = { 0 };
	read_until(fd, &out, NULL, 0);
	close(fd);
	r->status = exit_of(wait_exit(pid));
	if (master >= 0)
		close(master);
	r->out = out.s;
	r->err = slurp(err_path);
}

#define CLI_ARGV_FROM(first, argv, n)                                                                                  \
	do {                                                                                                           \
		va_list ap;                                                                                            \
		va_start(ap, first);                                                                                   \
		for (const char *a; (a = va_arg(ap, const char *)) && n < 63;)                                         \
			argv[n++] = (char *)a;                                                                         \
		va_end(ap);                                                                                            \
		argv[n] = NULL;                                                                                        \
	} while (0)

/* henrybench ARGS... (NULL-terminated), stdin /dev/null. */
static inline void hb_run(run *r, const char *station, ...)
{
	char *argv[64];
	int n = 1;
	CLI_ARGV_FROM(station, argv, n);
	hb_runv(r, station, STDIN_NULL, NULL, argv);
}

/* henrybench ARGS... with stdin of the given kind holding `input`. */
static inline void hb_run_input(run *r, const char *station, stdin_kind kind, const char *input, ...)
{
	char *argv[64];
	int n = 1;
	CLI_ARGV_FROM(input, argv, n);
	hb_runv(r, station, kind, input, argv);
}

static inline int count_lines(const char *s)
{
	int n = 0;
	for (; *s; s++)
		n += *s == '\n';
	return n;
}

/* ------------------------------------------------------------------ */
/* the simulated bench as its own process                              */

typedef struct sim_server {
	pid_t pid;
	int fd;
	char lcr[128], supply[128];
	char log_path[400];
	char *log; /* after sim_stop */
} sim_server;

static int sim_counter;

/* `henrybench sim` on two loopback ports chosen by the kernel, simulated
 * time a hundred times faster; further options NULL-terminated. */
static inline void sim_start(sim_server *s, ...)
{
	memset(s, 0, sizeof *s);
	snprintf(s->log_path, sizeof s->log_path, "%s/sim-%d.log", tmpdir, ++sim_counter);
	char *argv[32] = { NULL, "sim", "--lcr", "tcp://127.0.0.1:0", "--supply", "tcp://127.0.0.1:0", "--log",
			   s->log_path, "--param", "time_scale=0.01" };
	int n = 10;
	va_list ap;
	va_start(ap, s);
	for (const char *a; (a = va_arg(ap, const char *)) && n < 31;)
		argv[n++] = (char *)a;
	va_end(ap);
	argv[n] = NULL;
	char err_path[420];
	snprintf(err_path, sizeof err_path, "%s.err", s->log_path);
	s->pid = spawn(argv, station_bare, &s->fd, err_path);
	text out = { 0 };
	/* Both lines are printed before serving starts. */
	read_until(s->fd, &out, NULL, 2);
	for (char *line = out.s; line && *line; line = strchr(line, '\n') ? strchr(line, '\n') + 1 : NULL)
		if (sscanf(line, "lcr: %127s", s->lcr) == 1 || sscanf(line, "supply: %127s", s->supply) == 1)
			continue;
	free(out.s);
	if (!s->lcr[0] || !s->supply[0])
		fail_msg("henrybench sim did not print its ports (stderr: %s)", err_path);
}

static inline void sim_stop(sim_server *s)
{
	if (s->pid > 0) {
		kill(s->pid, SIGTERM);
		wait_exit(s->pid);
		close(s->fd);
		s->pid = 0;
	}
	free(s->log);
	s->log = slurp(s->log_path);
}

static inline void sim_free(sim_server *s)
{
	if (s->pid > 0)
		sim_stop(s);
	free(s->log);
	s->log = NULL;
}

/* ------------------------------------------------------------------ */
/* fixtures                                                            */

static inline void write_file(const char *path, const char *content)
{
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs(content, f);
	fclose(f);
}

/* Removes the temp dir and everything under it. */
static inline void remove_tree(const char *dir)
{
	DIR *d = opendir(dir);
	if (d) {
		struct dirent *e;
		while ((e = readdir(d))) {
			if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
				continue;
			char p[800];
			snprintf(p, sizeof p, "%s/%s", dir, e->d_name);
			if (unlink(p) != 0)
				remove_tree(p);
		}
		closedir(d);
	}
	rmdir(dir);
}

/* Group setup: the binary under test (HENRYBENCH_BIN, set by make check),
 * a temp dir named after the test program, a bare station file. */
static inline int cli_fixture_setup(const char *name)
{
	const char *bin = getenv("HENRYBENCH_BIN");
	if (bin && *bin)
		hb_bin = bin;
	if (access(hb_bin, X_OK) != 0) {
		fprintf(stderr, "%s not found: run from the repository root after 'make'\n", hb_bin);
		return -1;
	}
	snprintf(tmpdir, sizeof tmpdir, "/tmp/hb-test-%s-XXXXXX", name);
	if (!mkdtemp(tmpdir))
		return -1;
	snprintf(station_bare, sizeof station_bare, "%s/bare.ini", tmpdir);
	write_file(station_bare, "# a station without limits\n[station]\nname = bare-bench\n");
	signal(SIGPIPE, SIG_IGN);
	return 0;
}

static inline int cli_fixture_teardown(void **state)
{
	(void)state;
	kill_leftovers();
	remove_tree(tmpdir);
	return 0;
}

#endif
