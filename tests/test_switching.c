/* tests/test_switching.c - MIL-STD-105E worked examples and table invariants, the reduced table's accept-and-reinstate zone, and the ISO 2859-1 clause 9 switching rules over scripted lot streams (pure and through the store) */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <math.h>
#include <string.h>
#include <cmocka.h>

#include "src/quality/quality.h"
#include "store_fixture.h"
#include "data/mil_std_105e_examples.h"
#include "data/mil_std_105e_single.h"

static hb_sampling_plan plan_of(long lot, double aql, hb_insp_level level, hb_severity sev)
{
	hb_sampling_plan p;
	char err[256] = "";
	if (hb_iso2859_plan(lot, aql, level, sev, &p, err, sizeof err) != HB_OK)
		fail_msg("lot %ld AQL %g: %s", lot, aql, err);
	return p;
}

/* ------------------------------------------------------------------ */
/* tables: worked examples and invariants                              */

/* Every worked example of the verified MIL-STD-105E reference, section 5
 * (tests/data/mil_std_105e_examples.h, each with the sources that confirm
 * it): Table I letter, the row the arrows lead to, n, Ac, Re. The disputed
 * example 22 must come out flagged uncertain. */
static void test_reference_worked_examples(void **state)
{
	(void)state;
	for (size_t i = 0; i < sizeof ref_examples / sizeof ref_examples[0]; i++) {
		const ref_example *x = &ref_examples[i];
		hb_insp_level level;
		hb_severity sev;
		assert_int_equal(hb_iso2859_parse_level(x->level, &level), HB_OK);
		assert_int_equal(hb_iso2859_parse_severity(x->severity, &sev), HB_OK);
		hb_sampling_plan p = plan_of(x->lot_size, x->aql, level, sev);
		if (x->disputed) {
			if (!p.uncertain || !p.uncertain_note)
				fail_msg("example %d (disputed in the reference) is not flagged uncertain", x->number);
			continue;
		}
		if (p.initial_letter != x->initial_letter || p.letter != x->letter || p.table_sample_size != x->n ||
		    p.ac != x->ac || p.re != x->re)
			fail_msg("example %d (%ld units, %s, AQL %g, %s): %c->%c n %ld %d/%d; the reference (%s): %c->%c n %d %d/%d",
				 x->number, x->lot_size, x->level, x->aql, x->severity, p.initial_letter, p.letter,
				 p.table_sample_size, p.ac, p.re, x->confirmed_by, x->initial_letter, x->letter, x->n,
				 x->ac, x->re);
	}
}

/* Reference example 11: 10 000 units, level II, AQL 1.0, reduced -> L, n 80,
 * 2/5: "d <= 2 accept; d = 3 or 4 accept but switch back to normal; d >= 5
 * reject" (MIL-STD-105E Table II-C; ANSI/ASQ Z1.4 10.1.4). */
static void test_reduced_accept_and_reinstate_zone(void **state)
{
	(void)state;
	hb_sampling_plan p = plan_of(10000, 1.0, HB_LEVEL_II, HB_SEVERITY_REDUCED);
	assert_int_equal(p.sample_size, 80);
	hb_lot_decision d;
	for (int k = 0; k <= 2; k++) {
		assert_int_equal(hb_lot_decide(&p, 80, k, &d), HB_OK);
		assert_int_equal(d, HB_LOT_ACCEPT);
	}
	for (int k = 3; k <= 4; k++) {
		assert_int_equal(hb_lot_decide(&p, 80, k, &d), HB_OK);
		assert_int_equal(d, HB_LOT_ACCEPT_REINSTATE);
		/* Not before the whole sample is seen: more units may reach Re. */
		assert_int_equal(hb_lot_decide(&p, 79, k, &d), HB_OK);
		assert_int_equal(d, HB_LOT_CONTINUE);
	}
	assert_int_equal(hb_lot_decide(&p, 80, 5, &d), HB_OK);
	assert_int_equal(d, HB_LOT_REJECT);
	assert_int_equal(hb_lot_decide(&p, 30, 5, &d), HB_OK); /* Re reached early: stop */
	assert_int_equal(d, HB_LOT_REJECT);
	assert_string_equal(hb_lot_decision_name(HB_LOT_ACCEPT_REINSTATE), "accept-reinstate-normal");
}

