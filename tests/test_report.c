/* tests/test_report.c - sweep, lot and part reports: key figures, escaping, plots, failure paths, headless rendering */
#include <math.h>
#include <stdbool.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cmocka.h>
#include <jansson.h>

#include "fit/hb_fit.h"
#include "src/quality/quality.h"
#include "src/io/io.h"
#include "src/report/report.h"
#include "store_fixture.h"

#define EVIL_DESCRIPTION "Test choke <script>alert(\"x\")</script> & 'quoted'"

typedef struct fixture {
	char dir[256];
	char db_path[300];
	hb_db *db;
	hb_db_part part;
	int64_t bias_id, freq_id, lot_sweeps[4];
} fixture;

/* Deterministic pseudo noise (LCG), synthetic test data only. */
static double noise(unsigned *state)
{
	*state = *state * 1103515245u + 12345u;
	return ((double)((*state >> 8) & 0xffff) / 65535.0 - 0.5) * 2e-4;
}

/* Both invented sweeps are Ls-Rs records of a unit of the fixture's part;
 * the caller fills in the rest before hb_db_sweep_begin. */
static void sweep_of_unit(fixture *fx, const char *serial, int64_t lot_id, hb_db_sweep_kind kind, hb_db_sweep *s)
{
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(fx->db, fx->part.id, serial, lot_id, &unit), HB_OK);
	hb_db_sweep_init(s);
	s->kind = kind;
	s->unit_id = unit;
	snprintf(s->measured_pair, sizeof s->measured_pair, "Ls-Rs");
}

/* Ends the sweep complete and stores its analysis, as a measurement would. */
static int end_and_analyse(fixture *fx, int64_t sweep_id)
{
	assert_int_equal(hb_db_sweep_end(fx->db, sweep_id, HB_DB_COMPLETE, NULL), HB_OK);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *an = calloc(1, sizeof *an);
	assert_non_null(an);
	int rc = hb_analysis_sweep(fx->db, sweep_id, &opt, an);
	free(an);
	return rc;
}

/* Invented knee-shaped part: L0 scaled by l0_scale, knee near 3 A. */
static int64_t add_bias_sweep(fixture *fx, const char *serial, int64_t lot_id, double l0_scale, unsigned seed)
{
	hb_db_sweep s;
	sweep_of_unit(fx, serial, lot_id, HB_DB_SWEEP_BIAS, &s);
	snprintf(s.station, sizeof s.station, "test-bench");
	snprintf(s.operator_name, sizeof s.operator_name, "tester");
	snprintf(s.lcr_idn, sizeof s.lcr_idn, "Example,LCR-1,0001,1.0");
	s.test_freq_hz = 100e3;
	s.test_level = 0.5;
	s.plan_from = 0;
	s.plan_to = 6;
	s.plan_steps = 25;
	assert_int_equal(hb_db_sweep_begin(fx->db, &s), HB_OK);
	for (int k = 0; k < 25; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = k;
		p.bias_set_a = p.bias_meas_a = 0.25 * k;
		p.supply_v = 0.03 * p.bias_meas_a;
		p.freq_hz = 100e3;
		p.primary = l0_scale * (10e-6 + 90e-6 / (1 + pow(p.bias_meas_a / 3.0, 4))) * (1 + noise(&seed));
		p.secondary = 0.1;
		assert_int_equal(hb_db_point_add(fx->db, &p), HB_OK);
	}
	assert_int_equal(end_and_analyse(fx, s.id), HB_OK);
	return s.id;
}

static int64_t add_freq_sweep(fixture *fx)
{
	hb_db_sweep s;
	sweep_of_unit(fx, "T-0001", 0, HB_DB_SWEEP_FREQUENCY, &s);
	assert_int_equal(hb_db_sweep_begin(fx->db, &s), HB_OK);
	/* (R + jwL) || C with invented values: SRF = 1/(2 pi sqrt(LC)) = 3.56 MHz. */
	hb_fit_freq_result model;
	memset(&model, 0, sizeof model);
	model.param[HB_FREQ_L] = 100e-6;
	model.param[HB_FREQ_R] = 0.05;
	model.param[HB_FREQ_C] = 20e-12;
	model.param[HB_FREQ_RP] = INFINITY;
	model.p = 3;
	unsigned seed = 7;
	for (int k = 0; k < 41; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = k;
		p.freq_hz = 1e3 * pow(10, 4.0 * k / 40);
		hb_fit_freq_eval(&model, p.freq_hz, &p.primary, &p.secondary, NULL);
		p.primary *= 1 + noise(&seed);
		p.secondary *= 1 + noise(&seed);
		assert_int_equal(hb_db_point_add(fx->db, &p), HB_OK);
	}
	end_and_analyse(fx, s.id);
	return s.id;
}

