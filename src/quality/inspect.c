/* src/quality/inspect.c - the lot inspection core shared by the `inspect` command, the demo and the tests */
#include <ctype.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "inspect.h"
#include "stream.h"
#include "../bench/bench.h"

void hb_inspect_config_init(hb_inspect_config *cfg)
{
	memset(cfg, 0, sizeof *cfg);
	cfg->level = HB_LEVEL_II;
	cfg->severity = HB_SEVERITY_NORMAL;
	cfg->aql = NAN;
	cfg->ambient_c = NAN;
	cfg->part_fault = HB_INSPECT_PART_NONCONFORMING;
	cfg->bench_failures_to_pause = HB_INSPECT_BENCH_FAILURES_TO_PAUSE;
	hb_sweep_plan_defaults(&cfg->plan);
	cfg->plan.kind = HB_SWEEP_BIAS;
	hb_analysis_options_init(&cfg->analysis);
}

hb_sweep_cause hb_inspect_sweep_cause(const hb_sweep_result *r)
{
	if (r->cause != HB_CAUSE_NONE)
		return r->cause;
	if (r->end == HB_SWEEP_COMPLETE && r->status == HB_OK)
		return HB_CAUSE_NONE;
	if (r->interrupted_by_signal)
		return HB_CAUSE_OPERATOR;
	switch (r->status) {
	case HB_ERR_COMPLIANCE:
	case HB_ERR_OVERLOAD:
		return HB_CAUSE_PART;
	case HB_ERR_INTERRUPTED:
		return HB_CAUSE_OPERATOR;
	case HB_ERR_LIMIT:
		return HB_CAUSE_LIMIT;
	default:
		/* Time-out, lost link, protocol, instrument, I/O, store, and
		 * anything not foreseen: a unit is never judged on a doubt. */
		return HB_CAUSE_BENCH;
	}
}

const char *hb_inspect_cause_name(hb_sweep_cause c)
{
	switch (c) {
	case HB_CAUSE_OPERATOR: return "operator";
	case HB_CAUSE_PART: return "part";
	case HB_CAUSE_BENCH: return "bench";
	case HB_CAUSE_LIMIT: return "limit";
	default: return "none";
	}
}

int hb_inspect_serial_nth(const char *first, int k, char *out, size_t cap)
{
	if (!first || !*first || k < 0 || cap == 0)
		return HB_ERR_ARG;
	size_t len = strlen(first), start = len;
	while (start > 0 && isdigit((unsigned char)first[start - 1]))
		start--;
	int n;
	if (start == len) {
		n = k == 0 ? snprintf(out, cap, "%s", first) : snprintf(out, cap, "%s-%d", first, k + 1);
	} else {
		size_t width = len - start;
		/* Long digit runs (dates, part codes) overflow a long long; count up
		 * only the last 15 digits and keep the rest as prefix. */
		if (width > 15) {
			start = len - 15;
			width = 15;
		}
		long long base = strtoll(first + start, NULL, 10);
		n = snprintf(out, cap, "%.*s%0*lld", (int)start, first, (int)width, base + k);
	}
	return n < 0 || (size_t)n >= cap ? HB_ERR_ARG : HB_OK;
}

void hb_inspect_print_plan(FILE *out, const hb_sampling_plan *p)
{
	char aql[16];
	fprintf(out, "sampling plan (ISO 2859-1 single sampling): lot size %ld, AQL %s, level %s, %s inspection\n",
		p->lot_size, hb_iso2859_aql_format(p->aql, aql, sizeof aql), hb_iso2859_level_name(p->level),
		hb_iso2859_severity_name(p->severity));
	if (p->arrow)
		fprintf(out, "  code letter %c (Table 1 gives %c; the arrow leads %s to %c)\n", p->letter,
			p->initial_letter, p->arrow > 0 ? "down" : "up", p->letter);
	else
		fprintf(out, "  code letter %c\n", p->letter);
	if (p->full_inspection)
		fprintf(out, "  sample size %ld: 100 %% inspection (the table's %ld reaches the lot)\n", p->sample_size,
			p->table_sample_size);
	else
		fprintf(out, "  sample size %ld\n", p->sample_size);
	fprintf(out, "  accept with at most Ac = %d nonconforming, reject at Re = %d (inspection stops there)\n", p->ac,
		p->re);
	if (p->re > p->ac + 1) {
		fputs("  ", out);
		hb_stream_print_reinstate_rule(out, p);
	}
	if (p->uncertain)
		fprintf(out, "  UNCERTAIN table cell: %s\n", p->uncertain_note);
}

