/* common/dtoa.c - doubles as few decimal digits as read back to the same bits: Grisu2 digit generation, %g layout */
#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hb_dtoa.h"

/*
 * Grisu2 (F. Loitsch, "Printing Floating-Point Numbers Quickly and
 * Accurately with Integers", PLDI 2010). v's neighbours halfway below and
 * above bound the decimals that read back as v (IEEE 754 round to nearest,
 * C11 7.22.1.3 strtod). Both bounds are scaled by a cached power of ten
 * into 64-bit fixed point; the scaling is off by at most one unit in the
 * last place, so the interval is narrowed by one unit at each end before
 * the digits are cut from its upper end: whatever comes out lies strictly
 * inside the true interval and reads back as v. The narrowing is what
 * costs, in a few cases in a thousand, one digit more than the shortest.
 * printf's %.17g (an exact conversion through big numbers) costs ten times
 * as much, and exports are mostly numbers.
 */

typedef struct diy_fp {
	uint64_t f; /* value = f * 2^e */
	int e;
} diy_fp;

static const uint64_t HIDDEN_BIT = (uint64_t)1 << 52;

/* f * 2^e scaled so that f's top bit is set. */
static diy_fp normalize(diy_fp x)
{
	int s = __builtin_clzll(x.f);
	x.f <<= s;
	x.e -= s;
	return x;
}

/* x * y with the low 64 bits of the 128-bit product rounded into the high ones. */
static diy_fp mul(diy_fp x, diy_fp y)
{
	const uint64_t m32 = 0xFFFFFFFFu;
	uint64_t a = x.f >> 32, b = x.f & m32, c = y.f >> 32, d = y.f & m32;
	uint64_t ac = a * c, bc = b * c, ad = a * d, bd = b * d;
	uint64_t mid = (bd >> 32) + (ad & m32) + (bc & m32) + ((uint64_t)1 << 31);
	return (diy_fp){ ac + (ad >> 32) + (bc >> 32) + (mid >> 32), x.e + y.e + 64 };
}

/*
 * 10^(-348 + 8 i) = f * 2^e, f rounded to nearest with its top bit set:
 * computed exactly with rational arithmetic (Python's fractions, one line
 * per power). Every eighth power suffices for the window the digit
 * generation needs (Loitsch 2010, section 5); a wrong entry makes the
 * round-trip test fail for the exponents it serves.
 */
