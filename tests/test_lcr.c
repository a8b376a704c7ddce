/* tests/test_lcr.c - LCR meter driver against the simulated meter and a scripted meter speaking another dialect */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <limits.h>
#include <math.h>
#include <pthread.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "drivers/hb_drivers.h"
#include "bench_fixture.h"

static char profiles_dir[1024]; /* drivers/profiles of the source tree */

static int setup(void **state)
{
	bench_fixture_setup(state);
	/* The forced-profile test opens an example profile by path. */
	char exe[900];
	ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
	assert_true(n > 0);
	exe[n] = '\0';
	for (int up = 0; up < 3; up++) {
		char *slash = strrchr(exe, '/');
		assert_non_null(slash);
		*slash = '\0';
		snprintf(profiles_dir, sizeof profiles_dir, "%s/drivers/profiles", exe);
		if (access(profiles_dir, F_OK) == 0)
			break;
	}
	return 0;
}

static void clear_faults(void)
{
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_LCR, "none"), HB_OK);
}

static hb_lcr *open_sim(const char *resource)
{
	hb_lcr *lcr = NULL;
	int rc = hb_lcr_open(resource, NULL, &lcr);
	if (rc != HB_OK)
		print_error("open %s: %s\n", resource, hb_lcr_errmsg(lcr));
	assert_int_equal(rc, HB_OK);
	return lcr;
}

static void test_open_identifies(void **state)
{
	(void)state;
	hb_lcr *lcr = open_sim("sim:lcr");
	assert_string_equal(hb_lcr_idn(lcr)->maker, "Henrybench");
	assert_string_equal(hb_lcr_profile_name(lcr), "generic-lcr");
	assert_non_null(hb_lcr_scpi(lcr));
	assert_true(hb_lcr_supports(lcr, "dcr"));
	assert_true(hb_lcr_supports(lcr, "bias"));
	assert_true(hb_lcr_supports(lcr, "correct.open"));
	assert_false(hb_lcr_supports(lcr, "voltage"));
	hb_lcr_close(lcr);
	hb_lcr_close(NULL);
	assert_string_equal(hb_lcr_errmsg(NULL), "out of memory");
}

static void test_every_operation(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = open_sim("sim:lcr");
	assert_int_equal(hb_lcr_reset(lcr), HB_OK);
	assert_int_equal(hb_lcr_set_frequency(lcr, 10e3), HB_OK);
	assert_int_equal(hb_lcr_set_level(lcr, HB_LEVEL_VOLTAGE, 0.5), HB_OK);
	assert_int_equal(hb_lcr_set_level(lcr, HB_LEVEL_CURRENT, 1e-3), HB_OK);
	assert_int_equal(hb_lcr_set_averaging(lcr, 2, HB_APERTURE_SHORT), HB_OK);

	static const hb_pair pairs[] = { HB_PAIR_L_R, HB_PAIR_L_Q, HB_PAIR_L_D, HB_PAIR_Z_THETA };
	for (size_t i = 0; i < 4; i++) {
		assert_int_equal(hb_lcr_set_function(lcr, i % 2 ? HB_EQUIV_PARALLEL : HB_EQUIV_SERIES, pairs[i]), HB_OK);
		hb_lcr_reading r;
		int rc = hb_lcr_measure(lcr, &r);
		if (rc != HB_OK)
			print_error("%s\n", hb_lcr_errmsg(lcr));
		assert_int_equal(rc, HB_OK);
		assert_false(r.overload);
		assert_true(isfinite(r.primary) && r.primary > 0);
		assert_true(isfinite(r.secondary));
	}
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_R), HB_OK);
	hb_lcr_reading r;
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_int_equal(r.status, 0);
	/* an inductor of the simulated bench: tens of uH to tens of mH */
	assert_true(r.primary > 1e-6 && r.primary < 1.0);

	double ohms = -1;
	assert_int_equal(hb_lcr_measure_dcr(lcr, &ohms), HB_OK);
	assert_true(ohms > 0 && ohms < 1e3);

	assert_int_equal(hb_lcr_set_internal_bias(lcr, true, 5e-3), HB_OK);
	assert_int_equal(hb_lcr_set_internal_bias(lcr, false, 0), HB_OK);
	assert_int_equal(hb_lcr_correct(lcr, HB_CORRECTION_OPEN), HB_OK);
	assert_int_equal(hb_lcr_correct(lcr, HB_CORRECTION_SHORT), HB_OK);

	hb_scpi_error list[4];
	size_t count = 99;
	bool lost = true;
	assert_int_equal(hb_lcr_errors(lcr, list, 4, &count, &lost), HB_OK);
	assert_int_equal(count, 0);
	assert_false(lost);
	hb_lcr_close(lcr);
}

