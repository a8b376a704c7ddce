/* drivers/sim/sim_model.c - the simulated part and supply: parameters, part and dynamics presets, saturating core, winding heat, supply regulation and response, read-back history, impedance */
#include <math.h>
#include <stddef.h>
#include <string.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_roots.h>

#include "sim_internal.h"

#define P(field) offsetof(sim_params, field)

const sim_param_info sim_param_table[] = {
	{ "turns", P(turns), "", 1, 10000, true, true, "winding turns N" },
	{ "ae", P(ae), "m2", 1e-9, 1e-2, true, false, "effective core cross-section Ae" },
	{ "le", P(le), "m", 1e-4, 2, true, false, "effective magnetic path length le" },
	{ "mu_i", P(mu_i), "", 1, 100000, true, false, "initial relative permeability of the material" },
	{ "bsat", P(bsat), "T", 0.01, 3, true, false, "saturation polarisation Bsat" },
	{ "gap", P(gap), "m", 0, 0.02, true, false, "total air gap length g (0: ungapped)" },
	{ "window", P(window), "m", 1e-4, 0.2, true, false, "winding window height G (fringing)" },
	{ "law", P(law), "", 0, 2, true, true, "B-H law: 0 Frohlich-Kennelly, 1 Langevin, 2 tanh" },
	{ "rdc", P(rdc), "ohm", 1e-6, 1000, true, false, "winding resistance at 20 C" },
	{ "cp", P(cp), "F", 0, 1e-6, true, false, "winding parasitic capacitance Cp" },
	{ "rlead", P(rlead), "ohm", 0, 10, true, false, "fixture and lead resistance (removed by short correction)" },
	{ "cfix", P(cfix), "F", 0, 1e-6, true, false, "fixture stray capacitance (removed by open correction)" },
	{ "tan_delta", P(tan_delta), "", 0, 1, true, false, "core loss tangent (series core-loss R = tan_delta*w*L)" },
	{ "rth", P(rth), "K/W", 0, 10000, true, false, "thermal resistance winding to ambient" },
	{ "tau_th", P(tau_th), "s", 1e-3, 1e5, true, false, "thermal time constant" },
	{ "t_amb", P(t_amb), "C", -40, 150, false, false, "ambient temperature" },
	{ "alpha_cu", P(alpha_cu), "1/K", 0, 0.01, false, false, "temperature coefficient of the winding resistance" },
	{ "tau_settle", P(tau_settle), "s", 1e-4, 100, false, false, "supply current settling time constant" },
	{ "imax", P(imax), "A", 0.001, 1000, false, false, "supply current rating (setpoints above: -222)" },
	{ "vmax", P(vmax), "V", 0.1, 1000, false, false, "supply voltage rating (limits above: -222)" },
	{ "bias_max", P(bias_max), "A", 0, 1, false, false, "meter's internal bias current rating" },
	{ "time_scale", P(time_scale), "", 1e-6, 100, false, false, "multiplies every simulated time (settling, integration, heat)" },
	{ "seed", P(seed), "", 0, 4294967295.0, false, true, "noise generator seed" },
	{ "noise", P(noise), "", 0, 0.1, false, false, "relative noise of one MEDIUM reading" },
	{ "t_short", P(t_short), "s", 1e-4, 100, false, false, "integration time of aperture SHORT" },
	{ "t_medium", P(t_medium), "s", 1e-4, 100, false, false, "integration time of aperture MEDIUM" },
	{ "t_long", P(t_long), "s", 1e-4, 100, false, false, "integration time of aperture LONG" },
	{ "t_supply", P(t_supply), "s", 0, 10, false, false, "supply measurement time (MEAS?)" },
	{ "slew", P(slew), "A/s", 0, 1e6, false, false, "supply output slew-rate limit (0: none)" },
	{ "zeta", P(zeta), "", 0.01, 10, false, false, "damping ratio of the second-order response (with f_n)" },
	{ "f_n", P(f_n), "Hz", 0, 1e4, false, false, "natural frequency of a second-order response (0: first-order lag)" },
	{ "rb_latency", P(rb_latency), "s", 0, 1, false, false, "MEAS? reports the current as it was this long ago" },
	{ "rb_average", P(rb_average), "s", 0, 1, false, false, "MEAS? reports the mean current over this window (0: instant)" },
	{ "rb_noise", P(rb_noise), "", 0, 0.1, false, false, "relative read-back noise (sigma per |I|)" },
	{ "rb_noise_abs", P(rb_noise_abs), "A", 0, 1, false, false, "absolute read-back noise sigma, added to rb_noise*|I|" },
	{ "status_subsystem", P(status_subsystem), "", 0, 1, false, true, "1: supply has STATus and protection queries; 0: plain supply, -113" },
	{ "virtual_time", P(virtual_time), "", 0, 1, false, true, "1: the bench runs on a virtual clock (in-process bench: bit-repeatable)" },
	{ "gain", P(gain), "", -0.1, 0.1, false, false, "meter's relative gain error on the impedance (0: exact)" },
	{ "llead", P(llead), "H", 0, 1e-3, false, false, "fixture lead inductance in series with rlead (removed by short correction)" },
	{ "fixture_state", P(fixture_state), "", 0, 2, false, true, "what the fixture holds: 0 the part, 1 nothing (open), 2 a shorting bar (short)" },
};
const size_t sim_param_count = sizeof sim_param_table / sizeof sim_param_table[0];

