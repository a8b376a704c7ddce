/* drivers/supply.c - DC supply driver (bias-current source): command text from the dialect profile */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "hb_drivers.h"
#include "profile_internal.h"

#define SUPPLY_ERRMSG_MAX 512

struct hb_supply {
	hb_scpi *scpi;
	hb_profile *profile;
	hb_idn idn;
	char errmsg[SUPPLY_ERRMSG_MAX];
};

static int supply_fail(hb_supply *s, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static int supply_fail(hb_supply *s, int status, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(s->errmsg, sizeof s->errmsg, fmt, ap);
	va_end(ap);
	return status;
}

static void sleep_ms(int ms)
{
	if (ms <= 0)
		return;
	struct timespec ts = { ms / 1000, (long)(ms % 1000) * 1000000L };
	while (nanosleep(&ts, &ts) != 0)
		;
}

int hb_supply_open(const char *resource, FILE *trace, hb_supply **out)
{
	if (!out)
		return HB_ERR_ARG;
	hb_supply *s = calloc(1, sizeof *s);
	*out = s;
	if (!s)
		return HB_ERR_NOMEM;
	int rc = hb_scpi_open(resource, &s->scpi);
	if (rc < 0)
		return supply_fail(s, rc, "supply %s: %s", resource ? resource : "(none)", hb_scpi_errmsg(s->scpi));
	if (trace)
		hb_scpi_set_trace(s->scpi, trace, "supply");
	rc = hb_scpi_idn(s->scpi, &s->idn);
	if (rc < 0)
		return supply_fail(s, rc, "supply %s: *IDN?: %s", resource, hb_scpi_errmsg(s->scpi));
	char err[SUPPLY_ERRMSG_MAX - 64];
	rc = hb_profile_choose(hb_scpi_resource(s->scpi), HB_KIND_SUPPLY, &s->idn, &s->profile, err, sizeof err);
	if (rc < 0)
		return supply_fail(s, rc, "supply %s: %s", resource, err);
	rc = hb_scpi_clear(s->scpi);
	if (rc < 0)
		return supply_fail(s, rc, "supply %s: *CLS: %s", resource, hb_scpi_errmsg(s->scpi));
	return HB_OK;
}

void hb_supply_close(hb_supply *s)
{
	if (!s)
		return;
	/* Whatever happened before, current must not keep flowing through
	 * the part once we let go of the supply. */
	if (s->scpi && s->profile) {
		char err[64];
		(void)hb_profile_send(s->scpi, s->profile, HB_PK_SUP_OUTPUT_OFF, NULL, 0, "output off", err, sizeof err);
	}
	hb_profile_free(s->profile);
	hb_scpi_close(s->scpi);
	free(s);
}

const char *hb_supply_errmsg(const hb_supply *s)
{
	if (!s)
		return "out of memory";
	return s->errmsg[0] ? s->errmsg : "no error";
}

const hb_idn *hb_supply_idn(const hb_supply *s)
{
	return s ? &s->idn : NULL;
}

const char *hb_supply_profile_name(const hb_supply *s)
{
	return s && s->profile ? hb_profile_name(s->profile) : NULL;
}

hb_scpi *hb_supply_scpi(hb_supply *s)
{
	return s ? s->scpi : NULL;
}

bool hb_supply_supports(const hb_supply *s, const char *operation)
{
	return s && hb_profile_supports(s->profile, HB_KIND_SUPPLY, operation);
}

static int usable(hb_supply *s)
{
	if (!s)
		return HB_ERR_ARG;
	if (!s->scpi || !s->profile)
		return supply_fail(s, HB_ERR_ARG, "supply not open");
	return HB_OK;
}

static int send_op(hb_supply *s, hb_pkey op, const hb_parg *args, size_t nargs, const char *what)
{
	char err[SUPPLY_ERRMSG_MAX];
	int rc = hb_profile_send(s->scpi, s->profile, op, args, nargs, what, err, sizeof err);
	if (rc < 0)
		return supply_fail(s, rc, "%s", err);
	return HB_OK;
}

int hb_supply_reset(hb_supply *s)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	const char *command = hb_profile_text(s->profile, HB_PK_SUP_RESET);
	if (!command)
		command = "*RST";
	rc = hb_scpi_write(s->scpi, command);
	if (rc == HB_OK)
		rc = hb_scpi_opc(s->scpi);
	if (rc < 0)
		return supply_fail(s, rc, "reset: %s", hb_scpi_errmsg(s->scpi));
	sleep_ms((int)hb_profile_number(s->profile, HB_PK_SUP_SETTLE_MS, 0));
	if (s->profile->check_errors) {
		char err[SUPPLY_ERRMSG_MAX];
		rc = hb_profile_check_errors(s->scpi, "reset", command, err, sizeof err);
		if (rc < 0)
			return supply_fail(s, rc, "%s", err);
	}
	return HB_OK;
}

