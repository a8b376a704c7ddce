/* src/sweep.c - the sweep engine: step the bias or the frequency, settle, read, hand each point over, always end with the supply off */
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "sweep.h"

/* ------------------------------------------------------------------ */
/* signals                                                             */
/* ------------------------------------------------------------------ */

static volatile sig_atomic_t pending_signal;
static volatile sig_atomic_t signal_count;
static struct sigaction saved_int, saved_term, saved_hup;
static int signals_installed;

static void on_signal(int signo)
{
	if (!pending_signal)
		pending_signal = signo;
	signal_count++;
}

void hb_sweep_install_signals(void)
{
	if (signals_installed)
		return;
	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	/* No SA_RESTART: a blocked wait returns early and the engine looks
	 * at the flag sooner. The link layer retries EINTR with the time left. */
	sa.sa_flags = 0;
	sigaction(SIGINT, &sa, &saved_int);
	sigaction(SIGTERM, &sa, &saved_term);
	sigaction(SIGHUP, &sa, &saved_hup);
	signals_installed = 1;
}

void hb_sweep_restore_signals(void)
{
	if (!signals_installed)
		return;
	sigaction(SIGINT, &saved_int, NULL);
	sigaction(SIGTERM, &saved_term, NULL);
	sigaction(SIGHUP, &saved_hup, NULL);
	signals_installed = 0;
}

int hb_sweep_pending_signal(void)
{
	return pending_signal;
}

void hb_sweep_clear_signal(void)
{
	pending_signal = 0;
	signal_count = 0;
}

/* ------------------------------------------------------------------ */
/* time                                                                */
/* ------------------------------------------------------------------ */

