/* tests/test_supply.c - DC supply driver against the simulated supply and a scripted supply speaking another dialect */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "drivers/hb_drivers.h"
#include "bench_fixture.h"

static void clear_faults(void)
{
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_SUPPLY, "none"), HB_OK);
}

static hb_supply *open_supply(const char *resource)
{
	hb_supply *s = NULL;
	int rc = hb_supply_open(resource, NULL, &s);
	if (rc != HB_OK)
		print_error("open %s: %s\n", resource, hb_supply_errmsg(s));
	assert_int_equal(rc, HB_OK);
	return s;
}

/* Only to stop a broken test from hanging; never a pass/fail criterion. */
#define HANG_GUARD_S 30.0

static double wall_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

/* The simulated output settles with a time constant: ask until it reports
 * the mode (each query is a round trip to the simulator, the only pause). */
static hb_supply_mode mode_after_settling(hb_supply *s, hb_supply_mode want)
{
	hb_supply_mode mode = HB_SUPPLY_MODE_UNKNOWN;
	for (double end = wall_now() + HANG_GUARD_S; wall_now() < end;) {
		assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
		if (mode == want)
			break;
	}
	return mode;
}

static void test_every_operation(void **state)
{
	(void)state;
	clear_faults();
	hb_supply *s = open_supply("sim:supply");
	assert_string_equal(hb_supply_profile_name(s), "generic-supply");
	assert_string_equal(hb_supply_idn(s)->maker, "Henrybench");
	assert_non_null(hb_supply_scpi(s));
	assert_true(hb_supply_supports(s, "mode"));
	assert_true(hb_supply_supports(s, "protection"));
	assert_true(hb_supply_supports(s, "measure.voltage"));
	assert_true(hb_supply_supports(s, "output"));

	assert_int_equal(hb_supply_reset(s), HB_OK);
	hb_supply_mode mode;
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_OFF);

	assert_int_equal(hb_supply_set_voltage_limit(s, 5.0), HB_OK);
	assert_int_equal(hb_supply_set_current(s, 0.5), HB_OK);
	assert_int_equal(hb_supply_output(s, true), HB_OK);
	assert_int_equal(mode_after_settling(s, HB_SUPPLY_MODE_CC), HB_SUPPLY_MODE_CC);
	double amps = 0, volts = -1;
	for (double end = wall_now() + HANG_GUARD_S; fabs(amps - 0.5) > 0.05 && wall_now() < end;)
		assert_int_equal(hb_supply_measure_current(s, &amps), HB_OK);
	assert_true(fabs(amps - 0.5) < 0.05);
	assert_int_equal(hb_supply_measure_voltage(s, &volts), HB_OK);
	assert_true(volts >= 0 && volts < 5.0);
	bool tripped = true;
	assert_int_equal(hb_supply_protection(s, &tripped), HB_OK);
	assert_false(tripped);

	assert_int_equal(hb_supply_output(s, false), HB_OK);
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_OFF);

	hb_scpi_error list[4];
	size_t count = 9;
	bool lost = true;
	assert_int_equal(hb_supply_errors(s, list, 4, &count, &lost), HB_OK);
	assert_int_equal(count, 0);
	hb_supply_close(s);
	hb_supply_close(NULL);
}

static void test_compliance_reported(void **state)
{
	(void)state;
	clear_faults();
	hb_supply *s = open_supply("sim:supply");
	assert_int_equal(hb_supply_reset(s), HB_OK);
	/* a voltage limit far below I*R: the supply must leave CC */
	assert_int_equal(hb_supply_set_voltage_limit(s, 0.0), HB_OK);
	assert_int_equal(hb_supply_set_current(s, 2.0), HB_OK);
	assert_int_equal(hb_supply_output(s, true), HB_OK);
	assert_int_equal(mode_after_settling(s, HB_SUPPLY_MODE_CV), HB_SUPPLY_MODE_CV);
	hb_supply_close(s);
}

/* Closing must not switch anything: only the sweep engine changes the
 * supply (it ramps down first). The output switched on before close is
 * still on when the supply is opened again. */
