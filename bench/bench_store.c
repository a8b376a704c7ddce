/* bench/bench_store.c - a generated store of millions of points: read queries for a 2,000-unit part, export rate and peak memory */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <fcntl.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "db/hb_db.h"
#include "tests/pg_fixture.h"

/*
 * A store of HB_BENCH_POINTS points (default 10,000,000, a little over two
 * minutes to build on this machine's one core; HB_BENCH_STORE=PATH measures
 * a store built before, HB_BENCH_KEEP=1 keeps the one built) in sweeps of
 * 25, spread over filler parts; one part, BIG-2000, has 2,000 units with one
 * complete bias sweep, a fit and the meter it ran with each. Every read
 * command runs as a user runs it (the binary HENRYBENCH_BIN, default
 * ./henrybench, its output to /dev/null), best of five, process start
 * included (printed on its own). Then, when a PostgreSQL server can be
 * started (as tests/pg_fixture.h does), the store is pushed to it (sync
 * throughput) and the same commands run against it with --db URL.
 * Targets (issue 12, benchmarks, not tests): every read command <= 20 ms
 * for the big part on SQLite, <= 50 ms on a server over a local socket;
 * export >= 1,000,000 points/s at <= 32 MB peak memory; sync >= 100,000
 * points/s to a local server.
 */
enum { POINTS_PER_SWEEP = 25, BIG_UNITS = 2000, FILLER_UNITS_PER_PART = 100 };

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return ts.tv_sec + ts.tv_nsec * 1e-9;
}

static int fail(hb_db *db, const char *what)
{
	fprintf(stderr, "bench_store: %s: %s\n", what, hb_db_errmsg(db));
	return 1;
}

/* One complete bias sweep of a unit with its points and a fit. */
static int add_sweep(hb_db *db, int64_t unit, double started, int64_t meter)
{
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.unit_id = unit;
	s.kind = HB_DB_SWEEP_BIAS;
	s.started = started;
	snprintf(s.station, sizeof s.station, "bench-%d", (int)fmod(started, 4));
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	if (hb_db_sweep_begin(db, &s) < 0)
		return -1;
	for (int i = 0; i < POINTS_PER_SWEEP; i++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = i;
		p.bias_set_a = p.bias_meas_a = i * 0.25;
		p.freq_hz = 100e3;
		p.primary = 100e-6 / (1 + pow(i * 0.25 / 4, 2));
		p.secondary = 0.03;
		if (hb_db_point_add(db, &p) < 0)
			return -1;
	}
	if (hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, NULL) < 0)
		return -1;
	hb_db_sweep_trace t;
	hb_db_sweep_trace_init(&t);
	t.sweep_id = s.id;
	t.lcr_instrument_id = meter;
	if (hb_db_sweep_trace_put(db, &t) < 0)
		return -1;
	static hb_db_fit f;
	hb_db_fit_init(&f);
	f.sweep_id = s.id;
	snprintf(f.model, sizeof f.model, "core");
	const char *names[] = { "L0", "I_drop10", "I_drop20", "I_drop30", "mu_e", "gap" };
	for (size_t k = 0; k < 6; k++) {
		snprintf(f.values[k].name, sizeof f.values[k].name, "%s", names[k]);
		f.values[k].value = 1.0 + k;
		f.values[k].std_error = 0.01;
	}
	f.n_values = 6;
	return hb_db_fit_put(db, &f) < 0 ? -1 : 0;
}

