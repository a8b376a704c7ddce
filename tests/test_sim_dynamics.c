/* tests/test_sim_dynamics.c - simulated supply dynamics, read-back, reading integration and virtual time against textbook responses */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "drivers/hb_drivers.h"
#include "drivers/sim/sim_internal.h"
#include "src/cli/cli.h"

/* cmocka here has no double comparison; |a-b| <= tol with both values shown. */
static void assert_near(double a, double b, double tol)
{
	if (!(fabs(a - b) <= tol))
		fail_msg("%.12g and %.12g differ by %.3g, more than %.3g", a, b, fabs(a - b), tol);
}

/* ------------------------------------------------------------------ */
/* the model alone                                                     */

/* A part at rest, output on at 2 A, with the named dynamics. */
static void model_step_setup(const char *dynamics, sim_params *p, sim_state *s)
{
	sim_params_defaults(p);
	assert_int_equal(sim_params_dynamics(p, dynamics), HB_OK);
	memset(s, 0, sizeof *s);
	sim_state_reset(p, s);
	s->temp_c = p->t_amb;
	s->output = true;
	s->setpoint = 2.0;
}

static void test_first_order_exact(void **state)
{
	(void)state;
	sim_params p;
	sim_state s;
	model_step_setup("lag40", &p, &s);
	double t = 0;
	for (int k = 1; k <= 20; k++) {
		double dt = 0.0037 * k; /* uneven steps: the discretisation is exact for any */
		sim_state_step(&p, &s, dt);
		t += dt;
		/* first-order step response y = 1 - exp(-t/tau), common practice */
		assert_near(s.amps, 2.0 * (1 - exp(-t / 0.040)), 1e-12);
	}
	/* unknown preset names are refused */
	assert_int_equal(sim_params_dynamics(&p, "no-such"), HB_ERR_NOTFOUND);
}

static void test_second_order_exact(void **state)
{
	(void)state;
	sim_params p;
	sim_state s;
	/* critically damped: y = 1 - (1 + w t) exp(-w t), Ogata, Modern
	 * Control Engineering, from memory */
	model_step_setup("overshoot", &p, &s);
	p.zeta = 1.0;
	double w = 2 * M_PI * p.f_n;
	for (double t = 0.01; t < 0.5; t += 0.01) {
		sim_state_step(&p, &s, 0.01);
		assert_near(s.amps, 2.0 * (1 - (1 + w * t) * exp(-w * t)), 1e-9);
	}
	/* overdamped, zeta 2: y = 1 - (s2 e^(s1 t) - s1 e^(s2 t))/(s2 - s1),
	 * s1,2 = -w (zeta -+ sqrt(zeta^2 - 1)), Ogata, from memory */
	model_step_setup("overshoot", &p, &s);
	p.zeta = 2.0;
	double s1 = -w * (2.0 - sqrt(3.0)), s2 = -w * (2.0 + sqrt(3.0));
	for (double t = 0.02; t < 0.5; t += 0.02) {
		sim_state_step(&p, &s, 0.02);
		assert_near(s.amps, 2.0 * (1 - (s2 * exp(s1 * t) - s1 * exp(s2 * t)) / (s2 - s1)), 1e-9);
	}
}

/* ------------------------------------------------------------------ */
/* the in-process bench in virtual time                                */

static double sim_value(const char *key)
{
	double v = NAN;
	assert_int_equal(hb_sim_get_param(hb_sim_inproc(), key, &v), HB_OK);
	return v;
}

/* A fresh in-process bench: noise off (readings are then exact model
 * values), the named dynamics, virtual time, simulated time unscaled. */
static void vbench(const char *dynamics)
{
	hb_sim_inproc_shutdown();
	hb_sim *sim = hb_sim_inproc();
	assert_non_null(sim);
	assert_int_equal(hb_sim_set_param(sim, "noise", 0), HB_OK);
	assert_int_equal(hb_sim_load_dynamics(sim, dynamics), HB_OK);
	assert_int_equal(hb_sim_inproc_virtual(true), HB_OK);
	assert_near(hb_clock_now(), 0, 0);
}

