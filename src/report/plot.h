/* src/report/plot.h - engineering plots (PLplot, SVG) returned as strings to inline into HTML reports */
#ifndef HB_PLOT_H
#define HB_PLOT_H

#include <stdbool.h>
#include <stddef.h>

#include "../../common/hb_status.h"

/*
 * One plot, built up then rendered. Values are given in SI base units; the
 * renderer picks an SI prefix per linear axis ("Inductance (µH)"). PLplot
 * keeps global state: build and render plots from one thread at a time.
 *
 * The plots the reports need, from these pieces:
 *  - L against bias: series HB_PLOT_POINTS (measured) + HB_PLOT_LINE (fit),
 *    vlines at the drop-fraction currents, hlines at the spec limits;
 *  - B-H curve: one or more HB_PLOT_LINE_POINTS series;
 *  - L and R against frequency: x log, L on HB_AXIS_Y, R on HB_AXIS_Y2,
 *    a vline (or marker) at the self-resonance;
 *  - lot histogram: hb_plot_add_histogram + hb_plot_add_band for the
 *    tolerance (or two vlines);
 *  - compare: several series, one per sweep.
 */
typedef struct hb_plot hb_plot;

typedef enum hb_plot_axis { HB_AXIS_X, HB_AXIS_Y, HB_AXIS_Y2 } hb_plot_axis;

typedef enum hb_plot_style {
	HB_PLOT_LINE,
	HB_PLOT_POINTS,
	HB_PLOT_LINE_POINTS,
} hb_plot_style;

/* title may be NULL. Returns NULL only when out of memory. */
hb_plot *hb_plot_new(const char *title);
void hb_plot_free(hb_plot *plot);
/* Last error on this plot, "" if none. */
const char *hb_plot_error(const hb_plot *plot);

/* Page size in points (default 720 x 450). */
int hb_plot_set_size(hb_plot *plot, int width, int height);
/* Prefix for the ids inside the SVG, so several plots can share one HTML
 * page (letters, digits, '-', '_'; default "hbplotN"). */
int hb_plot_set_id(hb_plot *plot, const char *id);
/* Axis label: quantity ("Inductance"), SI unit ("H", "A", "Hz", "T",
 * "A/m", "ohm", "" for counts) and logarithmic scale. Setting HB_AXIS_Y2
 * turns the right-hand axis on. */
int hb_plot_set_axis(hb_plot *plot, hb_plot_axis axis, const char *quantity, const char *unit, bool log);
/* Fixes an axis range in base units; NaN for either end keeps it automatic. */
int hb_plot_set_range(hb_plot *plot, hb_plot_axis axis, double min, double max);

/* Copies the data. Non-finite points are skipped (a line breaks there).
 * yaxis is HB_AXIS_Y or HB_AXIS_Y2. */
int hb_plot_add_series(hb_plot *plot, hb_plot_axis yaxis, const double *x, const double *y, size_t n,
		       const char *label, hb_plot_style style);
/* Counts the finite values into bins equal bins over their range (with GSL)
 * and draws them as bars against HB_AXIS_Y. */
int hb_plot_add_histogram(hb_plot *plot, const double *values, size_t n, int bins, const char *label);
/* Vertical line across the plot at x, labelled at its top. */
int hb_plot_add_vline(hb_plot *plot, double x, const char *label);
/* Horizontal line (a spec limit), labelled at its right end. */
int hb_plot_add_hline(hb_plot *plot, hb_plot_axis yaxis, double y, const char *label);
/* Shaded band x0 <= x <= x1 behind the data (a tolerance band). */
int hb_plot_add_band(hb_plot *plot, double x0, double x1, const char *label);
/* A labelled point (a knee, the self-resonance). */
int hb_plot_add_marker(hb_plot *plot, hb_plot_axis yaxis, double x, double y, const char *label);

/*
 * Renders to SVG 1.1 in memory: *svg is malloc'd, NUL-terminated, *len its
 * length (len may be NULL). Nothing is printed on stdout or stderr.
 * HB_ERR_DATA when there is nothing to draw or a log axis meets a value <= 0.
 */
int hb_plot_render_svg(hb_plot *plot, char **svg, size_t *len);

#endif
