/* src/cli/cmd_sweep.c - the `sweep` (L against DC bias) and `fsweep` (L against frequency) commands */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <unistd.h>

#include <jansson.h>

#include "../quality/quality.h"
#include "cli.h"
#include "../bench/bench.h"
#include "sweep_opts.h"

typedef struct sweep_args {
	const char *part, *unit, *lcr, *supply, *note, *lot;
	hb_sweep_plan plan;
	hb_sweep_opts opts;
	bool from_given, step_given;
	double step;
	bool yes, dry_run, json, no_fit, dcr_meter;
} sweep_args;

static const char *const circuit_words[] = { "series", "parallel", NULL };
static const int circuit_codes[] = { HB_EQUIV_SERIES, HB_EQUIV_PARALLEL };
static const char *const pair_words[] = { "LR", "LQ", "LD", "ZTH", NULL };

/* The meter's pair in either case ("lr" as well as "LR"). */
static int match_pair(const char *text, int *code)
{
	static const int codes[] = { HB_PAIR_L_R, HB_PAIR_L_Q, HB_PAIR_L_D, HB_PAIR_Z_THETA };
	for (int i = 0; pair_words[i]; i++)
		if (strcasecmp(text, pair_words[i]) == 0) {
			*code = codes[i];
			return HB_OK;
		}
	return HB_ERR_ARG;
}

/* A test level is a voltage (0.5V) or a current (10mA): the unit decides the kind. */
static int take_level(const hb_opt *o, const char *text, void *field)
{
	hb_sweep_plan *plan = field;
	char err[200];
	double v;
	(void)o;
	if (hb_parse_value(text, "V", &v, err, sizeof err) == HB_OK) {
		if (!(v > 0 && v <= 20)) {
			hb_cli_error("--level %s is out of range: accepted 1 mV to 20 V, or 1 uA to 1 A", text);
			return HB_ERR_ARG;
		}
		plan->level_kind = HB_LEVEL_VOLTAGE;
		plan->level = v;
		return HB_OK;
	}
	if (hb_parse_value(text, "A", &v, err, sizeof err) == HB_OK && strpbrk(text, "Aa")) {
		if (!(v > 0 && v <= 1)) {
			hb_cli_error("--level %s is out of range: accepted 1 mV to 20 V, or 1 uA to 1 A", text);
			return HB_ERR_ARG;
		}
		plan->level_kind = HB_LEVEL_CURRENT;
		plan->level = v;
		return HB_OK;
	}
	hb_cli_error("--level '%s': give a voltage such as 0.5V or a current such as 10mA", text);
	return HB_ERR_ARG;
}

/* sweep and fsweep accept the same options (one struct, one engine); only
 * --from and --to change unit with the kind of sweep. */
