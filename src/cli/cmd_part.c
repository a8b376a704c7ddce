/* src/cli/cmd_part.c - command `part`: add, list, show and edit part specs as the datasheet states them */
#include <math.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../../fit/hb_fit.h"
#include "../io/io.h"
#include "../quality/quality.h"
#include "cli.h"

/* Which fields an edit gives, so the others stay as stored. */
typedef struct part_edit {
	hb_db_part p;
	bool desc, maker, nominal, tol, freq, level, sat_current, sat_drop, rated, dcr, turns, core, ae, le,
		window, mu_i, bsat, rule, guard_r;
	bool json;
	/* --core SHAPE:dims (an IEC 60205 set) and --gap-at */
	bool core_set, gap_at;
	hb_core_shape shape;
	hb_core_dims dims;
	hb_gap_place place;
	/* issue 13: the drawing and the data sheet's curve (part_drawing, schema step 12) */
	hb_db_part_drawing dr;
	bool gap, gap_tol, curve, curve_tol;
	bool gap_none, curve_none;
} part_edit;

/* ---------------- issue 13: drawn gap and curve mask options ---------------- */

/* "--gap 0.5mm" or "none" (removes the drawn gap and its tolerance). */
static int take_gap(const hb_opt *o, const char *text, void *field)
{
	part_edit *e = field;
	(void)o;
	if (strcmp(text, "none") == 0) {
		e->gap_none = true;
		return HB_OK;
	}
	return hb_opt_value("--gap", text, "m", 1e-7, 0.1, &e->dr.gap_m);
}

static int take_gap_tol(const hb_opt *o, const char *text, void *field)
{
	part_edit *e = field;
	(void)o;
	return hb_opt_value("--gap-tol", text, "m", 1e-9, 0.1, &e->dr.gap_tol_m);
}

static int take_curve_tol(const hb_opt *o, const char *text, void *field)
{
	part_edit *e = field;
	(void)o;
	return hb_opt_value("--curve-tol", text, "%", 1e-4, 0.99, &e->dr.curve_tol);
}

/* One mask point from its current, inductance and optional tolerance text;
 * where names the source ("--curve point 2", "FILE line 3"). */
static int curve_point(part_edit *e, const char *where, const char *ia, const char *lh, const char *tol)
{
	if (e->dr.n_curve >= HB_DB_MASK_MAX) {
		hb_cli_error("%s: a curve mask holds at most %d points", where, HB_DB_MASK_MAX);
		return HB_ERR_ARG;
	}
	hb_db_curve_point *p = &e->dr.curve[e->dr.n_curve];
	char opt[160];
	snprintf(opt, sizeof opt, "%s current", where);
	if (hb_opt_value(opt, ia, "A", 0, 1e4, &p->current_a) != HB_OK)
		return HB_ERR_ARG;
	snprintf(opt, sizeof opt, "%s inductance", where);
	if (hb_opt_value(opt, lh, "H", 1e-12, 100, &p->inductance_h) != HB_OK)
		return HB_ERR_ARG;
	p->tol = NAN;
	if (tol && *tol) {
		snprintf(opt, sizeof opt, "%s tolerance", where);
		if (hb_opt_value(opt, tol, "%", 1e-4, 0.99, &p->tol) != HB_OK)
			return HB_ERR_ARG;
	}
	if (e->dr.n_curve > 0 && !(p->current_a > e->dr.curve[e->dr.n_curve - 1].current_a)) {
		hb_cli_error("%s: current %s is not above the previous point's: give the points in rising current", where,
			     ia);
		return HB_ERR_ARG;
	}
	e->dr.n_curve++;
	return HB_OK;
}

static char *trim(char *t)
{
	while (*t == ' ' || *t == '\t')
		t++;
	size_t n = strlen(t);
	while (n > 0 && (t[n - 1] == ' ' || t[n - 1] == '\t' || t[n - 1] == '\r' || t[n - 1] == '\n'))
		t[--n] = 0;
	return t;
}

/* "0A:108uH,2A:100uH:5%,3.2A:75.6uH" (each point I:L, optionally :TOL), or "none". */
static int take_curve(const hb_opt *o, const char *text, void *field)
{
	part_edit *e = field;
	(void)o;
	if (e->curve) {
		hb_cli_error("--curve and --curve-csv: give the data sheet's curve once");
		return HB_ERR_ARG;
	}
	if (strcmp(text, "none") == 0) {
		e->curve_none = true;
		return HB_OK;
	}
	char buf[2048];
	if (strlen(text) >= sizeof buf) {
		hb_cli_error("--curve: %zu characters, accepted up to %zu", strlen(text), sizeof buf - 1);
		return HB_ERR_ARG;
	}
	snprintf(buf, sizeof buf, "%s", text);
	char *save = NULL;
	int k = 0;
	for (char *pt = strtok_r(buf, ",", &save); pt; pt = strtok_r(NULL, ",", &save)) {
		char where[48];
		snprintf(where, sizeof where, "--curve point %d", ++k);
		char *f[4] = { NULL, NULL, NULL, NULL };
		int nf = 0;
		char *s2 = NULL;
		for (char *t = strtok_r(pt, ":", &s2); t; t = strtok_r(NULL, ":", &s2))
			if (nf < 4)
				f[nf++] = trim(t);
			else
				nf++;
		if (nf < 2 || nf > 3) {
			hb_cli_error("%s '%s': accepted CURRENT:INDUCTANCE[:TOL], e.g. 2A:100uH or 2A:100uH:5%%", where, pt);
			return HB_ERR_ARG;
		}
		if (curve_point(e, where, f[0], f[1], nf == 3 ? f[2] : NULL) != HB_OK)
			return HB_ERR_ARG;
	}
	if (e->dr.n_curve == 0) {
		hb_cli_error("--curve '%s': no points (accepted CURRENT:INDUCTANCE,..., e.g. 0A:108uH,2A:100uH)", text);
		return HB_ERR_ARG;
	}
	e->curve = true;
	snprintf(e->dr.curve_source, sizeof e->dr.curve_source, "--curve");
	return HB_OK;
}

