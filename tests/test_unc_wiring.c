/* tests/test_unc_wiring.c - uncertainty wired into the bench (issue 10): accuracy specifications (drivers/accuracy.c, src/bench/station.c, session.c), GUM budgets of the fit (src/quality/budget.c, analysis.c, analysis_print.c), decision rules in verdicts (analysis_judge.c, decision.c, inspect.c, src/report/report.c), Cpk with confidence (history.c), coverage on the simulator with a meter gain error (drivers/sim/) */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "db/hb_db.h"
#include "drivers/hb_drivers.h"
#include "src/cli/demo.h"
#include "src/bench/bench.h"
#include "src/quality/quality.h"
#include "src/report/report.h"

#define TIME_SCALE 0.01

static char tmpdir[256];
static int db_counter;

static void db_path_new(char *buf, size_t cap)
{
	snprintf(buf, cap, "%s/unc-%d.db", tmpdir, ++db_counter);
}

static int group_setup(void **state)
{
	(void)state;
	snprintf(tmpdir, sizeof tmpdir, "/tmp/hb-test-unc-XXXXXX");
	if (!mkdtemp(tmpdir))
		return -1;
	unsetenv("HENRYBENCH_PROFILE_PATH");
	unsetenv("HENRYBENCH_STATION");
	signal(SIGPIPE, SIG_IGN);
	return 0;
}

static int group_teardown(void **state)
{
	(void)state;
	DIR *d = opendir(tmpdir);
	if (d) {
		struct dirent *e;
		while ((e = readdir(d))) {
			if (strcmp(e->d_name, ".") == 0 || strcmp(e->d_name, "..") == 0)
				continue;
			char p[600];
			snprintf(p, sizeof p, "%s/%s", tmpdir, e->d_name);
			unlink(p);
		}
		closedir(d);
	}
	rmdir(tmpdir);
	return 0;
}

static int bench_setup(void **state)
{
	(void)state;
	return hb_demo_configure_sim(TIME_SCALE, 7, 0) == HB_OK ? 0 : -1;
}

static int bench_teardown(void **state)
{
	(void)state;
	hb_sim_inproc_shutdown();
	return 0;
}

/* ---------------- accuracy as data (drivers/accuracy.c) ---------------- */

/* The data-sheet forms of docs/profiles.md "Accuracy". */
static void test_accuracy_parse(void **state)
{
	(void)state;
	double rel, off, hz;
	char err[200];
	assert_int_equal(hb_accuracy_parse_rel("0.05% + 1mA", "A", &rel, &off, err, sizeof err), HB_OK);
	assert_true(fabs(rel - 0.0005) < 1e-15);
	assert_true(fabs(off - 0.001) < 1e-15);
	assert_int_equal(hb_accuracy_parse_rel("0.1%", NULL, &rel, &off, err, sizeof err), HB_OK);
	assert_true(fabs(rel - 0.001) < 1e-15 && off == 0);
	/* a meter's basic accuracy has no offset term; wrong units are errors */
	assert_int_equal(hb_accuracy_parse_rel("0.1% + 1mA", NULL, &rel, &off, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_accuracy_parse_rel("0.05% + 1mV", "A", &rel, &off, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_accuracy_parse_rel("much", NULL, &rel, &off, err, sizeof err), HB_ERR_ARG);
	assert_int_equal(hb_accuracy_parse_freq_above("100kHz:0.05%", &hz, &rel, err, sizeof err), HB_OK);
	assert_true(hz == 100e3 && fabs(rel - 0.0005) < 1e-15);
	assert_int_equal(hb_accuracy_parse_freq_above("100kHz", &hz, &rel, err, sizeof err), HB_ERR_ARG);

	hb_accuracy a;
	hb_accuracy_init(&a);
	assert_true(isnan(hb_accuracy_rel_at(&a, 1e3)));
	a.rel = 0.001;
	a.freq_above_hz = 100e3;
	a.freq_above_rel = 0.0005;
	/* "above": at the corner the basic term holds */
	assert_true(fabs(hb_accuracy_rel_at(&a, 100e3) - 0.001) < 1e-15);
	assert_true(fabs(hb_accuracy_rel_at(&a, 200e3) - 0.0015) < 1e-15);
}

/* The generic profiles carry illustrative values marked as placeholders. */
static void test_generic_profiles_carry_placeholders(void **state)
{
	(void)state;
	char err[400];
	hb_profile *p = NULL;
	assert_int_equal(hb_profile_find("generic-lcr", &p, err, sizeof err), HB_OK);
	hb_accuracy a;
	hb_profile_lcr_accuracy(p, &a);
	assert_true(fabs(a.rel - 0.001) < 1e-15);
	assert_true(a.freq_above_hz == 100e3);
	assert_true(a.placeholder);
	hb_profile_free(p);
	assert_int_equal(hb_profile_find("generic-supply", &p, err, sizeof err), HB_OK);
	hb_profile_supply_accuracy(p, &a);
	assert_true(fabs(a.rel - 0.0005) < 1e-15 && fabs(a.offset - 0.001) < 1e-15);
	assert_true(a.placeholder);
	hb_profile_free(p);
}

/* A malformed accuracy is an error at load naming the key. */
static void test_profile_rejects_bad_accuracy(void **state)
{
	(void)state;
	char path[512], err[400];
	snprintf(path, sizeof path, "%s/bad.ini", tmpdir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fprintf(f, "[profile]\nname = bad\nkind = supply\n[supply]\nvoltage = VOLT {volts:real}\n"
		   "current = CURR {amps:real}\noutput.on = OUTP ON\noutput.off = OUTP OFF\n"
		   "measure.current = MEAS:CURR?\naccuracy.current = 0.05 percent\n");
	fclose(f);
	hb_profile *p = NULL;
	assert_int_not_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_non_null(strstr(err, "accuracy.current"));
	hb_profile_free(p);
}

static void small_plan(hb_sweep_plan *plan)
{
	hb_sweep_plan_defaults(plan);
	plan->from = 0;
	plan->to = 4;
	plan->steps = 5;
	plan->settle = HB_SETTLE_FIXED;
	plan->settle_time = 0.03;
	plan->limits.max_current = 5;
	plan->limits.max_voltage = 2;
	plan->limits.max_power = 10;
	plan->limits.ramp_rate = 50;
}

static int64_t measure(hb_db *db, const hb_station *st, const char *serial)
{
	hb_db_part part;
	hb_demo_part(&part);
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &supply), HB_OK);
	hb_sweep_plan plan;
	small_plan(&plan);
	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = st, .ambient_c = 23 };
	int64_t id = 0;
	hb_sweep_result res;
	assert_int_equal(hb_session_measure(&s, &part, serial, 0, &plan, NULL, &id, &res), HB_OK);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	return id;
}

