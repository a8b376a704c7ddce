/* src/bench/sweep.h - the sweep engine: plans, stepping, settling, and the one safe shut-down path */
#ifndef HB_SWEEP_H
#define HB_SWEEP_H

#include <signal.h>
#include <stdbool.h>
#include <stddef.h>

#include "../../drivers/hb_drivers.h"

typedef enum hb_sweep_kind { HB_SWEEP_BIAS, HB_SWEEP_FREQUENCY } hb_sweep_kind;
typedef enum hb_spacing { HB_SPACING_LIN, HB_SPACING_LOG } hb_spacing;
typedef enum hb_settle_rule { HB_SETTLE_AUTO, HB_SETTLE_FIXED } hb_settle_rule;

/* The points whose supply V/I gives the winding's DC resistance: those
 * up to this fraction of the top current, where self-heating is still
 * small. The settle rule holds the current stiller there so the part's
 * L*dI/dt stays out of the voltage; the analysis fits V against I there. */
#define HB_SWEEP_DCR_FRACTION 0.35

/* How a sweep ended; the names are what the store records. */
typedef enum hb_sweep_end {
	HB_SWEEP_COMPLETE,
	HB_SWEEP_ABORTED, /* stopped on purpose: signal, operator, compliance, limit */
	HB_SWEEP_FAILED   /* stopped by a fault: instrument error, time-out, lost link, store */
} hb_sweep_end;

/* Why a sweep that did not complete stopped: an inspection treats a part
 * that cannot be measured differently from a bench that cannot measure. */
typedef enum hb_sweep_cause {
	HB_CAUSE_NONE,     /* complete */
	HB_CAUSE_OPERATOR, /* signal, or a stop the operator asked for */
	HB_CAUSE_PART,     /* the part: compliance (too much resistance), open winding, reading out of range */
	HB_CAUSE_BENCH,    /* the bench: instrument error, lost link, time-out, supply dropout, store failure */
	HB_CAUSE_LIMIT     /* a safety limit stopped or refused it */
} hb_sweep_cause;

typedef struct hb_sweep_limits {
	double max_current; /* A; required */
	double max_voltage; /* V; the supply's compliance limit; required */
	double max_power;   /* W; V*I at the top step may not exceed it; required */
	double ramp_rate;   /* A/s between steps and on shut-down */
	double off_threshold; /* A; the output is switched off only below this measured current */
} hb_sweep_limits;

typedef struct hb_sweep_plan {
	hb_sweep_kind kind;

	/* bias sweep */
	double from, to;         /* A */
	int steps;               /* points on the way up, including both ends */
	hb_spacing spacing;
	bool return_down;        /* also sweep back down through the same steps */
	double stop_below;       /* fraction of the first L; 0 = off */

	/* frequency sweep */
	double f_from, f_to;     /* Hz */
	int f_points;
	hb_spacing f_spacing;
	double bias;             /* A held during a frequency sweep; 0 = none */

	/* meter settings */
	double frequency;        /* Hz, bias sweeps */
	hb_level_kind level_kind;
	double level;
	hb_equiv equiv;
	hb_pair pair;
	int averaging;
	hb_aperture aperture;

	/* settling after each step */
	hb_settle_rule settle;
	double settle_time;      /* s, fixed rule */
	double settle_timeout;   /* s, auto rule: give up waiting and record anyway (the point is flagged) */
	double settle_k;         /* frequency sweeps: successive readings agree within k * noise; default 3 */
	double settle_fraction;  /* bias sweeps: accept when the predicted remaining change of L is below
	                          * this fraction of one reading's noise; default 0.25 */
	int noise_readings;      /* readings at the first step to learn the meter's noise; at least 20 */

	hb_sweep_limits limits;
} hb_sweep_plan;

