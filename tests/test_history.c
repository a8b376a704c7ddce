/* tests/test_history.c - history over a synthetic store: units, lot statistics and Cpk, trend flags, JSON/CSV shape, compare table */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <cmocka.h>

#include <jansson.h>

#include "src/cli/cli.h"
#include "src/cli/compare.h"
#include "src/quality/quality.h"

static void check_near_at(double got, double want, double rel, int line)
{
	if (!(fabs(got - want) <= rel * fabs(want)))
		fail_msg("line %d: got %.15g, want %.15g (relative tolerance %g)", line, got, want, rel);
}
#define check_near(got, want) check_near_at((got), (want), 1e-9, __LINE__)

/* Invented synthetic data. Three lots of TST-100 a month apart whose L0
 * creeps up and whose saturation current falls (a drifting supplier), one
 * unit measured without a lot, and another part that must not mix in. */
static const double day = 86400;
static const double t0 = 1704844800; /* 2024-01-10T00:00:00Z */

typedef struct unit_spec {
	const char *part, *lot, *serial, *station;
	double day;
	double l0_uh, isat30_a;
	bool fail;
} unit_spec;

static const unit_spec units[] = {
	{ "TST-100", "L1", "U-101", "bench-a", 0, 99, 3.00, false },
	{ "TST-100", "L1", "U-102", "bench-a", 0.1, 100, 3.02, false },
	{ "TST-100", "L1", "U-103", "bench-a", 0.2, 101, 2.98, false },
	{ "TST-100", NULL, "PROTO-1", "bench-a", 5, 100, 3.10, false },
	{ "TST-100", "L2", "U-201", "bench-b", 30, 102, 2.90, false },
	{ "TST-100", "L2", "U-202", "bench-b", 30.1, 103, 2.92, false },
	{ "TST-100", "L2", "U-203", "bench-b", 30.2, 104, 2.88, false },
	{ "TST-100", "L3", "U-301", "bench-a", 60, 105, 2.60, false },
	{ "TST-100", "L3", "U-302", "bench-a", 60.1, 106, 2.62, false },
	{ "TST-100", "L3", "U-303", "bench-b", 60.2, 107, 2.58, false },
	{ "TST-100", "L3", "U-304", "bench-b", 60.3, 112, 2.55, true },
	{ "TST-220", "B1", "V-1", "bench-a", 10, 220, 1.5, false },
};
enum { N_UNITS = sizeof units / sizeof units[0], N_TST100 = 11 };
static const double point_i[] = { 0, 1, 2, 3 };
static const double point_shape[] = { 1, 0.95, 0.85, 0.70 };

typedef struct fixture {
	char dir[64], db_path[128];
	hb_db *db;
	int64_t sweep_ids[N_UNITS];
	int64_t freq_sweep_id;
} fixture;

static void put_part(hb_db *db, const char *pn, double nominal)
{
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "%s", pn);
	p.nominal_h = nominal;
	p.tolerance = 0.10;
	p.test_freq_hz = 100e3;
	p.test_level = 0.5;
	p.sat_current_a = 3;
	p.sat_drop = 0.30;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
}

static int64_t begin_sweep(hb_db *db, int64_t unit_id, const char *station, double started, hb_db_sweep_kind kind)
{
	hb_db_sweep sw;
	hb_db_sweep_init(&sw);
	sw.kind = kind;
	sw.unit_id = unit_id;
	sw.started = started;
	snprintf(sw.station, sizeof sw.station, "%s", station);
	assert_int_equal(hb_db_sweep_begin(db, &sw), HB_OK);
	return sw.id;
}

