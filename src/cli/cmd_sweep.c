/* src/cli/cmd_sweep.c - the `sweep` (L against DC bias) and `fsweep` (L against frequency) commands */
#include <getopt.h>
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

static void sweep_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench sweep --part P --unit SERIAL --lcr RES --supply RES --to CURRENT [options]\n"
		"Steps the DC bias through the part and reads its incremental inductance at each step.\n\n"
		"  --from A            first current (default 0)\n"
		"  --to A              top current (required)\n"
		"  --steps N | --step A  points on the way up (default 21) or the current step\n"
		"  --spacing lin|log   step spacing (log from 0 keeps 0 and spreads two decades)\n"
		"  --freq HZ           test frequency (default: the part's spec, else 100 kHz)\n"
		"  --level V|A         test level, e.g. 0.5V or 10mA (default: the part's spec, else 0.5 V)\n"
		"  --circuit series|parallel   equivalent circuit (default series)\n"
		"  --pair LR|LQ|LD     measured pair (default LR)\n"
		"  --avg N             readings averaged by the meter (default 1)\n"
		"  --aperture short|medium|long   integration time (default medium)\n"
		"  --settle auto|TIME  auto: read until readings agree within the meter's noise; or a fixed wait\n"
		"  --settle-timeout S  longest auto wait per point (default 10 s)\n"
		"  --return            sweep back down too (shows heating and hysteresis)\n"
		"  --stop-below PCT    stop once L falls under this share of its first value\n"
		"  --max-current A --max-voltage V --max-power W   hard limits (also from the station file)\n"
		"  --ramp A/s          fastest current change between steps (default 5 A/s)\n"
		"  --off-threshold A   the output goes off only below this current (default 20 mA)\n"
		"                      limits may only tighten the station file's and the part's\n"
		"  --lot CODE          record the unit as a member of this lot\n"
		"  --ambient C         ambient temperature to record, degC\n"
		"  --note TEXT         free text stored with the sweep\n"
		"  --yes               do not ask before sweeping above the station's threshold\n"
		"  --dry-run           print the plan, limits, stored energy and time; touch nothing\n"
		"  --no-fit            do not fit when the sweep ends\n"
		"  --dcr-meter         read DCR with the meter before the sweep (profile operation 'dcr';\n"
		"                      only where the fixture passes DC to the meter); default: supply V/I\n"
		"  --json              machine-readable summary on stdout\n");
}

static void fsweep_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench fsweep --part P --unit SERIAL --lcr RES --from HZ --to HZ [options]\n"
		"Steps the test frequency and reads L and R (or |Z| and phase) at each point.\n\n"
		"  --points N          number of frequencies (default 41)\n"
		"  --spacing log|lin   (default log)\n"
		"  --level V|A         test level\n"
		"  --circuit, --pair, --avg, --aperture, --settle, --note, --lot, --ambient, --json, --dry-run, --yes\n"
		"  --bias A --supply RES   hold a DC bias during the sweep (limits then apply as for sweep)\n"
		"  --max-current A --max-voltage V --max-power W --ramp A/s --off-threshold A\n");
}

enum {
	OPT_PART = 256, OPT_UNIT, OPT_LCR, OPT_SUPPLY, OPT_FROM, OPT_TO, OPT_STEP, OPT_SPACING, OPT_LEVEL,
	OPT_CIRCUIT, OPT_PAIR, OPT_RETURN, OPT_STOP_BELOW, OPT_NOTE, OPT_YES, OPT_DRY_RUN, OPT_JSON, OPT_POINTS,
	OPT_BIAS, OPT_LOT, OPT_NO_FIT, OPT_DCR_METER, OPT_HELP
};