static hb_scpi *open_raw(const char *resource)
{
	hb_scpi *scpi = NULL;
	int rc = hb_scpi_open(resource, &scpi);
	if (rc != HB_OK)
		fail_msg("%s: %s", resource, hb_scpi_errmsg(scpi));
	return scpi;
}

static double ask(hb_scpi *scpi, const char *command)
{
	double v = NAN;
	int rc = hb_scpi_query_double(scpi, command, &v);
	if (rc != HB_OK)
		fail_msg("%s: %s", command, hb_scpi_errmsg(scpi));
	return v;
}

static void say(hb_scpi *scpi, const char *command)
{
	assert_int_equal(hb_scpi_write(scpi, command), HB_OK);
}

/* Switches the supply on at 2 A; returns the model time it happened at. */
static double step_on(hb_scpi *dcs)
{
	say(dcs, "VOLT 5;CURR 2;OUTP ON");
	return sim_value("state.time");
}

static void test_overshoot_preset(void **state)
{
	(void)state;
	vbench("overshoot");
	hb_scpi *dcs = open_raw("sim:supply");
	double t_on = step_on(dcs);
	double zeta = 0.35, wn = 2 * M_PI * 8;
	double wd = wn * sqrt(1 - zeta * zeta);
	/* second-order underdamped step: peak at t_p = pi/w_d, overshoot
	 * M_p = exp(-pi zeta/sqrt(1 - zeta^2)), Ogata, Modern Control
	 * Engineering, from memory */
	double tp = M_PI / wd, mp = exp(-M_PI * zeta / sqrt(1 - zeta * zeta));
	double peak_seen = 0, t_seen = 0;
	for (int k = 0; k < 400; k++) {
		assert_int_equal(hb_clock_sleep(0.0005, NULL), HB_OK);
		double t = sim_value("state.time") - t_on, a = sim_value("state.amps");
		/* y = 1 - exp(-zeta wn t)(cos wd t + zeta/sqrt(1-zeta^2) sin wd t), same source */
		double y = 1 - exp(-zeta * wn * t) * (cos(wd * t) + zeta / sqrt(1 - zeta * zeta) * sin(wd * t));
		assert_near(a, 2.0 * y, 1e-9);
		if (a > peak_seen) {
			peak_seen = a;
			t_seen = t;
		}
	}
	assert_near(peak_seen, 2.0 * (1 + mp), 2.0 * mp * 1e-3);
	assert_near(t_seen, tp, 0.0005);
	/* about 31 % for this preset */
	assert_true(mp > 0.30 && mp < 0.32);
	/* the read-back shows it too (noise is off) */
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

static void test_slew_ramp(void **state)
{
	(void)state;
	vbench("slew");
	hb_scpi *dcs = open_raw("sim:supply");
	double t_on = step_on(dcs);
	/* A slew-limited loop moves at min(error/tau, slew): a straight ramp
	 * at 10 A/s until the error is slew*tau = 50 mA, then the lag, so 99 %
	 * of 2 A comes at (2 - 0.05)/10 + tau ln(0.05/0.02) (common practice). */
	assert_int_equal(hb_clock_sleep(0.1, NULL), HB_OK);
	assert_near(sim_value("state.amps"), 1.0, 1e-9);
	assert_near(sim_value("state.time") - t_on, 0.1, 1e-12);
	double t99 = NAN;
	for (int k = 0; k < 3000 && isnan(t99); k++) {
		assert_int_equal(hb_clock_sleep(0.0001, NULL), HB_OK);
		if (sim_value("state.amps") >= 1.98)
			t99 = sim_value("state.time") - t_on;
	}
	assert_near(t99, 1.95 / 10 + 0.005 * log(0.05 / 0.02), 0.0005);
	/* switching off ramps down at the same rate: never a jump to 0 */
	assert_int_equal(hb_clock_sleep(0.2, NULL), HB_OK);
	say(dcs, "OUTP OFF");
	assert_near(sim_value("state.amps"), 2.0, 1e-6);
	assert_int_equal(hb_clock_sleep(0.05, NULL), HB_OK);
	assert_near(sim_value("state.amps"), 1.5, 1e-6);
	assert_near(ask(dcs, "OUTP?"), 0, 0);
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

static void test_off_decays_continuously(void **state)
{
	(void)state;
	vbench("lag40");
	hb_scpi *dcs = open_raw("sim:supply");
	step_on(dcs);
	assert_int_equal(hb_clock_sleep(2.0, NULL), HB_OK);
	say(dcs, "OUTP OFF");
	double t_off = sim_value("state.time");
	assert_near(sim_value("state.amps"), 2.0, 1e-9);
	for (int k = 1; k <= 5; k++) {
		assert_int_equal(hb_clock_sleep(0.02, NULL), HB_OK);
		/* decay y = y0 exp(-t/tau), common practice */
		assert_near(sim_value("state.amps"), 2.0 * exp(-(sim_value("state.time") - t_off) / 0.040), 1e-9);
	}
	/* the second-order stage rings down to 0 and stops there: the
	 * output cannot drive the current negative */
	assert_int_equal(hb_sim_load_dynamics(hb_sim_inproc(), "overshoot"), HB_OK);
	say(dcs, "OUTP ON");
	assert_int_equal(hb_clock_sleep(2.0, NULL), HB_OK);
	say(dcs, "OUTP OFF");
	double lowest = 1;
	for (int k = 0; k < 200; k++) {
		assert_int_equal(hb_clock_sleep(0.001, NULL), HB_OK);
		double a = sim_value("state.amps");
		lowest = a < lowest ? a : lowest;
	}
	assert_near(lowest, 0, 0);
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

static void test_readback_latency(void **state)
{
	(void)state;
	vbench("latent");
	const double tau = 0.020, lat = 0.060;
	hb_scpi *dcs = open_raw("sim:supply");
	double t_on = step_on(dcs);
	for (int k = 1; k <= 40; k++) {
		assert_int_equal(hb_clock_sleep(0.005, NULL), HB_OK);
		double t = sim_value("state.time") - t_on;
		/* first-order step y = 1 - exp(-t/tau), seen through a pure delay:
		 * y(t - L), 0 before L (common practice) */
		assert_near(sim_value("state.amps"), 2.0 * (1 - exp(-t / tau)), 1e-9);
		double late = t - lat;
		double want = late > 1e-9 ? 2.0 * (1 - exp(-late / tau)) : 0;
		assert_near(sim_value("state.readback"), want, 1e-6);
	}
	/* MEAS:CURR? runs one link time (0.5 ms) after it is sent and reports
	 * the same delayed value; between history samples the read-back is
	 * interpolated linearly, within h^2/8 |y''| < 1e-4 A. */
	say(dcs, "CURR 3");
	double t_set = sim_value("state.time");
	assert_int_equal(hb_clock_sleep(0.03, NULL), HB_OK);
	double t_q = sim_value("state.time") + SIM_LINK_SECONDS;
	double old = 2.0 * (1 - exp(-(t_q - lat - t_on) / tau));
	/* 60 ms ago is before the new set-point: still on the old curve */
	assert_near(ask(dcs, "MEAS:CURR?"), old, 1e-4);
	assert_int_equal(hb_clock_sleep(0.05, NULL), HB_OK);
	t_q = sim_value("state.time") + SIM_LINK_SECONDS;
	double y_set = 2.0 * (1 - exp(-(t_set - t_on) / tau));
	double want = 3.0 - (3.0 - y_set) * exp(-(t_q - lat - t_set) / tau);
	double now_amps = 3.0 - (3.0 - y_set) * exp(-(t_q - t_set) / tau);
	double got = ask(dcs, "MEAS:CURR?");
	assert_near(got, want, 1e-4);
	assert_true(fabs(got - now_amps) > 0.1); /* the delay is visible */
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

static void test_readback_average(void **state)
{
	(void)state;
	vbench("filtered");
	const double tau = 0.020, win = 0.100;
	hb_scpi *dcs = open_raw("sim:supply");
	double t_on = step_on(dcs);
	for (int k = 1; k <= 30; k++) {
		assert_int_equal(hb_clock_sleep(0.007, NULL), HB_OK);
		double t = sim_value("state.time") - t_on;
		/* moving average of the first-order step: (1/W) * integral over
		 * [max(t-W,0), t] of 2(1 - exp(-u/tau)) du
		 * = (2/W) [(t - a) - tau (exp(-a/tau) - exp(-t/tau))] (common practice) */
		double a = t - win > 0 ? t - win : 0;
		double want = 2.0 / win * ((t - a) - tau * (exp(-a / tau) - exp(-t / tau)));
		/* trapezoids over the model's history, h = W/256: h^2/12 |y''| < 1e-4 A */
		assert_near(sim_value("state.readback"), want, 1e-4);
		double q = ask(dcs, "MEAS:CURR?");
		assert_true(q <= sim_value("state.amps") + 1e-9); /* lags the real current on the way up */
	}
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

/* Series inductance the meter would read at a fixed bias. */
static double ls_at(const sim_params *p, double temp, double amps)
{
	sim_state s = { .temp_c = temp };
	double l, r;
	sim_reading_from_z(sim_impedance(p, &s, 1000, amps, false, false), 1000, HB_EQUIV_SERIES, HB_PAIR_L_R, &l, &r);
	return l;
}

static void test_reading_integrates_moving_bias(void **state)
{
	(void)state;
	vbench("slew");
	hb_scpi *lcr = open_raw("sim:lcr");
	hb_scpi *dcs = open_raw("sim:supply");
	say(lcr, "IMP:FUNC SER,LR;IMP:APER LONG;IMP:AVER 1");
	step_on(dcs);
	assert_int_equal(hb_clock_sleep(1.0, NULL), HB_OK);
	assert_near(sim_value("state.amps"), 2.0, 1e-9);
	say(dcs, "CURR 7");
	double t_step = sim_value("state.time");
	double temp = sim_value("state.temp");
	char reply[128];
	assert_int_equal(hb_scpi_query(lcr, "IMP:READ?", reply, sizeof reply), HB_OK);
	double got = strtod(reply, NULL);
	/* The reading runs over [t0, t0 + 0.4 s], t0 one link time after the
	 * step; the bias ramps at the slew rate, I(t) = 2 + 10 (t - t_step),
	 * all the way (6.0 A < 7 - 0.05 A). Its value is the mean of the
	 * impedance over the window: here by Simpson's rule on 4000 intervals
	 * (common practice). */
	sim_params p;
	sim_params_defaults(&p);
	double t0 = SIM_LINK_SECONDS, t1 = t0 + 0.4;
	int n = 4000;
	double sum = 0;
	for (int i = 0; i <= n; i++) {
		double t = t0 + (t1 - t0) * i / n;
		double w = (i == 0 || i == n) ? 1 : (i % 2 ? 4 : 2);
		sum += w * ls_at(&p, temp, 2.0 + 10.0 * t);
	}
	double mean = sum * (t1 - t0) / n / 3 / (t1 - t0);
	double ends = 0.5 * (ls_at(&p, temp, 2.0 + 10 * t0) + ls_at(&p, temp, 2.0 + 10 * t1));
	/* SIM_READ_SAMPLES midpoints: the composite midpoint rule, whose
	 * error is at most (b-a) h^2/24 max|f''| (common practice): 4e-5 of
	 * the value across this knee. The mean of the two ends, which the
	 * bench used before, is 3 % off. */
	double mid = 0;
	for (int i = 0; i < SIM_READ_SAMPLES; i++)
		mid += ls_at(&p, temp, 2.0 + 10 * (t0 + (i + 0.5) * (t1 - t0) / SIM_READ_SAMPLES)) / SIM_READ_SAMPLES;
	assert_near(got / mid, 1, 2e-7); /* the reply has 8 digits */
	assert_near(got / mean, 1, 1e-4);
	assert_true(fabs(ends / mean - 1) > 0.01);
	assert_true(got < ls_at(&p, temp, 2.0) && got > ls_at(&p, temp, 6.0));
	(void)t_step;
	hb_scpi_close(lcr);
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

/* ------------------------------------------------------------------ */
/* plain supply                                                        */

static void test_plain_supply(void **state)
{
	(void)state;
	vbench("ideal");
	hb_scpi *dcs = open_raw("sim:supply");
	step_on(dcs);
	assert_int_equal(hb_clock_sleep(0.1, NULL), HB_OK);
	assert_near(ask(dcs, "STAT:QUES:COND?"), 1, 0);
	assert_int_equal(hb_sim_set_param(hb_sim_inproc(), "status_subsystem", 0), HB_OK);
	/* no answer, and SCPI-1999 -113 Undefined header in the queue */
	double v;
	double before = hb_clock_now();
	assert_int_equal(hb_scpi_query_double(dcs, "STAT:QUES:COND?", &v), HB_ERR_TIMEOUT);
	/* the time-out cost virtual time, not wall time */
	assert_true(hb_clock_now() - before >= 2.0);
	char reply[128];
	assert_int_equal(hb_scpi_query(dcs, "SYST:ERR?", reply, sizeof reply), HB_OK);
	assert_int_equal(atoi(reply), -113);
	assert_non_null(strstr(reply, "Undefined header"));
	say(dcs, "SOUR:VOLT:PROT:TRIP?;:OUTP:PROT:CLE");
	assert_int_equal(hb_scpi_query(dcs, "SYST:ERR?", reply, sizeof reply), HB_OK);
	assert_int_equal(atoi(reply), -113);
	assert_int_equal(hb_scpi_query(dcs, "SYST:ERR?", reply, sizeof reply), HB_OK);
	assert_int_equal(atoi(reply), -113);
	/* what a plain supply has */
	assert_near(ask(dcs, "SOUR:CURR?"), 2, 0);
	assert_near(ask(dcs, "OUTP?"), 1, 0);
	assert_near(ask(dcs, "MEAS:CURR?"), 2, 1e-5);
	assert_true(ask(dcs, "MEAS:VOLT?") > 0.01);
	say(dcs, "SOUR:CURR 1.5;OUTP OFF");
	assert_near(ask(dcs, "SOUR:CURR?"), 1.5, 0);
	assert_near(ask(dcs, "OUTP?"), 0, 0);
	assert_int_equal(hb_scpi_query(dcs, "SYST:ERR?", reply, sizeof reply), HB_OK);
	assert_int_equal(atoi(reply), 0);
	hb_scpi_close(dcs);
	hb_sim_inproc_shutdown();
}

/* ------------------------------------------------------------------ */
/* virtual time                                                        */

#define SCRIPT_VALUES 64

/* A scripted sequence through the meter and supply drivers: set, wait,
 * read. Fills out[] with every reading and clock time; returns the count. */
static int run_script(bool virtual_time, double *out)
{
	hb_sim_inproc_shutdown();
	hb_sim *sim = hb_sim_inproc();
	assert_non_null(sim);
	assert_int_equal(hb_sim_set_param(sim, "seed", 11), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "noise", 1e-3), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "rb_noise_abs", 1e-3), HB_OK);
	assert_int_equal(hb_sim_load_dynamics(sim, "overshoot"), HB_OK);
	if (virtual_time)
		assert_int_equal(hb_sim_inproc_virtual(true), HB_OK);
	else
		assert_int_equal(hb_sim_set_param(sim, "time_scale", 1e-2), HB_OK);
	/* virtual: the engine's waits are bench seconds; wall: scaled down */
	double ts = virtual_time ? 1 : 1e-2;
	hb_lcr *lcr = NULL;
	hb_supply *dcs = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &dcs), HB_OK);
	assert_int_equal(hb_lcr_reset(lcr), HB_OK);
	assert_int_equal(hb_supply_reset(dcs), HB_OK);
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_R), HB_OK);
	assert_int_equal(hb_lcr_set_averaging(lcr, 1, HB_APERTURE_SHORT), HB_OK);
	assert_int_equal(hb_supply_set_voltage_limit(dcs, 5), HB_OK);
	assert_int_equal(hb_supply_output(dcs, true), HB_OK);
	int n = 0;
	double t_start = hb_clock_now();
	for (int step = 1; step <= 6; step++) {
		assert_int_equal(hb_supply_set_current(dcs, 1.0 * step), HB_OK);
		/* long enough for the ringing to die down (envelope e^-8.8) */
		assert_int_equal(hb_clock_sleep(0.5 * ts, NULL), HB_OK);
		hb_lcr_reading r;
		assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
		double amps;
		assert_int_equal(hb_supply_measure_current(dcs, &amps), HB_OK);
		out[n++] = r.primary;
		out[n++] = r.secondary;
		out[n++] = amps;
		out[n++] = hb_clock_now() - t_start;
	}
	assert_int_equal(hb_supply_set_current(dcs, 0), HB_OK);
	assert_int_equal(hb_supply_output(dcs, false), HB_OK);
	hb_lcr_close(lcr);
	hb_supply_close(dcs);
	hb_sim_inproc_shutdown();
	return n;
}

