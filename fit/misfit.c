/* fit/misfit.c - why a model misfits: the current moving during the readings, heating, or the law */
#include <math.h>
#include <string.h>

#include "fit_internal.h"

const char *hb_misfit_cause_name(hb_misfit_cause cause)
{
	switch (cause) {
	case HB_MISFIT_NONE:
		return "none";
	case HB_MISFIT_CURRENT_MOVED:
		return "current-moved";
	case HB_MISFIT_HEATING:
		return "heating";
	case HB_MISFIT_LAW:
		return "law-mismatch";
	default:
		return "unknown";
	}
}

/* dL/dI at point i from its neighbours (one-sided at the ends). */
static double slope_at(const double *I, const double *L, size_t n, size_t i)
{
	size_t a = i > 0 ? i - 1 : i, b = i + 1 < n ? i + 1 : i;
	return I[b] > I[a] ? (L[b] - L[a]) / (I[b] - I[a]) : NAN;
}

/* Rising-bias L at current x, linear between the points; NAN outside. */
static double rising_at(const double *I, const double *L, size_t n, double x)
{
	if (n < 2 || !(x >= I[0]) || !(x <= I[n - 1]))
		return NAN;
	for (size_t i = 1; i < n; i++)
		if (x <= I[i])
			return L[i - 1] + (L[i] - L[i - 1]) * (x - I[i - 1]) / (I[i] - I[i - 1]);
	return NAN;
}

int hb_fit_misfit_diagnose(const double *I, const double *L, const double *resid, const double *bias_spread,
			   size_t n, const double *I_down, const double *L_down, size_t n_down, double noise,
			   double limit, hb_misfit_diag *out)
{
	if (!out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	out->noise_ratio = out->current_ratio = out->heating_ratio = out->residual_rms = NAN;
	if (!I || !L || !resid || n < 3 || (n_down && (!I_down || !L_down)))
		return HB_ERR_ARG;
	if (!(noise > 0) || !isfinite(noise))
		return HB_ERR_DATA;
	if (!(limit > 0))
		limit = 3;
	double ss = 0;
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(resid[i]) || !isfinite(I[i]) || !isfinite(L[i]) || (i > 0 && !(I[i] > I[i - 1])))
			return HB_ERR_DATA;
		ss += resid[i] * resid[i];
	}
	double rms = sqrt(ss / (double)n);
	out->residual_rms = rms;
	out->noise_ratio = rms / noise;
	if (out->noise_ratio <= limit) {
		out->cause = HB_MISFIT_NONE;
		return HB_OK;
	}

	/* 1. The current moved while the meter read: a point then carries an
	 * error of about spread x |dL/dI|, largest on the steep part of the
	 * curve, where a law misfit also shows first. Checked before the law
	 * is blamed. NAN spreads (older stores) are skipped. */
	double sm = 0;
	size_t nm = 0;
	for (size_t i = 0; bias_spread && i < n; i++) {
		double s = bias_spread[i], d = slope_at(I, L, n, i);
		if (!isfinite(s) || s < 0 || !isfinite(d))
			continue;
		sm += s * d * s * d;
		nm++;
	}
	out->current_points = nm;
	if (nm > 0)
		out->current_ratio = sqrt(sm / (double)nm) / rms;

	/* 2. Heating: the falling-bias readings come later, with the winding
	 * and core warmer; their offset from the rising ones at the same
	 * current measures what temperature did over the sweep. */
	double sh = 0;
	size_t nh = 0;
	for (size_t i = 0; i < n_down; i++) {
		double up = rising_at(I, L, n, I_down[i]);
		if (!isfinite(up) || !isfinite(L_down[i]))
			continue;
		sh += (L_down[i] - up) * (L_down[i] - up);
		nh++;
	}
	out->heating_points = nh;
	if (nh > 0)
		out->heating_ratio = sqrt(sh / (double)nh) / rms;

	/* "comparable": the suspect accounts for at least half the residual rms */
	if (isfinite(out->current_ratio) && out->current_ratio >= 0.5)
		out->cause = HB_MISFIT_CURRENT_MOVED;
	else if (isfinite(out->heating_ratio) && out->heating_ratio >= 0.5)
		out->cause = HB_MISFIT_HEATING;
	else
		out->cause = HB_MISFIT_LAW;
	return HB_OK;
}
