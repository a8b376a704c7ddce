/* src/bench/sweep_plan.c - sweep plans: defaults, the checks before anything moves, set-points and frequencies, time estimate, cautions */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "sweep.h"

/* ------------------------------------------------------------------ */
/* plans                                                               */
/* ------------------------------------------------------------------ */

void hb_sweep_plan_defaults(hb_sweep_plan *plan)
{
	memset(plan, 0, sizeof *plan);
	plan->kind = HB_SWEEP_BIAS;
	plan->from = 0;
	plan->to = 0;
	plan->steps = 21;
	plan->spacing = HB_SPACING_LIN;
	plan->f_from = 1e3;
	plan->f_to = 1e6;
	plan->f_points = 41;
	plan->f_spacing = HB_SPACING_LOG;
	plan->frequency = 100e3;
	plan->level_kind = HB_LEVEL_VOLTAGE;
	plan->level = 0.5;
	plan->equiv = HB_EQUIV_SERIES;
	plan->pair = HB_PAIR_L_R;
	plan->averaging = 1;
	plan->aperture = HB_APERTURE_MEDIUM;
	plan->settle = HB_SETTLE_AUTO;
	plan->settle_time = 0.5;
	plan->settle_timeout = 10.0;
	plan->settle_k = 3.0;
	plan->settle_fraction = 0.25;
	plan->noise_readings = 24;
	plan->limits.max_current = NAN;
	plan->limits.max_voltage = NAN;
	plan->limits.max_power = NAN;
	plan->limits.ramp_rate = 5.0;
	plan->limits.off_threshold = 0.02;
}

/* msg takes exactly two %g (or other double) conversions; a message
 * without numbers goes through limit_missing instead. */
static int fail_msg(char *err, size_t errlen, const char *msg, double a, double b)
{
	if (err && errlen)
		snprintf(err, errlen, msg, a, b);
	return HB_ERR_LIMIT;
}

static int limit_missing(char *err, size_t errlen, const char *msg)
{
	if (err && errlen)
		snprintf(err, errlen, "%s", msg);
	return HB_ERR_LIMIT;
}

int hb_sweep_plan_check(const hb_sweep_plan *plan, bool have_supply, char *err, size_t errlen)
{
	const hb_sweep_limits *lim = &plan->limits;
	double top = plan->kind == HB_SWEEP_BIAS ? fmax(plan->from, plan->to) : plan->bias;
	if (plan->kind == HB_SWEEP_BIAS || plan->bias > 0) {
		if (!have_supply) {
			snprintf(err, errlen, "a bias needs a supply: give --supply RESOURCE");
			return HB_ERR_ARG;
		}
		if (isnan(lim->max_current))
			return limit_missing(err, errlen, "no current limit: give --max-current or set max_current in the station file");
		if (isnan(lim->max_voltage))
			return limit_missing(err, errlen, "no voltage limit: give --max-voltage or set max_voltage in the station file");
		if (isnan(lim->max_power))
			return limit_missing(err, errlen, "no power limit: give --max-power or set max_power in the station file");
		if (top > lim->max_current)
			return fail_msg(err, errlen, "top current %g A exceeds the current limit %g A", top, lim->max_current);
		/* Bounding the compliance voltage bounds the power into a short. */
		if (top * lim->max_voltage > lim->max_power * (1 + 1e-9)) {
			if (err && errlen)
				snprintf(err, errlen,
					 "top current %g A at the voltage limit %g V could deliver %g W, over the power limit %g W: lower --max-voltage",
					 top, lim->max_voltage, top * lim->max_voltage, lim->max_power);
			return HB_ERR_LIMIT;
		}
		if (!(lim->ramp_rate > 0)) {
			if (err && errlen)
				snprintf(err, errlen, "ramp rate %g A/s: accepted above 0", lim->ramp_rate);
			return HB_ERR_LIMIT;
		}
	}
	if (plan->kind == HB_SWEEP_BIAS) {
		if (plan->from < 0 || plan->to <= plan->from) {
			if (err && errlen)
				snprintf(err, errlen, "--from %g A --to %g A: need 0 <= from < to", plan->from, plan->to);
			return HB_ERR_ARG;
		}
		if (plan->steps < 2 || plan->steps > 10000) {
			if (err && errlen)
				snprintf(err, errlen, "--steps %d: accepted 2 to 10000", plan->steps);
			return HB_ERR_ARG;
		}
	} else {
		if (!(plan->f_from > 0) || plan->f_to <= plan->f_from) {
			if (err && errlen)
				snprintf(err, errlen, "--from %g Hz --to %g Hz: need 0 < from < to", plan->f_from, plan->f_to);
			return HB_ERR_ARG;
		}
		if (plan->f_points < 2 || plan->f_points > 10000) {
			if (err && errlen)
				snprintf(err, errlen, "--points %d: accepted 2 to 10000", plan->f_points);
			return HB_ERR_ARG;
		}
	}
	return HB_OK;
}