static void test_close_switches_nothing(void **state)
{
	(void)state;
	clear_faults();
	hb_supply *s = open_supply("sim:supply");
	assert_int_equal(hb_supply_reset(s), HB_OK);
	assert_int_equal(hb_supply_set_voltage_limit(s, 5.0), HB_OK);
	assert_int_equal(hb_supply_set_current(s, 0.2), HB_OK);
	assert_int_equal(hb_supply_output(s, true), HB_OK);
	hb_supply_close(s);
	s = open_supply("sim:supply");
	bool on = false;
	assert_int_equal(hb_supply_output_state(s, &on), HB_OK);
	assert_true(on);
	/* leave the shared simulated bench as the next test expects it */
	assert_int_equal(hb_supply_output(s, false), HB_OK);
	hb_supply_close(s);
}

static void test_protection_trip(void **state)
{
	(void)state;
	clear_faults();
	hb_supply *s = open_supply("sim:supply");
	assert_int_equal(hb_supply_reset(s), HB_OK);
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_SUPPLY, "trip"), HB_OK);
	int rc = hb_supply_output(s, true);
	/* the simulated supply refuses and queues an error: named, with its code */
	if (rc == HB_ERR_INSTRUMENT)
		assert_non_null(strstr(hb_supply_errmsg(s), "output on: instrument error"));
	bool tripped = false;
	assert_int_equal(hb_supply_protection(s, &tripped), HB_OK);
	assert_true(tripped);
	clear_faults();
	hb_supply_close(s);
}

static void test_error_paths(void **state)
{
	(void)state;
	clear_faults();
	hb_supply *s = open_supply("sim:supply?timeout=150");
	assert_int_equal(hb_supply_set_current(s, -1), HB_ERR_ARG);
	assert_int_equal(hb_supply_set_voltage_limit(s, INFINITY), HB_ERR_ARG);
	assert_int_equal(hb_supply_measure_current(s, NULL), HB_ERR_ARG);
	/* a setting out of range: the instrument's code, the operation's name */
	assert_int_equal(hb_supply_set_current(s, 1e6), HB_ERR_INSTRUMENT);
	assert_non_null(strstr(hb_supply_errmsg(s), "set current to 1e+06 A: instrument error"));
	/* no reply in time */
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_SUPPLY, "delay=1000"), HB_OK);
	double amps;
	assert_int_equal(hb_supply_measure_current(s, &amps), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_supply_errmsg(s), "measure current"));
	/* garbled replies, on a fresh connection: the delayed replies of the
	 * timed-out questions stay with the old one, so no wait is needed */
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_SUPPLY, "none"), HB_OK);
	hb_supply_close(s);
	s = open_supply("sim:supply?timeout=150");
	assert_int_equal(hb_sim_set_fault(hb_sim_inproc(), HB_SIM_SUPPLY, "garble=1"), HB_OK);
	assert_int_equal(hb_supply_measure_voltage(s, &amps), HB_ERR_PROTOCOL);
	clear_faults();
	hb_supply_close(s);

	assert_int_equal(hb_supply_open("sim:supply?profile=generic-lcr", NULL, &s), HB_ERR_PROFILE);
	assert_non_null(strstr(hb_supply_errmsg(s), "not for a supply"));
	hb_supply_close(s);
}

