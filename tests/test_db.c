/* tests/test_db.c - the store: migrations, durability under SIGKILL, concurrency, disk full, history */
#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <setjmp.h>
#include <signal.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cmocka.h>

#include "db/hb_db.h"

typedef struct fixture {
	char dir[64];
	char path[128];
} fixture;

static int setup(void **state)
{
	fixture *fx = calloc(1, sizeof *fx);
	if (!fx)
		return -1;
	snprintf(fx->dir, sizeof fx->dir, "/tmp/hb-test-db.XXXXXX");
	if (!mkdtemp(fx->dir)) {
		free(fx);
		return -1;
	}
	snprintf(fx->path, sizeof fx->path, "%s/bench.db", fx->dir);
	*state = fx;
	return 0;
}

static void remove_in(const char *dir, const char *name)
{
	char p[256];
	snprintf(p, sizeof p, "%s/%s", dir, name);
	unlink(p);
}

static int teardown(void **state)
{
	fixture *fx = *state;
	const char *names[] = { "bench.db", "bench.db-wal", "bench.db-shm", "not-a-db", "xdg/henrybench/bench.db",
				"xdg/henrybench/bench.db-wal", "xdg/henrybench/bench.db-shm" };
	for (size_t i = 0; i < sizeof names / sizeof names[0]; i++)
		remove_in(fx->dir, names[i]);
	char p[256];
	snprintf(p, sizeof p, "%s/xdg/henrybench", fx->dir);
	rmdir(p);
	snprintf(p, sizeof p, "%s/xdg", fx->dir);
	rmdir(p);
	rmdir(fx->dir);
	free(fx);
	return 0;
}

static hb_db *open_ok(const char *path)
{
	hb_db *db = NULL;
	int rc = hb_db_open(path, &db);
	if (rc != HB_OK)
		fprintf(stderr, "open: %s\n", hb_db_errmsg(db));
	assert_int_equal(rc, HB_OK);
	assert_non_null(db);
	return db;
}

static int64_t make_part(hb_db *db, const char *pn, double nominal)
{
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "%s", pn);
	snprintf(p.maker, sizeof p.maker, "Test Magnetics");
	p.nominal_h = nominal;
	p.tolerance = 0.2;
	p.test_freq_hz = 100e3;
	p.test_level = 0.1;
	p.sat_current_a = 4.5;
	p.sat_drop = 0.3;
	p.turns = 12;
	p.ae_m2 = 48.9e-6;
	p.le_m = 60.2e-3;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	assert_true(p.id > 0);
	return p.id;
}

static int64_t make_sweep(hb_db *db, int64_t unit_id, hb_db_sweep_kind kind, double started, const char *station)
{
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = kind;
	s.unit_id = unit_id;
	s.started = started;
	snprintf(s.station, sizeof s.station, "%s", station);
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	snprintf(s.lcr_idn, sizeof s.lcr_idn, "SIM,LCR,0,1.0");
	s.test_freq_hz = 100e3;
	s.test_level = 0.1;
	s.plan_from = 0;
	s.plan_to = 5;
	s.plan_steps = 11;
	snprintf(s.plan_spacing, sizeof s.plan_spacing, "lin");
	snprintf(s.settle_mode, sizeof s.settle_mode, "auto");
	int rc = hb_db_sweep_begin(db, &s);
	if (rc != HB_OK)
		fprintf(stderr, "begin: %s\n", hb_db_errmsg(db));
	assert_int_equal(rc, HB_OK);
	assert_int_equal(s.status, HB_DB_RUNNING);
	return s.id;
}

static int add_point(hb_db *db, int64_t sweep_id, int seq)
{
	hb_db_point p;
	hb_db_point_init(&p);
	p.sweep_id = sweep_id;
	p.seq = seq;
	p.bias_set_a = 0.1 * seq;
	p.bias_meas_a = 0.1 * seq + 1e-4;
	p.supply_v = 0.05 * seq;
	p.freq_hz = 100e3;
	p.primary = 10e-6 / (1 + 0.01 * seq);
	p.secondary = 0.02;
	p.t_s = 0.5 * seq;
	p.settle_readings = 3;
	p.settle_s = 0.2;
	return hb_db_point_add(db, &p);
}

/* ---------------- schema and migrations ---------------- */

