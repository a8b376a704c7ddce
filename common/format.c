/* common/format.c - numbers for people: SI prefixes, digits from the uncertainty (GUM 7.2.6), display width of UTF-8 text */
#define _GNU_SOURCE /* newlocale/uselocale come with POSIX 2008; kept explicit for older glibc */
#include <math.h>
#include <pthread.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <wchar.h>

#include "hb_text.h"

/* A prefix and the power of ten it stands for (of the unit as printed). */
typedef struct si_step {
	int exp;
	const char *prefix;
} si_step;

/* SI Brochure (BIPM, 9th ed., 2019) table 7. ASCII 'u' for micro, as every
 * text output and the option parser spell it. */
static const si_step steps_si[] = {
	{ 24, "Y" }, { 21, "Z" }, { 18, "E" }, { 15, "P" }, { 12, "T" }, { 9, "G" }, { 6, "M" }, { 3, "k" },
	{ 0, "" }, { -3, "m" }, { -6, "u" }, { -9, "n" }, { -12, "p" }, { -15, "f" }, { -18, "a" },
	{ -21, "z" }, { -24, "y" },
};
/* A squared unit squares its prefix: 1 mm2 = 1e-6 m2, 1 nH2 = 1e-18 H2. */
static const si_step steps_area[] = { { 6, "k" }, { 0, "" }, { -6, "m" }, { -12, "u" }, { -18, "n" }, { -24, "p" } };
/* Units that take no prefix. */
static const si_step steps_none[] = { { 0, "" } };

static bool no_prefix_unit(const char *unit)
{
	static const char *const plain[] = { "%", "degC", "deg", "dB", "ppm", "x", NULL };
	for (int i = 0; plain[i]; i++)
		if (strcmp(unit, plain[i]) == 0)
			return true;
	return false;
}

/* 10^n for a whole n, exact for |n| <= 22 (powers of ten up to 1e22 are
 * doubles exactly); a negative n divides so that 10^-3 stays exact too. */
static double scale_by_ten(double v, int n)
{
	double p = 1;
	for (int i = 0; i < abs(n); i++)
		p *= 10;
	return n >= 0 ? v * p : v / p;
}

/* v rounded to a multiple of 10^q (half away from zero). */
static double round_at(double v, int q)
{
	return scale_by_ten(round(scale_by_ten(v, -q)), q);
}

static int decade(double v)
{
	return (int)floor(log10(fabs(v)));
}

double hb_round_sig(double v, int digits, int *last)
{
	if (!isfinite(v) || v == 0) {
		if (last)
			*last = 1 - digits;
		return v == 0 ? 0.0 : v;
	}
	int q = decade(v) - digits + 1;
	double r = round_at(v, q);
	/* 9.996 to three digits is 10.0: the carry moves the last digit up. */
	q = decade(r) - digits + 1;
	if (last)
		*last = q;
	return r;
}

int hb_gum_round(double value, double u, double *value_r, double *u_r)
{
	if (!isfinite(value) || !isfinite(u) || u <= 0)
		return HB_ERR_ARG;
	/* GUM (JCGM 100:2008) 7.2.6: the uncertainty to at most two significant
	 * digits, the estimate rounded to the same decimal position. */
	int q;
	double ur = hb_round_sig(u, 2, &q);
	*u_r = ur;
	*value_r = round_at(value, q);
	if (*value_r == 0)
		*value_r = 0.0; /* no "-0" */
	return q;
}

/* Writes r (already rounded at 10^q) in unit with the prefix its size asks
 * for; strip drops trailing zeros (a digit count that is not a precision). */
static char *write_scaled(char *buf, size_t cap, double r, int q, const char *unit, bool strip)
{
	const si_step *steps = steps_si;
	size_t n = sizeof steps_si / sizeof steps_si[0];
	size_t ul = strlen(unit);
	if (ul >= 2 && unit[ul - 1] == '2' && unit[ul - 2] != '^') {
		steps = steps_area;
		n = sizeof steps_area / sizeof steps_area[0];
	} else if (!*unit || no_prefix_unit(unit)) {
		/* a pure number reads better without a prefix (2300, not 2.3 k) */
		steps = steps_none;
		n = 1;
	}
	size_t i = 0;
	if (r != 0) {
		int e = decade(r);
		while (i + 1 < n && e < steps[i].exp)
			i++;
	} else {
		/* zero: the prefix of the last digit's size, so 0.000 A reads 0 mA */
		while (i + 1 < n && q < steps[i].exp)
			i++;
		if (steps == steps_si)
			i = 8; /* zero reads best without a prefix */
	}
	int decimals = steps[i].exp - q;
	if (decimals < 0)
		decimals = 0;
	if (decimals > 20)
		decimals = 20;
	double scaled = scale_by_ten(r, -steps[i].exp);
	char num[64];
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	snprintf(num, sizeof num, "%.*f", decimals, scaled);
	hb_c_numeric_leave(&cn);
	if (strip && strchr(num, '.')) {
		size_t len = strlen(num);
		while (len > 0 && num[len - 1] == '0')
			num[--len] = '\0';
		if (len > 0 && num[len - 1] == '.')
			num[--len] = '\0';
	}
	if (strcmp(num, "-0") == 0)
		strcpy(num, "0");
	if (*steps[i].prefix || *unit)
		snprintf(buf, cap, "%s %s%s", num, steps[i].prefix, unit);
	else
		snprintf(buf, cap, "%s", num);
	return buf;
}