/* src/bench/session.c records the accuracy in force: the profile's, and the
 * station file's [accuracy] where it states one. */
static void test_session_records_accuracy(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	int64_t id = measure(db, &st, "A-1");
	hb_db_sweep sw;
	assert_int_equal(hb_db_sweep_get(db, id, &sw), HB_OK);
	assert_true(fabs(sw.meter_accuracy_rel - 0.001) < 1e-15);
	assert_non_null(strstr(sw.meter_accuracy, "placeholder"));
	assert_true(fabs(sw.supply_accuracy_rel - 0.0005) < 1e-15);
	assert_true(fabs(sw.supply_accuracy_offset_a - 0.001) < 1e-15);

	/* the station file overrides the profile */
	char spath[512];
	snprintf(spath, sizeof spath, "%s/station.ini", tmpdir);
	FILE *f = fopen(spath, "w");
	assert_non_null(f);
	fprintf(f, "[station]\nname = s\ndecision_rule = guarded\nguard_r = 1\n[accuracy]\nmeter = 0.25%%\n"
		   "supply.current = 0.1%% + 2mA\n");
	fclose(f);
	setenv("HENRYBENCH_STATION", spath, 1);
	char err[300];
	hb_station fs;
	assert_int_equal(hb_station_load(&fs, err, sizeof err), HB_OK);
	unsetenv("HENRYBENCH_STATION");
	st.meter_accuracy = fs.meter_accuracy;
	st.supply_accuracy = fs.supply_accuracy;
	snprintf(st.decision_rule, sizeof st.decision_rule, "%s", fs.decision_rule);
	st.guard_r = fs.guard_r;
	id = measure(db, &st, "A-2");
	assert_int_equal(hb_db_sweep_get(db, id, &sw), HB_OK);
	assert_true(fabs(sw.meter_accuracy_rel - 0.0025) < 1e-15);
	assert_non_null(strstr(sw.meter_accuracy, "station file"));
	assert_true(fabs(sw.supply_accuracy_offset_a - 0.002) < 1e-15);
	assert_string_equal(sw.station_decision_rule, "guarded");
	assert_true(sw.station_guard_r == 1);
	hb_db_close(db);
}


/* ---------------- budgets (src/quality/budget.c, analysis.c) ---------------- */

static int64_t measure_with(hb_db *db, const hb_station *st, const char *serial, double ambient_c, double to_a,
			    int steps)
{
	hb_db_part part;
	hb_demo_part(&part);
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &supply), HB_OK);
	hb_sweep_plan plan;
	small_plan(&plan);
	plan.frequency = 100e3;
	plan.to = to_a;
	plan.steps = steps;
	plan.limits.max_current = to_a + 1;
	plan.limits.max_voltage = 5;
	plan.limits.max_power = 50;
	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = st, .ambient_c = ambient_c };
	int64_t id = 0;
	hb_sweep_result res;
	assert_int_equal(hb_session_measure(&s, &part, serial, 0, &plan, NULL, &id, &res), HB_OK);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	return id;
}

