/* tests/test_export.c - src/io/ (import.c, export.c, json.c, csv_write.c) and show/export in src/cli/: CSV import, the one CSV writer, show --json against export --json, round trip */
#include <math.h>
#include <stdbool.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <fcntl.h>
#include <unistd.h>

#include <cmocka.h>
#include <jansson.h>

#include "src/cli/cli.h"
#include "src/io/io.h"
#include "src/quality/quality.h"
#include "store_fixture.h"

typedef struct fixture {
	char dir[256];
	char path[400];
	hb_db *db;
	int64_t part_id;
} fixture;

static int setup(void **state)
{
	fixture *fx = calloc(1, sizeof *fx);
	if (!fx)
		return -1;
	if (temp_store_open(fx->dir, sizeof fx->dir, "export", fx->path, sizeof fx->path, &fx->db) != 0)
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
	/* The writer's numbers read back as the very doubles stored. */
	for (size_t i = 0; i < na; i++) {
		assert_int_equal(a[i].seq, b[i].seq);
		assert_int_equal(a[i].direction, b[i].direction);
		const double x[6] = { a[i].bias_set_a, a[i].bias_meas_a, a[i].supply_v, a[i].freq_hz, a[i].primary,
				      a[i].secondary };
		const double y[6] = { b[i].bias_set_a, b[i].bias_meas_a, b[i].supply_v, b[i].freq_hz, b[i].primary,
				      b[i].secondary };
		for (int k = 0; k < 6; k++)
			if (x[k] != y[k])
				fail_msg("point %zu, column %d: exported %.17g came back as %.17g", i, k, x[k], y[k]);
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

/* ---------------- the one CSV writer ---------------- */

static void test_csv_writer_numbers_and_quoting(void **state)
{
	(void)state;
	char buf[40];
	/* The shortest text that is the same double, and 17 digits when it takes them. */
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, 0.1), "0.1");
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, 100e-6), "0.0001");
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, 1.0 / 3.0), "0.3333333333333333");
	volatile double tenth = 0.1; /* computed at run time, not folded by the compiler */
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, tenth + 0.2), "0.30000000000000004");
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, -2.5e-12), "-2.5e-12");
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, NAN), "");
	assert_string_equal(hb_csv_format_num(buf, sizeof buf, INFINITY), "");
	/* Awkward doubles (a neighbour of 0.1, a subnormal, the largest) read back exactly. */
	const double hard[] = { nextafter(0.1, 1.0), 4.9406564584124654e-324, 1.7976931348623157e308,
				123456789.12345679, 1e23 };
	for (size_t i = 0; i < sizeof hard / sizeof hard[0]; i++) {
		hb_csv_format_num(buf, sizeof buf, hard[i]);
		if (strtod(buf, NULL) != hard[i])
			fail_msg("%.17g written as %s", hard[i], buf);
	}

	FILE *f = tmpfile();
	assert_non_null(f);
	hb_csv_writer w;
	hb_csv_begin(&w, f);
	hb_csv_text(&w, "plain");
	hb_csv_text(&w, "a,b");
	hb_csv_text(&w, "say \"hi\"");
	hb_csv_text(&w, "two\nlines");
	hb_csv_text(&w, " padded");
	hb_csv_text(&w, NULL);
	hb_csv_num(&w, 0.5);
	hb_csv_int(&w, -7);
	hb_csv_row_end(&w);
	assert_int_equal(hb_csv_end(&w), HB_OK);
	char *text = stream_read_back(f, NULL);
	assert_string_equal(text, "plain,\"a,b\",\"say \"\"hi\"\"\",\"two\nlines\",\" padded\",,0.5,-7\r\n");
	free(text);
}

/* ---------------- show --json against export --json ---------------- */

/* Runs a command in this process with --db of the fixture, its stdout caught. */
static char *run_cmd(fixture *fx, hb_command_fn fn, int argc, ...)
{
	char *argv[8];
	va_list ap;
	va_start(ap, argc);
	for (int i = 0; i < argc; i++)
		argv[i] = va_arg(ap, char *);
	va_end(ap);
	argv[argc] = NULL;
	hb_global.db_path = fx->path;
	char path[512];
	snprintf(path, sizeof path, "%s/stdout.txt", fx->dir);
	int fd = open(path, O_RDWR | O_CREAT | O_TRUNC, 0600);
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
	char *out = calloc(1, (size_t)len + 1);
	assert_non_null(out);
	assert_int_equal(read(fd, out, (size_t)len), len);
	close(fd);
	unlink(path);
	if (rc != HB_EXIT_OK)
		fail_msg("%s exited %d", argv[0], rc);
	return out;
}