static void test_instrument_error_named(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = open_sim("sim:lcr");
	/* 1 GHz is beyond the dialect's 10 MHz: the meter queues -222 */
	assert_int_equal(hb_lcr_set_frequency(lcr, 1e9), HB_ERR_INSTRUMENT);
	const char *msg = hb_lcr_errmsg(lcr);
	assert_non_null(strstr(msg, "set frequency"));
	assert_non_null(strstr(msg, "-222"));
	assert_non_null(strstr(msg, "IMP:FREQ 1000000000"));
	/* the queue was emptied by the check: the next setting is clean */
	assert_int_equal(hb_lcr_set_frequency(lcr, 1e3), HB_OK);
	assert_int_equal(hb_lcr_set_averaging(lcr, 100000, HB_APERTURE_SHORT), HB_ERR_INSTRUMENT);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "set averaging"));
	hb_lcr_close(lcr);
}

static void test_bad_arguments(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = open_sim("sim:lcr");
	assert_int_equal(hb_lcr_set_frequency(lcr, -1), HB_ERR_ARG);
	assert_int_equal(hb_lcr_set_frequency(lcr, NAN), HB_ERR_ARG);
	assert_int_equal(hb_lcr_set_level(lcr, HB_LEVEL_VOLTAGE, 0), HB_ERR_ARG);
	assert_int_equal(hb_lcr_set_averaging(lcr, 0, HB_APERTURE_SHORT), HB_ERR_ARG);
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_SERIES, (hb_pair)9), HB_ERR_ARG);
	assert_int_equal(hb_lcr_set_internal_bias(lcr, true, -1), HB_ERR_ARG);
	assert_int_equal(hb_lcr_measure(lcr, NULL), HB_ERR_ARG);
	assert_int_equal(hb_lcr_set_frequency(NULL, 1e3), HB_ERR_ARG);
	hb_lcr_close(lcr);
}

static void test_timeout(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = open_sim("sim:lcr?timeout=150");
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_LCR, "delay=1000"), HB_OK);
	hb_lcr_reading r;
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "measure"));
	assert_false(r.overload);
	assert_true(isnan(r.primary));
	clear_faults();
	hb_lcr_close(lcr);
}

static void test_garbled_reply(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = open_sim("sim:lcr");
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_LCR, "garble=1"), HB_OK);
	hb_lcr_reading r;
	int rc = hb_lcr_measure(lcr, &r);
	assert_int_equal(rc, HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "measure"));
	clear_faults();
	/* the link recovers once the replies are whole again */
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	hb_lcr_close(lcr);
}

static void test_forced_profiles(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr?profile=generic-supply", NULL, &lcr), HB_ERR_PROFILE);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "generic-supply"));
	hb_lcr_close(lcr);
	assert_int_equal(hb_lcr_open("sim:lcr?profile=no-such-profile", NULL, &lcr), HB_ERR_NOTFOUND);
	hb_lcr_close(lcr);

	/* A profile without the optional operations: the driver says unsupported
	 * before a byte goes out. */
	char resource[1200];
	snprintf(resource, sizeof resource, "sim:lcr?profile=%s/example-lcr-microhenry.ini", profiles_dir);
	lcr = open_sim(resource);
	assert_string_equal(hb_lcr_profile_name(lcr), "example-lcr-microhenry");
	assert_false(hb_lcr_supports(lcr, "dcr"));
	assert_false(hb_lcr_supports(lcr, "bias"));
	double ohms;
	assert_int_equal(hb_lcr_measure_dcr(lcr, &ohms), HB_ERR_UNSUPPORTED);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "dcr"));
	assert_int_equal(hb_lcr_set_internal_bias(lcr, true, 0.01), HB_ERR_UNSUPPORTED);
	assert_int_equal(hb_lcr_correct(lcr, HB_CORRECTION_SHORT), HB_ERR_UNSUPPORTED);
	assert_int_equal(hb_lcr_set_level(lcr, HB_LEVEL_CURRENT, 1e-3), HB_ERR_UNSUPPORTED);
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_D), HB_ERR_UNSUPPORTED);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "pair.ld"));
	assert_int_equal(hb_lcr_set_averaging(lcr, 1, HB_APERTURE_MEDIUM), HB_ERR_UNSUPPORTED);
	hb_lcr_close(lcr);
}

