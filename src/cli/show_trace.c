/* src/cli/show_trace.c - the lines `show` prints on what a sweep ran with: instruments, calibration at start, fixture compensation, settings read back */
#include <stdio.h>
#include <string.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "cli.h"

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
	fprintf(out, "settings at start: %s\nsettings at end:   %s\n", t.settings_start, t.settings_end);
	if (t.settings_changed[0])
		fprintf(out, "WARNING: settings changed during the sweep: %s\n", t.settings_changed);
}