#define SWEEP_COMMON_OPTIONS                                                                                      \
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(sweep_args, part),                   \
	  .help = "stored part (see 'henrybench part add'; required)" },                                          \
	{ .name = "unit", .kind = HB_OPT_TEXT, .arg = "SERIAL", .off = offsetof(sweep_args, unit),              \
	  .help = "unit serial number (required)" },                                                               \
	{ .name = "lcr", .kind = HB_OPT_TEXT, .arg = "RES", .off = offsetof(sweep_args, lcr),                   \
	  .help = "the meter's resource, e.g. tcp://HOST:PORT (required)" },                                      \
	{ .name = "supply", .kind = HB_OPT_TEXT, .arg = "RES", .off = offsetof(sweep_args, supply),             \
	  .help = "the bias supply's resource (sweep: required; fsweep: with --bias)" },                          \
	{ .name = "step", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 1e-6, .max = 1000,               \
	  .off = offsetof(sweep_args, step), .given = HB_OPT_GIVEN(sweep_args, step_given),                       \
	  .help = "bias sweep: the current step, instead of --steps" },                                           \
	{ .name = "points", .kind = HB_OPT_INT, .arg = "N", .min = 2, .max = 10000,                               \
	  .off = offsetof(sweep_args, plan.f_points), .help = "fsweep: number of frequencies (default 41)" },   \
	{ .name = "spacing", .kind = HB_OPT_CUSTOM, .words = hb_sweep_spacing_words,                              \
	  .parse = hb_sweep_opts_take_spacing, .off = offsetof(sweep_args, plan),                                 \
	  .help = "step spacing (sweep: lin, log from 0 keeps 0 and spreads two decades; fsweep: log)" },        \
	{ .name = "level", .kind = HB_OPT_CUSTOM, .arg = "V|A", .parse = take_level,                              \
	  .off = offsetof(sweep_args, plan), .given = HB_OPT_GIVEN(sweep_args, opts.level_given),                 \
	  .help = "test level, e.g. 0.5V or 10mA (default: the part's spec, else 0.5 V)" },                       \
	{ .name = "circuit", .kind = HB_OPT_ENUM, .words = circuit_words, .codes = circuit_codes,                 \
	  .off = offsetof(sweep_args, plan.equiv), .help = "equivalent circuit (default series)" },             \
	{ .name = "pair", .kind = HB_OPT_ENUM, .words = pair_words, .match = match_pair,                          \
	  .off = offsetof(sweep_args, plan.pair), .help = "measured pair (default LR)" },                       \
	{ .name = "return", .kind = HB_OPT_FLAG, .off = offsetof(sweep_args, plan.return_down),                  \
	  .help = "sweep back down too (shows heating and hysteresis)" },                                         \
	{ .name = "stop-below", .kind = HB_OPT_VALUE, .arg = "PCT", .unit = "%", .min = 0.01, .max = 0.99,        \
	  .off = offsetof(sweep_args, plan.stop_below),                                                          \
	  .help = "stop once L falls under this share of its first value" },                                      \
	{ .name = "bias", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 0, .max = 1000,                   \
	  .off = offsetof(sweep_args, plan.bias), .help = "fsweep: DC bias held during the sweep (needs --supply)" }, \
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "CODE", .off = offsetof(sweep_args, lot),                  \
	  .help = "record the unit as a member of this lot" },                                                     \
	{ .name = "note", .kind = HB_OPT_TEXT, .arg = "TEXT", .off = offsetof(sweep_args, note),                \
	  .help = "free text stored with the sweep" },                                                             \
	{ .name = "yes", .kind = HB_OPT_FLAG, .off = offsetof(sweep_args, yes),                                   \
	  .help = "do not ask before sweeping above the station's threshold" },                                   \
	{ .name = "dry-run", .kind = HB_OPT_FLAG, .off = offsetof(sweep_args, dry_run),                           \
	  .help = "print the plan, limits, stored energy and time; touch nothing" },                              \
	{ .name = "no-fit", .kind = HB_OPT_FLAG, .off = offsetof(sweep_args, no_fit),                             \
	  .help = "do not fit when the sweep ends" },                                                              \
	{ .name = "dcr-meter", .kind = HB_OPT_FLAG, .off = offsetof(sweep_args, dcr_meter),                       \
	  .help = "read DCR with the meter before the sweep (see below); default: supply V/I" },                  \
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(sweep_args, json),                                 \
	  .help = "machine-readable summary on stdout" },                                                          \
	HB_SWEEP_OPTIONS(sweep_args)

static const hb_opt sweep_table[] = {
	{ .name = "from", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 0, .max = 1000,
	  .off = offsetof(sweep_args, plan.from), .given = HB_OPT_GIVEN(sweep_args, from_given),
	  .help = "first current (default 0)" },
	{ .name = "to", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 1e-6, .max = 1000,
	  .off = offsetof(sweep_args, plan.to), .help = "top current (required)" },
	SWEEP_COMMON_OPTIONS,
	{ .name = NULL },
};

