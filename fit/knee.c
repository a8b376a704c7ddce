/* fit/knee.c - bias-sweep results: model-free L0 and drop currents, the knee model, derived curves, the full analysis */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_multifit.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_min.h>
#include <gsl/gsl_roots.h>
#include <gsl/gsl_sort.h>
#include <gsl/gsl_statistics_double.h>

#include "fit_internal.h"

static const double default_fractions[] = { 0.10, 0.20, 0.30 };

void hb_fit_options_init(hb_fit_options *opt)
{
	memset(opt, 0, sizeof *opt);
	opt->knee = true;
	opt->fix_mu_i = NAN;
	opt->fix_gap = NAN;
	opt->fix_bsat = NAN;
}

static int fractions_of(const hb_fit_options *opt, const double **fr, size_t *n)
{
	if (!opt || opt->n_fractions == 0) {
		*fr = default_fractions;
		*n = 3;
		return HB_OK;
	}
	if (opt->n_fractions > HB_FIT_MAX_FRACTIONS)
		return HB_ERR_ARG;
	for (size_t i = 0; i < opt->n_fractions; i++)
		if (!(opt->fractions[i] > 0 && opt->fractions[i] < 1))
			return HB_ERR_ARG;
	*fr = opt->fractions;
	*n = opt->n_fractions;
	return HB_OK;
}

/* Reading noise from the scatter of each point about the chord of its
 * neighbours; the median keeps the curvature of the knee region out. */
static double estimate_noise(const double *I, const double *L, size_t n, double *tmp)
{
	size_t m = 0;
	for (size_t i = 1; i + 1 < n; i++) {
		double w = (I[i + 1] - I[i]) / (I[i + 1] - I[i - 1]);
		double r = L[i] - (w * L[i - 1] + (1 - w) * L[i + 1]);
		tmp[m++] = fabs(r) / sqrt(1 + w * w + (1 - w) * (1 - w));
	}
	if (m < 3)
		return 0;
	gsl_sort(tmp, 1, m);
	return 1.4826 * gsl_stats_median_from_sorted_data(tmp, 1, m);
}

/* Pool-adjacent-violators: the weighted least-squares non-increasing
 * curve, an unbiased monotone version of noisy readings. */
static void pava_decreasing(const double *y, const double *w, size_t n, double *out, double *bw, size_t *bstart)
{
	size_t nb = 0;
	for (size_t i = 0; i < n; i++) {
		double wi = w ? w[i] : 1;
		out[nb] = y[i];
		bw[nb] = wi;
		bstart[nb] = i;
		nb++;
		while (nb > 1 && out[nb - 2] < out[nb - 1]) {
			double ws = bw[nb - 2] + bw[nb - 1];
			out[nb - 2] = (out[nb - 2] * bw[nb - 2] + out[nb - 1] * bw[nb - 1]) / ws;
			bw[nb - 2] = ws;
			nb--;
		}
	}
	/* expand blocks, back to front, since out[] holds block means */
	for (size_t b = nb; b-- > 0;) {
		size_t end = (b + 1 < nb) ? bstart[b + 1] : n;
		double v = out[b];
		for (size_t i = bstart[b]; i < end; i++)
			out[i] = v;
	}
}

typedef struct interp_ctx {
	gsl_interp *interp;
	const double *x, *y;
	gsl_interp_accel *acc;
	double target;
} interp_ctx;

static double interp_minus_target(double x, void *p)
{
	interp_ctx *c = p;
	double v;
	if (gsl_interp_eval_e(c->interp, c->x, c->y, x, c->acc, &v) != GSL_SUCCESS)
		return NAN;
	return v - c->target;
}

/* Root of fn in [a, b] (fn(a), fn(b) of opposite sign) by brent. */
static int brent_root(double (*fn)(double, void *), void *ctx, double a, double b, double *root)
{
	gsl_function F = { fn, ctx };
	gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
	if (!s)
		return HB_ERR_NOMEM;
	int rc = HB_ERR_FIT;
	if (gsl_root_fsolver_set(s, &F, a, b) != GSL_SUCCESS)
		goto out;
	for (int it = 0; it < 200; it++) {
		if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
			goto out;
		double lo = gsl_root_fsolver_x_lower(s), hi = gsl_root_fsolver_x_upper(s);
		if (gsl_root_test_interval(lo, hi, 0, 1e-13) == GSL_SUCCESS) {
			*root = gsl_root_fsolver_root(s);
			rc = HB_OK;
			goto out;
		}
	}
out:
	gsl_root_fsolver_free(s);
	return rc;
}

/* Weighted linear least squares of y on the basis columns x^pw[j] (pw
 * may be fractional: 1 = |I|, 2 = I^2), the value at zero (the constant)
 * and its variance scaled by chi2/dof (never below the stated noise when
 * weights are given, since a lucky small scatter does not shrink the
 * instrument's noise). chi2_out gets the weighted residual sum. */
static int poly_at_zero(const double *x, const double *y, const double *sig, size_t k, const double *pw, size_t pc,
			double *c0, double *var0, double *chi2_out)
{
	gsl_matrix *X = gsl_matrix_alloc(k, pc), *cv = gsl_matrix_alloc(pc, pc);
	gsl_vector *yv = gsl_vector_alloc(k), *wv = gsl_vector_alloc(k), *cf = gsl_vector_alloc(pc);
	gsl_multifit_linear_workspace *lw = gsl_multifit_linear_alloc(k, pc);
	int rc = HB_ERR_NOMEM;
	double chisq = NAN;
	if (!X || !cv || !yv || !wv || !cf || !lw)
		goto cleanup;
	bool weighted = sig[0] > 0;
	for (size_t i = 0; i < k; i++) {
		for (size_t j = 0; j < pc; j++)
			gsl_matrix_set(X, i, j, pw[j] == 0 ? 1 : pow(x[i], pw[j]));
		gsl_vector_set(yv, i, y[i]);
		gsl_vector_set(wv, i, weighted ? 1 / (sig[i] * sig[i]) : 1);
	}
	rc = HB_ERR_DATA;
	if (gsl_multifit_wlinear(X, wv, yv, cf, cv, &chisq, lw) != GSL_SUCCESS)
		goto cleanup;
	*c0 = gsl_vector_get(cf, 0);
	double scale = k > pc ? chisq / (double)(k - pc) : NAN;
	if (weighted && scale < 1)
		scale = 1;
	*var0 = gsl_matrix_get(cv, 0, 0) * scale;
	*chi2_out = chisq;
	rc = HB_OK;
cleanup:
	gsl_matrix_free(X);
	gsl_matrix_free(cv);
	gsl_vector_free(yv);
	gsl_vector_free(wv);
	gsl_vector_free(cf);
	gsl_multifit_linear_free(lw);
	return rc;
}

