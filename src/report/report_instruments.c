/* src/report/report_instruments.c - the sweep report's section on what the sweep ran with: instruments and calibration, fixture compensation, settings read back */
#include <stdio.h>
#include <string.h>

#include <jansson.h>

#include "../bench/bench.h"
#include "html.h"
#include "report_internal.h"

static void instrument_row(hb_html *h, hb_db *db, const char *role, int64_t id)
{
	hb_db_instrument in;
	if (id <= 0 || hb_db_instrument_get(db, id, &in) != HB_OK)
		return;
	char who[300], status[300];
	snprintf(who, sizeof who, "%s %s, serial %s, firmware %s", in.maker, in.model, in.serial,
		 in.firmware[0] ? in.firmware : "-");
	hb_trace_cal_state(&in, NULL, status, sizeof status);
	const char *cells[] = { role, who, status, in.accuracy[0] ? in.accuracy : "the profile's or station file's" };
	hb_html_table_row(h, cells, 4);
}

static void comp_row(hb_html *h, hb_db *db, int64_t id, const char *kind)
{
	hb_db_fixture_comp c;
	if (id <= 0 || hb_db_fixture_comp_get(db, id, &c) != HB_OK) {
		const char *cells[] = { kind, "-", "none recorded", "-" };
		hb_html_table_row(h, cells, 4);
		return;
	}
	char idtext[32], when[96];
	snprintf(idtext, sizeof idtext, "%lld", (long long)c.id);
	snprintf(when, sizeof when, "%s (%s)", c.at, c.method);
	const char *cells[] = { kind, idtext, when, c.residuals };
	hb_html_table_row(h, cells, 4);
}

/* The settings snapshot, one row per setting: start, end, and whether they agree. */
static void settings_table(hb_html *h, const hb_db_sweep_trace *t)
{
	json_error_t e;
	json_t *a = json_loads(t->settings_start, 0, &e), *b = json_loads(t->settings_end, 0, &e);
	static const char *const head[] = { "Setting", "At start", "At end", "" };
	hb_html_table_begin(h, "Settings read back from the instruments (query operations of their profiles)", head, 4);
	const char *key;
	json_t *v;
	json_object_foreach(a, key, v)
	{
		const char *s0 = json_string_value(v), *s1 = json_string_value(json_object_get(b, key));
		bool same = s0 && s1 && strcmp(s0, s1) == 0;
		const char *cells[] = { key, s0 && *s0 ? s0 : "not read", s1 && *s1 ? s1 : "not read",
					!s1 ? "" : same ? "same" : "CHANGED" };
		hb_html_table_row_class(h, same || !s1 ? NULL : "fail", cells, 4);
	}
	hb_html_table_end(h);
	json_decref(a);
	json_decref(b);
}

void rpt_instruments_section(hb_html *h, hb_db *db, int64_t sweep_id)
{
	hb_db_sweep_trace t;
	if (hb_db_sweep_trace_get(db, sweep_id, &t) != HB_OK)
		return;
	hb_html_section_begin(h, "Instruments, fixture and settings");
	static const char *const ihead[] = { "Role", "Instrument (*IDN?)", "Calibration", "Accuracy override" };
	hb_html_table_begin(h, "Instruments from the register, calibration status as of this page", ihead, 4);
	instrument_row(h, db, "meter", t.lcr_instrument_id);
	instrument_row(h, db, "supply", t.supply_instrument_id);
	hb_html_table_end(h);
	char line[1200];
	snprintf(line, sizeof line, "At the sweep's start: %s.%s", t.cal_status[0] ? t.cal_status : "no instrument recorded",
		 t.overdue_allowed ? " The sweep went ahead past a due date because --allow-overdue was given." : "");
	hb_html_paragraph(h, line);
	static const char *const chead[] = { "Compensation", "Record", "Taken", "Residuals (JSON: open G, C; short R, L)" };
	snprintf(line, sizeof line, "Fixture '%s' compensation in force", t.fixture);
	hb_html_table_begin(h, line, chead, 4);
	comp_row(h, db, t.open_comp_id, "open");
	comp_row(h, db, t.short_comp_id, "short");
	hb_html_table_end(h);
	snprintf(line, sizeof line, "%s%s%s", t.fixture_status[0] ? "Warning at the sweep's start: " : "",
		 t.fixture_status[0] ? t.fixture_status : "Compensation in force at the sweep's start.",
		 t.fixture_applied ? " The residuals measured by henrybench were subtracted from every stored reading "
				     "(open/short compensation)."
				   : "");
	hb_html_paragraph(h, line);
	settings_table(h, &t);
	if (t.settings_changed[0]) {
		snprintf(line, sizeof line, "FLAG: settings changed during the sweep: %s. The readings after the change "
			 "were not taken under the settings recorded for the sweep.", t.settings_changed);
		hb_html_paragraph(h, line);
	} else if (strcmp(t.settings_end, "{}") != 0) {
		hb_html_paragraph(h, "The settings read back at the end are those read back at the start.");
	}
	hb_html_section_end(h);
}
