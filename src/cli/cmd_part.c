/* src/cli/cmd_part.c - command `part`: add, list, show and edit part specs as the datasheet states them */
#include <getopt.h>
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
#include "cli.h"

static void part_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench part add PARTNO --nominal L --tol T --freq F --level V|A [SPEC...]\n"
		"       henrybench part edit PARTNO [SPEC...]     (only the given fields change)\n"
		"       henrybench part list [--json]\n"
		"       henrybench part show PARTNO [--json]\n\n"
		"Specs are entered as the datasheet states them; engineering notation is accepted.\n\n"
		"  --desc TEXT           description\n"
		"  --maker TEXT          manufacturer\n"
		"  --nominal L           nominal inductance, e.g. 10uH\n"
		"  --tol T               tolerance, e.g. 20%%\n"
		"  --freq F              spec test frequency, e.g. 100kHz\n"
		"  --level X             spec test level, a voltage (0.1V) or a current (10mA)\n"
		"  --sat-current I       saturation-spec current, e.g. 4.5A ...\n"
		"  --sat-drop D          ... at which L may drop by D, e.g. 30%%\n"
		"  --rated I             rated current\n"
		"  --dcr-max R           maximum DC resistance, e.g. 25mOhm\n"
		"  --turns N             number of turns\n"
		"  --core toroid:OD/ID/H toroid dimensions, e.g. toroid:25mm/15mm/10mm (Ae, le per IEC 60205)\n"
		"  --ae A --le L         effective area and path length, e.g. 48.9mm2 and 60.2mm\n"
		"  --window H            winding window height, e.g. 9mm\n"
		"  --mu-i MU             initial permeability of the material\n"
		"  --bsat B              saturation flux density, e.g. 0.39T\n"
		"  --json                machine-readable output (list, show)\n");
}

/* Which fields an edit gives, so the others stay as stored. */
typedef struct part_edit {
	hb_db_part p;
	bool desc, maker, nominal, tol, freq, level, sat_current, sat_drop, rated, dcr, turns, core, ae, le,
		window, mu_i, bsat;
	bool json;
} part_edit;

/* getopt_long values of the spec options. */
enum {
	O_DESC = 256, O_MAKER, O_NOMINAL, O_TOL, O_FREQ, O_LEVEL, O_SATI, O_SATD, O_RATED, O_DCR,
	O_TURNS, O_CORE, O_AE, O_LE, O_WINDOW, O_MUI, O_BSAT, O_JSON, O_HELP
};

/* The specs that are one number in one field, so parsing and merging them
 * is the same code: the option, its accepted range, the field of
 * hb_db_part it sets and the flag of part_edit that says it was given. */
typedef struct number_spec {
	int opt;
	const char *name, *unit;
	double min, max;
	size_t field, given;
} number_spec;

static const number_spec number_specs[] = {
	{ O_NOMINAL, "--nominal", "H", 1e-12, 100, offsetof(hb_db_part, nominal_h), offsetof(part_edit, nominal) },
	{ O_TOL, "--tol", "%", 1e-4, 1, offsetof(hb_db_part, tolerance), offsetof(part_edit, tol) },
	{ O_FREQ, "--freq", "Hz", 1e-3, 1e10, offsetof(hb_db_part, test_freq_hz), offsetof(part_edit, freq) },
	{ O_SATI, "--sat-current", "A", 1e-6, 1e4, offsetof(hb_db_part, sat_current_a), offsetof(part_edit, sat_current) },
	{ O_SATD, "--sat-drop", "%", 1e-3, 0.99, offsetof(hb_db_part, sat_drop), offsetof(part_edit, sat_drop) },
	{ O_RATED, "--rated", "A", 1e-6, 1e4, offsetof(hb_db_part, rated_current_a), offsetof(part_edit, rated) },
	{ O_DCR, "--dcr-max", "ohm", 1e-6, 1e6, offsetof(hb_db_part, dcr_max_ohm), offsetof(part_edit, dcr) },
	{ O_AE, "--ae", "m2", 1e-10, 1e-1, offsetof(hb_db_part, ae_m2), offsetof(part_edit, ae) },
	{ O_LE, "--le", "m", 1e-5, 10, offsetof(hb_db_part, le_m), offsetof(part_edit, le) },
	{ O_WINDOW, "--window", "m", 1e-5, 1, offsetof(hb_db_part, window_m), offsetof(part_edit, window) },
	{ O_MUI, "--mu-i", "", 1, 1e6, offsetof(hb_db_part, mu_i), offsetof(part_edit, mu_i) },
	{ O_BSAT, "--bsat", "T", 1e-3, 10, offsetof(hb_db_part, bsat_t), offsetof(part_edit, bsat) },
};