static void test_virtual_repeatable(void **state)
{
	(void)state;
	double a[SCRIPT_VALUES], b[SCRIPT_VALUES], w[SCRIPT_VALUES];
	struct timespec w0, w1;
	clock_gettime(CLOCK_MONOTONIC, &w0);
	int na = run_script(true, a);
	int nb = run_script(true, b);
	clock_gettime(CLOCK_MONOTONIC, &w1);
	assert_int_equal(na, nb);
	assert_int_equal(na, 24);
	/* bit-identical, noise and all */
	assert_memory_equal(a, b, sizeof a[0] * (size_t)na);
	/* and the readings are the bench's: L falls with bias, the read-back
	 * is near the set-point */
	for (int k = 0; k < 6; k++) {
		assert_near(a[4 * k + 2], 1.0 * (k + 1), 0.05 * (k + 1) + 0.01);
		if (k > 0)
			assert_true(a[4 * k] < a[4 * (k - 1)] * 1.001);
		assert_true(a[4 * k + 3] > 0.5 * (k + 1)); /* virtual seconds went by */
	}
	/* the clock is the wall clock again after shutdown */
	double mono = (double)w1.tv_sec + w1.tv_nsec * 1e-9;
	assert_true(fabs(hb_clock_now() - mono) < 60);

	/* a wall-clock run of the same script still works */
	int nw = run_script(false, w);
	assert_int_equal(nw, 24);
	for (int k = 0; k < 6; k++)
		assert_near(w[4 * k + 2], 1.0 * (k + 1), 0.05 * (k + 1) + 0.01);
	assert_true(w[4 * 5 + 3] > 6 * 0.5 * 1e-2);
}

