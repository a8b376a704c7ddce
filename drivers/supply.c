/* drivers/supply.c - DC supply driver (bias-current source): command text from the dialect profile */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hb_drivers.h"
#include "profile_internal.h"

struct hb_supply {
	hb_instrument in;
};

int hb_supply_open(const char *resource, FILE *trace, hb_supply **out)
{
	if (!out)
		return HB_ERR_ARG;
	hb_supply *s = calloc(1, sizeof *s);
	*out = s;
	if (!s)
		return HB_ERR_NOMEM;
	int rc = hb_instrument_open(&s->in, "supply", "supply", HB_KIND_SUPPLY, resource, trace);
	/* A meter on the supply's resource gets no supply commands: the
	 * bench refuses it by its IDN (hb_supply_answers_as_supply). */
	if (rc < 0 || !s->in.kind_confirmed)
		return rc;
	/* Before anything is switched on: an optional query the supply rejects
	 * is marked absent, so a sweep judges compliance from the V and I
	 * read-backs instead of failing on the first mode question. */
	static const hb_pkey optional[] = { HB_PK_SUP_OUTPUT_STATE, HB_PK_SUP_MODE, HB_PK_SUP_PROTECTION,
					    HB_PK_SUP_CURRENT_QUERY };
	for (size_t i = 0; i < sizeof optional / sizeof optional[0]; i++) {
		if (!hb_profile_optional(s->in.profile, optional[i]))
			continue;
		rc = hb_instrument_probe(&s->in, optional[i], NULL, 0);
		if (rc < 0)
			return rc;
	}
	return HB_OK;
}

void hb_supply_close(hb_supply *s)
{
	if (!s)
		return;
	/* Closing sends nothing: the sweep engine's state machine is the one
	 * place that changes the supply, so it alone ramps down before the
	 * output goes off. A blind OUTPUT OFF here would cut a current that may
	 * still be flowing through an inductor. */
	hb_instrument_release(&s->in);
	free(s);
}

const char *hb_supply_errmsg(const hb_supply *s)
{
	return hb_instrument_errmsg(s ? &s->in : NULL);
}

const hb_idn *hb_supply_idn(const hb_supply *s)
{
	return s ? &s->in.idn : NULL;
}

const char *hb_supply_profile_name(const hb_supply *s)
{
	return s && s->in.profile ? hb_profile_name(s->in.profile) : NULL;
}

hb_scpi *hb_supply_scpi(hb_supply *s)
{
	return s ? s->in.scpi : NULL;
}

bool hb_supply_supports(const hb_supply *s, const char *operation)
{
	return s && hb_instrument_supports(&s->in, HB_KIND_SUPPLY, operation);
}

bool hb_supply_answers_as_supply(const hb_supply *s)
{
	return s && s->in.profile && s->in.kind_confirmed;
}

static int usable(hb_supply *s)
{
	return s ? hb_instrument_usable(&s->in) : HB_ERR_ARG;
}

int hb_supply_reset(hb_supply *s)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	const char *command = hb_profile_text(s->in.profile, HB_PK_SUP_RESET);
	if (!command)
		command = "*RST";
	rc = hb_instrument_command_opc(&s->in, command, "reset");
	if (rc < 0)
		return rc;
	return hb_instrument_settle_check(&s->in, (int)hb_profile_number(s->in.profile, HB_PK_SUP_SETTLE_MS, 0),
					  "reset", command);
}

int hb_supply_set_voltage_limit(hb_supply *s, double volts)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!isfinite(volts) || volts < 0)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "set voltage limit: %g V is not a voltage >= 0", volts);
	char what[80];
	snprintf(what, sizeof what, "set voltage limit to %g V", volts);
	hb_parg arg = { .name = "volts", .real = volts };
	return hb_instrument_send(&s->in, HB_PK_SUP_VOLTAGE, &arg, 1, what);
}

/* Default read-back tolerance of a set-point, A: a supply rounds what it is
 * sent to its own resolution (typically 1 mA or finer for bias sources). */
#define SUPPLY_CURRENT_TOLERANCE 1e-3

