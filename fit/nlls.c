/* fit/nlls.c - the one nonlinear least-squares wrapper (GSL trust-region LM) with a false-convergence check */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_multifit_nlinear.h>

#include "fit_internal.h"

#define CACHE_SLOTS 6
#define MAX_ITER 300
#define XTOL 1e-11
#define GTOL 1e-12
#define CHI2_STALL 1e-12
/* Column-scaled Jacobian this close to singular is rank-deficient. */
#define RCOND_SINGULAR 1e-13
/* A parameter whose relative standard error exceeds this has no influence
 * on the fit: typical of a run that stalled where the model goes flat
 * (BoxBOD from start 1), not of a parameter the data merely fail to pin. */
#define REL_SE_NO_INFLUENCE 1e4
/* |cos| between a Jacobian column and the residual vector at a true
 * stationary point is rounding-level. */
#define GRADIENT_COS_MAX 1e-4

typedef struct slot {
	size_t n, p;
	bool accel;
	unsigned long used;
	gsl_multifit_nlinear_workspace *w;
	gsl_vector *wts, *x;
	gsl_matrix *js, *v;     /* scaled Jacobian copy, SVD factors */
	gsl_vector *s, *work;
	double *fbuf;           /* model values for the Jacobian call */
	double *jcache;         /* Jacobian computed alongside the last f */
	double *lr, *lr2, *lj2; /* lean path: residuals, trial residuals, trial Jacobian */
	double xcache[HB_FIT_MAX_PARAMS];
	bool jvalid;
} slot;

struct hb_fit_nlls {
	slot slots[CACHE_SLOTS];
	unsigned long clock;
	bool check;
	char err[160];
};

typedef struct run_ctx {
	const hb_fit_problem *prob;
	slot *s;
} run_ctx;

typedef struct run_out {
	int gsl_status;
	bool suspect, singular, converged;
	double theta[HB_FIT_MAX_PARAMS];
	double cov[HB_FIT_MAX_PARAMS * HB_FIT_MAX_PARAMS];
	double chi2, rcond;
	int iterations;
} run_out;

