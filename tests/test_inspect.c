/* tests/test_inspect.c - lot inspection on the in-process simulated bench: reject at Re, accept, resume, skips, signals, part and bench faults, stored plan */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <cmocka.h>

#include "src/cli/demo.h"
#include "src/quality/quality.h"
#include "src/bench/bench.h"

/* Invented test scenario: the demo part and bench, time scaled far down. */
static const double test_time_scale = 0.001;

typedef struct fixture {
	char dir[64];
	char db_path[128];
	hb_db *db;
	hb_lcr *lcr;
	hb_supply *supply;
	hb_station station;
	hb_db_part part;
} fixture;

typedef struct source {
	hb_demo_lot_sim sim;
	const char *first_serial;
	int skip_sequence;     /* answer SKIP here (0 = never) */
	int stop_after;        /* after_unit stops after this many positions this run (0 = never) */
	int positions_seen;
	int signal_at;         /* raise SIGINT just before measuring this position (once) */
	const char *fixed_serial; /* answer this serial every time (duplicate test) */
	int complaints;
	bool skip_all;         /* answer SKIP at every position */
	double rdc;            /* > 0: every unit's winding has this resistance (ohm) */
	int dead_meter_at;     /* from this position on the meter answers nothing (0 = never) */
	int attempts[32];      /* before_unit calls per position */
	hb_inspect_action on_part_fault; /* sweep_failed's answer; 0 (MEASURE) = no callback */
	int retries;           /* sweep_failed answers RETRY this many times first */
	int part_fault_calls;
} source;

static int setup(void **state)
{
	fixture *f = calloc(1, sizeof *f);
	assert_non_null(f);
	snprintf(f->dir, sizeof f->dir, "/tmp/hb-test-inspect-XXXXXX");
	assert_non_null(mkdtemp(f->dir));
	snprintf(f->db_path, sizeof f->db_path, "%s/bench.db", f->dir);
	assert_int_equal(hb_db_open(f->db_path, &f->db), HB_OK);
	hb_demo_part(&f->part);
	assert_int_equal(hb_db_part_put(f->db, &f->part), HB_OK);
	hb_demo_station(&f->station);
	assert_int_equal(hb_demo_configure_sim(test_time_scale, 1, 0.5e-3), HB_OK);
	assert_int_equal(hb_lcr_open("sim:lcr", NULL, &f->lcr), HB_OK);
	assert_int_equal(hb_supply_open("sim:supply", NULL, &f->supply), HB_OK);
	*state = f;
	return 0;
}

static int teardown(void **state)
{
	fixture *f = *state;
	hb_supply_close(f->supply);
	hb_lcr_close(f->lcr);
	hb_db_close(f->db);
	hb_sim_inproc_shutdown();
	const char *suffixes[] = { "", "-wal", "-shm" };
	for (int i = 0; i < 3; i++) {
		char p[160];
		snprintf(p, sizeof p, "%s%s", f->db_path, suffixes[i]);
		unlink(p);
	}
	rmdir(f->dir);
	free(f);
	return 0;
}

static void config(fixture *f, hb_inspect_config *cfg, const char *lot, long lot_size, double aql)
{
	hb_inspect_config_init(cfg);
	cfg->db = f->db;
	cfg->lcr = f->lcr;
	cfg->supply = f->supply;
	cfg->station = &f->station;
	cfg->part = &f->part;
	cfg->lot_code = lot;
	cfg->lot_size = lot_size;
	cfg->aql = aql;
	hb_demo_bias_plan(&cfg->plan, &f->station);
	cfg->plan.to = 1.25 * f->part.sat_current_a;
	cfg->plan.steps = 9;
	cfg->out = NULL;
}

static hb_inspect_action next_unit(void *ctx, int sequence, const char *complaint, char *serial, size_t cap)
{
	source *s = ctx;
	if (complaint) {
		s->complaints++;
		return HB_INSPECT_PAUSE;
	}
	if (s->fixed_serial) {
		snprintf(serial, cap, "%s", s->fixed_serial);
		return HB_INSPECT_MEASURE;
	}
	assert_int_equal(hb_inspect_serial_nth(s->first_serial, sequence - 1, serial, cap), HB_OK);
	return sequence == s->skip_sequence || s->skip_all ? HB_INSPECT_SKIP : HB_INSPECT_MEASURE;
}

