/* src/quality/stream.c - a part's lot stream from one supplier: decided lots and events replayed through the switching rules, printed and as JSON */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "stream.h"

hb_lot_decision hb_stream_lot_decision(const hb_db_stream_lot *l)
{
	if (l->lot.decision == HB_DB_LOT_REJECT)
		return HB_LOT_REJECT;
	if (l->lot.decision != HB_DB_LOT_ACCEPT)
		return HB_LOT_CONTINUE;
	hb_severity sev;
	if (hb_iso2859_parse_severity(l->lot.severity, &sev) == HB_OK && sev == HB_SEVERITY_REDUCED &&
	    l->nonconforming > l->lot.accept_number && l->nonconforming < l->lot.reject_number)
		return HB_LOT_ACCEPT_REINSTATE;
	return HB_LOT_ACCEPT;
}

const char *hb_stream_supplier_text(const char *supplier, char *buf, size_t cap)
{
	if (supplier && *supplier)
		snprintf(buf, cap, "supplier %s", supplier);
	else
		snprintf(buf, cap, "no supplier named");
	return buf;
}

void hb_stream_free(hb_stream *s)
{
	if (!s)
		return;
	free(s->entries);
	s->entries = NULL;
	s->n = 0;
}

static void apply_lot(hb_stream *s, hb_stream_entry *e)
{
	const hb_db_stream_lot *l = &e->lot;
	hb_switch_lot sl;
	memset(&sl, 0, sizeof sl);
	snprintf(sl.lot_code, sizeof sl.lot_code, "%s", l->lot.lot_code);
	if (hb_iso2859_parse_severity(l->lot.severity, &sl.severity) != HB_OK)
		sl.severity = HB_SEVERITY_NORMAL; /* a lot decided without a plan: the default */
	sl.decision = hb_stream_lot_decision(l);
	sl.nonconforming = (int)l->nonconforming;
	sl.ac = (int)l->lot.accept_number;
	sl.tighter_ac = hb_iso2859_tighter_ac(l->lot.code_letter[0], l->lot.aql);
	sl.irregular = l->irregular;
	e->decision = sl.decision;
	e->severity = sl.severity;
	e->rule = hb_switch_apply(&s->state, &sl);
}

int hb_stream_load(hb_db *db, const hb_db_part *part, const char *supplier, hb_stream *out)
{
	memset(out, 0, sizeof *out);
	hb_switch_init(&out->state);
	if (!db || !part || !supplier)
		return HB_ERR_ARG;
	snprintf(out->part_number, sizeof out->part_number, "%s", part->part_number);
	snprintf(out->supplier, sizeof out->supplier, "%s", supplier);
	hb_db_stream_lot *lots = NULL;
	hb_db_stream_event *events = NULL;
	size_t nl = 0, ne = 0;
	int rc = hb_db_stream_lots(db, part->id, supplier, &lots, &nl);
	if (rc == HB_OK)
		rc = hb_db_stream_events(db, part->id, supplier, &events, &ne);
	if (rc != HB_OK)
		goto done;
	if (nl + ne > 0) {
		out->entries = calloc(nl + ne, sizeof *out->entries);
		if (!out->entries) {
			rc = HB_ERR_NOMEM;
			goto done;
		}
	}
	/* Merge by time: an event recorded between two decisions acts between them. */
	size_t il = 0, ie = 0;
	while (il < nl || ie < ne) {
		hb_stream_entry *e = &out->entries[out->n++];
		bool take_lot = ie >= ne || (il < nl && !(events[ie].at < lots[il].decided_unix));
		if (take_lot) {
			e->is_lot = true;
			e->lot = lots[il++];
			apply_lot(out, e);
		} else {
			e->event = events[ie++];
			e->rule = HB_SWITCH_STAY;
			hb_switch_rule before = out->state.rule;
			bool was_disc = out->state.discontinued;
			hb_severity was_sev = out->state.severity;
			switch (e->event.kind) {
			case HB_DB_STREAM_APPROVE_REDUCED:
				out->reduced_approved = true;
				snprintf(out->approved_note, sizeof out->approved_note, "%s", e->event.note);
				break;
			case HB_DB_STREAM_WITHDRAW_REDUCED:
				out->reduced_approved = false;
				out->approved_note[0] = 0;
				hb_switch_withdraw(&out->state, e->event.note);
				break;
			case HB_DB_STREAM_RESUME:
				hb_switch_resume(&out->state, e->event.note);
				break;
			}
			if (out->state.rule != before || out->state.discontinued != was_disc || out->state.severity != was_sev)
				e->rule = out->state.rule;
		}
		e->score_after = out->state.score;
		e->severity_after = out->state.severity;
		e->discontinued_after = out->state.discontinued;
		if (e->rule != HB_SWITCH_STAY)
			snprintf(e->why, sizeof e->why, "%s", out->state.why);
	}
done:
	hb_db_stream_lots_free(lots);
	hb_db_stream_events_free(events);
	if (rc != HB_OK)
		hb_stream_free(out);
	return rc;
}