/* AICc of a weighted fit: chi2 itself with known weights, else from the RSS. */
static double aicc_of(double chi2, size_t k, size_t pc, bool weighted)
{
	double n = (double)k, p = (double)pc;
	if (!(n - p - 1 > 0))
		return INFINITY;
	double base = weighted ? chi2 : n * log(fmax(chi2, 1e-300) / n);
	return base + 2 * p + 2 * p * (p + 1) / (n - p - 1);
}

/*
 * L0 from the points below the knee. The saturation laws are even in I
 * (the core does not know the current's sign), so near zero L is a series
 * in I^2 for a smooth law (tanh, Langevin); a quadratic in I there carries
 * a useless odd term that bends the intercept. The Frohlich-Kennelly law
 * has |H| in it, a cusp at zero with a finite slope, which only an |I|
 * term follows. So both are fitted and AICc chooses; ties go to the even
 * series. "Below the knee": while L stays within 5 % of the first reading
 * (at least five points, out to 10 %), where two or three terms describe
 * the curve.
 */
static int modelfree_L0(const double *I, const double *L, const double *sig, size_t n, size_t l0_points,
			hb_fit_modelfree_result *out)
{
	size_t k = l0_points;
	if (k == 0) {
		/* Within 5 % of the first reading, where the next term of the
		 * series is small against the noise; at least five points (out to
		 * 10 %) so the larger bases keep a spare point. */
		k = 1;
		while (k < n && L[k] >= 0.9 * L[0])
			k++;
		if (k < 3)
			k = n < 3 ? n : 3;
	}
	if (k > n)
		k = n;
	if (k < 2)
		k = 2;
	static const double even1[] = { 0, 2 }, even2[] = { 0, 2, 4 }, cusp[] = { 0, 1, 2 }, cusp3[] = { 0, 1, 2, 3 },
			    cusp4[] = { 0, 1, 2, 3, 4 }, line[] = { 0, 1 };
	struct { const double *pw; size_t pc; const char *name; } cand[] = {
		{ even1, 2, "1, I^2" }, { even2, 3, "1, I^2, I^4" }, { cusp, 3, "1, |I|, I^2" },
		{ cusp3, 4, "1, |I|, I^2, |I|^3" }, { cusp4, 5, "1, |I|, I^2, |I|^3, I^4" },
	};
	bool weighted = sig[0] > 0;
	/* Every basis that fits, with its AICc; the intercept is then averaged
	 * over them with Akaike weights, and its standard error is the
	 * unconditional one, which adds each basis's distance from the average
	 * (Burnham and Anderson, Model Selection and Multimodel Inference,
	 * 2nd ed. 2002, eqs. 4.1 and 4.9, from memory): the choice of basis is
	 * an uncertainty of its own, and a single best basis understates it. */
	enum { NCAND = sizeof cand / sizeof cand[0] };
	double c0s[NCAND] = { 0 }, v0s[NCAND] = { 0 }, as[NCAND] = { 0 };
	bool ok[NCAND] = { false };
	double best = INFINITY;
	int best_c = -1;
	int rc = HB_ERR_DATA;
	for (size_t c = 0; c < NCAND; c++) {
		/* one spare point at least, so the scatter can scale the error */
		if (k < cand[c].pc + 1)
			continue;
		double c0, v0, chi2;
		int st = poly_at_zero(I, L, sig, k, cand[c].pw, cand[c].pc, &c0, &v0, &chi2);
		if (st == HB_ERR_NOMEM)
			return st;
		if (st != HB_OK || !isfinite(c0) || !isfinite(v0))
			continue;
		double a = aicc_of(chi2, k, cand[c].pc, weighted);
		c0s[c] = c0;
		v0s[c] = v0;
		as[c] = a;
		ok[c] = true;
		/* with fewer than pc + 2 points AICc is undefined: take the first that fits */
		if (!isfinite(a))
			a = 1e300 + (double)c;
		if (a < best - 1e-9) {
			best = a;
			best_c = (int)c;
			rc = HB_OK;
		}
	}
	if (rc == HB_OK) {
		double wsum = 0, w[NCAND] = { 0 };
		for (size_t c = 0; c < NCAND; c++)
			if (ok[c] && isfinite(as[c]) && isfinite(best) && best < 1e299) {
				w[c] = exp(-0.5 * (as[c] - best));
				wsum += w[c];
			}
		if (wsum > 0) {
			double avg = 0;
			for (size_t c = 0; c < NCAND; c++)
				if (w[c] > 0)
					avg += w[c] / wsum * c0s[c];
			double se = 0;
			int used = 0;
			for (size_t c = 0; c < NCAND; c++)
				if (w[c] > 0) {
					se += w[c] / wsum * sqrt(v0s[c] + (c0s[c] - avg) * (c0s[c] - avg));
					used += w[c] / wsum > 1e-3;
				}
			out->L0 = avg;
			out->L0_std_err = se;
			if (used > 1)
				snprintf(out->L0_basis, sizeof out->L0_basis, "%s (averaged over %d bases)",
					 cand[best_c].name, used);
			else
				snprintf(out->L0_basis, sizeof out->L0_basis, "%s", cand[best_c].name);
		} else {
			out->L0 = c0s[best_c];
			out->L0_std_err = sqrt(v0s[best_c]);
			snprintf(out->L0_basis, sizeof out->L0_basis, "%s", cand[best_c].name);
		}
	}
	if (rc != HB_OK) {
		/* two points: a straight line through them, no error estimate */
		double c0, v0, chi2;
		rc = poly_at_zero(I, L, sig, k, line, 2, &c0, &v0, &chi2);
		if (rc != HB_OK)
			return rc;
		out->L0 = c0;
		out->L0_std_err = sqrt(v0);
		snprintf(out->L0_basis, sizeof out->L0_basis, "1, I");
	}
	out->L0_points = k;
	return HB_OK;
}

