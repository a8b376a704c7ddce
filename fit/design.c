/* fit/design.c - the design inverse: the gap (or the turns) that gives a target inductance at a current, from a fitted core */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "fit_internal.h"

/*
 * The fitted core (law, mu_i, Js) and the set's geometry give L(I) for any
 * effective gap g and turns N (hb_core_model_eval). With N fixed we solve
 * L(I; g) = target for g, with g fixed (a physical gap at its placement)
 * for N. Neither is monotone everywhere: a bigger gap lowers L at small
 * current but holds the core out of saturation at large current, and more
 * turns raise L until they drive the core into saturation. The design
 * answer is the core below its knee: the LARGEST gap (resp. the SMALLEST
 * number of turns) that reaches the target; a root on the other branch
 * sits on the saturation slope, where L moves fast with the current.
 */

#define SCAN 240

static int L_at(const hb_design_in *in, double g, double N, double *L)
{
	hb_core_params par = { in->mu_i, g, in->Js };
	hb_core_geometry geo = { N, in->core.eff.Ae, in->core.eff.le, 0 };
	double I = in->current;
	return hb_core_model_eval(in->law, &par, &geo, &I, 1, L, NULL);
}

/* Bisection of f(x) = L - target between lo and hi where the signs differ. */
static int bisect(const hb_design_in *in, bool gap, double fixed, double lo, double hi, double *root)
{
	double flo;
	if (L_at(in, gap ? lo : fixed, gap ? fixed : lo, &flo))
		return HB_ERR_FIT;
	flo -= in->target_L;
	for (int it = 0; it < 200; it++) {
		double mid = sqrt(lo * hi), fm; /* geometric: the range spans decades */
		if (L_at(in, gap ? mid : fixed, gap ? fixed : mid, &fm))
			return HB_ERR_FIT;
		fm -= in->target_L;
		if ((fm > 0) == (flo > 0)) {
			lo = mid;
			flo = fm;
		} else {
			hi = mid;
		}
		if (hi / lo - 1 < 1e-13)
			break;
	}
	*root = sqrt(lo * hi);
	return HB_OK;
}

/* The effective gap for fixed turns: the largest root. */
static int solve_gap(const hb_design_in *in, double N, double *g, char *why, size_t cap)
{
	/* from far below the core's own reluctance (le/mu_i) to a gap as long
	 * as the path: beyond that the "core" is an air coil */
	double lo = 1e-4 * in->core.eff.le / in->mu_i, hi = in->core.eff.le;
	double prev_g = NAN, prev_f = NAN, Lmax = 0;
	for (int k = SCAN; k >= 0; k--) {
		double gk = lo * pow(hi / lo, (double)k / SCAN), L;
		if (L_at(in, gk, N, &L))
			return HB_ERR_FIT;
		if (L > Lmax)
			Lmax = L;
		double f = L - in->target_L;
		if (k == SCAN && f > 0) {
			snprintf(why, cap, "even a gap as long as the path (%.4g mm) leaves L above the target", hi * 1e3);
			return HB_ERR_DATA;
		}
		if (isfinite(prev_f) && prev_f <= 0 && f > 0)
			return bisect(in, true, N, gk, prev_g, g);
		prev_g = gk;
		prev_f = f;
	}
	snprintf(why, cap, "no gap reaches the target with N = %g: at most %.4g uH at %.4g A", N, Lmax * 1e6,
		 in->current);
	return HB_ERR_DATA;
}

/* The turns for a fixed effective gap: the smallest root. */
static int solve_turns(const hb_design_in *in, double g, double *N, char *why, size_t cap)
{
	double lo = 0.5, hi = 1e5, prev_n = NAN, prev_f = NAN, Lmax = 0;
	for (int k = 0; k <= SCAN; k++) {
		double nk = lo * pow(hi / lo, (double)k / SCAN), L;
		if (L_at(in, g, nk, &L))
			return HB_ERR_FIT;
		if (L > Lmax)
			Lmax = L;
		double f = L - in->target_L;
		if (k == 0 && f > 0) {
			snprintf(why, cap, "half a turn already gives more than the target at this gap");
			return HB_ERR_DATA;
		}
		if (isfinite(prev_f) && prev_f < 0 && f >= 0)
			return bisect(in, false, g, prev_n, nk, N);
		prev_n = nk;
		prev_f = f;
	}
	snprintf(why, cap, "no number of turns reaches the target at this gap: at most %.4g uH at %.4g A", Lmax * 1e6,
		 in->current);
	return HB_ERR_DATA;
}

typedef struct unc_ctx {
	hb_design_in in;
	double g_fixed; /* effective, when solving the turns */
	bool gap;
} unc_ctx;

