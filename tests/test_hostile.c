/* tests/test_hostile.c - hostile input replayed from tests/data/hostile: profile patterns, text fields, CSV cells, output paths, write errors, echoing instruments */
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
#include "scripted_peer.h"
#include "common/hb_text.h"
#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "drivers/profile_internal.h"
#include "src/io/io.h"

static char data_dir[1024];      /* tests/data/hostile */
static char profiles_dir[1024];  /* drivers/profiles */
static char demo_dir[400], db_path[480];

/* ------------------------------------------------------------------ */
/* helpers                                                             */

/* The .ini or .bin files of a corpus folder, sorted; returns how many. */
static size_t corpus(const char *sub, char names[][128], size_t cap)
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

static bool starts_with(const char *s, const char *prefix)
{
	return strncmp(s, prefix, strlen(prefix)) == 0;
}

/* A whole file as a string (the corpus values hold no NUL). */
static char *read_bytes(const char *path)
{
	char *s = slurp(path);
	assert_non_null(s);
	return s;
}

/* The stderr of a run is exactly one line starting with "henrybench: ". */
static void assert_one_error_line(const run *r)
{
	if (count_lines(r->err) != 1 || !starts_with(r->err, "henrybench: "))
		fail_msg("expected one error line on stderr, got: %s", r->err);
}

/* Runs henrybench with stdout on target: "full" (/dev/full) or "closed"
 * (a pipe whose reading end is already closed: EPIPE). */
static void run_stdout_to(run *r, const char *target, char **argv)
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

/* ------------------------------------------------------------------ */
/* profile patterns                                                    */

/* An IDN model of 90 'a' and a 'b': "(a+)+$" tries every split of the
 * a's before failing (common practice: the classic catastrophic
 * backtracking case), far beyond the match limit. */
static void long_subject(char *buf, size_t cap, bool with_b)
{
	assert_true(cap > 92);
	memset(buf, 'a', 90);
	buf[90] = with_b ? 'b' : '\0';
	buf[91] = '\0';
}

/* Every case in tests/data/hostile/profiles: reject-* fails to load with
 * file:line naming match.model (line 6 in each), limit-* loads and its
 * match stops at the limit (no memory blow-up, no unbounded time: the
 * return code says the limit was hit), accept-* matches. */
static void test_profile_corpus(void **state)
{
	(void)state;
	char names[64][128];
	size_t n = corpus("profiles", names, 64);
	int rejected = 0, limited = 0, accepted = 0;
	hb_idn idn;
	memset(&idn, 0, sizeof idn);
	snprintf(idn.maker, sizeof idn.maker, "hostile");
	for (size_t i = 0; i < n; i++) {
		char path[1400], err[600], want[1500];
		snprintf(path, sizeof path, "%s/profiles/%s", data_dir, names[i]);
		snprintf(want, sizeof want, "%s:6: key 'match.model': ", path);
		hb_profile *p = NULL;
		int rc = hb_profile_load(path, &p, err, sizeof err);
		if (starts_with(names[i], "reject-")) {
			if (rc != HB_ERR_PROFILE || !starts_with(err, want))
				fail_msg("%s: rc %d, message: %s", names[i], rc, err);
			assert_null(p);
			rejected++;
			continue;
		}
		if (rc != HB_OK)
			fail_msg("%s: rc %d, message: %s", names[i], rc, err);
		bool limit_case = starts_with(names[i], "limit-");
		long_subject(idn.model, sizeof idn.model, limit_case);
		rc = hb_profile_match_check(p, &idn, err, sizeof err);
		if (limit_case) {
			if (rc != HB_ERR_LIMIT || !starts_with(err, want))
				fail_msg("%s: rc %d, message: %s", names[i], rc, err);
			assert_false(hb_profile_matches(p, &idn));
			limited++;
		} else {
			assert_int_equal(rc, 1);
			accepted++;
		}
		hb_profile_free(p);
	}
	/* the corpus holds each kind: the 22 and 30 '+', deep nesting,
	 * two backtracking patterns, one ordinary */
	assert_int_equal(rejected, 3);
	assert_int_equal(limited, 2);
	assert_int_equal(accepted, 1);
}

/* One bad profile file on the search path must not block the others: the
 * search skips the broken and the giving-up ones (with a warning) and still
 * chooses the good one, or the generic profile. */
