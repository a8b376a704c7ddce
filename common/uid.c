/* common/uid.c - UUID version 7 identities: RFC 9562 layout, random bits from getrandom(2), monotonic within a process */
#include <errno.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>
#include <sys/random.h>
#include <time.h>

#include "hb_uid.h"

void hb_uid_layout(int64_t unix_ms, uint16_t rand_a, uint64_t rand_b, uint8_t b[16])
{
	uint64_t ms = (uint64_t)unix_ms & 0xFFFFFFFFFFFFull;
	for (int i = 0; i < 6; i++)
		b[i] = (uint8_t)(ms >> (40 - 8 * i));
	b[6] = (uint8_t)(0x70 | ((rand_a >> 8) & 0x0F));
	b[7] = (uint8_t)(rand_a & 0xFF);
	uint64_t rb = rand_b & 0x3FFFFFFFFFFFFFFFull;
	b[8] = (uint8_t)(0x80 | (rb >> 56));
	for (int i = 9; i < 16; i++)
		b[i] = (uint8_t)(rb >> (8 * (15 - i)));
}

void hb_uid_format(const uint8_t b[16], char out[HB_UID_TEXT_LEN])
{
	static const char hex[] = "0123456789abcdef";
	char *o = out;
	for (int i = 0; i < 16; i++) {
		if (i == 4 || i == 6 || i == 8 || i == 10)
			*o++ = '-';
		*o++ = hex[b[i] >> 4];
		*o++ = hex[b[i] & 15];
	}
	*o = '\0';
}

static int hexval(char c)
{
	if (c >= '0' && c <= '9')
		return c - '0';
	if (c >= 'a' && c <= 'f')
		return c - 'a' + 10;
	if (c >= 'A' && c <= 'F')
		return c - 'A' + 10;
	return -1;
}

int hb_uid_parse(const char *text, uint8_t b[16])
{
	if (!text || strlen(text) != 36)
		return HB_ERR_ARG;
	int k = 0;
	for (int i = 0; i < 36;) {
		if (i == 8 || i == 13 || i == 18 || i == 23) {
			if (text[i] != '-')
				return HB_ERR_ARG;
			i++;
			continue;
		}
		int hi = hexval(text[i]), lo = hexval(text[i + 1]);
		if (hi < 0 || lo < 0)
			return HB_ERR_ARG;
		b[k++] = (uint8_t)(hi << 4 | lo);
		i += 2;
	}
	return HB_OK;
}

bool hb_uid_is_v7(const char *text)
{
	uint8_t b[16];
	return hb_uid_parse(text, b) == HB_OK && (b[6] >> 4) == 7 && (b[8] >> 6) == 2;
}

int64_t hb_uid_time_ms(const char *text)
{
	uint8_t b[16];
	if (!hb_uid_is_v7(text) || hb_uid_parse(text, b) != HB_OK)
		return -1;
	uint64_t ms = 0;
	for (int i = 0; i < 6; i++)
		ms = ms << 8 | b[i];
	return (int64_t)ms;
}

/* Fills buf from the kernel's random source; getrandom may return short on a signal. */
static int random_bytes(uint8_t *buf, size_t n)
{
	size_t got = 0;
	while (got < n) {
		ssize_t r = getrandom(buf + got, n - got, 0);
		if (r < 0) {
			if (errno == EINTR)
				continue;
			return HB_ERR_IO;
		}
		got += (size_t)r;
	}
	return HB_OK;
}

/* 74 random bits as rand_a (12) and rand_b (62). */
static int random_fields(uint16_t *ra, uint64_t *rb)
{
	uint8_t r[10];
	int rc = random_bytes(r, sizeof r);
	if (rc != HB_OK)
		return rc;
	*ra = (uint16_t)((r[0] << 8 | r[1]) & 0x0FFF);
	uint64_t v = 0;
	for (int i = 2; i < 10; i++)
		v = v << 8 | r[i];
	*rb = v & 0x3FFFFFFFFFFFFFFFull;
	return HB_OK;
}

int hb_uid_at(int64_t unix_ms, char out[HB_UID_TEXT_LEN])
{
	uint16_t ra;
	uint64_t rb;
	int rc = random_fields(&ra, &rb);
	if (rc != HB_OK)
		return rc;
	uint8_t b[16];
	hb_uid_layout(unix_ms < 0 ? 0 : unix_ms, ra, rb, b);
	hb_uid_format(b, out);
	return HB_OK;
}

static pthread_mutex_t last_lock = PTHREAD_MUTEX_INITIALIZER;
static int64_t last_ms = -1;
static uint16_t last_ra;
static uint64_t last_rb;

int hb_uid_new(char out[HB_UID_TEXT_LEN])
{
	struct timespec ts;
	clock_gettime(CLOCK_REALTIME, &ts);
	int64_t ms = (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
	uint16_t ra;
	uint64_t rb;
	int rc = random_fields(&ra, &rb);
	if (rc != HB_OK)
		return rc;
	pthread_mutex_lock(&last_lock);
	if (ms <= last_ms) {
		/* same millisecond or the clock stepped back: the last identity plus one */
		ms = last_ms;
		rb = last_rb + 1;
		ra = last_ra;
		if (rb > 0x3FFFFFFFFFFFFFFFull) {
			rb = 0;
			if (++ra > 0x0FFF) {
				ra = 0;
				ms++;
			}
		}
	}
	last_ms = ms;
	last_ra = ra;
	last_rb = rb;
	pthread_mutex_unlock(&last_lock);
	uint8_t b[16];
	hb_uid_layout(ms, ra, rb, b);
	hb_uid_format(b, out);
	return HB_OK;
}
