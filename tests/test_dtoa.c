/* tests/test_dtoa.c - the fast double formatter: every double reads back (strtod) to the same bits, short digits, printf's %g layout */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <float.h>
#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "common/hb_dtoa.h"

static uint64_t bits_of(double v)
{
	uint64_t b;
	memcpy(&b, &v, sizeof b);
	return b;
}

static double from_bits(uint64_t b)
{
	double v;
	memcpy(&v, &b, sizeof v);
	return v;
}

/* splitmix64 (Steele, Lea, Flood 2014; common practice as a seeded generator) */
static uint64_t next_random(uint64_t *s)
{
	uint64_t z = (*s += 0x9E3779B97F4A7C15u);
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9u;
	z = (z ^ (z >> 27)) * 0x94D049BB133111EBu;
	return z ^ (z >> 31);
}

/*
 * The one property that matters (IEEE 754 round to nearest, C11 7.22.1.3:
 * strtod rounds correctly): the text and the digits read back to v's bits,
 * the same bits as the C library's own "%.17g" reads back to. A text of at
 * most 15 digits is laid out exactly as printf's "%.15g" when v is normal
 * (its half unit is below half a step of 15 digits, so the nearest 15-digit
 * decimal is the only one that reads back; a subnormal has fewer bits and
 * may take fewer digits). Returns the number of digits.
 */
static int check_one(double v)
{
	char text[HB_DTOA_LEN + 8], ref[40], composed[48];
	size_t len = hb_dtoa_g(text, v, 15);
	if (len != strlen(text) || len >= HB_DTOA_LEN)
		fail_msg("%.17g: length %zu", v, len);
	snprintf(ref, sizeof ref, "%.17g", v);
	double back = strtod(text, NULL), ref_back = strtod(ref, NULL);
	if (bits_of(back) != bits_of(v) || bits_of(ref_back) != bits_of(back))
		fail_msg("%s (bits %016llx) written as %s, read back as %016llx", ref, (unsigned long long)bits_of(v), text,
			 (unsigned long long)bits_of(back));
	if (v == 0)
		return 1;
	char d[17];
	int k, n = hb_dtoa_digits(v, d, &k);
	if (n < 1 || n > 17 || d[0] == '0' || d[n - 1] == '0')
		fail_msg("%s: %d digits %.*s", ref, n, n, d);
	snprintf(composed, sizeof composed, "%s%.*se%d", v < 0 ? "-" : "", n, d, k);
	if (bits_of(strtod(composed, NULL)) != bits_of(v))
		fail_msg("%s: digits %s read back otherwise", ref, composed);
	if (n <= 15 && fabs(v) >= DBL_MIN) {
		char g15[40];
		snprintf(g15, sizeof g15, "%.15g", v);
		if (strcmp(g15, text) != 0)
			fail_msg("%s: %s, printf %%.15g %s", ref, text, g15);
	}
	return n;
}

/* The fewest digits that read back as v, by trying printf's correctly rounded %.Pg for P = 1..17. */
static int shortest_by_printf(double v)
{
	char b[40];
	for (int p = 1; p < 17; p++) {
		snprintf(b, sizeof b, "%.*g", p, v);
		if (strtod(b, NULL) == v)
			return p;
	}
	return 17;
}

static void test_known_texts(void **state)
{
	(void)state;
	char b[HB_DTOA_LEN];
	/* Shortest round-trip texts as Python's repr writes them (David Gay's
	 * dtoa; common practice), in printf's %.15g layout. */
	const struct { double v; const char *text; } known[] = {
		{ 0.1, "0.1" },
		{ 1e23, "1e+23" }, /* halfway between two doubles, read as the even one: v */
		{ 766369185e-12, "0.000766369185" }, /* 0.0007 units from the upper boundary */
		{ 53819169236568096.0, "5.38191692365681e+16" }, /* on the boundary */
		{ 5e-324, "5e-324" },
		{ DBL_MAX, "1.7976931348623157e+308" },
		{ DBL_MIN, "2.2250738585072014e-308" },
		{ 2.225073858507201e-308, "2.225073858507201e-308" }, /* largest subnormal */
		{ 1.0 / 3.0, "0.3333333333333333" },
		{ 9007199254740992.0, "9007199254740992" }, /* 2^53: 16 digits, %.16g layout */
		{ 1e15, "1e+15" },
		{ 123456789012345678.0, "1.2345678901234568e+17" },
		{ 1e-7, "1e-07" },
		{ 100e-6, "0.0001" },
		{ 9.961089494163424e-05, "9.961089494163424e-05" },
		{ -2.5e-12, "-2.5e-12" },
		{ 1234.5, "1234.5" },
		{ 100000, "100000" },
		{ 1, "1" },
	};
	for (size_t i = 0; i < sizeof known / sizeof known[0]; i++) {
		hb_dtoa_g(b, known[i].v, 15);
		if (strcmp(b, known[i].text) != 0)
			fail_msg("%.17g: %s, expected %s", known[i].v, b, known[i].text);
	}
	volatile double tenth = 0.1; /* at run time, not folded */
	assert_string_equal((hb_dtoa_g(b, tenth + 0.2, 15), b), "0.30000000000000004");
	/* C11 7.21.6.1 %g: zeros keep their sign, "inf" and "nan" spelled as printf does. */
	assert_string_equal((hb_dtoa_g(b, 0.0, 15), b), "0");
	assert_string_equal((hb_dtoa_g(b, -0.0, 15), b), "-0");
	assert_string_equal((hb_dtoa_g(b, INFINITY, 15), b), "inf");
	assert_string_equal((hb_dtoa_g(b, -INFINITY, 15), b), "-inf");
	assert_string_equal((hb_dtoa_g(b, NAN, 15), b), "nan");
	/* %.17g layout: plain up to 17 integer digits. */
	assert_string_equal((hb_dtoa_g(b, 1e15, 17), b), "1000000000000000");
	assert_string_equal((hb_dtoa_g(b, 1e17, 17), b), "1e+17");
	assert_string_equal((hb_dtoa_g(b, 1e-5, 17), b), "1e-05");
}

