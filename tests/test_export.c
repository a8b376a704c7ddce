/* tests/test_export.c - CSV import (names, units, delimiters, BOM, bad rows stored never) and CSV/JSON export, round trip */
#include <math.h>
#include <stdbool.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <cmocka.h>
#include <jansson.h>

#include "src/io/io.h"
#include "store_fixture.h"

typedef struct fixture {
	char dir[256];
	hb_db *db;
	int64_t part_id;
} fixture;

static int setup(void **state)
{
	fixture *fx = calloc(1, sizeof *fx);
	if (!fx)
		return -1;
	char path[400];
	if (temp_store_open(fx->dir, sizeof fx->dir, "export", path, sizeof path, &fx->db) != 0)
		return -1;
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "IMP-1");
	p.nominal_h = 100e-6;
	p.tolerance = 0.2;
	if (hb_db_part_put(fx->db, &p) != HB_OK)
		return -1;
	fx->part_id = p.id;
	*state = fx;
	return 0;
}

static int teardown(void **state)
{
	fixture *fx = *state;
	int rc = temp_store_remove(fx->dir, fx->db);
	free(fx);
	return rc;
}

static const char *write_file(fixture *fx, const char *name, const char *content, size_t len)
{
	static char path[400];
	snprintf(path, sizeof path, "%s/%s", fx->dir, name);
	FILE *f = fopen(path, "wb");
	assert_non_null(f);
	assert_int_equal(fwrite(content, 1, len, f), len);
	fclose(f);
	return path;
}

static size_t sweep_count(fixture *fx)
{
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	hb_db_sweep *list = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_sweep_list(fx->db, &f, &list, &n), HB_OK);
	hb_db_sweeps_free(list);
	return n;
}

static int import_text(fixture *fx, const char *content, size_t len, const char *columns, hb_import_result *res,
		       char *err, size_t errlen)
{
	const char *path = write_file(fx, "in.csv", content, len);
	hb_import_options opt;
	hb_import_options_init(&opt);
	opt.part_number = "IMP-1";
	opt.serial = "U-1";
	opt.columns = columns;
	opt.analyse = false;
	return hb_import_csv(fx->db, path, &opt, res, err, errlen);
}

#define IMPORT(fx, text, cols, res, err) import_text(fx, text, sizeof(text) - 1, cols, res, err, sizeof err)

static void points_of(fixture *fx, int64_t id, hb_db_point **pts, size_t *n)
{
	assert_int_equal(hb_db_points_get(fx->db, id, pts, n), HB_OK);
}

static void test_good_file(void **state)
{
	fixture *fx = *state;
	hb_import_result res;
	char err[600] = "";
	int rc = IMPORT(fx, "current,inductance,resistance\n0,100e-6,0.1\n1,98e-6,0.1\n2,90e-6,0.1\n3,70e-6,0.1\n",
			NULL, &res, err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_int_equal(res.n_points, 4);
	assert_int_equal(res.kind, HB_DB_SWEEP_BIAS);
	assert_int_equal(res.delimiter, ',');
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(fx->db, res.sweep_id, &s), HB_OK);
	assert_int_equal(s.status, HB_DB_COMPLETE);
	assert_string_equal(s.station, "import");
	assert_non_null(strstr(s.note, "in.csv"));
	assert_string_equal(s.serial, "U-1");
	hb_db_point *p;
	size_t n;
	points_of(fx, res.sweep_id, &p, &n);
	assert_int_equal(n, 4);
	assert_true(fabs(p[3].bias_set_a - 3) < 1e-12 && fabs(p[3].primary - 70e-6) < 1e-15);
	assert_true(fabs(p[1].secondary - 0.1) < 1e-12);
	hb_db_points_free(p);
}

static void test_bad_number_stores_nothing(void **state)
{
	fixture *fx = *state;
	size_t before = sweep_count(fx);
	hb_import_result res;
	char err[600] = "";
	int rc = IMPORT(fx, "I [A],L [H]\n0,100u\n1,99u\n2,9x9u\n3,70u\n", NULL, &res, err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_int_equal(res.line, 4);
	assert_int_equal(res.field, 2);
	assert_non_null(strstr(err, "line 4, column 2"));
	assert_non_null(strstr(err, "9x9u"));
	assert_int_equal(sweep_count(fx), before);

	/* A short row, and a quote left open, are named by line as well. */
	rc = IMPORT(fx, "I,L\n0,100u\n1\n", NULL, &res, err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "line 3: 1 fields, the header has 2"));
	rc = IMPORT(fx, "I,L\n0,100u\n1,\"99u\n2,98u\n", NULL, &res, err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "line 3"));
	/* A unit in a cell must be the column's. */
	rc = IMPORT(fx, "I,L\n0,100u\n1,2.5A\n", NULL, &res, err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "line 3, column 2"));
	assert_int_equal(sweep_count(fx), before);
}

