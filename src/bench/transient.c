/* src/bench/transient.c - the read-back series after a current step: trend, and a first-order fit that predicts where it is going */
#include <math.h>
#include <stdbool.h>
#include <stddef.h>

#include "sweep_internal.h"

/* Least-squares slope of the read-backs from index `from` on (A/s). */
double hb_transient_slope(const hb_rb_sample *series, size_t from, size_t n_series, double *sxx_out)
{
	size_t n = n_series - from;
	double mt = 0, ma = 0;
	for (size_t i = from; i < n_series; i++) {
		mt += series[i].t;
		ma += series[i].amps;
	}
	mt /= (double)n;
	ma /= (double)n;
	double sxy = 0, sxx = 0;
	for (size_t i = from; i < n_series; i++) {
		sxy += (series[i].t - mt) * (series[i].amps - ma);
		sxx += (series[i].t - mt) * (series[i].t - mt);
	}
	*sxx_out = sxx;
	return sxx > 0 ? sxy / sxx : 0;
}

/* Least-squares a_inf, c of a(t) = a_inf + c*exp(-(t - t0)/tau) over the
 * read-backs from index `from` on, for a given tau; returns the residual
 * sum of squares (INFINITY when the system is singular). */
static double exp_fit(const hb_rb_sample *series, size_t from, size_t n_series, double t0, double tau,
		      double *a_inf)
{
	double s1 = 0, sx = 0, sxx = 0, sy = 0, sxy = 0;
	for (size_t i = from; i < n_series; i++) {
		double x = exp(-(series[i].t - t0) / tau);
		double y = series[i].amps;
		s1 += 1;
		sx += x;
		sxx += x * x;
		sy += y;
		sxy += x * y;
	}
	double det = s1 * sxx - sx * sx;
	if (!(det > 1e-12 * s1 * sxx))
		return INFINITY;
	double c = (s1 * sxy - sx * sy) / det;
	double a = (sy - c * sx) / s1;
	double ss = 0;
	for (size_t i = from; i < n_series; i++) {
		double r = series[i].amps - (a + c * exp(-(series[i].t - t0) / tau));
		ss += r * r;
	}
	*a_inf = a;
	return ss;
}

/* First-order prediction of where the read-back is going: the fit above
 * over the read-backs of the last three learnt response times, with its
 * own time constant found by a golden-section search between a quarter
 * and four times the learnt one (a lag is rarely the same at every
 * current). Returns false when the fit is not usable; *rms gets the
 * residual spread. */
bool hb_transient_predict(const hb_rb_sample *series, size_t n, double tau, double *a_inf, double *rms)
{
	if (n < 6 || !(tau > 0))
		return false;
	double t_end = series[n - 1].t;
	size_t from = n;
	while (from > 0 && t_end - series[from - 1].t <= 3.0 * tau)
		from--;
	if (n - from < 6)
		return false;
	double t0 = series[from].t;
	const double g = 0.5 * (sqrt(5.0) - 1.0);
	double lo = log(tau / 4), hi = log(tau * 4);
	double x1 = hi - g * (hi - lo), x2 = lo + g * (hi - lo), a1, a2;
	double f1 = exp_fit(series, from, n, t0, exp(x1), &a1), f2 = exp_fit(series, from, n, t0, exp(x2), &a2);
	for (int it = 0; it < 30; it++) {
		if (f1 < f2) {
			hi = x2;
			x2 = x1;
			f2 = f1;
			x1 = hi - g * (hi - lo);
			f1 = exp_fit(series, from, n, t0, exp(x1), &a1);
		} else {
			lo = x1;
			x1 = x2;
			f1 = f2;
			x2 = lo + g * (hi - lo);
			f2 = exp_fit(series, from, n, t0, exp(x2), &a2);
		}
	}
	double ss = exp_fit(series, from, n, t0, exp(0.5 * (lo + hi)), a_inf);
	if (!isfinite(ss))
		return false;
	*rms = sqrt(ss / (double)(n - from - 3));
	return true;
}

