/* common/hb_dtoa.h - doubles written as few decimal digits as read back to the same bits, fast (Grisu2) */
#ifndef HB_DTOA_H
#define HB_DTOA_H

#include <stddef.h>

/* Room for any double hb_dtoa_g writes: sign, 17 digits, point, "e-308", NUL. */
enum { HB_DTOA_LEN = 32 };

/*
 * The decimal digits of |v| (finite and not zero) such that strtod of
 * digits x 10^*k gives v back bit for bit, for every double: at most 17
 * digits, almost always the fewest that do (Grisu2: a few in a thousand
 * take one digit more). Writes n digits, no NUL, no trailing zero, into d
 * and returns n.
 */
int hb_dtoa_digits(double v, char d[17], int *k);

/*
 * v laid out as printf's "%.Pg" lays it out, with P the larger of
 * precision and the number of digits hb_dtoa_digits gives: exponent form
 * ("1e-07", "2.5e+20") when the decimal exponent X of the first digit is
 * below -4 or at least P, otherwise plain ("0.0001", "1234.5"); trailing
 * zeros never written. "0" and "-0" for zeros, "nan", "inf", "-inf"
 * otherwise as printf. Writes at most HB_DTOA_LEN bytes with the NUL into
 * buf and returns the length. Locale-independent: the point is always '.'.
 */
size_t hb_dtoa_g(char *buf, double v, int precision);

#endif