int hb_supply_set_current(hb_supply *s, double amps)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!isfinite(amps) || amps < 0)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "set current: %g A is not a current >= 0", amps);
	char what[80];
	snprintf(what, sizeof what, "set current to %g A", amps);
	hb_parg arg = { .name = "amps", .real = amps };
	rc = hb_instrument_send(&s->in, HB_PK_SUP_CURRENT, &arg, 1, what);
	if (rc < 0 || !hb_instrument_has(&s->in, HB_PK_SUP_CURRENT_QUERY))
		return rc;
	/* A set-point the supply did not take (a lost or mangled command) is
	 * found here, not later as a current that does not match the plan. */
	double held;
	rc = hb_supply_query_current(s, &held);
	if (rc < 0)
		return rc;
	double tol = hb_profile_number(s->in.profile, HB_PK_SUP_CURRENT_TOLERANCE, SUPPLY_CURRENT_TOLERANCE) +
		     1e-3 * amps;
	if (!(fabs(held - amps) <= tol))
		return hb_instrument_fail(&s->in, HB_ERR_INSTRUMENT,
					  "%s: the supply holds %g A (read back with '%s'), off by more than %g A", what,
					  held, hb_profile_text(s->in.profile, HB_PK_SUP_CURRENT_QUERY), tol);
	return HB_OK;
}

int hb_supply_output(hb_supply *s, bool on)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	return hb_instrument_send(&s->in, on ? HB_PK_SUP_OUTPUT_ON : HB_PK_SUP_OUTPUT_OFF, NULL, 0,
				  on ? "output on" : "output off");
}

int hb_supply_measure_current(hb_supply *s, double *amps)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!amps)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "measure current: no place for the value");
	return hb_instrument_ask_number(&s->in, HB_PK_SUP_MEASURE_CURRENT, HB_PK_SUP_MEASURE_CURRENT_FIELD,
					HB_PK_SUP_MEASURE_CURRENT_SCALE, "measure current", amps);
}

int hb_supply_measure_voltage(hb_supply *s, double *volts)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!volts)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "measure voltage: no place for the value");
	if (!hb_profile_has(s->in.profile, HB_PK_SUP_MEASURE_VOLTAGE))
		return hb_instrument_fail(&s->in, HB_ERR_UNSUPPORTED,
					  "measure voltage: profile '%s' has no 'measure.voltage' operation",
					  hb_profile_name(s->in.profile));
	return hb_instrument_ask_number(&s->in, HB_PK_SUP_MEASURE_VOLTAGE, HB_PK_SUP_MEASURE_VOLTAGE_FIELD,
					HB_PK_SUP_MEASURE_VOLTAGE_SCALE, "measure voltage", volts);
}

