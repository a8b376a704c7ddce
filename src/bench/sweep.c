/* src/bench/sweep.c - the sweep engine: step the bias or the frequency, settle, read, hand each point over, always end with the supply off */
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "bias_supply.h"
#include "sweep.h"
#include "sweep_internal.h"

/* ------------------------------------------------------------------ */
/* time                                                                */
/* ------------------------------------------------------------------ */

/* Every time stamp and wait goes through the bench clock, so a simulated
 * bench in virtual time sees the engine's waits as its own. */
static double now_seconds(void)
{
	return hb_clock_now();
}

static int sleep_watching(double seconds)
{
	return hb_clock_sleep(seconds, &hb__sweep_pending_signal);
}

/* ------------------------------------------------------------------ */
/* the run                                                             */
/* ------------------------------------------------------------------ */

typedef hb_rb_sample rb_sample;

typedef struct engine {
	hb_lcr *lcr;
	hb_supply *supply;
	hb_bias *bias;
	const hb_sweep_plan *plan;
	const hb_sweep_callbacks *cb;
	hb_sweep_result *result;
	double t0;
	double noise_rel;   /* relative noise of one meter reading */
	double sigma_amps;  /* noise of one current read-back, A */
	double rb_seconds;  /* how long one read-back takes */
	double tau;         /* learnt response time of the read-back to a step, s; 0 until seen */
	bool overshoot;     /* a step has overshot: the first-order prediction is not trusted */
	double r_est;       /* V/I of the last point, ohm (NAN until seen) */
	double i_top;
	double last_amps[2], last_l[2];
	int n_last;
	double bracket_before, bracket_after; /* read-backs around the last point's reading */
	rb_sample *series;  /* read-backs of the current step */
	size_t n_series, cap_series;
} engine;

static int stop_with(engine *e, hb_sweep_end end, hb_sweep_cause cause, int status, const char *fmt, ...)
	__attribute__((format(printf, 5, 6)));

static int stop_with(engine *e, hb_sweep_end end, hb_sweep_cause cause, int status, const char *fmt, ...)
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
		e->result->cause = cause;
	}
	return status;
}

static int signal_stop(engine *e)
{
	int signo = hb__sweep_pending_signal;
	e->result->interrupted_by_signal = true;
	e->result->signal_number = signo;
	return stop_with(e, HB_SWEEP_ABORTED, HB_CAUSE_OPERATOR, HB_ERR_INTERRUPTED, "interrupted by signal %d (%s)", signo,
			 signo == SIGINT ? "SIGINT" : signo == SIGTERM ? "SIGTERM" : signo == SIGHUP ? "SIGHUP" : "signal");
}

static int lcr_fault(engine *e, int rc, const char *what)
{
	return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "meter %s: %s", what, hb_lcr_errmsg(e->lcr));
}

static int supply_fault(engine *e, int rc, const char *what)
{
	return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "supply %s: %s", what, hb_supply_errmsg(e->supply));
}

static int bias_fault(engine *e, int rc)
{
	if (rc == HB_ERR_INTERRUPTED)
		return signal_stop(e);
	return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "supply: %s", hb_bias_errmsg(e->bias));
}

static void engine_notice(void *ctx, const char *text)
{
	engine *e = ctx;
	if (e->cb && e->cb->notice)
		e->cb->notice(e->cb->ctx, text);
}

static int read_once(engine *e, hb_lcr_reading *r)
{
	if (hb__sweep_pending_signal)
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

/* One current read-back, time-stamped at the middle of the query. */
static int read_amps(engine *e, rb_sample *out)
{
	if (hb__sweep_pending_signal)
		return signal_stop(e);
	double t_a = now_seconds(), amps = NAN;
	int rc = hb_supply_measure_current(e->supply, &amps);
	double t_b = now_seconds();
	if (rc != HB_OK)
		return supply_fault(e, rc, "current read-back");
	if (!isfinite(amps))
		return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, HB_ERR_PROTOCOL, "supply current read-back is not a number");
	out->t = 0.5 * (t_a + t_b);
	out->amps = amps;
	/* Keep the mean duration: it floors the settle window. */
	e->rb_seconds = e->rb_seconds > 0 ? 0.9 * e->rb_seconds + 0.1 * (t_b - t_a) : (t_b - t_a);
	return HB_OK;
}