const sim_param_info *sim_param_find(const char *key)
{
	for (size_t i = 0; i < sim_param_count; i++)
		if (strcmp(sim_param_table[i].key, key) == 0)
			return &sim_param_table[i];
	return NULL;
}

typedef struct sim_preset {
	const char *name;
	double turns, ae, le, mu_i, bsat, gap, window, law, rdc, cp, rlead, cfix, tan_delta, rth, tau_th;
} sim_preset;

/* Invented parts with plausible values, for the demo and the tests. */
static const sim_preset presets[] = {
	/* gapped ferrite power inductor: about 108 uH, knee near 4.5 A, SRF near 4.8 MHz */
	{ "default", 27, 50e-6, 60e-3, 2300, 0.39, 0.5e-3, 9e-3, SIM_LAW_FROHLICH,
	  0.020, 10e-12, 0.010, 0.5e-12, 0.002, 30, 120 },
	/* high-permeability toroid without gap: about 250 uH, saturates below 1 A */
	{ "ungapped-toroid", 10, 20e-6, 50e-3, 5000, 0.45, 0, 5e-3, SIM_LAW_TANH,
	  0.005, 20e-12, 0.010, 0.5e-12, 0.004, 40, 90 },
	/* air-core solenoid: about 4 uH, never saturates */
	{ "air-core", 40, 80e-6, 40e-3, 1, 2.0, 0, 40e-3, SIM_LAW_FROHLICH,
	  0.050, 2e-12, 0.010, 0.5e-12, 0, 20, 60 },
	/* small SMD power inductor: about 14 uH, knee near 1 A, SRF near 25 MHz */
	{ "small-smd", 12, 4e-6, 12e-3, 1500, 0.32, 0.05e-3, 2e-3, SIM_LAW_LANGEVIN,
	  0.080, 3e-12, 0.010, 0.5e-12, 0.003, 80, 20 },
};

static const char *const preset_names[] = { "default", "ungapped-toroid", "air-core", "small-smd", NULL };

const char *const *hb_sim_presets(void)
{
	return preset_names;
}