void hb_inspect_print_rules(FILE *out, const hb_inspect_config *cfg)
{
	int bench = cfg->bench_failures_to_pause > 0 ? cfg->bench_failures_to_pause : HB_INSPECT_BENCH_FAILURES_TO_PAUSE;
	fprintf(out, "units that cannot be measured:\n");
	if (cfg->part_fault == HB_INSPECT_PART_RETEST)
		fprintf(out, "  because of the part (compliance: the winding needs more voltage than the limit; open winding;\n"
			     "    reading out of range): not judged, the inspection pauses so the unit is checked and measured again\n");
	else
		fprintf(out, "  because of the part (compliance: the winding needs more voltage than the limit; open winding;\n"
			     "    reading out of range): NONCONFORMING, counted in the sample, the reason in its record\n");
	fprintf(out, "  because of the bench (lost link, instrument error, time-out, supply dropout): not judged, no sample\n"
		     "    position used, the same unit is measured again; %d in a row pause the inspection (resumable)\n"
		     "  stopped by a safety limit or by the operator: not judged; the inspection pauses (resumable)\n"
		     "  incomplete verdict (a check could not be made): NONCONFORMING\n", bench);
	if (cfg->conditional_policy == HB_CONDITIONAL_BY_SIDE)
		fprintf(out, "conditional outcomes (decision rule with a guard band, ILAC-G8:2019 4.2.3), policy 'by-side':\n"
			     "  conditional pass counts as conforming, conditional fail as NONCONFORMING; tallied separately\n");
	else
		fprintf(out, "conditional outcomes (decision rule with a guard band, ILAC-G8:2019 4.2.3), policy 'nonconforming':\n"
			     "  a conditional pass or conditional fail counts as NONCONFORMING; tallied separately\n");
}

static bool lot_plan_differs(const hb_db_lot *lot, const hb_sampling_plan *p)
{
	char letter[2] = { p->letter, 0 };
	return lot->lot_size != p->lot_size || !(fabs(lot->aql - p->aql) <= 1e-9 * p->aql) ||
	       strcmp(lot->inspection_level, hb_iso2859_level_name(p->level)) != 0 ||
	       strcmp(lot->severity, hb_iso2859_severity_name(p->severity)) != 0 || strcmp(lot->code_letter, letter) != 0 ||
	       lot->sample_size != p->sample_size || lot->accept_number != p->ac || lot->reject_number != p->re;
}

typedef struct run_state {
	const hb_inspect_config *cfg;
	const hb_inspect_callbacks *cb;
	hb_inspect_result *out;
	hb_db_lot lot;
	int bench_in_row;   /* bench failures since the last sweep that reached the part */
	int bench_limit;
} run_state;

static void tally_from_records(const hb_db_inspection *recs, size_t n, hb_inspect_tally *t)
{
	memset(t, 0, sizeof *t);
	int max_seq = 0;
	for (size_t i = 0; i < n; i++) {
		if (recs[i].outcome == HB_DB_PASS)
			t->tested++;
		else if (recs[i].outcome == HB_DB_FAIL) {
			t->tested++;
			t->nonconforming++;
		} else if (recs[i].outcome == HB_DB_SKIPPED)
			t->skipped++;
		if (recs[i].conditional && recs[i].outcome != HB_DB_SKIPPED) {
			t->conditional++;
			if (recs[i].outcome == HB_DB_FAIL)
				t->conditional_nonconforming++;
		}
		if (recs[i].sequence > max_seq)
			max_seq = recs[i].sequence;
	}
	t->next_sequence = max_seq + 1;
}

/* A serial already tested (pass or fail) in this lot may not fill a
 * second sample position: the sample must be distinct units. */
static int find_tested_serial(hb_db *db, int64_t lot_id, const char *serial, int *sequence)
{
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	int rc = hb_db_inspection_list(db, lot_id, &recs, &n);
	if (rc != HB_OK)
		return rc;
	*sequence = 0;
	for (size_t i = 0; i < n; i++)
		if (recs[i].outcome != HB_DB_SKIPPED && strcmp(recs[i].serial, serial) == 0)
			*sequence = recs[i].sequence;
	hb_db_inspections_free(recs);
	return HB_OK;
}

static int record(run_state *st, hb_inspect_unit *u)
{
	const hb_inspect_config *cfg = st->cfg;
	hb_inspect_tally *t = &st->out->tally;
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	rec.lot_id = st->lot.id;
	rec.sequence = u->sequence;
	rec.outcome = u->outcome;
	rec.conditional = u->conditional;
	rec.sweep_id = u->sweep_id;
	snprintf(rec.note, sizeof rec.note, "%s", u->note);
	int rc = HB_OK;
	if (u->serial[0])
		rc = hb_db_unit_ensure(cfg->db, cfg->part->id, u->serial, st->lot.id, &rec.unit_id);
	if (rc == HB_OK)
		rc = hb_db_inspection_put(cfg->db, &rec);
	if (rc != HB_OK) {
		snprintf(st->out->message, sizeof st->out->message, "store: %s", hb_db_errmsg(cfg->db));
		return rc;
	}
	if (u->outcome == HB_DB_SKIPPED)
		t->skipped++;
	else
		t->tested++;
	if (u->outcome == HB_DB_FAIL)
		t->nonconforming++;
	if (u->conditional && u->outcome != HB_DB_SKIPPED) {
		t->conditional++;
		if (u->outcome == HB_DB_FAIL)
			t->conditional_nonconforming++;
	}
	t->next_sequence = u->sequence + 1;
	if (cfg->out) {
		char l0[32] = "-";
		if (isfinite(u->l0_h))
			hb_format_si(l0, sizeof l0, u->l0_h, "H", 4);
		const char *word = u->outcome == HB_DB_PASS ? (u->conditional ? "conforming(c)" : "conforming") :
				   u->outcome == HB_DB_FAIL ? (u->conditional ? "NONCONFORM(c)" : "NONCONFORMING") : "skipped";
		/* the serial padded by display width (a non-ASCII serial keeps the columns) */
		fprintf(cfg->out, "  #%-3d ", u->sequence);
		hb_fput_cell(cfg->out, u->serial, 18, true);
		fprintf(cfg->out, " L0 %-11s %-13s tested %d/%ld, nonconforming %d (Ac %d, Re %d)%s%s\n", l0, word, t->tested, st->out->plan.sample_size,
			t->nonconforming, st->out->plan.ac, st->out->plan.re, u->note[0] ? "  " : "", u->note);
		fflush(cfg->out);
	}
	return HB_OK;
}

