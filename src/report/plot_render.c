/* src/report/plot_render.c - engineering plots drawn with PLplot's SVG device into a string (no stdout, no files left) */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <plplot.h>

#include "plot.h"
#include "plot_internal.h"

/* Our palette: white paper, near-black ink, and series hues that stay
 * apart for the common colour-vision deficiencies (blue / amber first) and
 * in grey print (each series also gets its own dash and marker). */
enum { COL_BG, COL_INK, COL_GRID, COL_BAND, COL_LIMIT, COL_BAR, COL_SERIES0 };
static const unsigned char palette[][3] = {
	{ 0xFF, 0xFF, 0xFF }, /* paper */
	{ 0x22, 0x22, 0x22 }, /* ink */
	{ 0xD4, 0xD4, 0xD4 }, /* grid */
	{ 0xE3, 0xEA, 0xF2 }, /* band */
	{ 0x4D, 0x4D, 0x4D }, /* limits and markers */
	{ 0x9D, 0xB8, 0xD9 }, /* histogram bars: light, so print stays legible */
	{ 0x1F, 0x5A, 0x99 }, /* deep blue */
	{ 0xD0, 0x7A, 0x1E }, /* amber */
	{ 0x2E, 0x8B, 0x7A }, /* teal */
	{ 0x8C, 0x4A, 0x96 }, /* plum */
	{ 0x6E, 0x6E, 0x6E }, /* slate */
	{ 0xA8, 0x45, 0x3E }, /* brick */
};
enum { N_PALETTE = sizeof palette / sizeof palette[0], N_SERIES_COLOURS = N_PALETTE - COL_SERIES0 };
static const char *const glyphs[] = { "\xe2\x97\x8f", "\xe2\x96\xa0", "\xe2\x96\xb2", "\xe2\x97\x86", "\xe2\x96\xbc" };
enum { N_GLYPHS = sizeof glyphs / sizeof glyphs[0] };

typedef struct span {
	double lo, hi;
} span;

static void span_add(span *s, double v)
{
	if (!isfinite(v))
		return;
	s->lo = fmin(s->lo, v);
	s->hi = fmax(s->hi, v);
}

/* Ranges in base units over everything drawn against each axis. */
static void data_spans(const hb_plot *p, span sp[3])
{
	for (int i = 0; i < 3; i++)
		sp[i] = (span){ INFINITY, -INFINITY };
	for (size_t i = 0; i < p->n_series; i++) {
		const plot_series *s = &p->series[i];
		span *y = &sp[s->y2 ? HB_AXIS_Y2 : HB_AXIS_Y];
		if (s->bars) {
			span_add(&sp[HB_AXIS_X], s->x[0]);
			span_add(&sp[HB_AXIS_X], s->x[s->n]);
			span_add(y, 0);
			for (size_t k = 0; k < s->n; k++)
				span_add(y, s->y[k]);
			continue;
		}
		for (size_t k = 0; k < s->n; k++) {
			if (!isfinite(s->x[k]) || !isfinite(s->y[k]))
				continue;
			if (p->axis[HB_AXIS_X].log && s->x[k] <= 0)
				continue;
			span_add(&sp[HB_AXIS_X], s->x[k]);
			span_add(y, s->y[k]);
		}
	}
	for (size_t i = 0; i < p->n_deco; i++) {
		const plot_deco *d = &p->deco[i];
		span *y = &sp[d->y2 ? HB_AXIS_Y2 : HB_AXIS_Y];
		switch (d->kind) {
		case DECO_VLINE:
			span_add(&sp[HB_AXIS_X], d->a);
			break;
		case DECO_HLINE:
			span_add(y, d->a);
			break;
		case DECO_BAND:
			span_add(&sp[HB_AXIS_X], d->a);
			span_add(&sp[HB_AXIS_X], d->b);
			break;
		case DECO_MARKER:
			span_add(&sp[HB_AXIS_X], d->a);
			span_add(y, d->b);
			break;
		}
	}
}

typedef struct scale {
	double factor; /* plotted = value / factor (linear) */
	bool log;
	double lo, hi; /* window in plotted units (log10 for log axes) */
	char label[160];
} scale;

