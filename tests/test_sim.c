/* tests/test_sim.c - simulated bench: core physics, SCPI text, every fault, witness log, socketpair/TCP/pty transports, the in-process thread */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <netinet/in.h>
#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <termios.h>
#include <unistd.h>
#include <arpa/inet.h>

#include "drivers/sim/sim_internal.h"

/* Simulated time runs a thousand times faster than the wall clock here. */
#define FAST 1e-3

/* cmocka here has no double comparison; |a-b| <= tol with both values shown. */
static void assert_near(double a, double b, double tol)
{
	if (!(fabs(a - b) <= tol))
		fail_msg("%.9g and %.9g differ by more than %.3g", a, b, tol);
}

/* ------------------------------------------------------------------ */
/* a tiny raw client, independent of drivers/scpi.c                    */

typedef struct client {
	int fd;
	char buf[8192];
	size_t len;
} client;

static hb_sim *new_sim(const char *preset)
{
	hb_sim *sim = NULL;
	assert_int_equal(hb_sim_new(preset, &sim), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "time_scale", FAST), HB_OK);
	return sim;
}

static void client_attach(hb_sim *sim, hb_sim_role role, client *c)
{
	int sv[2];
	assert_int_equal(socketpair(AF_UNIX, SOCK_STREAM, 0, sv), 0);
	fcntl(sv[0], F_SETFL, fcntl(sv[0], F_GETFL) | O_NONBLOCK);
	assert_int_equal(hb_sim_attach(sim, role, sv[1]), HB_OK);
	memset(c, 0, sizeof *c);
	c->fd = sv[0];
}

static void client_send(client *c, const char *text)
{
	char line[1024];
	int n = snprintf(line, sizeof line, "%s\n", text);
	ssize_t w = send(c->fd, line, (size_t)n, MSG_NOSIGNAL);
	if (w < 0 && errno == ENOTSOCK)
		w = write(c->fd, line, (size_t)n);
	assert_int_equal(w, n);
}

/* Serves the sim (when given) and collects bytes until a full line is
 * there or rounds run out: 1 line, 0 nothing, -1 end of file. The line
 * keeps its CR; the LF goes. */
static int client_line(hb_sim *sim, client *c, char *line, size_t cap, int rounds)
{
	for (int r = 0; r < rounds; r++) {
		char *nl = memchr(c->buf, '\n', c->len);
		if (nl) {
			size_t n = (size_t)(nl - c->buf);
			size_t k = n < cap - 1 ? n : cap - 1;
			memcpy(line, c->buf, k);
			line[k] = '\0';
			memmove(c->buf, nl + 1, c->len - n - 1);
			c->len -= n + 1;
			return 1;
		}
		if (sim)
			hb_sim_poll(sim, 2);
		else {
			struct pollfd pf = { c->fd, POLLIN, 0 };
			poll(&pf, 1, 2);
		}
		ssize_t got = read(c->fd, c->buf + c->len, sizeof c->buf - c->len);
		if (got == 0)
			return -1;
		if (got > 0)
			c->len += (size_t)got;
	}
	return 0;
}

static void query(hb_sim *sim, client *c, const char *cmd, char *reply, size_t cap)
{
	client_send(c, cmd);
	assert_int_equal(client_line(sim, c, reply, cap, 2000), 1);
}

static double query_double(hb_sim *sim, client *c, const char *cmd)
{
	char reply[256];
	query(sim, c, cmd, reply, sizeof reply);
	return strtod(reply, NULL);
}

static void expect_reply(hb_sim *sim, client *c, const char *cmd, const char *want)
{
	char reply[512];
	query(sim, c, cmd, reply, sizeof reply);
	assert_string_equal(reply, want);
}

/* Only maker and model are fixed; serial and firmware may change. */
static void expect_idn(hb_sim *sim, client *c, const char *maker_model)
{
	char reply[256];
	query(sim, c, "*IDN?", reply, sizeof reply);
	assert_true(strncmp(reply, maker_model, strlen(maker_model)) == 0);
}

/* Faults add up, so each new one starts from a clean instrument. */
static int replace_fault(hb_sim *sim, hb_sim_role role, const char *spec)
{
	hb_sim_set_fault(sim, role, "none");
	return hb_sim_set_fault(sim, role, spec);
}

static int next_error(hb_sim *sim, client *c)
{
	char reply[256];
	query(sim, c, "SYST:ERR?", reply, sizeof reply);
	return atoi(reply);
}

static void settle(hb_sim *sim, int ms)
{
	hb_sim_poll(sim, ms);
}

/* ------------------------------------------------------------------ */
/* physics                                                             */