void hb_stream_next(const hb_stream *s, bool irregular, hb_switch_next *out)
{
	hb_switch_next_of(&s->state, s->reduced_approved, !irregular, out);
}

void hb_stream_print_state(FILE *out, const hb_stream *s, const hb_switch_next *next)
{
	char who[HB_DB_ID_LEN + 20];
	hb_stream_supplier_text(s->supplier, who, sizeof who);
	size_t lots = 0;
	for (size_t i = 0; i < s->n; i++)
		lots += s->entries[i].is_lot;
	if (next->discontinued)
		fprintf(out, "lot stream of %s, %s (%zu decided lot%s): DISCONTINUED\n", s->part_number, who, lots,
			lots == 1 ? "" : "s");
	else
		fprintf(out, "lot stream of %s, %s (%zu decided lot%s): next lot on %s inspection\n", s->part_number, who,
			lots, lots == 1 ? "" : "s", hb_iso2859_severity_name(next->severity));
	fprintf(out, "  why: %s\n", next->why);
	fprintf(out, "  now: %s\n", next->progress);
}

static const char *decision_text(hb_lot_decision d)
{
	return d == HB_LOT_ACCEPT_REINSTATE ? "accept, reinstate normal" : d == HB_LOT_REJECT ? "REJECT" : "accept";
}

const char *hb_stream_decision_text(hb_lot_decision d)
{
	return decision_text(d);
}

void hb_stream_print_lots(FILE *out, const hb_stream *s)
{
	char who[HB_DB_ID_LEN + 20];
	fprintf(out, "lot stream, %s (switching rules, ISO 2859-1:1999 clause 9):\n",
		hb_stream_supplier_text(s->supplier, who, sizeof who));
	if (s->n == 0) {
		fprintf(out, "  no decided lot\n");
		return;
	}
	fprintf(out, "  %-20s %-14s %-10s %-3s %6s %-7s %4s %-25s %5s  %s\n", "decided (UTC)", "lot", "severity", "CL",
		"n", "Ac/Re", "d", "decision", "score", "then");
	for (size_t i = 0; i < s->n; i++) {
		const hb_stream_entry *e = &s->entries[i];
		const char *then = e->discontinued_after ? "DISCONTINUED" : hb_iso2859_severity_name(e->severity_after);
		if (!e->is_lot) {
			fprintf(out, "  %-20s %-14s %s%s%s -> %s\n", e->event.at_iso, "(event)",
				hb_db_stream_kind_name(e->event.kind), e->event.note[0] ? ": " : "", e->event.note, then);
			continue;
		}
		const hb_db_lot *l = &e->lot.lot;
		char acre[24];
		snprintf(acre, sizeof acre, "%ld/%ld", l->accept_number, l->reject_number);
		fprintf(out, "  %-20s %-14s %-10s %-3s %6ld %-7s %4ld %-25s %5d  %s", l->decided, l->lot_code,
			hb_iso2859_severity_name(e->severity), l->code_letter, l->sample_size, acre, e->lot.nonconforming,
			decision_text(e->decision), e->score_after, then);
		if (e->rule != HB_SWITCH_STAY)
			fprintf(out, " (%s)", hb_switch_rule_name(e->rule));
		if (e->lot.irregular)
			fprintf(out, " [production irregular]");
		fputc('\n', out);
	}
}