static const struct option long_options[] = {
	{ "part", required_argument, NULL, OPT_PART },
	{ "unit", required_argument, NULL, OPT_UNIT },
	{ "lcr", required_argument, NULL, OPT_LCR },
	{ "supply", required_argument, NULL, OPT_SUPPLY },
	{ "from", required_argument, NULL, OPT_FROM },
	{ "to", required_argument, NULL, OPT_TO },
	{ "step", required_argument, NULL, OPT_STEP },
	{ "points", required_argument, NULL, OPT_POINTS },
	{ "spacing", required_argument, NULL, OPT_SPACING },
	{ "level", required_argument, NULL, OPT_LEVEL },
	{ "circuit", required_argument, NULL, OPT_CIRCUIT },
	{ "pair", required_argument, NULL, OPT_PAIR },
	{ "return", no_argument, NULL, OPT_RETURN },
	{ "stop-below", required_argument, NULL, OPT_STOP_BELOW },
	{ "bias", required_argument, NULL, OPT_BIAS },
	{ "lot", required_argument, NULL, OPT_LOT },
	{ "note", required_argument, NULL, OPT_NOTE },
	{ "yes", no_argument, NULL, OPT_YES },
	{ "dry-run", no_argument, NULL, OPT_DRY_RUN },
	{ "no-fit", no_argument, NULL, OPT_NO_FIT },
	{ "dcr-meter", no_argument, NULL, OPT_DCR_METER },
	{ "json", no_argument, NULL, OPT_JSON },
	{ "help", no_argument, NULL, OPT_HELP },
	HB_SWEEP_LONG_OPTIONS,
	{ NULL, 0, NULL, 0 },
};

static int parse_level(const char *text, hb_sweep_plan *plan)
{
	char err[200];
	double v;
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

static int parse_args(int argc, char **argv, bool fsweep, sweep_args *a)
{
	memset(a, 0, sizeof *a);
	hb_sweep_plan_defaults(&a->plan);
	a->plan.kind = fsweep ? HB_SWEEP_FREQUENCY : HB_SWEEP_BIAS;
	hb_sweep_opts_init(&a->opts);
	hb_sweep_plan *p = &a->plan;
	optind = 1;
	opterr = 0;
	int c;
	long n;
	while ((c = getopt_long(argc, argv, "h", long_options, NULL)) != -1) {
		int rc = HB_OK;
		switch (c) {
		case OPT_PART: a->part = optarg; break;
		case OPT_UNIT: a->unit = optarg; break;
		case OPT_LCR: a->lcr = optarg; break;
		case OPT_SUPPLY: a->supply = optarg; break;
		case OPT_LOT: a->lot = optarg; break;
		case OPT_NOTE: a->note = optarg; break;
		case OPT_FROM:
			if (fsweep)
				rc = hb_opt_value("--from", optarg, "Hz", 1, 1e9, &p->f_from);
			else
				rc = hb_opt_value("--from", optarg, "A", 0, 1000, &p->from);
			a->from_given = true;
			break;
		case OPT_TO:
			if (fsweep)
				rc = hb_opt_value("--to", optarg, "Hz", 1, 1e9, &p->f_to);
			else
				rc = hb_opt_value("--to", optarg, "A", 1e-6, 1000, &p->to);
			break;
		case OPT_POINTS:
			rc = hb_opt_int("--points", optarg, 2, 10000, &n);
			p->f_points = (int)n;
			break;
		case OPT_STEP:
			rc = hb_opt_value("--step", optarg, "A", 1e-6, 1000, &a->step);
			a->step_given = true;
			break;
		case OPT_SPACING:
			rc = hb_sweep_opts_parse_spacing(optarg, &p->spacing);
			p->f_spacing = p->spacing;
			break;
		case OPT_LEVEL:
			rc = parse_level(optarg, p);
			a->opts.level_given = true;
			break;
		case OPT_CIRCUIT:
			if (strcmp(optarg, "series") == 0)
				p->equiv = HB_EQUIV_SERIES;
			else if (strcmp(optarg, "parallel") == 0)
				p->equiv = HB_EQUIV_PARALLEL;
			else {
				hb_cli_error("--circuit '%s': accepted series or parallel", optarg);
				rc = HB_ERR_ARG;
			}
			break;
		case OPT_PAIR:
			if (strcasecmp(optarg, "LR") == 0)
				p->pair = HB_PAIR_L_R;
			else if (strcasecmp(optarg, "LQ") == 0)
				p->pair = HB_PAIR_L_Q;
			else if (strcasecmp(optarg, "LD") == 0)
				p->pair = HB_PAIR_L_D;
			else if (strcasecmp(optarg, "ZTH") == 0)
				p->pair = HB_PAIR_Z_THETA;
			else {
				hb_cli_error("--pair '%s': accepted LR, LQ, LD or ZTH", optarg);
				rc = HB_ERR_ARG;
			}
			break;
		case OPT_RETURN: p->return_down = true; break;
		case OPT_STOP_BELOW:
			rc = hb_opt_value("--stop-below", optarg, "%", 0.01, 0.99, &p->stop_below);
			break;
		case OPT_BIAS: rc = hb_opt_value("--bias", optarg, "A", 0, 1000, &p->bias); break;
		case OPT_YES: a->yes = true; break;
		case OPT_DRY_RUN: a->dry_run = true; break;
		case OPT_NO_FIT: a->no_fit = true; break;
		case OPT_DCR_METER: a->dcr_meter = true; break;
		case OPT_JSON: a->json = true; break;
		case OPT_HELP:
		case 'h':
			(fsweep ? fsweep_usage : sweep_usage)(stdout);
			return 1;
		default:
			if (hb_sweep_opts_parse(c, optarg, p, &a->opts, &rc))
				break;
			hb_cli_error("%s: unknown or incomplete option '%s' (try --help)", fsweep ? "fsweep" : "sweep",
				     argv[optind - 1]);
			return HB_ERR_ARG;
		}
		if (rc != HB_OK)
			return HB_ERR_ARG;
	}
	if (optind < argc) {
		hb_cli_error("unexpected argument '%s' (try --help)", argv[optind]);
		return HB_ERR_ARG;
	}
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
			fprintf(out, "setpoints (A):");
			for (int i = 0; i < n; i++)
				fprintf(out, "%s%.4g", i % 10 ? " " : "\n  ", v[i]);
			fputc('\n', out);
			free(v);
		}
	} else {
		double *v = NULL;
		int n = 0;
		if (hb_sweep_frequencies(p, &v, &n) == HB_OK) {
			fprintf(out, "plan: %d frequencies, %s spacing, bias %.4g A\nfrequencies (Hz):", n,
				p->f_spacing == HB_SPACING_LOG ? "log" : "linear", p->bias);
			for (int i = 0; i < n; i++)
				fprintf(out, "%s%.4g", i % 8 ? " " : "\n  ", v[i]);
			fputc('\n', out);
			free(v);
		}
	}
	double top = p->kind == HB_SWEEP_BIAS ? p->to : p->bias;
	hb_sweep_opts_print_limits(out, limits);
	fprintf(out, "station file: %s%s\n", st->path[0] ? st->path : "none",
		st->lock_limits ? " (lock_limits = yes: the command line may not change the limits)" : "");
	if (isfinite(part->nominal_h) && top > 0)
		fprintf(out, "stored energy at %.4g A: about %.3g J (1/2 L I^2 with the nominal %s)\n", top,
			0.5 * part->nominal_h * top * top, hb_format_si(buf, sizeof buf, part->nominal_h, "H", 4));
	fprintf(out, "estimated time: %.0f s\n", hb_sweep_estimate_seconds(p));
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

