/* src/bench/profile_check.h - a dialect profile tried against its instrument operation by operation, the supply changed only through its state machine */
#ifndef HB_PROFILE_CHECK_H
#define HB_PROFILE_CHECK_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "../../drivers/hb_drivers.h"

typedef enum hb_pcheck_result {
	HB_PCHECK_WORKS,  /* sent, answered, read */
	HB_PCHECK_FAILS,  /* sent; the instrument or the reading failed (note says how) */
	HB_PCHECK_ABSENT, /* the profile has no such operation */
	HB_PCHECK_HELD    /* not sent: it would change something the check leaves alone (note says what sends it) */
} hb_pcheck_result;

enum { HB_PCHECK_MAX_ITEMS = 24, HB_PCHECK_EXCHANGE = 1024 };

typedef struct hb_pcheck_item {
	char op[32];                        /* the profile's operation key: "frequency", "measure.current" */
	hb_pcheck_result result;
	char exchange[HB_PCHECK_EXCHANGE];  /* "> command" and "< reply" lines, as on the wire */
	char read_as[256];                  /* how the profile read the reply: "L 100.02 uH, R 35.1 mohm" */
	char note[320];                     /* why it failed or was held back */
} hb_pcheck_item;

typedef struct hb_pcheck_options {
	const char *resource;   /* with ?profile= when the profile is forced */
	bool corrections;       /* the fixture is open/shorted as asked: send correct.open/correct.short */
	bool energise;          /* drive a small current through the state machine */
	double current_a;       /* the check current when energised, > 0 */
	double voltage_limit_v; /* the supply's voltage limit when energised */
	double ramp_rate;       /* A/s */
	double off_threshold;   /* A */
	FILE *trace;            /* every exchange copied here too, or NULL */
	void (*notice)(void *ctx, const char *text); /* the state machine's notices (current found flowing) */
	void *notice_ctx;
} hb_pcheck_options;

typedef struct hb_pcheck_report {
	hb_instrument_kind kind;
	hb_idn idn;
	char profile[128], profile_path[512];
	bool forced;             /* the profile came from ?profile=, not from *IDN? */
	size_t n;
	hb_pcheck_item items[HB_PCHECK_MAX_ITEMS];
	int works, fails, absent, held;
	bool current_may_flow;   /* energised and the shut-down did not confirm the output off */
	char message[512];       /* why the check could not run */
} hb_pcheck_report;

/* Which kind the instrument at resource is: by a forced profile, else by
 * which kind's profiles claim its *IDN? reply. HB_ERR_NOTFOUND with a
 * one-line err when no profile claims it, or both kinds do. */
int hb_pcheck_kind(const char *resource, hb_instrument_kind *kind, hb_idn *idn, char *err, size_t errlen);

/* Opens the instrument with its profile and tries every operation:
 * meter settings, a measurement, DC resistance, the internal bias switched
 * off, corrections only when opt->corrections or the resource is the
 * built-in simulator (sim:, no stored correction to lose); supply read-backs only,
 * unless opt->energise, when the set-point, output and reset go through
 * the bias state machine (ramped up to opt->current_a, down, off).
 * HB_OK when the check ran (failures are in the items); an error with
 * out->message when the instrument could not be opened. */
int hb_pcheck_run(const hb_pcheck_options *opt, hb_instrument_kind kind, hb_pcheck_report *out);

#endif
