/* common/text.c - one-line error messages into a caller's buffer, and the C-locale scope for numbers */
#define _GNU_SOURCE /* newlocale/uselocale come with POSIX 2008; kept explicit for older glibc */
#include <pthread.h>
#include <stdarg.h>
#include <stdio.h>

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