int sim_params_preset(sim_params *p, const char *name)
{
	for (size_t i = 0; i < sizeof presets / sizeof presets[0]; i++) {
		const sim_preset *s = &presets[i];
		if (strcmp(s->name, name) != 0)
			continue;
		p->turns = s->turns;
		p->ae = s->ae;
		p->le = s->le;
		p->mu_i = s->mu_i;
		p->bsat = s->bsat;
		p->gap = s->gap;
		p->window = s->window;
		p->law = s->law;
		p->rdc = s->rdc;
		p->cp = s->cp;
		p->rlead = s->rlead;
		p->cfix = s->cfix;
		p->tan_delta = s->tan_delta;
		p->rth = s->rth;
		p->tau_th = s->tau_th;
		return HB_OK;
	}
	return HB_ERR_NOTFOUND;
}

void sim_params_defaults(sim_params *p)
{
	memset(p, 0, sizeof *p);
	sim_params_preset(p, "default");
	p->t_amb = 20;
	/* Copper: about 0.39 %/K near room temperature (common practice). */
	p->alpha_cu = 0.0039;
	p->tau_settle = 0.2;
	p->imax = 10;
	p->vmax = 30;
	p->bias_max = 0.2;
	p->time_scale = 1;
	p->seed = 1;
	p->noise = 1e-4;
	p->t_short = 0.020;
	p->t_medium = 0.100;
	p->t_long = 0.400;
	p->t_supply = 0.010;
	p->zeta = 0.7;
	p->status_subsystem = 1;
}

typedef struct sim_dynamics {
	const char *name;
	double tau_settle, slew, zeta, f_n, rb_latency, rb_average;
} sim_dynamics;

/* Supply behaviours a sweep engine must cope with; "default" is the
 * first-order 200 ms lag with an instant read-back the bench always had. */
static const sim_dynamics dynamics[] = {
	{ "default", 0.2, 0, 0.7, 0, 0, 0 },
	{ "ideal", 1e-3, 0, 0.7, 0, 0, 0 },
	{ "lag40", 40e-3, 0, 0.7, 0, 0, 0 },
	{ "slew", 5e-3, 10, 0.7, 0, 0, 0 },
	{ "overshoot", 20e-3, 0, 0.35, 8, 0, 0 },
	{ "filtered", 20e-3, 0, 0.7, 0, 0, 0.1 },
	{ "latent", 20e-3, 0, 0.7, 0, 0.06, 0 },
};

static const char *const dynamics_names[] = { "default", "ideal", "lag40", "slew", "overshoot", "filtered", "latent", NULL };

const char *const *hb_sim_dynamics(void)
{
	return dynamics_names;
}

int sim_params_dynamics(sim_params *p, const char *name)
{
	for (size_t i = 0; i < sizeof dynamics / sizeof dynamics[0]; i++) {
		const sim_dynamics *d = &dynamics[i];
		if (strcmp(d->name, name) != 0)
			continue;
		p->tau_settle = d->tau_settle;
		p->slew = d->slew;
		p->zeta = d->zeta;
		p->f_n = d->f_n;
		p->rb_latency = d->rb_latency;
		p->rb_average = d->rb_average;
		return HB_OK;
	}
	return HB_ERR_NOTFOUND;
}

/* ------------------------------------------------------------------ */

double sim_fringing(const sim_params *p)
{
	if (p->gap <= 0 || p->window <= p->gap / 2)
		return 1.0;
	/* McLyman, Transformer and Inductor Design Handbook, fringing flux factor. */
	return 1.0 + (p->gap / sqrt(p->ae)) * log(2.0 * p->window / p->gap);
}

double sim_gap_eff(const sim_params *p)
{
	return p->gap / sim_fringing(p);
}

/* Langevin function L(x) = coth x - 1/x and its derivative, with series
 * near 0 where the difference of large terms loses every digit. */
static double langevin(double x, double *deriv)
{
	double ax = fabs(x);
	if (ax < 0.05) {
		double x2 = x * x;
		*deriv = 1.0 / 3.0 - x2 / 15.0 + 2.0 * x2 * x2 / 189.0;
		return x / 3.0 - x * x2 / 45.0 + 2.0 * x * x2 * x2 / 945.0;
	}
	double s = sinh(x);
	*deriv = 1.0 / (x * x) - (isfinite(s) ? 1.0 / (s * s) : 0.0);
	return 1.0 / tanh(x) - 1.0 / x;
}