/* The solved quantity as a function of (mu_i, Js): physical gap or turns. */
static int design_model(const double *x, void *vctx, double *y)
{
	unc_ctx *c = vctx;
	hb_design_in in = c->in;
	in.mu_i = x[0];
	in.Js = x[1];
	if (!(in.mu_i > 1) || !(in.Js > 0))
		return -1;
	char why[160];
	if (c->gap) {
		double g, t;
		if (solve_gap(&in, in.turns, &g, why, sizeof why) || hb_core_gap_physical(&in.core, in.place, g, &t))
			return -1;
		*y = t;
	} else {
		double N;
		if (solve_turns(&in, c->g_fixed, &N, why, sizeof why))
			return -1;
		*y = N;
	}
	return 0;
}

int hb_design_solve(const hb_design_in *in, hb_design_out *out)
{
	if (!in || !out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	out->gap_eff = out->gap_phys = out->turns = out->u_c = out->U = out->k = NAN;
	out->L0 = out->L_at = NAN;
	if ((unsigned)in->law >= HB_CORE_NLAWS || !(in->mu_i > 1) || !(in->Js > 0) || !(in->target_L > 0) ||
	    !(in->current > 0) || !(in->core.eff.Ae > 0) || !(in->core.eff.le > 0) || !isfinite(in->target_L) ||
	    !isfinite(in->current)) {
		snprintf(out->why, sizeof out->why, "design needs a fitted core (mu_i > 1, Js > 0), Ae, le, a target L > 0 and a current > 0");
		return HB_ERR_ARG;
	}
	bool gap = in->turns > 0;
	if (!gap && !(in->gap >= 0 && isfinite(in->gap))) {
		snprintf(out->why, sizeof out->why, "design needs the turns (to solve the gap) or the gap (to solve the turns)");
		return HB_ERR_ARG;
	}
	out->solved_gap = gap;
	int rc;
	if (gap) {
		out->turns = in->turns;
		rc = solve_gap(in, in->turns, &out->gap_eff, out->why, sizeof out->why);
		if (rc == HB_OK && hb_core_gap_physical(&in->core, in->place, out->gap_eff, &out->gap_phys) != HB_OK) {
			snprintf(out->why, sizeof out->why, "no physical %s gap gives the effective gap %.4g mm",
				 hb_gap_place_name(in->place), out->gap_eff * 1e3);
			rc = HB_ERR_DATA;
		}
	} else {
		out->gap_phys = in->gap;
		out->gap_eff = hb_core_gap_effective(&in->core, in->place, in->gap);
		if (!isfinite(out->gap_eff)) {
			snprintf(out->why, sizeof out->why, "a %s gap needs the core's shape (its leg sections)",
				 hb_gap_place_name(in->place));
			return HB_ERR_ARG;
		}
		rc = solve_turns(in, out->gap_eff, &out->turns, out->why, sizeof out->why);
	}
	if (rc)
		return rc;
	double zero = 0;
	hb_core_params par = { in->mu_i, out->gap_eff, in->Js };
	hb_core_geometry geo = { out->turns, in->core.eff.Ae, in->core.eff.le, 0 };
	if (hb_core_model_eval(in->law, &par, &geo, &zero, 1, &out->L0, NULL) != HB_OK ||
	    hb_core_model_eval(in->law, &par, &geo, &in->current, 1, &out->L_at, &out->B_at) != HB_OK) {
		snprintf(out->why, sizeof out->why, "the core model failed at the design point");
		return HB_ERR_FIT;
	}

	/* GUM: the solved quantity as a function of the fitted mu_i and Js,
	 * their standard errors and correlation from the fit covariance; the
	 * geometry is taken as exact */
	hb_unc_budget *b = hb_unc_new();
	if (!b)
		return HB_ERR_NOMEM;
	unc_ctx uc = { *in, out->gap_eff, gap };
	double dof = in->dof > 0 ? in->dof : INFINITY;
	rc = HB_ERR_FIT;
	if (hb_unc_add(b, "mu_i", HB_UNC_TYPE_A, in->mu_i, in->u_mu_i >= 0 ? in->u_mu_i : 0, NAN, dof) < 0 ||
	    hb_unc_add(b, "Js", HB_UNC_TYPE_A, in->Js, in->u_Js >= 0 ? in->u_Js : 0, NAN, dof) < 0)
		goto done;
	if (isfinite(in->r_mu_js) && in->r_mu_js != 0 && hb_unc_set_correlation(b, 0, 1, in->r_mu_js) != HB_OK)
		goto done;
	if (hb_unc_set_model(b, design_model, &uc) != HB_OK)
		goto done;
	hb_unc_result ur;
	if (hb_unc_evaluate(b, 0, &ur) != HB_OK) {
		snprintf(out->why, sizeof out->why, "uncertainty: %s", hb_unc_error(b));
		goto done;
	}
	out->u_c = ur.u_c;
	out->U = ur.U;
	out->k = ur.k;
	out->dof_eff = ur.dof_eff;
	rc = HB_OK;
done:
	hb_unc_free(b);
	return rc;
}