/* A (lot size, level) whose Table I letter is the given one (Table I of the
 * reference, copied in tests/data/mil_std_105e_single.h). */
static void lot_for_letter(char letter, long *lot, hb_insp_level *level)
{
	for (int l = HB_LEVEL_III; l >= HB_LEVEL_S1; l--)
		for (size_t r = 0; r < sizeof ref_table1 / sizeof ref_table1[0]; r++)
			if (ref_table1[r].letters[l] == letter) {
				*lot = ref_table1[r].lo;
				*level = (hb_insp_level)l;
				return;
			}
	fail_msg("no lot gives letter %c", letter);
}

static bool pair_in(const int (*pairs)[2], size_t n, int ac, int re)
{
	for (size_t i = 0; i < n; i++)
		if (pairs[i][0] == ac && pairs[i][1] == re)
			return true;
	return false;
}

/* The reference's invariants, "true in every verified source":
 * Re = Ac + 1 in II-A and II-B; II-C rows use only their listed Ac/Re
 * pairs; a down arrow always leads to a larger n, an up arrow to a smaller;
 * II-C n is two letters smaller than II-A n (floor 2). */
static void test_reference_table_invariants(void **state)
{
	(void)state;
	static const char rows[] = "ABCDEFGHJKLMNPQR";
	const double *series;
	size_t n_aql = hb_iso2859_aql_series(&series);
	int plans = 0;
	for (const char *c = rows; *c; c++) {
		long lot = 0;
		hb_insp_level level = HB_LEVEL_II;
		lot_for_letter(*c, &lot, &level);
		for (int sv = HB_SEVERITY_NORMAL; sv <= HB_SEVERITY_REDUCED; sv++)
			for (size_t a = 0; a < n_aql; a++) {
				hb_sampling_plan p = plan_of(lot, series[a], level, (hb_severity)sv);
				assert_int_equal(p.initial_letter, *c);
				long own = hb_iso2859_sample_size(*c, (hb_severity)sv);
				/* (II-C rows A-C all have n = 2: there an arrow keeps n.) */
				bool flat = sv == HB_SEVERITY_REDUCED && own == 2 && p.table_sample_size == 2;
				if (p.arrow > 0 && !flat && !(p.table_sample_size > own))
					fail_msg("%c AQL %g sev %d: a down arrow to n %ld from n %ld", *c, series[a], sv,
						 p.table_sample_size, own);
				if (p.arrow < 0 && !flat && !(p.table_sample_size < own))
					fail_msg("%c AQL %g sev %d: an up arrow to n %ld from n %ld", *c, series[a], sv,
						 p.table_sample_size, own);
				if (p.arrow != 0)
					continue;
				plans++;
				if (sv != HB_SEVERITY_REDUCED) {
					if (p.re != p.ac + 1)
						fail_msg("%c AQL %g sev %d: %d/%d, Re must be Ac + 1", *c, series[a], sv, p.ac, p.re);
				} else if (*c == 'A') {
					assert_true(pair_in(ref_reduced_pairs_a, sizeof ref_reduced_pairs_a / sizeof ref_reduced_pairs_a[0], p.ac, p.re));
				} else if (*c == 'B') {
					assert_true(pair_in(ref_reduced_pairs_b, sizeof ref_reduced_pairs_b / sizeof ref_reduced_pairs_b[0], p.ac, p.re));
				} else if (!pair_in(ref_reduced_pairs_c_to_r,
						    sizeof ref_reduced_pairs_c_to_r / sizeof ref_reduced_pairs_c_to_r[0], p.ac, p.re)) {
					fail_msg("reduced %c AQL %g: %d/%d is not one of the row's pairs", *c, series[a], p.ac, p.re);
				}
			}
		/* II-C n two letters behind II-A, never below 2. */
		int i = (int)(c - rows);
		long want = i >= 2 ? hb_iso2859_sample_size(rows[i - 2], HB_SEVERITY_NORMAL) : 2;
		assert_int_equal(hb_iso2859_sample_size(*c, HB_SEVERITY_REDUCED), want);
	}
	/* Every plan cell of the three tables, rows A-R: 440 in the reference's
	 * machine-readable copy (cells marked "plan"). */
	assert_int_equal(plans, 440);
}

/* ------------------------------------------------------------------ */
/* switching rules, pure                                               */

/* The stream's plans: 1000 units, level II, AQL 1.0 -> letter J (reference
 * examples 1-3): normal n 80 2/3, tightened n 80 1/2, reduced n 32 1/3. */