static void test_token_dialect(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Orrin,OP-30,77,3.0\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		{ "VSET 12", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "ISET 1.25", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "OUT 1", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		/* volts, milliamps */
		{ "MEASURE?", PEER_REPLY, "3.5,1250.0\n", 0, 0 },
		{ "MEASURE?", PEER_REPLY, "3.5,1250.0\n", 0, 0 },
		{ "MODE?", PEER_REPLY, "CC\n", 0, 0 },
		{ "MODE?", PEER_REPLY, "cv\n", 0, 0 },
		{ "MODE?", PEER_REPLY, "OFF\n", 0, 0 },
		/* an unknown word is asked about once more; twice fails */
		{ "MODE?", PEER_REPLY, "WHAT\n", 0, 0 },
		{ "MODE?", PEER_REPLY, "WHAT\n", 0, 0 },
		{ "TRIP?", PEER_REPLY, "NONE\n", 0, 0 },
		{ "TRIP?", PEER_REPLY, "OCP\n", 0, 0 },
		/* a reply short of its field is asked for once more; twice fails */
		{ "MEASURE?", PEER_REPLY, "3.5\n", 0, 0 },
		{ "MEASURE?", PEER_REPLY, "3.5\n", 0, 0 },
		/* close sends nothing (test_close_switches_nothing checks that) */
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, sizeof steps / sizeof steps[0]), 0);
	char resource[80];
	snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=1000", p.port);
	hb_supply *s = open_supply(resource);
	assert_string_equal(hb_supply_profile_name(s), "example-supply-tokens");
	assert_int_equal(hb_supply_set_voltage_limit(s, 12), HB_OK);
	assert_int_equal(hb_supply_set_current(s, 1.25), HB_OK);
	assert_int_equal(hb_supply_output(s, true), HB_OK);
	double amps, volts;
	assert_int_equal(hb_supply_measure_current(s, &amps), HB_OK);
	assert_true(fabs(amps - 1.25) < 1e-12);
	assert_int_equal(hb_supply_measure_voltage(s, &volts), HB_OK);
	assert_true(fabs(volts - 3.5) < 1e-12);
	hb_supply_mode mode;
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_CC);
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_CV);
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_OFF);
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_supply_errmsg(s), "WHAT"));
	bool tripped = true;
	assert_int_equal(hb_supply_protection(s, &tripped), HB_OK);
	assert_false(tripped);
	assert_int_equal(hb_supply_protection(s, &tripped), HB_OK);
	assert_true(tripped);
	assert_int_equal(hb_supply_measure_current(s, &amps), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_supply_errmsg(s), "field 2"));
	hb_supply_close(s);
	bench_peer_finish(&p);
}

static void test_mode_unreported(void **state)
{
	(void)state;
	/* a profile without mode and output.state: UNKNOWN, no question asked */
	char dir[] = "/tmp/hb-supply-XXXXXX";
	assert_non_null(mkdtemp(dir));
	char path[sizeof dir + 32];
	snprintf(path, sizeof path, "%s/bare.ini", dir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs("[profile]\nname = bare\nkind = supply\ncheck.errors = no\n[supply]\nvoltage = V {volts:real}\n"
	      "current = I {amps:real}\noutput.on = O 1\noutput.off = O 0\nmeasure.current = I?\n",
	      f);
	fclose(f);
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Nobody,Box,1,1\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, 2), 0);
	char resource[160];
	snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=1000&profile=%s", p.port, path);
	hb_supply *s = open_supply(resource);
	hb_supply_mode mode = HB_SUPPLY_MODE_CC;
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_UNKNOWN);
	bool tripped;
	assert_int_equal(hb_supply_protection(s, &tripped), HB_ERR_UNSUPPORTED);
	double v;
	assert_int_equal(hb_supply_measure_voltage(s, &v), HB_ERR_UNSUPPORTED);
	hb_supply_close(s);
	bench_peer_finish(&p);
	unlink(path);
	rmdir(dir);
}

/* A SCPI source without STAT:QUES:COND? (it queues -113 "Undefined
 * header", SCPI-99 21.8.9) on the generic profile: the probe at open marks
 * the mode absent, so asking for the mode never fails; set-points are read
 * back with SOUR:CURR?; a lost read-only reply is asked for once more. */
