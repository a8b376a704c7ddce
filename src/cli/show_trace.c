/* src/cli/show_trace.c - the lines `show` prints on what a sweep ran with: instruments, calibration at start, fixture compensation, settings read back */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../common/hb_text.h"
#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "cli.h"

/* The unit of a setting read back, from its name ("meter.frequency": Hz). */
static const char *setting_unit(const char *name)
{
	if (strstr(name, "frequency"))
		return "Hz";
	if (strstr(name, "voltage"))
		return "V";
	if (strstr(name, "current"))
		return "A";
	return NULL;
}

/* A snapshot ({"meter.frequency":"1.0000000E+03", ...}: the instruments'
 * own replies) for a person: "meter.frequency 1 kHz, meter.function SER,LR";
 * a reply that is not a number is shown as the instrument sent it. */
static void print_settings(FILE *out, const char *label, const char *snapshot)
{
	json_error_t jerr;
	json_t *o = json_loads(snapshot, 0, &jerr);
	fprintf(out, "%s", label);
	if (!json_is_object(o) || json_object_size(o) == 0) {
		fprintf(out, "%s\n", snapshot[0] ? snapshot : HB_TEXT_ABSENT);
		json_decref(o);
		return;
	}
	const char *key;
	json_t *v;
	bool first = true;
	json_object_foreach(o, key, v) {
		const char *text = json_is_string(v) ? json_string_value(v) : "";
		char *end = NULL;
		double x = strtod(text, &end);
		const char *unit = setting_unit(key);
		char buf[48];
		if (unit && end != text && *end == '\0')
			text = hb_format_si(buf, sizeof buf, x, unit, 6);
		fprintf(out, "%s%s %s", first ? "" : ", ", key, text);
		first = false;
	}
	fputc('\n', out);
	json_decref(o);
}

void hb_show_trace(FILE *out, struct hb_db *db, long long sweep_id)
{
	hb_db_sweep_trace t;
	if (hb_db_sweep_trace_get(db, sweep_id, &t) != HB_OK)
		return;
	hb_db_instrument in;
	if (t.lcr_instrument_id > 0 && hb_db_instrument_get(db, t.lcr_instrument_id, &in) == HB_OK)
		fprintf(out, "meter instrument:  %s %s serial %s (register %lld)\n", in.maker, in.model, in.serial,
			(long long)in.id);
	if (t.supply_instrument_id > 0 && hb_db_instrument_get(db, t.supply_instrument_id, &in) == HB_OK)
		fprintf(out, "supply instrument: %s %s serial %s (register %lld)\n", in.maker, in.model, in.serial,
			(long long)in.id);
	fprintf(out, "calibration at start: %s%s\n", t.cal_status[0] ? t.cal_status : "-",
		t.overdue_allowed ? " [went ahead past a due date: --allow-overdue]" : "");
	fprintf(out, "fixture '%s': open %lld, short %lld%s%s%s\n", t.fixture, (long long)t.open_comp_id,
		(long long)t.short_comp_id, t.fixture_applied ? ", residuals subtracted from the readings" : "",
		t.fixture_status[0] ? "; warning: " : "", t.fixture_status);
	print_settings(out, "settings at start: ", t.settings_start);
	print_settings(out, "settings at end:   ", t.settings_end);
	if (t.settings_changed[0])
		fprintf(out, "WARNING: settings changed during the sweep: %s\n", t.settings_changed);
}