static void test_fresh_schema(void **state)
{
	fixture *fx = *state;
	hb_db *db = open_ok(fx->path);
	int v = 0;
	assert_int_equal(hb_db_schema_version(db, &v), HB_OK);
	assert_int_equal(v, hb_db_latest_version());
	assert_true(hb_db_latest_version() >= 3);
	make_part(db, "L-100", 10e-6);
	hb_db_close(db);

	db = open_ok(fx->path);
	hb_db_part p;
	assert_int_equal(hb_db_part_get(db, "L-100", &p), HB_OK);
	assert_string_equal(p.maker, "Test Magnetics");
	assert_true(p.nominal_h == 10e-6);
	assert_true(p.tolerance == 0.2);
	assert_int_equal(p.turns, 12);
	assert_true(isnan(p.dcr_max_ohm));
	assert_true(isnan(p.toroid_od_m));
	assert_true(p.created[0] != '\0');

	/* put again = replace every field, same id */
	int64_t id = p.id;
	p.dcr_max_ohm = 25e-3;
	p.test_level_kind = HB_DB_LEVEL_CURRENT;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	assert_int_equal(p.id, id);
	hb_db_part q;
	assert_int_equal(hb_db_part_get_id(db, id, &q), HB_OK);
	assert_true(q.dcr_max_ohm == 25e-3);
	assert_int_equal(q.test_level_kind, HB_DB_LEVEL_CURRENT);

	hb_db_part *list = NULL;
	size_t n = 0;
	make_part(db, "A-1", 1e-6);
	assert_int_equal(hb_db_part_list(db, &list, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_string_equal(list[0].part_number, "A-1");
	hb_db_parts_free(list);
	hb_db_close(db);
}

static void fill_v1(hb_db *db, int64_t *sweep_id)
{
	int64_t part = make_part(db, "OLD-1", 22e-6);
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(db, part, "S001", 0, &unit), HB_OK);
	*sweep_id = make_sweep(db, unit, HB_DB_SWEEP_BIAS, 1.7e9, "st1");
	for (int i = 0; i < 5; i++)
		assert_int_equal(add_point(db, *sweep_id, i), HB_OK);
	assert_int_equal(hb_db_sweep_end(db, *sweep_id, HB_DB_COMPLETE, NULL), HB_OK);
}

static void check_latest_features(hb_db *db, int64_t sweep_id)
{
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(db, sweep_id, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_COMPLETE);
	assert_int_equal(s.n_points, 5);
	assert_string_equal(s.part_number, "OLD-1");

	int64_t lot_id = 0;
	assert_int_equal(hb_db_lot_ensure(db, s.part_id, "LOT-A", &lot_id), HB_OK);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(db, lot_id, &lot), HB_OK);
	lot.lot_size = 500;
	lot.aql = 1.0;
	snprintf(lot.code_letter, sizeof lot.code_letter, "H");
	lot.sample_size = 50;
	lot.accept_number = 1;
	lot.reject_number = 2;
	assert_int_equal(hb_db_lot_update(db, &lot), HB_OK);
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	rec.lot_id = lot_id;
	rec.unit_id = s.unit_id;
	rec.sweep_id = sweep_id;
	rec.sequence = 1;
	rec.outcome = HB_DB_PASS;
	assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);

	hb_db_fit fit;
	hb_db_fit_init(&fit);
	fit.sweep_id = sweep_id;
	snprintf(fit.model, sizeof fit.model, "knee");
	fit.n_values = 1;
	snprintf(fit.values[0].name, sizeof fit.values[0].name, "L0");
	fit.values[0].value = 22e-6;
	assert_int_equal(hb_db_fit_put(db, &fit), HB_OK);
}

static void test_migrate_from_v1(void **state)
{
	fixture *fx = *state;
	hb_db *db = NULL;
	int64_t sweep_id = 0;
	assert_int_equal(hb_db_open_version(fx->path, 1, &db), HB_OK);
	int v = 0;
	assert_int_equal(hb_db_schema_version(db, &v), HB_OK);
	assert_int_equal(v, 1);
	fill_v1(db, &sweep_id);
	/* v1 has no fits table yet */
	hb_db_fit fit;
	hb_db_fit_init(&fit);
	fit.sweep_id = sweep_id;
	snprintf(fit.model, sizeof fit.model, "knee");
	assert_int_not_equal(hb_db_fit_put(db, &fit), HB_OK);
	hb_db_close(db);

	db = open_ok(fx->path);
	assert_int_equal(hb_db_schema_version(db, &v), HB_OK);
	assert_int_equal(v, hb_db_latest_version());
	check_latest_features(db, sweep_id);
	hb_db_close(db);
}