static void test_generic_probe_and_readback(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "Nobody,Bench PSU,1,1\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		/* probes, each with SYST:ERR? behind it */
		{ "OUTP?", PEER_REPLY, "0\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "STAT:QUES:COND?", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "-113,\"Undefined header\"\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		{ "SOUR:VOLT:PROT:TRIP?", PEER_REPLY, "0\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "SOUR:CURR?", PEER_REPLY, "+0.000000E+00\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		/* mode: output state only; the status query is never sent again */
		{ "OUTP?", PEER_REPLY, "1\n", 0, 0 },
		/* a set-point the supply took */
		{ "SOUR:CURR 0.5", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "SOUR:CURR?", PEER_REPLY, "+5.000000E-01\n", 0, 0 },
		/* one it did not: the read-back differs */
		{ "SOUR:CURR 1.5", PEER_SILENT, NULL, 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, OK_ERR, 0, 0 },
		{ "SOUR:CURR?", PEER_REPLY, "+5.000000E-01\n", 0, 0 },
		/* a lost reply, asked again after the drain */
		{ "MEAS:CURR?", PEER_SILENT, NULL, 0, 0 },
		{ "MEAS:CURR?", PEER_REPLY, "0.4999\n", 0, 0 },
		/* a garbled one, asked again */
		{ "OUTP?", PEER_REPLY, "#~@\n", 0, 0 },
		{ "OUTP?", PEER_REPLY, "1\n", 0, 0 },
		/* lost twice: fails */
		{ "MEAS:VOLT?", PEER_SILENT, NULL, 0, 0 },
		{ "MEAS:VOLT?", PEER_SILENT, NULL, 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, sizeof steps / sizeof steps[0]), 0);
	char resource[120];
	snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=200&profile=generic-supply", p.port);
	hb_supply *s = open_supply(resource);
	assert_false(hb_supply_supports(s, "mode"));
	assert_true(hb_supply_supports(s, "output.state"));
	assert_true(hb_supply_supports(s, "current.query"));
	hb_supply_mode mode = HB_SUPPLY_MODE_CC;
	assert_int_equal(hb_supply_get_mode(s, &mode), HB_OK);
	assert_int_equal(mode, HB_SUPPLY_MODE_UNKNOWN);
	assert_int_equal(hb_supply_set_current(s, 0.5), HB_OK);
	assert_int_equal(hb_supply_set_current(s, 1.5), HB_ERR_INSTRUMENT);
	assert_non_null(strstr(hb_supply_errmsg(s), "set current to 1.5 A: the supply holds 0.5 A"));
	double amps = 0;
	assert_int_equal(hb_supply_measure_current(s, &amps), HB_OK);
	assert_true(fabs(amps - 0.4999) < 1e-12);
	bool on = false;
	assert_int_equal(hb_supply_output_state(s, &on), HB_OK);
	assert_true(on);
	double volts;
	assert_int_equal(hb_supply_measure_voltage(s, &volts), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_supply_errmsg(s), "measure voltage"));
	hb_supply_close(s);
	bench_peer_finish(&p);
}

/* The simulated supply answers SOUR:CURR? (docs/scpi-dialect.md): the
 * set-point as it holds it. */
static void test_query_current_simulated(void **state)
{
	(void)state;
	clear_faults();
	hb_supply *s = open_supply("sim:supply");
	assert_int_equal(hb_supply_reset(s), HB_OK);
	assert_int_equal(hb_supply_set_current(s, 0.25), HB_OK);
	double amps = -1;
	assert_int_equal(hb_supply_query_current(s, &amps), HB_OK);
	assert_true(fabs(amps - 0.25) < 1e-9);
	hb_supply_close(s);
}

/* *IDN? is read-only: a lost reply is asked once more after a drain. */
static void test_idn_asked_again(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_SILENT, NULL, 0, 0 },
		{ "*IDN?", PEER_REPLY, "Orrin,OP-30,77,3.0\n", 0, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, sizeof steps / sizeof steps[0]), 0);
	char resource[80];
	snprintf(resource, sizeof resource, "tcp://127.0.0.1:%d?timeout=200", p.port);
	hb_supply *s = open_supply(resource);
	assert_string_equal(hb_supply_idn(s)->model, "OP-30");
	hb_supply_close(s);
	bench_peer_finish(&p);
}

int main(void)
{
	(void)peer_start_fd; /* the pty flavour of the shared peer is not needed here */
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_every_operation),
		cmocka_unit_test(test_compliance_reported),
		cmocka_unit_test(test_close_switches_nothing),
		cmocka_unit_test(test_protection_trip),
		cmocka_unit_test(test_error_paths),
		cmocka_unit_test(test_token_dialect),
		cmocka_unit_test(test_mode_unreported),
		cmocka_unit_test(test_generic_probe_and_readback),
		cmocka_unit_test(test_query_current_simulated),
		cmocka_unit_test(test_idn_asked_again),
	};
	return cmocka_run_group_tests(tests, bench_fixture_setup, bench_fixture_teardown);
}
