/* db/hb_db.h - the store: parts, lots, units, sweeps with every point, fits, verdicts, inspections, history */
#ifndef HB_DB_H
#define HB_DB_H

#include <stddef.h>
#include <stdbool.h>
#include <stdint.h>

#include "../common/hb_status.h"

/*
 * Conventions
 *  - One opaque handle per connection; a handle is used by one thread at a time.
 *  - Every function returns an hb_status (0 = HB_OK, negative = error) and
 *    leaves a one-line explanation in hb_db_errmsg().
 *  - A real-valued field that is not known is NAN (stored as NULL); call the
 *    _init function of a struct before filling it. Integer fields that are
 *    not known are 0 unless noted.
 *  - Text fields are fixed arrays, NUL-terminated; text read back that does
 *    not fit is truncated.
 *  - Times are unix seconds (double, UTC) plus ISO-8601 UTC text
 *    ("2024-05-01T12:34:56Z") filled by the store.
 *  - Arrays returned through **out are freed with the matching _free().
 *  - Every write is its own transaction (BEGIN IMMEDIATE ... COMMIT) unless
 *    it stands between hb_db_batch_begin() and hb_db_batch_commit().
 */

typedef struct hb_db hb_db;

enum { HB_DB_ID_LEN = 64, HB_DB_TEXT_LEN = 256, HB_DB_NOTE_LEN = 512, HB_DB_TIME_LEN = 32 };
/* A global identity: UUID version 7 text (common/hb_uid.h), 36 characters and the NUL. */
enum { HB_DB_UID_LEN = 37 };

/* ---------------- connection ---------------- */

/* Writes ${XDG_DATA_HOME:-$HOME/.local/share}/henrybench/bench.db into buf
 * and creates the directory. */
int hb_db_default_path(char *buf, size_t cap);

/*
 * Opens (creating if needed) the store at path (NULL = default path),
 * migrates its schema to the current version, and marks interrupted every
 * sweep left running by a process of this host that no longer exists.
 * *out is set whenever memory allows, also on error (read hb_db_errmsg,
 * then hb_db_close it).
 */
int hb_db_open(const char *path, hb_db **out);
void hb_db_close(hb_db *db);
const char *hb_db_errmsg(const hb_db *db);
const char *hb_db_path(const hb_db *db);
/* Sweeps this open marked interrupted. */
int hb_db_recovered_count(const hb_db *db);
/* Schema version of the open store and the one this program writes. */
int hb_db_schema_version(hb_db *db, int *version);
int hb_db_latest_version(void);

/* Groups many writes in one transaction (bulk import, benchmarks); points
 * added inside become durable only at hb_db_batch_commit. */
int hb_db_batch_begin(hb_db *db);
int hb_db_batch_commit(hb_db *db);
int hb_db_batch_rollback(hb_db *db);

/* Many reads as one: a read transaction from begin to end, so that a long
 * export sees one state of the store and SQLite takes its locks and checks
 * the file once, not at every query (the larger part of a small query's
 * cost). Reads only in between. A no-op where reads already share a
 * transaction, and against a server. */
int hb_db_read_begin(hb_db *db);
void hb_db_read_end(hb_db *db);

/* Test hooks: open a store migrated only up to version (to test later
 * migrations), and cap the file size of this connection in pages
 * (to provoke a full disk). */
int hb_db_open_version(const char *path, int version, hb_db **out);
int hb_db_set_max_pages(hb_db *db, long pages);

/* ---------------- enumerations ---------------- */

typedef enum { HB_DB_LEVEL_VOLTAGE = 0, HB_DB_LEVEL_CURRENT = 1 } hb_db_level_kind;
typedef enum { HB_DB_SWEEP_BIAS = 0, HB_DB_SWEEP_FREQUENCY = 1 } hb_db_sweep_kind;
typedef enum {
	HB_DB_RUNNING = 0,
	HB_DB_COMPLETE,
	HB_DB_ABORTED,
	HB_DB_FAILED,
	HB_DB_INTERRUPTED
} hb_db_sweep_status;
/* The conditional outcomes come from the non-binary decision rule (ILAC-G8:2019 4.2.3). */
typedef enum {
	HB_DB_NOT_TESTED = 0,
	HB_DB_PASS,
	HB_DB_FAIL,
	HB_DB_SKIPPED,
	HB_DB_CONDITIONAL_PASS,
	HB_DB_CONDITIONAL_FAIL
} hb_db_outcome;
typedef enum { HB_DB_LOT_OPEN = 0, HB_DB_LOT_ACCEPT, HB_DB_LOT_REJECT } hb_db_lot_decision;

/* Stable lower-case names used in the store, JSON and CLI:
 * "bias"/"frequency", "running"/"complete"/"aborted"/"failed"/"interrupted",
 * "not-tested"/"pass"/"fail"/"skipped"/"conditional-pass"/"conditional-fail",
 * "open"/"accept"/"reject". */
const char *hb_db_sweep_kind_name(hb_db_sweep_kind kind);
const char *hb_db_sweep_status_name(hb_db_sweep_status status);
const char *hb_db_outcome_name(hb_db_outcome outcome);
const char *hb_db_lot_decision_name(hb_db_lot_decision decision);
/* Parse those names; HB_ERR_ARG if unknown. */
int hb_db_sweep_kind_parse(const char *name, hb_db_sweep_kind *kind);
int hb_db_sweep_status_parse(const char *name, hb_db_sweep_status *status);

/* ---------------- parts ---------------- */