static int series_add(engine *e, rb_sample s)
{
	if (e->n_series == e->cap_series) {
		size_t cap = e->cap_series ? 2 * e->cap_series : 256;
		rb_sample *n = realloc(e->series, cap * sizeof *n);
		if (!n)
			return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, HB_ERR_NOMEM, "out of memory");
		e->series = n;
		e->cap_series = cap;
	}
	e->series[e->n_series++] = s;
	return HB_OK;
}

/* The current tolerance of a point: the largest movement of the current
 * that changes L by less than settle_fraction of one reading's noise,
 * from the slope dL/dI seen at the last two points (doubled, because the
 * slope only steepens towards saturation). Bounded below by what the
 * read-back can resolve, above by 1 % of the point and, at the points the
 * DC resistance comes from (HB_SWEEP_DCR_FRACTION), by what keeps the
 * supply's V/I honest: a current still moving by d with time constant tau
 * adds L*d/tau to the voltage, which must stay below 0.1 % of I*R. */
static double current_tolerance(const engine *e, double setpoint)
{
	double hi = 1e-2 * fmax(fabs(setpoint), 0.05 * e->i_top);
	if (fabs(setpoint) <= HB_SWEEP_DCR_FRACTION * e->i_top * (1 + 1e-9) && e->n_last >= 1 && e->tau > 0 &&
	    isfinite(e->r_est) && e->r_est > 0 && fabs(e->last_l[e->n_last - 1]) > 0)
		hi = fmin(hi, 1e-3 * fabs(setpoint) * e->r_est * e->tau / fabs(e->last_l[e->n_last - 1]));
	double lo = fmax(2.0 * e->sigma_amps, 1e-4 * e->i_top);
	double tol = hi;
	if (e->n_last >= 2) {
		double di = e->last_amps[1] - e->last_amps[0];
		double dl = e->last_l[1] - e->last_l[0];
		if (fabs(di) > 0 && isfinite(dl)) {
			double slope = 2.0 * fabs(dl / di);
			double sigma_l = e->noise_rel * fabs(e->last_l[1]);
			if (slope > 0)
				tol = fmin(tol, e->plan->settle_fraction * sigma_l / slope);
		}
	}
	return fmax(tol, lo);
}

/* Waits until the current has arrived, judged from the read-back series
 * since the step (see docs/sweeps.md, "Settling"):
 *  - the response time of this step is the time the read-back took to
 *    cover all but 1/e of its way to the set-point; the learnt one is the
 *    longest seen so far;
 *  - the window is three response times (never less than three
 *    read-backs); over it the read-backs must stay within the current
 *    tolerance plus their own noise (an overshoot or ringing shows as
 *    range), and the trend times the response time — the first-order
 *    prediction of the change still to come — must be within it too.
 * Until a response time is seen (offset read-back, tiny step) the window
 * is half the time since the step, which only accepts a current that has
 * held still for as long as it took to get there.
 * Once a response time has been learnt and no step has overshot, a
 * quicker test comes first: when a first-order response with the learnt
 * time constant fits the read-backs since the step within their noise,
 * the distance from the last read-back to the predicted final value is
 * the change still to come, and the point is read once it is within the
 * tolerance. A response that is not first-order (slew limit, filtered or
 * late read-back, ringing) fails the fit and falls back to the window. */
