/* src/cli/cmd_plan.c - command `plan`: the ISO 2859-1 single sampling plan for a lot */
#include <stddef.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "cli.h"
#include "../quality/quality.h"

typedef struct plan_args {
	long lot;
	double aql;
	hb_insp_level level;
	hb_severity severity;
	bool json;
} plan_args;

static const hb_opt plan_table[] = {
	{ .name = "lot-size", .kind = HB_OPT_LONG, .arg = "N", .min = 2, .max = 1000000000L,
	  .off = offsetof(plan_args, lot), .help = "units in the lot (required)" },
	{ .name = "aql", .kind = HB_OPT_CUSTOM, .arg = "AQL", .unit = "", .parse = hb_opt_take_aql,
	  .off = offsetof(plan_args, aql),
	  .help = "acceptance quality limit, % nonconforming (or nonconformities per 100 units above 10; required)" },
	{ .name = "level", .kind = HB_OPT_ENUM, .words = hb_opt_level_words, .match = hb_opt_match_level,
	  .off = offsetof(plan_args, level), .help = "inspection level (default II)" },
	{ .name = "severity", .kind = HB_OPT_ENUM, .words = hb_opt_severity_words, .match = hb_opt_match_severity,
	  .off = offsetof(plan_args, severity), .help = "inspection severity (default normal)" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(plan_args, json), .help = "one JSON object on stdout" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_plan = {
	.name = "plan",
	.usage = "--lot-size N --aql AQL [--level LEVEL] [--severity SEVERITY] [--json]",
	.about = "\nChooses the single sampling plan of ISO 2859-1 (same tables as ANSI/ASQ Z1.4)\n"
		 "for one lot: code letter (Table 1), sample size and acceptance / rejection\n"
		 "numbers (Tables 2-A, 2-B, 2-C), following the arrows of the table. When the\n"
		 "sample would reach the lot size, every unit is inspected. Switching between\n"
		 "normal, tightened and reduced inspection is left to you (docs/sampling.md).\n",
	.opts = plan_table,
	.max_operands = 0,
	.epilog = "AQL series: 0.010 0.015 0.025 0.040 0.065 0.10 0.15 0.25 0.40 0.65\n"
		  "            1.0 1.5 2.5 4.0 6.5 10 15 25 40 65 100 150 250 400 650 1000\n",
};

static int print_json(const hb_sampling_plan *p)
{
	/* The same writer as every other command's JSON. */
	return hb_print_json(hb_sampling_plan_json(p));
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
	plan_args a = { .lot = -1, .aql = NAN, .level = HB_LEVEL_II, .severity = HB_SEVERITY_NORMAL, .json = false };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_plan, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	long lot = a.lot;
	double aql = a.aql;
	hb_insp_level level = a.level;
	hb_severity severity = a.severity;
	bool json = a.json;
	char series[200];
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
		hb_cli_stdout_error("plan");
		return HB_EXIT_RUNTIME;
	}
	return HB_EXIT_OK;
}