/* Conforming or not by the checks' outcomes, a conditional one counted by
 * the plan's policy (decision.h). */
static hb_db_outcome unit_outcome(const hb_analysis_summary *an, hb_conditional_policy policy, bool *conditional)
{
	*conditional = an->overall == HB_OVERALL_CONDITIONAL;
	if (an->overall == HB_OVERALL_PASS)
		return HB_DB_PASS;
	if (an->overall != HB_OVERALL_CONDITIONAL)
		return HB_DB_FAIL;
	for (size_t i = 0; i < an->n_checks; i++)
		if (!hb_decision_counts_conforming(an->checks[i].decision.outcome, policy))
			return HB_DB_FAIL;
	return HB_DB_PASS;
}

/* Names the checks behind a nonconforming or incomplete verdict. */
static void verdict_note(const hb_analysis_summary *an, char *buf, size_t cap)
{
	size_t len = 0;
	buf[0] = 0;
	if (an->overall == HB_OVERALL_PASS)
		return;
	if (an->overall == HB_OVERALL_INCOMPLETE)
		len += (size_t)snprintf(buf + len, cap - len, "incomplete, counted nonconforming:");
	if (an->overall == HB_OVERALL_CONDITIONAL)
		len += (size_t)snprintf(buf + len, cap - len, "conditional:");
	if (an->n_checks == 0 && len < cap)
		snprintf(buf + len, cap - len, " no check could be made%s%s", an->message[0] ? ": " : "", an->message);
	for (size_t i = 0; i < an->n_checks && len < cap; i++) {
		const hb_analysis_check *k = &an->checks[i];
		if (k->decision.outcome == HB_DECISION_PASS)
			continue;
		char mv[32];
		if (k->decision.outcome != HB_DECISION_NOT_TESTED)
			len += (size_t)snprintf(buf + len, cap - len, "%s%s %s (%s, %s rule)", len ? ", " : "", k->name,
						hb_decision_outcome_name(k->decision.outcome),
						hb_format_si(mv, sizeof mv, k->check.measured, k->unit, 4),
						hb_decision_rule_name(k->decision.rule));
		else
			len += (size_t)snprintf(buf + len, cap - len, "%s%s not tested", len ? " " : "", k->name);
	}
}

typedef enum {
	UNIT_RECORDED, /* the position is recorded (pass or fail) */
	UNIT_BENCH,    /* the bench failed: nothing recorded, the same position is asked for again */
	UNIT_PAUSE,    /* nothing recorded; the run stops with the lot open */
	UNIT_ERROR     /* the store failed */
} unit_end;

static unit_end pause_with(run_state *st, hb_sweep_cause cause, const char *serial, const char *fmt, ...)
	__attribute__((format(printf, 4, 5)));

/* Ends a unit without recording it: the resumed run starts with this
 * serial at this position. */
static unit_end pause_with(run_state *st, hb_sweep_cause cause, const char *serial, const char *fmt, ...)
{
	hb_inspect_result *out = st->out;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(out->message, sizeof out->message, fmt, ap);
	va_end(ap);
	out->pause_cause = cause;
	snprintf(out->pause_serial, sizeof out->pause_serial, "%s", serial);
	return UNIT_PAUSE;
}

/* The record of a unit that the part itself kept from being measured: the
 * bench is fine (it measured others) and the part demanded what a good
 * part never does, so it is nonconforming, the reason in its record. */
static unit_end record_part_fault(run_state *st, hb_inspect_unit *u, int64_t sweep_id, const hb_sweep_result *res)
{
	u->outcome = HB_DB_FAIL;
	u->overall = HB_OVERALL_INCOMPLETE;
	u->cause = HB_CAUSE_PART;
	u->sweep_id = sweep_id;
	int n = snprintf(u->note, sizeof u->note, "not measurable (part), counted nonconforming: sweep %lld: %s",
			 (long long)sweep_id, res->reason);
	if (n >= (int)sizeof u->note)
		memcpy(u->note + sizeof u->note - 4, "...", 4);
	return record(st, u) == HB_OK ? UNIT_RECORDED : UNIT_ERROR;
}