static int settle_current(engine *e, double setpoint, double t_step, double tol, bool *settled)
{
	*settled = false;
	e->n_series = 0;
	double noise_band = tol + 5.0 * e->sigma_amps;
	double first_dev = NAN, t_resp = NAN;
	for (;;) {
		rb_sample s;
		int rc = read_amps(e, &s);
		if (rc != HB_OK)
			return rc;
		rc = series_add(e, s);
		if (rc != HB_OK)
			return rc;
		double dev = fabs(s.amps - setpoint);
		if (!isfinite(first_dev))
			first_dev = dev;
		if (!isfinite(t_resp) && first_dev > 4.0 * noise_band && dev <= first_dev / M_E)
			t_resp = s.t - t_step;
		double since = s.t - t_step;
		double resp = fmax(e->tau, isfinite(t_resp) ? t_resp : 0);
		double window;
		if (isfinite(t_resp) || first_dev <= 4.0 * noise_band)
			window = 3.0 * resp;
		else
			window = fmax(3.0 * e->tau, 0.5 * since);
		window = fmax(window, 3.0 * e->rb_seconds);
		size_t from = e->n_series;
		while (from > 0 && s.t - e->series[from - 1].t <= window)
			from--;
		bool full = from > 0 || (s.t - e->series[0].t) >= 0.9 * window;
		double a_inf, rms;
		bool pf = !e->overshoot && e->tau > 0 && since >= e->tau && hb_transient_predict(e->series, e->n_series, e->tau, &a_inf, &rms);
		if (pf &&
		    rms <= 3.0 * e->sigma_amps + 0.1 * tol && fabs(s.amps - a_inf) <= tol &&
		    fabs(a_inf - setpoint) <= 0.02 * fabs(setpoint) + 0.01) {
			*settled = true;
			return HB_OK;
		}
		if (full && e->n_series - from >= 3) {
			double lo = INFINITY, hi = -INFINITY;
			for (size_t i = from; i < e->n_series; i++) {
				lo = fmin(lo, e->series[i].amps);
				hi = fmax(hi, e->series[i].amps);
			}
			double sxx;
			double slope = hb_transient_slope(e->series, from, e->n_series, &sxx);
			double slope_noise = sxx > 0 ? e->sigma_amps / sqrt(sxx) : 0;
			double still_to_come = fmax(0, fabs(slope) - 2.0 * slope_noise) * fmax(resp, window / 3.0);
			if (hi - lo <= noise_band && still_to_come <= tol) {
				*settled = true;
				return HB_OK;
			}
		}
		if (since > e->plan->settle_timeout)
			return HB_OK;
	}
}

/* After a point: the response time this step showed, measured against the
 * current the point settled at, teaches the next steps. */
static void learn_response(engine *e, double t_step, double final_amps, double tol)
{
	if (e->n_series < 2)
		return;
	double first_dev = fabs(e->series[0].amps - final_amps);
	double band = tol + 5.0 * e->sigma_amps;
	if (first_dev <= 4.0 * band)
		return;
	/* Gone past the final value, on the far side from where it started:
	 * an overshoot, which a first-order prediction would misjudge. */
	double side = e->series[0].amps - final_amps;
	for (size_t i = 0; i < e->n_series; i++)
		if ((e->series[i].amps - final_amps) * side < 0 && fabs(e->series[i].amps - final_amps) > 2.0 * band)
			e->overshoot = true;
	for (size_t i = 0; i < e->n_series; i++) {
		if (fabs(e->series[i].amps - final_amps) <= first_dev / M_E) {
			double t = e->series[i].t - t_step;
			if (t > e->tau)
				e->tau = t;
			hb_bias_set_settle_hint(e->bias, e->tau);
			return;
		}
	}
}

/* Reads one bias point: each meter reading is bracketed by current
 * read-backs, and the point's bias is the mean of the read-backs that
 * bracket its accepted readings, so it is the current the readings saw.
 * A reading whose brackets differ by more than the tolerance is re-read
 * (auto rule) until one holds still or the time-out flags the point. */
