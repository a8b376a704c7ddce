/* tests/test_supply_safety.c - the supply is never surprised: current found flowing is ramped down first, no output off while current flows on any path, dropout ends the sweep failed; the simulator's log is the witness */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "drivers/hb_drivers.h"
#include "src/cli/demo.h"
#include "src/bench/bench.h"
#include "sim_witness.h"

/* Simulated time runs a hundred times faster than the wall clock. */
#define TIME_SCALE 0.01
/* The switch-off threshold the plans below use. */
#define OFF_THRESHOLD 0.02
/* Only to stop a broken test from hanging; never a pass/fail criterion. */
#define HANG_GUARD_S 30.0

static char tmpdir[256];
static FILE *witness;

static double wall_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

static double sim_state(const char *key)
{
	double v = NAN;
	assert_int_equal(hb_sim_get_param(hb_sim_inproc(), key, &v), HB_OK);
	return v;
}

static int group_setup(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/hb-test-safety-XXXXXX");
	if (!mkdtemp(tmpdir))
		return -1;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	signal(SIGPIPE, SIG_IGN);
	return 0;
}

static int group_teardown(void **state)
{
	(void)state;
	char cmd[300];
	if (getenv("HB_KEEP")) return 0;
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", tmpdir);
	return system(cmd) == 0 ? 0 : -1;
}

static int bench_setup(void **state)
{
	(void)state;
	hb_sweep_clear_signal();
	hb_sweep_install_signals();
	if (hb_demo_configure_sim(TIME_SCALE, 11, 0) != HB_OK)
		return -1;
	hb_sim *sim = hb_sim_inproc();
	if (hb_sim_set_fault(sim, HB_SIM_LCR, "none") != HB_OK || hb_sim_set_fault(sim, HB_SIM_SUPPLY, "none") != HB_OK)
		return -1;
	char path[400];
	snprintf(path, sizeof path, "%s/witness.log", tmpdir);
	witness = fopen(path, "w+");
	if (!witness)
		return -1;
	hb_sim_set_log(sim, witness);
	return 0;
}

static int bench_teardown(void **state)
{
	(void)state;
	hb_sim_set_log(hb_sim_inproc(), NULL);
	hb_sim_inproc_shutdown();
	hb_sweep_restore_signals();
	hb_sweep_clear_signal();
	if (witness)
		fclose(witness);
	witness = NULL;
	return 0;
}

/* The whole witness log so far, NUL-terminated; caller frees. */
static char *witness_text(void)
{
	fflush(witness);
	long end = ftell(witness);
	char *text = calloc(1, (size_t)end + 1);
	assert_non_null(text);
	rewind(witness);
	size_t got = fread(text, 1, (size_t)end, witness);
	text[got] = '\0';
	fseek(witness, 0, SEEK_END);
	return text;
}

static void plan_for(hb_sweep_plan *plan, double ramp)
{
	hb_sweep_plan_defaults(plan);
	plan->from = 0;
	plan->to = 4;
	plan->steps = 9;
	plan->limits.max_current = 5;
	plan->limits.max_voltage = 2;
	plan->limits.max_power = 10;
	plan->limits.ramp_rate = ramp;
	plan->limits.off_threshold = OFF_THRESHOLD;
}

typedef enum { HAND_NONE, HAND_SIGNAL, HAND_OUTPUT_OFF, HAND_METER_DEAF, HAND_MUTE_READBACK } hand_kind;

/* The sink, and a second hand on the bench that acts after a given point. */
typedef struct sink {
	int points;
	int act_after;
	hand_kind hand;
	int signo;
	hb_scpi *other; /* a second connection to the supply: the front panel */
	char notices[1024];
} sink;

static int on_point(void *ctx, const hb_sweep_point *p, int total)
{
	(void)p;
	(void)total;
	sink *s = ctx;
	s->points++;
	if (s->points - 1 != s->act_after)
		return HB_OK;
	switch (s->hand) {
	case HAND_SIGNAL:
		raise(s->signo);
		break;
	case HAND_OUTPUT_OFF:
		assert_int_equal(hb_scpi_write(s->other, "OUTP OFF"), HB_OK);
		break;
	case HAND_METER_DEAF:
		assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_LCR, "late=1500"), HB_OK);
		break;
	case HAND_MUTE_READBACK:
		assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_SUPPLY, "mute=MEAS:CURR"), HB_OK);
		break;
	default:
		break;
	}
	return HB_OK;
}

static void on_notice(void *ctx, const char *text)
{
	sink *s = ctx;
	size_t len = strlen(s->notices);
	snprintf(s->notices + len, sizeof s->notices - len, "%s\n", text);
}