static unit_end measure_unit(run_state *st, int sequence, const char *serial, hb_analysis_summary *an,
			     hb_inspect_unit *unit)
{
	const hb_inspect_config *cfg = st->cfg;
	hb_inspect_result *out = st->out;
	hb_inspect_unit u;
	memset(&u, 0, sizeof u);
	u.sequence = sequence;
	u.l0_h = NAN;
	snprintf(u.serial, sizeof u.serial, "%s", serial);
	*unit = u;
	for (;;) {
		if (st->cb->before_unit && st->cb->before_unit(st->cb->ctx, sequence, serial) != HB_OK)
			return pause_with(st, HB_CAUSE_NONE, serial, "the set-up of unit %s failed", serial);
		hb_session s = { .db = cfg->db, .lcr = cfg->lcr, .supply = cfg->supply, .station = cfg->station,
				 .progress = cfg->progress, .progress_tty = cfg->progress_tty, .ambient_c = cfg->ambient_c,
				 .allow_overdue = cfg->allow_overdue, .fixture = cfg->fixture };
		char note[160];
		snprintf(note, sizeof note, "lot %s, sample position %d (n = %ld)", cfg->lot_code, sequence,
			 out->plan.sample_size);
		int64_t sweep_id = 0;
		hb_sweep_result res;
		hb_session_measure(&s, cfg->part, serial, st->lot.id, &cfg->plan, note, &sweep_id, &res);
		if (res.current_may_flow) {
			/* No retry: nobody may touch the bench until the supply is
			 * switched off by hand. */
			out->current_may_flow = true;
			out->bench_failures = ++st->bench_in_row;
			return pause_with(st, HB_CAUSE_BENCH, serial, "unit %s: the supply link was lost (%s)", serial,
					  res.reason);
		}
		hb_sweep_cause cause = hb_inspect_sweep_cause(&res);
		if (cause == HB_CAUSE_OPERATOR) {
			out->signal_number = res.signal_number;
			if (res.interrupted_by_signal)
				return pause_with(st, cause, serial,
						  "unit %s: sweep %lld stopped by signal %d; the position is not recorded",
						  serial, (long long)sweep_id, res.signal_number);
			return pause_with(st, cause, serial, "unit %s: sweep %lld stopped by the operator: %s", serial,
					  (long long)sweep_id, res.reason);
		}
		if (cause == HB_CAUSE_LIMIT)
			/* A limit is the set-up's business (limits, sweep range): no
			 * verdict on the unit, and the next unit would meet it too. */
			return pause_with(st, cause, serial,
					  "unit %s: sweep %lld stopped by a safety limit: %s; check the limits and the sweep "
					  "range, the unit is not judged",
					  serial, (long long)sweep_id, res.reason);
		if (cause == HB_CAUSE_BENCH) {
			out->bench_failures = ++st->bench_in_row;
			if (cfg->out) {
				fprintf(cfg->out, "  #%-3d ", sequence);
				hb_fput_cell(cfg->out, serial, 18, true);
				fprintf(cfg->out, " bench fault, not judged (%d of %d in a row pauses): sweep %lld: %s\n",
					st->bench_in_row, st->bench_limit, (long long)sweep_id, res.reason);
				fflush(cfg->out);
			}
			if (st->bench_in_row >= st->bench_limit)
				return pause_with(st, cause, serial,
						  "the bench failed %d times in a row, last on unit %s (sweep %lld: %s); "
						  "nothing was judged",
						  st->bench_in_row, serial, (long long)sweep_id, res.reason);
			return UNIT_BENCH;
		}
		/* A sweep that reached a verdict (or the part's fault) shows the
		 * bench works. */
		st->bench_in_row = 0;
		out->bench_failures = 0;
		if (cause == HB_CAUSE_PART) {
			/* The reason is printed with the record (or the pause), once. */
			hb_inspect_action act = st->cb->sweep_failed ?
						st->cb->sweep_failed(st->cb->ctx, sequence, serial, &res) : HB_INSPECT_RECORD;
			if (act == HB_INSPECT_RETRY)
				continue;
			if (act == HB_INSPECT_PAUSE)
				return pause_with(st, HB_CAUSE_OPERATOR, serial, "paused after unit %s could not be measured",
						  serial);
			if (cfg->part_fault == HB_INSPECT_PART_RETEST)
				return pause_with(st, cause, serial,
						  "unit %s could not be measured because of the part (sweep %lld: %s); "
						  "not judged: check it and its contacts, it is measured again on resume",
						  serial, (long long)sweep_id, res.reason);
			unit_end e = record_part_fault(st, &u, sweep_id, &res);
			*unit = u;
			return e;
		}
		hb_analysis_options opt = cfg->analysis;
		opt.noise_rel = res.noise_rel;
		opt.store = true;
		hb_analysis_sweep(cfg->db, sweep_id, &opt, an);
		if (!an->ran) {
			/* Nothing was fitted or judged (the store could not be read):
			 * the unit is neither good nor bad, and the operator should know. */
			snprintf(out->message, sizeof out->message, "unit %s: sweep %lld could not be analysed: %s", serial,
				 (long long)sweep_id, an->message);
			return UNIT_ERROR;
		}
		if (cfg->out && cfg->verbose_fit)
			hb_analysis_print(cfg->out, an);
		u.sweep_id = sweep_id;
		u.l0_h = an->bias.modelfree.L0;
		u.overall = an->overall;
		u.outcome = unit_outcome(an, cfg->conditional_policy, &u.conditional);
		verdict_note(an, u.note, sizeof u.note);
		*unit = u;
		return record(st, &u) == HB_OK ? UNIT_RECORDED : UNIT_ERROR;
	}
}

