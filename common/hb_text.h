/* common/hb_text.h - text every layer reads and writes: engineering values, C-locale numbers, one-line error messages */
#ifndef HB_TEXT_H
#define HB_TEXT_H

#include <locale.h>
#include <stddef.h>

#include "hb_status.h"

/*
 * Parses "100u", "100uH", "4.7m", "2.5A", "100kHz", "0.5V", "1.2e-3",
 * "20%" (-> 0.20), the UTF-8 micro sign. unit is the SI unit the option
 * expects ("H", "A", "Hz", "V", "ohm", "s", "m", "m2", "T", "%", "" for
 * none); a different unit in the text is an error. Case follows SI (m
 * milli, M mega) except when the whole text is upper-case SCPI style, where
 * SCPI-1999's rule applies (M milli, MA mega; MHZ and MOHM mega).
 * On error returns HB_ERR_ARG and writes a message naming the token.
 */
int hb_parse_value(const char *text, const char *unit, double *value, char *err, size_t errlen);


/* Writes a one-line message into err (NULL or cap 0: nothing) and returns
 * HB_ERR_ARG, so that a parser can say `return hb_set_err(...)`; callers
 * with another status ignore the return. */
int hb_set_err(char *err, size_t cap, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

/* Numbers in files and on the command line are C-locale whatever the
 * caller's locale is: a lab PC in a comma-decimal locale must read and
 * write "0.5" as one half. enter switches this thread's LC_NUMERIC to "C"
 * (uselocale is per thread, so other threads are not disturbed); leave puts
 * the old one back. s->c is (locale_t)0 when no C locale could be made, and
 * the thread's locale is then left as it was. One locale serves the whole
 * process (made once, never freed), so the pair is cheap enough for every
 * number on the wire. */
typedef struct hb_c_numeric {
	locale_t c, old;
} hb_c_numeric;

void hb_c_numeric_enter(hb_c_numeric *s);
void hb_c_numeric_leave(hb_c_numeric *s);

/* ---------------- numbers and text for people (format.c) ---------------- */
#include <stdbool.h>

/* What every text output prints for a value that is absent or not a
 * number (never "nan"). */
#define HB_TEXT_ABSENT "-"

/* value with an SI prefix and unit, rounded to at most digits significant
 * digits, trailing zeros dropped: "4.7 uH", "1 MHz", "30.06 mohm"; never an
 * exponent; HB_TEXT_ABSENT for NaN or infinity. ASCII 'u' for micro; "m2"
 * squares the prefix (mm2); "%", "degC", "dB" take none. */
char *hb_format_si(char *buf, size_t cap, double value, const char *unit, int digits);

/* v rounded to digits significant digits; *last (may be NULL) gets the
 * decimal exponent of its last digit (0.0123 to 2 digits: -3). */
double hb_round_sig(double v, int digits, int *last);

/* GUM (JCGM 100:2008) 7.2.6: u rounded to two significant digits, value
 * rounded to the same decimal position. Returns that position's exponent
 * (u = 0.00068: -5), or HB_ERR_ARG when u is not a positive number. */
int hb_gum_round(double value, double u, double *value_r, double *u_r);

/* "3.38130 A +- 680 uA": value and its (standard or expanded) uncertainty
 * by hb_gum_round, each with its own prefix, trailing zeros kept (they are
 * digits the uncertainty supports). Without a usable u: hb_format_si with
 * digits. */
char *hb_format_unc(char *buf, size_t cap, double value, double u, const char *unit, int digits);

/* An uncertainty alone to two significant digits, zeros kept: "3.0 mA",
 * "680 uA" (GUM 7.2.6); HB_TEXT_ABSENT when not a number. */
char *hb_format_u(char *buf, size_t cap, double u, const char *unit);

/* A tolerance interval as words: "97.2 uH to 118.8 uH", "<= 40 mohm",
 * ">= 72.05 uH" or "none" (an open side is never printed as a number). */
char *hb_format_limits(char *buf, size_t cap, double low, double high, const char *unit, int digits);

/* Terminal columns UTF-8 text takes (wcwidth in C.UTF-8: a CJK character
 * two, a combining mark none, an invalid byte one). */
size_t hb_text_width(const char *s);

/* s padded with spaces to width display columns (left-aligned or right),
 * for text tables whose cells hold user text; s whole when it is wider. */
char *hb_text_pad(char *buf, size_t cap, const char *s, size_t width, bool left);

/* Writes s (empty or NULL: HB_TEXT_ABSENT) padded to width display columns
 * on out; 0, or EOF when the write failed. */
#include <stdio.h>
int hb_fput_cell(FILE *out, const char *s, size_t width, bool left);
/* ---- text fields typed by a user: checked, never cut (text.c) ---- */

/* Stated limits, in bytes of UTF-8, of the text fields a user types; each
 * fits its store buffer (db/hb_db.h) with the terminating NUL. */
enum { HB_TEXT_ID_MAX = 63, HB_TEXT_DESC_MAX = 255, HB_TEXT_NOTE_MAX = 511 };

/*
 * HB_OK when s is well-formed UTF-8 (no overlong forms, no surrogates,
 * nothing above U+10FFFF) without control characters (C0 including tab and
 * newline, DEL, C1) and holds at most limit bytes (0 = no limit). Otherwise
 * HB_ERR_ARG with one line in err naming field and the reason: "serial:
 * 70 bytes, limit 63", "part number: control character 0x1b at byte 4",
 * "note: not valid UTF-8 at byte 9". The value itself is never echoed:
 * it may hold terminal escapes.
 */
int hb_text_check(const char *field, const char *s, size_t limit, char *err, size_t errlen);

#endif
