/* fit/shapes.c - IEC 60205 effective parameters of E, EI, ETD, EFD, EP, PQ, RM, pot and U/UI core sets, and gap placement */
#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "../common/hb_text.h"
#include "fit_internal.h"

/*
 * IEC 60205 splits a closed magnetic circuit into parts of length l_i and
 * section A_i, sums C1 = sum l/A and C2 = sum l/A^2, and takes
 * le = C1^2/C2, Ae = C1/C2. A sharp corner counts as the quarter circle
 * joining the centres of area of its two neighbours (radius the mean of
 * their half-widths: pi/8 (w1 + w2)) with the mean of their sections
 * (IEC 60205, clause 2.6); a yoke that spreads out radially (pot, RM, PQ,
 * EP) is integrated over the radius. Every shape here is the mated SET
 * (two halves, or an E or U with its I), so le is the whole path.
 * Dimensions are the means between the drawing's tolerance limits (IEC
 * 60205, 2.4), in metres.
 */

static const char *const dim_names[HB_DIM_N] = { "A", "B", "B2", "C", "D", "E", "F", "F2", "G", "H", "J", "K", "L",
						"q", "type" };

const char *hb_core_dim_name(int i)
{
	return i >= 0 && i < HB_DIM_N ? dim_names[i] : NULL;
}

int hb_core_dim_index(const char *name)
{
	if (!name)
		return -1;
	for (int i = 0; i < HB_DIM_N; i++)
		if (strcmp(name, dim_names[i]) == 0)
			return i;
	return -1;
}

void hb_core_dims_init(hb_core_dims *d)
{
	for (int i = 0; i < HB_DIM_N; i++)
		d->v[i] = NAN;
}

typedef struct shape_info {
	const char *name;
	const char *required; /* letters, space separated */
	const char *optional;
	const char *about;
} shape_info;

static const shape_info shapes[HB_SHAPE_N] = {
	[HB_SHAPE_E] = { "e", "A B C D E F", "", "E pair, rectangular legs (IEC 61246 / IEC 62317 letters)" },
	[HB_SHAPE_EI] = { "ei", "A B C D E F B2", "", "E with an I; B2 = thickness of the I, D = window height of the E" },
	[HB_SHAPE_ETD] = { "etd", "A B C D E F", "", "ETD (and ER) pair, round centre leg, outer legs bounded by the circle E" },
	[HB_SHAPE_EFD] = { "efd", "A B C D E F F2", "K q", "EFD pair, flat centre leg F x F2 with chamfers q, offset K" },
	[HB_SHAPE_EP] = { "ep", "A B C D E F", "K", "EP pair, round centre leg F at depth K (default F/2), window circle E" },
	[HB_SHAPE_PQ] = { "pq", "A B C D E F G J L", "", "PQ pair; G outer-leg opening, J and L the centre block" },
	[HB_SHAPE_RM] = { "rm", "A B C D E F G J", "H type", "RM pair; H centre hole (0), type 1..4 the outline variant (3)" },
	[HB_SHAPE_P] = { "p", "A B D E F", "H G", "pot core pair; H centre hole (0), G slot width, two slots (0)" },
	[HB_SHAPE_U] = { "u", "A B C D E", "", "U pair, rectangular legs (A - E)/2 wide" },
	[HB_SHAPE_UI] = { "ui", "A B C D E B2", "", "U with an I; B2 = thickness of the I" },
};

const char *hb_core_shape_name(hb_core_shape s)
{
	return (unsigned)s < HB_SHAPE_N ? shapes[s].name : "unknown";
}

const char *hb_core_shape_letters(hb_core_shape s)
{
	return (unsigned)s < HB_SHAPE_N ? shapes[s].required : "";
}

const char *hb_core_shape_optional(hb_core_shape s)
{
	return (unsigned)s < HB_SHAPE_N ? shapes[s].optional : "";
}

const char *hb_core_shape_about(hb_core_shape s)
{
	return (unsigned)s < HB_SHAPE_N ? shapes[s].about : "";
}

