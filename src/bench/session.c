/* src/bench/session.c - runs the sweep engine with the store as the sink of every point */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "session.h"
#include "session_trace.h"

typedef struct sink_ctx {
	hb_session *s;
	int64_t sweep_id;
	hb_pair pair; /* what the primary reading is: L (H) or |Z| (ohm) */
	hb_equiv equiv;
	const hb_sweep_plan *plan;
	hb_session_trace *trace;
} sink_ctx;

static void take_settings(void *ctx, int when)
{
	sink_ctx *c = ctx;
	hb_session_trace_snapshot(c->s, c->plan, c->trace, when);
}

static int store_point(void *ctx, const hb_sweep_point *p_in, int total)
{
	(void)total;
	sink_ctx *c = ctx;
	hb_sweep_point comp = *p_in;
	const hb_sweep_point *p = &comp;
	/* Residuals henrybench measured itself come off here, so every stored
	 * reading and everything fitted from it is the part's alone. */
	if (c->trace->t.fixture_applied && p_in->status == 0)
		hb_fixture_compensate(&c->trace->model, comp.frequency, c->equiv, c->pair, &comp.primary, &comp.secondary);
	hb_db_point pt;
	hb_db_point_init(&pt);
	pt.sweep_id = c->sweep_id;
	pt.seq = p->sequence;
	pt.bias_set_a = p->bias_set;
	pt.bias_meas_a = p->bias_measured;
	pt.supply_v = p->supply_voltage;
	pt.freq_hz = p->frequency;
	pt.primary = p->primary;
	pt.secondary = p->secondary;
	pt.reading_status = p->status == 0 ? HB_OK : (p->status == 1 ? HB_ERR_OVERLOAD : HB_ERR_INSTRUMENT);
	pt.t_s = p->t;
	pt.settle_readings = p->settle_readings;
	pt.settle_s = p->settle_seconds;
	pt.direction = p->direction < 0 ? HB_DB_DIR_DOWN : HB_DB_DIR_UP;
	pt.bias_spread_a = p->bias_readbacks > 0 ? p->bias_spread : NAN;
	pt.settled = p->settled;
	int rc = hb_db_point_add(c->s->db, &pt);
	/* an error goes to stderr (the progress may be a pipe being read);
	 * on a terminal the live line is ended first */
	if (rc != HB_OK)
		fprintf(stderr, "%shenrybench: store: %s\n", c->s->progress_tty ? "\n" : "", hb_db_errmsg(c->s->db));
	return rc;
}

static void show_progress(void *ctx, const hb_sweep_point *p, int index, int total, double l_first, double left)
{
	sink_ctx *c = ctx;
	FILE *out = c->s->progress;
	if (!out)
		return;
	char l_text[32], x_text[32];
	/* The primary of a Z-theta reading is |Z| in ohm, not an inductance. */
	bool z = c->pair == HB_PAIR_Z_THETA;
	const char *name = z ? "|Z|" : "L";
	hb_format_si(l_text, sizeof l_text, p->primary, z ? "ohm" : "H", 5);
	double change = isfinite(l_first) && l_first != 0 ? (p->primary / l_first - 1) * 100 : NAN;
	if (p->direction == 0)
		hb_format_si(x_text, sizeof x_text, p->frequency, "Hz", 4);
	else {
		double amps = isfinite(p->bias_measured) ? p->bias_measured : p->bias_set;
		/* Read-back offset noise around zero would print as "-0.0000 A". */
		if (fabs(amps) < 5e-5)
			amps = 0;
		snprintf(x_text, sizeof x_text, "%8.4f A", amps);
	}
	/* the change from the first point, or a dash when there is none to compare (never "nan %") */
	char ch_text[24];
	if (isfinite(change))
		snprintf(ch_text, sizeof ch_text, "%+6.2f %%", change);
	else
		snprintf(ch_text, sizeof ch_text, "%8s", HB_TEXT_ABSENT);
	if (c->s->progress_tty) {
		fprintf(out, "\r\033[K  point %d/%d  %s  %s %s  %s  %s  ~%.0f s left", index + 1, total,
			x_text, name, l_text, ch_text, p->settled ? "" : "(not settled)", left);
		if (index + 1 == total)
			fputc('\n', out);
	} else {
		char ch_line[24];
		if (isfinite(change))
			snprintf(ch_line, sizeof ch_line, "%+.2f%%", change);
		else
			snprintf(ch_line, sizeof ch_line, "%s", HB_TEXT_ABSENT);
		fprintf(out, "point %d/%d %s %s %s change %s%s left %.0fs\n", index + 1, total, x_text, name, l_text,
			ch_line, p->settled ? "" : " not-settled", left);
	}
	fflush(out);
}

