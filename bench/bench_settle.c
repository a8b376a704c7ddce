/* bench/bench_settle.c - auto-settle wall time against the shortest fixed dwell of the same accuracy, per supply dynamics, judged against the independently computed true curve */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "drivers/hb_drivers.h"
#include "fit/hb_fit.h"
#include "src/bench/sweep.h"
#include "tests/truth_model.h"

/*
 * For each supply dynamics, a sweep of the gapped part with the auto rule
 * and with fixed dwells on a ladder; the shortest dwell whose accuracy
 * matches the auto rule's is compared. Accuracy is judged against the
 * true curve of tests/truth_model.h, not against another sweep:
 *  - bias-current error: the stored points against the true L at their
 *    stored bias, chi2/n in units of the reading noise (1 when every
 *    reading saw the current stored beside it; a reading taken while the
 *    current still moved adds to it);
 *  - fit z-scores: the largest |value - truth| / stated error over L0,
 *    mu_i, gap, Js and the drop currents, from the fit on the points.
 * A dwell matches when its chi2/n exceeds the auto rule's (or 1) by at
 * most 2 sd of chi2/n (sqrt(2/n), chi-square statistics, common
 * practice) and its largest |z| is within the auto rule's (or 3).
 * Prints measured ratios; asserts nothing about wall time.
 *
 * Reading the numbers: the engine brackets every reading with current
 * read-backs and stores their mean, which corrects a current still moving
 * linearly; so a fixed dwell of a few time constants already matches,
 * while the auto rule waits for the current to arrive within its
 * tolerance and then for a window of three response times. With a fast
 * supply the fixed dwell is nothing and the auto rule's window of at
 * least three read-backs is pure cost.
 */

#define TIME_SCALE 0.05
#define SEEDS 3
#define TARGET_RATIO 0.5
#define SIM_NOISE 1e-4
#define MAX_POINTS 64

typedef struct dyn {
	const char *name;
	double tau_settle, t_supply; /* model seconds */
} dyn;

/* The emulated dynamics of tests/test_truth.c; named simulator presets
 * (lag40, slew, overshoot, filtered, latent) are one line each once
 * hb_sim_load_dynamics exists. */
static const dyn dyns[] = {
	{ "fast", 0.2e-3, 0.01 },
	{ "lag40ms", 40e-3, 0.01 },
	{ "lag200ms-slow-readback", 200e-3, 0.05 },
};

typedef struct recorder {
	int n;
	double amps[MAX_POINTS], l[MAX_POINTS];
	double settle_s; /* sum of the points' settle times */
} recorder;

typedef struct accuracy {
	double chi2n;  /* points against the true curve */
	int npts;
	double max_z;  /* fit */
	double wall;   /* s, sum over the seeds */
	double settle; /* s, sum of the points' settle times over the seeds */
	int points;
} accuracy;

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return ts.tv_sec + ts.tv_nsec * 1e-9;
}

static int record(void *ctx, const hb_sweep_point *p, int total)
{
	(void)total;
	recorder *r = ctx;
	if (r->n < MAX_POINTS && p->direction >= 0) {
		r->amps[r->n] = p->bias_measured;
		r->l[r->n] = p->primary;
		r->settle_s += p->settle_seconds;
		r->n++;
	}
	return HB_OK;
}

static int configure(const truth_part *tp, const dyn *d, unsigned seed)
{
	hb_sim *sim = hb_sim_inproc();
	if (!sim)
		return HB_ERR_NOMEM;
	hb_sim_inproc_lock();
	int rc = hb_sim_load_preset(sim, tp->preset);
	const char *keys[] = { "time_scale", "seed", "cp", "cfix", "rth", "tau_th", "noise", "tau_settle", "t_supply" };
	double vals[] = { TIME_SCALE, seed, 0, 0, 0, 1e-3, SIM_NOISE, d->tau_settle, d->t_supply };
	for (size_t i = 0; i < sizeof keys / sizeof keys[0] && rc == HB_OK; i++)
		rc = hb_sim_set_param(sim, keys[i], vals[i]);
	if (rc != HB_OK)
		fprintf(stderr, "bench_settle: simulated bench: %s\n", hb_sim_errmsg(sim));
	hb_sim_inproc_unlock();
	return rc;
}