static int before_unit(void *ctx, int sequence, const char *serial)
{
	source *s = ctx;
	if (sequence == s->signal_at) {
		s->signal_at = 0;
		raise(SIGINT);
	}
	if (sequence > 0 && sequence < 32)
		s->attempts[sequence]++;
	int rc = hb_demo_lot_before_unit(&s->sim, sequence, serial);
	if (rc != HB_OK)
		return rc;
	hb_sim *bench = hb_sim_inproc();
	hb_sim_inproc_lock();
	/* The preset just loaded reset the part, not the faults. */
	if (s->rdc > 0)
		rc = hb_sim_set_param(bench, "rdc", s->rdc);
	if (rc == HB_OK && s->dead_meter_at && sequence >= s->dead_meter_at)
		rc = hb_sim_set_fault(bench, HB_SIM_LCR, "drop=1");
	hb_sim_inproc_unlock();
	return rc;
}

static hb_inspect_action part_fault(void *ctx, int sequence, const char *serial, const hb_sweep_result *result)
{
	(void)sequence;
	(void)serial;
	(void)result;
	source *s = ctx;
	s->part_fault_calls++;
	if (s->retries > 0) {
		s->retries--;
		return HB_INSPECT_RETRY;
	}
	return s->on_part_fault;
}

static int after_unit(void *ctx, const hb_inspect_unit *unit, const hb_inspect_tally *tally)
{
	(void)unit;
	(void)tally;
	source *s = ctx;
	s->positions_seen++;
	return s->stop_after && s->positions_seen >= s->stop_after ? HB_ERR_INTERRUPTED : HB_OK;
}

static hb_inspect_result run(hb_inspect_config *cfg, source *src, int want_rc)
{
	hb_inspect_callbacks cb = { .ctx = src, .next_unit = next_unit, .before_unit = before_unit,
				    .after_unit = after_unit, .sweep_failed = src->on_part_fault ? part_fault : NULL };
	hb_inspect_result r;
	int rc = hb_inspect_run(cfg, &cb, &r);
	if (rc != want_rc)
		fail_msg("hb_inspect_run: %d (%s), wanted %d", rc, r.message, want_rc);
	return r;
}

static void test_serial_numbers(void **state)
{
	(void)state;
	char s[16];
	assert_int_equal(hb_inspect_serial_nth("LOT7-0001", 0, s, sizeof s), HB_OK);
	assert_string_equal(s, "LOT7-0001");
	assert_int_equal(hb_inspect_serial_nth("LOT7-0001", 9, s, sizeof s), HB_OK);
	assert_string_equal(s, "LOT7-0010");
	assert_int_equal(hb_inspect_serial_nth("A-98", 3, s, sizeof s), HB_OK);
	assert_string_equal(s, "A-101");
	assert_int_equal(hb_inspect_serial_nth("UNIT", 0, s, sizeof s), HB_OK);
	assert_string_equal(s, "UNIT");
	assert_int_equal(hb_inspect_serial_nth("UNIT", 2, s, sizeof s), HB_OK);
	assert_string_equal(s, "UNIT-3");
	assert_int_equal(hb_inspect_serial_nth("LONGPREFIX-0001", 0, s, 8), HB_ERR_ARG);
	assert_int_equal(hb_inspect_serial_nth("", 0, s, sizeof s), HB_ERR_ARG);
}

