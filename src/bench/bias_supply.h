/* src/bench/bias_supply.h - the supply state machine: the only code that changes a bias supply's output or set-point */
#ifndef HB_BIAS_SUPPLY_H
#define HB_BIAS_SUPPLY_H

#include <signal.h>
#include <stdbool.h>

#include "../../drivers/hb_drivers.h"

/*
 * States, in the order a sweep walks them:
 *
 *   UNKNOWN --open--> OFF or IDLE (anything found flowing is ramped down first)
 *   OFF/IDLE --enable--> IDLE (output on at 0 A)
 *   IDLE/HOLD --ramp_to--> RAMPING --> HOLD
 *   any --shutdown--> RAMP_DOWN --> CONFIRM --> OFF
 *
 * The set-point only ever moves in slices no larger than ramp_rate * 50 ms,
 * and the output is only switched off once the measured current has fallen
 * below off_threshold (or, when it cannot be read, after a conservative
 * wait). Freeing the handle never touches the supply.
 */
typedef enum hb_bias_state {
	HB_BIAS_UNKNOWN,
	HB_BIAS_OFF,
	HB_BIAS_IDLE,      /* output on, set-point 0 */
	HB_BIAS_RAMPING,
	HB_BIAS_HOLD,
	HB_BIAS_RAMP_DOWN,
	HB_BIAS_CONFIRM,
	HB_BIAS_LOST       /* the link is gone: nobody can switch it off from here */
} hb_bias_state;

typedef struct hb_bias_config {
	double ramp_rate;     /* A/s; > 0 */
	double off_threshold; /* A; the output is switched off below this current */
	double confirm_timeout; /* s; longest wait for the current to decay before switching off anyway */
	double settle_hint;   /* s; the engine's learnt response time (the conservative wait when no read-back) */
	/* Set by a signal handler: a ramp up stops early; ramps down never do. */
	volatile sig_atomic_t *stop;
	/* Told about anything the operator should know (current found flowing, slow decay). */
	void (*notice)(void *ctx, const char *text);
	void *notice_ctx;
} hb_bias_config;

typedef struct hb_bias hb_bias;

int hb_bias_new(hb_supply *supply, const hb_bias_config *config, hb_bias **out);
/* Never switches anything: a handle let go of leaves the supply as it is. */
void hb_bias_free(hb_bias *bias);
const char *hb_bias_errmsg(const hb_bias *bias);
hb_bias_state hb_bias_get_state(const hb_bias *bias);
const char *hb_bias_state_name(hb_bias_state state);
/* The last set-point sent (A). */
double hb_bias_setpoint(const hb_bias *bias);
void hb_bias_set_settle_hint(hb_bias *bias, double seconds);

/* Reads the supply's output state, set-point and measured current. When
 * current flows it says so and ramps it down at the ramp rate, confirms the
 * decay, and leaves the output on at 0 A (IDLE); otherwise OFF or IDLE as
 * found. *found_amps gets what was flowing (NAN when it could not be read). */
int hb_bias_open(hb_bias *bias, double *found_amps);
/* Output on at 0 A with the voltage limit set (from OFF or IDLE). */
int hb_bias_enable(hb_bias *bias, double voltage_limit);
/* Moves the set-point to amps at no more than the ramp rate. Stops early
 * with HB_ERR_INTERRUPTED when *stop is set on the way up. */
int hb_bias_ramp_to(hb_bias *bias, double amps);

typedef struct hb_bias_shutdown_report {
	double from_amps;      /* where the ramp down started */
	bool from_measured;    /* from the measured current (else the last set-point) */
	double decay_seconds;  /* from the zero set-point until below the threshold (NAN: not confirmed) */
	double off_amps;       /* measured when the output was switched off (NAN: unknown) */
	bool confirmed;        /* the decay was seen on the read-back */
	bool switched_off;
} hb_bias_shutdown_report;

/* The one shut-down: ramp down from the measured current (else the last
 * set-point), poll until the current is below the threshold or the
 * time-out, then switch the output off. Returns HB_OK when the output is
 * off, else the link status (current may then still flow). */
int hb_bias_shutdown(hb_bias *bias, hb_bias_shutdown_report *report);

/* Sends the supply's reset (profile 'reset', else *RST), only in state OFF
 * and only once the read-back shows no current (below off_threshold): a
 * reset switches the output as the instrument likes. Afterwards the
 * output must read back off, else HB_ERR_INSTRUMENT. */
int hb_bias_reset_when_off(hb_bias *bias);

#endif
