/* drivers/accuracy.c - an instrument's accuracy specification as data: parsed from a profile or station file, evaluated at a reading */
#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "../common/hb_text.h"
#include "hb_drivers.h"
#include "profile_internal.h"

void hb_accuracy_init(hb_accuracy *a)
{
	memset(a, 0, sizeof *a);
	a->rel = NAN;
	a->offset = 0;
	a->freq_above_hz = NAN;
	a->freq_above_rel = NAN;
}

static const char *skip_blank(const char *p)
{
	while (*p && isspace((unsigned char)*p))
		p++;
	return p;
}

/* One whitespace-trimmed token [p, end) through hb_parse_value. */
static int parse_token(const char *p, const char *end, const char *unit, double *v, char *err, size_t errlen)
{
	char tok[64];
	while (p < end && isspace((unsigned char)*p))
		p++;
	while (end > p && isspace((unsigned char)end[-1]))
		end--;
	size_t len = (size_t)(end - p);
	if (len == 0 || len >= sizeof tok)
		return hb_set_err(err, errlen, "empty or overlong term in an accuracy specification");
	memcpy(tok, p, len);
	tok[len] = 0;
	return hb_parse_value(tok, unit, v, err, errlen);
}

int hb_accuracy_parse_rel(const char *text, const char *offset_unit, double *rel, double *offset, char *err,
			  size_t errlen)
{
	if (!text || !rel || !offset)
		return hb_set_err(err, errlen, "no accuracy specification");
	const char *p = skip_blank(text);
	const char *plus = strchr(p, '+');
	const char *end = plus ? plus : p + strlen(p);
	double r;
	if (parse_token(p, end, "%", &r, err, errlen) != HB_OK)
		return HB_ERR_ARG;
	if (!(r >= 0 && r < 1))
		return hb_set_err(err, errlen, "accuracy '%s': the %% of reading must lie in [0, 100)", text);
	double off = 0;
	if (plus) {
		if (!offset_unit)
			return hb_set_err(err, errlen, "accuracy '%s': no offset term here (%% of reading only)", text);
		if (parse_token(plus + 1, plus + 1 + strlen(plus + 1), offset_unit, &off, err, errlen) != HB_OK)
			return HB_ERR_ARG;
		if (!(off >= 0))
			return hb_set_err(err, errlen, "accuracy '%s': the offset must be >= 0", text);
	}
	*rel = r;
	*offset = off;
	return HB_OK;
}

int hb_accuracy_parse_freq_above(const char *text, double *hz, double *rel, char *err, size_t errlen)
{
	const char *colon = text ? strchr(text, ':') : NULL;
	if (!colon)
		return hb_set_err(err, errlen, "accuracy.freq_above '%s': expected FREQUENCY:PERCENT, e.g. 100kHz:0.05%%",
				  text ? text : "");
	double f, off;
	if (parse_token(text, colon, "Hz", &f, err, errlen) != HB_OK)
		return HB_ERR_ARG;
	if (!(f > 0))
		return hb_set_err(err, errlen, "accuracy.freq_above '%s': the frequency must be > 0", text);
	if (hb_accuracy_parse_rel(colon + 1, NULL, rel, &off, err, errlen) != HB_OK)
		return HB_ERR_ARG;
	*hz = f;
	return HB_OK;
}

double hb_accuracy_rel_at(const hb_accuracy *a, double freq_hz)
{
	if (!a || !isfinite(a->rel))
		return NAN;
	double r = a->rel;
	/* a data sheet adds its high-frequency term to the basic one */
	if (isfinite(a->freq_above_hz) && isfinite(a->freq_above_rel) && isfinite(freq_hz) && freq_hz > a->freq_above_hz)
		r += a->freq_above_rel;
	return r;
}

char *hb_accuracy_format(const hb_accuracy *a, const char *offset_unit, char *buf, size_t cap)
{
	if (!buf || !cap)
		return buf;
	buf[0] = 0;
	if (!a || !isfinite(a->rel))
		return buf;
	size_t len = (size_t)snprintf(buf, cap, "%.6g%%", a->rel * 100);
	if (len < cap && a->offset > 0 && offset_unit) {
		char off[32];
		len += (size_t)snprintf(buf + len, cap - len, " + %s", hb_format_si(off, sizeof off, a->offset, offset_unit, 4));
	}
	if (len < cap && isfinite(a->freq_above_hz) && isfinite(a->freq_above_rel)) {
		char f[32];
		len += (size_t)snprintf(buf + len, cap - len, "; above %s +%.6g%%", hb_format_si(f, sizeof f, a->freq_above_hz, "Hz", 4),
					a->freq_above_rel * 100);
	}
	if (len < cap && a->placeholder)
		snprintf(buf + len, cap - len, " (placeholder)");
	return buf;
}

/* The profile's keys were checked at load, so a parse here cannot fail. */
static void from_profile(const hb_profile *p, hb_pkey main_key, hb_pkey freq_key, hb_pkey source_key,
			 const char *offset_unit, hb_accuracy *out)
{
	hb_accuracy_init(out);
	if (!p || !hb_profile_has(p, main_key))
		return;
	double rel, off;
	if (hb_accuracy_parse_rel(hb_profile_text(p, main_key), offset_unit, &rel, &off, NULL, 0) != HB_OK)
		return;
	out->rel = rel;
	out->offset = off;
	if ((int)freq_key >= 0 && hb_profile_has(p, freq_key))
		hb_accuracy_parse_freq_above(hb_profile_text(p, freq_key), &out->freq_above_hz, &out->freq_above_rel, NULL, 0);
	const char *src = hb_profile_has(p, source_key) ? hb_profile_text(p, source_key) : "";
	out->placeholder = strncmp(src, "placeholder", 11) == 0;
	snprintf(out->source, sizeof out->source, "profile %s%s%s", hb_profile_name(p), *src ? ": " : "", src);
}

void hb_profile_lcr_accuracy(const hb_profile *p, hb_accuracy *out)
{
	from_profile(p, HB_PK_LCR_ACCURACY_BASIC, HB_PK_LCR_ACCURACY_FREQ_ABOVE, HB_PK_LCR_ACCURACY_SOURCE, NULL, out);
}

void hb_profile_supply_accuracy(const hb_profile *p, hb_accuracy *out)
{
	from_profile(p, HB_PK_SUP_ACCURACY_CURRENT, (hb_pkey)-1, HB_PK_SUP_ACCURACY_SOURCE, "A", out);
}
