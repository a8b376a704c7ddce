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
 * The material is B = mu0 H + J(H): the polarisation J saturates at Js with
 * initial slope mu0 (mu_i - 1), J = Js s(x), x = mu0 (mu_i - 1) H / Js,
 * s'(0) = 1, so dB/dH is mu0 mu_i at zero field whatever the law and never
 * falls below mu0 (a saturated core still carries the vacuum's share).
 * s, s', s'' for x >= 0 (the laws are odd; the fit uses |I|).
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

/* x solving (le + g) x + g m s(x) = c (c >= 0, m = mu_i - 1). The left side
 * is increasing and concave, so Newton from any point left of the root
 * climbs to it without overshooting; the previous bias point's root is such
 * a point. */
static int solve_x(hb_core_law law, double lg, double gm, double c, double x, double *root)
{
	if (!(x >= 0) || !isfinite(x))
		x = 0;
	for (int it = 0; it < 300; it++) {
		double s, s1, s2;
		law_s(law, x, &s, &s1, &s2);
		double phi = lg * x + gm * s - c;
		double dphi = lg + gm * s1;
		double step = phi / dphi;
		x -= step;
		if (x < 0)
			x = 0;
		if (!isfinite(x))
			return -1;
		/* quadratic convergence: the error left after a step this small
		 * is below 1e-16 relative, no need to take one more to see it */
		if (fabs(step) <= 1e-9 * (1 + x)) {
			*root = x;
			return 0;
		}
	}
	*root = x;
	return 0;
}

typedef struct core_point {
	double L, B, H;
	double dL[3], dB[3]; /* with respect to ln(mu_i - 1), ln g, ln Js */
} core_point;

/* Circuit N I = le H + g B(H) / mu0 at one current. Implicit differentiation
 * gives the Jacobian; every partial of B and B' = dB/dH at fixed H is that of
 * the polarisation alone, since mu0 H holds no parameter. */
static int core_eval_point(hb_core_law law, double mu, double g, double js, const hb_core_geometry *geo, double I,
			   double *xwarm, core_point *pt)
{
	const double mu0 = HB_FIT_MU0;
	double m = mu - 1, a = mu0 * m, le = geo->le, K = geo->turns * geo->turns * geo->Ae;
	double c = geo->turns * fabs(I) * a / js;
	double x;
	if (solve_x(law, le + g, g * m, c, *xwarm, &x))
		return -1;
	*xwarm = x;
	double s, s1, s2;
	law_s(law, x, &s, &s1, &s2);
	double H = x * js / a;
	double Bp = mu0 + a * s1, Bpp = a * a * s2 / js;
	double D = le + g * Bp / mu0;
	pt->B = mu0 * H + js * s;
	pt->H = H;
	pt->L = K * Bp / D;
	double dB_m = js * x * s1, dB_js = js * (s - x * s1);
	double dH_m = -(g / mu0) * dB_m / D;
	double dH_js = -(g / mu0) * dB_js / D;
	double dH_g = -(g * pt->B / mu0) / D;
	double dBp_m = a * (s1 + x * s2) + Bpp * dH_m;
	double dBp_js = -a * x * s2 + Bpp * dH_js;
	double dBp_g = Bpp * dH_g;
	double D2 = D * D;
	pt->dL[HB_CORE_MU_I] = K * le * dBp_m / D2;
	pt->dL[HB_CORE_GAP] = K * (le * dBp_g - g * Bp * Bp / mu0) / D2;
	pt->dL[HB_CORE_BSAT] = K * le * dBp_js / D2;
	pt->dB[HB_CORE_MU_I] = dB_m + Bp * dH_m;
	pt->dB[HB_CORE_GAP] = Bp * dH_g;
	pt->dB[HB_CORE_BSAT] = dB_js + Bp * dH_js;
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
	if (!(par->mu_i > 1) || !(par->gap >= 0) || !(par->bsat > 0) || !isfinite(par->mu_i) ||
	    !isfinite(par->gap) || !isfinite(par->bsat))
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
	double w2c;             /* (2 pi f)^2 Cp: the meter reads L / (1 - w2c L); 0 = none */
	bool fixed[3];
	double value[3];        /* fixed values (natural) */
	int map[3];             /* free parameter index -> core parameter */
	size_t p;
	double *xroot;          /* last root per point: Newton starts there */
} core_ctx;

/* theta = (ln(mu_i - 1), ln g, ln Js) for the free ones: mu_i - 1 is the
 * polarisation's share, and keeping it positive keeps mu_i above vacuum. */
static void unpack(const core_ctx *c, const double *th, double nat[3])
{
	for (int j = 0; j < 3; j++)
		nat[j] = c->value[j];
	for (size_t k = 0; k < c->p; k++)
		nat[c->map[k]] = (c->map[k] == HB_CORE_MU_I ? 1 : 0) + exp(th[k]);
}

/* d nat / d theta */
static void nat_slope(const double nat[3], double d[3])
{
	d[HB_CORE_MU_I] = nat[HB_CORE_MU_I] - 1;
	d[HB_CORE_GAP] = nat[HB_CORE_GAP];
	d[HB_CORE_BSAT] = nat[HB_CORE_BSAT];
}

static int core_model(const double *th, void *vctx, double *f, double *jac)
{
	const core_ctx *c = vctx;
	double nat[3];
	unpack(c, th, nat);
	for (int j = 0; j < 3; j++)
		if (!isfinite(nat[j]) || !(nat[j] > (j == HB_CORE_MU_I ? 1 : 0) || (j == HB_CORE_GAP && nat[j] == 0)))
			return -1;
	for (size_t i = 0; i < c->n; i++) {
		core_point pt;
		double xw = c->xroot[i];
		if (core_eval_point(c->law, nat[0], nat[1], nat[2], c->geo, c->I[i], &xw, &pt))
			return -1;
		c->xroot[i] = xw;
		/* the winding capacitance in parallel lifts the series reading */
		double den = 1 - c->w2c * pt.L;
		if (!(den > 0))
			return -1;
		f[i] = pt.L / den / c->scale;
		if (jac) {
			double chain = 1 / (den * den * c->scale);
			for (size_t k = 0; k < c->p; k++)
				jac[i * c->p + k] = pt.dL[c->map[k]] * chain;
		}
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
			start[c->p++] = log(start_nat[j] - (j == HB_CORE_MU_I ? 1 : 0));
		}
	}
	for (size_t i = 0; i < c->n; i++)
		c->xroot[i] = 0;
	memset(lr, 0, sizeof *lr);
	lr->law = c->law;
	for (int j = 0; j < 3; j++)
		lr->fixed[j] = c->fixed[j];
	hb_fit_problem pr = { .n = c->n, .p = c->p, .y = y, .sigma = sig, .model = core_model, .ctx = c,
			      .max_iter = quick ? 30 : 0, .single_start = quick };
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
	double dn[3];
	nat_slope(nat, dn);
	for (size_t a = 0; a < c->p; a++) {
		for (size_t b = 0; b < c->p; b++)
			lr->cov[c->map[a] * 3 + c->map[b]] = dn[c->map[a]] * dn[c->map[b]] * nr.cov[a * c->p + b];
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
		} else if (!(fixv[j] > (j == HB_CORE_MU_I ? 1 : 0) || (j == HB_CORE_GAP && fixv[j] == 0)) ||
			   !isfinite(fixv[j])) {
			hb__fit_seterr(ws, "fixed %s %g out of range (must be > %s)",
				       j == 0 ? "mu_i" : j == 1 ? "gap" : "Js", fixv[j], j == 0 ? "1" : j == 1 ? "0, or 0" : "0");
			return HB_ERR_ARG;
		}
	}
	double w2c = 0;
	if (opt->parallel_c != 0 || opt->test_freq != 0) {
		if (!(opt->parallel_c >= 0 && opt->parallel_c < 1e-6) || !(opt->test_freq >= 0 && opt->test_freq < 1e9)) {
			hb__fit_seterr(ws, "parallel capacitance %g F (0 .. 1e-6) or test frequency %g Hz (0 .. 1e9) out of range",
				       opt->parallel_c, opt->test_freq);
			return HB_ERR_ARG;
		}
		double w = 2 * M_PI * opt->test_freq;
		w2c = w * w * opt->parallel_c;
		for (size_t i = 0; i < n; i++) {
			if (!(w2c * L[i] < 0.5)) {
				hb__fit_seterr(ws, "test frequency %g Hz is too near the self-resonance with %g F to "
					       "correct the reading %g H", opt->test_freq, opt->parallel_c, L[i]);
				return HB_ERR_ARG;
			}
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
	/* the part's own L0 under the reading L0 / (1 - w2c L0) */
	double L0 = mf.L0_part, L0_se = mf.L0_part_std_err;
	if (!mf.cp_corrected) {
		L0 = mf.L0 / (1 + w2c * mf.L0);
		L0_se = mf.L0_std_err / ((1 + w2c * mf.L0) * (1 + w2c * mf.L0));
	}
	out->mu_e = L0 * geo->le / (mu0 * N * N * geo->Ae);
	out->mu_e_se = L0_se * geo->le / (mu0 * N * N * geo->Ae);
	out->AL = L0 / (N * N);
	out->AL_se = L0_se / (N * N);
	out->rated_current = opt->rated_current > 0 ? opt->rated_current : I[n - 1];

	/* where the data show saturation: the 30 % drop, else how far it got */
	double q = NAN, Iq = NAN;
	for (size_t d = 0; d < mf.n_drops; d++)
		if (mf.drop[d].reached && fabs(mf.drop[d].fraction - 0.3) < 1e-9)
			q = 0.7, Iq = mf.drop[d].current;
	if (isnan(q)) {
		out->flags |= HB_CORE_KNEE_UNREACHED;
		double ql = mf.L_at_max / mf.L0_part; /* both corrected alike */
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
	if (!(mu_s > 1.01))
		mu_s = 1.01; /* a core barely above vacuum: an air coil */

	unsigned laws = opt->laws ? opt->laws : 7u;
	double best_aicc = INFINITY;
	bool any = false, gap_zero[HB_CORE_NLAWS] = { false };
	for (int l = 0; l < HB_CORE_NLAWS; l++) {
		if (!(laws & (1u << l)))
			continue;
		core_ctx c = { .law = (hb_core_law)l, .I = I, .n = n, .geo = geo, .scale = scale, .w2c = w2c,
			       .xroot = xroot };
		for (int j = 0; j < 3; j++) {
			c.fixed[j] = !isnan(fixv[j]);
			c.value[j] = fixv[j];
		}
		double st[3] = { mu_s, g_s, 1.0 };
		if (!isnan(fixv[2])) {
			st[2] = fixv[2];
		} else if (!isnan(q)) {
			/* L/L0 = q gives dB/dH there as a fraction b of mu0 mu_i, hence
			 * the law's slope s' and x; the circuit equation then gives Js */
			double r = g_s * mu_s / geo->le, m = mu_s - 1;
			double b = q / (1 + r * (1 - q));
			double q1 = (b * mu_s - 1) / m;
			if (!(q1 > 1e-3))
				q1 = 1e-3;
			double x = x_at_slope((hb_core_law)l, q1);
			double s, s1, s2;
			law_s((hb_core_law)l, x, &s, &s1, &s2);
			st[2] = N * Iq * mu0 * m / ((geo->le + g_s) * x + g_s * m * s);
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
			double st0[3] = { isnan(fixv[0]) ? fmax(out->mu_e, 1.01) : fixv[0], 0, st[2] };
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
	if (sigma && b->dof > 0) {
		/* per-point uncertainties: the weighted residual itself */
		out->noise_ratio = sqrt(b->chi2 / (double)b->dof);
		double lim = opt->noise_ratio_limit > 0 ? opt->noise_ratio_limit : 3;
		if (out->noise_ratio > lim)
			out->flags |= HB_CORE_NO_LAW_FITS;
	} else if (noise > 0) {
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
		out->H_core_rated = pt.H;
		double var = 0;
		double nat[3] = { mu, g, bs }, dn[3];
		nat_slope(nat, dn);
		for (int a = 0; a < 3; a++)
			for (int c2 = 0; c2 < 3; c2++)
				if (dn[a] > 0 && dn[c2] > 0)
					var += pt.dB[a] / dn[a] * pt.dB[c2] / dn[c2] * b->cov[a * 3 + c2];
		out->B_peak_se = sqrt(var);
		out->psi_rated = N * geo->Ae * pt.B;
		energy_ctx ec = { b->law, { mu, g, bs }, geo };
		if (hb__fit_integrate(ws, energy_integrand, &ec, out->rated_current, &out->W_rated) != HB_OK)
			out->W_rated = NAN;
	} else {
		out->B_peak = out->B_peak_se = out->psi_rated = out->W_rated = out->H_core_rated = NAN;
	}
	return HB_OK;
}
