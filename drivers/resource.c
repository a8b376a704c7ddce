/* drivers/resource.c - parses resource strings (serial:, tty:, tcp://, sim:) into hb_resource */
#include <ctype.h>
#include <errno.h>
#include <limits.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hb_drivers.h"

#define RES_PORT_DEFAULT 5025 /* SCPI raw socket port, IANA "scpi-raw" */
#define RES_TIMEOUT_DEFAULT 2000
#define RES_TIMEOUT_MIN 1
#define RES_TIMEOUT_MAX 600000
#define RES_BAUD_MIN 50
#define RES_BAUD_MAX 4000000

static const char accepted_forms[] =
	"accepted: serial:PATH, tty:PATH, tcp://HOST[:PORT], sim:lcr, sim:supply";

/* The message starts with the resource text so the user sees which of
 * several resources on a command line is wrong. */
static int fail(char *err, size_t errlen, const char *text, const char *fmt, ...)
	__attribute__((format(printf, 4, 5)));

static int fail(char *err, size_t errlen, const char *text, const char *fmt, ...)
{
	if (err && errlen) {
		int n = snprintf(err, errlen, "resource '%.120s': ", text);
		if (n < 0)
			n = 0;
		if ((size_t)n < errlen) {
			va_list ap;
			va_start(ap, fmt);
			vsnprintf(err + n, errlen - (size_t)n, fmt, ap);
			va_end(ap);
		}
	}
	return HB_ERR_ARG;
}

/* Decimal digits only: "+5", " 5", "5x" and "0x10" are all rejected. */
static bool parse_uint(const char *s, long min, long max, int *out)
{
	if (!*s || strlen(s) > 9)
		return false;
	for (const char *p = s; *p; p++)
		if (!isdigit((unsigned char)*p))
			return false;
	long v = strtol(s, NULL, 10);
	if (v < min || v > max)
		return false;
	*out = (int)v;
	return true;
}

static void resource_defaults(hb_resource *r)
{
	memset(r, 0, sizeof *r);
	r->baud = 9600;
	r->data_bits = 8;
	r->parity = HB_PARITY_NONE;
	r->stop_bits = 1;
	r->flow = HB_FLOW_NONE;
	r->timeout_ms = RES_TIMEOUT_DEFAULT;
	r->eol = HB_EOL_LF;
	r->port = 0;
}

static int copy_text(char *dst, size_t cap, const char *src, size_t len)
{
	if (len >= cap)
		return -1;
	memcpy(dst, src, len);
	dst[len] = '\0';
	return 0;
}

static int parse_tcp_address(const char *text, const char *addr, size_t len, hb_resource *r, char *err,
			     size_t errlen)
{
	char hostport[HB_RES_TEXT_MAX];
	if (len == 0)
		return fail(err, errlen, text, "no host after tcp://; write tcp://HOST[:PORT]");
	if (copy_text(hostport, sizeof hostport, addr, len) < 0)
		return fail(err, errlen, text, "address longer than %d characters", HB_RES_TEXT_MAX - 1);

	const char *host = hostport;
	char *port_text = NULL;
	if (hostport[0] == '[') {
		/* IPv6 literal: tcp://[::1]:5025 */
		char *close = strchr(hostport, ']');
		if (!close)
			return fail(err, errlen, text, "IPv6 address '%s' lacks ']'; write tcp://[ADDR]:PORT", hostport);
		*close = '\0';
		host = hostport + 1;
		if (close[1] == ':')
			port_text = close + 2;
		else if (close[1] != '\0')
			return fail(err, errlen, text, "unexpected '%s' after IPv6 address; write tcp://[ADDR]:PORT",
				    close + 1);
	} else {
		char *colon = strchr(hostport, ':');
		if (colon) {
			if (strchr(colon + 1, ':'))
				return fail(err, errlen, text,
					    "address '%s' has several ':'; put IPv6 addresses in brackets: tcp://[ADDR]:PORT",
					    hostport);
			*colon = '\0';
			port_text = colon + 1;
		}
	}
	if (!*host)
		return fail(err, errlen, text, "empty host; write tcp://HOST[:PORT]");
	r->port = RES_PORT_DEFAULT;
	if (port_text && !parse_uint(port_text, 1, 65535, &r->port))
		return fail(err, errlen, text, "port '%s' is not a number in 1..65535", port_text);
	snprintf(r->path, sizeof r->path, "%s", host);
	return HB_OK;
}