static int build(hb_db *db, long points)
{
	double t0 = now_s(), started = 1.6e9;
	long sweeps_total = points / POINTS_PER_SWEEP;
	if (hb_db_batch_begin(db) < 0)
		return fail(db, "batch");
	hb_db_instrument big_meter, filler_meter;
	if (hb_db_instrument_ensure(db, "lcr", "Bench", "LCR", "BENCH-LCR-A", "1", &big_meter, NULL) < 0 ||
	    hb_db_instrument_ensure(db, "lcr", "Bench", "LCR", "BENCH-LCR-B", "1", &filler_meter, NULL) < 0)
		return fail(db, "instruments");
	hb_db_part big;
	hb_db_part_init(&big);
	snprintf(big.part_number, sizeof big.part_number, "BIG-2000");
	if (hb_db_part_put(db, &big) < 0)
		return fail(db, "part");
	long made = 0;
	for (int u = 0; u < BIG_UNITS; u++) {
		char serial[32];
		int64_t unit;
		snprintf(serial, sizeof serial, "B%04d", u);
		if (hb_db_unit_ensure(db, big.id, serial, 0, &unit) < 0 || add_sweep(db, unit, started += 30, big_meter.id) < 0)
			return fail(db, "big part");
		made++;
	}
	for (int part_no = 0; made < sweeps_total; part_no++) {
		hb_db_part part;
		hb_db_part_init(&part);
		snprintf(part.part_number, sizeof part.part_number, "FILL-%04d", part_no);
		if (hb_db_part_put(db, &part) < 0)
			return fail(db, "filler part");
		for (int u = 0; u < FILLER_UNITS_PER_PART && made < sweeps_total; u++) {
			char serial[32];
			int64_t unit;
			snprintf(serial, sizeof serial, "F%04d-%03d", part_no, u);
			if (hb_db_unit_ensure(db, part.id, serial, 0, &unit) < 0)
				return fail(db, "filler unit");
			for (int k = 0; k < 2 && made < sweeps_total; k++, made++)
				if (add_sweep(db, unit, started += 30, filler_meter.id) < 0)
					return fail(db, "filler sweep");
		}
		if (part_no % 20 == 19 && (hb_db_batch_commit(db) < 0 || hb_db_batch_begin(db) < 0))
			return fail(db, "commit");
	}
	if (hb_db_batch_commit(db) < 0)
		return fail(db, "commit");
	printf("built %ld sweeps, %ld points:                    %10.1f s\n", made, made * POINTS_PER_SWEEP,
	       now_s() - t0);
	return 0;
}


/* One run of the binary with args, stdout to /dev/null (or out_path),
 * stderr's first line into msg: its wall time, its peak resident memory. */
static int run(const char *bin, const char *db_arg, char *const *args, double *secs, double *peak_mb, char *msg,
	       size_t msglen)
{
	char errpath[] = "/tmp/hb-bench-err.XXXXXX";
	int errfd = mkstemp(errpath);
	if (errfd < 0)
		return -1;
	char *argv[4100];
	int n = 0;
	argv[n++] = (char *)bin;
	argv[n++] = "--db";
	argv[n++] = (char *)db_arg;
	for (int i = 0; args[i] && n < 4098; i++)
		argv[n++] = args[i];
	argv[n] = NULL;
	double t = now_s();
	pid_t pid = fork();
	if (pid == 0) {
		int devnull = open("/dev/null", O_WRONLY);
		dup2(devnull, 1);
		dup2(errfd, 2);
		execv(bin, argv);
		_exit(127);
	}
	int status = -1;
	struct rusage ru;
	if (pid < 0 || wait4(pid, &status, 0, &ru) < 0) {
		close(errfd);
		unlink(errpath);
		return -1;
	}
	*secs = now_s() - t;
	*peak_mb = ru.ru_maxrss / 1024.0;
	msg[0] = '\0';
	FILE *f = fdopen(errfd, "r");
	if (f) {
		rewind(f);
		if (fgets(msg, (int)msglen, f))
			msg[strcspn(msg, "\n")] = '\0';
		fclose(f);
	}
	unlink(errpath);
	return WIFEXITED(status) ? WEXITSTATUS(status) : 128;
}

/* The best process start (--version) of this back end, taken first: printed
 * beside each command's time as the part that is the command's own. */
static double start_ms;