static void test_bad_unit_rejects_at_re(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	/* ISO 2859-1: lot 40, level II -> D; AQL 1.0 arrow down to E: n 13, Ac 0, Re 1. */
	config(f, &cfg, "REJ-1", 40, 1.0);
	source src = { .sim = { test_time_scale, 7, 2 }, .first_serial = "R-001" };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_REJECT);
	assert_int_equal(r.tally.tested, 2);
	assert_int_equal(r.tally.nonconforming, 1);
	assert_int_equal(r.plan.sample_size, 13);

	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(f->db, r.lot_id, &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_REJECT);
	assert_true(lot.decided[0] != 0);
	/* The plan is stored on the lot. */
	assert_int_equal(lot.lot_size, 40);
	assert_true(fabs(lot.aql - 1.0) < 1e-12);
	assert_string_equal(lot.inspection_level, "II");
	assert_string_equal(lot.severity, "normal");
	assert_string_equal(lot.code_letter, "E");
	assert_int_equal(lot.sample_size, 13);
	assert_int_equal(lot.accept_number, 0);
	assert_int_equal(lot.reject_number, 1);

	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(f->db, r.lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_int_equal(recs[0].outcome, HB_DB_PASS);
	assert_string_equal(recs[0].serial, "R-001");
	assert_int_equal(recs[1].outcome, HB_DB_FAIL);
	assert_string_equal(recs[1].serial, "R-002");
	assert_true(recs[1].sweep_id > 0);
	assert_non_null(strstr(recs[1].note, "L0 fail"));
	hb_db_inspections_free(recs);

	json_t *j = hb_inspect_lot_json(f->db, r.lot_id, &r);
	assert_non_null(j);
	assert_string_equal(json_string_value(json_object_get(j, "decision")), "reject");
	assert_int_equal(json_array_size(json_object_get(j, "units")), 2);
	json_t *u1 = json_array_get(json_object_get(j, "units"), 1);
	assert_string_equal(json_string_value(json_object_get(u1, "outcome")), "fail");
	assert_true(json_real_value(json_object_get(u1, "L0_H")) > f->part.nominal_h * (1 + f->part.tolerance));
	json_decref(j);

	/* A decided lot is not inspected again. */
	source again = { .sim = { test_time_scale, 7, 0 }, .first_serial = "R-001" };
	r = run(&cfg, &again, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_ALREADY_DECIDED);
	assert_int_equal(r.decision, HB_LOT_REJECT);
	assert_int_equal(again.positions_seen, 0);
}

static void test_all_good_accepts(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	/* Lot 10, level II -> B; AQL 6.5 arrow up to A: n 2, Ac 0, Re 1. */
	config(f, &cfg, "ACC-1", 10, 6.5);
	source src = { .sim = { test_time_scale, 3, 0 }, .first_serial = "G-01" };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	assert_int_equal(r.plan.letter, 'A');
	assert_int_equal(r.plan.arrow, -1);
	assert_int_equal(r.tally.tested, 2);
	assert_int_equal(r.tally.nonconforming, 0);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(f->db, r.lot_id, &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_ACCEPT);
	/* Every sampled unit is a member of the lot. */
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(f->db, r.lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	for (size_t i = 0; i < n; i++) {
		hb_db_unit u;
		assert_int_equal(hb_db_unit_get(f->db, recs[i].unit_id, &u), HB_OK);
		assert_int_equal(u.lot_id, r.lot_id);
		assert_int_equal(recs[i].outcome, HB_DB_PASS);
	}
	hb_db_inspections_free(recs);
}

static void test_resume_after_interruption(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	/* Lot 20, level II -> C; AQL 6.5 arrow down to D: n 8, Ac 1, Re 2. */
	config(f, &cfg, "RES-1", 20, 6.5);
	source first = { .sim = { test_time_scale, 5, 5 }, .first_serial = "S-0001", .stop_after = 3 };
	hb_inspect_result r = run(&cfg, &first, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(r.decision, HB_LOT_CONTINUE);
	assert_int_equal(r.tally.tested, 3);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(f->db, r.lot_id, &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_OPEN);
	int64_t lot_id = r.lot_id;

	/* A different plan for a begun lot is refused. */
	hb_inspect_config other;
	config(f, &other, "RES-1", 50, 6.5);
	source none = { .sim = { test_time_scale, 5, 0 }, .first_serial = "S-0001" };
	r = run(&other, &none, HB_ERR_ARG);
	assert_non_null(strstr(r.message, "begun"));
	assert_int_equal(none.positions_seen, 0);

	source second = { .sim = { test_time_scale, 5, 5 }, .first_serial = "S-0001" };
	r = run(&cfg, &second, HB_OK);
	assert_true(r.resumed);
	assert_int_equal(r.resumed_at, 4);
	assert_int_equal(r.lot_id, lot_id);
	assert_int_equal(second.positions_seen, 5);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	/* One nonconforming (position 5) in 8 is within Ac 1. */
	assert_int_equal(r.tally.tested, 8);
	assert_int_equal(r.tally.nonconforming, 1);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(f->db, lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 8);
	for (size_t i = 0; i < n; i++) {
		char want[16];
		assert_int_equal(recs[i].sequence, (int)i + 1);
		hb_inspect_serial_nth("S-0001", (int)i, want, sizeof want);
		assert_string_equal(recs[i].serial, want);
		assert_int_equal(recs[i].outcome, i == 4 ? HB_DB_FAIL : HB_DB_PASS);
	}
	hb_db_inspections_free(recs);
}

static void test_skipped_unit_is_replaced(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "SKP-1", 10, 6.5); /* n 2, Ac 0, Re 1 */
	source src = { .sim = { test_time_scale, 9, 0 }, .first_serial = "K-1", .skip_sequence = 1 };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	assert_int_equal(r.tally.skipped, 1);
	assert_int_equal(r.tally.tested, 2);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(f->db, r.lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 3);
	assert_int_equal(recs[0].outcome, HB_DB_SKIPPED);
	assert_int_equal(recs[0].sweep_id, 0);
	assert_string_equal(recs[0].serial, "K-1");
	assert_int_equal(recs[1].outcome, HB_DB_PASS);
	assert_int_equal(recs[2].outcome, HB_DB_PASS);
	hb_db_inspections_free(recs);
	int next = 0, passed = 0, failed = 0;
	assert_int_equal(hb_db_inspection_progress(f->db, r.lot_id, &next, &passed, &failed), HB_OK);
	assert_int_equal(next, 4);
	assert_int_equal(passed, 2);
	assert_int_equal(failed, 0);
}

static void test_duplicate_serial_is_refused(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "DUP-1", 20, 6.5);
	source src = { .sim = { test_time_scale, 11, 0 }, .fixed_serial = "SAME-1" };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(src.complaints, 1);
	assert_int_equal(r.tally.tested, 1);
}