static void seterr(hb_fit_nlls *w, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void seterr(hb_fit_nlls *w, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(w->err, sizeof w->err, fmt, ap);
	va_end(ap);
}

static void slot_release(slot *s)
{
	gsl_multifit_nlinear_free(s->w);
	gsl_vector_free(s->wts);
	gsl_vector_free(s->x);
	gsl_matrix_free(s->js);
	gsl_matrix_free(s->v);
	gsl_vector_free(s->s);
	gsl_vector_free(s->work);
	free(s->fbuf);
	free(s->jcache);
	free(s->lr);
	free(s->lr2);
	free(s->lj2);
	memset(s, 0, sizeof *s);
}

hb_fit_nlls *hb_fit_nlls_new(void)
{
	gsl_set_error_handler_off();
	hb_fit_nlls *w = calloc(1, sizeof *w);
	if (w)
		w->check = true;
	return w;
}

void hb_fit_nlls_free(hb_fit_nlls *w)
{
	if (!w)
		return;
	for (int i = 0; i < CACHE_SLOTS; i++)
		slot_release(&w->slots[i]);
	free(w);
}

void hb_fit_nlls_set_check(hb_fit_nlls *w, bool check)
{
	if (w)
		w->check = check;
}

const char *hb_fit_nlls_error(const hb_fit_nlls *w)
{
	return w ? w->err : "no workspace";
}

/* GSL workspaces are sized (n, p): keep a few so that alternating models
 * (knee, three core laws) do not reallocate on every fit. */
static slot *slot_get(hb_fit_nlls *w, size_t n, size_t p, bool accel)
{
	slot *victim = &w->slots[0];
	for (int i = 0; i < CACHE_SLOTS; i++) {
		slot *s = &w->slots[i];
		if (s->w && s->n == n && s->p == p && s->accel == accel) {
			s->used = ++w->clock;
			return s;
		}
		if (!s->w || s->used < victim->used)
			victim = s;
		if (!s->w)
			break;
	}
	slot_release(victim);
	gsl_multifit_nlinear_parameters par = gsl_multifit_nlinear_default_parameters();
	par.trs = accel ? gsl_multifit_nlinear_trs_lmaccel : gsl_multifit_nlinear_trs_lm;
	/* Normal equations: for p <= 8 far cheaper per trial step than a
	 * pivoted QR of the whole Jacobian; the covariance comes from our own
	 * SVD, so the squared condition number touches only the steps. */
	par.solver = gsl_multifit_nlinear_solver_cholesky;
	victim->w = gsl_multifit_nlinear_alloc(gsl_multifit_nlinear_trust, &par, n, p);
	victim->wts = gsl_vector_alloc(n);
	victim->x = gsl_vector_alloc(p);
	victim->js = gsl_matrix_alloc(n, p);
	victim->v = gsl_matrix_alloc(p, p);
	victim->s = gsl_vector_alloc(p);
	victim->work = gsl_vector_alloc(p);
	victim->fbuf = malloc(n * sizeof(double));
	victim->jcache = malloc(n * p * sizeof(double));
	victim->lr = malloc(n * sizeof(double));
	victim->lr2 = malloc(n * sizeof(double));
	victim->lj2 = malloc(n * p * sizeof(double));
	if (!victim->jcache || !victim->lr || !victim->lr2 || !victim->lj2 || !victim->w || !victim->wts || !victim->x || !victim->js || !victim->v || !victim->s ||
	    !victim->work || !victim->fbuf) {
		slot_release(victim);
		return NULL;
	}
	victim->n = n;
	victim->p = p;
	victim->accel = accel;
	victim->used = ++w->clock;
	return victim;
}

static int cb_f(const gsl_vector *x, void *params, gsl_vector *f)
{
	run_ctx *rc = params;
	const hb_fit_problem *pr = rc->prob;
	double *fv = gsl_vector_ptr(f, 0);
	/* The Jacobian costs little beside the model (core laws solve the
	 * circuit per point): compute it now, since an accepted step asks for
	 * it at this same x next. */
	int bad = pr->model(x->data, pr->ctx, fv, rc->s->jcache);
	rc->s->jvalid = !bad;
	memcpy(rc->s->xcache, x->data, pr->p * sizeof(double));
	for (size_t i = 0; i < pr->n; i++) {
		double r = fv[i] - pr->y[i];
		/* Outside the model's domain: a huge residual makes the trust
		 * region reject the step instead of aborting the run. */
		fv[i] = (bad || !isfinite(r)) ? 1e100 : r;
	}
	return GSL_SUCCESS;
}

static int cb_df(const gsl_vector *x, void *params, gsl_matrix *J)
{
	run_ctx *rc = params;
	const hb_fit_problem *pr = rc->prob;
	if (J->tda != pr->p)
		return GSL_EBADLEN;
	slot *s = rc->s;
	if (s->jvalid && memcmp(s->xcache, x->data, pr->p * sizeof(double)) == 0)
		memcpy(J->data, s->jcache, pr->n * pr->p * sizeof(double));
	else if (pr->model(x->data, pr->ctx, s->fbuf, J->data))
		return GSL_EDOM;
	for (size_t i = 0; i < pr->n * pr->p; i++)
		if (!isfinite(J->data[i]))
			return GSL_EDOM;
	return GSL_SUCCESS;
}

/* Covariance from the SVD of the column-scaled weighted Jacobian, plus the
 * checks that tell a true minimum from a stall. */
/* J: weighted n x p Jacobian (row-major, contiguous), f: weighted residuals. */
static void assess(slot *s, const hb_fit_problem *pr, const double *Jd, const double *fd, run_out *ro)
{
	size_t n = pr->n, p = pr->p;
	gsl_vector_const_view fv = gsl_vector_const_view_array(fd, n);
	const gsl_vector *f = &fv.vector;
	double colnorm[HB_FIT_MAX_PARAMS];
	double fnorm = gsl_blas_dnrm2(f);

	ro->singular = false;
	ro->suspect = false;
	memcpy(s->js->data, Jd, n * p * sizeof(double));
	for (size_t j = 0; j < p; j++) {
		gsl_vector_view col = gsl_matrix_column(s->js, j);
		colnorm[j] = gsl_blas_dnrm2(&col.vector);
		if (!(colnorm[j] > 0) || !isfinite(colnorm[j])) {
			ro->singular = true;
			colnorm[j] = 1;
			continue;
		}
		double dot;
		gsl_blas_ddot(&col.vector, f, &dot);
		/* Not at a stationary point although the driver stopped. With
		 * known weights, residuals far below the noise (chi2/n < 1e-10: a
		 * model that passes through the data to rounding) carry no
		 * direction: the angle test would only read rounding. */
		bool negligible = pr->sigma ? fnorm * fnorm < 1e-10 * (double)n : fnorm * fnorm <= 1e-24 * (double)n;
		if (fnorm > 1e-150 && fabs(dot) / (colnorm[j] * fnorm) > GRADIENT_COS_MAX && !negligible)
			ro->suspect = true;
		gsl_vector_scale(&col.vector, 1.0 / colnorm[j]);
	}
	int st = gsl_linalg_SV_decomp(s->js, s->v, s->s, s->work);
	double smax = gsl_vector_get(s->s, 0), smin = gsl_vector_get(s->s, p - 1);
	ro->rcond = (st == GSL_SUCCESS && smax > 0) ? smin / smax : 0;
	if (st != GSL_SUCCESS || !(ro->rcond > RCOND_SINGULAR))
		ro->singular = true;

	size_t dof = n > p ? n - p : 0;
	double scale = dof > 0 ? fnorm * fnorm / (double)dof : 0;
	for (size_t a = 0; a < p; a++) {
		for (size_t b = 0; b < p; b++) {
			double sum = 0;
			if (!ro->singular) {
				for (size_t k = 0; k < p; k++) {
					double sk = gsl_vector_get(s->s, k);
					sum += gsl_matrix_get(s->v, a, k) * gsl_matrix_get(s->v, b, k) / (sk * sk);
				}
				sum = sum / (colnorm[a] * colnorm[b]) * scale;
			} else {
				sum = NAN;
			}
			ro->cov[a * p + b] = sum;
		}
	}
	for (size_t j = 0; j < p && !ro->singular; j++) {
		double th = ro->theta[j];
		double se = sqrt(ro->cov[j * p + j]);
		if (th != 0 && se / fabs(th) > REL_SE_NO_INFLUENCE)
			ro->suspect = true;
	}
	if (ro->singular)
		ro->suspect = true;
}

static int run_once(hb_fit_nlls *w, const hb_fit_problem *pr, const double *start, bool accel, run_out *ro)
{
	slot *s = slot_get(w, pr->n, pr->p, accel);
	if (!s)
		return HB_ERR_NOMEM;
	run_ctx rc = { pr, s };
	s->jvalid = false;
	gsl_multifit_nlinear_fdf fdf = { 0 };
	fdf.f = cb_f;
	fdf.df = cb_df;
	fdf.fvv = NULL;
	fdf.n = pr->n;
	fdf.p = pr->p;
	fdf.params = &rc;
	for (size_t j = 0; j < pr->p; j++)
		gsl_vector_set(s->x, j, start[j]);
	int st;
	if (pr->sigma) {
		for (size_t i = 0; i < pr->n; i++)
			gsl_vector_set(s->wts, i, 1.0 / (pr->sigma[i] * pr->sigma[i]));
		st = gsl_multifit_nlinear_winit(s->x, s->wts, &fdf, s->w);
	} else {
		st = gsl_multifit_nlinear_init(s->x, &fdf, s->w);
	}
	memset(ro, 0, sizeof *ro);
	if (st != GSL_SUCCESS) {
		ro->gsl_status = st;
		ro->suspect = true;
		ro->chi2 = INFINITY;
		return HB_OK;
	}
	/* Our own loop round gsl_multifit_nlinear_iterate: GSL's driver keeps
	 * iterating at a converged point, where every trial step is lost in
	 * rounding and each of up to 15 rejections costs a model evaluation.
	 * A step that lowers chi2 by less than CHI2_STALL (relative) ends it. */
	int info = 0, iter = 0;
	size_t max_iter = pr->max_iter > 0 ? (size_t)pr->max_iter : MAX_ITER;
	double fn0 = gsl_blas_dnrm2(gsl_multifit_nlinear_residual(s->w));
	double chi_prev = fn0 * fn0;
	st = GSL_EMAXITER;
	for (size_t it = 0; it < max_iter; it++) {
		int ist = gsl_multifit_nlinear_iterate(s->w);
		iter++;
		if (ist == GSL_ENOPROG) {
			/* nothing better within reach: the checks below judge it */
			st = GSL_SUCCESS;
			break;
		}
		if (ist != GSL_SUCCESS) {
			st = ist;
			break;
		}
		double fnc = gsl_blas_dnrm2(gsl_multifit_nlinear_residual(s->w));
		double chi = fnc * fnc;
		if (gsl_multifit_nlinear_test(XTOL, GTOL, 0.0, &info, s->w) == GSL_SUCCESS ||
		    chi_prev - chi <= CHI2_STALL * chi_prev) {
			st = GSL_SUCCESS;
			break;
		}
		chi_prev = chi;
	}
	ro->gsl_status = st;
	ro->iterations = iter;
	gsl_vector *x = gsl_multifit_nlinear_position(s->w);
	for (size_t j = 0; j < pr->p; j++)
		ro->theta[j] = gsl_vector_get(x, j);
	double fn = gsl_blas_dnrm2(gsl_multifit_nlinear_residual(s->w));
	ro->chi2 = fn * fn;
	ro->converged = (st == GSL_SUCCESS);
	if (st == GSL_SUCCESS || st == GSL_EMAXITER || st == GSL_ENOPROG) {
		assess(s, pr, gsl_multifit_nlinear_jac(s->w)->data, gsl_multifit_nlinear_residual(s->w)->data, ro);
		if (!(ro->chi2 < 1e150))
			ro->suspect = true;
	} else {
		ro->suspect = true;
		ro->singular = true;
	}
	if (!ro->converged)
		ro->suspect = true;
	return HB_OK;
}

/* Weighted residuals and Jacobian at x; nonzero outside the model's domain. */
static int lean_eval(const hb_fit_problem *pr, const double *x, double *r, double *J)
{
	size_t n = pr->n, p = pr->p;
	if (pr->model(x, pr->ctx, r, J))
		return -1;
	for (size_t i = 0; i < n; i++) {
		double wi = pr->sigma ? 1 / pr->sigma[i] : 1;
		r[i] = (r[i] - pr->y[i]) * wi;
		if (!isfinite(r[i]))
			return -1;
		for (size_t j = 0; j < p; j++) {
			J[i * p + j] *= wi;
			if (!isfinite(J[i * p + j]))
				return -1;
		}
	}
	return 0;
}

/* Solves (A + mu diag(d2)) x = b by Cholesky, p <= HB_FIT_MAX_PARAMS. */
static int damped_solve(const double *A, const double *d2, double mu, const double *b, size_t p, double *x)
{
	double Lc[HB_FIT_MAX_PARAMS * HB_FIT_MAX_PARAMS];
	for (size_t i = 0; i < p; i++) {
		for (size_t j = 0; j <= i; j++) {
			double sum = A[i * p + j] + (i == j ? mu * d2[i] : 0);
			for (size_t k = 0; k < j; k++)
				sum -= Lc[i * p + k] * Lc[j * p + k];
			if (i == j) {
				if (!(sum > 0))
					return -1;
				Lc[i * p + i] = sqrt(sum);
			} else {
				Lc[i * p + j] = sum / Lc[j * p + j];
			}
		}
	}
	for (size_t i = 0; i < p; i++) {
		double sum = b[i];
		for (size_t k = 0; k < i; k++)
			sum -= Lc[i * p + k] * x[k];
		x[i] = sum / Lc[i * p + i];
	}
	for (size_t i = p; i-- > 0;) {
		double sum = x[i];
		for (size_t k = i + 1; k < p; k++)
			sum -= Lc[k * p + i] * x[k];
		x[i] = sum / Lc[i * p + i];
	}
	return 0;
}

/*
 * The everyday first run: Levenberg-Marquardt on the normal equations with
 * More's diagonal scaling and Nielsen's damping update, the same stopping
 * rules as the GSL loop below (x and gradient tests, chi2 stall, no
 * progress). GSL's driver spends as much on vector bookkeeping as a small
 * model costs to evaluate; for p <= 8 none of it is needed. The result is
 * judged by the same assess(); a suspect run goes on to the GSL restarts.
 */
static int run_lean(hb_fit_nlls *w, const hb_fit_problem *pr, const double *start, run_out *ro)
{
	slot *s = slot_get(w, pr->n, pr->p, false);
	if (!s)
		return HB_ERR_NOMEM;
	size_t n = pr->n, p = pr->p;
	size_t max_iter = pr->max_iter > 0 ? (size_t)pr->max_iter : MAX_ITER;
	double x[HB_FIT_MAX_PARAMS], xt[HB_FIT_MAX_PARAMS], dx[HB_FIT_MAX_PARAMS];
	double A[HB_FIT_MAX_PARAMS * HB_FIT_MAX_PARAMS], g[HB_FIT_MAX_PARAMS], d2[HB_FIT_MAX_PARAMS];
	double *r = s->lr, *rt = s->lr2, *J = s->jcache, *Jt = s->lj2;
	memset(ro, 0, sizeof *ro);
	memcpy(x, start, p * sizeof(double));
	if (lean_eval(pr, x, r, J)) {
		ro->gsl_status = GSL_EDOM;
		ro->suspect = ro->singular = true;
		ro->chi2 = INFINITY;
		memcpy(ro->theta, x, p * sizeof(double));
		return HB_OK;
	}
	double chi = 0;
	for (size_t i = 0; i < n; i++)
		chi += r[i] * r[i];
	for (size_t j = 0; j < p; j++)
		d2[j] = 0;
	double mu = -1, nu = 2;
	int st = GSL_EMAXITER, iter = 0, rejected = 0;
	bool fresh = true;
	while ((size_t)iter < max_iter) {
		if (fresh) {
			for (size_t a = 0; a < p; a++) {
				double ga = 0;
				for (size_t i = 0; i < n; i++)
					ga += J[i * p + a] * r[i];
				g[a] = ga;
				for (size_t b = 0; b <= a; b++) {
					double sum = 0;
					for (size_t i = 0; i < n; i++)
						sum += J[i * p + a] * J[i * p + b];
					A[a * p + b] = A[b * p + a] = sum;
				}
				/* More: the scale only grows, so a parameter that goes
				 * quiet keeps the damping it had */
				if (A[a * p + a] > d2[a])
					d2[a] = A[a * p + a];
				if (!(d2[a] > 0))
					d2[a] = 1;
			}
			if (mu < 0)
				mu = 1e-3;
			/* gradient test as GSL's: max |g_i| max(|x_i|, 1) / max(chi/2, 1) */
			double gt = 0;
			for (size_t a = 0; a < p; a++) {
				double v = fabs(g[a]) * fmax(fabs(x[a]), 1);
				if (v > gt)
					gt = v;
			}
			if (gt / fmax(0.5 * chi, 1) <= GTOL) {
				st = GSL_SUCCESS;
				break;
			}
			fresh = false;
		}
		iter++;
		double mg[HB_FIT_MAX_PARAMS];
		for (size_t a = 0; a < p; a++)
			mg[a] = -g[a];
		bool ok = damped_solve(A, d2, mu, mg, p, dx) == 0;
		double chit = INFINITY, pred = 0;
		if (ok) {
			for (size_t a = 0; a < p; a++) {
				xt[a] = x[a] + dx[a];
				double adx = 0;
				for (size_t b = 0; b < p; b++)
					adx += A[a * p + b] * dx[b];
				pred -= dx[a] * (2 * g[a] + adx);
			}
			if (lean_eval(pr, xt, rt, Jt) == 0) {
				chit = 0;
				for (size_t i = 0; i < n; i++)
					chit += rt[i] * rt[i];
			}
		}
		if (ok && chit < chi) {
			double rho = pred > 0 ? (chi - chit) / pred : 1;
			double t = 2 * rho - 1;
			mu *= fmax(1.0 / 3, 1 - t * t * t);
			nu = 2;
			bool xsmall = true;
			for (size_t a = 0; a < p; a++)
				if (fabs(dx[a]) > XTOL * (fabs(xt[a]) + XTOL))
					xsmall = false;
			double chi_prev = chi;
			memcpy(x, xt, p * sizeof(double));
			double *tmp = r;
			r = rt;
			rt = tmp;
			tmp = J;
			J = Jt;
			Jt = tmp;
			chi = chit;
			fresh = true;
			rejected = 0;
			if (xsmall || chi_prev - chi <= CHI2_STALL * chi_prev) {
				st = GSL_SUCCESS;
				break;
			}
		} else {
			mu *= nu;
			nu *= 2;
			/* as GSL: nothing better within reach; the checks judge it */
			if (++rejected >= 15 || !isfinite(mu)) {
				st = GSL_SUCCESS;
				break;
			}
		}
	}
	ro->gsl_status = st;
	ro->iterations = iter;
	memcpy(ro->theta, x, p * sizeof(double));
	ro->chi2 = chi;
	ro->converged = (st == GSL_SUCCESS);
	assess(s, pr, J, r, ro);
	if (!(ro->chi2 < 1e150) || !ro->converged)
		ro->suspect = true;
	return HB_OK;
}

/* Better: a trustworthy run beats a suspect one; then the lower chi2. */
static bool better(const run_out *a, const run_out *b)
{
	if (a->suspect != b->suspect)
		return !a->suspect;
	return a->chi2 < b->chi2 * (1 - 1e-12);
}

int hb_fit_nlls_run(hb_fit_nlls *w, const hb_fit_problem *pr, const double *start, hb_fit_nlls_result *out)
{
	if (!w || !pr || !start || !out || !pr->model || !pr->y)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	if (pr->p == 0 || pr->p > HB_FIT_MAX_PARAMS || pr->n < pr->p) {
		seterr(w, "fit needs 1..%d parameters and at least as many points (n=%zu, p=%zu)",
		       HB_FIT_MAX_PARAMS, pr->n, pr->p);
		return HB_ERR_DATA;
	}
	for (size_t i = 0; i < pr->n; i++) {
		if (!isfinite(pr->y[i]) || (pr->sigma && !(pr->sigma[i] > 0 && isfinite(pr->sigma[i])))) {
			seterr(w, "point %zu: value or uncertainty not finite and positive", i);
			return HB_ERR_DATA;
		}
	}
	for (size_t j = 0; j < pr->p; j++) {
		if (!isfinite(start[j])) {
			seterr(w, "start value %zu not finite", j);
			return HB_ERR_ARG;
		}
	}
	w->err[0] = 0;

	run_out best, cur;
	/* the plain run (check off) stays GSL's own, as documented */
	int rc = w->check ? run_lean(w, pr, start, &best) : run_once(w, pr, start, false, &best);
	if (rc)
		return rc;
	int starts = 1, iters = best.iterations;
	bool first_claimed_success = best.converged;
	bool first_suspect = best.suspect;

	if (w->check && best.suspect && !pr->single_start) {
		/* Geodesic acceleration first (often enough on its own), then
		 * starts scaled by decades, one parameter at a time and all
		 * together, so a flat region around the first start is left. */
		rc = run_once(w, pr, start, true, &cur);
		if (rc)
			return rc;
		starts++;
		iters += cur.iterations;
		if (better(&cur, &best))
			best = cur;
		static const double factors[] = { 10, 0.1, 100, 0.01 };
		double x[HB_FIT_MAX_PARAMS];
		for (size_t fi = 0; fi < sizeof factors / sizeof factors[0]; fi++) {
			for (size_t j = 0; j <= pr->p; j++) {
				memcpy(x, start, pr->p * sizeof(double));
				for (size_t k = 0; k < pr->p; k++) {
					if (j == pr->p || k == j)
						x[k] = start[k] != 0 ? start[k] * factors[fi] : factors[fi] - 1;
				}
				rc = run_once(w, pr, x, false, &cur);
				if (rc)
					return rc;
				starts++;
				iters += cur.iterations;
				if (better(&cur, &best))
					best = cur;
			}
		}
		/* Polish the winner from its own position: a restart at a true
		 * minimum stays put; at a stall it moves on. */
		if (!best.suspect) {
			memcpy(x, best.theta, pr->p * sizeof(double));
			rc = run_once(w, pr, x, true, &cur);
			if (rc)
				return rc;
			starts++;
			iters += cur.iterations;
			if (better(&cur, &best))
				best = cur;
		}
	}

	out->n = pr->n;
	out->p = pr->p;
	out->dof = pr->n - pr->p;
	out->starts = starts;
	out->iterations = iters;
	out->chi2 = best.chi2;
	out->rcond = best.rcond;
	out->residual_sd = out->dof > 0 ? sqrt(best.chi2 / (double)out->dof) : NAN;
	memcpy(out->theta, best.theta, sizeof best.theta);
	for (size_t a = 0; a < pr->p; a++) {
		for (size_t b = 0; b < pr->p; b++)
			out->cov[a * pr->p + b] = best.cov[a * pr->p + b];
		out->std_err[a] = sqrt(best.cov[a * pr->p + a]);
	}
	if (starts > 1)
		out->flags |= HB_NLLS_RESTARTED;
	if (first_claimed_success && first_suspect)
		out->flags |= HB_NLLS_FALSE_CAUGHT;
	if (best.singular)
		out->flags |= HB_NLLS_SINGULAR;
	if (!best.converged)
		out->flags |= HB_NLLS_NOT_CONVERGED;

	/* The unweighted RSS from the model itself at the result. */
	slot *s = slot_get(w, pr->n, pr->p, false);
	if (!s)
		return HB_ERR_NOMEM;
	if (pr->model(out->theta, pr->ctx, s->fbuf, NULL) == 0) {
		double rss = 0;
		for (size_t i = 0; i < pr->n; i++)
			rss += (s->fbuf[i] - pr->y[i]) * (s->fbuf[i] - pr->y[i]);
		out->rss = rss;
	} else {
		out->rss = NAN;
	}
	if (!pr->sigma)
		out->chi2 = out->rss;

	if (w->check && best.suspect) {
		seterr(w, "no trustworthy minimum after %d starts (%s%s)", starts,
		       best.singular ? "Jacobian rank-deficient" : "stalled away from a stationary point",
		       best.converged ? "" : ", not converged");
		return HB_ERR_FIT;
	}
	if (!w->check && !best.converged) {
		seterr(w, "not converged (%s)", gsl_strerror(best.gsl_status));
		return HB_ERR_FIT;
	}
	return HB_OK;
}

/* ---------------- the shared fit workspace and helpers ---------------- */

hb_fit_ws *hb_fit_ws_new(void)
{
	gsl_set_error_handler_off();
	hb_fit_ws *ws = calloc(1, sizeof *ws);
	if (!ws)
		return NULL;
	ws->nlls = hb_fit_nlls_new();
	ws->integ = gsl_integration_workspace_alloc(200);
	if (!ws->nlls || !ws->integ) {
		hb_fit_ws_free(ws);
		return NULL;
	}
	return ws;
}

void hb_fit_ws_free(hb_fit_ws *ws)
{
	if (!ws)
		return;
	hb_fit_nlls_free(ws->nlls);
	gsl_integration_workspace_free(ws->integ);
	free(ws->buf);
	free(ws);
}

const char *hb_fit_ws_error(const hb_fit_ws *ws)
{
	return ws ? ws->err : "no workspace";
}

void hb__fit_seterr(hb_fit_ws *ws, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(ws->err, sizeof ws->err, fmt, ap);
	va_end(ap);
}

double *hb__fit_scratch(hb_fit_ws *ws, size_t n)
{
	if (n > ws->buf_cap) {
		double *nb = realloc(ws->buf, n * sizeof(double));
		if (!nb)
			return NULL;
		ws->buf = nb;
		ws->buf_cap = n;
	}
	return ws->buf;
}

unsigned hb__fit_undetermined(const double *value, const double *cov, size_t p, const bool *skip)
{
	unsigned bits = 0;
	for (size_t a = 0; a < p; a++) {
		if (skip && skip[a])
			continue;
		double va = cov[a * p + a];
		if (!(va >= 0) || !isfinite(va)) {
			bits |= 1u << a;
			continue;
		}
		if (value[a] != 0 && sqrt(va) > 0.5 * fabs(value[a]))
			bits |= 1u << a;
		for (size_t b = 0; b < p; b++) {
			if (b == a || (skip && skip[b]))
				continue;
			double vb = cov[b * p + b];
			if (va > 0 && vb > 0 && fabs(cov[a * p + b]) / sqrt(va * vb) > 0.99)
				bits |= 1u << a;
		}
	}
	return bits;
}

void hb__fit_value_add(hb_fit_values *vals, const char *name, double value, double std_err, const char *unit)
{
	if (vals->count >= HB_FIT_MAX_VALUES)
		return;
	hb_fit_value *v = &vals->v[vals->count++];
	snprintf(v->name, sizeof v->name, "%s", name);
	snprintf(v->unit, sizeof v->unit, "%s", unit);
	v->value = value;
	v->std_err = std_err;
	v->reason[0] = 0;
	v->misfit = false;
}

void hb__fit_value_why(hb_fit_values *vals, const char *name, double value, double std_err, const char *unit,
		       const char *reason)
{
	hb__fit_value_add(vals, name, value, std_err, unit);
	if (vals->count > 0 && reason)
		snprintf(vals->v[vals->count - 1].reason, sizeof vals->v[0].reason, "%s", reason);
}

void hb__fit_beyond(char *buf, size_t cap, double i_max)
{
	/* three significant figures, trailing zeros kept: "2.00 A", "0.290 A" */
	snprintf(buf, cap, HB_FIT_REASON_BEYOND " (highest bias %#.3g A)", i_max);
}

bool hb_fit_value_is_diagnostic(const char *name)
{
	static const char *const tails[] = { ".rss", ".dof", ".noise_ratio", ".undetermined", ".flags", ".current_ratio",
					     ".heating_ratio" };
	if (strncmp(name, "core.aicc.", 10) == 0 || strcmp(name, "core.mu_e") == 0 || strcmp(name, "core.AL") == 0)
		return true;
	size_t len = strlen(name);
	for (size_t i = 0; i < sizeof tails / sizeof tails[0]; i++) {
		size_t t = strlen(tails[i]);
		if (len > t && strcmp(name + len - t, tails[i]) == 0)
			return true;
	}
	return false;
}

const hb_fit_value *hb_fit_values_find(const hb_fit_values *vals, const char *name)
{
	if (!vals || !name)
		return NULL;
	for (size_t i = 0; i < vals->count; i++)
		if (strcmp(vals->v[i].name, name) == 0)
			return &vals->v[i];
	return NULL;
}

int hb__fit_check_sweep(const double *I, const double *L, const double *sigma, size_t n, char *err, size_t errlen)
{
	if (!I || !L) {
		snprintf(err, errlen, "no data");
		return HB_ERR_ARG;
	}
	if (n < 3) {
		snprintf(err, errlen, "too few points: %zu (at least 3)", n);
		return HB_ERR_DATA;
	}
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(I[i]) || !isfinite(L[i])) {
			snprintf(err, errlen, "point %zu is not a number", i);
			return HB_ERR_DATA;
		}
		if (I[i] < 0) {
			snprintf(err, errlen, "point %zu: negative bias %g A (fit one polarity, |I|)", i, I[i]);
			return HB_ERR_DATA;
		}
		if (!(L[i] > 0)) {
			snprintf(err, errlen, "point %zu: inductance %g H not positive", i, L[i]);
			return HB_ERR_DATA;
		}
		if (i > 0 && !(I[i] > I[i - 1])) {
			snprintf(err, errlen, "bias not strictly increasing at point %zu (%g A after %g A)", i, I[i],
				 I[i - 1]);
			return HB_ERR_DATA;
		}
		if (sigma && !(sigma[i] > 0 && isfinite(sigma[i]))) {
			snprintf(err, errlen, "point %zu: uncertainty %g not positive", i, sigma[i]);
			return HB_ERR_DATA;
		}
	}
	return HB_OK;
}

int hb__fit_integrate(hb_fit_ws *ws, double (*fn)(double, void *), void *ctx, double x, double *result)
{
	gsl_function F = { fn, ctx };
	double abserr;
	if (x == 0) {
		*result = 0;
		return HB_OK;
	}
	int st = gsl_integration_qag(&F, 0, x, 0, 1e-10, 200, GSL_INTEG_GAUSS21, ws->integ, result, &abserr);
	if (st != GSL_SUCCESS && st != GSL_EROUND) {
		hb__fit_seterr(ws, "integration failed: %s", gsl_strerror(st));
		return HB_ERR_FIT;
	}
	return HB_OK;
}
