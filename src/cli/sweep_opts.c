/* src/cli/sweep_opts.c - the sweep options that sweep, fsweep and inspect share, and the limits they resolve to */
#include "sweep_opts.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

void hb_sweep_opts_init(hb_sweep_opts *o)
{
	memset(o, 0, sizeof *o);
	o->max_current = o->max_voltage = o->max_power = o->ramp = o->ambient_c = o->off_threshold = NAN;
}

const char *const hb_sweep_aperture_words[] = { "short", "medium", "long", NULL };
const int hb_sweep_aperture_codes[] = { HB_APERTURE_SHORT, HB_APERTURE_MEDIUM, HB_APERTURE_LONG };
const char *const hb_sweep_spacing_words[] = { "lin", "log", NULL };
const int hb_sweep_spacing_codes[] = { HB_SPACING_LIN, HB_SPACING_LOG };
const char *const hb_sweep_settle_words[] = { "auto", NULL };

int hb_sweep_opts_take_settle(const hb_opt *o, const char *text, void *field)
{
	hb_sweep_plan *p = field;
	if (strcmp(text, "auto") == 0) {
		p->settle = HB_SETTLE_AUTO;
		return HB_OK;
	}
	p->settle = HB_SETTLE_FIXED;
	return hb_opt_value("--settle", text, o->unit, o->min, o->max, &p->settle_time);
}

/* Sets the spacing of both sweep kinds: a bias plan and a frequency plan
 * read different fields. */
int hb_sweep_opts_take_spacing(const hb_opt *o, const char *text, void *field)
{
	hb_sweep_plan *p = field;
	if (strcmp(text, "lin") == 0)
		p->spacing = HB_SPACING_LIN;
	else if (strcmp(text, "log") == 0)
		p->spacing = HB_SPACING_LOG;
	else {
		hb_cli_error("--%s '%s': accepted lin or log", o->name, text);
		return HB_ERR_ARG;
	}
	p->f_spacing = p->spacing;
	return HB_OK;
}

int hb_sweep_opts_open_part(const char *part_number, hb_db **db, hb_db_part *part)
{
	/* A sweep needs a stored part, so a store that is not there is a
	 * mistyped --db: named, and no empty store left behind (dry runs too). */
	int rc = hb_db_open_as(hb_global.db_path, HB_DB_OPEN_EXISTING, db);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", *db ? hb_db_errmsg(*db) : "out of memory");
		return rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	rc = hb_db_part_get(*db, part_number, part);
	if (rc == HB_ERR_NOTFOUND) {
		hb_cli_error("no part '%s' in %s: add it with 'henrybench part add %s ...'", part_number, hb_db_path(*db),
			     part_number);
		return HB_EXIT_USAGE;
	} else if (rc != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(*db));
		return HB_EXIT_RUNTIME;
	}
	return HB_EXIT_OK;
}

void hb_sweep_opts_apply_conditions(const hb_sweep_opts *o, const hb_db_part *part, hb_sweep_plan *plan)
{
	/* A datasheet's test conditions are the defaults: verdicts only mean
	 * something when the part is measured the way its spec says. */
	if (!o->freq_given && isfinite(part->test_freq_hz))
		plan->frequency = part->test_freq_hz;
	if (!o->level_given && isfinite(part->test_level) && part->test_level > 0) {
		plan->level = part->test_level;
		plan->level_kind = part->test_level_kind == HB_DB_LEVEL_CURRENT ? HB_LEVEL_CURRENT : HB_LEVEL_VOLTAGE;
	}
}

/* One source that may set a limit: what it is called in a sentence ("the
 * station file's ramp_rate") and what follows its value (" (station.ini)"). */
typedef struct limit_candidate {
	double value; /* NAN: this source sets nothing */
	char noun[96];
	char detail[200];
} limit_candidate;

typedef struct limit_def {
	const char *name;   /* in --dry-run */
	const char *unit;
	const char *option; /* command line */
	const char *key;    /* station file [limits] */
} limit_def;

static const limit_def limit_defs[HB_LIMIT_COUNT] = {
	{ "current", "A", "--max-current", "max_current" },
	{ "voltage", "V", "--max-voltage", "max_voltage" },
	{ "power", "W", "--max-power", "max_power" },
	{ "ramp", "A/s", "--ramp", "ramp_rate" },
	{ "off threshold", "A", "--off-threshold", "off_threshold" },
};