static void test_signal_pauses_without_recording(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "SIG-1", 10, 6.5);
	hb_sweep_install_signals();
	hb_sweep_clear_signal();
	source src = { .sim = { test_time_scale, 13, 0 }, .first_serial = "Z-1", .signal_at = 2 };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(r.signal_number, SIGINT);
	assert_int_equal(r.pause_cause, HB_CAUSE_OPERATOR);
	assert_int_equal(r.pause_sequence, 2);
	assert_int_equal(r.tally.tested, 1);
	assert_false(r.current_may_flow);
	/* The engine brought the current down on its way out. */
	double amps = NAN;
	assert_int_equal(hb_supply_measure_current(f->supply, &amps), HB_OK);
	assert_true(fabs(amps) < 0.05);
	hb_sweep_clear_signal();
	source again = { .sim = { test_time_scale, 13, 0 }, .first_serial = "Z-1" };
	r = run(&cfg, &again, HB_OK);
	assert_int_equal(r.resumed_at, 2);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	assert_int_equal(r.tally.tested, 2);
	hb_sweep_restore_signals();
}

/* The sweep's stop reasons as the inspection sorts them, while the engine
 * does not fill result->cause itself. */
static void test_sweep_cause_from_status(void **state)
{
	(void)state;
	static const struct {
		int status;
		hb_sweep_cause cause;
	} table[] = {
		{ HB_ERR_COMPLIANCE, HB_CAUSE_PART },	{ HB_ERR_OVERLOAD, HB_CAUSE_PART },
		{ HB_ERR_TIMEOUT, HB_CAUSE_BENCH },	{ HB_ERR_CLOSED, HB_CAUSE_BENCH },
		{ HB_ERR_PROTOCOL, HB_CAUSE_BENCH },	{ HB_ERR_INSTRUMENT, HB_CAUSE_BENCH },
		{ HB_ERR_IO, HB_CAUSE_BENCH },		{ HB_ERR_DB, HB_CAUSE_BENCH },
		{ HB_ERR_DB_FULL, HB_CAUSE_BENCH },	{ HB_ERR_BUSY, HB_CAUSE_BENCH },
		{ HB_ERR_INTERRUPTED, HB_CAUSE_OPERATOR }, { HB_ERR_LIMIT, HB_CAUSE_LIMIT },
		{ HB_ERR_NOMEM, HB_CAUSE_BENCH },
	};
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++) {
		hb_sweep_result r = { .end = HB_SWEEP_FAILED, .status = table[i].status };
		if (hb_inspect_sweep_cause(&r) != table[i].cause)
			fail_msg("status %d: cause %s, wanted %s", table[i].status,
				 hb_inspect_cause_name(hb_inspect_sweep_cause(&r)), hb_inspect_cause_name(table[i].cause));
	}
	hb_sweep_result done = { .end = HB_SWEEP_COMPLETE, .status = HB_OK };
	assert_int_equal(hb_inspect_sweep_cause(&done), HB_CAUSE_NONE);
	/* The engine's own cause wins over the derivation. */
	hb_sweep_result told = { .end = HB_SWEEP_ABORTED, .status = HB_ERR_COMPLIANCE, .cause = HB_CAUSE_BENCH };
	assert_int_equal(hb_inspect_sweep_cause(&told), HB_CAUSE_BENCH);
	hb_sweep_result sig = { .end = HB_SWEEP_ABORTED, .status = HB_ERR_INTERRUPTED, .interrupted_by_signal = true,
				.signal_number = SIGTERM };
	assert_int_equal(hb_inspect_sweep_cause(&sig), HB_CAUSE_OPERATOR);
}