static hb_switch_rule feed_plan(hb_switch_state *s, const char *code, long lot, double aql, hb_severity sev, int d,
				bool irregular, hb_lot_decision *decided)
{
	hb_sampling_plan p = plan_of(lot, aql, HB_LEVEL_II, sev);
	hb_switch_lot l;
	memset(&l, 0, sizeof l);
	snprintf(l.lot_code, sizeof l.lot_code, "%s", code);
	l.severity = sev;
	assert_int_equal(hb_lot_decide(&p, p.sample_size, d, &l.decision), HB_OK);
	l.nonconforming = d;
	l.ac = p.ac;
	l.tighter_ac = hb_iso2859_tighter_ac(p.letter, p.aql);
	l.irregular = irregular;
	if (decided)
		*decided = l.decision;
	return hb_switch_apply(s, &l);
}

static hb_switch_rule feed(hb_switch_state *s, const char *code, hb_severity sev, int d)
{
	return feed_plan(s, code, 1000, 1.0, sev, d, false, NULL);
}

static hb_severity next_severity(const hb_switch_state *s, bool approved, bool steady)
{
	hb_switch_next n;
	hb_switch_next_of(s, approved, steady, &n);
	assert_false(n.discontinued);
	return n.severity;
}

/* The one-step-tighter Ac the switching score asks for: Table II-A row J,
 * AQL 1.0 is 2/3, one step tighter (0.65) is 1/2 (reference Table II-A). */
static void test_tighter_ac_from_table(void **state)
{
	(void)state;
	assert_int_equal(hb_iso2859_tighter_ac('J', 1.0), 1);
	assert_int_equal(hb_iso2859_tighter_ac('L', 2.5), 7);  /* L: 10/11 at 2.5, 7/8 at 1.5 */
	assert_int_equal(hb_iso2859_tighter_ac('J', 0.25), 0);  /* J at 0.15 is 0/1 ... */
	assert_int_equal(hb_iso2859_tighter_ac('J', 0.40), -1); /* ... J at 0.25 an up arrow */
	assert_int_equal(hb_iso2859_tighter_ac('J', 0.65), -1); /* ... J at 0.40 a down arrow */
}

/* The scripted stream of the issue: normal -> tightened -> normal ->
 * reduced -> normal, each switch by its clause. */