static int parse_option(const char *text, char *opt, hb_resource *r, unsigned *seen, char *err, size_t errlen)
{
	static const char *const names[] = { "timeout", "eol", "profile", "baud", "data", "parity", "stop", "flow", "echo" };
	char *eq = strchr(opt, '=');
	if (!*opt)
		return fail(err, errlen, text, "empty option (stray '&' or '?')");
	if (eq)
		*eq = '\0';
	const char *value = eq ? eq + 1 : NULL;

	size_t which = 0;
	while (which < sizeof names / sizeof names[0] && strcmp(opt, names[which]) != 0)
		which++;
	if (which == sizeof names / sizeof names[0])
		return fail(err, errlen, text,
			    "unknown option '%s'; accepted: timeout, eol, profile, echo (all), baud, data, parity, stop, flow "
			    "(serial:, tty:)",
			    opt);
	if (!value || !*value)
		return fail(err, errlen, text, "option '%s' has no value; write %s=VALUE", opt, opt);
	if (*seen & (1u << which))
		return fail(err, errlen, text, "option '%s' given twice", opt);
	*seen |= 1u << which;
	bool line_option = which >= 3 && which <= 7;
	if (line_option && r->kind != HB_RES_SERIAL && r->kind != HB_RES_TTY)
		return fail(err, errlen, text, "option '%s' applies to serial: and tty: only", opt);

	switch (which) {
	case 0:
		if (!parse_uint(value, RES_TIMEOUT_MIN, RES_TIMEOUT_MAX, &r->timeout_ms))
			return fail(err, errlen, text, "timeout '%s' is not a whole number of ms in %d..%d", value,
				    RES_TIMEOUT_MIN, RES_TIMEOUT_MAX);
		break;
	case 1:
		if (strcmp(value, "lf") == 0)
			r->eol = HB_EOL_LF;
		else if (strcmp(value, "crlf") == 0)
			r->eol = HB_EOL_CRLF;
		else
			return fail(err, errlen, text, "eol '%s' unknown; accepted: lf, crlf", value);
		break;
	case 2:
		if (strlen(value) >= sizeof r->profile)
			return fail(err, errlen, text, "profile name longer than %zu characters", sizeof r->profile - 1);
		snprintf(r->profile, sizeof r->profile, "%s", value);
		break;
	case 3:
		if (!parse_uint(value, RES_BAUD_MIN, RES_BAUD_MAX, &r->baud))
			return fail(err, errlen, text, "baud '%s' is not a whole number in %d..%d", value, RES_BAUD_MIN,
				    RES_BAUD_MAX);
		break;
	case 4:
		if (!parse_uint(value, 5, 8, &r->data_bits))
			return fail(err, errlen, text, "data '%s' unknown; accepted: 5, 6, 7, 8", value);
		break;
	case 5:
		if (strcmp(value, "none") == 0)
			r->parity = HB_PARITY_NONE;
		else if (strcmp(value, "odd") == 0)
			r->parity = HB_PARITY_ODD;
		else if (strcmp(value, "even") == 0)
			r->parity = HB_PARITY_EVEN;
		else
			return fail(err, errlen, text, "parity '%s' unknown; accepted: none, odd, even", value);
		break;
	case 6:
		if (!parse_uint(value, 1, 2, &r->stop_bits))
			return fail(err, errlen, text, "stop '%s' unknown; accepted: 1, 2", value);
		break;
	case 7:
		if (strcmp(value, "none") == 0)
			r->flow = HB_FLOW_NONE;
		else if (strcmp(value, "rtscts") == 0)
			r->flow = HB_FLOW_RTSCTS;
		else if (strcmp(value, "xonxoff") == 0)
			r->flow = HB_FLOW_XONXOFF;
		else
			return fail(err, errlen, text, "flow '%s' unknown; accepted: none, rtscts, xonxoff", value);
		break;
	case 8:
		/* an instrument that echoes each command line before its reply */
		if (strcmp(value, "yes") == 0)
			r->echo = true;
		else if (strcmp(value, "no") == 0)
			r->echo = false;
		else
			return fail(err, errlen, text, "echo '%s' unknown; accepted: yes, no", value);
		break;
	}
	return HB_OK;
}