static int sweep_with(const hb_sweep_plan *plan, sink *s, hb_sweep_result *res)
{
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr?timeout=300", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply?timeout=200", NULL, &supply), HB_OK);
	hb_sweep_callbacks cb = { s, on_point, NULL, on_notice, NULL };
	int rc = hb_sweep_run(lcr, supply, plan, &cb, res);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	return rc;
}

/* Sets the supply to `amps` with its output on through a connection of
 * its own, as a killed run or a hand on the front panel leaves it, and
 * waits (bounded) until the current has arrived. */
static void preload(hb_scpi **other, double amps)
{
	assert_int_equal(hb_scpi_open("sim:supply", other), HB_OK);
	char cmd[64];
	snprintf(cmd, sizeof cmd, "SOUR:VOLT 2;:SOUR:CURR %g;:OUTP ON", amps);
	assert_int_equal(hb_scpi_write(*other, cmd), HB_OK);
	double t0 = wall_now();
	/* Poll the model through a query so the server advances it. */
	while (fabs(sim_state("state.amps") - amps) > 0.01 * amps) {
		char reply[64];
		assert_int_equal(hb_scpi_query(*other, "MEAS:CURR?", reply, sizeof reply), HB_OK);
		assert_true(wall_now() - t0 < HANG_GUARD_S);
	}
}

/* A supply left sourcing 4 A is announced and ramped down at the ramp
 * rate before anything else; the output is never cut under that current. */
static void test_current_found_flowing_is_ramped_down_first(void **state)
{
	(void)state;
	hb_scpi *other = NULL;
	preload(&other, 4.0);
	char *before = witness_text();
	size_t mark = strlen(before);
	free(before);

	hb_sweep_plan plan;
	plan_for(&plan, 20.0); /* 1 A per 50 ms slice */
	sink s = { .act_after = -1 };
	hb_sweep_result res;
	assert_int_equal(sweep_with(&plan, &s, &res), HB_OK);
	assert_int_equal(res.end, HB_SWEEP_COMPLETE);
	assert_true(fabs(res.start_amps - 4.0) < 0.05);
	assert_non_null(strstr(s.notices, "already sourcing"));

	char *log = witness_text();
	const char *sweep_part = log + mark;
	double sp[256];
	int n = witness_setpoints_after(sweep_part, sp, 256);
	assert_true(n > 4);
	/* The first set-points walk down from 4 A in steps no larger than the
	 * ramp allows: ramp_rate * 50 ms = 1 A (plus rounding of the log),
	 * starting from the current found flowing. */
	double prev = res.start_amps; /* the ramp starts from the measured current */
	int i = 0;
	for (; i < n && sp[i] < prev + 1e-9; i++) {
		if (prev - sp[i] > 1.0 + 1e-3)
			print_error("set-point stepped from %.4f A to %.4f A\n", prev, sp[i]);
		assert_true(prev - sp[i] <= 1.0 + 1e-3);
		prev = sp[i];
		if (sp[i] == 0)
			break;
	}
	assert_true(i < n && sp[i] == 0);
	/* ...and before any switch-off the log shows. */
	const char *first_off = strstr(sweep_part, "supply output OFF");
	const char *zero = strstr(sweep_part, "supply setpoint 0.0000 A");
	assert_non_null(zero);
	assert_true(!first_off || zero < first_off);
	assert_true(witness_every_off_below(log, OFF_THRESHOLD) >= 1);
	free(log);
	hb_scpi_close(other);
	assert_true(sim_state("state.output") == 0);
}

/* Normal end, each signal, a meter that stops answering: the output goes
 * off only once the current has decayed below the threshold. */
static void test_no_output_off_under_current_on_any_path(void **state)
{
	(void)state;
	struct {
		hand_kind hand;
		int signo;
		hb_sweep_end end;
	} paths[] = {
		{ HAND_NONE, 0, HB_SWEEP_COMPLETE },
		{ HAND_SIGNAL, SIGINT, HB_SWEEP_ABORTED },
		{ HAND_SIGNAL, SIGTERM, HB_SWEEP_ABORTED },
		{ HAND_SIGNAL, SIGHUP, HB_SWEEP_ABORTED },
		{ HAND_METER_DEAF, 0, HB_SWEEP_FAILED },
	};
	for (size_t k = 0; k < sizeof paths / sizeof paths[0]; k++) {
		hb_sweep_clear_signal();
		assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_LCR, "none"), HB_OK);
		hb_sweep_plan plan;
		plan_for(&plan, 50.0);
		sink s = { .act_after = 5, .hand = paths[k].hand, .signo = paths[k].signo };
		hb_sweep_result res;
		sweep_with(&plan, &s, &res);
		assert_int_equal(res.end, paths[k].end);
		assert_false(res.current_may_flow);
		assert_true(fabs(res.off_amps) < OFF_THRESHOLD);
		assert_true(isfinite(res.decay_seconds));
		assert_true(sim_state("state.output") == 0);
	}
	char *log = witness_text();
	/* One switch-off per path, each below the threshold. */
	assert_true(witness_every_off_below(log, OFF_THRESHOLD) >= 5);
	free(log);
}