static int setup(void **state)
{
	fixture *fx = calloc(1, sizeof *fx);
	if (!fx)
		return -1;
	if (temp_store_open(fx->dir, sizeof fx->dir, "report", fx->db_path, sizeof fx->db_path, &fx->db) != 0)
		return -1;
	hb_db_part *p = &fx->part;
	hb_db_part_init(p);
	snprintf(p->part_number, sizeof p->part_number, "TST-100");
	snprintf(p->description, sizeof p->description, "%s", EVIL_DESCRIPTION);
	p->nominal_h = 100e-6;
	p->tolerance = 0.10;
	p->test_freq_hz = 100e3;
	p->test_level = 0.5;
	p->sat_current_a = 2.5;
	p->sat_drop = 0.30;
	p->dcr_max_ohm = 0.05;
	p->turns = 20;
	p->ae_m2 = 50e-6;
	p->le_m = 60e-3;
	if (hb_db_part_put(fx->db, p) != HB_OK)
		return -1;
	*state = fx;
	fx->bias_id = add_bias_sweep(fx, "T-0001", 0, 1.0, 1);
	fx->freq_id = add_freq_sweep(fx);

	/* A lot of four with a plan; the fourth unit is far above tolerance. */
	int64_t lot_id = 0;
	assert_int_equal(hb_db_lot_ensure(fx->db, p->id, "LOT-T1", &lot_id), HB_OK);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(fx->db, lot_id, &lot), HB_OK);
	lot.lot_size = 20;
	lot.aql = 1.0;
	snprintf(lot.inspection_level, sizeof lot.inspection_level, "II");
	snprintf(lot.severity, sizeof lot.severity, "normal");
	snprintf(lot.code_letter, sizeof lot.code_letter, "C");
	lot.sample_size = 5;
	lot.accept_number = 0;
	lot.reject_number = 1;
	lot.decision = HB_DB_LOT_REJECT;
	assert_int_equal(hb_db_lot_update(fx->db, &lot), HB_OK);
	static const double scale[4] = { 1.0, 1.02, 0.98, 1.4 };
	for (int u = 0; u < 4; u++) {
		char serial[32];
		snprintf(serial, sizeof serial, "L1-%04d", u + 1);
		fx->lot_sweeps[u] = add_bias_sweep(fx, serial, lot_id, scale[u], 100 + (unsigned)u);
		hb_db_inspection rec;
		hb_db_inspection_init(&rec);
		rec.lot_id = lot_id;
		rec.sweep_id = fx->lot_sweeps[u];
		hb_db_sweep sw;
		assert_int_equal(hb_db_sweep_get(fx->db, rec.sweep_id, &sw), HB_OK);
		rec.unit_id = sw.unit_id;
		rec.sequence = u + 1;
		rec.outcome = u == 3 ? HB_DB_FAIL : HB_DB_PASS;
		assert_int_equal(hb_db_inspection_put(fx->db, &rec), HB_OK);
	}
	return 0;
}

static int teardown(void **state)
{
	fixture *fx = *state;
	int rc = temp_store_remove(fx->dir, fx->db);
	free(fx);
	return rc;
}

/* Runs a report into a malloc'd string. */
typedef enum { R_SWEEP, R_LOT, R_PART } report_kind;

