/* tests/test_plot.c - PLplot SVG rendering of every plot type the reports use, ids, escapes, bad input */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "src/report/plot.h"

/* Invented, smooth data shaped like a gapped ferrite core (synthetic test data). */
static void bias_curve(double *i, double *l, size_t n)
{
	for (size_t k = 0; k < n; k++) {
		i[k] = 0.25 * (double)k;
		l[k] = 100e-6 / (1 + pow(i[k] / 3.0, 4));
	}
}

/* Checks the SVG is one complete document: prolog, one root, balanced
 * elements, no stray '<' in text. Not a full XML parser, but enough to
 * catch truncation and unescaped label text. */
static void check_svg(const char *svg, size_t len)
{
	assert_non_null(svg);
	assert_true(len > 1000);
	assert_int_equal(strlen(svg), len);
	assert_non_null(strstr(svg, "<svg"));
	const char *end = strstr(svg, "</svg>");
	assert_non_null(end);
	int depth = 0;
	for (const char *s = strstr(svg, "<svg"); s && s < end + 6; s++) {
		if (*s != '<')
			continue;
		if (s[1] == '/') {
			depth--;
		} else if (s[1] != '!' && s[1] != '?') {
			const char *close = strchr(s, '>');
			assert_non_null(close);
			if (close[-1] != '/')
				depth++;
		}
	}
	assert_int_equal(depth, 0);
}

static void render_ok(hb_plot *p, char **svg, size_t *len)
{
	int rc = hb_plot_render_svg(p, svg, len);
	if (rc != 0)
		fail_msg("render: %d %s", rc, hb_plot_error(p));
	check_svg(*svg, *len);
}

static void save_if_asked(const char *name, const char *svg)
{
	/* HB_PLOT_DIR=dir keeps the SVGs for a look by eye; tests never need it. */
	const char *dir = getenv("HB_PLOT_DIR");
	if (!dir)
		return;
	char path[1024];
	snprintf(path, sizeof path, "%s/%s.svg", dir, name);
	FILE *f = fopen(path, "w");
	if (f) {
		fputs(svg, f);
		fclose(f);
	}
}

static void test_inductance_against_bias(void **state)
{
	(void)state;
	enum { N = 25 };
	double i[N], l[N], fit[N];
	bias_curve(i, l, N);
	for (size_t k = 0; k < N; k++)
		fit[k] = l[k] * (1 + 0.01 * sin((double)k));
	l[7] = NAN; /* a point the meter could not take */
	hb_plot *p = hb_plot_new("Inductance against DC bias");
	assert_non_null(p);
	assert_int_equal(hb_plot_set_axis(p, HB_AXIS_X, "Bias current", "A", false), HB_OK);
	assert_int_equal(hb_plot_set_axis(p, HB_AXIS_Y, "Inductance", "H", false), HB_OK);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, i, l, N, "measured", HB_PLOT_POINTS), HB_OK);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, i, fit, N, "fit", HB_PLOT_LINE), HB_OK);
	assert_int_equal(hb_plot_add_vline(p, 2.6, "10 % drop"), HB_OK);
	assert_int_equal(hb_plot_add_vline(p, 3.4, "30 % drop"), HB_OK);
	assert_int_equal(hb_plot_add_hline(p, HB_AXIS_Y, 80e-6, "min L at Isat"), HB_OK);
	assert_int_equal(hb_plot_set_range(p, HB_AXIS_Y, 0, NAN), HB_OK);
	char *svg = NULL;
	size_t len = 0;
	render_ok(p, &svg, &len);
	/* The axis got an SI prefix: micro sign as a character reference. */
	assert_true(strstr(svg, "&#xb5;") || strstr(svg, "\xc2\xb5"));
	save_if_asked("bias", svg);
	free(svg);
	hb_plot_free(p);
}

static void test_bh_curve_and_compare(void **state)
{
	(void)state;
	enum { N = 40 };
	double h[N], b1[N], b2[N];
	for (size_t k = 0; k < N; k++) {
		h[k] = 10.0 * (double)k;
		b1[k] = 0.45 * tanh(h[k] / 120);
		b2[k] = 0.40 * tanh(h[k] / 150);
	}
	hb_plot *p = hb_plot_new("B-H, two parts");
	hb_plot_set_axis(p, HB_AXIS_X, "Field strength H", "A/m", false);
	hb_plot_set_axis(p, HB_AXIS_Y, "Flux density B", "T", false);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, h, b1, N, "part 1", HB_PLOT_LINE_POINTS), HB_OK);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, h, b2, N, "part 2", HB_PLOT_LINE_POINTS), HB_OK);
	assert_int_equal(hb_plot_add_marker(p, HB_AXIS_Y, 200, 0.45 * tanh(200.0 / 120), "knee"), HB_OK);
	char *svg;
	size_t len;
	render_ok(p, &svg, &len);
	save_if_asked("bh", svg);
	free(svg);
	hb_plot_free(p);
}

