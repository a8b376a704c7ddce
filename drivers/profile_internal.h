/* drivers/profile_internal.h - what the meter and supply drivers read from a loaded dialect profile */
#ifndef HB_PROFILE_INTERNAL_H
#define HB_PROFILE_INTERNAL_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "hb_drivers.h"

/* PCRE2 with a bounded cost: a pathological match.* pattern fails at load
 * or gives up at a match limit instead of taking the machine's memory. */
#ifndef PCRE2_CODE_UNIT_WIDTH
#define PCRE2_CODE_UNIT_WIDTH 8
#endif
#include <pcre2.h>

/*
 * Every key a profile may carry, in one list. The table in profile.c gives
 * each its section, spelling, value type and range; a loaded profile holds
 * one slot per key, so the drivers look values up by id instead of by text.
 */
typedef enum hb_pkey {
	/* [profile] */
	HB_PK_NAME,
	HB_PK_KIND,
	HB_PK_DESCRIPTION,
	HB_PK_PRIORITY,
	HB_PK_MATCH_MAKER,
	HB_PK_MATCH_MODEL,
	HB_PK_CHECK_ERRORS,

	/* [lcr] operations */
	HB_PK_LCR_RESET,
	HB_PK_LCR_SETTLE_MS,
	HB_PK_LCR_FREQUENCY,
	HB_PK_LCR_LEVEL_VOLTAGE,
	HB_PK_LCR_LEVEL_CURRENT,
	HB_PK_LCR_FUNCTION,
	HB_PK_LCR_AVERAGING,
	HB_PK_LCR_APERTURE,
	HB_PK_LCR_MEASURE,
	HB_PK_LCR_MEASURE_FIELDS,
	HB_PK_LCR_MEASURE_PRIMARY,
	HB_PK_LCR_MEASURE_SECONDARY,
	HB_PK_LCR_MEASURE_STATUS,
	HB_PK_LCR_MEASURE_PRIMARY_SCALE,
	HB_PK_LCR_MEASURE_PRIMARY_SCALE_ZTH,
	HB_PK_LCR_MEASURE_SECONDARY_SCALE,
	HB_PK_LCR_MEASURE_STATUS_MAP,
	HB_PK_LCR_MEASURE_STATUS_OVERLOAD,
	HB_PK_LCR_DCR,
	HB_PK_LCR_DCR_FIELD,
	HB_PK_LCR_DCR_SCALE,
	HB_PK_LCR_BIAS_CURRENT,
	HB_PK_LCR_BIAS_STATE,
	HB_PK_LCR_CORRECT_OPEN,
	HB_PK_LCR_CORRECT_SHORT,
	/* [lcr] tokens for enumerated placeholders */
	HB_PK_LCR_EQUIV_SERIES,
	HB_PK_LCR_EQUIV_PARALLEL,
	HB_PK_LCR_PAIR_LR,
	HB_PK_LCR_PAIR_LQ,
	HB_PK_LCR_PAIR_LD,
	HB_PK_LCR_PAIR_ZTH,
	HB_PK_LCR_APERTURE_SHORT,
	HB_PK_LCR_APERTURE_MEDIUM,
	HB_PK_LCR_APERTURE_LONG,
	HB_PK_LCR_STATE_ON,
	HB_PK_LCR_STATE_OFF,

	/* [supply] operations */
	HB_PK_SUP_RESET,
	HB_PK_SUP_SETTLE_MS,
	HB_PK_SUP_VOLTAGE,
	HB_PK_SUP_CURRENT,
	HB_PK_SUP_OUTPUT_ON,
	HB_PK_SUP_OUTPUT_OFF,
	HB_PK_SUP_OUTPUT_STATE,
	HB_PK_SUP_OUTPUT_STATE_FIELD,
	HB_PK_SUP_MEASURE_CURRENT,
	HB_PK_SUP_MEASURE_CURRENT_FIELD,
	HB_PK_SUP_MEASURE_CURRENT_SCALE,
	HB_PK_SUP_MEASURE_VOLTAGE,
	HB_PK_SUP_MEASURE_VOLTAGE_FIELD,
	HB_PK_SUP_MEASURE_VOLTAGE_SCALE,
	HB_PK_SUP_MODE,
	HB_PK_SUP_MODE_FIELD,
	HB_PK_SUP_MODE_REPLY,
	HB_PK_SUP_MODE_CC,
	HB_PK_SUP_MODE_CV,
	HB_PK_SUP_MODE_OFF,
	HB_PK_SUP_PROTECTION,
	HB_PK_SUP_PROTECTION_FIELD,
	HB_PK_SUP_PROTECTION_TRIPPED,
	HB_PK_SUP_STATE_ON,
	HB_PK_SUP_STATE_OFF,

	/* added with the optional-operation work; the table in profile.c keeps this order */
	HB_PK_LCR_FUNCTION_FIXED,
	HB_PK_LCR_OPTIONAL,
	HB_PK_SUP_CURRENT_QUERY,
	HB_PK_SUP_CURRENT_QUERY_FIELD,
	HB_PK_SUP_CURRENT_QUERY_SCALE,
	HB_PK_SUP_CURRENT_TOLERANCE,
	HB_PK_SUP_OPTIONAL,
	/* accuracy specifications (accuracy.c, docs/profiles.md) */
	HB_PK_LCR_ACCURACY_BASIC,
	HB_PK_LCR_ACCURACY_FREQ_ABOVE,
	HB_PK_LCR_ACCURACY_SOURCE,
	HB_PK_SUP_ACCURACY_CURRENT,
	HB_PK_SUP_ACCURACY_SOURCE,
	/* [profile] link.echo: the instrument echoes every command line */
	HB_PK_LINK_ECHO,
	/* settings read back at the start and end of a sweep (settings.c) */
	HB_PK_LCR_QUERY_FREQUENCY,
	HB_PK_LCR_QUERY_LEVEL_VOLTAGE,
	HB_PK_LCR_QUERY_LEVEL_CURRENT,
	HB_PK_LCR_QUERY_FUNCTION,
	HB_PK_LCR_QUERY_AVERAGING,
	HB_PK_LCR_QUERY_APERTURE,
	HB_PK_SUP_QUERY_VOLTAGE,
	HB_PK_COUNT
} hb_pkey;