static int64_t add_unit(hb_db *db, const unit_spec *u)
{
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, u->part, &part), HB_OK);
	int64_t lot_id = 0, unit_id = 0;
	if (u->lot)
		assert_int_equal(hb_db_lot_ensure(db, part.id, u->lot, &lot_id), HB_OK);
	assert_int_equal(hb_db_unit_ensure(db, part.id, u->serial, lot_id, &unit_id), HB_OK);
	double l0 = u->l0_uh * 1e-6;
	int64_t id = begin_sweep(db, unit_id, u->station, t0 + u->day * day, HB_DB_SWEEP_BIAS);
	for (int k = 0; k < 4; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = id;
		p.seq = k;
		p.bias_set_a = p.bias_meas_a = point_i[k];
		p.freq_hz = 100e3;
		p.primary = l0 * point_shape[k];
		p.secondary = 0.03;
		assert_int_equal(hb_db_point_add(db, &p), HB_OK);
	}
	assert_int_equal(hb_db_sweep_end(db, id, HB_DB_COMPLETE, ""), HB_OK);
	hb_db_fit *fit = calloc(1, sizeof *fit);
	assert_non_null(fit);
	hb_db_fit_init(fit);
	fit->sweep_id = id;
	snprintf(fit->model, sizeof fit->model, "synthetic");
	const char *names[] = { "L0", "I_drop10", "I_drop20", "I_drop30", "mu_e", "gap" };
	const double values[] = { l0, 0.5 * u->isat30_a, 0.8 * u->isat30_a, u->isat30_a, 140, 0.5e-3 };
	for (int k = 0; k < 6; k++) {
		hb_db_fit_value *v = &fit->values[fit->n_values++];
		snprintf(v->name, sizeof v->name, "%s", names[k]);
		v->value = values[k];
		v->std_error = NAN;
	}
	assert_int_equal(hb_db_fit_put(db, fit), HB_OK);
	free(fit);
	hb_db_verdict v;
	hb_db_verdict_init(&v);
	v.sweep_id = id;
	snprintf(v.check_name, sizeof v.check_name, "L0");
	v.measured = l0;
	v.limit_low = part.nominal_h * 0.9;
	v.limit_high = part.nominal_h * 1.1;
	v.outcome = u->fail ? HB_DB_FAIL : HB_DB_PASS;
	assert_int_equal(hb_db_verdict_put(db, &v), HB_OK);
	return id;
}

static int setup(void **state)
{
	fixture *f = calloc(1, sizeof *f);
	assert_non_null(f);
	snprintf(f->dir, sizeof f->dir, "/tmp/hb-test-history-XXXXXX");
	assert_non_null(mkdtemp(f->dir));
	snprintf(f->db_path, sizeof f->db_path, "%s/bench.db", f->dir);
	assert_int_equal(hb_db_open(f->db_path, &f->db), HB_OK);
	put_part(f->db, "TST-100", 100e-6);
	put_part(f->db, "TST-220", 220e-6);
	for (size_t i = 0; i < N_UNITS; i++)
		f->sweep_ids[i] = add_unit(f->db, &units[i]);
	/* A later sweep of U-101 that aborted: history keeps the complete one. */
	hb_db_part part;
	assert_int_equal(hb_db_part_get(f->db, "TST-100", &part), HB_OK);
	int64_t unit_id;
	assert_int_equal(hb_db_unit_ensure(f->db, part.id, "U-101", 0, &unit_id), HB_OK);
	int64_t aborted = begin_sweep(f->db, unit_id, "bench-a", t0 + 1 * day, HB_DB_SWEEP_BIAS);
	assert_int_equal(hb_db_sweep_end(f->db, aborted, HB_DB_ABORTED, "operator"), HB_OK);
	f->freq_sweep_id = begin_sweep(f->db, unit_id, "bench-a", t0 + 2 * day, HB_DB_SWEEP_FREQUENCY);
	assert_int_equal(hb_db_sweep_end(f->db, f->freq_sweep_id, HB_DB_COMPLETE, ""), HB_OK);
	hb_global.db_path = f->db_path;
	*state = f;
	return 0;
}

static int teardown(void **state)
{
	fixture *f = *state;
	hb_db_close(f->db);
	const char *suffixes[] = { "", "-wal", "-shm" };
	for (int i = 0; i < 3; i++) {
		char p[160];
		snprintf(p, sizeof p, "%s%s", f->db_path, suffixes[i]);
		unlink(p);
	}
	rmdir(f->dir);
	hb_global.db_path = NULL;
	free(f);
	return 0;
}