static const hb_budget_input *input_named(const hb_budget *bg, const char *name)
{
	for (size_t i = 0; i < bg->n; i++)
		if (strcmp(bg->in[i].input, name) == 0)
			return &bg->in[i];
	return NULL;
}

/*
 * The budget of L0 on a demo-like sweep (the demo part, 0 to 8 A) carries
 * the meter's accuracy as a Type B term: a +-0.1 % specification is a
 * rectangular distribution, u = 0.001 L0 / sqrt(3) (JCGM 100:2008 4.3.7),
 * and U = k sqrt(u_A^2 + u_B^2) with u_A the fit's standard error (the
 * law of propagation, 5.1.2, with c = 1 and c = L0).
 */
static void test_l0_budget_has_meter_term(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	int64_t id = measure_with(db, &st, "B-1", 23.0, 8, 25);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *s = calloc(1, sizeof *s);
	assert_non_null(s);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	const hb_budget *bg = hb_analysis_budget(s, "L0");
	assert_non_null(bg);
	double L0 = s->bias.modelfree.L0, uA = s->bias.modelfree.L0_std_err;
	assert_true(L0 > 90e-6 && L0 < 130e-6);
	const hb_budget_input *m = input_named(bg, "meter gain");
	assert_non_null(m);
	char msrc[sizeof m->source];
	snprintf(msrc, sizeof msrc, "%s", m->source);
	assert_non_null(strstr(msrc, "meter accuracy"));
	double uB = 0.001 * L0 / sqrt(3.0);
	assert_true(fabs(m->contribution - uB) < 1e-9 * uB);
	/* k from the stated 95.45 % and the budget's nu_eff; here u_B dominates, nu_eff is large, k near 2 */
	/* Welch-Satterthwaite (GUM G.4.1) from the stated inputs: the meter's term
	 * is exactly known (infinite dof), so nu_eff = u_c^4 / (u_A^4 / nu_A) */
	const hb_budget_input *ta = input_named(bg, "L0 fit (Type A)");
	assert_non_null(ta);
	assert_true(ta->u == uA && ta->dof >= 1);
	double uc2 = uA * uA + uB * uB;
	double nu = uc2 * uc2 / (uA * uA * uA * uA / ta->dof);
	assert_true(fabs(bg->dof - nu) < 1e-9 * nu);
	double k = hb_unc_coverage_factor(floor(nu), HB_UNC_P_K2);
	assert_true(fabs(bg->k - k) < 1e-9);
	double U = k * sqrt(uc2);
	assert_true(fabs(bg->U - U) < 1e-9 * U);
	/* far more than the k = 1 standard error the tool printed before */
	assert_true(bg->U > 2 * uA);

	/* the drop currents: the meter's gain cancels, the current's accuracy enters with c = 1 */
	const hb_budget *d20 = hb_analysis_budget(s, "I_drop20");
	assert_non_null(d20);
	assert_true(input_named(d20, "meter gain")->contribution == 0);
	const hb_budget_input *bi = input_named(d20, "bias current");
	assert_non_null(bi);
	double a = 0.0005 * d20->value + 0.001;
	assert_true(fabs(bi->u - a / sqrt(3.0)) < 1e-12);
	/* mu_i, gap, Js and the physical gap have budgets with the fringing model in the last */
	assert_non_null(hb_analysis_budget(s, "core.mu_i"));
	assert_non_null(hb_analysis_budget(s, "core.gap"));
	assert_non_null(hb_analysis_budget(s, "core.Js"));
	/* mu_e is L0 in other units: the same relative expanded uncertainty when the meter term dominates */
	const hb_budget *me = hb_analysis_budget(s, "core.mu_e");
	assert_non_null(me);
	assert_true(fabs(input_named(me, "meter gain")->contribution / me->value - uB / L0) < 1e-9);
	const hb_budget *gp = hb_analysis_budget(s, "core.gap_physical");
	assert_non_null(gp);
	assert_non_null(input_named(gp, "fringing model"));
	assert_true(input_named(gp, "meter gain") != NULL && isfinite(input_named(gp, "meter gain")->c));

	/* stored with the fit, and in the JSON of the one value shape */
	hb_db_fit_unc *rows = NULL;
	size_t nr = 0;
	assert_int_equal(hb_db_fit_unc_list(db, s->fit_id, &rows, &nr), HB_OK);
	assert_true(nr == s->n_budgets);
	const hb_db_fit_unc *l0row = NULL;
	for (size_t i = 0; i < nr; i++)
		if (strcmp(rows[i].name, "L0") == 0)
			l0row = &rows[i];
	assert_non_null(l0row);
	assert_true(fabs(l0row->U - bg->U) < 1e-9 * bg->U);
	/* every DCR input is a specification: infinite dof, stored and read back as such */
	for (size_t i = 0; i < nr; i++)
		if (strcmp(rows[i].name, "DCR") == 0)
			assert_true(isinf(rows[i].dof) && rows[i].dof > 0);
	json_t *o = hb_budget_add_stored_json(json_object(), l0row);
	assert_true(fabs(json_real_value(json_object_get(o, "U")) - bg->U) < 1e-9 * bg->U);
	json_t *b0 = json_array_get(json_object_get(o, "budget"), 1);
	assert_string_equal(json_string_value(json_object_get(b0, "input")), "meter gain");
	json_decref(o);
	json_t *j = hb_analysis_summary_json(s);
	json_t *jl0 = json_object_get(json_object_get(j, "values"), "L0");
	assert_true(json_is_real(json_object_get(jl0, "U")));
	assert_true(json_is_real(json_object_get(jl0, "std_err")));
	assert_true(json_array_size(json_object_get(jl0, "budget")) == 2);
	json_decref(j);
	/* the text table */
	char *buf = NULL;
	size_t len = 0;
	FILE *mf = open_memstream(&buf, &len);
	hb_analysis_print_budget(mf, rows, nr);
	fclose(mf);
	const char *text = buf ? buf : "";
	assert_non_null(strstr(text, "meter gain"));
	assert_non_null(strstr(text, "fringing model"));
	assert_non_null(strstr(text, "nu_eff"));
	free(buf);
	hb_db_fit_uncs_free(rows);
	free(s);
	hb_db_close(db);
}