/* B = mu0*H + J(H): the material's polarisation J saturates at bsat with
 * initial slope mu0*(mu_i-1), so dB/dH at zero is exactly mu0*mu_i and B
 * keeps rising as in vacuum once the core is saturated. */
double sim_law_b(const sim_params *p, double h, double *dbdh)
{
	double a = SIM_MU0 * (p->mu_i - 1.0);
	double js = p->bsat;
	double j, dj;
	switch ((int)p->law) {
	case SIM_LAW_LANGEVIN: {
		double d;
		j = js * langevin(3.0 * a * h / js, &d);
		dj = 3.0 * a * d;
		break;
	}
	case SIM_LAW_TANH: {
		double t = tanh(a * h / js);
		j = js * t;
		dj = a * (1.0 - t * t);
		break;
	}
	default: {
		double den = js + a * fabs(h);
		j = a * h * js / den;
		dj = a * js * js / (den * den);
		break;
	}
	}
	if (dbdh)
		*dbdh = SIM_MU0 + dj;
	return SIM_MU0 * h + j;
}

typedef struct circuit {
	const sim_params *p;
	double geff, ampere_turns;
} circuit;

static double circuit_residual(double h, void *arg)
{
	const circuit *c = arg;
	return h * c->p->le + sim_law_b(c->p, h, NULL) * c->geff / SIM_MU0 - c->ampere_turns;
}

int sim_core_solve(const sim_params *p, double amps, double *h_out, double *b_out)
{
	circuit c = { p, sim_gap_eff(p), p->turns * fabs(amps) };
	double h = 0;
	int rc = HB_OK;
	if (c.ampere_turns > 0) {
		/* The concave law lies between mu0*H and mu0*mu_i*H, which brackets
		 * the root: N*I/(le + mu_i*g_eff) <= H <= N*I/(le + g_eff). */
		double lo = c.ampere_turns / (p->le + p->mu_i * c.geff);
		double hi = c.ampere_turns / (p->le + c.geff);
		double flo = circuit_residual(lo, &c), fhi = circuit_residual(hi, &c);
		if (hi - lo <= 1e-14 * hi || flo >= 0) {
			h = lo;
		} else if (fhi <= 0) {
			h = hi;
		} else {
			gsl_function fn = { circuit_residual, &c };
			gsl_root_fsolver *s = gsl_root_fsolver_alloc(gsl_root_fsolver_brent);
			if (!s)
				return HB_ERR_NOMEM;
			int st = gsl_root_fsolver_set(s, &fn, lo, hi);
			for (int i = 0; st == GSL_SUCCESS && i < 200; i++) {
				st = gsl_root_fsolver_iterate(s);
				if (st != GSL_SUCCESS)
					break;
				st = gsl_root_test_interval(gsl_root_fsolver_x_lower(s), gsl_root_fsolver_x_upper(s), 0, 1e-13);
				if (st == GSL_SUCCESS)
					break;
				if (st == GSL_CONTINUE)
					st = GSL_SUCCESS;
			}
			h = gsl_root_fsolver_root(s);
			if (st != GSL_SUCCESS)
				rc = HB_ERR_FIT;
			gsl_root_fsolver_free(s);
		}
	}
	if (amps < 0)
		h = -h;
	if (h_out)
		*h_out = h;
	if (b_out)
		*b_out = sim_law_b(p, h, NULL);
	return rc;
}

