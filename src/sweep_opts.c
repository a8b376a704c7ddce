/* src/sweep_opts.c - the sweep options that sweep, fsweep and inspect share, and the limits they resolve to */
#include "sweep_opts.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"

void hb_sweep_opts_init(hb_sweep_opts *o)
{
	memset(o, 0, sizeof *o);
	o->max_current = o->max_voltage = o->max_power = o->ramp = o->ambient_c = NAN;
}

bool hb_sweep_opts_parse(int opt, const char *arg, hb_sweep_plan *p, hb_sweep_opts *o, int *rc)
{
	long n;
	*rc = HB_OK;
	switch (opt) {
	case HB_SWEEP_OPT_FREQ:
		*rc = hb_opt_value("--freq", arg, "Hz", 1, 1e9, &p->frequency);
		o->freq_given = true;
		return true;
	case HB_SWEEP_OPT_STEPS:
		*rc = hb_opt_int("--steps", arg, 2, 10000, &n);
		p->steps = (int)n;
		o->steps_given = true;
		return true;
	case HB_SWEEP_OPT_AVG:
		*rc = hb_opt_int("--avg", arg, 1, 256, &n);
		p->averaging = (int)n;
		return true;
	case HB_SWEEP_OPT_APERTURE:
		if (strcmp(arg, "short") == 0)
			p->aperture = HB_APERTURE_SHORT;
		else if (strcmp(arg, "medium") == 0)
			p->aperture = HB_APERTURE_MEDIUM;
		else if (strcmp(arg, "long") == 0)
			p->aperture = HB_APERTURE_LONG;
		else {
			hb_cli_error("--aperture '%s': accepted short, medium or long", arg);
			*rc = HB_ERR_ARG;
		}
		return true;
	case HB_SWEEP_OPT_SETTLE:
		if (strcmp(arg, "auto") == 0) {
			p->settle = HB_SETTLE_AUTO;
		} else {
			p->settle = HB_SETTLE_FIXED;
			*rc = hb_opt_value("--settle", arg, "s", 0, 3600, &p->settle_time);
		}
		return true;
	case HB_SWEEP_OPT_SETTLE_TIMEOUT:
		*rc = hb_opt_value("--settle-timeout", arg, "s", 0.01, 3600, &p->settle_timeout);
		return true;
	case HB_SWEEP_OPT_MAX_CURRENT:
		*rc = hb_opt_value("--max-current", arg, "A", 1e-6, 1000, &o->max_current);
		return true;
	case HB_SWEEP_OPT_MAX_VOLTAGE:
		*rc = hb_opt_value("--max-voltage", arg, "V", 1e-3, 1000, &o->max_voltage);
		return true;
	case HB_SWEEP_OPT_MAX_POWER:
		*rc = hb_opt_value("--max-power", arg, "W", 1e-3, 100000, &o->max_power);
		return true;
	case HB_SWEEP_OPT_RAMP:
		*rc = hb_opt_value("--ramp", arg, "A/s", 1e-3, 1000, &o->ramp);
		return true;
	case HB_SWEEP_OPT_AMBIENT:
		*rc = hb_opt_value("--ambient", arg, "", -60, 200, &o->ambient_c);
		return true;
	default:
		return false;
	}
}

int hb_sweep_opts_open_part(const char *part_number, hb_db **db, hb_db_part *part)
{
	int rc = hb_db_open(hb_global.db_path, db);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", *db ? hb_db_errmsg(*db) : "out of memory");
		return HB_EXIT_RUNTIME;
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

/* A limit nobody set does not loosen one that was. */
static double min_defined(double a, double b)
{
	if (isnan(a))
		return b;
	if (isnan(b))
		return a;
	return a < b ? a : b;
}

void hb_sweep_opts_apply(const hb_sweep_opts *o, const hb_station *st, const hb_db_part *part, hb_sweep_plan *plan)
{
	/* A datasheet's test conditions are the defaults: verdicts only mean
	 * something when the part is measured the way its spec says. */
	if (!o->freq_given && isfinite(part->test_freq_hz))
		plan->frequency = part->test_freq_hz;
	if (!o->level_given && isfinite(part->test_level) && part->test_level > 0) {
		plan->level = part->test_level;
		plan->level_kind = part->test_level_kind == HB_DB_LEVEL_CURRENT ? HB_LEVEL_CURRENT : HB_LEVEL_VOLTAGE;
	}
	hb_sweep_limits *lim = &plan->limits;
	double rating = fmax(isnan(part->rated_current_a) ? 0 : part->rated_current_a,
			     isnan(part->sat_current_a) ? 0 : part->sat_current_a);
	double part_limit = rating > 0 ? rating * st->part_overdrive : NAN;
	lim->max_current = min_defined(min_defined(o->max_current, st->max_current), part_limit);
	lim->max_voltage = min_defined(o->max_voltage, st->max_voltage);
	lim->max_power = min_defined(o->max_power, st->max_power);
	if (!isnan(o->ramp))
		lim->ramp_rate = o->ramp;
	else if (!isnan(st->ramp_rate))
		lim->ramp_rate = st->ramp_rate;
}

int hb_sweep_opts_parse_spacing(const char *arg, hb_spacing *spacing)
{
	if (strcmp(arg, "lin") == 0)
		*spacing = HB_SPACING_LIN;
	else if (strcmp(arg, "log") == 0)
		*spacing = HB_SPACING_LOG;
	else {
		hb_cli_error("--spacing '%s': accepted lin or log", arg);
		return HB_ERR_ARG;
	}
	return HB_OK;
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
		if (rc != HB_OK) {
			hb_cli_error("supply %s: %s", supply_resource, *supply ? hb_supply_errmsg(*supply) : "out of memory");
			return rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		}
	}
	/* Named only once both answered, so a failed supply leaves just its error. */
	fprintf(info, "meter:  %s (profile %s)\n", hb_lcr_idn(*lcr)->raw, hb_lcr_profile_name(*lcr));
	if (*supply)
		fprintf(info, "supply: %s (profile %s)\n", hb_supply_idn(*supply)->raw, hb_supply_profile_name(*supply));
	return HB_EXIT_OK;
}