static void show_notice(void *ctx, const char *text)
{
	sink_ctx *c = ctx;
	/* Safety notices go to stderr even when progress is quiet. */
	fprintf(stderr, "%shenrybench: %s\n", c->s->progress && c->s->progress_tty ? "\n" : "", text);
}

static const char *pair_name(hb_equiv e, hb_pair p)
{
	static const char *names[2][4] = { { "Ls-Rs", "Ls-Q", "Ls-D", "Z-theta" },
					   { "Lp-Rp", "Lp-Q", "Lp-D", "Z-theta" } };
	return names[e == HB_EQUIV_PARALLEL][p];
}

static const char *aperture_name(hb_aperture a)
{
	return a == HB_APERTURE_SHORT ? "short" : a == HB_APERTURE_LONG ? "long" : "medium";
}

/* The accuracy in force: the station file's, where it states one, else the
 * profile's; recorded with the sweep so that a later analysis uses what
 * was true when the points were taken. */
static void record_accuracy(hb_session *s, const hb_sweep_plan *plan, const hb_session_trace *tr, hb_db_sweep *sw)
{
	hb_accuracy m, a, reg_m, reg_a;
	/* The instrument register's entry wins over the station file, which
	 * wins over the profile (docs/traceability.md). */
	hb_session_trace_accuracy(s, tr, &reg_m, &reg_a);
	if (isfinite(reg_m.rel))
		m = reg_m;
	else if (isfinite(s->station->meter_accuracy.rel))
		m = s->station->meter_accuracy;
	else
		hb_lcr_accuracy(s->lcr, &m);
	/* A frequency sweep takes the fraction in force at its highest frequency for
	 * every point: the largest over the range, so never an understatement. */
	double f = plan->kind == HB_SWEEP_BIAS ? plan->frequency : fmax(plan->f_from, plan->f_to);
	sw->meter_accuracy_rel = hb_accuracy_rel_at(&m, f);
	if (isfinite(m.rel)) {
		char spec[128];
		snprintf(sw->meter_accuracy, sizeof sw->meter_accuracy, "%s; %s", hb_accuracy_format(&m, NULL, spec, sizeof spec),
			 m.source);
	}
	if (s->supply) {
		if (isfinite(reg_a.rel))
			a = reg_a;
		else if (isfinite(s->station->supply_accuracy.rel))
			a = s->station->supply_accuracy;
		else
			hb_supply_accuracy(s->supply, &a);
		if (isfinite(a.rel)) {
			char spec[128];
			sw->supply_accuracy_rel = a.rel;
			sw->supply_accuracy_offset_a = a.offset;
			snprintf(sw->supply_accuracy, sizeof sw->supply_accuracy, "%s; %s",
				 hb_accuracy_format(&a, "A", spec, sizeof spec), a.source);
		}
	}
	snprintf(sw->station_decision_rule, sizeof sw->station_decision_rule, "%s", s->station->decision_rule);
	sw->station_guard_r = s->station->guard_r;
}

static hb_db_sweep_status end_status(const hb_sweep_result *r)
{
	switch (r->end) {
	case HB_SWEEP_COMPLETE: return HB_DB_COMPLETE;
	case HB_SWEEP_ABORTED: return HB_DB_ABORTED;
	default: return HB_DB_FAILED;
	}
}

