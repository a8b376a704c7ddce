/* tests/test_units.c - engineering-notation parser: SI prefixes, units, SCPI-1999 suffix rule, errors */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <math.h>
#include <locale.h>
#include <string.h>
#include <cmocka.h>

#include "src/cli/cli.h"
#include "comma_locale.h"

typedef struct value_case {
	const char *text;
	const char *unit;
	double expected;
} value_case;

static void check_cases(const value_case *cases, size_t n)
{
	for (size_t i = 0; i < n; i++) {
		double v = NAN;
		char err[256] = "";
		int rc = hb_parse_value(cases[i].text, cases[i].unit, &v, err, sizeof err);
		if (rc != HB_OK || fabs(v - cases[i].expected) > 1e-12 * fabs(cases[i].expected))
			fail_msg("'%s' [%s]: rc %d value %.12g expected %.12g (%s)", cases[i].text, cases[i].unit,
				 rc, v, cases[i].expected, err);
	}
}

static void test_si_prefixes(void **state)
{
	(void)state;
	/* SI Brochure (BIPM, 9th ed.), table of prefixes: m = 1e-3, u = 1e-6, k = 1e3, M = 1e6. */
	static const value_case cases[] = {
		{ "100u", "", 100e-6 },      { "100uH", "H", 100e-6 },   { "4.7m", "", 4.7e-3 },
		{ "2.5A", "A", 2.5 },         { "100kHz", "Hz", 100e3 },  { "0.5V", "V", 0.5 },
		{ "10 uH", "H", 10e-6 },      { "1.2e-3", "", 1.2e-3 },   { "25mOhm", "ohm", 25e-3 },
		{ "47n", "H", 47e-9 },        { "3.3pF", "F", 3.3e-12 },  { "1MHz", "Hz", 1e6 },
		{ "4.7M", "", 4.7e6 },        { "60.2mm", "m", 60.2e-3 }, { "48.9mm2", "m2", 48.9e-6 },
		{ "0.39T", "T", 0.39 },       { "  2A  ", "A", 2 },       { "-1.5A", "A", -1.5 },
		{ "250mA", "A", 0.25 },       { "10ms", "s", 0.010 },     { "2k", "", 2e3 },
		{ "9mm", "m", 9e-3 },         { "1.5 A/s", "A/s", 1.5 },
	};
	check_cases(cases, sizeof cases / sizeof cases[0]);
}

static void test_micro_sign(void **state)
{
	(void)state;
	static const value_case cases[] = {
		{ "100\xc2\xb5H", "H", 100e-6 }, /* U+00B5 MICRO SIGN */
		{ "100\xce\xbcH", "H", 100e-6 }, /* U+03BC GREEK SMALL LETTER MU */
		{ "22\xc2\xb5", "", 22e-6 },
		{ "10m\xce\xa9", "ohm", 10e-3 }, /* U+03A9 OMEGA */
	};
	check_cases(cases, sizeof cases / sizeof cases[0]);
}

static void test_percent(void **state)
{
	(void)state;
	static const value_case cases[] = {
		{ "20%", "%", 0.20 }, { "50 %", "%", 0.50 }, { "30", "%", 0.30 }, { "0.5%", "%", 0.005 },
	};
	check_cases(cases, sizeof cases / sizeof cases[0]);
}

static void test_scpi_suffix_rule(void **state)
{
	(void)state;
	/* SCPI-1999 Vol 1 (Command Reference), 7.7.3 suffix multipliers: in
	 * upper case M is milli and MA is mega; MHZ and MOHM are the two
	 * exceptions meaning megahertz and megaohm. */
	static const value_case cases[] = {
		{ "5MA", "", 5e6 },        /* multiplier alone: mega */
		{ "5MA", "A", 5e-3 },      /* M (milli) + A (ampere) */
		{ "100MV", "V", 0.1 },     /* millivolt */
		{ "1MHZ", "Hz", 1e6 },     /* exception: megahertz */
		{ "2MOHM", "ohm", 2e6 },   /* exception: megaohm */
		{ "100KHZ", "Hz", 100e3 },
		{ "10UH", "H", 10e-6 },
		{ "3MAHZ", "Hz", 3e6 },
		{ "20MS", "s", 20e-3 },
	};
	check_cases(cases, sizeof cases / sizeof cases[0]);
}