static void test_migrate_from_v2(void **state)
{
	fixture *fx = *state;
	hb_db *db = NULL;
	int64_t sweep_id = 0;
	assert_int_equal(hb_db_open_version(fx->path, 2, &db), HB_OK);
	fill_v1(db, &sweep_id);
	hb_db_verdict vd;
	hb_db_verdict_init(&vd);
	vd.sweep_id = sweep_id;
	snprintf(vd.check_name, sizeof vd.check_name, "L0");
	vd.measured = 22e-6;
	vd.outcome = HB_DB_PASS;
	assert_int_equal(hb_db_verdict_put(db, &vd), HB_OK);
	hb_db_close(db);

	db = open_ok(fx->path);
	int v = 0;
	assert_int_equal(hb_db_schema_version(db, &v), HB_OK);
	assert_int_equal(v, hb_db_latest_version());
	hb_db_verdict *vs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_verdict_list(db, sweep_id, &vs, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(vs[0].outcome, HB_DB_PASS);
	hb_db_verdicts_free(vs);
	check_latest_features(db, sweep_id);
	hb_db_close(db);
}

/* user_version lives at byte offset 60 of the file header, big-endian
 * (SQLite "Database File Format" section 1.3). */
static void test_newer_schema_refused(void **state)
{
	fixture *fx = *state;
	hb_db *db = open_ok(fx->path);
	hb_db_close(db); /* last close checkpoints the WAL into the file */
	int fd = open(fx->path, O_WRONLY);
	assert_true(fd >= 0);
	unsigned char v99[4] = { 0, 0, 0, 99 };
	assert_int_equal(pwrite(fd, v99, 4, 60), 4);
	close(fd);
	db = NULL;
	assert_int_equal(hb_db_open(fx->path, &db), HB_ERR_DB);
	assert_non_null(db);
	assert_non_null(strstr(hb_db_errmsg(db), "newer"));
	hb_db_close(db);
}

/* ---------------- durability ---------------- */

static void child_write_points(const char *path, int report_fd, int64_t *sweep_out)
{
	hb_db *db = NULL;
	if (hb_db_open(path, &db) != HB_OK)
		_exit(3);
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "KILL-1");
	int64_t unit = 0;
	if (hb_db_part_put(db, &p) != HB_OK || hb_db_unit_ensure(db, p.id, "K1", 0, &unit) != HB_OK)
		_exit(4);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.unit_id = unit;
	if (hb_db_sweep_begin(db, &s) != HB_OK)
		_exit(5);
	*sweep_out = s.id;
	if (write(report_fd, &s.id, sizeof s.id) != sizeof s.id)
		_exit(6);
	/* Bounded so an orphan cannot run on forever. */
	for (int32_t i = 0; i < 100000; i++) {
		hb_db_point pt;
		hb_db_point_init(&pt);
		pt.sweep_id = s.id;
		pt.seq = i;
		pt.primary = 1e-5;
		if (hb_db_point_add(db, &pt) != HB_OK)
			_exit(7);
		int32_t committed = i + 1;
		if (write(report_fd, &committed, sizeof committed) != sizeof committed)
			_exit(8);
	}
	_exit(0);
}

static void test_sigkill_keeps_committed_points(void **state)
{
	fixture *fx = *state;
	int fds[2];
	assert_int_equal(pipe(fds), 0);
	pid_t pid = fork();
	assert_true(pid >= 0);
	if (pid == 0) {
		close(fds[0]);
		int64_t id;
		child_write_points(fx->path, fds[1], &id);
	}
	close(fds[1]);
	int64_t sweep_id = 0;
	assert_int_equal(read(fds[0], &sweep_id, sizeof sweep_id), sizeof sweep_id);
	int32_t committed = 0, c;
	while (committed < 25 && read(fds[0], &c, sizeof c) == sizeof c)
		committed = c;
	assert_int_equal(committed, 25);
	kill(pid, SIGKILL);
	int wstatus = 0;
	assert_int_equal(waitpid(pid, &wstatus, 0), pid);
	assert_true(WIFSIGNALED(wstatus));
	/* Counts the child wrote before dying were committed before being written. */
	while (read(fds[0], &c, sizeof c) == sizeof c)
		committed = c;
	close(fds[0]);

	hb_db *db = open_ok(fx->path);
	assert_int_equal(hb_db_recovered_count(db), 1);
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(db, sweep_id, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_INTERRUPTED);
	assert_true(s.status_reason[0] != '\0');
	hb_db_point *pts = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_points_get(db, sweep_id, &pts, &n), HB_OK);
	/* The child may have committed one more point than it could report. */
	assert_true(n == (size_t)committed || n == (size_t)committed + 1);
	for (size_t i = 0; i < n; i++)
		assert_int_equal(pts[i].seq, (int)i);
	hb_db_points_free(pts);
	/* An interrupted sweep takes no more points. */
	assert_int_equal(add_point(db, sweep_id, 1000), HB_ERR_ARG);
	hb_db_close(db);
}

/* ---------------- concurrency ---------------- */