static int read_bias_point(engine *e, hb_sweep_point *p, double tol, double t_start, bool current_settled)
{
	const hb_sweep_plan *plan = e->plan;
	rb_sample before;
	int rc = e->n_series > 0 ? HB_OK : read_amps(e, &before);
	if (rc != HB_OK)
		return rc;
	if (e->n_series > 0)
		before = e->series[e->n_series - 1];
	double band = tol + 4.0 * e->sigma_amps;
	int n = 0;
	hb_lcr_reading r = { 0 };
	rb_sample after = before;
	bool still = false;
	for (;;) {
		rc = read_once(e, &r);
		if (rc != HB_OK)
			return rc;
		rc = read_amps(e, &after);
		if (rc != HB_OK)
			return rc;
		n++;
		still = fabs(after.amps - before.amps) <= band;
		if (still || plan->settle == HB_SETTLE_FIXED)
			break;
		if (now_seconds() - t_start > plan->settle_timeout)
			break;
		before = after; /* the current moved during the reading: read again */
	}
	p->settle_readings = n;
	p->readings = 1;
	p->settled = current_settled && still;
	p->bias_measured = 0.5 * (before.amps + after.amps);
	p->bias_spread = fabs(after.amps - before.amps);
	p->bias_readbacks = 2;
	e->bracket_before = before.amps;
	e->bracket_after = after.amps;
	p->primary = r.overload ? NAN : r.primary;
	p->secondary = r.overload ? NAN : r.secondary;
	p->status = r.overload ? 1 : r.status;
	return HB_OK;
}

/* Frequency sweeps: readings until two successive differences lie within
 * the meter's own noise (the meter settles after a frequency change). */
static int read_until_agreeing(engine *e, hb_sweep_point *p, double t_start)
{
	const hb_sweep_plan *plan = e->plan;
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
	p->readings = 1;
	p->primary = r.overload ? NAN : r.primary;
	p->secondary = r.overload ? NAN : r.secondary;
	p->status = r.overload ? 1 : r.status;
	return HB_OK;
}

/* Learns the reading noise at the first step from at least 20 readings:
 * the relative spread from successive differences, so a slow drift is not
 * counted as noise. With a supply, each reading is followed by a current
 * read-back, which teaches the read-back noise the same way. */