static void spaced(double from, double to, int n, hb_spacing spacing, double *out)
{
	if (spacing == HB_SPACING_LOG) {
		/* A log bias sweep from zero keeps the zero point and spreads the
		 * rest over two decades below the top. */
		int start = 0;
		double lo = from;
		if (from <= 0) {
			out[0] = 0;
			start = 1;
			lo = to / 100.0;
		}
		int m = n - start;
		for (int i = 0; i < m; i++)
			out[start + i] = m == 1 ? to : lo * pow(to / lo, (double)i / (m - 1));
		return;
	}
	for (int i = 0; i < n; i++)
		out[i] = from + (to - from) * i / (n - 1);
}

int hb_sweep_setpoints(const hb_sweep_plan *plan, double **values, int *count)
{
	int up = plan->steps;
	int total = plan->return_down ? 2 * up - 1 : up;
	double *v = malloc(sizeof *v * (size_t)total);
	if (!v)
		return HB_ERR_NOMEM;
	spaced(plan->from, plan->to, up, plan->spacing, v);
	for (int i = up; i < total; i++)
		v[i] = v[2 * up - 2 - i];
	*values = v;
	*count = total;
	return HB_OK;
}

int hb_sweep_frequencies(const hb_sweep_plan *plan, double **values, int *count)
{
	double *v = malloc(sizeof *v * (size_t)plan->f_points);
	if (!v)
		return HB_ERR_NOMEM;
	spaced(plan->f_from, plan->f_to, plan->f_points, plan->f_spacing, v);
	*values = v;
	*count = plan->f_points;
	return HB_OK;
}

static double aperture_seconds(hb_aperture a)
{
	/* Typical integration times of bench meters; only for estimates. */
	switch (a) {
	case HB_APERTURE_SHORT: return 0.02;
	case HB_APERTURE_LONG: return 0.4;
	default: return 0.1;
	}
}

double hb_sweep_estimate_seconds(const hb_sweep_plan *plan)
{
	double reading = aperture_seconds(plan->aperture) * (plan->averaging > 0 ? plan->averaging : 1) + 0.01;
	double per_point = plan->settle == HB_SETTLE_FIXED ? plan->settle_time + reading : 4 * reading;
	if (plan->kind == HB_SWEEP_FREQUENCY)
		return plan->f_points * (reading * 2) + (plan->bias > 0 ? 2 * plan->bias / plan->limits.ramp_rate : 0);
	int n = plan->return_down ? 2 * plan->steps - 1 : plan->steps;
	double travel = (plan->return_down ? 2 : 1) * (plan->to - plan->from) + plan->to;
	return n * per_point + plan->noise_readings * reading + travel / plan->limits.ramp_rate;
}

void hb_sweep_print_cautions(FILE *out, double inductance, double top_current, double max_voltage)
{
	double energy = 0.5 * inductance * top_current * top_current;
	char i_txt[32], v_txt[32], e_txt[32], l_txt[32];
	fprintf(out,
		"CAUTION: this sweep drives up to %s DC through the part (supply limit %s).\n"
		"  - Stored energy at the top current is about %s (1/2 L I^2 with L = %s at zero bias;\n"
		"    less once the core saturates). Opening the circuit while current flows gives an inductive kick:\n"
		"    do not disconnect leads or the fixture until the output is off.\n"
		"  - Windings and the fixture get hot at high current; let them cool before handling.\n"
		"  - Stay within the supply's, the leads' and the fixture's ratings.\n"
		"  - Ctrl-C stops the sweep: the current is ramped down and the output switched off first.\n"
		"  - Follow your lab's own safety practice and local electrical codes; they take precedence.\n",
		hb_format_si(i_txt, sizeof i_txt, top_current, "A", 4), hb_format_si(v_txt, sizeof v_txt, max_voltage, "V", 4),
		hb_format_si(e_txt, sizeof e_txt, energy, "J", 3), hb_format_si(l_txt, sizeof l_txt, inductance, "H", 4));
}