int hb_supply_set_voltage_limit(hb_supply *s, double volts)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!isfinite(volts) || volts < 0)
		return supply_fail(s, HB_ERR_ARG, "set voltage limit: %g V is not a voltage >= 0", volts);
	char what[80];
	snprintf(what, sizeof what, "set voltage limit to %g V", volts);
	hb_parg arg = { .name = "volts", .real = volts };
	return send_op(s, HB_PK_SUP_VOLTAGE, &arg, 1, what);
}

int hb_supply_set_current(hb_supply *s, double amps)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!isfinite(amps) || amps < 0)
		return supply_fail(s, HB_ERR_ARG, "set current: %g A is not a current >= 0", amps);
	char what[80];
	snprintf(what, sizeof what, "set current to %g A", amps);
	hb_parg arg = { .name = "amps", .real = amps };
	return send_op(s, HB_PK_SUP_CURRENT, &arg, 1, what);
}

int hb_supply_output(hb_supply *s, bool on)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	return send_op(s, on ? HB_PK_SUP_OUTPUT_ON : HB_PK_SUP_OUTPUT_OFF, NULL, 0, on ? "output on" : "output off");
}

int hb_supply_measure_current(hb_supply *s, double *amps)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!amps)
		return supply_fail(s, HB_ERR_ARG, "measure current: no place for the value");
	char err[SUPPLY_ERRMSG_MAX];
	rc = hb_profile_ask_number(s->scpi, s->profile, HB_PK_SUP_MEASURE_CURRENT, HB_PK_SUP_MEASURE_CURRENT_FIELD,
				   HB_PK_SUP_MEASURE_CURRENT_SCALE, "measure current", amps, err, sizeof err);
	if (rc < 0)
		return supply_fail(s, rc, "%s", err);
	return HB_OK;
}

int hb_supply_measure_voltage(hb_supply *s, double *volts)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!volts)
		return supply_fail(s, HB_ERR_ARG, "measure voltage: no place for the value");
	if (!hb_profile_has(s->profile, HB_PK_SUP_MEASURE_VOLTAGE))
		return supply_fail(s, HB_ERR_UNSUPPORTED, "measure voltage: profile '%s' has no 'measure.voltage' operation",
				   hb_profile_name(s->profile));
	char err[SUPPLY_ERRMSG_MAX];
	rc = hb_profile_ask_number(s->scpi, s->profile, HB_PK_SUP_MEASURE_VOLTAGE, HB_PK_SUP_MEASURE_VOLTAGE_FIELD,
				   HB_PK_SUP_MEASURE_VOLTAGE_SCALE, "measure voltage", volts, err, sizeof err);
	if (rc < 0)
		return supply_fail(s, rc, "%s", err);
	return HB_OK;
}