static double now_seconds(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* Sleeps in short slices so a signal is seen within 20 ms. */
static int sleep_watching(double seconds)
{
	double end = now_seconds() + seconds;
	for (;;) {
		if (pending_signal)
			return HB_ERR_INTERRUPTED;
		double left = end - now_seconds();
		if (left <= 0)
			return HB_OK;
		double slice = left < 0.02 ? left : 0.02;
		struct timespec ts = { (time_t)slice, (long)((slice - (time_t)slice) * 1e9) };
		nanosleep(&ts, NULL);
	}
}

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
	plan->noise_readings = 8;
	plan->limits.max_current = NAN;
	plan->limits.max_voltage = NAN;
	plan->limits.max_power = NAN;
	plan->limits.ramp_rate = 5.0;
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

/* ------------------------------------------------------------------ */
/* the run                                                             */
/* ------------------------------------------------------------------ */

typedef struct engine {
	hb_lcr *lcr;
	hb_supply *supply;
	const hb_sweep_plan *plan;
	const hb_sweep_callbacks *cb;
	hb_sweep_result *result;
	double setpoint;      /* last current asked of the supply */
	bool output_on;
	double t0;
	double noise_rel;
} engine;

static int stop_with(engine *e, hb_sweep_end end, int status, const char *fmt, ...)
	__attribute__((format(printf, 4, 5)));

static int stop_with(engine *e, hb_sweep_end end, int status, const char *fmt, ...)
{
	/* The first reason wins: a later failure during shut-down must not
	 * hide why the sweep stopped. */
	if (e->result->status == HB_OK) {
		va_list ap;
		va_start(ap, fmt);
		vsnprintf(e->result->reason, sizeof e->result->reason, fmt, ap);
		va_end(ap);
		e->result->end = end;
		e->result->status = status;
	}
	return status;
}

static int signal_stop(engine *e)
{
	int signo = pending_signal;
	e->result->interrupted_by_signal = true;
	e->result->signal_number = signo;
	return stop_with(e, HB_SWEEP_ABORTED, HB_ERR_INTERRUPTED, "interrupted by signal %d (%s)", signo,
			 signo == SIGINT ? "SIGINT" : signo == SIGTERM ? "SIGTERM" : signo == SIGHUP ? "SIGHUP" : "signal");
}

static int lcr_fault(engine *e, int rc, const char *what)
{
	return stop_with(e, HB_SWEEP_FAILED, rc, "meter %s: %s", what, hb_lcr_errmsg(e->lcr));
}

static int supply_fault(engine *e, int rc, const char *what)
{
	return stop_with(e, HB_SWEEP_FAILED, rc, "supply %s: %s", what, hb_supply_errmsg(e->supply));
}

/* Moves the current no faster than the ramp rate, in slices of 50 ms. */
static int ramp_to(engine *e, double target)
{
	const double slice = 0.05;
	double rate = e->plan->limits.ramp_rate;
	double step = rate * slice;
	while (fabs(target - e->setpoint) > 1e-12) {
		if (pending_signal)
			return signal_stop(e);
		double next = target;
		if (fabs(target - e->setpoint) > step)
			next = e->setpoint + (target > e->setpoint ? step : -step);
		int rc = hb_supply_set_current(e->supply, next);
		if (rc != HB_OK)
			return supply_fault(e, rc, "set current");
		e->setpoint = next;
		if (next != target) {
			rc = sleep_watching(slice);
			if (rc != HB_OK)
				return signal_stop(e);
		}
	}
	return HB_OK;
}

static int read_once(engine *e, hb_lcr_reading *r)
{
	if (pending_signal)
		return signal_stop(e);
	int rc = hb_lcr_measure(e->lcr, r);
	if (rc == HB_ERR_OVERLOAD) {
		r->overload = true;
		return HB_OK;
	}
	if (rc != HB_OK)
		return lcr_fault(e, rc, "reading");
	return HB_OK;
}

/* Settles and reads one point: fixed dwell, or readings until two
 * successive differences lie within the meter's own noise. */
static int settle_and_read(engine *e, hb_sweep_point *p)
{
	const hb_sweep_plan *plan = e->plan;
	double t_start = now_seconds();
	hb_lcr_reading r = { 0 };
	int rc;
	p->settled = true;
	if (plan->settle == HB_SETTLE_FIXED) {
		rc = sleep_watching(plan->settle_time);
		if (rc != HB_OK)
			return signal_stop(e);
		rc = read_once(e, &r);
		if (rc != HB_OK)
			return rc;
		p->settle_readings = 1;
	} else {
		double prev = NAN;
		int agreeing = 0, n = 0;
		for (;;) {
			rc = read_once(e, &r);
			if (rc != HB_OK)
				return rc;
			n++;
			if (!r.overload && isfinite(prev)) {
				double tol = plan->settle_k * sqrt(2.0) * e->noise_rel * fabs(r.primary);
				agreeing = fabs(r.primary - prev) <= tol ? agreeing + 1 : 0;
			}
			prev = r.overload ? NAN : r.primary;
			if (agreeing >= 2)
				break;
			if (now_seconds() - t_start > plan->settle_timeout) {
				p->settled = false;
				break;
			}
		}
		p->settle_readings = n;
	}
	p->settle_seconds = now_seconds() - t_start;
	p->primary = r.overload ? NAN : r.primary;
	p->secondary = r.overload ? NAN : r.secondary;
	p->status = r.overload ? 1 : r.status;
	return HB_OK;
}

/* Learns the reading noise at the first step: the relative spread of
 * repeated readings, from successive differences so slow drift is not
 * counted as noise. */
static int learn_noise(engine *e)
{
	int n = e->plan->noise_readings < 3 ? 3 : e->plan->noise_readings;
	double prev = NAN, sum2 = 0, level = 0;
	int pairs = 0;
	for (int i = 0; i < n; i++) {
		hb_lcr_reading r = { 0 };
		int rc = read_once(e, &r);
		if (rc != HB_OK)
			return rc;
		if (r.overload)
			continue;
		if (isfinite(prev)) {
			sum2 += (r.primary - prev) * (r.primary - prev);
			pairs++;
		}
		prev = r.primary;
		level = fabs(r.primary);
	}
	double rel = pairs && level > 0 ? sqrt(sum2 / (2.0 * pairs)) / level : 1e-4;
	/* A perfectly quiet meter would make the settle rule unreachable. */
	e->noise_rel = fmax(rel, 2e-6);
	e->result->noise_rel = e->noise_rel;
	return HB_OK;
}

/* Waits until the supply's read-back current stops moving: the core's
 * inductance follows the current, so a meter reading before then measures
 * a point that is still on its way. Bounded by the settle time-out. */
static int settle_current(engine *e, double *amps)
{
	double t_start = now_seconds();
	double prev = NAN;
	int quiet = 0;
	for (;;) {
		if (pending_signal)
			return signal_stop(e);
		double a = NAN;
		int rc = hb_supply_measure_current(e->supply, &a);
		if (rc != HB_OK)
			return supply_fault(e, rc, "current read-back");
		if (isfinite(prev) && fabs(a - prev) <= 1e-3 * fabs(a) + 1e-3)
			quiet++;
		else
			quiet = 0;
		prev = a;
		*amps = a;
		if (quiet >= 1 || now_seconds() - t_start > e->plan->settle_timeout)
			return HB_OK;
	}
}

/* Reads the supply back and stops on compliance, over-current or power. */
static int check_supply(engine *e, hb_sweep_point *p)
{
	const hb_sweep_limits *lim = &e->plan->limits;
	double amps = NAN, volts = NAN;
	int rc = hb_supply_measure_current(e->supply, &amps);
	if (rc != HB_OK)
		return supply_fault(e, rc, "current read-back");
	rc = hb_supply_measure_voltage(e->supply, &volts);
	if (rc != HB_OK)
		return supply_fault(e, rc, "voltage read-back");
	p->bias_measured = amps;
	p->supply_voltage = volts;
	hb_supply_mode mode = HB_SUPPLY_MODE_UNKNOWN;
	if (hb_supply_supports(e->supply, "mode")) {
		rc = hb_supply_get_mode(e->supply, &mode);
		if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED)
			return supply_fault(e, rc, "mode query");
	}
	bool short_of_setpoint = fabs(amps - e->setpoint) > 0.02 * fabs(e->setpoint) + 0.01;
	if (mode == HB_SUPPLY_MODE_CV ||
	    (mode == HB_SUPPLY_MODE_UNKNOWN && short_of_setpoint && volts >= 0.98 * lim->max_voltage))
		return stop_with(e, HB_SWEEP_ABORTED, HB_ERR_COMPLIANCE,
				 "supply in constant voltage (compliance) at %.4g A set, %.4g A measured, %.4g V: the part or leads need more voltage than the %.4g V limit",
				 e->setpoint, amps, volts, lim->max_voltage);
	if (amps > lim->max_current * 1.05 + 0.01)
		return stop_with(e, HB_SWEEP_ABORTED, HB_ERR_LIMIT, "measured current %.4g A above the limit %.4g A",
				 amps, lim->max_current);
	if (amps * volts > lim->max_power)
		return stop_with(e, HB_SWEEP_ABORTED, HB_ERR_LIMIT, "supply power %.4g W above the limit %.4g W",
				 amps * volts, lim->max_power);
	return HB_OK;
}