/* Specs as the datasheet states them, in SI units. */
typedef struct hb_db_part {
	int64_t id;
	char part_number[HB_DB_ID_LEN];
	char description[HB_DB_TEXT_LEN];
	char maker[HB_DB_ID_LEN];
	double nominal_h;        /* nominal inductance */
	double tolerance;        /* fraction, 0.20 = +-20 % */
	double test_freq_hz;     /* spec test frequency */
	double test_level;       /* spec test signal, V or A per test_level_kind */
	hb_db_level_kind test_level_kind;
	double sat_current_a;    /* saturation-spec current ... */
	double sat_drop;         /* ... at which L may fall by this fraction */
	double rated_current_a;
	double dcr_max_ohm;
	int turns;               /* 0 = unknown */
	double ae_m2, le_m, window_m;               /* effective core geometry */
	double toroid_od_m, toroid_id_m, toroid_h_m; /* raw toroid dimensions if given */
	double mu_i, bsat_t;
	char created[HB_DB_TIME_LEN], updated[HB_DB_TIME_LEN];
	char decision_rule[16];  /* "simple", "guarded", "non-binary"; "" = the station's default */
	double guard_r;          /* r of the guard band w = r U; NAN = 1 */
} hb_db_part;

void hb_db_part_init(hb_db_part *part);
/* Inserts, or replaces every field of the part with the same part_number;
 * sets part->id. */
int hb_db_part_put(hb_db *db, hb_db_part *part);
/* HB_ERR_NOTFOUND if there is no such part. */
int hb_db_part_get(hb_db *db, const char *part_number, hb_db_part *out);
int hb_db_part_get_id(hb_db *db, int64_t id, hb_db_part *out);
/* Ordered by part number. */
int hb_db_part_list(hb_db *db, hb_db_part **out, size_t *count);
void hb_db_parts_free(hb_db_part *parts);

/* ---------------- lots and units ---------------- */

typedef struct hb_db_lot {
	int64_t id, part_id;
	char lot_code[HB_DB_ID_LEN];
	long lot_size;                 /* 0 = unknown */
	double aql;                    /* percent nonconforming (ISO 2859-1), NAN = none */
	char inspection_level[8];      /* "I", "II", "III", "S-1" ... "S-4" */
	char severity[16];             /* "normal", "tightened", "reduced" */
	char code_letter[4];           /* sample plan: ISO 2859-1 code letter ... */
	long sample_size, accept_number, reject_number; /* ... n, Ac, Re; 0 = no plan */
	hb_db_lot_decision decision;
	char created[HB_DB_TIME_LEN];
	char decided[HB_DB_TIME_LEN];  /* empty while open */
} hb_db_lot;

void hb_db_lot_init(hb_db_lot *lot);
/* Finds or creates lot lot_code of the part; sets *lot_id. */
int hb_db_lot_ensure(hb_db *db, int64_t part_id, const char *lot_code, int64_t *lot_id);
int hb_db_lot_get(hb_db *db, int64_t lot_id, hb_db_lot *out);
int hb_db_lot_find(hb_db *db, int64_t part_id, const char *lot_code, hb_db_lot *out);
/* Writes size, AQL, level, severity, plan and decision of lot->id. */
int hb_db_lot_update(hb_db *db, const hb_db_lot *lot);

typedef struct hb_db_unit {
	int64_t id, part_id, lot_id; /* lot_id 0 = none */
	char serial[HB_DB_ID_LEN];
} hb_db_unit;

/* Finds or creates unit serial of the part; a nonzero lot_id is recorded
 * (and replaces an earlier one). Sets *unit_id. */
int hb_db_unit_ensure(hb_db *db, int64_t part_id, const char *serial, int64_t lot_id, int64_t *unit_id);
int hb_db_unit_get(hb_db *db, int64_t unit_id, hb_db_unit *out);

/* ---------------- sweeps ---------------- */

typedef struct hb_db_sweep {
	int64_t id;
	hb_db_sweep_kind kind;
	int64_t unit_id;                          /* 0 = no unit */
	/* Filled by the store from unit_id when read back. */
	int64_t part_id;
	char part_number[HB_DB_ID_LEN], serial[HB_DB_ID_LEN], lot_code[HB_DB_ID_LEN];
	long n_points;

	double started, ended;                    /* unix s; started 0 at begin = now; ended NAN while running */
	char started_iso[HB_DB_TIME_LEN], ended_iso[HB_DB_TIME_LEN];
	hb_db_sweep_status status;
	char status_reason[HB_DB_TEXT_LEN];
	char station[HB_DB_ID_LEN], operator_name[HB_DB_ID_LEN];
	char host[HB_DB_ID_LEN];                  /* owner, set by the store at begin */
	long pid;

	char lcr_idn[HB_DB_TEXT_LEN], lcr_profile[HB_DB_ID_LEN];
	char supply_idn[HB_DB_TEXT_LEN], supply_profile[HB_DB_ID_LEN];

	double test_freq_hz, test_level;          /* frequency sweeps: test_freq_hz NAN */
	hb_db_level_kind test_level_kind;
	double bias_a;                            /* fixed bias of a frequency sweep */
	char circuit[16];                         /* "series" / "parallel" */
	char measured_pair[16];                   /* e.g. "Ls-Rs", "Lp-Q": primary-secondary */
	int averaging;
	char aperture[16];                        /* "short" / "medium" / "long" */
	char settle_mode[8];                      /* "auto" / "fixed" */
	double settle_delay_s;                    /* fixed wait, or first wait of auto */
	double settle_tolerance;                  /* auto: relative change accepted */
	int settle_max_readings;
	double settle_max_s;
	double plan_from, plan_to;                /* A for bias, Hz for frequency */
	int plan_steps;
	char plan_spacing[16];                    /* "lin" / "log" / "list" */
	double limit_current_a, limit_voltage_v;  /* supply limits in force */
	double ambient_c;
	char note[HB_DB_NOTE_LEN];
	double reading_noise_rel;                 /* relative sd of one reading, learnt at the first point */
	double dcr_meter_ohm;                     /* the meter's DC-resistance reading, NAN if none */
	double supply_found_a;                    /* current found flowing when the supply was opened */
	double supply_off_a;                      /* current when the output was switched off */
	double supply_decay_s;                    /* zero set-point to below the switch-off threshold */
	/* The accuracy in force (profile or station file), recorded at begin. */
	double meter_accuracy_rel;                /* fraction of reading at the test frequency; NAN = none stated */
	char meter_accuracy[HB_DB_TEXT_LEN];      /* the specification and where it came from */
	double supply_accuracy_rel;               /* read-back current: fraction of reading ... */
	double supply_accuracy_offset_a;          /* ... plus this offset, A */
	char supply_accuracy[HB_DB_TEXT_LEN];
	char station_decision_rule[16];           /* the station's default rule then; "" = none stated */
	double station_guard_r;                   /* its r; NAN = 1 */
} hb_db_sweep;

