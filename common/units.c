/* common/units.c - engineering-notation values: SI prefixes, units, SCPI suffix rule, parsed and formatted */
#include <ctype.h>
#include <errno.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "hb_text.h"


typedef struct prefix {
	const char *text;
	double factor;
} prefix;

/* SI prefixes, case-sensitive (m milli, M mega); the micro sign arrives as
 * UTF-8, either U+00B5 or the Greek letter U+03BC. */
static const prefix si_prefixes[] = {
	{ "y", 1e-24 }, { "z", 1e-21 }, { "a", 1e-18 }, { "f", 1e-15 }, { "p", 1e-12 },
	{ "n", 1e-9 }, { "u", 1e-6 }, { "\xc2\xb5", 1e-6 }, { "\xce\xbc", 1e-6 },
	{ "m", 1e-3 }, { "k", 1e3 }, { "K", 1e3 }, { "M", 1e6 }, { "G", 1e9 }, { "T", 1e12 },
};

/* SCPI-1999 Vol 1, 7.7.3 suffix multipliers (upper case, as an instrument
 * reads them): M is milli and MA is mega. */
static const prefix scpi_prefixes[] = {
	{ "EX", 1e18 }, { "PE", 1e15 }, { "T", 1e12 }, { "G", 1e9 }, { "MA", 1e6 },
	{ "K", 1e3 }, { "M", 1e-3 }, { "U", 1e-6 }, { "N", 1e-9 }, { "P", 1e-12 },
	{ "F", 1e-15 }, { "A", 1e-18 },
};

/* Spellings accepted for each unit the options ask for. */
typedef struct unit_spelling {
	const char *unit;
	const char *spellings[6];
} unit_spelling;

static const unit_spelling unit_table[] = {
	{ "H", { "H", NULL } },
	{ "A", { "A", NULL } },
	{ "V", { "V", NULL } },
	{ "Hz", { "Hz", "hz", "HZ", NULL } },
	{ "ohm", { "ohm", "Ohm", "OHM", "\xce\xa9", "\xe2\x84\xa6", NULL } },
	{ "s", { "s", NULL } },
	{ "m", { "m", NULL } },
	{ "m2", { "m2", "m^2", "m\xc2\xb2", NULL } },
	{ "T", { "T", NULL } },
	{ "W", { "W", NULL } },
	{ "F", { "F", NULL } },
	{ "K", { "K", NULL } },
	{ "A/s", { "A/s", NULL } },
	{ "H/turn2", { "H", NULL } },
};

static const unit_spelling *find_unit(const char *unit)
{
	for (size_t i = 0; i < sizeof unit_table / sizeof unit_table[0]; i++)
		if (strcmp(unit_table[i].unit, unit) == 0)
			return &unit_table[i];
	return NULL;
}

/* Returns the length of the spelling of unit that text ends with exactly
 * (text == spelling), or 0. */
static int is_unit(const unit_spelling *u, const char *text)
{
	if (!u)
		return 0;
	for (int i = 0; u->spellings[i]; i++)
		if (strcmp(text, u->spellings[i]) == 0)
			return 1;
	return 0;
}

static int parse_number_c(const char *text, double *value, const char **end)
{
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	if (cn.c == (locale_t)0)
		return HB_ERR_NOMEM;
	char *stop = NULL;
	errno = 0;
	double v = strtod(text, &stop);
	int saved = errno;
	hb_c_numeric_leave(&cn);
	if (stop == text || saved == ERANGE)
		return HB_ERR_ARG;
	*value = v;
	*end = stop;
	return HB_OK;
}

static int is_upper_scpi(const char *s)
{
	int letters = 0;
	for (; *s; s++) {
		if ((unsigned char)*s >= 0x80)
			return 0;
		if (islower((unsigned char)*s))
			return 0;
		if (isupper((unsigned char)*s))
			letters++;
	}
	return letters > 0;
}

static int scpi_multiplier(const char *text, double *factor)
{
	if (*text == '\0') {
		*factor = 1;
		return 1;
	}
	for (size_t i = 0; i < sizeof scpi_prefixes / sizeof scpi_prefixes[0]; i++) {
		if (strcmp(text, scpi_prefixes[i].text) == 0) {
			*factor = scpi_prefixes[i].factor;
			return 1;
		}
	}
	return 0;
}

/* Factor for an upper-case suffix read the way an SCPI instrument reads it:
 * the unit is taken off the end first, what remains must be a multiplier. */
