/* src/cli/cmd_plan.c - command `plan`: the ISO 2859-1 single sampling plan for a lot */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "cli.h"
#include "../quality/quality.h"

static void plan_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench plan --lot-size N --aql AQL [--level LEVEL] [--severity SEVERITY] [--json]\n\n"
		"Chooses the single sampling plan of ISO 2859-1 (same tables as ANSI/ASQ Z1.4)\n"
		"for one lot: code letter (Table 1), sample size and acceptance / rejection\n"
		"numbers (Tables 2-A, 2-B, 2-C), following the arrows of the table. When the\n"
		"sample would reach the lot size, every unit is inspected. Switching between\n"
		"normal, tightened and reduced inspection is left to you (docs/sampling.md).\n\n"
		"options:\n"
		"  --lot-size N         units in the lot (2 to 1000000000)\n"
		"  --aql AQL            acceptance quality limit, %% nonconforming (or\n"
		"                       nonconformities per 100 units above 10), one of\n"
		"                       0.010 0.015 0.025 0.040 0.065 0.10 0.15 0.25 0.40 0.65\n"
		"                       1.0 1.5 2.5 4.0 6.5 10 15 25 40 65 100 150 250 400 650 1000\n"
		"  --level LEVEL        S-1, S-2, S-3, S-4, I, II (default) or III\n"
		"  --severity SEVERITY  normal (default), tightened or reduced\n"
		"  --json               one JSON object on stdout\n"
		"  --help               this text\n");
}

static int print_json(const hb_sampling_plan *p)
{
	json_t *o = json_object();
	if (!o)
		return HB_ERR_NOMEM;
	char letter[2] = { p->letter, 0 }, initial[2] = { p->initial_letter, 0 };
	json_object_set_new(o, "standard", json_string("ISO 2859-1 single sampling"));
	json_object_set_new(o, "lot_size", json_integer(p->lot_size));
	json_object_set_new(o, "aql", json_real(p->aql));
	json_object_set_new(o, "level", json_string(hb_iso2859_level_name(p->level)));
	json_object_set_new(o, "severity", json_string(hb_iso2859_severity_name(p->severity)));
	json_object_set_new(o, "initial_code_letter", json_string(initial));
	json_object_set_new(o, "code_letter", json_string(letter));
	json_object_set_new(o, "arrow", json_string(p->arrow > 0 ? "down" : p->arrow < 0 ? "up" : "none"));
	json_object_set_new(o, "table_sample_size", json_integer(p->table_sample_size));
	json_object_set_new(o, "sample_size", json_integer(p->sample_size));
	json_object_set_new(o, "full_inspection", json_boolean(p->full_inspection));
	json_object_set_new(o, "ac", json_integer(p->ac));
	json_object_set_new(o, "re", json_integer(p->re));
	int rc = json_dumpf(o, stdout, JSON_INDENT(2) | JSON_REAL_PRECISION(6)) == 0 ? HB_OK : HB_ERR_IO;
	json_decref(o);
	if (rc == HB_OK && fputc('\n', stdout) == EOF)
		rc = HB_ERR_IO;
	return rc;
}

static void print_text(const hb_sampling_plan *p)
{
	printf("lot size          %ld\n", p->lot_size);
	char aql[16];
	printf("AQL               %s\n", hb_iso2859_aql_format(p->aql, aql, sizeof aql));
	printf("inspection level  %s, %s inspection\n", hb_iso2859_level_name(p->level),
	       hb_iso2859_severity_name(p->severity));
	if (p->arrow)
		printf("code letter       %c (Table 1: %c; arrow %s to %c)\n", p->letter, p->initial_letter,
		       p->arrow > 0 ? "down" : "up", p->letter);
	else
		printf("code letter       %c\n", p->letter);
	if (p->full_inspection)
		printf("sample size       %ld (100 %% inspection: the table's %ld reaches the lot)\n",
		       p->sample_size, p->table_sample_size);
	else
		printf("sample size       %ld\n", p->sample_size);
	printf("acceptance Ac     %d  (accept the lot with at most %d nonconforming in the sample)\n", p->ac, p->ac);
	printf("rejection Re      %d  (reject it at %d or more; inspection may stop there)\n", p->re, p->re);
}

int hb_cmd_plan(int argc, char **argv)
{
	static const struct option options[] = {
		{ "lot-size", required_argument, NULL, 'n' },
		{ "aql", required_argument, NULL, 'a' },
		{ "level", required_argument, NULL, 'l' },
		{ "severity", required_argument, NULL, 's' },
		{ "json", no_argument, NULL, 'j' },
		{ "help", no_argument, NULL, 'h' },
		{ NULL, 0, NULL, 0 },
	};
	long lot = -1;
	double aql = NAN;
	hb_insp_level level = HB_LEVEL_II;
	hb_severity severity = HB_SEVERITY_NORMAL;
	bool json = false;
	char series[200];

	optind = 1;
	opterr = 0;
	for (;;) {
		int c = getopt_long(argc, argv, "h", options, NULL);
		if (c == -1)
			break;
		switch (c) {
		case 'n':
			if (hb_opt_int("--lot-size", optarg, 2, 1000000000L, &lot) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 'a':
			if (hb_opt_value("--aql", optarg, "", -INFINITY, INFINITY, &aql) != HB_OK)
				return HB_EXIT_USAGE;
			if (hb_iso2859_aql_index(aql) < 0) {
				hb_cli_error("--aql %s is not in the ISO 2859-1 series (accepted: %s)", optarg,
					     hb_iso2859_aql_series_text(series, sizeof series));
				return HB_EXIT_USAGE;
			}
			break;
		case 'l':
			if (hb_iso2859_parse_level(optarg, &level) != HB_OK) {
				hb_cli_error("--level '%s' unknown (accepted: S-1, S-2, S-3, S-4, I, II, III)", optarg);
				return HB_EXIT_USAGE;
			}
			break;
		case 's':
			if (hb_iso2859_parse_severity(optarg, &severity) != HB_OK) {
				hb_cli_error("--severity '%s' unknown (accepted: normal, tightened, reduced)", optarg);
				return HB_EXIT_USAGE;
			}
			break;
		case 'j':
			json = true;
			break;
		case 'h':
			plan_usage(stdout);
			return HB_EXIT_OK;
		default:
			hb_cli_error("plan: unknown or incomplete option '%s' (try 'henrybench plan --help')", argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (optind < argc) {
		hb_cli_error("plan: unexpected argument '%s' (try 'henrybench plan --help')", argv[optind]);
		return HB_EXIT_USAGE;
	}
	if (lot < 0) {
		hb_cli_error("plan: --lot-size N is required (2 or more units)");
		return HB_EXIT_USAGE;
	}
	if (isnan(aql)) {
		hb_cli_error("plan: --aql is required (accepted: %s)", hb_iso2859_aql_series_text(series, sizeof series));
		return HB_EXIT_USAGE;
	}

	hb_sampling_plan p;
	char err[256];
	if (hb_iso2859_plan(lot, aql, level, severity, &p, err, sizeof err) != HB_OK) {
		hb_cli_error("plan: %s", err);
		return HB_EXIT_USAGE;
	}
	if (json) {
		if (print_json(&p) != HB_OK) {
			hb_cli_error("plan: cannot write the JSON output");
			return HB_EXIT_RUNTIME;
		}
	} else {
		print_text(&p);
	}
	if (fflush(stdout) != 0) {
		hb_cli_error("plan: cannot write to standard output");
		return HB_EXIT_RUNTIME;
	}
	return HB_EXIT_OK;
}