void hb_db_sweep_init(hb_db_sweep *sweep);
/* Stores a new running sweep owned by this host and process; sets
 * sweep->id, started, host and pid. */
int hb_db_sweep_begin(hb_db *db, hb_db_sweep *sweep);
/* Ends a running sweep: status must not be HB_DB_RUNNING; HB_ERR_NOTFOUND
 * for an unknown id, HB_ERR_ARG if it already ended. */
int hb_db_sweep_end(hb_db *db, int64_t sweep_id, hb_db_sweep_status status, const char *reason);
int hb_db_sweep_get(hb_db *db, int64_t sweep_id, hb_db_sweep *out);
/* Records the meter's relative reading noise on the sweep. */
int hb_db_sweep_set_noise(hb_db *db, int64_t sweep_id, double noise_rel);
/* Records the meter's own DC-resistance reading of the winding. */
int hb_db_sweep_set_dcr(hb_db *db, int64_t sweep_id, double ohms);
/* What the supply did around the sweep: current found flowing when it was
 * opened, current when the output was switched off, decay time from the
 * zero set-point (NAN where unknown). */
int hb_db_sweep_set_supply_record(hb_db *db, int64_t sweep_id, double found_a, double off_a, double decay_s);
/* Writes the accuracy and station decision-rule fields of s (step 6) to sweep s->id;
 * hb_db_sweep_begin calls it. */
int hb_db_sweep_set_accuracy(hb_db *db, const hb_db_sweep *s);

typedef struct hb_db_sweep_filter {
	const char *part_number;  /* NULL = any */
	const char *serial;
	const char *lot_code;
	int status;               /* hb_db_sweep_status or -1 = any */
	int kind;                 /* hb_db_sweep_kind or -1 = any */
	double since;             /* unix s, started at or after; 0 = any */
	long limit;               /* 0 = all */
} hb_db_sweep_filter;

void hb_db_sweep_filter_init(hb_db_sweep_filter *filter);
/* Newest first. */
int hb_db_sweep_list(hb_db *db, const hb_db_sweep_filter *filter, hb_db_sweep **out, size_t *count);
/* How many sweeps the filter matches (its limit ignored). */
int hb_db_sweep_count(hb_db *db, const hb_db_sweep_filter *filter, int64_t *count);
void hb_db_sweeps_free(hb_db_sweep *sweeps);

/* ---------------- points ---------------- */

typedef enum { HB_DB_DIR_UP = 0, HB_DB_DIR_DOWN = 1 } hb_db_direction;

typedef struct hb_db_point {
	int64_t sweep_id;
	int seq;                 /* 0, 1, 2 ... unique within the sweep */
	double bias_set_a;       /* setpoint */
	double bias_meas_a;      /* as measured by the supply */
	double supply_v;
	double freq_hz;
	double primary, secondary; /* per the sweep's measured_pair, SI units */
	int reading_status;      /* hb_status of the reading, e.g. HB_ERR_OVERLOAD */
	double t_s;              /* since the sweep started */
	int settle_readings;     /* readings taken until settled */
	double settle_s;
	hb_db_direction direction;
	double bias_spread_a;    /* max - min of the read-backs bracketing the readings (NAN: not recorded) */
	bool settled;            /* false: the settle rule timed out; the point is flagged */
} hb_db_point;

void hb_db_point_init(hb_db_point *point);
/* Commits one point durably in its own transaction (unless batched). The
 * sweep must be running. */
int hb_db_point_add(hb_db *db, const hb_db_point *point);
/* In sequence order. */
int hb_db_points_get(hb_db *db, int64_t sweep_id, hb_db_point **out, size_t *count);
void hb_db_points_free(hb_db_point *points);

/* ---------------- fits ---------------- */

/* Names of fit values the history query picks (SI units):
 * "L0" H, "AL" H/turn^2, "mu_e", "gap" m, "I_drop10"/"I_drop20"/"I_drop30" A
 * (current at which L has fallen 10/20/30 % below L0). */
#define HB_DB_FV_L0 "L0"
#define HB_DB_FV_MU_E "mu_e"
#define HB_DB_FV_GAP "gap"
#define HB_DB_FV_DROP_FMT "I_drop%d"

enum { HB_DB_FIT_MAX_VALUES = 128, HB_DB_COV_LEN = 4096 };

typedef struct hb_db_fit_value {
	char name[32];
	double value, std_error;   /* std_error NAN = not estimated */
	char unit[16];
} hb_db_fit_value;

