/* src/quality/inspect.h - lot inspection by ISO 2859-1 single sampling: plan, sample units measured and judged, lot decided, resumable */
#ifndef HB_INSPECT_H
#define HB_INSPECT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../../drivers/hb_drivers.h"
#include "analysis.h"
#include "rules.h"
#include "../bench/bench.h"

/* What the source of units answers for the next sample position. */
typedef enum hb_inspect_action {
	HB_INSPECT_MEASURE, /* the unit is in the fixture: measure it */
	HB_INSPECT_SKIP,    /* this unit could not be tested: record it skipped, draw the next */
	HB_INSPECT_PAUSE,   /* stop here; the lot stays open and a later run resumes */
	HB_INSPECT_RETRY,   /* (after a failed sweep only) measure the same unit again */
	HB_INSPECT_RECORD,  /* (after a failed sweep only) record the unit as the part-fault policy says */
} hb_inspect_action;

/* What becomes of a unit the bench could not measure because of the part
 * itself (compliance, open winding, reading out of range). */
typedef enum hb_inspect_part_policy {
	HB_INSPECT_PART_NONCONFORMING, /* default: judged nonconforming, the reason in its record */
	HB_INSPECT_PART_RETEST,        /* not judged: the inspection pauses so the unit can be checked and measured again */
} hb_inspect_part_policy;

/* Bench failures in a row (no unit measured between them) that pause the
 * inspection: one may be a glitch, a second on the same unit is a sick bench. */
enum { HB_INSPECT_BENCH_FAILURES_TO_PAUSE = 2 };

typedef struct hb_inspect_config {
	hb_db *db;
	hb_lcr *lcr;
	hb_supply *supply;
	const hb_station *station;
	const hb_db_part *part;        /* must be stored (part->id set) */
	const char *lot_code;
	long lot_size;
	double aql;
	hb_insp_level level;
	hb_severity severity;
	hb_sweep_plan plan;            /* the bias sweep every sample unit gets */
	hb_analysis_options analysis;  /* fit options; noise is taken from each sweep */
	double ambient_c;              /* NAN = not given */
	FILE *out;                     /* plan, per-unit lines, tally, decision; NULL = quiet */
	FILE *progress;                /* per-point progress of each sweep; NULL = quiet */
	bool progress_tty;
	bool verbose_fit;              /* print each unit's whole fit, not one line */
	hb_inspect_part_policy part_fault;
	int bench_failures_to_pause;   /* 0 = HB_INSPECT_BENCH_FAILURES_TO_PAUSE */
	bool resume_only;              /* refuse a lot that has not been begun (a mistyped lot code) */
	/* How a unit with a conditional outcome (the non-binary decision rule)
	 * counts; the plan printout states it. Default: nonconforming. */
	hb_conditional_policy conditional_policy;
	/* The lot stream (switching rules, stream.h): the supplier recorded on
	 * the lot (NULL = leave what a begun lot has, '' on a new one), and
	 * production stated irregular or delayed for this lot. The caller
	 * chooses severity from the stream. */
	const char *supplier;
	bool irregular;
	/* traceability: passed to every sample's session */
	bool allow_overdue;
	const char *fixture;           /* NULL = "default" */
} hb_inspect_config;

/* One sample position as it was recorded (or would have been). */
typedef struct hb_inspect_unit {
	int sequence;
	char serial[HB_DB_ID_LEN];
	hb_db_outcome outcome;         /* pass, fail (nonconforming) or skipped */
	int64_t sweep_id;
	double l0_h;                   /* NAN when not measured */
	hb_overall overall;            /* of the part's checks */
	hb_sweep_cause cause;          /* HB_CAUSE_PART: the part could not be measured */
	char note[HB_DB_TEXT_LEN];
	bool conditional;              /* a check came out conditional; outcome is how the policy counted it */
} hb_inspect_unit;

typedef struct hb_inspect_tally {
	int tested;                    /* pass + fail */
	int nonconforming;
	int skipped;
	int conditional;               /* of the tested, units with a conditional outcome (counted by the policy) */
	int conditional_nonconforming; /* of those, counted nonconforming */
	int next_sequence;
} hb_inspect_tally;

typedef struct hb_inspect_callbacks {
	void *ctx;
	/*
	 * Names the unit at sample position sequence (1-based, skipped
	 * positions included). Writes its serial and says what to do. complaint
	 * is NULL the first time and a one-line reason when the previous answer
	 * was refused (e.g. a serial already inspected in this lot); a source
	 * that cannot choose another serial should answer HB_INSPECT_PAUSE.
	 * Required.
	 */
	hb_inspect_action (*next_unit)(void *ctx, int sequence, const char *complaint, char *serial, size_t cap);
	/* Called just before a unit is measured (each attempt). Lets the demo and
	 * the tests give each unit its own simulated part. Non-HB_OK pauses. */
	int (*before_unit)(void *ctx, int sequence, const char *serial);
	/* The sweep could not measure the unit because of the part (see
	 * hb_inspect_sweep_cause): HB_INSPECT_RETRY measures it again (after
	 * re-seating it), HB_INSPECT_PAUSE pauses, anything else applies
	 * cfg->part_fault. Never called for bench, limit or operator stops:
	 * those judge nothing. NULL = apply the policy (what --auto does). */
	hb_inspect_action (*sweep_failed)(void *ctx, int sequence, const char *serial, const hb_sweep_result *result);
	/* After a position has been recorded. A non-HB_OK return pauses (tests
	 * use it to interrupt after k units). */
	int (*after_unit)(void *ctx, const hb_inspect_unit *unit, const hb_inspect_tally *tally);
} hb_inspect_callbacks;

