/* src/cli/cmd_export.c - commands `export` (sweeps as CSV or JSON) and `import` (a meter's own CSV log as a stored sweep) */
#include <ctype.h>
#include <errno.h>
#include <getopt.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
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

static void export_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench export (SWEEP_ID... | --part P | --lot L [--part P]) (--csv | --json) [--out FILE]\n\n"
		"Writes stored sweeps for spreadsheets and scripts, SI units named in every column.\n"
		"  --csv         the points as one RFC 4180 table, one header row\n"
		"  --json        sweeps with settings, points, latest fit and verdicts, and the parts\n"
		"  --part P      every sweep of part P (with --lot: of that lot of P)\n"
		"  --lot L       every sweep of lot L\n"
		"  --out FILE    write FILE instead of standard output\n");
}

int hb_cmd_export(int argc, char **argv)
{
	static const struct option options[] = {
		{ "part", required_argument, NULL, 'p' }, { "lot", required_argument, NULL, 'l' },
		{ "csv", no_argument, NULL, 'c' },        { "json", no_argument, NULL, 'j' },
		{ "out", required_argument, NULL, 'o' },  { "help", no_argument, NULL, 'h' },
		{ NULL, 0, NULL, 0 },
	};
	const char *part = NULL, *lot = NULL, *out_path = NULL;
	bool csv = false, json = false;
	optind = 1;
	opterr = 0;
	int c;
	while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
		switch (c) {
		case 'p': part = optarg; break;
		case 'l': lot = optarg; break;
		case 'c': csv = true; break;
		case 'j': json = true; break;
		case 'o': out_path = optarg; break;
		case 'h': export_usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("export: unknown or incomplete option '%s' (try 'henrybench export --help')",
				     argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (csv == json) {
		hb_cli_error("export: choose one of --csv or --json");
		return HB_EXIT_USAGE;
	}
	size_t nids = (size_t)(argc - optind);
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
			if (hb_cli_parse_sweep_id(argv[optind + (int)i], &id) != HB_OK) {
				free(ids);
				return HB_EXIT_USAGE;
			}
			ids[n++] = id;
		}
	}
	hb_db *db = NULL;
	int exit_code = HB_EXIT_RUNTIME;
	FILE *out = NULL;
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("%s", db ? hb_db_errmsg(db) : "out of memory");
		goto done;
	}
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
	out = out_path ? fopen(out_path, "w") : stdout;
	if (!out) {
		hb_cli_error("cannot write %s: %s", out_path, strerror(errno));
		goto done;
	}
	char err[300] = "";
	int rc = csv ? hb_export_csv(db, ids, n, out, err, sizeof err) : hb_export_json(db, ids, n, out, err, sizeof err);
	if (out_path) {
		if (fclose(out) != 0 && rc == HB_OK) {
			rc = HB_ERR_IO;
			snprintf(err, sizeof err, "cannot write %s: %s", out_path, strerror(errno));
		}
	} else if (fflush(stdout) != 0 && rc == HB_OK) {
		rc = HB_ERR_IO;
		snprintf(err, sizeof err, "write to standard output failed");
	}
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
	free(ids);
	hb_db_close(db);
	return exit_code;
}

static void import_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench import FILE.csv --part P --unit SERIAL [--lot L] [--kind bias|frequency]\n"
		"                         [--columns ROLE=COLUMN,...] [--freq F] [--note TEXT] [--no-fit]\n\n"
		"Stores a sweep a meter logged on its own as one complete sweep (station \"import\"),\n"
		"then fits and judges it. Comma, semicolon or tab delimited (detected), one header row.\n"
		"Columns are found by header name (current/bias/I, inductance/L/Ls, frequency/f,\n"
		"resistance/R/Rs/ESR, supply/voltage/V, bias_measured, direction); a unit in the header,\n"
		"\"L (uH)\" or \"I[mA]\", scales bare numbers; cells may carry their own unit (\"2.5A\",\n"
		"\"100uH\"). A malformed row is reported by line and column and nothing is stored.\n\n"
		"  --part P            stored part (see 'henrybench part add')\n"
		"  --unit SERIAL       unit serial number (created if new)\n"
		"  --lot L             lot of the unit\n"
		"  --kind K            bias or frequency (default: from the columns)\n"
		"  --columns MAP       e.g. current=A,inductance=L or by 1-based number: inductance=3\n"
		"  --freq F            test frequency of a bias sweep, e.g. 100kHz\n"
		"  --note TEXT         added to the sweep's note\n"
		"  --no-fit            store only\n");
}

int hb_cmd_import(int argc, char **argv)
{
	static const struct option options[] = {
		{ "part", required_argument, NULL, 'p' },  { "unit", required_argument, NULL, 'u' },
		{ "lot", required_argument, NULL, 'l' },   { "kind", required_argument, NULL, 'k' },
		{ "columns", required_argument, NULL, 'c' }, { "freq", required_argument, NULL, 'f' },
		{ "note", required_argument, NULL, 'n' },  { "no-fit", no_argument, NULL, 'F' },
		{ "help", no_argument, NULL, 'h' },        { NULL, 0, NULL, 0 },
	};
	hb_import_options opt;
	hb_import_options_init(&opt);
	optind = 1;
	opterr = 0;
	int c;
	while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
		switch (c) {
		case 'p': opt.part_number = optarg; break;
		case 'u': opt.serial = optarg; break;
		case 'l': opt.lot_code = optarg; break;
		case 'c': opt.columns = optarg; break;
		case 'n': opt.note = optarg; break;
		case 'F': opt.analyse = false; break;
		case 'k': {
			hb_db_sweep_kind k;
			if (hb_db_sweep_kind_parse(optarg, &k) != HB_OK) {
				hb_cli_error("--kind '%s' unknown (accepted: bias, frequency)", optarg);
				return HB_EXIT_USAGE;
			}
			opt.kind = (int)k;
			break;
		}
		case 'f':
			if (hb_opt_value("--freq", optarg, "Hz", 1e-3, 1e10, &opt.test_freq_hz) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 'h': import_usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("import: unknown or incomplete option '%s' (try 'henrybench import --help')",
				     argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (optind != argc - 1) {
		hb_cli_error("import needs one FILE.csv (try 'henrybench import --help')");
		return HB_EXIT_USAGE;
	}
	if (!opt.part_number || !opt.serial) {
		hb_cli_error("import needs --part P and --unit SERIAL");
		return HB_EXIT_USAGE;
	}
	const char *path = argv[optind];
	hb_db *db = NULL;
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("%s", db ? hb_db_errmsg(db) : "out of memory");
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	hb_import_result res;
	char err[600] = "";
	int rc = hb_import_csv(db, path, &opt, &res, err, sizeof err);
	int exit_code = HB_EXIT_OK;
	if (rc != HB_OK) {
		hb_cli_error("import: %s", err[0] ? err : hb_status_name(rc));
		exit_code = rc == HB_ERR_ARG || rc == HB_ERR_DATA || rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
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