/* One measured point as the engine hands it over. */
typedef struct hb_sweep_point {
	int sequence;          /* 0-based */
	int direction;         /* +1 up, -1 down, 0 frequency sweep */
	double bias_set;       /* A */
	double bias_measured;  /* A, NAN when no supply */
	double supply_voltage; /* V, NAN when no supply */
	double frequency;      /* Hz */
	double primary;        /* H (or ohm) */
	double secondary;
	int status;
	double t;              /* s since the sweep started */
	int settle_readings;
	double settle_seconds;
	bool settled;          /* false when the auto rule timed out */
	double bias_spread;    /* A, max - min of the read-backs bracketing the accepted readings */
	int bias_readbacks;    /* how many read-backs that mean rests on */
	int readings;          /* accepted meter readings averaged into primary/secondary */
} hb_sweep_point;

typedef struct hb_sweep_callbacks {
	void *ctx;
	/* Stores the point; a non-zero return (e.g. disk full) ends the sweep
	 * through the safe path with status failed. */
	int (*point)(void *ctx, const hb_sweep_point *point, int total_planned);
	/* Optional progress text; called after each stored point. */
	void (*progress)(void *ctx, const hb_sweep_point *point, int index, int total_planned,
			 double l_first, double seconds_left);
	/* Optional: something the operator should know (current found flowing
	 * at start, a slow decay); one line, no newline. */
	void (*notice)(void *ctx, const char *text);
	/* Optional: read back the instruments' settings; when 0 once the
	 * instruments are set up (supply on) and before the first reading, when
	 * 1 after the last point of a sweep that ran to its end, before the
	 * shut-down. Only queries: nothing may be changed from here. */
	void (*settings)(void *ctx, int when);
} hb_sweep_callbacks;

typedef struct hb_sweep_result {
	hb_sweep_end end;
	int status;              /* the hb_status that ended it, HB_OK when complete */
	char reason[256];        /* human-readable, stored with the sweep */
	int points;
	double l_first;
	double noise_rel;        /* relative reading noise measured at the first step */
	bool current_may_flow;   /* the supply link was lost: nobody switched it off */
	bool interrupted_by_signal;
	int signal_number;
	hb_sweep_cause cause;    /* HB_CAUSE_NONE when complete */
	double start_amps;       /* A found flowing when the supply was opened (NAN: unknown) */
	double off_amps;         /* A still flowing when the output was switched off (NAN: unknown) */
	double decay_seconds;    /* s from the zero set-point until the current fell below the threshold */
} hb_sweep_result;

/* Fills defaults: 21 steps, 100 kHz, 0.5 V, series L-R, auto settle. */
void hb_sweep_plan_defaults(hb_sweep_plan *plan);
/* Checks the plan and its limits; writes one line naming what is wrong. */
int hb_sweep_plan_check(const hb_sweep_plan *plan, bool have_supply, char *err, size_t errlen);
/* The bias setpoints in order, up and (if asked) down; caller frees. */
int hb_sweep_setpoints(const hb_sweep_plan *plan, double **values, int *count);
/* The frequencies of a frequency sweep; caller frees. */
int hb_sweep_frequencies(const hb_sweep_plan *plan, double **values, int *count);
/* Rough duration in seconds from the plan alone (for --dry-run). */
double hb_sweep_estimate_seconds(const hb_sweep_plan *plan);

/* Runs the sweep. supply may be NULL for an unbiased frequency sweep. The
 * supply is changed only through its state machine (bias_supply.h):
 * current found flowing at the start is ramped down first, and every way
 * out (complete, signal, instrument error, compliance, dropout, store
 * failure) goes through its one shut-down: ramp down, confirm the decay,
 * output off. Returns the status that ended the sweep. */
int hb_sweep_run(hb_lcr *lcr, hb_supply *supply, const hb_sweep_plan *plan,
		 const hb_sweep_callbacks *cb, hb_sweep_result *result);

/* Signal handling: SIGINT, SIGTERM and SIGHUP set a flag the engine polls;
 * the process is never killed with current flowing by these signals. */
void hb_sweep_install_signals(void);
void hb_sweep_restore_signals(void);
/* The number of the first signal received, or 0. */
int hb_sweep_pending_signal(void);
void hb_sweep_clear_signal(void);

/* The cautions printed where a sweep starts (and in the README). */
void hb_sweep_print_cautions(FILE *out, double inductance, double top_current, double max_voltage);

#endif