/* One key's value as loaded: text as written (templates keep theirs for
 * expansion), the number for numeric keys, and where it stood in the file. */
typedef struct hb_pvalue {
	bool set;
	int line;
	char *text;
	double number;
} hb_pvalue;

struct hb_profile {
	char *path;
	hb_instrument_kind kind;
	int priority;
	bool check_errors;
	pcre2_code *maker_re, *model_re; /* NULL = key absent */
	hb_pvalue v[HB_PK_COUNT];
};

/* One value substituted into a template placeholder, by placeholder name. */
typedef enum hb_ptype { HB_PT_REAL, HB_PT_INT, HB_PT_ENUM, HB_PT_BOOL } hb_ptype;

typedef struct hb_parg {
	const char *name;
	double real;   /* HB_PT_REAL */
	long integer;  /* HB_PT_INT */
	int choice;    /* HB_PT_ENUM: index into the placeholder's value list; HB_PT_BOOL: 0/1 */
} hb_parg;

/* Whether the profile defines this key (an operation or a reply detail). */
bool hb_profile_has(const hb_profile *p, hb_pkey key);
const char *hb_profile_text(const hb_profile *p, hb_pkey key);
/* Number of a numeric key, or fallback when the profile leaves it out. */
double hb_profile_number(const hb_profile *p, hb_pkey key, double fallback);
/* The key's spelling as written in a profile, e.g. "level.voltage". */
const char *hb_profile_key_name(hb_pkey key);
/* True when the operation named by its key (e.g. "dcr") or by the first
 * part of a group of keys (e.g. "bias", "level", "correct") is defined. */
bool hb_profile_supports(const hb_profile *p, hb_instrument_kind kind, const char *operation);

/* The key of an operation of this kind by its spelling ("mode",
 * "current.query"), or -1. */
int hb_profile_key_of(hb_instrument_kind kind, const char *name);
/* Whether the profile lists the operation under its section's 'optional'
 * key: the driver then probes it at open and marks it absent on the
 * handle when the instrument rejects it. */
bool hb_profile_optional(const hb_profile *p, hb_pkey key);
/* The one function a meter without 'function' always measures
 * (function.fixed); HB_ERR_UNSUPPORTED when the key is absent.
 * *any_equiv is set for z-theta, where the circuit does not matter. */
