/* src/cli/sweep_opts.h - the sweep options that sweep, fsweep and inspect share, and the limits they resolve to */
#ifndef HB_SWEEP_OPTS_H
#define HB_SWEEP_OPTS_H

#include <getopt.h>
#include <stdbool.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"

/* getopt_long values of the shared options; above any command's own enum
 * (which start at 256) so the two never collide. */
enum {
	HB_SWEEP_OPT_FREQ = 1000, HB_SWEEP_OPT_STEPS, HB_SWEEP_OPT_AVG, HB_SWEEP_OPT_APERTURE, HB_SWEEP_OPT_SETTLE,
	HB_SWEEP_OPT_SETTLE_TIMEOUT, HB_SWEEP_OPT_MAX_CURRENT, HB_SWEEP_OPT_MAX_VOLTAGE, HB_SWEEP_OPT_MAX_POWER,
	HB_SWEEP_OPT_RAMP, HB_SWEEP_OPT_AMBIENT, HB_SWEEP_OPT_OFF_THRESHOLD
};

/* The shared entries of a command's struct option table. */
#define HB_SWEEP_LONG_OPTIONS                                                   \
	{ "freq", required_argument, NULL, HB_SWEEP_OPT_FREQ },                 \
	{ "steps", required_argument, NULL, HB_SWEEP_OPT_STEPS },               \
	{ "avg", required_argument, NULL, HB_SWEEP_OPT_AVG },                   \
	{ "aperture", required_argument, NULL, HB_SWEEP_OPT_APERTURE },         \
	{ "settle", required_argument, NULL, HB_SWEEP_OPT_SETTLE },             \
	{ "settle-timeout", required_argument, NULL, HB_SWEEP_OPT_SETTLE_TIMEOUT }, \
	{ "max-current", required_argument, NULL, HB_SWEEP_OPT_MAX_CURRENT },   \
	{ "max-voltage", required_argument, NULL, HB_SWEEP_OPT_MAX_VOLTAGE },   \
	{ "max-power", required_argument, NULL, HB_SWEEP_OPT_MAX_POWER },       \
	{ "ramp", required_argument, NULL, HB_SWEEP_OPT_RAMP },                 \
	{ "ambient", required_argument, NULL, HB_SWEEP_OPT_AMBIENT },           \
	{ "off-threshold", required_argument, NULL, HB_SWEEP_OPT_OFF_THRESHOLD }

/* What the command line said beyond the plan: which plan fields it set
 * (the part's spec fills the others) and the limits it asked for. */
typedef struct hb_sweep_opts {
	bool freq_given, level_given, steps_given;
	double max_current, max_voltage, max_power, ramp; /* NAN = not given */
	double off_threshold;                              /* A; NAN = not given */
	double ambient_c;                                  /* NAN = not given */
} hb_sweep_opts;

void hb_sweep_opts_init(hb_sweep_opts *o);

/* Takes one of the HB_SWEEP_OPT_* options into the plan or o; false when
 * opt is not one of them. *rc is HB_ERR_ARG after the one-line error. */
bool hb_sweep_opts_parse(int opt, const char *arg, hb_sweep_plan *plan, hb_sweep_opts *o, int *rc);

/* Opens the store and reads the part to be swept; prints the error and
 * returns the exit code (HB_EXIT_OK when both worked). *db is set whenever
 * it was opened, so the caller closes it on every path. */
int hb_sweep_opts_open_part(const char *part_number, hb_db **db, hb_db_part *part);

/* The limits a sweep resolves, each with where its value came from. */
typedef enum hb_limit_id {
	HB_LIMIT_CURRENT,       /* A */
	HB_LIMIT_VOLTAGE,       /* V */
	HB_LIMIT_POWER,         /* W */
	HB_LIMIT_RAMP,          /* A/s */
	HB_LIMIT_OFF_THRESHOLD, /* A: the output may be switched off once the current is below it */
	HB_LIMIT_COUNT
} hb_limit_id;

typedef struct hb_resolved_limit {
	double value;      /* NAN: no source sets it */
	char source[256];  /* where it came from and which option or key changes it */
} hb_resolved_limit;

typedef struct hb_limit_report {
	hb_resolved_limit limit[HB_LIMIT_COUNT];
} hb_limit_report;

/* The one place every limit is resolved: each is the strictest (lowest) of
 * the station file, the part's ratings (current: rating x part_overdrive)
 * and the command line, else its default. The command line may only
 * tighten: a looser value, or any limit option when the station file says
 * lock_limits = yes, is HB_ERR_ARG; a top current (bias sweep: the higher
 * end; fsweep: --bias) above the current limit is HB_ERR_LIMIT. Either way
 * err gets one line naming the values and their sources, and plan->limits
 * holds the strictest values (never a looser one). report may be NULL. */
int hb_sweep_opts_resolve(const hb_sweep_opts *o, const hb_station *st, const hb_db_part *part, hb_sweep_plan *plan,
			  hb_limit_report *report, char *err, size_t errlen);

/* Prints each resolved limit with its source, one per line, for --dry-run. */
void hb_sweep_opts_print_limits(FILE *out, const hb_limit_report *report);

/* The test conditions alone (frequency, level from the part's spec). */
void hb_sweep_opts_apply_conditions(const hb_sweep_opts *o, const hb_db_part *part, hb_sweep_plan *plan);

/* --spacing lin|log into *spacing; HB_ERR_ARG after the one-line error. */
int hb_sweep_opts_parse_spacing(const char *arg, hb_spacing *spacing);

/* Asks before a sweep whose top current is above the station's confirmation
 * threshold; yes skips the question, and without may_ask (no terminal, or no
 * one to answer) the sweep is refused. question is the prompt written on
 * prompt. HB_OK to go on, else HB_ERR_LIMIT after the one-line error. */
int hb_sweep_opts_confirm(const hb_station *st, double top, bool yes, bool may_ask, FILE *in, FILE *prompt,
			  const char *question);

/* Opens the meter and, when supply_resource is not NULL, the supply, then
 * names both on info. Prints the error and returns the exit code
 * (HB_EXIT_OK when all worked); the caller closes both on every path. */
int hb_sweep_opts_open_bench(FILE *info, const char *lcr_resource, const char *supply_resource, hb_lcr **lcr,
			     hb_supply **supply);

/* Every meter setting the plan asks for (circuit and pair, averaging,
 * aperture, level kind) must be one the meter's profile can apply
 * (hb_lcr_can): otherwise one line naming the option and the profile, and
 * HB_ERR_UNSUPPORTED (exit 2). Call after opening, before anything is
 * switched on, so a sweep is never stored with a setting never sent. */
int hb_sweep_opts_check_meter(hb_lcr *lcr, const hb_sweep_plan *plan);

#endif