static void test_stream_walks_every_switch(void **state)
{
	(void)state;
	hb_switch_state s;
	hb_switch_init(&s);
	/* ISO 2859-1:1999 9.1 / MIL-STD-105E 8.1: a stream starts on normal. */
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(s.rule, HB_SWITCH_START);

	/* ISO 2859-1:1999 9.3.1 / MIL-STD-105E 8.3.1: 2 of 5 or fewer
	 * consecutive lots not accepted -> tightened. L01 and L05 are the first
	 * and last of 5 consecutive lots. */
	assert_int_equal(feed(&s, "L01", HB_SEVERITY_NORMAL, 3), HB_SWITCH_STAY); /* d 3 >= Re 3 */
	for (int i = 2; i <= 4; i++) {
		char code[8];
		snprintf(code, sizeof code, "L%02d", i);
		assert_int_equal(feed(&s, code, HB_SEVERITY_NORMAL, 0), HB_SWITCH_STAY);
	}
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(feed(&s, "L05", HB_SEVERITY_NORMAL, 3), HB_SWITCH_TO_TIGHTENED);
	assert_int_equal(s.severity, HB_SEVERITY_TIGHTENED);
	assert_non_null(strstr(s.why, "L01"));
	assert_non_null(strstr(s.why, "9.3.1"));

	/* ISO 2859-1:1999 9.3.2 / MIL-STD-105E 8.3.2: 5 consecutive lots
	 * accepted on tightened -> normal; 4 are not enough. */
	for (int i = 6; i <= 9; i++) {
		char code[8];
		snprintf(code, sizeof code, "L%02d", i);
		assert_int_equal(feed(&s, code, HB_SEVERITY_TIGHTENED, 1), HB_SWITCH_STAY); /* 1/2: d 1 accepts */
	}
	assert_int_equal(s.severity, HB_SEVERITY_TIGHTENED);
	assert_int_equal(feed(&s, "L10", HB_SEVERITY_TIGHTENED, 0), HB_SWITCH_TIGHTENED_TO_NORMAL);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(s.score, 0); /* 9.3.3: the score starts at zero with normal */

	/* ISO 2859-1:1999 9.3.3 (switching score, from memory): Ac 2 >= 2, and
	 * d 0 <= the tighter plan's Ac 1: +3 a lot. 9 lots: 27, not enough. */
	for (int i = 11; i <= 19; i++) {
		char code[8];
		snprintf(code, sizeof code, "L%02d", i);
		assert_int_equal(feed(&s, code, HB_SEVERITY_NORMAL, i == 13 ? 1 : 0), HB_SWITCH_STAY);
	}
	assert_int_equal(s.score, 27);
	assert_int_equal(next_severity(&s, true, true), HB_SEVERITY_NORMAL);
	assert_int_equal(feed(&s, "L20", HB_SEVERITY_NORMAL, 0), HB_SWITCH_STAY);
	assert_int_equal(s.score, 30);
	/* Score reached; reduced also needs approval and steady production. */
	assert_int_equal(next_severity(&s, false, true), HB_SEVERITY_NORMAL);
	assert_int_equal(next_severity(&s, true, false), HB_SEVERITY_NORMAL);
	assert_int_equal(next_severity(&s, true, true), HB_SEVERITY_REDUCED);

	/* The next lot inspected reduced (approved then): the switch is 9.3.3. */
	assert_int_equal(feed(&s, "L21", HB_SEVERITY_REDUCED, 1), HB_SWITCH_TO_REDUCED); /* 1/3: d 1 accepts */
	assert_int_equal(s.severity, HB_SEVERITY_REDUCED);
	assert_int_equal(feed(&s, "L22", HB_SEVERITY_REDUCED, 0), HB_SWITCH_STAY);
	assert_int_equal(s.severity, HB_SEVERITY_REDUCED);

	/* MIL-STD-105E 8.3.4 with Table II-C (ANSI/ASQ Z1.4 10.1.4): d = 2,
	 * Ac 1 < d < Re 3: accepted, normal reinstated. */
	hb_lot_decision dec;
	assert_int_equal(feed_plan(&s, "L23", 1000, 1.0, HB_SEVERITY_REDUCED, 2, false, &dec),
			 HB_SWITCH_REDUCED_REINSTATE);
	assert_int_equal(dec, HB_LOT_ACCEPT_REINSTATE);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(s.score, 0);
}

/* 2 of 5 or fewer (ISO 2859-1:1999 9.3.1): two lots not accepted 5 lots
 * apart (6 consecutive lots) do not tighten; 2 in a row do. */
static void test_two_of_five_window(void **state)
{
	(void)state;
	hb_switch_state s;
	hb_switch_init(&s);
	assert_int_equal(feed(&s, "A1", HB_SEVERITY_NORMAL, 3), HB_SWITCH_STAY);
	for (int i = 2; i <= 5; i++)
		assert_int_equal(feed(&s, "Ax", HB_SEVERITY_NORMAL, 0), HB_SWITCH_STAY);
	assert_int_equal(feed(&s, "A6", HB_SEVERITY_NORMAL, 3), HB_SWITCH_STAY);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(feed(&s, "A7", HB_SEVERITY_NORMAL, 4), HB_SWITCH_TO_TIGHTENED);

	/* One lot not accepted alone never tightens. */
	hb_switch_init(&s);
	assert_int_equal(feed(&s, "B1", HB_SEVERITY_NORMAL, 3), HB_SWITCH_STAY);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
}

/* ISO 2859-1:1999 9.3.3 switching score (from memory): Ac >= 2 adds 3 only
 * when the lot would have been accepted one AQL step tighter, else resets;
 * Ac 0 or 1 adds 2 per accepted lot; a lot not accepted resets. */