static const char *si_prefix(int exp3)
{
	switch (exp3) {
	case -15: return "f";
	case -12: return "p";
	case -9: return "n";
	case -6: return "\xc2\xb5";
	case -3: return "m";
	case 3: return "k";
	case 6: return "M";
	case 9: return "G";
	case 12: return "T";
	default: return "";
	}
}

static int make_scale(hb_plot *p, hb_plot_axis which, span sp, scale *sc, double headroom)
{
	const plot_axis *a = &p->axis[which];
	if (isfinite(a->fixed_min))
		sp.lo = a->fixed_min;
	if (isfinite(a->fixed_max))
		sp.hi = a->fixed_max;
	if (!(sp.lo <= sp.hi))
		return plot_set_error(p, HB_ERR_DATA, "nothing to draw against the %s axis",
				 which == HB_AXIS_X ? "x" : which == HB_AXIS_Y ? "y" : "right-hand y");
	sc->log = a->log;
	sc->factor = 1;
	const char *unit = a->unit ? a->unit : "";
	const char *prefix = "";
	if (a->log) {
		if (sp.lo <= 0)
			return plot_set_error(p, HB_ERR_DATA, "logarithmic axis '%s' meets the value %g",
					 a->quantity ? a->quantity : "", sp.lo);
		sc->lo = floor(log10(sp.lo) * 1e6) / 1e6;
		sc->hi = log10(sp.hi);
		if (sc->hi - sc->lo < 1e-9) {
			sc->lo -= 0.5;
			sc->hi += 0.5;
		}
	} else {
		double big = fmax(fabs(sp.lo), fabs(sp.hi));
		/* Counts and percentages carry no prefix. */
		if (*unit && strcmp(unit, "%") != 0 && big > 0) {
			int e = (int)floor(log10(big) / 3) * 3;
			e = e < -15 ? -15 : e > 12 ? 12 : e;
			sc->factor = pow(10, e);
			prefix = si_prefix(e);
		}
		double lo = sp.lo / sc->factor, hi = sp.hi / sc->factor;
		if (hi - lo <= 1e-12 * fmax(1, fabs(hi))) {
			double d = lo != 0 ? fabs(lo) * 0.1 : 1;
			lo -= d;
			hi += d;
		}
		double pad = 0.04 * (hi - lo);
		sc->lo = isfinite(a->fixed_min) ? lo : lo - pad;
		sc->hi = isfinite(a->fixed_max) ? hi : hi + pad + headroom * (hi - lo);
		/* Bars and quantities that start at zero keep zero on the edge. */
		if (!isfinite(a->fixed_min) && sp.lo >= 0 && sc->lo < 0)
			sc->lo = 0;
	}
	if (*unit)
		snprintf(sc->label, sizeof sc->label, "%s (%s%s)", a->quantity ? a->quantity : "", prefix,
			 strcmp(unit, "ohm") == 0 ? "\xce\xa9" : unit);
	else
		snprintf(sc->label, sizeof sc->label, "%s", a->quantity ? a->quantity : "");
	return HB_OK;
}

static double to_plot(const scale *sc, double v)
{
	return sc->log ? log10(v) : v / sc->factor;
}

static void use_colour(int index)
{
	plcol0(index);
}

/* Draws the finite runs of a series as polylines. */
static void draw_line(const scale *sx, const scale *sy, const plot_series *s)
{
	PLFLT *xs = malloc(s->n * sizeof *xs), *ys = malloc(s->n * sizeof *ys);
	if (!xs || !ys)
		goto out;
	size_t run = 0;
	for (size_t k = 0; k <= s->n; k++) {
		bool ok = k < s->n && isfinite(s->x[k]) && isfinite(s->y[k]) && (!sx->log || s->x[k] > 0) &&
			  (!sy->log || s->y[k] > 0);
		if (ok) {
			xs[run] = to_plot(sx, s->x[k]);
			ys[run] = to_plot(sy, s->y[k]);
			run++;
			continue;
		}
		if (run >= 2)
			plline((PLINT)run, xs, ys);
		run = 0;
	}
out:
	free(xs);
	free(ys);
}

