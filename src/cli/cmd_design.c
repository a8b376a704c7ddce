/* src/cli/cmd_design.c - the `design` command: the gap (or turns) that gives a target inductance at a current, from a part's latest core fit */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../../fit/hb_fit.h"
#include "../quality/design_store.h"
#include "cli.h"

typedef struct design_args {
	const char *part;
	double target, at, turns, gap;
	bool have_target, have_at, have_turns, have_gap, have_place, json;
	hb_gap_place place;
} design_args;

static const char *const place_words[] = { "centre", "spacer", NULL };

static int take_place(const hb_opt *o, const char *text, void *field)
{
	design_args *a = field;
	if (hb_gap_place_parse(text, &a->place) != HB_OK) {
		hb_cli_error("--%s '%s' unknown: accepted centre (ground in the centre leg) or spacer (under every leg)",
			     o->name, text);
		return HB_ERR_ARG;
	}
	a->have_place = true;
	return HB_OK;
}

static const hb_opt design_table[] = {
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(design_args, part),
	  .help = "the part whose latest core fit (mu_i, Js, law) and core set are used" },
	{ .name = "target-l", .kind = HB_OPT_VALUE, .arg = "L", .unit = "H", .min = 1e-12, .max = 100,
	  .off = offsetof(design_args, target), .given = HB_OPT_GIVEN(design_args, have_target),
	  .help = "inductance wanted, e.g. 100uH (the incremental L the meter reads)" },
	{ .name = "at", .kind = HB_OPT_VALUE, .arg = "I", .unit = "A", .min = 1e-6, .max = 1e4,
	  .off = offsetof(design_args, at), .given = HB_OPT_GIVEN(design_args, have_at),
	  .help = "... at this DC current, e.g. 5A" },
	{ .name = "turns", .kind = HB_OPT_VALUE, .arg = "N", .unit = "", .min = 1, .max = 1e5,
	  .off = offsetof(design_args, turns), .given = HB_OPT_GIVEN(design_args, have_turns),
	  .help = "turns held fixed: solve the gap (default: the part's turns)" },
	{ .name = "gap", .kind = HB_OPT_VALUE, .arg = "G", .unit = "m", .min = 0, .max = 0.1,
	  .off = offsetof(design_args, gap), .given = HB_OPT_GIVEN(design_args, have_gap),
	  .help = "physical gap held fixed: solve the turns" },
	{ .name = "gap-at", .kind = HB_OPT_CUSTOM, .arg = "centre|spacer", .words = place_words, .parse = take_place,
	  .off = 0, .help = "where the gap is (default: the part's placement, else centre)" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(design_args, json), .help = "one JSON object on stdout" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_design = {
	.name = "design",
	.usage = "--part P --target-l L --at I [--turns N | --gap G] [--gap-at centre|spacer] [--json]",
	.about = "From the part's latest core fit (law, mu_i, Js) and its core (a set from --core SHAPE:dims,\n"
		 "or Ae, le and window), the gap that gives the target incremental inductance at the current\n"
		 "with the turns held (--turns, default the part's), or the turns with the gap held (--gap).\n"
		 "Of the two solutions the saturating core allows, the one below the knee is given (the\n"
		 "largest gap, the fewest turns). U (k from Student's t at the fit's degrees of freedom, 95.45 %)\n"
		 "propagates the fit's mu_i and Js (GUM, their covariance); the geometry is taken as exact.\n",
	.opts = design_table,
	.max_operands = 0,
};

static void print_text(const design_args *a, const hb_db_part *p, const hb_design_fit *ft, const char *core,
		       const hb_design_in *in, const hb_design_out *o)
{
	char b1[40], b2[40], b3[40];
	printf("design for part %s: L = %s at %s\n", p->part_number, hb_format_si(b1, sizeof b1, a->target, "H", 4),
	       hb_format_si(b2, sizeof b2, a->at, "A", 4));
	printf("  core        %s\n", core);
	printf("  from        fit #%lld of sweep #%lld, law %s: mu_i %.5g (u %.3g), Js %s (u %s)%s\n",
	       (long long)ft->fit_id, (long long)ft->sweep_id, hb_core_law_name(ft->law), ft->mu_i, ft->u_mu_i,
	       hb_format_si(b1, sizeof b1, ft->Js, "T", 4), hb_format_si(b2, sizeof b2, ft->u_Js, "T", 3),
	       ft->r_known ? "" : " (their correlation not stored: taken as 0)");
	if (o->solved_gap) {
		printf("  turns       %g (held)\n", o->turns);
		printf("  gap         %s at %s, U = %s (k = %.2f, 95.45 %%)\n", hb_format_si(b1, sizeof b1, o->gap_phys, "m", 4),
		       hb_gap_place_name(in->place), hb_format_si(b2, sizeof b2, o->U, "m", 2), o->k);
		printf("              effective %s referred to Ae (McLyman fringing, window %s)\n",
		       hb_format_si(b3, sizeof b3, o->gap_eff, "m", 4),
		       hb_format_si(b1, sizeof b1, in->core.window_height, "m", 4));
	} else {
		printf("  gap         %s at %s (held; effective %s)\n", hb_format_si(b1, sizeof b1, o->gap_phys, "m", 4),
		       hb_gap_place_name(in->place), hb_format_si(b2, sizeof b2, o->gap_eff, "m", 4));
		printf("  turns       %.4g, U = %.2g (k = %.2f, 95.45 %%); wound as %.0f turns\n", o->turns, o->U, o->k,
		       ceil(o->turns));
	}
	printf("  the design  L0 %s at zero bias, L %s and B %s at %s\n", hb_format_si(b1, sizeof b1, o->L0, "H", 4),
	       hb_format_si(b2, sizeof b2, o->L_at, "H", 4), hb_format_si(b3, sizeof b3, o->B_at, "T", 3),
	       hb_format_si((char[40]){ 0 }, 40, a->at, "A", 4));
	printf("  U rests on  the fit's mu_i and Js (GUM, covariance of the fit); the geometry is taken as exact\n");
	if (isfinite(ft->i_max) && a->at > ft->i_max)
		printf("  caution     %s lies beyond the highest bias measured (%s): the fitted law is extrapolated there\n",
		       hb_format_si(b1, sizeof b1, a->at, "A", 4), hb_format_si(b2, sizeof b2, ft->i_max, "A", 4));
}

static int print_json(const design_args *a, const hb_db_part *p, const hb_design_fit *ft, const char *core,
		      const hb_design_in *in, const hb_design_out *o)
{
	json_t *j = json_object();
	json_object_set_new(j, "part", json_string(p->part_number));
	json_object_set_new(j, "target_L_H", json_real(a->target));
	json_object_set_new(j, "current_A", json_real(a->at));
	json_object_set_new(j, "core", json_string(core));
	json_object_set_new(j, "fit_id", json_integer(ft->fit_id));
	json_object_set_new(j, "sweep_id", json_integer(ft->sweep_id));
	json_object_set_new(j, "law", json_string(hb_core_law_name(ft->law)));
	json_object_set_new(j, "mu_i", json_real(ft->mu_i));
	json_object_set_new(j, "u_mu_i", json_real(ft->u_mu_i));
	json_object_set_new(j, "Js_T", json_real(ft->Js));
	json_object_set_new(j, "u_Js_T", json_real(ft->u_Js));
	json_object_set_new(j, "r_mu_i_Js", ft->r_known ? json_real(ft->r) : json_null());
	json_object_set_new(j, "solved", json_string(o->solved_gap ? "gap" : "turns"));
	json_object_set_new(j, "turns", json_real(o->turns));
	json_object_set_new(j, "gap_at", json_string(hb_gap_place_name(in->place)));
	json_object_set_new(j, "gap_m", json_real(o->gap_phys));
	json_object_set_new(j, "gap_effective_m", json_real(o->gap_eff));
	json_object_set_new(j, "window_height_m", json_real(in->core.window_height));
	json_object_set_new(j, "u_c", json_real(o->u_c));
	json_object_set_new(j, "U", json_real(o->U));
	json_object_set_new(j, "k", json_real(o->k));
	json_object_set_new(j, "U_of", json_string(o->solved_gap ? "gap_m" : "turns"));
	json_object_set_new(j, "L0_H", json_real(o->L0));
	json_object_set_new(j, "L_at_H", json_real(o->L_at));
	json_object_set_new(j, "B_at_T", json_real(o->B_at));
	json_object_set_new(j, "I_max_measured_A", isfinite(ft->i_max) ? json_real(ft->i_max) : json_null());
	json_object_set_new(j, "extrapolated", json_boolean(isfinite(ft->i_max) && a->at > ft->i_max));
	return hb_print_json(j) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
}

int hb_cmd_design(int argc, char **argv)
{
	design_args a;
	memset(&a, 0, sizeof a);
	hb_opts_result res;
	if (hb_opts_parse(&hb_opts_design, argc, argv, &a, &res) != HB_OK)
		return HB_EXIT_USAGE;
	if (res.done)
		return HB_EXIT_OK;
	const char *missing = !a.part ? "--part" : !a.have_target ? "--target-l" : !a.have_at ? "--at" : NULL;
	if (missing) {
		hb_cli_error("design needs %s (try 'henrybench design --help')", missing);
		return HB_EXIT_USAGE;
	}
	if (a.have_turns && a.have_gap) {
		hb_cli_error("design: --turns and --gap exclude each other (one is held, the other solved)");
		return HB_EXIT_USAGE;
	}
	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
	int exit_code = HB_EXIT_RUNTIME;
	hb_db_part part;
	int st = hb_db_part_get(db, a.part, &part);
	if (st != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		exit_code = st == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	hb_design_in in;
	memset(&in, 0, sizeof in);
	char core[300];
	hb_gap_place stored_place = HB_GAP_CENTRE;
	char why[400];
	int lc = hb_design_load_core(db, &part, &in.core, &stored_place, core, sizeof core, why, sizeof why);
	if (lc != HB_OK) {
		hb_cli_error("%s", why);
		exit_code = lc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	in.place = a.have_place ? a.place : stored_place;
	if (in.place == HB_GAP_SPACER && !(in.core.A_outer > 0)) {
		hb_cli_error("part %s: a spacer gap needs the core set (--core SHAPE:dims) to know the outer legs",
			     part.part_number);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (!a.have_gap && !a.have_turns && !(part.turns > 0)) {
		hb_cli_error("part %s has no turns: give --turns N (to solve the gap) or --gap G (to solve the turns)",
			     part.part_number);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	hb_design_fit ft;
	if (hb_design_load_fit(db, part.part_number, &ft, why, sizeof why) != HB_OK) {
		hb_cli_error("%s", why);
		exit_code = HB_EXIT_RUNTIME;
		goto out;
	}
	in.law = ft.law;
	in.mu_i = ft.mu_i;
	in.Js = ft.Js;
	in.u_mu_i = ft.u_mu_i;
	in.u_Js = ft.u_Js;
	in.r_mu_js = ft.r;
	in.dof = ft.dof;
	in.target_L = a.target;
	in.current = a.at;
	in.turns = a.have_gap ? 0 : a.have_turns ? a.turns : part.turns;
	in.gap = a.have_gap ? a.gap : NAN;
	hb_design_out o;
	int rc = hb_design_solve(&in, &o);
	if (rc != HB_OK) {
		hb_cli_error("design: %s", o.why);
		exit_code = rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if (a.json) {
		exit_code = print_json(&a, &part, &ft, core, &in, &o);
	} else {
		print_text(&a, &part, &ft, core, &in, &o);
		exit_code = HB_EXIT_OK;
	}
out:
	hb_db_close(db);
	return exit_code;
}