enum { SRC_STATION, SRC_PART, SRC_CLI, SRC_COUNT };

static void candidate_station(limit_candidate *c, double value, const limit_def *d, const hb_station *st)
{
	c->value = value;
	snprintf(c->noun, sizeof c->noun, "the station file's %s", d->key);
	snprintf(c->detail, sizeof c->detail, " (%s)", st->path[0] ? st->path : "station file");
}

/* The part's current cap: its highest rating times part_overdrive, named
 * with the rating it rests on and the key that changes it. */
static void candidate_part(limit_candidate *c, const hb_station *st, const hb_db_part *part)
{
	double rated = isnan(part->rated_current_a) ? 0 : part->rated_current_a;
	double sat = isnan(part->sat_current_a) ? 0 : part->sat_current_a;
	double rating = fmax(rated, sat);
	c->value = NAN;
	if (!(rating > 0))
		return;
	c->value = rating * st->part_overdrive;
	snprintf(c->noun, sizeof c->noun, "the part cap");
	char key[320];
	if (st->part_overdrive_set)
		snprintf(key, sizeof key, "station part_overdrive, %s", st->path);
	else
		snprintf(key, sizeof key, "default part_overdrive; set part_overdrive in the station file");
	snprintf(c->detail, sizeof c->detail, " = %.4g x the part's %s current %.4g A (%s)", st->part_overdrive,
		 sat >= rated ? "saturation-spec" : "rated", rating, key);
}

static void report_set(hb_resolved_limit *r, double value, const limit_candidate *c)
{
	r->value = value;
	snprintf(r->source, sizeof r->source, "%s%s", c->noun, c->detail);
}

int hb_sweep_opts_resolve(const hb_sweep_opts *o, const hb_station *st, const hb_db_part *part, hb_sweep_plan *plan,
			  hb_limit_report *report, char *err, size_t errlen)
{
	hb_limit_report local;
	if (!report)
		report = &local;
	if (err && errlen)
		err[0] = '\0';
	int rc = HB_OK;
	const double cli[HB_LIMIT_COUNT] = { o->max_current, o->max_voltage, o->max_power, o->ramp, o->off_threshold };
	const double station[HB_LIMIT_COUNT] = { st->max_current, st->max_voltage, st->max_power, st->ramp_rate,
						 st->off_threshold };
	/* Defaults where no source sets a value: the engine's ramp rate and the
	 * off threshold; current, voltage and power have none on purpose. */
	const double fallback[HB_LIMIT_COUNT] = { NAN, NAN, NAN, plan->limits.ramp_rate, HB_STATION_OFF_THRESHOLD };
	for (int id = 0; id < HB_LIMIT_COUNT; id++) {
		const limit_def *d = &limit_defs[id];
		limit_candidate c[SRC_COUNT];
		candidate_station(&c[SRC_STATION], station[id], d, st);
		c[SRC_PART].value = NAN;
		if (id == HB_LIMIT_CURRENT)
			candidate_part(&c[SRC_PART], st, part);
		c[SRC_CLI].value = cli[id];
		snprintf(c[SRC_CLI].noun, sizeof c[SRC_CLI].noun, "%s", d->option);
		snprintf(c[SRC_CLI].detail, sizeof c[SRC_CLI].detail, " (command line)");

		/* The strictest of the station file and the part binds the command line. */
		int bind = -1;
		for (int k = SRC_STATION; k <= SRC_PART; k++)
			if (!isnan(c[k].value) && (bind < 0 || c[k].value < c[bind].value))
				bind = k;
		if (!isnan(cli[id]) && rc == HB_OK) {
			if (st->lock_limits) {
				snprintf(err, errlen,
					 "%s %g %s: the station file %s sets lock_limits = yes, so its limits may not be overridden: leave out %s",
					 d->option, cli[id], d->unit, st->path[0] ? st->path : "", d->option);
				rc = HB_ERR_ARG;
			} else if (bind >= 0 && cli[id] > c[bind].value * (1 + 1e-9)) {
				snprintf(err, errlen, "%s %g %s is looser than %s %g %s%s: the command line may only tighten limits",
					 d->option, cli[id], d->unit, c[bind].noun, c[bind].value, d->unit, c[bind].detail);
				rc = HB_ERR_ARG;
			}
		}
		int pick = bind;
		if (!isnan(cli[id]) && !st->lock_limits && (pick < 0 || cli[id] < c[pick].value * (1 - 1e-12)))
			pick = SRC_CLI;
		hb_resolved_limit *r = &report->limit[id];
		if (pick >= 0) {
			report_set(r, c[pick].value, &c[pick]);
		} else if (!isnan(fallback[id])) {
			limit_candidate def = { .value = fallback[id] };
			snprintf(def.noun, sizeof def.noun, "default");
			snprintf(def.detail, sizeof def.detail, " (set %s or %s in the station file)", d->option, d->key);
			report_set(r, fallback[id], &def);
		} else {
			r->value = NAN;
			snprintf(r->source, sizeof r->source, "not set (give %s or set %s in the station file)", d->option,
				 d->key);
		}
	}
	hb_sweep_limits *lim = &plan->limits;
	lim->max_current = report->limit[HB_LIMIT_CURRENT].value;
	lim->max_voltage = report->limit[HB_LIMIT_VOLTAGE].value;
	lim->max_power = report->limit[HB_LIMIT_POWER].value;
	lim->ramp_rate = report->limit[HB_LIMIT_RAMP].value;
	lim->off_threshold = report->limit[HB_LIMIT_OFF_THRESHOLD].value;
	if (rc != HB_OK)
		return rc;
	/* Checked here as well as by the engine so the refusal names where the
	 * cap comes from and what changes it. */
	double top = plan->kind == HB_SWEEP_BIAS ? fmax(plan->from, plan->to) : plan->bias;
	if (top > 0 && !isnan(lim->max_current) && top > lim->max_current * (1 + 1e-9)) {
		snprintf(err, errlen, "top current %g A exceeds the current limit %g A: %s", top, lim->max_current,
			 report->limit[HB_LIMIT_CURRENT].source);
		return HB_ERR_LIMIT;
	}
	return HB_OK;
}