static const diy_fp cached_powers[87] = {
	{ 0xfa8fd5a0081c0288, -1220 }, /* 1e-348 */
	{ 0xbaaee17fa23ebf76, -1193 }, /* 1e-340 */
	{ 0x8b16fb203055ac76, -1166 }, /* 1e-332 */
	{ 0xcf42894a5dce35ea, -1140 }, /* 1e-324 */
	{ 0x9a6bb0aa55653b2d, -1113 }, /* 1e-316 */
	{ 0xe61acf033d1a45df, -1087 }, /* 1e-308 */
	{ 0xab70fe17c79ac6ca, -1060 }, /* 1e-300 */
	{ 0xff77b1fcbebcdc4f, -1034 }, /* 1e-292 */
	{ 0xbe5691ef416bd60c, -1007 }, /* 1e-284 */
	{ 0x8dd01fad907ffc3c, -980 }, /* 1e-276 */
	{ 0xd3515c2831559a83, -954 }, /* 1e-268 */
	{ 0x9d71ac8fada6c9b5, -927 }, /* 1e-260 */
	{ 0xea9c227723ee8bcb, -901 }, /* 1e-252 */
	{ 0xaecc49914078536d, -874 }, /* 1e-244 */
	{ 0x823c12795db6ce57, -847 }, /* 1e-236 */
	{ 0xc21094364dfb5637, -821 }, /* 1e-228 */
	{ 0x9096ea6f3848984f, -794 }, /* 1e-220 */
	{ 0xd77485cb25823ac7, -768 }, /* 1e-212 */
	{ 0xa086cfcd97bf97f4, -741 }, /* 1e-204 */
	{ 0xef340a98172aace5, -715 }, /* 1e-196 */
	{ 0xb23867fb2a35b28e, -688 }, /* 1e-188 */
	{ 0x84c8d4dfd2c63f3b, -661 }, /* 1e-180 */
	{ 0xc5dd44271ad3cdba, -635 }, /* 1e-172 */
	{ 0x936b9fcebb25c996, -608 }, /* 1e-164 */
	{ 0xdbac6c247d62a584, -582 }, /* 1e-156 */
	{ 0xa3ab66580d5fdaf6, -555 }, /* 1e-148 */
	{ 0xf3e2f893dec3f126, -529 }, /* 1e-140 */
	{ 0xb5b5ada8aaff80b8, -502 }, /* 1e-132 */
	{ 0x87625f056c7c4a8b, -475 }, /* 1e-124 */
	{ 0xc9bcff6034c13053, -449 }, /* 1e-116 */
	{ 0x964e858c91ba2655, -422 }, /* 1e-108 */
	{ 0xdff9772470297ebd, -396 }, /* 1e-100 */
	{ 0xa6dfbd9fb8e5b88f, -369 }, /* 1e-92 */
	{ 0xf8a95fcf88747d94, -343 }, /* 1e-84 */
	{ 0xb94470938fa89bcf, -316 }, /* 1e-76 */
	{ 0x8a08f0f8bf0f156b, -289 }, /* 1e-68 */
	{ 0xcdb02555653131b6, -263 }, /* 1e-60 */
	{ 0x993fe2c6d07b7fac, -236 }, /* 1e-52 */
	{ 0xe45c10c42a2b3b06, -210 }, /* 1e-44 */
	{ 0xaa242499697392d3, -183 }, /* 1e-36 */
	{ 0xfd87b5f28300ca0e, -157 }, /* 1e-28 */
	{ 0xbce5086492111aeb, -130 }, /* 1e-20 */
	{ 0x8cbccc096f5088cc, -103 }, /* 1e-12 */
	{ 0xd1b71758e219652c, -77 }, /* 1e-4 */
	{ 0x9c40000000000000, -50 }, /* 1e4 */
	{ 0xe8d4a51000000000, -24 }, /* 1e12 */
	{ 0xad78ebc5ac620000, 3 }, /* 1e20 */
	{ 0x813f3978f8940984, 30 }, /* 1e28 */
	{ 0xc097ce7bc90715b3, 56 }, /* 1e36 */
	{ 0x8f7e32ce7bea5c70, 83 }, /* 1e44 */
	{ 0xd5d238a4abe98068, 109 }, /* 1e52 */
	{ 0x9f4f2726179a2245, 136 }, /* 1e60 */
	{ 0xed63a231d4c4fb27, 162 }, /* 1e68 */
	{ 0xb0de65388cc8ada8, 189 }, /* 1e76 */
	{ 0x83c7088e1aab65db, 216 }, /* 1e84 */
	{ 0xc45d1df942711d9a, 242 }, /* 1e92 */
	{ 0x924d692ca61be758, 269 }, /* 1e100 */
	{ 0xda01ee641a708dea, 295 }, /* 1e108 */
	{ 0xa26da3999aef774a, 322 }, /* 1e116 */
	{ 0xf209787bb47d6b85, 348 }, /* 1e124 */
	{ 0xb454e4a179dd1877, 375 }, /* 1e132 */
	{ 0x865b86925b9bc5c2, 402 }, /* 1e140 */
	{ 0xc83553c5c8965d3d, 428 }, /* 1e148 */
	{ 0x952ab45cfa97a0b3, 455 }, /* 1e156 */
	{ 0xde469fbd99a05fe3, 481 }, /* 1e164 */
	{ 0xa59bc234db398c25, 508 }, /* 1e172 */
	{ 0xf6c69a72a3989f5c, 534 }, /* 1e180 */
	{ 0xb7dcbf5354e9bece, 561 }, /* 1e188 */
	{ 0x88fcf317f22241e2, 588 }, /* 1e196 */
	{ 0xcc20ce9bd35c78a5, 614 }, /* 1e204 */
	{ 0x98165af37b2153df, 641 }, /* 1e212 */
	{ 0xe2a0b5dc971f303a, 667 }, /* 1e220 */
	{ 0xa8d9d1535ce3b396, 694 }, /* 1e228 */
	{ 0xfb9b7cd9a4a7443c, 720 }, /* 1e236 */
	{ 0xbb764c4ca7a44410, 747 }, /* 1e244 */
	{ 0x8bab8eefb6409c1a, 774 }, /* 1e252 */
	{ 0xd01fef10a657842c, 800 }, /* 1e260 */
	{ 0x9b10a4e5e9913129, 827 }, /* 1e268 */
	{ 0xe7109bfba19c0c9d, 853 }, /* 1e276 */
	{ 0xac2820d9623bf429, 880 }, /* 1e284 */
	{ 0x80444b5e7aa7cf85, 907 }, /* 1e292 */
	{ 0xbf21e44003acdd2d, 933 }, /* 1e300 */
	{ 0x8e679c2f5e44ff8f, 960 }, /* 1e308 */
	{ 0xd433179d9c8cb841, 986 }, /* 1e316 */
	{ 0x9e19db92b4e31ba9, 1013 }, /* 1e324 */
	{ 0xeb96bf6ebadf77d9, 1039 }, /* 1e332 */
	{ 0xaf87023b9bf0ee6b, 1066 }, /* 1e340 */
};

