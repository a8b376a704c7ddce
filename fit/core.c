/* fit/core.c - core model: magnetic circuit N I = H(B) le + B g / mu0 with a saturating law, fitted to L(I) */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>

#include "fit_internal.h"

const char *hb_core_law_name(hb_core_law law)
{
	switch (law) {
	case HB_CORE_FROHLICH:
		return "frohlich-kennelly";
	case HB_CORE_LANGEVIN:
		return "langevin";
	case HB_CORE_TANH:
		return "tanh";
	default:
		return "unknown";
	}
}

/*
 * Each law is written B = Bsat s(x), x = mu0 mu_i H / Bsat, with s'(0) = 1
 * so that mu_i is the initial permeability whatever the law. s, s', s'' for
 * x >= 0 (the laws are odd; the fit uses |I|).
 */
static void law_s(hb_core_law law, double x, double *s, double *s1, double *s2)
{
	switch (law) {
	case HB_CORE_FROHLICH: {
		double d = 1 / (1 + x);
		*s = x * d;
		*s1 = d * d;
		*s2 = -2 * d * d * d;
		return;
	}
	case HB_CORE_TANH: {
		/* through exp(-2x): sech^2 stays accurate deep in saturation */
		double e = exp(-2 * x), d = 1 / (1 + e);
		double t = (1 - e) * d;
		*s = t;
		*s1 = 4 * e * d * d;
		*s2 = -2 * t * *s1;
		return;
	}
	case HB_CORE_LANGEVIN:
	default: {
		double y = 3 * x, l, l1, l2;
		if (y < 0.1) {
			/* series: coth y - 1/y loses every digit near zero */
			double y2 = y * y;
			l = y * (1.0 / 3 + y2 * (-1.0 / 45 + y2 * (2.0 / 945 + y2 * (-1.0 / 4725 + y2 * 2.0 / 93555))));
			l1 = 1.0 / 3 + y2 * (-1.0 / 15 + y2 * (2.0 / 189 + y2 * (-1.0 / 675 + y2 * 2.0 / 10395)));
			l2 = y * (-2.0 / 15 + y2 * (8.0 / 189 + y2 * (-6.0 / 675 + y2 * 16.0 / 10395)));
		} else {
			/* coth and csch^2 from one exp(-2y) */
			double e = exp(-2 * y), om = 1 - e;
			double ct = (1 + e) / om, csch2 = 4 * e / (om * om);
			l = ct - 1 / y;
			l1 = 1 / (y * y) - csch2;
			l2 = -2 / (y * y * y) + 2 * ct * csch2;
		}
		*s = l;
		*s1 = 3 * l1;
		*s2 = 9 * l2;
		return;
	}
	}
}

/* x solving le x + g mu s(x) = c (c >= 0). The left side is increasing and
 * concave, so Newton from any point left of the root climbs to it without
 * overshooting; the previous bias point's root is such a point. */
static int solve_x(hb_core_law law, double le, double gmu, double c, double x, double *root)
{
	if (!(x >= 0) || !isfinite(x))
		x = 0;
	for (int it = 0; it < 300; it++) {
		double s, s1, s2;
		law_s(law, x, &s, &s1, &s2);
		double phi = le * x + gmu * s - c;
		double dphi = le + gmu * s1;
		double step = phi / dphi;
		x -= step;
		if (x < 0)
			x = 0;
		if (!isfinite(x))
			return -1;
		if (fabs(step) <= 1e-14 * (1 + x)) {
			*root = x;
			return 0;
		}
	}
	*root = x;
	return 0;
}

typedef struct core_point {
	double L, B, H;
	double dL[3], dB[3]; /* with respect to ln mu_i, ln g, ln Bsat */
} core_point;