static void draw_points(const scale *sx, const scale *sy, const plot_series *s, const char *glyph)
{
	for (size_t k = 0; k < s->n; k++) {
		if (!isfinite(s->x[k]) || !isfinite(s->y[k]) || (sx->log && s->x[k] <= 0) || (sy->log && s->y[k] <= 0))
			continue;
		PLFLT x = to_plot(sx, s->x[k]), y = to_plot(sy, s->y[k]);
		plstring(1, &x, &y, glyph);
	}
}

/* The narrowest bar drawn, as a fraction of the x axis (1.5 %: a few
 * millimetres on a printed page). */
#define HB_BAR_MIN_WIDTH 0.015

static void draw_bars(const scale *sx, const scale *sy, const plot_series *s, int colour)
{
	for (size_t b = 0; b < s->n; b++) {
		PLFLT x0 = to_plot(sx, s->x[b]), x1 = to_plot(sx, s->x[b + 1]);
		/* A tight lot on a wide tolerance axis would draw hairlines: a bar is
		 * at least HB_BAR_MIN_WIDTH of the axis wide, about its bin's centre. */
		PLFLT min_w = HB_BAR_MIN_WIDTH * (sx->hi - sx->lo);
		if (fabs(x1 - x0) < min_w) {
			PLFLT mid = (x0 + x1) / 2;
			x0 = mid - min_w / 2;
			x1 = mid + min_w / 2;
		}
		PLFLT y0 = sy->log ? sy->lo : 0, y1 = to_plot(sy, s->y[b]);
		PLFLT xs[4] = { x0, x0, x1, x1 }, ys[4] = { y0, y1, y1, y0 };
		if (s->y[b] <= 0)
			continue;
		use_colour(colour);
		plfill(4, xs, ys);
		use_colour(COL_INK);
		plline(4, xs, ys);
	}
}

static void draw_series(const hb_plot *p, const scale *sx, const scale *sy, const scale *sy2)
{
	size_t visible = 0;
	for (size_t i = 0; i < p->n_series; i++) {
		const plot_series *s = &p->series[i];
		const scale *y = s->y2 ? sy2 : sy;
		plwind(sx->lo, sx->hi, y->lo, y->hi);
		int colour = COL_SERIES0 + (int)(visible % N_SERIES_COLOURS);
		if (s->bars) {
			draw_bars(sx, y, s, COL_BAR);
		} else {
			use_colour(colour);
			plwidth(1.6);
			pllsty(1 + (PLINT)(visible % 4));
			if (s->style != HB_PLOT_POINTS)
				draw_line(sx, y, s);
			pllsty(1);
			plwidth(1.0);
			plschr(0, 0.6);
			if (s->style != HB_PLOT_LINE)
				draw_points(sx, y, s, glyphs[visible % N_GLYPHS]);
			plschr(0, 0.9);
		}
		visible++;
	}
}

static void draw_decorations(const hb_plot *p, const scale *sx, const scale *sy, const scale *sy2, bool behind)
{
	plschr(0, 0.75);
	for (size_t i = 0; i < p->n_deco; i++) {
		const plot_deco *d = &p->deco[i];
		const scale *y = d->y2 ? sy2 : sy;
		plwind(sx->lo, sx->hi, y->lo, y->hi);
		if ((d->kind == DECO_BAND) != behind)
			continue;
		switch (d->kind) {
		case DECO_BAND: {
			PLFLT x0 = fmax(to_plot(sx, d->a), sx->lo), x1 = fmin(to_plot(sx, d->b), sx->hi);
			PLFLT xs[4] = { x0, x0, x1, x1 }, ys[4] = { y->lo, y->hi, y->hi, y->lo };
			use_colour(COL_BAND);
			plfill(4, xs, ys);
			use_colour(COL_LIMIT);
			pllsty(2);
			pljoin(x0, y->lo, x0, y->hi);
			pljoin(x1, y->lo, x1, y->hi);
			pllsty(1);
			plptex((x0 + x1) / 2, y->hi - 0.03 * (y->hi - y->lo), 1, 0, 0.5, d->label);
			break;
		}
		case DECO_VLINE: {
			PLFLT x = to_plot(sx, d->a);
			use_colour(COL_LIMIT);
			pllsty(3);
			pljoin(x, y->lo, x, y->hi);
			pllsty(1);
			/* Text runs up the line from the bottom, clear of the legend. */
			plptex(x - 0.008 * (sx->hi - sx->lo), y->lo + 0.02 * (y->hi - y->lo), 0, 1, 0, d->label);
			break;
		}
		case DECO_HLINE: {
			PLFLT yy = to_plot(y, d->a);
			use_colour(COL_LIMIT);
			pllsty(2);
			pljoin(sx->lo, yy, sx->hi, yy);
			pllsty(1);
			plptex(sx->hi - 0.01 * (sx->hi - sx->lo), yy + 0.015 * (y->hi - y->lo), 1, 0, 1, d->label);
			break;
		}
		case DECO_MARKER: {
			PLFLT x = to_plot(sx, d->a), yy = to_plot(y, d->b);
			use_colour(COL_INK);
			plstring(1, &x, &yy, "\xe2\x97\x87"); /* open diamond */
			plptex(x + 0.015 * (sx->hi - sx->lo), yy + 0.02 * (y->hi - y->lo), 1, 0, 0, d->label);
			break;
		}
		}
	}
	plschr(0, 1.0);
}

