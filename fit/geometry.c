/* fit/geometry.c - IEC 60205 effective core parameters, gapped permeability, fringing, air-core and wire inductance */
#include <math.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>
#include <gsl/gsl_sf_ellint.h>

#include "fit_internal.h"

static void effective_from_c(double C1, double C2, hb_core_effective *out)
{
	out->C1 = C1;
	out->C2 = C2;
	out->le = C1 * C1 / C2;
	out->Ae = C1 / C2;
	out->Ve = out->le * out->Ae;
}

/*
 * IEC 60205 for a rectangular-section toroid, r1 = ID/2, r2 = OD/2:
 * thin rings of radius r (path 2 pi r, section h dr) carry the flux in
 * parallel, so C1 = 1 / sum(A/l) and C2 = sum(A/l^2) / sum(A/l)^3:
 *   C1 = 2 pi / (h ln(r2/r1)),  C2 = 2 pi (1/r1 - 1/r2) / (h^2 ln^3(r2/r1)).
 */
int hb_fit_geom_toroid(double od, double id, double height, hb_core_effective *out)
{
	if (!out || !isfinite(od) || !isfinite(id) || !isfinite(height) || !(id > 0) || !(od > id) ||
	    !(height > 0))
		return HB_ERR_ARG;
	double r1 = id / 2, r2 = od / 2, ln = log(r2 / r1);
	double C1 = 2 * M_PI / (height * ln);
	double C2 = 2 * M_PI * (1 / r1 - 1 / r2) / (height * height * ln * ln * ln);
	effective_from_c(C1, C2, out);
	return HB_OK;
}

int hb_fit_geom_sections(const double *length, const double *area, size_t n, hb_core_effective *out)
{
	if (!out || !length || !area || n == 0)
		return HB_ERR_ARG;
	double C1 = 0, C2 = 0;
	for (size_t i = 0; i < n; i++) {
		if (!(length[i] > 0) || !(area[i] > 0) || !isfinite(length[i]) || !isfinite(area[i]))
			return HB_ERR_ARG;
		C1 += length[i] / area[i];
		C2 += length[i] / (area[i] * area[i]);
	}
	effective_from_c(C1, C2, out);
	return HB_OK;
}

double hb_fit_mu_gapped(double mu_i, double gap, double le)
{
	if (!(mu_i > 0) || !(gap >= 0) || !(le > 0))
		return NAN;
	return mu_i / (1 + mu_i * gap / le);
}

double hb_fit_expected_L_mu(double mu, double turns, double Ae, double le)
{
	if (!(mu > 0) || !(turns > 0) || !(Ae > 0) || !(le > 0))
		return NAN;
	return HB_FIT_MU0 * mu * turns * turns * Ae / le;
}

double hb_fit_expected_L_al(double al, double turns)
{
	if (!(al > 0) || !(turns > 0))
		return NAN;
	return al * turns * turns;
}

double hb_fit_fringing_factor(double gap, double Ae, double window_height)
{
	if (!(gap > 0) || !(Ae > 0) || !(window_height > 0))
		return NAN;
	return 1 + gap / sqrt(Ae) * log(2 * window_height / gap);
}

typedef struct gap_ctx {
	double Ae, G, g_eff;
} gap_ctx;

static double gap_residual(double g, void *p)
{
	const gap_ctx *c = p;
	return g / hb_fit_fringing_factor(g, c->Ae, c->G) - c->g_eff;
}

/* Fringing widens the gap's effective area, so a physical gap g looks like
 * g/F(g) to the circuit; invert that between g_eff (F >= 1) and 2G (F = 1). */