/* Runs a command in-process with stdout captured; returns its exit code
 * and the output (caller frees). */
static int run_cmd(hb_command_fn fn, char **out, int argc, ...)
{
	char *argv[16];
	va_list ap;
	va_start(ap, argc);
	for (int i = 0; i < argc; i++)
		argv[i] = va_arg(ap, char *);
	va_end(ap);
	argv[argc] = NULL;
	char path[] = "/tmp/hb-test-history-out-XXXXXX";
	int fd = mkstemp(path);
	assert_true(fd >= 0);
	fflush(stdout);
	int saved = dup(STDOUT_FILENO);
	dup2(fd, STDOUT_FILENO);
	int rc = fn(argc, argv);
	fflush(stdout);
	dup2(saved, STDOUT_FILENO);
	close(saved);
	off_t len = lseek(fd, 0, SEEK_END);
	lseek(fd, 0, SEEK_SET);
	*out = calloc(1, (size_t)len + 1);
	assert_non_null(*out);
	assert_int_equal(read(fd, *out, (size_t)len), len);
	close(fd);
	unlink(path);
	return rc;
}

static const hb_history_lot *lot_named(const hb_history_summary *s, const char *code)
{
	for (size_t i = 0; i < s->n_lots; i++)
		if (strcmp(s->lots[i].lot_code, code) == 0)
			return &s->lots[i];
	fail_msg("no lot %s", code);
	return NULL;
}

static void test_rows_and_lot_statistics(void **state)
{
	fixture *f = *state;
	hb_db_history_filter flt;
	hb_db_history_filter_init(&flt);
	flt.part_number = "TST-100";
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_history(f->db, &flt, &rows, &n), HB_OK);
	assert_int_equal(n, N_TST100);
	assert_string_equal(rows[0].serial, "U-101");
	assert_int_equal(rows[0].sweep_id, f->sweep_ids[0]);

	hb_db_part part;
	assert_int_equal(hb_db_part_get(f->db, "TST-100", &part), HB_OK);
	hb_history_summary s;
	assert_int_equal(hb_history_summarise(&part, rows, n, flt.drop_percent, &s), HB_OK);
	assert_int_equal(s.n_lots, 4);
	assert_int_equal(s.sat_drop_percent, 30);
	/* Lots in time order, the lot-less units last. */
	assert_string_equal(s.lots[0].lot_code, "L1");
	assert_string_equal(s.lots[1].lot_code, "L2");
	assert_string_equal(s.lots[2].lot_code, "L3");
	assert_string_equal(s.lots[3].lot_code, "");

	/* Hand-computed: L1 = 99, 100, 101 uH: mean 100, s 1 (n - 1);
	 * Cp = (110 - 90) / (6 s) = 3.333, Cpk = min(10, 10) / (3 s) = 3.333. */
	const hb_history_lot *l1 = lot_named(&s, "L1");
	assert_int_equal(l1->n_units, 3);
	assert_int_equal(l1->l0.n, 3);
	check_near(l1->l0.mean, 100e-6);
	check_near(l1->l0.stddev, 1e-6);
	check_near(l1->l0.min, 99e-6);
	check_near(l1->l0.max, 101e-6);
	check_near(l1->cp, 20.0 / 6);
	check_near(l1->cpk, 10.0 / 3);
	assert_true(isnan(l1->l0_change_h));
	/* L2 = 102, 103, 104: Cpk = (110 - 103) / 3 = 2.333. */
	const hb_history_lot *l2 = lot_named(&s, "L2");
	check_near(l2->cpk, 7.0 / 3);
	check_near(l2->l0_change_h, 3e-6);
	assert_false(l2->l0_shift); /* 3 uH < (110 - 90) / 6 = 3.33 uH */
	/* L3 = 105, 106, 107, 112: mean 107.5, s^2 = 29 / 3; Cpk = 2.5 / (3 s). */
	const hb_history_lot *l3 = lot_named(&s, "L3");
	assert_int_equal(l3->n_units, 4);
	assert_int_equal(l3->n_fail, 1);
	assert_int_equal(l3->n_pass, 3);
	check_near(l3->l0.mean, 107.5e-6);
	check_near(l3->l0.stddev, sqrt(29.0 / 3) * 1e-6);
	check_near(l3->cpk, 2.5 / (3 * sqrt(29.0 / 3)));
	check_near(l3->l0_change_rel, 0.075);
	assert_true(l3->l0_shift);
	/* Isat means 3.0, 2.9, 2.5875 A: falling; L3 is 13.75 % down. */
	check_near(l1->isat.mean, 3.0);
	check_near(l3->isat.mean, 2.5875);
	check_near(l3->isat_change_rel, 2.5875 / 3.0 - 1);
	assert_false(l2->isat_shift);
	assert_true(l3->isat_shift);
	assert_int_equal(s.n_trend_lots, 3);
	assert_int_equal(s.l0_drift, 1);
	assert_int_equal(s.isat_drift, -1);
	assert_true(s.l0_shift);
	assert_true(s.isat_shift);
	/* The unit without a lot: one value, no spread, no capability. */
	const hb_history_lot *none = lot_named(&s, "");
	assert_int_equal(none->n_units, 1);
	assert_true(isnan(none->l0.stddev));
	assert_true(isnan(none->cpk));
	hb_history_summary_free(&s);
	hb_history_summary_free(&s);
	hb_db_history_free(rows);
}