/* Best of five runs; prints the line with its ratio to target_ms. */
static void measure(const char *bin, const char *db_arg, const char *label, char *const *args, double target_ms,
		    long points)
{
	double best = INFINITY, peak = 0;
	char msg[300] = "";
	for (int r = 0; r < 5; r++) {
		double secs, mb;
		int rc = run(bin, db_arg, args, &secs, &mb, msg, sizeof msg);
		if (rc != 0) {
			printf("  %-40s not measured: exit %d: %s\n", label, rc, msg);
			return;
		}
		best = fmin(best, secs);
		peak = fmax(peak, mb);
	}
	if (!args[1])
		start_ms = best * 1e3;
	printf("  %-40s %7.1f ms, %7.1f ms past start (target %.0f ms: ratio %.2f)  peak %.1f MB", label, best * 1e3,
	       best * 1e3 - start_ms, target_ms, best * 1e3 / target_ms, peak);
	if (points > 0)
		printf("  %.0f points/s (target 1e6: ratio %.2f; 32 MB: ratio %.2f)", points / best, points / best / 1e6,
		       peak / 32);
	printf("\n");
}

/* The sweep ids of the big part, oldest first, as text (compare's and show's operands). */
static int big_ids(const char *path, char ***out, size_t *n)
{
	hb_db *db = NULL;
	if (hb_db_open_as(path, HB_DB_OPEN_READ, &db) < 0)
		return fail(db, "open");
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.part_number = "BIG-2000";
	hb_db_sweep *list = NULL;
	if (hb_db_sweep_list(db, &f, &list, n) < 0)
		return fail(db, "big part's sweeps");
	*out = calloc(*n + 1, sizeof **out);
	for (size_t i = 0; *out && i < *n; i++) {
		char id[24];
		snprintf(id, sizeof id, "%lld", (long long)list[*n - 1 - i].id);
		(*out)[i] = strdup(id);
	}
	hb_db_sweeps_free(list);
	hb_db_close(db);
	return *out ? 0 : 1;
}

static void read_commands(const char *bin, const char *db_arg, char **ids, size_t nids, double target_ms)
{
	char report[128];
	snprintf(report, sizeof report, "/tmp/hb-bench-report-%d.html", (int)getpid());
	long big_points = BIG_UNITS * POINTS_PER_SWEEP;
	start_ms = 0;
	measure(bin, db_arg, "process start (--version)", (char *[]){ "--version", NULL }, target_ms, 0);
	measure(bin, db_arg, "history BIG-2000", (char *[]){ "history", "BIG-2000", NULL }, target_ms, 0);
	measure(bin, db_arg, "history BIG-2000 --json", (char *[]){ "history", "BIG-2000", "--json", NULL }, target_ms,
		0);
	measure(bin, db_arg, "sweeps --part BIG-2000 (newest 50)", (char *[]){ "sweeps", "--part", "BIG-2000", NULL },
		target_ms, 0);
	measure(bin, db_arg, "sweeps --part BIG-2000 --all",
		(char *[]){ "sweeps", "--part", "BIG-2000", "--all", NULL }, target_ms, 0);
	measure(bin, db_arg, "show (one sweep of the part)", (char *[]){ "show", ids[nids / 2], NULL }, target_ms, 0);
	char **cmp = calloc(nids + 2, sizeof *cmp);
	if (cmp) {
		cmp[0] = "compare";
		size_t ncmp = nids < 32 ? nids : 32; /* compare takes at most 32 */
		memcpy(cmp + 1, ids + nids - ncmp, ncmp * sizeof *ids);
		measure(bin, db_arg, "compare (the part's newest 32 sweeps)", cmp, target_ms, 0);
		free(cmp);
	}
	measure(bin, db_arg, "report --part BIG-2000",
		(char *[]){ "report", "--part", "BIG-2000", "--out", report, NULL }, target_ms, 0);
	unlink(report);
	measure(bin, db_arg, "instrument affected BENCH-LCR-A",
		(char *[]){ "instrument", "affected", "BENCH-LCR-A", "--since", "2000-01-01", NULL }, target_ms, 0);
	measure(bin, db_arg, "export --part BIG-2000 --csv", (char *[]){ "export", "--part", "BIG-2000", "--csv", NULL },
		target_ms, big_points);
	measure(bin, db_arg, "export --part BIG-2000 --json",
		(char *[]){ "export", "--part", "BIG-2000", "--json", NULL }, target_ms, big_points);
}