/* Asks a query operation and hands back one trimmed field of its reply. */
static int ask_field(hb_supply *s, hb_pkey op, hb_pkey field_key, const char *what, char *field, size_t cap)
{
	char reply[256], err[SUPPLY_ERRMSG_MAX];
	int rc = hb_profile_ask(s->scpi, s->profile, op, what, reply, sizeof reply, err, sizeof err);
	if (rc < 0)
		return supply_fail(s, rc, "%s", err);
	int n = (int)hb_profile_number(s->profile, field_key, 1), nfields;
	if (hb_profile_reply_field(reply, n, field, cap, &nfields) < 0 || !field[0])
		return supply_fail(s, HB_ERR_PROTOCOL, "%s: reply '%.80s' has no field %d", what, reply, n);
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
		return supply_fail(s, HB_ERR_PROTOCOL, "mode: reply field '%s' is not a whole number", field);
	long cc = mask_of(s->profile, HB_PK_SUP_MODE_CC);
	long cv = mask_of(s->profile, HB_PK_SUP_MODE_CV);
	long off = mask_of(s->profile, HB_PK_SUP_MODE_OFF);
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
		const char *tokens = hb_profile_text(s->profile, map[i].key);
		if (tokens && hb_profile_word_in(tokens, field)) {
			*mode = map[i].mode;
			return HB_OK;
		}
	}
	return supply_fail(s, HB_ERR_PROTOCOL, "mode: reply '%s' matches none of mode.cc, mode.cv, mode.off", field);
}

int hb_supply_get_mode(hb_supply *s, hb_supply_mode *mode)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!mode)
		return supply_fail(s, HB_ERR_ARG, "mode: no place for the value");
	*mode = HB_SUPPLY_MODE_UNKNOWN;
	char field[96];
	if (hb_profile_has(s->profile, HB_PK_SUP_OUTPUT_STATE)) {
		rc = ask_field(s, HB_PK_SUP_OUTPUT_STATE, HB_PK_SUP_OUTPUT_STATE_FIELD, "output state", field, sizeof field);
		if (rc < 0)
			return rc;
		bool on;
		if (hb_profile_reply_bool(s->profile, HB_PK_SUP_STATE_ON, HB_PK_SUP_STATE_OFF, field, &on) < 0)
			return supply_fail(s, HB_ERR_PROTOCOL, "output state: reply field '%s' is neither on nor off", field);
		if (!on) {
			*mode = HB_SUPPLY_MODE_OFF;
			return HB_OK;
		}
	}
	if (!hb_profile_has(s->profile, HB_PK_SUP_MODE))
		return HB_OK; /* the instrument does not report it */
	rc = ask_field(s, HB_PK_SUP_MODE, HB_PK_SUP_MODE_FIELD, "mode", field, sizeof field);
	if (rc < 0)
		return rc;
	const char *kind = hb_profile_text(s->profile, HB_PK_SUP_MODE_REPLY);
	if (kind && strcmp(kind, "tokens") == 0)
		return mode_from_token(s, field, mode);
	return mode_from_bits(s, field, mode);
}

int hb_supply_protection(hb_supply *s, bool *tripped)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	if (!tripped)
		return supply_fail(s, HB_ERR_ARG, "protection: no place for the value");
	if (!hb_profile_has(s->profile, HB_PK_SUP_PROTECTION))
		return supply_fail(s, HB_ERR_UNSUPPORTED, "protection: profile '%s' has no 'protection' operation",
				   hb_profile_name(s->profile));
	char field[96];
	rc = ask_field(s, HB_PK_SUP_PROTECTION, HB_PK_SUP_PROTECTION_FIELD, "protection", field, sizeof field);
	if (rc < 0)
		return rc;
	const char *tokens = hb_profile_text(s->profile, HB_PK_SUP_PROTECTION_TRIPPED);
	if (tokens) {
		*tripped = hb_profile_word_in(tokens, field);
		return HB_OK;
	}
	if (hb_profile_reply_bool(s->profile, HB_PK_SUP_STATE_ON, HB_PK_SUP_STATE_OFF, field, tripped) < 0)
		return supply_fail(s, HB_ERR_PROTOCOL, "protection: reply field '%s' is neither 0/1 nor on/off", field);
	return HB_OK;
}

int hb_supply_errors(hb_supply *s, hb_scpi_error *list, size_t cap, size_t *count, bool *lost)
{
	int rc = usable(s);
	if (rc < 0)
		return rc;
	rc = hb_scpi_errors(s->scpi, list, cap, count, lost);
	if (rc < 0)
		return supply_fail(s, rc, "error queue: %s", hb_scpi_errmsg(s->scpi));
	return HB_OK;
}