static void test_read_while_sweep_runs(void **state)
{
	fixture *fx = *state;
	hb_db *writer = open_ok(fx->path);
	int64_t part = make_part(writer, "RD-1", 10e-6);
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(writer, part, "R1", 0, &unit), HB_OK);
	int64_t sweep = make_sweep(writer, unit, HB_DB_SWEEP_BIAS, 0, "st1");
	for (int i = 0; i < 5; i++)
		assert_int_equal(add_point(writer, sweep, i), HB_OK);

	/* A second connection of the same live process must not declare the sweep dead. */
	hb_db *reader = open_ok(fx->path);
	assert_int_equal(hb_db_recovered_count(reader), 0);
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(reader, sweep, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_RUNNING);
	assert_int_equal(s.n_points, 5);
	for (int i = 5; i < 10; i++)
		assert_int_equal(add_point(writer, sweep, i), HB_OK);
	hb_db_point *pts = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_points_get(reader, sweep, &pts, &n), HB_OK);
	assert_int_equal(n, 10);
	hb_db_points_free(pts);

	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.status = HB_DB_RUNNING;
	hb_db_sweep *list = NULL;
	assert_int_equal(hb_db_sweep_list(reader, &f, &list, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(list[0].n_points, 10);
	hb_db_sweeps_free(list);

	assert_int_equal(hb_db_sweep_end(writer, sweep, HB_DB_COMPLETE, ""), HB_OK);
	assert_int_equal(hb_db_sweep_get(reader, sweep, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_COMPLETE);
	assert_false(isnan(s.ended));
	hb_db_close(reader);
	hb_db_close(writer);
}

enum { WRITER_POINTS = 150 };

static void writer_child(const char *path, const char *station)
{
	hb_db *db = NULL;
	if (hb_db_open(path, &db) != HB_OK) {
		fprintf(stderr, "child open: %s\n", hb_db_errmsg(db));
		_exit(3);
	}
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "TWO-1");
	int64_t unit = 0;
	if (hb_db_part_put(db, &p) != HB_OK || hb_db_unit_ensure(db, p.id, station, 0, &unit) != HB_OK) {
		fprintf(stderr, "child part: %s\n", hb_db_errmsg(db));
		_exit(4);
	}
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.unit_id = unit;
	snprintf(s.station, sizeof s.station, "%s", station);
	if (hb_db_sweep_begin(db, &s) != HB_OK)
		_exit(5);
	for (int i = 0; i < WRITER_POINTS; i++) {
		hb_db_point pt;
		hb_db_point_init(&pt);
		pt.sweep_id = s.id;
		pt.seq = i;
		int rc = hb_db_point_add(db, &pt);
		if (rc != HB_OK) {
			fprintf(stderr, "child point: %s\n", hb_db_errmsg(db));
			_exit(rc == HB_ERR_BUSY ? 9 : 6);
		}
	}
	if (hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, NULL) != HB_OK)
		_exit(7);
	hb_db_close(db);
	_exit(0);
}

static void test_two_writers_one_file(void **state)
{
	fixture *fx = *state;
	/* Both children also race to create the schema of the new file. */
	pid_t a = fork();
	assert_true(a >= 0);
	if (a == 0)
		writer_child(fx->path, "station-a");
	pid_t b = fork();
	assert_true(b >= 0);
	if (b == 0)
		writer_child(fx->path, "station-b");
	int sa = 0, sb = 0;
	assert_int_equal(waitpid(a, &sa, 0), a);
	assert_int_equal(waitpid(b, &sb, 0), b);
	assert_true(WIFEXITED(sa));
	assert_true(WIFEXITED(sb));
	assert_int_equal(WEXITSTATUS(sa), 0);
	assert_int_equal(WEXITSTATUS(sb), 0);

	hb_db *db = open_ok(fx->path);
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.part_number = "TWO-1";
	f.status = HB_DB_COMPLETE;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_int_equal(list[0].n_points, WRITER_POINTS);
	assert_int_equal(list[1].n_points, WRITER_POINTS);
	hb_db_sweeps_free(list);
	hb_db_close(db);
}

/* ---------------- disk full ---------------- */

static void test_disk_full(void **state)
{
	fixture *fx = *state;
	hb_db *db = open_ok(fx->path);
	int64_t part = make_part(db, "FULL-1", 10e-6);
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(db, part, "F1", 0, &unit), HB_OK);
	int64_t sweep = make_sweep(db, unit, HB_DB_SWEEP_BIAS, 0, "st1");
	for (int i = 0; i < 10; i++)
		assert_int_equal(add_point(db, sweep, i), HB_OK);
	/* Cannot shrink below the current size: this caps it at the current size. */
	assert_int_equal(hb_db_set_max_pages(db, 1), HB_OK);
	int rc = HB_OK, seq = 10;
	while (rc == HB_OK && seq < 100000)
		rc = add_point(db, sweep, seq++);
	assert_int_equal(rc, HB_ERR_DB_FULL);
	int stored = seq - 1;
	assert_non_null(strstr(hb_db_errmsg(db), "disk full"));
	/* Still full on the next try, and still a clear status. */
	assert_int_equal(add_point(db, sweep, seq), HB_ERR_DB_FULL);
	hb_db_close(db);

	db = open_ok(fx->path);
	hb_db_point *pts = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_points_get(db, sweep, &pts, &n), HB_OK);
	assert_int_equal(n, (size_t)stored);
	for (size_t i = 0; i < n; i++)
		assert_int_equal(pts[i].seq, (int)i);
	hb_db_points_free(pts);
	hb_db_close(db);
}