static void test_switching_score(void **state)
{
	(void)state;
	hb_switch_state s;
	hb_switch_init(&s);
	assert_int_equal(feed(&s, "S1", HB_SEVERITY_NORMAL, 1), HB_SWITCH_STAY);
	assert_int_equal(s.score, 3);
	/* d 2: accepted at 2/3, but not at the tighter 1/2: reset. */
	assert_int_equal(feed(&s, "S2", HB_SEVERITY_NORMAL, 2), HB_SWITCH_STAY);
	assert_int_equal(s.score, 0);
	/* AQL 0.15 for 1000 units: J, n 80, 0/1 (Table II-A). */
	hb_switch_init(&s);
	for (int i = 0; i < 14; i++)
		feed_plan(&s, "Z", 1000, 0.15, HB_SEVERITY_NORMAL, 0, false, NULL);
	assert_int_equal(s.score, 28);
	feed_plan(&s, "Z", 1000, 0.15, HB_SEVERITY_NORMAL, 0, false, NULL);
	assert_int_equal(s.score, 30);
	feed_plan(&s, "Z", 1000, 0.15, HB_SEVERITY_NORMAL, 1, false, NULL); /* d 1 >= Re 1: rejected */
	assert_int_equal(s.score, 0);
}

/* ISO 2859-1:1999 9.3.4 / MIL-STD-105E 8.3.4: reduced -> normal on a lot
 * not accepted, on irregular production, on withdrawn approval. */
static void test_reduced_to_normal_causes(void **state)
{
	(void)state;
	hb_switch_state s;
	/* Reduced by the approved switch: 10 lots scoring 3 each, then a reduced lot. */
	hb_switch_init(&s);
	for (int i = 0; i < 10; i++)
		feed(&s, "N", HB_SEVERITY_NORMAL, 0);
	assert_int_equal(feed(&s, "R1", HB_SEVERITY_REDUCED, 0), HB_SWITCH_TO_REDUCED);
	hb_switch_state start = s;

	/* a) not accepted: d 3 = Re 3. */
	assert_int_equal(feed(&s, "R2", HB_SEVERITY_REDUCED, 3), HB_SWITCH_REDUCED_REJECT);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);

	/* b) irregular production: the lot flagged so, inspected reduced and
	 * accepted, ends reduced; so does the flag before a lot (next_of). */
	s = start;
	assert_int_equal(feed_plan(&s, "R3", 1000, 1.0, HB_SEVERITY_REDUCED, 0, true, NULL), HB_SWITCH_REDUCED_IRREGULAR);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	s = start;
	hb_switch_next n;
	hb_switch_next_of(&s, true, false, &n);
	assert_int_equal(n.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(n.rule, HB_SWITCH_REDUCED_IRREGULAR);
	/* ... and that lot, recorded normal and irregular, is the same switch. */
	assert_int_equal(feed_plan(&s, "R4", 1000, 1.0, HB_SEVERITY_NORMAL, 0, true, NULL), HB_SWITCH_REDUCED_IRREGULAR);
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);

	/* c) other conditions: the authority withdraws its approval. */
	s = start;
	hb_switch_withdraw(&s, "audit finding");
	assert_int_equal(s.severity, HB_SEVERITY_NORMAL);
	assert_int_equal(s.rule, HB_SWITCH_REDUCED_WITHDRAWN);
}

/* ISO 2859-1:1999 9.4: 5 lots not accepted in a sequence of consecutive lots
 * on tightened inspection discontinue; inspection resumes only after the
 * supplier's action, on tightened, with the counts from zero. */
static void test_discontinue_and_resume(void **state)
{
	(void)state;
	hb_switch_state s;
	hb_switch_init(&s);
	feed(&s, "D1", HB_SEVERITY_NORMAL, 3);
	assert_int_equal(feed(&s, "D2", HB_SEVERITY_NORMAL, 3), HB_SWITCH_TO_TIGHTENED);
	/* tightened 1/2: d 2 rejects, d 0 accepts. Not accepted: T1 T3 T4 T6 T7. */
	static const int d[] = { 2, 0, 2, 2, 0, 2 };
	for (size_t i = 0; i < sizeof d / sizeof d[0]; i++)
		assert_int_equal(feed(&s, "T", HB_SEVERITY_TIGHTENED, d[i]), HB_SWITCH_STAY);
	assert_false(s.discontinued); /* 4 not accepted */
	assert_int_equal(feed(&s, "T7", HB_SEVERITY_TIGHTENED, 2), HB_SWITCH_DISCONTINUE);
	assert_true(s.discontinued);
	hb_switch_next n;
	hb_switch_next_of(&s, true, true, &n);
	assert_true(n.discontinued);
	assert_non_null(strstr(n.why, "9.4"));

	hb_switch_resume(&s, "supplier replaced the gapping jig");
	assert_false(s.discontinued);
	assert_int_equal(s.severity, HB_SEVERITY_TIGHTENED);
	assert_int_equal(s.rule, HB_SWITCH_RESUME);
	for (int i = 0; i < 4; i++)
		assert_int_equal(feed(&s, "U", HB_SEVERITY_TIGHTENED, 0), HB_SWITCH_STAY);
	assert_int_equal(feed(&s, "U5", HB_SEVERITY_TIGHTENED, 0), HB_SWITCH_TIGHTENED_TO_NORMAL);
}