/* A power of ten c = 10^-K such that e + c.e + 64 falls in [-60, -32]: the
 * integer part of the scaled upper bound then fits 32 bits. */
static diy_fp cached_power(int e, int *K)
{
	double dk = (-61 - e) * 0.30102999566398114 + 347; /* log10(2); positive for every e of a double */
	int k = (int)dk;
	if (dk - k > 0.0)
		k++;
	int index = (k >> 3) + 1;
	*K = -(-348 + index * 8);
	return cached_powers[index];
}

static const uint32_t pow10_32[] = { 1, 10, 100, 1000, 10000, 100000, 1000000, 10000000, 100000000, 1000000000 };

static const uint64_t pow10_64[] = {
	1u, 10u, 100u, 1000u, 10000u, 100000u, 1000000u, 10000000u, 100000000u, 1000000000u, 10000000000u,
	100000000000u, 1000000000000u, 10000000000000u, 100000000000000u, 1000000000000000u, 10000000000000000u,
	100000000000000000u, 1000000000000000000u, 10000000000000000000u,
};

static int decimal_digits(uint32_t n)
{
	int k = 1;
	while (k < 10 && n >= pow10_32[k])
		k++;
	return k;
}

/* Moves the last digit down while that brings the number closer to v and
 * keeps it inside the (narrowed) interval. */
static void round_weed(char *buf, int len, uint64_t delta, uint64_t rest, uint64_t ten_kappa, uint64_t wp_w)
{
	while (rest < wp_w && delta - rest >= ten_kappa &&
	       (rest + ten_kappa < wp_w || wp_w - rest > rest + ten_kappa - wp_w)) {
		buf[len - 1]--;
		rest += ten_kappa;
	}
}

/* The digits of the upper bound mp, cut as soon as the rest is within
 * delta (the interval's width): the first of them that stays inside. */
static int digit_gen(diy_fp w, diy_fp mp, uint64_t delta, char *buf, int *K)
{
	const int shift = -mp.e;
	const uint64_t one = (uint64_t)1 << shift;
	const uint64_t wp_w = mp.f - w.f;
	uint32_t p1 = (uint32_t)(mp.f >> shift);
	uint64_t p2 = mp.f & (one - 1);
	int kappa = decimal_digits(p1), len = 0;
	while (kappa > 0) {
		uint32_t div = pow10_32[kappa - 1];
		uint32_t d = p1 / div;
		p1 %= div;
		if (d || len)
			buf[len++] = (char)('0' + d);
		kappa--;
		uint64_t rest = ((uint64_t)p1 << shift) + p2;
		if (rest <= delta) {
			*K += kappa;
			round_weed(buf, len, delta, rest, (uint64_t)pow10_32[kappa] << shift, wp_w);
			return len;
		}
	}
	for (;;) {
		p2 *= 10;
		delta *= 10;
		char d = (char)(p2 >> shift);
		if (d || len)
			buf[len++] = (char)('0' + d);
		p2 &= one - 1;
		kappa--;
		if (p2 < delta) {
			*K += kappa;
			int index = -kappa;
			/* wp_w in the units of the digits generated so far (the
			 * product stays below delta's, which fits) */
			round_weed(buf, len, delta, p2, one, index < 20 ? wp_w * pow10_64[index] : 0);
			return len;
		}
	}
}

/* Whether digits x 10^k read back as v (|v|): strtod rounds correctly
 * (C11 7.22.1.3) and the text has no decimal point, so no locale enters. */