static int scpi_suffix(const char *suffix, const unit_spelling *u, const char *unit, double *factor)
{
	/* SCPI-1999 Vol 1 7.7.3: MHZ and MOHM are the exceptions that mean mega. */
	if (strcmp(unit, "Hz") == 0 && strcmp(suffix, "MHZ") == 0) {
		*factor = 1e6;
		return 1;
	}
	if (strcmp(unit, "ohm") == 0 && strcmp(suffix, "MOHM") == 0) {
		*factor = 1e6;
		return 1;
	}
	if (u) {
		size_t sl = strlen(suffix);
		for (int i = 0; u->spellings[i]; i++) {
			size_t ul = strlen(u->spellings[i]);
			if (ul <= sl && strcasecmp(suffix + sl - ul, u->spellings[i]) == 0) {
				char head[64];
				memcpy(head, suffix, sl - ul);
				head[sl - ul] = '\0';
				if (scpi_multiplier(head, factor))
					return 1;
			}
		}
	}
	return scpi_multiplier(suffix, factor);
}

/* 10 * 1e-6 is 9.999999999999999e-06 (1e-6 is inexact) while 10 / 1e6 is
 * 1e-05: dividing by the exact power of ten keeps "10um" equal to a limit
 * written as 1e-5 in the source. */
static double apply_prefix(double number, double factor)
{
	return factor < 1 ? number / (1 / factor) : number * factor;
}

int hb_parse_value(const char *text, const char *unit, double *value, char *err, size_t errlen)
{
	if (!text || !value)
		return hb_set_err(err, errlen, "missing value");
	if (!unit)
		unit = "";
	const char *p = text;
	while (isspace((unsigned char)*p))
		p++;
	/* strtod would also take "inf", "nan" and hex; an operator never means those. */
	if (!(isdigit((unsigned char)*p) || *p == '.' || *p == '-' || *p == '+'))
		return hb_set_err(err, errlen, "'%s' is not a number", text);
	if ((p[0] == '0' && (p[1] == 'x' || p[1] == 'X')) || strpbrk(p, "xX") == p + 1)
		return hb_set_err(err, errlen, "'%s' is not a number", text);
	double number;
	const char *end;
	int rc = parse_number_c(p, &number, &end);
	if (rc == HB_ERR_NOMEM)
		return hb_set_err(err, errlen, "out of memory");
	if (rc != HB_OK || !isfinite(number))
		return hb_set_err(err, errlen, "'%s' is not a number", text);

	char suffix[64];
	while (isspace((unsigned char)*end))
		end++;
	size_t sl = strlen(end);
	while (sl > 0 && isspace((unsigned char)end[sl - 1]))
		sl--;
	if (sl >= sizeof suffix)
		return hb_set_err(err, errlen, "'%s': unit '%s' is too long", text, end);
	memcpy(suffix, end, sl);
	suffix[sl] = '\0';

	if (strcmp(unit, "%") == 0) {
		/* A percentage option takes "20%" or a bare "20" (also percent). */
		if (suffix[0] == '\0' || strcmp(suffix, "%") == 0) {
			*value = number / 100.0;
			return HB_OK;
		}
		return hb_set_err(err, errlen, "'%s': expected a percentage such as 20%%", text);
	}
	if (suffix[0] == '\0') {
		*value = number;
		return HB_OK;
	}

	const unit_spelling *u = find_unit(unit);
	int squared = strcmp(unit, "m2") == 0;
	if (is_unit(u, suffix)) {
		*value = number;
		return HB_OK;
	}
	double factor;
	/* Two or more upper-case letters ("MA", "KHZ", "MV") are read by the
	 * SCPI rule, as an instrument would; a lone "M" stays SI mega. */
	if (strlen(suffix) >= 2 && is_upper_scpi(suffix) && scpi_suffix(suffix, u, unit, &factor)) {
		*value = apply_prefix(number, squared ? factor * factor : factor);
		return HB_OK;
	}
	/* Prefix followed by the unit or by nothing. Longest prefix first is
	 * not needed: SI prefixes are one character (two bytes for micro). */
	for (size_t i = 0; i < sizeof si_prefixes / sizeof si_prefixes[0]; i++) {
		const prefix *pr = &si_prefixes[i];
		size_t pl = strlen(pr->text);
		if (strncmp(suffix, pr->text, pl) != 0)
			continue;
		const char *rest = suffix + pl;
		if (*rest == '\0' || is_unit(u, rest)) {
			double f = squared && *rest ? pr->factor * pr->factor : pr->factor;
			*value = apply_prefix(number, f);
			return HB_OK;
		}
	}
	if (*unit)
		return hb_set_err(err, errlen, "'%s': unknown unit or prefix '%s' (expected %s, optionally with an SI prefix such as m, u, k, M)",
			       text, suffix, unit);
	return hb_set_err(err, errlen, "'%s': unknown suffix '%s' (a plain number or an SI prefix such as m, u, k, M)", text, suffix);
}