typedef struct hb_db_fit {
	int64_t id, sweep_id;
	char model[32];            /* e.g. "gapped-knee" */
	char law[32];              /* e.g. "arctan" */
	char code_version[32];
	char created[HB_DB_TIME_LEN];
	double rss;
	int dof;
	double aic;
	char covariance_json[HB_DB_COV_LEN]; /* e.g. [[..],[..]] in value order */
	char flags[HB_DB_TEXT_LEN];
	size_t n_values;
	hb_db_fit_value values[HB_DB_FIT_MAX_VALUES];
} hb_db_fit;

void hb_db_fit_init(hb_db_fit *fit);
/* Stores a new fit with its values; sets fit->id and created. */
int hb_db_fit_put(hb_db *db, hb_db_fit *fit);
/* Newest fit of the sweep with that model (NULL = any); HB_ERR_NOTFOUND if none. */
int hb_db_fit_get_latest(hb_db *db, int64_t sweep_id, const char *model, hb_db_fit *out);

/* The GUM uncertainty of one fitted quantity: combined standard
 * uncertainty, effective degrees of freedom, coverage factor, expanded
 * uncertainty, and the budget's inputs as JSON text (built in src/quality). */
enum { HB_DB_BUDGET_LEN = 4096 };
typedef struct hb_db_fit_unc {
	int64_t fit_id;
	char name[32];             /* the fit value's name, e.g. "L0", "I_drop20", "DCR" */
	double value, u_c, dof, k, U; /* dof INFINITY: every input exactly known; NAN = not known */
	char budget[HB_DB_BUDGET_LEN]; /* [{"input":..,"u":..,"c":..,"contribution":..,"source":..}, ...] */
	char note[HB_DB_TEXT_LEN]; /* e.g. "uncorrected: no temperature stored" */
} hb_db_fit_unc;

void hb_db_fit_unc_init(hb_db_fit_unc *u);
/* Stores (or replaces) the uncertainty of one value of a stored fit. */
int hb_db_fit_unc_put(hb_db *db, const hb_db_fit_unc *u);
/* In name order; an empty list for a fit stored before step 6. */
int hb_db_fit_unc_list(hb_db *db, int64_t fit_id, hb_db_fit_unc **out, size_t *count);
void hb_db_fit_uncs_free(hb_db_fit_unc *list);

/* ---------------- verdicts ---------------- */

typedef struct hb_db_verdict {
	int64_t id, sweep_id;
	char check_name[32];       /* "L0", "Lsat", "DCR", ... */
	double measured, limit_low, limit_high; /* NAN = no such limit */
	double margin;             /* distance to the nearer limit, fraction of it; negative = outside */
	hb_db_outcome outcome;
	char note[HB_DB_TEXT_LEN];
	/* The decision rule behind the outcome (ILAC-G8:2019) and what it produced. */
	char decision_rule[16];    /* "simple" (default), "guarded", "non-binary" */
	double guard_r;            /* r in w = r U; NAN for the simple rule */
	double expanded_u, coverage_k; /* U and k of the measured value; NAN = not known */
	double accept_low, accept_high; /* acceptance limits the rule produced; NAN = none that side */
	double p_false_accept;     /* guarded rule: probability of false accept at the measured value */
	/* Traceability (step 9), filled on read; operator_name is also written. */
	char uid[HB_DB_UID_LEN];
	char created[HB_DB_TIME_LEN];
	char operator_name[HB_DB_ID_LEN]; /* who judged; "" at put = $USER */
	int64_t spec_rev_id;       /* the part's spec revision it was judged against; 0 = no part */
	int spec_revision;         /* its number (1, 2, ...) */
	int64_t superseded_by;     /* the verdict that replaced it; 0 = in force */
} hb_db_verdict;

void hb_db_verdict_init(hb_db_verdict *verdict);
/* Stores the verdict. From step 9 on it is appended: an earlier verdict of the same check on
 * the same sweep stays, marked superseded by this one. */
int hb_db_verdict_put(hb_db *db, hb_db_verdict *verdict);
/* The verdicts in force, in check-name order. */
int hb_db_verdict_list(hb_db *db, int64_t sweep_id, hb_db_verdict **out, size_t *count);
void hb_db_verdicts_free(hb_db_verdict *verdicts);

/* ---------------- lot inspection records ---------------- */

typedef struct hb_db_inspection {
	int64_t id, lot_id, unit_id, sweep_id; /* unit/sweep 0 = none (e.g. skipped) */
	int sequence;              /* 1..n within the lot's sample */
	hb_db_outcome outcome;     /* HB_DB_PASS, HB_DB_FAIL or HB_DB_SKIPPED */
	double at;                 /* unix s; 0 at put = now */
	char at_iso[HB_DB_TIME_LEN];
	char serial[HB_DB_ID_LEN]; /* filled on read */
	char note[HB_DB_TEXT_LEN];
	bool conditional;          /* the unit's outcome was conditional; outcome is how the plan's policy counted it */
	char operator_name[HB_DB_ID_LEN]; /* who recorded it; "" at put = the login name */
	int64_t superseded_by;     /* the record that replaced it in force; 0 = in force */
} hb_db_inspection;

void hb_db_inspection_init(hb_db_inspection *rec);
/* Records the sample at (lot_id, sequence). Append-only: an earlier record
 * of the same position is kept, superseded by this one (schema step 14). */
int hb_db_inspection_put(hb_db *db, hb_db_inspection *rec);
/* The records in force, in sequence order (hb_db_inspection_list_all: every
 * record, superseded ones too, by sequence then as recorded). */
