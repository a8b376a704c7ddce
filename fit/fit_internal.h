/* fit/fit_internal.h - shared inside fit/: the workspace layout and small helpers between modules */
#ifndef HB_FIT_INTERNAL_H
#define HB_FIT_INTERNAL_H

#include <gsl/gsl_integration.h>
#include <gsl/gsl_roots.h>

#include "hb_fit.h"

struct hb_fit_ws {
	hb_fit_nlls *nlls;
	gsl_integration_workspace *integ;
	double *buf;       /* scratch, grown on demand */
	size_t buf_cap;
	char err[160];
};

/* Scratch of at least n doubles, NULL on allocation failure. */
double *hb__fit_scratch(hb_fit_ws *ws, size_t n);
void hb__fit_seterr(hb_fit_ws *ws, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* Bits (1 << j) of parameters whose |correlation| with another exceeds 0.99
 * or whose relative standard error exceeds 50 %; skip[j] true = fixed. */
unsigned hb__fit_undetermined(const double *value, const double *cov, size_t p, const bool *skip);

void hb__fit_value_add(hb_fit_values *vals, const char *name, double value, double std_err, const char *unit);
/* The same with the reason it carries no number (or no standard error). */
void hb__fit_value_why(hb_fit_values *vals, const char *name, double value, double std_err, const char *unit,
		       const char *reason);
/* "beyond the data (highest bias 2.00 A)" */
void hb__fit_beyond(char *buf, size_t cap, double i_max);

/* Checks the common preconditions of a bias sweep. */
int hb__fit_check_sweep(const double *current, const double *L, const double *sigma, size_t n, char *err, size_t errlen);

/* Integral of the function from 0 to x by adaptive Gauss-Kronrod. */
int hb__fit_integrate(hb_fit_ws *ws, double (*fn)(double, void *), void *ctx, double x, double *result);

/* The root of fn in [lo, hi] (a sign change) by GSL's Brent solver, to a
 * relative interval epsrel; HB_ERR_FIT when it does not converge in 200 steps. */
int hb__fit_brent(gsl_function *fn, double lo, double hi, double epsrel, double *root);

#endif