static char *report_text(fixture *fx, report_kind kind, int64_t id, const char *path_out)
{
	char path[400];
	snprintf(path, sizeof path, "%s/%s", fx->dir, path_out);
	FILE *f = fopen(path, "w+");
	assert_non_null(f);
	char err[300] = "";
	int rc = kind == R_SWEEP ? hb_report_sweep(fx->db, id, f, err, sizeof err) :
		 kind == R_LOT   ? hb_report_lot(fx->db, NULL, "LOT-T1", f, err, sizeof err) :
				   hb_report_part(fx->db, "TST-100", f, err, sizeof err);
	if (rc != HB_OK)
		fail_msg("report: %d %s", rc, err);
	long len = 0;
	char *buf = stream_read_back(f, &len);
	assert_true(len > 1000);
	return buf;
}

/* PLplot writes SVG text as character references (&#x4c;&#x30;): the
 * ASCII ones decoded, so plot labels can be searched like page text. */
static char *decode_char_refs(const char *s)
{
	char *out = malloc(strlen(s) + 1), *o = out;
	assert_non_null(out);
	while (*s) {
		unsigned v;
		int used = 0;
		if (s[0] == '&' && s[1] == '#' && s[2] == 'x' && sscanf(s + 3, "%x;%n", &v, &used) == 1 && used > 0 &&
		    v > 0 && v < 0x80) {
			*o++ = (char)v;
			s += 3 + used;
		} else {
			*o++ = *s++;
		}
	}
	*o = '\0';
	return out;
}

static void assert_contains(const char *hay, const char *needle)
{
	if (strstr(hay, needle))
		return;
	char *plain = decode_char_refs(hay);
	bool found = strstr(plain, needle) != NULL;
	free(plain);
	if (!found)
		fail_msg("report lacks \"%s\"", needle);
}

static void assert_self_contained(const char *html)
{
	/* Nothing is fetched: no scripts, no external links or images. */
	assert_null(strstr(html, "<script"));
	assert_null(strstr(html, "<link"));
	assert_null(strstr(html, "src=\"http"));
	assert_null(strstr(html, "href=\"http"));
	assert_contains(html, "</html>");
}

/* The cells of the fit table's row for value `name`, tags stripped. */
static void fit_row(const char *html, const char *name, char cells[5][256])
{
	char key[80];
	/* the name cell is one word, so it carries the no-wrap class of identifiers */
	snprintf(key, sizeof key, "<tr><td class=\"nw\">%s</td>", name);
	const char *row = strstr(html, key);
	if (!row)
		fail_msg("no fit-table row for %s", name);
	const char *end = strstr(row, "</tr>");
	assert_non_null(end);
	const char *p = row;
	for (int c = 0; c < 5; c++) {
		p = strstr(p, "<td");
		assert_true(p && p < end);
		p = strchr(p, '>') + 1;
		const char *q = strstr(p, "</td>");
		assert_non_null(q);
		snprintf(cells[c], 256, "%.*s", (int)(q - p), p);
		p = q;
	}
}

static void test_sweep_report(void **state)
{
	fixture *fx = *state;
	char *html = report_text(fx, R_SWEEP, fx->bias_id, "sweep.html");
	char id[64];
	snprintf(id, sizeof id, "sweep %lld", (long long)fx->bias_id);
	assert_contains(html, id);
	assert_contains(html, "TST-100");
	assert_contains(html, "T-0001");
	assert_contains(html, "incremental");
	assert_contains(html, "Example,LCR-1,0001,1.0");
	assert_contains(html, "test-bench");
	assert_contains(html, "tester");
	assert_contains(html, HB_FIT_CODE_VERSION);
	/* L0 of the invented curve is 10 + 90 = 100 uH at I = 0 (the formula in
	 * add_bias_sweep): read from the L0 row of the fit table, Result cell,
	 * not from anywhere on the page (SVG coordinates hold such digits too). */
	char cells[5][256];
	fit_row(html, "L0", cells);
	double l0_uh = 0;
	char unit[8] = "";
	assert_int_equal(sscanf(cells[2], "%lf %7s", &l0_uh, unit), 2);
	assert_string_equal(unit, "uH");
	/* the invented noise is 1e-4 relative per point */
	assert_true(fabs(l0_uh - 100.0) < 0.1);
	/* printed with its uncertainty */
	assert_true(strcmp(cells[3], "-") != 0 && strstr(cells[3], "H") != NULL);
	/* N I / le is the applied field per length, never called the core field */
	fit_row(html, "H_rated", cells);
	assert_non_null(strstr(cells[1], "applied field per length N I / le"));
	assert_non_null(strstr(cells[1], "not the field in the core"));
	assert_contains(html, "Applied field per length N I / le");
	assert_null(strstr(html, "Field strength H"));
	assert_contains(html, "verdict pass");
	assert_contains(html, "Margin");
	assert_contains(html, "<svg");
	assert_contains(html, "B-H");
	/* The user's text is escaped, never markup. */
	assert_contains(html, "&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &#39;quoted&#39;");
	assert_self_contained(html);
	free(html);
}

