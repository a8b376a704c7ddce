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
	bool severity_given, irregular;
	const char *part, *supplier;
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
	  .off = offsetof(plan_args, severity), .given = HB_OPT_GIVEN(plan_args, severity_given),
	  .help = "inspection severity (default normal, or the lot stream's with --part)" },
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(plan_args, part),
	  .help = "stored part: the switching rules choose the severity from its lot stream" },
	{ .name = "supplier", .kind = HB_OPT_TEXT, .arg = "S", .off = offsetof(plan_args, supplier),
	  .help = "the supplier whose lot stream counts (with --part; default: lots naming none)" },
	{ .name = "irregular", .kind = HB_OPT_FLAG, .off = offsetof(plan_args, irregular),
	  .help = "production of the next lot is irregular or delayed (no reduced inspection)" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(plan_args, json), .help = "one JSON object on stdout" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_plan = {
	.name = "plan",
	.usage = "--lot-size N --aql AQL [--level LEVEL] [--severity SEVERITY | --part P [--supplier S]] [--json]",
	.about = "\nChooses the single sampling plan for one lot from MIL-STD-105E Tables I, II-A,\n"
		 "II-B and II-C (the same plans as ISO 2859-1:1989 and ANSI/ASQ Z1.4): code letter,\n"
		 "sample size and acceptance / rejection numbers, following the arrows of the\n"
		 "table. When the sample would reach the lot size, every unit is inspected. The\n"
		 "reduced table has Re up to Ac + 3: Ac < d < Re accepts the lot but reinstates\n"
		 "normal inspection. With --part (and --supplier) the severity comes from the\n"
		 "switching rules applied to that lot stream (ISO 2859-1 clause 9), and why is\n"
		 "shown. Cells the verified tables leave unsettled are flagged (docs/sampling.md).\n",
	.opts = plan_table,
	.max_operands = 0,
	.epilog = "AQL series: 0.010 0.015 0.025 0.040 0.065 0.10 0.15 0.25 0.40 0.65\n"
		  "            1.0 1.5 2.5 4.0 6.5 10 15 25 40 65 100 150 250 400 650 1000\n",
};

static int print_json(const hb_sampling_plan *p, json_t *stream)
{
	/* The same writer as every other command's JSON. */
	json_t *j = hb_sampling_plan_json(p);
	if (j && stream)
		json_object_set_new(j, "lot_stream", stream);
	else
		json_decref(stream);
	return hb_print_json(j);
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
	hb_stream_print_reinstate_rule(stdout, p);
	if (p->uncertain)
		printf("UNCERTAIN cell    %s\n", p->uncertain_note);
}

/* The lot stream of --part/--supplier: its state, and the severity the next lot gets. */
static int stream_state(const plan_args *a, hb_stream *s, hb_switch_next *next)
{
	hb_db *db = NULL;
	hb_db_part part;
	int rc = hb_db_open_as(hb_global.db_path, HB_DB_OPEN_READ, &db);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", db ? hb_db_errmsg(db) : "out of memory");
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	rc = hb_db_part_get(db, a->part, &part);
	if (rc == HB_ERR_NOTFOUND) {
		hb_cli_error("plan: no part '%s' in %s (see 'henrybench part list')", a->part, hb_db_path(db));
		hb_db_close(db);
		return HB_EXIT_USAGE;
	}
	if (rc == HB_OK)
		rc = hb_stream_load(db, &part, a->supplier ? a->supplier : "", s);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	hb_db_close(db);
	hb_stream_next(s, a->irregular, next);
	return HB_EXIT_OK;
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

	if ((a.supplier || a.irregular) && !a.part) {
		hb_cli_error("plan: --supplier and --irregular need --part P (the lot stream they name)");
		return HB_EXIT_USAGE;
	}
	hb_stream stream;
	hb_switch_next next;
	memset(&stream, 0, sizeof stream);
	if (a.part) {
		int ec = stream_state(&a, &stream, &next);
		if (ec != HB_EXIT_OK)
			return ec;
		if (next.discontinued) {
			hb_stream_print_state(stderr, &stream, &next);
			hb_cli_error("plan: the lot stream of %s is discontinued: no plan until the supplier's corrective "
				     "action is recorded ('henrybench stream %s --resume-sampling NOTE')",
				     a.part, a.part);
			hb_stream_free(&stream);
			return HB_EXIT_RUNTIME;
		}
		if (!a.severity_given)
			severity = next.severity;
	}

	hb_sampling_plan p;
	char err[256];
	if (hb_iso2859_plan(lot, aql, level, severity, &p, err, sizeof err) != HB_OK) {
		hb_cli_error("plan: %s", err);
		hb_stream_free(&stream);
		return HB_EXIT_USAGE;
	}
	if (json) {
		json_t *sj = a.part ? hb_stream_json(&stream, &next) : NULL;
		if (sj && a.severity_given && severity != next.severity)
			json_object_set_new(sj, "overridden_by", json_string(hb_iso2859_severity_name(severity)));
		hb_stream_free(&stream);
		if (print_json(&p, sj) != HB_OK) {
			hb_cli_error("plan: cannot write the JSON output");
			return HB_EXIT_RUNTIME;
		}
	} else {
		if (a.part) {
			hb_stream_print_state(stdout, &stream, &next);
			if (a.severity_given && severity != next.severity)
				printf("  --severity %s overrides the rules' %s for this plan\n",
				       hb_iso2859_severity_name(severity), hb_iso2859_severity_name(next.severity));
			hb_stream_free(&stream);
		}
		print_text(&p);
	}
	if (fflush(stdout) != 0) {
		hb_cli_stdout_error("plan");
		return HB_EXIT_RUNTIME;
	}
	return HB_EXIT_OK;
}