static void test_virtual_faults(void **state)
{
	(void)state;
	vbench("ideal");
	hb_sim *sim = hb_sim_inproc();
	hb_scpi *lcr = open_raw("sim:lcr?timeout=60000");
	char reply[128];
	struct timespec w0, w1;
	clock_gettime(CLOCK_MONOTONIC, &w0);

	/* delay: the reply comes 300 ms of virtual time later */
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "delay=300"), HB_OK);
	double t = hb_clock_now();
	assert_int_equal(hb_scpi_query(lcr, "*OPC?", reply, sizeof reply), HB_OK);
	assert_string_equal(reply, "1");
	assert_near(hb_clock_now() - t, 0.3 + SIM_LINK_SECONDS, 1e-9);

	/* drop: the reply never comes; the read times out after the
	 * resource's 60 s, at once in wall time */
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "drop=1"), HB_OK);
	t = hb_clock_now();
	assert_int_equal(hb_scpi_query(lcr, "*IDN?", reply, sizeof reply), HB_ERR_TIMEOUT);
	assert_true(hb_clock_now() - t >= 60.0);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);
	assert_int_equal(hb_scpi_query(lcr, "*IDN?", reply, sizeof reply), HB_OK);
	assert_true(strncmp(reply, "Henrybench,SIM-LCR1", 19) == 0);

	/* garble */
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "garble=1"), HB_OK);
	assert_int_equal(hb_scpi_query(lcr, "*IDN?", reply, sizeof reply), HB_OK);
	assert_true(strncmp(reply, "Henrybench", 10) != 0);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);

	/* deaf: lines within 500 ms after *RST are ignored */
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "deaf=500"), HB_OK);
	say(lcr, "*RST");
	assert_int_equal(hb_scpi_query(lcr, "*OPC?", reply, sizeof reply), HB_ERR_TIMEOUT);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);
	assert_int_equal(hb_scpi_query(lcr, "*OPC?", reply, sizeof reply), HB_OK);

	/* disconnect: the link is closed under the client */
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "disconnect=1"), HB_OK);
	assert_int_equal(hb_scpi_query(lcr, "*OPC?", reply, sizeof reply), HB_ERR_CLOSED);
	clock_gettime(CLOCK_MONOTONIC, &w1);
	/* 60 s and more of time-outs took far less wall time */
	assert_true((double)(w1.tv_sec - w0.tv_sec) < 30);
	hb_scpi_close(lcr);
	hb_sim_inproc_shutdown();
	/* a link outliving its bench reports a closed link, not a crash */
	vbench("ideal");
	hb_scpi *dcs = open_raw("sim:supply");
	hb_sim_inproc_shutdown();
	assert_int_equal(hb_scpi_write(dcs, "OUTP OFF"), HB_ERR_CLOSED);
	hb_scpi_close(dcs);
}