static void test_l0_closed_form(void **state)
{
	(void)state;
	sim_params p;
	sim_params_defaults(&p);
	/* Fringing factor by hand for the default part, McLyman (Transformer
	 * and Inductor Design Handbook): F = 1 + g/sqrt(Ae) * ln(2G/g). */
	double f = 1 + (0.5e-3 / sqrt(50e-6)) * log(2 * 9e-3 / 0.5e-3);
	assert_near(sim_fringing(&p), f, 1e-12);
	double l0 = SIM_MU0 * 27 * 27 * 50e-6 / (60e-3 / 2300 + 0.5e-3 / f);
	for (int law = 0; law < 3; law++) {
		p.law = law;
		assert_true(fabs(sim_inductance(&p, 0) / l0 - 1) < 1e-9);
	}
	/* Every preset agrees with its own closed form at zero bias. */
	for (const char *const *n = hb_sim_presets(); *n; n++) {
		sim_params_defaults(&p);
		assert_int_equal(sim_params_preset(&p, *n), HB_OK);
		assert_true(fabs(sim_inductance(&p, 0) / sim_l0_closed_form(&p) - 1) < 1e-9);
	}
	/* The default part is a power inductor of about 100 uH. */
	sim_params_defaults(&p);
	assert_true(sim_l0_closed_form(&p) > 90e-6 && sim_l0_closed_form(&p) < 130e-6);
}

static void test_knee_monotone(void **state)
{
	(void)state;
	sim_params p;
	sim_params_defaults(&p);
	for (int law = 0; law < 3; law++) {
		p.law = law;
		double l0 = sim_inductance(&p, 0), prev = l0;
		for (double i = 0.05; i <= 10; i += 0.05) {
			double l = sim_inductance(&p, i);
			assert_true(l <= prev * (1 + 1e-12));
			/* odd symmetry of the B-H law: L(-I) = L(I) */
			assert_true(fabs(sim_inductance(&p, -i) / l - 1) < 1e-9);
			prev = l;
		}
		assert_true(sim_inductance(&p, 1) > 0.9 * l0);
		assert_true(sim_inductance(&p, 10) < 0.2 * l0);
	}
}

static void test_solution_and_derivative(void **state)
{
	(void)state;
	sim_params p;
	sim_params_defaults(&p);
	for (int law = 0; law < 3; law++) {
		p.law = law;
		for (double i = 0.3; i < 9; i += 0.7) {
			double h, b;
			assert_int_equal(sim_core_solve(&p, i, &h, &b), HB_OK);
			double lhs = p.turns * i, rhs = h * p.le + b * sim_gap_eff(&p) / SIM_MU0;
			assert_true(fabs(lhs - rhs) < 1e-9 * lhs);
			/* the analytic L against a central difference of N*Ae*B(I) */
			double d = 1e-4, b1, b2;
			sim_core_solve(&p, i - d, NULL, &b1);
			sim_core_solve(&p, i + d, NULL, &b2);
			double numeric = p.turns * p.ae * (b2 - b1) / (2 * d);
			assert_true(fabs(numeric / sim_inductance(&p, i) - 1) < 1e-4);
		}
	}
}

static void test_settling_and_heating(void **state)
{
	(void)state;
	sim_params p;
	sim_params_defaults(&p);
	sim_state s = { 0 };
	sim_state_reset(&p, &s);
	s.temp_c = p.t_amb;
	s.output = true;
	s.setpoint = 2.0;
	sim_state_step(&p, &s, p.tau_settle);
	/* first order: 1 - 1/e of the step after one time constant */
	assert_true(fabs(s.amps - 2.0 * (1 - exp(-1))) < 0.02);
	sim_state_step(&p, &s, 20 * p.tau_settle);
	assert_true(fabs(s.amps - 2.0) < 1e-6);

	double r_cold = sim_winding_r(&p, s.temp_c);
	s.setpoint = 8.0;
	sim_state_step(&p, &s, 10 * p.tau_th);
	double r_hot = sim_winding_r(&p, s.temp_c);
	double rise = s.temp_c - p.t_amb;
	/* steady state: rise = I^2 R(T) rth */
	assert_true(fabs(rise - 64 * r_hot * p.rth) < 0.05 * rise);
	assert_true(r_hot > r_cold * (1 + 0.0039 * rise * 0.9));

	/* output off: the current decays to nothing */
	s.output = false;
	sim_state_step(&p, &s, 30 * p.tau_settle);
	assert_true(fabs(s.amps) < 1e-6);
}

