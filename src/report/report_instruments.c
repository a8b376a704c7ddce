/* src/report/report_instruments.c - what the sweeps ran with: the sweep report's instruments, calibration, fixture compensation and settings read back; the lot and part reports' instruments, once each */
#include <stdio.h>
#include <stdlib.h>
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

/* ---- the lot and part reports: every instrument that measured their sweeps, once ---- */

enum { LOT_INSTR_MAX = 32, LOT_STATES_MAX = 4, LOT_IDS_TEXT = 400 };

typedef struct lot_instr {
	int64_t id;
	const char *role;
	size_t n_sweeps;
	char sweeps[LOT_IDS_TEXT];
	char states[LOT_STATES_MAX][HB_DB_TEXT_LEN]; /* the distinct statuses recorded at the sweeps' start */
	size_t n_states;
	bool more_states;
} lot_instr;

/* The part of a sweep's recorded calibration status that is about one
 * instrument: "meter SL0001: calibrated ..., due ... (in calibration)". */
static void state_of(const char *cal_status, const char *role, const char *serial, char *out, size_t cap)
{
	char key[HB_DB_ID_LEN + 16];
	snprintf(key, sizeof key, "%s %s: ", role, serial);
	const char *p = strstr(cal_status, key);
	if (!p) {
		snprintf(out, cap, "not recorded");
		return;
	}
	p += strlen(key);
	const char *end = p + strlen(p);
	const char *m = strstr(p, "; meter "), *s = strstr(p, "; supply ");
	if (m && m < end)
		end = m;
	if (s && s < end)
		end = s;
	snprintf(out, cap, "%.*s", (int)(end - p), p);
}

static void note_use(hb_db *db, lot_instr *list, size_t *n, int64_t id, const char *role, int64_t sweep_id,
		     const char *cal_status)
{
	if (id <= 0)
		return;
	lot_instr *x = NULL;
	for (size_t i = 0; i < *n; i++)
		if (list[i].id == id)
			x = &list[i];
	if (!x) {
		if (*n >= LOT_INSTR_MAX)
			return;
		x = &list[(*n)++];
		memset(x, 0, sizeof *x);
		x->id = id;
		x->role = role;
	}
	size_t used = strlen(x->sweeps);
	if (used + 24 < sizeof x->sweeps)
		snprintf(x->sweeps + used, sizeof x->sweeps - used, "%s%lld", used ? ", " : "", (long long)sweep_id);
	else if (!strstr(x->sweeps, "..."))
		snprintf(x->sweeps + used, sizeof x->sweeps - used, ", ...");
	x->n_sweeps++;
	hb_db_instrument in;
	char state[HB_DB_TEXT_LEN];
	if (hb_db_instrument_get(db, id, &in) != HB_OK)
		return;
	state_of(cal_status, role, in.serial, state, sizeof state);
	for (size_t i = 0; i < x->n_states; i++)
		if (strcmp(x->states[i], state) == 0)
			return;
	if (x->n_states < LOT_STATES_MAX)
		snprintf(x->states[x->n_states++], sizeof x->states[0], "%s", state);
	else
		x->more_states = true;
}

void rpt_sweeps_instruments_section(hb_html *h, hb_db *db, const int64_t *sweep_ids, size_t n, const char *caption)
{
	hb_db_sweep_trace *t = malloc(sizeof *t);
	lot_instr *list = calloc(LOT_INSTR_MAX, sizeof *list);
	if (!t || !list) {
		free(t);
		free(list);
		return;
	}
	size_t ni = 0, traced = 0;
	for (size_t i = 0; i < n; i++) {
		if (sweep_ids[i] <= 0 || hb_db_sweep_trace_get(db, sweep_ids[i], t) != HB_OK)
			continue;
		traced++;
		note_use(db, list, &ni, t->lcr_instrument_id, "meter", sweep_ids[i], t->cal_status);
		note_use(db, list, &ni, t->supply_instrument_id, "supply", sweep_ids[i], t->cal_status);
	}
	hb_html_section_begin(h, "Instruments");
	if (ni == 0) {
		hb_html_paragraph(h, traced ? "The sweeps name no instrument of the register."
					    : "No instrument is recorded for these sweeps (sweeps stored before the "
					      "instrument register, or imported).");
	} else {
		static const char *const head[] = { "Role", "Instrument (*IDN?)", "Sweeps",
						    "Calibration at the sweeps' start (as recorded)", "Calibration as of this page" };
		hb_html_table_begin(h, caption, head, 5);
		for (size_t i = 0; i < ni; i++) {
			hb_db_instrument in;
			if (hb_db_instrument_get(db, list[i].id, &in) != HB_OK)
				continue;
			char who[300], sweeps[LOT_IDS_TEXT + 32], then[LOT_STATES_MAX * HB_DB_TEXT_LEN + 16], now[300];
			snprintf(who, sizeof who, "%s %s, serial %s, firmware %s", in.maker, in.model, in.serial,
				 in.firmware[0] ? in.firmware : "-");
			snprintf(sweeps, sizeof sweeps, "%zu: %s", list[i].n_sweeps, list[i].sweeps);
			then[0] = '\0';
			for (size_t k = 0; k < list[i].n_states; k++) {
				size_t used = strlen(then);
				snprintf(then + used, sizeof then - used, "%s%s", k ? "; then " : "", list[i].states[k]);
			}
			if (list[i].more_states) {
				size_t used = strlen(then);
				snprintf(then + used, sizeof then - used, "; ...");
			}
			hb_trace_cal_state(&in, NULL, now, sizeof now);
			const char *cells[] = { list[i].role, who, sweeps, then, now };
			/* a sample unit measured with an instrument past its due date */
			hb_html_table_row_class(h, strstr(then, "(OVERDUE)") ? "fail" : NULL, cells, 5);
		}
		hb_html_table_end(h);
	}
	hb_html_section_end(h);
	free(t);
	free(list);
}