int hb_db_inspection_list(hb_db *db, int64_t lot_id, hb_db_inspection **out, size_t *count);
void hb_db_inspections_free(hb_db_inspection *recs);
/* Where an interrupted inspection resumes: 1 + the highest sequence
 * recorded, counts of pass/fail so far in force (any may be NULL). */
int hb_db_inspection_progress(hb_db *db, int64_t lot_id, int *next_sequence, int *passed, int *failed);

/* ---------------- history ---------------- */

enum { HB_DB_HISTORY_DROPS = 3 };

typedef struct hb_db_history_filter {
	const char *part_number;   /* required */
	const char *lot_code;      /* NULL = any */
	const char *serial;        /* NULL = any */
	double since;              /* unix s; 0 = any */
	int drop_percent[HB_DB_HISTORY_DROPS]; /* picks "I_drop<n>"; default 10, 20, 30 */
} hb_db_history_filter;

/* One measured unit: its latest complete bias sweep. Values NAN if no fit
 * gave them. */
typedef struct hb_db_history_row {
	int64_t sweep_id, unit_id;
	double started;
	char started_iso[HB_DB_TIME_LEN];
	char station[HB_DB_ID_LEN], lot_code[HB_DB_ID_LEN], serial[HB_DB_ID_LEN];
	double l0_h;
	double i_drop_a[HB_DB_HISTORY_DROPS];
	double mu_e, gap_m;
	hb_db_outcome verdict;     /* fail if any check failed, pass if every check passed, else not-tested */
	char sweep_uid[HB_DB_UID_LEN], unit_uid[HB_DB_UID_LEN]; /* global identities ("" on a store before them) */
} hb_db_history_row;

void hb_db_history_filter_init(hb_db_history_filter *filter);
/* Oldest first. */
int hb_db_history(hb_db *db, const hb_db_history_filter *filter, hb_db_history_row **out, size_t *count);
void hb_db_history_free(hb_db_history_row *rows);

/* ---------------- query plans (scale) ---------------- */

/*
 * With the watch on, every statement the handle prepares from then on is
 * checked with EXPLAIN QUERY PLAN; a full scan of a table that grows with
 * the sweeps (anything but parts and lots) is kept as a finding: one line
 * "SCAN t in: <sql>". For tests and `make bench`: a finding is a query
 * that slows down as the store grows.
 */
int hb_db_plan_watch(hb_db *db, bool on);
const char *hb_db_plan_findings(const hb_db *db); /* "" = none */
size_t hb_db_plan_checked(const hb_db *db);       /* statements checked since the watch began */

/* ---------------- the core set of a part (db_part_core.c, schema step 8) ---------------- */

/* The IEC 60205 shape a part's Ae, le and window came from, its
 * dimensions as "A=42.15mm,B=21mm,..." and where its gap is. */
typedef struct hb_db_part_core {
	char shape[8];      /* "etd", "e", ...; "" = none (toroid or Ae/le typed by hand) */
	char dims[256];
	char gap_at[8];     /* "centre" or "spacer" */
} hb_db_part_core;

void hb_db_part_core_init(hb_db_part_core *c);
/* HB_ERR_NOTFOUND when the part does not exist; a store older than step 8 gives none. */
int hb_db_part_core_get(hb_db *db, const char *part_number, hb_db_part_core *out);
/* The part must exist (store it with hb_db_part_put first). */
int hb_db_part_core_put(hb_db *db, const char *part_number, const hb_db_part_core *in);
/* ---------------- traceability: identities, spec revisions, supersession, filed reports (step 9) ---------------- */

/* The kinds of record that carry a global identity. HB_DB_REC_POINTS is a
 * sweep's set of points (its id is the sweep's). */
typedef enum {
	HB_DB_REC_PART = 0,
	HB_DB_REC_SPEC_REVISION,
	HB_DB_REC_UNIT,
	HB_DB_REC_LOT,
	HB_DB_REC_LOT_DECISION,
	HB_DB_REC_SWEEP,
	HB_DB_REC_POINTS,
	HB_DB_REC_FIT,
	HB_DB_REC_VERDICT,
	HB_DB_REC_INSPECTION,
	HB_DB_REC_REPORT,
	HB_DB_REC_COUNT
} hb_db_record;

/* "part", "spec-revision", "unit", "lot", "lot-decision", "sweep", "points", "fit", "verdict",
 * "inspection", "report". */
const char *hb_db_record_name(hb_db_record kind);
/* The identity of record id; HB_ERR_NOTFOUND if there is no such record. */
int hb_db_uid_of(hb_db *db, hb_db_record kind, int64_t id, char uid[HB_DB_UID_LEN]);
/* The local id of the record with that identity (any case); HB_ERR_NOTFOUND if none. */
int hb_db_uid_find(hb_db *db, hb_db_record kind, const char *uid, int64_t *id);
/* A handle as typed: a positive integer (the local id, not checked) or a global
 * identity (looked up). HB_ERR_ARG for neither, HB_ERR_NOTFOUND for an unknown identity. */
int hb_db_resolve_id(hb_db *db, hb_db_record kind, const char *text, int64_t *id);

typedef struct hb_db_spec_revision {
	int64_t id, part_id;
	int revision;              /* 1, 2, ... */
	char uid[HB_DB_UID_LEN];
	char created[HB_DB_TIME_LEN];
	hb_db_part spec;           /* the spec fields as they were (id = part id) */
} hb_db_spec_revision;

/* The part's spec revision in force (the highest); revision 0 asks for that,
 * another number for that revision. HB_ERR_NOTFOUND if none. */
int hb_db_spec_revision_get(hb_db *db, int64_t part_id, int revision, hb_db_spec_revision *out);
int hb_db_spec_revision_get_id(hb_db *db, int64_t spec_rev_id, hb_db_spec_revision *out);

