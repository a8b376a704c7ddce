/* src/bench/bias_supply.c - the supply state machine: safe start, ramps, confirmed shut-down; nothing else changes the supply */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "bias_supply.h"

/* Ramps move in slices of this length: short enough that the part's
 * L*dI/dt stays small, long enough not to flood a serial link. */
#define RAMP_SLICE_S 0.05
/* How often the decay is polled while waiting to switch off. */
#define CONFIRM_POLL_S 0.02

struct hb_bias {
	hb_supply *supply;
	hb_bias_config cfg;
	hb_bias_state state;
	double setpoint;     /* last set-point sent, A */
	bool setpoint_known; /* we sent it, or the supply told us */
	char errmsg[256];
};

static int fail(hb_bias *b, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static int fail(hb_bias *b, int status, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(b->errmsg, sizeof b->errmsg, fmt, ap);
	va_end(ap);
	if (status == HB_ERR_CLOSED)
		b->state = HB_BIAS_LOST;
	return status;
}

static void notice(hb_bias *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void notice(hb_bias *b, const char *fmt, ...)
{
	if (!b->cfg.notice)
		return;
	char text[256];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(text, sizeof text, fmt, ap);
	va_end(ap);
	b->cfg.notice(b->cfg.notice_ctx, text);
}

int hb_bias_new(hb_supply *supply, const hb_bias_config *config, hb_bias **out)
{
	*out = NULL;
	if (!supply || !config)
		return HB_ERR_ARG;
	hb_bias *b = calloc(1, sizeof *b);
	if (!b)
		return HB_ERR_NOMEM;
	b->supply = supply;
	b->cfg = *config;
	if (!(b->cfg.ramp_rate > 0))
		b->cfg.ramp_rate = 1.0; /* plan checks refuse this earlier; never move unbounded */
	if (!(b->cfg.off_threshold > 0))
		b->cfg.off_threshold = 0.02;
	if (!(b->cfg.settle_hint >= 0))
		b->cfg.settle_hint = 0;
	b->state = HB_BIAS_UNKNOWN;
	b->setpoint = NAN;
	*out = b;
	return HB_OK;
}

void hb_bias_free(hb_bias *b)
{
	free(b);
}

const char *hb_bias_errmsg(const hb_bias *b)
{
	if (!b)
		return "out of memory";
	return b->errmsg[0] ? b->errmsg : "no error";
}

hb_bias_state hb_bias_get_state(const hb_bias *b)
{
	return b ? b->state : HB_BIAS_UNKNOWN;
}

const char *hb_bias_state_name(hb_bias_state s)
{
	switch (s) {
	case HB_BIAS_OFF: return "off";
	case HB_BIAS_IDLE: return "idle";
	case HB_BIAS_RAMPING: return "ramping";
	case HB_BIAS_HOLD: return "hold";
	case HB_BIAS_RAMP_DOWN: return "ramp-down";
	case HB_BIAS_CONFIRM: return "confirm";
	case HB_BIAS_LOST: return "lost";
	default: return "unknown";
	}
}

double hb_bias_setpoint(const hb_bias *b)
{
	return b ? b->setpoint : NAN;
}

void hb_bias_set_settle_hint(hb_bias *b, double seconds)
{
	if (b && seconds >= 0 && isfinite(seconds))
		b->cfg.settle_hint = seconds;
}

static double confirm_timeout(const hb_bias *b)
{
	double t = b->cfg.confirm_timeout > 0 ? b->cfg.confirm_timeout : 2.0;
	/* A slow supply gets the time its own response needs. */
	return fmax(t, 20.0 * b->cfg.settle_hint);
}

static int send_setpoint(hb_bias *b, double amps)
{
	int rc = hb_supply_set_current(b->supply, amps);
	if (rc != HB_OK)
		return fail(b, rc, "set current to %g A: %s", amps, hb_supply_errmsg(b->supply));
	b->setpoint = amps;
	b->setpoint_known = true;
	return HB_OK;
}

/* Walks the set-point from `from` to `to` in slices of ramp_rate * slice.
 * Going up stops at a signal; going down never does. A set-point command
 * that fails on the way down is retried at the next slice, up to three in
 * a row: stopping the ramp half-way would leave the current where it is. */
static int walk(hb_bias *b, double from, double to)
{
	double step = b->cfg.ramp_rate * RAMP_SLICE_S;
	double at = from;
	bool down = to < from;
	int failures = 0;
	while (fabs(to - at) > 1e-12) {
		if (!down && b->cfg.stop && *b->cfg.stop)
			return fail(b, HB_ERR_INTERRUPTED, "ramp stopped by a signal at %g A", at);
		double next = fabs(to - at) > step ? at + (to > at ? step : -step) : to;
		/* Slices that nearly divide the distance leave a rounding residue
		 * (1.2 A in 0.2 A slices ends at 5.5e-17 A): the last slice lands
		 * on the target itself. */
		if (fabs(to - next) <= 1e-9 * fmax(1.0, fabs(to)))
			next = to;
		int rc = send_setpoint(b, next);
		if (rc != HB_OK) {
			if (!down || rc == HB_ERR_CLOSED || ++failures >= 3)
				return rc;
		} else {
			failures = 0;
			at = next;
		}
		if (fabs(to - at) > 1e-12 || rc != HB_OK)
			hb_clock_sleep(RAMP_SLICE_S, down ? NULL : b->cfg.stop);
	}
	return HB_OK;
}

/* Polls the measured current until it is below the threshold. */
static int confirm_decay(hb_bias *b, hb_bias_shutdown_report *r)
{
	double t0 = hb_clock_now();
	double limit = confirm_timeout(b);
	int read_failures = 0;
	b->state = HB_BIAS_CONFIRM;
	for (;;) {
		double amps = NAN;
		int rc = hb_supply_measure_current(b->supply, &amps);
		if (rc == HB_ERR_CLOSED)
			return fail(b, rc, "current read-back while waiting for the decay: %s", hb_supply_errmsg(b->supply));
		if (rc == HB_OK && isfinite(amps)) {
			read_failures = 0;
			r->off_amps = amps;
			if (fabs(amps) < b->cfg.off_threshold) {
				r->confirmed = true;
				r->decay_seconds = hb_clock_now() - t0;
				return HB_OK;
			}
		} else if (++read_failures >= 3) {
			/* No read-back to trust: wait what the supply's own response
			 * needs, conservatively, before letting go. */
			double wait = fmax(0.5, 10.0 * b->cfg.settle_hint);
			notice(b, "the supply's current read-back failed while it ramped down; waiting %.2g s before switching off",
			       wait);
			hb_clock_sleep(wait, NULL);
			r->off_amps = NAN;
			return HB_OK;
		}
		if (hb_clock_now() - t0 > limit) {
			notice(b, "current still %.4g A %.3g s after the zero set-point (threshold %.4g A): switching the output off",
			       amps, limit, b->cfg.off_threshold);
			return HB_OK;
		}
		hb_clock_sleep(CONFIRM_POLL_S, NULL);
	}
}

/* Ramp down from what flows (or was last asked) and wait for the decay;
 * leaves the output as it is. */
static int bring_to_zero(hb_bias *b, hb_bias_shutdown_report *r)
{
	double amps = NAN;
	int rc = hb_supply_measure_current(b->supply, &amps);
	if (rc == HB_ERR_CLOSED)
		return fail(b, rc, "current read-back: %s", hb_supply_errmsg(b->supply));
	double from;
	if (rc == HB_OK && isfinite(amps)) {
		from = fabs(amps);
		r->from_measured = true;
	} else {
		from = b->setpoint_known && isfinite(b->setpoint) ? b->setpoint : 0;
	}
	/* The set-point may lead the current (a step still settling); start
	 * from the higher so the first slice never jumps down past either. */
	if (b->setpoint_known && isfinite(b->setpoint) && b->setpoint > from)
		from = b->setpoint;
	r->from_amps = from;
	b->state = HB_BIAS_RAMP_DOWN;
	rc = walk(b, from, 0);
	if (rc != HB_OK)
		return rc;
	return confirm_decay(b, r);
}

int hb_bias_open(hb_bias *b, double *found_amps)
{
	*found_amps = NAN;
	bool on = false, on_known = false;
	int rc = hb_supply_output_state(b->supply, &on);
	if (rc == HB_OK)
		on_known = true;
	else if (rc == HB_ERR_CLOSED)
		return fail(b, rc, "output state: %s", hb_supply_errmsg(b->supply));
	double sp = NAN;
	if (hb_supply_query_current(b->supply, &sp) == HB_OK && isfinite(sp)) {
		b->setpoint = sp;
		b->setpoint_known = true;
	}
	double amps = NAN;
	rc = hb_supply_measure_current(b->supply, &amps);
	if (rc != HB_OK)
		return fail(b, rc, "current read-back at start: %s", hb_supply_errmsg(b->supply));
	*found_amps = amps;
	if (fabs(amps) >= b->cfg.off_threshold) {
		notice(b, "the supply is already sourcing %.4g A%s: ramping it down at %g A/s before anything else", amps,
		       on_known ? (on ? " (output on)" : " (output reported off)") : "", b->cfg.ramp_rate);
		hb_bias_shutdown_report r = { .decay_seconds = NAN, .off_amps = NAN };
		rc = bring_to_zero(b, &r);
		if (rc != HB_OK)
			return rc;
		b->state = HB_BIAS_IDLE;
		return HB_OK;
	}
	if (on_known && on) {
		/* On but nothing flows: a zero set-point moves no current. */
		rc = send_setpoint(b, 0);
		if (rc != HB_OK)
			return rc;
		b->state = HB_BIAS_IDLE;
	} else {
		b->state = HB_BIAS_OFF;
	}
	return HB_OK;
}

int hb_bias_enable(hb_bias *b, double voltage_limit)
{
	if (b->state != HB_BIAS_OFF && b->state != HB_BIAS_IDLE)
		return fail(b, HB_ERR_ARG, "enable from state %s", hb_bias_state_name(b->state));
	if (b->state == HB_BIAS_OFF || !b->setpoint_known || b->setpoint != 0) {
		int rc = send_setpoint(b, 0);
		if (rc != HB_OK)
			return rc;
	}
	int rc = hb_supply_set_voltage_limit(b->supply, voltage_limit);
	if (rc != HB_OK)
		return fail(b, rc, "voltage limit %g V: %s", voltage_limit, hb_supply_errmsg(b->supply));
	if (b->state == HB_BIAS_OFF) {
		/* From here on the shut-down must run: mark before asking. */
		b->state = HB_BIAS_IDLE;
		rc = hb_supply_output(b->supply, true);
		if (rc != HB_OK)
			return fail(b, rc, "output on: %s", hb_supply_errmsg(b->supply));
	}
	return HB_OK;
}

int hb_bias_ramp_to(hb_bias *b, double amps)
{
	if (b->state != HB_BIAS_IDLE && b->state != HB_BIAS_HOLD)
		return fail(b, HB_ERR_ARG, "ramp from state %s", hb_bias_state_name(b->state));
	if (!(amps >= 0) || !isfinite(amps))
		return fail(b, HB_ERR_ARG, "ramp to %g A: not a current >= 0", amps);
	b->state = HB_BIAS_RAMPING;
	int rc = walk(b, b->setpoint_known ? b->setpoint : 0, amps);
	if (rc != HB_OK) {
		if (b->state != HB_BIAS_LOST)
			b->state = HB_BIAS_HOLD;
		return rc;
	}
	b->state = amps > 0 ? HB_BIAS_HOLD : HB_BIAS_IDLE;
	return HB_OK;
}

int hb_bias_shutdown(hb_bias *b, hb_bias_shutdown_report *r)
{
	hb_bias_shutdown_report local;
	if (!r)
		r = &local;
	*r = (hb_bias_shutdown_report){ .from_amps = NAN, .decay_seconds = NAN, .off_amps = NAN };
	if (!b)
		return HB_OK;
	if (b->state == HB_BIAS_OFF) {
		r->switched_off = true;
		return HB_OK;
	}
	if (b->state == HB_BIAS_LOST)
		return HB_ERR_CLOSED;
	int rc = bring_to_zero(b, r);
	if (rc != HB_OK && b->state == HB_BIAS_LOST)
		return rc;
	if (rc != HB_OK) {
		/* The ramp could not finish: switching off now would cut the
		 * current it left. Say so; the caller warns loudly. */
		return rc;
	}
	int off = hb_supply_output(b->supply, false);
	if (off != HB_OK) {
		/* One more try at the switch that matters. */
		off = hb_supply_output(b->supply, false);
		if (off != HB_OK)
			return fail(b, off, "output off: %s", hb_supply_errmsg(b->supply));
	}
	r->switched_off = true;
	b->state = HB_BIAS_OFF;
	return HB_OK;
}

int hb_bias_reset_when_off(hb_bias *b)
{
	if (!b)
		return HB_ERR_ARG;
	if (b->state != HB_BIAS_OFF)
		return fail(b, HB_ERR_ARG, "reset only with the output off (state %s)", hb_bias_state_name(b->state));
	double amps = NAN;
	int rc = hb_supply_measure_current(b->supply, &amps);
	if (rc != HB_OK)
		return fail(b, rc, "current read-back before reset: %s", hb_supply_errmsg(b->supply));
	if (!(fabs(amps) < b->cfg.off_threshold))
		return fail(b, HB_ERR_INSTRUMENT, "%.4g A still flows with the output off: no reset", amps);
	rc = hb_supply_reset(b->supply);
	if (rc != HB_OK)
		return fail(b, rc, "reset: %s", hb_supply_errmsg(b->supply));
	b->setpoint = NAN;
	b->setpoint_known = false;
	bool on = false;
	if (hb_supply_output_state(b->supply, &on) == HB_OK && on) {
		/* Whatever the reset did, the shut-down must run again. */
		b->state = HB_BIAS_IDLE;
		return fail(b, HB_ERR_INSTRUMENT, "the supply's reset left its output on");
	}
	return HB_OK;
}
