/* bench/bench_db.c - store throughput: durable points per second, listing one part among 100,000 sweeps */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "db/hb_db.h"

enum { DURABLE_POINTS = 2000, BATCH_POINTS = 20000, PARTS = 100, UNITS_PER_PART = 10, SWEEPS = 100000 };

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return ts.tv_sec + ts.tv_nsec * 1e-9;
}

static int fail(hb_db *db, const char *what)
{
	fprintf(stderr, "bench_db: %s: %s\n", what, hb_db_errmsg(db));
	return 1;
}

static void remove_db(const char *path)
{
	char p[256];
	unlink(path);
	snprintf(p, sizeof p, "%s-wal", path);
	unlink(p);
	snprintf(p, sizeof p, "%s-shm", path);
	unlink(p);
}

static int add_points(hb_db *db, int64_t sweep, int first, int n)
{
	for (int i = first; i < first + n; i++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = sweep;
		p.seq = i;
		p.bias_set_a = i * 1e-3;
		p.primary = 10e-6;
		p.secondary = 0.02;
		if (hb_db_point_add(db, &p) != HB_OK)
			return -1;
	}
	return 0;
}

static int bench_points(hb_db *db)
{
	hb_db_part part;
	hb_db_part_init(&part);
	snprintf(part.part_number, sizeof part.part_number, "BENCH-PTS");
	int64_t unit = 0;
	if (hb_db_part_put(db, &part) < 0 || hb_db_unit_ensure(db, part.id, "U1", 0, &unit) < 0)
		return fail(db, "part");
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.unit_id = unit;
	if (hb_db_sweep_begin(db, &s) < 0)
		return fail(db, "sweep");

	double t = now_s();
	if (add_points(db, s.id, 0, DURABLE_POINTS) < 0)
		return fail(db, "point");
	double durable = DURABLE_POINTS / (now_s() - t);

	t = now_s();
	if (hb_db_batch_begin(db) < 0 || add_points(db, s.id, DURABLE_POINTS, BATCH_POINTS) < 0 ||
	    hb_db_batch_commit(db) < 0)
		return fail(db, "batched point");
	double batched = BATCH_POINTS / (now_s() - t);
	hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, NULL);

	printf("points, one transaction each (synchronous=FULL): %10.0f /s\n", durable);
	printf("points, %d in one transaction:              %10.0f /s\n", BATCH_POINTS, batched);
	printf("ratio batched / durable:                          %10.1f\n", batched / durable);
	printf("a sweep point every 0.1 s needs 10 /s: headroom   %10.0f x\n", durable / 10);
	return 0;
}

static int build_sweeps(hb_db *db)
{
	double t = now_s();
	if (hb_db_batch_begin(db) < 0)
		return fail(db, "batch");
	int64_t units[PARTS * UNITS_PER_PART];
	for (int p = 0; p < PARTS; p++) {
		hb_db_part part;
		hb_db_part_init(&part);
		snprintf(part.part_number, sizeof part.part_number, "P%03d", p);
		if (hb_db_part_put(db, &part) < 0)
			return fail(db, "part");
		for (int u = 0; u < UNITS_PER_PART; u++) {
			char serial[32];
			snprintf(serial, sizeof serial, "S%03d-%02d", p, u);
			if (hb_db_unit_ensure(db, part.id, serial, 0, &units[p * UNITS_PER_PART + u]) < 0)
				return fail(db, "unit");
		}
	}
	for (int i = 0; i < SWEEPS; i++) {
		hb_db_sweep s;
		hb_db_sweep_init(&s);
		/* interleaved in time, as several stations would write them */
		s.unit_id = units[(i * 7919) % (PARTS * UNITS_PER_PART)];
		s.started = 1.6e9 + i * 60.0;
		snprintf(s.station, sizeof s.station, "bench-%d", i % 4);
		if (hb_db_sweep_begin(db, &s) < 0 || hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, NULL) < 0)
			return fail(db, "sweep");
	}
	if (hb_db_batch_commit(db) < 0)
		return fail(db, "commit");
	printf("built %d sweeps of %d parts in one transaction:  %10.2f s\n", SWEEPS, PARTS, now_s() - t);
	return 0;
}

static int time_list(hb_db *db, const hb_db_sweep_filter *f, int reps, double *per_call, size_t *rows)
{
	double t = now_s();
	for (int r = 0; r < reps; r++) {
		hb_db_sweep *list = NULL;
		if (hb_db_sweep_list(db, f, &list, rows) < 0)
			return fail(db, "list");
		hb_db_sweeps_free(list);
	}
	*per_call = (now_s() - t) / reps;
	return 0;
}

int main(void)
{
	char dir[] = "/tmp/hb-bench-db.XXXXXX";
	if (!mkdtemp(dir)) {
		perror("bench_db: mkdtemp");
		return 1;
	}
	char path[128];
	snprintf(path, sizeof path, "%s/bench.db", dir);
	hb_db *db = NULL;
	int rc = 1;
	if (hb_db_open(path, &db) < 0) {
		fail(db, "open");
		goto out;
	}
	if (bench_points(db) || build_sweeps(db))
		goto out;

	hb_db_sweep_filter one, all;
	hb_db_sweep_filter_init(&one);
	hb_db_sweep_filter_init(&all);
	one.part_number = "P042";
	double t_one, t_all, t_serial;
	size_t n_one, n_all, n_serial;
	hb_db_sweep_filter ser;
	hb_db_sweep_filter_init(&ser);
	ser.serial = "S042-03";
	if (time_list(db, &one, 50, &t_one, &n_one) || time_list(db, &ser, 50, &t_serial, &n_serial) ||
	    time_list(db, &all, 3, &t_all, &n_all))
		goto out;
	printf("list one part (%zu of %zu sweeps):              %10.2f ms\n", n_one, n_all, t_one * 1e3);
	printf("list one unit (%zu sweeps):                      %10.2f ms\n", n_serial, t_serial * 1e3);
	printf("list all %zu sweeps:                          %10.2f ms\n", n_all, t_all * 1e3);
	printf("ratio all / one part (rows ratio %.0f):            %10.1f\n", (double)n_all / n_one, t_all / t_one);
	rc = 0;
out:
	hb_db_close(db);
	remove_db(path);
	rmdir(dir);
	return rc;
}