static void test_resonance(void **state)
{
	(void)state;
	sim_params p;
	sim_params_defaults(&p);
	sim_state s = { .temp_c = 20 };
	double l0 = sim_inductance(&p, 0), pri, sec;
	/* Thomson's resonance f = 1 / (2 pi sqrt(L C)) (common practice) */
	double srf = 1 / (2 * M_PI * sqrt(l0 * p.cp));
	sim_reading_from_z(sim_impedance(&p, &s, 1000, 0, true, true), 1000, HB_EQUIV_SERIES, HB_PAIR_L_R, &pri, &sec);
	assert_true(fabs(pri / l0 - 1) < 1e-3);
	double l_low = pri;
	sim_reading_from_z(sim_impedance(&p, &s, srf / 2, 0, true, true), srf / 2, HB_EQUIV_SERIES, HB_PAIR_L_R, &pri, &sec);
	/* L_s = L / (1 - w^2 L Cp): 4/3 of L at half the SRF */
	assert_true(fabs(pri / (l0 / (1 - 0.25)) - 1) < 0.01);
	assert_true(pri > l_low);
	sim_reading_from_z(sim_impedance(&p, &s, srf * 1.5, 0, true, true), srf * 1.5, HB_EQUIV_SERIES, HB_PAIR_L_R, &pri, &sec);
	assert_true(pri < 0); /* capacitive above the SRF */
	/* Q from L/R and |Z|, theta are consistent */
	double q, d, z, th;
	double complex zz = sim_impedance(&p, &s, 100e3, 0, false, false);
	sim_reading_from_z(zz, 100e3, HB_EQUIV_SERIES, HB_PAIR_L_Q, &pri, &q);
	sim_reading_from_z(zz, 100e3, HB_EQUIV_PARALLEL, HB_PAIR_L_D, &pri, &d);
	sim_reading_from_z(zz, 100e3, HB_EQUIV_SERIES, HB_PAIR_Z_THETA, &z, &th);
	assert_true(fabs(q * d - 1) < 1e-9);
	assert_true(fabs(tan(th * M_PI / 180) - q) < 1e-6 * q);
	assert_true(fabs(z - cabs(zz)) < 1e-9 * z);
}

/* ------------------------------------------------------------------ */
/* parameters                                                          */

static void test_params(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	double v;
	assert_int_equal(hb_sim_set_param(sim, "gap", 0.3e-3), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "gap", &v), HB_OK);
	assert_near(v, 0.3e-3, 1e-15);
	assert_int_equal(hb_sim_set_param(sim, "bogus", 1), HB_ERR_ARG);
	assert_non_null(strstr(hb_sim_errmsg(sim), "bogus"));
	assert_int_equal(hb_sim_set_param(sim, "turns", 0), HB_ERR_ARG);
	assert_non_null(strstr(hb_sim_errmsg(sim), "turns"));
	assert_non_null(strstr(hb_sim_errmsg(sim), "10000"));
	assert_int_equal(hb_sim_set_param(sim, "law", 1.5), HB_ERR_ARG);
	assert_int_equal(hb_sim_load_preset(sim, "no-such-part"), HB_ERR_ARG);
	assert_non_null(strstr(hb_sim_errmsg(sim), "small-smd"));
	/* a preset resets the part, not the bench */
	assert_int_equal(hb_sim_load_preset(sim, "air-core"), HB_OK);
	assert_int_equal(hb_sim_get_param(sim, "mu_i", &v), HB_OK);
	assert_near(v, 1, 0);
	assert_int_equal(hb_sim_get_param(sim, "time_scale", &v), HB_OK);
	assert_near(v, FAST, 0);
	assert_string_equal(hb_sim_param_unit("ae"), "m2");
	assert_null(hb_sim_param_unit("bogus"));

	char *text = NULL;
	size_t len = 0;
	FILE *out = open_memstream(&text, &len);
	hb_sim_list_params(out);
	fclose(out);
	for (size_t i = 0; i < sim_param_count; i++)
		assert_non_null(strstr(text, sim_param_table[i].key));
	free(text);
	hb_sim_free(sim);
	hb_sim_free(NULL);

	hb_sim *bad = NULL;
	assert_int_equal(hb_sim_new("nope", &bad), HB_ERR_ARG);
	assert_non_null(bad);
	hb_sim_free(bad);
}

/* ------------------------------------------------------------------ */
/* SCPI                                                                */

static void test_number_suffixes(void **state)
{
	(void)state;
	double v;
	assert_int_equal(sim_scpi_number("1KHZ", "HZ", &v), 0);
	assert_near(v, 1e3, 1e-9);
	assert_int_equal(sim_scpi_number("2.5 MHZ", "HZ", &v), 0); /* SCPI-1999 7.7.3: MHZ is mega */
	assert_near(v, 2.5e6, 1e-6);
	assert_int_equal(sim_scpi_number("100mA", "A", &v), 0);
	assert_near(v, 0.1, 1e-12);
	assert_int_equal(sim_scpi_number("1MA", "V", &v), 0); /* MA alone is mega */
	assert_near(v, 1e6, 1e-6);
	assert_int_equal(sim_scpi_number("500m", "V", &v), 0); /* M is milli */
	assert_near(v, 0.5, 1e-12);
	assert_int_equal(sim_scpi_number("50u", "A", &v), 0);
	assert_near(v, 50e-6, 1e-15);
	assert_int_equal(sim_scpi_number("1.5E3", "", &v), 0);
	assert_near(v, 1500, 0);
	assert_int_equal(sim_scpi_number("2MOHM", "OHM", &v), 0);
	assert_near(v, 2e6, 1e-6);
	assert_int_equal(sim_scpi_number("abc", "V", &v), -224);
	assert_int_equal(sim_scpi_number("0x10", "V", &v), -224);
	assert_int_equal(sim_scpi_number("5 QQ", "V", &v), -131);

	assert_true(sim_scpi_header_match("?SOURce CURRent ?LEVel ?IMMediate ?AMPLitude", "CURR"));
	assert_true(sim_scpi_header_match("?SOURce CURRent ?LEVel ?IMMediate ?AMPLitude", "sour:curr:lev:imm:ampl"));
	assert_true(sim_scpi_header_match("?SOURce CURRent ?LEVel ?IMMediate ?AMPLitude", ":SOURCE:CURRENT:AMPL"));
	assert_false(sim_scpi_header_match("?SOURce CURRent ?LEVel", "SOUR:CURRE"));
	assert_false(sim_scpi_header_match("?SOURce CURRent ?LEVel", "SOUR:CURR:"));
	assert_false(sim_scpi_header_match("IMPedance FREQuency", "IMP"));
}

