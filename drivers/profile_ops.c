/* drivers/profile_ops.c - operations through a loaded profile, shared by the meter and supply drivers: send, ask, read replies */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../common/hb_text.h"
#include "profile_internal.h"

/* ------------------------------------------------------------------ */
/* operations through a profile, shared by the meter and supply drivers */
/* ------------------------------------------------------------------ */

int hb_profile_choose(const hb_resource *res, hb_instrument_kind kind, const hb_idn *idn, hb_profile **out,
		      char *err, size_t errlen)
{
	*out = NULL;
	int rc;
	if (res && res->profile[0]) {
		rc = hb_profile_find(res->profile, out, err, errlen);
		if (rc < 0)
			return rc;
		if (hb_profile_kind(*out) != kind) {
			hb_set_err(err, errlen, "profile '%s' (%s) is for %s, not for %s", hb_profile_name(*out),
				hb_profile_path(*out), hb_profile_kind(*out) == HB_KIND_LCR ? "an lcr meter" : "a supply",
				kind == HB_KIND_LCR ? "an lcr meter" : "a supply");
			hb_profile_free(*out);
			*out = NULL;
			return HB_ERR_PROFILE;
		}
		return HB_OK;
	}
	return hb_profile_match(kind, idn, out, err, errlen);
}

int hb_profile_reply_field(const char *reply, int field, char *out, size_t cap, int *nfields)
{
	int n = 1;
	const char *start = reply, *found = NULL;
	size_t found_len = 0;
	for (const char *s = reply;; s++) {
		if (*s == ',' || *s == '\0') {
			if (n == field) {
				found = start;
				found_len = (size_t)(s - start);
			}
			if (!*s)
				break;
			n++;
			start = s + 1;
		}
	}
	if (nfields)
		*nfields = n;
	if (!found || cap == 0)
		return HB_ERR_PROTOCOL;
	while (found_len && isspace((unsigned char)*found))
		found++, found_len--;
	while (found_len && isspace((unsigned char)found[found_len - 1]))
		found_len--;
	if (found_len >= cap)
		return HB_ERR_PROTOCOL;
	memcpy(out, found, found_len);
	out[found_len] = '\0';
	return HB_OK;
}

int hb_profile_check_errors(hb_scpi *scpi, const char *what, const char *command, char *err, size_t errlen)
{
	hb_scpi_error list[4];
	size_t count = 0;
	bool lost = false;
	int rc = hb_scpi_errors(scpi, list, 4, &count, &lost);
	if (rc < 0) {
		hb_set_err(err, errlen, "%s: reading the error queue: %s", what, hb_scpi_errmsg(scpi));
		return rc;
	}
	if (count == 0 && !lost)
		return HB_OK;
	if (count == 0) {
		hb_set_err(err, errlen, "%s: instrument error queue overflowed (after '%s')", what, command);
		return HB_ERR_INSTRUMENT;
	}
	hb_set_err(err, errlen, "%s: instrument error %d \"%s\"%s (after '%s')", what, list[0].code, list[0].message,
		count > 1 ? " and more" : "", command);
	return HB_ERR_INSTRUMENT;
}

int hb_profile_send(hb_scpi *scpi, const hb_profile *p, hb_pkey op, const hb_parg *args, size_t nargs,
		    const char *what, char *err, size_t errlen)
{
	char command[512], why[256];
	int rc = hb_profile_expand(p, op, args, nargs, command, sizeof command, why, sizeof why);
	if (rc < 0) {
		hb_set_err(err, errlen, "%s: %s", what, why);
		return rc;
	}
	return hb_profile_send_text(scpi, p, command, what, err, errlen);
}

int hb_profile_send_text(hb_scpi *scpi, const hb_profile *p, const char *command, const char *what, char *err,
			 size_t errlen)
{
	int rc = hb_scpi_write(scpi, command);
	if (rc < 0) {
		hb_set_err(err, errlen, "%s: %s", what, hb_scpi_errmsg(scpi));
		return rc;
	}
	if (!p->check_errors)
		return HB_OK;
	return hb_profile_check_errors(scpi, what, command, err, errlen);
}

int hb_profile_ask(hb_scpi *scpi, const hb_profile *p, hb_pkey op, const char *what, char *reply, size_t cap,
		   char *err, size_t errlen)
{
	char command[512], why[256];
	int rc = hb_profile_expand(p, op, NULL, 0, command, sizeof command, why, sizeof why);
	if (rc < 0) {
		hb_set_err(err, errlen, "%s: %s", what, why);
		return rc;
	}
	rc = hb_scpi_query(scpi, command, reply, cap);
	if (rc < 0) {
		hb_set_err(err, errlen, "%s: %s", what, hb_scpi_errmsg(scpi));
		return rc;
	}
	return HB_OK;
}

int hb_profile_ask_number(hb_scpi *scpi, const hb_profile *p, hb_pkey op, hb_pkey field_key, hb_pkey scale_key,
			  const char *what, double *value, char *err, size_t errlen)
{
	char reply[256], text[128];
	int rc = hb_profile_ask(scpi, p, op, what, reply, sizeof reply, err, errlen);
	if (rc < 0)
		return rc;
	int field = (int)hb_profile_number(p, field_key, 1);
	int nfields;
	if (hb_profile_reply_field(reply, field, text, sizeof text, &nfields) < 0) {
		hb_set_err(err, errlen, "%s: reply '%.80s' has %d field(s), the profile reads field %d", what, reply,
			nfields, field);
		return HB_ERR_PROTOCOL;
	}
	double v;
	rc = hb_scpi_parse_double(text, &v);
	if (rc == HB_ERR_OVERLOAD) {
		*value = v;
		hb_set_err(err, errlen, "%s: instrument answered its overload value '%s'", what, text);
		return rc;
	}
	if (rc < 0) {
		hb_set_err(err, errlen, "%s: field %d of reply '%.80s' is not a number", what, field, reply);
		return HB_ERR_PROTOCOL;
	}
	*value = v * hb_profile_number(p, scale_key, 1.0);
	return HB_OK;
}

bool hb_profile_word_in(const char *list, const char *token)
{
	size_t tlen = strlen(token);
	for (const char *s = list; *s;) {
		while (*s == ' ' || *s == ',' || *s == '\t')
			s++;
		const char *start = s;
		while (*s && *s != ' ' && *s != ',' && *s != '\t')
			s++;
		if ((size_t)(s - start) == tlen && tlen && strncasecmp(start, token, tlen) == 0)
			return true;
	}
	return false;
}

int hb_profile_reply_bool(const hb_profile *p, hb_pkey on_key, hb_pkey off_key, const char *field, bool *value)
{
	long n;
	if (hb_profile_parse_long(field, &n) == HB_OK) {
		*value = n != 0;
		return HB_OK;
	}
	const char *on = hb_profile_text(p, on_key);
	const char *off = hb_profile_text(p, off_key);
	if (strcasecmp(field, on ? on : "ON") == 0) {
		*value = true;
		return HB_OK;
	}
	if (strcasecmp(field, off ? off : "OFF") == 0) {
		*value = false;
		return HB_OK;
	}
	return HB_ERR_PROTOCOL;
}