/* Every verdict of the sweep, superseded ones included, by check name then in
 * the order judged. */
int hb_db_verdict_list_all(hb_db *db, int64_t sweep_id, hb_db_verdict **out, size_t *count);

/* Every decision made on a lot, oldest first. */
typedef struct hb_db_lot_decision_rec {
	int64_t id, lot_id;
	char uid[HB_DB_UID_LEN];
	hb_db_lot_decision decision;
	char decided[HB_DB_TIME_LEN];
	long sample_size, accept_number, reject_number;
} hb_db_lot_decision_rec;
int hb_db_lot_decision_list(hb_db *db, int64_t lot_id, hb_db_lot_decision_rec **out, size_t *count);
void hb_db_lot_decisions_free(hb_db_lot_decision_rec *recs);

/* A filed report: its number, what it shows, the file, the SHA-256 of the file
 * as written ("" when it went to standard output) and of the canonical export
 * of the points of its sweeps (docs/store.md). */
typedef struct hb_db_report {
	int64_t id;
	char uid[HB_DB_UID_LEN];
	char kind[8];              /* "sweep", "lot", "part" */
	char subject[HB_DB_TEXT_LEN];
	char path[4096];
	char file_sha256[65], data_sha256[65];
	char software_version[32];
	char created[HB_DB_TIME_LEN];
	int64_t *sweep_ids;        /* ascending; malloc'd on get, the caller's on put */
	size_t n_sweeps;
} hb_db_report;

/* Stores the report row and its sweeps in one transaction; sets id and created. */
int hb_db_report_put(hb_db *db, hb_db_report *r);
/* By report number; HB_ERR_NOTFOUND if the store has no such report. */
int hb_db_report_get(hb_db *db, const char *uid, hb_db_report *out);
/* Frees sweep_ids; the struct itself is the caller's. */
void hb_db_report_clear(hb_db_report *r);
/* ---------------- lot streams (switching rules; db/db_streams.c) ---------------- */

/* A decided lot of a stream, with what the switching rules need. */
typedef struct hb_db_stream_lot {
	hb_db_lot lot;
	char supplier[HB_DB_ID_LEN];
	bool irregular;                /* production irregular or delayed, as stated at inspection */
	long nonconforming;            /* 'fail' records in its sample */
	double decided_unix;           /* the stream's order; from decided_at for lots decided before this field */
} hb_db_stream_lot;

typedef enum { HB_DB_STREAM_APPROVE_REDUCED, HB_DB_STREAM_WITHDRAW_REDUCED, HB_DB_STREAM_RESUME } hb_db_stream_kind;

typedef struct hb_db_stream_event {
	int64_t id;
	hb_db_stream_kind kind;
	char note[HB_DB_TEXT_LEN];
	char at_iso[HB_DB_TIME_LEN];
	double at;                     /* unix s */
} hb_db_stream_event;

/* "approve-reduced", "withdraw-reduced", "resume". */
const char *hb_db_stream_kind_name(hb_db_stream_kind kind);

/* Names the supplier of lot_id and whether its production was irregular. */
int hb_db_lot_set_stream(hb_db *db, int64_t lot_id, const char *supplier, bool irregular);
/* Reads them back. */
int hb_db_lot_get_stream(hb_db *db, int64_t lot_id, char *supplier, size_t cap, bool *irregular);
/* Stamps the moment the decision of lot_id was recorded (the stream's order). */
int hb_db_lot_stamp_decided(hb_db *db, int64_t lot_id);
/* The decided lots of (part, supplier) in the order they were decided. */
int hb_db_stream_lots(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_lot **out, size_t *count);
void hb_db_stream_lots_free(hb_db_stream_lot *lots);
/* The suppliers of a part's lots ('' included when a lot names none), sorted;
 * *out is count rows of HB_DB_ID_LEN characters. */
int hb_db_stream_suppliers(hb_db *db, int64_t part_id, char (**out)[HB_DB_ID_LEN], size_t *count);
int hb_db_stream_event_add(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_kind kind, const char *note);
/* Oldest first. */
int hb_db_stream_events(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_event **out, size_t *count);
void hb_db_stream_events_free(hb_db_stream_event *events);
/* ================ store hygiene: open modes, writability, deletions (issue 15) ================ */

/* CREATE: as hb_db_open. EXISTING: read and write, never creates (a missing
 * file is HB_ERR_NOTFOUND naming the path). READONLY: never writes: no
 * migration, no recovery (a store at another schema is HB_ERR_DB). */
typedef enum { HB_DB_OPEN_CREATE = 0, HB_DB_OPEN_EXISTING, HB_DB_OPEN_READONLY, HB_DB_OPEN_READ } hb_db_open_mode;
int hb_db_open_as(const char *path, hb_db_open_mode mode, hb_db **out);
/* HB_OK if a write transaction can be begun now (checked before any
 * instrument is opened); HB_ERR_IO naming the store if it is read-only. */
int hb_db_check_writable(hb_db *db);

/* What depends on a sweep: its points, fits, verdicts, and lot inspection
 * records (sample positions of a lot) that name it. */
typedef struct hb_db_sweep_deps {
	long points, fits, verdicts, inspections;
} hb_db_sweep_deps;
int hb_db_sweep_dependents(hb_db *db, int64_t sweep_id, hb_db_sweep_deps *out);

/* What depends on a part: its units, lots (decided ones among them), the
 * sweeps of its units, their verdicts and its lots' inspection records. */
typedef struct hb_db_part_deps {
	long units, lots, decided_lots, sweeps, verdicts, inspections;
} hb_db_part_deps;
int hb_db_part_dependents(hb_db *db, int64_t part_id, hb_db_part_deps *out);