/* A simulator of its own served over TCP loopback by a thread. */
typedef struct tcp_bench {
	hb_sim *sim;
	pthread_t thread;
	volatile sig_atomic_t stop;
	int port;
} tcp_bench;

static void *bench_main(void *arg)
{
	tcp_bench *b = arg;
	hb_sim_run(b->sim, &b->stop);
	return NULL;
}

static void test_over_tcp(void **state)
{
	(void)state;
	tcp_bench b = { 0 };
	assert_int_equal(hb_sim_new(NULL, &b.sim), HB_OK);
	assert_int_equal(hb_sim_set_param(b.sim, "time_scale", 1e-3), HB_OK);
	assert_int_equal(hb_sim_listen_tcp(b.sim, HB_SIM_LCR, "127.0.0.1", 0, &b.port), HB_OK);
	assert_int_equal(pthread_create(&b.thread, NULL, bench_main, &b), 0);
	char resource[64];
	snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d", b.port);
	hb_lcr *lcr = open_sim(resource);
	assert_string_equal(hb_lcr_profile_name(lcr), "generic-lcr");
	assert_int_equal(hb_lcr_set_frequency(lcr, 1e3), HB_OK);
	assert_int_equal(hb_lcr_set_averaging(lcr, 1, HB_APERTURE_SHORT), HB_OK);
	hb_lcr_reading r;
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_true(r.primary > 0);
	hb_lcr_close(lcr);
	b.stop = 1;
	pthread_join(b.thread, NULL);
	hb_sim_free(b.sim);
}

/* ---------------- scripted meter: another dialect, through the profile alone ---------------- */

static hb_lcr *open_peer(peer *p, const peer_step *steps, size_t n, const char *profile)
{
	assert_int_equal(peer_start_tcp(p, steps, n), 0);
	char resource[1400];
	if (profile)
		snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=1000&profile=%s", p->port, profile);
	else
		snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=1000", p->port);
	hb_lcr *lcr = NULL;
	int rc = hb_lcr_open(resource, NULL, &lcr);
	if (rc != HB_OK)
		print_error("%s\n", hb_lcr_errmsg(lcr));
	assert_int_equal(rc, HB_OK);
	return lcr;
}

static void close_peer(peer *p, hb_lcr *lcr)
{
	hb_lcr_close(lcr);
	bench_peer_finish(p);
}

static void test_other_dialect(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Fennick Labs,FL-9,0042,2.1\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		{ "SIGNAL:FREQ 2500", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "CIRCUIT S;PARAM LSQ", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "ACQ:COUNT 8", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "ACQ:SPEED SLOW", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		/* status first, inductance in uH */
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,+123.5,45.25\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "LOWSIG,1.0,2.0\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "OVER,9.9E37,9.9E37\n", 0, 0 },
		/* a garbled reading is asked for once more: the second one counts */
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,abc,1\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,+100.0,40.0\n", 0, 0 },
		/* two garbled in a row still fail, naming the second */
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,abc,1\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,abc,1\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,1\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "OK,1\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "HUH,1,2\n", 0, 0 },
		{ "ACQ:SINGLE?", PEER_REPLY, "HUH,1,2\n", 0, 0 },
		/* a bad value: the meter queues an error, the driver names the operation */
		{ "SIGNAL:AMPL 5", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "-222,\"Data out of range\"\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
	};
	peer p;
	hb_lcr *lcr = open_peer(&p, steps, sizeof steps / sizeof steps[0], NULL);
	/* matched on the IDN, not forced */
	assert_string_equal(hb_lcr_profile_name(lcr), "example-lcr-microhenry");
	assert_int_equal(hb_lcr_set_frequency(lcr, 2500), HB_OK);
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_Q), HB_OK);
	assert_int_equal(hb_lcr_set_averaging(lcr, 8, HB_APERTURE_LONG), HB_OK);

	hb_lcr_reading r;
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_true(fabs(r.primary - 123.5e-6) < 1e-12);
	assert_true(fabs(r.secondary - 45.25) < 1e-12);
	assert_int_equal(r.status, 0);

	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_int_equal(r.status, 2); /* mapped token, not an overload */
	assert_false(r.overload);

	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_OVERLOAD);
	assert_true(r.overload);
	assert_true(isnan(r.primary) && isnan(r.secondary));

	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_true(fabs(r.primary - 100e-6) < 1e-12);
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "field 2"));
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "has 2 field(s)"));
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "status"));

	assert_int_equal(hb_lcr_set_level(lcr, HB_LEVEL_VOLTAGE, 5), HB_ERR_INSTRUMENT);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "set voltage level to 5 V: instrument error -222 \"Data out of range\""));
	close_peer(&p, lcr);
}