/* DCR referred to 20 C with copper's 0.00393/K from the stored ambient
 * (R20 = R_T / (1 + 0.00393 (T - 20))); without a temperature the value is
 * as measured and says it is uncorrected. */
static void test_dcr_referral(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	int64_t warm = measure_with(db, &st, "D-1", 30.0, 4, 9);
	int64_t none = measure_with(db, &st, "D-2", NAN, 4, 9);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *s = calloc(1, sizeof *s);
	assert_non_null(s);
	assert_int_equal(hb_analysis_sweep(db, warm, &opt, s), HB_OK);
	assert_true(isfinite(s->dcr_ohm));
	double r20 = s->dcr_ohm / (1 + 0.00393 * (30.0 - 20.0));
	assert_true(fabs(s->dcr_ref_ohm - r20) < 1e-12 * r20);
	const hb_budget *bg = hb_analysis_budget(s, "DCR");
	assert_non_null(bg);
	assert_non_null(strstr(bg->note, "referred to 20 C from 30.0 C"));
	assert_true(input_named(bg, "T") != NULL);
	/* the verdict judges the referred value */
	for (size_t i = 0; i < s->n_checks; i++)
		if (strcmp(s->checks[i].name, "DCR") == 0)
			assert_true(fabs(s->checks[i].check.measured - r20) < 1e-12 * r20);
	assert_int_equal(hb_analysis_sweep(db, none, &opt, s), HB_OK);
	assert_true(isnan(s->dcr_ref_ohm));
	bg = hb_analysis_budget(s, "DCR");
	assert_non_null(bg);
	assert_true(bg->value == s->dcr_ohm);
	assert_non_null(strstr(bg->note, "uncorrected"));
	bool noted = false;
	for (size_t i = 0; i < s->n_checks; i++)
		if (strcmp(s->checks[i].name, "DCR") == 0)
			noted = strstr(s->checks[i].note, "uncorrected") != NULL;
	assert_true(noted);
	free(s);
	hb_db_close(db);
}

/* ---------------- decision rules in verdicts (src/quality/analysis_judge.c) ---------------- */

static const hb_analysis_check *check_named(const hb_analysis_summary *s, const char *name)
{
	for (size_t i = 0; i < s->n_checks; i++)
		if (strcmp(s->checks[i].name, name) == 0)
			return &s->checks[i];
	return NULL;
}

/*
 * A part whose L0 lies 0.05 % inside its upper tolerance limit, measured
 * with U of about 0.3 %: simple acceptance passes it; the non-binary rule
 * with guard band w = r U (ILAC-G8:2019 4.2.3) makes it a conditional pass;
 * the guarded binary rule (4.2.2) rejects it (acceptance limit TU - U) and
 * states the acceptance limits. The verdict stored says which rule and U.
 */