/* One entry of the deletions log. */
typedef struct hb_db_deletion {
	int64_t id;
	double at;
	char at_iso[HB_DB_TIME_LEN];
	char operator_name[HB_DB_ID_LEN];
	char host[HB_DB_ID_LEN];
	char what[HB_DB_TEXT_LEN];
	char reason[HB_DB_NOTE_LEN];
	bool forced;
} hb_db_deletion;

/* Deletes the sweep with its points, fits and verdicts in one transaction;
 * inspection records naming it keep their outcome and lose the link (their
 * note says so). Writes the log entry (operator, reason, forced; what and
 * time are filled by the store). HB_ERR_NOTFOUND for an unknown id. */
int hb_db_sweep_delete(hb_db *db, int64_t sweep_id, const hb_db_deletion *log);
/* Deletes the part with its lots, units, their sweeps and inspection
 * records in one transaction, and writes the log entry. */
int hb_db_part_delete(hb_db *db, int64_t part_id, const hb_db_deletion *log);
/* Oldest first. */
int hb_db_deletion_list(hb_db *db, hb_db_deletion **out, size_t *count);
void hb_db_deletions_free(hb_db_deletion *list);
/* ---------------- a part's drawing and data-sheet curve (schema step 12) ---------------- */

/* The drawn gap with its tolerance, and the data sheet's L-against-current
 * curve as a mask: each point's band is nominal (1 -+ tol), tol the
 * point's own or else curve_tol. Points strictly increasing in current. */
enum { HB_DB_MASK_MAX = 32 };

typedef struct hb_db_curve_point {
	double current_a;          /* >= 0 */
	double inductance_h;       /* > 0 */
	double tol;                /* fraction; NAN = the mask's curve_tol */
} hb_db_curve_point;

typedef struct hb_db_part_drawing {
	int64_t part_id;
	double gap_m, gap_tol_m;   /* drawn physical gap and +- tolerance; NAN = none drawn */
	double curve_tol;          /* default band of the mask, fraction; NAN = none */
	char curve_source[HB_DB_TEXT_LEN]; /* where the curve came from ("--curve", a CSV file's name) */
	size_t n_curve;            /* 0 = no mask */
	hb_db_curve_point curve[HB_DB_MASK_MAX];
} hb_db_part_drawing;

void hb_db_part_drawing_init(hb_db_part_drawing *d);
/* The part's drawing; an empty one (init) when none is stored, also in a
 * store older than step 12. */
int hb_db_part_drawing_get(hb_db *db, int64_t part_id, hb_db_part_drawing *out);
/* Replaces the part's drawing and every mask point in one transaction. */
int hb_db_part_drawing_put(hb_db *db, const hb_db_part_drawing *d);
/* The band tolerance of mask point i: its own, else the mask's. */
double hb_db_curve_point_tol(const hb_db_part_drawing *d, size_t i);
/* ================================================================== */
/* traceability: instrument register, fixture compensations, what each */
/* sweep ran with (db_instruments.c)                                  */
/* ================================================================== */

enum { HB_DB_JSON_LEN = 4096 };

/* One instrument as its *IDN? named it, with its calibration status.
 * Dates are "YYYY-MM-DD" ("" = not recorded). */
typedef struct hb_db_instrument {
	int64_t id;
	char kind[8];                        /* "lcr" or "supply" */
	char maker[HB_DB_ID_LEN], model[HB_DB_ID_LEN], serial[HB_DB_ID_LEN], firmware[HB_DB_ID_LEN];
	char first_seen[HB_DB_TIME_LEN], last_seen[HB_DB_TIME_LEN];
	char accuracy[HB_DB_ID_LEN];         /* override: "0.1%" (meter) or "0.05% + 1mA" (supply); "" = none */
	char accuracy_freq_above[HB_DB_ID_LEN]; /* meter: "100kHz:0.05%"; "" = none */
	char cal_date[16], due_date[16];
	char certificate[HB_DB_TEXT_LEN];
} hb_db_instrument;

/* Finds the instrument by maker, model and serial, or records it (first
 * and last seen now); last_seen and firmware are brought up to date.
 * *created (may be NULL) tells whether it was new. */
int hb_db_instrument_ensure(hb_db *db, const char *kind, const char *maker, const char *model, const char *serial,
			    const char *firmware, hb_db_instrument *out, bool *created);
int hb_db_instrument_get(hb_db *db, int64_t id, hb_db_instrument *out);
/* By serial (case as recorded); HB_ERR_NOTFOUND, or HB_ERR_ARG when two
 * makers' instruments share the serial (the message names them). */
int hb_db_instrument_find(hb_db *db, const char *serial, hb_db_instrument *out);
/* All, by kind then serial; free() the array. */
int hb_db_instrument_list(hb_db *db, hb_db_instrument **out, size_t *count);
/* Writes accuracy, accuracy_freq_above, cal_date, due_date and certificate of in->id. */
int hb_db_instrument_update(hb_db *db, const hb_db_instrument *in);

/* An open or short compensation of a fixture. */
typedef struct hb_db_fixture_comp {
	int64_t id;
	char fixture[HB_DB_ID_LEN];
	char kind[8];                 /* "open" or "short" */
	char method[16];              /* "meter" or "henrybench" */
	int64_t instrument_id;        /* the meter; 0 = unknown */
	char at[HB_DB_TIME_LEN];      /* set by the store */
	double at_unix;
	char residuals[HB_DB_JSON_LEN]; /* JSON list, see schema step 13 */
	char operator_name[HB_DB_ID_LEN];
	char note[HB_DB_TEXT_LEN];
} hb_db_fixture_comp;