static int deliver(engine *e, hb_sweep_point *p, int index, int total, double seconds_left)
{
	p->t = now_seconds() - e->t0;
	p->sequence = index;
	if (e->cb && e->cb->point) {
		int rc = e->cb->point(e->cb->ctx, p, total);
		if (rc != HB_OK)
			return stop_with(e, HB_SWEEP_FAILED, rc, "could not store point %d: %s", index + 1,
					 hb_status_name(rc));
	}
	e->result->points++;
	if (index == 0 || !isfinite(e->result->l_first))
		e->result->l_first = p->primary;
	if (e->cb && e->cb->progress)
		e->cb->progress(e->cb->ctx, p, index, total, e->result->l_first, seconds_left);
	return HB_OK;
}

static int configure_meter(engine *e, double frequency)
{
	const hb_sweep_plan *plan = e->plan;
	int rc = hb_lcr_set_function(e->lcr, plan->equiv, plan->pair);
	if (rc != HB_OK)
		return lcr_fault(e, rc, "function");
	rc = hb_lcr_set_frequency(e->lcr, frequency);
	if (rc != HB_OK)
		return lcr_fault(e, rc, "frequency");
	rc = hb_lcr_set_level(e->lcr, plan->level_kind, plan->level);
	if (rc != HB_OK)
		return lcr_fault(e, rc, "level");
	if (hb_lcr_supports(e->lcr, "averaging") || hb_lcr_supports(e->lcr, "aperture")) {
		rc = hb_lcr_set_averaging(e->lcr, plan->averaging, plan->aperture);
		if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED)
			return lcr_fault(e, rc, "averaging");
	}
	return HB_OK;
}

static int start_supply(engine *e)
{
	/* A signal that came while the instruments were being opened must stop
	 * the sweep before the output is ever switched on. */
	if (pending_signal)
		return signal_stop(e);
	/* Known state before anything flows: output off, zero, limit set. */
	int rc = hb_supply_output(e->supply, false);
	if (rc != HB_OK)
		return supply_fault(e, rc, "output off");
	rc = hb_supply_set_current(e->supply, 0);
	if (rc != HB_OK)
		return supply_fault(e, rc, "set current");
	e->setpoint = 0;
	rc = hb_supply_set_voltage_limit(e->supply, e->plan->limits.max_voltage);
	if (rc != HB_OK)
		return supply_fault(e, rc, "voltage limit");
	e->output_on = true; /* from here on the shut-down path must run */
	rc = hb_supply_output(e->supply, true);
	if (rc != HB_OK)
		return supply_fault(e, rc, "output on");
	return HB_OK;
}

