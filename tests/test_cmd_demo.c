/* tests/test_cmd_demo.c - `demo` end to end (exit 0, the sweeps it promises, the same readings twice in virtual time) and `fit --fix` on the demo's store */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "db/hb_db.h"

static char out1[400], out2[400], db1[420], db2[420];
static int demo1_status = -1, demo2_status = -1;

static void run_demo(const char *dir, int *status)
{
	run r;
	hb_run(&r, station_bare, "demo", "--out", dir, NULL);
	*status = r.status;
	if (r.status != 0)
		print_error("demo --out %s exited %d: %s\n", dir, r.status, r.err);
	run_free(&r);
}

/* The demo runs twice, once per store, for all the tests below. */
static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("cmd-demo") != 0)
		return -1;
	snprintf(out1, sizeof out1, "%s/demo-1", tmpdir);
	snprintf(out2, sizeof out2, "%s/demo-2", tmpdir);
	snprintf(db1, sizeof db1, "%s/bench.db", out1);
	snprintf(db2, sizeof db2, "%s/bench.db", out2);
	run_demo(out1, &demo1_status);
	run_demo(out2, &demo2_status);
	return 0;
}

static hb_db *open_store(const char *path)
{
	hb_db *db = NULL;
	if (hb_db_open(path, &db) != HB_OK)
		fail_msg("cannot open %s", path);
	return db;
}

static void all_sweeps(hb_db *db, hb_db_sweep **list, size_t *n)
{
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	assert_int_equal(hb_db_sweep_list(db, &f, list, n), HB_OK);
}

/* The demo's own description (`henrybench demo --help`): bias sweeps of
 * three prototype units, a frequency sweep of one, a small lot inspection
 * and the reports, all in DIR/bench.db. */
static void test_demo_stores_what_it_promises(void **state)
{
	(void)state;
	assert_int_equal(demo1_status, 0);
	static const char *const files[] = { "report.html", "lot-report.html", "part-report.html" };
	for (size_t i = 0; i < 3; i++) {
		char p[500];
		snprintf(p, sizeof p, "%s/%s", out1, files[i]);
		if (access(p, R_OK) != 0)
			fail_msg("the demo wrote no %s", p);
	}
	hb_db *db = open_store(db1);
	hb_db_sweep *sw = NULL;
	size_t n = 0;
	all_sweeps(db, &sw, &n);
	int freq = 0, proto_bias = 0, lot_bias = 0;
	for (size_t i = 0; i < n; i++) {
		if (sw[i].status != HB_DB_COMPLETE)
			fail_msg("sweep %lld ended %d: %s", (long long)sw[i].id, sw[i].status, sw[i].status_reason);
		assert_true(sw[i].n_points > 0);
		if (sw[i].kind == HB_DB_SWEEP_FREQUENCY)
			freq++;
		else if (sw[i].lot_code[0])
			lot_bias++;
		else
			proto_bias++;
	}
	assert_int_equal(freq, 1);
	/* three prototypes, each swept once */
	assert_int_equal(proto_bias, 3);
	/* the lot inspection swept at least one unit */
	assert_true(lot_bias >= 1);
	hb_db_sweeps_free(sw);
	hb_db_close(db);
}

/* In the simulator's virtual time a seeded run repeats to the bit
 * (drivers/hb_drivers.h, hb_sim_inproc_virtual): two demo runs store the
 * same sweeps with the same readings and the same measured currents. */
static void test_demo_twice_same_readings(void **state)
{
	(void)state;
	assert_int_equal(demo1_status, 0);
	assert_int_equal(demo2_status, 0);
	hb_db *a = open_store(db1), *b = open_store(db2);
	hb_db_sweep *sa = NULL, *sb = NULL;
	size_t na = 0, nb = 0;
	all_sweeps(a, &sa, &na);
	all_sweeps(b, &sb, &nb);
	assert_int_equal(na, nb);
	assert_true(na >= 5);
	for (size_t i = 0; i < na; i++) {
		assert_int_equal(sa[i].kind, sb[i].kind);
		assert_string_equal(sa[i].serial, sb[i].serial);
		hb_db_point *pa = NULL, *pb = NULL;
		size_t ka = 0, kb = 0;
		assert_int_equal(hb_db_points_get(a, sa[i].id, &pa, &ka), HB_OK);
		assert_int_equal(hb_db_points_get(b, sb[i].id, &pb, &kb), HB_OK);
		assert_int_equal(ka, kb);
		for (size_t k = 0; k < ka; k++) {
			bool same = pa[k].primary == pb[k].primary && pa[k].secondary == pb[k].secondary &&
				    pa[k].freq_hz == pb[k].freq_hz && pa[k].bias_set_a == pb[k].bias_set_a &&
				    (pa[k].bias_meas_a == pb[k].bias_meas_a ||
				     (isnan(pa[k].bias_meas_a) && isnan(pb[k].bias_meas_a)));
			if (!same)
				fail_msg("sweep %s #%zu point %zu: L %.17g / %.17g, I %.17g / %.17g", sa[i].serial, i, k,
					 pa[k].primary, pb[k].primary, pa[k].bias_meas_a, pb[k].bias_meas_a);
		}
		hb_db_points_free(pa);
		hb_db_points_free(pb);
	}
	hb_db_sweeps_free(sa);
	hb_db_sweeps_free(sb);
	hb_db_close(a);
	hb_db_close(b);
}