static void print_decision(const run_state *st)
{
	FILE *o = st->cfg->out;
	const hb_inspect_result *r = st->out;
	if (!o)
		return;
	const hb_inspect_tally *t = &r->tally;
	if (r->decision == HB_LOT_REJECT)
		fprintf(o, "lot %s: REJECT - %d nonconforming in %d tested reaches Re = %d%s\n", st->cfg->lot_code,
			t->nonconforming, t->tested, r->plan.re,
			t->tested < r->plan.sample_size ? " (inspection stopped early)" : "");
	else if (r->decision == HB_LOT_ACCEPT_REINSTATE)
		fprintf(o, "lot %s: ACCEPT, REINSTATE NORMAL - %d nonconforming in the sample of %d, above Ac = %d and below "
			   "Re = %d: the lot is accepted and normal inspection is reinstated from the next lot "
			   "(MIL-STD-105E Table II-C)\n",
			st->cfg->lot_code, t->nonconforming, t->tested, r->plan.ac, r->plan.re);
	else
		fprintf(o, "lot %s: ACCEPT - %d nonconforming in the sample of %d, at most Ac = %d\n", st->cfg->lot_code,
			t->nonconforming, t->tested, r->plan.ac);
	if (t->skipped)
		fprintf(o, "  %d unit(s) skipped as not testable and replaced by the next drawn\n", t->skipped);
	if (t->conditional)
		fprintf(o, "  %d unit(s) conditional (policy '%s'): %d counted nonconforming, %d conforming\n", t->conditional,
			hb_conditional_policy_name(r->conditional_policy), t->conditional_nonconforming,
			t->conditional - t->conditional_nonconforming);
}