static void test_scpi_commands(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	client lcr, dcs;
	char r[512];
	client_attach(sim, HB_SIM_LCR, &lcr);
	client_attach(sim, HB_SIM_SUPPLY, &dcs);
	expect_idn(sim, &lcr, "Henrybench,SIM-LCR1,");
	query(sim, &dcs, "*idn?", r, sizeof r);
	assert_true(strncmp(r, "Henrybench,SIM-DCS1,", 20) == 0);

	client_send(&lcr, "imp:freq 10khz");
	assert_near(query_double(sim, &lcr, "IMPEDANCE:FREQUENCY?"), 10e3, 1e-6);
	client_send(&lcr, ":IMP:FREQ MAX");
	assert_near(query_double(sim, &lcr, "IMP:FREQ?"), 10e6, 1e-3);
	client_send(&lcr, "IMP:LEV:VOLT 500MV");
	assert_near(query_double(sim, &lcr, "IMP:LEV:VOLT?"), 0.5, 1e-12);
	client_send(&lcr, "IMP:FUNC PAR,LR;IMP:APER LONG;IMP:AVER 4");
	expect_reply(sim, &lcr, "IMP:FUNC?;IMP:APER?;IMP:AVER?", "PAR,LR;LONG;4");
	assert_int_equal(next_error(sim, &lcr), 0);

	/* a reading at 1 kHz, series L-R, near the unbiased value */
	client_send(&lcr, "*RST;IMP:FUNC SER,LR;IMP:CORR:SHOR;*OPC?");
	assert_int_equal(client_line(sim, &lcr, r, sizeof r, 2000), 1);
	assert_string_equal(r, "1");
	query(sim, &lcr, "IMP:READ?", r, sizeof r);
	double l, rs;
	int st;
	assert_int_equal(sscanf(r, "%lf,%lf,%d", &l, &rs, &st), 3);
	assert_int_equal(st, 0);
	sim_params p;
	sim_params_defaults(&p);
	assert_true(fabs(l / sim_l0_closed_form(&p) - 1) < 0.01);
	assert_true(rs > 0.019 && rs < 0.03);

	/* errors: undefined header, out of range, illegal value, missing parameter */
	client_send(&lcr, "FOO:BAR 1");
	client_send(&lcr, "IMP:FREQ 1");
	client_send(&lcr, "IMP:APER HUGE");
	client_send(&lcr, "IMP:FREQ");
	client_send(&dcs, "IMP:FREQ 1000"); /* a meter command on the supply */
	assert_int_equal(next_error(sim, &lcr), -113);
	assert_int_equal(next_error(sim, &lcr), -222);
	assert_int_equal(next_error(sim, &lcr), -224);
	assert_int_equal(next_error(sim, &lcr), -109);
	assert_int_equal(next_error(sim, &lcr), 0);
	assert_int_equal(next_error(sim, &dcs), -113);

	/* overflow: the newest entry turns into -350 */
	for (int i = 0; i < SIM_ERRQ_MAX + 5; i++)
		client_send(&lcr, "NOPE");
	for (int i = 0; i < SIM_ERRQ_MAX - 1; i++)
		assert_int_equal(next_error(sim, &lcr), -113);
	assert_int_equal(next_error(sim, &lcr), -350);
	assert_int_equal(next_error(sim, &lcr), 0);
	client_send(&lcr, "NOPE");
	query(sim, &lcr, "*ESR?", r, sizeof r);
	assert_int_equal(atoi(r) & 0x20, 0x20);
	client_send(&lcr, "*CLS");
	assert_int_equal(next_error(sim, &lcr), 0);

	/* supply ratings */
	client_send(&dcs, "SOUR:CURR 11");
	client_send(&dcs, "VOLT 31");
	assert_int_equal(next_error(sim, &dcs), -222);
	assert_int_equal(next_error(sim, &dcs), -222);
	client_send(&dcs, "CURR 250MA");
	assert_near(query_double(sim, &dcs, "SOURCE:CURRENT:LEVEL:IMMEDIATE:AMPLITUDE?"), 0.25, 1e-12);
	close(lcr.fd);
	close(dcs.fd);
	settle(sim, 5);
	assert_null(sim->conns); /* both clients gone, the server is fine */
	hb_sim_free(sim);
}

