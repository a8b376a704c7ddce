/* src/report/report_stream.c - the part report's lot streams: each supplier's decided lots with severity, decision, switching score and the severity after */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../quality/quality.h"
#include "html.h"
#include "report.h"
#include "report_internal.h"

static const char *const stream_head[] = { "Decided (UTC)", "Lot", "Severity", "Code letter", "n", "Ac / Re",
					   "Nonconforming", "Decision", "Switching score", "Severity after" };
enum { STREAM_COLS = 10 };

/* One supplier's stream as a table, then the next lot's severity and why. */
static void stream_table(hb_html *h, const hb_stream *s)
{
	char who[HB_DB_ID_LEN + 20], cap[400];
	hb_stream_supplier_text(s->supplier, who, sizeof who);
	snprintf(cap, sizeof cap,
		 "Lot stream, %s: in the order decided, as ISO 2859-1:1999 clause 9's switching rules saw it. "
		 "The switching score counts under normal inspection (9.3.3); severity after is the "
		 "next lot's, with the rule that moved it.",
		 who);
	hb_html_table_begin(h, cap, stream_head, STREAM_COLS);
	for (size_t i = 0; i < s->n; i++) {
		const hb_stream_entry *e = &s->entries[i];
		char after[120];
		snprintf(after, sizeof after, "%s%s%s%s",
			 e->discontinued_after ? "DISCONTINUED" : hb_iso2859_severity_name(e->severity_after),
			 e->rule != HB_SWITCH_STAY ? " (" : "", e->rule != HB_SWITCH_STAY ? hb_switch_rule_name(e->rule) : "",
			 e->rule != HB_SWITCH_STAY ? ")" : "");
		if (!e->is_lot) {
			char what[HB_DB_TEXT_LEN + 40];
			snprintf(what, sizeof what, "%s%s%s", hb_db_stream_kind_name(e->event.kind),
				 e->event.note[0] ? ": " : "", e->event.note);
			const char *cells[STREAM_COLS] = { e->event.at_iso, "(event)", "-", "-", "-", "-", "-",
							   what, "-", after };
			hb_html_table_row(h, cells, STREAM_COLS);
			continue;
		}
		const hb_db_lot *l = &e->lot.lot;
		char n[24], acre[48], d[24], score[16], decision[80];
		snprintf(n, sizeof n, "%ld", l->sample_size);
		snprintf(acre, sizeof acre, "%ld / %ld", l->accept_number, l->reject_number);
		snprintf(d, sizeof d, "%ld", e->lot.nonconforming);
		snprintf(score, sizeof score, "%d", e->score_after);
		snprintf(decision, sizeof decision, "%s%s", hb_stream_decision_text(e->decision),
			 e->lot.irregular ? " (production irregular)" : "");
		const char *cells[STREAM_COLS] = { rpt_or_dash(l->decided), l->lot_code,
						   hb_iso2859_severity_name(e->severity), rpt_or_dash(l->code_letter),
						   n, acre, d, decision, score, after };
		hb_html_table_row_class(h, e->decision == HB_LOT_REJECT ? "fail" : "pass", cells, STREAM_COLS);
	}
	hb_html_table_end(h);
	hb_switch_next next;
	hb_stream_next(s, false, &next);
	char line[900];
	snprintf(line, sizeof line, "Next lot from %s: %s. Why: %s; now: %s.", who,
		 next.discontinued ? "inspection DISCONTINUED until resumed" :
				     hb_iso2859_severity_name(next.severity),
		 next.why, next.progress);
	hb_html_paragraph(h, line);
}

int rpt_stream_section(hb_html *h, hb_db *db, const hb_db_part *part)
{
	char (*suppliers)[HB_DB_ID_LEN] = NULL;
	size_t n = 0;
	int rc = hb_db_stream_suppliers(db, part->id, &suppliers, &n);
	if (rc != HB_OK)
		return rc;
	bool begun = false;
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		hb_stream s;
		rc = hb_stream_load(db, part, suppliers[i], &s);
		if (rc != HB_OK)
			break;
		if (s.n > 0) {
			if (!begun)
				hb_html_section_begin(h, "Lot streams");
			begun = true;
			stream_table(h, &s);
		}
		hb_stream_free(&s);
	}
	if (begun)
		hb_html_section_end(h);
	free(suppliers);
	return rc;
}