int hb_profile_function_fixed(const hb_profile *p, hb_equiv *equiv, hb_pair *pair, bool *any_equiv);

/*
 * Fills the operation's template with args into out. Returns
 * HB_ERR_UNSUPPORTED when the profile lacks the operation or has no token
 * for an enumerated value (err says which), HB_ERR_ARG when out is short.
 */
int hb_profile_expand(const hb_profile *p, hb_pkey op, const hb_parg *args, size_t nargs,
		      char *out, size_t cap, char *err, size_t errlen);

/* Locale-independent decimal number; whole text must be consumed. */
int hb_profile_strtod(const char *text, double *value);

/* ---- operations carried out through a profile (shared by lcr.c and supply.c) ---- */

/* The profile forced by the resource's profile= option, else the match on
 * the IDN; a forced profile of the wrong kind is HB_ERR_PROFILE. */
int hb_profile_choose(const hb_resource *res, hb_instrument_kind kind, const hb_idn *idn, hb_profile **out,
		      char *err, size_t errlen);

/* Field number field (1-based) of a comma-separated reply, trimmed, into
 * out; HB_ERR_PROTOCOL when the reply has fewer fields. *nfields (may be
 * NULL) gets the number of fields in the reply. */
int hb_profile_reply_field(const char *reply, int field, char *out, size_t cap, int *nfields);

/* Expands the operation, sends it and, when the profile checks errors,
 * reads the error queue: an entry there makes HB_ERR_INSTRUMENT with the
 * instrument's code and message. what names the request in messages
 * ("set frequency to 1000 Hz"). */
int hb_profile_send(hb_scpi *scpi, const hb_profile *p, hb_pkey op, const hb_parg *args, size_t nargs,
		    const char *what, char *err, size_t errlen);
/* Sends an already expanded command, then checks errors like hb_profile_send. */
int hb_profile_send_text(hb_scpi *scpi, const hb_profile *p, const char *command, const char *what, char *err,
			 size_t errlen);
/* Reads the error queue after a command; HB_ERR_INSTRUMENT if not empty. */
int hb_profile_check_errors(hb_scpi *scpi, const char *what, const char *command, char *err, size_t errlen);
/* Sends the query operation and returns the reply line. */
int hb_profile_ask(hb_scpi *scpi, const hb_profile *p, hb_pkey op, const char *what, char *reply, size_t cap,
		   char *err, size_t errlen);
/* A numeric query: the field named by field_key (default 1) times the
 * scale of scale_key (default 1). HB_ERR_OVERLOAD for 9.9E37. */
int hb_profile_ask_number(hb_scpi *scpi, const hb_profile *p, hb_pkey op, hb_pkey field_key, hb_pkey scale_key,
			  const char *what, double *value, char *err, size_t errlen);
/* A yes/no reply field: a number (nonzero = yes) or the state.on/state.off
 * tokens of the section (ON/OFF when unset). */
int hb_profile_reply_bool(const hb_profile *p, hb_pkey on_key, hb_pkey off_key, const char *field, bool *value);
/* Whether token (case-insensitive) is one of the blank/comma-separated words in list. */
bool hb_profile_word_in(const char *list, const char *token);
/* Parses a whole decimal integer reply field. */
int hb_profile_parse_long(const char *text, long *value);

/* ---- what a meter and a supply handle have in common (instrument.c) ---- */

enum { HB_INSTRUMENT_ERRMSG_MAX = 512 };

/* The part of hb_lcr and hb_supply that opening, error reporting and the
 * plain profile operations need, so both drivers share one version of them. */
typedef struct hb_instrument {
	const char *label; /* "lcr meter", "supply": starts every open message */
	hb_scpi *scpi;
	hb_profile *profile;
	hb_idn idn;
	/* False when the *IDN? is claimed only by profiles of the other kind
	 * (a supply opened as a meter): the bench refuses before anything is
	 * switched on. A forced profile= counts as the operator's word. */
	bool kind_confirmed;
	/* Optional operations the instrument rejected when probed at open:
	 * treated as if the profile left them out. */
	bool absent[HB_PK_COUNT];
	char errmsg[HB_INSTRUMENT_ERRMSG_MAX];
} hb_instrument;