json_t *hb_stream_json(const hb_stream *s, const hb_switch_next *next)
{
	json_t *o = json_object();
	if (!o)
		return NULL;
	json_object_set_new(o, "supplier", json_string(s->supplier));
	json_object_set_new(o, "severity_next", next->discontinued ? json_null() :
					       json_string(hb_iso2859_severity_name(next->severity)));
	json_object_set_new(o, "discontinued", json_boolean(next->discontinued));
	json_object_set_new(o, "rule", json_string(hb_switch_rule_name(next->rule)));
	json_object_set_new(o, "clause", json_string(hb_switch_rule_clause(next->rule)));
	json_object_set_new(o, "why", json_string(next->why));
	json_object_set_new(o, "progress", json_string(next->progress));
	json_object_set_new(o, "switching_score", json_integer(s->state.score));
	json_object_set_new(o, "reduced_approved", json_boolean(s->reduced_approved));
	json_t *arr = json_array();
	for (size_t i = 0; i < s->n; i++) {
		const hb_stream_entry *e = &s->entries[i];
		json_t *j = json_object();
		if (e->is_lot) {
			const hb_db_lot *l = &e->lot.lot;
			json_object_set_new(j, "lot", json_string(l->lot_code));
			json_object_set_new(j, "decided", json_string(l->decided));
			json_object_set_new(j, "severity", json_string(hb_iso2859_severity_name(e->severity)));
			json_object_set_new(j, "code_letter", json_string(l->code_letter));
			json_object_set_new(j, "aql", isfinite(l->aql) ? json_real(l->aql) : json_null());
			json_object_set_new(j, "n", json_integer(l->sample_size));
			json_object_set_new(j, "ac", json_integer(l->accept_number));
			json_object_set_new(j, "re", json_integer(l->reject_number));
			json_object_set_new(j, "nonconforming", json_integer(e->lot.nonconforming));
			json_object_set_new(j, "decision", json_string(hb_lot_decision_name(e->decision)));
			json_object_set_new(j, "production_irregular", json_boolean(e->lot.irregular));
		} else {
			json_object_set_new(j, "event", json_string(hb_db_stream_kind_name(e->event.kind)));
			json_object_set_new(j, "note", json_string(e->event.note));
			json_object_set_new(j, "at", json_string(e->event.at_iso));
		}
		json_object_set_new(j, "switching_score", json_integer(e->score_after));
		json_object_set_new(j, "severity_after", e->discontinued_after ? json_null() :
						       json_string(hb_iso2859_severity_name(e->severity_after)));
		json_object_set_new(j, "discontinued_after", json_boolean(e->discontinued_after));
		json_object_set_new(j, "rule", json_string(hb_switch_rule_name(e->rule)));
		if (e->rule != HB_SWITCH_STAY)
			json_object_set_new(j, "why", json_string(e->why));
		json_array_append_new(arr, j);
	}
	json_object_set_new(o, "lots", arr);
	return o;
}

void hb_stream_print_reinstate_rule(FILE *out, const hb_sampling_plan *p)
{
	if (p->re <= p->ac + 1)
		return;
	char zone[48];
	if (p->re - p->ac == 2)
		snprintf(zone, sizeof zone, "d = %d", p->ac + 1);
	else if (p->re - p->ac == 3)
		snprintf(zone, sizeof zone, "d = %d or %d", p->ac + 1, p->ac + 2);
	else
		snprintf(zone, sizeof zone, "d = %d to %d", p->ac + 1, p->re - 1);
	fprintf(out,
		"accept, reinstate normal: %s nonconforming (Ac < d < Re) accepts the lot, but normal inspection\n"
		"  is reinstated from the next lot (MIL-STD-105E Table II-C; ANSI/ASQ Z1.4 10.1.4); d <= %d accepts\n"
		"  and reduced inspection goes on; d >= %d rejects the lot and reinstates normal too\n",
		zone, p->ac, p->re);
}

int hb_stream_print_all(FILE *out, hb_db *db, const hb_db_part *part)
{
	char (*suppliers)[HB_DB_ID_LEN] = NULL;
	size_t n = 0;
	int rc = hb_db_stream_suppliers(db, part->id, &suppliers, &n);
	if (rc != HB_OK)
		return rc;
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		hb_stream s;
		rc = hb_stream_load(db, part, suppliers[i], &s);
		if (rc != HB_OK)
			break;
		hb_switch_next next;
		hb_stream_next(&s, false, &next);
		fputc('\n', out);
		hb_stream_print_lots(out, &s);
		hb_stream_print_state(out, &s, &next);
		hb_stream_free(&s);
	}
	free(suppliers);
	return rc;
}

json_t *hb_stream_all_json(hb_db *db, const hb_db_part *part)
{
	char (*suppliers)[HB_DB_ID_LEN] = NULL;
	size_t n = 0;
	if (hb_db_stream_suppliers(db, part->id, &suppliers, &n) != HB_OK)
		return NULL;
	json_t *arr = json_array();
	for (size_t i = 0; arr && i < n; i++) {
		hb_stream s;
		if (hb_stream_load(db, part, suppliers[i], &s) != HB_OK) {
			json_decref(arr);
			arr = NULL;
			break;
		}
		hb_switch_next next;
		hb_stream_next(&s, false, &next);
		json_array_append_new(arr, hb_stream_json(&s, &next));
		hb_stream_free(&s);
	}
	free(suppliers);
	return arr;
}
