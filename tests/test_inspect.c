/* tests/test_inspect.c - lot inspection on the in-process simulated bench: reject at Re, accept, resume, skips, signals, stored plan */
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

#include "src/demo.h"
#include "src/inspect.h"
#include "src/session.h"

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
	return sequence == s->skip_sequence ? HB_INSPECT_SKIP : HB_INSPECT_MEASURE;
}

static int before_unit(void *ctx, int sequence, const char *serial)
{
	source *s = ctx;
	if (sequence == s->signal_at) {
		s->signal_at = 0;
		raise(SIGINT);
	}
	return hb_demo_lot_before_unit(&s->sim, sequence, serial);
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
				    .after_unit = after_unit };
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
		cmocka_unit_test_setup_teardown(test_bad_arguments, setup, teardown),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
