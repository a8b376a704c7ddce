/* tests/test_readable.c - the text outputs read by people: no nan, no exponent, units, GUM 7.2.6 digits, columns by display width */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "common/hb_text.h"

static char demo_db[400];

/* One demo store for the group: three bias sweeps, a frequency sweep, a lot. */
static int group_setup(void **state)
{
	(void)state;
	if (cli_fixture_setup("readable") != 0)
		return -1;
	char out[300];
	snprintf(out, sizeof out, "%s/demo", tmpdir);
	run r;
	hb_run(&r, station_bare, "demo", "--out", out, NULL);
	int st = r.status;
	run_free(&r);
	snprintf(demo_db, sizeof demo_db, "%s/bench.db", out);
	return st == 0 ? 0 : -1;
}

/* Inside a global identity (RFC 9562 text: 8-4-4-4-12 hex digits), where
 * "5e-71" is hex, not a number. */
static bool in_uuid(const char *s, const char *p)
{
	const char *a = p, *b = p;
	while (a > s && (isxdigit((unsigned char)a[-1]) || a[-1] == '-'))
		a--;
	while (isxdigit((unsigned char)*b) || *b == '-')
		b++;
	if (b - a < 36)
		return false;
	for (const char *q = a; q + 36 <= b; q++) {
		bool ok = true;
		for (int i = 0; i < 36 && ok; i++)
			ok = (i == 8 || i == 13 || i == 18 || i == 23) ? q[i] == '-' : isxdigit((unsigned char)q[i]) != 0;
		if (ok && p >= q && p < q + 36)
			return true;
	}
	return false;
}

/* A number written with an exponent ("6.8e+02", "1e-05") anywhere in text. */
static const char *find_exponent(const char *s)
{
	for (const char *p = s; *p; p++)
		if (isdigit((unsigned char)p[0]) && (p[1] == 'e' || p[1] == 'E') && (p[2] == '+' || p[2] == '-') &&
		    isdigit((unsigned char)p[3]) && !in_uuid(s, p))
			return p;
	return NULL;
}

/* "nan" or "inf" as a word of its own (not inside "infinite" or "finance"). */
static const char *find_nan(const char *s)
{
	static const char *const words[] = { "nan", "inf", "-nan", NULL };
	for (int w = 0; words[w]; w++) {
		size_t n = strlen(words[w]);
		for (const char *p = strstr(s, words[w]); p; p = strstr(p + 1, words[w])) {
			bool left = p == s || !isalpha((unsigned char)p[-1]);
			bool right = !isalpha((unsigned char)p[n]);
			if (left && right)
				return p;
		}
	}
	return NULL;
}

static void check_clean(const char *what, const char *text)
{
	const char *e = find_exponent(text), *nn = find_nan(text);
	if (e)
		fail_msg("%s prints an exponent: '%.30s'", what, e - (e - text > 10 ? 10 : e - text));
	if (nn)
		fail_msg("%s prints nan or inf: '%.30s'", what, nn - (nn - text > 20 ? 20 : nn - text));
}

/* Every text output of the stored demo: no nan, no exponent (issue 15 item 2). */
static void test_text_outputs_have_no_nan_or_exponent(void **state)
{
	(void)state;
	static const char *const cmds[][6] = {
		{ "show", "1", NULL },          { "show", "2", NULL },     { "fit", "2", "--no-store", NULL },
		{ "fit", "2", "--budget", NULL }, { "sweeps", NULL }, { "history", "HBX-108G", NULL },
		{ "compare", "2", "3", "4", NULL }, { "part", "list", NULL }, { "part", "show", "HBX-108G", NULL },
	};
	for (size_t i = 0; i < sizeof cmds / sizeof cmds[0]; i++) {
		char *argv[12] = { "henrybench", "--db", demo_db };
		int n = 3;
		for (int k = 0; cmds[i][k]; k++)
			argv[n++] = (char *)cmds[i][k];
		argv[n] = NULL;
		run r;
		hb_runv(&r, station_bare, STDIN_NULL, NULL, argv);
		if (r.status != 0)
			fail_msg("%s exited %d: %s", cmds[i][0], r.status, r.err);
		char what[64];
		snprintf(what, sizeof what, "%s %s", cmds[i][0], cmds[i][1] ? cmds[i][1] : "");
		check_clean(what, r.out);
		run_free(&r);
	}
}

/* Decimal exponent of the last significant digit of a number text
 * ("3.38125" -> -5; "680" -> 1: a whole number's trailing zeros only place
 * the digits, common practice). */
static int last_digit_exp(const char *num, size_t len)
{
	const char *dot = memchr(num, '.', len);
	if (dot)
		return -(int)(len - (size_t)(dot - num) - 1);
	int q = 0;
	while (len > 1 && num[len - 1] == '0') {
		len--;
		q++;
	}
	return q;
}

/* Significant digits of a number text, a whole number's trailing zeros not counted. */
static int sig_digits(const char *num, size_t len)
{
	if (!memchr(num, '.', len))
		while (len > 1 && num[len - 1] == '0')
			len--;
	int sig = 0;
	bool lead = true;
	for (size_t k = 0; k < len; k++)
		if (isdigit((unsigned char)num[k]) && !(lead && num[k] == '0')) {
			lead = false;
			sig++;
		} else if (isdigit((unsigned char)num[k]) && !lead) {
			sig++;
		}
	return sig;
}