static void test_profile_search_survives_corpus(void **state)
{
	(void)state;
	char dir[1200], err[600];
	snprintf(dir, sizeof dir, "%s/profiles", data_dir);
	setenv("HENRYBENCH_PROFILE_PATH", dir, 1);
	hb_idn idn;
	memset(&idn, 0, sizeof idn);
	snprintf(idn.maker, sizeof idn.maker, "hostile");
	long_subject(idn.model, sizeof idn.model, false);
	hb_profile *p = NULL;
	assert_int_equal(hb_profile_match(HB_KIND_LCR, &idn, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "accept-plain");
	hb_profile_free(p);
	long_subject(idn.model, sizeof idn.model, true);
	p = NULL;
	assert_int_equal(hb_profile_match(HB_KIND_LCR, &idn, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "generic-lcr");
	hb_profile_free(p);
	unsetenv("HENRYBENCH_PROFILE_PATH");
}

/* ------------------------------------------------------------------ */
/* CSV cells                                                           */

/* OWASP "CSV Injection": cells starting with =, +, -, @, tab or CR are
 * read as formulas by spreadsheets; a leading single quote makes them
 * text (common practice). Numbers keep their sign: -5.5 is a number. */
static void test_csv_formula_cells_inert(void **state)
{
	(void)state;
	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	assert_non_null(f);
	hb_csv_writer w;
	hb_csv_begin(&w, f);
	const char *cells[] = { "=1+1", "+1", "-1", "@SUM(A1:A2)", "\tx", "\rx", "plain", "a=b", "=HYPERLINK(\"h\")" };
	for (size_t i = 0; i < sizeof cells / sizeof cells[0]; i++)
		hb_csv_text(&w, cells[i]);
	hb_csv_num(&w, -5.5);
	hb_csv_int(&w, -3);
	hb_csv_row_end(&w);
	assert_int_equal(hb_csv_end(&w), HB_OK);
	fclose(f);
	/* RFC 4180 quoting still applies around the neutralised cell (CR,
	 * quotes) */
	assert_string_equal(buf, "'=1+1,'+1,'-1,'@SUM(A1:A2),'\tx,\"'\rx\",plain,a=b,\"'=HYPERLINK(\"\"h\"\")\",-5.5,-3\r\n");
	free(buf);
	assert_true(hb_csv_formula_like("=A1"));
	assert_false(hb_csv_formula_like("A1"));
	assert_false(hb_csv_formula_like(""));
}

/* ------------------------------------------------------------------ */
/* text fields                                                         */

/* RFC 3629 section 3 and 10: overlong forms, surrogates (U+D800..DFFF)
 * and code points above U+10FFFF are not UTF-8. */
static void test_text_check_messages(void **state)
{
	(void)state;
	char err[200];
	assert_int_equal(hb_text_check("serial", "ABC", HB_TEXT_ID_MAX, err, sizeof err), HB_OK);
	assert_int_equal(hb_text_check("serial", "\xc3\xa9t\xc3\xa9", 5, err, sizeof err), HB_OK); /* "été", 5 bytes */
	assert_int_equal(hb_text_check("serial", "\xc3\xa9t\xc3\xa9", 4, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "serial: 5 bytes, limit 4");
	assert_int_equal(hb_text_check("part number", "AB\x1b[m", 0, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "part number: control character 0x1b at byte 3 (one line of printable text)");
	assert_int_equal(hb_text_check("note", "x\xc0\xaf", 0, err, sizeof err), HB_ERR_ARG);
	assert_string_equal(err, "note: not valid UTF-8 at byte 2");
	assert_int_equal(hb_text_check("note", "\xed\xa0\x80", 0, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_text_check("note", "\xf4\x90\x80\x80", 0, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_text_check("note", "\xf4\x8f\xbf\xbf", 0, err, sizeof err), HB_OK); /* U+10FFFF */
	assert_int_equal(hb_text_check("note", "\xc2\x85", 0, err, sizeof err), HB_ERR_ARG);     /* C1 NEL */
}

/* Every value in tests/data/hostile/text given as a serial (sweeps --unit)
 * and as a part number (part add): reject-* exits 2 with one line naming
 * the field, nothing stored; accept-* is taken and read back whole. */
static void test_text_corpus(void **state)
{
	(void)state;
	char names[64][128];
	size_t n = corpus("text", names, 64);
	int rejected = 0, accepted = 0;
	for (size_t i = 0; i < n; i++) {
		char path[1400];
		snprintf(path, sizeof path, "%s/text/%s", data_dir, names[i]);
		char *value = read_bytes(path);
		bool reject = starts_with(names[i], "reject-");
		size_t vlen = strlen(value);
		char *unit_opt = malloc(vlen + 8);
		assert_non_null(unit_opt);
		snprintf(unit_opt, vlen + 8, "--unit=%s", value);
		run r;
		hb_run(&r, station_bare, "--db", db_path, "sweeps", unit_opt, NULL);
		if (reject) {
			if (r.status != 2 || !starts_with(r.err, "henrybench: serial (--unit): "))
				fail_msg("%s: sweeps --unit exit %d, stderr %s", names[i], r.status, r.err);
			assert_one_error_line(&r);
		} else if (r.status != 0) {
			fail_msg("%s: sweeps --unit exit %d, stderr %s", names[i], r.status, r.err);
		}
		run_free(&r);
		hb_run(&r, station_bare, "--db", db_path, "part", "add", "--nominal", "100uH", "--tol", "10%", "--freq",
		       "10kHz", "--level", "0.1V", "--", value, NULL);
		if (reject) {
			if (r.status != 2 || !starts_with(r.err, "henrybench: part number: "))
				fail_msg("%s: part add exit %d, stderr %s", names[i], r.status, r.err);
			assert_one_error_line(&r);
			rejected++;
		} else {
			if (r.status != 0)
				fail_msg("%s: part add exit %d, stderr %s", names[i], r.status, r.err);
			run_free(&r);
			/* stored whole: `part show` starts with "part VALUE\n" */
			hb_run(&r, station_bare, "--db", db_path, "part", "show", "--", value, NULL);
			assert_int_equal(r.status, 0);
			assert_true(starts_with(r.out, "part "));
			assert_memory_equal(r.out + 5, value, vlen);
			assert_int_equal(r.out[5 + vlen], '\n');
			accepted++;
		}
		run_free(&r);
		free(unit_opt);
		free(value);
	}
	assert_int_equal(rejected, 14);
	assert_int_equal(accepted, 5);
}

/* A serials file for inspect is held to the same rules, line by line,
 * before anything is measured or stored. */
static void test_serials_file_checked(void **state)
{
	(void)state;
	char path[420], want[600];
	snprintf(path, sizeof path, "%s/serials.txt", tmpdir);
	write_file(path, "S-1\nS-\0332\n");
	run r;
	hb_run(&r, station_bare, "--db", db_path, "inspect", "--part", "HBX-108G", "--lot", "L-HOSTILE", "--lot-size",
	       "50", "--aql", "1", "--serials", path, "--lcr", "sim:lcr", "--supply", "sim:supply", NULL);
	assert_int_equal(r.status, 2);
	assert_one_error_line(&r);
	snprintf(want, sizeof want, "henrybench: %s:2: serial: control character 0x1b at byte 3", path);
	assert_true(starts_with(r.err, want));
	run_free(&r);
	hb_run(&r, station_bare, "--db", db_path, "sweeps", "--lot", "L-HOSTILE", "--json", NULL);
	assert_int_equal(r.status, 0);
	assert_string_equal(r.out, "[]\n");
	run_free(&r);
}

/* The store itself refuses a serial or lot code longer than the field it is
 * read back into, whoever calls it (a value cut on the way back is how
 * `sweeps --unit` once found nothing). */
static void test_store_refuses_long_ids(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &part), HB_OK);
	char id[HB_DB_ID_LEN + 1];
	memset(id, 'L', HB_DB_ID_LEN);
	id[HB_DB_ID_LEN] = '\0';
	int64_t got = 0;
	assert_int_equal(hb_db_unit_ensure(db, part.id, id, 0, &got), HB_ERR_ARG);
	assert_string_equal(hb_db_errmsg(db), "serial: 64 bytes, limit 63");
	assert_int_equal(hb_db_lot_ensure(db, part.id, id, &got), HB_ERR_ARG);
	assert_string_equal(hb_db_errmsg(db), "lot code: 64 bytes, limit 63");
	id[HB_DB_ID_LEN - 1] = '\0';
	assert_int_equal(hb_db_unit_ensure(db, part.id, id, 0, &got), HB_OK);
	assert_true(got > 0);
	hb_db_close(db);
}

/* A note over its stated limit is refused, not cut (it used to be cut at
 * 511 bytes without a word). */
static void test_note_limit(void **state)
{
	(void)state;
	char note[HB_TEXT_NOTE_MAX + 2];
	memset(note, 'n', HB_TEXT_NOTE_MAX + 1);
	note[HB_TEXT_NOTE_MAX + 1] = '\0';
	run r;
	hb_run(&r, station_bare, "--db", db_path, "sweep", "--part", "HBX-108G", "--unit", "N-1", "--lcr", "sim:lcr",
	       "--supply", "sim:supply", "--to", "1", "--dry-run", "--note", note, NULL);
	assert_int_equal(r.status, 2);
	assert_string_equal(r.err, "henrybench: note (--note): 512 bytes, limit 511\n");
	run_free(&r);
}

/* ------------------------------------------------------------------ */
/* output paths                                                        */

static size_t entries_in(const char *dir)
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

/* ------------------------------------------------------------------ */
/* echoing instruments                                                 */

static void write_echo_profile(char *path, size_t cap)
{
	char src[1200];
	snprintf(src, sizeof src, "%s/generic-lcr.ini", profiles_dir);
	char *text = slurp(src);
	assert_non_null(text);
	char *sec = strstr(text, "[profile]\n");
	assert_non_null(sec);
	snprintf(path, cap, "%s/echo-lcr.ini", tmpdir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	size_t head = (size_t)(sec - text) + strlen("[profile]\n");
	fwrite(text, 1, head, f);
	fputs("link.echo = yes\n", f);
	fputs(text + head, f);
	fclose(f);
	free(text);
}

/* An instrument that sends each command back before its reply: named at
 * open with both ways to handle it; handled by the resource's echo=yes or
 * by a profile's link.echo = yes; echo=yes on a quiet instrument is a clear
 * protocol error rather than shifted replies. */
static void test_echoing_instrument(void **state)
{
	(void)state;
	hb_sim *sim = hb_sim_inproc();
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "echo"), HB_OK);
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "set link.echo = yes in [profile] of "));
	hb_lcr_close(lcr);

	const char *ok[2] = { "sim:lcr?echo=yes", NULL };
	char profile[600], forced[700];
	write_echo_profile(profile, sizeof profile);
	snprintf(forced, sizeof forced, "sim:lcr?profile=%s", profile);
	ok[1] = forced;
	for (int i = 0; i < 2; i++) {
		lcr = NULL;
		if (hb_lcr_open(ok[i], NULL, &lcr) != HB_OK)
			fail_msg("%s: %s", ok[i], hb_lcr_errmsg(lcr));
		assert_int_equal(hb_lcr_set_frequency(lcr, 1e3), HB_OK);
		hb_lcr_reading rd;
		assert_int_equal(hb_lcr_measure(lcr, &rd), HB_OK);
		assert_true(rd.primary > 0);
		hb_lcr_close(lcr);
	}
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);
	lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr?echo=yes&timeout=300", NULL, &lcr), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "expected the echo of '*IDN?'"));
	hb_lcr_close(lcr);
}