static void test_trend_needs_monotone_lots(void **state)
{
	(void)state;
	hb_db_part part;
	hb_db_part_init(&part);
	part.nominal_h = 100e-6;
	part.tolerance = 0.2;
	part.sat_drop = 0.25; /* not a stored drop: the last column stands in */
	hb_db_history_row rows[4];
	memset(rows, 0, sizeof rows);
	const double l0[] = { 100e-6, 101e-6, 100.5e-6, 102e-6 };
	for (int i = 0; i < 4; i++) {
		snprintf(rows[i].lot_code, sizeof rows[i].lot_code, "M%d", i);
		rows[i].started = 1000 + i;
		rows[i].l0_h = l0[i];
		rows[i].i_drop_a[0] = rows[i].i_drop_a[1] = rows[i].i_drop_a[2] = 2.0 + 0.01 * i;
		rows[i].mu_e = rows[i].gap_m = NAN;
	}
	const int drops[] = { 10, 20, 30 };
	hb_history_summary s;
	assert_int_equal(hb_history_summarise(&part, rows, 4, drops, &s), HB_OK);
	assert_int_equal(s.sat_drop_index, 2);
	assert_int_equal(s.l0_drift, 0); /* up, up, down, up */
	assert_int_equal(s.isat_drift, 1);
	assert_false(s.l0_shift);
	/* One unit per lot: no spread, so no Cpk. */
	assert_true(isnan(s.lots[0].cpk));
	hb_history_summary_free(&s);
	assert_int_equal(hb_history_summarise(&part, rows, 0, drops, &s), HB_OK);
	assert_int_equal(s.n_lots, 0);
	hb_history_summary_free(&s);
}