static void test_bias_compliance_heating(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	client lcr, dcs;
	client_attach(sim, HB_SIM_LCR, &lcr);
	client_attach(sim, HB_SIM_SUPPLY, &dcs);
	client_send(&lcr, "IMP:FUNC SER,LR");
	double l0 = query_double(sim, &lcr, "IMP:READ?");

	/* the supply's current is the meter's bias */
	client_send(&dcs, "VOLT 5;CURR 6;OUTP ON");
	settle(sim, 20);
	expect_reply(sim, &dcs, "STAT:QUES:COND?", "1");
	assert_near(query_double(sim, &dcs, "MEAS:CURR?"), 6.0, 0.01);
	double l6 = query_double(sim, &lcr, "IMP:READ?");
	assert_true(l6 < 0.5 * l0);

	/* heating raises the resistance the meter sees */
	double r_cold = query_double(sim, &lcr, "IMP:DCR?");
	settle(sim, 300); /* more than two thermal time constants, scaled */
	double r_hot = query_double(sim, &lcr, "IMP:DCR?");
	assert_true(r_hot > r_cold * 1.01);

	/* compliance: 6 A through about 31 mOhm needs more than 50 mV */
	client_send(&dcs, "VOLT 0.05");
	settle(sim, 20);
	expect_reply(sim, &dcs, "STAT:QUES:COND?", "2");
	double amps = query_double(sim, &dcs, "MEAS:CURR?");
	double volts = query_double(sim, &dcs, "MEAS:VOLT?");
	assert_true(amps < 6.0 && amps > 1.0);
	assert_near(volts, 0.05, 0.002);

	client_send(&dcs, "OUTP OFF");
	settle(sim, 20);
	assert_near(query_double(sim, &dcs, "MEAS:CURR?"), 0.0, 0.005);
	expect_reply(sim, &dcs, "OUTP?;STAT:QUES:COND?", "0;0");
	close(lcr.fd);
	close(dcs.fd);
	hb_sim_free(sim);
}

static void test_noise(void **state)
{
	(void)state;
	char a[128], b[128];
	hb_sim *s1 = new_sim(NULL), *s2 = new_sim(NULL);
	client c1, c2;
	client_attach(s1, HB_SIM_LCR, &c1);
	client_attach(s2, HB_SIM_LCR, &c2);
	/* same seed, same readings */
	query(s1, &c1, "IMP:READ?", a, sizeof a);
	query(s2, &c2, "IMP:READ?", b, sizeof b);
	assert_string_equal(a, b);

	/* sigma shrinks with integration time: SHORT x1 against LONG x16 */
	double sd[2];
	const char *setup[2] = { "IMP:APER SHOR;IMP:AVER 1", "IMP:APER LONG;IMP:AVER 16" };
	for (int k = 0; k < 2; k++) {
		client_send(&c1, setup[k]);
		double sum = 0, sum2 = 0;
		int n = 40;
		for (int i = 0; i < n; i++) {
			double l = query_double(s1, &c1, "IMP:READ?");
			sum += l;
			sum2 += l * l;
		}
		double mean = sum / n;
		sd[k] = sqrt(fmax(sum2 / n - mean * mean, 0)) / mean;
	}
	/* expected ratio sqrt(0.4*16/0.02) ~ 18; generous bounds */
	assert_true(sd[0] > 5 * sd[1]);
	assert_true(sd[0] < 1e-3 && sd[0] > 1e-5);
	close(c1.fd);
	close(c2.fd);
	hb_sim_free(s1);
	hb_sim_free(s2);
}

/* ------------------------------------------------------------------ */
/* faults                                                              */

static void test_fault_parse(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "delay=10,crlf"), HB_OK);
	assert_int_equal(sim->faults[HB_SIM_LCR].delay_ms, 10);
	assert_true(sim->faults[HB_SIM_LCR].crlf);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "none"), HB_OK);
	assert_false(sim->faults[HB_SIM_LCR].crlf);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "wobble=3"), HB_ERR_ARG);
	assert_non_null(strstr(hb_sim_errmsg(sim), "wobble"));
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "drop"), HB_ERR_ARG);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "delay=-1"), HB_ERR_ARG);
	hb_sim_free(sim);
}