/* Entries in the legend: the labelled series. */
static PLINT legend_entries(const hb_plot *p)
{
	PLINT n = 0;
	for (size_t i = 0; i < p->n_series; i++)
		if (p->series[i].label[0])
			n++;
	return n;
}

/* The legend's columns and rows: one entry a row (labels are long). */
static void legend_grid(PLINT n, PLINT *rows, PLINT *cols)
{
	*cols = n ? 1 : 0;
	*rows = n;
}

/* The legend sits below the x-axis label, outside the data: it can cover
 * no point, limit line, band or label, wherever the data lie. */
/* Height of a legend row as a fraction of the page. */
#define LEGEND_ROW 0.042

static void draw_legend(const hb_plot *p, PLFLT below)
{
	PLINT n = legend_entries(p);
	if (n == 0)
		return;
	PLINT rows, cols;
	legend_grid(n, &rows, &cols);
	PLINT *opt = calloc((size_t)n, sizeof *opt), *colours = calloc((size_t)n, sizeof *colours);
	PLINT *styles = calloc((size_t)n, sizeof *styles), *numbers = calloc((size_t)n, sizeof *numbers);
	PLINT *patterns = calloc((size_t)n, sizeof *patterns), *text_colours = calloc((size_t)n, sizeof *text_colours);
	PLFLT *widths = calloc((size_t)n, sizeof *widths), *scales = calloc((size_t)n, sizeof *scales);
	PLFLT *box_scales = calloc((size_t)n, sizeof *box_scales), *box_widths = calloc((size_t)n, sizeof *box_widths);
	const char **text = calloc((size_t)n, sizeof *text), **symbols = calloc((size_t)n, sizeof *symbols);
	if (!opt || !colours || !styles || !numbers || !patterns || !text_colours || !widths || !scales ||
	    !box_scales || !box_widths || !text || !symbols)
		goto out;
	PLINT k = 0;
	size_t visible = 0;
	for (size_t i = 0; i < p->n_series; i++, visible++) {
		const plot_series *s = &p->series[i];
		if (!s->label[0])
			continue;
		colours[k] = s->bars ? COL_BAR : COL_SERIES0 + (PLINT)(visible % N_SERIES_COLOURS);
		text_colours[k] = COL_INK;
		text[k] = s->label;
		styles[k] = 1 + (PLINT)(visible % 4);
		widths[k] = 1.6;
		scales[k] = 0.6;
		box_scales[k] = 0.8;
		box_widths[k] = 1.0;
		numbers[k] = 1;
		symbols[k] = glyphs[visible % N_GLYPHS];
		if (s->bars)
			opt[k] = PL_LEGEND_COLOR_BOX;
		else if (s->style == HB_PLOT_LINE)
			opt[k] = PL_LEGEND_LINE;
		else if (s->style == HB_PLOT_POINTS)
			opt[k] = PL_LEGEND_SYMBOL;
		else
			opt[k] = PL_LEGEND_LINE | PL_LEGEND_SYMBOL;
		k++;
	}
	PLFLT w, h;
	plschr(0, 0.8);
	pllegend(&w, &h, PL_LEGEND_BACKGROUND | PL_LEGEND_BOUNDING_BOX,
		 PL_POSITION_BOTTOM | PL_POSITION_OUTSIDE, 0, below, 0.08, COL_BG, COL_GRID, 1, rows, cols,
		 n, opt, 0.8, 0.9, 1.8, 0.0, text_colours, text, colours, patterns, box_scales, box_widths, colours,
		 styles, widths, colours, scales, numbers, symbols);
	plschr(0, 1.0);
out:
	free(opt);
	free(colours);
	free(styles);
	free(numbers);
	free(patterns);
	free(text_colours);
	free(widths);
	free(scales);
	free(box_scales);
	free(box_widths);
	free(text);
	free(symbols);
}