/* Asks a query operation and hands back one trimmed field of its reply. */
static int ask_field(hb_supply *s, hb_pkey op, hb_pkey field_key, const char *what, char *field, size_t cap)
{
	char reply[256], err[HB_INSTRUMENT_ERRMSG_MAX];
	/* One question only: the callers retry the question and its parsing together. */
	int rc = hb_profile_ask(s->in.scpi, s->in.profile, op, what, reply, sizeof reply, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(&s->in, rc, "%s", err);
	int n = (int)hb_profile_number(s->in.profile, field_key, 1), nfields;
	if (hb_profile_reply_field(reply, n, field, cap, &nfields) < 0 || !field[0])
		return hb_instrument_fail(&s->in, HB_ERR_PROTOCOL, "%s: reply '%.80s' has no field %d", what, reply, n);
	return HB_OK;
}

/* Bit masks were checked at load; an absent key masks nothing. */
static long mask_of(const hb_profile *p, hb_pkey key)
{
	long mask = 0;
	const char *text = hb_profile_text(p, key);
	if (text && hb_profile_parse_long(text, &mask) < 0)
		mask = 0;
	return mask;
}

static int mode_from_bits(hb_supply *s, const char *field, hb_supply_mode *mode)
{
	long bits;
	if (hb_profile_parse_long(field, &bits) < 0)
		return hb_instrument_fail(&s->in, HB_ERR_PROTOCOL, "mode: reply field '%s' is not a whole number",
					  field);
	long cc = mask_of(s->in.profile, HB_PK_SUP_MODE_CC);
	long cv = mask_of(s->in.profile, HB_PK_SUP_MODE_CV);
	long off = mask_of(s->in.profile, HB_PK_SUP_MODE_OFF);
	/* Compliance first: a sweep must notice it even if the supply sets
	 * both bits while it changes over. */
	if (cv && (bits & cv))
		*mode = HB_SUPPLY_MODE_CV;
	else if (cc && (bits & cc))
		*mode = HB_SUPPLY_MODE_CC;
	else if (off && (bits & off))
		*mode = HB_SUPPLY_MODE_OFF;
	else
		*mode = HB_SUPPLY_MODE_UNKNOWN;
	return HB_OK;
}

static int mode_from_token(hb_supply *s, const char *field, hb_supply_mode *mode)
{
	static const struct {
		hb_pkey key;
		hb_supply_mode mode;
	} map[] = { { HB_PK_SUP_MODE_CV, HB_SUPPLY_MODE_CV },
		    { HB_PK_SUP_MODE_CC, HB_SUPPLY_MODE_CC },
		    { HB_PK_SUP_MODE_OFF, HB_SUPPLY_MODE_OFF } };
	for (size_t i = 0; i < sizeof map / sizeof map[0]; i++) {
		const char *tokens = hb_profile_text(s->in.profile, map[i].key);
		if (tokens && hb_profile_word_in(tokens, field)) {
			*mode = map[i].mode;
			return HB_OK;
		}
	}
	return hb_instrument_fail(&s->in, HB_ERR_PROTOCOL,
				  "mode: reply '%s' matches none of mode.cc, mode.cv, mode.off", field);
}

/* Read-only questions are asked once more after a drain when the reply was
 * lost (time-out) or garbled (a reply that does not parse). */
static bool worth_retry(int rc)
{
	return rc == HB_ERR_TIMEOUT || rc == HB_ERR_PROTOCOL;
}

static int mode_once(hb_supply *s, hb_supply_mode *mode)
{
	int rc;
	*mode = HB_SUPPLY_MODE_UNKNOWN;
	char field[96];
	if (hb_instrument_has(&s->in, HB_PK_SUP_OUTPUT_STATE)) {
		rc = ask_field(s, HB_PK_SUP_OUTPUT_STATE, HB_PK_SUP_OUTPUT_STATE_FIELD, "output state", field, sizeof field);
		if (rc < 0)
			return rc;
		bool on;
		if (hb_profile_reply_bool(s->in.profile, HB_PK_SUP_STATE_ON, HB_PK_SUP_STATE_OFF, field, &on) < 0)
			return hb_instrument_fail(&s->in, HB_ERR_PROTOCOL,
						  "output state: reply field '%s' is neither on nor off", field);
		if (!on) {
			*mode = HB_SUPPLY_MODE_OFF;
			return HB_OK;
		}
	}
	if (!hb_instrument_has(&s->in, HB_PK_SUP_MODE))
		return HB_OK; /* the instrument does not report it: the engine judges from V and I */
	rc = ask_field(s, HB_PK_SUP_MODE, HB_PK_SUP_MODE_FIELD, "mode", field, sizeof field);
	if (rc < 0)
		return rc;
	const char *kind = hb_profile_text(s->in.profile, HB_PK_SUP_MODE_REPLY);
	if (kind && strcmp(kind, "tokens") == 0)
		return mode_from_token(s, field, mode);
	return mode_from_bits(s, field, mode);
}

int hb_supply_get_mode(hb_supply *s, hb_supply_mode *mode)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!mode)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "mode: no place for the value");
	rc = mode_once(s, mode);
	if (worth_retry(rc) && hb_scpi_drain(s->in.scpi) == HB_OK)
		rc = mode_once(s, mode);
	return rc;
}