static int run_bias(engine *e)
{
	const hb_sweep_plan *plan = e->plan;
	double *setpoints = NULL;
	int total = 0;
	int rc = hb_sweep_setpoints(plan, &setpoints, &total);
	if (rc != HB_OK)
		return stop_with(e, HB_SWEEP_FAILED, rc, "out of memory");
	rc = configure_meter(e, plan->frequency);
	if (rc != HB_OK)
		goto out;
	rc = start_supply(e);
	if (rc != HB_OK)
		goto out;
	double t_points = now_seconds();
	for (int i = 0; i < total; i++) {
		rc = ramp_to(e, setpoints[i]);
		if (rc != HB_OK)
			goto out;
		hb_sweep_point p = { 0 };
		p.direction = (plan->return_down && i >= plan->steps) ? -1 : 1;
		p.bias_set = setpoints[i];
		p.frequency = plan->frequency;
		if (i == 0) {
			/* The first point is settled by time, then the noise is learnt
			 * there so the auto rule has a scale for every later point. */
			rc = sleep_watching(plan->settle == HB_SETTLE_FIXED ? plan->settle_time : 0.05);
			if (rc != HB_OK) {
				rc = signal_stop(e);
				goto out;
			}
			rc = learn_noise(e);
			if (rc != HB_OK)
				goto out;
		}
		double amps_before = NAN;
		if (plan->settle == HB_SETTLE_AUTO) {
			rc = settle_current(e, &amps_before);
			if (rc != HB_OK)
				goto out;
		}
		rc = settle_and_read(e, &p);
		if (rc != HB_OK)
			goto out;
		rc = check_supply(e, &p);
		if (rc != HB_OK)
			goto out;
		/* The reading integrates between the two read-backs; their mean is
		 * the current it saw, where one read-back afterwards runs ahead. */
		if (isfinite(amps_before) && isfinite(p.bias_measured))
			p.bias_measured = 0.5 * (amps_before + p.bias_measured);
		double elapsed = now_seconds() - t_points;
		double left = elapsed / (i + 1) * (total - i - 1);
		rc = deliver(e, &p, i, total, left);
		if (rc != HB_OK)
			goto out;
		if (plan->stop_below > 0 && isfinite(p.primary) && isfinite(e->result->l_first) &&
		    fabs(p.primary) < plan->stop_below * fabs(e->result->l_first)) {
			snprintf(e->result->reason, sizeof e->result->reason,
				 "L fell below %.0f%% of its first value at %.4g A: stopped as asked",
				 plan->stop_below * 100, p.bias_measured);
			break;
		}
	}
	rc = HB_OK;
out:
	free(setpoints);
	return rc;
}

static int run_frequency(engine *e)
{
	const hb_sweep_plan *plan = e->plan;
	double *freqs = NULL;
	int total = 0;
	int rc = hb_sweep_frequencies(plan, &freqs, &total);
	if (rc != HB_OK)
		return stop_with(e, HB_SWEEP_FAILED, rc, "out of memory");
	rc = configure_meter(e, freqs[0]);
	if (rc != HB_OK)
		goto out;
	if (e->supply && plan->bias > 0) {
		rc = start_supply(e);
		if (rc != HB_OK)
			goto out;
		rc = ramp_to(e, plan->bias);
		if (rc != HB_OK)
			goto out;
	}
	rc = sleep_watching(plan->settle == HB_SETTLE_FIXED ? plan->settle_time : 0.05);
	if (rc != HB_OK) {
		rc = signal_stop(e);
		goto out;
	}
	rc = learn_noise(e);
	if (rc != HB_OK)
		goto out;
	double t_points = now_seconds();
	for (int i = 0; i < total; i++) {
		hb_sweep_point p = { 0 };
		p.bias_set = e->supply && plan->bias > 0 ? plan->bias : 0;
		p.bias_measured = NAN;
		p.supply_voltage = NAN;
		p.frequency = freqs[i];
		rc = hb_lcr_set_frequency(e->lcr, freqs[i]);
		if (rc != HB_OK) {
			rc = lcr_fault(e, rc, "frequency");
			goto out;
		}
		rc = settle_and_read(e, &p);
		if (rc != HB_OK)
			goto out;
		if (e->supply && plan->bias > 0) {
			rc = check_supply(e, &p);
			if (rc != HB_OK)
				goto out;
		}
		double elapsed = now_seconds() - t_points;
		rc = deliver(e, &p, i, total, elapsed / (i + 1) * (total - i - 1));
		if (rc != HB_OK)
			goto out;
	}
	rc = HB_OK;
out:
	free(freqs);
	return rc;
}