/* PLplot names its clip paths "text-clipping0", ...; two plots inlined in
 * one page must not share ids, so each plot gets its own prefix. */
static char *prefix_ids(const char *svg, size_t len, const char *id, size_t *out_len)
{
	static const char key[] = "text-clipping";
	size_t hits = 0;
	for (const char *s = svg; (s = strstr(s, key)); s += sizeof key - 1)
		hits++;
	size_t idl = strlen(id) + 1;
	char *out = malloc(len + hits * idl + 1);
	if (!out)
		return NULL;
	char *o = out;
	const char *s = svg;
	for (const char *hit; (hit = strstr(s, key)); s = hit + sizeof key - 1) {
		memcpy(o, s, (size_t)(hit - s));
		o += hit - s;
		o += sprintf(o, "%s-", id);
		memcpy(o, key, sizeof key - 1);
		o += sizeof key - 1;
	}
	size_t rest = len - (size_t)(s - svg);
	memcpy(o, s, rest);
	o += rest;
	*o = '\0';
	*out_len = (size_t)(o - out);
	return out;
}

static int read_whole(FILE *f, char **buf, size_t *len)
{
	size_t cap = 65536, n = 0;
	char *b = malloc(cap);
	if (!b)
		return HB_ERR_NOMEM;
	for (;;) {
		if (n + 1 >= cap) {
			char *nb = realloc(b, cap * 2);
			if (!nb) {
				free(b);
				return HB_ERR_NOMEM;
			}
			b = nb;
			cap *= 2;
		}
		size_t got = fread(b + n, 1, cap - n - 1, f);
		n += got;
		if (got == 0)
			break;
	}
	if (ferror(f)) {
		free(b);
		return HB_ERR_IO;
	}
	b[n] = '\0';
	*buf = b;
	*len = n;
	return HB_OK;
}