static void assert_part_fault_record(const hb_db_inspection *rec)
{
	assert_int_equal(rec->outcome, HB_DB_FAIL);
	assert_true(rec->sweep_id > 0);
	if (!strstr(rec->note, "not measurable (part), counted nonconforming") || !strstr(rec->note, "compliance"))
		fail_msg("position %d: note '%s' does not give the part's fault", rec->sequence, rec->note);
}

/* Windings of 20 ohm against a 40 mohm spec drive the supply into
 * compliance: each unit is judged nonconforming for it, counts in the
 * sample, and the lot is decided instead of drawing unit after unit. */
static void test_high_resistance_units_are_nonconforming(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	/* Lot 20, level II -> C; AQL 6.5 arrow down to D: n 8, Ac 1, Re 2. */
	config(f, &cfg, "HIR-1", 20, 6.5);
	char *text = NULL;
	size_t len = 0;
	cfg.out = open_memstream(&text, &len);
	assert_non_null(cfg.out);
	source src = { .sim = { test_time_scale, 17, 0 }, .first_serial = "H-01", .rdc = 20 };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	fclose(cfg.out);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_REJECT);
	assert_int_equal(r.tally.tested, 2);
	assert_int_equal(r.tally.nonconforming, 2);
	assert_int_equal(r.tally.skipped, 0);
	assert_int_equal(src.attempts[1], 1);
	assert_int_equal(src.attempts[2], 1);
	/* The policy is stated before the first unit. */
	assert_non_null(text);
	const char *rule = strstr(text, "because of the part");
	const char *first = strstr(text, "H-01");
	assert_non_null(rule);
	assert_non_null(first);
	assert_true(rule < first);
	assert_non_null(strstr(rule, "NONCONFORMING, counted in the sample"));
	assert_non_null(strstr(text, "REJECT"));
	free(text);

	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(f->db, r.lot_id, &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_REJECT);
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(f->db, r.lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	assert_string_equal(recs[0].serial, "H-01");
	assert_string_equal(recs[1].serial, "H-02");
	assert_part_fault_record(&recs[0]);
	assert_part_fault_record(&recs[1]);
	hb_db_inspections_free(recs);
}

/* An operator who re-seats the unit may retry or pause; the policy applies
 * to what is left. */