char *hb_format_si(char *buf, size_t cap, double value, const char *unit, int digits)
{
	if (!unit)
		unit = "";
	if (digits < 1)
		digits = 3;
	if (digits > 15)
		digits = 15;
	if (!isfinite(value)) {
		snprintf(buf, cap, "%s", HB_TEXT_ABSENT);
		return buf;
	}
	int q;
	double r = hb_round_sig(value, digits, &q);
	return write_scaled(buf, cap, r, value == 0 ? 0 : q, unit, true);
}

char *hb_format_unc(char *buf, size_t cap, double value, double u, const char *unit, int digits)
{
	if (!unit)
		unit = "";
	if (!isfinite(value)) {
		snprintf(buf, cap, "%s", HB_TEXT_ABSENT);
		return buf;
	}
	double vr, ur;
	int q = hb_gum_round(value, u, &vr, &ur);
	if (q == HB_ERR_ARG)
		return hb_format_si(buf, cap, value, unit, digits);
	/* More digits than a double holds say nothing: the value then keeps 15. */
	if (vr != 0 && decade(vr) - q + 1 > 15)
		return hb_format_si(buf, cap, value, unit, 15);
	char v[64], un[64];
	write_scaled(v, sizeof v, vr, q, unit, false);
	int qu;
	hb_round_sig(ur, 2, &qu);
	write_scaled(un, sizeof un, ur, qu, unit, false);
	snprintf(buf, cap, "%s +- %s", v, un);
	return buf;
}

char *hb_format_limits(char *buf, size_t cap, double low, double high, const char *unit, int digits)
{
	char lo[64], hi[64];
	hb_format_si(lo, sizeof lo, low, unit, digits);
	hb_format_si(hi, sizeof hi, high, unit, digits);
	if (isfinite(low) && isfinite(high))
		snprintf(buf, cap, "%s to %s", lo, hi);
	else if (isfinite(low))
		snprintf(buf, cap, ">= %s", lo);
	else if (isfinite(high))
		snprintf(buf, cap, "<= %s", hi);
	else
		snprintf(buf, cap, "none");
	return buf;
}

/* ---------------- display width ---------------- */

static pthread_once_t utf8_once = PTHREAD_ONCE_INIT;
static locale_t utf8_locale = (locale_t)0;

static void utf8_make(void)
{
	utf8_locale = newlocale(LC_CTYPE_MASK, "C.UTF-8", (locale_t)0);
}

size_t hb_text_width(const char *s)
{
	if (!s)
		return 0;
	pthread_once(&utf8_once, utf8_make);
	locale_t old = utf8_locale ? uselocale(utf8_locale) : (locale_t)0;
	size_t width = 0, len = strlen(s);
	mbstate_t st;
	memset(&st, 0, sizeof st);
	while (len > 0) {
		wchar_t wc = 0;
		size_t k = utf8_locale ? mbrtowc(&wc, s, len, &st) : 1;
		if (k == (size_t)-1 || k == (size_t)-2 || k == 0) {
			/* an invalid byte shows as one cell (a replacement mark) */
			memset(&st, 0, sizeof st);
			k = 1;
			width++;
		} else if (!utf8_locale) {
			width++;
		} else {
			int w = wcwidth(wc);
			width += w > 0 ? (size_t)w : 0;
		}
		s += k;
		len -= k;
	}
	if (utf8_locale)
		uselocale(old);
	return width;
}

char *hb_text_pad(char *buf, size_t cap, const char *s, size_t width, bool left)
{
	if (!s)
		s = "";
	size_t w = hb_text_width(s), len = strlen(s);
	size_t pad = w < width ? width - w : 0;
	if (cap == 0)
		return buf;
	if (len + pad + 1 > cap) {
		snprintf(buf, cap, "%s", s);
		return buf;
	}
	if (left) {
		memcpy(buf, s, len);
		memset(buf + len, ' ', pad);
	} else {
		memset(buf, ' ', pad);
		memcpy(buf + pad, s, len);
	}
	buf[len + pad] = '\0';
	return buf;
}

int hb_fput_cell(FILE *out, const char *s, size_t width, bool left)
{
	if (!s || !*s)
		s = HB_TEXT_ABSENT;
	size_t w = hb_text_width(s);
	size_t pad = w < width ? width - w : 0;
	if (!left)
		for (size_t i = 0; i < pad; i++)
			if (fputc(' ', out) == EOF)
				return EOF;
	if (fputs(s, out) == EOF)
		return EOF;
	if (left)
		for (size_t i = 0; i < pad; i++)
			if (fputc(' ', out) == EOF)
				return EOF;
	return 0;
}

char *hb_format_u(char *buf, size_t cap, double u, const char *unit)
{
	if (!unit)
		unit = "";
	if (!isfinite(u)) {
		snprintf(buf, cap, "%s", HB_TEXT_ABSENT);
		return buf;
	}
	/* GUM 7.2.6: two significant digits, a trailing zero kept ("3.0 mA") */
	int q;
	double r = hb_round_sig(u, 2, &q);
	return write_scaled(buf, cap, r, u == 0 ? 0 : q, unit, u == 0);
}
