/* fit/uncertainty.c - GUM uncertainty budget: propagation, Welch-Satterthwaite, coverage factor, DCR referral */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <gsl/gsl_blas.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_deriv.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

#include "hb_fit.h"

struct hb_unc_budget {
	size_t n;
	hb_unc_input in[HB_UNC_MAX_INPUTS];
	bool c_from_model[HB_UNC_MAX_INPUTS]; /* c was NAN when added: recomputed at every evaluation */
	gsl_matrix *corr;                     /* HB_UNC_MAX_INPUTS square; only the n x n corner is used */
	gsl_vector *v, *rv;                   /* c_i u(x_i) and corr * v */
	bool correlated;
	hb_unc_model_fn model;
	void *ctx;
	double x[HB_UNC_MAX_INPUTS];          /* scratch point for the differences */
	size_t deriv_i;                       /* input the difference quotient moves */
	int model_failed;
	double builtin[2];                    /* parameters of the built-in models (DCR: T_ref) */
	char err[160];
};

static void seterr(hb_unc_budget *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void seterr(hb_unc_budget *b, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(b->err, sizeof b->err, fmt, ap);
	va_end(ap);
}

hb_unc_budget *hb_unc_new(void)
{
	gsl_set_error_handler_off();
	hb_unc_budget *b = calloc(1, sizeof *b);
	if (!b)
		return NULL;
	b->corr = gsl_matrix_alloc(HB_UNC_MAX_INPUTS, HB_UNC_MAX_INPUTS);
	b->v = gsl_vector_alloc(HB_UNC_MAX_INPUTS);
	b->rv = gsl_vector_alloc(HB_UNC_MAX_INPUTS);
	if (!b->corr || !b->v || !b->rv) {
		hb_unc_free(b);
		return NULL;
	}
	hb_unc_reset(b);
	return b;
}

void hb_unc_free(hb_unc_budget *b)
{
	if (!b)
		return;
	if (b->corr)
		gsl_matrix_free(b->corr);
	if (b->v)
		gsl_vector_free(b->v);
	if (b->rv)
		gsl_vector_free(b->rv);
	free(b);
}

void hb_unc_reset(hb_unc_budget *b)
{
	if (!b)
		return;
	b->n = 0;
	b->correlated = false;
	b->model = NULL;
	b->ctx = NULL;
	b->err[0] = '\0';
	gsl_matrix_set_identity(b->corr);
}

const char *hb_unc_error(const hb_unc_budget *b)
{
	return b ? b->err : "no budget";
}

int hb_unc_add(hb_unc_budget *b, const char *name, hb_unc_type type, double value, double u, double c,
	       double dof)
{
	if (!b || !name)
		return HB_ERR_ARG;
	if (b->n >= HB_UNC_MAX_INPUTS) {
		seterr(b, "more than %d inputs", HB_UNC_MAX_INPUTS);
		return HB_ERR_ARG;
	}
	/* NAN c asks for the model's derivative; an infinite c is never meaningful */
	if (!isfinite(value) || !(u >= 0) || !isfinite(u) || isinf(c) || !(dof > 0) ||
	    (type != HB_UNC_TYPE_A && type != HB_UNC_TYPE_B)) {
		seterr(b, "input %s: value %g, u %g, c %g, dof %g not usable", name, value, u, c, dof);
		return HB_ERR_ARG;
	}
	hb_unc_input *in = &b->in[b->n];
	memset(in, 0, sizeof *in);
	snprintf(in->name, sizeof in->name, "%s", name);
	in->type = type;
	in->value = value;
	in->u = u;
	in->c = c;
	in->c_numeric = isnan(c);
	in->dof = dof;
	in->contribution = NAN;
	b->c_from_model[b->n] = isnan(c);
	return (int)b->n++;
}

int hb_unc_set_correlation(hb_unc_budget *b, size_t i, size_t j, double r)
{
	if (!b || i >= b->n || j >= b->n || !(r >= -1 && r <= 1) || (i == j && r != 1))
		return HB_ERR_ARG;
	gsl_matrix_set(b->corr, i, j, r);
	gsl_matrix_set(b->corr, j, i, r);
	if (i != j && r != 0)
		b->correlated = true;
	return HB_OK;
}

int hb_unc_describe(hb_unc_budget *b, size_t i, const char *unit, const char *source)
{
	if (!b || i >= b->n)
		return HB_ERR_ARG;
	if (unit)
		snprintf(b->in[i].unit, sizeof b->in[i].unit, "%s", unit);
	if (source)
		snprintf(b->in[i].source, sizeof b->in[i].source, "%s", source);
	return HB_OK;
}

int hb_unc_set_model(hb_unc_budget *b, hb_unc_model_fn model, void *ctx)
{
	if (!b)
		return HB_ERR_ARG;
	b->model = model;
	b->ctx = ctx;
	return HB_OK;
}

size_t hb_unc_count(const hb_unc_budget *b)
{
	return b ? b->n : 0;
}

const hb_unc_input *hb_unc_input_at(const hb_unc_budget *b, size_t i)
{
	return b && i < b->n ? &b->in[i] : NULL;
}

/* The model as a function of input deriv_i alone, the others at their estimates. */
static double model_1d(double xi, void *p)
{
	hb_unc_budget *b = p;
	double save = b->x[b->deriv_i], y = NAN;
	b->x[b->deriv_i] = xi;
	if (b->model(b->x, b->ctx, &y) != 0 || !isfinite(y)) {
		b->model_failed = 1;
		y = NAN;
	}
	b->x[b->deriv_i] = save;
	return y;
}

/*
 * c_i by GSL's 5-point central difference with the step u(x_i): GUM 5.1.3
 * Note 2 evaluates c_i as the change of f over x_i +- u(x_i), the range the
 * input plausibly covers, and a step that size stays far above the rounding
 * of large estimates (a 50 mm gauge in nm has 1e-8 rounding over a 1e-2 u
 * step). An exactly known input (u = 0) contributes nothing whatever c_i is,
 * so it gets a step relative to its value.
 */
static int sensitivity(hb_unc_budget *b, size_t i, double *c)
{
	double xi = b->in[i].value;
	double h = b->in[i].u > 0 ? b->in[i].u : 1e-6 * fmax(fabs(xi), 1e-12);
	gsl_function F = { model_1d, b };
	b->deriv_i = i;
	/* an estimate closer than u to the edge of the model's domain (a positive
	 * quantity with a large relative u) leaves +-u outside it: shrink the
	 * step, the derivative at the estimate being what the GUM propagates */
	for (int attempt = 0; attempt < 4; attempt++, h *= 1e-2) {
		double d, abserr;
		b->model_failed = 0;
		int rc = gsl_deriv_central(&F, xi, h, &d, &abserr);
		if (rc == GSL_SUCCESS && !b->model_failed && isfinite(d)) {
			*c = d;
			return HB_OK;
		}
	}
	seterr(b, "model undefined near %s = %g", b->in[i].name, xi);
	return HB_ERR_DATA;
}

double hb_unc_coverage_factor(double dof, double p)
{
	if (!(p > 0 && p < 1) || !(dof > 0))
		return NAN;
	gsl_set_error_handler_off();
	double q = 0.5 * (1 + p);
	/* t_p(nu) -> the normal quantile as nu -> infinity (GUM G.3.2) */
	double k = isinf(dof) ? gsl_cdf_ugaussian_Pinv(q) : gsl_cdf_tdist_Pinv(q, dof);
	return isfinite(k) ? k : NAN;
}

int hb_unc_evaluate(hb_unc_budget *b, double p, hb_unc_result *out)
{
	if (!b || !out)
		return HB_ERR_ARG;
	gsl_set_error_handler_off();
	b->err[0] = '\0';
	if (p == 0)
		p = HB_UNC_P_K2;
	if (!(p > 0 && p < 1)) {
		seterr(b, "coverage probability %g outside (0, 1)", p);
		return HB_ERR_ARG;
	}
	if (b->n == 0) {
		seterr(b, "no inputs");
		return HB_ERR_ARG;
	}
	size_t n = b->n;
	double y = NAN;
	for (size_t i = 0; i < n; i++)
		b->x[i] = b->in[i].value;
	if (b->model) {
		if (b->model(b->x, b->ctx, &y) != 0 || !isfinite(y)) {
			seterr(b, "model undefined at the estimates");
			return HB_ERR_DATA;
		}
	}
	for (size_t i = 0; i < n; i++) {
		if (!b->c_from_model[i])
			continue;
		if (!b->model) {
			seterr(b, "input %s has no sensitivity coefficient and the budget no model", b->in[i].name);
			return HB_ERR_ARG;
		}
		int rc = sensitivity(b, i, &b->in[i].c);
		if (rc != HB_OK)
			return rc;
	}

	/* u_c^2 = v' R v with v_i = c_i u(x_i) (GUM 5.2.2 written with r(x_i, x_j)) */
	for (size_t i = 0; i < n; i++) {
		b->in[i].contribution = fabs(b->in[i].c) * b->in[i].u;
		gsl_vector_set(b->v, i, b->in[i].c * b->in[i].u);
	}
	gsl_matrix_view R = gsl_matrix_submatrix(b->corr, 0, 0, n, n);
	gsl_vector_view v = gsl_vector_subvector(b->v, 0, n);
	gsl_vector_view rv = gsl_vector_subvector(b->rv, 0, n);
	double uc2;
	if (gsl_blas_dsymv(CblasUpper, 1.0, &R.matrix, &v.vector, 0.0, &rv.vector) != GSL_SUCCESS ||
	    gsl_blas_ddot(&v.vector, &rv.vector, &uc2) != GSL_SUCCESS) {
		seterr(b, "propagation failed");
		return HB_ERR_DATA;
	}
	/* rounding can leave a tiny negative sum for exactly cancelling inputs;
	 * anything larger means the correlations are inconsistent */
	double scale = 0;
	for (size_t i = 0; i < n; i++)
		scale += gsl_vector_get(b->v, i) * gsl_vector_get(b->v, i);
	if (uc2 < -1e-12 * scale || !isfinite(uc2)) {
		seterr(b, "correlations give a negative variance: matrix not positive semi-definite");
		return HB_ERR_DATA;
	}
	double uc = sqrt(fmax(uc2, 0));

	/* Welch-Satterthwaite (GUM G.4.1): nu_eff = u_c^4 / sum u_i(y)^4 / nu_i */
	double den = 0;
	for (size_t i = 0; i < n; i++) {
		double ui = b->in[i].contribution;
		if (isfinite(b->in[i].dof) && ui > 0)
			den += ui * ui * ui * ui / b->in[i].dof;
	}
	double dof_eff = den > 0 ? uc2 * uc2 / den : INFINITY;
	int flags = b->correlated ? HB_UNC_CORRELATED : 0;
	/* G.4.1: truncate to the next lower integer, the conservative choice and
	 * what the GUM's worked examples do; below 1 the fraction is kept. An
	 * integer the sum reproduces only to rounding (one input of 3 dof can
	 * come back as 2.9999999999999996) stays that integer, not one less. */
	double dof_used = dof_eff;
	if (isfinite(dof_eff) && dof_eff >= 1) {
		double whole = floor(dof_eff * (1 + 1e-9));
		if (fabs(whole - dof_eff) <= 1e-9 * dof_eff) {
			dof_used = whole;
			dof_eff = whole;
		} else {
			dof_used = whole;
			flags |= HB_UNC_DOF_TRUNCATED;
		}
	}
	double k = hb_unc_coverage_factor(dof_used, p);
	if (!isfinite(k)) {
		seterr(b, "no coverage factor for %g degrees of freedom", dof_used);
		return HB_ERR_DATA;
	}
	*out = (hb_unc_result){
		.y = y, .u_c = uc, .dof_eff = dof_eff, .dof_used = dof_used,
		.p = p, .k = k, .U = k * uc, .flags = flags,
	};
	return HB_OK;
}

double hb_unc_dof_type_a(size_t n)
{
	return n >= 2 ? (double)(n - 1) : NAN;
}

double hb_unc_dof_type_b(double rel)
{
	if (!(rel >= 0) || !isfinite(rel))
		return NAN;
	return rel == 0 ? INFINITY : 0.5 / (rel * rel);
}

double hb_unc_rectangular(double a)
{
	return a >= 0 ? a / sqrt(3.0) : NAN;
}

double hb_unc_triangular(double a)
{
	return a >= 0 ? a / sqrt(6.0) : NAN;
}

double hb_unc_arcsine(double a)
{
	return a >= 0 ? a / sqrt(2.0) : NAN;
}

double hb_unc_normal(double U, double k)
{
	return U >= 0 && k > 0 ? U / k : NAN;
}

double hb_unc_dcr_refer(double R_T, double T, double T_ref, double alpha)
{
	double d = 1 + alpha * (T - T_ref);
	return isfinite(R_T) && d > 0 ? R_T / d : NAN;
}

/* alpha falls with temperature as 1/(T - T0), T0 the temperature at which
 * the linear law extrapolates to zero resistance; moving the reference
 * point keeps that same straight line. */
double hb_unc_alpha_at(double alpha20, double T_ref)
{
	double d = 1 + alpha20 * (T_ref - 20);
	return isfinite(alpha20) && d > 0 ? alpha20 / d : NAN;
}

/* x = { R_T, T, alpha20 }; builtin[0] = T_ref. R(T) = R20 (1 + alpha20 (T - 20)),
 * so R_ref = R_T (1 + alpha20 (T_ref - 20)) / (1 + alpha20 (T - 20)), the
 * same as R_T / (1 + alpha_ref (T - T_ref)) with alpha_ref = hb_unc_alpha_at. */
static int dcr_model(const double *x, void *ctx, double *y)
{
	const double *t_ref = ctx;
	double num = 1 + x[2] * (*t_ref - 20), den = 1 + x[2] * (x[1] - 20);
	if (!(num > 0) || !(den > 0))
		return 1;
	*y = x[0] * num / den;
	return 0;
}

int hb_unc_dcr_budget(hb_unc_budget *b, const hb_unc_dcr *in, double p, hb_unc_result *out)
{
	if (!b || !in || !out || !isfinite(in->T_ref))
		return HB_ERR_ARG;
	hb_unc_reset(b);
	b->builtin[0] = in->T_ref;
	int rc;
	if ((rc = hb_unc_add(b, "R_T", HB_UNC_TYPE_B, in->R_T, in->u_R, NAN, in->dof_R)) < 0 ||
	    (rc = hb_unc_add(b, "T", HB_UNC_TYPE_B, in->T, in->u_T, NAN, in->dof_T)) < 0 ||
	    (rc = hb_unc_add(b, "alpha", HB_UNC_TYPE_B, in->alpha20, in->u_alpha, NAN, INFINITY)) < 0)
		return rc;
	hb_unc_describe(b, 0, "ohm", "resistance as measured");
	hb_unc_describe(b, 1, "C", "part or ambient temperature");
	hb_unc_describe(b, 2, "1/K", "temperature coefficient at 20 C");
	hb_unc_set_model(b, dcr_model, &b->builtin[0]);
	return hb_unc_evaluate(b, p, out);
}
