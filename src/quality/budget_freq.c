/* src/quality/budget_freq.c - GUM budgets of a frequency sweep's fitted L, R, C and self-resonance */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "budget.h"
#include "budget_internal.h"

/* Relative step of the central difference in the meter's gain: large
 * against the fit's convergence tolerance, small against the model's
 * curvature (as for the bias budgets). */
#define GAIN_STEP 0.01

enum { Q_L, Q_R, Q_C, Q_SRF, Q_N };

typedef struct freq_point {
	bool ok;
	double y[Q_N];
} freq_point;

static void quantities(const hb_fit_freq_result *r, double *y)
{
	y[Q_L] = r->param[HB_FREQ_L];
	y[Q_R] = r->param[HB_FREQ_R];
	y[Q_C] = r->param[HB_FREQ_C];
	y[Q_SRF] = r->srf;
}

/* The model refitted with every reading (both parts of the impedance) times gain. */
static freq_point refit_gain(hb_fit_ws *ws, const double *f, const double *Ls, const double *Rs, size_t n,
			     const hb_fit_freq_options *fo, double gain)
{
	freq_point fp = { .ok = false };
	double *buf = malloc(sizeof *buf * 2 * (n ? n : 1));
	hb_fit_freq_result *res = malloc(sizeof *res);
	if (!buf || !res)
		goto out;
	for (size_t i = 0; i < n; i++) {
		buf[i] = Ls[i] * gain;
		buf[n + i] = Rs[i] * gain;
	}
	if (hb_fit_freq(ws, f, buf, buf + n, n, fo, res) == HB_OK) {
		quantities(res, fp.y);
		fp.ok = true;
	}
out:
	free(buf);
	free(res);
	return fp;
}

size_t hb_budget_freq(const hb_fit_freq_result *q, const double *f, const double *Ls, const double *Rs, size_t n,
		      const hb_fit_freq_options *fo, const hb_budget_context *ctx, hb_budget *out, size_t cap)
{
	static const char *const names[Q_N] = { "L", "R", "C", "srf" };
	static const char *const units[Q_N] = { "H", "ohm", "F", "Hz" };
	double y[Q_N], se[Q_N] = { q->std_err[HB_FREQ_L], q->std_err[HB_FREQ_R], q->std_err[HB_FREQ_C], q->srf_se };
	quantities(q, y);

	double dy_dg[Q_N];
	bool have_gain = false;
	if (isfinite(ctx->meter_rel)) {
		hb_fit_ws *ws = hb_fit_ws_new();
		if (ws) {
			freq_point up = refit_gain(ws, f, Ls, Rs, n, fo, 1 + GAIN_STEP);
			freq_point dn = refit_gain(ws, f, Ls, Rs, n, fo, 1 - GAIN_STEP);
			if ((have_gain = up.ok && dn.ok))
				for (int j = 0; j < Q_N; j++)
					dy_dg[j] = (up.y[j] - dn.y[j]) / (2 * GAIN_STEP);
		}
		hb_fit_ws_free(ws);
	}

	hb_unc_budget *ub = hb_unc_new();
	if (!ub)
		return 0;
	size_t m = 0;
	double dof = q->dof > 0 ? (double)q->dof : INFINITY;
	for (int j = 0; j < Q_N && m < cap; j++) {
		if (!isfinite(y[j]))
			continue;
		hb_budget *bg = &out[m];
		hb_budget__start(bg, names[j], units[j], y[j], se[j]);
		hb_budget_pending in[2] = {
			{ "fit (Type A)", units[j], HB_UNC_TYPE_A, y[j], se[j], 1, dof, "" },
			{ "meter gain", "", HB_UNC_TYPE_B, 1, hb_unc_rectangular(ctx->meter_rel),
			  have_gain ? dy_dg[j] : NAN, INFINITY, "" },
		};
		snprintf(in[0].source, sizeof in[0].source,
			 "standard error from the fit's covariance: %zu readings, real and imaginary parts, %zu degrees of freedom", n, q->dof);
		hb_budget__meter_source(ctx, in[1].source, sizeof in[1].source);
		if (!hb_budget__evaluate(ub, bg, in, 2))
			continue;
		snprintf(bg->note, sizeof bg->note, "%s%s",
			 have_gain ? "" : "no meter accuracy stated: Type A only; ",
			 "not included: the meter's phase and source-frequency accuracy (not in its stated accuracy)");
		m++;
	}
	hb_unc_free(ub);
	return m;
}