/* ---------------- bad input ---------------- */

static void test_bad_input(void **state)
{
	fixture *fx = *state;
	hb_db_close(NULL);
	assert_non_null(hb_db_errmsg(NULL));
	assert_int_equal(hb_db_open(fx->path, NULL), HB_ERR_ARG);

	/* not a database */
	char junk[160];
	snprintf(junk, sizeof junk, "%s/not-a-db", fx->dir);
	FILE *f = fopen(junk, "w");
	assert_non_null(f);
	for (int i = 0; i < 64; i++)
		fputs("this is not a database file at all. ", f);
	fclose(f);
	hb_db *bad = NULL;
	assert_true(hb_db_open(junk, &bad) < 0);
	assert_non_null(bad);
	assert_non_null(strstr(hb_db_errmsg(bad), junk));
	hb_db_close(bad);

	bad = NULL;
	assert_true(hb_db_open("/nonexistent-dir/x/bench.db", &bad) < 0);
	assert_non_null(bad);
	hb_db_close(bad);

	hb_db *db = open_ok(fx->path);
	hb_db_part p;
	hb_db_sweep s;
	assert_int_equal(hb_db_part_get(db, "NOPE", &p), HB_ERR_NOTFOUND);
	assert_non_null(strstr(hb_db_errmsg(db), "NOPE"));
	assert_int_equal(hb_db_part_get(NULL, "x", &p), HB_ERR_ARG);
	assert_int_equal(hb_db_part_get(db, NULL, &p), HB_ERR_ARG);
	assert_int_equal(hb_db_part_put(db, NULL), HB_ERR_ARG);
	hb_db_part_init(&p);
	assert_int_equal(hb_db_part_put(db, &p), HB_ERR_ARG); /* no part number */
	assert_int_equal(hb_db_sweep_get(db, 999, &s), HB_ERR_NOTFOUND);
	assert_non_null(strstr(hb_db_errmsg(db), "no sweep 999"));
	assert_int_equal(hb_db_sweep_end(db, 999, HB_DB_COMPLETE, NULL), HB_ERR_NOTFOUND);
	assert_int_equal(add_point(db, 999, 0), HB_ERR_NOTFOUND);
	int64_t id = 0;
	assert_int_equal(hb_db_unit_ensure(db, 999, "S1", 0, &id), HB_ERR_NOTFOUND);
	assert_int_equal(hb_db_lot_ensure(db, 999, "L1", &id), HB_ERR_NOTFOUND);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(db, 999, &lot), HB_ERR_NOTFOUND);

	int64_t part = make_part(db, "BAD-1", 1e-6);
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(db, part, "", 0, &unit), HB_ERR_ARG);
	assert_int_equal(hb_db_unit_ensure(db, part, "U1", 0, &unit), HB_OK);
	int64_t again = 0;
	assert_int_equal(hb_db_unit_ensure(db, part, "U1", 0, &again), HB_OK);
	assert_int_equal(again, unit);
	int64_t sweep = make_sweep(db, unit, HB_DB_SWEEP_FREQUENCY, 0, "st");
	assert_int_equal(add_point(db, sweep, 0), HB_OK);
	assert_int_equal(add_point(db, sweep, 0), HB_ERR_ARG); /* duplicate sequence */
	assert_int_equal(add_point(db, sweep, -1), HB_ERR_ARG);
	assert_int_equal(hb_db_sweep_end(db, sweep, HB_DB_RUNNING, NULL), HB_ERR_ARG);
	assert_int_equal(hb_db_sweep_end(db, sweep, HB_DB_ABORTED, "operator stop"), HB_OK);
	assert_int_equal(hb_db_sweep_end(db, sweep, HB_DB_COMPLETE, NULL), HB_ERR_ARG);
	assert_int_equal(add_point(db, sweep, 1), HB_ERR_ARG);
	assert_int_equal(hb_db_sweep_get(db, sweep, &s), HB_OK);
	assert_string_equal(s.status_reason, "operator stop");
	assert_int_equal(s.kind, HB_DB_SWEEP_FREQUENCY);

	hb_db_fit fit;
	assert_int_equal(hb_db_fit_get_latest(db, sweep, NULL, &fit), HB_ERR_NOTFOUND);
	hb_db_fit_init(&fit);
	fit.sweep_id = 999;
	snprintf(fit.model, sizeof fit.model, "x");
	assert_int_equal(hb_db_fit_put(db, &fit), HB_ERR_NOTFOUND);
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	assert_int_equal(hb_db_inspection_put(db, &rec), HB_ERR_ARG); /* sequence 0 */
	hb_db_history_filter hf;
	hb_db_history_filter_init(&hf);
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_ERR_ARG);
	hf.part_number = "NOPE";
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_ERR_NOTFOUND);

	hb_db_sweep_status st;
	assert_int_equal(hb_db_sweep_status_parse("complete", &st), HB_OK);
	assert_int_equal(st, HB_DB_COMPLETE);
	assert_int_equal(hb_db_sweep_status_parse("done", &st), HB_ERR_ARG);
	assert_int_equal(hb_db_sweep_status_parse(NULL, &st), HB_ERR_ARG);
	assert_string_equal(hb_db_sweep_kind_name(HB_DB_SWEEP_FREQUENCY), "frequency");
	assert_string_equal(hb_db_outcome_name(HB_DB_SKIPPED), "skipped");
	hb_db_close(db);
}

