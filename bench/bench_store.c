/* bench/bench_store.c - a generated store of millions of points: read queries for a 2,000-unit part, export rate and peak memory */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include "db/hb_db.h"
#include "src/io/io.h"

/*
 * HB_BENCH_POINTS (default 2,000,000; the target store is 10,000,000:
 * HB_BENCH_POINTS=10000000 make bench, several minutes to build) points in
 * sweeps of 25, spread over filler parts; one part, BIG-2000, has 2,000 units
 * with one complete bias sweep and a fit each. Targets (issue "many
 * stations", benchmarks not tests): every read query <= 20 ms for the big
 * part; export >= 1,000,000 points/s at <= 32 MB peak memory.
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
static int add_sweep(hb_db *db, int64_t unit, double started)
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
		if (hb_db_unit_ensure(db, big.id, serial, 0, &unit) < 0 || add_sweep(db, unit, started += 30) < 0)
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
				if (add_sweep(db, unit, started += 30) < 0)
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

static double time_history(hb_db *db, size_t *rows)
{
	double t = now_s();
	hb_db_history_filter f;
	hb_db_history_filter_init(&f);
	f.part_number = "BIG-2000";
	hb_db_history_row *out = NULL;
	if (hb_db_history(db, &f, &out, rows) < 0)
		return NAN;
	hb_db_history_free(out);
	return now_s() - t;
}

static double time_list(hb_db *db, const hb_db_sweep_filter *f, size_t *rows)
{
	double t = now_s();
	hb_db_sweep *out = NULL;
	int64_t n = 0;
	if (hb_db_sweep_list(db, f, &out, rows) < 0 || hb_db_sweep_count(db, f, &n) < 0)
		return NAN;
	hb_db_sweeps_free(out);
	return now_s() - t;
}

/* Exports the big part in a child, to /dev/null: points per second and the
 * child's peak resident memory. */
static int time_export(const char *path, bool json, double *rate, double *peak_mb)
{
	double t = now_s();
	pid_t pid = fork();
	if (pid < 0)
		return -1;
	if (pid == 0) {
		hb_db *db = NULL;
		if (hb_db_open(path, &db) < 0)
			_exit(1);
		hb_db_sweep_filter f;
		hb_db_sweep_filter_init(&f);
		f.part_number = "BIG-2000";
		hb_db_sweep *list = NULL;
		size_t n = 0;
		if (hb_db_sweep_list(db, &f, &list, &n) < 0)
			_exit(1);
		int64_t *ids = malloc(sizeof *ids * (n ? n : 1));
		for (size_t i = 0; i < n; i++)
			ids[i] = list[i].id;
		hb_db_sweeps_free(list);
		FILE *out = fopen("/dev/null", "w");
		char err[256];
		int rc = json ? hb_export_json(db, ids, n, out, err, sizeof err) : hb_export_csv(db, ids, n, out, err, sizeof err);
		fclose(out);
		free(ids);
		hb_db_close(db);
		_exit(rc < 0 ? 1 : 0);
	}
	int status;
	struct rusage ru;
	if (wait4(pid, &status, 0, &ru) < 0 || !WIFEXITED(status) || WEXITSTATUS(status) != 0)
		return -1;
	*rate = BIG_UNITS * POINTS_PER_SWEEP / (now_s() - t);
	*peak_mb = ru.ru_maxrss / 1024.0;
	return 0;
}

int main(void)
{
	const char *env = getenv("HB_BENCH_POINTS");
	long points = env ? atol(env) : 2000000;
	if (points < BIG_UNITS * POINTS_PER_SWEEP)
		points = BIG_UNITS * POINTS_PER_SWEEP;
	char dir[] = "/tmp/hb-bench-store.XXXXXX";
	if (!mkdtemp(dir)) {
		perror("bench_store: mkdtemp");
		return 1;
	}
	char path[128], cmd[256];
	snprintf(path, sizeof path, "%s/bench.db", dir);
	hb_db *db = NULL;
	int rc = 1;
	if (hb_db_open(path, &db) < 0) {
		fail(db, "open");
		goto out;
	}
	if (build(db, points))
		goto out;
	size_t rows = 0;
	double best = INFINITY;
	for (int r = 0; r < 5; r++)
		best = fmin(best, time_history(db, &rows));
	printf("history BIG-2000 (%zu units):                    %10.2f ms  (target 20 ms: ratio %.2f)\n", rows,
	       best * 1e3, best / 0.020);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.limit = 50;
	best = INFINITY;
	for (int r = 0; r < 5; r++)
		best = fmin(best, time_list(db, &f, &rows));
	printf("sweeps (newest 50 and the count):              %10.2f ms  (target 20 ms: ratio %.2f)\n", best * 1e3,
	       best / 0.020);
	hb_db_sweep_filter_init(&f);
	f.serial = "B1234";
	f.kind = HB_DB_SWEEP_FREQUENCY;
	f.status = HB_DB_COMPLETE;
	best = INFINITY;
	for (int r = 0; r < 5; r++)
		best = fmin(best, time_list(db, &f, &rows));
	printf("a unit's frequency sweep (none: fit's lookup): %10.2f ms  (target 20 ms: ratio %.2f)\n", best * 1e3,
	       best / 0.020);
	hb_db_close(db);
	db = NULL;
	for (int json = 0; json < 2; json++) {
		double rate, peak;
		if (time_export(path, json, &rate, &peak) < 0) {
			fprintf(stderr, "bench_store: export failed\n");
			goto out;
		}
		printf("export --%s BIG-2000: %8.0f points/s (target 1e6: ratio %.2f), peak %.1f MB (target 32 MB: ratio %.2f)\n",
		       json ? "json" : "csv ", rate, rate / 1e6, peak, peak / 32);
	}
	rc = 0;
out:
	hb_db_close(db);
	if (getenv("HB_BENCH_KEEP")) {
		printf("store kept: %s\n", path);
	} else {
		snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
		if (system(cmd) != 0)
			rc = 1;
	}
	return rc;
}