int hb_fit_gap_physical(double g_eff, double Ae, double window_height, double *g_phys)
{
	if (!g_phys || !(g_eff > 0) || !(Ae > 0) || !(window_height > 0) || !(g_eff < 2 * window_height))
		return HB_ERR_ARG;
	gsl_set_error_handler_off();
	gap_ctx c = { Ae, window_height, g_eff };
	gsl_function F = { gap_residual, &c };
	double lo = g_eff, hi = 2 * window_height;
	if (gap_residual(lo, &c) >= 0) {
		*g_phys = g_eff;
		return HB_OK;
	}
	return hb__fit_brent(&F, lo, hi, 1e-14, g_phys);
}

int hb__fit_brent(gsl_function *fn, double lo, double hi, double epsrel, double *root)
{
	gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
	if (!s)
		return HB_ERR_NOMEM;
	int rc = HB_ERR_FIT;
	if (gsl_root_fsolver_set(s, fn, lo, hi) != GSL_SUCCESS)
		goto out;
	for (int it = 0; it < 200; it++) {
		if (gsl_root_fsolver_iterate(s) != GSL_SUCCESS)
			goto out;
		lo = gsl_root_fsolver_x_lower(s);
		hi = gsl_root_fsolver_x_upper(s);
		if (gsl_root_test_interval(lo, hi, 0, epsrel) == GSL_SUCCESS) {
			*root = gsl_root_fsolver_root(s);
			rc = HB_OK;
			break;
		}
	}
out:
	gsl_root_fsolver_free(s);
	return rc;
}

/*
 * Nagaoka's coefficient of a cylindrical current sheet, diameter D, length l:
 *   k^2 = D^2/(D^2 + l^2), k' = sqrt(1 - k^2),
 *   K_N = 4/(3 pi k') [ (k'^2/k^2)(K(k) - E(k)) + E(k) - k ].
 * GSL's complete integrals take the modulus k (not the parameter m = k^2).
 */
int hb_fit_nagaoka(double diameter, double length, double *kn)
{
	if (!kn || !(diameter > 0) || !(length > 0) || !isfinite(diameter) || !isfinite(length))
		return HB_ERR_ARG;
	gsl_set_error_handler_off();
	double k2 = diameter * diameter / (diameter * diameter + length * length);
	double k = sqrt(k2), kp = length / sqrt(diameter * diameter + length * length);
	gsl_sf_result K, E;
	if (gsl_sf_ellint_Kcomp_e(k, GSL_PREC_DOUBLE, &K) != GSL_SUCCESS ||
	    gsl_sf_ellint_Ecomp_e(k, GSL_PREC_DOUBLE, &E) != GSL_SUCCESS)
		return HB_ERR_ARG; /* k -> 1: an extremely short coil */
	*kn = 4 / (3 * M_PI * kp) * ((kp * kp / k2) * (K.val - E.val) + E.val - k);
	return HB_OK;
}

int hb_fit_solenoid(double diameter, double length, double turns, double *L_exact, double *L_wheeler,
		    double *nagaoka_k)
{
	if (!(turns > 0) || !isfinite(turns))
		return HB_ERR_ARG;
	double kn;
	int rc = hb_fit_nagaoka(diameter, length, &kn);
	if (rc)
		return rc;
	double a = diameter / 2;
	if (nagaoka_k)
		*nagaoka_k = kn;
	if (L_exact)
		*L_exact = kn * HB_FIT_MU0 * turns * turns * M_PI * a * a / length;
	if (L_wheeler) {
		/* Wheeler 1928: L [uH] = a^2 N^2 / (9a + 10l), a and l in inches */
		double ai = a / 0.0254, li = length / 0.0254;
		*L_wheeler = 1e-6 * ai * ai * turns * turns / (9 * ai + 10 * li);
	}
	return HB_OK;
}

double hb_fit_wire_inductance(double length, double radius)
{
	if (!(length > 0) || !(radius > 0) || !(length > radius) || !isfinite(length))
		return NAN;
	/* 2 l [ln(2l/r) - 0.75] nH with l in cm, i.e. 2e-7 l [...] H with l in m */
	return 2e-7 * length * (log(2 * length / radius) - 0.75);
}
