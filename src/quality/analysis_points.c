/* src/quality/analysis_points.c - a bias sweep's stored points as the fit takes them: the rising (current, L) pairs and the winding resistance from V/I */
#include <math.h>
#include <stdlib.h>

#include "analysis.h"
#include "analysis_internal.h"
#include "../bench/bench.h" /* HB_SWEEP_DCR_FRACTION: the points the settle rule holds still for V/I */

/*
 * The spread of the supply's read-backs bracketing a point's accepted
 * readings (A): how far the current moved while the meter read. Points
 * stored before the engine kept it read NAN, and the residual check then
 * reports the cause "current moving" as not checked.
 */
static double point_bias_spread(const hb_db_point *p)
{
	/* NAN for points stored before the read-back spread was kept. */
	return p->bias_spread_a;
}

/* The rising points as hb_analysis_bias_arrays takes them, with each one's
 * bias spread (NAN when unknown) when spread is not NULL. */
int hb_analysis__bias_arrays_spread(const hb_db_point *points, size_t n, double **current, double **inductance,
				    double **spread, size_t *count)
{
	double *I = malloc(sizeof *I * (n ? n : 1));
	double *L = malloc(sizeof *L * (n ? n : 1));
	double *S = spread ? malloc(sizeof *S * (n ? n : 1)) : NULL;
	if (!I || !L || (spread && !S)) {
		free(I);
		free(L);
		free(S);
		return HB_ERR_NOMEM;
	}
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		const hb_db_point *p = &points[i];
		if (p->direction != HB_DB_DIR_UP || !isfinite(p->primary) || p->primary <= 0)
			continue;
		double amps = isfinite(p->bias_meas_a) ? p->bias_meas_a : p->bias_set_a;
		if (!isfinite(amps))
			continue;
		/* At zero the supply's read-back is offset noise around zero. */
		if (amps < 0)
			amps = 0;
		if (m > 0 && amps <= I[m - 1])
			continue;
		I[m] = amps;
		L[m] = p->primary;
		if (S)
			S[m] = point_bias_spread(p);
		m++;
	}
	*current = I;
	*inductance = L;
	if (spread)
		*spread = S;
	*count = m;
	return HB_OK;
}

int hb_analysis_bias_arrays(const hb_db_point *points, size_t n, double **current, double **inductance,
			    size_t *count)
{
	return hb_analysis__bias_arrays_spread(points, n, current, inductance, NULL, count);
}

/* Winding resistance from the supply's read-back: slope of V against I over
 * the low-current points, so a fixed offset of the read-back drops out.
 * Two-wire: leads and fixture contacts are included. */
double hb_analysis__dcr_from_points(const hb_db_point *pts, size_t n, double l_top_current)
{
	double sx = 0, sy = 0, sxx = 0, sxy = 0;
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		double I = pts[i].bias_meas_a, V = pts[i].supply_v;
		if (pts[i].direction != HB_DB_DIR_UP || !isfinite(I) || !isfinite(V))
			continue;
		/* Low current keeps self-heating out of the estimate. */
		if (I > HB_SWEEP_DCR_FRACTION * l_top_current)
			continue;
		sx += I;
		sy += V;
		sxx += I * I;
		sxy += I * V;
		m++;
	}
	if (m < 2)
		return NAN;
	double den = m * sxx - sx * sx;
	if (den <= 0)
		return NAN;
	double r = (m * sxy - sx * sy) / den;
	return r > 0 ? r : NAN;
}