static double *spec_field(hb_db_part *p, const number_spec *spec)
{
	return (double *)((char *)p + spec->field);
}

static bool *spec_given(part_edit *e, const number_spec *spec)
{
	return (bool *)((char *)e + spec->given);
}

static bool spec_was_given(const part_edit *e, const number_spec *spec)
{
	return *(const bool *)((const char *)e + spec->given);
}

static double spec_value(const hb_db_part *p, const number_spec *spec)
{
	return *(const double *)((const char *)p + spec->field);
}

static const number_spec *number_spec_of(int opt)
{
	for (size_t i = 0; i < sizeof number_specs / sizeof number_specs[0]; i++)
		if (number_specs[i].opt == opt)
			return &number_specs[i];
	return NULL;
}

static int parse_level(const char *text, double *v, hb_db_level_kind *kind)
{
	char err[256];
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

/* "toroid:OD/ID/H", each a length. */
static int parse_core(const char *text, hb_db_part *p)
{
	static const char prefix[] = "toroid:";
	if (strncmp(text, prefix, sizeof prefix - 1) != 0) {
		hb_cli_error("--core '%s' unknown: accepted toroid:OD/ID/H, e.g. toroid:25mm/15mm/10mm "
			     "(other shapes: give --ae and --le)",
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

static int parse_spec_options(int argc, char **argv, part_edit *e, bool allow_json)
{
	static const struct option options[] = {
		{ "desc", required_argument, NULL, O_DESC },
		{ "maker", required_argument, NULL, O_MAKER },
		{ "nominal", required_argument, NULL, O_NOMINAL },
		{ "tol", required_argument, NULL, O_TOL },
		{ "freq", required_argument, NULL, O_FREQ },
		{ "level", required_argument, NULL, O_LEVEL },
		{ "sat-current", required_argument, NULL, O_SATI },
		{ "sat-drop", required_argument, NULL, O_SATD },
		{ "rated", required_argument, NULL, O_RATED },
		{ "dcr-max", required_argument, NULL, O_DCR },
		{ "turns", required_argument, NULL, O_TURNS },
		{ "core", required_argument, NULL, O_CORE },
		{ "ae", required_argument, NULL, O_AE },
		{ "le", required_argument, NULL, O_LE },
		{ "window", required_argument, NULL, O_WINDOW },
		{ "mu-i", required_argument, NULL, O_MUI },
		{ "bsat", required_argument, NULL, O_BSAT },
		{ "json", no_argument, NULL, O_JSON },
		{ "help", no_argument, NULL, O_HELP },
		{ NULL, 0, NULL, 0 },
	};
	hb_db_part *p = &e->p;
	optind = 1;
	opterr = 0;
	for (;;) {
		int c = getopt_long(argc, argv, "h", options, NULL);
		if (c == -1)
			break;
		int rc = HB_OK;
		long turns = 0;
		switch (c) {
		case O_DESC:
			snprintf(p->description, sizeof p->description, "%s", optarg);
			e->desc = true;
			break;
		case O_MAKER:
			snprintf(p->maker, sizeof p->maker, "%s", optarg);
			e->maker = true;
			break;
		case O_LEVEL:
			rc = parse_level(optarg, &p->test_level, &p->test_level_kind);
			e->level = true;
			break;
		case O_TURNS:
			rc = hb_opt_int("--turns", optarg, 1, 100000, &turns);
			p->turns = (int)turns;
			e->turns = true;
			break;
		case O_CORE:
			rc = parse_core(optarg, p);
			e->core = true;
			break;
		case O_JSON:
			if (!allow_json) {
				hb_cli_error("part: --json goes with list and show");
				return HB_EXIT_USAGE;
			}
			e->json = true;
			break;
		case O_HELP:
			part_usage(stdout);
			return -1;
		default: {
			const number_spec *spec = number_spec_of(c);
			if (spec) {
				rc = hb_opt_value(spec->name, optarg, spec->unit, spec->min, spec->max, spec_field(p, spec));
				*spec_given(e, spec) = true;
				break;
			}
			hb_cli_error("part %s: unknown option '%s' (try 'henrybench part --help')", argv[0],
				     argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
		}
		if (rc != HB_OK)
			return HB_EXIT_USAGE;
	}
	if (e->core && (e->ae || e->le)) {
		hb_cli_error("part: give either --core toroid:OD/ID/H or --ae/--le, not both");
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

/* Applies the given fields of e onto dst. */
static void merge(hb_db_part *dst, const part_edit *e)
{
	const hb_db_part *s = &e->p;
	if (e->desc)
		memcpy(dst->description, s->description, sizeof dst->description);
	if (e->maker)
		memcpy(dst->maker, s->maker, sizeof dst->maker);
	/* Order does not matter: each field has one option, and --core excludes --ae/--le. */
	for (size_t i = 0; i < sizeof number_specs / sizeof number_specs[0]; i++)
		if (spec_was_given(e, &number_specs[i]))
			*spec_field(dst, &number_specs[i]) = spec_value(s, &number_specs[i]);
	if (e->level) {
		dst->test_level = s->test_level;
		dst->test_level_kind = s->test_level_kind;
	}
	if (e->turns)
		dst->turns = s->turns;
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

static int part_write(int argc, char **argv, bool add)
{
	part_edit e;
	memset(&e, 0, sizeof e);
	hb_db_part_init(&e.p);
	int rc = parse_spec_options(argc, argv, &e, false);
	if (rc < 0)
		return HB_EXIT_OK;
	if (rc != HB_EXIT_OK)
		return rc;
	if (optind != argc - 1) {
		hb_cli_error("part %s needs exactly one PARTNO (try 'henrybench part --help')", argv[0]);
		return HB_EXIT_USAGE;
	}
	const char *pn = argv[optind];
	if (!*pn || strlen(pn) >= HB_DB_ID_LEN) {
		hb_cli_error("part number '%s': accepted 1 to %d characters", pn, HB_DB_ID_LEN - 1);
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
	if (e.core && toroid_effective(&e.p) != HB_OK)
		return HB_EXIT_USAGE;

	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
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
	if (hb_db_part_put(db, &stored) != HB_OK) {
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
	int rc = parse_spec_options(argc, argv, &e, true);
	if (rc < 0)
		return HB_EXIT_OK;
	if (rc != HB_EXIT_OK)
		return rc;
	if (optind != argc) {
		hb_cli_error("part list takes no PARTNO (use 'henrybench part show PARTNO')");
		return HB_EXIT_USAGE;
	}
	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
	hb_db_part *parts = NULL;
	size_t n = 0;
	if (hb_db_part_list(db, &parts, &n) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	hb_db_close(db);
	if (e.json) {
		json_t *arr = json_array();
		for (size_t i = 0; i < n; i++)
			json_array_append_new(arr, hb_json_part(&parts[i]));
		hb_db_parts_free(parts);
		return hb_print_json(arr) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	printf("%-24s %-12s %-8s %-12s %-16s %s\n", "part", "nominal", "tol", "test freq", "maker", "description");
	for (size_t i = 0; i < n; i++) {
		const hb_db_part *p = &parts[i];
		char a[32], b[32], c[32];
		printf("%-24s %-12s %-8s %-12s %-16s %s\n", p->part_number, hb_si_or_dash(a, sizeof a, p->nominal_h, "H"),
		       pct(b, sizeof b, p->tolerance), hb_si_or_dash(c, sizeof c, p->test_freq_hz, "Hz"), p->maker,
		       p->description);
	}
	hb_db_parts_free(parts);
	return HB_EXIT_OK;
}

static void show_line(const char *label, const char *value)
{
	printf("  %-22s %s\n", label, value);
}

static int part_show(int argc, char **argv)
{
	part_edit e;
	memset(&e, 0, sizeof e);
	int rc = parse_spec_options(argc, argv, &e, true);
	if (rc < 0)
		return HB_EXIT_OK;
	if (rc != HB_EXIT_OK)
		return rc;
	if (optind != argc - 1) {
		hb_cli_error("part show needs exactly one PARTNO");
		return HB_EXIT_USAGE;
	}
	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
	hb_db_part p;
	int status = hb_db_part_get(db, argv[optind], &p);
	if (status != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return status == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	hb_db_close(db);
	if (e.json)
		return hb_print_json(hb_json_part(&p)) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	char a[64], b[64], c[160];
	printf("part %s\n", p.part_number);
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
	show_line("created", p.created);
	show_line("updated", p.updated);
	return HB_EXIT_OK;
}

int hb_cmd_part(int argc, char **argv)
{
	if (argc < 2) {
		part_usage(stderr);
		return HB_EXIT_USAGE;
	}
	const char *sub = argv[1];
	if (strcmp(sub, "--help") == 0 || strcmp(sub, "-h") == 0 || strcmp(sub, "help") == 0) {
		part_usage(stdout);
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
	hb_cli_error("part: unknown subcommand '%s' (accepted: add, list, show, edit)", sub);
	return HB_EXIT_USAGE;
}
