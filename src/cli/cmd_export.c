/* src/cli/cmd_export.c - commands `export` (sweeps as CSV or JSON) and `import` (a meter's own CSV log as a stored sweep) */
#include <ctype.h>
#include <errno.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <time.h>


#include "../io/io.h"
#include "cli.h"

/* ---------------- commands ---------------- */

static int cmp_id(const void *a, const void *b)
{
	int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
	return x < y ? -1 : x > y;
}

typedef struct export_args {
	const char *part, *lot, *out_path;
	bool csv, json;
} export_args;

static const hb_opt export_table[] = {
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(export_args, part),
	  .help = "every sweep of part P (with --lot: of that lot of P)" },
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "L", .off = offsetof(export_args, lot),
	  .help = "every sweep of lot L" },
	{ .name = "csv", .kind = HB_OPT_FLAG, .off = offsetof(export_args, csv),
	  .help = "the points as one RFC 4180 table, one header row" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(export_args, json),
	  .help = "sweeps with settings, points, latest fit and verdicts, and the parts" },
	{ .name = "out", .kind = HB_OPT_PATH, .arg = "FILE", .off = offsetof(export_args, out_path),
	  .help = "write FILE instead of standard output" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_export = {
	.name = "export",
	.usage = "(SWEEP_ID... | --part P | --lot L [--part P]) (--csv | --json) [--out FILE]",
	.about = "\nWrites stored sweeps for spreadsheets and scripts, SI units named in every column.\n",
	.opts = export_table,
	.max_operands = -1,
};

int hb_cmd_export(int argc, char **argv)
{
	export_args a = { 0 };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_export, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	const char *part = a.part, *lot = a.lot, *out_path = a.out_path;
	bool csv = a.csv, json = a.json;
	int first = r.first;
	if (csv == json) {
		hb_cli_error("export: choose one of --csv or --json");
		return HB_EXIT_USAGE;
	}
	size_t nids = (size_t)(argc - first);
	if ((nids > 0) == (part || lot)) {
		hb_cli_error("export needs SWEEP_IDs or --part / --lot (one of the two; try 'henrybench export --help')");
		return HB_EXIT_USAGE;
	}
	int64_t *ids = NULL;
	size_t n = 0;
	if (nids > 0) {
		ids = calloc(nids, sizeof *ids);
		if (!ids)
			return HB_EXIT_RUNTIME;
		for (size_t i = 0; i < nids; i++) {
			long long id;
			if (hb_cli_parse_sweep_id(argv[first + (int)i], &id) != HB_OK) {
				free(ids);
				return HB_EXIT_USAGE;
			}
			ids[n++] = id;
		}
	}
	hb_db *db = NULL;
	int exit_code = HB_EXIT_RUNTIME;
	hb_out *out = NULL;
	if (!(db = hb_cli_open_store_read(&exit_code)))
		goto done;
	if (!ids) {
		hb_db_sweep_filter f;
		hb_db_sweep_filter_init(&f);
		f.part_number = part;
		f.lot_code = lot;
		hb_db_sweep *list = NULL;
		if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK) {
			hb_cli_error("%s", hb_db_errmsg(db));
			goto done;
		}
		if (n == 0) {
			hb_cli_error("export: no stored sweep of %s%s%s%s", part ? "part " : "", part ? part : "",
				     part && lot ? ", " : "", lot ? lot : "");
			hb_db_sweeps_free(list);
			goto done;
		}
		ids = calloc(n, sizeof *ids);
		for (size_t i = 0; ids && i < n; i++)
			ids[i] = list[i].id;
		hb_db_sweeps_free(list);
		if (!ids)
			goto done;
		qsort(ids, n, sizeof *ids, cmp_id);
	}
	char err[300] = "";
	int rc = hb_out_open(out_path ? out_path : "-", &out, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("export --out: %s", err);
		if (rc == HB_ERR_ARG)
			exit_code = HB_EXIT_USAGE;
		goto done;
	}
	FILE *f = hb_out_stream(out);
	rc = csv ? hb_export_csv(db, ids, n, f, err, sizeof err) : hb_export_json(db, ids, n, f, err, sizeof err);
	hb_out *o = out;
	out = NULL;
	if (rc == HB_OK)
		rc = hb_out_commit(o, err, sizeof err);
	else
		hb_out_abort(o);
	if (rc != HB_OK) {
		hb_cli_error("export: %s", err[0] ? err : hb_status_name(rc));
		if (rc == HB_ERR_NOTFOUND)
			exit_code = HB_EXIT_USAGE;
		goto done;
	}
	if (out_path)
		fprintf(stderr, "exported %zu sweep%s to %s\n", n, n == 1 ? "" : "s", out_path);
	exit_code = HB_EXIT_OK;
done:
	hb_out_abort(out);
	free(ids);
	hb_db_close(db);
	return exit_code;
}

typedef struct import_args {
	hb_import_options opt;
	bool no_fit;
} import_args;