static void test_fault_delay_late(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	client a, b;
	char r[256];
	client_attach(sim, HB_SIM_LCR, &a);
	client_attach(sim, HB_SIM_LCR, &b);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "delay=600000"), HB_OK);
	client_send(&a, "*IDN?");
	assert_int_equal(client_line(sim, &a, r, sizeof r, 10), 0);
	assert_non_null(sim->conns->out_head); /* answered, but held back */
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "delay=0,late=600000"), HB_OK);
	client_send(&b, "*IDN?");
	assert_int_equal(client_line(sim, &b, r, sizeof r, 10), 0);
	/* late is one-shot: the next query elsewhere is answered at once */
	client c;
	client_attach(sim, HB_SIM_LCR, &c);
	expect_reply(sim, &c, "*OPC?", "1");
	close(a.fd);
	close(b.fd);
	close(c.fd);
	hb_sim_free(sim);
}

static void test_fault_drop_garble_crlf_echo(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	client c;
	char r[256];
	client_attach(sim, HB_SIM_LCR, &c);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_LCR, "drop=2"), HB_OK);
	query(sim, &c, "*IDN?", r, sizeof r);
	client_send(&c, "*IDN?");
	assert_int_equal(client_line(sim, &c, r, sizeof r, 10), 0);
	query(sim, &c, "*IDN?", r, sizeof r);
	assert_true(strncmp(r, "Henrybench", 10) == 0);

	replace_fault(sim, HB_SIM_LCR, "garble=1");
	query(sim, &c, "*IDN?", r, sizeof r);
	assert_true(strncmp(r, "Henrybench", 10) != 0);
	assert_int_equal(strlen(r), strlen("Henrybench,SIM-LCR1,SL0001,1.0"));

	replace_fault(sim, HB_SIM_LCR, "crlf");
	expect_reply(sim, &c, "*OPC?", "1\r");

	replace_fault(sim, HB_SIM_LCR, "echo");
	expect_reply(sim, &c, "*OPC?", "*OPC?");
	assert_int_equal(client_line(sim, &c, r, sizeof r, 2000), 1);
	assert_string_equal(r, "1");
	close(c.fd);
	hb_sim_free(sim);
}

static void test_fault_split_error_disconnect(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	client c, other;
	char r[256];
	client_attach(sim, HB_SIM_SUPPLY, &c);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_SUPPLY, "split"), HB_OK);
	expect_idn(sim, &c, "Henrybench,SIM-DCS1,");

	assert_int_equal(replace_fault(sim, HB_SIM_SUPPLY, "error=-222"), HB_OK);
	assert_int_equal(next_error(sim, &c), -222);
	assert_int_equal(next_error(sim, &c), 0);

	/* the count runs per connection: this one has had 3 commands */
	replace_fault(sim, HB_SIM_SUPPLY, "disconnect=5");
	query(sim, &c, "*OPC?", r, sizeof r);
	client_send(&c, "*OPC?");
	assert_int_equal(client_line(sim, &c, r, sizeof r, 2000), -1);
	/* the server survives and serves a new client */
	client_attach(sim, HB_SIM_SUPPLY, &other);
	expect_reply(sim, &other, "*OPC?", "1");
	close(c.fd);
	close(other.fd);
	hb_sim_free(sim);
}

static void test_fault_deaf_trip(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	client c, d;
	char r[256];
	client_attach(sim, HB_SIM_SUPPLY, &c);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_SUPPLY, "deaf=600000"), HB_OK);
	client_send(&c, "*RST");
	client_send(&c, "*OPC?");
	assert_int_equal(client_line(sim, &c, r, sizeof r, 10), 0);

	hb_sim_set_fault(sim, HB_SIM_SUPPLY, "none");
	client_attach(sim, HB_SIM_SUPPLY, &d);
	assert_int_equal(hb_sim_set_fault(sim, HB_SIM_SUPPLY, "trip"), HB_OK);
	client_send(&d, "VOLT 5;CURR 1;OUTP ON");
	expect_reply(sim, &d, "OUTP?;SOUR:VOLT:PROT:TRIP?", "0;1");
	assert_int_equal(next_error(sim, &d), -221);
	client_send(&d, "OUTP:PROT:CLE;OUTP ON");
	expect_reply(sim, &d, "OUTP?;VOLT:PROT:TRIP?", "1;0");
	client_send(&d, "OUTP OFF");
	query(sim, &d, "*OPC?", r, sizeof r);
	close(c.fd);
	close(d.fd);
	hb_sim_free(sim);
}

/* ------------------------------------------------------------------ */
/* log                                                                 */