/* A lot inspected at another severity than the rules gave (the responsible
 * authority's choice) is recorded as an override and the rules go on from it. */
static void test_override_is_recorded(void **state)
{
	(void)state;
	hb_switch_state s;
	hb_switch_init(&s);
	assert_int_equal(feed(&s, "O1", HB_SEVERITY_TIGHTENED, 0), HB_SWITCH_OVERRIDE);
	assert_int_equal(s.severity, HB_SEVERITY_TIGHTENED);
	/* Reduced without the score is an override too, not 9.3.3. */
	hb_switch_init(&s);
	assert_int_equal(feed(&s, "O2", HB_SEVERITY_REDUCED, 0), HB_SWITCH_OVERRIDE);
}

/* ------------------------------------------------------------------ */
/* the stream through the store                                        */

static char dir[128], db_path[256];

static int64_t put_lot(hb_db *db, int64_t part_id, const char *code, const char *supplier, hb_severity sev, int d,
		       bool irregular)
{
	hb_sampling_plan p = plan_of(1000, 1.0, HB_LEVEL_II, sev);
	int64_t id = 0;
	assert_int_equal(hb_db_lot_ensure(db, part_id, code, &id), HB_OK);
	hb_db_lot lot;
	assert_int_equal(hb_db_lot_get(db, id, &lot), HB_OK);
	lot.lot_size = 1000;
	lot.aql = 1.0;
	snprintf(lot.inspection_level, sizeof lot.inspection_level, "II");
	snprintf(lot.severity, sizeof lot.severity, "%s", hb_iso2859_severity_name(sev));
	snprintf(lot.code_letter, sizeof lot.code_letter, "%c", p.letter);
	lot.sample_size = p.sample_size;
	lot.accept_number = p.ac;
	lot.reject_number = p.re;
	/* d nonconforming units, then conforming ones to the sample size (or
	 * up to Re, where inspection stops). */
	int tested = d >= p.re ? d : (int)p.sample_size;
	for (int k = 1; k <= tested; k++) {
		hb_db_inspection rec;
		hb_db_inspection_init(&rec);
		rec.lot_id = id;
		rec.sequence = k;
		rec.outcome = k <= d ? HB_DB_FAIL : HB_DB_PASS;
		assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);
	}
	hb_lot_decision dec;
	assert_int_equal(hb_lot_decide(&p, tested, d, &dec), HB_OK);
	lot.decision = dec == HB_LOT_REJECT ? HB_DB_LOT_REJECT : HB_DB_LOT_ACCEPT;
	assert_int_equal(hb_db_lot_update(db, &lot), HB_OK);
	assert_int_equal(hb_db_lot_set_stream(db, id, supplier, irregular), HB_OK);
	assert_int_equal(hb_db_lot_stamp_decided(db, id), HB_OK);
	return id;
}

/* The same walk as test_stream_walks_every_switch, stored: lots decided in
 * order, the approval recorded as an event; another supplier's lots of the
 * same part form their own stream (ISO 2859-1 applies the rules to a
 * continuing series of lots from one source, common practice). */