static void test_history_json(void **state)
{
	(void)state;
	char *out = NULL;
	assert_int_equal(run_cmd(hb_cmd_history, &out, 3, "history", "TST-100", "--json"), HB_EXIT_OK);
	json_error_t jerr;
	json_t *j = json_loads(out, 0, &jerr);
	if (!j)
		fail_msg("not JSON: %s\n%s", jerr.text, out);
	assert_string_equal(json_string_value(json_object_get(j, "part_number")), "TST-100");
	json_t *list = json_object_get(j, "units");
	assert_int_equal(json_array_size(list), N_TST100);
	size_t fails = 0;
	for (size_t i = 0; i < json_array_size(list); i++) {
		json_t *u = json_array_get(list, i);
		const char *verdict = json_string_value(json_object_get(u, "verdict"));
		assert_non_null(verdict);
		assert_true(strcmp(verdict, "pass") == 0 || strcmp(verdict, "fail") == 0);
		fails += strcmp(verdict, "fail") == 0;
		assert_non_null(json_string_value(json_object_get(u, "serial")));
		assert_true(json_is_real(json_object_get(u, "L0_H")));
		assert_true(json_is_object(json_object_get(u, "I_drop_A")));
	}
	assert_int_equal(fails, 1);
	json_t *u0 = json_array_get(list, 0);
	assert_string_equal(json_string_value(json_object_get(u0, "station")), "bench-a");
	assert_string_equal(json_string_value(json_object_get(u0, "started")), "2024-01-10T00:00:00Z");
	check_near(json_real_value(json_object_get(json_object_get(u0, "I_drop_A"), "30")), 3.0);
	assert_int_equal(json_array_size(json_object_get(j, "lots")), 4);
	json_t *lot3 = json_array_get(json_object_get(j, "lots"), 2);
	assert_string_equal(json_string_value(json_object_get(lot3, "lot_code")), "L3");
	check_near(json_real_value(json_object_get(json_object_get(lot3, "L0_H"), "mean")), 107.5e-6);
	json_t *trend = json_object_get(j, "trend");
	assert_string_equal(json_string_value(json_object_get(trend, "L0_drift")), "rising");
	assert_string_equal(json_string_value(json_object_get(trend, "I_sat_drift")), "falling");
	json_decref(j);
	free(out);

	/* Filters. */
	assert_int_equal(run_cmd(hb_cmd_history, &out, 5, "history", "TST-100", "--since", "2024-02-01", "--json"),
			 HB_EXIT_OK);
	j = json_loads(out, 0, &jerr);
	assert_non_null(j);
	assert_int_equal(json_array_size(json_object_get(j, "units")), 7);
	json_decref(j);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 5, "history", "TST-100", "--lot", "L2", "--json"), HB_EXIT_OK);
	j = json_loads(out, 0, &jerr);
	assert_non_null(j);
	assert_int_equal(json_array_size(json_object_get(j, "units")), 3);
	json_decref(j);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 5, "history", "TST-220", "--unit", "V-1", "--json"), HB_EXIT_OK);
	j = json_loads(out, 0, &jerr);
	assert_non_null(j);
	assert_int_equal(json_array_size(json_object_get(j, "units")), 1);
	json_decref(j);
	free(out);
}

static void test_history_csv_and_text(void **state)
{
	(void)state;
	char *out = NULL;
	assert_int_equal(run_cmd(hb_cmd_history, &out, 3, "history", "TST-100", "--csv"), HB_EXIT_OK);
	const char *header = "started_utc,station,lot_code,serial,sweep_id,L0_H,I_drop10_A,I_drop20_A,I_drop30_A,mu_e,gap_m,verdict\r\n";
	assert_memory_equal(out, header, strlen(header));
	size_t lines = 0;
	for (const char *p = out; *p; p++)
		lines += *p == '\n';
	assert_int_equal(lines, 1 + N_TST100);
	assert_non_null(strstr(out, "\n2024-01-10T00:00:00Z,bench-a,L1,U-101,"));
	assert_non_null(strstr(out, ",,PROTO-1,")); /* empty lot field */
	free(out);

	assert_int_equal(run_cmd(hb_cmd_history, &out, 2, "history", "TST-100"), HB_EXIT_OK);
	assert_non_null(strstr(out, "L0 DRIFT"));
	assert_non_null(strstr(out, "L0 SHIFT"));
	assert_non_null(strstr(out, "Isat DRIFT"));
	assert_non_null(strstr(out, "(no lot)"));
	free(out);
}

static void test_history_bad_input(void **state)
{
	(void)state;
	char *out = NULL;
	assert_int_equal(run_cmd(hb_cmd_history, &out, 4, "history", "TST-100", "--since", "2024-02-30"), HB_EXIT_USAGE);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 4, "history", "TST-100", "--since", "yesterday"), HB_EXIT_USAGE);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 2, "history", "NO-SUCH"), HB_EXIT_USAGE);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 1, "history"), HB_EXIT_USAGE);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 4, "history", "TST-100", "--json", "--csv"), HB_EXIT_USAGE);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_history, &out, 3, "history", "TST-100", "--bogus"), HB_EXIT_USAGE);
	free(out);
}