static const hb_opt fsweep_table[] = {
	{ .name = "from", .kind = HB_OPT_VALUE, .arg = "HZ", .unit = "Hz", .min = 1, .max = 1e9,
	  .off = offsetof(sweep_args, plan.f_from), .given = HB_OPT_GIVEN(sweep_args, from_given),
	  .help = "first frequency (required)" },
	{ .name = "to", .kind = HB_OPT_VALUE, .arg = "HZ", .unit = "Hz", .min = 1, .max = 1e9,
	  .off = offsetof(sweep_args, plan.f_to), .help = "last frequency (required)" },
	SWEEP_COMMON_OPTIONS,
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_sweep = {
	.name = "sweep",
	.usage = "--part P --unit SERIAL --lcr RES --supply RES --to CURRENT [options]\n"
		 "       henrybench sweep delete ID [--reason TEXT] [--force]   (see 'sweep delete --help')",
	.about = "Steps the DC bias through the part and reads its incremental inductance at each step.\n",
	.opts = sweep_table,
	.max_operands = 0,
	.epilog = "Give --steps or --step, not both. The limits (--max-current, --max-voltage, --max-power,\n"
		  "--ramp, --off-threshold; also from the station file) may only tighten the station file's\n"
		  "and the part's. --dcr-meter uses the profile operation 'dcr', only where the fixture\n"
		  "passes DC to the meter.\n",
};

const hb_cmd_opts hb_opts_fsweep = {
	.name = "fsweep",
	.usage = "--part P --unit SERIAL --lcr RES --from HZ --to HZ [options]",
	.about = "Steps the test frequency and reads L and R (or |Z| and phase) at each point.\n",
	.opts = fsweep_table,
	.max_operands = 0,
	.epilog = "--bias A with --supply RES holds a DC bias during the sweep; the limits then apply as\n"
		  "for sweep. Default spacing: log.\n",
};

static int parse_args(int argc, char **argv, bool fsweep, sweep_args *a)
{
	memset(a, 0, sizeof *a);
	hb_sweep_plan_defaults(&a->plan);
	a->plan.kind = fsweep ? HB_SWEEP_FREQUENCY : HB_SWEEP_BIAS;
	hb_sweep_opts_init(&a->opts);
	hb_sweep_plan *p = &a->plan;
	hb_opts_result r;
	if (hb_opts_parse(fsweep ? &hb_opts_fsweep : &hb_opts_sweep, argc, argv, a, &r) != HB_OK)
		return HB_ERR_ARG;
	if (r.done)
		return 1;
	const char *missing = !a->part ? "--part" : !a->unit ? "--unit" : !a->lcr ? "--lcr" : NULL;
	if (!missing && !fsweep && !a->supply)
		missing = "--supply";
	if (!missing && !fsweep && !(p->to > 0))
		missing = "--to";
	if (!missing && fsweep && !a->from_given)
		missing = "--from";
	if (!missing && fsweep && !(p->f_to > 0))
		missing = "--to";
	if (missing) {
		hb_cli_error("%s is required (try --help)", missing);
		return HB_ERR_ARG;
	}
	if (fsweep && p->bias > 0 && !a->supply) {
		hb_cli_error("--bias %g A needs --supply RESOURCE", p->bias);
		return HB_ERR_ARG;
	}
	if (a->opts.steps_given && a->step_given) {
		hb_cli_error("give --steps or --step, not both");
		return HB_ERR_ARG;
	}
	if (a->step_given) {
		double span = p->to - p->from;
		double k = floor(span / a->step + 1e-9);
		if (k < 1 || k > 9999) {
			hb_cli_error("--step %g A over %g A gives %g steps: accepted 1 to 9999", a->step, span, k);
			return HB_ERR_ARG;
		}
		p->steps = (int)k + 1;
		p->to = p->from + k * a->step;
	}
	return HB_OK;
}

static void print_plan(FILE *out, const sweep_args *a, const hb_db_part *part, const hb_station *st,
		       const hb_limit_report *limits)
{
	const hb_sweep_plan *p = &a->plan;
	char buf[48], level[48];
	if (p->kind == HB_SWEEP_BIAS) {
		double *v = NULL;
		int n = 0;
		if (hb_sweep_setpoints(p, &v, &n) == HB_OK) {
			fprintf(out, "plan: %d points, %s spacing%s, test %s at %s\n", n,
				p->spacing == HB_SPACING_LOG ? "log" : "linear", p->return_down ? ", up and back down" : "",
				hb_format_si(buf, sizeof buf, p->frequency, "Hz", 4),
				hb_format_si(level, sizeof level, p->level, p->level_kind == HB_LEVEL_CURRENT ? "A" : "V", 3));
			fprintf(out, "setpoints:");
			for (int i = 0; i < n; i++)
				fprintf(out, "%s%s", i % 8 ? ", " : "\n  ", hb_format_si(buf, sizeof buf, v[i], "A", 4));
			fputc('\n', out);
			free(v);
		}
	} else {
		double *v = NULL;
		int n = 0;
		if (hb_sweep_frequencies(p, &v, &n) == HB_OK) {
			fprintf(out, "plan: %d frequencies, %s spacing, bias %s\nfrequencies:", n,
				p->f_spacing == HB_SPACING_LOG ? "log" : "linear", hb_format_si(level, sizeof level, p->bias, "A", 4));
			for (int i = 0; i < n; i++)
				fprintf(out, "%s%s", i % 8 ? ", " : "\n  ", hb_format_si(buf, sizeof buf, v[i], "Hz", 4));
			fputc('\n', out);
			free(v);
		}
	}
	double top = p->kind == HB_SWEEP_BIAS ? p->to : p->bias;
	hb_sweep_opts_print_limits(out, limits);
	fprintf(out, "station file: %s%s\n", st->path[0] ? st->path : "none",
		st->lock_limits ? " (lock_limits = yes: the command line may not change the limits)" : "");
	if (isfinite(part->nominal_h) && top > 0)
	{
		char i_text[48], e_text[48];
		fprintf(out, "stored energy at %s: about %s (1/2 L I^2 with the nominal %s)\n",
			hb_format_si(i_text, sizeof i_text, top, "A", 4),
			hb_format_si(e_text, sizeof e_text, 0.5 * part->nominal_h * top * top, "J", 3),
			hb_format_si(buf, sizeof buf, part->nominal_h, "H", 4));
	}
	fprintf(out, "estimated time: %s\n", hb_format_si(buf, sizeof buf, round(hb_sweep_estimate_seconds(p)), "s", 6));
}

static int confirm(const sweep_args *a, const hb_station *st)
{
	double top = a->plan.kind == HB_SWEEP_BIAS ? a->plan.to : a->plan.bias;
	char question[160];
	snprintf(question, sizeof question,
		 "The top current %.4g A is above this station's threshold of %.4g A. Type 'yes' to go on: ", top,
		 st->confirm_above);
	return hb_sweep_opts_confirm(st, top, a->yes, isatty(STDIN_FILENO), stdin, stderr, question);
}

static json_t *result_json(const sweep_args *a, int64_t sweep_id, const hb_sweep_result *r, const hb_analysis_summary *an,
			   const hb_db_sweep_trace *trace)
{
	static const char *ends[] = { "complete", "aborted", "failed" };
	json_t *j = json_object();
	json_object_set_new(j, "sweep_id", json_integer(sweep_id));
	json_object_set_new(j, "kind", json_string(a->plan.kind == HB_SWEEP_BIAS ? "bias" : "frequency"));
	json_object_set_new(j, "part", json_string(a->part));
	json_object_set_new(j, "unit", json_string(a->unit));
	json_object_set_new(j, "status", json_string(ends[r->end]));
	json_object_set_new(j, "reason", json_string(r->reason));
	json_object_set_new(j, "points", json_integer(r->points));
	if (isfinite(r->l_first))
		json_object_set_new(j, "L_first_H", json_real(r->l_first));
	json_object_set_new(j, "noise_relative", json_real(r->noise_rel));
	json_object_set_new(j, "current_may_flow", json_boolean(r->current_may_flow));
	if (an && an->ran)
		json_object_set_new(j, "analysis", hb_analysis_summary_json(an));
	if (trace) {
		json_object_set_new(j, "calibration", json_string(trace->cal_status));
		json_object_set_new(j, "overdue_allowed", json_boolean(trace->overdue_allowed));
		json_object_set_new(j, "fixture", json_string(trace->fixture));
		json_object_set_new(j, "fixture_status", json_string(trace->fixture_status));
		json_object_set_new(j, "settings_changed", json_string(trace->settings_changed));
	}
	return j;
}

static int run_sweep_command(int argc, char **argv, bool fsweep)
{
	sweep_args a;
	int rc = parse_args(argc, argv, fsweep, &a);
	if (rc == 1)
		return HB_EXIT_OK;
	if (rc != HB_OK)
		return HB_EXIT_USAGE;

	int exit_code = HB_EXIT_RUNTIME;
	int64_t sweep_id = 0;
	bool stored = false;
	FILE *info = a.json ? stderr : stdout;
	hb_db *db = NULL;
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	char err[320];
	hb_station station;
	if (hb_station_load(&station, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_EXIT_USAGE;
	}
	hb_db_part part;
	rc = hb_sweep_opts_open_part(a.part, &db, &part);
	if (rc != HB_EXIT_OK) {
		exit_code = rc;
		goto out;
	}
	hb_sweep_opts_apply_conditions(&a.opts, &part, &a.plan);
	hb_limit_report limits;
	rc = hb_sweep_opts_resolve(&a.opts, &station, &part, &a.plan, &limits, err, sizeof err);
	if (rc == HB_ERR_ARG) {
		hb_cli_error("%s", err);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (rc == HB_OK)
		rc = hb_sweep_plan_check(&a.plan, a.supply != NULL, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("refusing to start: %s", err);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (a.dry_run) {
		print_plan(stdout, &a, &part, &station, &limits);
		fprintf(stdout, "dry run: no instrument was opened and nothing was stored\n");
		exit_code = HB_EXIT_OK;
		goto out;
	}
	/* Before the question, the cautions and the links: a store that cannot
	 * take the points must stop the sweep before anything is energised. */
	if ((exit_code = hb_cli_check_writable(db)) != HB_EXIT_OK)
		goto out;
	exit_code = HB_EXIT_RUNTIME;
	if (confirm(&a, &station) != HB_OK) {
		exit_code = HB_EXIT_USAGE;
		goto out;
	}

	hb_sweep_install_signals();
	hb_sweep_clear_signal();
	/* An fsweep without bias leaves the supply closed: nothing to source. */
	rc = hb_sweep_opts_open_bench(info, a.lcr, a.supply && (!fsweep || a.plan.bias > 0) ? a.supply : NULL, &lcr,
				      &supply);
	if (rc != HB_EXIT_OK) {
		exit_code = rc;
		goto out;
	}
	if (hb_sweep_opts_check_meter(lcr, &a.plan) != HB_OK) {
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (supply) {
		double top = fsweep ? a.plan.bias : a.plan.to;
		hb_sweep_print_cautions(info, isfinite(part.nominal_h) ? part.nominal_h : 0, top,
					a.plan.limits.max_voltage);
	}
	int64_t lot_id = 0;
	if (a.lot && hb_db_lot_ensure(db, part.id, a.lot, &lot_id) != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		goto out;
	}
	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = &station, .progress = info,
			 .progress_tty = isatty(fileno(info)), .ambient_c = a.opts.ambient_c, .dcr_from_meter = a.dcr_meter,
			 .allow_overdue = a.opts.allow_overdue, .fixture = a.opts.fixture };
	hb_sweep_result result;
	hb_session_measure(&s, &part, a.unit, lot_id, &a.plan, a.note, &sweep_id, &result);
	if (result.current_may_flow)
		hb_session_warn_current_may_flow(stderr);
	static const char *ends[] = { "complete", "aborted", "failed" };
	stored = sweep_id > 0;
	if (sweep_id == 0) {
		hb_cli_error("sweep not started: %s", result.reason);
	} else {
		/* an aborted or failed sweep is an error: its line goes to stderr,
		 * with what was stored of it */
		bool ended_well = result.end == HB_SWEEP_COMPLETE;
		fprintf(ended_well ? info : stderr, "%ssweep %lld %s: %d points%s%s\n", ended_well ? "" : "henrybench: ",
			(long long)sweep_id, ends[result.end], result.points, result.reason[0] ? "; " : "", result.reason);
	}

	hb_analysis_summary an;
	memset(&an, 0, sizeof an);
	if (!a.no_fit && sweep_id > 0 && result.points >= 3) {
		hb_analysis_options aopt;
		hb_analysis_options_init(&aopt);
		aopt.noise_rel = result.noise_rel;
		if (hb_analysis_sweep(db, sweep_id, &aopt, &an) == HB_OK && !a.json)
			hb_analysis_print(stdout, &an);
		else if (an.message[0])
			fprintf(info, "analysis: %s\n", an.message);
	}
	if (a.json) {
		/* The exit code is the sweep's, not the printout's. */
		hb_db_sweep_trace *trace = malloc(sizeof *trace);
		bool have = trace && sweep_id > 0 && hb_db_sweep_trace_get(db, sweep_id, trace) == HB_OK;
		(void)hb_print_json(result_json(&a, sweep_id, &result, &an, have ? trace : NULL));
		free(trace);
	}
	exit_code = hb_session_exit_code(&result);
out:
	/* Closing the supply handle never switches anything on; the engine
	 * already switched the output off on every path that switched it on. */
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	/* Only now, with the bench safe and the sweep committed here: the server never delays either,
	 * and its failure is a warning that leaves the exit status the sweep's. */
	if (stored)
		(void)hb_cli_sync_after(db, &station, info);
	hb_db_close(db);
	hb_sweep_restore_signals();
	return exit_code;
}

int hb_cmd_sweep(int argc, char **argv)
{
	if (argc >= 2 && strcmp(argv[1], "delete") == 0)
		return hb_cmd_sweep_delete(argc - 1, argv + 1);
	return run_sweep_command(argc, argv, false);
}

int hb_cmd_fsweep(int argc, char **argv)
{
	return run_sweep_command(argc, argv, true);
}
