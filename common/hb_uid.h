/* common/hb_uid.h - globally unique, time-ordered record identities: UUID version 7 (RFC 9562) as lower-case text */
#ifndef HB_UID_H
#define HB_UID_H

#include <stdbool.h>
#include <stdint.h>

#include "hb_status.h"

/*
 * Layout (RFC 9562 section 5.7): 48-bit big-endian Unix time in ms, version 7,
 * 12 bits rand_a, variant 0b10, 62 bits rand_b. Text is the 8-4-4-4-12 form,
 * lower case, 36 characters. The random bits come from getrandom(2), so two
 * stores made independently (two benches) never share an identity in practice
 * (74 random bits per millisecond).
 */
enum { HB_UID_TEXT_LEN = 37 }; /* 36 characters and the NUL */

/* A new identity at the current time. Within one process the identities are
 * strictly increasing (RFC 9562 section 6.2, method 2: within one millisecond,
 * or when the clock steps back, the 74 random bits of the last one plus one). */
int hb_uid_new(char out[HB_UID_TEXT_LEN]);
/* An identity stamped with the given time (ms since 1970) and fresh random
 * bits: for records made before identities existed (the migration). */
int hb_uid_at(int64_t unix_ms, char out[HB_UID_TEXT_LEN]);
/* The layout itself: time, the 12 bits of rand_a and the 62 bits of rand_b
 * placed with version and variant (for tests against the RFC's example). */
void hb_uid_layout(int64_t unix_ms, uint16_t rand_a, uint64_t rand_b, uint8_t bytes[16]);
void hb_uid_format(const uint8_t bytes[16], char out[HB_UID_TEXT_LEN]);
/* Parses the 8-4-4-4-12 text (either case); HB_ERR_ARG if malformed. */
int hb_uid_parse(const char *text, uint8_t bytes[16]);
/* True for well-formed text with version 7 and variant 0b10. */
bool hb_uid_is_v7(const char *text);
/* The millisecond time of a v7 identity; -1 if text is not one. */
int64_t hb_uid_time_ms(const char *text);

#endif
