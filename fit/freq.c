/* fit/freq.c - frequency model: series L and R with parallel C (and Rp), self-resonance, Q and the flat band */
#include <complex.h>
#include <math.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "fit_internal.h"

/* <complex.h> names the unit I; the fit headers use I for current */
#undef I
#define J_UNIT _Complex_I

void hb_fit_z_to_series(double f, double zmag, double theta, double *Ls, double *Rs)
{
	if (Rs)
		*Rs = zmag * cos(theta);
	if (Ls)
		*Ls = f > 0 ? zmag * sin(theta) / (2 * M_PI * f) : NAN;
}

static double complex model_z(const double *par, bool rp, double w)
{
	double complex zs = par[HB_FREQ_R] + J_UNIT * w * par[HB_FREQ_L];
	double complex y = 1 / zs + J_UNIT * w * par[HB_FREQ_C];
	if (rp)
		y += 1 / par[HB_FREQ_RP];
	return 1 / y;
}

void hb_fit_freq_eval(const hb_fit_freq_result *res, double f, double *Ls, double *Rs, double *Q)
{
	double w = 2 * M_PI * f;
	double complex z = model_z(res->param, res->p == 4, w);
	if (Ls)
		*Ls = cimag(z) / w;
	if (Rs)
		*Rs = creal(z);
	if (Q)
		*Q = cimag(z) / creal(z);
}

typedef struct freq_ctx {
	const double *w, *zmag;
	size_t n, p;
} freq_ctx;

/* residuals (Zmodel - Zmeas)/|Zmeas|, real parts then imaginary parts, so
 * every frequency counts alike whatever |Z| does near resonance */
static int freq_model(const double *th, void *vctx, double *f, double *jac)
{
	const freq_ctx *c = vctx;
	double par[4] = { exp(th[0]), exp(th[1]), exp(th[2]), c->p == 4 ? exp(th[3]) : INFINITY };
	for (size_t j = 0; j < c->p; j++)
		if (!isfinite(par[j]) || !(par[j] > 0))
			return -1;
	for (size_t i = 0; i < c->n; i++) {
		double w = c->w[i];
		double complex zs = par[HB_FREQ_R] + J_UNIT * w * par[HB_FREQ_L];
		double complex y = 1 / zs + J_UNIT * w * par[HB_FREQ_C];
		if (c->p == 4)
			y += 1 / par[HB_FREQ_RP];
		double complex z = 1 / y;
		f[i] = creal(z) / c->zmag[i];
		f[c->n + i] = cimag(z) / c->zmag[i];
		if (jac) {
			double complex z2 = -z * z / c->zmag[i];
			double complex dy[4];
			dy[0] = par[0] * (-J_UNIT * w) / (zs * zs);
			dy[1] = par[1] * (-1) / (zs * zs);
			dy[2] = J_UNIT * w * par[2];
			dy[3] = c->p == 4 ? -1 / par[3] : 0;
			for (size_t k = 0; k < c->p; k++) {
				double complex dz = z2 * dy[k];
				jac[i * c->p + k] = creal(dz);
				jac[(c->n + i) * c->p + k] = cimag(dz);
			}
		}
	}
	return 0;
}

typedef struct q_ctx {
	const hb_fit_freq_result *res;
	double target;
} q_ctx;

static double ls_minus_target(double lf, void *p)
{
	const q_ctx *c = p;
	double ls;
	hb_fit_freq_eval(c->res, exp(lf), &ls, NULL, NULL);
	return ls - c->target;
}

static double model_band(hb_fit_freq_result *out, double f0, double within)
{
	double ls0;
	hb_fit_freq_eval(out, f0, &ls0, NULL, NULL);
	q_ctx c = { out, (1 + within) * ls0 };
	double l0 = log(f0), l1 = log(out->srf > f0 ? out->srf : f0 * 1e3);
	enum { NG = 400 };
	double prev = l0;
	for (int k = 1; k <= NG; k++) {
		double lf = l0 + (l1 - l0) * k / NG;
		if (ls_minus_target(lf, &c) >= 0) {
			gsl_function F = { ls_minus_target, &c };
			gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
			double root = NAN;
			if (s && gsl_root_fsolver_set(s, &F, prev, lf) == GSL_SUCCESS) {
				for (int it = 0; it < 200; it++) {
					if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
						break;
					if (gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s),
								   0, 1e-13) == GSL_SUCCESS) {
						root = exp(gsl_root_fsolver_root(s));
						break;
					}
				}
			}
			gsl_root_fsolver_free(s);
			return root;
		}
		prev = lf;
	}
	return NAN;
}

