/* tests/truth_model.h - the simulated bench's documented physics written out independently of fit/ and drivers/sim/, with the truth tests' parts: expected L(I), L0, drop currents, gap and DCR */
#ifndef HB_TEST_TRUTH_MODEL_H
#define HB_TEST_TRUTH_MODEL_H

#include <math.h>

/* Shared by tests/test_truth.c and bench/bench_settle.c; nothing here
 * calls the simulator or the fit. */

/* Magnetic constant, CODATA 2018 (from memory): mu0 = 1.25663706212e-6 H/m. */
#define MU0 1.25663706212e-6

/* ------------------------------------------------------------------ */
/* the independent physics                                             */
/* ------------------------------------------------------------------ */

typedef enum { LAW_FROHLICH = 0, LAW_LANGEVIN = 1, LAW_TANH = 2 } law_t;

typedef struct truth_part {
	const char *name;    /* test label */
	const char *preset;  /* the simulator's preset */
	double gap_override; /* m, < 0: the preset's */
	/* The part as the simulator documents its preset (docs/simulator.md,
	 * drivers/sim/sim_model.c table); written out here so the expected
	 * values never ask the simulator. */
	double turns, ae, le, mu_i, js, gap, window;
	law_t law;
	double rdc, rlead;
	double top_over_drop30; /* sweep top current as a multiple of the true 30 % drop current */
	int steps;
	/* Sane bounds: relative error allowed whatever uncertainty is stated,
	 * about ten times the standard errors the tool states for these
	 * sweeps, so an inflated uncertainty cannot make a result pass. */
	double rel_l0, rel_mu_i, rel_gap, rel_js, rel_drop, rel_dcr;
	double abs_gap;         /* m: allowed gap when the truth is no gap */
} truth_part;

/* Fringing factor of a gap, McLyman, Transformer and Inductor Design
 * Handbook (from memory): F = 1 + (g/sqrt(Ae)) ln(2G/g); no gap, or a
 * window shorter than half the gap: F = 1 (as docs/simulator.md states). */
static inline double t_fringing(const truth_part *p)
{
	if (!(p->gap > 0) || 2.0 * p->window <= p->gap)
		return 1.0;
	return 1.0 + p->gap / sqrt(p->ae) * log(2.0 * p->window / p->gap);
}

static inline double t_gap_eff(const truth_part *p)
{
	return p->gap / t_fringing(p);
}

/* Langevin function coth x - 1/x and its derivative 1/x^2 - 1/sinh^2 x;
 * below x = 0.1 the Taylor series (x/3 - x^3/45 + 2x^5/945 - x^7/4725,
 * common practice) avoids the cancellation of the closed form. */
static inline void t_langevin(double x, double *f, double *df)
{
	if (fabs(x) < 0.1) {
		double x2 = x * x;
		*f = x * (1.0 / 3 - x2 / 45 + 2 * x2 * x2 / 945 - x2 * x2 * x2 / 4725);
		*df = 1.0 / 3 - x2 / 15 + 2 * x2 * x2 / 189 - x2 * x2 * x2 / 675;
		return;
	}
	double s = sinh(x);
	*f = 1.0 / tanh(x) - 1.0 / x;
	*df = 1.0 / (x * x) - 1.0 / (s * s);
}

/* Polarisation J(H) >= 0 for H >= 0 and dJ/dH, the three laws of
 * docs/simulator.md with a = mu0 (mu_i - 1), so dB/dH(0) = mu0 mu_i:
 * Frohlich-Kennelly J = aH Js/(Js + aH) (common practice), Langevin
 * J = Js L(3aH/Js) (common practice), tanh J = Js tanh(aH/Js) (common practice). */
static inline double t_polarisation(const truth_part *p, double h, double *djdh)
{
	double a = MU0 * (p->mu_i - 1.0), js = p->js;
	switch (p->law) {
	case LAW_FROHLICH: {
		double d = js + a * h;
		*djdh = a * js * js / (d * d);
		return a * h * js / d;
	}
	case LAW_LANGEVIN: {
		double f, df;
		t_langevin(3.0 * a * h / js, &f, &df);
		*djdh = 3.0 * a * df;
		return js * f;
	}
	default: {
		double t = tanh(a * h / js);
		*djdh = a * (1.0 - t * t);
		return js * t;
	}
	}
}

/* Core field at a current, by bisection of the magnetic circuit with an
 * air gap (Ampere's law, common practice): N I = H le + B(H) g_eff/mu0,
 * B = mu0 H + J. The left side grows with H; J <= aH (the laws are
 * concave) and J >= 0 bracket the root. */