int hb_fit_modelfree(const double *I, const double *L_in, const double *sigma, size_t n, const hb_fit_options *opt,
		     hb_fit_modelfree_result *out)
{
	char err[160];
	if (!out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	int rc = hb__fit_check_sweep(I, L_in, sigma, n, err, sizeof err);
	if (rc)
		return rc;
	const double *fr;
	size_t nfr;
	if (fractions_of(opt, &fr, &nfr))
		return HB_ERR_ARG;
	double w2c = 0;
	if (opt && opt->parallel_c > 0 && opt->test_freq > 0) {
		double w = 2 * M_PI * opt->test_freq;
		w2c = w * w * opt->parallel_c;
		if (!isfinite(w2c))
			return HB_ERR_ARG;
	}
	gsl_set_error_handler_off();

	size_t m = n + 1;
	double *mem = malloc(9 * m * sizeof(double) + m * sizeof(size_t));
	if (!mem)
		return HB_ERR_NOMEM;
	double *x = mem, *y = mem + m, *w = mem + 2 * m, *mono = mem + 3 * m, *bw = mem + 4 * m,
	       *sig = mem + 5 * m, *tmp = mem + 6 * m, *L = mem + 7 * m, *ssig = mem + 8 * m;
	size_t *bstart = (size_t *)(mem + 9 * m);
	gsl_interp *interp = NULL;
	gsl_interp_accel *acc = NULL;

	/* The winding capacitance makes the meter read L / (1 - w^2 L Cp);
	 * the part's own L is L_app / (1 + w^2 L_app Cp) exactly (series model),
	 * and the drop currents are the part's, not the capacitor's. */
	for (size_t i = 0; i < n; i++) {
		double f = 1 + w2c * L_in[i];
		L[i] = L_in[i] / f;
		ssig[i] = sigma ? sigma[i] / (f * f) : NAN;
	}
	out->cp_corrected = w2c > 0;
	const double *sgin = sigma ? ssig : NULL;

	/* reading noise: per-point sigma, else the stated noise, else estimated */
	double noise = opt ? opt->noise_sigma : 0;
	if (noise > 0 && w2c > 0)
		noise /= (1 + w2c * L[0]) * (1 + w2c * L[0]);
	if (!(noise > 0) && !sigma) {
		noise = estimate_noise(I, L, n, tmp);
		out->flags |= HB_MF_NOISE_ESTIMATED;
	}
	for (size_t i = 0; i < n; i++)
		sig[i] = sgin ? sgin[i] : noise;
	out->noise_sigma = sgin ? gsl_stats_mean(sgin, 1, n) : noise;

	rc = modelfree_L0(I, L, sig, n, opt ? opt->l0_points : 0, out);
	if (rc != HB_OK)
		goto out;
	double c0 = out->L0;
	if (!isfinite(c0) || !(c0 > 0) || !isfinite(out->L0_std_err)) {
		rc = HB_ERR_DATA;
		goto out;
	}
	/* the fit ran on the part's own L; L0 stays the reading, as a
	 * datasheet's nominal L and every older stored L0 mean it */
	out->L0_part = c0;
	out->L0_part_std_err = out->L0_std_err;
	if (w2c > 0) {
		double d = 1 - w2c * c0;
		if (!(d > 0)) {
			rc = HB_ERR_ARG; /* the test frequency is at or above the self-resonance */
			goto out;
		}
		out->L0 = c0 / d;
		out->L0_std_err = out->L0_part_std_err / (d * d);
	}
	out->I_max = I[n - 1];
	out->L_at_max = L[n - 1];

	/* the monotone curve, starting at (0, L0) */
	size_t off = I[0] > 0 ? 1 : 0;
	x[0] = 0;
	y[0] = c0;
	w[0] = 1;
	for (size_t i = 0; i < n; i++) {
		x[i + off] = I[i];
		y[i + off] = L[i];
		w[i + off] = sig[i] > 0 ? 1 / (sig[i] * sig[i]) : 1;
	}
	if (off)
		w[0] = out->L0_part_std_err > 0 ? 1 / (out->L0_part_std_err * out->L0_part_std_err) : w[1];
	m = n + off;
	pava_decreasing(y, w, m, mono, bw, bstart);
	for (size_t i = 0; i < m; i++) {
		double s = i >= off ? sig[i - off] : out->L0_part_std_err;
		if (s > 0 && y[i] - mono[i] < -3 * s)
			out->flags |= HB_MF_NONMONOTONE;
	}

	interp = gsl_interp_alloc(gsl_interp_steffen, m);
	acc = gsl_interp_accel_alloc();
	if (!interp || !acc) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	if (gsl_interp_init(interp, x, mono, m) != GSL_SUCCESS) {
		rc = HB_ERR_DATA;
		goto out;
	}
	out->n_drops = nfr;
	for (size_t d = 0; d < nfr; d++) {
		hb_fit_drop *dr = &out->drop[d];
		dr->fraction = fr[d];
		dr->reached = false;
		dr->current = NAN;
		dr->std_err = NAN;
		double target = (1 - fr[d]) * c0;
		size_t j;
		for (j = 0; j + 1 < m; j++)
			if (mono[j] > target && mono[j + 1] <= target)
				break;
		if (j + 1 >= m)
			continue;
		interp_ctx ic = { interp, x, mono, acc, target };
		double root;
		if (mono[j + 1] == target)
			root = x[j + 1];
		else if (brent_root(interp_minus_target, &ic, x[j], x[j + 1], &root) != HB_OK)
			continue;
		dr->reached = true;
		dr->current = root;
		double slope = (mono[j + 1] - mono[j]) / (x[j + 1] - x[j]);
		double t = (root - x[j]) / (x[j + 1] - x[j]);
		double sj = j >= off ? sig[j - off] : out->L0_part_std_err;
		double sj1 = sig[j + 1 - off];
		double sl = (1 - t) * sj + t * sj1;
		double sl0 = (1 - fr[d]) * out->L0_part_std_err;
		dr->std_err = sqrt(sl * sl + sl0 * sl0) / fabs(slope);
	}
	rc = HB_OK;
out:
	gsl_interp_free(interp);
	gsl_interp_accel_free(acc);
	free(mem);
	return rc;
}

/* ---------------- knee model ---------------- */

/* 1/(1+u) and u/(1+u) for u = (I/Ik)^p without overflow. */
static void knee_parts(double I, double Ik, double p, double *inv, double *frac, double *lnr)
{
	if (I <= 0) {
		*inv = 1;
		*frac = 0;
		*lnr = 0;
		return;
	}
	*lnr = log(I / Ik);
	double lu = p * *lnr;
	if (lu > 0) {
		double e = exp(-lu);
		*inv = e / (1 + e);
		*frac = 1 / (1 + e);
	} else {
		double u = exp(lu);
		*inv = 1 / (1 + u);
		*frac = u / (1 + u);
	}
}

double hb_fit_knee_eval(const double par[HB_KNEE_NP], double I)
{
	double inv, frac, lnr;
	knee_parts(fabs(I), par[HB_KNEE_IK], par[HB_KNEE_P], &inv, &frac, &lnr);
	return par[HB_KNEE_LF] + (par[HB_KNEE_L0] - par[HB_KNEE_LF]) * inv;
}

/* natural-parameter gradient of L and dL/dI */
static void knee_grad(const double *par, double I, double g[HB_KNEE_NP], double *dLdI)
{
	double inv, frac, lnr;
	double A = par[HB_KNEE_L0] - par[HB_KNEE_LF], Ik = par[HB_KNEE_IK], p = par[HB_KNEE_P];
	knee_parts(I, Ik, p, &inv, &frac, &lnr);
	g[HB_KNEE_L0] = inv;
	g[HB_KNEE_LF] = 1 - inv;
	g[HB_KNEE_IK] = A * (p / Ik) * inv * frac;
	g[HB_KNEE_P] = -A * lnr * inv * frac;
	if (dLdI)
		*dLdI = I > 0 ? -A * (p / I) * inv * frac : (p == 1 ? -A / Ik : 0);
}

typedef struct knee_ctx {
	const double *I;
	size_t n;
	bool floor_zero; /* theta without Lf: (L0/s, ln Ik, ln p) */
} knee_ctx;

/* theta = (L0/s, Lf/s, ln Ik, ln p): logs keep Ik and p positive. */
static int knee_model(const double *th, void *vctx, double *f, double *jac)
{
	const knee_ctx *c = vctx;
	size_t np = c->floor_zero ? 3 : 4, o = c->floor_zero ? 1 : 2;
	double lf = c->floor_zero ? 0 : th[1];
	double Ik = exp(th[o]), p = exp(th[o + 1]);
	if (!isfinite(Ik) || !isfinite(p) || Ik <= 0 || p <= 0)
		return -1;
	double A = th[0] - lf;
	for (size_t i = 0; i < c->n; i++) {
		double inv, frac, lnr;
		knee_parts(c->I[i], Ik, p, &inv, &frac, &lnr);
		f[i] = lf + A * inv;
		if (jac) {
			double *r = jac + np * i;
			r[0] = inv;
			if (!c->floor_zero)
				r[1] = 1 - inv;
			r[o] = A * p * inv * frac;
			r[o + 1] = -A * p * lnr * inv * frac;
		}
	}
	return 0;
}

typedef struct knee_root_ctx {
	const double *par;
	double target;
} knee_root_ctx;

static double knee_minus_target(double I, void *p)
{
	knee_root_ctx *c = p;
	return hb_fit_knee_eval(c->par, I) - c->target;
}

/*
 * The knee: where y = L/L0 plotted against t = ln(I/Ik) bends most, on the
 * high-L side. Against log bias (the usual saturation plot) the curve has
 * an upper bend for every sharpness p; against linear bias the curvature of
 * a p <= 2 curve is largest at zero bias and marks nothing. Scale-free: the
 * knee does not move when the units of L or I change.
 */
typedef struct curv_ctx {
	double a, p;
} curv_ctx;

static double neg_curvature_log(double t, void *vp)
{
	const curv_ctx *c = vp;
	double e = exp(c->p * t), sg = e / (1 + e);
	double yt = -c->a * c->p * sg * (1 - sg);
	double ytt = -c->a * c->p * c->p * sg * (1 - sg) * (1 - 2 * sg);
	double q = 1 + yt * yt;
	return -fabs(ytt) / (q * sqrt(q));
}

static void knee_point(const double *par, double *Iknee, double *Lknee)
{
	*Iknee = NAN;
	*Lknee = NAN;
	if (!(par[HB_KNEE_L0] > 0) || !(par[HB_KNEE_P] > 0) || !(par[HB_KNEE_L0] > par[HB_KNEE_LF]))
		return;
	curv_ctx c = { (par[HB_KNEE_L0] - par[HB_KNEE_LF]) / par[HB_KNEE_L0], par[HB_KNEE_P] };
	/* the upper bend lies where (I/Ik)^p < 1, i.e. t < 0 */
	enum { NG = 96 };
	double t0 = -12 / c.p, t1 = 0, best = 0;
	int kbest = -1;
	for (int k = 0; k <= NG; k++) {
		double v = neg_curvature_log(t0 + (t1 - t0) * k / NG, &c);
		if (v < best) {
			best = v;
			kbest = k;
		}
	}
	if (kbest <= 0 || kbest >= NG)
		return;
	double step = (t1 - t0) / NG, tm = t0 + step * kbest;
	gsl_function F = { neg_curvature_log, &c };
	gsl_min_fminimizer *s = gsl_min_fminimizer_alloc(gsl_min_fminimizer_brent);
	if (!s)
		return;
	if (gsl_min_fminimizer_set(s, &F, tm, tm - step, tm + step) == GSL_SUCCESS) {
		for (int it = 0; it < 100; it++) {
			if (gsl_min_fminimizer_iterate(s) != GSL_SUCCESS)
				break;
			tm = gsl_min_fminimizer_x_minimum(s);
			if (gsl_min_test_interval(gsl_min_fminimizer_x_lower(s), gsl_min_fminimizer_x_upper(s), 1e-12,
						  0) == GSL_SUCCESS)
				break;
		}
	}
	gsl_min_fminimizer_free(s);
	*Iknee = exp(tm) * par[HB_KNEE_IK];
	*Lknee = hb_fit_knee_eval(par, *Iknee);
}

int hb_fit_knee(hb_fit_ws *ws, const double *I, const double *L, const double *sigma, size_t n,
		const hb_fit_options *opt, hb_fit_knee_result *out)
{
	if (!ws || !out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	ws->err[0] = 0;
	int rc = hb__fit_check_sweep(I, L, sigma, n, ws->err, sizeof ws->err);
	if (rc)
		return rc;
	if (n < HB_KNEE_NP + 1) {
		hb__fit_seterr(ws, "too few points for the knee model: %zu (at least %d)", n, HB_KNEE_NP + 1);
		return HB_ERR_DATA;
	}
	hb_fit_modelfree_result mf;
	rc = hb_fit_modelfree(I, L, sigma, n, opt, &mf);
	if (rc) {
		hb__fit_seterr(ws, "model-free pass failed: %s", hb_status_name(rc));
		return rc;
	}
	double *buf = hb__fit_scratch(ws, 2 * n);
	if (!buf)
		return HB_ERR_NOMEM;
	double s = mf.L0, *ys = buf, *ss = sigma ? buf + n : NULL;
	double lmin = L[0];
	for (size_t i = 0; i < n; i++) {
		ys[i] = L[i] / s;
		if (ss)
			ss[i] = sigma[i] / s;
		if (L[i] < lmin)
			lmin = L[i];
	}
	/* start: floor below the lowest reading, knee where the monotone
	 * curve crosses halfway to it (or past the sweep if it never does) */
	double lf0 = 0.5 * lmin / s;
	double half = 0.5 * (1 + lf0), ik0 = 2 * I[n - 1];
	for (size_t i = 0; i < n; i++) {
		if (ys[i] < half) {
			ik0 = I[i];
			break;
		}
	}
	if (!(ik0 > 0))
		ik0 = I[n - 1];
	double start[4] = { 1.0, lf0, log(ik0), log(2.0) };
	knee_ctx kc = { I, n, false };
	hb_fit_problem pr = { .n = n, .p = 4, .y = ys, .sigma = ss, .model = knee_model, .ctx = &kc,
			      .max_iter = 25, .single_start = true };
	hb_fit_nlls_result nr;
	/* A quick free run; a floor that goes negative says the sweep shows
	 * no floor (a tanh-like fall mimicked by Lf << 0): hold it at zero. */
	rc = hb_fit_nlls_run(ws->nlls, &pr, start, &nr);
	if (rc != HB_OK || nr.theta[1] < 0) {
		hb_fit_nlls_result n3;
		knee_ctx k3 = { I, n, true };
		double s3[3] = { 1.0, rc == HB_OK ? nr.theta[2] : log(ik0), rc == HB_OK ? nr.theta[3] : log(2.0) };
		hb_fit_problem p3 = { .n = n, .p = 3, .y = ys, .sigma = ss, .model = knee_model, .ctx = &k3 };
		int rc3 = hb_fit_nlls_run(ws->nlls, &p3, s3, &n3);
		if (rc3 == HB_OK) {
			out->flags |= HB_KNEE_FLOOR_HELD;
			/* back to the 4-parameter layout with Lf = 0 exactly */
			nr = n3;
			nr.theta[0] = n3.theta[0];
			nr.theta[1] = 0;
			nr.theta[2] = n3.theta[1];
			nr.theta[3] = n3.theta[2];
			static const int map[4] = { 0, -1, 1, 2 };
			for (int a = 0; a < 4; a++)
				for (int b = 0; b < 4; b++)
					nr.cov[a * 4 + b] = (map[a] < 0 || map[b] < 0) ? 0 : n3.cov[map[a] * 3 + map[b]];
			rc = HB_OK;
		} else if (rc != HB_OK) {
			pr.max_iter = 0;
			pr.single_start = false;
			rc = hb_fit_nlls_run(ws->nlls, &pr, start, &nr);
		}
	}
	out->nlls_flags = nr.flags;
	out->iterations = nr.iterations;
	out->starts = nr.starts;
	if (rc) {
		hb__fit_seterr(ws, "knee fit: %s", hb_fit_nlls_error(ws->nlls));
		return rc;
	}
	double D[4] = { s, s, exp(nr.theta[2]), exp(nr.theta[3]) };
	out->param[HB_KNEE_L0] = nr.theta[0] * s;
	out->param[HB_KNEE_LF] = nr.theta[1] * s;
	out->param[HB_KNEE_IK] = D[2];
	out->param[HB_KNEE_P] = D[3];
	for (int a = 0; a < 4; a++) {
		for (int b = 0; b < 4; b++)
			out->cov[a * 4 + b] = D[a] * D[b] * nr.cov[a * 4 + b];
		out->std_err[a] = sqrt(out->cov[a * 4 + a]);
	}
	out->rss = nr.rss * s * s;
	out->chi2 = nr.chi2 * (sigma ? 1 : s * s);
	out->n = n;
	out->dof = nr.dof;
	out->residual_rms = sqrt(out->rss / (double)n);
	bool held[4] = { false, (out->flags & HB_KNEE_FLOOR_HELD) != 0, false, false };
	out->undetermined = hb__fit_undetermined(out->param, out->cov, 4, held);

	const double *fr = default_fractions;
	size_t nfr = 3;
	fractions_of(opt, &fr, &nfr);
	out->n_drops = nfr;
	const double *par = out->param;
	for (size_t d = 0; d < nfr; d++) {
		hb_fit_drop *dr = &out->drop[d];
		dr->fraction = fr[d];
		dr->reached = false;
		dr->current = NAN;
		dr->std_err = NAN;
		knee_root_ctx kr = { par, (1 - fr[d]) * par[HB_KNEE_L0] };
		if (!(kr.target > par[HB_KNEE_LF]) || !(par[HB_KNEE_L0] > par[HB_KNEE_LF]))
			continue; /* the model never falls that far */
		double hi = par[HB_KNEE_IK];
		int k;
		for (k = 0; k < 200 && knee_minus_target(hi, &kr) > 0; k++)
			hi *= 2;
		double root;
		if (k == 200 || brent_root(knee_minus_target, &kr, 0, hi, &root) != HB_OK)
			continue;
		/* a crossing above the last bias point is an extrapolation of the
		 * model: filed results carry no number for it */
		if (!(root <= I[n - 1]))
			continue;
		dr->current = root;
		dr->reached = true;
		/* implicit function: dI/dtheta = -(dL/dtheta - (1-f) dL0/dtheta) / (dL/dI) */
		double g[4], dLdI;
		knee_grad(par, root, g, &dLdI);
		g[HB_KNEE_L0] -= 1 - fr[d];
		if (dLdI != 0) {
			double var = 0;
			for (int a = 0; a < 4; a++)
				for (int b = 0; b < 4; b++)
					var += g[a] * g[b] * out->cov[a * 4 + b];
			dr->std_err = sqrt(var) / fabs(dLdI);
		}
	}
	out->I_max = I[n - 1];
	knee_point(par, &out->knee_current, &out->knee_L);
	if (isfinite(out->knee_current) && out->knee_current > I[n - 1]) {
		out->knee_current = out->knee_L = NAN;
		out->flags |= HB_KNEE_POINT_BEYOND;
	}

	/* the fit against the reading noise, judged as the core model's is */
	double noise = opt && opt->noise_sigma > 0 ? opt->noise_sigma : mf.noise_sigma;
	double lim = opt && opt->noise_ratio_limit > 0 ? opt->noise_ratio_limit : 3;
	out->noise_sigma = sigma ? mf.noise_sigma : noise;
	if (sigma && out->dof > 0)
		out->noise_ratio = sqrt(out->chi2 / (double)out->dof);
	else if (noise > 0)
		out->noise_ratio = out->residual_rms / noise;
	else
		out->noise_ratio = NAN;
	if (!isfinite(out->noise_ratio))
		out->flags |= HB_KNEE_NOISE_UNKNOWN;
	else if (out->noise_ratio > lim)
		out->flags |= HB_KNEE_MISFIT;
	return HB_OK;
}

/* ---------------- derived curves ---------------- */

int hb_fit_curves(const double *I, const double *L, size_t n, double L0, const hb_core_geometry *geo, double *psi,
		  double *B, double *H, double *W)
{
	if (!I || !L || n < 1)
		return HB_ERR_ARG;
	if ((B || H) && (!geo || !(geo->turns > 0) || !(geo->Ae > 0) || !(geo->le > 0)))
		return HB_ERR_ARG;
	for (size_t i = 0; i < n; i++)
		if (!isfinite(I[i]) || !isfinite(L[i]) || I[i] < 0 || (i > 0 && !(I[i] > I[i - 1])))
			return HB_ERR_DATA;
	double l0 = isfinite(L0) ? L0 : L[0];
	/* below the first point the reading is taken flat at L0 */
	double ps = 0.5 * (l0 + L[0]) * I[0];
	double w = 0.5 * L[0] * I[0] * I[0];
	for (size_t i = 0; i < n; i++) {
		if (i > 0) {
			double dI = I[i] - I[i - 1];
			ps += 0.5 * (L[i] + L[i - 1]) * dI;
			w += 0.5 * (I[i] * L[i] + I[i - 1] * L[i - 1]) * dI;
		}
		if (psi)
			psi[i] = ps;
		if (W)
			W[i] = w;
		if (B)
			B[i] = ps / (geo->turns * geo->Ae);
		if (H)
			H[i] = geo->turns * I[i] / geo->le;
	}
	return HB_OK;
}

/* ---------------- the whole analysis of one sweep ---------------- */

static double lerp_at(const double *x, const double *y, size_t n, double at)
{
	if (!(at >= 0) || at > x[n - 1])
		return NAN;
	if (at <= x[0])
		return x[0] > 0 ? y[0] * at / x[0] : y[0];
	for (size_t i = 1; i < n; i++)
		if (at <= x[i])
			return y[i - 1] + (y[i] - y[i - 1]) * (at - x[i - 1]) / (x[i] - x[i - 1]);
	return y[n - 1];
}

static void drop_values(hb_fit_values *v, const char *prefix, const hb_fit_drop *d, size_t nd, double i_max)
{
	char name[40], why[72];
	hb__fit_beyond(why, sizeof why, i_max);
	for (size_t i = 0; i < nd; i++) {
		snprintf(name, sizeof name, "%sI_drop%g", prefix, d[i].fraction * 100);
		if (d[i].reached && isfinite(d[i].current))
			hb__fit_value_add(v, name, d[i].current, d[i].std_err, "A");
		else
			hb__fit_value_why(v, name, NAN, NAN, "A", why);
	}
}

/* Marks every value whose name starts with prefix as from a misfitting model. */
static void mark_misfit(hb_fit_values *v, const char *prefix)
{
	size_t len = strlen(prefix);
	for (size_t i = 0; i < v->count; i++) {
		const char *nm = v->v[i].name;
		if (hb_fit_value_is_diagnostic(nm))
			continue;
		if (strncmp(nm, prefix, len) == 0)
			v->v[i].misfit = true;
	}
}

static void set_headline(hb_fit_bias_result *out, const char *model, size_t p, const char *const *names,
			 const double *cov, double rss, size_t dof)
{
	snprintf(out->model, sizeof out->model, "%s", model);
	out->p = p;
	out->dof = dof;
	out->rss = rss;
	for (size_t a = 0; a < p; a++) {
		snprintf(out->param_names[a], sizeof out->param_names[a], "%s", names[a]);
		for (size_t b = 0; b < p; b++)
			out->cov[a * p + b] = cov[a * p + b];
	}
}

int hb_fit_bias_analyse_ws(hb_fit_ws *ws, const double *I, const double *L, const double *sigma, size_t n,
			   const hb_fit_options *opt_in, hb_fit_bias_result *out)
{
	if (!ws || !out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	hb_fit_options defaults;
	hb_fit_options_init(&defaults);
	const hb_fit_options *opt = opt_in ? opt_in : &defaults;
	snprintf(out->code_version, sizeof out->code_version, "%s", HB_FIT_CODE_VERSION);
	snprintf(out->model, sizeof out->model, "model-free");
	out->knee_status = HB_ERR_UNSUPPORTED;
	out->core_status = HB_ERR_UNSUPPORTED;
	out->rated_current = out->psi_rated = out->B_rated = out->H_rated = out->W_rated = NAN;

	int rc = hb__fit_check_sweep(I, L, sigma, n, out->message, sizeof out->message);
	if (rc)
		return rc;
	rc = hb_fit_modelfree(I, L, sigma, n, opt, &out->modelfree);
	if (rc) {
		snprintf(out->message, sizeof out->message, "model-free results failed: %s", hb_status_name(rc));
		return rc;
	}
	hb_fit_values *v = &out->values;
	const hb_fit_modelfree_result *mf = &out->modelfree;
	hb__fit_value_add(v, "L0", mf->L0, mf->L0_std_err, "H");
	if (mf->cp_corrected)
		hb__fit_value_add(v, "L0_part", mf->L0_part, mf->L0_part_std_err, "H");
	hb__fit_value_add(v, "noise_sigma", mf->noise_sigma, NAN, "H");
	drop_values(v, "", mf->drop, mf->n_drops, I[n - 1]);
	hb__fit_value_add(v, "I_max", mf->I_max, NAN, "A");
	hb__fit_value_add(v, "L_at_max", mf->L_at_max, NAN, "H");

	/* energy curves from the data at the rated current */
	const hb_core_geometry *geo = &opt->geo;
	bool have_geo = geo->turns > 0 && geo->Ae > 0 && geo->le > 0;
	double ir = opt->rated_current > 0 ? opt->rated_current : I[n - 1];
	out->rated_current = ir;
	double *buf = hb__fit_scratch(ws, 2 * n);
	if (!buf)
		return HB_ERR_NOMEM;
	if (hb_fit_curves(I, L, n, mf->L0, NULL, buf, NULL, NULL, buf + n) == HB_OK) {
		out->psi_rated = lerp_at(I, buf, n, ir);
		out->W_rated = lerp_at(I, buf + n, n, ir);
		if (have_geo) {
			out->B_rated = out->psi_rated / (geo->turns * geo->Ae);
			out->H_rated = geo->turns * ir / geo->le;
		}
	}
	/* a rated current above the sweep: the data say nothing there */
	char beyond[72];
	hb__fit_beyond(beyond, sizeof beyond, I[n - 1]);
	const char *why_rated = ir > I[n - 1] ? beyond : NULL;
	hb__fit_value_add(v, "rated_current", ir, NAN, "A");
	hb__fit_value_why(v, "psi_rated", out->psi_rated, NAN, "Wb", why_rated);
	hb__fit_value_why(v, "W_rated", out->W_rated, NAN, "J", why_rated);
	if (have_geo) {
		hb__fit_value_why(v, "B_rated", out->B_rated, NAN, "T", why_rated);
		/* N I / le at a rated current above the sweep is no finding of
		 * this measurement: no number there either */
		hb__fit_value_why(v, "H_rated", why_rated ? NAN : out->H_rated, NAN, "A/m", why_rated);
	}

	if (opt->knee) {
		hb_fit_knee_result *k = &out->knee;
		out->knee_status = hb_fit_knee(ws, I, L, sigma, n, opt, k);
		if (out->knee_status == HB_OK) {
			static const char *const names[] = { "L0", "Lf", "Ik", "p" };
			static const char *const units[] = { "H", "H", "A", "" };
			char name[40];
			for (int j = 0; j < 4; j++) {
				snprintf(name, sizeof name, "knee.%s", names[j]);
				double val = k->param[j], se = k->std_err[j];
				const char *why = NULL;
				/* Ik is a current: above the sweep it is an extrapolation */
				if (j == HB_KNEE_IK && !(val <= I[n - 1])) {
					val = se = NAN;
					why = beyond;
				} else if (j == HB_KNEE_LF && (k->flags & HB_KNEE_FLOOR_HELD)) {
					se = NAN; /* held, not fitted: no uncertainty of its own */
					why = HB_FIT_REASON_FLOOR_HELD;
				} else if (k->undetermined & (1u << j)) {
					se = NAN;
					why = HB_FIT_REASON_UNDETERMINED;
				}
				hb__fit_value_why(v, name, val, se, units[j], why);
			}
			drop_values(v, "knee.", k->drop, k->n_drops, I[n - 1]);
			hb__fit_value_why(v, "knee.I_knee", k->knee_current, NAN, "A",
					  isfinite(k->knee_current) ? NULL : beyond);
			hb__fit_value_why(v, "knee.L_knee", k->knee_L, NAN, "H", isfinite(k->knee_L) ? NULL : beyond);
			hb__fit_value_add(v, "knee.rss", k->rss, NAN, "H2");
			hb__fit_value_add(v, "knee.dof", (double)k->dof, NAN, "");
			hb__fit_value_add(v, "knee.noise_ratio", k->noise_ratio, NAN, "");
			hb__fit_value_add(v, "knee.undetermined", (double)k->undetermined, NAN, "");
			hb__fit_value_add(v, "knee.flags", (double)k->flags, NAN, "");
			if (k->flags & HB_KNEE_MISFIT)
				mark_misfit(v, "knee.");
			set_headline(out, "knee", 4, names, k->cov, k->rss, k->dof);
		} else {
			snprintf(out->message, sizeof out->message, "knee: %s", hb_fit_ws_error(ws));
		}
	}

	if (have_geo) {
		hb_fit_core_result *c = &out->core;
		out->core_status = hb_fit_core(ws, I, L, sigma, n, opt, c);
		if (out->core_status == HB_OK) {
			const hb_fit_core_law_result *b = &c->law[c->best];
			static const char *const names[] = { "mu_i", "gap", "Js" };
			static const char *const units[] = { "", "m", "T" };
			char name[48];
			const char *und = HB_FIT_REASON_UNDETERMINED;
			for (int j = 0; j < 3; j++) {
				snprintf(name, sizeof name, "core.%s", names[j]);
				bool u = b->undetermined & (1u << j);
				hb__fit_value_why(v, name, b->param[j], u ? NAN : b->std_err[j], units[j], u ? und : NULL);
			}
			bool u_mu = b->undetermined & (1u << HB_CORE_MU_I), u_gap = b->undetermined & (1u << HB_CORE_GAP);
			hb__fit_value_add(v, "core.mu_e", c->mu_e, c->mu_e_se, "");
			hb__fit_value_add(v, "core.AL", c->AL, c->AL_se, "H");
			/* derived from a parameter not determined: no standard error either */
			hb__fit_value_why(v, "core.gap_implied", c->gap_implied, u_mu ? NAN : c->gap_implied_se, "m",
					  u_mu ? und : NULL);
			hb__fit_value_why(v, "core.gap_physical", c->gap_physical, u_gap ? NAN : c->gap_physical_se, "m",
					  u_gap && isfinite(c->gap_physical) ? und : NULL);
			hb__fit_value_add(v, "core.fringing_factor", c->fringing_factor, NAN, "");
			/* the model at a rated current above the sweep is an extrapolation */
			bool ext = c->rated_current > I[n - 1];
			hb__fit_value_why(v, "core.B_peak", ext ? NAN : c->B_peak, ext ? NAN : c->B_peak_se, "T",
					  ext ? beyond : NULL);
			hb__fit_value_why(v, "core.psi_rated", ext ? NAN : c->psi_rated, NAN, "Wb", ext ? beyond : NULL);
			hb__fit_value_why(v, "core.W_rated", ext ? NAN : c->W_rated, NAN, "J", ext ? beyond : NULL);
			hb__fit_value_why(v, "core.H_core_rated", ext ? NAN : c->H_core_rated, NAN, "A/m",
					  ext ? beyond : NULL);
			hb__fit_value_add(v, "core.noise_ratio", c->noise_ratio, NAN, "");
			hb__fit_value_add(v, "core.flags", (double)c->flags, NAN, "");
			hb__fit_value_add(v, "core.undetermined", (double)b->undetermined, NAN, "");
			for (int l = 0; l < HB_CORE_NLAWS; l++) {
				if (c->law[l].status != HB_OK)
					continue;
				snprintf(name, sizeof name, "core.aicc.%s", hb_core_law_name((hb_core_law)l));
				hb__fit_value_add(v, name, c->law[l].aicc, NAN, "");
			}
			if (c->flags & HB_CORE_NO_LAW_FITS)
				mark_misfit(v, "core.");
			char model[48];
			snprintf(model, sizeof model, "core:%s", hb_core_law_name(c->best));
			/* the headline carries the free parameters only */
			const char *fn[3];
			double cov[9];
			size_t p = 0, idx[3];
			for (int j = 0; j < 3; j++)
				if (!b->fixed[j]) {
					idx[p] = (size_t)j;
					fn[p++] = names[j];
				}
			for (size_t a = 0; a < p; a++)
				for (size_t bb = 0; bb < p; bb++)
					cov[a * p + bb] = b->cov[idx[a] * 3 + idx[bb]];
			if (p > 0)
				set_headline(out, model, p, fn, cov, b->rss, b->dof);
		} else {
			size_t len = strlen(out->message);
			snprintf(out->message + len, sizeof out->message - len, "%score: %s", len ? "; " : "",
				 hb_fit_ws_error(ws));
		}
	}
	return HB_OK;
}

int hb_fit_bias_analyse(const double *I, const double *L, const double *sigma, size_t n, const hb_fit_options *opt,
			hb_fit_bias_result *out)
{
	hb_fit_ws *ws = hb_fit_ws_new();
	if (!ws)
		return HB_ERR_NOMEM;
	int rc = hb_fit_bias_analyse_ws(ws, I, L, sigma, n, opt, out);
	hb_fit_ws_free(ws);
	return rc;
}