static void test_guard_band_just_inside_is_conditional(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	int64_t id = measure_with(db, &st, "G-1", 23.0, 8, 25);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *s = calloc(1, sizeof *s);
	assert_non_null(s);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	double L0 = s->bias.modelfree.L0;
	/* the tolerance's upper limit 0.05 % above the measured L0 */
	hb_db_part part;
	assert_int_equal(hb_db_part_get(db, "HBX-108G", &part), HB_OK);
	part.tolerance = 0.10;
	part.nominal_h = L0 * 1.0005 / 1.10;
	snprintf(part.decision_rule, sizeof part.decision_rule, "simple");
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	const hb_analysis_check *k = check_named(s, "L0");
	assert_non_null(k);
	assert_int_equal(k->decision.rule, HB_DECISION_SIMPLE);
	assert_int_equal(k->decision.outcome, HB_DECISION_PASS);
	double U = hb_analysis_budget(s, "L0")->U;
	assert_true(U > 0.001 * L0); /* U well above the 0.05 % margin */

	snprintf(part.decision_rule, sizeof part.decision_rule, "non-binary");
	part.guard_r = 1;
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	k = check_named(s, "L0");
	assert_int_equal(k->decision.rule, HB_DECISION_NONBINARY);
	assert_int_equal(k->decision.outcome, HB_DECISION_CONDITIONAL_PASS);
	assert_true(fabs(k->decision.U - U) < 1e-12 * U);
	assert_int_equal(s->overall, HB_OVERALL_CONDITIONAL);
	hb_db_verdict *vs = NULL;
	size_t nv = 0;
	assert_int_equal(hb_db_verdict_list(db, id, &vs, &nv), HB_OK);
	const hb_db_verdict *v = NULL;
	for (size_t i = 0; i < nv; i++)
		if (strcmp(vs[i].check_name, "L0") == 0)
			v = &vs[i];
	assert_non_null(v);
	assert_int_equal(v->outcome, HB_DB_CONDITIONAL_PASS);
	assert_string_equal(v->decision_rule, "non-binary");
	assert_true(fabs(v->expanded_u - U) < 1e-9 * U);
	assert_true(v->coverage_k > 1.9);
	assert_true(fabs(v->accept_high - (k->check.high - U)) < 1e-9 * U);
	json_t *sv = hb_analysis_stored_verdict_json(v, "H");
	assert_string_equal(json_string_value(json_object_get(sv, "outcome")), "conditional-pass");
	assert_string_equal(json_string_value(json_object_get(json_object_get(sv, "decision_rule"), "name")), "non-binary");
	assert_true(fabs(json_real_value(json_object_get(sv, "U")) - U) < 1e-9 * U);
	json_decref(sv);
	hb_db_verdicts_free(vs);
	/* JSON and text state the rule */
	json_t *j = hb_analysis_check_json(k);
	assert_string_equal(json_string_value(json_object_get(j, "outcome")), "conditional-pass");
	json_t *r = json_object_get(j, "decision_rule");
	assert_string_equal(json_string_value(json_object_get(r, "name")), "non-binary");
	assert_non_null(strstr(json_string_value(json_object_get(r, "statement")), "ILAC-G8"));
	json_decref(j);

	/* the binary guarded rule: rejected, with the acceptance limit it produced */
	snprintf(part.decision_rule, sizeof part.decision_rule, "guarded");
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	k = check_named(s, "L0");
	assert_int_equal(k->decision.outcome, HB_DECISION_FAIL);
	assert_true(fabs(k->decision.al_high - (k->check.high - U)) < 1e-9 * U);
	/* moved inside the acceptance limit it passes, and states its false-accept risk: at most
	 * P(z > r k) = 2.3 % at the acceptance limit for r = 1, k = 2 (normal approximation) */
	part.nominal_h = L0 * 1.01 / 1.10;
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	k = check_named(s, "L0");
	assert_int_equal(k->decision.outcome, HB_DECISION_PASS);
	assert_true(k->decision.p_false_accept >= 0 && k->decision.p_false_accept < 0.023);
	char *buf = NULL;
	size_t len = 0;
	FILE *mf = open_memstream(&buf, &len);
	hb_analysis_print(mf, s);
	fclose(mf);
	const char *text = buf ? buf : "";
	assert_non_null(strstr(text, "decision rule: guarded (r = 1)"));
	assert_non_null(strstr(text, "P(false accept)"));
	/* L0 has both limits: its acceptance interval reads "acceptance <low> to <high>" */
	const char *acc = strstr(text, " acceptance ");
	assert_non_null(acc);
	assert_non_null(strstr(acc, " to "));
	free(buf);
	/* the HTML report states the rule, U beside the values and the budgets in an appendix */
	buf = NULL;
	len = 0;
	mf = open_memstream(&buf, &len);
	char err[256];
	assert_int_equal(hb_report_sweep(db, id, mf, err, sizeof err), HB_OK);
	fclose(mf);
	text = buf ? buf : "";
	assert_non_null(strstr(text, "Decision rule: guarded acceptance"));
	assert_non_null(strstr(text, "Expanded uncertainty U (k)"));
	assert_non_null(strstr(text, "Appendix: uncertainty budgets"));
	assert_non_null(strstr(text, "P(false accept)"));
	free(buf);
	free(s);
	hb_db_close(db);
}

/* The station's default rule, recorded with the sweep, holds for a part that states none. */
static void test_station_default_rule(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	snprintf(st.decision_rule, sizeof st.decision_rule, "non-binary");
	st.guard_r = 0.5;
	int64_t id = measure_with(db, &st, "S-1", 23.0, 4, 9);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	hb_analysis_summary *s = calloc(1, sizeof *s);
	assert_non_null(s);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, s), HB_OK);
	const hb_analysis_check *k = check_named(s, "L0");
	assert_non_null(k);
	assert_int_equal(k->decision.rule, HB_DECISION_NONBINARY);
	assert_true(k->guard_r == 0.5);
	free(s);
	hb_db_close(db);
}

