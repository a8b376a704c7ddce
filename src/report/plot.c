/* src/report/plot.c - engineering plots described: title, axes, series, histograms, limit lines, bands, markers */
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_histogram.h>
#include <plplot.h>

#include "plot.h"
#include "plot_internal.h"

static unsigned plot_counter;

int plot_set_error(hb_plot *p, int status, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(p->err, sizeof p->err, fmt, ap);
	va_end(ap);
	return status;
}

/* PLplot reads '#' as the start of an escape sequence; a label's '#' is text. */
static char *label_dup(const char *s)
{
	if (!s)
		s = "";
	size_t n = 0;
	for (const char *c = s; *c; c++)
		n += *c == '#' ? 2 : 1;
	char *out = malloc(n + 1);
	if (!out)
		return NULL;
	char *o = out;
	for (const char *c = s; *c; c++) {
		*o++ = *c;
		if (*c == '#')
			*o++ = '#';
	}
	*o = '\0';
	return out;
}

hb_plot *hb_plot_new(const char *title)
{
	hb_plot *p = calloc(1, sizeof *p);
	if (!p)
		return NULL;
	p->title = label_dup(title);
	if (!p->title) {
		free(p);
		return NULL;
	}
	p->width = 720;
	p->height = 450;
	snprintf(p->id, sizeof p->id, "hbplot%u", ++plot_counter);
	for (int i = 0; i < 3; i++) {
		p->axis[i].fixed_min = p->axis[i].fixed_max = NAN;
		p->axis[i].on = i != HB_AXIS_Y2;
	}
	return p;
}

void hb_plot_free(hb_plot *p)
{
	if (!p)
		return;
	for (size_t i = 0; i < p->n_series; i++) {
		free(p->series[i].x);
		free(p->series[i].y);
		free(p->series[i].label);
	}
	free(p->series);
	for (size_t i = 0; i < p->n_deco; i++)
		free(p->deco[i].label);
	free(p->deco);
	for (int i = 0; i < 3; i++) {
		free(p->axis[i].quantity);
		free(p->axis[i].unit);
	}
	free(p->title);
	free(p);
}

const char *hb_plot_error(const hb_plot *p)
{
	return p ? p->err : "no plot";
}

int hb_plot_set_size(hb_plot *p, int width, int height)
{
	if (!p)
		return HB_ERR_ARG;
	if (width < 100 || width > 4000 || height < 100 || height > 4000)
		return plot_set_error(p, HB_ERR_ARG, "plot size %d x %d out of range (100 to 4000 points)", width, height);
	p->width = width;
	p->height = height;
	return HB_OK;
}

int hb_plot_set_id(hb_plot *p, const char *id)
{
	if (!p)
		return HB_ERR_ARG;
	size_t n = id ? strlen(id) : 0;
	if (n == 0 || n >= sizeof p->id)
		return plot_set_error(p, HB_ERR_ARG, "plot id must have 1 to %zu characters", sizeof p->id - 1);
	for (size_t i = 0; i < n; i++) {
		char c = id[i];
		bool ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '-' ||
			  c == '_';
		if (!ok)
			return plot_set_error(p, HB_ERR_ARG, "plot id '%s': only letters, digits, '-' and '_'", id);
	}
	memcpy(p->id, id, n + 1);
	return HB_OK;
}

static bool axis_ok(hb_plot_axis a)
{
	return a == HB_AXIS_X || a == HB_AXIS_Y || a == HB_AXIS_Y2;
}

int hb_plot_set_axis(hb_plot *p, hb_plot_axis axis, const char *quantity, const char *unit, bool log)
{
	if (!p)
		return HB_ERR_ARG;
	if (!axis_ok(axis))
		return plot_set_error(p, HB_ERR_ARG, "axis %d unknown", (int)axis);
	char *q = label_dup(quantity), *u = label_dup(unit);
	if (!q || !u) {
		free(q);
		free(u);
		return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
	}
	plot_axis *a = &p->axis[axis];
	free(a->quantity);
	free(a->unit);
	a->quantity = q;
	a->unit = u;
	a->log = log;
	a->on = true;
	return HB_OK;
}

int hb_plot_set_range(hb_plot *p, hb_plot_axis axis, double min, double max)
{
	if (!p)
		return HB_ERR_ARG;
	if (!axis_ok(axis))
		return plot_set_error(p, HB_ERR_ARG, "axis %d unknown", (int)axis);
	if (isfinite(min) && isfinite(max) && min >= max)
		return plot_set_error(p, HB_ERR_ARG, "axis range %g to %g is empty", min, max);
	p->axis[axis].fixed_min = min;
	p->axis[axis].fixed_max = max;
	return HB_OK;
}

static plot_series *new_series(hb_plot *p)
{
	if (p->n_series == p->cap_series) {
		size_t cap = p->cap_series ? 2 * p->cap_series : 4;
		plot_series *s = realloc(p->series, cap * sizeof *s);
		if (!s)
			return NULL;
		p->series = s;
		p->cap_series = cap;
	}
	plot_series *s = &p->series[p->n_series];
	memset(s, 0, sizeof *s);
	return s;
}