double sim_inductance(const sim_params *p, double amps)
{
	double h, dbdh;
	sim_core_solve(p, amps, &h, NULL);
	sim_law_b(p, h, &dbdh);
	/* Differentiating N*I = H*le + B*g_eff/mu0 gives
	 * dB/dI = N*dB/dH / (le + dB/dH*g_eff/mu0); L = N*Ae*dB/dI. */
	double dbdi = p->turns * dbdh / (p->le + dbdh * sim_gap_eff(p) / SIM_MU0);
	return p->turns * p->ae * dbdi;
}

double sim_l0_closed_form(const sim_params *p)
{
	return SIM_MU0 * p->turns * p->turns * p->ae / (p->le / p->mu_i + sim_gap_eff(p));
}

double sim_winding_r(const sim_params *p, double temp_c)
{
	double r = p->rdc * (1.0 + p->alpha_cu * (temp_c - 20.0));
	return r > 1e-9 ? r : 1e-9;
}

/* ------------------------------------------------------------------ */

void sim_state_reset(const sim_params *p, sim_state *s)
{
	s->setpoint = 0;
	s->vlimit = 5.0 < p->vmax ? 5.0 : p->vmax;
	s->output = false;
	s->tripped = false;
}

double sim_supply_target(const sim_params *p, const sim_state *s, hb_supply_mode *mode)
{
	if (!s->output) {
		*mode = HB_SUPPLY_MODE_OFF;
		return 0;
	}
	double r = sim_winding_r(p, s->temp_c) + p->rlead;
	if (s->setpoint * r > s->vlimit) {
		*mode = HB_SUPPLY_MODE_CV;
		return s->vlimit / r;
	}
	*mode = HB_SUPPLY_MODE_CC;
	return s->setpoint;
}

double sim_step_max(const sim_params *p)
{
	double h = (p->tau_settle < p->tau_th ? p->tau_settle : p->tau_th) / 8.0;
	/* The second-order step is exact for any length; the limit keeps the
	 * temperature and the history fine enough to show the ringing. */
	if (p->f_n > 0 && 1.0 / (40.0 * p->f_n) < h)
		h = 1.0 / (40.0 * p->f_n);
	/* Fine enough that the read-back's trapezoids and interpolation over
	 * the history stay within about 1e-4 of a step. */
	double window = p->rb_latency + p->rb_average;
	if (window > 0 && window / 256.0 < h)
		h = window / 256.0;
	return h;
}

/* One exact step of I'' + 2 zeta w I' + w^2 I = w^2 target with the target
 * held: x(h) = exp(A h) x(0) for the deviation x = (I - target, I'). For
 * the 2x2 companion matrix, with s = -zeta w and d^2 = w^2 (zeta^2 - 1),
 * exp(A h) = e^(s h) [C 1 + S (A - s 1)], C = cosh(d h), S = sinh(d h)/d
 * (cos and sin for d^2 < 0; 1 and h at d = 0): Cayley-Hamilton. The
 * matrix depends on h only, so it is made once per call. */
typedef struct second_order {
	double m11, m12, m21, m22;
} second_order;

static second_order second_order_make(double w, double zeta, double h)
{
	double s = -zeta * w, d2 = w * w * (zeta * zeta - 1.0);
	double c, sn;
	if (d2 < -1e-12 * w * w) {
		double d = sqrt(-d2);
		c = cos(d * h);
		sn = sin(d * h) / d;
	} else if (d2 > 1e-12 * w * w) {
		double d = sqrt(d2);
		c = cosh(d * h);
		sn = sinh(d * h) / d;
	} else {
		c = 1.0;
		sn = h;
	}
	double e = exp(s * h);
	return (second_order){ e * (c + sn * zeta * w), e * sn, -e * sn * w * w, e * (c - sn * zeta * w) };
}

static void second_order_step(const second_order *m, double target, double *amps, double *dadt)
{
	double x = *amps - target, v = *dadt;
	*amps = target + m->m11 * x + m->m12 * v;
	*dadt = m->m21 * x + m->m22 * v;
}