int main(void)
{
	const char *env = getenv("HB_BENCH_POINTS"), *kept = getenv("HB_BENCH_STORE");
	const char *bin = getenv("HENRYBENCH_BIN") ? getenv("HENRYBENCH_BIN") : "./henrybench";
	long points = env ? atol(env) : 10000000;
	setvbuf(stdout, NULL, _IOLBF, 0); /* each line as it is measured, also into a file */
	if (points < BIG_UNITS * POINTS_PER_SWEEP)
		points = BIG_UNITS * POINTS_PER_SWEEP;
	char dir[] = "/tmp/hb-bench-store.XXXXXX";
	char path[512];
	int rc = 1;
	if (kept) {
		snprintf(path, sizeof path, "%s", kept);
		dir[0] = '\0';
	} else {
		if (!mkdtemp(dir)) {
			perror("bench_store: mkdtemp");
			return 1;
		}
		snprintf(path, sizeof path, "%s/bench.db", dir);
		hb_db *db = NULL;
		if (hb_db_open(path, &db) < 0) {
			fail(db, "open");
			hb_db_close(db);
			goto out;
		}
		int b = build(db, points);
		hb_db_close(db);
		if (b)
			goto out;
	}
	char **ids = NULL;
	size_t nids = 0;
	if (big_ids(path, &ids, &nids) || nids == 0)
		goto out;
	printf("SQLite store %s, part BIG-2000 (%zu units, %ld points):\n", path, nids,
	       (long)nids * POINTS_PER_SWEEP);
	read_commands(bin, path, ids, nids, 20);

	pg_fixture pg;
	pg_fixture_start(&pg);
	if (!pg.up) {
		printf("server: not measured: %s\n", pg.why);
	} else {
		char url[600], msg[300];
		double secs, mb;
		if (pg_fixture_createdb(&pg, "hbbench", url, sizeof url) != 0) {
			printf("server: not measured: createdb failed\n");
		} else {
			/* a copy: the push marks what it sent in the store */
			char copy[600], cmd[1400];
			snprintf(copy, sizeof copy, "%s.push.db", path);
			snprintf(cmd, sizeof cmd, "cp '%s' '%s'", path, copy);
			int src = system(cmd);
			int prc = src == 0 ? run(bin, copy, (char *[]){ "sync", "--server", url, "--push-only", NULL }, &secs,
						 &mb, msg, sizeof msg)
					   : -1;
			hb_db *db = NULL;
			int64_t n = 0;
			hb_db_sweep_filter f;
			hb_db_sweep_filter_init(&f);
			if (hb_db_open_as(path, HB_DB_OPEN_READ, &db) == HB_OK)
				hb_db_sweep_count(db, &f, &n);
			hb_db_close(db);
			if (prc != 0)
				printf("sync push: not measured: exit %d: %s\n", prc, msg);
			else
				printf("sync push of %lld points: %.1f s, %.0f points/s (target 1e5: ratio %.2f), peak %.1f MB\n",
				       (long long)n * POINTS_PER_SWEEP, secs, n * POINTS_PER_SWEEP / secs,
				       n * POINTS_PER_SWEEP / secs / 1e5, mb);
			snprintf(cmd, sizeof cmd, "rm -f '%s' '%s-wal' '%s-shm'", copy, copy, copy);
			if (system(cmd) != 0)
				printf("could not remove %s\n", copy);
			printf("server %s, part BIG-2000:\n", url);
			read_commands(bin, url, ids, nids, 50);
		}
		pg_fixture_stop(&pg);
	}
	for (size_t i = 0; i < nids; i++)
		free(ids[i]);
	free(ids);
	rc = 0;
out:
	if (dir[0]) {
		if (getenv("HB_BENCH_KEEP")) {
			printf("store kept: %s\n", path);
		} else {
			char cmd[600];
			snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
			if (system(cmd) != 0)
				rc = 1;
		}
	}
	return rc;
}