/* The profile has the operation and the instrument did not reject it. */
bool hb_instrument_has(const hb_instrument *in, hb_pkey key);
/* hb_profile_supports, less what the probe at open found absent. */
bool hb_instrument_supports(const hb_instrument *in, hb_instrument_kind kind, const char *operation);
/* Probes each operation the profile lists as optional: a query is asked,
 * a setting is sent with args (the instrument's default, harmless before
 * a sweep). A rejection (an error in the queue, or no reply) marks it
 * absent, drains the line and clears the error queue; only a failing link
 * fails. args/nargs apply to settings and may be NULL/0 for queries. */
int hb_instrument_probe(hb_instrument *in, hb_pkey op, const hb_parg *args, size_t nargs);
/* hb_profile_ask retried once after a drain when the reply was lost
 * (time-out) or garbled (protocol error); the failure recorded on the handle. */
int hb_instrument_ask(hb_instrument *in, hb_pkey op, const char *what, char *reply, size_t cap);

/* Records the message on the handle and passes status through. */
int hb_instrument_fail(hb_instrument *in, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
/* Opens the link, asks *IDN?, chooses the profile of kind and clears the
 * error queue; trace lines carry tag. On failure the handle keeps what was
 * opened, for hb_instrument_release. */
int hb_instrument_open(hb_instrument *in, const char *label, const char *tag, hb_instrument_kind kind,
		       const char *resource, FILE *trace);
/* Frees the profile and closes the link; the caller switches outputs off first. */
void hb_instrument_release(hb_instrument *in);
/* "out of memory" for NULL: open hands back NULL only when calloc failed. */
const char *hb_instrument_errmsg(const hb_instrument *in);
/* HB_ERR_ARG with "<label> not open" unless the link and profile are there. */
int hb_instrument_usable(hb_instrument *in);
/* hb_profile_send with the failure recorded on the handle. */
int hb_instrument_send(hb_instrument *in, hb_pkey op, const hb_parg *args, size_t nargs, const char *what);
/* hb_profile_ask_number with the failure recorded on the handle. */
int hb_instrument_ask_number(hb_instrument *in, hb_pkey op, hb_pkey field_key, hb_pkey scale_key, const char *what,
			     double *value);
/* Writes a command that runs to completion (reset, compensation) and waits
 * for it with *OPC?; "what: link message" on failure. */
int hb_instrument_command_opc(hb_instrument *in, const char *command, const char *what);
/* Waits settle_ms, then reads the error queue when the profile checks errors. */
int hb_instrument_settle_check(hb_instrument *in, int settle_ms, const char *what, const char *command);
/* hb_scpi_errors with the failure recorded on the handle. */
int hb_instrument_errors(hb_instrument *in, hb_scpi_error *list, size_t cap, size_t *count, bool *lost);
/* The reply of a setting's query operation (settings.c), trimmed:
 * HB_ERR_UNSUPPORTED when the profile has no such query. */
int hb_instrument_query_setting(hb_instrument *in, const char *name, char *reply, size_t cap);

/* ---- bounded pattern matching (profile.c) ---- */

/* What one PCRE2 match may spend: backtracking steps, nesting depth and
 * heap (KiB). An IDN field is at most HB_IDN_FIELD_MAX bytes, so a sane
 * pattern stays far below them; (a+)+$ on a long 'aaa...b' hits them. */
enum { HB_PROFILE_MATCH_LIMIT = 100000, HB_PROFILE_DEPTH_LIMIT = 1000, HB_PROFILE_HEAP_LIMIT_KIB = 1024 };

/* Compiles a match.* pattern (case-insensitive) with a nesting cap;
 * NULL with why filled when PCRE2 refuses it. */
pcre2_code *hb_profile_regex_compile(const char *pattern, char *why, size_t whylen);
/* 1 when pattern matches subject anywhere, 0 when not, HB_ERR_LIMIT when the
 * match, depth or heap limit stopped it (why says which), HB_ERR_NOMEM. */
int hb_profile_regex_match(const pcre2_code *re, const char *subject, char *why, size_t whylen);
/* hb_profile_matches with the reason: 1 match, 0 none, HB_ERR_LIMIT with
 * why = "PATH:LINE: key 'match.model': ..." when a pattern gave up. */
int hb_profile_match_check(const hb_profile *p, const hb_idn *idn, char *why, size_t whylen);

#endif
