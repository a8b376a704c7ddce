/* drivers/instrument.c - open, error reporting and plain profile operations shared by the meter and supply drivers */
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

#include "hb_drivers.h"
#include "profile_internal.h"

int hb_instrument_fail(hb_instrument *in, int status, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(in->errmsg, sizeof in->errmsg, fmt, ap);
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

/* A lost reply (time-out) or a garbled one (protocol error) is worth one
 * more try after a drain; anything else (a closed link, an instrument
 * error) is not. */
static bool retry_worth(int rc)
{
	return rc == HB_ERR_TIMEOUT || rc == HB_ERR_PROTOCOL;
}

int hb_instrument_open(hb_instrument *in, const char *label, const char *tag, hb_instrument_kind kind,
		       const char *resource, FILE *trace)
{
	in->label = label;
	int rc = hb_scpi_open(resource, &in->scpi);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s %s: %s", label, resource ? resource : "(none)",
					  hb_scpi_errmsg(in->scpi));
	if (trace)
		hb_scpi_set_trace(in->scpi, trace, tag);
	rc = hb_scpi_idn(in->scpi, &in->idn);
	if (retry_worth(rc) && hb_scpi_drain(in->scpi) == HB_OK)
		rc = hb_scpi_idn(in->scpi, &in->idn); /* a read-only question: asking twice is harmless */
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s %s: *IDN?: %s", label, resource, hb_scpi_errmsg(in->scpi));
	char err[HB_INSTRUMENT_ERRMSG_MAX - 64];
	const hb_resource *res = hb_scpi_resource(in->scpi);
	rc = hb_profile_choose(res, kind, &in->idn, &in->profile, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s %s: %s", label, resource, err);
	/* An echoing instrument: handled when the profile says so, otherwise
	 * named with the two ways to say so (the *IDN? itself was read past
	 * its echo by hb_scpi_idn). */
	if (hb_profile_number(in->profile, HB_PK_LINK_ECHO, 0) != 0)
		hb_scpi_set_echo(in->scpi, true);
	else if (hb_scpi_echo_seen(in->scpi))
		return hb_instrument_fail(in, HB_ERR_PROTOCOL,
					  "%s %s: the instrument echoes each command ('*IDN?' came back before its "
					  "reply): set link.echo = yes in [profile] of %s, or add ?echo=yes to the resource",
					  label, resource, hb_profile_path(in->profile));
	in->kind_confirmed = true;
	if (!res->profile[0] && !hb_profile_matches(in->profile, &in->idn)) {
		/* Fallen back to the generic profile: the kind is in doubt only
		 * when a profile of the other kind claims the instrument, as
		 * 'identify' decides it. */
		hb_profile *other = NULL;
		hb_instrument_kind other_kind = kind == HB_KIND_LCR ? HB_KIND_SUPPLY : HB_KIND_LCR;
		rc = hb_profile_match(other_kind, &in->idn, &other, err, sizeof err);
		if (rc < 0)
			return hb_instrument_fail(in, rc, "%s %s: %s", label, resource, err);
		in->kind_confirmed = !hb_profile_matches(other, &in->idn);
		hb_profile_free(other);
	}
	/* Start from an empty error queue so a later entry belongs to us. */
	rc = hb_scpi_clear(in->scpi);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s %s: *CLS: %s", label, resource, hb_scpi_errmsg(in->scpi));
	return HB_OK;
}

void hb_instrument_release(hb_instrument *in)
{
	hb_profile_free(in->profile);
	hb_scpi_close(in->scpi);
}

const char *hb_instrument_errmsg(const hb_instrument *in)
{
	if (!in)
		return "out of memory";
	return in->errmsg[0] ? in->errmsg : "no error";
}

int hb_instrument_usable(hb_instrument *in)
{
	if (!in->scpi || !in->profile)
		return hb_instrument_fail(in, HB_ERR_ARG, "%s not open", in->label);
	return HB_OK;
}

int hb_instrument_send(hb_instrument *in, hb_pkey op, const hb_parg *args, size_t nargs, const char *what)
{
	char err[HB_INSTRUMENT_ERRMSG_MAX];
	int rc = hb_profile_send(in->scpi, in->profile, op, args, nargs, what, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s", err);
	return HB_OK;
}

int hb_instrument_ask_number(hb_instrument *in, hb_pkey op, hb_pkey field_key, hb_pkey scale_key, const char *what,
			     double *value)
{
	char err[HB_INSTRUMENT_ERRMSG_MAX];
	int rc = hb_profile_ask_number(in->scpi, in->profile, op, field_key, scale_key, what, value, err, sizeof err);
	if (retry_worth(rc) && hb_scpi_drain(in->scpi) == HB_OK)
		rc = hb_profile_ask_number(in->scpi, in->profile, op, field_key, scale_key, what, value, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s", err);
	return HB_OK;
}

int hb_instrument_ask(hb_instrument *in, hb_pkey op, const char *what, char *reply, size_t cap)
{
	char err[HB_INSTRUMENT_ERRMSG_MAX];
	int rc = hb_profile_ask(in->scpi, in->profile, op, what, reply, cap, err, sizeof err);
	if (retry_worth(rc) && hb_scpi_drain(in->scpi) == HB_OK)
		rc = hb_profile_ask(in->scpi, in->profile, op, what, reply, cap, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s", err);
	return HB_OK;
}

bool hb_instrument_has(const hb_instrument *in, hb_pkey key)
{
	return hb_profile_has(in->profile, key) && !in->absent[key];
}

bool hb_instrument_supports(const hb_instrument *in, hb_instrument_kind kind, const char *operation)
{
	if (!hb_profile_supports(in->profile, kind, operation))
		return false;
	int key = operation ? hb_profile_key_of(kind, operation) : -1;
	return key < 0 || !in->absent[key];
}

int hb_instrument_probe(hb_instrument *in, hb_pkey op, const hb_parg *args, size_t nargs)
{
	const hb_profile *p = in->profile;
	if (!hb_profile_has(p, op))
		return HB_OK;
	char command[512], why[256], line[256];
	int rc = hb_profile_expand(p, op, args, nargs, command, sizeof command, why, sizeof why);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "probe '%s': %s", hb_profile_key_name(op), why);
	bool query = strchr(command, '?') != NULL;
	bool rejected = false;
	if (!p->check_errors) {
		/* No error queue to ask: only a query can show it is missing, by
		 * not answering. */
		if (!query)
			return HB_OK;
		rc = hb_scpi_query(in->scpi, command, line, sizeof line);
		rejected = rc < 0;
		goto done;
	}
	/* The query and SYST:ERR? go out together, so a rejected query costs
	 * one round trip instead of a time-out: the first line back is either
	 * the query's reply or the error entry (SCPI-99 21.8.8 form). */
	rc = hb_scpi_write(in->scpi, command);
	if (rc == HB_OK)
		rc = hb_scpi_write(in->scpi, "SYST:ERR?");
	if (rc < 0)
		return hb_instrument_fail(in, rc, "probe '%s': %s", command, hb_scpi_errmsg(in->scpi));
	rc = hb_scpi_read_line(in->scpi, line, sizeof line);
	hb_scpi_error e;
	if (rc < 0) {
		rejected = true;
	} else if (!query) {
		/* A setting has no reply: the line is the error queue's answer. */
		rejected = !hb_scpi_parse_error(line, &e) || e.code != 0;
	} else if (hb_scpi_parse_error(line, &e)) {
		rejected = true;
	} else {
		rc = hb_scpi_read_line(in->scpi, line, sizeof line); /* the SYST:ERR? answer */
		rejected = rc < 0 || !hb_scpi_parse_error(line, &e) || e.code != 0;
	}
done:
	if (rc == HB_ERR_CLOSED || rc == HB_ERR_IO)
		return hb_instrument_fail(in, rc, "probe '%s': %s", command, hb_scpi_errmsg(in->scpi));
	if (rejected) {
		in->absent[op] = true;
		/* Whatever the rejection left (a late reply, queued errors) must
		 * not be taken for the answer to a later question. */
		if (hb_scpi_drain(in->scpi) < 0 || hb_scpi_clear(in->scpi) < 0)
			return hb_instrument_fail(in, HB_ERR_IO, "probe '%s': %s", command, hb_scpi_errmsg(in->scpi));
	}
	return HB_OK;
}

int hb_instrument_command_opc(hb_instrument *in, const char *command, const char *what)
{
	int rc = hb_scpi_write(in->scpi, command);
	if (rc == HB_OK)
		rc = hb_scpi_opc(in->scpi);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s: %s", what, hb_scpi_errmsg(in->scpi));
	return HB_OK;
}

int hb_instrument_settle_check(hb_instrument *in, int settle_ms, const char *what, const char *command)
{
	sleep_ms(settle_ms);
	if (!in->profile->check_errors)
		return HB_OK;
	char err[HB_INSTRUMENT_ERRMSG_MAX];
	int rc = hb_profile_check_errors(in->scpi, what, command, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "%s", err);
	return HB_OK;
}

int hb_instrument_errors(hb_instrument *in, hb_scpi_error *list, size_t cap, size_t *count, bool *lost)
{
	int rc = hb_scpi_errors(in->scpi, list, cap, count, lost);
	if (rc < 0)
		return hb_instrument_fail(in, rc, "error queue: %s", hb_scpi_errmsg(in->scpi));
	return HB_OK;
}