static void test_stream_from_the_store(void **state)
{
	(void)state;
	hb_db *db = NULL;
	assert_int_equal(temp_store_open(dir, sizeof dir, "switching", db_path, sizeof db_path, &db), 0);
	hb_db_part part;
	hb_db_part_init(&part);
	snprintf(part.part_number, sizeof part.part_number, "CHK-1");
	assert_int_equal(hb_db_part_put(db, &part), HB_OK);

	put_lot(db, part.id, "OTHER-1", "Other Coils", HB_SEVERITY_NORMAL, 3, false);
	put_lot(db, part.id, "K01", "Acme Magnetics", HB_SEVERITY_NORMAL, 3, false);
	put_lot(db, part.id, "OTHER-2", "Other Coils", HB_SEVERITY_NORMAL, 0, false);
	put_lot(db, part.id, "K02", "Acme Magnetics", HB_SEVERITY_NORMAL, 3, false);
	hb_stream s;
	assert_int_equal(hb_stream_load(db, &part, "Acme Magnetics", &s), HB_OK);
	assert_int_equal(s.n, 2);
	assert_int_equal(s.state.severity, HB_SEVERITY_TIGHTENED); /* 9.3.1 */
	assert_int_equal(s.entries[1].rule, HB_SWITCH_TO_TIGHTENED);
	hb_stream_free(&s);
	assert_int_equal(hb_stream_load(db, &part, "Other Coils", &s), HB_OK);
	assert_int_equal(s.state.severity, HB_SEVERITY_NORMAL); /* one lot not accepted: no switch */
	hb_stream_free(&s);

	for (int i = 3; i <= 7; i++) {
		char code[8];
		snprintf(code, sizeof code, "K%02d", i);
		put_lot(db, part.id, code, "Acme Magnetics", HB_SEVERITY_TIGHTENED, 0, false);
	}
	for (int i = 8; i <= 17; i++) {
		char code[8];
		snprintf(code, sizeof code, "K%02d", i);
		put_lot(db, part.id, code, "Acme Magnetics", HB_SEVERITY_NORMAL, 0, false);
	}
	assert_int_equal(hb_stream_load(db, &part, "Acme Magnetics", &s), HB_OK);
	assert_int_equal(s.entries[6].rule, HB_SWITCH_TIGHTENED_TO_NORMAL); /* 9.3.2 after K07 */
	assert_int_equal(s.state.score, 30);
	hb_switch_next next;
	hb_stream_next(&s, false, &next);
	assert_int_equal(next.severity, HB_SEVERITY_NORMAL); /* 9.3.3 needs the approval */
	hb_stream_free(&s);

	assert_int_equal(hb_db_stream_event_add(db, part.id, "Acme Magnetics", HB_DB_STREAM_APPROVE_REDUCED,
						"quality manager, memo 12"), HB_OK);
	assert_int_equal(hb_stream_load(db, &part, "Acme Magnetics", &s), HB_OK);
	assert_true(s.reduced_approved);
	hb_stream_next(&s, false, &next);
	assert_int_equal(next.severity, HB_SEVERITY_REDUCED);
	hb_stream_next(&s, true, &next); /* production irregular: not reduced */
	assert_int_equal(next.severity, HB_SEVERITY_NORMAL);
	hb_stream_free(&s);

	put_lot(db, part.id, "K18", "Acme Magnetics", HB_SEVERITY_REDUCED, 0, false);
	put_lot(db, part.id, "K19", "Acme Magnetics", HB_SEVERITY_REDUCED, 2, false); /* 1 < 2 < 3 */
	assert_int_equal(hb_stream_load(db, &part, "Acme Magnetics", &s), HB_OK);
	const hb_stream_entry *last = &s.entries[s.n - 1];
	assert_true(last->is_lot);
	assert_int_equal(last->decision, HB_LOT_ACCEPT_REINSTATE);
	assert_int_equal(last->rule, HB_SWITCH_REDUCED_REINSTATE);
	assert_int_equal(s.state.severity, HB_SEVERITY_NORMAL);
	/* The stored decision stays "accept": the lot was accepted. */
	assert_int_equal(last->lot.lot.decision, HB_DB_LOT_ACCEPT);
	json_t *j = hb_stream_json(&s, &next);
	assert_non_null(j);
	json_t *lots = json_object_get(j, "lots");
	assert_int_equal(json_array_size(lots), s.n);
	assert_string_equal(json_string_value(json_object_get(json_array_get(lots, s.n - 1), "decision")),
			    "accept-reinstate-normal");
	json_decref(j);
	hb_stream_free(&s);
	assert_int_equal(temp_store_remove(dir, db), 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_reference_worked_examples),
		cmocka_unit_test(test_reduced_accept_and_reinstate_zone),
		cmocka_unit_test(test_reference_table_invariants),
		cmocka_unit_test(test_tighter_ac_from_table),
		cmocka_unit_test(test_stream_walks_every_switch),
		cmocka_unit_test(test_two_of_five_window),
		cmocka_unit_test(test_switching_score),
		cmocka_unit_test(test_reduced_to_normal_causes),
		cmocka_unit_test(test_discontinue_and_resume),
		cmocka_unit_test(test_override_is_recorded),
		cmocka_unit_test(test_stream_from_the_store),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
