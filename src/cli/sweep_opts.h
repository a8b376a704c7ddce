/* src/cli/sweep_opts.h - the sweep options that sweep, fsweep and inspect share, and the limits they resolve to */
#ifndef HB_SWEEP_OPTS_H
#define HB_SWEEP_OPTS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"

#include "cli.h"

/* The custom parsers of the shared options (field: the hb_sweep_plan). */
int hb_sweep_opts_take_settle(const hb_opt *o, const char *text, void *field);
int hb_sweep_opts_take_spacing(const hb_opt *o, const char *text, void *field);
extern const char *const hb_sweep_aperture_words[];
extern const int hb_sweep_aperture_codes[];
extern const char *const hb_sweep_spacing_words[];
extern const int hb_sweep_spacing_codes[];
extern const char *const hb_sweep_settle_words[];

/* The shared entries of a command's option table; T is the command's
 * struct, which holds an hb_sweep_plan plan and an hb_sweep_opts opts. */
#define HB_SWEEP_OPTIONS(T)                                                                                         \
	{ .name = "freq", .kind = HB_OPT_VALUE, .arg = "HZ", .unit = "Hz", .min = 1, .max = 1e9,                   \
	  .off = offsetof(T, plan.frequency), .given = HB_OPT_GIVEN(T, opts.freq_given),                          \
	  .help = "test frequency (default: the part's spec, else 100 kHz)" },                                     \
	{ .name = "steps", .kind = HB_OPT_INT, .arg = "N", .min = 2, .max = 10000, .off = offsetof(T, plan.steps), \
	  .given = HB_OPT_GIVEN(T, opts.steps_given), .help = "points on the way up (default 21)" },               \
	{ .name = "avg", .kind = HB_OPT_INT, .arg = "N", .min = 1, .max = 256, .off = offsetof(T, plan.averaging), \
	  .help = "readings averaged by the meter (default 1)" },                                                   \
	{ .name = "aperture", .kind = HB_OPT_ENUM, .words = hb_sweep_aperture_words,                               \
	  .codes = hb_sweep_aperture_codes, .off = offsetof(T, plan.aperture),                                     \
	  .help = "integration time (default medium)" },                                                            \
	{ .name = "settle", .kind = HB_OPT_CUSTOM, .arg = "auto|TIME", .unit = "s", .min = 0, .max = 3600,         \
	  .words = hb_sweep_settle_words, .parse = hb_sweep_opts_take_settle, .off = offsetof(T, plan),            \
	  .help = "auto: read until readings agree within the meter's noise; or a fixed wait, 0 s to 3600 s" },     \
	{ .name = "settle-timeout", .kind = HB_OPT_VALUE, .arg = "S", .unit = "s", .min = 0.01, .max = 3600,       \
	  .off = offsetof(T, plan.settle_timeout), .help = "longest auto wait per point (default 10 s)" },        \
	{ .name = "max-current", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 1e-6, .max = 1000,          \
	  .off = offsetof(T, opts.max_current), .help = "current limit (may only tighten the station's and part's)" }, \
	{ .name = "max-voltage", .kind = HB_OPT_VALUE, .arg = "V", .unit = "V", .min = 1e-3, .max = 1000,          \
	  .off = offsetof(T, opts.max_voltage), .help = "voltage limit (may only tighten the station file's)" },  \
	{ .name = "max-power", .kind = HB_OPT_VALUE, .arg = "W", .unit = "W", .min = 1e-3, .max = 100000,          \
	  .off = offsetof(T, opts.max_power), .help = "power limit (may only tighten the station file's)" },      \
	{ .name = "ramp", .kind = HB_OPT_VALUE, .arg = "A/s", .unit = "A/s", .min = 1e-3, .max = 1000,             \
	  .off = offsetof(T, opts.ramp), .help = "fastest current change between steps (default 5 A/s)" },        \
	{ .name = "ambient", .kind = HB_OPT_VALUE, .arg = "C", .unit = "", .min = -60, .max = 200,                 \
	  .off = offsetof(T, opts.ambient_c), .help = "ambient temperature to record, degC" },                     \
	{ .name = "off-threshold", .kind = HB_OPT_VALUE, .arg = "A", .unit = "A", .min = 1e-6, .max = 10,          \
	  .off = offsetof(T, opts.off_threshold),                                                                    \
	  .help = "the output goes off only below this current (default 20 mA)" },                                 \
	{ .name = "fixture", .kind = HB_OPT_TEXT, .arg = "ID", .off = offsetof(T, opts.fixture),                 \
	  .help = "the fixture whose open/short compensation is in force (default: default)" },                   \
	{ .name = "allow-overdue", .kind = HB_OPT_FLAG, .off = offsetof(T, opts.allow_overdue),                   \
	  .help = "go ahead with an instrument past its calibration due date (recorded with the sweep)" }

/* What the command line said beyond the plan: which plan fields it set
 * (the part's spec fills the others) and the limits it asked for. */
typedef struct hb_sweep_opts {
	bool freq_given, level_given, steps_given;
	double max_current, max_voltage, max_power, ramp; /* NAN = not given */
	double off_threshold;                              /* A; NAN = not given */
	double ambient_c;                                  /* NAN = not given */
	const char *fixture;                               /* --fixture; NULL = "default" */
	bool allow_overdue;                                /* --allow-overdue */
} hb_sweep_opts;

void hb_sweep_opts_init(hb_sweep_opts *o);

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