static void test_log(void **state)
{
	(void)state;
	char *text = NULL;
	size_t len = 0;
	FILE *log = open_memstream(&text, &len);
	hb_sim *sim = new_sim(NULL);
	hb_sim_set_log(sim, log);
	client c;
	char r[64];
	client_attach(sim, HB_SIM_SUPPLY, &c);
	client_send(&c, "VOLT 5;CURR 1.5;OUTP ON");
	settle(sim, 20);
	client_send(&c, "CURR 0;OUTP OFF");
	settle(sim, 20);
	query(sim, &c, "*OPC?", r, sizeof r);
	close(c.fd);
	settle(sim, 5);
	hb_sim_free(sim);
	fclose(log);

	const char *want[] = { "supply cmd VOLT 5;CURR 1.5;OUTP ON", "supply setpoint 1.5000 A at 0.0000 A",
			       "supply output ON at 0.0000 A", "supply mode CC", "supply current 1.500 A",
			       "supply setpoint 0.0000 A at 1.5000 A", "supply output OFF at 1.5000 A",
			       "supply mode OFF", "supply current 0.000 A", "supply disconnect" };
	const char *at = text;
	for (size_t i = 0; i < sizeof want / sizeof want[0]; i++) {
		const char *hit = strstr(at, want[i]);
		if (!hit)
			fail_msg("log lacks '%s' after offset %td:\n%s", want[i], at - text, text);
		at = hit;
	}
	/* every line: 2026-12-02T01:02:03.456 <role> ... */
	for (const char *line = text; *line; line = strchr(line, '\n') + 1) {
		int y, mo, d, h, mi, s, ms, n = 0;
		assert_int_equal(sscanf(line, "%4d-%2d-%2dT%2d:%2d:%2d.%3d %n", &y, &mo, &d, &h, &mi, &s, &ms, &n), 7);
		assert_int_equal(n, 24);
		assert_true(strncmp(line + 24, "supply ", 7) == 0);
	}
	free(text);
}

static void tcp_connect(int port, client *c)
{
	memset(c, 0, sizeof *c);
	c->fd = socket(AF_INET, SOCK_STREAM, 0);
	struct sockaddr_in a = { .sin_family = AF_INET, .sin_port = htons((uint16_t)port) };
	inet_pton(AF_INET, "127.0.0.1", &a.sin_addr);
	assert_int_equal(connect(c->fd, (struct sockaddr *)&a, sizeof a), 0);
	fcntl(c->fd, F_SETFL, fcntl(c->fd, F_GETFL) | O_NONBLOCK);
}

/* The value after the n-th (from 1) occurrence of prefix in text; NAN when
 * there are fewer. */
static double log_value(const char *text, const char *prefix, int n)
{
	const char *at = text;
	for (int k = 0; k < n; k++) {
		at = strstr(at, prefix);
		if (!at)
			return NAN;
		at += strlen(prefix);
	}
	return strtod(at, NULL);
}

/* A second client of the same simulated supply switches it off mid-run:
 * the first sees the output off and the current decaying, and the log
 * witnesses the current at each switching instant. Wall time at full
 * scale: the decay (tau 50 ms) is slow next to one poll round. */
static void test_witness_second_connection(void **state)
{
	(void)state;
	char *text = NULL;
	size_t len = 0;
	FILE *log = open_memstream(&text, &len);
	hb_sim *sim = NULL;
	assert_int_equal(hb_sim_new(NULL, &sim), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "tau_settle", 0.05), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "noise", 0), HB_OK);
	hb_sim_set_log(sim, log);
	int port = 0;
	assert_int_equal(hb_sim_listen_tcp(sim, HB_SIM_SUPPLY, "127.0.0.1", 0, &port), HB_OK);
	client a, b;
	tcp_connect(port, &a);
	tcp_connect(port, &b);
	client_send(&a, "VOLT 5;CURR 2;OUTP ON");
	double amps = 0;
	for (int i = 0; i < 1000 && amps < 1.99; i++)
		amps = query_double(sim, &a, "MEAS:CURR?");
	assert_true(amps >= 1.99);
	/* *OPC? on the second connection: its OUTP OFF has run */
	client_send(&b, "OUTP OFF");
	expect_reply(sim, &b, "*OPC?", "1");
	expect_reply(sim, &a, "OUTP?", "0");
	double m[3];
	for (int k = 0; k < 3; k++)
		m[k] = query_double(sim, &a, "MEAS:CURR?");
	/* each MEAS:CURR? takes 10 ms: decaying, not gone at once (noise is
	 * off, so an exponential decay stays above 0 however slow the host) */
	assert_true(m[0] < 2.0 && m[0] > 0);
	assert_true(m[1] < m[0] && m[2] < m[1] && m[2] > 0);
	client_send(&b, "*RST");
	expect_reply(sim, &b, "*OPC?", "1");
	close(a.fd);
	close(b.fd);
	settle(sim, 5);
	hb_sim_free(sim);
	fclose(log);

	assert_near(log_value(text, "supply setpoint ", 1), 2.0, 0);
	assert_near(log_value(text, "supply setpoint 2.0000 A at ", 1), 0.0, 0);
	assert_near(log_value(text, "supply output ON at ", 1), 0.0, 0);
	/* the current flowing when the second client switched it off */
	double off = log_value(text, "supply output OFF at ", 1);
	assert_true(off >= 1.99 && off <= 2.0 + 1e-4);
	assert_true(off >= m[0]);
	/* *RST switches off again, and sets 0 A, both witnessed */
	double rst = log_value(text, "supply output OFF at ", 2);
	assert_true(rst < m[2] && rst >= 0);
	assert_true(log_value(text, "supply setpoint 0.0000 A at ", 1) <= rst);
	assert_true(isnan(log_value(text, "supply output OFF at ", 3)));
	/* the exact text of one line */
	char want[64];
	snprintf(want, sizeof want, "supply output OFF at %.4f A\n", off);
	assert_non_null(strstr(text, want));
	free(text);
}