int hb_resource_parse(const char *text, hb_resource *out, char *err, size_t errlen)
{
	if (err && errlen)
		err[0] = '\0';
	if (!out)
		return HB_ERR_ARG;
	resource_defaults(out);
	if (!text || !*text)
		return fail(err, errlen, text ? text : "", "empty; %s", accepted_forms);
	if (strlen(text) >= 2 * HB_RES_TEXT_MAX)
		return fail(err, errlen, text, "longer than %d characters", 2 * HB_RES_TEXT_MAX - 1);

	const char *body;
	if (strncmp(text, "serial:", 7) == 0) {
		out->kind = HB_RES_SERIAL;
		body = text + 7;
	} else if (strncmp(text, "tty:", 4) == 0) {
		out->kind = HB_RES_TTY;
		body = text + 4;
	} else if (strncmp(text, "tcp://", 6) == 0) {
		out->kind = HB_RES_TCP;
		body = text + 6;
	} else if (strncmp(text, "tcp:", 4) == 0) {
		return fail(err, errlen, text, "write tcp://HOST[:PORT] (two slashes)");
	} else if (strncmp(text, "sim:", 4) == 0) {
		out->kind = HB_RES_SIM;
		body = text + 4;
	} else {
		const char *colon = strchr(text, ':');
		int plen = colon ? (int)(colon - text) : (int)strlen(text);
		return fail(err, errlen, text, "unknown transport '%.*s'; %s", plen > 40 ? 40 : plen, text,
			    accepted_forms);
	}

	const char *query = strchr(body, '?');
	size_t body_len = query ? (size_t)(query - body) : strlen(body);

	int rc;
	switch (out->kind) {
	case HB_RES_SERIAL:
	case HB_RES_TTY:
		if (body_len == 0)
			return fail(err, errlen, text, "no device path; write %s/dev/NAME",
				    out->kind == HB_RES_SERIAL ? "serial:" : "tty:");
		if (copy_text(out->path, sizeof out->path, body, body_len) < 0)
			return fail(err, errlen, text, "device path longer than %d characters", HB_RES_TEXT_MAX - 1);
		break;
	case HB_RES_TCP:
		rc = parse_tcp_address(text, body, body_len, out, err, errlen);
		if (rc < 0)
			return rc;
		break;
	case HB_RES_SIM:
		if (body_len == 3 && strncmp(body, "lcr", 3) == 0)
			snprintf(out->path, sizeof out->path, "lcr");
		else if (body_len == 6 && strncmp(body, "supply", 6) == 0)
			snprintf(out->path, sizeof out->path, "supply");
		else
			return fail(err, errlen, text, "simulated instrument '%.*s' unknown; accepted: lcr, supply",
				    body_len > 40 ? 40 : (int)body_len, body);
		break;
	}

	if (!query)
		return HB_OK;
	char opts[2 * HB_RES_TEXT_MAX];
	snprintf(opts, sizeof opts, "%s", query + 1);
	if (!opts[0])
		return fail(err, errlen, text, "'?' without options; write ?key=value[&key=value]");
	unsigned seen = 0;
	/* strtok_r would skip empty fields ("a&&b"); walk by hand to report them. */
	char *opt = opts;
	for (;;) {
		char *amp = strchr(opt, '&');
		if (amp)
			*amp = '\0';
		rc = parse_option(text, opt, out, &seen, err, errlen);
		if (rc < 0)
			return rc;
		if (!amp)
			break;
		opt = amp + 1;
	}
	return HB_OK;
}
