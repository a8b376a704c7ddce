/* src/cli/cmd_core.c - the `core` command: effective core parameters (IEC 60205) of toroids, sections and core sets, gaps, expected inductance */
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../fit/hb_fit.h"
#include "cli.h"

#define MAX_SECTIONS 32

typedef struct winding {
	bool have_turns, have_mu, have_al, have_gap;
	double turns, mu, al, gap;
} winding;

typedef struct core_args {
	double od, id, height, diameter, length;
	bool have_od, have_id, have_height, have_diameter, have_length, json;
	bool have_dims, have_place;
	hb_core_dims dims;
	hb_gap_place place;
	double sec_len[MAX_SECTIONS], sec_area[MAX_SECTIONS];
	size_t n_sections;
	winding w;
} core_args;

/* LENGTH:AREA of one section of the magnetic path; repeatable. */
static int take_section(const hb_opt *o, const char *text, void *field)
{
	core_args *a = field;
	(void)o;
	if (a->n_sections >= MAX_SECTIONS) {
		hb_cli_error("--section: at most %d sections", MAX_SECTIONS);
		return HB_ERR_ARG;
	}
	const char *colon = strchr(text, ':');
	if (!colon) {
		hb_cli_error("--section '%s': expected LENGTH:AREA, e.g. 20mm:50mm2", text);
		return HB_ERR_ARG;
	}
	char len[64];
	snprintf(len, sizeof len, "%.*s", (int)(colon - text), text);
	if (hb_opt_value("--section length", len, "m", 1e-6, 10, &a->sec_len[a->n_sections]) != HB_OK ||
	    hb_opt_value("--section area", colon + 1, "m2", 1e-12, 1, &a->sec_area[a->n_sections]) != HB_OK)
		return HB_ERR_ARG;
	a->n_sections++;
	return HB_OK;
}

/* LETTER=VALUE,... of an IEC core set (fit/shapes.c parses them). */
static int take_dims(const hb_opt *o, const char *text, void *field)
{
	core_args *a = field;
	char err[200];
	(void)o;
	if (hb_core_dims_parse(text, &a->dims, err, sizeof err) != HB_OK) {
		hb_cli_error("--dims: %s", err);
		return HB_ERR_ARG;
	}
	a->have_dims = true;
	return HB_OK;
}

static const char *const place_words[] = { "centre", "spacer", NULL };

static int take_place(const hb_opt *o, const char *text, void *field)
{
	core_args *a = field;
	if (hb_gap_place_parse(text, &a->place) != HB_OK) {
		hb_cli_error("--%s '%s' unknown: accepted centre (ground in the centre leg) or spacer (under every leg)",
			     o->name, text);
		return HB_ERR_ARG;
	}
	a->have_place = true;
	return HB_OK;
}

