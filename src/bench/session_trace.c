/* src/bench/session_trace.c - what a sweep ran with: instruments and their calibration at start, the fixture compensation in force, the settings read back at start and end */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "session_trace.h"

static FILE *warn_out(const hb_session *s)
{
	return s->progress ? s->progress : stderr;
}

static void append(char *buf, size_t cap, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void append(char *buf, size_t cap, const char *fmt, ...)
{
	size_t used = strlen(buf);
	if (used + 1 >= cap)
		return;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(buf + used, cap - used, fmt, ap);
	va_end(ap);
}

/* One instrument's calibration: printed, recorded; true when overdue. */
static bool check_one(hb_session *s, const char *role, const hb_db_instrument *in, hb_session_trace *tr)
{
	char text[300];
	hb_cal_state st = hb_trace_cal_state(in, NULL, text, sizeof text);
	append(tr->t.cal_status, sizeof tr->t.cal_status, "%s%s %s: %s", tr->t.cal_status[0] ? "; " : "", role,
	       in->serial, text);
	if (st == HB_CAL_OVERDUE)
		fprintf(warn_out(s), "warning: %s %s calibration due %s is past\n", role, in->serial, in->due_date);
	else if (st == HB_CAL_UNKNOWN)
		fprintf(warn_out(s), "warning: %s %s: calibration status unknown (no %s date recorded; see 'henrybench instrument edit')\n",
			role, in->serial, in->cal_date[0] ? "due" : "calibration");
	else if (s->progress)
		fprintf(s->progress, "%s %s: %s\n", role, in->serial, text);
	return st == HB_CAL_OVERDUE;
}

static void find_fixture(hb_session *s, hb_session_trace *tr)
{
	hb_db_fixture_comp open, shrt;
	const char *fixture = s->fixture && *s->fixture ? s->fixture : HB_FIXTURE_DEFAULT;
	snprintf(tr->t.fixture, sizeof tr->t.fixture, "%s", fixture);
	bool have_open = hb_db_fixture_comp_latest(s->db, fixture, "open", &open) == HB_OK;
	bool have_short = hb_db_fixture_comp_latest(s->db, fixture, "short", &shrt) == HB_OK;
	tr->t.open_comp_id = have_open ? open.id : 0;
	tr->t.short_comp_id = have_short ? shrt.id : 0;
	double max_h = isfinite(s->station->fixture_max_age_h) ? s->station->fixture_max_age_h : HB_FIXTURE_MAX_AGE_HOURS;
	struct timespec ts;
	clock_gettime(CLOCK_REALTIME, &ts);
	double now = (double)ts.tv_sec + ts.tv_nsec * 1e-9;
	char status[HB_DB_TEXT_LEN] = "";
	if (!have_open && !have_short) {
		snprintf(status, sizeof status, "missing: no open or short compensation of fixture '%s' recorded", fixture);
	} else {
		const hb_db_fixture_comp *c[2] = { have_open ? &open : NULL, have_short ? &shrt : NULL };
		for (int i = 0; i < 2; i++) {
			size_t used = strlen(status);
			if (!c[i])
				snprintf(status + used, sizeof status - used, "%smissing: no %s compensation of fixture '%s'",
					 used ? "; " : "", i ? "short" : "open", fixture);
			else if ((now - c[i]->at_unix) / 3600.0 > max_h)
				snprintf(status + used, sizeof status - used, "%sstale: %s compensation %.1f h old (limit %.4g h)",
					 used ? "; " : "", c[i]->kind, (now - c[i]->at_unix) / 3600.0, max_h);
		}
	}
	snprintf(tr->t.fixture_status, sizeof tr->t.fixture_status, "%s", status);
	if (status[0])
		fprintf(warn_out(s), "warning: fixture '%s': %s\n", fixture, status);
	/* Residuals measured here (not by the meter) are applied to the readings. */
	bool apply_open = have_open && strcmp(open.method, "henrybench") == 0;
	bool apply_short = have_short && strcmp(shrt.method, "henrybench") == 0;
	if ((apply_open || apply_short) &&
	    hb_fixture_model_load(&tr->model, apply_open ? &open : NULL, apply_short ? &shrt : NULL) == HB_OK)
		tr->t.fixture_applied = true;
	if (s->progress && (have_open || have_short))
		fprintf(s->progress, "fixture '%s': open %s%s, short %s%s%s\n", fixture, have_open ? open.at : "none",
			have_open ? (apply_open ? " (henrybench)" : " (meter)") : "", have_short ? shrt.at : "none",
			have_short ? (apply_short ? " (henrybench)" : " (meter)") : "",
			tr->t.fixture_applied ? "; residuals subtracted from the readings" : "");
}

int hb_session_trace_begin(hb_session *s, const hb_sweep_plan *plan, hb_session_trace *tr, hb_sweep_result *result)
{
	(void)plan;
	memset(tr, 0, sizeof *tr);
	hb_db_sweep_trace_init(&tr->t);
	tr->t.overdue_allowed = false;
	bool overdue = false;
	if (hb_trace_register_lcr(s->db, s->lcr, &tr->lcr_in, NULL) == HB_OK) {
		tr->have_lcr = true;
		tr->t.lcr_instrument_id = tr->lcr_in.id;
		overdue |= check_one(s, "meter", &tr->lcr_in, tr);
	}
	if (s->supply && hb_trace_register_supply(s->db, s->supply, &tr->sup_in, NULL) == HB_OK) {
		tr->have_sup = true;
		tr->t.supply_instrument_id = tr->sup_in.id;
		overdue |= check_one(s, "supply", &tr->sup_in, tr);
	}
	if (overdue && s->allow_overdue) {
		tr->t.overdue_allowed = true;
		fprintf(warn_out(s), "warning: --allow-overdue: the sweep goes ahead and records that it was allowed\n");
	} else if (overdue && s->station->refuse_overdue) {
		result->end = HB_SWEEP_ABORTED;
		result->cause = HB_CAUSE_LIMIT;
		result->status = HB_ERR_LIMIT;
		snprintf(result->reason, sizeof result->reason,
			 "refused: an instrument is past its calibration due date (%s; station file [calibration] overdue = "
			 "refuse; --allow-overdue to proceed)",
			 tr->t.cal_status);
		return HB_ERR_LIMIT;
	}
	find_fixture(s, tr);
	return HB_OK;
}

void hb_session_trace_accuracy(hb_session *s, const hb_session_trace *tr, hb_accuracy *meter, hb_accuracy *supply)
{
	char err[200];
	hb_accuracy_init(meter);
	hb_accuracy_init(supply);
	if (tr->have_lcr && hb_trace_instrument_accuracy(&tr->lcr_in, meter, err, sizeof err) != HB_OK)
		fprintf(warn_out(s), "warning: meter %s: register accuracy ignored: %s\n", tr->lcr_in.serial, err);
	if (tr->have_sup && hb_trace_instrument_accuracy(&tr->sup_in, supply, err, sizeof err) != HB_OK)
		fprintf(warn_out(s), "warning: supply %s: register accuracy ignored: %s\n", tr->sup_in.serial, err);
}

static void take(hb_snapshot *snap, const char *name, int rc, const char *reply)
{
	if (rc == HB_ERR_UNSUPPORTED || snap->n >= HB_SNAPSHOT_MAX)
		return;
	snprintf(snap->name[snap->n], sizeof snap->name[0], "%s", name);
	snprintf(snap->value[snap->n], sizeof snap->value[0], "%s", rc == HB_OK ? reply : "");
	snap->n++;
}

static void snapshot_json(const hb_snapshot *snap, char *buf, size_t cap)
{
	snprintf(buf, cap, "{");
	for (int i = 0; i < snap->n; i++) {
		size_t used = strlen(buf);
		/* The replies are SCPI numbers and keywords: no quote or backslash
		 * to escape, but one would be dropped rather than break the JSON. */
		char v[64];
		size_t k = 0;
		for (const char *p = snap->value[i]; *p && k + 1 < sizeof v; p++)
			if (*p != '"' && *p != '\\' && (unsigned char)*p >= 0x20)
				v[k++] = *p;
		v[k] = '\0';
		if (used < cap)
			snprintf(buf + used, cap - used, "%s\"%s\":\"%s\"", i ? "," : "", snap->name[i], v);
	}
	size_t used = strlen(buf);
	if (used < cap)
		snprintf(buf + used, cap - used, "}");
}

void hb_session_trace_snapshot(hb_session *s, const hb_sweep_plan *plan, hb_session_trace *tr, int when)
{
	hb_snapshot *snap = when ? &tr->end : &tr->start;
	memset(snap, 0, sizeof *snap);
	char reply[128];
	static const char *const meter_names[] = { "frequency", "function", "averaging", "aperture" };
	for (size_t i = 0; i < sizeof meter_names / sizeof meter_names[0]; i++) {
		char name[32];
		int rc = hb_lcr_query_setting(s->lcr, meter_names[i], reply, sizeof reply);
		snprintf(name, sizeof name, "meter.%s", meter_names[i]);
		take(snap, name, rc, reply);
	}
	const char *level = plan->level_kind == HB_LEVEL_CURRENT ? "level.current" : "level.voltage";
	int rc = hb_lcr_query_setting(s->lcr, level, reply, sizeof reply);
	take(snap, plan->level_kind == HB_LEVEL_CURRENT ? "meter.level.current" : "meter.level.voltage", rc, reply);
	if (s->supply) {
		rc = hb_supply_query_setting(s->supply, "voltage", reply, sizeof reply);
		take(snap, "supply.voltage", rc, reply);
		rc = hb_supply_query_setting(s->supply, "output.state", reply, sizeof reply);
		take(snap, "supply.output.state", rc, reply);
	}
	snapshot_json(snap, when ? tr->t.settings_end : tr->t.settings_start,
		      when ? sizeof tr->t.settings_end : sizeof tr->t.settings_start);
	if (!when) {
		tr->started = true;
		return;
	}
	/* The frequency of a frequency sweep changes on purpose. */
	char *out = tr->t.settings_changed;
	size_t cap = sizeof tr->t.settings_changed;
	out[0] = '\0';
	for (int i = 0; i < tr->start.n; i++) {
		if (plan->kind == HB_SWEEP_FREQUENCY && strcmp(tr->start.name[i], "meter.frequency") == 0)
			continue;
		for (int j = 0; j < tr->end.n; j++) {
			if (strcmp(tr->start.name[i], tr->end.name[j]) != 0)
				continue;
			if (strcmp(tr->start.value[i], tr->end.value[j]) != 0)
				append(out, cap, "%s%s %s -> %s", out[0] ? "; " : "", tr->start.name[i],
				       tr->start.value[i][0] ? tr->start.value[i] : "(not read)",
				       tr->end.value[j][0] ? tr->end.value[j] : "(not read)");
		}
	}
}

int hb_session_trace_finish(hb_session *s, hb_session_trace *tr)
{
	if (tr->t.settings_changed[0])
		fprintf(warn_out(s), "WARNING: settings read back changed during the sweep: %s\n", tr->t.settings_changed);
	else if (s->progress && tr->end.n > 0)
		fprintf(s->progress, "settings read back at start and end: the same (%d settings)\n", tr->end.n);
	return hb_db_sweep_trace_put(s->db, &tr->t);
}