static void plan_for(const truth_part *tp, hb_sweep_plan *plan)
{
	hb_sweep_plan_defaults(plan);
	plan->from = 0;
	plan->to = tp->top_over_drop30 * t_drop_current(tp, 0.30);
	plan->steps = tp->steps;
	plan->settle_timeout = 5;
	plan->limits.max_current = 10;
	plan->limits.max_voltage = 5;
	plan->limits.max_power = 50;
	plan->limits.ramp_rate = 200;
}

static double z_of(const hb_fit_values *v, const char *name, double truth)
{
	const hb_fit_value *x = hb_fit_values_find(v, name);
	if (!x || !(x->std_err > 0))
		return INFINITY;
	return (x->value - truth) / x->std_err;
}

/* One sweep and its fit, added to acc. Returns 0, or -1 when the sweep failed. */
static int one(hb_lcr *lcr, hb_supply *supply, const truth_part *tp, const dyn *d, const hb_sweep_plan *plan,
	       unsigned seed, accuracy *acc)
{
	if (configure(tp, d, seed) != HB_OK)
		return -1;
	static recorder rec;
	memset(&rec, 0, sizeof rec);
	hb_sweep_callbacks cb = { &rec, record, NULL, NULL };
	hb_sweep_result res;
	double t0 = now_s();
	int rc = hb_sweep_run(lcr, supply, plan, &cb, &res);
	acc->wall += now_s() - t0;
	acc->settle += rec.settle_s;
	acc->points += rec.n;
	if (rc != HB_OK || rec.n != plan->steps) {
		fprintf(stderr, "bench_settle: sweep ended: %s\n", res.reason);
		return -1;
	}
	/* The analysis' arrays: measured bias, clamped at 0, strictly rising. */
	double I[MAX_POINTS], L[MAX_POINTS], sigma[MAX_POINTS];
	size_t m = 0;
	for (int i = 0; i < rec.n; i++) {
		double a = fmax(rec.amps[i], 0);
		double lt = t_inductance(tp, a);
		double r = (rec.l[i] - lt) / (SIM_NOISE * lt);
		acc->chi2n += r * r;
		acc->npts++;
		if (getenv("BENCH_SETTLE_DEBUG"))
			printf("    point %2d: bias %.6f A, L %.6e, true L %.6e, residual %+.1f sigma\n", i, rec.amps[i], rec.l[i],
			       lt, r);
		if (m > 0 && a <= I[m - 1])
			continue;
		I[m] = a;
		L[m] = rec.l[i];
		sigma[m] = res.noise_rel * rec.l[i];
		m++;
	}
	hb_fit_options fo;
	hb_fit_options_init(&fo);
	fo.noise_sigma = res.noise_rel * L[0];
	fo.geo.turns = tp->turns;
	fo.geo.Ae = tp->ae;
	fo.geo.le = tp->le;
	fo.geo.window_height = tp->window;
	static hb_fit_bias_result fit;
	if (hb_fit_bias_analyse(I, L, sigma, m, &fo, &fit) != HB_OK || fit.core_status != HB_OK)
		return -1;
	const char *names[] = { "L0", "core.mu_i", "core.gap", "core.Js", "I_drop10", "I_drop20", "I_drop30" };
	double truth[] = { t_l0(tp), tp->mu_i, t_gap_eff(tp), tp->js, t_drop_current(tp, 0.1), t_drop_current(tp, 0.2),
			   t_drop_current(tp, 0.3) };
	for (size_t k = 0; k < sizeof names / sizeof names[0]; k++)
		acc->max_z = fmax(acc->max_z, fabs(z_of(&fit.values, names[k], truth[k])));
	return 0;
}

static int measure(hb_lcr *lcr, hb_supply *supply, const truth_part *tp, const dyn *d, const hb_sweep_plan *plan,
		   accuracy *acc)
{
	memset(acc, 0, sizeof *acc);
	for (unsigned s = 0; s < SEEDS; s++)
		if (one(lcr, supply, tp, d, plan, 100 + s, acc) != 0)
			return -1;
	acc->chi2n /= acc->npts;
	return 0;
}