/* ------------------------------------------------------------------ */
/* fit --fix                                                           */

static bool fit_value(const hb_db_fit *f, const char *name, double *value, double *se)
{
	for (size_t i = 0; i < f->n_values; i++)
		if (strcmp(f->values[i].name, name) == 0) {
			*value = f->values[i].value;
			*se = f->values[i].std_error;
			return true;
		}
	return false;
}

/* The newest core fit of the first prototype's bias sweep. */
static void latest_core_fit(int64_t sweep_id, hb_db_fit *out)
{
	hb_db *db = open_store(db1);
	hb_db_fit_init(out);
	int rc = hb_db_fit_get_latest(db, sweep_id, "core", out);
	if (rc != HB_OK) {
		/* The model is stored with its law ("core:LAW"): ask for each law. */
		static const char *const laws[] = { "core:frohlich-kennelly", "core:langevin", "core:tanh" };
		hb_db_fit best;
		bool found = false;
		for (size_t i = 0; i < 3; i++) {
			hb_db_fit f;
			hb_db_fit_init(&f);
			if (hb_db_fit_get_latest(db, sweep_id, laws[i], &f) == HB_OK && (!found || f.id > best.id)) {
				best = f;
				found = true;
			}
		}
		if (!found)
			fail_msg("no core fit stored for sweep %lld", (long long)sweep_id);
		*out = best;
	}
	hb_db_close(db);
}

/* A held parameter comes back at the held value, without an uncertainty
 * of its own, and the others are fitted again. Holding mu_i below the
 * free fit's value must move the gap the way the gapped-core relation
 * says: mu_e = mu_i / (1 + mu_i g / le) (IEC 60205; `core --help`), so at
 * the same mu_e (fixed by L0 = mu0 mu_e N^2 Ae / le, which the data pin)
 * g = le (1/mu_e - 1/mu_i). The prediction uses the part's le and the
 * mu_e that the measured L0 of the part gives; the fit has the
 * saturation region to match as well, so 3 % is allowed. */
static void test_fit_fix_holds_one_and_refits_the_others(void **state)
{
	(void)state;
	assert_int_equal(demo1_status, 0);
	hb_db *db = open_store(db1);
	hb_db_sweep *sw = NULL;
	size_t n = 0;
	all_sweeps(db, &sw, &n);
	int64_t id = 0;
	for (size_t i = 0; i < n; i++)
		if (sw[i].kind == HB_DB_SWEEP_BIAS && !sw[i].lot_code[0])
			id = sw[i].id; /* newest first: ends at the first prototype */
	hb_db_part part;
	assert_int_equal(hb_db_part_get_id(db, sw[0].part_id, &part), HB_OK);
	hb_db_sweeps_free(sw);
	hb_db_close(db);
	assert_true(id > 0);
	char ids[32];
	snprintf(ids, sizeof ids, "%lld", (long long)id);

	run r;
	hb_run(&r, station_bare, "--db", db1, "fit", ids, "--model", "core", NULL);
	if (r.status != 0)
		fail_msg("fit %s exited %d: %s", ids, r.status, r.err);
	run_free(&r);
	hb_db_fit free_fit;
	latest_core_fit(id, &free_fit);
	double mu_free = NAN, gap_free = NAN, v = NAN, se = NAN;
	assert_true(fit_value(&free_fit, "core.mu_i", &mu_free, &se));
	assert_true(fit_value(&free_fit, "core.gap", &gap_free, &se));
	assert_true(se > 0);

	const double held = 2000;
	assert_true(held < 0.95 * mu_free);
	hb_run(&r, station_bare, "--db", db1, "fit", ids, "--model", "core", "--fix", "mu_i=2000", NULL);
	if (r.status != 0 && r.status != 1)
		fail_msg("fit --fix exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_db_fit fixed;
	latest_core_fit(id, &fixed);
	assert_true(fixed.id > free_fit.id);
	assert_true(fit_value(&fixed, "core.mu_i", &v, &se));
	assert_true(v == held);
	assert_true(isnan(se) || se == 0);

	double gap = NAN, l0 = NAN, l0se = NAN;
	assert_true(fit_value(&fixed, "core.gap", &gap, &se));
	assert_true(isfinite(se) && se > 0); /* fitted, with an uncertainty */
	double js = NAN, jsse = NAN;
	assert_true(fit_value(&fixed, "core.Js", &js, &jsse));
	assert_true(isfinite(jsse) && jsse > 0);
	if (!fit_value(&fixed, "L0_part", &l0, &l0se))
		assert_true(fit_value(&fixed, "L0", &l0, &l0se));
	const double mu0 = 4e-7 * M_PI;
	double mu_e = l0 * part.le_m / (mu0 * part.turns * part.turns * part.ae_m2);
	double predicted = part.le_m * (1 / mu_e - 1 / held);
	if (!(fabs(gap - predicted) <= 0.03 * predicted))
		fail_msg("gap with mu_i held at %g: %.6g m, the gapped-core relation says %.6g m", held, gap, predicted);
	/* and it moved from the free fit's, the way the relation says */
	assert_true(gap < gap_free);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_demo_stores_what_it_promises),
		cmocka_unit_test(test_demo_twice_same_readings),
		cmocka_unit_test(test_fit_fix_holds_one_and_refits_the_others),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