void hb_sweep_opts_print_limits(FILE *out, const hb_limit_report *report)
{
	fprintf(out, "limits:\n");
	for (int id = 0; id < HB_LIMIT_COUNT; id++) {
		const hb_resolved_limit *r = &report->limit[id];
		char value[48];
		if (isnan(r->value))
			snprintf(value, sizeof value, "-");
		else
			snprintf(value, sizeof value, "%.4g %s", r->value, limit_defs[id].unit);
		fprintf(out, "  %-14s %-10s %s\n", limit_defs[id].name, value, r->source);
	}
}

int hb_sweep_opts_confirm(const hb_station *st, double top, bool yes, bool may_ask, FILE *in, FILE *prompt,
			  const char *question)
{
	if (yes || isnan(st->confirm_above) || top <= st->confirm_above)
		return HB_OK;
	if (!may_ask) {
		hb_cli_error("top current %.4g A is above the station's confirmation threshold %.4g A: add --yes to proceed",
			     top, st->confirm_above);
		return HB_ERR_LIMIT;
	}
	fputs(question, prompt);
	char line[16] = "";
	if (!fgets(line, sizeof line, in) || strncmp(line, "yes", 3) != 0) {
		hb_cli_error("not confirmed; nothing was switched on");
		return HB_ERR_LIMIT;
	}
	return HB_OK;
}

