/* src/report/report_design.c - the part report's design lines: the gap (turns held) and the turns (drawn gap held) that give the nominal L at the rated current, from the part's latest core fit */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "../../fit/hb_fit.h"
#include "../quality/quality.h"
#include "html.h"
#include "report.h"
#include "report_internal.h"

static const char *const design_head[] = { "Held", "Solved", "Value", "U", "k", "L0 of the design",
					   "L at the current", "B at the current" };
enum { DESIGN_COLS = 8 };

/* One row: the solution with its expanded uncertainty, or why there is none. */
static void design_row(hb_html *h, const char *held, hb_design_in *in)
{
	hb_design_out o;
	int rc = hb_design_solve(in, &o);
	char v[48], u[48], k[16], l0[48], lat[48], b[48], solved[64];
	if (rc != HB_OK) {
		snprintf(solved, sizeof solved, "%s", in->turns > 0 ? "gap" : "turns");
		const char *cells[DESIGN_COLS] = { held, solved, o.why[0] ? o.why : "no solution", "-", "-", "-", "-", "-" };
		hb_html_table_row(h, cells, DESIGN_COLS);
		return;
	}
	if (o.solved_gap) {
		snprintf(solved, sizeof solved, "gap at %s", hb_gap_place_name(in->place));
		rpt_si(v, sizeof v, o.gap_phys, "m", 5);
		hb_format_u(u, sizeof u, o.U, "m");
	} else {
		snprintf(solved, sizeof solved, "turns (wound as %.0f)", ceil(o.turns));
		snprintf(v, sizeof v, "%.5g", o.turns);
		snprintf(u, sizeof u, "%.2g", o.U);
	}
	snprintf(k, sizeof k, "%.2f", o.k);
	const char *cells[DESIGN_COLS] = { held, solved, v, u, k, rpt_si(l0, sizeof l0, o.L0, "H", 4),
					   rpt_si(lat, sizeof lat, o.L_at, "H", 4), rpt_si(b, sizeof b, o.B_at, "T", 3) };
	hb_html_table_row(h, cells, DESIGN_COLS);
}

/* A value as an option takes it, one word: "108uH". */
static char *option_value(char *buf, size_t cap, double v, const char *unit)
{
	hb_format_si(buf, cap, v, unit, 6);
	char *w = buf;
	for (const char *r = buf; *r; r++)
		if (*r != ' ')
			*w++ = *r;
	*w = '\0';
	return buf;
}

void rpt_design_section(hb_html *h, hb_db *db, const hb_db_part *part)
{
	if (!(part->rated_current_a > 0) || !(part->nominal_h > 0))
		return;
	char a[48], b[48], c[48], line[900], why[400], core[300];
	hb_html_section_begin(h, "Design");
	hb_design_in in;
	memset(&in, 0, sizeof in);
	hb_gap_place place = HB_GAP_CENTRE;
	hb_design_fit ft;
	if (hb_design_load_core(db, part, &in.core, &place, core, sizeof core, why, sizeof why) != HB_OK ||
	    hb_design_load_fit(db, part->part_number, &ft, why, sizeof why) != HB_OK) {
		snprintf(line, sizeof line, "No design from the measurements: %s.", why);
		hb_html_paragraph(h, line);
		hb_html_section_end(h);
		return;
	}
	in.place = place;
	in.law = ft.law;
	in.mu_i = ft.mu_i;
	in.Js = ft.Js;
	in.u_mu_i = ft.u_mu_i;
	in.u_Js = ft.u_Js;
	in.r_mu_js = ft.r;
	in.dof = ft.dof;
	in.target_L = part->nominal_h;
	in.current = part->rated_current_a;
	snprintf(line, sizeof line,
		 "What would give the nominal %s at the rated current %s (the incremental L the meter reads), "
		 "by the inverse of the fitted core law. U is expanded (95.45 %%, k from Student's t at the fit's "
		 "degrees of freedom) and propagates the fit's mu_i and Js with their correlation (GUM); the "
		 "geometry is taken as exact.",
		 rpt_si(a, sizeof a, part->nominal_h, "H", 4), rpt_si(b, sizeof b, part->rated_current_a, "A", 4));
	hb_html_table_begin(h, line, design_head, DESIGN_COLS);
	char held[120];
	if (part->turns > 0) {
		in.turns = part->turns;
		in.gap = NAN;
		snprintf(held, sizeof held, "turns %d (the part's)", part->turns);
		design_row(h, held, &in);
	}
	hb_db_part_drawing drw;
	if (hb_db_part_drawing_get(db, part->id, &drw) == HB_OK && isfinite(drw.gap_m) && drw.gap_m > 0) {
		in.turns = 0;
		in.gap = drw.gap_m;
		snprintf(held, sizeof held, "gap %s at %s (as drawn)", rpt_si(c, sizeof c, drw.gap_m, "m", 4),
			 hb_gap_place_name(in.place));
		design_row(h, held, &in);
	}
	hb_html_table_end(h);
	snprintf(line, sizeof line,
		 "Rests on fit #%lld of sweep #%lld (the part's latest complete bias sweep): law %s, mu_i %.5g "
		 "(u %.3g), Js %s (u %s)%s; core %s. 'henrybench design --part %s --target-l %s --at %s' "
		 "gives the same from the command line (with --gap G for a held gap).",
		 (long long)ft.fit_id, (long long)ft.sweep_id, hb_core_law_name(ft.law), ft.mu_i, ft.u_mu_i,
		 rpt_si(a, sizeof a, ft.Js, "T", 4), rpt_si(b, sizeof b, ft.u_Js, "T", 3),
		 ft.r_known ? ", their correlation from the fit's covariance" : ", their correlation not stored: taken as 0",
		 core, part->part_number, option_value(c, sizeof c, part->nominal_h, "H"),
		 option_value((char[48]){ 0 }, 48, part->rated_current_a, "A"));
	hb_html_paragraph(h, line);
	if (isfinite(ft.i_max) && part->rated_current_a > ft.i_max) {
		snprintf(line, sizeof line,
			 "Caution: the rated current lies beyond the highest bias measured (%s): the fitted law is "
			 "extrapolated there.",
			 rpt_si(a, sizeof a, ft.i_max, "A", 4));
		hb_html_paragraph(h, line);
	}
	hb_html_section_end(h);
}