typedef enum hb_inspect_end {
	HB_INSPECT_DECIDED,            /* accept or reject recorded on the lot */
	HB_INSPECT_PAUSED,             /* lot open; run again to resume */
	HB_INSPECT_ALREADY_DECIDED,    /* nothing done: the lot was decided earlier */
} hb_inspect_end;

typedef struct hb_inspect_result {
	hb_sampling_plan plan;
	int64_t lot_id;
	hb_inspect_end end;
	hb_lot_decision decision;      /* HB_LOT_CONTINUE while the lot is open */
	hb_inspect_tally tally;
	bool resumed;                  /* records existed before this run */
	int resumed_at;                /* first sequence of this run */
	int signal_number;             /* pause caused by this signal, or 0 */
	hb_sweep_cause pause_cause;    /* why it paused: OPERATOR (a signal, after_unit), BENCH, LIMIT, PART
	                                * (retest policy); NONE when the unit source paused ('q', list ended) */
	int bench_failures;            /* bench failures in a row when the run ended */
	int pause_sequence;            /* the position a resumed run measures first (0 = none) */
	char pause_serial[HB_DB_ID_LEN]; /* the unit it measures there, when known */
	bool current_may_flow;         /* a sweep lost the supply: see hb_session_warn_current_may_flow */
	hb_conditional_policy conditional_policy; /* the policy the run counted conditional units by */
	char message[320];             /* why it paused or failed */
} hb_inspect_result;

/* Sensible defaults: level II normal, analysis defaults, ambient unknown. */
void hb_inspect_config_init(hb_inspect_config *cfg);

/*
 * Runs (or resumes) the inspection of a lot: chooses the plan, stores it on
 * the lot (refusing a plan that differs from the one a begun lot carries),
 * then for each sample position asks cb for the unit, measures it through
 * hb_session_measure, fits and judges it with hb_analysis_sweep, and records
 * the position with hb_db_inspection_put. Stops as soon as hb_lot_decide
 * decides, and records the decision on the lot.
 *
 * A unit whose verdict is incomplete (a check of the part could not be made)
 * counts as nonconforming: acceptance sampling may not count a unit as
 * conforming without evidence (docs/inspection.md). So does, by default, a
 * unit the part itself kept from being measured (compliance, overload): the
 * reason goes in its record. A bench failure (time-out, lost link,
 * instrument or store error) judges nothing and uses no position: the same
 * position is asked for again, and cfg->bench_failures_to_pause in a row
 * pause the inspection. A safety limit pauses at once. A signal during a
 * sweep ends it through the engine's safe path; the position is not recorded
 * and the inspection pauses, so the resumed run measures that unit again.
 *
 * Returns HB_OK when the run ended as planned (decided, paused on request,
 * or already decided; see out->end), HB_ERR_ARG for a bad lot or plan
 * (message in out->message), or the store's error.
 */
int hb_inspect_run(const hb_inspect_config *cfg, const hb_inspect_callbacks *cb, hb_inspect_result *out);

/* Why a sweep that did not complete stopped: result->cause when the engine
 * gave one, else derived from result->status (compliance, overload: part;
 * time-out, lost link, protocol, instrument, I/O, store: bench; interrupted:
 * operator; limit: limit; anything else: bench, so nothing is judged).
 * HB_CAUSE_NONE for a complete sweep. The derivation goes once the engine
 * fills the cause on every path. */
hb_sweep_cause hb_inspect_sweep_cause(const hb_sweep_result *result);

/* "none", "operator", "part", "bench", "limit". */
const char *hb_inspect_cause_name(hb_sweep_cause cause);

/* The k-th serial (k = 0 is first) counting up the trailing number of
 * first and keeping its width: "LOT7-0001", 2 -> "LOT7-0003". A serial
 * without a trailing number gets "-<k+1>" appended for k > 0. HB_ERR_ARG
 * when it would not fit in cap. */
int hb_inspect_serial_nth(const char *first, int k, char *out, size_t cap);

/* Prints the plan as the inspection shows it (code letter, arrow, n, Ac, Re). */
void hb_inspect_print_plan(FILE *out, const hb_sampling_plan *plan);
/* Prints how units that cannot be measured are treated (part fault, bench
 * fault, limit, incomplete verdict), as stated at the start of a run. */
void hb_inspect_print_rules(FILE *out, const hb_inspect_config *cfg);

/* The lot, its plan, tally, decision and every recorded position as JSON. */
json_t *hb_inspect_lot_json(hb_db *db, int64_t lot_id, const hb_inspect_result *result);
/* One ISO 2859-1 plan as JSON, the same object in `plan --json` and in a
 * lot's record; NULL when out of memory. */
json_t *hb_sampling_plan_json(const hb_sampling_plan *plan);

#endif