int hb_sweep_opts_open_bench(FILE *info, const char *lcr_resource, const char *supply_resource, hb_lcr **lcr,
			     hb_supply **supply)
{
	int rc = hb_lcr_open(lcr_resource, hb_global.trace, lcr);
	if (rc != HB_OK) {
		hb_cli_error("meter %s: %s", lcr_resource, *lcr ? hb_lcr_errmsg(*lcr) : "out of memory");
		return rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
	}
	if (supply_resource) {
		rc = hb_supply_open(supply_resource, hb_global.trace, supply);
		if (rc != HB_OK && !hb_lcr_answers_as_meter(*lcr)) {
			hb_cli_error("--lcr %s: '%s' is a supply, not a meter: give the meter to --lcr", lcr_resource,
				     hb_lcr_idn(*lcr)->raw);
			return HB_EXIT_USAGE;
		}
		if (rc != HB_OK) {
			hb_cli_error("supply %s: %s", supply_resource, *supply ? hb_supply_errmsg(*supply) : "out of memory");
			return rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		}
	}
	/* The role check comes before anything is switched on: a supply on
	 * --lcr would take the meter's commands as errors, and a meter on
	 * --supply could never carry the bias. */
	bool lcr_ok = hb_lcr_answers_as_meter(*lcr), supply_ok = !*supply || hb_supply_answers_as_supply(*supply);
	if (!lcr_ok || !supply_ok) {
		char supply_part[400] = "";
		if (*supply)
			snprintf(supply_part, sizeof supply_part, "; --supply %s: '%s' is %s", supply_resource,
				 hb_supply_idn(*supply)->raw, supply_ok ? "a supply" : "a meter, not a supply");
		hb_cli_error("--lcr %s: '%s' is %s%s: %s", lcr_resource, hb_lcr_idn(*lcr)->raw,
			     lcr_ok ? "a meter" : "a supply, not a meter", supply_part,
			     !lcr_ok && *supply && !supply_ok ? "swap the two resources"
							       : "give the meter to --lcr and the supply to --supply");
		return HB_EXIT_USAGE;
	}
	/* Named only once both answered, so a failed supply leaves just its error. */
	fprintf(info, "meter:  %s (profile %s)\n", hb_lcr_idn(*lcr)->raw, hb_lcr_profile_name(*lcr));
	if (*supply)
		fprintf(info, "supply: %s (profile %s)\n", hb_supply_idn(*supply)->raw, hb_supply_profile_name(*supply));
	return HB_EXIT_OK;
}

/* Every meter setting the plan asks for must be one the profile can apply:
 * a setting sent nowhere must not be stored as applied. Runs after the
 * bench is open and before anything is switched on. */
int hb_sweep_opts_check_meter(hb_lcr *lcr, const hb_sweep_plan *p)
{
	static const char *const equiv[] = { "series", "parallel" };
	static const char *const pair[] = { "lr", "lq", "ld", "zth" };
	static const char *const pair_opt[] = { "LR", "LQ", "LD", "ZTH" };
	static const char *const aperture[] = { "short", "medium", "long" };
	const char *profile = hb_lcr_profile_name(lcr);
	char setting[64];
	snprintf(setting, sizeof setting, "function=%s-%s", equiv[p->equiv], pair[p->pair]);
	if (!hb_lcr_can(lcr, setting)) {
		hb_cli_error("--circuit %s --pair %s: the meter's profile '%s' cannot measure it (see 'henrybench identify' for its operations)",
			     equiv[p->equiv], pair_opt[p->pair], profile);
		return HB_ERR_UNSUPPORTED;
	}
	snprintf(setting, sizeof setting, "averaging=%d", p->averaging);
	if (!hb_lcr_can(lcr, setting)) {
		hb_cli_error("--avg %d: the meter's profile '%s' has no 'averaging' operation the meter accepts: accepted only 1",
			     p->averaging, profile);
		return HB_ERR_UNSUPPORTED;
	}
	snprintf(setting, sizeof setting, "aperture=%s", aperture[p->aperture]);
	if (!hb_lcr_can(lcr, setting)) {
		hb_cli_error("--aperture %s: the meter's profile '%s' cannot select it (no 'aperture' operation the meter accepts, or no aperture.%s token; without the operation only medium is accepted)",
			     aperture[p->aperture], profile, aperture[p->aperture]);
		return HB_ERR_UNSUPPORTED;
	}
	const char *level = p->level_kind == HB_LEVEL_CURRENT ? "level.current" : "level.voltage";
	if (!hb_lcr_can(lcr, level)) {
		hb_cli_error("--level %g %s: the meter's profile '%s' has no '%s' operation", p->level,
			     p->level_kind == HB_LEVEL_CURRENT ? "A" : "V", profile, level);
		return HB_ERR_UNSUPPORTED;
	}
	return HB_OK;
}