static int core_eval_point(hb_core_law law, double mu, double g, double bs, const hb_core_geometry *geo, double I,
			   double *xwarm, core_point *pt)
{
	const double mu0 = HB_FIT_MU0;
	double a = mu0 * mu, le = geo->le, K = geo->turns * geo->turns * geo->Ae;
	double c = geo->turns * fabs(I) * a / bs;
	double x;
	if (solve_x(law, le, g * mu, c, *xwarm, &x))
		return -1;
	*xwarm = x;
	double s, s1, s2;
	law_s(law, x, &s, &s1, &s2);
	double Bp = a * s1, Bpp = a * a * s2 / bs;
	double D = le + g * Bp / mu0;
	pt->B = bs * s;
	pt->H = x * bs / a;
	pt->L = K * Bp / D;
	/* implicit differentiation of the circuit equation at fixed I */
	double dH_mu = -(g / mu0) * (bs * x * s1) / D;
	double dH_bs = -(g / mu0) * bs * (s - x * s1) / D;
	double dH_g = -(g * pt->B / mu0) / D;
	double dBp_mu = a * (s1 + x * s2) + Bpp * dH_mu;
	double dBp_bs = -a * x * s2 + Bpp * dH_bs;
	double dBp_g = Bpp * dH_g;
	double D2 = D * D;
	pt->dL[HB_CORE_MU_I] = K * le * dBp_mu / D2;
	pt->dL[HB_CORE_GAP] = K * (le * dBp_g - g * Bp * Bp / mu0) / D2;
	pt->dL[HB_CORE_BSAT] = K * le * dBp_bs / D2;
	pt->dB[HB_CORE_MU_I] = bs * x * s1 + Bp * dH_mu;
	pt->dB[HB_CORE_GAP] = Bp * dH_g;
	pt->dB[HB_CORE_BSAT] = bs * (s - x * s1) + Bp * dH_bs;
	if (I < 0)
		pt->B = -pt->B, pt->H = -pt->H;
	return 0;
}

static bool geometry_ok(const hb_core_geometry *geo)
{
	return geo && geo->turns > 0 && geo->Ae > 0 && geo->le > 0 && isfinite(geo->turns) && isfinite(geo->Ae) &&
	       isfinite(geo->le) && geo->window_height >= 0;
}

int hb_core_model_eval(hb_core_law law, const hb_core_params *par, const hb_core_geometry *geo, const double *I,
		       size_t n, double *L_out, double *B_out)
{
	if (!par || !I || (unsigned)law >= HB_CORE_NLAWS || !geometry_ok(geo))
		return HB_ERR_ARG;
	if (!(par->mu_i > 0) || !(par->gap >= 0) || !(par->bsat > 0))
		return HB_ERR_ARG;
	double xw = 0, prev = 0;
	for (size_t i = 0; i < n; i++) {
		core_point pt;
		if (!isfinite(I[i]))
			return HB_ERR_DATA;
		if (fabs(I[i]) < prev)
			xw = 0;
		prev = fabs(I[i]);
		if (core_eval_point(law, par->mu_i, par->gap, par->bsat, geo, I[i], &xw, &pt))
			return HB_ERR_FIT;
		if (L_out)
			L_out[i] = pt.L;
		if (B_out)
			B_out[i] = pt.B;
	}
	return HB_OK;
}

/* ---------------- fitting ---------------- */

typedef struct core_ctx {
	hb_core_law law;
	const double *I;
	size_t n;
	const hb_core_geometry *geo;
	double scale;           /* L units of the fit */
	bool fixed[3];
	double value[3];        /* fixed values (natural) */
	int map[3];             /* free parameter index -> core parameter */
	size_t p;
	double *xroot;          /* last root per point: Newton starts there */
} core_ctx;

static void unpack(const core_ctx *c, const double *th, double nat[3])
{
	for (int j = 0; j < 3; j++)
		nat[j] = c->value[j];
	for (size_t k = 0; k < c->p; k++)
		nat[c->map[k]] = exp(th[k]);
}

static int core_model(const double *th, void *vctx, double *f, double *jac)
{
	const core_ctx *c = vctx;
	double nat[3];
	unpack(c, th, nat);
	for (int j = 0; j < 3; j++)
		if (!isfinite(nat[j]) || (j != HB_CORE_GAP && !(nat[j] > 0)))
			return -1;
	for (size_t i = 0; i < c->n; i++) {
		core_point pt;
		double xw = c->xroot[i];
		if (core_eval_point(c->law, nat[0], nat[1], nat[2], c->geo, c->I[i], &xw, &pt))
			return -1;
		c->xroot[i] = xw;
		f[i] = pt.L / c->scale;
		if (jac)
			for (size_t k = 0; k < c->p; k++)
				jac[i * c->p + k] = pt.dL[c->map[k]] / c->scale;
	}
	return 0;
}

/* x where s'(x) = q (0 < q < 1): s' falls monotonically for all laws. */
static double x_at_slope(hb_core_law law, double q)
{
	double lo = 0, hi = 200;
	for (int it = 0; it < 80; it++) {
		double mid = 0.5 * (lo + hi), s, s1, s2;
		law_s(law, mid, &s, &s1, &s2);
		if (s1 > q)
			lo = mid;
		else
			hi = mid;
	}
	return 0.5 * (lo + hi);
}