/*
 * A sweep stopped at 2 A on the invented part L = 10 + 90 / (1 + (I/3)^4) uH:
 * its 10 % drop lies at 3 x 0.125^(1/4) = 1.78 A, inside; its 20 % and 30 %
 * drops at 2.19 and 2.52 A (the same closed form), beyond. Those carry no
 * number anywhere: text, analysis JSON, exported JSON and the HTML report.
 */
static void test_short_sweep_honest(void **state)
{
	fixture *fx = *state;
	hb_db_sweep s;
	sweep_of_unit(fx, "T-0002", 0, HB_DB_SWEEP_BIAS, &s);
	s.test_freq_hz = 100e3;
	s.plan_from = 0;
	s.plan_to = 2;
	s.plan_steps = 9;
	assert_int_equal(hb_db_sweep_begin(fx->db, &s), HB_OK);
	unsigned seed = 3;
	for (int k = 0; k < 9; k++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = k;
		p.bias_set_a = p.bias_meas_a = 0.25 * k;
		p.supply_v = 0.03 * p.bias_meas_a;
		p.freq_hz = 100e3;
		p.primary = (10e-6 + 90e-6 / (1 + pow(p.bias_meas_a / 3.0, 4))) * (1 + noise(&seed));
		p.secondary = 0.1;
		assert_int_equal(hb_db_point_add(fx->db, &p), HB_OK);
	}
	assert_int_equal(hb_db_sweep_end(fx->db, s.id, HB_DB_COMPLETE, NULL), HB_OK);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *an = calloc(1, sizeof *an);
	assert_non_null(an);
	assert_int_equal(hb_analysis_sweep(fx->db, s.id, &opt, an), HB_OK);
	const char *want = "beyond the data (highest bias 2.00 A)";

	/* analysis JSON: null value, null std_err, the reason beside them */
	json_t *j = hb_analysis_summary_json(an);
	json_t *v = json_object_get(json_object_get(j, "values"), "I_drop30");
	assert_non_null(v);
	assert_true(json_is_null(json_object_get(v, "value")));
	assert_true(json_is_null(json_object_get(v, "std_err")));
	assert_string_equal(json_string_value(json_object_get(v, "reason")), want);
	v = json_object_get(json_object_get(j, "values"), "I_drop10");
	assert_true(fabs(json_real_value(json_object_get(v, "value")) - 3 * pow(0.125, 0.25)) < 0.05);
	assert_null(json_object_get(v, "reason"));
	assert_true(json_is_true(json_object_get(j, "cp_corrected")));
	json_decref(j);

	/* text: the words, not a number */
	FILE *t = tmpfile();
	assert_non_null(t);
	hb_analysis_print(t, an);
	long len = 0;
	char *text = stream_read_back(t, &len);
	assert_non_null(strstr(text, "current at -30 % L           beyond the data (highest bias 2.00 A)"));
	/* the part's frequency sweep (unit T-0001, 20 pF invented) gives Cp */
	assert_non_null(strstr(text, "cp_corrected: true"));
	free(text);
	free(an);

	/* exported JSON, from the store */
	t = tmpfile();
	assert_non_null(t);
	char err[300] = "";
	assert_int_equal(hb_export_json(fx->db, &s.id, 1, t, err, sizeof err), HB_OK);
	text = stream_read_back(t, &len);
	json_t *root = json_loads(text, 0, NULL);
	assert_non_null(root);
	json_t *vals = json_object_get(json_object_get(json_array_get(json_object_get(root, "sweeps"), 0), "fit"),
				       "values");
	v = json_object_get(vals, "I_drop20");
	assert_non_null(v);
	assert_true(json_is_null(json_object_get(v, "value")));
	assert_string_equal(json_string_value(json_object_get(v, "reason")), want);
	json_decref(root);
	free(text);

	/* HTML: the reason in the Result cell, no uncertainty, no drop line */
	char *html = report_text(fx, R_SWEEP, s.id, "short.html");
	char cells[5][256];
	fit_row(html, "I_drop30", cells);
	assert_string_equal(cells[2], want);
	assert_string_equal(cells[3], "-");
	fit_row(html, "I_drop10", cells);
	assert_non_null(strstr(cells[2], " A"));
	assert_contains(html, "-10 %");
	char *plain = decode_char_refs(html);
	assert_null(strstr(plain, "-30 %</"));
	free(plain);
	free(html);
}