static json_t *result_json(const sweep_args *a, int64_t sweep_id, const hb_sweep_result *r, const hb_analysis_summary *an)
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
	FILE *info = a.json ? stderr : stdout;
	if (a.dry_run) {
		print_plan(stdout, &a, &part, &station, &limits);
		fprintf(stdout, "dry run: no instrument was opened and nothing was stored\n");
		exit_code = HB_EXIT_OK;
		goto out;
	}
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
			 .progress_tty = isatty(fileno(info)), .ambient_c = a.opts.ambient_c, .dcr_from_meter = a.dcr_meter };
	int64_t sweep_id = 0;
	hb_sweep_result result;
	hb_session_measure(&s, &part, a.unit, lot_id, &a.plan, a.note, &sweep_id, &result);
	if (result.current_may_flow)
		hb_session_warn_current_may_flow(stderr);
	static const char *ends[] = { "complete", "aborted", "failed" };
	fprintf(info, "sweep %lld %s: %d points%s%s\n", (long long)sweep_id, ends[result.end], result.points,
		result.reason[0] ? "; " : "", result.reason);

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
		(void)hb_print_json(result_json(&a, sweep_id, &result, &an));
	}
	exit_code = hb_session_exit_code(&result);
out:
	/* Closing the supply handle never switches anything on; the engine
	 * already switched the output off on every path that switched it on. */
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	hb_db_close(db);
	hb_sweep_restore_signals();
	return exit_code;
}

int hb_cmd_sweep(int argc, char **argv)
{
	return run_sweep_command(argc, argv, false);
}

int hb_cmd_fsweep(int argc, char **argv)
{
	return run_sweep_command(argc, argv, true);
}