/* Stores it with the time now; sets id, at and at_unix. */
int hb_db_fixture_comp_add(hb_db *db, hb_db_fixture_comp *c);
int hb_db_fixture_comp_get(hb_db *db, int64_t id, hb_db_fixture_comp *out);
/* The most recent of this fixture and kind; HB_ERR_NOTFOUND when none. */
int hb_db_fixture_comp_latest(hb_db *db, const char *fixture, const char *kind, hb_db_fixture_comp *out);

/* What one sweep ran with. */
typedef struct hb_db_sweep_trace {
	int64_t sweep_id;
	int64_t lcr_instrument_id, supply_instrument_id; /* 0 = none */
	char cal_status[HB_DB_NOTE_LEN];
	bool overdue_allowed;
	char fixture[HB_DB_ID_LEN];
	int64_t open_comp_id, short_comp_id;             /* 0 = none */
	char fixture_status[HB_DB_TEXT_LEN];             /* "" = in force; else the warning */
	bool fixture_applied;                            /* residuals subtracted from the stored readings */
	char settings_start[HB_DB_JSON_LEN], settings_end[HB_DB_JSON_LEN]; /* JSON objects */
	char settings_changed[HB_DB_NOTE_LEN];           /* "" = the same; else what changed */
} hb_db_sweep_trace;

void hb_db_sweep_trace_init(hb_db_sweep_trace *t);
/* Inserts or replaces the sweep's row. */
int hb_db_sweep_trace_put(hb_db *db, const hb_db_sweep_trace *t);
/* HB_ERR_NOTFOUND for a sweep without one (older stores, imports). */
int hb_db_sweep_trace_get(hb_db *db, int64_t sweep_id, hb_db_sweep_trace *out);

/* One record made with an instrument (reverse traceability). */
typedef struct hb_db_affected {
	char what[8];                 /* "sweep", "verdict", "lot" */
	int64_t id;                   /* sweep, verdict or lot id */
	int64_t sweep_id;             /* the sweep it rests on (lot: 0) */
	char at[HB_DB_TIME_LEN];      /* sweep start; verdict created; lot decided */
	char role[8];                 /* "lcr" or "supply" */
	char part_number[HB_DB_ID_LEN], serial[HB_DB_ID_LEN], lot_code[HB_DB_ID_LEN];
	char detail[HB_DB_TEXT_LEN];  /* sweep status; "check: outcome"; lot decision */
} hb_db_affected;

/* Every sweep that used the instrument and started at or after since_unix,
 * each followed by its verdicts, then every lot with a sample swept on it
 * (with its decision). Oldest first; free() the array. */
int hb_db_instrument_affected(hb_db *db, int64_t instrument_id, double since_unix, hb_db_affected **out,
			      size_t *count);

/* ================ read-only stores (issue 12 item 4) ================ */

/* HB_DB_OPEN_READ (read commands): as EXISTING where the store, its directory
 * and its file system can be written, else as READONLY. A READONLY open uses
 * SQLite's mode=ro, or immutable=1 where a WAL store's -shm cannot be made
 * (read-only directory or file system, no journal left beside the store);
 * running sweeps of this host whose process is gone then read as interrupted
 * with the reason "owner process gone; not yet recorded", nothing written. */
/* false when path exists and it, its directory or its file system is read-only */
bool hb_db_store_writable(const char *path);
bool hb_db_is_readonly(const hb_db *db);
bool hb_db_is_immutable(const hb_db *db);

/* ================ append-only inspection records (issue 11) ================ */

int hb_db_inspection_list_all(hb_db *db, int64_t lot_id, hb_db_inspection **out, size_t *count);
/* ---------------- many stations: sync with a shared server (db_pg.c, db_pg_pull.c) ----------------
 * url is a libpq connection URL (postgresql://USER@HOST/DB, postgresql:///DB?host=/socket/dir). The
 * server's schema is created or migrated on first contact. Records are sent by their global identity,
 * so stations whose local ids collide never meet; a push sends, in batches of one server transaction
 * each, every finished record the server lacks (running sweeps wait until they end) and can be
 * repeated or resumed after any interruption without duplicating anything. */
enum { HB_DB_SYNC_TABLES = 16 };
typedef struct hb_db_sync_stats {
	char server_uid[HB_DB_UID_LEN];      /* the server's own identity */
	int n;                               /* tables listed below */
	const char *table[HB_DB_SYNC_TABLES];  /* server table names, in push order */
	long long count[HB_DB_SYNC_TABLES];    /* push: records sent; status: records waiting (-1: sent at every sync) */
	long long points;                    /* push: points sent with the sweeps; status: points waiting */
	long long running;                   /* status: running sweeps (sent once they end) */
	long long batches;                   /* push: server transactions committed */
	long long pulled_parts, pulled_revisions, pulled_instruments, updated_instruments, pulled_drawings;
	long long conflicts;                 /* pull: server parts whose number this store holds under another identity */
	double seconds;
} hb_db_sync_stats;
int hb_db_sync_push(hb_db *db, const char *url, hb_db_sync_stats *stats);
/* Brings in the master data other stations added: parts with their spec revisions, later revisions of
 * parts this store has, and the instrument register (a later calibration date wins). */
int hb_db_sync_pull(hb_db *db, const char *url, hb_db_sync_stats *stats);
/* What a push would send now (asks the server only for its identity). */
int hb_db_sync_status(hb_db *db, const char *url, hb_db_sync_stats *stats);
/* "host H, database D" of url, for messages: never the URL itself, which may hold a password. */
void hb_db_server_name(const char *url, char *out, size_t cap);

#endif