int hb_plot_add_series(hb_plot *p, hb_plot_axis yaxis, const double *x, const double *y, size_t n,
		       const char *label, hb_plot_style style)
{
	if (!p)
		return HB_ERR_ARG;
	if (yaxis != HB_AXIS_Y && yaxis != HB_AXIS_Y2)
		return plot_set_error(p, HB_ERR_ARG, "a series belongs to HB_AXIS_Y or HB_AXIS_Y2");
	if (n == 0 || !x || !y)
		return plot_set_error(p, HB_ERR_ARG, "series '%s' has no points", label ? label : "");
	if (style != HB_PLOT_LINE && style != HB_PLOT_POINTS && style != HB_PLOT_LINE_POINTS)
		return plot_set_error(p, HB_ERR_ARG, "series style %d unknown", (int)style);
	plot_series *s = new_series(p);
	if (!s)
		return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
	s->x = malloc(n * sizeof *s->x);
	s->y = malloc(n * sizeof *s->y);
	s->label = label_dup(label);
	if (!s->x || !s->y || !s->label) {
		free(s->x);
		free(s->y);
		free(s->label);
		return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
	}
	memcpy(s->x, x, n * sizeof *x);
	memcpy(s->y, y, n * sizeof *y);
	s->n = n;
	s->style = style;
	s->y2 = yaxis == HB_AXIS_Y2;
	if (s->y2)
		p->axis[HB_AXIS_Y2].on = true;
	p->n_series++;
	return HB_OK;
}

int hb_plot_add_histogram(hb_plot *p, const double *values, size_t n, int bins, const char *label)
{
	if (!p)
		return HB_ERR_ARG;
	if (bins < 1 || bins > 1000)
		return plot_set_error(p, HB_ERR_ARG, "histogram bins %d out of range (1 to 1000)", bins);
	double lo = INFINITY, hi = -INFINITY;
	size_t finite = 0;
	for (size_t i = 0; values && i < n; i++) {
		if (!isfinite(values[i]))
			continue;
		finite++;
		lo = fmin(lo, values[i]);
		hi = fmax(hi, values[i]);
	}
	if (finite == 0)
		return plot_set_error(p, HB_ERR_DATA, "histogram '%s' has no finite value", label ? label : "");
	/* GSL bins are [lo, hi): widen a little so the largest value counts. */
	double span = hi - lo;
	if (span <= 0)
		span = lo != 0 ? fabs(lo) * 1e-3 : 1e-12;
	double pad = span * 1e-9;
	gsl_histogram *h = gsl_histogram_alloc((size_t)bins);
	if (!h)
		return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
	int rc = HB_OK;
	if (gsl_histogram_set_ranges_uniform(h, lo, lo + span + pad) != GSL_SUCCESS) {
		rc = plot_set_error(p, HB_ERR_DATA, "histogram range %g to %g unusable", lo, hi);
		goto out;
	}
	for (size_t i = 0; i < n; i++)
		if (isfinite(values[i]))
			gsl_histogram_increment(h, values[i]);
	plot_series *s = new_series(p);
	if (!s) {
		rc = plot_set_error(p, HB_ERR_NOMEM, "out of memory");
		goto out;
	}
	s->x = malloc(((size_t)bins + 1) * sizeof *s->x);
	s->y = malloc((size_t)bins * sizeof *s->y);
	s->label = label_dup(label);
	if (!s->x || !s->y || !s->label) {
		free(s->x);
		free(s->y);
		free(s->label);
		rc = plot_set_error(p, HB_ERR_NOMEM, "out of memory");
		goto out;
	}
	for (size_t b = 0; b < (size_t)bins; b++) {
		double a, z;
		gsl_histogram_get_range(h, b, &a, &z);
		s->x[b] = a;
		s->x[b + 1] = z;
		s->y[b] = gsl_histogram_get(h, b);
	}
	s->n = (size_t)bins;
	s->bars = true;
	s->style = HB_PLOT_LINE;
	p->n_series++;
out:
	gsl_histogram_free(h);
	return rc;
}

static int add_deco(hb_plot *p, deco_kind kind, double a, double b, bool y2, const char *label)
{
	if (!p)
		return HB_ERR_ARG;
	if (!isfinite(a) || !isfinite(b))
		return plot_set_error(p, HB_ERR_ARG, "'%s': position is not a finite number", label ? label : "");
	if (p->n_deco == p->cap_deco) {
		size_t cap = p->cap_deco ? 2 * p->cap_deco : 8;
		plot_deco *d = realloc(p->deco, cap * sizeof *d);
		if (!d)
			return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
		p->deco = d;
		p->cap_deco = cap;
	}
	char *l = label_dup(label);
	if (!l)
		return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
	p->deco[p->n_deco++] = (plot_deco){ .kind = kind, .a = a, .b = b, .y2 = y2, .label = l };
	if (y2)
		p->axis[HB_AXIS_Y2].on = true;
	return HB_OK;
}

int hb_plot_add_vline(hb_plot *p, double x, const char *label)
{
	return add_deco(p, DECO_VLINE, x, 0, false, label);
}

int hb_plot_add_hline(hb_plot *p, hb_plot_axis yaxis, double y, const char *label)
{
	if (p && yaxis != HB_AXIS_Y && yaxis != HB_AXIS_Y2)
		return plot_set_error(p, HB_ERR_ARG, "a limit line belongs to HB_AXIS_Y or HB_AXIS_Y2");
	return add_deco(p, DECO_HLINE, y, 0, yaxis == HB_AXIS_Y2, label);
}

int hb_plot_add_band(hb_plot *p, double x0, double x1, const char *label)
{
	if (p && !(x0 < x1))
		return plot_set_error(p, HB_ERR_ARG, "band %g to %g is empty", x0, x1);
	return add_deco(p, DECO_BAND, x0, x1, false, label);
}

int hb_plot_add_marker(hb_plot *p, hb_plot_axis yaxis, double x, double y, const char *label)
{
	if (p && yaxis != HB_AXIS_Y && yaxis != HB_AXIS_Y2)
		return plot_set_error(p, HB_ERR_ARG, "a marker belongs to HB_AXIS_Y or HB_AXIS_Y2");
	return add_deco(p, DECO_MARKER, x, y, yaxis == HB_AXIS_Y2, label);
}
