/* bench/bench_fit.c - fits per second on one core for 41-point bias sweeps (knee and core models) */
#include <math.h>
#include <stdio.h>
#include <time.h>

#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#include "fit/hb_fit.h"

#define NPTS 41
#define NSETS 32

static double now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* invented sweeps: a gapped ferrite-like core under each law, 0.2 % noise */
static double sweep_I[NSETS][NPTS], sweep_L[NSETS][NPTS];
static const hb_core_geometry geo = { 30, 49e-6, 60e-3, 0 };

static int make_sweeps(void)
{
	gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
	if (!r)
		return -1;
	gsl_rng_set(r, 2024);
	for (int s = 0; s < NSETS; s++) {
		hb_core_params par = { 1500 + 100 * (s % 10), 0.08e-3 + 0.01e-3 * (s % 5), 0.35 + 0.01 * (s % 7) };
		/* sweep until L has fallen to a quarter, as a bench run would */
		double imax = 0.1, two[2], Ltwo[2];
		for (int k = 0; k < 200; k++, imax *= 1.05) {
			two[0] = 0;
			two[1] = imax;
			if (hb_core_model_eval((hb_core_law)(s % 3), &par, &geo, two, 2, Ltwo, NULL) ||
			    Ltwo[1] < 0.25 * Ltwo[0])
				break;
		}
		for (int i = 0; i < NPTS; i++)
			sweep_I[s][i] = imax * i / (NPTS - 1);
		if (hb_core_model_eval((hb_core_law)(s % 3), &par, &geo, sweep_I[s], NPTS, sweep_L[s], NULL)) {
			gsl_rng_free(r);
			return -1;
		}
		for (int i = 0; i < NPTS; i++)
			sweep_L[s][i] += gsl_ran_gaussian(r, 0.002 * sweep_L[s][0]);
	}
	gsl_rng_free(r);
	return 0;
}

typedef int (*fit_fn)(hb_fit_ws *ws, int set, const hb_fit_options *opt);

static int fit_knee(hb_fit_ws *ws, int s, const hb_fit_options *opt)
{
	hb_fit_knee_result k;
	return hb_fit_knee(ws, sweep_I[s], sweep_L[s], NULL, NPTS, opt, &k);
}

static int fit_core(hb_fit_ws *ws, int s, const hb_fit_options *opt)
{
	hb_fit_core_result c;
	return hb_fit_core(ws, sweep_I[s], sweep_L[s], NULL, NPTS, opt, &c);
}

static double rate(hb_fit_ws *ws, fit_fn fn, const hb_fit_options *opt, double seconds, int *failures)
{
	long count = 0;
	*failures = 0;
	double t0 = now(), t;
	do {
		for (int s = 0; s < NSETS; s++, count++)
			if (fn(ws, s, opt) != HB_OK)
				(*failures)++;
		t = now();
	} while (t - t0 < seconds);
	return (double)count / (t - t0);
}

int main(void)
{
	if (make_sweeps()) {
		fprintf(stderr, "bench_fit: could not make the sweeps\n");
		return 1;
	}
	hb_fit_ws *ws = hb_fit_ws_new();
	if (!ws)
		return 1;
	hb_fit_options opt;
	hb_fit_options_init(&opt);
	opt.geo = geo;
	opt.noise_sigma = 0; /* estimated per sweep, as in use */

	int fails;
	double knee = rate(ws, fit_knee, &opt, 1.0, &fails);
	printf("knee model  %8.0f fits/s  target 10000  ratio %.2f  (failures %d)\n", knee, knee / 10000, fails);
	double core = rate(ws, fit_core, &opt, 1.0, &fails);
	printf("core model  %8.0f fits/s  target  2000  ratio %.2f  (three laws + AICc choice; failures %d)\n",
	       core, core / 2000, fails);
	opt.laws = 1u << HB_CORE_TANH;
	double one = rate(ws, fit_core, &opt, 1.0, &fails);
	printf("core, 1 law %8.0f fits/s  (tanh only; failures %d)\n", one, fails);
	hb_fit_ws_free(ws);
	return 0;
}
