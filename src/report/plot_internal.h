/* src/report/plot_internal.h - a plot's description as plot.c builds it and plot_render.c draws it */
#ifndef HB_PLOT_INTERNAL_H
#define HB_PLOT_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>

#include "plot.h"

typedef struct plot_series {
	double *x, *y;
	size_t n;
	char *label;
	hb_plot_style style;
	bool y2;
	bool bars; /* histogram: x holds n + 1 bin edges, y the counts */
} plot_series;

typedef enum deco_kind { DECO_VLINE, DECO_HLINE, DECO_BAND, DECO_MARKER } deco_kind;

typedef struct plot_deco {
	deco_kind kind;
	double a, b; /* vline x; hline y; band x0 x1; marker x y */
	bool y2;
	char *label;
} plot_deco;

typedef struct plot_axis {
	char *quantity;
	char *unit;
	bool log;
	bool on;
	double fixed_min, fixed_max;
} plot_axis;

struct hb_plot {
	char *title;
	int width, height;
	char id[40];
	plot_axis axis[3];
	plot_series *series;
	size_t n_series, cap_series;
	plot_deco *deco;
	size_t n_deco, cap_deco;
	char err[256];
};

/* Leaves a one-line message in the plot (hb_plot_error) and returns status. */
int plot_set_error(hb_plot *p, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

#endif