static json_t *parse(const char *text, const char *what)
{
	json_error_t jerr;
	json_t *j = json_loads(text, 0, &jerr);
	if (!j)
		fail_msg("%s is not JSON: %s", what, jerr.text);
	return j;
}

/* The path of the first place where a and b differ (keys, types, values), or "" if none. */
static bool json_diff(const json_t *a, const json_t *b, char *path, size_t cap)
{
	size_t len = strlen(path);
	if (json_typeof(a) != json_typeof(b)) {
		snprintf(path + len, cap - len, " (a %d, b %d: types differ)", json_typeof(a), json_typeof(b));
		return true;
	}
	if (json_is_object(a)) {
		const char *key;
		json_t *v;
		json_object_foreach((json_t *)a, key, v)
		{
			json_t *w = json_object_get(b, key);
			snprintf(path + len, cap - len, ".%s", key);
			if (!w) {
				snprintf(path + strlen(path), cap - strlen(path), " (only in show)");
				return true;
			}
			if (json_diff(v, w, path, cap))
				return true;
		}
		json_object_foreach((json_t *)b, key, v)
		{
			if (!json_object_get(a, key)) {
				snprintf(path + len, cap - len, ".%s (only in export)", key);
				return true;
			}
		}
		path[len] = '\0';
		return false;
	}
	if (json_is_array(a)) {
		if (json_array_size(a) != json_array_size(b)) {
			snprintf(path + len, cap - len, " (%zu against %zu items)", json_array_size(a), json_array_size(b));
			return true;
		}
		for (size_t i = 0; i < json_array_size(a); i++) {
			snprintf(path + len, cap - len, "[%zu]", i);
			if (json_diff(json_array_get(a, i), json_array_get(b, i), path, cap))
				return true;
		}
		path[len] = '\0';
		return false;
	}
	if (!json_equal((json_t *)a, (json_t *)b)) {
		snprintf(path + len, cap - len, " (values differ)");
		return true;
	}
	return false;
}

/* show --json ID and the sweep of export --json ID, both parsed: must be one object. */
static json_t *show_and_export_agree(fixture *fx, int64_t id)
{
	char ids[32];
	snprintf(ids, sizeof ids, "%lld", (long long)id);
	char *show = run_cmd(fx, hb_cmd_show, 3, "show", ids, "--json");
	char *export = run_cmd(fx, hb_cmd_export, 3, "export", ids, "--json");
	json_t *s = parse(show, "show --json");
	json_t *e = parse(export, "export --json");
	free(show);
	free(export);
	json_t *sweeps = json_object_get(e, "sweeps");
	assert_int_equal(json_array_size(sweeps), 1);
	json_t *es = json_array_get(sweeps, 0);
	char path[512] = "sweep";
	if (json_diff(s, es, path, sizeof path))
		fail_msg("show --json and export --json of sweep %lld differ at %s", (long long)id, path);
	assert_true(json_equal(s, es));
	json_decref(e);
	return s;
}