static void test_compare_table(void **state)
{
	fixture *f = *state;
	int64_t ids[] = { f->sweep_ids[0], f->sweep_ids[10] };
	hb_compare_table t;
	char err[256];
	assert_int_equal(hb_compare_load(f->db, ids, 2, 7, &t, err, sizeof err), HB_OK);
	assert_int_equal(t.n, 2);
	assert_int_equal(t.n_currents, 7);
	check_near(t.currents[3], 1.5);
	check_near(t.currents[6], 3.0);
	/* Linear between the stored points 1 A (0.95 L0) and 2 A (0.85 L0). */
	check_near(t.cols[0].l_at[3], 99e-6 * 0.90);
	check_near(t.cols[1].l_at[0], 112e-6);
	check_near(t.cols[1].l0_h, 112e-6);
	check_near(t.cols[1].i_drop_a[2], 2.55);
	assert_int_equal(t.cols[0].verdict, HB_DB_PASS);
	assert_int_equal(t.cols[1].verdict, HB_DB_FAIL);
	assert_string_equal(t.cols[1].lot_code, "L3");
	json_t *j = hb_compare_json(&t);
	assert_int_equal(json_array_size(json_object_get(j, "sweeps")), 2);
	/* each row names its sweep and unit by the identity the store gave them (RFC 9562 form) */
	char want_uid[HB_DB_UID_LEN];
	assert_int_equal(hb_db_uid_of(f->db, HB_DB_REC_SWEEP, ids[1], want_uid), HB_OK);
	json_t *row1 = json_array_get(json_object_get(j, "sweeps"), 1);
	assert_string_equal(json_string_value(json_object_get(row1, "sweep_uid")), want_uid);
	assert_int_equal(strlen(json_string_value(json_object_get(row1, "unit_uid"))), 36);
	assert_int_equal(json_array_size(json_object_get(j, "currents_A")), 7);
	json_decref(j);
	hb_compare_free(&t);
	hb_compare_free(&t);

	int64_t freq[] = { f->sweep_ids[0], f->freq_sweep_id };
	assert_int_equal(hb_compare_load(f->db, freq, 2, 6, &t, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "frequency"));
	int64_t missing[] = { f->sweep_ids[0], 9999 };
	assert_int_equal(hb_compare_load(f->db, missing, 2, 6, &t, err, sizeof err), HB_ERR_NOTFOUND);

	char a[24], b[24];
	snprintf(a, sizeof a, "%lld", (long long)f->sweep_ids[1]);
	snprintf(b, sizeof b, "%lld", (long long)f->sweep_ids[4]);
	char *out = NULL;
	assert_int_equal(run_cmd(hb_cmd_compare, &out, 3, "compare", a, b), HB_EXIT_OK);
	assert_non_null(strstr(out, "U-102"));
	assert_non_null(strstr(out, "L at 3 A"));
	free(out);
	assert_int_equal(run_cmd(hb_cmd_compare, &out, 4, "compare", a, b, "--json"), HB_EXIT_OK);
	json_error_t jerr;
	j = json_loads(out, 0, &jerr);
	assert_non_null(j);
	assert_string_equal(json_string_value(json_object_get(json_array_get(json_object_get(j, "sweeps"), 1), "serial")),
			    "U-201");
	json_decref(j);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_compare, &out, 2, "compare", a), HB_EXIT_USAGE);
	free(out);
	assert_int_equal(run_cmd(hb_cmd_compare, &out, 3, "compare", a, "x1"), HB_EXIT_USAGE);
	free(out);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_rows_and_lot_statistics, setup, teardown),
		cmocka_unit_test(test_trend_needs_monotone_lots),
		cmocka_unit_test_setup_teardown(test_history_json, setup, teardown),
		cmocka_unit_test_setup_teardown(test_history_csv_and_text, setup, teardown),
		cmocka_unit_test_setup_teardown(test_history_bad_input, setup, teardown),
		cmocka_unit_test_setup_teardown(test_compare_table, setup, teardown),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