static inline double t_field(const truth_part *p, double amps)
{
	double ge = t_gap_eff(p), ni = p->turns * amps;
	if (ni <= 0)
		return 0;
	double lo = ni / (p->le + p->mu_i * ge), hi = ni / (p->le + ge);
	for (int i = 0; i < 200 && hi - lo > 1e-15 * hi; i++) {
		double mid = 0.5 * (lo + hi), dj;
		double j = t_polarisation(p, mid, &dj);
		double f = mid * p->le + (MU0 * mid + j) * ge / MU0 - ni;
		if (f > 0)
			hi = mid;
		else
			lo = mid;
	}
	return 0.5 * (lo + hi);
}

/* Incremental inductance N Ae dB/dI; differentiating the circuit equation
 * gives dH/dI = N/(le + g_eff mu_d/mu0), hence L = mu0 N^2 Ae /
 * (le mu0/mu_d + g_eff), mu_d = dB/dH (implicit differentiation). */
static inline double t_inductance(const truth_part *p, double amps)
{
	double dj;
	t_polarisation(p, t_field(p, amps), &dj);
	double mud = MU0 + dj;
	return MU0 * p->turns * p->turns * p->ae / (p->le * MU0 / mud + t_gap_eff(p));
}

/* Unsaturated value, magnetic circuit (common practice): L0 = mu0 N^2 Ae / (le/mu_i + g_eff). */
static inline double t_l0(const truth_part *p)
{
	return MU0 * p->turns * p->turns * p->ae / (p->le / p->mu_i + t_gap_eff(p));
}

/* Current where L has fallen to (1 - x) L0: bisection on the monotone L(I). */
static inline double t_drop_current(const truth_part *p, double x)
{
	double target = (1.0 - x) * t_l0(p);
	double lo = 0, hi = 0.01;
	while (t_inductance(p, hi) > target && hi < 1e4)
		hi *= 2;
	for (int i = 0; i < 200 && hi - lo > 1e-13 * hi; i++) {
		double mid = 0.5 * (lo + hi);
		if (t_inductance(p, mid) > target)
			lo = mid;
		else
			hi = mid;
	}
	return 0.5 * (lo + hi);
}

/* What the supply's V/I sees: the copper at temperature T (0.39 %/K,
 * common practice) in series with the leads, R = rdc (1 + alpha (T - 20 C)) + rlead. */
static inline double t_dcr(const truth_part *p, double alpha, double temp_c)
{
	return p->rdc * (1.0 + alpha * (temp_c - 20.0)) + p->rlead;
}

/* ------------------------------------------------------------------ */
/* the parts                                                           */
/* ------------------------------------------------------------------ */

/* The presets' values as docs/simulator.md and the preset table give them. */
static const truth_part parts[] = {
	{ .name = "gapped", .preset = "default", .gap_override = -1, .turns = 27, .ae = 50e-6, .le = 60e-3,
	  .mu_i = 2300, .js = 0.39, .gap = 0.5e-3, .window = 9e-3, .law = LAW_FROHLICH, .rdc = 0.020,
	  .rlead = 0.010, .top_over_drop30 = 1.5, .steps = 25, .rel_l0 = 1e-3, .rel_mu_i = 5e-3, .rel_gap = 1e-3,
	  .rel_js = 1e-3, .rel_drop = 5e-3, .rel_dcr = 1e-3 },
	{ .name = "light-gap", .preset = "default", .gap_override = 0.1e-3, .turns = 27, .ae = 50e-6, .le = 60e-3,
	  .mu_i = 2300, .js = 0.39, .gap = 0.1e-3, .window = 9e-3, .law = LAW_FROHLICH, .rdc = 0.020,
	  .rlead = 0.010, .top_over_drop30 = 1.5, .steps = 25, .rel_l0 = 1e-3, .rel_mu_i = 5e-3, .rel_gap = 2e-3,
	  .rel_js = 2e-3, .rel_drop = 5e-3, .rel_dcr = 1e-3 },
	{ .name = "ungapped", .preset = "ungapped-toroid", .gap_override = -1, .turns = 10, .ae = 20e-6, .le = 50e-3,
	  .mu_i = 5000, .js = 0.45, .gap = 0, .window = 5e-3, .law = LAW_TANH, .rdc = 0.005, .rlead = 0.010,
	  .top_over_drop30 = 1.5, .steps = 25, .rel_l0 = 1e-3, .rel_mu_i = 1e-3, .rel_js = 1e-3, .rel_drop = 5e-3,
	  .rel_dcr = 1e-3,
	  /* le/mu_i = 10 um is the core's own reluctance as a gap: 0.1 um is far below it */
	  .abs_gap = 1e-7 },
};

#endif