int hb_core_shape_parse(const char *name, hb_core_shape *out)
{
	if (!name || !out)
		return HB_ERR_ARG;
	char low[8];
	size_t n = strlen(name);
	if (n == 0 || n >= sizeof low)
		return HB_ERR_ARG;
	for (size_t i = 0; i <= n; i++)
		low[i] = (char)tolower((unsigned char)name[i]);
	if (strcmp(low, "er") == 0) /* ER: the ETD outline with other proportions */
		strcpy(low, "etd");
	if (strcmp(low, "pot") == 0)
		strcpy(low, "p");
	for (int s = 0; s < HB_SHAPE_N; s++) {
		if (strcmp(low, shapes[s].name) == 0) {
			*out = (hb_core_shape)s;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

/* ---------------- the sum over parts ---------------- */

typedef struct acc {
	double C1, C2, Amin;
	bool bad;
} acc;

static void part(acc *a, double l, double A)
{
	if (!(l > 0) || !(A > 0) || !isfinite(l) || !isfinite(A)) {
		a->bad = true;
		return;
	}
	a->C1 += l / A;
	a->C2 += l / (A * A);
}

/* A part whose l/A and l/A^2 are integrals (a radial yoke). */
static void part_c(acc *a, double c1, double c2)
{
	if (!(c1 > 0) || !(c2 > 0) || !isfinite(c1) || !isfinite(c2)) {
		a->bad = true;
		return;
	}
	a->C1 += c1;
	a->C2 += c2;
}

static void section(acc *a, double A)
{
	if (A > 0 && A < a->Amin)
		a->Amin = A;
}

/* Quarter-circle corner between sections of widths w1, w2 (IEC 60205, 2.6). */
static double corner(double w1, double w2)
{
	return M_PI / 8 * (w1 + w2);
}

static int fail(char *err, size_t cap, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static int fail(char *err, size_t cap, const char *fmt, ...)
{
	if (err && cap) {
		va_list ap;
		va_start(ap, fmt);
		vsnprintf(err, cap, fmt, ap);
		va_end(ap);
	}
	return HB_ERR_ARG;
}

/* One half of an E-type circuit whose outer legs (together A_o, width p
 * each), yoke (thickness h, depth c) and centre leg (A_c, corner width
 * wc) are known: legs of height d, yoke across the window (E - F)/2. */
static void e_half(acc *a, double d, double span, double p, double h, double c, double A_o, double A_c, double wc)
{
	double A_y = 2 * h * c;
	part(a, d, A_o);
	part(a, span, A_y);
	part(a, d, A_c);
	part(a, corner(p, h), (A_o + A_y) / 2);
	part(a, M_PI / 8 * (wc + h), (A_y + A_c) / 2);
	section(a, A_o);
	section(a, A_y);
	section(a, A_c);
}

/* Area of both outer legs of a block A x C whose window is bounded by the
 * circle of diameter E (ETD, ER): C A minus the circle's part of depth C. */
static double etd_outer(double A, double C, double E)
{
	double R = E / 2, a = C / 2;
	return 2 * (C * A / 2 - a * sqrt(R * R - a * a) - R * R * asin(a / R));
}

#define NEED(letter) (isfinite(v[HB_DIM_##letter]) && v[HB_DIM_##letter] > 0)

static int check_letters(hb_core_shape s, const double *v, char *err, size_t cap)
{
	char buf[40];
	snprintf(buf, sizeof buf, "%s", shapes[s].required);
	char *save = NULL;
	for (char *t = strtok_r(buf, " ", &save); t; t = strtok_r(NULL, " ", &save)) {
		int i = hb_core_dim_index(t);
		if (i < 0 || !(isfinite(v[i]) && v[i] > 0))
			return fail(err, cap, "%s core needs %s > 0 (letters: %s)", shapes[s].name, t, shapes[s].required);
	}
	return HB_OK;
}

static double opt0(const double *v, int i)
{
	return isfinite(v[i]) ? v[i] : 0;
}

int hb_core_shape_eval(hb_core_shape s, const hb_core_dims *dims, hb_core_shape_result *out, char *err, size_t cap)
{
	if (!dims || !out || (unsigned)s >= HB_SHAPE_N)
		return fail(err, cap, "core shape: bad arguments");
	const double *v = dims->v;
	int rc = check_letters(s, v, err, cap);
	if (rc)
		return rc;
	memset(out, 0, sizeof *out);
	out->shape = s;
	acc a = { 0, 0, INFINITY, false };
	double A = v[HB_DIM_A], B = v[HB_DIM_B], C = v[HB_DIM_C], D = v[HB_DIM_D], E = v[HB_DIM_E], F = v[HB_DIM_F];
	double h = B - D;
	if (!(h > 0))
		return fail(err, cap, "%s core: B %.4g mm must exceed D %.4g mm (the yoke B - D)", shapes[s].name, B * 1e3,
			    D * 1e3);
	if (!(E < A))
		return fail(err, cap, "%s core: E %.4g mm must be smaller than A %.4g mm", shapes[s].name, E * 1e3, A * 1e3);
	if (s != HB_SHAPE_U && s != HB_SHAPE_UI && !(F < E))
		return fail(err, cap, "%s core: F %.4g mm must be smaller than E %.4g mm", shapes[s].name, F * 1e3, E * 1e3);
	out->n_outer = 2;
	switch (s) {
	case HB_SHAPE_E:
	case HB_SHAPE_EI: {
		double p = (A - E) / 2, A_o = 2 * p * C, A_c = F * C;
		e_half(&a, D, (E - F) / 2, p, h, C, A_o, A_c, F / 2);
		if (s == HB_SHAPE_E) {
			e_half(&a, D, (E - F) / 2, p, h, C, A_o, A_c, F / 2);
			out->window_height = 2 * D;
		} else {
			/* the I: a yoke and four corners, no legs */
			double t = v[HB_DIM_B2], A_y = 2 * t * C;
			part(&a, (E - F) / 2, A_y);
			part(&a, corner(p, t), (A_o + A_y) / 2);
			part(&a, corner(F / 2, t), (A_y + A_c) / 2);
			section(&a, A_y);
			out->window_height = D;
		}
		out->A_centre = A_c;
		out->A_outer = A_o;
		break;
	}
	case HB_SHAPE_ETD: {
		if (!(C < E))
			return fail(err, cap, "etd core: C %.4g mm must be smaller than E %.4g mm", C * 1e3, E * 1e3);
		double A_o = etd_outer(A, C, E), p = A_o / (2 * C), s_ = F / 2, A_c = M_PI * s_ * s_;
		/* a round leg's corner starts at 0.5959 of its radius (IEC 60205, ETD clause; from memory) */
		for (int half = 0; half < 2; half++)
			e_half(&a, D, (E - F) / 2, p, h, C, A_o, A_c, 2 * 0.5959 * s_);
		out->window_height = 2 * D;
		out->A_centre = A_c;
		out->A_outer = A_o;
		break;
	}
	case HB_SHAPE_EFD: {
		double F2 = v[HB_DIM_F2], K = opt0(v, HB_DIM_K), q = opt0(v, HB_DIM_q), p = (A - E) / 2;
		double A_o = 2 * p * C, A_y = 2 * h * C, A_c = F * F2 - 2 * q * q;
		if (!(A_c > 0) || !(F2 + 2 * K < C))
			return fail(err, cap, "efd core: need F F2 > 2 q^2 and F2 + 2K < C");
		/* the centre leg's corner climbs the depth step (C - F2 - 2K)/2 as
		 * well (IEC 60205, EFD clause) */
		double step = (C - F2 - 2 * K) / 2;
		double l5 = M_PI / 4 * (F / 4 + sqrt(step * step + h * h / 4));
		for (int half = 0; half < 2; half++) {
			part(&a, D, A_o);
			part(&a, (E - F) / 2, A_y);
			part(&a, D, A_c);
			part(&a, corner(p, h), (A_o + A_y) / 2);
			part(&a, l5, (A_y + A_c) / 2);
		}
		section(&a, A_o);
		section(&a, A_y);
		section(&a, A_c);
		out->window_height = 2 * D;
		out->A_centre = A_c;
		out->A_outer = A_o;
		break;
	}
	case HB_SHAPE_EP: {
		/* EP (IEC 60205, EP clause): one U-shaped shell round a round
		 * leg at depth k; the yoke spreads over the angle pi - alpha. */
		double k = NEED(K) ? v[HB_DIM_K] : F / 2, h1 = 2 * B, h2 = 2 * D;
		double a1 = A * C - M_PI * E * E / 8 - E * k;
		double a3 = M_PI * F * F / 4 + (k - F / 2) * F;
		double al = atan(E / 2 / k), th = M_PI - al;
		double gm = sqrt((th * E * E + 2 * a1) / (4 * th));
		double l4 = M_PI / 2 * (gm - E / 2 + (h1 - h2) / 4);
		double a4 = (A * C - M_PI / 8 * E * E - E * F / 2 + th * E * (h1 - h2) / 2) / 2;
		double r0 = F / 2 + k;
		double l5 = M_PI / 2 * (0.29289 * r0 / 2 + (h1 - h2) / 4);
		double a5 = M_PI / 2 * (r0 * r0 / 4 + r0 / 2 * (h1 - h2));
		if (!(a1 > 0) || !(E > r0))
			return fail(err, cap, "ep core: dimensions leave no outer shell (A C must exceed the window)");
		part(&a, h2, a1);
		part_c(&a, 2 / (th * (h1 - h2)) * log(E / r0), 4 * (E - r0) / (th * th * (h1 - h2) * (h1 - h2) * E * r0));
		part(&a, h2, a3);
		part(&a, l4, a4);
		part(&a, l5, a5);
		section(&a, a1);
		section(&a, a3);
		section(&a, a4);
		section(&a, a5);
		out->window_height = h2;
		out->A_centre = a3;
		out->A_outer = a1;
		out->n_outer = 1;
		break;
	}
	case HB_SHAPE_PQ: {
		double G = v[HB_DIM_G], J = v[HB_DIM_J], L = v[HB_DIM_L];
		if (!(G < E))
			return fail(err, cap, "pq core: G %.4g mm must be smaller than E %.4g mm", G * 1e3, E * 1e3);
		double beta = acos(G / E), alpha = atan(L / J), I = E * sin(beta);
		double a7 = (beta * E * E - alpha * F * F + G * L - J * I) / 8;
		double a8 = M_PI / 16 * (E * E - F * F);
		double a9 = 2 * alpha * F * h, a10 = 2 * beta * E * h;
		double lmin = (E - F) / 2, lmax = sqrt(E * E + F * F - 2 * E * F * cos(alpha - beta)) / 2;
		double f = (lmin + lmax) / (2 * lmin), kk = a7 / a8, lg = log(E / F);
		double a1 = C * (A - G) - beta * E * E / 2 + G * I / 2;
		double a2 = M_PI * kk * E * F * h / (E - F) * lg;
		double l2 = f * E * F / (E - F) * lg * lg;
		double a3 = M_PI / 4 * F * F;
		double l4 = M_PI / 4 * (h + A / 2 - E / 2), a4 = (a1 + a10) / 2;
		double l5 = M_PI / 4 * (h + (1 - 1 / sqrt(2)) * F), a5 = (a3 + a9) / 2;
		part(&a, 2 * D, a1);
		part(&a, l2, a2);
		part(&a, 2 * D, a3);
		part(&a, l4, a4);
		part(&a, l5, a5);
		section(&a, a1);
		section(&a, a2);
		section(&a, a3);
		section(&a, a4);
		section(&a, a5);
		out->window_height = 2 * D;
		out->A_centre = a3;
		out->A_outer = a1;
		break;
	}
	case HB_SHAPE_RM: {
		double G = v[HB_DIM_G], J = v[HB_DIM_J], H = opt0(v, HB_DIM_H);
		int type = isfinite(v[HB_DIM_TYPE]) ? (int)v[HB_DIM_TYPE] : 3;
		if (type < 1 || type > 4)
			return fail(err, cap, "rm core: type %d unknown (accepted 1 to 4)", type);
		if (!(G < E) || !(H < F))
			return fail(err, cap, "rm core: need G < E and H < F");
		double p = sqrt(2) * J - A, alpha = M_PI / 2, gamma = M_PI / 2, beta = alpha - asin(G / E);
		double lmin = (E - F) / 2, lmax, a7, a8 = alpha / 8 * (E * E - F * F);
		double rad = sqrt((E * E + F * F) / 4 - E * F * cos(alpha - beta) / 2);
		switch (type) {
		case 1:
			lmax = rad;
			a7 = (beta / 2 * E * E + G * G * tan(beta) / 2 - G * G * tan(alpha - gamma / 2) / 2 -
			      M_PI / 4 * F * F) / 4;
			break;
		case 2:
			lmax = rad;
			a7 = (beta / 2 * E * E - M_PI / 4 * F * F - G * G * tan(alpha - gamma / 2) / 2 +
			      G * G * tan(beta) / 2) / 4;
			break;
		case 3:
			lmax = G / 2 + (1 - sin(gamma / 2)) * (E - C) / 2;
			a7 = (beta / 2 * E * E - M_PI / 4 * F * F + C * C * tan(alpha - beta) / 2) / 4;
			break;
		default:
			lmax = rad;
			a7 = (beta / 2 * E * E + E * F * sin(alpha - beta) / 2 + (C - F) * (C - F) * tan(gamma / 2) / 2 -
			      M_PI / 4 * F * F) / 4;
			break;
		}
		double f = (lmin + lmax) / (2 * lmin), kk = a7 / a8;
		double a1 = J * J * (1 + tan(beta - M_PI / 4)) / 2 - beta / 2 * E * E - p * p / 2;
		double a3 = M_PI / 4 * (F * F - H * H);
		double l4 = M_PI / 4 * (h + J / 2 - E / 2), a4 = (a1 + 2 * beta * E * h) / 2;
		double l5 = M_PI / 4 * (F + h - sqrt((F * F + H * H) / 2)), a5 = (a3 + 2 * alpha * F * h) / 2;
		double y = kk * M_PI * h;
		part(&a, 2 * D, a1);
		part_c(&a, log(E / F) * f / y, (1 / F - 1 / E) * f / (y * y));
		part(&a, 2 * D, a3);
		part(&a, l4, a4);
		part(&a, l5, a5);
		section(&a, a1);
		section(&a, a3);
		section(&a, a4);
		section(&a, a5);
		out->window_height = 2 * D;
		out->A_centre = a3;
		out->A_outer = a1;
		break;
	}
	case HB_SHAPE_P: {
		/* pot core: ring (A, E), post (F, hole H), two disc yokes of
		 * thickness h integrated over r from F/2 to E/2 (the toroid's
		 * rings turned on their side), four corners; two slots of width
		 * G take G (A - E) off the ring */
		double H = opt0(v, HB_DIM_H), G = opt0(v, HB_DIM_G);
		if (!(H < F))
			return fail(err, cap, "p core: H %.4g mm must be smaller than F %.4g mm", H * 1e3, F * 1e3);
		double A1 = M_PI / 4 * (A * A - E * E) - G * (A - E), A3 = M_PI / 4 * (F * F - H * H);
		double r3 = F / 2, r2 = E / 2;
		double Ay2 = 2 * M_PI * r2 * h, Ay3 = 2 * M_PI * r3 * h;
		if (!(A1 > 0))
			return fail(err, cap, "p core: the slots G %.4g mm leave no outer ring", G * 1e3);
		part(&a, 2 * D, A1);
		part(&a, 2 * D, A3);
		for (int half = 0; half < 2; half++) {
			part_c(&a, log(r2 / r3) / (2 * M_PI * h), (1 / r3 - 1 / r2) / (4 * M_PI * M_PI * h * h));
			part(&a, corner((A - E) / 2, h), (A1 + Ay2) / 2);
			part(&a, corner((F - H) / 2, h), (A3 + Ay3) / 2);
		}
		section(&a, A1);
		section(&a, A3);
		section(&a, Ay2);
		section(&a, Ay3);
		out->window_height = 2 * D;
		out->A_centre = A3;
		out->A_outer = A1;
		out->n_outer = 1;
		break;
	}
	case HB_SHAPE_U:
	case HB_SHAPE_UI: {
		/* both legs carry the whole flux in series */
		double p = (A - E) / 2, A_l = p * C, A_y = h * C;
		int halves = s == HB_SHAPE_U ? 2 : 1;
		for (int half = 0; half < halves; half++) {
			part(&a, 2 * D, A_l);
			part(&a, E, A_y);
			part(&a, 2 * corner(p, h), (A_l + A_y) / 2);
		}
		section(&a, A_l);
		section(&a, A_y);
		if (s == HB_SHAPE_UI) {
			double t = v[HB_DIM_B2], A_i = t * C;
			part(&a, E, A_i);
			part(&a, 2 * corner(p, t), (A_l + A_i) / 2);
			section(&a, A_i);
		}
		out->window_height = s == HB_SHAPE_U ? 2 * D : D;
		out->A_centre = A_l;
		out->A_outer = A_l;
		out->n_outer = 1;
		break;
	}
	default:
		return fail(err, cap, "core shape %d unknown", (int)s);
	}
	if (a.bad || !(a.C1 > 0) || !(a.C2 > 0))
		return fail(err, cap, "%s core: these dimensions give a part with no length or section", shapes[s].name);
	out->eff.C1 = a.C1;
	out->eff.C2 = a.C2;
	out->eff.le = a.C1 * a.C1 / a.C2;
	out->eff.Ae = a.C1 / a.C2;
	out->eff.Ve = out->eff.le * out->eff.Ae;
	out->Amin = a.Amin;
	return HB_OK;
}

/* ---------------- where the gap is ---------------- */

const char *hb_gap_place_name(hb_gap_place p)
{
	return p == HB_GAP_SPACER ? "spacer" : "centre";
}

int hb_gap_place_parse(const char *text, hb_gap_place *out)
{
	if (!text || !out)
		return HB_ERR_ARG;
	if (strcmp(text, "centre") == 0 || strcmp(text, "center") == 0)
		*out = HB_GAP_CENTRE;
	else if (strcmp(text, "spacer") == 0)
		*out = HB_GAP_SPACER;
	else
		return HB_ERR_ARG;
	return HB_OK;
}

void hb_core_shape_from_effective(double Ae, double le, double window_height, hb_core_shape_result *out)
{
	memset(out, 0, sizeof *out);
	out->shape = HB_SHAPE_N;
	out->eff.Ae = Ae;
	out->eff.le = le;
	out->eff.Ve = Ae * le;
	out->eff.C1 = Ae > 0 ? le / Ae : NAN;
	out->eff.C2 = Ae > 0 ? le / (Ae * Ae) : NAN;
	out->Amin = Ae;
	out->window_height = window_height;
	out->A_centre = Ae;
	out->A_outer = NAN; /* unknown: a spacer gap needs a shape */
	out->n_outer = 0;
}

/* One gap of length t across a section A: its reluctance times mu0 Ae,
 * i.e. the length of gap of section Ae with the same reluctance. The
 * flux fringes round it and widens its section by McLyman's F. */
static double gap_term(double t, double A, double Ae, double G)
{
	double F = G > 0 ? hb_fit_fringing_factor(t, A, G) : 1;
	if (!isfinite(F) || F < 1)
		F = 1; /* a window shorter than half the gap: no correction (as fit/ and the simulator) */
	return t * Ae / (A * F);
}

double hb_core_gap_effective(const hb_core_shape_result *r, hb_gap_place place, double t)
{
	if (!r || !(t >= 0) || !isfinite(t) || !(r->eff.Ae > 0) || !(r->A_centre > 0))
		return NAN;
	if (t == 0)
		return 0;
	double G = r->window_height, Ae = r->eff.Ae;
	double g = gap_term(t, r->A_centre, Ae, G);
	if (place == HB_GAP_SPACER) {
		if (!(r->A_outer > 0) || r->n_outer < 1)
			return NAN;
		/* the return legs in parallel: each fringes on its own section */
		double per = r->A_outer / r->n_outer;
		double F = G > 0 ? hb_fit_fringing_factor(t, per, G) : 1;
		if (!isfinite(F) || F < 1)
			F = 1;
		g += t * Ae / (r->A_outer * F);
	}
	return g;
}

typedef struct inv_ctx {
	const hb_core_shape_result *r;
	hb_gap_place place;
	double target;
} inv_ctx;

static double inv_residual(double t, void *p)
{
	const inv_ctx *c = p;
	return hb_core_gap_effective(c->r, c->place, t) - c->target;
}

int hb_core_gap_physical(const hb_core_shape_result *r, hb_gap_place place, double g_eff, double *t)
{
	if (!r || !t || !(g_eff >= 0) || !isfinite(g_eff))
		return HB_ERR_ARG;
	if (g_eff == 0) {
		*t = 0;
		return HB_OK;
	}
	if (!isfinite(hb_core_gap_effective(r, place, g_eff)))
		return HB_ERR_ARG;
	gsl_set_error_handler_off();
	inv_ctx c = { r, place, g_eff };
	/* g_eff(t) grows with t; find an upper bracket */
	double lo = 0, hi = g_eff;
	while (inv_residual(hi, &c) < 0) {
		lo = hi;
		hi *= 2;
		if (hi > 1)
			return HB_ERR_FIT;
	}
	gsl_function fn = { inv_residual, &c };
	return hb__fit_brent(&fn, lo, hi, 1e-13, t);
}

/* ---------------- the dimensions as text ---------------- */

/* "A=42.15mm,B=21mm,..." (SI prefixes; a bare number is metres), "type=3" */
int hb_core_dims_parse(const char *text, hb_core_dims *d, char *err, size_t cap)
{
	if (!text || !d)
		return fail(err, cap, "no dimensions");
	hb_core_dims_init(d);
	char buf[512];
	if (strlen(text) >= sizeof buf)
		return fail(err, cap, "dimensions '%.40s...' too long (at most %zu characters)", text, sizeof buf - 1);
	snprintf(buf, sizeof buf, "%s", text);
	char *save = NULL;
	int n = 0;
	for (char *t = strtok_r(buf, ",", &save); t; t = strtok_r(NULL, ",", &save)) {
		char *eq = strchr(t, '=');
		if (!eq)
			return fail(err, cap, "dimension '%s': expected LETTER=VALUE, e.g. A=42.15mm", t);
		*eq = 0;
		int i = hb_core_dim_index(t);
		if (i < 0)
			return fail(err, cap, "dimension letter '%s' unknown (accepted A B B2 C D E F F2 G H J K L q type)", t);
		if (isfinite(d->v[i]))
			return fail(err, cap, "dimension %s given twice", t);
		double v;
		char perr[160];
		if (i == HB_DIM_TYPE) {
			if (hb_parse_value(eq + 1, "", &v, perr, sizeof perr) != HB_OK || v != floor(v) || v < 1 || v > 4)
				return fail(err, cap, "type '%s': accepted 1, 2, 3 or 4 (the RM outline)", eq + 1);
		} else if (hb_parse_value(eq + 1, "m", &v, perr, sizeof perr) != HB_OK || !isfinite(v) ||
			   (i != HB_DIM_K && !(v >= 0)) || fabs(v) > 1) {
			return fail(err, cap, "dimension %s '%s': accepted a length up to 1 m, e.g. 12.5mm%s", t, eq + 1,
				    i == HB_DIM_K ? " (K may be negative)" : "");
		}
		d->v[i] = v;
		n++;
	}
	if (n == 0)
		return fail(err, cap, "no dimensions: expected LETTER=VALUE,..., e.g. A=42.15mm,B=21mm");
	return HB_OK;
}

int hb_core_dims_format(const hb_core_dims *d, char *buf, size_t cap)
{
	if (!d || !buf || cap == 0)
		return HB_ERR_ARG;
	size_t len = 0;
	buf[0] = 0;
	for (int i = 0; i < HB_DIM_N; i++) {
		if (!isfinite(d->v[i]))
			continue;
		int w = i == HB_DIM_TYPE ? snprintf(buf + len, cap - len, "%stype=%d", len ? "," : "", (int)d->v[i])
					 : snprintf(buf + len, cap - len, "%s%s=%.6gmm", len ? "," : "", dim_names[i],
						    d->v[i] * 1e3);
		if (w < 0 || (size_t)w >= cap - len)
			return HB_ERR_ARG;
		len += (size_t)w;
	}
	return HB_OK;
}