int hb_inspect_run(const hb_inspect_config *cfg, const hb_inspect_callbacks *cb, hb_inspect_result *out)
{
	memset(out, 0, sizeof *out);
	out->end = HB_INSPECT_PAUSED;
	if (!cfg || !cb || !cb->next_unit || !cfg->db || !cfg->part || cfg->part->id <= 0 || !cfg->lot_code ||
	    !cfg->lot_code[0]) {
		snprintf(out->message, sizeof out->message, "inspection needs a store, a stored part, a lot code and a unit source");
		return HB_ERR_ARG;
	}
	char err[256];
	int rc = hb_iso2859_plan(cfg->lot_size, cfg->aql, cfg->level, cfg->severity, &out->plan, err, sizeof err);
	if (rc != HB_OK) {
		snprintf(out->message, sizeof out->message, "%s", err);
		return HB_ERR_ARG;
	}
	out->conditional_policy = cfg->conditional_policy;
	run_state st = { cfg, cb, out, { 0 }, 0,
			 cfg->bench_failures_to_pause > 0 ? cfg->bench_failures_to_pause : HB_INSPECT_BENCH_FAILURES_TO_PAUSE };
	hb_analysis_summary *an = calloc(1, sizeof *an);
	hb_db_inspection *recs = NULL;
	size_t nrecs = 0;
	if (!an) {
		rc = HB_ERR_NOMEM;
		snprintf(out->message, sizeof out->message, "out of memory");
		goto done;
	}
	int64_t lot_id = 0;
	if (cfg->resume_only) {
		/* A lot is begun once its plan is stored: a mistyped lot code must
		 * not start a new lot when the operator meant to continue one. */
		rc = hb_db_lot_find(cfg->db, cfg->part->id, cfg->lot_code, &st.lot);
		if (rc == HB_ERR_NOTFOUND || (rc == HB_OK && st.lot.sample_size <= 0)) {
			snprintf(out->message, sizeof out->message,
				 "lot %s of part %s has not been begun: nothing to resume", cfg->lot_code,
				 cfg->part->part_number);
			rc = HB_ERR_ARG;
			goto done;
		}
		if (rc != HB_OK) {
			snprintf(out->message, sizeof out->message, "store: %s", hb_db_errmsg(cfg->db));
			goto done;
		}
	}
	rc = hb_db_lot_ensure(cfg->db, cfg->part->id, cfg->lot_code, &lot_id);
	if (rc == HB_OK)
		rc = hb_db_lot_get(cfg->db, lot_id, &st.lot);
	if (rc == HB_OK)
		rc = hb_db_inspection_list(cfg->db, lot_id, &recs, &nrecs);
	if (rc != HB_OK) {
		snprintf(out->message, sizeof out->message, "store: %s", hb_db_errmsg(cfg->db));
		goto done;
	}
	out->lot_id = lot_id;
	tally_from_records(recs, nrecs, &out->tally);
	if (st.lot.decision != HB_DB_LOT_OPEN && st.lot.lot_size > 0 && st.lot.lot_size != cfg->lot_size) {
		snprintf(out->message, sizeof out->message,
			 "lot %s was decided (%s) with lot size %ld; lot size %ld would change a decided lot: refused",
			 cfg->lot_code, hb_db_lot_decision_name(st.lot.decision), st.lot.lot_size, cfg->lot_size);
		rc = HB_ERR_ARG;
		goto done;
	}
	if (st.lot.decision != HB_DB_LOT_OPEN) {
		out->end = HB_INSPECT_ALREADY_DECIDED;
		out->decision = st.lot.decision == HB_DB_LOT_ACCEPT ? HB_LOT_ACCEPT : HB_LOT_REJECT;
		if (out->decision == HB_LOT_ACCEPT && strcmp(st.lot.severity, "reduced") == 0 &&
		    out->tally.nonconforming > st.lot.accept_number)
			out->decision = HB_LOT_ACCEPT_REINSTATE;
		snprintf(out->message, sizeof out->message, "lot %s was decided on %s: %s", cfg->lot_code, st.lot.decided,
			 hb_db_lot_decision_name(st.lot.decision));
		goto done;
	}
	/* A begun lot keeps its plan: changing lot size or AQL half-way would
	 * mix two sampling schemes in one decision. */
	if (nrecs > 0 && st.lot.sample_size > 0 && lot_plan_differs(&st.lot, &out->plan)) {
		char aql[16];
		snprintf(out->message, sizeof out->message,
			 "lot %s was begun with lot size %ld, AQL %s, level %s, %s inspection (n %ld, Ac %ld, Re %ld); "
			 "resume it with the same values",
			 cfg->lot_code, st.lot.lot_size, hb_iso2859_aql_format(st.lot.aql, aql, sizeof aql),
			 st.lot.inspection_level, st.lot.severity, st.lot.sample_size, st.lot.accept_number,
			 st.lot.reject_number);
		rc = HB_ERR_ARG;
		goto done;
	}
	st.lot.lot_size = out->plan.lot_size;
	st.lot.aql = out->plan.aql;
	snprintf(st.lot.inspection_level, sizeof st.lot.inspection_level, "%s", hb_iso2859_level_name(out->plan.level));
	snprintf(st.lot.severity, sizeof st.lot.severity, "%s", hb_iso2859_severity_name(out->plan.severity));
	snprintf(st.lot.code_letter, sizeof st.lot.code_letter, "%c", out->plan.letter);
	st.lot.sample_size = out->plan.sample_size;
	st.lot.accept_number = out->plan.ac;
	st.lot.reject_number = out->plan.re;
	st.lot.decision = HB_DB_LOT_OPEN;
	rc = hb_db_lot_update(cfg->db, &st.lot);
	if (rc != HB_OK) {
		snprintf(out->message, sizeof out->message, "store: %s", hb_db_errmsg(cfg->db));
		goto done;
	}
	if (cfg->supplier) {
		/* One lot, one supplier: a begun lot keeps the supplier it was begun with. */
		char had[HB_DB_ID_LEN] = "";
		rc = hb_db_lot_get_stream(cfg->db, lot_id, had, sizeof had, NULL);
		if (rc == HB_OK && nrecs > 0 && had[0] && strcmp(had, cfg->supplier) != 0) {
			snprintf(out->message, sizeof out->message, "lot %s was begun for supplier %s, not %s", cfg->lot_code,
				 had, cfg->supplier);
			rc = HB_ERR_ARG;
			goto done;
		}
		if (rc == HB_OK)
			rc = hb_db_lot_set_stream(cfg->db, lot_id, cfg->supplier, cfg->irregular);
		if (rc != HB_OK) {
			snprintf(out->message, sizeof out->message, "store: %s", hb_db_errmsg(cfg->db));
			goto done;
		}
	}
	out->resumed = nrecs > 0;
	out->resumed_at = out->tally.next_sequence;
	if (cfg->out) {
		hb_inspect_print_plan(cfg->out, &out->plan);
		hb_inspect_print_rules(cfg->out, cfg);
		if (out->resumed)
			fprintf(cfg->out, "resuming lot %s at sample position %d: tested %d, nonconforming %d, skipped %d\n",
				cfg->lot_code, out->tally.next_sequence, out->tally.tested, out->tally.nonconforming,
				out->tally.skipped);
		fflush(cfg->out);
	}

	for (;;) {
		hb_lot_decision d;
		rc = hb_lot_decide(&out->plan, out->tally.tested, out->tally.nonconforming, &d);
		if (rc != HB_OK) {
			snprintf(out->message, sizeof out->message, "inconsistent tally: %d nonconforming in %d tested",
				 out->tally.nonconforming, out->tally.tested);
			goto done;
		}
		if (d != HB_LOT_CONTINUE) {
			out->decision = d;
			break;
		}
		if (hb_sweep_pending_signal()) {
			out->signal_number = hb_sweep_pending_signal();
			out->pause_cause = HB_CAUSE_OPERATOR;
			snprintf(out->message, sizeof out->message, "signal %d received", out->signal_number);
			goto done;
		}
		int seq = out->tally.next_sequence;
		/* Only skips can get here, but a lot has no more units than its
		 * size: drawing past it would be inventing units. */
		if (seq > out->plan.lot_size) {
			snprintf(out->message, sizeof out->message,
				 "sample position %d is beyond the lot of %ld units (%d skipped); no unit left to draw", seq,
				 out->plan.lot_size, out->tally.skipped);
			goto done;
		}
		char serial[HB_DB_ID_LEN];
		char complaint[200];
		const char *why = NULL;
		hb_inspect_action act;
		for (;;) {
			serial[0] = 0;
			act = cb->next_unit(cb->ctx, seq, why, serial, sizeof serial);
			if (act != HB_INSPECT_MEASURE)
				break;
			if (!serial[0]) {
				why = "a unit to measure needs a serial";
				continue;
			}
			int dup = 0;
			rc = find_tested_serial(cfg->db, lot_id, serial, &dup);
			if (rc != HB_OK) {
				snprintf(out->message, sizeof out->message, "store: %s", hb_db_errmsg(cfg->db));
				goto done;
			}
			if (!dup)
				break;
			snprintf(complaint, sizeof complaint, "%s was already inspected in lot %s (sample position %d)",
				 serial, cfg->lot_code, dup);
			why = complaint;
		}
		if (act == HB_INSPECT_PAUSE) {
			if (hb_sweep_pending_signal()) {
				out->signal_number = hb_sweep_pending_signal();
				out->pause_cause = HB_CAUSE_OPERATOR;
			}
			if (!out->message[0])
				snprintf(out->message, sizeof out->message, "paused at sample position %d", seq);
			rc = HB_OK;
			goto done;
		}
		hb_inspect_unit u;
		if (act != HB_INSPECT_MEASURE) {
			memset(&u, 0, sizeof u);
			u.sequence = seq;
			u.outcome = HB_DB_SKIPPED;
			u.l0_h = NAN;
			snprintf(u.serial, sizeof u.serial, "%s", serial);
			snprintf(u.note, sizeof u.note, "not tested: skipped by the operator");
			rc = record(&st, &u);
			if (rc != HB_OK)
				goto done;
		} else {
			unit_end ue = measure_unit(&st, seq, serial, an, &u);
			if (ue == UNIT_ERROR) {
				rc = HB_ERR_DB;
				goto done;
			}
			if (ue == UNIT_PAUSE) {
				rc = HB_OK;
				goto done;
			}
			if (ue == UNIT_BENCH)
				continue; /* the same position again: a bench fault uses none */
		}
		if (cb->after_unit && cb->after_unit(cb->ctx, &u, &out->tally) != HB_OK) {
			out->pause_cause = HB_CAUSE_OPERATOR;
			snprintf(out->message, sizeof out->message, "stopped after sample position %d", seq);
			goto done;
		}
	}
	/* Accept-and-reinstate is an acceptance; the stream tells it apart
	 * from d, Ac and the severity stored with the lot. */
	st.lot.decision = out->decision == HB_LOT_REJECT ? HB_DB_LOT_REJECT : HB_DB_LOT_ACCEPT;
	rc = hb_db_lot_update(cfg->db, &st.lot);
	if (rc == HB_OK)
		rc = hb_db_lot_stamp_decided(cfg->db, st.lot.id);
	if (rc != HB_OK) {
		snprintf(out->message, sizeof out->message, "store: could not record the decision: %s",
			 hb_db_errmsg(cfg->db));
		out->decision = HB_LOT_CONTINUE;
		goto done;
	}
	out->end = HB_INSPECT_DECIDED;
	print_decision(&st);
done:
	if (out->end == HB_INSPECT_PAUSED && rc == HB_OK) {
		out->pause_sequence = out->tally.next_sequence;
		if (cfg->out) {
			const char *first = out->pause_cause == HB_CAUSE_BENCH ? "Fix the bench, then run" :
					    out->pause_cause == HB_CAUSE_LIMIT ? "Fix the set-up, then run" : "Run";
			char from[HB_DB_ID_LEN + 16] = "";
			if (out->pause_serial[0])
				snprintf(from, sizeof from, " with unit %s", out->pause_serial);
			fprintf(cfg->out,
				"lot %s still open: %s; tested %d of %ld, nonconforming %d. %s the same command again to "
				"resume at sample position %d%s.\n",
				cfg->lot_code, out->message, out->tally.tested, out->plan.sample_size,
				out->tally.nonconforming, first, out->pause_sequence, from);
			fflush(cfg->out);
		}
	}
	hb_db_inspections_free(recs);
	free(an);
	return rc;
}

