/* tests/test_cmd_design.c - `core SHAPE --dims`, `part add --core SHAPE:dims` and `design` end to end, against handbook tables and the independent physics of tests/truth_model.h */
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
#include "truth_model.h"

static void assert_rel(double got, double want, double rel, const char *what)
{
	if (!(fabs(got - want) <= rel * fabs(want)))
		fail_msg("%s: got %.10g, want %.10g (relative tolerance %g)", what, got, want, rel);
}

/* ETD 34, the means of the IEC 61185 limits (mm) */
#define ETD34 "A=34.2mm,B=17.3mm,C=10.8mm,D=12.1mm,E=26.3mm,F=10.8mm"

static const char *const le_keys[] = { "le_m", "le", NULL };
static const char *const ae_keys[] = { "Ae_m2", "ae_m2", "Ae", NULL };

/* ETD 34 handbook table (IEC 60205 values, from memory): le 78.6 mm,
 * Ae 97.1 mm^2, Amin 91.6 mm^2; le within 2.5 % (docs/cores.md) */
static void test_core_etd(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "core", "etd", "--dims", ETD34, "--json", NULL);
	if (r.status != 0)
		fail_msg("core etd exited %d: %s", r.status, r.err);
	json_t *o = parse_out(&r);
	static const char *const amin_keys[] = { "Amin_m2", "amin_m2", "Amin", NULL };
	assert_rel(jnum(o, le_keys), 78.6e-3, 0.025, "le");
	assert_rel(jnum(o, ae_keys), 97.1e-6, 0.01, "Ae");
	assert_rel(jnum(o, amin_keys), 91.6e-6, 0.01, "Amin");
	json_decref(o);
	run_free(&r);
	/* a letter missing: usage error, one line */
	hb_run(&r, station_bare, "core", "etd", "--dims", "A=34.2mm,B=17.3mm", NULL);
	assert_int_equal(r.status, 2);
	assert_null(strchr(r.err, '\n') == NULL ? NULL : strchr(strchr(r.err, '\n') + 1, '\n'));
	run_free(&r);
	/* an unknown letter */
	hb_run(&r, station_bare, "core", "e", "--dims", "A=34.2mm,Z=1mm", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

/* part add --core etd:... stores Ae and le of the set and its window
 * height 2D = 24.2 mm (the pair's window) */
static void test_part_core_set(void **state)
{
	(void)state;
	char db[400];
	snprintf(db, sizeof db, "%s/shape.db", tmpdir);
	run r;
	hb_run(&r, station_bare, "--db", db, "part", "add", "ETD-CHOKE", "--nominal", "100uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.1V", "--turns", "20", "--core", "etd:" ETD34, "--gap-at", "spacer", NULL);
	if (r.status != 0)
		fail_msg("part add exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "part", "show", "ETD-CHOKE", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *o = parse_out(&r);
	static const char *const ae[] = { "ae_m2", "Ae_m2", NULL }, *const le[] = { "le_m", "le", NULL };
	static const char *const win[] = { "window_m", "window_height_m", NULL };
	static const char *const shape[] = { "core_shape", NULL }, *const at[] = { "gap_at", NULL };
	assert_rel(jnum(o, ae), 97.1e-6, 0.01, "stored Ae");
	assert_rel(jnum(o, le), 78.6e-3, 0.025, "stored le");
	assert_rel(jnum(o, win), 24.2e-3, 1e-9, "stored window");
	assert_string_equal(jtext(o, shape), "etd");
	assert_string_equal(jtext(o, at), "spacer");
	json_decref(o);
	run_free(&r);
	/* Ae/le typed by hand replace the set */
	hb_run(&r, station_bare, "--db", db, "part", "edit", "ETD-CHOKE", "--ae", "90mm2", "--le", "80mm", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "part", "show", "ETD-CHOKE", "--json", NULL);
	o = parse_out(&r);
	assert_string_equal(jtext(o, shape), "");
	json_decref(o);
	run_free(&r);
	/* a bad set is refused and the part stays as stored */
	hb_run(&r, station_bare, "--db", db, "part", "edit", "ETD-CHOKE", "--core", "etd:A=34.2mm", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
}

/* The demo's store (the simulator's default part, docs/simulator.md):
 * design the gap for 100 uH at 2 A with the part's 27 turns, then put the
 * fitted mu_i and Js the command reports and its gap into the independent
 * magnetic circuit: L at 2 A must be the target. */
static void test_design_on_demo(void **state)
{
	(void)state;
	char out[400], db[460];
	snprintf(out, sizeof out, "%s/demo", tmpdir);
	snprintf(db, sizeof db, "%s/bench.db", out);
	run r;
	hb_run(&r, station_bare, "demo", "--out", out, NULL);
	if (r.status != 0)
		fail_msg("demo exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "design", "--part", "HBX-108G", "--target-l", "100uH", "--at", "2A", "--json",
	       NULL);
	if (r.status != 0)
		fail_msg("design exited %d: %s", r.status, r.err);
	json_t *o = parse_out(&r);
	static const char *const gap_k[] = { "gap_m", NULL }, *const mu_k[] = { "mu_i", NULL }, *const js_k[] = { "Js_T", NULL };
	static const char *const U_k[] = { "U", NULL }, *const law_k[] = { "law", NULL };
	truth_part p = parts[0];
	p.gap = jnum(o, gap_k);
	p.mu_i = jnum(o, mu_k);
	p.js = jnum(o, js_k);
	const char *law = jtext(o, law_k);
	p.law = strcmp(law, "langevin") == 0 ? LAW_LANGEVIN : strcmp(law, "tanh") == 0 ? LAW_TANH : LAW_FROHLICH;
	assert_true(jnum(o, U_k) > 0 && jnum(o, U_k) < 0.05 * p.gap);
	/* the solver's own tolerance is far below 1e-6 */
	assert_rel(t_inductance(&p, 2.0), 100e-6, 1e-6, "L at 2 A with the designed gap");
	json_decref(o);
	run_free(&r);
	/* the turns for a held gap of 0.6 mm */
	hb_run(&r, station_bare, "--db", db, "design", "--part", "HBX-108G", "--target-l", "100uH", "--at", "2A", "--gap",
	       "0.6mm", "--json", NULL);
	assert_int_equal(r.status, 0);
	o = parse_out(&r);
	static const char *const n_k[] = { "turns", NULL };
	p.turns = jnum(o, n_k);
	p.gap = 0.6e-3;
	assert_rel(t_inductance(&p, 2.0), 100e-6, 1e-6, "L at 2 A with the designed turns");
	json_decref(o);
	run_free(&r);
	/* usage errors: both held, a spacer without a core set, no such part */
	hb_run(&r, station_bare, "--db", db, "design", "--part", "HBX-108G", "--target-l", "100uH", "--at", "2A", "--gap",
	       "0.6mm", "--turns", "20", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "design", "--part", "HBX-108G", "--target-l", "100uH", "--at", "2A",
	       "--gap-at", "spacer", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "design", "--part", "NO-SUCH", "--target-l", "100uH", "--at", "2A", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	/* a target no gap reaches: runtime failure naming how close it gets */
	hb_run(&r, station_bare, "--db", db, "design", "--part", "HBX-108G", "--target-l", "10mH", "--at", "2A", NULL);
	assert_int_equal(r.status, 1);
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("cmd-design");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_core_etd),
		cmocka_unit_test(test_part_core_set),
		cmocka_unit_test(test_design_on_demo),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