static int learn_noise(engine *e)
{
	int n = e->plan->noise_readings < 20 ? 20 : e->plan->noise_readings;
	double prev = NAN, sum2 = 0, level = 0;
	double prev_a = NAN, sum2_a = 0;
	int pairs = 0, pairs_a = 0;
	for (int i = 0; i < n; i++) {
		hb_lcr_reading r = { 0 };
		int rc = read_once(e, &r);
		if (rc != HB_OK)
			return rc;
		if (e->bias) {
			rb_sample s;
			rc = read_amps(e, &s);
			if (rc != HB_OK)
				return rc;
			if (isfinite(prev_a)) {
				sum2_a += (s.amps - prev_a) * (s.amps - prev_a);
				pairs_a++;
			}
			prev_a = s.amps;
		}
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
	/* A perfectly quiet meter would make the settle rules unreachable. */
	e->noise_rel = fmax(rel, 2e-6);
	e->result->noise_rel = e->noise_rel;
	if (pairs_a)
		e->sigma_amps = sqrt(sum2_a / (2.0 * pairs_a));
	return HB_OK;
}

/* Checks, after every point, that the supply still does what the sweep
 * believes: output on, regulating current, the measured current with the
 * set-point. Anything else stops the sweep before the point is stored. */
static int check_supply(engine *e, hb_sweep_point *p, double setpoint)
{
	const hb_sweep_limits *lim = &e->plan->limits;
	double amps = p->bias_measured;
	double volts = NAN;
	int rc = hb_supply_measure_voltage(e->supply, &volts);
	if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED)
		return supply_fault(e, rc, "voltage read-back");
	p->supply_voltage = volts;
	if (isfinite(volts) && isfinite(amps) && amps > 0.05 * e->i_top)
		e->r_est = volts / amps;
	hb_supply_mode mode = HB_SUPPLY_MODE_UNKNOWN;
	rc = hb_supply_get_mode(e->supply, &mode);
	if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED)
		return supply_fault(e, rc, "mode query");
	if (mode == HB_SUPPLY_MODE_UNKNOWN) {
		bool on = true;
		rc = hb_supply_output_state(e->supply, &on);
		if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED)
			return supply_fault(e, rc, "output state");
		if (rc == HB_OK && !on)
			mode = HB_SUPPLY_MODE_OFF;
	}
	if (mode == HB_SUPPLY_MODE_OFF)
		return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, HB_ERR_INSTRUMENT,
				 "supply output went off during the sweep at %.4g A set, %.4g A measured (front panel, protection trip or interlock): point not stored",
				 setpoint, amps);
	bool short_of_setpoint = fabs(amps - setpoint) > 0.02 * fabs(setpoint) + 0.01;
	if (mode == HB_SUPPLY_MODE_CV ||
	    (mode == HB_SUPPLY_MODE_UNKNOWN && short_of_setpoint && isfinite(volts) && volts >= 0.98 * lim->max_voltage))
		return stop_with(e, HB_SWEEP_ABORTED, HB_CAUSE_PART, HB_ERR_COMPLIANCE,
				 "supply in constant voltage (compliance) at %.4g A set, %.4g A measured, %.4g V: the part or leads need more voltage than the %.4g V limit",
				 setpoint, amps, volts, lim->max_voltage);
	if (short_of_setpoint) {
		/* Still on its way there (a short fixed dwell): the point records
		 * what the reading saw and is flagged. Held away from the
		 * set-point, or moving away from it: the supply is not doing
		 * what it is told. */
		double moved_toward = fabs(e->bracket_before - setpoint) - fabs(e->bracket_after - setpoint);
		double band = 5.0 * e->sigma_amps + 1e-4 * e->i_top;
		if (moved_toward > band) {
			p->settled = false;
		} else {
			return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, HB_ERR_INSTRUMENT,
					 "supply current %.4g A does not follow the set-point %.4g A (tolerance 2 %% + 10 mA): point not stored",
					 amps, setpoint);
		}
	}
	if (amps > lim->max_current * 1.05 + 0.01)
		return stop_with(e, HB_SWEEP_ABORTED, HB_CAUSE_LIMIT, HB_ERR_LIMIT, "measured current %.4g A above the limit %.4g A",
				 amps, lim->max_current);
	if (isfinite(volts) && amps * volts > lim->max_power)
		return stop_with(e, HB_SWEEP_ABORTED, HB_CAUSE_LIMIT, HB_ERR_LIMIT, "supply power %.4g W above the limit %.4g W",
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
			return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "could not store point %d: %s", index + 1,
					 hb_status_name(rc));
	}
	e->result->points++;
	if (index == 0 || !isfinite(e->result->l_first))
		e->result->l_first = p->primary;
	if (e->cb && e->cb->progress)
		e->cb->progress(e->cb->ctx, p, index, total, e->result->l_first, seconds_left);
	return HB_OK;
}

static void settings_snapshot(engine *e, int when)
{
	if (e->cb && e->cb->settings)
		e->cb->settings(e->cb->ctx, when);
}

static int configure_meter(engine *e, double frequency)
{
	const hb_sweep_plan *plan = e->plan;
	int rc = hb_lcr_set_function(e->lcr, plan->equiv, plan->pair);
	if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED)
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

/* Opens the supply's state machine: reads what the supply is doing, ramps
 * down anything flowing, then output on at 0 A with the voltage limit. */
static int start_supply(engine *e)
{
	/* A signal that came while the instruments were being opened must stop
	 * the sweep before the output is ever switched on. */
	if (hb__sweep_pending_signal)
		return signal_stop(e);
	hb_bias_config cfg = {
		.ramp_rate = e->plan->limits.ramp_rate,
		.off_threshold = e->plan->limits.off_threshold,
		.confirm_timeout = 2.0,
		.stop = &hb__sweep_pending_signal,
		.notice = engine_notice,
		.notice_ctx = e,
	};
	int rc = hb_bias_new(e->supply, &cfg, &e->bias);
	if (rc != HB_OK)
		return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "out of memory");
	double found = NAN;
	rc = hb_bias_open(e->bias, &found);
	e->result->start_amps = found;
	if (rc != HB_OK)
		return bias_fault(e, rc);
	if (hb__sweep_pending_signal)
		return signal_stop(e);
	rc = hb_bias_enable(e->bias, e->plan->limits.max_voltage);
	if (rc != HB_OK)
		return bias_fault(e, rc);
	return HB_OK;
}