static void test_frequency_two_axes_log(void **state)
{
	(void)state;
	enum { N = 61 };
	double f[N], l[N], r[N];
	for (size_t k = 0; k < N; k++) {
		f[k] = 100 * pow(10, (double)k / 12); /* 100 Hz to 10 MHz */
		double x = f[k] / 2e6;
		l[k] = 100e-6 / fabs(1 - x * x);
		r[k] = 0.05 + 1e-6 * f[k];
	}
	hb_plot *p = hb_plot_new("Inductance and resistance against frequency");
	hb_plot_set_axis(p, HB_AXIS_X, "Frequency", "Hz", true);
	hb_plot_set_axis(p, HB_AXIS_Y, "Inductance", "H", false);
	hb_plot_set_axis(p, HB_AXIS_Y2, "Series resistance", "ohm", false);
	hb_plot_set_range(p, HB_AXIS_Y, 0, 400e-6);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, f, l, N, "L", HB_PLOT_LINE), HB_OK);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y2, f, r, N, "R", HB_PLOT_LINE), HB_OK);
	assert_int_equal(hb_plot_add_vline(p, 2e6, "self-resonance 2.00 MHz"), HB_OK);
	char *svg;
	size_t len;
	render_ok(p, &svg, &len);
	assert_non_null(strstr(svg, "&#x3a9;")); /* ohm sign on the right-hand axis */
	save_if_asked("freq", svg);
	free(svg);

	/* A log axis cannot show zero. */
	double bad_f[2] = { 0, 10 }, v[2] = { 1, 2 };
	hb_plot_add_series(p, HB_AXIS_Y, bad_f, v, 2, "bad", HB_PLOT_LINE);
	hb_plot_add_vline(p, 0, "zero");
	assert_int_equal(hb_plot_render_svg(p, &svg, &len), HB_ERR_DATA);
	assert_null(svg);
	assert_non_null(strstr(hb_plot_error(p), "logarithmic"));
	hb_plot_free(p);
}

static void test_lot_histogram(void **state)
{
	(void)state;
	enum { N = 200 };
	double l[N];
	unsigned seed = 12345;
	for (size_t k = 0; k < N; k++) {
		/* Seeded sum of uniforms: roughly normal around 100 uH. */
		double s = 0;
		for (int j = 0; j < 6; j++) {
			seed = seed * 1103515245u + 12345u;
			s += (double)((seed >> 8) & 0xffff) / 65536.0;
		}
		l[k] = 100e-6 * (1 + 0.04 * (s - 3));
	}
	hb_plot *p = hb_plot_new("Lot 2024-17: L0 of 200 parts");
	hb_plot_set_axis(p, HB_AXIS_X, "Inductance L0", "H", false);
	hb_plot_set_axis(p, HB_AXIS_Y, "Parts", "", false);
	assert_int_equal(hb_plot_add_band(p, 90e-6, 110e-6, "tolerance \xc2\xb1" "10 %"), HB_OK);
	assert_int_equal(hb_plot_add_histogram(p, l, N, 20, "parts"), HB_OK);
	char *svg;
	size_t len;
	render_ok(p, &svg, &len);
	save_if_asked("histogram", svg);
	free(svg);
	assert_int_equal(hb_plot_add_histogram(p, l, N, 0, "x"), HB_ERR_ARG);
	double none[2] = { NAN, NAN };
	assert_int_equal(hb_plot_add_histogram(p, none, 2, 5, "x"), HB_ERR_DATA);
	hb_plot_free(p);
}

static void test_ids_unique_and_labels_escaped(void **state)
{
	(void)state;
	double x[3] = { 1, 2, 3 }, y[3] = { 1, 4, 9 };
	char *svg[2];
	size_t len[2];
	for (int k = 0; k < 2; k++) {
		hb_plot *p = hb_plot_new("<script>alert('x')</script> & \"#1\"");
		hb_plot_set_axis(p, HB_AXIS_X, "Time", "s", false);
		hb_plot_set_axis(p, HB_AXIS_Y, "Count #", "", false);
		hb_plot_add_series(p, HB_AXIS_Y, x, y, 3, "a<b", HB_PLOT_LINE);
		if (k == 1)
			assert_int_equal(hb_plot_set_id(p, "fig-2"), HB_OK);
		render_ok(p, &svg[k], &len[k]);
		hb_plot_free(p);
	}
	assert_null(strstr(svg[0], "<script"));
	assert_null(strstr(svg[0], "a<b"));
	assert_non_null(strstr(svg[1], "id=\"fig-2-text-clipping"));
	/* The first plot's ids differ from the second's. */
	const char *id0 = strstr(svg[0], "id=\"");
	assert_non_null(id0);
	assert_null(strstr(svg[1], "id=\"hbplot"));
	free(svg[0]);
	free(svg[1]);
}

static void test_bad_input(void **state)
{
	(void)state;
	hb_plot *p = hb_plot_new(NULL);
	char *svg = (char *)1;
	size_t len;
	assert_int_equal(hb_plot_render_svg(p, &svg, &len), HB_ERR_DATA);
	assert_null(svg);
	double x[1] = { 1 };
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, x, x, 0, "empty", HB_PLOT_LINE), HB_ERR_ARG);
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_X, x, x, 1, "x axis", HB_PLOT_LINE), HB_ERR_ARG);
	assert_int_equal(hb_plot_add_band(p, 2, 1, "backwards"), HB_ERR_ARG);
	assert_int_equal(hb_plot_add_vline(p, NAN, "nan"), HB_ERR_ARG);
	assert_int_equal(hb_plot_set_size(p, 10, 10), HB_ERR_ARG);
	assert_int_equal(hb_plot_set_id(p, "a b"), HB_ERR_ARG);
	assert_int_equal(hb_plot_set_range(p, HB_AXIS_Y, 3, 1), HB_ERR_ARG);
	/* One point still renders (the range is widened around it). */
	assert_int_equal(hb_plot_add_series(p, HB_AXIS_Y, x, x, 1, "one", HB_PLOT_POINTS), HB_OK);
	render_ok(p, &svg, &len);
	free(svg);
	hb_plot_free(p);
	hb_plot_free(NULL);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_inductance_against_bias),
		cmocka_unit_test(test_bh_curve_and_compare),
		cmocka_unit_test(test_frequency_two_axes_log),
		cmocka_unit_test(test_lot_histogram),
		cmocka_unit_test(test_ids_unique_and_labels_escaped),
		cmocka_unit_test(test_bad_input),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