static void test_virtual_switch(void **state)
{
	(void)state;
	vbench("default");
	/* a stop request interrupts the virtual sleep as the wall one */
	volatile sig_atomic_t stop = 1;
	double t = hb_clock_now();
	assert_int_equal(hb_clock_sleep(5, &stop), HB_ERR_INTERRUPTED);
	assert_near(hb_clock_now(), t, 0);
	assert_int_equal(hb_clock_sleep(5, NULL), HB_OK);
	assert_near(hb_clock_now(), t + 5, 0);
	double v;
	assert_int_equal(hb_sim_get_param(hb_sim_inproc(), "virtual_time", &v), HB_OK);
	assert_near(v, 1, 0);
	/* switched off: the wall clock is back */
	assert_int_equal(hb_sim_inproc_virtual(false), HB_OK);
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	assert_near(hb_clock_now(), (double)ts.tv_sec + ts.tv_nsec * 1e-9, 1.0);
	/* the parameter is refused out of range, like any other */
	assert_int_equal(hb_sim_set_param(hb_sim_inproc(), "virtual_time", 2), HB_ERR_ARG);
	assert_int_equal(hb_sim_load_dynamics(hb_sim_inproc(), "bogus"), HB_ERR_ARG);
	assert_non_null(strstr(hb_sim_errmsg(hb_sim_inproc()), "overshoot"));
	hb_sim_inproc_shutdown();
}