static void test_default_path(void **state)
{
	fixture *fx = *state;
	char *old_xdg = getenv("XDG_DATA_HOME") ? strdup(getenv("XDG_DATA_HOME")) : NULL;
	char xdg[128], path[256], want[256];
	snprintf(xdg, sizeof xdg, "%s/xdg", fx->dir);
	setenv("XDG_DATA_HOME", xdg, 1);
	assert_int_equal(hb_db_default_path(path, sizeof path), HB_OK);
	snprintf(want, sizeof want, "%s/henrybench/bench.db", xdg);
	assert_string_equal(path, want);
	struct stat sb;
	snprintf(want, sizeof want, "%s/henrybench", xdg);
	assert_int_equal(stat(want, &sb), 0);
	assert_true(S_ISDIR(sb.st_mode));
	hb_db *db = open_ok(NULL);
	assert_string_equal(hb_db_path(db), path);
	hb_db_close(db);
	assert_int_equal(hb_db_default_path(path, 8), HB_ERR_ARG);
	if (old_xdg)
		setenv("XDG_DATA_HOME", old_xdg, 1);
	else
		unsetenv("XDG_DATA_HOME");
	free(old_xdg);
}

/* ---------------- history ---------------- */

static void put_fit(hb_db *db, int64_t sweep, double l0, double i30, double mu_e, double gap)
{
	hb_db_fit f;
	hb_db_fit_init(&f);
	f.sweep_id = sweep;
	snprintf(f.model, sizeof f.model, "knee");
	snprintf(f.law, sizeof f.law, "arctan");
	snprintf(f.code_version, sizeof f.code_version, "test");
	f.rss = 1e-14;
	f.dof = 8;
	f.aic = -300;
	snprintf(f.covariance_json, sizeof f.covariance_json, "[[1e-18,0],[0,1e-4]]");
	const char *names[] = { "L0", "I_drop10", "I_drop20", "I_drop30", "mu_e" };
	double values[] = { l0, i30 / 3, i30 / 1.5, i30, mu_e };
	for (int i = 0; i < 5; i++) {
		snprintf(f.values[i].name, sizeof f.values[i].name, "%s", names[i]);
		f.values[i].value = values[i];
		f.values[i].std_error = values[i] * 0.01;
	}
	f.n_values = 5;
	assert_int_equal(hb_db_fit_put(db, &f), HB_OK);
	/* the gap comes from a second, later model */
	hb_db_fit g;
	hb_db_fit_init(&g);
	g.sweep_id = sweep;
	snprintf(g.model, sizeof g.model, "gap-fringing");
	snprintf(g.values[0].name, sizeof g.values[0].name, "gap");
	g.values[0].value = gap;
	snprintf(g.values[0].unit, sizeof g.values[0].unit, "m");
	g.n_values = 1;
	assert_int_equal(hb_db_fit_put(db, &g), HB_OK);
}

static void put_verdict(hb_db *db, int64_t sweep, const char *check, hb_db_outcome outcome)
{
	hb_db_verdict v;
	hb_db_verdict_init(&v);
	v.sweep_id = sweep;
	snprintf(v.check_name, sizeof v.check_name, "%s", check);
	v.outcome = outcome;
	v.measured = 1;
	v.limit_low = 0.8;
	v.limit_high = 1.2;
	v.margin = 0.2;
	assert_int_equal(hb_db_verdict_put(db, &v), HB_OK);
}