/* The knee law cannot follow the lot's knee-shaped part within its
 * 1e-4 noise? Whatever the fit finds, a model flagged misfit is named
 * before its values and each of its rows carries the mark. */
static void test_misfit_marked(void **state)
{
	fixture *fx = *state;
	hb_db_fit *fit = calloc(1, sizeof *fit);
	assert_non_null(fit);
	hb_db_fit_init(fit);
	assert_int_equal(hb_db_fit_get_latest(fx->db, fx->bias_id, NULL, fit), HB_OK);
	/* mark the stored knee fit misfit, as the analysis would for a part the law misses */
	snprintf(fit->flags, sizeof fit->flags, "knee-misfit knee-cause:law-mismatch");
	for (size_t i = 0; i < fit->n_values; i++)
		if (strcmp(fit->values[i].name, "knee.noise_ratio") == 0)
			fit->values[i].value = 7.5;
	assert_int_equal(hb_db_fit_put(fx->db, fit), HB_OK);
	free(fit);
	char *html = report_text(fx, R_SWEEP, fx->bias_id, "misfit.html");
	assert_contains(html, "MISFIT: the knee model&#39;s residuals are 7.5 x the reading noise");
	assert_contains(html, "1. current moving during the readings: not checked");
	assert_contains(html, "3. law mismatch: what remains");
	char cells[5][256];
	fit_row(html, "knee.I_drop10", cells);
	assert_non_null(strstr(cells[2], "(misfit)"));
	assert_non_null(strstr(cells[1], "model misfit: residuals 7.5 x the reading noise"));
	/* measured values stay unmarked */
	fit_row(html, "I_drop10", cells);
	assert_null(strstr(cells[2], "misfit"));
	free(html);
}

static void test_frequency_report(void **state)
{
	fixture *fx = *state;
	char *html = report_text(fx, R_SWEEP, fx->freq_id, "freq.html");
	assert_contains(html, "frequency");
	assert_contains(html, ">srf<");
	assert_contains(html, "SRF 3.5");
	/* Q: the highest measured X/R, no higher than the invented model's
	 * readings allow (Q = X/R of (R + jwL) || C at the sweep's 41
	 * frequencies, circuit theory; noise 1e-4 on each part) */
	hb_fit_freq_result model;
	memset(&model, 0, sizeof model);
	model.param[HB_FREQ_L] = 100e-6;
	model.param[HB_FREQ_R] = 0.05;
	model.param[HB_FREQ_C] = 20e-12;
	model.param[HB_FREQ_RP] = INFINITY;
	model.p = 3;
	double qmax = 0;
	for (int k = 0; k < 41; k++) {
		double q;
		hb_fit_freq_eval(&model, 1e3 * pow(10, 4.0 * k / 40), NULL, NULL, &q);
		if (q > qmax)
			qmax = q;
	}
	char cells[5][256];
	fit_row(html, "q_max_measured", cells);
	double q = 0;
	assert_int_equal(sscanf(cells[2], "%lf", &q), 1);
	assert_true(q > 0 && q <= qmax * 1.001);
	assert_null(strstr(html, "<tr><td>q_peak</td>"));
	assert_contains(html, "<svg");
	assert_self_contained(html);
	free(html);
}