static int prefix_exp(char c)
{
	switch (c) {
	case 'm': return -3;
	case 'u': return -6;
	case 'n': return -9;
	case 'p': return -12;
	case 'k': return 3;
	default: return 0;
	}
}

/* The prefix's power of ten when the unit word starts with one ("mA" -3,
 * "A" 0, "mT" -3 but "m" alone the metre). */
static int unit_prefix_exp(const char *word, char first)
{
	if (!first || !isalpha((unsigned char)word[1]))
		return 0;
	return prefix_exp(first);
}

/* The fit's "value +- u" lines follow GUM (JCGM 100:2008) 7.2.6: u has at
 * most two significant digits and the value ends at u's last digit. */
static void test_fit_values_rounded_to_their_uncertainty(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", demo_db, "fit", "2", "--no-store", NULL);
	assert_int_equal(r.status, 0);
	int checked = 0;
	for (char *line = r.out; line && *line;) {
		char *nl = strchr(line, '\n');
		if (nl)
			*nl = '\0';
		char *pm = strstr(line, " +- ");
		if (pm && strncmp(line, "  ", 2) == 0) {
			/* "<label>  <v> <prefix><unit> +- <u> <prefix><unit>" */
			char *ue = pm + 4;
			size_t ulen = strspn(ue, "0123456789.");
			/* the word before " +- " is the unit, or the value itself when unitless */
			char *w = pm;
			while (w > line && w[-1] != ' ')
				w--;
			char vunit = 0, *vnum_end = pm;
			if (!(isdigit((unsigned char)*w) || *w == '-')) {
				vunit = *w;
				vnum_end = w - 1;
			}
			char *vnum = vnum_end;
			while (vnum > line && (isdigit((unsigned char)vnum[-1]) || vnum[-1] == '.' || vnum[-1] == '-'))
				vnum--;
			char uunit = ue[ulen] == ' ' ? ue[ulen + 1] : 0;
			/* at most two significant digits in u */
			int sig = sig_digits(ue, ulen);
			if (sig < 1 || sig > 2)
				fail_msg("u with %d significant digits: %s", sig, line);
			/* the value's last digit sits where u's last digit does */
			int vq = last_digit_exp(vnum, (size_t)(vnum_end - vnum)) + unit_prefix_exp(w, vunit);
			int uq = last_digit_exp(ue, ulen) + unit_prefix_exp(ue + ulen + 1, uunit);
			if (vq != uq)
				fail_msg("value and u end at 1e%d and 1e%d: %s", vq, uq, line);
			checked++;
		}
		line = nl ? nl + 1 : NULL;
	}
	if (checked < 5)
		fail_msg("only %d value +- u lines found in:\n%s", checked, r.out);
	run_free(&r);
}

/* A one-sided limit is a word, not "[nan, 0.04]": the demo part's DCR has only a maximum. */
static void test_one_sided_limit_in_words(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "--db", demo_db, "show", "2", NULL);
	assert_int_equal(r.status, 0);
	const char *dcr = strstr(r.out, "  DCR   ");
	assert_non_null(dcr);
	const char *eol = strchr(dcr, '\n');
	const char *lim = strstr(dcr, " limits <= ");
	if (!lim || lim > eol)
		fail_msg("DCR verdict without 'limits <= ': %.*s", (int)(eol - dcr), dcr);
	/* 40 mohm, the demo part's DCR maximum (src/cli/cmd_demo.c states it to the operator as "DCR <= 40 mOhm") */
	assert_int_equal(strncmp(lim, " limits <= 40 mohm", 18), 0);
	run_free(&r);
}

/* Part numbers in CJK and with a micro sign keep the columns of `part list`:
 * the nominal starts at the same display column on every row (UAX #11 widths). */
static void test_columns_by_display_width(void **state)
{
	(void)state;
	char db[400];
	snprintf(db, sizeof db, "%s/width.db", tmpdir);
	static const char *const parts[] = { "\xe7\x94\xb5\xe6\x84\x9f-1", "\xc2\xb5H-7", "PLAIN-1" };
	for (size_t i = 0; i < 3; i++) {
		run r;
		hb_run(&r, station_bare, "--db", db, "part", "add", parts[i], "--nominal", "10uH", "--tol", "20%", "--freq",
		       "100kHz", "--level", "0.1V", NULL);
		if (r.status != 0)
			fail_msg("part add %s exited %d: %s", parts[i], r.status, r.err);
		run_free(&r);
	}
	run r;
	hb_run(&r, station_bare, "--db", db, "part", "list", NULL);
	assert_int_equal(r.status, 0);
	long col = -1;
	int rows = 0;
	for (size_t i = 0; i < 3; i++) {
		char *line = strstr(r.out, parts[i]);
		assert_non_null(line);
		char *nominal = strstr(line, "10 uH");
		assert_non_null(nominal);
		char cut[200];
		snprintf(cut, sizeof cut, "%.*s", (int)(nominal - line), line);
		long c = (long)hb_text_width(cut);
		if (col >= 0 && c != col)
			fail_msg("row of %s: nominal at column %ld, other rows at %ld:\n%s", parts[i], c, col, r.out);
		col = c;
		rows++;
	}
	assert_int_equal(rows, 3);
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_text_outputs_have_no_nan_or_exponent),
		cmocka_unit_test(test_fit_values_rounded_to_their_uncertainty),
		cmocka_unit_test(test_one_sided_limit_in_words),
		cmocka_unit_test(test_columns_by_display_width),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