static int fit_law(hb_fit_ws *ws, core_ctx *c, const double *y, const double *sig, const double start_nat[3],
		   bool quick, hb_fit_core_law_result *lr)
{
	double start[3];
	c->p = 0;
	for (int j = 0; j < 3; j++) {
		if (!c->fixed[j]) {
			c->map[c->p] = j;
			start[c->p++] = log(start_nat[j]);
		}
	}
	for (size_t i = 0; i < c->n; i++)
		c->xroot[i] = 0;
	memset(lr, 0, sizeof *lr);
	lr->law = c->law;
	for (int j = 0; j < 3; j++)
		lr->fixed[j] = c->fixed[j];
	hb_fit_problem pr = { .n = c->n, .p = c->p, .y = y, .sigma = sig, .model = core_model, .ctx = c,
			      .max_iter = quick ? 60 : 0, .single_start = quick };
	hb_fit_nlls_result nr;
	int rc = hb_fit_nlls_run(ws->nlls, &pr, start, &nr);
	lr->nlls_flags = nr.flags;
	lr->iterations = nr.iterations;
	lr->starts = nr.starts;
	double nat[3];
	unpack(c, nr.theta, nat);
	for (int j = 0; j < 3; j++)
		lr->param[j] = nat[j];
	lr->status = rc;
	if (rc)
		return rc;
	for (size_t a = 0; a < c->p; a++) {
		for (size_t b = 0; b < c->p; b++)
			lr->cov[c->map[a] * 3 + c->map[b]] = nat[c->map[a]] * nat[c->map[b]] * nr.cov[a * c->p + b];
	}
	for (int j = 0; j < 3; j++)
		lr->std_err[j] = sqrt(lr->cov[j * 3 + j]);
	lr->rss = nr.rss * c->scale * c->scale;
	lr->chi2 = sig ? nr.chi2 : lr->rss;
	lr->dof = nr.dof;
	lr->residual_rms = sqrt(lr->rss / (double)c->n);
	double k = (double)c->p, n = (double)c->n;
	double chi = sig ? nr.chi2 : nr.rss;
	lr->aicc = n * log(chi / n) + 2 * k + (n - k - 1 > 0 ? 2 * k * (k + 1) / (n - k - 1) : INFINITY);
	lr->undetermined = hb__fit_undetermined(lr->param, lr->cov, 3, lr->fixed);
	return HB_OK;
}

typedef struct energy_ctx {
	hb_core_law law;
	double par[3];
	const hb_core_geometry *geo;
} energy_ctx;

static double energy_integrand(double i, void *vp)
{
	const energy_ctx *e = vp;
	double xw = 0;
	core_point pt;
	if (core_eval_point(e->law, e->par[0], e->par[1], e->par[2], e->geo, i, &xw, &pt))
		return NAN;
	return i * pt.L;
}