static json_t *num_or_null(double v)
{
	return isfinite(v) ? json_real(v) : json_null();
}

json_t *hb_sampling_plan_json(const hb_sampling_plan *p)
{
	json_t *o = json_object();
	if (!o)
		return NULL;
	char letter[2] = { p->letter, 0 }, initial[2] = { p->initial_letter, 0 };
	json_object_set_new(o, "standard", json_string("ISO 2859-1 single sampling"));
	json_object_set_new(o, "lot_size", json_integer(p->lot_size));
	json_object_set_new(o, "aql", json_real(p->aql));
	json_object_set_new(o, "level", json_string(hb_iso2859_level_name(p->level)));
	json_object_set_new(o, "severity", json_string(hb_iso2859_severity_name(p->severity)));
	json_object_set_new(o, "initial_code_letter", json_string(initial));
	json_object_set_new(o, "code_letter", json_string(letter));
	json_object_set_new(o, "arrow", json_string(p->arrow > 0 ? "down" : p->arrow < 0 ? "up" : "none"));
	json_object_set_new(o, "table_sample_size", json_integer(p->table_sample_size));
	json_object_set_new(o, "sample_size", json_integer(p->sample_size));
	json_object_set_new(o, "full_inspection", json_boolean(p->full_inspection));
	json_object_set_new(o, "ac", json_integer(p->ac));
	json_object_set_new(o, "re", json_integer(p->re));
	json_object_set_new(o, "accept_reinstate_normal", p->re > p->ac + 1 ? json_pack("[ii]", p->ac + 1, p->re - 1) : json_null());
	json_object_set_new(o, "tables", json_string("MIL-STD-105E Tables I, II-A/B/C (= ISO 2859-1:1989)"));
	json_object_set_new(o, "uncertain", json_boolean(p->uncertain));
	if (p->uncertain)
		json_object_set_new(o, "uncertain_note", json_string(p->uncertain_note));
	return o;
}

