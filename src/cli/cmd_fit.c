/* src/cli/cmd_fit.c - the `fit` command: refit a stored sweep with the current fit code and store the result */
#include <getopt.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../quality/quality.h"
#include "cli.h"

static void usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench fit SWEEP_ID [--model knee|core|all] [--drop 10,20,30] [--fix NAME=VALUE]\n"
		"                      [--noise PCT] [--no-store] [--json]\n"
		"Fits a stored sweep and stores the fit (model, parameters, standard errors, covariance,\n"
		"residuals, derived values, fit-code version) and the verdicts against the part's spec.\n"
		"  --model      knee: smooth knee curve; core: magnetic-circuit model (needs the part's\n"
		"               turns, Ae and le); all (default)\n"
		"  --drop       drop fractions in percent at which to report the current\n"
		"  --fix        hold a core parameter at a datasheet value: mu_i=2300, gap=0.3mm,\n"
		"               bsat=0.39T (saturation polarisation Js)\n"
		"  --noise      relative reading noise (e.g. 0.01%%); default: estimated from the data\n");
}

static int parse_drops(const char *text, hb_analysis_options *opt)
{
	char buf[256];
	snprintf(buf, sizeof buf, "%s", text);
	opt->n_drops = 0;
	for (char *save = NULL, *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
		double v;
		if (opt->n_drops >= HB_FIT_MAX_FRACTIONS) {
			hb_cli_error("--drop: at most %d fractions", HB_FIT_MAX_FRACTIONS);
			return HB_ERR_ARG;
		}
		if (hb_opt_value("--drop", tok, "%", 0.01, 0.95, &v) != HB_OK)
			return HB_ERR_ARG;
		opt->drops[opt->n_drops++] = v;
	}
	return HB_OK;
}

static int parse_fix(const char *text, hb_analysis_options *opt)
{
	const char *eq = strchr(text, '=');
	if (!eq) {
		hb_cli_error("--fix '%s': expected NAME=VALUE with NAME one of mu_i, gap, bsat", text);
		return HB_ERR_ARG;
	}
	size_t len = (size_t)(eq - text);
	if (len == 4 && strncmp(text, "mu_i", 4) == 0)
		return hb_opt_value("--fix mu_i", eq + 1, "", 1, 1e6, &opt->fix_mu_i);
	if (len == 3 && strncmp(text, "gap", 3) == 0)
		return hb_opt_value("--fix gap", eq + 1, "m", 0, 0.1, &opt->fix_gap);
	if (len == 4 && strncmp(text, "bsat", 4) == 0)
		return hb_opt_value("--fix bsat", eq + 1, "T", 0.01, 5, &opt->fix_bsat);
	hb_cli_error("--fix '%.*s': accepted mu_i, gap or bsat", (int)len, text);
	return HB_ERR_ARG;
}

int hb_cli_parse_sweep_id(const char *text, long long *id)
{
	char *end = NULL;
	long long v = strtoll(text, &end, 10);
	if (!end || *end || v <= 0) {
		hb_cli_error("sweep id '%s' is not a positive integer", text);
		return HB_ERR_ARG;
	}
	*id = v;
	return HB_OK;
}

int hb_cmd_fit(int argc, char **argv)
{
	static const struct option opts[] = {
		{ "model", required_argument, NULL, 'm' }, { "drop", required_argument, NULL, 'd' },
		{ "fix", required_argument, NULL, 'f' },   { "noise", required_argument, NULL, 'n' },
		{ "no-store", no_argument, NULL, 's' },    { "json", no_argument, NULL, 'j' },
		{ "help", no_argument, NULL, 'h' },        { NULL, 0, NULL, 0 },
	};
	hb_analysis_options opt;
	hb_analysis_options_init(&opt);
	bool json = false;
	int c;
	optind = 1;
	opterr = 0;
	while ((c = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
		switch (c) {
		case 'm':
			if (strcmp(optarg, "knee") == 0) {
				opt.knee = true;
				opt.core = false;
			} else if (strcmp(optarg, "core") == 0) {
				opt.knee = false;
				opt.core = true;
			} else if (strcmp(optarg, "all") == 0) {
				opt.knee = opt.core = true;
			} else {
				hb_cli_error("--model '%s': accepted knee, core or all", optarg);
				return HB_EXIT_USAGE;
			}
			break;
		case 'd':
			if (parse_drops(optarg, &opt) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 'f':
			if (parse_fix(optarg, &opt) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 'n':
			if (hb_opt_value("--noise", optarg, "%", 1e-9, 0.5, &opt.noise_rel) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 's': opt.store = false; break;
		case 'j': json = true; break;
		case 'h': usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("fit: unknown or incomplete option '%s' (try --help)", argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (optind + 1 != argc) {
		hb_cli_error("fit needs exactly one SWEEP_ID (try --help)");
		return HB_EXIT_USAGE;
	}
	long long id;
	if (hb_cli_parse_sweep_id(argv[optind], &id) != HB_OK)
		return HB_EXIT_USAGE;
	hb_db *db = NULL;
	int exit_code = HB_EXIT_RUNTIME;
	hb_analysis_summary *an = calloc(1, sizeof *an);
	if (!an) {
		hb_cli_error("out of memory");
		return HB_EXIT_RUNTIME;
	}
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("store: %s", db ? hb_db_errmsg(db) : "out of memory");
		goto out;
	}
	int rc = hb_analysis_sweep(db, (int64_t)id, &opt, an);
	if (rc == HB_ERR_NOTFOUND) {
		hb_cli_error("no sweep %lld in %s", id, hb_db_path(db));
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (json) {
		json_t *j = hb_analysis_summary_json(an);
		json_object_set_new(j, "sweep_id", json_integer(id));
		(void)hb_print_json(j); /* through the io room's writer, as every JSON document */
	} else {
		hb_analysis_print(stdout, an);
	}
	if (rc != HB_OK) {
		hb_cli_error("fit of sweep %lld: %s", id, an->message[0] ? an->message : hb_status_name(rc));
		goto out;
	}
	exit_code = HB_EXIT_OK;
out:
	free(an);
	hb_db_close(db);
	return exit_code;
}