int hb_fit_core(hb_fit_ws *ws, const double *I, const double *L, const double *sigma, size_t n,
		const hb_fit_options *opt, hb_fit_core_result *out)
{
	if (!ws || !out || !opt)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	ws->err[0] = 0;
	for (int l = 0; l < HB_CORE_NLAWS; l++) {
		out->law[l].law = (hb_core_law)l;
		out->law[l].status = HB_ERR_UNSUPPORTED;
	}
	const hb_core_geometry *geo = &opt->geo;
	if (!geometry_ok(geo)) {
		hb__fit_seterr(ws, "core model needs turns, Ae and le > 0 (turns %g, Ae %g m2, le %g m)",
			       geo->turns, geo->Ae, geo->le);
		return HB_ERR_ARG;
	}
	int rc = hb__fit_check_sweep(I, L, sigma, n, ws->err, sizeof ws->err);
	if (rc)
		return rc;
	const double fixv[3] = { opt->fix_mu_i, opt->fix_gap, opt->fix_bsat };
	size_t nfree = 0;
	for (int j = 0; j < 3; j++) {
		if (isnan(fixv[j])) {
			nfree++;
		} else if (!(fixv[j] > 0 || (j == HB_CORE_GAP && fixv[j] == 0)) || !isfinite(fixv[j])) {
			hb__fit_seterr(ws, "fixed %s %g out of range (must be > 0%s)",
				       j == 0 ? "mu_i" : j == 1 ? "gap" : "Bsat", fixv[j], j == 1 ? ", or 0" : "");
			return HB_ERR_ARG;
		}
	}
	if (nfree == 0) {
		hb__fit_seterr(ws, "every core parameter is fixed: nothing to fit");
		return HB_ERR_ARG;
	}
	if (n < nfree + 2) {
		hb__fit_seterr(ws, "too few points for the core model: %zu", n);
		return HB_ERR_DATA;
	}
	hb_fit_modelfree_result mf;
	rc = hb_fit_modelfree(I, L, sigma, n, opt, &mf);
	if (rc) {
		hb__fit_seterr(ws, "model-free pass failed: %s", hb_status_name(rc));
		return rc;
	}
	const double mu0 = HB_FIT_MU0, N = geo->turns;
	out->mu_e = mf.L0 * geo->le / (mu0 * N * N * geo->Ae);
	out->mu_e_se = mf.L0_std_err * geo->le / (mu0 * N * N * geo->Ae);
	out->AL = mf.L0 / (N * N);
	out->AL_se = mf.L0_std_err / (N * N);
	out->rated_current = opt->rated_current > 0 ? opt->rated_current : I[n - 1];

	/* where the data show saturation: the 30 % drop, else how far it got */
	double q = NAN, Iq = NAN;
	for (size_t d = 0; d < mf.n_drops; d++)
		if (mf.drop[d].reached && fabs(mf.drop[d].fraction - 0.3) < 1e-9)
			q = 0.7, Iq = mf.drop[d].current;
	if (isnan(q)) {
		out->flags |= HB_CORE_KNEE_UNREACHED;
		double ql = L[n - 1] / mf.L0;
		if (ql < 0.97)
			q = ql, Iq = I[n - 1];
	}

	double *buf = hb__fit_scratch(ws, 3 * n);
	if (!buf)
		return HB_ERR_NOMEM;
	double scale = mf.L0, *ys = buf, *ss = sigma ? buf + n : NULL, *xroot = buf + 2 * n;
	for (size_t i = 0; i < n; i++) {
		ys[i] = L[i] / scale;
		if (ss)
			ss[i] = sigma[i] / scale;
	}

	/* starts: the low-bias reluctance le/mu_e is shared between core and
	 * gap; free both and they start at half each */
	double R = geo->le / out->mu_e;
	double mu_s, g_s;
	if (!isnan(fixv[0]) && !isnan(fixv[1])) {
		mu_s = fixv[0];
		g_s = fixv[1];
	} else if (!isnan(fixv[0])) {
		mu_s = fixv[0];
		g_s = R - geo->le / mu_s;
		if (!(g_s > 0))
			g_s = 0.05 * R;
	} else if (!isnan(fixv[1])) {
		g_s = fixv[1];
		double rc_ = R - g_s;
		mu_s = rc_ > 0 ? geo->le / rc_ : 10 * out->mu_e;
	} else {
		mu_s = 2 * out->mu_e;
		g_s = 0.5 * R;
	}

	unsigned laws = opt->laws ? opt->laws : 7u;
	double best_aicc = INFINITY;
	bool any = false, gap_zero[HB_CORE_NLAWS] = { false };
	for (int l = 0; l < HB_CORE_NLAWS; l++) {
		if (!(laws & (1u << l)))
			continue;
		core_ctx c = { .law = (hb_core_law)l, .I = I, .n = n, .geo = geo, .scale = scale, .xroot = xroot };
		for (int j = 0; j < 3; j++) {
			c.fixed[j] = !isnan(fixv[j]);
			c.value[j] = fixv[j];
		}
		double st[3] = { mu_s, g_s, 1.0 };
		if (!isnan(fixv[2])) {
			st[2] = fixv[2];
		} else if (!isnan(q)) {
			double r = g_s * mu_s / geo->le;
			double x = x_at_slope((hb_core_law)l, q / (1 + r * (1 - q)));
			double s, s1, s2;
			law_s((hb_core_law)l, x, &s, &s1, &s2);
			st[2] = N * Iq * mu0 * mu_s / (geo->le * x + g_s * mu_s * s);
		} else {
			st[2] = 3 * mu0 * out->mu_e * N * I[n - 1] / geo->le;
		}
		hb_fit_core_law_result *lr = &out->law[l];
		/* A quick run first. A law that cannot bend like the data drives
		 * ln g off towards minus infinity ("no gap"): hold g at zero then,
		 * and only as a last resort pay for the restarts. */
		fit_law(ws, &c, ys, ss, st, true, lr);
		bool collapsed = isnan(fixv[1]) && nfree > 1 && lr->param[1] * lr->param[0] < 1e-2 * geo->le;
		if (collapsed && (lr->status != HB_OK || lr->param[1] * lr->param[0] < 1e-3 * geo->le)) {
			hb_fit_core_law_result alt;
			c.fixed[1] = true;
			c.value[1] = 0;
			double st0[3] = { isnan(fixv[0]) ? out->mu_e : fixv[0], 0, st[2] };
			if (fit_law(ws, &c, ys, ss, st0, false, &alt) == HB_OK &&
			    (lr->status != HB_OK || alt.aicc <= lr->aicc + 2)) {
				*lr = alt;
				lr->undetermined |= 1u << HB_CORE_GAP;
				gap_zero[l] = true;
			}
			c.fixed[1] = false;
			c.value[1] = NAN;
		}
		if (lr->status != HB_OK)
			fit_law(ws, &c, ys, ss, st, false, lr);
		if (lr->status == HB_OK) {
			any = true;
			if (lr->aicc < best_aicc) {
				best_aicc = lr->aicc;
				out->best = (hb_core_law)l;
			}
		}
	}
	if (!any) {
		hb__fit_seterr(ws, "no core law could be fitted: %s", hb_fit_nlls_error(ws->nlls));
		return HB_ERR_FIT;
	}
	const hb_fit_core_law_result *b = &out->law[out->best];
	if (gap_zero[out->best])
		out->flags |= HB_CORE_GAP_ZERO;

	/* the fit against the reading noise */
	double noise = opt->noise_sigma > 0 ? opt->noise_sigma : mf.noise_sigma;
	out->noise_sigma = noise;
	if (noise > 0) {
		out->noise_ratio = b->residual_rms / noise;
		double lim = opt->noise_ratio_limit > 0 ? opt->noise_ratio_limit : 3;
		if (out->noise_ratio > lim)
			out->flags |= HB_CORE_NO_LAW_FITS;
	} else {
		out->noise_ratio = NAN;
		out->flags |= HB_CORE_NOISE_UNKNOWN;
	}

	double mu = b->param[0], g = b->param[1], bs = b->param[2];
	out->gap_implied = geo->le * (1 / out->mu_e - 1 / mu);
	double t1 = geo->le * out->mu_e_se / (out->mu_e * out->mu_e), t2 = geo->le * b->std_err[0] / (mu * mu);
	out->gap_implied_se = sqrt(t1 * t1 + t2 * t2);
	out->gap_physical = out->gap_physical_se = out->fringing_factor = NAN;
	if (geo->window_height > 0 && g > 0) {
		double gp;
		if (hb_fit_gap_physical(g, geo->Ae, geo->window_height, &gp) == HB_OK) {
			out->gap_physical = gp;
			out->fringing_factor = hb_fit_fringing_factor(gp, geo->Ae, geo->window_height);
			double h = 1e-6 * gp;
			double dp = (gp + h) / hb_fit_fringing_factor(gp + h, geo->Ae, geo->window_height);
			double dm = (gp - h) / hb_fit_fringing_factor(gp - h, geo->Ae, geo->window_height);
			double slope = (dp - dm) / (2 * h);
			out->gap_physical_se = slope > 0 ? b->std_err[1] / slope : NAN;
		}
	}

	/* flux density, flux linkage and energy at the rated current */
	core_point pt;
	double xw = 0;
	if (core_eval_point(b->law, mu, g, bs, geo, out->rated_current, &xw, &pt) == 0) {
		out->B_peak = pt.B;
		double var = 0;
		double nat[3] = { mu, g, bs };
		for (int a = 0; a < 3; a++)
			for (int c2 = 0; c2 < 3; c2++)
				if (nat[a] > 0 && nat[c2] > 0)
					var += pt.dB[a] / nat[a] * pt.dB[c2] / nat[c2] * b->cov[a * 3 + c2];
		out->B_peak_se = sqrt(var);
		out->psi_rated = N * geo->Ae * pt.B;
		energy_ctx ec = { b->law, { mu, g, bs }, geo };
		if (hb__fit_integrate(ws, energy_integrand, &ec, out->rated_current, &out->W_rated) != HB_OK)
			out->W_rated = NAN;
	} else {
		out->B_peak = out->B_peak_se = out->psi_rated = out->W_rated = NAN;
	}
	return HB_OK;
}