/* The output switched off mid-sweep from a second connection (the front
 * panel, a trip, an interlock) ends the sweep failed, and no point after
 * it is stored. */
static void test_output_off_mid_sweep_ends_failed(void **state)
{
	(void)state;
	hb_sweep_plan plan;
	plan_for(&plan, 50.0);
	sink s = { .act_after = 3, .hand = HAND_OUTPUT_OFF };
	assert_int_equal(hb_scpi_open("sim:supply", &s.other), HB_OK);
	hb_sweep_result res;
	int rc = sweep_with(&plan, &s, &res);
	assert_int_not_equal(rc, HB_OK);
	assert_int_equal(res.end, HB_SWEEP_FAILED);
	assert_int_equal(res.cause, HB_CAUSE_BENCH);
	assert_int_equal(s.points, 4);
	assert_non_null(strstr(res.reason, "output went off"));
	hb_scpi_close(s.other);
	assert_true(sim_state("state.output") == 0);
}

/* The current read-back stops answering mid-sweep: the sweep fails, and
 * the shut-down still ramps from the last set-point at the ramp rate,
 * waits for the decay it cannot see, and only then switches off. */
static void test_readback_lost_during_shutdown_still_ramps(void **state)
{
	(void)state;
	hb_sweep_plan plan;
	plan_for(&plan, 20.0); /* 1 A per 50 ms slice */
	sink s = { .act_after = 6, .hand = HAND_MUTE_READBACK };
	hb_sweep_result res;
	assert_int_not_equal(sweep_with(&plan, &s, &res), HB_OK);
	assert_int_equal(res.end, HB_SWEEP_FAILED);
	assert_false(res.current_may_flow);
	assert_non_null(strstr(res.reason, "read-back"));
	assert_true(sim_state("state.output") == 0);
	char *log = witness_text();
	/* From the highest set-point (3 A at point 7) down to zero, no step
	 * larger than the ramp allows. */
	const char *top = strstr(log, "supply setpoint 3.0000 A");
	assert_non_null(top);
	double sp[64];
	int n = witness_setpoints_after(top, sp, 64);
	assert_true(n >= 4);
	for (int i = 1; i < n; i++) {
		if (sp[i - 1] - sp[i] > 1.0 + 1e-3)
			print_error("set-point stepped from %.4f A to %.4f A\n", sp[i - 1], sp[i]);
		assert_true(sp[i - 1] - sp[i] <= 1.0 + 1e-3);
	}
	assert_true(sp[n - 1] == 0);
	if (getenv("HB_TEST_VERBOSE"))
		print_message("%s", log);
	assert_true(witness_every_off_below(log, OFF_THRESHOLD) >= 1);
	free(log);
}

/* A ramp whose slices nearly divide the way down (1.2 A in 0.2 A slices)
 * must end on a set-point of exactly zero, not on the rounding residue of
 * six subtractions (5.5e-17 A): the supply would hold a "zero" that is
 * not one, and the state machine would believe it was. */
static void test_ramp_ends_on_exact_zero(void **state)
{
	(void)state;
	hb_sweep_plan plan;
	plan_for(&plan, 4.0); /* 0.2 A per 50 ms slice */
	plan.to = 1.2;
	plan.steps = 2;
	sink s = { .act_after = -1 };
	hb_sweep_result res;
	assert_int_equal(sweep_with(&plan, &s, &res), HB_OK);
	assert_true(sim_state("state.setpoint") == 0.0);
	assert_true(sim_state("state.output") == 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_current_found_flowing_is_ramped_down_first, bench_setup,
						bench_teardown),
		cmocka_unit_test_setup_teardown(test_no_output_off_under_current_on_any_path, bench_setup,
						bench_teardown),
		cmocka_unit_test_setup_teardown(test_output_off_mid_sweep_ends_failed, bench_setup, bench_teardown),
		cmocka_unit_test_setup_teardown(test_readback_lost_during_shutdown_still_ramps, bench_setup,
						bench_teardown),
		cmocka_unit_test_setup_teardown(test_ramp_ends_on_exact_zero, bench_setup, bench_teardown),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