/* The plan printout of a lot inspection states how conditional units count. */
static void test_inspection_states_conditional_policy(void **state)
{
	(void)state;
	hb_inspect_config cfg;
	hb_inspect_config_init(&cfg);
	assert_int_equal(cfg.conditional_policy, HB_CONDITIONAL_NONCONFORMING);
	hb_conditional_policy pol;
	assert_int_equal(hb_conditional_policy_parse("by-side", &pol), HB_OK);
	assert_int_equal(pol, HB_CONDITIONAL_BY_SIDE);
	assert_int_equal(hb_conditional_policy_parse("lenient", &pol), HB_ERR_ARG);
	hb_decision_rule rule;
	assert_int_equal(hb_decision_rule_parse("guarded", &rule), HB_OK);
	assert_int_equal(rule, HB_DECISION_GUARDED);
	assert_int_equal(hb_decision_rule_parse("strict", &rule), HB_ERR_ARG);
	char *buf = NULL;
	size_t len = 0;
	FILE *mf = open_memstream(&buf, &len);
	hb_inspect_print_rules(mf, &cfg);
	fclose(mf);
	const char *text = buf ? buf : "";
	assert_non_null(strstr(text, "policy 'nonconforming'"));
	assert_non_null(strstr(text, "tallied separately"));
	free(buf);
}

/* ---------------- Cpk with confidence (src/quality/history.c) ---------------- */

static void history_of(const double *l0, size_t n, double nominal, double tol, hb_history_summary *out)
{
	hb_db_part part;
	hb_db_part_init(&part);
	part.nominal_h = nominal;
	part.tolerance = tol;
	part.sat_drop = 0.3;
	hb_db_history_row rows[8];
	memset(rows, 0, sizeof rows);
	for (size_t i = 0; i < n; i++) {
		snprintf(rows[i].lot_code, sizeof rows[i].lot_code, "LOT-A");
		rows[i].l0_h = l0[i];
		rows[i].i_drop_a[0] = rows[i].i_drop_a[1] = rows[i].i_drop_a[2] = 3.0 + 0.01 * (double)i;
		rows[i].mu_e = rows[i].gap_m = NAN;
	}
	int drops[HB_DB_HISTORY_DROPS] = { 10, 20, 30 };
	assert_int_equal(hb_history_summarise(&part, rows, n, drops, out), HB_OK);
}

/*
 * Bissell's interval (Applied Statistics 39 (1990) 331-340), computed here
 * from the stated formula: Cpk +- z_0.975 sqrt(1/(9n) + Cpk^2/(2(n-1))),
 * on three units; the lot carries it with the small-sample warning.
 */
static void test_history_cpk_interval(void **state)
{
	(void)state;
	double l0[3] = { 100e-6, 102e-6, 104e-6 };
	hb_history_summary h;
	history_of(l0, 3, 100e-6, 0.10, &h);
	assert_int_equal(h.n_lots, 1);
	const hb_history_lot *lot = &h.lots[0];
	/* mean 102, s 2: Cpk = min(110 - 102, 102 - 90) / 6 = 4/3 */
	assert_true(fabs(lot->cpk - 4.0 / 3.0) < 1e-9);
	double half = 1.959963984540054 * sqrt(1.0 / 27 + lot->cpk * lot->cpk / 4);
	assert_true(fabs(lot->cpk_ci.lower - (lot->cpk - half)) < 1e-9);
	assert_true(fabs(lot->cpk_ci.upper - (lot->cpk + half)) < 1e-9);
	assert_true(lot->cpk_ci.small_sample);
	json_t *j = hb_history_cpk_json(lot);
	assert_true(fabs(json_real_value(json_object_get(j, "Cpk_lower")) - (lot->cpk - half)) < 1e-9);
	assert_true(json_is_true(json_object_get(j, "small_sample")));
	assert_non_null(json_object_get(j, "warning"));
	json_decref(j);
	char buf[128];
	assert_non_null(strstr(hb_history_cpk_text(lot, buf, sizeof buf), "n = 3 < 30"));
	hb_history_summary_free(&h);

	/* the mean a hair above the upper limit: Cpk -3e-6 prints "0.00", never "-0.00" */
	double on[3] = { 108e-6 + 3e-11, 110e-6, 112e-6 };
	history_of(on, 3, 100e-6, 0.10, &h);
	lot = &h.lots[0];
	assert_true(lot->cpk < 0 && lot->cpk > -1e-4);
	hb_history_cpk_text(lot, buf, sizeof buf);
	assert_null(strstr(buf, "-0.00"));
	assert_true(strncmp(buf, "0.00", 4) == 0);
	hb_history_summary_free(&h);
}