static const hb_opt import_table[] = {
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(import_args, opt.part_number),
	  .help = "stored part (see 'henrybench part add'; required)" },
	{ .name = "unit", .kind = HB_OPT_TEXT, .arg = "SERIAL", .off = offsetof(import_args, opt.serial),
	  .help = "unit serial number (created if new; required)" },
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "L", .off = offsetof(import_args, opt.lot_code),
	  .help = "lot of the unit" },
	{ .name = "kind", .kind = HB_OPT_ENUM, .words = hb_opt_kind_words, .match = hb_opt_match_kind,
	  .off = offsetof(import_args, opt.kind), .help = "kind of sweep (default: from the columns)" },
	{ .name = "columns", .kind = HB_OPT_TEXT, .arg = "MAP", .off = offsetof(import_args, opt.columns),
	  .help = "e.g. current=A,inductance=L or by 1-based number: inductance=3" },
	{ .name = "freq", .kind = HB_OPT_VALUE, .arg = "F", .unit = "Hz", .min = 1e-3, .max = 1e10,
	  .off = offsetof(import_args, opt.test_freq_hz), .help = "test frequency of a bias sweep, e.g. 100kHz" },
	{ .name = "note", .kind = HB_OPT_TEXT, .arg = "TEXT", .off = offsetof(import_args, opt.note),
	  .help = "added to the sweep's note" },
	{ .name = "no-fit", .kind = HB_OPT_FLAG, .off = offsetof(import_args, no_fit), .help = "store only" },
	{ .name = "skip", .kind = HB_OPT_INT, .arg = "N", .min = 0, .max = 1000000, .off = offsetof(import_args, opt.skip_lines),
	  .help = "lines above the header (default: the first line that reads as a header)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_import = {
	.name = "import",
	.usage = "FILE.csv --part P --unit SERIAL [--lot L] [--kind bias|frequency]\n"
		 "                         [--columns ROLE=COLUMN,...] [--freq F] [--skip N] [--note TEXT] [--no-fit]",
	.about = "\nStores a sweep a meter logged on its own as one complete sweep (station \"import\"),\n"
		 "then fits and judges it. Comma, semicolon or tab delimited (detected), one header row.\n"
		 "Columns are found by header name (current/bias/I, inductance/L/Ls, frequency/f,\n"
		 "resistance/R/Rs/ESR, supply/voltage/V, bias_measured, direction); a unit in the header,\n"
		 "\"L (uH)\" or \"I[mA]\", scales bare numbers; cells may carry their own unit (\"2.5A\",\n"
		 "\"100uH\"). A malformed row is reported by line and column and nothing is stored.\n"
		 "Metadata lines above the header are skipped (said on stderr); UTF-8 with or without a\n"
		 "BOM and UTF-16 are read. A bias sweep of a part with a spec frequency needs a frequency\n"
		 "column or --freq: the L0 check holds only at that frequency.\n",
	.opts = import_table,
	.max_operands = -1,
};

int hb_cmd_import(int argc, char **argv)
{
	import_args a;
	hb_import_options_init(&a.opt);
	a.no_fit = false;
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_import, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	hb_import_options opt = a.opt;
	if (a.no_fit)
		opt.analyse = false;
	if (r.first != argc - 1) {
		hb_cli_error("import needs one FILE.csv (try 'henrybench import --help')");
		return HB_EXIT_USAGE;
	}
	if (!opt.part_number || !opt.serial) {
		hb_cli_error("import needs --part P and --unit SERIAL");
		return HB_EXIT_USAGE;
	}
	const char *path = argv[r.first];
	{
		/* the stored note is "imported from FILE; NOTE": checked whole
		 * against its limit here rather than cut in the store */
		const char *base = strrchr(path, '/');
		base = base ? base + 1 : path;
		size_t len = strlen("imported from ") + strlen(base) + (opt.note && *opt.note ? 2 + strlen(opt.note) : 0);
		char why[200];
		if (len > HB_TEXT_NOTE_MAX) {
			hb_cli_error("note: %zu bytes with 'imported from' and the file name, limit %d", len,
				     HB_TEXT_NOTE_MAX);
			return HB_EXIT_USAGE;
		}
		if (hb_text_check("file name", base, 0, why, sizeof why) != HB_OK) {
			hb_cli_error("import: %s (it goes into the sweep's note)", why);
			return HB_EXIT_USAGE;
		}
	}
	/* The part must be stored already: a store that is not there is a
	 * mistyped --db, not a new empty one. */
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	hb_import_result res;
	char err[600] = "";
	int rc = hb_import_csv(db, path, &opt, &res, err, sizeof err);
	int exit_code = HB_EXIT_OK;
	if (rc != HB_OK) {
		hb_cli_error("import: %s", err[0] ? err : hb_status_name(rc));
		exit_code = rc == HB_ERR_ARG || rc == HB_ERR_DATA || rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if (res.header_line > 1)
		fprintf(stderr, "henrybench: import: header on line %d of %s; the %d line%s above it skipped\n", res.header_line,
			path, res.header_line - 1, res.header_line == 2 ? "" : "s");
	if (res.encoding && strncmp(res.encoding, "UTF-16", 6) == 0)
		fprintf(stderr, "henrybench: import: %s read as %s, converted to UTF-8\n", path, res.encoding);
	printf("imported %s: %zu points as %s sweep %lld of %s unit %s (delimiter '%s')\n", path, res.n_points,
	       hb_db_sweep_kind_name(res.kind), (long long)res.sweep_id, opt.part_number, opt.serial,
	       res.delimiter == '\t' ? "\\t" : res.delimiter == ';' ? ";" : ",");
	printf("columns:");
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		if (res.column[r] >= 0)
			printf(" %s=%d", hb_import_role_name((hb_import_role)r), res.column[r] + 1);
	printf("\n");
	if (opt.analyse) {
		hb_db_fit *fit = calloc(1, sizeof *fit);
		if (fit) {
			hb_db_fit_init(fit);
			if (hb_db_fit_get_latest(db, res.sweep_id, NULL, fit) == HB_OK)
				printf("fitted: fit %lld (%s); see 'henrybench show %lld' or 'henrybench report %lld'\n",
				       (long long)fit->id, fit->model, (long long)res.sweep_id, (long long)res.sweep_id);
			else
				printf("not fitted (too few usable points?); the points are stored\n");
			free(fit);
		}
	}
out:
	hb_db_close(db);
	return exit_code;
}