/* A CSV of current, inductance and an optional tolerance per line (comma,
 * semicolon or tab); a first line that is not numbers is a header; lines
 * starting with # are comments. */
static int take_curve_csv(const hb_opt *o, const char *path, void *field)
{
	part_edit *e = field;
	(void)o;
	if (e->curve) {
		hb_cli_error("--curve and --curve-csv: give the data sheet's curve once");
		return HB_ERR_ARG;
	}
	FILE *f = fopen(path, "r");
	if (!f) {
		hb_cli_error("--curve-csv %s: cannot open it", path);
		return HB_ERR_ARG;
	}
	char line[512];
	int ln = 0, rc = HB_OK;
	bool first = true;
	while (rc == HB_OK && fgets(line, sizeof line, f)) {
		ln++;
		if (!strchr(line, '\n') && !feof(f)) {
			hb_cli_error("--curve-csv %s line %d: longer than %zu characters", path, ln, sizeof line - 2);
			rc = HB_ERR_ARG;
			break;
		}
		char *t = trim(line);
		if (!*t || *t == '#')
			continue;
		char *fld[4] = { NULL, NULL, NULL, NULL };
		int nf = 0;
		for (char *c = t;; c++) {
			if (nf < 4)
				fld[nf] = c;
			nf++;
			c += strcspn(c, ",;\t");
			if (!*c)
				break;
			*c = 0;
		}
		for (int i = 0; i < nf && i < 4; i++)
			fld[i] = trim(fld[i]);
		double probe;
		char err[128];
		if (first && hb_parse_value(fld[0], "A", &probe, err, sizeof err) != HB_OK) {
			first = false; /* the header */
			continue;
		}
		first = false;
		char where[320];
		snprintf(where, sizeof where, "--curve-csv %s line %d", path, ln);
		if (nf < 2 || nf > 3 || (nf == 3 && !*fld[2])) {
			if (nf == 3 && !*fld[2])
				nf = 2;
			else {
				hb_cli_error("%s: accepted 2 or 3 columns (current, inductance[, tolerance]), found %d", where, nf);
				rc = HB_ERR_ARG;
				break;
			}
		}
		rc = curve_point(e, where, fld[0], fld[1], nf == 3 ? fld[2] : NULL);
	}
	fclose(f);
	if (rc != HB_OK)
		return rc;
	if (e->dr.n_curve == 0) {
		hb_cli_error("--curve-csv %s: no points in it", path);
		return HB_ERR_ARG;
	}
	e->curve = true;
	const char *base = strrchr(path, '/');
	snprintf(e->dr.curve_source, sizeof e->dr.curve_source, "CSV file %s", base ? base + 1 : path);
	return HB_OK;
}

/* Applies the given drawing fields onto the stored drawing; checks that
 * the result is complete (a gap with its tolerance, every mask point with
 * a band). Returns HB_OK, or HB_ERR_ARG after the one-line error. */
static int merge_drawing(hb_db_part_drawing *dst, const part_edit *e)
{
	if (e->gap_none)
		dst->gap_m = dst->gap_tol_m = NAN;
	if (e->gap && !e->gap_none)
		dst->gap_m = e->dr.gap_m;
	if (e->gap_tol)
		dst->gap_tol_m = e->dr.gap_tol_m;
	if (e->curve_none) {
		dst->n_curve = 0;
		dst->curve_tol = NAN;
		dst->curve_source[0] = 0;
	}
	if (e->curve) {
		dst->n_curve = e->dr.n_curve;
		memcpy(dst->curve, e->dr.curve, sizeof dst->curve);
		memcpy(dst->curve_source, e->dr.curve_source, sizeof dst->curve_source);
	}
	if (e->curve_tol)
		dst->curve_tol = e->dr.curve_tol;
	if (isfinite(dst->gap_m) && !isfinite(dst->gap_tol_m)) {
		hb_cli_error("part: --gap needs the drawing's tolerance, --gap-tol (e.g. --gap-tol 0.02mm)");
		return HB_ERR_ARG;
	}
	if (!isfinite(dst->gap_m) && isfinite(dst->gap_tol_m) && e->gap_tol) {
		hb_cli_error("part: --gap-tol needs the drawn gap, --gap");
		return HB_ERR_ARG;
	}
	if (isfinite(dst->gap_m) && dst->gap_tol_m >= dst->gap_m) {
		hb_cli_error("part: --gap-tol %g mm is not below the drawn gap %g mm", dst->gap_tol_m * 1e3, dst->gap_m * 1e3);
		return HB_ERR_ARG;
	}
	for (size_t i = 0; i < dst->n_curve; i++)
		if (!isfinite(hb_db_curve_point_tol(dst, i))) {
			hb_cli_error("part: curve point %zu (%g A) has no band: give --curve-tol (e.g. 10%%) or a tolerance "
				     "per point",
				     i + 1, dst->curve[i].current_a);
			return HB_ERR_ARG;
		}
	return HB_OK;
}