static void test_part_fault_retry_then_policy(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "HIR-2", 10, 6.5); /* n 2, Ac 0, Re 1 */
	source src = { .sim = { test_time_scale, 19, 0 }, .first_serial = "Q-1", .rdc = 20, .retries = 1,
		       .on_part_fault = HB_INSPECT_PAUSE };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(r.pause_cause, HB_CAUSE_OPERATOR);
	assert_int_equal(src.part_fault_calls, 2);
	assert_int_equal(src.attempts[1], 2);
	assert_int_equal(r.tally.tested, 0);

	/* The retest policy judges nothing and pauses at the same unit. */
	cfg.part_fault = HB_INSPECT_PART_RETEST;
	source retest = { .sim = { test_time_scale, 19, 0 }, .first_serial = "Q-1", .rdc = 20,
			  .on_part_fault = HB_INSPECT_RECORD };
	r = run(&cfg, &retest, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(r.pause_cause, HB_CAUSE_PART);
	assert_int_equal(r.pause_sequence, 1);
	assert_string_equal(r.pause_serial, "Q-1");
	assert_int_equal(r.tally.tested, 0);
	assert_int_equal(r.tally.skipped, 0);
	assert_non_null(strstr(r.message, "compliance"));

	/* Re-seated, the unit measures: the same position, the same serial. */
	cfg.part_fault = HB_INSPECT_PART_NONCONFORMING;
	source fixed = { .sim = { test_time_scale, 19, 0 }, .first_serial = "Q-1" };
	r = run(&cfg, &fixed, HB_OK);
	assert_int_equal(r.resumed_at, 1);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	assert_int_equal(r.tally.tested, 2);
}

static void reopen_meter(fixture *f, const char *resource)
{
	hb_lcr_close(f->lcr);
	f->lcr = NULL;
	assert_int_equal(hb_lcr_open(resource, NULL, &f->lcr), HB_OK);
}

/* A meter that stops answering: no unit is judged on it, no serial is used
 * up, the second failure in a row pauses; once the meter answers again the
 * same command resumes the lot at the unit that met the fault. */
static void test_dead_meter_pauses_and_resumes(void **state)
{
	fixture *f = *state;
	/* A short time-out keeps the test quick; the meter is dead either way. */
	reopen_meter(f, "sim:lcr?timeout=150");
	hb_inspect_config cfg;
	config(f, &cfg, "DEAD-1", 20, 6.5); /* n 8, Ac 1, Re 2 */
	cfg.lcr = f->lcr;
	char *text = NULL;
	size_t len = 0;
	cfg.out = open_memstream(&text, &len);
	assert_non_null(cfg.out);
	source src = { .sim = { test_time_scale, 23, 0 }, .first_serial = "D-0001", .dead_meter_at = 3 };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	fclose(cfg.out);
	cfg.out = NULL;
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(r.decision, HB_LOT_CONTINUE);
	assert_int_equal(r.pause_cause, HB_CAUSE_BENCH);
	assert_int_equal(r.bench_failures, HB_INSPECT_BENCH_FAILURES_TO_PAUSE);
	assert_int_equal(r.signal_number, 0);
	assert_false(r.current_may_flow);
	assert_int_equal(r.tally.tested, 2);
	assert_int_equal(r.tally.skipped, 0);
	assert_int_equal(r.pause_sequence, 3);
	assert_string_equal(r.pause_serial, "D-0003");
	/* Two attempts at the third unit, none beyond it. */
	assert_int_equal(src.attempts[3], 2);
	assert_int_equal(src.attempts[4], 0);
	assert_non_null(strstr(r.message, "bench failed 2 times in a row"));
	assert_non_null(strstr(text, "bench fault, not judged"));
	assert_non_null(strstr(text, "Fix the bench"));
	free(text);
	/* Nothing was recorded for the unit the bench could not measure. */
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_inspection_list(f->db, r.lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 2);
	hb_db_inspections_free(recs);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(f->db, r.lot_id, &lot), HB_OK);
	assert_int_equal(lot.decision, HB_DB_LOT_OPEN);
	json_t *j = hb_inspect_lot_json(f->db, r.lot_id, &r);
	assert_non_null(j);
	assert_string_equal(json_string_value(json_object_get(j, "pause_cause")), "bench");
	assert_string_equal(json_string_value(json_object_get(j, "resume_with")), "D-0003");
	json_decref(j);
	int64_t lot_id = r.lot_id;

	/* The meter is fixed; a new run opens it afresh, as the command does. */
	hb_sim *bench = hb_sim_inproc();
	hb_sim_inproc_lock();
	assert_int_equal(hb_sim_set_fault(bench, HB_SIM_LCR, "none"), HB_OK);
	hb_sim_inproc_unlock();
	reopen_meter(f, "sim:lcr");
	cfg.lcr = f->lcr;
	cfg.resume_only = true;
	source again = { .sim = { test_time_scale, 23, 0 }, .first_serial = "D-0001" };
	r = run(&cfg, &again, HB_OK);
	assert_int_equal(r.lot_id, lot_id);
	assert_true(r.resumed);
	assert_int_equal(r.resumed_at, 3);
	assert_int_equal(r.end, HB_INSPECT_DECIDED);
	assert_int_equal(r.decision, HB_LOT_ACCEPT);
	assert_int_equal(r.tally.tested, 8);
	assert_int_equal(r.tally.skipped, 0);
	/* Every serial of the list, in order, one position each. */
	assert_int_equal(hb_db_inspection_list(f->db, lot_id, &recs, &n), HB_OK);
	assert_int_equal(n, 8);
	for (size_t i = 0; i < n; i++) {
		char want[16];
		assert_int_equal(recs[i].sequence, (int)i + 1);
		hb_inspect_serial_nth("D-0001", (int)i, want, sizeof want);
		assert_string_equal(recs[i].serial, want);
		assert_int_equal(recs[i].outcome, HB_DB_PASS);
	}
	hb_db_inspections_free(recs);
}