static void test_dynamics_presets(void **state)
{
	(void)state;
	static const struct {
		const char *name;
		double tau, slew, zeta, f_n, lat, avg;
	} want[] = {
		{ "default", 0.2, 0, 0.7, 0, 0, 0 },	{ "ideal", 1e-3, 0, 0.7, 0, 0, 0 },
		{ "lag40", 0.04, 0, 0.7, 0, 0, 0 },	{ "slew", 5e-3, 10, 0.7, 0, 0, 0 },
		{ "overshoot", 0.02, 0, 0.35, 8, 0, 0 }, { "filtered", 0.02, 0, 0.7, 0, 0, 0.1 },
		{ "latent", 0.02, 0, 0.7, 0, 0.06, 0 },
	};
	hb_sim *sim = NULL;
	assert_int_equal(hb_sim_new(NULL, &sim), HB_OK);
	int n = 0;
	for (const char *const *name = hb_sim_dynamics(); *name; name++, n++) {
		assert_string_equal(*name, want[n].name);
		assert_int_equal(hb_sim_load_dynamics(sim, *name), HB_OK);
		const char *keys[] = { "tau_settle", "slew", "zeta", "f_n", "rb_latency", "rb_average" };
		double vals[] = { want[n].tau, want[n].slew, want[n].zeta, want[n].f_n, want[n].lat, want[n].avg };
		for (int k = 0; k < 6; k++) {
			double v;
			assert_int_equal(hb_sim_get_param(sim, keys[k], &v), HB_OK);
			assert_near(v, vals[k], 0);
		}
	}
	assert_int_equal(n, 7);
	/* the part is untouched by a dynamics preset */
	assert_int_equal(hb_sim_load_preset(sim, "air-core"), HB_OK);
	assert_int_equal(hb_sim_load_dynamics(sim, "slew"), HB_OK);
	double mu;
	assert_int_equal(hb_sim_get_param(sim, "mu_i", &mu), HB_OK);
	assert_near(mu, 1, 0);
	hb_sim_free(sim);
}