/* The spec's test level: a voltage (0.1V) or a current (10mA). */
static int take_level(const hb_opt *o, const char *text, void *field)
{
	hb_db_part *p = field;
	double *v = &p->test_level;
	hb_db_level_kind *kind = &p->test_level_kind;
	char err[256];
	(void)o;
	if (hb_parse_value(text, "V", v, err, sizeof err) == HB_OK)
		*kind = HB_DB_LEVEL_VOLTAGE;
	else if (hb_parse_value(text, "A", v, err, sizeof err) == HB_OK)
		*kind = HB_DB_LEVEL_CURRENT;
	else {
		hb_cli_error("--level '%s' is not a test level: give a voltage (e.g. 0.1V) or a current (e.g. 10mA)",
			     text);
		return HB_ERR_ARG;
	}
	if (!(*v > 0) || *v > 1000) {
		hb_cli_error("--level %s is out of range: accepted above 0 up to 1000 V or A", text);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

/* "toroid:OD/ID/H", each a length, or "SHAPE:A=..,B=..,..." of an IEC
 * core set (fit/shapes.c: e, ei, etd, efd, ep, pq, rm, p, u, ui). */
static int take_core(const hb_opt *o, const char *text, void *field)
{
	part_edit *e = field;
	hb_db_part *p = &e->p;
	(void)o;
	static const char prefix[] = "toroid:";
	const char *colon = strchr(text, ':');
	if (strncmp(text, prefix, sizeof prefix - 1) != 0) {
		char name[8];
		if (colon && (size_t)(colon - text) < sizeof name) {
			snprintf(name, sizeof name, "%.*s", (int)(colon - text), text);
			if (hb_core_shape_parse(name, &e->shape) == HB_OK) {
				char err[200];
				if (hb_core_dims_parse(colon + 1, &e->dims, err, sizeof err) != HB_OK) {
					hb_cli_error("--core %s: %s", name, err);
					return HB_ERR_ARG;
				}
				e->core_set = true;
				return HB_OK;
			}
		}
		hb_cli_error("--core '%s' unknown: accepted toroid:OD/ID/H (e.g. toroid:25mm/15mm/10mm) or "
			     "SHAPE:A=..,B=..,... with SHAPE e, ei, etd, efd, ep, pq, rm, p, u or ui (see 'henrybench core --help')",
			     text);
		return HB_ERR_ARG;
	}
	char buf[128];
	snprintf(buf, sizeof buf, "%s", text + sizeof prefix - 1);
	char *fields[3];
	char *save = NULL;
	int n = 0;
	for (char *t = strtok_r(buf, "/", &save); t && n < 4; t = strtok_r(NULL, "/", &save))
		if (n < 3)
			fields[n++] = t;
		else
			n++;
	if (n != 3) {
		hb_cli_error("--core '%s': a toroid needs OD/ID/H, e.g. toroid:25mm/15mm/10mm", text);
		return HB_ERR_ARG;
	}
	double d[3];
	const char *names[] = { "--core OD", "--core ID", "--core H" };
	for (int i = 0; i < 3; i++)
		if (hb_opt_value(names[i], fields[i], "m", 1e-4, 1.0, &d[i]) != HB_OK)
			return HB_ERR_ARG;
	if (d[1] >= d[0]) {
		hb_cli_error("--core '%s': the inner diameter must be smaller than the outer one", text);
		return HB_ERR_ARG;
	}
	p->toroid_od_m = d[0];
	p->toroid_id_m = d[1];
	p->toroid_h_m = d[2];
	return HB_OK;
}

static const char *const place_words[] = { "centre", "spacer", NULL };

static int take_gap_at(const hb_opt *o, const char *text, void *field)
{
	part_edit *e = field;
	if (hb_gap_place_parse(text, &e->place) != HB_OK) {
		hb_cli_error("--%s '%s' unknown: accepted centre (ground in the centre leg) or spacer (under every leg)",
			     o->name, text);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static int take_desc(const hb_opt *o, const char *text, void *field)
{
	hb_db_part *p = field;
	(void)o;
	char err[200];
	if (hb_text_check("description (--desc)", text, HB_TEXT_DESC_MAX, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_ERR_ARG;
	}
	snprintf(p->description, sizeof p->description, "%s", text);
	return HB_OK;
}

static int take_maker(const hb_opt *o, const char *text, void *field)
{
	hb_db_part *p = field;
	(void)o;
	char err[200];
	if (hb_text_check("maker (--maker)", text, HB_TEXT_ID_MAX, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_ERR_ARG;
	}
	snprintf(p->maker, sizeof p->maker, "%s", text);
	return HB_OK;
}

static const char *const rule_words[] = { "simple", "guarded", "non-binary", NULL };

/* The part's decision rule (ILAC-G8:2019), stored by its canonical name so
 * that "nonbinary" and "non-binary" are one rule in the store. */
static int take_rule(const hb_opt *o, const char *text, void *field)
{
	hb_db_part *p = field;
	hb_decision_rule rule;
	if (hb_decision_rule_parse(text, &rule) != HB_OK) {
		hb_cli_error("--%s '%s' unknown: accepted simple, guarded or non-binary", o->name, text);
		return HB_ERR_ARG;
	}
	snprintf(p->decision_rule, sizeof p->decision_rule, "%s", hb_decision_rule_name(rule));
	return HB_OK;
}

/* Guard-band factor r of w = r U: above 0 (r = 0 would be simple acceptance
 * under another name) and up to 3 (beyond, the band outgrows any tolerance
 * a measurement with that U could be judged against). */
#define GUARD_R_MAX 3.0
static int take_guard_r(const hb_opt *o, const char *text, void *field)
{
	hb_db_part *p = field;
	double r;
	char err[256];
	if (hb_parse_value(text, "", &r, err, sizeof err) != HB_OK || !(r > 0) || r > GUARD_R_MAX) {
		hb_cli_error("--%s '%s': accepted a number above 0 up to %g, e.g. 1", o->name, text, GUARD_R_MAX);
		return HB_ERR_ARG;
	}
	p->guard_r = r;
	return HB_OK;
}

/* A spec that is one number in one field of hb_db_part: parsing and merging
 * it is the same code (merge() walks these entries). */
#define PART_NUMBER(n, a, u, lo, hi, member, flag, text)                                                        \
	{ .name = n, .kind = HB_OPT_VALUE, .arg = a, .unit = u, .min = lo, .max = hi,                              \
	  .off = offsetof(part_edit, p.member), .given = HB_OPT_GIVEN(part_edit, flag), .help = text }

static const hb_opt part_table[] = {
	{ .name = "desc", .kind = HB_OPT_CUSTOM, .arg = "TEXT", .parse = take_desc, .off = offsetof(part_edit, p),
	  .given = HB_OPT_GIVEN(part_edit, desc), .help = "description" },
	{ .name = "maker", .kind = HB_OPT_CUSTOM, .arg = "TEXT", .parse = take_maker, .off = offsetof(part_edit, p),
	  .given = HB_OPT_GIVEN(part_edit, maker), .help = "manufacturer" },
	PART_NUMBER("nominal", "L", "H", 1e-12, 100, nominal_h, nominal, "nominal inductance, e.g. 10uH"),
	PART_NUMBER("tol", "T", "%", 1e-4, 1, tolerance, tol, "tolerance, e.g. 20%"),
	PART_NUMBER("freq", "F", "Hz", 1e-3, 1e10, test_freq_hz, freq, "spec test frequency, e.g. 100kHz"),
	{ .name = "level", .kind = HB_OPT_CUSTOM, .arg = "V|A", .parse = take_level, .off = offsetof(part_edit, p),
	  .given = HB_OPT_GIVEN(part_edit, level),
	  .help = "spec test level, a voltage (0.1V) or a current (10mA), above 0 up to 1000 V or A" },
	PART_NUMBER("sat-current", "I", "A", 1e-6, 1e4, sat_current_a, sat_current, "saturation-spec current, e.g. 4.5A ..."),
	PART_NUMBER("sat-drop", "D", "%", 1e-3, 0.99, sat_drop, sat_drop, "... at which L may drop by D, e.g. 30%"),
	PART_NUMBER("rated", "I", "A", 1e-6, 1e4, rated_current_a, rated, "rated current"),
	PART_NUMBER("dcr-max", "R", "ohm", 1e-6, 1e6, dcr_max_ohm, dcr, "maximum DC resistance, e.g. 25mOhm"),
	{ .name = "turns", .kind = HB_OPT_INT, .arg = "N", .min = 1, .max = 100000, .off = offsetof(part_edit, p.turns),
	  .given = HB_OPT_GIVEN(part_edit, turns), .help = "number of turns" },
	{ .name = "core", .kind = HB_OPT_CUSTOM, .arg = "toroid:OD/ID/H|SHAPE:L=V,...", .parse = take_core, .off = 0,
	  .given = HB_OPT_GIVEN(part_edit, core),
	  .help = "core: toroid:25mm/15mm/10mm, or a set such as etd:A=34.2mm,B=17.3mm,C=10.8mm,D=12.1mm,E=26.3mm,"
		  "F=10.8mm (Ae, le and window per IEC 60205; letters in 'henrybench core --help')" },
	{ .name = "gap-at", .kind = HB_OPT_CUSTOM, .arg = "centre|spacer", .words = place_words, .parse = take_gap_at,
	  .off = 0, .given = HB_OPT_GIVEN(part_edit, gap_at),
	  .help = "where the core set's gap is: ground in the centre leg (default) or a spacer under every leg" },
	PART_NUMBER("ae", "A", "m2", 1e-10, 1e-1, ae_m2, ae, "effective area, e.g. 48.9mm2"),
	PART_NUMBER("le", "L", "m", 1e-5, 10, le_m, le, "effective path length, e.g. 60.2mm"),
	PART_NUMBER("window", "H", "m", 1e-5, 1, window_m, window, "winding window height, e.g. 9mm"),
	PART_NUMBER("mu-i", "MU", "", 1, 1e6, mu_i, mu_i, "initial permeability of the material"),
	PART_NUMBER("bsat", "B", "T", 1e-3, 10, bsat_t, bsat, "saturation flux density, e.g. 0.39T"),
	{ .name = "decision-rule", .kind = HB_OPT_CUSTOM, .arg = "simple|guarded|non-binary", .words = rule_words,
	  .parse = take_rule, .off = offsetof(part_edit, p), .given = HB_OPT_GIVEN(part_edit, rule),
	  .help = "how a verdict uses U (ILAC-G8:2019); default: the station's, else simple" },
	{ .name = "guard-r", .kind = HB_OPT_CUSTOM, .arg = "R", .parse = take_guard_r, .off = offsetof(part_edit, p),
	  .given = HB_OPT_GIVEN(part_edit, guard_r),
	  .help = "guard band w = R U of the guarded and non-binary rules, above 0 up to 3 (default 1)" },
	{ .name = "gap", .kind = HB_OPT_CUSTOM, .arg = "G|none", .parse = take_gap, .off = 0,
	  .given = HB_OPT_GIVEN(part_edit, gap), .help = "drawn physical gap, e.g. 0.5mm (judged against the core fit); 100 nm to 100 mm, none removes it" },
	{ .name = "gap-tol", .kind = HB_OPT_CUSTOM, .arg = "T", .parse = take_gap_tol, .off = 0,
	  .given = HB_OPT_GIVEN(part_edit, gap_tol), .help = "the drawing's +- tolerance of the gap, e.g. 0.02mm; 1 nm up to below the gap" },
	{ .name = "curve", .kind = HB_OPT_CUSTOM, .arg = "I:L,...|none", .parse = take_curve, .off = 0,
	  .help = "data sheet's L against current as a mask, rising current, up to 32 points, e.g. 0A:108uH,2A:100uH,3.2A:75.6uH (I:L:TOL per point); none removes it" },
	{ .name = "curve-csv", .kind = HB_OPT_CUSTOM, .arg = "FILE", .parse = take_curve_csv, .off = 0,
	  .help = "the same from a CSV: current, inductance[, tolerance] per line" },
	{ .name = "curve-tol", .kind = HB_OPT_CUSTOM, .arg = "T", .parse = take_curve_tol, .off = 0,
	  .given = HB_OPT_GIVEN(part_edit, curve_tol), .help = "the mask's band +-T of each point, e.g. 10%; 0.01 % to 99 %" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(part_edit, json),
	  .help = "machine-readable output (list, show)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_part = {
	.name = "part",
	.usage = "add PARTNO --nominal L --tol T --freq F --level V|A [SPEC...]\n"
		 "       henrybench part edit PARTNO [SPEC...]     (only the given fields change)\n"
		 "       henrybench part list [--json]\n"
		 "       henrybench part show PARTNO [--json]\n"
		 "       henrybench part delete PARTNO [--reason TEXT] [--force]",
	.about = "\nSpecs are entered as the datasheet states them; engineering notation is accepted.\n",
	.opts = part_table,
	.max_operands = -1,
	.operands = "add list show edit delete",
};

/* argv[0] is the subcommand; *first is set to the first operand. Returns
 * HB_EXIT_OK, HB_EXIT_USAGE after the error, or -1 after --help. */
static int parse_spec_options(int argc, char **argv, part_edit *e, bool allow_json, int *first)
{
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_part, argc, argv, e, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return -1;
	*first = r.first;
	if (e->json && !allow_json) {
		hb_cli_error("part: --json goes with list and show");
		return HB_EXIT_USAGE;
	}
	if (e->core && (e->ae || e->le)) {
		hb_cli_error("part: give either --core or --ae/--le, not both");
		return HB_EXIT_USAGE;
	}
	return HB_EXIT_OK;
}

/* Effective Ae and le of a toroid from its dimensions (IEC 60205, in fit/). */
static int toroid_effective(hb_db_part *p)
{
	hb_core_effective eff;
	if (hb_fit_geom_toroid(p->toroid_od_m, p->toroid_id_m, p->toroid_h_m, &eff) != HB_OK) {
		hb_cli_error("--core: cannot compute Ae and le of this toroid");
		return HB_ERR_ARG;
	}
	p->ae_m2 = eff.Ae;
	p->le_m = eff.le;
	return HB_OK;
}

/* Ae, le and (unless --window says otherwise) the window height of an
 * IEC core set (fit/shapes.c). */
static int set_effective(part_edit *e)
{
	hb_core_shape_result r;
	char err[200];
	if (hb_core_shape_eval(e->shape, &e->dims, &r, err, sizeof err) != HB_OK) {
		hb_cli_error("--core: %s", err);
		return HB_ERR_ARG;
	}
	e->p.ae_m2 = r.eff.Ae;
	e->p.le_m = r.eff.le;
	e->p.toroid_od_m = e->p.toroid_id_m = e->p.toroid_h_m = NAN;
	if (!e->window) {
		e->p.window_m = r.window_height;
		e->window = true;
	}
	return HB_OK;
}

/* Applies the given fields of e onto dst. */
static void merge(hb_db_part *dst, const part_edit *e)
{
	const hb_db_part *s = &e->p;
	if (e->desc)
		memcpy(dst->description, s->description, sizeof dst->description);
	if (e->maker)
		memcpy(dst->maker, s->maker, sizeof dst->maker);
	/* Order does not matter: each field has one option, and --core excludes --ae/--le. */
	for (const hb_opt *o = part_table; o->name; o++) {
		if (o->kind != HB_OPT_VALUE || !*(const bool *)((const char *)e + o->given - 1))
			continue;
		size_t at = o->off - offsetof(part_edit, p);
		*(double *)((char *)dst + at) = *(const double *)((const char *)s + at);
	}
	if (e->level) {
		dst->test_level = s->test_level;
		dst->test_level_kind = s->test_level_kind;
	}
	if (e->turns)
		dst->turns = s->turns;
	if (e->rule)
		memcpy(dst->decision_rule, s->decision_rule, sizeof dst->decision_rule);
	if (e->guard_r)
		dst->guard_r = s->guard_r;
	if (e->core) {
		dst->toroid_od_m = s->toroid_od_m;
		dst->toroid_id_m = s->toroid_id_m;
		dst->toroid_h_m = s->toroid_h_m;
		dst->ae_m2 = s->ae_m2;
		dst->le_m = s->le_m;
	}
	/* Explicit Ae/le describe a non-toroid core: old toroid dimensions no longer apply. */
	if (e->ae || e->le)
		dst->toroid_od_m = dst->toroid_id_m = dst->toroid_h_m = NAN;
}

/* The stored core set follows --core and --ae/--le: a set records its
 * shape and dimensions, a toroid or a typed Ae/le clears it. */
static int core_set_put(hb_db *db, const char *pn, const part_edit *e, bool add)
{
	if (!e->core && !e->ae && !e->le && !e->gap_at)
		return HB_OK;
	hb_db_part_core c;
	if (add)
		hb_db_part_core_init(&c);
	else if (hb_db_part_core_get(db, pn, &c) != HB_OK)
		return HB_ERR_DB;
	if (e->core_set) {
		snprintf(c.shape, sizeof c.shape, "%s", hb_core_shape_name(e->shape));
		if (hb_core_dims_format(&e->dims, c.dims, sizeof c.dims) != HB_OK)
			return HB_ERR_ARG;
	} else if (e->core || e->ae || e->le) {
		c.shape[0] = 0;
		c.dims[0] = 0;
	}
	if (e->gap_at)
		snprintf(c.gap_at, sizeof c.gap_at, "%s", hb_gap_place_name(e->place));
	return hb_db_part_core_put(db, pn, &c);
}

static int part_write(int argc, char **argv, bool add)
{
	part_edit e;
	memset(&e, 0, sizeof e);
	hb_db_part_init(&e.p);
	hb_db_part_drawing_init(&e.dr);
	int first = 0;
	int rc = parse_spec_options(argc, argv, &e, false, &first);
	if (rc < 0)
		return HB_EXIT_OK;
	if (rc != HB_EXIT_OK)
		return rc;
	if (first != argc - 1) {
		hb_cli_error("part %s needs exactly one PARTNO (try 'henrybench part --help')", argv[0]);
		return HB_EXIT_USAGE;
	}
	char pnbuf[HB_DB_ID_LEN];
	const char *pn = add ? argv[first] : hb_cli_part_number(argv[first], pnbuf, sizeof pnbuf);
	char why[200];
	if (!*pn) {
		hb_cli_error("part number: empty; accepted 1 to %d bytes", HB_TEXT_ID_MAX);
		return HB_EXIT_USAGE;
	}
	if (hb_text_check("part number", pn, HB_TEXT_ID_MAX, why, sizeof why) != HB_OK) {
		hb_cli_error("%s", why);
		return HB_EXIT_USAGE;
	}
	if (add) {
		const char *missing = !e.nominal ? "--nominal" : !e.tol ? "--tol" : !e.freq ? "--freq"
				    : !e.level ? "--level" : NULL;
		if (missing) {
			hb_cli_error("part add: %s is required (the datasheet's spec)", missing);
			return HB_EXIT_USAGE;
		}
	}
	if (e.core && (e.core_set ? set_effective(&e) : toroid_effective(&e.p)) != HB_OK)
		return HB_EXIT_USAGE;

	/* add may start a store; edit needs the part, so a store that is not
	 * there is a mistyped --db */
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = add ? hb_cli_open_store() : hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	hb_db_part stored;
	int status = hb_db_part_get(db, pn, &stored);
	int exit_code = HB_EXIT_RUNTIME;
	if (add && status == HB_OK) {
		hb_cli_error("part %s already exists in %s (change it with 'henrybench part edit')", pn,
			     hb_db_path(db));
		goto out;
	}
	if (status != HB_OK && (!add || status != HB_ERR_NOTFOUND)) {
		hb_cli_error("%s", hb_db_errmsg(db));
		if (status == HB_ERR_NOTFOUND)
			exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (add) {
		hb_db_part_init(&stored);
		snprintf(stored.part_number, sizeof stored.part_number, "%s", pn);
	}
	merge(&stored, &e);
	bool drawing = e.gap || e.gap_tol || e.curve || e.curve_none || e.curve_tol;
	hb_db_part_drawing dr;
	hb_db_part_drawing_init(&dr);
	if (drawing && !add && hb_db_part_drawing_get(db, stored.id, &dr) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		goto out;
	}
	if (drawing && merge_drawing(&dr, &e) != HB_OK) {
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	/* the part, its core set and its drawing in one transaction */
	if (hb_db_batch_begin(db) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		goto out;
	}
	if (hb_db_part_put(db, &stored) != HB_OK || core_set_put(db, pn, &e, add) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_batch_rollback(db);
		goto out;
	}
	dr.part_id = stored.id;
	if (drawing && hb_db_part_drawing_put(db, &dr) != HB_OK) {
		hb_cli_error("part %s: its drawing and curve mask could not be stored (nothing was): %s", pn, hb_db_errmsg(db));
		hb_db_batch_rollback(db);
		goto out;
	}
	if (hb_db_batch_commit(db) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		goto out;
	}
	printf("%s part %s\n", add ? "added" : "updated", pn);
	exit_code = HB_EXIT_OK;
out:
	hb_db_close(db);
	return exit_code;
}

static const char *pct(char *buf, size_t cap, double v)
{
	if (isnan(v))
		return "-";
	snprintf(buf, cap, "%g %%", v * 100);
	return buf;
}

static int part_list(int argc, char **argv)
{
	part_edit e;
	memset(&e, 0, sizeof e);
	hb_db_part_drawing_init(&e.dr);
	int first = 0;
	int rc = parse_spec_options(argc, argv, &e, true, &first);
	if (rc < 0)
		return HB_EXIT_OK;
	if (rc != HB_EXIT_OK)
		return rc;
	if (first != argc) {
		hb_cli_error("part list takes no PARTNO (use 'henrybench part show PARTNO')");
		return HB_EXIT_USAGE;
	}
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	hb_db_part *parts = NULL;
	size_t n = 0;
	if (hb_db_part_list(db, &parts, &n) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	if (e.json) {
		json_t *arr = json_array();
		for (size_t i = 0; i < n; i++) {
			json_t *o = hb_json_part(&parts[i]);
			char uid[HB_DB_UID_LEN] = "";
			if (o && hb_db_uid_of(db, HB_DB_REC_PART, parts[i].id, uid) == HB_OK && uid[0])
				json_object_set_new(o, "uid", json_string(uid));
			json_array_append_new(arr, o);
		}
		hb_db_close(db);
		hb_db_parts_free(parts);
		return hb_print_json(arr) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	hb_db_close(db);
	printf("%-24s %-12s %-8s %-12s %-16s %s\n", "part", "nominal", "tol", "test freq", "maker", "description");
	for (size_t i = 0; i < n; i++) {
		const hb_db_part *p = &parts[i];
		char a[32], b[32], c[32];
		/* user text padded by display width: non-ASCII part numbers and makers keep the columns */
		hb_fput_cell(stdout, p->part_number, 24, true);
		printf(" %-12s %-8s %-12s ", hb_si_or_dash(a, sizeof a, p->nominal_h, "H"), pct(b, sizeof b, p->tolerance),
		       hb_si_or_dash(c, sizeof c, p->test_freq_hz, "Hz"));
		hb_fput_cell(stdout, p->maker, 16, true);
		printf(" %s\n", p->description);
	}
	hb_db_parts_free(parts);
	return HB_EXIT_OK;
}

static void show_line(const char *label, const char *value)
{
	printf("  %-22s %s\n", label, value);
}

static void show_drawing(const hb_db_part_drawing *d)
{
	char a[64], b[64], c[200];
	if (isfinite(d->gap_m)) {
		snprintf(c, sizeof c, "%s +- %s", hb_si_or_dash(a, sizeof a, d->gap_m, "m"),
			 hb_si_or_dash(b, sizeof b, d->gap_tol_m, "m"));
		show_line("gap as drawn", c);
	} else {
		show_line("gap as drawn", "-");
	}
	if (d->n_curve == 0) {
		show_line("curve mask", "-");
		return;
	}
	snprintf(c, sizeof c, "%zu points from %s", d->n_curve, d->curve_source[0] ? d->curve_source : "-");
	show_line("curve mask", c);
	for (size_t i = 0; i < d->n_curve; i++) {
		snprintf(c, sizeof c, "%s +- %g %%", hb_si_or_dash(a, sizeof a, d->curve[i].inductance_h, "H"),
			 hb_db_curve_point_tol(d, i) * 100);
		printf("  %-22s %s\n", hb_si_or_dash(b, sizeof b, d->curve[i].current_a, "A"), c);
	}
}

static int part_show(int argc, char **argv)
{
	part_edit e;
	memset(&e, 0, sizeof e);
	hb_db_part_drawing_init(&e.dr);
	int first = 0;
	int rc = parse_spec_options(argc, argv, &e, true, &first);
	if (rc < 0)
		return HB_EXIT_OK;
	if (rc != HB_EXIT_OK)
		return rc;
	if (first != argc - 1) {
		hb_cli_error("part show needs exactly one PARTNO");
		return HB_EXIT_USAGE;
	}
	if (hb_cli_text_arg("part number", argv[first], HB_TEXT_ID_MAX) != HB_OK)
		return HB_EXIT_USAGE;
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	hb_db_part p;
	hb_db_part_core cs;
	char pnbuf[HB_DB_ID_LEN];
	const char *pn = hb_cli_part_number(argv[first], pnbuf, sizeof pnbuf);
	int status = hb_db_part_get(db, pn, &p);
	if (status == HB_OK)
		status = hb_db_part_core_get(db, pn, &cs);
	if (status != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return status == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	hb_db_part_drawing dr;
	status = hb_db_part_drawing_get(db, p.id, &dr);
	if (status != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	/* its global identity and the spec revision in force (a store before step 9 has neither) */
	char uid[HB_DB_UID_LEN] = "";
	hb_db_spec_revision rev;
	bool have_rev = hb_db_spec_revision_get(db, p.id, 0, &rev) == HB_OK;
	hb_db_uid_of(db, HB_DB_REC_PART, p.id, uid);
	hb_db_close(db);
	if (e.json) {
		json_t *o = hb_json_part(&p);
		if (o) {
			json_object_set_new(o, "drawing", hb_json_part_drawing(&dr));
			json_object_set_new(o, "core_shape", json_string(cs.shape));
			json_object_set_new(o, "core_dims", json_string(cs.dims));
			json_object_set_new(o, "gap_at", json_string(cs.gap_at));
			json_object_set_new(o, "uid", uid[0] ? json_string(uid) : json_null());
			json_object_set_new(o, "spec_revision", have_rev ? json_integer(rev.revision) : json_null());
			json_object_set_new(o, "spec_revision_uid", have_rev ? json_string(rev.uid) : json_null());
		}
		return hb_print_json(o) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	char a[64], b[64], c[160];
	printf("part %s\n", p.part_number);
	if (uid[0])
		show_line("identity", uid);
	if (have_rev) {
		snprintf(c, sizeof c, "%d of %s (%s)", rev.revision, rev.created, rev.uid);
		show_line("spec revision", c);
	}
	show_line("description", p.description[0] ? p.description : "-");
	show_line("maker", p.maker[0] ? p.maker : "-");
	show_line("nominal", hb_si_or_dash(a, sizeof a, p.nominal_h, "H"));
	show_line("tolerance", pct(a, sizeof a, p.tolerance));
	show_line("test frequency", hb_si_or_dash(a, sizeof a, p.test_freq_hz, "Hz"));
	show_line("test level",
		  hb_si_or_dash(a, sizeof a, p.test_level, p.test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V"));
	if (!isnan(p.sat_current_a)) {
		snprintf(c, sizeof c, "L drop <= %s at %s", pct(a, sizeof a, p.sat_drop),
			 hb_si_or_dash(b, sizeof b, p.sat_current_a, "A"));
		show_line("saturation", c);
	} else {
		show_line("saturation", "-");
	}
	show_line("rated current", hb_si_or_dash(a, sizeof a, p.rated_current_a, "A"));
	show_line("DCR max", hb_si_or_dash(a, sizeof a, p.dcr_max_ohm, "ohm"));
	snprintf(a, sizeof a, "%d", p.turns);
	show_line("turns", p.turns > 0 ? a : "-");
	if (!isnan(p.toroid_od_m)) {
		snprintf(c, sizeof c, "OD %.4g mm, ID %.4g mm, H %.4g mm", p.toroid_od_m * 1e3, p.toroid_id_m * 1e3,
			 p.toroid_h_m * 1e3);
		show_line("toroid", c);
	}
	if (cs.shape[0]) {
		snprintf(c, sizeof c, "%s %s (Ae, le, window per IEC 60205)", cs.shape, cs.dims);
		show_line("core set", c);
	}
	show_line("gap placement", cs.gap_at);
	if (isnan(p.ae_m2))
		show_line("Ae", "-");
	else {
		snprintf(a, sizeof a, "%.4g mm2", p.ae_m2 * 1e6);
		show_line("Ae", a);
	}
	show_line("le", hb_si_or_dash(a, sizeof a, p.le_m, "m"));
	show_line("window height", hb_si_or_dash(a, sizeof a, p.window_m, "m"));
	if (isnan(p.mu_i))
		show_line("mu_i", "-");
	else {
		snprintf(a, sizeof a, "%g", p.mu_i);
		show_line("mu_i", a);
	}
	show_line("Bsat", hb_si_or_dash(a, sizeof a, p.bsat_t, "T"));
	/* r is shown even with the simple rule: it is stored, and a later
	 * --decision-rule guarded would take it */
	snprintf(b, sizeof b, "%g", isfinite(p.guard_r) ? p.guard_r : 1.0);
	if (p.decision_rule[0])
		snprintf(c, sizeof c, "%s (r = %s)", p.decision_rule, b);
	else
		snprintf(c, sizeof c, "the station's default, else simple (r = %s)", b);
	show_line("decision rule", c);
	show_drawing(&dr);
	show_line("created", p.created);
	show_line("updated", p.updated);
	return HB_EXIT_OK;
}

int hb_cmd_part(int argc, char **argv)
{
	if (argc < 2) {
		hb_opts_help(&hb_opts_part, stderr);
		return HB_EXIT_USAGE;
	}
	const char *sub = argv[1];
	if (strcmp(sub, "--help") == 0 || strcmp(sub, "-h") == 0 || strcmp(sub, "help") == 0) {
		hb_opts_help(&hb_opts_part, stdout);
		return HB_EXIT_OK;
	}
	if (strcmp(sub, "add") == 0)
		return part_write(argc - 1, argv + 1, true);
	if (strcmp(sub, "edit") == 0)
		return part_write(argc - 1, argv + 1, false);
	if (strcmp(sub, "list") == 0)
		return part_list(argc - 1, argv + 1);
	if (strcmp(sub, "show") == 0)
		return part_show(argc - 1, argv + 1);
	if (strcmp(sub, "delete") == 0)
		return hb_cmd_part_delete(argc - 1, argv + 1);
	hb_cli_error("part: unknown subcommand '%s' (accepted: add, list, show, edit, delete)", sub);
	return HB_EXIT_USAGE;
}