static void test_missing_column_and_empty(void **state)
{
	fixture *fx = *state;
	size_t before = sweep_count(fx);
	hb_import_result res;
	char err[600] = "";
	assert_int_equal(IMPORT(fx, "current,voltage\n0,1\n1,2\n", NULL, &res, err), HB_ERR_ARG);
	assert_non_null(strstr(err, "no inductance column"));
	assert_non_null(strstr(err, "'voltage'"));
	assert_int_equal(IMPORT(fx, "time,inductance\n0,1u\n1,2u\n", NULL, &res, err), HB_ERR_ARG);
	assert_non_null(strstr(err, "needs a current column"));
	assert_int_equal(IMPORT(fx, "", NULL, &res, err), HB_ERR_DATA);
	assert_non_null(strstr(err, "empty"));
	assert_int_equal(IMPORT(fx, "\n\n", NULL, &res, err), HB_ERR_DATA);
	assert_int_equal(IMPORT(fx, "current,inductance\n", NULL, &res, err), HB_ERR_DATA);
	assert_non_null(strstr(err, "no data rows"));
	/* Unknown part: nothing stored either. */
	const char *path = write_file(fx, "p.csv", "I,L\n0,1u\n", 9);
	hb_import_options opt;
	hb_import_options_init(&opt);
	opt.part_number = "NOPE";
	opt.serial = "U-9";
	assert_int_equal(hb_import_csv(fx->db, path, &opt, &res, err, sizeof err), HB_ERR_NOTFOUND);
	assert_non_null(strstr(err, "NOPE"));
	assert_int_equal(sweep_count(fx), before);
}

static void test_bom_semicolon_engineering(void **state)
{
	fixture *fx = *state;
	hb_import_result res;
	char err[600] = "";
	/* BOM, semicolons, decimal commas, a header unit and engineering notation. */
	int rc = IMPORT(fx, "\xEF\xBB\xBF\"Bias current (mA)\";L (uH);Rs\r\n0;100,5;50m\r\n500;99;50mohm\r\n1500;2.5e1;0,05\r\n",
			NULL, &res, err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_int_equal(res.delimiter, ';');
	assert_int_equal(res.column[HB_IMPORT_CURRENT], 0);
	assert_int_equal(res.column[HB_IMPORT_INDUCTANCE], 1);
	assert_int_equal(res.column[HB_IMPORT_RESISTANCE], 2);
	hb_db_point *p;
	size_t n;
	points_of(fx, res.sweep_id, &p, &n);
	assert_int_equal(n, 3);
	assert_true(fabs(p[1].bias_set_a - 0.5) < 1e-12);
	assert_true(fabs(p[2].bias_set_a - 1.5) < 1e-12);
	assert_true(fabs(p[0].primary - 100.5e-6) < 1e-15);
	assert_true(fabs(p[2].primary - 25e-6) < 1e-15);
	assert_true(fabs(p[1].secondary - 0.05) < 1e-12);
	assert_true(fabs(p[2].secondary - 0.05) < 1e-12);
	hb_db_points_free(p);

	/* Tabs, cells with their own units, a frequency sweep found by its columns. */
	rc = IMPORT(fx, "f\tLs\tR\n1kHz\t100uH\t0.1\n10kHz\t101uH\t0.2\n100kHz\t105uH\t0.5\n", NULL, &res, err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_int_equal(res.delimiter, '\t');
	assert_int_equal(res.kind, HB_DB_SWEEP_FREQUENCY);
	points_of(fx, res.sweep_id, &p, &n);
	assert_true(fabs(p[2].freq_hz - 100e3) < 1e-6 && fabs(p[2].primary - 105e-6) < 1e-15);
	hb_db_points_free(p);
}

static void test_column_mapping(void **state)
{
	fixture *fx = *state;
	hb_import_result res;
	char err[600] = "";
	/* Quoted headers with the delimiter and doubled quotes inside. */
	int rc = IMPORT(fx, "\"Amps, DC\",\"Meter \"\"L\"\"\",x\n0,1e-4,9\n1,0.9e-4,9\n", "current=Amps, DC", &res, err);
	assert_int_equal(rc, HB_ERR_ARG); /* the mapping splits at commas: name by number instead */
	rc = IMPORT(fx, "\"Amps, DC\",\"Meter \"\"L\"\"\",x\n0,1e-4,9\n1,0.9e-4,9\n", "current=1,inductance=Meter \"L\"",
		    &res, err);
	if (rc != HB_OK)
		fail_msg("%s", err);
	assert_int_equal(res.column[HB_IMPORT_CURRENT], 0);
	assert_int_equal(res.column[HB_IMPORT_INDUCTANCE], 1);
	rc = IMPORT(fx, "a,b\n0,1u\n", "torque=a", &res, err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "torque"));
	rc = IMPORT(fx, "a,b\n0,1u\n", "current=a,inductance=c", &res, err);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "no such column"));
	rc = IMPORT(fx, "a,b\n0,1u\n1,2u\n", "current=a,inductance=b", &res, err);
	assert_int_equal(rc, HB_OK);
}

