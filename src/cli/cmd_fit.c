/* src/cli/cmd_fit.c - the `fit` command: refit a stored sweep with the current fit code and store the result */
#include <stddef.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../quality/quality.h"
#include "cli.h"

/* "10,20,30": drop fractions in percent. */
static int take_drops(const hb_opt *o, const char *text, void *field)
{
	hb_analysis_options *opt = field;
	(void)o;
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

/* NAME=VALUE: a core parameter held at a datasheet value; repeatable. */
static int take_fix(const hb_opt *o, const char *text, void *field)
{
	hb_analysis_options *opt = field;
	(void)o;
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
	return hb_cli_resolve_id(HB_DB_REC_SWEEP, text, id);
}

/* knee, core or all: which models are fitted. */
static int take_model(const hb_opt *o, const char *text, void *field)
{
	hb_analysis_options *opt = field;
	if (strcmp(text, "knee") == 0) {
		opt->knee = true;
		opt->core = false;
	} else if (strcmp(text, "core") == 0) {
		opt->knee = false;
		opt->core = true;
	} else if (strcmp(text, "all") == 0) {
		opt->knee = opt->core = true;
	} else {
		hb_cli_error("--%s '%s': accepted knee, core or all", o->name, text);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

typedef struct fit_args {
	hb_analysis_options opt;
	bool no_store, json, budget;
} fit_args;

static const char *const model_words[] = { "knee", "core", "all", NULL };

static const hb_opt fit_table[] = {
	{ .name = "model", .kind = HB_OPT_CUSTOM, .words = model_words, .parse = take_model,
	  .off = offsetof(fit_args, opt),
	  .help = "knee: smooth knee curve; core: magnetic-circuit model (needs the part's turns, Ae and le); all (default)" },
	{ .name = "drop", .kind = HB_OPT_CUSTOM, .arg = "PCT,...", .parse = take_drops, .off = offsetof(fit_args, opt),
	  .help = "drop fractions in percent at which to report the current, e.g. 10,20,30; 1% to 95% each" },
	{ .name = "fix", .kind = HB_OPT_CUSTOM, .arg = "NAME=VALUE", .parse = take_fix, .off = offsetof(fit_args, opt),
	  .flags = HB_OPT_REPEAT,
	  .help = "hold a core parameter at a datasheet value: mu_i=2300, gap=0.3mm, bsat=0.39T (saturation polarisation Js)" },
	{ .name = "noise", .kind = HB_OPT_VALUE, .arg = "PCT", .unit = "%", .min = 1e-9, .max = 0.5,
	  .off = offsetof(fit_args, opt.noise_rel),
	  .help = "relative reading noise (e.g. 0.01%); default: estimated from the data" },
	{ .name = "no-store", .kind = HB_OPT_FLAG, .off = offsetof(fit_args, no_store),
	  .help = "fit and print, store nothing" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(fit_args, json), .help = "the fit as JSON on stdout" },
	{ .name = "budget", .kind = HB_OPT_FLAG, .off = offsetof(fit_args, budget),
	  .help = "after the fit, the stored uncertainty budget of each value (GUM; with --json it is in the values)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_fit = {
	.name = "fit",
	.usage = "SWEEP_ID [--model knee|core|all] [--drop 10,20,30] [--fix NAME=VALUE]\n"
		 "                      [--noise PCT] [--no-store] [--json] [--budget]",
	.about = "Fits a stored sweep and stores the fit (model, parameters, standard errors, covariance,\n"
		 "residuals, derived values, fit-code version) and the verdicts against the part's spec.\n",
	.opts = fit_table,
	.max_operands = -1,
};

/* The budget table of the sweep's newest fit, read back from the store so
 * that it is what show, export and the report hold, not a fresh computation. */
static int print_budget(hb_db *db, int64_t sweep_id)
{
	hb_db_fit *fit = calloc(1, sizeof *fit); /* too big for the stack: values and covariance */
	if (!fit) {
		hb_cli_error("out of memory");
		return HB_ERR_NOMEM;
	}
	hb_db_fit_init(fit);
	int rc = hb_db_fit_get_latest(db, sweep_id, NULL, fit);
	if (rc != HB_OK) {
		hb_cli_error("fit --budget: no stored fit of sweep %lld: %s", (long long)sweep_id, hb_db_errmsg(db));
		free(fit);
		return rc;
	}
	hb_db_fit_unc *list = NULL;
	size_t n = 0;
	rc = hb_db_fit_unc_list(db, fit->id, &list, &n);
	if (rc != HB_OK) {
		hb_cli_error("fit --budget: fit %lld: %s", (long long)fit->id, hb_db_errmsg(db));
	} else {
		printf("\nuncertainty budget of fit %lld (GUM, coverage 95.45 %%)\n", (long long)fit->id);
		hb_analysis_print_budget(stdout, list, n);
	}
	hb_db_fit_uncs_free(list);
	free(fit);
	return rc;
}

int hb_cmd_fit(int argc, char **argv)
{
	fit_args a = { .no_store = false, .json = false, .budget = false };
	hb_analysis_options_init(&a.opt);
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_fit, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	hb_analysis_options opt = a.opt;
	if (a.no_store)
		opt.store = false;
	bool json = a.json;
	if (a.budget && a.no_store) {
		/* the table is read back from the store: nothing stored, nothing to print */
		hb_cli_error("fit: --budget prints the stored budget; it cannot go with --no-store");
		return HB_EXIT_USAGE;
	}
	if (r.first + 1 != argc) {
		hb_cli_error("fit needs exactly one SWEEP_ID (try --help)");
		return HB_EXIT_USAGE;
	}
	long long id;
	if (hb_cli_parse_sweep_id(argv[r.first], &id) != HB_OK)
		return HB_EXIT_USAGE;
	hb_db *db = NULL;
	int exit_code = HB_EXIT_RUNTIME;
	hb_analysis_summary *an = calloc(1, sizeof *an);
	if (!an) {
		hb_cli_error("out of memory");
		return HB_EXIT_RUNTIME;
	}
	/* Fitting needs a stored sweep: a missing store is a mistyped --db. */
	if (!(db = hb_cli_open_store_read(&exit_code)))
		goto out;
	exit_code = HB_EXIT_RUNTIME;
	if (!isnan(opt.fix_mu_i) || !isnan(opt.fix_gap) || !isnan(opt.fix_bsat)) {
		hb_db_sweep *sw = calloc(1, sizeof *sw);
		bool freq = sw && hb_db_sweep_get(db, (int64_t)id, sw) == HB_OK && sw->kind == HB_DB_SWEEP_FREQUENCY;
		free(sw);
		if (freq) {
			/* Said, not ignored: the frequency model has no core parameters to hold. */
			hb_cli_error("fit: --fix holds a core parameter of the bias-sweep model; it does not apply to "
				     "frequency sweep %lld",
				     id);
			exit_code = HB_EXIT_USAGE;
			goto out;
		}
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
		/* the global identities of the sweep and of the fit just stored */
		char uid[HB_DB_UID_LEN] = "";
		if (j && hb_db_uid_of(db, HB_DB_REC_SWEEP, (int64_t)id, uid) == HB_OK && uid[0])
			json_object_set_new(j, "sweep_uid", json_string(uid));
		uid[0] = '\0';
		if (j && an->fit_id > 0 && hb_db_uid_of(db, HB_DB_REC_FIT, an->fit_id, uid) == HB_OK && uid[0])
			json_object_set_new(j, "fit_uid", json_string(uid));
		(void)hb_print_json(j); /* through the io room's writer, as every JSON document */
	} else {
		hb_analysis_print(stdout, an);
	}
	if (rc != HB_OK) {
		hb_cli_error("fit of sweep %lld: %s", id, an->message[0] ? an->message : hb_status_name(rc));
		goto out;
	}
	/* the JSON values already carry their budgets; text gets the table */
	if (a.budget && !json && print_budget(db, (int64_t)id) != HB_OK)
		goto out;
	exit_code = HB_EXIT_OK;
out:
	free(an);
	hb_db_close(db);
	return exit_code;
}