static void test_lot_report(void **state)
{
	fixture *fx = *state;
	char *html = report_text(fx, R_LOT, 0, "lot.html");
	assert_contains(html, "LOT-T1");
	assert_contains(html, "code letter C: sample n = 5, accept with Ac = 0, reject with Re = 1");
	/* A rejected lot is styled like a failed unit. */
	assert_contains(html, "verdict fail\">reject");
	assert_contains(html, "L1-0004");
	assert_contains(html, "Cpk");
	assert_contains(html, "<tr class=\"fail\">");
	for (int u = 0; u < 4; u++) {
		char cell[64];
		snprintf(cell, sizeof cell, "<td class=\"num\">%lld</td>", (long long)fx->lot_sweeps[u]);
		assert_contains(html, cell);
	}
	assert_contains(html, "4 tested: 3 conforming, 1 nonconforming");
	assert_contains(html, "<svg");
	assert_self_contained(html);
	free(html);
}

static void test_part_report(void **state)
{
	fixture *fx = *state;
	char *html = report_text(fx, R_PART, 0, "part.html");
	assert_contains(html, "Part history: TST-100");
	assert_contains(html, "lot LOT-T1 (reject)");
	assert_contains(html, "all units");
	assert_contains(html, "L0 in measurement order");
	assert_contains(html, "&lt;script&gt;");
	assert_self_contained(html);
	free(html);
}

static void test_plots(void **state)
{
	fixture *fx = *state;
	char *svg = NULL, err[200];
	assert_int_equal(hb_report_bias_svg(fx->db, fx->bias_id, &svg, err, sizeof err), HB_OK);
	assert_non_null(strstr(svg, "</svg>"));
	free(svg);
	assert_int_equal(hb_report_bh_svg(fx->db, fx->bias_id, &svg, err, sizeof err), HB_OK);
	free(svg);
	assert_int_equal(hb_report_freq_svg(fx->db, fx->freq_id, &svg, err, sizeof err), HB_OK);
	free(svg);
	/* The wrong kind of sweep is refused with a message. */
	assert_int_equal(hb_report_freq_svg(fx->db, fx->bias_id, &svg, err, sizeof err), HB_ERR_ARG);
	assert_null(svg);
	assert_non_null(strstr(err, "bias sweep"));
	assert_int_equal(hb_report_bias_svg(fx->db, fx->freq_id, &svg, err, sizeof err), HB_ERR_ARG);

	int64_t ids[3] = { fx->lot_sweeps[0], fx->lot_sweeps[1], fx->lot_sweeps[3] };
	assert_int_equal(hb_report_compare_svg(fx->db, ids, 3, &svg), HB_OK);
	assert_contains(svg, "L1-0004");
	free(svg);
	int64_t mixed[2] = { fx->bias_id, fx->freq_id };
	assert_int_equal(hb_report_compare_svg(fx->db, mixed, 2, &svg), HB_ERR_ARG);
	assert_null(svg);
	assert_int_equal(hb_report_compare_svg(fx->db, ids, 0, &svg), HB_ERR_ARG);
	int64_t missing[1] = { 9999 };
	assert_int_equal(hb_report_compare_svg(fx->db, missing, 1, &svg), HB_ERR_NOTFOUND);

	double none[2] = { NAN, NAN };
	assert_int_equal(hb_report_histogram_svg(none, 2, 1, 2, "x", &svg, err, sizeof err), HB_ERR_DATA);
}

