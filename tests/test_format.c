/* tests/test_format.c - the one number formatter of the text outputs: SI prefixes, GUM 7.2.6 digits, no nan, no exponent, display width */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <math.h>
#include <string.h>
#include <cmocka.h>

#include "common/hb_text.h"

static void test_prefixes(void **state)
{
	(void)state;
	char b[64];
	/* SI Brochure (BIPM, 9th ed., 2019), table 7: k = 1e3, M = 1e6, m = 1e-3, u = 1e-6, n = 1e-9. */
	assert_string_equal(hb_format_si(b, sizeof b, 1e6, "Hz", 4), "1 MHz");
	assert_string_equal(hb_format_si(b, sizeof b, 0.000108, "H", 4), "108 uH");
	assert_string_equal(hb_format_si(b, sizeof b, 0.00194, "J", 3), "1.94 mJ");
	assert_string_equal(hb_format_si(b, sizeof b, 0.0303449, "ohm", 4), "30.34 mohm");
	assert_string_equal(hb_format_si(b, sizeof b, 4.7e-9, "H", 3), "4.7 nH");
	assert_string_equal(hb_format_si(b, sizeof b, -2.5e-3, "A", 3), "-2.5 mA");
	/* 1 mm2 = 1e-6 m2: a squared unit squares its prefix (SI Brochure 5.4.2). */
	assert_string_equal(hb_format_si(b, sizeof b, 48.9e-6, "m2", 3), "48.9 mm2");
	/* 999.96 uH to four digits carries into the next prefix: 1.000 mH reads "1 mH" (common practice). */
	assert_string_equal(hb_format_si(b, sizeof b, 999.96e-6, "H", 4), "1 mH");
	/* Large and small values keep the plain digits: no "e+06" anywhere. */
	assert_string_equal(hb_format_si(b, sizeof b, 123456789.0, "Hz", 3), "123 MHz");
	/* A pure number takes no prefix: mu_i 2300, not 2.3 k (common practice). */
	assert_string_equal(hb_format_si(b, sizeof b, 1234.0, "", 6), "1234");
	assert_string_equal(hb_format_unc(b, sizeof b, 2300.1934, 0.353, "", 6), "2300.19 +- 0.35");
	assert_null(strchr(hb_format_si(b, sizeof b, 3.2e-20, "F", 3), 'e'));
}

static void test_absent_is_never_nan(void **state)
{
	(void)state;
	char b[64];
	assert_string_equal(hb_format_si(b, sizeof b, NAN, "ohm", 4), HB_TEXT_ABSENT);
	assert_string_equal(hb_format_si(b, sizeof b, INFINITY, "A", 4), HB_TEXT_ABSENT);
	assert_string_equal(hb_format_unc(b, sizeof b, NAN, 1e-3, "A", 4), HB_TEXT_ABSENT);
	/* An open side of a tolerance is a word, not a number (ISO 14253-1: a one-sided specification). */
	assert_string_equal(hb_format_limits(b, sizeof b, NAN, 0.04, "ohm", 4), "<= 40 mohm");
	assert_string_equal(hb_format_limits(b, sizeof b, 72.05e-6, NAN, "H", 4), ">= 72.05 uH");
	assert_string_equal(hb_format_limits(b, sizeof b, 97.2e-6, 118.8e-6, "H", 4), "97.2 uH to 118.8 uH");
}

static void test_gum_digits(void **state)
{
	(void)state;
	double v, u;
	/* GUM (JCGM 100:2008) 7.2.6, from memory: y = 10.05762 ohm with uc = 27 mohm is rounded to 10.058 ohm. */
	int q = hb_gum_round(10.05762, 0.027, &v, &u);
	assert_int_equal(q, -3);
	assert_true(fabs(v - 10.058) < 1e-12);
	char b[80];
	assert_string_equal(hb_format_unc(b, sizeof b, 10.05762, 0.027, "ohm", 5), "10.058 ohm +- 27 mohm");
	/* GUM 7.2.2 worked example: m_S = 100.02147 g with uc = 0.35 mg. */
	assert_string_equal(hb_format_unc(b, sizeof b, 100.021470, 0.35e-3, "g", 5), "100.02147 g +- 350 ug");
	/* GUM 7.2.6: at most two significant digits for u; 0.000683 A is 0.00068 A (two digits, common practice). */
	assert_string_equal(hb_format_unc(b, sizeof b, 3.381283, 0.000683, "A", 5), "3.38128 A +- 680 uA");
	/* The uncertainty's rounding carries: 0.996 mA to two digits is 1.0 mA, the value to 0.1 mA. */
	assert_string_equal(hb_format_unc(b, sizeof b, 1.23456, 0.000996, "A", 5), "1.2346 A +- 1.0 mA");
	/* An uncertainty alone keeps its two digits, a zero included (GUM 7.2.6: 2.97 mA is 3.0 mA). */
	assert_string_equal(hb_format_u(b, sizeof b, 2.97e-3, "A"), "3.0 mA");
	assert_string_equal(hb_format_u(b, sizeof b, 683e-6, "A"), "680 uA");
	/* Without a usable uncertainty the digit count stands in. */
	assert_string_equal(hb_format_unc(b, sizeof b, 1.23456, NAN, "A", 3), "1.23 A");
}

static void test_display_width(void **state)
{
	(void)state;
	/* Unicode UAX #11: U+96FB is East Asian Wide (two cells); U+00B5 takes one; U+0301 combining, none. */
	assert_int_equal(hb_text_width("ABC"), 3);
	assert_int_equal(hb_text_width("\xc2\xb5H-1"), 4);
	assert_int_equal(hb_text_width("\xe9\x9b\xbb\xe6\xb1\xa0"), 4);
	assert_int_equal(hb_text_width("e\xcc\x81"), 1);
	char b[64];
	/* padded to the same display width, whatever the bytes */
	assert_string_equal(hb_text_pad(b, sizeof b, "\xe9\x9b\xbb-1", 6, true), "\xe9\x9b\xbb-1  ");
	assert_string_equal(hb_text_pad(b, sizeof b, "\xc2\xb5H", 4, false), "  \xc2\xb5H");
	assert_int_equal(hb_text_width(hb_text_pad(b, sizeof b, "\xe9\x9b\xbb\xc2\xb5", 8, true)), 8);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_prefixes),
		cmocka_unit_test(test_absent_is_never_nan),
		cmocka_unit_test(test_gum_digits),
		cmocka_unit_test(test_display_width),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