void sim_state_step(const sim_params *p, sim_state *s, double dt)
{
	if (!(dt > 0))
		return;
	double h_max = sim_step_max(p);
	int steps = (int)ceil(dt / h_max);
	if (steps < 1)
		steps = 1;
	if (steps > 20000)
		steps = 20000;
	double h = dt / steps;
	double k_i = 1.0 - exp(-h / p->tau_settle);
	double k_t = 1.0 - exp(-h / p->tau_th);
	second_order m2 = second_order_make(2.0 * M_PI * p->f_n, p->zeta, h);
	/* History samples need only resolve the read-back window. */
	double gap = (p->rb_latency + p->rb_average) / (SIM_HIST_MAX / 2);
	for (int i = 0; i < steps; i++) {
		hb_supply_mode mode;
		double target = sim_supply_target(p, s, &mode);
		double before = s->amps;
		if (p->f_n > 0) {
			second_order_step(&m2, target, &s->amps, &s->dadt);
		} else {
			s->amps += (target - s->amps) * k_i;
		}
		/* A slew-rate limit clips the change the loop asks for: a ramp at
		 * the limit, then the free response once the error is small. */
		if (p->slew > 0) {
			double most = p->slew * h;
			if (s->amps - before > most)
				s->amps = before + most;
			else if (before - s->amps > most)
				s->amps = before - most;
			if (s->dadt > p->slew)
				s->dadt = p->slew;
			else if (s->dadt < -p->slew)
				s->dadt = -p->slew;
		}
		/* A single-quadrant output stage cannot drive the current
		 * negative: with the output off it rings down to 0, not past it. */
		if (!s->output && s->amps < 0) {
			s->amps = 0;
			s->dadt = 0;
		}
		if (p->f_n <= 0)
			s->dadt = (s->amps - before) / h;
		/* First-order thermal model: the copper loss into rth. */
		double power = s->amps * s->amps * sim_winding_r(p, s->temp_c);
		double t_final = p->t_amb + power * p->rth;
		s->temp_c += (t_final - s->temp_c) * k_t;
		s->t += h;
		if (s->hist)
			sim_history_push(s->hist, s->t, s->amps, gap);
	}
}

double sim_readback_amps(const sim_params *p, const sim_state *s)
{
	if (!s->hist || s->hist->count == 0 || (p->rb_latency <= 0 && p->rb_average <= 0))
		return s->amps;
	double t1 = s->t - p->rb_latency;
	if (p->rb_average > 0)
		return sim_history_mean(s->hist, t1 - p->rb_average, t1);
	return sim_history_at(s->hist, t1);
}

/* ------------------------------------------------------------------ */
/* history                                                             */

static size_t hist_index(const sim_history *h, size_t k)
{
	return (h->head + k) % SIM_HIST_MAX;
}

void sim_history_push(sim_history *h, double t, double amps, double min_gap)
{
	if (h->count >= 2) {
		/* The newest sample is replaced while it is closer than min_gap to
		 * the one before it, so the present is always there. */
		size_t prev = hist_index(h, h->count - 2), last = hist_index(h, h->count - 1);
		if (t - h->t[prev] < min_gap) {
			h->t[last] = t;
			h->amps[last] = amps;
			return;
		}
	}
	if (h->count == SIM_HIST_MAX) {
		h->head = (h->head + 1) % SIM_HIST_MAX;
		h->count--;
	}
	size_t at = hist_index(h, h->count);
	h->t[at] = t;
	h->amps[at] = amps;
	h->count++;
}

/* Index k of the last sample at or before t; -1 when t precedes them all. */
static long hist_find(const sim_history *h, double t)
{
	long lo = -1, hi = (long)h->count; /* t[lo] <= t < t[hi] */
	while (hi - lo > 1) {
		long mid = (lo + hi) / 2;
		if (h->t[hist_index(h, (size_t)mid)] <= t)
			lo = mid;
		else
			hi = mid;
	}
	return lo;
}