int hb_sweep_safe_off(hb_supply *supply, double ramp_rate)
{
	if (!supply)
		return HB_OK;
	double amps = 0;
	int rc = hb_supply_measure_current(supply, &amps);
	if (rc == HB_ERR_CLOSED)
		goto emergency;
	if (rc != HB_OK || !isfinite(amps))
		amps = 0;
	/* Bring the stored energy down gently so the part does not kick the
	 * supply; a second signal means "now", so skip the ramp then. */
	if (!(ramp_rate > 0))
		ramp_rate = 5.0;
	const double slice = 0.05;
	double step = ramp_rate * slice;
	while (amps > step && signal_count < 2) {
		amps -= step;
		rc = hb_supply_set_current(supply, amps);
		if (rc != HB_OK)
			break;
		struct timespec ts = { 0, (long)(slice * 1e9) };
		nanosleep(&ts, NULL);
	}
	rc = hb_supply_set_current(supply, 0);
	int rc_off = hb_supply_output(supply, false);
	if (rc_off == HB_OK) {
		/* Do not report "off" while the winding still carries current: the
		 * output stage and the part's own L/R take a moment to discharge. */
		double t_end = now_seconds() + 2.0;
		while (now_seconds() < t_end) {
			double left = NAN;
			if (hb_supply_measure_current(supply, &left) != HB_OK || !isfinite(left) || fabs(left) < 0.01)
				break;
			struct timespec ts = { 0, 10 * 1000 * 1000 };
			nanosleep(&ts, NULL);
		}
		return HB_OK;
	}
emergency:
	/* One more try at the switch that matters before giving up. */
	rc_off = hb_supply_output(supply, false);
	return rc_off == HB_OK ? HB_OK : (rc != HB_OK ? rc : rc_off);
}

int hb_sweep_run(hb_lcr *lcr, hb_supply *supply, const hb_sweep_plan *plan, const hb_sweep_callbacks *cb,
		 hb_sweep_result *result)
{
	memset(result, 0, sizeof *result);
	result->l_first = NAN;
	result->end = HB_SWEEP_COMPLETE;
	engine e = { .lcr = lcr, .supply = supply, .plan = plan, .cb = cb, .result = result,
		     .t0 = now_seconds(), .noise_rel = 1e-4 };
	char err[256];
	int rc = hb_sweep_plan_check(plan, supply != NULL, err, sizeof err);
	if (rc != HB_OK)
		return stop_with(&e, HB_SWEEP_ABORTED, rc, "%s", err);

	if (plan->kind == HB_SWEEP_BIAS)
		rc = run_bias(&e);
	else
		rc = run_frequency(&e);

	/* The one way out: whatever happened above, the current goes to zero
	 * and the output off before anyone is told the sweep is over. */
	if (supply && e.output_on) {
		int off = hb_sweep_safe_off(supply, plan->limits.ramp_rate);
		if (off != HB_OK) {
			result->current_may_flow = true;
			if (result->status == HB_OK)
				stop_with(&e, HB_SWEEP_FAILED, off, "supply did not switch off: %s", hb_supply_errmsg(supply));
			else {
				size_t len = strlen(result->reason);
				snprintf(result->reason + len, sizeof result->reason - len,
					 "; the supply could not be switched off");
			}
			result->end = HB_SWEEP_FAILED;
		}
	}
	if (result->status == HB_OK && pending_signal) {
		/* A signal that came during the last step still counts. */
		signal_stop(&e);
	}
	return result->status;
}

void hb_sweep_print_cautions(FILE *out, double inductance, double top_current, double max_voltage)
{
	double energy = 0.5 * inductance * top_current * top_current;
	fprintf(out,
		"CAUTION: this sweep drives up to %.4g A DC through the part (supply limit %.4g V).\n"
		"  - Stored energy at the top current is about %.3g J (1/2 L I^2 with L = %.4g H at zero bias;\n"
		"    less once the core saturates). Opening the circuit while current flows gives an inductive kick:\n"
		"    do not disconnect leads or the fixture until the output is off.\n"
		"  - Windings and the fixture get hot at high current; let them cool before handling.\n"
		"  - Stay within the supply's, the leads' and the fixture's ratings.\n"
		"  - Ctrl-C stops the sweep: the current is ramped down and the output switched off first.\n"
		"  - Follow your lab's own safety practice and local electrical codes; they take precedence.\n",
		top_current, max_voltage, energy, inductance);
}