/* An *IDN? reply carrying escape sequences and a bell (a confused or
 * hostile peer): the fields printed, stored and matched hold '?' in their
 * place, so no reply can drive the operator's terminal. */
static void test_idn_control_characters(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Evil\x1b[2J Co,Model\x07" "X,SN\x7f" "1,fw\x1b]0;t\x07\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, sizeof steps / sizeof steps[0]), 0);
	char res[160];
	snprintf(res, sizeof res, "tcp://127.0.0.1:%d?timeout=2000", p.port);
	hb_scpi *s = NULL;
	assert_int_equal(hb_scpi_open(res, &s), HB_OK);
	hb_idn idn;
	assert_int_equal(hb_scpi_idn(s, &idn), HB_OK);
	assert_string_equal(idn.maker, "Evil?[2J Co");
	assert_string_equal(idn.model, "Model?X");
	assert_string_equal(idn.serial, "SN?1");
	assert_string_equal(idn.firmware, "fw?]0;t?");
	hb_scpi_close(s);
	peer_finish(&p);
	assert_int_equal(p.mismatches, 0);
}

/* identify says the instrument echoes and names the option. */
static void test_identify_names_echo(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, "--fault-lcr", "echo", NULL);
	run r;
	hb_run(&r, station_bare, "identify", sim.lcr, NULL);
	assert_int_equal(r.status, 0);
	const char *line = strstr(r.out, "\n  echo:        the instrument sends each command back");
	assert_non_null(line);
	run_free(&r);
	sim_free(&sim);
}

/* ------------------------------------------------------------------ */

static int group_setup(void **state)
{
	(void)state;
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
	if (cli_fixture_setup("hostile") != 0)
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

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_profile_corpus),
		cmocka_unit_test(test_profile_search_survives_corpus),
		cmocka_unit_test(test_csv_formula_cells_inert),
		cmocka_unit_test(test_text_check_messages),
		cmocka_unit_test(test_text_corpus),
		cmocka_unit_test(test_note_limit),
		cmocka_unit_test(test_serials_file_checked),
		cmocka_unit_test(test_store_refuses_long_ids),
		cmocka_unit_test(test_output_refuses_non_regular),
		cmocka_unit_test(test_output_replaces_regular_file),
		cmocka_unit_test(test_output_write_failure),
		cmocka_unit_test(test_out_commit_failure),
		cmocka_unit_test(test_stdout_full),
		cmocka_unit_test(test_stdout_closed_pipe),
		cmocka_unit_test(test_sweep_output_lost_is_said),
		cmocka_unit_test(test_echoing_instrument),
		cmocka_unit_test(test_identify_names_echo),
		cmocka_unit_test(test_idn_control_characters),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