static void test_failures(void **state)
{
	fixture *fx = *state;
	char err[300] = "";
	FILE *f = tmpfile();
	assert_non_null(f);
	assert_int_equal(hb_report_sweep(fx->db, 9999, f, err, sizeof err), HB_ERR_NOTFOUND);
	assert_non_null(strstr(err, "9999"));
	assert_int_equal(hb_report_lot(fx->db, NULL, "NO-SUCH-LOT", f, err, sizeof err), HB_ERR_NOTFOUND);
	assert_non_null(strstr(err, "NO-SUCH-LOT"));
	assert_int_equal(hb_report_lot(fx->db, "NO-PART", "LOT-T1", f, err, sizeof err), HB_ERR_NOTFOUND);
	assert_int_equal(hb_report_part(fx->db, "NO-PART", f, err, sizeof err), HB_ERR_NOTFOUND);
	fclose(f);

	/* A lot code shared by two parts needs the part named. */
	hb_db_part other;
	hb_db_part_init(&other);
	snprintf(other.part_number, sizeof other.part_number, "TST-200");
	assert_int_equal(hb_db_part_put(fx->db, &other), HB_OK);
	int64_t lot_id;
	assert_int_equal(hb_db_lot_ensure(fx->db, other.id, "LOT-T1", &lot_id), HB_OK);
	hb_db_lot lot;
	assert_int_equal(hb_report_find_lot(fx->db, NULL, "LOT-T1", &lot, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "--part"));
	assert_int_equal(hb_report_find_lot(fx->db, "TST-100", "LOT-T1", &lot, err, sizeof err), HB_OK);

	/* A full disk is an error, not a silently cut record. */
	FILE *full = fopen("/dev/full", "w");
	if (full) {
		setvbuf(full, NULL, _IONBF, 0);
		assert_int_equal(hb_report_sweep(fx->db, fx->bias_id, full, err, sizeof err), HB_ERR_IO);
		fclose(full);
	}
}

static long file_size(const char *path)
{
	struct stat st;
	return stat(path, &st) == 0 ? (long)st.st_size : -1;
}

/* The page renders in a real browser engine: the DOM holds the figures and
 * the screenshot is not an empty page. Skipped without chromium (the
 * check target installs it through scripts/ensure-deps). */
static void test_renders_in_chromium(void **state)
{
	fixture *fx = *state;
	const char *chromium = "/usr/bin/chromium";
	if (access(chromium, X_OK) != 0) {
		print_message("chromium not installed: rendering check skipped\n");
		skip();
	}
	char *html = report_text(fx, R_SWEEP, fx->bias_id, "render.html");
	free(html);
	char cmd[2400], dom[400], png[400];
	snprintf(dom, sizeof dom, "%s/dom.html", fx->dir);
	snprintf(png, sizeof png, "%s/shot.png", fx->dir);
	const char *flags = "--headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
			    "--disable-background-networking --disable-component-update --disable-sync";
	snprintf(cmd, sizeof cmd, "timeout 120 %s %s --user-data-dir='%s/profile1' --dump-dom 'file://%s/render.html' "
		 ">'%s' 2>/dev/null", chromium, flags, fx->dir, fx->dir, dom);
	assert_int_equal(system(cmd), 0);
	snprintf(cmd, sizeof cmd, "timeout 120 %s %s --user-data-dir='%s/profile2' --window-size=1200,1600 "
		 "--screenshot='%s' 'file://%s/render.html' >/dev/null 2>&1", chromium, flags, fx->dir, png, fx->dir);
	assert_int_equal(system(cmd), 0);

	FILE *f = fopen(dom, "r");
	assert_non_null(f);
	static char buf[1 << 20];
	size_t n = fread(buf, 1, sizeof buf - 1, f);
	buf[n] = '\0';
	fclose(f);
	assert_contains(buf, "TST-100");
	assert_contains(buf, "<svg");
	assert_contains(buf, "Verdicts against the specification");

	/* PNG signature (ISO/IEC 15948), and a size a blank page never reaches:
	 * a white 1200 x 1600 page compresses to a few kB. */
	f = fopen(png, "rb");
	assert_non_null(f);
	unsigned char sig[8];
	assert_int_equal(fread(sig, 1, 8, f), 8);
	fclose(f);
	assert_memory_equal(sig, "\x89PNG\r\n\x1a\n", 8);
	assert_true(file_size(png) > 40 * 1024);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_sweep_report),
		cmocka_unit_test(test_frequency_report),
		cmocka_unit_test(test_lot_report),
		cmocka_unit_test(test_part_report),
		cmocka_unit_test(test_plots),
		cmocka_unit_test(test_renders_in_chromium),
		cmocka_unit_test(test_failures),
		/* last: they add a sweep and a fit the reports above do not expect */
		cmocka_unit_test(test_short_sweep_honest),
		cmocka_unit_test(test_misfit_marked),
	};
	return cmocka_run_group_tests(tests, setup, teardown);
}