static bool reads_back(const char *digits, int n, int k, double v)
{
	char text[40];
	memcpy(text, digits, (size_t)n);
	snprintf(text + n, sizeof text - (size_t)n, "e%d", k);
	return strtod(text, NULL) == v;
}

int hb_dtoa_digits(double v, char d[17], int *k)
{
	v = fabs(v);
	uint64_t bits;
	memcpy(&bits, &v, sizeof bits);
	int be = (int)((bits >> 52) & 0x7FF);
	uint64_t frac = bits & (HIDDEN_BIT - 1);
	diy_fp x = be ? (diy_fp){ frac | HIDDEN_BIT, be - 1075 } : (diy_fp){ frac, 1 - 1075 };
	/* The halfway points to the neighbours. Below a power of two (not the
	 * smallest normal, whose lower neighbour is a subnormal as far away as
	 * the upper one) the lower neighbour is half as far. */
	diy_fp plus = normalize((diy_fp){ (x.f << 1) + 1, x.e - 1 });
	diy_fp minus = (x.f == HIDDEN_BIT && be > 1) ? (diy_fp){ (x.f << 2) - 1, x.e - 2 }
						      : (diy_fp){ (x.f << 1) - 1, x.e - 1 };
	minus.f <<= minus.e - plus.e;
	minus.e = plus.e;
	int K;
	diy_fp c = cached_power(plus.e, &K);
	diy_fp w = mul(normalize(x), c), wp = mul(plus, c), wm = mul(minus, c);
	/* Narrowed by one unit at each end: every decimal inside reads back as v. */
	int k_in = K, n = digit_gen(w, (diy_fp){ wp.f - 1, wp.e }, wp.f - wm.f - 2, d, &k_in);
	/* Widened by one unit instead, the interval holds every decimal that
	 * reads back as v, and maybe a few that do not: when its shortest is
	 * shorter (a decimal in the sliver between the two, such as
	 * 0.000766369185 or a halfway point that reads back by the tie rule,
	 * 1e23), strtod decides. Rare, so the cost is too. */
	char wide[17];
	int k_out = K, nw = digit_gen(w, (diy_fp){ wp.f + 1, wp.e }, wp.f - wm.f + 2, wide, &k_out);
	if (nw < n && reads_back(wide, nw, k_out, v)) {
		memcpy(d, wide, (size_t)nw);
		n = nw;
		k_in = k_out;
	}
	K = k_in;
	/* the weeding can leave a zero at the end: the same number without it */
	while (n > 1 && d[n - 1] == '0') {
		n--;
		K++;
	}
	*k = K;
	return n;
}

size_t hb_dtoa_g(char *buf, double v, int precision)
{
	char *p = buf;
	if (signbit(v)) {
		*p++ = '-';
		v = -v;
	}
	if (isnan(v) || isinf(v) || v == 0) {
		strcpy(p, isnan(v) ? "nan" : isinf(v) ? "inf" : "0");
		return strlen(buf);
	}
	char d[17];
	int k, n = hb_dtoa_digits(v, d, &k);
	int x = k + n - 1; /* decimal exponent of the first digit */
	if (precision > 17)
		precision = 17;
	int P = precision > n ? precision : n;
	if (x < -4 || x >= P) {
		*p++ = d[0];
		if (n > 1) {
			*p++ = '.';
			memcpy(p, d + 1, (size_t)n - 1);
			p += n - 1;
		}
		*p++ = 'e';
		*p++ = x < 0 ? '-' : '+';
		int ax = x < 0 ? -x : x;
		if (ax >= 100) {
			*p++ = (char)('0' + ax / 100);
			ax %= 100;
		}
		*p++ = (char)('0' + ax / 10);
		*p++ = (char)('0' + ax % 10);
	} else if (x >= 0) {
		if (n <= x + 1) {
			memcpy(p, d, (size_t)n);
			p += n;
			memset(p, '0', (size_t)(x + 1 - n));
			p += x + 1 - n;
		} else {
			memcpy(p, d, (size_t)x + 1);
			p += x + 1;
			*p++ = '.';
			memcpy(p, d + x + 1, (size_t)(n - x - 1));
			p += n - x - 1;
		}
	} else {
		*p++ = '0';
		*p++ = '.';
		memset(p, '0', (size_t)(-x - 1));
		p += -x - 1;
		memcpy(p, d, (size_t)n);
		p += n;
	}
	*p = '\0';
	return (size_t)(p - buf);
}