/* A bias sweep with every field the export writes. */
static int64_t stored_sweep(fixture *fx, const char *serial)
{
	int64_t unit;
	assert_int_equal(hb_db_unit_ensure(fx->db, fx->part_id, serial, 0, &unit), HB_OK);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = HB_DB_SWEEP_BIAS;
	s.unit_id = unit;
	s.test_freq_hz = 100e3;
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	assert_int_equal(hb_db_sweep_begin(fx->db, &s), HB_OK);
	for (int k = 0; k < 12; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = k;
		p.bias_set_a = 0.5 * (k < 9 ? k : 16 - k);
		p.bias_meas_a = p.bias_set_a * 0.999 + 1.234567e-4;
		p.supply_v = 0.031 * p.bias_meas_a;
		p.freq_hz = 100e3;
		p.primary = 1e-4 / (1 + pow(p.bias_meas_a / 3, 4)) * (1 + 1e-5 * k);
		p.secondary = 0.12345678901;
		p.direction = k < 9 ? HB_DB_DIR_UP : HB_DB_DIR_DOWN;
		p.t_s = 0.1 * k;
		assert_int_equal(hb_db_point_add(fx->db, &p), HB_OK);
	}
	assert_int_equal(hb_db_sweep_end(fx->db, s.id, HB_DB_COMPLETE, NULL), HB_OK);
	return s.id;
}