static void test_garbage_is_rejected_naming_token(void **state)
{
	(void)state;
	static const struct { const char *text, *unit, *token; } bad[] = {
		{ "abc", "H", "abc" },     { "10xH", "H", "xH" },   { "2.5A", "H", "A" },
		{ "", "A", "" },            { "nan", "", "nan" },     { "inf", "A", "inf" },
		{ "0x10", "", "0x10" },     { "1e999", "", "1e999" }, { "10 uHz", "H", "uHz" },
		{ "5 apples", "A", "apples" },
	};
	for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
		double v = 0;
		char err[256] = "";
		int rc = hb_parse_value(bad[i].text, bad[i].unit, &v, err, sizeof err);
		if (rc != HB_ERR_ARG)
			fail_msg("'%s' accepted as %g", bad[i].text, v);
		if (!strstr(err, bad[i].token))
			fail_msg("message for '%s' does not name '%s': %s", bad[i].text, bad[i].token, err);
	}
}

static void test_comma_locale_does_not_matter(void **state)
{
	(void)state;
	/* A lab PC in a comma-decimal locale must still read 0.5 as a half. */
	char why[200] = "";
	const char *name = comma_locale_find(why, sizeof why);
	if (!name) {
		print_message("skipped: %s\n", why);
		skip();
	}
	assert_non_null(setlocale(LC_NUMERIC, name));
	/* the test's own check that the comma really is in effect */
	assert_string_equal(localeconv()->decimal_point, ",");
	double v = 0;
	int rc = hb_parse_value("0.5V", "V", &v, NULL, 0);
	setlocale(LC_NUMERIC, "C");
	assert_int_equal(rc, HB_OK);
	assert_true(fabs(v - 0.5) < 1e-15);
}

static void test_format_si(void **state)
{
	(void)state;
	char buf[64];
	assert_string_equal(hb_format_si(buf, sizeof buf, 4.7e-6, "H", 3), "4.7 uH");
	assert_string_equal(hb_format_si(buf, sizeof buf, 100e3, "Hz", 3), "100 kHz");
	assert_string_equal(hb_format_si(buf, sizeof buf, 2.5, "A", 3), "2.5 A");
	assert_string_equal(hb_format_si(buf, sizeof buf, 0.0, "A", 3), "0 A");
}

static void test_opt_ranges(void **state)
{
	(void)state;
	double v = 0;
	long n = 0;
	assert_int_equal(hb_opt_value("--to", "5A", "A", 0, 10, &v), HB_OK);
	assert_true(v == 5);
	assert_int_equal(hb_opt_value("--to", "50A", "A", 0, 10, &v), HB_ERR_ARG);
	assert_int_equal(hb_opt_int("--steps", "21", 2, 10000, &n), HB_OK);
	assert_int_equal(n, 21);
	assert_int_equal(hb_opt_int("--steps", "2x", 2, 10000, &n), HB_ERR_ARG);
	assert_int_equal(hb_opt_int("--steps", "1", 2, 10000, &n), HB_ERR_ARG);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_si_prefixes),
		cmocka_unit_test(test_micro_sign),
		cmocka_unit_test(test_percent),
		cmocka_unit_test(test_scpi_suffix_rule),
		cmocka_unit_test(test_garbage_is_rejected_naming_token),
		cmocka_unit_test(test_comma_locale_does_not_matter),
		cmocka_unit_test(test_format_si),
		cmocka_unit_test(test_opt_ranges),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
