/* common/text.c - one-line error messages into a caller's buffer, and the C-locale scope for numbers */
#define _GNU_SOURCE /* newlocale/uselocale come with POSIX 2008; kept explicit for older glibc */
#include <pthread.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "hb_text.h"

int hb_set_err(char *err, size_t cap, const char *fmt, ...)
{
	if (err && cap) {
		va_list ap;
		va_start(ap, fmt);
		vsnprintf(err, cap, fmt, ap);
		va_end(ap);
	}
	return HB_ERR_ARG;
}

/* One C locale for the whole process, made on first use and kept: the
 * instrument exchanges format and parse numbers many times a second. */
static pthread_once_t c_locale_once = PTHREAD_ONCE_INIT;
static locale_t c_locale = (locale_t)0;

static void c_locale_make(void)
{
	c_locale = newlocale(LC_NUMERIC_MASK, "C", (locale_t)0);
}

void hb_c_numeric_enter(hb_c_numeric *s)
{
	pthread_once(&c_locale_once, c_locale_make);
	s->c = c_locale;
	s->old = s->c ? uselocale(s->c) : (locale_t)0;
}

void hb_c_numeric_leave(hb_c_numeric *s)
{
	if (s->c) {
		uselocale(s->old);
		s->c = (locale_t)0;
	}
}

/* Length of the UTF-8 sequence at s (RFC 3629: 1 to 4 bytes, shortest
 * form, no surrogates, up to U+10FFFF), or 0 when malformed. */
static size_t utf8_seq(const unsigned char *s, unsigned long *cp)
{
	unsigned char c = s[0];
	size_t n;
	unsigned long v, min;
	if (c < 0x80) {
		*cp = c;
		return 1;
	} else if ((c & 0xE0) == 0xC0) {
		n = 2, v = c & 0x1F, min = 0x80;
	} else if ((c & 0xF0) == 0xE0) {
		n = 3, v = c & 0x0F, min = 0x800;
	} else if ((c & 0xF8) == 0xF0) {
		n = 4, v = c & 0x07, min = 0x10000;
	} else {
		return 0;
	}
	for (size_t i = 1; i < n; i++) {
		if ((s[i] & 0xC0) != 0x80)
			return 0;
		v = (v << 6) | (s[i] & 0x3F);
	}
	if (v < min || v > 0x10FFFF || (v >= 0xD800 && v <= 0xDFFF))
		return 0;
	*cp = v;
	return n;
}

int hb_text_check(const char *field, const char *s, size_t limit, char *err, size_t errlen)
{
	if (!s)
		return HB_OK;
	size_t len = strlen(s);
	if (limit && len > limit) {
		snprintf(err, errlen, "%s: %zu bytes, limit %zu", field, len, limit);
		return HB_ERR_ARG;
	}
	const unsigned char *u = (const unsigned char *)s;
	for (size_t i = 0; i < len;) {
		unsigned long cp;
		size_t n = utf8_seq(u + i, &cp);
		if (n == 0) {
			snprintf(err, errlen, "%s: not valid UTF-8 at byte %zu", field, i + 1);
			return HB_ERR_ARG;
		}
		if (cp < 0x20 || cp == 0x7F || (cp >= 0x80 && cp < 0xA0)) {
			snprintf(err, errlen, "%s: control character 0x%02lx at byte %zu (one line of printable text)",
				 field, cp, i + 1);
			return HB_ERR_ARG;
		}
		i += n;
	}
	return HB_OK;
}