static void test_show_json_is_export_json(void **state)
{
	fixture *fx = *state;
	/* A bias sweep fitted and judged, so that fit and verdicts are compared too. */
	int64_t bias = stored_sweep(fx, "SJ-1");
	hb_analysis_options aopt;
	hb_analysis_options_init(&aopt);
	hb_analysis_summary *an = calloc(1, sizeof *an);
	assert_non_null(an);
	assert_int_equal(hb_analysis_sweep(fx->db, bias, &aopt, an), HB_OK);
	free(an);
	json_t *s = show_and_export_agree(fx, bias);
	json_t *fit = json_object_get(s, "fit");
	assert_true(json_is_object(fit));
	json_t *l0 = json_object_get(json_object_get(fit, "values"), "L0");
	assert_true(json_is_object(l0));
	assert_true(json_is_real(json_object_get(l0, "value")));
	assert_string_equal(json_string_value(json_object_get(l0, "unit")), "H");
	assert_true(json_object_get(l0, "std_err") != NULL);
	assert_true(json_array_size(json_object_get(s, "verdicts")) > 0);
	assert_non_null(json_object_get(json_array_get(json_object_get(s, "verdicts"), 0), "outcome"));
	/* The keys name their units, and the values are the stored ones to the last bit. */
	json_t *p3 = json_array_get(json_object_get(s, "points"), 3);
	assert_non_null(p3);
	assert_true(json_real_value(json_object_get(p3, "bias_set_A")) == 1.5);
	assert_true(json_real_value(json_object_get(p3, "bias_measured_A")) == 1.5 * 0.999 + 1.234567e-4);
	assert_true(json_real_value(json_object_get(p3, "R_ohm")) == 0.12345678901);
	assert_true(json_is_real(json_object_get(p3, "L_H")));
	assert_true(json_is_real(json_object_get(p3, "frequency_Hz")));
	assert_null(json_object_get(p3, "secondary"));
	assert_null(json_object_get(p3, "bias_A"));
	assert_string_equal(json_string_value(json_object_get(json_object_get(s, "settings"), "measured_pair")), "Ls-Rs");
	assert_true(json_is_object(json_object_get(s, "supply_record")));
	json_decref(s);
}

static void test_show_json_is_export_json_z_theta(void **state)
{
	fixture *fx = *state;
	int64_t unit;
	assert_int_equal(hb_db_unit_ensure(fx->db, fx->part_id, "ZT-1", 0, &unit), HB_OK);
	hb_db_sweep sw;
	hb_db_sweep_init(&sw);
	sw.kind = HB_DB_SWEEP_FREQUENCY;
	sw.unit_id = unit;
	sw.bias_a = 0;
	snprintf(sw.measured_pair, sizeof sw.measured_pair, "Z-theta");
	assert_int_equal(hb_db_sweep_begin(fx->db, &sw), HB_OK);
	double theta[8];
	for (int k = 0; k < 8; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = sw.id;
		p.seq = k;
		p.bias_set_a = p.bias_meas_a = 0;
		p.freq_hz = 1e3 * pow(10, 0.5 * k);
		p.primary = 2 * M_PI * p.freq_hz * 100e-6 * (1 + 1e-3 * k);
		theta[k] = p.secondary = 89.123456789012345 - 0.37 * k; /* degrees, more digits than %.10g kept */
		p.t_s = 0.2 * k;
		assert_int_equal(hb_db_point_add(fx->db, &p), HB_OK);
	}
	assert_int_equal(hb_db_sweep_end(fx->db, sw.id, HB_DB_COMPLETE, NULL), HB_OK);
	hb_analysis_options aopt;
	hb_analysis_options_init(&aopt);
	hb_analysis_summary *an = calloc(1, sizeof *an);
	assert_non_null(an);
	(void)hb_analysis_sweep(fx->db, sw.id, &aopt, an); /* fitted or not, both must say the same */
	free(an);
	json_t *s = show_and_export_agree(fx, sw.id);
	json_t *pts = json_object_get(s, "points");
	assert_int_equal(json_array_size(pts), 8);
	for (size_t k = 0; k < 8; k++) {
		json_t *p = json_array_get(pts, k);
		assert_null(json_object_get(p, "secondary"));
		if (json_real_value(json_object_get(p, "theta_deg")) != theta[k])
			fail_msg("point %zu: theta_deg %.17g, stored %.17g", k, json_real_value(json_object_get(p, "theta_deg")),
				 theta[k]);
		assert_true(json_is_real(json_object_get(p, "Z_ohm")));
	}
	json_decref(s);

	/* show --csv names the columns as export --csv does. */
	char ids[32];
	snprintf(ids, sizeof ids, "%lld", (long long)sw.id);
	char *csv = run_cmd(fx, hb_cmd_show, 3, "show", ids, "--csv");
	assert_non_null(strstr(csv, ",frequency_Hz,Z_ohm,theta_deg,reading_status,"));
	free(csv);
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
		cmocka_unit_test(test_csv_writer_numbers_and_quoting),
		cmocka_unit_test(test_show_json_is_export_json),
		cmocka_unit_test(test_show_json_is_export_json_z_theta),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