#define CORE_LENGTH(n, field_, hi, text)                                                                          \
	{ .name = n, .kind = HB_OPT_VALUE, .arg = "D", .unit = "m", .min = 1e-5, .max = hi,                        \
	  .off = offsetof(core_args, field_), .given = HB_OPT_GIVEN(core_args, have_##field_), .help = text }

static const hb_opt core_table[] = {
	CORE_LENGTH("od", od, 10, "toroid: outer diameter"),
	CORE_LENGTH("id", id, 10, "toroid: inner diameter"),
	CORE_LENGTH("height", height, 10, "toroid: height"),
	{ .name = "section", .kind = HB_OPT_CUSTOM, .arg = "LEN:AREA", .parse = take_section, .off = 0,
	  .flags = HB_OPT_REPEAT, .help = "sections: one section of the path, e.g. 20mm:50mm2 (at most 32)" },
	{ .name = "turns", .kind = HB_OPT_VALUE, .arg = "N", .unit = "", .min = 1, .max = 1e6,
	  .off = offsetof(core_args, w.turns), .given = HB_OPT_GIVEN(core_args, w.have_turns),
	  .help = "number of turns" },
	{ .name = "mu", .kind = HB_OPT_VALUE, .arg = "MU", .unit = "", .min = 1, .max = 1e6,
	  .off = offsetof(core_args, w.mu), .given = HB_OPT_GIVEN(core_args, w.have_mu),
	  .help = "relative permeability of the material" },
	{ .name = "al", .kind = HB_OPT_VALUE, .arg = "AL", .unit = "H", .min = 1e-12, .max = 1e-2,
	  .off = offsetof(core_args, w.al), .given = HB_OPT_GIVEN(core_args, w.have_al),
	  .help = "inductance factor, e.g. 250nH" },
	{ .name = "gap", .kind = HB_OPT_VALUE, .arg = "G", .unit = "m", .min = 0, .max = 0.1,
	  .off = offsetof(core_args, w.gap), .given = HB_OPT_GIVEN(core_args, w.have_gap),
	  .help = "air gap, with --mu" },
	{ .name = "dims", .kind = HB_OPT_CUSTOM, .arg = "L=V,...", .parse = take_dims, .off = 0,
	  .help = "core set: its dimensions by letter, e.g. A=34.2mm,B=17.3mm,C=10.8mm,D=12.1mm,E=26.3mm,F=10.8mm" },
	{ .name = "gap-at", .kind = HB_OPT_CUSTOM, .arg = "centre|spacer", .words = place_words, .parse = take_place,
	  .off = 0, .help = "core set: --gap ground in the centre leg (default) or a spacer under every leg" },
	CORE_LENGTH("diameter", diameter, 10, "solenoid: diameter"),
	CORE_LENGTH("length", length, 100, "solenoid: length"),
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(core_args, json), .help = "one JSON object on stdout" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_core = {
	.name = "core",
	.usage = "toroid --od D --id D --height H [WINDING] [--json]\n"
		 "       henrybench core SHAPE --dims A=..,B=..,... [--gap G [--gap-at centre|spacer]] [WINDING] [--json]\n"
		 "       henrybench core sections --section LEN:AREA [--section ...] [WINDING] [--json]\n"
		 "       henrybench core solenoid --diameter D --length L --turns N [--json]\n"
		 "  WINDING: --turns N with --mu MU [--gap G] or --al AL  (expected inductance)",
	.about = "Effective parameters per IEC 60205: C1 = sum l/A, C2 = sum l/A^2, le = C1^2/C2,\n"
		 "Ae = C1/C2, Ve = le Ae; gapped: mu_e = mu/(1 + mu g/le); L = mu0 mu_e N^2 Ae/le = AL N^2.\n"
		 "Solenoid: single-layer air core, exact current-sheet value (Nagaoka) and Wheeler 1928.\n"
		 "Values take SI prefixes and units: 25mm, 50mm2, 250nH, 0.3mm.\n"
		 "Core sets (a mated pair, or an E or U with its I), dimensions by the letters of the IEC\n"
		 "dimension standards (IEC 61246, IEC 62317, IEC 63093 families; docs/cores.md), each the\n"
		 "mean of its drawing limits:\n"
		 "  e    A B C D E F           E pair: A width, B half height, C depth, D half window height,\n"
		 "                             E window width, F centre leg width\n"
		 "  ei   A B C D E F B2        E with an I: D the E's window height, B2 the I's thickness\n"
		 "  etd  A B C D E F           ETD or ER pair: F centre leg diameter, E window circle\n"
		 "  efd  A B C D E F F2 [K q]  EFD pair: F x F2 centre leg, K its offset, q its chamfer\n"
		 "  ep   A B C D E F [K]       EP pair: K depth of the centre leg's axis (F/2)\n"
		 "  pq   A B C D E F G J L     PQ pair: G outer-leg opening, J and L the centre block\n"
		 "  rm   A B C D E F G J [H type]  RM pair: H centre hole, type 1..4 the outline (3)\n"
		 "  p    A B D E F [H G]       pot core pair: A, E ring diameters, F post, H hole, G slot width\n"
		 "  u    A B C D E             U pair: legs (A - E)/2 wide\n"
		 "  ui   A B C D E B2          U with an I of thickness B2\n"
		 "A gap G at --gap-at centre is ground into the centre leg; a spacer of thickness G lies under\n"
		 "every leg, so the flux crosses it in the centre and in the outer legs. Fringing: McLyman\n"
		 "F = 1 + (G/sqrt(A)) ln(2 W/G) per gapped leg, W the set's window height.\n",
	.opts = core_table,
	.max_operands = 0,
	.operands = "toroid sections solenoid e ei etd efd ep pq rm p u ui",
};

/* argv[0] is the shape. */
static int parse_args(int argc, char **argv, core_args *a)
{
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_core, argc, argv, a, &r) != HB_OK)
		return HB_ERR_ARG;
	return r.done ? 1 : HB_OK;
}

static int check_winding(const winding *w)
{
	if (w->have_mu && w->have_al) {
		hb_cli_error("--mu and --al exclude each other (AL already holds the permeability)");
		return HB_ERR_ARG;
	}
	if (w->have_gap && !w->have_mu) {
		hb_cli_error("--gap needs --mu (the material's initial permeability)");
		return HB_ERR_ARG;
	}
	if ((w->have_mu || w->have_al) && !w->have_turns) {
		hb_cli_error("--mu / --al give an expected inductance only with --turns");
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static void print_effective(const char *shape, const hb_core_effective *e, const winding *w, bool json)
{
	double mu_e = NAN, al = NAN, L = NAN;
	if (w->have_mu) {
		mu_e = w->have_gap ? hb_fit_mu_gapped(w->mu, w->gap, e->le) : w->mu;
		al = HB_FIT_MU0 * mu_e * e->Ae / e->le;
	} else if (w->have_al) {
		al = w->al;
		mu_e = al * e->le / (HB_FIT_MU0 * e->Ae);
	}
	if (w->have_turns && isfinite(al))
		L = hb_fit_expected_L_al(al, w->turns);
	if (json) {
		json_t *j = json_object();
		json_object_set_new(j, "shape", json_string(shape));
		json_object_set_new(j, "C1_per_m", json_real(e->C1));
		json_object_set_new(j, "C2_per_m3", json_real(e->C2));
		json_object_set_new(j, "le_m", json_real(e->le));
		json_object_set_new(j, "Ae_m2", json_real(e->Ae));
		json_object_set_new(j, "Ve_m3", json_real(e->Ve));
		if (isfinite(mu_e)) {
			json_object_set_new(j, "mu_e", json_real(mu_e));
			json_object_set_new(j, "AL_H", json_real(al));
		}
		if (w->have_gap)
			json_object_set_new(j, "gap_m", json_real(w->gap));
		if (w->have_turns)
			json_object_set_new(j, "turns", json_real(w->turns));
		if (isfinite(L))
			json_object_set_new(j, "L_H", json_real(L));
		(void)hb_print_json(j);
		return;
	}
	char buf[40];
	printf("%s, effective parameters (IEC 60205)\n", shape);
	/* plain digits in the units a core data sheet uses: never an exponent */
	char n1[40], n2[40], n3[40];
	printf("  C1   %10s mm^-1   (sum l/A)\n", hb_format_si(n1, sizeof n1, e->C1 * 1e-3, "", 5));
	printf("  C2   %10s mm^-3   (sum l/A^2)\n", hb_format_si(n2, sizeof n2, e->C2 * 1e-9, "", 5));
	printf("  le   %10.4f mm      (C1^2/C2)\n", e->le * 1e3);
	printf("  Ae   %10.4f mm^2    (C1/C2)\n", e->Ae * 1e6);
	printf("  Ve   %10s mm^3    (le Ae)\n", hb_format_si(n3, sizeof n3, e->Ve * 1e9, "", 4));
	if (isfinite(mu_e)) {
		printf("  mu_e %10s         (%s)\n", hb_format_si(n1, sizeof n1, mu_e, "", 5),
		       w->have_gap ? "mu/(1 + mu g/le)" : w->have_al ? "from AL" : "ungapped: mu");
		printf("  AL   %10s\n", hb_format_si(buf, sizeof buf, al, "H", 4));
	}
	if (isfinite(L))
		printf("  L    %10s         (N = %g; at zero bias, small signal)\n", hb_format_si(buf, sizeof buf, L, "H", 4),
		       w->turns);
}

static void print_shape(const hb_core_shape_result *r, const core_args *a)
{
	const winding *w = &a->w;
	double g_eff = NAN, mu_e = NAN, al = NAN, L = NAN, rel = NAN;
	if (w->have_gap) {
		g_eff = hb_core_gap_effective(r, a->place, w->gap);
		rel = g_eff / (HB_FIT_MU0 * r->eff.Ae);
	}
	if (w->have_mu) {
		mu_e = w->have_gap ? hb_fit_mu_gapped(w->mu, g_eff, r->eff.le) : w->mu;
		al = HB_FIT_MU0 * mu_e * r->eff.Ae / r->eff.le;
	} else if (w->have_al) {
		al = w->al;
		mu_e = al * r->eff.le / (HB_FIT_MU0 * r->eff.Ae);
	}
	if (w->have_turns && isfinite(al))
		L = hb_fit_expected_L_al(al, w->turns);
	char dims[512];
	hb_core_dims_format(&a->dims, dims, sizeof dims);
	const char *name = hb_core_shape_name(r->shape);
	if (a->json) {
		json_t *j = json_object();
		json_object_set_new(j, "shape", json_string(name));
		json_object_set_new(j, "dims", json_string(dims));
		json_object_set_new(j, "method", json_string("IEC 60205"));
		json_object_set_new(j, "C1_per_m", json_real(r->eff.C1));
		json_object_set_new(j, "C2_per_m3", json_real(r->eff.C2));
		json_object_set_new(j, "le_m", json_real(r->eff.le));
		json_object_set_new(j, "Ae_m2", json_real(r->eff.Ae));
		json_object_set_new(j, "Ve_m3", json_real(r->eff.Ve));
		json_object_set_new(j, "Amin_m2", json_real(r->Amin));
		json_object_set_new(j, "window_height_m", json_real(r->window_height));
		json_object_set_new(j, "A_centre_m2", json_real(r->A_centre));
		json_object_set_new(j, "A_outer_m2", json_real(r->A_outer));
		if (w->have_gap) {
			json_object_set_new(j, "gap_m", json_real(w->gap));
			json_object_set_new(j, "gap_at", json_string(hb_gap_place_name(a->place)));
			json_object_set_new(j, "gap_effective_m", json_real(g_eff));
			json_object_set_new(j, "gap_reluctance_per_H", json_real(rel));
		}
		if (isfinite(mu_e)) {
			json_object_set_new(j, "mu_e", json_real(mu_e));
			json_object_set_new(j, "AL_H", json_real(al));
		}
		if (w->have_turns)
			json_object_set_new(j, "turns", json_real(w->turns));
		if (isfinite(L))
			json_object_set_new(j, "L_H", json_real(L));
		(void)hb_print_json(j);
		return;
	}
	char buf[40];
	printf("%s core set, effective parameters (IEC 60205)\n", name);
	printf("  dimensions %s\n", dims);
	printf("  C1   %10.5g mm^-1   (sum l/A)\n", r->eff.C1 * 1e-3);
	printf("  C2   %10.5g mm^-3   (sum l/A^2)\n", r->eff.C2 * 1e-9);
	printf("  le   %10.4f mm      (C1^2/C2)\n", r->eff.le * 1e3);
	printf("  Ae   %10.4f mm^2    (C1/C2)\n", r->eff.Ae * 1e6);
	printf("  Ve   %10.4g mm^3    (le Ae)\n", r->eff.Ve * 1e9);
	printf("  Amin %10.4f mm^2    (smallest section)\n", r->Amin * 1e6);
	printf("  window height %.4f mm; centre leg %.4f mm^2", r->window_height * 1e3, r->A_centre * 1e6);
	if (isfinite(r->A_outer))
		printf(", return legs %.4f mm^2", r->A_outer * 1e6);
	printf("\n");
	if (w->have_gap) {
		printf("  gap  %s at %s: effective %s referred to Ae (McLyman fringing per leg), reluctance %.4g 1/H\n",
		       hb_format_si(buf, sizeof buf, w->gap, "m", 4), hb_gap_place_name(a->place),
		       hb_format_si((char[40]){ 0 }, 40, g_eff, "m", 4), rel);
	}
	if (isfinite(mu_e)) {
		printf("  mu_e %10.5g         (%s)\n", mu_e,
		       w->have_gap ? "mu/(1 + mu g_eff/le)" : w->have_al ? "from AL" : "ungapped: mu");
		printf("  AL   %10s\n", hb_format_si(buf, sizeof buf, al, "H", 4));
	}
	if (isfinite(L))
		printf("  L    %10s         (N = %g; at zero bias, small signal)\n", hb_format_si(buf, sizeof buf, L, "H", 4),
		       w->turns);
}

static int run_shape(hb_core_shape shape, core_args *a)
{
	if (!a->have_dims) {
		hb_cli_error("core %s needs --dims with the letters %s (optional: %s)", hb_core_shape_name(shape),
			     hb_core_shape_letters(shape),
			     hb_core_shape_optional(shape)[0] ? hb_core_shape_optional(shape) : "none");
		return HB_EXIT_USAGE;
	}
	if (a->have_place && !a->w.have_gap) {
		hb_cli_error("--gap-at says where --gap is: give --gap too");
		return HB_EXIT_USAGE;
	}
	/* a gap alone is fine here: the set gives its reluctance */
	if ((a->w.have_mu || a->w.have_al || a->w.have_turns || !a->w.have_gap) && check_winding(&a->w))
		return HB_EXIT_USAGE;
	hb_core_shape_result r;
	char err[200];
	if (hb_core_shape_eval(shape, &a->dims, &r, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_EXIT_USAGE;
	}
	if (a->w.have_gap && !(a->w.gap < r.window_height)) {
		char g[32], wh[32];
		hb_cli_error("--gap %s must be shorter than the window height %s", hb_format_si(g, sizeof g, a->w.gap, "m", 4),
			     hb_format_si(wh, sizeof wh, r.window_height, "m", 4));
		return HB_EXIT_USAGE;
	}
	print_shape(&r, a);
	return HB_EXIT_OK;
}

static int run_toroid(core_args *a)
{
	if (!a->have_od || !a->have_id || !a->have_height) {
		hb_cli_error("core toroid needs --od, --id and --height");
		return HB_EXIT_USAGE;
	}
	if (!(a->id < a->od)) {
		char o[32], i[32];
		hb_cli_error("--id %s must be smaller than --od %s", hb_format_si(i, sizeof i, a->id, "m", 4),
			     hb_format_si(o, sizeof o, a->od, "m", 4));
		return HB_EXIT_USAGE;
	}
	if (check_winding(&a->w))
		return HB_EXIT_USAGE;
	hb_core_effective e;
	if (hb_fit_geom_toroid(a->od, a->id, a->height, &e) != HB_OK) {
		hb_cli_error("toroid dimensions rejected (need 0 < id < od, height > 0)");
		return HB_EXIT_USAGE;
	}
	print_effective("toroid", &e, &a->w, a->json);
	return HB_EXIT_OK;
}

static int run_sections(core_args *a)
{
	if (a->n_sections == 0) {
		hb_cli_error("core sections needs at least one --section LENGTH:AREA");
		return HB_EXIT_USAGE;
	}
	if (check_winding(&a->w))
		return HB_EXIT_USAGE;
	hb_core_effective e;
	if (hb_fit_geom_sections(a->sec_len, a->sec_area, a->n_sections, &e) != HB_OK) {
		hb_cli_error("sections rejected (lengths and areas must be positive)");
		return HB_EXIT_USAGE;
	}
	print_effective("sections", &e, &a->w, a->json);
	return HB_EXIT_OK;
}

static int run_solenoid(core_args *a)
{
	if (!a->have_diameter || !a->have_length || !a->w.have_turns) {
		hb_cli_error("core solenoid needs --diameter, --length and --turns");
		return HB_EXIT_USAGE;
	}
	if (a->w.have_mu || a->w.have_al || a->w.have_gap) {
		hb_cli_error("core solenoid is an air core: --mu, --al and --gap do not apply");
		return HB_EXIT_USAGE;
	}
	double Le, Lw, k;
	if (hb_fit_solenoid(a->diameter, a->length, a->w.turns, &Le, &Lw, &k) != HB_OK) {
		hb_cli_error("core solenoid: diameter/length %g is too short a coil for Nagaoka's coefficient (give a longer --length)",
			     a->diameter / a->length);
		return HB_EXIT_USAGE;
	}
	if (a->json) {
		json_t *j = json_object();
		json_object_set_new(j, "shape", json_string("solenoid"));
		json_object_set_new(j, "diameter_m", json_real(a->diameter));
		json_object_set_new(j, "length_m", json_real(a->length));
		json_object_set_new(j, "turns", json_real(a->w.turns));
		json_object_set_new(j, "nagaoka_k", json_real(k));
		json_object_set_new(j, "L_exact_H", json_real(Le));
		json_object_set_new(j, "L_wheeler_H", json_real(Lw));
		(void)hb_print_json(j);
		return HB_EXIT_OK;
	}
	char b1[40], b2[40];
	printf("single-layer air-core solenoid, D/l = %.4g, N = %g\n", a->diameter / a->length, a->w.turns);
	printf("  Nagaoka k   %.6f   (current sheet, complete elliptic integrals)\n", k);
	printf("  L exact     %s   (k mu0 N^2 A / l)\n", hb_format_si(b1, sizeof b1, Le, "H", 5));
	printf("  L Wheeler   %s   (Wheeler 1928, %+.2f %% from exact)\n", hb_format_si(b2, sizeof b2, Lw, "H", 5),
	       100 * (Lw - Le) / Le);
	return HB_EXIT_OK;
}

int hb_cmd_core(int argc, char **argv)
{
	if (argc < 2 || strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0) {
		hb_opts_help(&hb_opts_core, argc < 2 ? stderr : stdout);
		return argc < 2 ? HB_EXIT_USAGE : HB_EXIT_OK;
	}
	const char *shape = argv[1];
	core_args a;
	memset(&a, 0, sizeof a);
	int rc = parse_args(argc - 1, argv + 1, &a);
	if (rc == 1)
		return HB_EXIT_OK;
	if (rc != HB_OK)
		return HB_EXIT_USAGE;
	if (strcmp(shape, "toroid") == 0)
		return run_toroid(&a);
	if (strcmp(shape, "sections") == 0)
		return run_sections(&a);
	if (strcmp(shape, "solenoid") == 0)
		return run_solenoid(&a);
	hb_core_shape cs;
	if (hb_core_shape_parse(shape, &cs) == HB_OK)
		return run_shape(cs, &a);
	hb_cli_error("core: unknown shape '%s' (accepted: toroid, sections, solenoid, e, ei, etd, er, efd, ep, pq, rm, "
		     "p, u, ui)",
		     shape);
	return HB_EXIT_USAGE;
}