static void test_history(void **state)
{
	fixture *fx = *state;
	hb_db *db = open_ok(fx->path);
	const char *parts[] = { "P-10U", "P-22U", "P-47U" };
	const char *stations[] = { "bench-1", "bench-2", "bench-3" };
	double t0 = 1.7e9;
	int64_t p0_latest[4] = { 0 };
	assert_int_equal(hb_db_batch_begin(db), HB_OK);
	for (int pi = 0; pi < 3; pi++) {
		int64_t part = make_part(db, parts[pi], (pi + 1) * 10e-6);
		for (int li = 0; li < 2; li++) {
			char code[32];
			snprintf(code, sizeof code, "L%d", li + 1);
			int64_t lot = 0;
			assert_int_equal(hb_db_lot_ensure(db, part, code, &lot), HB_OK);
			for (int ui = 0; ui < 2; ui++) {
				char serial[32];
				snprintf(serial, sizeof serial, "S%d%d", li, ui);
				int64_t unit = 0;
				assert_int_equal(hb_db_unit_ensure(db, part, serial, lot, &unit), HB_OK);
				int k = li * 2 + ui;
				double t = t0 + 86400.0 * k;
				/* an older complete sweep, the latest complete one, then an aborted
				 * one and a frequency sweep that history must skip */
				int64_t old = make_sweep(db, unit, HB_DB_SWEEP_BIAS, t, stations[k % 3]);
				assert_int_equal(hb_db_sweep_end(db, old, HB_DB_COMPLETE, NULL), HB_OK);
				put_fit(db, old, 1.0, 1.0, 1.0, 1.0);
				int64_t latest = make_sweep(db, unit, HB_DB_SWEEP_BIAS, t + 3600, stations[(k + 1) % 3]);
				assert_int_equal(hb_db_sweep_end(db, latest, HB_DB_COMPLETE, NULL), HB_OK);
				put_fit(db, latest, (pi + 1) * 10e-6 + k * 1e-7, 3.0 + k, 60 + k, 0.3e-3);
				put_verdict(db, latest, "L0", HB_DB_PASS);
				put_verdict(db, latest, "Lsat", k == 1 ? HB_DB_FAIL : HB_DB_PASS);
				if (pi == 0)
					p0_latest[k] = latest;
				int64_t ab = make_sweep(db, unit, HB_DB_SWEEP_BIAS, t + 7200, "bench-1");
				assert_int_equal(hb_db_sweep_end(db, ab, HB_DB_ABORTED, "cable"), HB_OK);
				int64_t fq = make_sweep(db, unit, HB_DB_SWEEP_FREQUENCY, t + 9000, "bench-1");
				assert_int_equal(hb_db_sweep_end(db, fq, HB_DB_COMPLETE, NULL), HB_OK);
			}
		}
	}
	/* a unit never measured completely does not appear */
	hb_db_part p;
	assert_int_equal(hb_db_part_get(db, "P-10U", &p), HB_OK);
	int64_t lonely = 0;
	assert_int_equal(hb_db_unit_ensure(db, p.id, "S-none", 0, &lonely), HB_OK);
	assert_int_equal(hb_db_batch_commit(db), HB_OK);

	hb_db_history_filter hf;
	hb_db_history_filter_init(&hf);
	hf.part_number = "P-10U";
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_OK);
	assert_int_equal(n, 4);
	for (size_t i = 0; i < n; i++) {
		assert_int_equal(rows[i].sweep_id, p0_latest[i]);
		assert_true(fabs(rows[i].l0_h - (10e-6 + i * 1e-7)) < 1e-15);
		assert_true(rows[i].i_drop_a[2] == 3.0 + i);
		assert_true(fabs(rows[i].i_drop_a[0] - (3.0 + i) / 3) < 1e-12);
		assert_true(rows[i].mu_e == 60 + i);
		assert_true(rows[i].gap_m == 0.3e-3);
		assert_string_equal(rows[i].station, stations[(i + 1) % 3]);
		assert_int_equal(rows[i].verdict, i == 1 ? HB_DB_FAIL : HB_DB_PASS);
	}
	assert_string_equal(rows[0].lot_code, "L1");
	assert_string_equal(rows[3].lot_code, "L2");
	assert_string_equal(rows[2].serial, "S10");
	hb_db_history_free(rows);

	hf.lot_code = "L2";
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_OK);
	assert_int_equal(n, 2);
	hb_db_history_free(rows);
	hf.serial = "S11";
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_OK);
	assert_int_equal(n, 1);
	assert_int_equal(rows[0].sweep_id, p0_latest[3]);
	hb_db_history_free(rows);
	hf.lot_code = NULL;
	hf.serial = NULL;
	hf.since = t0 + 86400.0 * 2;
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_OK);
	assert_int_equal(n, 2);
	hb_db_history_free(rows);
	/* other drop fractions are not stored: NAN, not an error */
	hb_db_history_filter_init(&hf);
	hf.part_number = "P-47U";
	hf.drop_percent[0] = 25;
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_OK);
	assert_int_equal(n, 4);
	assert_true(isnan(rows[0].i_drop_a[0]));
	assert_false(isnan(rows[0].i_drop_a[1]));
	hb_db_history_free(rows);

	/* listing filters over the same data */
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 3 * 4 * 4);
	assert_true(list[0].started >= list[n - 1].started);
	hb_db_sweeps_free(list);
	f.part_number = "P-22U";
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 16);
	hb_db_sweeps_free(list);
	f.lot_code = "L1";
	f.kind = HB_DB_SWEEP_FREQUENCY;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_string_equal(list[0].part_number, "P-22U");
	assert_string_equal(list[0].lot_code, "L1");
	hb_db_sweeps_free(list);
	hb_db_sweep_filter_init(&f);
	f.status = HB_DB_ABORTED;
	f.serial = "S00";
	f.limit = 2;
	assert_int_equal(hb_db_sweep_list(db, &f, &list, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_string_equal(list[0].status_reason, "cable");
	hb_db_sweeps_free(list);

	/* newest fit by model */
	hb_db_fit fit;
	assert_int_equal(hb_db_fit_get_latest(db, p0_latest[0], "knee", &fit), HB_OK);
	assert_int_equal(fit.n_values, 5);
	assert_string_equal(fit.values[0].name, "L0");
	assert_string_equal(fit.covariance_json, "[[1e-18,0],[0,1e-4]]");
	assert_int_equal(fit.dof, 8);
	assert_int_equal(hb_db_fit_get_latest(db, p0_latest[0], NULL, &fit), HB_OK);
	assert_string_equal(fit.model, "gap-fringing");
	assert_string_equal(fit.values[0].unit, "m");
	hb_db_close(db);
}

static void test_lot_inspection_resume(void **state)
{
	fixture *fx = *state;
	hb_db *db = open_ok(fx->path);
	int64_t part = make_part(db, "INS-1", 10e-6);
	int64_t lot_id = 0, again = 0;
	assert_int_equal(hb_db_lot_ensure(db, part, "2024-17", &lot_id), HB_OK);
	assert_int_equal(hb_db_lot_ensure(db, part, "2024-17", &again), HB_OK);
	assert_int_equal(lot_id, again);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_find(db, part, "2024-17", &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_OPEN);
	assert_true(isnan(lot.aql));
	lot.lot_size = 1200;
	lot.aql = 0.65;
	snprintf(lot.inspection_level, sizeof lot.inspection_level, "II");
	snprintf(lot.severity, sizeof lot.severity, "normal");
	snprintf(lot.code_letter, sizeof lot.code_letter, "J");
	lot.sample_size = 80;
	lot.accept_number = 1;
	lot.reject_number = 2;
	assert_int_equal(hb_db_lot_update(db, &lot), HB_OK);

	int next = 0, passed = -1, failed = -1;
	assert_int_equal(hb_db_inspection_progress(db, lot_id, &next, &passed, &failed), HB_OK);
	assert_int_equal(next, 1);
	assert_int_equal(passed, 0);
	for (int i = 1; i <= 3; i++) {
		char serial[32];
		snprintf(serial, sizeof serial, "U%d", i);
		int64_t unit = 0;
		assert_int_equal(hb_db_unit_ensure(db, part, serial, lot_id, &unit), HB_OK);
		hb_db_inspection rec;
		hb_db_inspection_init(&rec);
		rec.lot_id = lot_id;
		rec.unit_id = unit;
		rec.sequence = i;
		rec.outcome = i == 2 ? HB_DB_FAIL : HB_DB_PASS;
		assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);
	}
	hb_db_close(db);
	db = open_ok(fx->path);
	assert_int_equal(hb_db_inspection_progress(db, lot_id, &next, &passed, &failed), HB_OK);
	assert_int_equal(next, 4);
	assert_int_equal(passed, 2);
	assert_int_equal(failed, 1);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(db, lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 3);
	assert_string_equal(recs[1].serial, "U2");
	assert_int_equal(recs[1].outcome, HB_DB_FAIL);
	hb_db_inspections_free(recs);
	assert_int_equal(hb_db_lot_get(db, lot_id, &lot), HB_OK);
	assert_string_equal(lot.code_letter, "J");
	assert_int_equal(lot.sample_size, 80);
	assert_true(lot.aql == 0.65);
	lot.decision = HB_DB_LOT_REJECT;
	assert_int_equal(hb_db_lot_update(db, &lot), HB_OK);
	assert_int_equal(hb_db_lot_get(db, lot_id, &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_REJECT);
	assert_true(lot.decided[0] != '\0');
	hb_db_close(db);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_fresh_schema, setup, teardown),
		cmocka_unit_test_setup_teardown(test_migrate_from_v1, setup, teardown),
		cmocka_unit_test_setup_teardown(test_migrate_from_v2, setup, teardown),
		cmocka_unit_test_setup_teardown(test_newer_schema_refused, setup, teardown),
		cmocka_unit_test_setup_teardown(test_sigkill_keeps_committed_points, setup, teardown),
		cmocka_unit_test_setup_teardown(test_read_while_sweep_runs, setup, teardown),
		cmocka_unit_test_setup_teardown(test_two_writers_one_file, setup, teardown),
		cmocka_unit_test_setup_teardown(test_disk_full, setup, teardown),
		cmocka_unit_test_setup_teardown(test_bad_input, setup, teardown),
		cmocka_unit_test_setup_teardown(test_default_path, setup, teardown),
		cmocka_unit_test_setup_teardown(test_history, setup, teardown),
		cmocka_unit_test_setup_teardown(test_lot_inspection_resume, setup, teardown),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