/* ------------------------------------------------------------------ */
/* transports                                                          */

static void test_tcp_listener(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	int port = 0;
	assert_int_equal(hb_sim_listen_tcp(sim, HB_SIM_LCR, "127.0.0.1", 0, &port), HB_OK);
	assert_true(port > 0);
	for (int round = 0; round < 2; round++) {
		client c = { .fd = socket(AF_INET, SOCK_STREAM, 0) };
		struct sockaddr_in a = { .sin_family = AF_INET, .sin_port = htons((uint16_t)port) };
		inet_pton(AF_INET, "127.0.0.1", &a.sin_addr);
		assert_int_equal(connect(c.fd, (struct sockaddr *)&a, sizeof a), 0);
		fcntl(c.fd, F_SETFL, fcntl(c.fd, F_GETFL) | O_NONBLOCK);
		expect_idn(sim, &c, "Henrybench,SIM-LCR1,");
		close(c.fd);
		settle(sim, 5);
	}
	assert_int_equal(hb_sim_listen_tcp(sim, HB_SIM_LCR, "no.such.host.invalid", 0, &port), HB_ERR_ARG);
	hb_sim_free(sim);
}

static void test_pty(void **state)
{
	(void)state;
	hb_sim *sim = new_sim(NULL);
	char path[128];
	assert_int_equal(hb_sim_open_pty(sim, HB_SIM_SUPPLY, path, sizeof path), HB_OK);
	for (int round = 0; round < 2; round++) {
		client c = { .fd = open(path, O_RDWR | O_NOCTTY | O_NONBLOCK) };
		assert_true(c.fd >= 0);
		struct termios t;
		tcgetattr(c.fd, &t);
		cfmakeraw(&t);
		tcsetattr(c.fd, TCSANOW, &t);
		expect_idn(sim, &c, "Henrybench,SIM-DCS1,");
		close(c.fd);
		settle(sim, 5);
	}
	hb_sim_free(sim);
}

static void test_inproc(void **state)
{
	(void)state;
	for (int round = 0; round < 2; round++) {
		hb_sim *sim = hb_sim_inproc();
		assert_non_null(sim);
		assert_ptr_equal(hb_sim_inproc(), sim);
		hb_sim_inproc_lock();
		assert_int_equal(hb_sim_set_param(sim, "time_scale", FAST), HB_OK);
		hb_sim_inproc_unlock();
		client c[2];
		client_attach(sim, HB_SIM_LCR, &c[0]);
		client_attach(sim, HB_SIM_SUPPLY, &c[1]);
		char r[256];
		client_send(&c[1], "VOLT 5;CURR 2;OUTP ON");
		client_send(&c[1], "*IDN?");
		assert_int_equal(client_line(NULL, &c[1], r, sizeof r, 2000), 1);
		assert_true(strncmp(r, "Henrybench,SIM-DCS1,", 20) == 0);
		client_send(&c[0], "IMP:READ?");
		assert_int_equal(client_line(NULL, &c[0], r, sizeof r, 2000), 1);
		double state_amps = -1;
		hb_sim_inproc_lock();
		assert_int_equal(hb_sim_get_param(sim, "state.output", &state_amps), HB_OK);
		hb_sim_inproc_unlock();
		assert_near(state_amps, 1, 0);
		client_send(&c[1], "OUTP OFF");
		close(c[0].fd);
		/* the supply client stays open over the shutdown */
		hb_sim_inproc_shutdown();
		close(c[1].fd);
	}
	hb_sim_inproc_shutdown(); /* twice is harmless */
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_l0_closed_form),
		cmocka_unit_test(test_knee_monotone),
		cmocka_unit_test(test_solution_and_derivative),
		cmocka_unit_test(test_settling_and_heating),
		cmocka_unit_test(test_resonance),
		cmocka_unit_test(test_params),
		cmocka_unit_test(test_number_suffixes),
		cmocka_unit_test(test_scpi_commands),
		cmocka_unit_test(test_bias_compliance_heating),
		cmocka_unit_test(test_noise),
		cmocka_unit_test(test_fault_parse),
		cmocka_unit_test(test_fault_delay_late),
		cmocka_unit_test(test_fault_drop_garble_crlf_echo),
		cmocka_unit_test(test_fault_split_error_disconnect),
		cmocka_unit_test(test_fault_deaf_trip),
		cmocka_unit_test(test_log),
		cmocka_unit_test(test_witness_second_connection),
		cmocka_unit_test(test_tcp_listener),
		cmocka_unit_test(test_pty),
		cmocka_unit_test(test_inproc),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