static int bench_dyn(hb_lcr *lcr, hb_supply *supply, const truth_part *tp, const dyn *d)
{
	hb_sweep_plan plan;
	plan_for(tp, &plan);
	plan.settle = HB_SETTLE_AUTO;
	accuracy a;
	if (measure(lcr, supply, tp, d, &plan, &a) != 0)
		return 1;
	double chi2_band = 2.0 * sqrt(2.0 / a.npts);
	double chi2_ok = fmax(a.chi2n, 1.0) + chi2_band, z_ok = fmax(a.max_z, 3.0);
	double tau = d->tau_settle * TIME_SCALE;
	printf("%s: tau %.3g ms, read-back %.3g ms, reading %.3g ms (wall); %d seeds x %d points\n", d->name, tau * 1e3,
	       d->t_supply * TIME_SCALE * 1e3, 0.1 * TIME_SCALE * 1e3, SEEDS, plan.steps);
	printf("  auto        %7.3f s   chi2/n %.2f   max |z| %.2f   (a point waits %.1f tau from its step to its reading)\n",
	       a.wall, a.chi2n, a.max_z, a.settle / a.points / tau);
	/* The ladder in time constants; a dwell of 0 first: a fast supply
	 * may need none beyond the read-backs that bracket each reading. */
	static const double rungs[] = { 0, 0.5, 1, 1.5, 2, 3, 4, 5, 6, 8, 10, 15, 20 };
	for (size_t k = 0; k < sizeof rungs / sizeof rungs[0]; k++) {
		hb_sweep_plan fp = plan;
		fp.settle = HB_SETTLE_FIXED;
		fp.settle_time = rungs[k] * tau;
		accuracy f;
		if (measure(lcr, supply, tp, d, &fp, &f) != 0) {
			printf("  fixed %5.1f tau: sweep failed\n", rungs[k]);
			continue;
		}
		bool ok = f.chi2n <= chi2_ok && f.max_z <= z_ok;
		printf("  fixed %4.1f tau %7.3f s   chi2/n %.2f   max |z| %.2f%s\n", rungs[k], f.wall, f.chi2n, f.max_z,
		       ok ? "   <- shortest as accurate" : "");
		if (ok) {
			double ratio = a.wall / f.wall;
			printf("  ratio auto/fixed %.3f   target <= %.2f   %s\n", ratio, TARGET_RATIO,
			       ratio <= TARGET_RATIO ? "PASS" : "MISS");
			return 0;
		}
	}
	printf("  no fixed dwell up to %.0f tau was as accurate as the auto rule\n", rungs[sizeof rungs / sizeof rungs[0] - 1]);
	return 0;
}

int main(void)
{
	int rc = 1;
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	const truth_part *tp = &parts[0]; /* the gapped part */
	if (configure(tp, &dyns[0], 1) != HB_OK)
		goto out;
	if (hb_lcr_open("sim:lcr", NULL, &lcr) != HB_OK || hb_supply_open("sim:supply", NULL, &supply) != HB_OK) {
		fprintf(stderr, "bench_settle: cannot open the simulated bench: %s %s\n", lcr ? hb_lcr_errmsg(lcr) : "",
			supply ? hb_supply_errmsg(supply) : "");
		goto out;
	}
	hb_sweep_install_signals();
	/* BENCH_SETTLE_LOG=FILE: the simulator's command log, to count what
	 * the settle rule asks for at each step. */
	FILE *log = getenv("BENCH_SETTLE_LOG") ? fopen(getenv("BENCH_SETTLE_LOG"), "w") : NULL;
	if (log)
		hb_sim_set_log(hb_sim_inproc(), log);
	printf("auto-settle against the shortest fixed dwell of the same accuracy; part %s, sim time_scale %.2f\n",
	       tp->name, TIME_SCALE);
	rc = 0;
	for (size_t i = 0; i < sizeof dyns / sizeof dyns[0] && rc == 0; i++)
		rc = bench_dyn(lcr, supply, tp, &dyns[i]);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	supply = NULL;
	lcr = NULL;
	hb_sim_inproc_shutdown();
	if (log)
		fclose(log);
out:
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	hb_sweep_restore_signals();
	hb_sim_inproc_shutdown();
	return rc;
}
