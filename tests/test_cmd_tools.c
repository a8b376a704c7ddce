/* tests/test_cmd_tools.c - the `ports`, `identify`, `core` and `plan` commands end to end, against the simulator, IEC 60205 and the MIL-STD-105E tables */
/* posix_openpt, grantpt, unlockpt, ptsname (the fixture's terminal) */
#define _XOPEN_SOURCE 700
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "cli_fixture.h"
#include "cli_json.h"
#include "data/mil_std_105e_single.h"

static void assert_rel(double got, double want, double rel, const char *what)
{
	if (!(fabs(got - want) <= rel * fabs(want)))
		fail_msg("%s: got %.10g, want %.10g (relative tolerance %g)", what, got, want, rel);
}

/* ------------------------------------------------------------------ */
/* ports                                                               */

/* `ports` lists what libserialport finds; docs: pseudo-terminals are not
 * listed (open those with tty:PATH). A pty opened here must not appear,
 * and every entry's resource opens its own port name. */
static void test_ports_lists_serial_ports_not_ptys(void **state)
{
	(void)state;
	/* (A container without pseudo-terminals: the pty check has nothing to look for.) */
	int master = posix_openpt(O_RDWR | O_NOCTTY);
	char pty[128] = "";
	if (master >= 0 && grantpt(master) == 0 && unlockpt(master) == 0)
		snprintf(pty, sizeof pty, "%s", ptsname(master));
	run r;
	hb_run(&r, station_bare, "ports", "--json", NULL);
	if (r.status != 0)
		fail_msg("ports --json exited %d: %s", r.status, r.err);
	json_t *list = parse_out(&r);
	assert_true(json_is_array(list));
	size_t i;
	json_t *e;
	json_array_foreach(list, i, e) {
		static const char *const name_keys[] = { "name", "port", "path", NULL };
		static const char *const res_keys[] = { "resource", "open", NULL };
		const char *name = jtext(e, name_keys), *res = jtext(e, res_keys);
		char want[300];
		snprintf(want, sizeof want, "serial:%s", name);
		assert_string_equal(res, want);
		if (pty[0] && strcmp(name, pty) == 0)
			fail_msg("the pseudo-terminal %s is listed", pty);
	}
	json_decref(list);
	run_free(&r);
	/* The table form runs too, and bad usage is exit 2. */
	hb_run(&r, station_bare, "ports", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "ports", "--no-such-option", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	if (master >= 0)
		close(master);
}

/* ------------------------------------------------------------------ */
/* identify                                                            */

/* The simulator answers *IDN? as "Henrybench,SIM-LCR1,..." and
 * "Henrybench,SIM-DCS1,..." (docs/simulator.md); identify says which is
 * the meter and which the supply, and exits 0 when all answered. */
static void check_identified(json_t *list, const char *lcr_res, const char *supply_res)
{
	static const char *const res_keys[] = { "resource", NULL };
	static const char *const model_keys[] = { "model", NULL };
	static const char *const kind_keys[] = { "kind", "type", NULL };
	assert_true(json_is_array(list));
	assert_int_equal(json_array_size(list), 2);
	json_t *lcr = json_array_get(list, 0), *sup = json_array_get(list, 1);
	assert_string_equal(jtext(lcr, res_keys), lcr_res);
	assert_string_equal(jtext(sup, res_keys), supply_res);
	assert_string_equal(jtext(lcr, model_keys), "SIM-LCR1");
	assert_string_equal(jtext(sup, model_keys), "SIM-DCS1");
	assert_string_equal(jtext(lcr, kind_keys), "lcr");
	assert_string_equal(jtext(sup, kind_keys), "supply");
}

static void test_identify_in_process_simulator(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "identify", "--json", "sim:lcr", "sim:supply", NULL);
	if (r.status != 0)
		fail_msg("identify exited %d: %s", r.status, r.err);
	json_t *list = parse_out(&r);
	check_identified(list, "sim:lcr", "sim:supply");
	json_decref(list);
	run_free(&r);
}