/* ---------------- coverage on the simulator (drivers/sim gain) ---------------- */

#define COVERAGE_RUNS 40
#define COVERAGE_TIME_SCALE 1e-3

/* One seeded sweep of the demo part with the meter's gain error set; L0,
 * its Type A standard error and U from the analysis (knee and core models
 * off: L0 is model-free). */
static void coverage_run(hb_db *db, unsigned seed, double gain, double noise, double *l0, double *se, double *U)
{
	assert_int_equal(hb_demo_configure_sim(COVERAGE_TIME_SCALE, seed, 0), HB_OK);
	hb_sim *sim = hb_sim_inproc();
	hb_sim_inproc_lock();
	assert_int_equal(hb_sim_set_param(sim, "gain", gain), HB_OK);
	assert_int_equal(hb_sim_set_param(sim, "noise", noise), HB_OK);
	hb_sim_inproc_unlock();
	hb_station st;
	hb_demo_station(&st);
	hb_db_part part;
	hb_demo_part(&part);
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &supply), HB_OK);
	hb_sweep_plan plan;
	small_plan(&plan);
	plan.frequency = 100e3;
	plan.to = 3;
	plan.steps = 13;
	plan.settle_time = 0.003; /* 15 settling time constants at this time scale */
	plan.limits.ramp_rate = 200;
	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = &st, .ambient_c = 23 };
	int64_t id = 0;
	hb_sweep_result res;
	char serial[32];
	snprintf(serial, sizeof serial, "C%u-%g", seed, noise);
	assert_int_equal(hb_session_measure(&s, &part, serial, 0, &plan, NULL, &id, &res), HB_OK);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	opt.knee = opt.core = false;
	opt.noise_rel = res.noise_rel;
	hb_analysis_summary *an = calloc(1, sizeof *an);
	assert_non_null(an);
	assert_int_equal(hb_analysis_sweep(db, id, &opt, an), HB_OK);
	const hb_budget *bg = hb_analysis_budget(an, "L0");
	assert_non_null(bg);
	*l0 = an->bias.modelfree.L0;
	*se = an->bias.modelfree.L0_std_err;
	*U = bg->U;
	free(an);
	hb_sim_inproc_shutdown();
}

/*
 * Coverage: 40 seeded runs of the simulated demo part, each with a meter
 * gain error inside the generic profile's stated accuracy (+-0.1 % at
 * 100 kHz), spread evenly over it (golden-ratio sequence); the truth is
 * the same sweep without gain error and reading noise. The expanded
 * uncertainty (k for 95.45 %) must cover the truth in at least 36 of 40
 * runs (P(fewer | 95.45 %) about 9 %; a +-a rectangular term with k = 2
 * covers more than 95 %, GUM G.2.3). The fit's standard error alone (the
 * old k = 1 "+-", even doubled) must cover clearly fewer: that is what the
 * meter's term is for.
 */
static void test_coverage_with_meter_gain(void **state)
{
	(void)state;
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	double truth, se0, u0;
	coverage_run(db, 1, 0, 0, &truth, &se0, &u0);
	const double a = 0.001; /* generic-lcr accuracy.basic, the test frequency not above 100 kHz */
	int covered = 0, covered_type_a = 0;
	double worst = 0;
	for (unsigned i = 1; i <= COVERAGE_RUNS; i++) {
		double frac = fmod(0.6180339887498949 * i, 1.0);
		double gain = a * (2 * frac - 1);
		double l0, se, U;
		coverage_run(db, 100 + i, gain, 1e-4, &l0, &se, &U);
		double err = fabs(l0 - truth);
		covered += err <= U;
		covered_type_a += err <= 2 * se;
		worst = fmax(worst, err / U);
	}
	print_message("coverage: U covers the truth in %d of %d runs (worst |error|/U %.2f); 2 x the fit's "
		      "standard error alone in %d\n", covered, COVERAGE_RUNS, worst, covered_type_a);
	assert_true(covered >= 36);
	assert_true(covered_type_a <= COVERAGE_RUNS / 2);
	hb_db_close(db);
}

/* A lot whose every unit sits 0.15 % inside the upper L0 limit, judged by
 * the non-binary rule: each unit is a conditional pass. The default policy
 * counts it nonconforming (lot 8, AQL 25, level II: n 2, Ac 1, Re 2 - rejected),
 * the by-side policy conforming (accepted); both tally the conditional units
 * separately (src/quality/inspect.c). */
static hb_inspect_action lot_next(void *ctx, int sequence, const char *complaint, char *serial, size_t cap)
{
	(void)ctx;
	if (complaint)
		return HB_INSPECT_PAUSE;
	snprintf(serial, cap, "L-%03d", sequence);
	return HB_INSPECT_MEASURE;
}