static int protection_once(hb_supply *s, bool *tripped)
{
	int rc;
	char field[96];
	rc = ask_field(s, HB_PK_SUP_PROTECTION, HB_PK_SUP_PROTECTION_FIELD, "protection", field, sizeof field);
	if (rc < 0)
		return rc;
	const char *tokens = hb_profile_text(s->in.profile, HB_PK_SUP_PROTECTION_TRIPPED);
	if (tokens) {
		*tripped = hb_profile_word_in(tokens, field);
		return HB_OK;
	}
	if (hb_profile_reply_bool(s->in.profile, HB_PK_SUP_STATE_ON, HB_PK_SUP_STATE_OFF, field, tripped) < 0)
		return hb_instrument_fail(&s->in, HB_ERR_PROTOCOL,
					  "protection: reply field '%s' is neither 0/1 nor on/off", field);
	return HB_OK;
}

int hb_supply_protection(hb_supply *s, bool *tripped)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!tripped)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "protection: no place for the value");
	if (!hb_instrument_has(&s->in, HB_PK_SUP_PROTECTION))
		return hb_instrument_fail(&s->in, HB_ERR_UNSUPPORTED,
					  "protection: profile '%s' has no 'protection' operation",
					  hb_profile_name(s->in.profile));
	rc = protection_once(s, tripped);
	if (worth_retry(rc) && hb_scpi_drain(s->in.scpi) == HB_OK)
		rc = protection_once(s, tripped);
	return rc;
}

int hb_supply_errors(hb_supply *s, hb_scpi_error *list, size_t cap, size_t *count, bool *lost)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	return hb_instrument_errors(&s->in, list, cap, count, lost);
}

static int output_state_once(hb_supply *s, bool *on)
{
	char field[96];
	int rc = ask_field(s, HB_PK_SUP_OUTPUT_STATE, HB_PK_SUP_OUTPUT_STATE_FIELD, "output state", field, sizeof field);
	if (rc < 0)
		return rc;
	if (hb_profile_reply_bool(s->in.profile, HB_PK_SUP_STATE_ON, HB_PK_SUP_STATE_OFF, field, on) < 0)
		return hb_instrument_fail(&s->in, HB_ERR_PROTOCOL, "output state: reply field '%s' is neither on nor off",
					  field);
	return HB_OK;
}

int hb_supply_output_state(hb_supply *s, bool *on)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!on)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "output state: no place for the value");
	if (!hb_instrument_has(&s->in, HB_PK_SUP_OUTPUT_STATE))
		return hb_instrument_fail(&s->in, HB_ERR_UNSUPPORTED,
					  "output state: profile '%s' has no 'output.state' operation",
					  hb_profile_name(s->in.profile));
	rc = output_state_once(s, on);
	if (worth_retry(rc) && hb_scpi_drain(s->in.scpi) == HB_OK)
		rc = output_state_once(s, on);
	return rc;
}

int hb_supply_query_current(hb_supply *s, double *amps)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!amps)
		return hb_instrument_fail(&s->in, HB_ERR_ARG, "current set-point: no place for the value");
	if (!hb_instrument_has(&s->in, HB_PK_SUP_CURRENT_QUERY))
		return hb_instrument_fail(&s->in, HB_ERR_UNSUPPORTED,
					  hb_profile_has(s->in.profile, HB_PK_SUP_CURRENT_QUERY)
						  ? "current set-point: the supply rejected profile '%s''s 'current.query' when probed at open"
						  : "current set-point: profile '%s' has no 'current.query' operation",
					  hb_profile_name(s->in.profile));
	return hb_instrument_ask_number(&s->in, HB_PK_SUP_CURRENT_QUERY, HB_PK_SUP_CURRENT_QUERY_FIELD,
					HB_PK_SUP_CURRENT_QUERY_SCALE, "current set-point", amps);
}

void hb_supply_accuracy(const hb_supply *s, hb_accuracy *out)
{
	hb_profile_supply_accuracy(s ? s->in.profile : NULL, out);
}

int hb_supply_query_setting(hb_supply *s, const char *name, char *reply, size_t cap)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	return hb_instrument_query_setting(&s->in, name, reply, cap);
}