static void test_overload_generic(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Nobody,Box,1,1\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		/* generic-lcr lists these as optional: each is probed at open */
		{ "IMP:FUNC SER,LR", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "IMP:AVER 1", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "IMP:APER MED", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "IMP:READ?", PEER_REPLY, "9.9E37,9.9E37,1\n", 0, 0 },
		/* status 1 alone marks overload even with plausible numbers */
		{ "IMP:READ?", PEER_REPLY, "1.0E-4,2.0,1\n", 0, 0 },
		{ "IMP:READ?", PEER_REPLY, "1.0E-4,2.0,0\n", 0, 0 },
		{ "IMP:DCR?", PEER_REPLY, "9.91E37\n", 0, 0 },
		/* lost twice: the retry after a drain does not help */
		{ "IMP:READ?", PEER_SILENT, NULL, 0, 0 },
		{ "IMP:READ?", PEER_SILENT, NULL, 0, 0 },
	};
	peer p;
	hb_lcr *lcr = open_peer(&p, steps, sizeof steps / sizeof steps[0], "generic-lcr");
	hb_lcr_reading r;
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_OVERLOAD);
	assert_true(r.overload);
	assert_int_equal(r.status, 1);
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_OVERLOAD);
	assert_true(r.overload);
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_true(fabs(r.primary - 1e-4) < 1e-15);
	double ohms;
	assert_int_equal(hb_lcr_measure_dcr(lcr, &ohms), HB_ERR_OVERLOAD);
	/* the meter stays silent: a timeout, named */
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "measure"));
	close_peer(&p, lcr);
}

static void test_open_failures(void **state)
{
	(void)state;
	hb_lcr *lcr = NULL;
	assert_int_equal(hb_lcr_open("bogus://x", NULL, &lcr), HB_ERR_ARG);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "bogus"));
	hb_lcr_close(lcr);
	/* an instrument that never answers *IDN? */
	static const peer_step steps[] = { { "*IDN?", PEER_SILENT, NULL, 0, 0 } };
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, 1), 0);
	char resource[80];
	snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=200", p.port);
	assert_int_equal(hb_lcr_open(resource, NULL, &lcr), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "*IDN?"));
	hb_lcr_close(lcr);
	peer_finish(&p);
}

/* What the meter can be asked for, decided before anything is sent. The
 * simulated meter speaks generic-lcr, which has every setting
 * (drivers/profiles/generic-lcr.ini). */
static void test_can_generic(void **state)
{
	(void)state;
	clear_faults();
	hb_lcr *lcr = open_sim("sim:lcr");
	assert_true(hb_lcr_can(lcr, "averaging=8"));
	assert_true(hb_lcr_can(lcr, "aperture=long"));
	assert_true(hb_lcr_can(lcr, "function=parallel-lq"));
	assert_true(hb_lcr_can(lcr, "level.current"));
	assert_false(hb_lcr_can(lcr, "function=series-xx"));
	assert_false(hb_lcr_can(lcr, "aperture=slow"));
	assert_false(hb_lcr_can(lcr, "averaging=0"));
	assert_false(hb_lcr_can(NULL, "averaging=1"));
	hb_lcr_close(lcr);
}

/* A meter that always measures series L-R (function.fixed = ls-rs) and has
 * neither averaging nor aperture: asking for what it does sends nothing
 * and succeeds; asking for anything else is refused. */