json_t *hb_inspect_lot_json(hb_db *db, int64_t lot_id, const hb_inspect_result *r)
{
	hb_db_lot lot;
	if (hb_db_lot_get(db, lot_id, &lot) != HB_OK)
		return NULL;
	json_t *j = json_object();
	json_object_set_new(j, "lot", json_string(lot.lot_code));
	hb_db_part part;
	if (hb_db_part_get_id(db, lot.part_id, &part) == HB_OK)
		json_object_set_new(j, "part", json_string(part.part_number));
	json_t *plan = hb_sampling_plan_json(&r->plan);
	json_object_set_new(j, "plan", plan);
	json_object_set_new(j, "decision", json_string(hb_db_lot_decision_name(lot.decision)));
	json_object_set_new(j, "reinstate_normal", json_boolean(r->decision == HB_LOT_ACCEPT_REINSTATE));
	char supplier[HB_DB_ID_LEN] = "";
	bool irregular = false;
	if (hb_db_lot_get_stream(db, lot_id, supplier, sizeof supplier, &irregular) == HB_OK) {
		json_object_set_new(j, "supplier", json_string(supplier));
		json_object_set_new(j, "production_irregular", json_boolean(irregular));
	}
	if (lot.decided[0])
		json_object_set_new(j, "decided", json_string(lot.decided));
	json_object_set_new(j, "tested", json_integer(r->tally.tested));
	json_object_set_new(j, "nonconforming", json_integer(r->tally.nonconforming));
	json_object_set_new(j, "skipped", json_integer(r->tally.skipped));
	json_object_set_new(j, "conditional", json_integer(r->tally.conditional));
	json_object_set_new(j, "conditional_nonconforming", json_integer(r->tally.conditional_nonconforming));
	json_object_set_new(j, "conditional_policy", json_string(hb_conditional_policy_name(r->conditional_policy)));
	json_object_set_new(j, "next_sequence", json_integer(r->tally.next_sequence));
	if (r->end == HB_INSPECT_PAUSED && r->message[0]) {
		json_object_set_new(j, "paused", json_string(r->message));
		json_object_set_new(j, "pause_cause", json_string(hb_inspect_cause_name(r->pause_cause)));
		json_object_set_new(j, "bench_failures_in_a_row", json_integer(r->bench_failures));
		json_object_set_new(j, "resume_at", json_integer(r->pause_sequence));
		if (r->pause_serial[0])
			json_object_set_new(j, "resume_with", json_string(r->pause_serial));
	}
	json_t *units = json_array();
	hb_db_inspection *recs = NULL;
	size_t n = 0;
	hb_db_fit *fit = malloc(sizeof *fit);
	if (fit && hb_db_inspection_list(db, lot_id, &recs, &n) == HB_OK) {
		for (size_t i = 0; i < n; i++) {
			json_t *u = json_object();
			json_object_set_new(u, "sequence", json_integer(recs[i].sequence));
			json_object_set_new(u, "serial", json_string(recs[i].serial));
			json_object_set_new(u, "outcome", json_string(hb_db_outcome_name(recs[i].outcome)));
			json_object_set_new(u, "conditional", json_boolean(recs[i].conditional));
			json_object_set_new(u, "sweep_id", recs[i].sweep_id ? json_integer(recs[i].sweep_id) : json_null());
			double l0 = NAN;
			if (recs[i].sweep_id && hb_db_fit_get_latest(db, recs[i].sweep_id, NULL, fit) == HB_OK)
				for (size_t k = 0; k < fit->n_values; k++)
					if (strcmp(fit->values[k].name, HB_DB_FV_L0) == 0)
						l0 = fit->values[k].value;
			json_object_set_new(u, "L0_H", num_or_null(l0));
			json_object_set_new(u, "at", json_string(recs[i].at_iso));
			json_object_set_new(u, "note", json_string(recs[i].note));
			json_array_append_new(units, u);
		}
	}
	free(fit);
	hb_db_inspections_free(recs);
	json_object_set_new(j, "units", units);
	return j;
}