int hb_session_measure(hb_session *s, const hb_db_part *part, const char *serial, int64_t lot_id,
		       const hb_sweep_plan *plan, const char *note, int64_t *sweep_id, hb_sweep_result *result)
{
	*sweep_id = 0;
	memset(result, 0, sizeof *result);
	/* Instruments, calibration and fixture first: a refusal comes before
	 * anything is stored or switched on. */
	hb_session_trace *tr = calloc(1, sizeof *tr);
	if (!tr) {
		result->end = HB_SWEEP_FAILED;
		result->status = HB_ERR_NOMEM;
		snprintf(result->reason, sizeof result->reason, "out of memory");
		return HB_ERR_NOMEM;
	}
	int rc = hb_session_trace_begin(s, plan, tr, result);
	if (rc != HB_OK) {
		free(tr);
		return rc;
	}
	int64_t unit_id = 0;
	rc = hb_db_unit_ensure(s->db, part->id, serial, lot_id, &unit_id);
	if (rc != HB_OK) {
		result->end = HB_SWEEP_FAILED;
		result->status = rc;
		snprintf(result->reason, sizeof result->reason, "store: %s", hb_db_errmsg(s->db));
		free(tr);
		return rc;
	}
	hb_db_sweep sw;
	hb_db_sweep_init(&sw);
	sw.kind = plan->kind == HB_SWEEP_BIAS ? HB_DB_SWEEP_BIAS : HB_DB_SWEEP_FREQUENCY;
	sw.unit_id = unit_id;
	snprintf(sw.station, sizeof sw.station, "%s", s->station->name);
	snprintf(sw.operator_name, sizeof sw.operator_name, "%s", s->station->operator_name);
	const hb_idn *li = hb_lcr_idn(s->lcr);
	snprintf(sw.lcr_idn, sizeof sw.lcr_idn, "%s", li ? li->raw : "");
	snprintf(sw.lcr_profile, sizeof sw.lcr_profile, "%s", hb_lcr_profile_name(s->lcr));
	if (s->supply) {
		const hb_idn *si = hb_supply_idn(s->supply);
		snprintf(sw.supply_idn, sizeof sw.supply_idn, "%s", si ? si->raw : "");
		snprintf(sw.supply_profile, sizeof sw.supply_profile, "%s", hb_supply_profile_name(s->supply));
	}
	sw.test_freq_hz = plan->kind == HB_SWEEP_BIAS ? plan->frequency : NAN;
	sw.test_level = plan->level;
	sw.test_level_kind = plan->level_kind == HB_LEVEL_CURRENT ? HB_DB_LEVEL_CURRENT : HB_DB_LEVEL_VOLTAGE;
	sw.bias_a = plan->kind == HB_SWEEP_FREQUENCY ? plan->bias : NAN;
	snprintf(sw.circuit, sizeof sw.circuit, "%s", plan->equiv == HB_EQUIV_PARALLEL ? "parallel" : "series");
	snprintf(sw.measured_pair, sizeof sw.measured_pair, "%s", pair_name(plan->equiv, plan->pair));
	sw.averaging = plan->averaging;
	snprintf(sw.aperture, sizeof sw.aperture, "%s", aperture_name(plan->aperture));
	snprintf(sw.settle_mode, sizeof sw.settle_mode, "%s", plan->settle == HB_SETTLE_AUTO ? "auto" : "fixed");
	sw.settle_delay_s = plan->settle == HB_SETTLE_FIXED ? plan->settle_time : NAN;
	sw.settle_tolerance = plan->settle == HB_SETTLE_AUTO ? plan->settle_k : NAN;
	sw.settle_max_s = plan->settle == HB_SETTLE_AUTO ? plan->settle_timeout : NAN;
	if (plan->kind == HB_SWEEP_BIAS) {
		sw.plan_from = plan->from;
		sw.plan_to = plan->to;
		sw.plan_steps = plan->steps;
		snprintf(sw.plan_spacing, sizeof sw.plan_spacing, "%s%s",
			 plan->spacing == HB_SPACING_LOG ? "log" : "lin", plan->return_down ? "+return" : "");
	} else {
		sw.plan_from = plan->f_from;
		sw.plan_to = plan->f_to;
		sw.plan_steps = plan->f_points;
		snprintf(sw.plan_spacing, sizeof sw.plan_spacing, "%s", plan->f_spacing == HB_SPACING_LOG ? "log" : "lin");
	}
	sw.limit_current_a = plan->limits.max_current;
	sw.limit_voltage_v = plan->limits.max_voltage;
	sw.ambient_c = s->ambient_c;
	record_accuracy(s, plan, tr, &sw);
	snprintf(sw.note, sizeof sw.note, "%s", note ? note : "");
	rc = hb_db_sweep_begin(s->db, &sw);
	if (rc != HB_OK) {
		result->end = HB_SWEEP_FAILED;
		result->status = rc;
		snprintf(result->reason, sizeof result->reason, "store: %s", hb_db_errmsg(s->db));
		free(tr);
		return rc;
	}
	*sweep_id = sw.id;
	tr->t.sweep_id = sw.id;
	/* Recorded at once, so even a sweep that dies names its instruments. */
	if (hb_db_sweep_trace_put(s->db, &tr->t) != HB_OK && s->progress)
		fprintf(s->progress, "henrybench: store: %s\n", hb_db_errmsg(s->db));
	if (s->dcr_from_meter && plan->kind == HB_SWEEP_BIAS) {
		double ohms = NAN;
		/* Before any bias flows: the meter's DC test current is the only one. */
		int drc = hb_lcr_measure_dcr(s->lcr, &ohms);
		if (drc == HB_OK && isfinite(ohms))
			hb_db_sweep_set_dcr(s->db, sw.id, ohms);
		else if (s->progress)
			fprintf(s->progress, "meter DC resistance not read (%s); the supply's V/I will be used\n",
				drc == HB_ERR_UNSUPPORTED ? "the meter's profile has no dcr operation" : hb_lcr_errmsg(s->lcr));
	}

	sink_ctx ctx = { s, sw.id, plan->pair, plan->equiv, plan, tr };
	hb_sweep_callbacks cb = { &ctx, store_point, show_progress, show_notice, take_settings };
	rc = hb_sweep_run(s->lcr, s->supply, plan, &cb, result);
	if (s->progress && s->progress_tty && result->points > 0 && rc != HB_OK)
		fputc('\n', s->progress);

	if (result->noise_rel > 0)
		hb_db_sweep_set_noise(s->db, sw.id, result->noise_rel);
	if (s->supply)
		hb_db_sweep_set_supply_record(s->db, sw.id, result->start_amps, result->off_amps, result->decay_seconds);
	if (s->progress && s->supply && isfinite(result->decay_seconds))
		fprintf(s->progress, "supply off: current below %.3g A %.3g s after the zero set-point\n",
			plan->limits.off_threshold, result->decay_seconds);
	/* Recording the end is attempted whatever happened; if even that fails
	 * the next open marks the sweep interrupted, its points kept. */
	if (hb_session_trace_finish(s, tr) != HB_OK && s->progress)
		fprintf(s->progress, "henrybench: store: %s\n", hb_db_errmsg(s->db));
	free(tr);
	int end_rc = hb_db_sweep_end(s->db, sw.id, end_status(result), result->reason);
	if (end_rc != HB_OK)
		fprintf(stderr, "henrybench: could not record the end of sweep %lld: %s\n", (long long)sw.id,
			hb_db_errmsg(s->db));
	return rc;
}

void hb_session_warn_current_may_flow(FILE *out)
{
	fprintf(out,
		"\n"
		"*** WARNING: THE LINK TO THE SUPPLY IS LOST. CURRENT MAY STILL BE FLOWING. ***\n"
		"*** Switch the supply off at its front panel before touching the part or the leads. ***\n"
		"*** Do not open the circuit while current flows: the stored energy gives an inductive kick. ***\n\n");
}