static void test_fixed_function_meter(void **state)
{
	(void)state;
	char dir[] = "/tmp/hb-lcr-XXXXXX";
	assert_non_null(mkdtemp(dir));
	char path[sizeof dir + 32];
	snprintf(path, sizeof path, "%s/fixed.ini", dir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs("[profile]\nname = fixed\nkind = lcr\ncheck.errors = no\n[lcr]\nfrequency = F {hz:real}\n"
	      "function.fixed = ls-rs\nmeasure = M?\n",
	      f);
	fclose(f);
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Nobody,Fixed bridge,1,1\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		/* set_function and set_averaging send nothing; the next line is the reading */
		{ "M?", PEER_REPLY, "1.0E-4,0.05\n", 0, 0 },
	};
	peer p;
	hb_lcr *lcr = open_peer(&p, steps, sizeof steps / sizeof steps[0], path);
	assert_true(hb_lcr_can(lcr, "function=series-lr"));
	assert_false(hb_lcr_can(lcr, "function=parallel-lr"));
	assert_false(hb_lcr_can(lcr, "function=series-lq"));
	assert_true(hb_lcr_can(lcr, "averaging=1"));
	assert_false(hb_lcr_can(lcr, "averaging=8"));
	assert_true(hb_lcr_can(lcr, "aperture=medium"));
	assert_false(hb_lcr_can(lcr, "aperture=long"));
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_R), HB_OK);
	assert_int_equal(hb_lcr_set_function(lcr, HB_EQUIV_PARALLEL, HB_PAIR_L_R), HB_ERR_UNSUPPORTED);
	assert_non_null(strstr(hb_lcr_errmsg(lcr), "measures only ls-rs"));
	assert_int_equal(hb_lcr_set_averaging(lcr, 1, HB_APERTURE_MEDIUM), HB_OK);
	hb_lcr_reading r;
	assert_int_equal(hb_lcr_measure(lcr, &r), HB_OK);
	assert_true(fabs(r.primary - 1e-4) < 1e-15);
	close_peer(&p, lcr);
	unlink(path);
	rmdir(dir);
}

/* generic-lcr lists function, averaging and aperture as optional: a meter
 * that rejects the aperture command (-113, SCPI-99 21.8.9) at open has it
 * marked absent, and only the medium aperture is then possible. */
static void test_probe_marks_aperture_absent(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Nobody,Bridge,1,1\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		{ "IMP:FUNC SER,LR", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "IMP:AVER 1", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "IMP:APER MED", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "-113,\"Undefined header\"\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		/* averaging still goes out; the aperture does not */
		{ "IMP:AVER 4", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
	};
	peer p;
	hb_lcr *lcr = open_peer(&p, steps, sizeof steps / sizeof steps[0], "generic-lcr");
	assert_false(hb_lcr_supports(lcr, "aperture"));
	assert_true(hb_lcr_supports(lcr, "averaging"));
	assert_false(hb_lcr_can(lcr, "aperture=long"));
	assert_true(hb_lcr_can(lcr, "aperture=medium"));
	assert_true(hb_lcr_can(lcr, "averaging=4"));
	assert_int_equal(hb_lcr_set_averaging(lcr, 4, HB_APERTURE_LONG), HB_ERR_UNSUPPORTED);
	assert_int_equal(hb_lcr_set_averaging(lcr, 4, HB_APERTURE_MEDIUM), HB_OK);
	close_peer(&p, lcr);
}

int main(void)
{
	(void)peer_start_fd; /* the pty flavour of the shared peer is not needed here */
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_open_identifies),
		cmocka_unit_test(test_every_operation),
		cmocka_unit_test(test_instrument_error_named),
		cmocka_unit_test(test_bad_arguments),
		cmocka_unit_test(test_timeout),
		cmocka_unit_test(test_garbled_reply),
		cmocka_unit_test(test_forced_profiles),
		cmocka_unit_test(test_over_tcp),
		cmocka_unit_test(test_other_dialect),
		cmocka_unit_test(test_overload_generic),
		cmocka_unit_test(test_open_failures),
		cmocka_unit_test(test_can_generic),
		cmocka_unit_test(test_fixed_function_meter),
		cmocka_unit_test(test_probe_marks_aperture_absent),
	};
	return cmocka_run_group_tests(tests, setup, bench_fixture_teardown);
}