/* henrybench sim --dynamics: an unknown name and a virtual clock for a
 * served bench are usage errors (exit 2); the names are in --help. */
static void test_cli_dynamics(void **state)
{
	(void)state;
	char *bad[] = { "sim", "--dynamics", "bogus", "--lcr", "pty", NULL };
	assert_int_equal(hb_cmd_sim(5, bad), HB_EXIT_USAGE);
	char *virt[] = { "sim", "--dynamics", "slew", "--param", "virtual_time=1", "--lcr", "pty", NULL };
	assert_int_equal(hb_cmd_sim(7, virt), HB_EXIT_USAGE);
	char *range[] = { "sim", "--dynamics", "latent", "--param", "rb_latency=2s", "--lcr", "pty", NULL };
	assert_int_equal(hb_cmd_sim(7, range), HB_EXIT_USAGE);

	fflush(stdout);
	int saved = dup(fileno(stdout));
	assert_true(saved >= 0);
	/* --help writes to stdout: catch it in a temporary file */
	FILE *tmp = tmpfile();
	assert_non_null(tmp);
	dup2(fileno(tmp), fileno(stdout));
	char *help[] = { "sim", "--help", NULL };
	assert_int_equal(hb_cmd_sim(2, help), HB_EXIT_OK);
	fflush(stdout);
	dup2(saved, fileno(stdout));
	close(saved);
	rewind(tmp);
	char buf[4096];
	size_t got = fread(buf, 1, sizeof buf - 1, tmp);
	buf[got] = '\0';
	fclose(tmp);
	assert_non_null(strstr(buf, "--dynamics NAME"));
	for (const char *const *n = hb_sim_dynamics(); *n; n++)
		assert_non_null(strstr(buf, *n));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_first_order_exact),
		cmocka_unit_test(test_second_order_exact),
		cmocka_unit_test(test_dynamics_presets),
		cmocka_unit_test(test_overshoot_preset),
		cmocka_unit_test(test_slew_ramp),
		cmocka_unit_test(test_off_decays_continuously),
		cmocka_unit_test(test_readback_latency),
		cmocka_unit_test(test_readback_average),
		cmocka_unit_test(test_reading_integrates_moving_bias),
		cmocka_unit_test(test_plain_supply),
		cmocka_unit_test(test_virtual_repeatable),
		cmocka_unit_test(test_virtual_faults),
		cmocka_unit_test(test_virtual_switch),
		cmocka_unit_test(test_cli_dynamics),
	};
	/* The user's own profiles must not change what the drivers see. */
	unsetenv("HENRYBENCH_PROFILE_PATH");
	return cmocka_run_group_tests(tests, NULL, NULL);
}