double sim_history_at(const sim_history *h, double t)
{
	if (h->count == 0)
		return NAN;
	long k = hist_find(h, t);
	if (k < 0)
		return h->amps[h->head];
	if ((size_t)k + 1 >= h->count)
		return h->amps[hist_index(h, h->count - 1)];
	size_t a = hist_index(h, (size_t)k), b = hist_index(h, (size_t)k + 1);
	double span = h->t[b] - h->t[a];
	if (!(span > 0))
		return h->amps[b];
	return h->amps[a] + (h->amps[b] - h->amps[a]) * (t - h->t[a]) / span;
}

double sim_history_mean(const sim_history *h, double t0, double t1)
{
	if (h->count == 0)
		return NAN;
	if (!(t1 > t0))
		return sim_history_at(h, t1);
	/* Trapezoids between t0, the samples inside, and t1: exact for the
	 * piecewise-linear history. */
	double area = 0, ta = t0, ia = sim_history_at(h, t0);
	long k = hist_find(h, t0) + 1;
	for (; (size_t)k < h->count; k++) {
		size_t at = hist_index(h, (size_t)k);
		if (h->t[at] >= t1)
			break;
		area += 0.5 * (ia + h->amps[at]) * (h->t[at] - ta);
		ta = h->t[at];
		ia = h->amps[at];
	}
	area += 0.5 * (ia + sim_history_at(h, t1)) * (t1 - ta);
	return area / (t1 - t0);
}

void sim_history_shift(sim_history *h, double shift)
{
	for (size_t k = 0; k < h->count; k++)
		h->t[hist_index(h, k)] -= shift;
}

double complex sim_impedance(const sim_params *p, const sim_state *s, double hertz, double bias_amps,
			     bool short_corrected, bool open_corrected)
{
	double w = 2.0 * M_PI * hertz;
	/* An open fixture: only the stray capacitance between the terminals
	 * (and nothing at all once the meter's open correction removed it). */
	if (p->fixture_state == 1)
		return open_corrected || p->cfix <= 0 ? 1e12 : 1.0 / (I * w * p->cfix);
	double complex z = 0;
	if (p->fixture_state != 2) {
		double l = sim_inductance(p, bias_amps);
		double complex zl = sim_winding_r(p, s->temp_c) + p->tan_delta * w * l + I * w * l;
		/* The winding capacitance parallels the coil: the series resonance
		 * that raises apparent L towards the self-resonant frequency. */
		z = zl / (1.0 + I * w * p->cp * zl);
	}
	/* The leads in series, the fixture's stray capacitance across the
	 * meter's terminals: the model the open/short correction undoes. */
	if (!short_corrected)
		z += p->rlead + I * w * p->llead;
	if (!open_corrected)
		z = z / (1.0 + I * w * p->cfix * z);
	return z;
}

void sim_reading_from_z(double complex z, double hertz, hb_equiv equiv, hb_pair pair, double *primary,
			double *secondary)
{
	double w = 2.0 * M_PI * hertz;
	double r = creal(z), x = cimag(z);
	double q = r != 0 ? x / r : (x >= 0 ? 1e12 : -1e12);
	if (pair == HB_PAIR_Z_THETA) {
		*primary = cabs(z);
		*secondary = carg(z) * 180.0 / M_PI;
		return;
	}
	if (equiv == HB_EQUIV_SERIES) {
		*primary = x / w;
		if (pair == HB_PAIR_L_R)
			*secondary = r;
	} else {
		double complex y = 1.0 / z;
		double g = creal(y), b = cimag(y);
		*primary = b != 0 ? -1.0 / (w * b) : 1e12;
		if (pair == HB_PAIR_L_R)
			*secondary = g != 0 ? 1.0 / g : 1e12;
	}
	if (pair == HB_PAIR_L_Q)
		*secondary = q;
	else if (pair == HB_PAIR_L_D)
		*secondary = q != 0 ? 1.0 / q : 1e12;
}