static void test_edges_read_back(void **state)
{
	(void)state;
	/* every power of two and of ten a double holds, and their neighbours */
	for (int e = -1074; e <= 1023; e++) {
		double v = ldexp(1.0, e);
		check_one(v);
		check_one(nextafter(v, 0));
		check_one(nextafter(v, INFINITY));
		check_one(-v);
	}
	for (int e = -323; e <= 308; e++) {
		char t[16];
		snprintf(t, sizeof t, "1e%d", e);
		double v = strtod(t, NULL);
		check_one(v);
		check_one(nextafter(v, 0));
		check_one(nextafter(v, INFINITY));
		/* a power of ten's nearest double is written as just "1" and its exponent */
		char d[17];
		int k;
		if ((hb_dtoa_digits(v, d, &k) != 1 || d[0] != '1' || k != e))
			fail_msg("1e%d: digits %c... exponent %d", e, d[0], k);
	}
	/* subnormals at both ends, the smallest normals, the largest finite */
	const double edge[] = { 5e-324, 1e-323, 2.225073858507201e-308, DBL_MIN, nextafter(DBL_MIN, 1), DBL_MAX,
				nextafter(DBL_MAX, 0), 0.0, -0.0, DBL_EPSILON, 1 + DBL_EPSILON, 9007199254740993.0 };
	for (size_t i = 0; i < sizeof edge / sizeof edge[0]; i++)
		check_one(edge[i]);
	/* every subnormal significand of 1 to 4 digits' bits */
	for (uint64_t m = 1; m < 20000; m++)
		check_one(from_bits(m));
	/* integers: exact and as short as their own decimal digits */
	for (int i = 1; i <= 200000; i++) {
		check_one(i);
		char b[HB_DTOA_LEN], ref[16];
		hb_dtoa_g(b, i, 17);
		snprintf(ref, sizeof ref, "%d", i);
		assert_string_equal(b, ref);
	}
}

static void test_random_bits_read_back(void **state)
{
	(void)state;
	uint64_t seed = 20260512, longer = 0, farther = 0, sampled = 0;
	/* Seeded random bit patterns: every exponent and significand alike. */
	for (long i = 0; i < 2000000; i++) {
		double v = from_bits(next_random(&seed));
		if (!isfinite(v))
			continue;
		int n = check_one(v);
		/* Never fewer digits than the shortest (that would not read
		 * back); more only where a decimal near the boundary fell
		 * between the narrowed interval and the widened one's shortest. */
		if (i % 20 == 0) {
			int shortest = shortest_by_printf(v);
			sampled++;
			if (n < shortest)
				fail_msg("%.17g: %d digits, shortest %d", v, n, shortest);
			longer += n > shortest;
			/* the same digits as printf's correctly rounded %.Pg (the
			 * nearest decimal of that length): the closest of the shortest */
			char ours[HB_DTOA_LEN], ref[40];
			hb_dtoa_g(ours, v, 15);
			snprintf(ref, sizeof ref, "%.*g", n > 15 ? n : 15, v);
			farther += strcmp(ours, ref) != 0;
		}
	}
	printf("sampled %llu: %llu longer than the shortest, %llu not printf's nearest\n", (unsigned long long)sampled,
	       (unsigned long long)longer, (unsigned long long)farther);
	if (longer * 10000 > sampled || farther * 1000 > sampled)
		fail_msg("%llu of %llu sampled doubles took more digits than the shortest, %llu not the nearest",
			 (unsigned long long)longer,
			 (unsigned long long)sampled, (unsigned long long)farther);
	/* Measured values look like decimals of a few digits scaled to H, ohm, A:
	 * those come out as the digits they were made of (shortest, so %.15g). */
	for (long i = 0; i < 1000000; i++) {
		uint64_t r = next_random(&seed);
		int digits = 1 + (int)(r % 9), e = -15 + (int)((r >> 8) % 30);
		long m = (long)((r >> 16) % 1000000000) % (long)pow(10, digits);
		char t[48];
		snprintf(t, sizeof t, "%lde%d", m, e);
		double v = strtod(t, NULL);
		int n = check_one(v);
		if (m && n > digits)
			fail_msg("%s: %d digits", t, n);
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_known_texts),
		cmocka_unit_test(test_edges_read_back),
		cmocka_unit_test(test_random_bits_read_back),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