static void test_identify_simulator_over_tcp(void **state)
{
	(void)state;
	sim_server sim;
	sim_start(&sim, NULL);
	run r;
	hb_run(&r, station_bare, "identify", "--json", sim.lcr, sim.supply, NULL);
	int status = r.status;
	json_t *list = status == 0 ? parse_out(&r) : NULL;
	sim_stop(&sim);
	if (status != 0)
		fail_msg("identify exited %d: %s", status, r.err);
	check_identified(list, sim.lcr, sim.supply);
	/* It really asked the instruments over the wire. */
	assert_non_null(strstr(sim.log, "lcr cmd *IDN?"));
	assert_non_null(strstr(sim.log, "supply cmd *IDN?"));
	json_decref(list);
	run_free(&r);
	sim_free(&sim);
}

/* identify's documented exit status: 1 when an instrument fails (nothing
 * listens on port 1), 2 for bad usage (no resource). */
static void test_identify_failures(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "identify", "tcp://127.0.0.1:1", NULL);
	assert_int_equal(r.status, 1);
	run_free(&r);
	hb_run(&r, station_bare, "identify", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

/* ------------------------------------------------------------------ */
/* core                                                                */

/* A ring core of rectangular section, IEC 60205 closed form (also in the
 * ferrite makers' handbooks): with r1, r2 the inner and outer radius and h
 * the height, le = 2 pi ln(r2/r1) / (1/r1 - 1/r2) and
 * Ae = h ln^2(r2/r1) / (1/r1 - 1/r2); Ve = le Ae; L = mu0 mu N^2 Ae / le
 * (ungapped). Computed here, not taken from the program. */
static void test_core_toroid_iec60205(void **state)
{
	(void)state;
	const double od = 25e-3, id = 15e-3, h = 10e-3, mu = 2300, n = 27;
	const double r1 = id / 2, r2 = od / 2, lnr = log(r2 / r1);
	const double le = 2 * M_PI * lnr / (1 / r1 - 1 / r2);
	const double ae = h * lnr * lnr / (1 / r1 - 1 / r2);
	const double mu0 = 4e-7 * M_PI; /* 1.25663706212e-6 since 2019; the difference is 1e-9 relative */
	const double l = mu0 * mu * n * n * ae / le;
	run r;
	hb_run(&r, station_bare, "core", "toroid", "--od", "25mm", "--id", "15mm", "--height", "10mm", "--turns", "27",
	       "--mu", "2300", "--json", NULL);
	if (r.status != 0)
		fail_msg("core toroid exited %d: %s", r.status, r.err);
	json_t *o = parse_out(&r);
	static const char *const le_keys[] = { "le_m", "le", NULL };
	static const char *const ae_keys[] = { "Ae_m2", "ae_m2", "Ae", NULL };
	static const char *const ve_keys[] = { "Ve_m3", "ve_m3", "Ve", NULL };
	static const char *const l_keys[] = { "L_H", "l_h", "inductance_H", NULL };
	assert_rel(jnum(o, le_keys), le, 1e-8, "le");
	assert_rel(jnum(o, ae_keys), ae, 1e-8, "Ae");
	assert_rel(jnum(o, ve_keys), le * ae, 1e-8, "Ve");
	assert_rel(jnum(o, l_keys), l, 1e-6, "L");
	json_decref(o);
	run_free(&r);
	/* An inner diameter at or above the outer one is no ring: usage error. */
	hb_run(&r, station_bare, "core", "toroid", "--od", "15mm", "--id", "25mm", "--height", "10mm", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

/* ------------------------------------------------------------------ */
/* plan                                                                */

static const ref_plan *ref_lookup(const ref_plan *t, size_t n, char letter, const char *aql)
{
	for (size_t i = 0; i < n; i++)
		if (t[i].letter == letter && strcmp(t[i].aql, aql) == 0)
			return &t[i];
	fail_msg("no reference cell %c at AQL %s", letter, aql);
	return NULL;
}

/* Letter for lot and level (index into "S-1".."III") from Table I. */
static char ref_letter(long lot, int level)
{
	for (size_t i = 0; i < sizeof ref_table1 / sizeof ref_table1[0]; i++)
		if (lot >= ref_table1[i].lo && (ref_table1[i].hi < 0 || lot <= ref_table1[i].hi))
			return ref_table1[i].letters[level];
	fail_msg("lot %ld is in no Table I range", lot);
	return 0;
}

/* `plan` against MIL-STD-105E Tables I, II-A and II-B (ISO 2859-1 shares
 * the letters and the normal and tightened single-sampling plans), copied
 * in tests/data/mil_std_105e_single.h: code letter, n, Ac, Re, with the
 * arrows followed, and the whole lot inspected when n reaches it. */
static void test_plan_matches_tables(void **state)
{
	(void)state;
	static const struct {
		const char *lot, *aql, *level, *severity;
	} cases[] = {
		{ "2000", "1.0", "II", "normal" },  { "2000", "1.0", "II", "tightened" }, { "200", "1.5", "II", "tightened" },
		{ "10000", "0.65", "I", "normal" }, { "500", "2.5", "S-3", "normal" },    { "35000", "0.10", "III", "normal" },
		{ "100", "0.010", "II", "normal" }, { "1200", "4.0", "S-4", "tightened" },
	};
	static const char *const level_names[] = { "S-1", "S-2", "S-3", "S-4", "I", "II", "III" };
	static const char *const initial_keys[] = { "initial_code_letter", "initial_letter", NULL };
	static const char *const tn_keys[] = { "table_sample_size", NULL };
	static const char *const n_keys[] = { "sample_size", "n", NULL };
	static const char *const ac_keys[] = { "ac", "accept", "Ac", NULL };
	static const char *const re_keys[] = { "re", "reject", "Re", NULL };
	for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
		long lot = atol(cases[c].lot);
		int level = -1;
		for (int l = 0; l < 7; l++)
			if (strcmp(level_names[l], cases[c].level) == 0)
				level = l;
		assert_true(level >= 0);
		char letter = ref_letter(lot, level);
		bool tight = strcmp(cases[c].severity, "tightened") == 0;
		const ref_plan *want = tight ? ref_lookup(ref_tightened, sizeof ref_tightened / sizeof ref_tightened[0],
							  letter, cases[c].aql)
					     : ref_lookup(ref_normal, sizeof ref_normal / sizeof ref_normal[0], letter,
							  cases[c].aql);
		assert_false(want->uncertain);
		run r;
		hb_run(&r, station_bare, "plan", "--lot-size", cases[c].lot, "--aql", cases[c].aql, "--level",
		       cases[c].level, "--severity", cases[c].severity, "--json", NULL);
		if (r.status != 0)
			fail_msg("plan %s/%s exited %d: %s", cases[c].lot, cases[c].aql, r.status, r.err);
		json_t *o = parse_out(&r);
		if (jtext(o, initial_keys)[0] != letter)
			fail_msg("lot %ld level %s: letter %s, Table I says %c", lot, cases[c].level, jtext(o, initial_keys),
				 letter);
		assert_int_equal((long)jnum(o, tn_keys), want->n);
		assert_int_equal((long)jnum(o, n_keys), want->n < lot ? want->n : lot);
		assert_int_equal((int)jnum(o, ac_keys), want->ac);
		assert_int_equal((int)jnum(o, re_keys), want->re);
		json_decref(o);
		run_free(&r);
	}
	/* Outside the AQL series: usage error. */
	run r;
	hb_run(&r, station_bare, "plan", "--lot-size", "2000", "--aql", "1.2", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("cmd-tools");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_ports_lists_serial_ports_not_ptys),
		cmocka_unit_test(test_identify_in_process_simulator),
		cmocka_unit_test(test_identify_simulator_over_tcp),
		cmocka_unit_test(test_identify_failures),
		cmocka_unit_test(test_core_toroid_iec60205),
		cmocka_unit_test(test_plan_matches_tables),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