int hb_fit_freq(hb_fit_ws *ws, const double *f, const double *Ls, const double *Rs, size_t n,
		const hb_fit_freq_options *opt, hb_fit_freq_result *out)
{
	if (!ws || !out || !f || !Ls || !Rs)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	ws->err[0] = 0;
	bool rp = opt && opt->parallel_r;
	double within = opt && opt->within > 0 ? opt->within : 0.05;
	size_t p = rp ? 4 : 3;
	if (n < p + 1) {
		hb__fit_seterr(ws, "too few frequency points: %zu (at least %zu)", n, p + 1);
		return HB_ERR_DATA;
	}
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(f[i]) || !isfinite(Ls[i]) || !isfinite(Rs[i])) {
			hb__fit_seterr(ws, "point %zu is not a number", i);
			return HB_ERR_DATA;
		}
		if (!(f[i] > 0) || (i > 0 && !(f[i] > f[i - 1]))) {
			hb__fit_seterr(ws, "frequency not positive and strictly increasing at point %zu", i);
			return HB_ERR_DATA;
		}
	}
	if (!(Ls[0] > 0)) {
		hb__fit_seterr(ws, "lowest-frequency inductance %g H not positive", Ls[0]);
		return HB_ERR_DATA;
	}
	double *buf = hb__fit_scratch(ws, 4 * n);
	if (!buf)
		return HB_ERR_NOMEM;
	double *w = buf, *zm = buf + n, *y = buf + 2 * n;
	double zmax = 0;
	for (size_t i = 0; i < n; i++) {
		w[i] = 2 * M_PI * f[i];
		zm[i] = hypot(Rs[i], w[i] * Ls[i]);
		if (!(zm[i] > 0)) {
			hb__fit_seterr(ws, "point %zu: |Z| is zero", i);
			return HB_ERR_DATA;
		}
		y[i] = Rs[i] / zm[i];
		y[n + i] = w[i] * Ls[i] / zm[i];
		if (zm[i] > zmax)
			zmax = zm[i];
	}
	/* starts: L and R from the lowest frequency; C from the rise of Ls
	 * (Ls ~ L / (1 - w^2 L C) below resonance), else resonance at 10 f_max */
	double L0 = Ls[0], R0 = Rs[0] > 0 ? Rs[0] : 1e-3 * w[0] * L0;
	double C0 = 1 / (L0 * 100 * w[n - 1] * w[n - 1]);
	for (size_t i = n; i-- > 1;) {
		if (Ls[i] > 1.02 * L0) {
			C0 = (1 - L0 / Ls[i]) / (w[i] * w[i] * L0);
			break;
		}
	}
	double start[4] = { log(L0), log(R0), log(C0), log(10 * zmax) };
	freq_ctx c = { w, zm, n, p };
	hb_fit_problem pr = { .n = 2 * n, .p = p, .y = y, .sigma = NULL, .model = freq_model, .ctx = &c };
	hb_fit_nlls_result nr;
	int rc = hb_fit_nlls_run(ws->nlls, &pr, start, &nr);
	out->nlls_flags = nr.flags;
	out->iterations = nr.iterations;
	out->starts = nr.starts;
	if (rc) {
		hb__fit_seterr(ws, "frequency fit: %s", hb_fit_nlls_error(ws->nlls));
		return rc;
	}
	out->p = p;
	out->dof = nr.dof;
	out->rss = nr.rss;
	for (size_t j = 0; j < 4; j++)
		out->param[j] = j < p ? exp(nr.theta[j]) : INFINITY;
	for (size_t a = 0; a < 4; a++) {
		for (size_t b = 0; b < 4; b++)
			out->cov[a * 4 + b] =
				(a < p && b < p) ? out->param[a] * out->param[b] * nr.cov[a * p + b] : 0;
		out->std_err[a] = a < p ? sqrt(out->cov[a * 4 + a]) : NAN;
	}
	double covp[16];
	for (size_t a = 0; a < p; a++)
		for (size_t b = 0; b < p; b++)
			covp[a * p + b] = out->cov[a * 4 + b];
	out->undetermined = hb__fit_undetermined(out->param, covp, p, NULL);

	double Lf = out->param[HB_FREQ_L], Cf = out->param[HB_FREQ_C];
	out->srf = 1 / (2 * M_PI * sqrt(Lf * Cf));
	double rl = out->std_err[0] / Lf, rcv = out->std_err[2] / Cf, rlc = out->cov[0 * 4 + 2] / (Lf * Cf);
	out->srf_se = out->srf * 0.5 * sqrt(fmax(0, rl * rl + rcv * rcv + 2 * rlc));
	/* Q as measured: X/R of each reading. A model Q with the constant R of
	 * this fit overstates it by orders of magnitude near resonance, where
	 * skin, proximity and core losses raise the real Rs; none is reported. */
	out->q_max = out->q_max_freq = NAN;
	for (size_t i = 0; i < n; i++) {
		if (!(Rs[i] > 0))
			continue;
		double q = w[i] * Ls[i] / Rs[i];
		if (!isfinite(out->q_max) || q > out->q_max) {
			out->q_max = q;
			out->q_max_freq = f[i];
		}
	}

	/* measured flat band */
	out->band_lo = f[0];
	out->band_hi = f[n - 1];
	for (size_t i = 1; i < n; i++) {
		double dev = fabs(Ls[i] - Ls[0]) / Ls[0];
		if (dev > within) {
			double dprev = fabs(Ls[i - 1] - Ls[0]) / Ls[0];
			double t = (within - dprev) / (dev - dprev);
			out->band_hi = f[i - 1] + t * (f[i] - f[i - 1]);
			break;
		}
	}
	out->model_band_hi = model_band(out, f[0], within);
	return HB_OK;
}
