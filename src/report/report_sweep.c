/* src/report/report_sweep.c - the filed record of one sweep: part, unit, instruments, verdicts, fit, plots, points */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../fit/hb_fit.h"
#include "../quality/quality.h"
#include "../../common/hb_text.h"
#include "html.h"
#include "plot.h"
#include "report.h"
#include "report_internal.h"


/* ---------------- sweep report ---------------- */

int hb_report_sweep(hb_db *db, int64_t sweep_id, FILE *out, char *err, size_t errlen)
{
	sweep_data d;
	int rc = rpt_load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	char title[200], subtitle[300], e[200] = "";
	snprintf(title, sizeof title, "Measurement record: sweep %lld, %s unit %s", (long long)sweep_id,
		 rpt_or_dash(d.sweep.part_number), rpt_or_dash(d.sweep.serial));
	snprintf(subtitle, sizeof subtitle, "Inductance against %s, %s, started %s UTC at station %s",
		 d.sweep.kind == HB_DB_SWEEP_BIAS ? "DC bias" : "frequency", hb_db_sweep_status_name(d.sweep.status),
		 rpt_or_dash(d.sweep.started_iso), rpt_or_dash(d.sweep.station));
	hb_html *h = rpt_html_open(out, title, subtitle);
	if (!h) {
		rpt_sweep_data_free(&d);
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	if (d.have_part)
		rpt_part_section(h, &d.part);
	else
		hb_html_paragraph(h, "This sweep belongs to no stored part: no specification applies.");
	rpt_measurement_section(h, &d.sweep);
	rpt_verdict_section(h, &d);
	rpt_drawing_section(h, db, &d);
	rpt_fit_section(h, &d);

	hb_html_section_begin(h, "Figures");
	char *svg = NULL;
	char cap[300];
	if (d.sweep.kind == HB_DB_SWEEP_BIAS) {
		rc = hb_report_bias_svg(db, sweep_id, &svg, e, sizeof e);
		snprintf(cap, sizeof cap,
			 "Sweep %lld: incremental inductance against DC bias with the stored model curves, the currents at "
			 "the stored drop fractions (vertical lines) and the specification limits.",
			 (long long)sweep_id);
		rpt_figure(h, rc, svg, cap, e);
		if (d.have_part && rpt_part_has_geometry(&d.part)) {
			rc = hb_report_bh_svg(db, sweep_id, &svg, e, sizeof e);
			snprintf(cap, sizeof cap,
				 "Sweep %lld: B = psi/(N Ae) with psi the integral of L dI, against the applied field per "
				 "length N I / le (magnetomotive force over the path length, not the field in the core); "
				 "derived from the measured points and the part's geometry, not measured directly.",
				 (long long)sweep_id);
			rpt_figure(h, rc, svg, cap, e);
		}
	} else {
		rc = hb_report_freq_svg(db, sweep_id, &svg, e, sizeof e);
		snprintf(cap, sizeof cap,
			 "Sweep %lld: series-equivalent L and R against frequency, the fitted (R + jwL) || C model and "
			 "the self-resonance (vertical line).",
			 (long long)sweep_id);
		rpt_figure(h, rc, svg, cap, e);
	}
	hb_html_section_end(h);
	rpt_points_section(h, &d);
	rpt_budget_section(h, &d);
	rpt_instruments_section(h, db, sweep_id);

	hb_html_section_begin(h, "Traceability");
	char what[300];
	if (d.have_fit)
		snprintf(what, sizeof what, "Points, settings and verdicts: sweep %lld. Fit values: fit %lld (%s).",
			 (long long)sweep_id, (long long)d.fit->id, d.fit->code_version);
	else
		snprintf(what, sizeof what, "Points, settings and verdicts: sweep %lld. No fit stored.", (long long)sweep_id);
	rpt_trace_paragraph(h, db, what);
	hb_html_section_end(h);
	rc = hb_html_close(h);
	if (rc != HB_OK)
		hb_set_err(err, errlen, "writing the report failed");
	rpt_sweep_data_free(&d);
	return rc;
}