/* Resuming a lot code that was never begun is refused, not started. */
static void test_resume_needs_a_begun_lot(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "NEVER-1", 10, 6.5);
	cfg.resume_only = true;
	source src = { .sim = { test_time_scale, 1, 0 }, .first_serial = "N-1" };
	hb_inspect_result r = run(&cfg, &src, HB_ERR_ARG);
	assert_non_null(strstr(r.message, "NEVER-1"));
	assert_non_null(strstr(r.message, "not been begun"));
	assert_int_equal(src.positions_seen, 0);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_find(f->db, f->part.id, "NEVER-1", &lot), HB_ERR_NOTFOUND);
}

/* Skips cannot draw more units than the lot holds. */
static void test_skips_stop_at_lot_size(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "SKP-2", 10, 6.5);
	source src = { .sim = { test_time_scale, 1, 0 }, .first_serial = "W-1", .skip_all = true };
	hb_inspect_result r = run(&cfg, &src, HB_OK);
	assert_int_equal(r.end, HB_INSPECT_PAUSED);
	assert_int_equal(r.tally.skipped, 10);
	assert_int_equal(src.positions_seen, 10);
	assert_non_null(strstr(r.message, "beyond the lot of 10 units"));
}

static void test_bad_arguments(void **state)
{
	fixture *f = *state;
	hb_inspect_config cfg;
	config(f, &cfg, "BAD-1", 40, 3.0); /* 3.0 is not in the AQL series */
	source src = { .sim = { test_time_scale, 1, 0 }, .first_serial = "B-1" };
	hb_inspect_result r = run(&cfg, &src, HB_ERR_ARG);
	assert_true(r.message[0] != 0);
	config(f, &cfg, "", 40, 1.0);
	r = run(&cfg, &src, HB_ERR_ARG);
	config(f, &cfg, "BAD-2", 1, 1.0);
	r = run(&cfg, &src, HB_ERR_ARG);
	assert_int_equal(src.positions_seen, 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_serial_numbers),
		cmocka_unit_test_setup_teardown(test_bad_unit_rejects_at_re, setup, teardown),
		cmocka_unit_test_setup_teardown(test_all_good_accepts, setup, teardown),
		cmocka_unit_test_setup_teardown(test_resume_after_interruption, setup, teardown),
		cmocka_unit_test_setup_teardown(test_skipped_unit_is_replaced, setup, teardown),
		cmocka_unit_test_setup_teardown(test_duplicate_serial_is_refused, setup, teardown),
		cmocka_unit_test_setup_teardown(test_signal_pauses_without_recording, setup, teardown),
		cmocka_unit_test(test_sweep_cause_from_status),
		cmocka_unit_test_setup_teardown(test_high_resistance_units_are_nonconforming, setup, teardown),
		cmocka_unit_test_setup_teardown(test_part_fault_retry_then_policy, setup, teardown),
		cmocka_unit_test_setup_teardown(test_dead_meter_pauses_and_resumes, setup, teardown),
		cmocka_unit_test_setup_teardown(test_resume_needs_a_begun_lot, setup, teardown),
		cmocka_unit_test_setup_teardown(test_skips_stop_at_lot_size, setup, teardown),
		cmocka_unit_test_setup_teardown(test_bad_arguments, setup, teardown),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