static void remember_point(engine *e, const hb_sweep_point *p)
{
	if (!isfinite(p->primary) || !isfinite(p->bias_measured))
		return;
	if (e->n_last == 2) {
		e->last_amps[0] = e->last_amps[1];
		e->last_l[0] = e->last_l[1];
		e->n_last = 1;
	}
	e->last_amps[e->n_last] = p->bias_measured;
	e->last_l[e->n_last] = p->primary;
	e->n_last++;
}

static int run_bias(engine *e)
{
	const hb_sweep_plan *plan = e->plan;
	double *setpoints = NULL;
	int total = 0;
	int rc = hb_sweep_setpoints(plan, &setpoints, &total);
	if (rc != HB_OK)
		return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "out of memory");
	e->i_top = fmax(plan->from, plan->to);
	rc = configure_meter(e, plan->frequency);
	if (rc != HB_OK)
		goto out;
	rc = start_supply(e);
	if (rc != HB_OK)
		goto out;
	settings_snapshot(e, 0);
	double t_points = now_seconds();
	for (int i = 0; i < total; i++) {
		rc = hb_bias_ramp_to(e->bias, setpoints[i]);
		if (rc != HB_OK) {
			rc = bias_fault(e, rc);
			goto out;
		}
		double t_step = now_seconds();
		hb_sweep_point p = { 0 };
		p.direction = (plan->return_down && i >= plan->steps) ? -1 : 1;
		p.bias_set = setpoints[i];
		p.frequency = plan->frequency;
		double tol = current_tolerance(e, setpoints[i]);
		bool settled = true;
		e->n_series = 0;
		if (plan->settle == HB_SETTLE_FIXED) {
			rc = sleep_watching(plan->settle_time);
			if (rc != HB_OK) {
				rc = signal_stop(e);
				goto out;
			}
		} else {
			rc = settle_current(e, setpoints[i], t_step, tol, &settled);
			if (rc != HB_OK)
				goto out;
		}
		if (i == 0) {
			/* The noise is learnt at the first step, once it holds still,
			 * so every later rule has a scale. */
			rc = learn_noise(e);
			if (rc != HB_OK)
				goto out;
			e->n_series = 0;
			tol = current_tolerance(e, setpoints[i]);
		}
		rc = read_bias_point(e, &p, tol, t_step, settled);
		if (rc != HB_OK)
			goto out;
		p.settle_seconds = now_seconds() - t_step;
		rc = check_supply(e, &p, setpoints[i]);
		if (rc != HB_OK)
			goto out;
		if (plan->settle == HB_SETTLE_AUTO)
			learn_response(e, t_step, p.bias_measured, tol);
		remember_point(e, &p);
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
	bool biased = e->supply && plan->bias > 0;
	int rc = hb_sweep_frequencies(plan, &freqs, &total);
	if (rc != HB_OK)
		return stop_with(e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, rc, "out of memory");
	e->i_top = plan->bias;
	rc = configure_meter(e, freqs[0]);
	if (rc != HB_OK)
		goto out;
	if (biased) {
		rc = start_supply(e);
		if (rc != HB_OK)
			goto out;
		rc = hb_bias_ramp_to(e->bias, plan->bias);
		if (rc != HB_OK) {
			rc = bias_fault(e, rc);
			goto out;
		}
		bool settled;
		rc = settle_current(e, plan->bias, now_seconds(), current_tolerance(e, plan->bias), &settled);
		if (rc != HB_OK)
			goto out;
	} else {
		rc = sleep_watching(plan->settle == HB_SETTLE_FIXED ? plan->settle_time : 0.05);
		if (rc != HB_OK) {
			rc = signal_stop(e);
			goto out;
		}
	}
	settings_snapshot(e, 0);
	rc = learn_noise(e);
	if (rc != HB_OK)
		goto out;
	double t_points = now_seconds();
	for (int i = 0; i < total; i++) {
		hb_sweep_point p = { 0 };
		p.bias_set = biased ? plan->bias : 0;
		p.bias_measured = NAN;
		p.bias_spread = NAN;
		p.supply_voltage = NAN;
		p.frequency = freqs[i];
		rc = hb_lcr_set_frequency(e->lcr, freqs[i]);
		if (rc != HB_OK) {
			rc = lcr_fault(e, rc, "frequency");
			goto out;
		}
		double t_start = now_seconds();
		rb_sample before = { 0 }, after = { 0 };
		if (biased) {
			rc = read_amps(e, &before);
			if (rc != HB_OK)
				goto out;
		}
		rc = read_until_agreeing(e, &p, t_start);
		if (rc != HB_OK)
			goto out;
		p.settle_seconds = now_seconds() - t_start;
		if (biased) {
			rc = read_amps(e, &after);
			if (rc != HB_OK)
				goto out;
			p.bias_measured = 0.5 * (before.amps + after.amps);
			p.bias_spread = fabs(after.amps - before.amps);
			p.bias_readbacks = 2;
			e->bracket_before = before.amps;
			e->bracket_after = after.amps;
			rc = check_supply(e, &p, plan->bias);
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

int hb_sweep_run(hb_lcr *lcr, hb_supply *supply, const hb_sweep_plan *plan, const hb_sweep_callbacks *cb,
		 hb_sweep_result *result)
{
	memset(result, 0, sizeof *result);
	result->l_first = NAN;
	result->end = HB_SWEEP_COMPLETE;
	result->cause = HB_CAUSE_NONE;
	result->start_amps = NAN;
	result->off_amps = NAN;
	result->decay_seconds = NAN;
	engine e = { .lcr = lcr, .supply = supply, .plan = plan, .cb = cb, .result = result,
		     .t0 = now_seconds(), .noise_rel = 1e-4, .r_est = NAN };
	char err[256];
	int rc = hb_sweep_plan_check(plan, supply != NULL, err, sizeof err);
	if (rc != HB_OK)
		return stop_with(&e, HB_SWEEP_ABORTED, rc == HB_ERR_LIMIT ? HB_CAUSE_LIMIT : HB_CAUSE_OPERATOR, rc, "%s", err);

	if (plan->kind == HB_SWEEP_BIAS)
		rc = run_bias(&e);
	else
		rc = run_frequency(&e);
	if (rc == HB_OK && result->points > 0)
		settings_snapshot(&e, 1);

	/* The one way out: whatever happened above, the state machine ramps
	 * the current down, waits for the decay and only then switches off. */
	if (e.bias) {
		hb_bias_state st = hb_bias_get_state(e.bias);
		bool flowing = st == HB_BIAS_IDLE || st == HB_BIAS_RAMPING || st == HB_BIAS_HOLD ||
			       st == HB_BIAS_RAMP_DOWN || st == HB_BIAS_CONFIRM;
		hb_bias_shutdown_report rep;
		int off = HB_OK;
		if (flowing || st == HB_BIAS_LOST)
			off = hb_bias_shutdown(e.bias, &rep);
		if (flowing && off == HB_OK) {
			result->off_amps = rep.off_amps;
			result->decay_seconds = rep.decay_seconds;
		}
		if (off != HB_OK) {
			result->current_may_flow = true;
			if (result->status == HB_OK)
				stop_with(&e, HB_SWEEP_FAILED, HB_CAUSE_BENCH, off, "supply did not switch off: %s",
					  hb_bias_errmsg(e.bias));
			else {
				size_t len = strlen(result->reason);
				snprintf(result->reason + len, sizeof result->reason - len,
					 "; the supply could not be switched off");
			}
			result->end = HB_SWEEP_FAILED;
		}
	}
	if (result->status == HB_OK && hb__sweep_pending_signal) {
		/* A signal that came during the last step still counts. */
		signal_stop(&e);
	}
	hb_bias_free(e.bias);
	free(e.series);
	return result->status;
}
