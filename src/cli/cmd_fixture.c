/* src/cli/cmd_fixture.c - command `fixture`: open/short compensation of a test fixture, run in the meter or measured and stored here */
#include <math.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "cli.h"

typedef struct fixture_args {
	const char *fixture, *lcr, *freq_text;
	double freqs[HB_FIXTURE_MAX_FREQS];
	int n_freqs;
	bool measure_only, json;
} fixture_args;

/* "100kHz" or "1kHz,10kHz,100kHz": each 20 Hz to 1 GHz. */
static int take_freqs(const hb_opt *o, const char *text, void *field)
{
	fixture_args *a = field;
	(void)o;
	char buf[512];
	if (strlen(text) >= sizeof buf) {
		hb_cli_error("--freq '%.40s...' is too long: at most %d frequencies", text, HB_FIXTURE_MAX_FREQS);
		return HB_ERR_ARG;
	}
	snprintf(buf, sizeof buf, "%s", text);
	a->n_freqs = 0;
	char *save = NULL;
	for (char *t = strtok_r(buf, ",", &save); t; t = strtok_r(NULL, ",", &save)) {
		if (a->n_freqs >= HB_FIXTURE_MAX_FREQS) {
			hb_cli_error("--freq '%s': at most %d frequencies", text, HB_FIXTURE_MAX_FREQS);
			return HB_ERR_ARG;
		}
		if (hb_opt_value("--freq", t, "Hz", 20, 1e9, &a->freqs[a->n_freqs]) != HB_OK)
			return HB_ERR_ARG;
		a->n_freqs++;
	}
	if (a->n_freqs == 0) {
		hb_cli_error("--freq '%s': give one or more frequencies, e.g. 100kHz or 1kHz,10kHz,100kHz", text);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static const hb_opt fixture_table[] = {
	{ .name = "lcr", .kind = HB_OPT_TEXT, .arg = "RES", .off = offsetof(fixture_args, lcr),
	  .help = "the meter's resource (required)" },
	{ .name = "fixture", .kind = HB_OPT_TEXT, .arg = "ID", .off = offsetof(fixture_args, fixture),
	  .help = "the fixture's name (default: default)" },
	{ .name = "freq", .kind = HB_OPT_CUSTOM, .arg = "F[,F...]", .parse = take_freqs, .off = 0,
	  .help = "frequencies to read the residual at (default 100 kHz; at most 16)" },
	{ .name = "measure-only", .kind = HB_OPT_FLAG, .off = offsetof(fixture_args, measure_only),
	  .help = "measure and store the residuals even where the meter could correct itself" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(fixture_args, json), .help = "machine-readable output" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_fixture = {
	.name = "fixture",
	.usage = "open|short --lcr RES [--fixture ID] [--freq F[,F...]] [--measure-only] [--json]",
	.about = "Open/short compensation of a test fixture: with the fixture open (nothing in it) or shorted\n"
		 "(a shorting bar in place of the part), reads the residual admittance (open: G + jB, stray C)\n"
		 "or impedance (short: lead R + jX, lead L), then runs the meter's own correction where its\n"
		 "profile has one; otherwise the residuals are stored and subtracted from later sweeps'\n"
		 "readings. Either way the record is stored and every sweep names the compensation in force.\n",
	.opts = fixture_table,
	.max_operands = 1,
	.operands = "open short",
	.epilog = "A sweep warns when its fixture has no compensation or one older than the station file's\n"
		  "[fixture] max_age_hours (default 24 h). See docs/traceability.md.\n",
};

int hb_cmd_fixture(int argc, char **argv)
{
	fixture_args a;
	memset(&a, 0, sizeof a);
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_fixture, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	const char *sub = argc - r.first == 1 ? argv[r.first] : NULL;
	if (!sub || (strcmp(sub, "open") && strcmp(sub, "short"))) {
		hb_cli_error("fixture: say open or short (e.g. henrybench fixture open --lcr RES)");
		return HB_EXIT_USAGE;
	}
	if (!a.lcr) {
		hb_cli_error("--lcr is required (try --help)");
		return HB_EXIT_USAGE;
	}
	hb_station station;
	char err[512];
	if (hb_station_load(&station, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_EXIT_USAGE;
	}
	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
	int exit_code = HB_EXIT_RUNTIME;
	hb_lcr *lcr = NULL;
	int rc = hb_lcr_open(a.lcr, hb_global.trace, &lcr);
	if (rc != HB_OK) {
		hb_cli_error("meter %s: %s", a.lcr, lcr ? hb_lcr_errmsg(lcr) : "out of memory");
		exit_code = rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if (!hb_lcr_answers_as_meter(lcr)) {
		hb_cli_error("--lcr %s: '%s' is a supply, not a meter", a.lcr, hb_lcr_idn(lcr)->raw);
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	FILE *info = a.json ? stderr : stdout;
	fprintf(info, "meter: %s (profile %s)\n", hb_lcr_idn(lcr)->raw, hb_lcr_profile_name(lcr));
	hb_fixture_request req = { .fixture = a.fixture, .which = strcmp(sub, "open") == 0 ? HB_CORRECTION_OPEN : HB_CORRECTION_SHORT,
				   .freqs = a.freqs, .n_freqs = a.n_freqs, .measure_only = a.measure_only,
				   .operator_name = station.operator_name, .out = info };
	hb_db_fixture_comp rec;
	rc = hb_fixture_run(db, lcr, &req, &rec, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("fixture %s: %s", sub, err);
		goto out;
	}
	if (a.json) {
		json_t *o = json_object();
		json_object_set_new(o, "id", json_integer(rec.id));
		json_object_set_new(o, "fixture", json_string(rec.fixture));
		json_object_set_new(o, "kind", json_string(rec.kind));
		json_object_set_new(o, "method", json_string(rec.method));
		json_object_set_new(o, "at", json_string(rec.at));
		json_error_t je;
		json_t *res = json_loads(rec.residuals, 0, &je);
		json_object_set_new(o, "residuals", res ? res : json_array());
		json_object_set_new(o, "note", json_string(rec.note));
		exit_code = hb_print_json(o) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	} else {
		printf("fixture '%s' %s compensation %lld stored (%s): %s\n", rec.fixture, rec.kind, (long long)rec.id,
		       rec.method, rec.note);
		exit_code = HB_EXIT_OK;
	}
out:
	hb_lcr_close(lcr);
	hb_db_close(db);
	return exit_code;
}