static void inspect_lot(hb_db *db, hb_db_part *part, const hb_station *st, const char *lot, hb_conditional_policy pol,
			hb_inspect_result *r)
{
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &supply), HB_OK);
	hb_inspect_config cfg;
	hb_inspect_config_init(&cfg);
	cfg.db = db;
	cfg.lcr = lcr;
	cfg.supply = supply;
	cfg.station = st;
	cfg.part = part;
	cfg.lot_code = lot;
	cfg.lot_size = 8;
	cfg.aql = 25;
	cfg.conditional_policy = pol;
	hb_demo_bias_plan(&cfg.plan, st);
	cfg.plan.to = 1.25 * part->sat_current_a;
	cfg.plan.steps = 9;
	hb_inspect_callbacks cb = { .next_unit = lot_next };
	assert_int_equal(hb_inspect_run(&cfg, &cb, r), HB_OK);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
}

static void test_lot_counts_conditional_by_policy(void **state)
{
	(void)state;
	assert_int_equal(hb_demo_configure_sim(1e-3, 1, 0), HB_OK);
	char path[512];
	db_path_new(path, sizeof path);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(path, &db), HB_OK);
	hb_station st;
	hb_demo_station(&st);
	hb_db_part part;
	hb_demo_part(&part);
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);
	/* the L0 these sweeps give, from a lot judged by simple acceptance */
	hb_inspect_result r;
	inspect_lot(db, &part, &st, "REF", HB_CONDITIONAL_NONCONFORMING, &r);
	assert_int_equal(r.tally.conditional, 0);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(db, r.lot_id, &recs, &n), HB_OK);
	assert_true(n >= 1);
	hb_db_fit *fit = calloc(1, sizeof *fit);
	assert_non_null(fit);
	assert_int_equal(hb_db_fit_get_latest(db, recs[0].sweep_id, NULL, fit), HB_OK);
	double L0 = NAN;
	for (size_t i = 0; i < fit->n_values; i++)
		if (strcmp(fit->values[i].name, "L0") == 0)
			L0 = fit->values[i].value;
	free(fit);
	hb_db_inspections_free(recs);
	assert_true(isfinite(L0));
	part.tolerance = 0.10;
	part.nominal_h = L0 * 1.0015 / 1.10;
	snprintf(part.decision_rule, sizeof part.decision_rule, "non-binary");
	part.guard_r = 1;
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);

	inspect_lot(db, &part, &st, "COND-1", HB_CONDITIONAL_NONCONFORMING, &r);
	assert_int_equal(r.conditional_policy, HB_CONDITIONAL_NONCONFORMING);
	assert_true(r.tally.conditional >= 1);
	assert_int_equal(r.tally.conditional_nonconforming, r.tally.conditional);
	assert_int_equal(r.decision, HB_LOT_REJECT);
	assert_int_equal(hb_db_inspection_list(db, r.lot_id, &recs, &n), HB_OK);
	assert_true(n >= 1 && recs[0].conditional && recs[0].outcome == HB_DB_FAIL);
	hb_db_inspections_free(recs);
	json_t *j = hb_inspect_lot_json(db, r.lot_id, &r);
	assert_int_equal(json_integer_value(json_object_get(j, "conditional")), r.tally.conditional);
	assert_string_equal(json_string_value(json_object_get(j, "conditional_policy")), "nonconforming");
	json_decref(j);
	char *buf = NULL;
	size_t len = 0;
	FILE *mf = open_memstream(&buf, &len);
	char err[256];
	assert_int_equal(hb_report_lot(db, part.part_number, "COND-1", mf, err, sizeof err), HB_OK);
	fclose(mf);
	const char *text = buf ? buf : "";
	assert_non_null(strstr(text, "fail (conditional)"));
	assert_non_null(strstr(text, "counted nonconforming)"));
	free(buf);

	inspect_lot(db, &part, &st, "COND-2", HB_CONDITIONAL_BY_SIDE, &r);
	assert_int_equal(r.tally.conditional, 2);
	assert_int_equal(r.tally.conditional_nonconforming, 0);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	hb_db_close(db);
	hb_sim_inproc_shutdown();
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_accuracy_parse),
		cmocka_unit_test(test_generic_profiles_carry_placeholders),
		cmocka_unit_test(test_profile_rejects_bad_accuracy),
		cmocka_unit_test_setup_teardown(test_session_records_accuracy, bench_setup, bench_teardown),
		cmocka_unit_test_setup_teardown(test_l0_budget_has_meter_term, bench_setup, bench_teardown),
		cmocka_unit_test_setup_teardown(test_dcr_referral, bench_setup, bench_teardown),
		cmocka_unit_test_setup_teardown(test_guard_band_just_inside_is_conditional, bench_setup, bench_teardown),
		cmocka_unit_test_setup_teardown(test_station_default_rule, bench_setup, bench_teardown),
		cmocka_unit_test(test_inspection_states_conditional_policy),
		cmocka_unit_test(test_lot_counts_conditional_by_policy),
		cmocka_unit_test(test_history_cpk_interval),
		cmocka_unit_test(test_coverage_with_meter_gain),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