static char *export_text(fixture *fx, const int64_t *ids, size_t n, bool json)
{
	FILE *f = tmpfile();
	assert_non_null(f);
	char err[300] = "";
	int rc = json ? hb_export_json(fx->db, ids, n, f, err, sizeof err) : hb_export_csv(fx->db, ids, n, f, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("export: %s", err);
	return stream_read_back(f, NULL);
}

static void test_export_csv_shape(void **state)
{
	fixture *fx = *state;
	int64_t ids[2] = { stored_sweep(fx, "E-1"), stored_sweep(fx, "E,2 \"q\"") };
	char *csv = export_text(fx, ids, 2, false);
	/* One header row with SI units in the names, CRLF rows (RFC 4180). */
	const char *header = "sweep_id,kind,part_number,serial,lot_code,measured_pair,seq,direction,bias_set_A,"
			     "bias_measured_A,supply_V,frequency_Hz,L_H,R_ohm,reading_status,t_s,settle_readings,"
			     "settle_s\r\n";
	assert_true(strncmp(csv, header, strlen(header)) == 0);
	size_t rows = 0;
	for (const char *p = csv; (p = strstr(p, "\r\n")); p += 2)
		rows++;
	assert_int_equal(rows, 1 + 24);
	/* The serial with a comma and quotes is quoted, quotes doubled. */
	assert_non_null(strstr(csv, ",\"E,2 \"\"q\"\"\","));
	free(csv);

	char *json = export_text(fx, ids, 2, true);
	json_error_t jerr;
	json_t *root = json_loads(json, 0, &jerr);
	assert_non_null(root);
	assert_string_equal(json_string_value(json_object_get(root, "format")), "henrybench-export");
	json_t *sweeps = json_object_get(root, "sweeps");
	assert_int_equal(json_array_size(sweeps), 2);
	json_t *s0 = json_array_get(sweeps, 0);
	assert_int_equal(json_integer_value(json_object_get(s0, "id")), ids[0]);
	assert_int_equal(json_array_size(json_object_get(s0, "points")), 12);
	json_t *p0 = json_array_get(json_object_get(s0, "points"), 3);
	assert_true(fabs(json_real_value(json_object_get(p0, "bias_set_A")) - 1.5) < 1e-12);
	assert_non_null(json_object_get(p0, "L_H"));
	assert_non_null(json_object_get(json_object_get(s0, "settings"), "test_frequency_Hz"));
	assert_true(json_is_array(json_object_get(s0, "verdicts")));
	assert_true(json_is_null(json_object_get(s0, "fit"))); /* never fitted */
	json_t *parts = json_object_get(root, "parts");
	assert_int_equal(json_array_size(parts), 1);
	assert_string_equal(json_string_value(json_object_get(json_array_get(parts, 0), "part_number")), "IMP-1");
	json_decref(root);
	free(json);

	char err[200];
	int64_t bad[1] = { 9999 };
	FILE *f = tmpfile();
	assert_int_equal(hb_export_csv(fx->db, bad, 1, f, err, sizeof err), HB_ERR_NOTFOUND);
	assert_int_equal(hb_export_json(fx->db, bad, 1, f, err, sizeof err), HB_ERR_NOTFOUND);
	fclose(f);
}

static void test_round_trip(void **state)
{
	fixture *fx = *state;
	int64_t id = stored_sweep(fx, "RT-1");
	char *csv = export_text(fx, &id, 1, false);
	hb_import_result res;
	char err[600] = "";
	int rc = import_text(fx, csv, strlen(csv), NULL, &res, err, sizeof err);
	free(csv);
	if (rc != HB_OK)
		fail_msg("%s", err);
	hb_db_point *a, *b;
	size_t na, nb;
	points_of(fx, id, &a, &na);
	points_of(fx, res.sweep_id, &b, &nb);
	assert_int_equal(na, nb);
	/* %.10g keeps ten significant digits. */
	for (size_t i = 0; i < na; i++) {
		assert_int_equal(a[i].seq, b[i].seq);
		assert_int_equal(a[i].direction, b[i].direction);
		const double x[5] = { a[i].bias_set_a, a[i].bias_meas_a, a[i].supply_v, a[i].freq_hz, a[i].primary };
		const double y[5] = { b[i].bias_set_a, b[i].bias_meas_a, b[i].supply_v, b[i].freq_hz, b[i].primary };
		for (int k = 0; k < 5; k++)
			assert_true(fabs(x[k] - y[k]) <= 1e-9 * fabs(x[k]) + 1e-300);
		assert_true(fabs(a[i].secondary - b[i].secondary) <= 1e-9 * a[i].secondary);
	}
	hb_db_points_free(a);
	hb_db_points_free(b);

	/* A file holding two sweeps is refused, nothing stored. */
	int64_t two[2] = { id, res.sweep_id };
	size_t before = sweep_count(fx);
	csv = export_text(fx, two, 2, false);
	rc = import_text(fx, csv, strlen(csv), NULL, &res, err, sizeof err);
	free(csv);
	assert_int_equal(rc, HB_ERR_ARG);
	assert_non_null(strstr(err, "one sweep per file"));
	assert_int_equal(sweep_count(fx), before);
}

static void test_import_then_fit(void **state)
{
	fixture *fx = *state;
	/* Invented smooth knee data, enough points for the fit to run. */
	char text[4096];
	size_t len = (size_t)snprintf(text, sizeof text, "bias_A,L_H\n");
	for (int k = 0; k < 20; k++) {
		double i = 0.3 * k;
		double l = 10e-6 + 90e-6 / (1 + pow(i / 3.0, 4));
		l *= 1 + 1e-4 * sin(3.0 * k);
		len += (size_t)snprintf(text + len, sizeof text - len, "%.6g,%.8g\n", i, l);
	}
	const char *path = write_file(fx, "fit.csv", text, len);
	hb_import_options opt;
	hb_import_options_init(&opt);
	opt.part_number = "IMP-1";
	opt.serial = "F-1";
	opt.test_freq_hz = 100e3;
	hb_import_result res;
	char err[600];
	assert_int_equal(hb_import_csv(fx->db, path, &opt, &res, err, sizeof err), HB_OK);
	hb_db_fit *fit = calloc(1, sizeof *fit);
	assert_non_null(fit);
	hb_db_fit_init(fit);
	assert_int_equal(hb_db_fit_get_latest(fx->db, res.sweep_id, NULL, fit), HB_OK);
	double l0 = NAN;
	for (size_t i = 0; i < fit->n_values; i++)
		if (strcmp(fit->values[i].name, "L0") == 0)
			l0 = fit->values[i].value;
	assert_true(fabs(l0 - 100e-6) < 0.5e-6);
	free(fit);
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(fx->db, res.sweep_id, &s), HB_OK);
	assert_true(fabs(s.test_freq_hz - 100e3) < 1e-6);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_good_file),
		cmocka_unit_test(test_bad_number_stores_nothing),
		cmocka_unit_test(test_missing_column_and_empty),
		cmocka_unit_test(test_bom_semicolon_engineering),
		cmocka_unit_test(test_column_mapping),
		cmocka_unit_test(test_export_csv_shape),
		cmocka_unit_test(test_round_trip),
		cmocka_unit_test(test_import_then_fit),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