int hb_plot_render_svg(hb_plot *p, char **svg, size_t *len)
{
	if (!p || !svg)
		return p ? plot_set_error(p, HB_ERR_ARG, "no output pointer") : HB_ERR_ARG;
	*svg = NULL;
	if (len)
		*len = 0;
	if (p->n_series == 0 && p->n_deco == 0)
		return plot_set_error(p, HB_ERR_DATA, "nothing to plot");

	span sp[3];
	scale sx, sy, sy2;
	data_spans(p, sp);
	/* Room above the data for band labels (the legend goes below the plot). */
	double headroom = 0;
	for (size_t i = 0; i < p->n_deco; i++) {
		if (p->deco[i].kind == DECO_BAND)
			headroom = 0.14;
		/* a limit line's label sits above it: room so that a top one is not cut by the frame */
		else if (p->deco[i].kind == DECO_HLINE && headroom < 0.06)
			headroom = 0.06;
	}
	int rc = make_scale(p, HB_AXIS_X, sp[HB_AXIS_X], &sx, 0);
	if (rc == HB_OK)
		rc = make_scale(p, HB_AXIS_Y, sp[HB_AXIS_Y], &sy, headroom);
	bool right = p->axis[HB_AXIS_Y2].on;
	if (rc == HB_OK && right)
		rc = make_scale(p, HB_AXIS_Y2, sp[HB_AXIS_Y2], &sy2, headroom);
	if (rc != HB_OK)
		return rc;
	if (!right)
		sy2 = sy;

	/* PLplot writes to a file of its own opening: a private temporary one. */
	const char *tmpdir = getenv("TMPDIR");
	char path[4096];
	snprintf(path, sizeof path, "%s/henrybench-plot-XXXXXX", tmpdir && *tmpdir ? tmpdir : "/tmp");
	int fd = mkstemp(path);
	if (fd < 0)
		return plot_set_error(p, HB_ERR_IO, "cannot create a temporary file in %s: %s",
				 tmpdir && *tmpdir ? tmpdir : "/tmp", strerror(errno));
	close(fd);

	PLINT previous, stream;
	PLINT pl_error = 0;
	char pl_message[4096] = "";
	plgstrm(&previous);
	plmkstrm(&stream);
	/* Errors are recorded on the stream instead of printed. */
	plsError(&pl_error, pl_message);
	plsdev("svg");
	plsfnam(path);
	plspage(0, 0, p->width, p->height, 0, 0);
	plscmap0n(N_PALETTE);
	for (int i = 0; i < N_PALETTE; i++)
		plscol0(i, palette[i][0], palette[i][1], palette[i][2]);
	plsfci(0); /* sans-serif, upright, normal */
	plinit();
	pladv(0);
	plschr(0, 0.9);
	/* the legend's rows below the x-axis label take from the plot's height */
	PLINT lrows, lcols;
	legend_grid(legend_entries(p), &lrows, &lcols);
	PLFLT vp_bottom = 0.13 + (lrows ? 0.035 + (PLFLT)lrows * LEGEND_ROW : 0);
	plvpor(0.11, right ? 0.88 : 0.95, vp_bottom, 0.90);
	plwind(sx.lo, sx.hi, sy.lo, sy.hi);

	draw_decorations(p, &sx, &sy, &sy2, true);
	plwind(sx.lo, sx.hi, sy.lo, sy.hi);
	use_colour(COL_GRID);
	plbox(sx.log ? "gl" : "g", 0, 0, sy.log ? "gl" : "g", 0, 0);
	draw_series(p, &sx, &sy, &sy2);
	draw_decorations(p, &sx, &sy, &sy2, false);

	use_colour(COL_INK);
	plwidth(1.0);
	plwind(sx.lo, sx.hi, sy.lo, sy.hi);
	plbox(sx.log ? "bcnstl" : "bcnst", 0, 0, right ? (sy.log ? "bnstvl" : "bnstv") : (sy.log ? "bcnstvl" : "bcnstv"), 0, 0);
	pllab(sx.label, sy.label, p->title);
	if (right) {
		plwind(sx.lo, sx.hi, sy2.lo, sy2.hi);
		plbox("", 0, 0, sy2.log ? "cmstvl" : "cmstv", 0, 0);
		plmtex("r", 4.5, 0.5, 0.5, sy2.label);
	}
	/* from the viewport's bottom edge past the tick labels and the axis label, in viewport heights */
	draw_legend(p, 0.125 / (0.90 - vp_bottom));
	plend1();
	plsstrm(previous);

	if (pl_error) {
		unlink(path);
		/* The message is several lines; keep its last non-empty one. */
		char *m = pl_message;
		for (char *nl; (nl = strchr(m, '\n')) && nl[1];)
			m = nl + 1;
		m[strcspn(m, "\n")] = '\0';
		return plot_set_error(p, HB_ERR_DATA, "PLplot: %s", m);
	}
	FILE *f = fopen(path, "rb");
	unlink(path);
	if (!f)
		return plot_set_error(p, HB_ERR_IO, "cannot read back the plot: %s", strerror(errno));
	char *raw = NULL;
	size_t raw_len = 0;
	rc = read_whole(f, &raw, &raw_len);
	fclose(f);
	if (rc != HB_OK)
		return plot_set_error(p, rc, "cannot read back the plot");
	if (raw_len == 0 || !strstr(raw, "</svg>")) {
		free(raw);
		return plot_set_error(p, HB_ERR_IO, "PLplot wrote no complete SVG");
	}
	size_t out_len;
	char *out = prefix_ids(raw, raw_len, p->id, &out_len);
	free(raw);
	if (!out)
		return plot_set_error(p, HB_ERR_NOMEM, "out of memory");
	*svg = out;
	if (len)
		*len = out_len;
	p->err[0] = '\0';
	return HB_OK;
}
