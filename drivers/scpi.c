/* drivers/scpi.c - SCPI messages over any link: framing, stale-input draining, reply shape checks, IEEE 488.2 commands, trace */
#include <ctype.h>
#include <errno.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <time.h>

#include "../common/hb_text.h"
#include "link_internal.h"

/* Bounds the error-queue loop: IEEE 488.2 queues are short (common
 * practice: 10..100 entries), and a peer that never says "0" must not
 * keep us reading forever. */
#define SCPI_ERROR_READS_MAX 64
#define SCPI_COMMAND_MAX 1024
#define SCPI_ERRMSG_MAX 480
#define SCPI_QUICK_DRAIN_MS 100

/* SCPI-99 vol. 1, 7.2.1.5: +INF is 9.9E37, -INF -9.9E37, NaN 9.91E37. */
#define SCPI_OVERLOAD_MIN 9.9e37

struct hb_scpi {
	hb_link *link;
	hb_resource res;
	FILE *trace;
	char tag[64];                /* trace column: "lcr", "supply", or the link name */
	char name[HB_LINK_NAME_MAX]; /* link name, prefixes messages */
	/* A previous exchange failed or timed out: its reply may still be on
	 * the way, so the next command waits for a quiet line first. */
	bool unsettled;
	bool echo;      /* each command comes back as a line first: read and dropped */
	bool echo_seen; /* *IDN? was echoed while echo was off */
	char errmsg[SCPI_ERRMSG_MAX];
};

/* ---------------- C-locale numbers ---------------- */

/* IEEE 488.2 NR1/NR2/NR3 shapes only: no hex floats, no trailing junk. */
static bool decimal_shape(const char *s)
{
	const char *p = s;
	if (*p == '+' || *p == '-')
		p++;
	size_t digits = 0;
	while (isdigit((unsigned char)*p))
		p++, digits++;
	if (*p == '.') {
		p++;
		while (isdigit((unsigned char)*p))
			p++, digits++;
	}
	if (digits == 0)
		return false;
	if (*p == 'e' || *p == 'E') {
		p++;
		if (*p == '+' || *p == '-')
			p++;
		if (!isdigit((unsigned char)*p))
			return false;
		while (isdigit((unsigned char)*p))
			p++;
	}
	return *p == '\0';
}

int hb_scpi_parse_double(const char *text, double *value)
{
	if (!text || !value)
		return HB_ERR_ARG;
	char buf[80];
	while (isspace((unsigned char)*text))
		text++;
	size_t n = strlen(text);
	while (n > 0 && isspace((unsigned char)text[n - 1]))
		n--;
	if (n == 0 || n >= sizeof buf)
		return HB_ERR_PROTOCOL;
	memcpy(buf, text, n);
	buf[n] = '\0';

	/* Some instruments spell the special values out. */
	const char *word = buf + (buf[0] == '+' || buf[0] == '-');
	if (strcasecmp(word, "NAN") == 0) {
		*value = NAN;
		return HB_ERR_OVERLOAD;
	}
	if (strcasecmp(word, "INF") == 0 || strcasecmp(buf, "NINF") == 0) {
		*value = (buf[0] == '-' || buf[0] == 'N' || buf[0] == 'n') ? -INFINITY : INFINITY;
		return HB_ERR_OVERLOAD;
	}
	if (!decimal_shape(buf))
		return HB_ERR_PROTOCOL;
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	if (cn.c == (locale_t)0)
		return HB_ERR_NOMEM;
	errno = 0;
	char *end = NULL;
	double v = strtod(buf, &end);
	int e = errno;
	hb_c_numeric_leave(&cn);
	if (!end || *end != '\0')
		return HB_ERR_PROTOCOL;
	if (e == ERANGE && (isinf(v) || fabs(v) > 1.0))
		return HB_ERR_PROTOCOL; /* beyond double range: not a reading either */
	*value = v;
	if (fabs(v) >= SCPI_OVERLOAD_MIN * (1.0 - 1e-9))
		return HB_ERR_OVERLOAD;
	return HB_OK;
}

int hb_scpi_format_double(char *buf, size_t cap, double value)
{
	if (!buf || cap == 0)
		return HB_ERR_ARG;
	buf[0] = '\0';
	if (!isfinite(value))
		return HB_ERR_ARG;
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	if (cn.c == (locale_t)0)
		return HB_ERR_NOMEM;
	/* 12 significant digits: above any instrument's resolution, below
	 * the noise of binary fractions (0.1 + 0.2 prints as 0.3). */
	int n = snprintf(buf, cap, "%.12g", value);
	hb_c_numeric_leave(&cn);
	if (n < 0 || (size_t)n >= cap) {
		buf[0] = '\0';
		return HB_ERR_ARG;
	}
	return HB_OK;
}

/* ---------------- trace ---------------- */

static void trace_escaped(FILE *f, const char *text, size_t len)
{
	for (size_t i = 0; i < len; i++) {
		unsigned char c = (unsigned char)text[i];
		switch (c) {
		case '\n': fputs("\\n", f); break;
		case '\r': fputs("\\r", f); break;
		case '\t': fputs("\\t", f); break;
		case '\\': fputs("\\\\", f); break;
		default:
			if (c < 0x20 || c >= 0x7f)
				fprintf(f, "\\x%02x", c);
			else
				fputc(c, f);
		}
	}
}

/* direction: '>' sent, '<' received, '~' discarded, '!' error or time-out. */
static void trace_event(hb_scpi *s, char direction, const char *text, size_t len, const char *note)
{
	if (!s->trace)
		return;
	struct timespec ts;
	clock_gettime(CLOCK_REALTIME, &ts);
	struct tm tm;
	gmtime_r(&ts.tv_sec, &tm);
	char stamp[32];
	strftime(stamp, sizeof stamp, "%Y-%m-%dT%H:%M:%S", &tm);
	fprintf(s->trace, "%s.%03ldZ %s %c ", stamp, ts.tv_nsec / 1000000L, s->tag, direction);
	if (note)
		fputs(note, s->trace);
	if (text) {
		if (note)
			fputs(": ", s->trace);
		trace_escaped(s->trace, text, len);
	}
	fputc('\n', s->trace);
	fflush(s->trace);
}

/* ---------------- handle ---------------- */

static int scpi_fail(hb_scpi *s, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

static int scpi_fail(hb_scpi *s, int status, const char *fmt, ...)
{
	char text[SCPI_ERRMSG_MAX];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(text, sizeof text, fmt, ap);
	va_end(ap);
	snprintf(s->errmsg, sizeof s->errmsg, "%s", text);
	trace_event(s, '!', NULL, 0, s->errmsg);
	return status;
}

int hb_scpi_open(const char *resource, hb_scpi **out)
{
	if (!out)
		return HB_ERR_ARG;
	*out = NULL;
	hb_scpi *s = calloc(1, sizeof *s);
	if (!s)
		return HB_ERR_NOMEM;
	*out = s;
	snprintf(s->tag, sizeof s->tag, "scpi");
	snprintf(s->name, sizeof s->name, "scpi");
	char err[HB_LINK_ERRMSG_MAX];
	int rc = hb_resource_parse(resource, &s->res, err, sizeof err);
	if (rc < 0) {
		snprintf(s->errmsg, sizeof s->errmsg, "%s", err);
		return rc;
	}
	rc = hb_link_open(&s->res, &s->link);
	if (!s->link)
		return scpi_fail(s, HB_ERR_NOMEM, "out of memory opening %s", resource);
	snprintf(s->tag, sizeof s->tag, "%.60s", s->link->name);
	snprintf(s->name, sizeof s->name, "%s", s->link->name);
	s->echo = s->res.echo;
	if (rc < 0) {
		snprintf(s->errmsg, sizeof s->errmsg, "%s", hb_link_errmsg(s->link));
		hb_link_close(s->link);
		s->link = NULL;
		return rc;
	}
	return HB_OK;
}

void hb_scpi_close(hb_scpi *scpi)
{
	if (!scpi)
		return;
	hb_link_close(scpi->link);
	free(scpi);
}

const char *hb_scpi_errmsg(const hb_scpi *scpi)
{
	if (!scpi)
		return "out of memory";
	return scpi->errmsg[0] ? scpi->errmsg : "no error";
}

const hb_resource *hb_scpi_resource(const hb_scpi *scpi)
{
	return scpi ? &scpi->res : NULL;
}

void hb_scpi_set_trace(hb_scpi *scpi, FILE *trace, const char *tag)
{
	if (!scpi)
		return;
	scpi->trace = trace;
	if (tag && *tag)
		snprintf(scpi->tag, sizeof scpi->tag, "%s", tag);
}

static int check_usable(hb_scpi *s)
{
	if (!s)
		return HB_ERR_ARG;
	if (!s->link)
		return scpi_fail(s, HB_ERR_CLOSED, "link is not open");
	return HB_OK;
}

/* Before a command: after a failure, wait until the line has been quiet
 * long enough for a late reply to have come and gone; otherwise just take
 * whatever is already waiting (an unsolicited line, an echo), so neither
 * can be mistaken for the reply to what we send next. */
static int settle(hb_scpi *s, bool before_query)
{
	char keep[160];
	size_t kept = 0;
	int timeout = s->res.timeout_ms > 0 ? s->res.timeout_ms : 2000;
	int rc;
	if (s->unsettled) {
		int quiet = timeout < 1000 ? timeout : 1000;
		if (quiet < 20)
			quiet = 20;
		rc = hb_link_drain_keep(s->link, quiet, timeout + 2 * quiet, keep, sizeof keep, &kept);
	} else if (before_query) {
		rc = hb_link_drain_keep(s->link, 0, SCPI_QUICK_DRAIN_MS, keep, sizeof keep, &kept);
	} else {
		return HB_OK;
	}
	if (rc > 0) {
		char note[64];
		snprintf(note, sizeof note, "discarded %d stale byte%s", rc, rc == 1 ? "" : "s");
		trace_event(s, '~', keep, kept, note);
	}
	if (rc < 0)
		return scpi_fail(s, rc, "%s", hb_link_errmsg(s->link));
	s->unsettled = false;
	return HB_OK;
}

/* Whether line is command sent back, blanks at the ends aside (a CR of a
 * CRLF ending may come back as a blank). */
static bool is_echo(const char *line, const char *command)
{
	while (isspace((unsigned char)*line))
		line++;
	size_t n = strlen(line);
	while (n > 0 && isspace((unsigned char)line[n - 1]))
		n--;
	return n == strlen(command) && strncmp(line, command, n) == 0;
}

/* Reads the echo of command and drops it; anything else in its place is a
 * protocol error (the line is settled before the next command). */
static int read_echo(hb_scpi *s, const char *command)
{
	char line[SCPI_COMMAND_MAX + 8];
	int rc = hb_link_read_line(s->link, line, sizeof line, s->res.timeout_ms);
	if (rc < 0) {
		s->unsettled = true;
		return scpi_fail(s, rc, "%s, waiting for the echo of '%.60s' (echo is on: the instrument should send "
				    "each command back)", hb_link_errmsg(s->link), command);
	}
	trace_event(s, '<', line, (size_t)rc, "echo");
	if ((size_t)rc != strlen(line) || !is_echo(line, command)) {
		s->unsettled = true;
		return scpi_fail(s, HB_ERR_PROTOCOL, "%s: expected the echo of '%.60s', got '%.60s' (is echo on for an "
				    "instrument that does not echo?)", s->name, command, line);
	}
	return HB_OK;
}

void hb_scpi_set_echo(hb_scpi *scpi, bool echo)
{
	if (scpi)
		scpi->echo = echo;
}

bool hb_scpi_echo_seen(const hb_scpi *scpi)
{
	return scpi && scpi->echo_seen;
}

static int send_command(hb_scpi *s, const char *command)
{
	size_t len = command ? strlen(command) : 0;
	if (len == 0)
		return scpi_fail(s, HB_ERR_ARG, "%s: empty command", s->name);
	if (strpbrk(command, "\r\n"))
		return scpi_fail(s, HB_ERR_ARG, "%s: command '%.60s' contains a line end", s->name, command);
	char buf[SCPI_COMMAND_MAX + 2];
	if (len > SCPI_COMMAND_MAX)
		return scpi_fail(s, HB_ERR_ARG, "%s: command longer than %d bytes", s->name, SCPI_COMMAND_MAX);
	/* Command and line end in one buffer, one write: a terminator in a
	 * separate packet can make socket instruments parse half a command. */
	memcpy(buf, command, len);
	if (s->res.eol == HB_EOL_CRLF)
		buf[len++] = '\r';
	buf[len++] = '\n';
	trace_event(s, '>', command, strlen(command), NULL);
	int rc = hb_link_write(s->link, buf, len, s->res.timeout_ms);
	if (rc < 0) {
		s->unsettled = true;
		return scpi_fail(s, rc, "%s, sending '%.60s'", hb_link_errmsg(s->link), command);
	}
	return s->echo ? read_echo(s, command) : HB_OK;
}

int hb_scpi_write(hb_scpi *scpi, const char *command)
{
	int rc = check_usable(scpi);
	if (rc < 0)
		return rc;
	rc = settle(scpi, false);
	if (rc < 0)
		return rc;
	return send_command(scpi, command);
}

int hb_scpi_query(hb_scpi *scpi, const char *command, char *reply, size_t cap)
{
	int rc = check_usable(scpi);
	if (rc < 0)
		return rc;
	if (!reply || cap == 0)
		return scpi_fail(scpi, HB_ERR_ARG, "%s: no room for the reply to '%.60s'", scpi->name,
				 command ? command : "");
	reply[0] = '\0';
	rc = settle(scpi, true);
	if (rc < 0)
		return rc;
	rc = send_command(scpi, command);
	if (rc < 0)
		return rc;
	rc = hb_link_read_line(scpi->link, reply, cap, scpi->res.timeout_ms);
	if (rc < 0) {
		scpi->unsettled = true;
		reply[0] = '\0';
		return scpi_fail(scpi, rc, "%s, after '%.60s'", hb_link_errmsg(scpi->link), command);
	}
	trace_event(scpi, '<', reply, (size_t)rc, NULL);
	if ((size_t)rc != strlen(reply)) {
		scpi->unsettled = true;
		reply[0] = '\0';
		return scpi_fail(scpi, HB_ERR_PROTOCOL, "%s: reply to '%.60s' contains a NUL byte (garbled line?)",
				 scpi->name, command);
	}
	return HB_OK;
}

int hb_scpi_read_line(hb_scpi *scpi, char *reply, size_t cap)
{
	int rc = check_usable(scpi);
	if (rc < 0)
		return rc;
	if (!reply || cap == 0)
		return scpi_fail(scpi, HB_ERR_ARG, "%s: no room for a reply", scpi->name);
	reply[0] = '\0';
	rc = hb_link_read_line(scpi->link, reply, cap, scpi->res.timeout_ms);
	if (rc < 0) {
		scpi->unsettled = true;
		reply[0] = '\0';
		return scpi_fail(scpi, rc, "%s", hb_link_errmsg(scpi->link));
	}
	trace_event(scpi, '<', reply, (size_t)rc, NULL);
	if ((size_t)rc != strlen(reply)) {
		scpi->unsettled = true;
		reply[0] = '\0';
		return scpi_fail(scpi, HB_ERR_PROTOCOL, "%s: reply contains a NUL byte (garbled line?)", scpi->name);
	}
	return HB_OK;
}

int hb_scpi_drain(hb_scpi *scpi)
{
	int rc = check_usable(scpi);
	if (rc < 0)
		return rc;
	/* settle() waits for a quiet line when unsettled: what a late or
	 * garbled reply leaves behind is gone before the next question. */
	scpi->unsettled = true;
	return settle(scpi, false);
}

/* A reply of the wrong shape may belong to an earlier question, so the
 * line is settled again before the next command. */
static int shape_error(hb_scpi *s, const char *command, const char *reply, const char *expected)
{
	s->unsettled = true;
	return scpi_fail(s, HB_ERR_PROTOCOL, "%s: reply to '%.60s' is not %s: '%.80s'", s->name, command, expected,
			 reply);
}

int hb_scpi_query_double(hb_scpi *scpi, const char *command, double *value)
{
	char reply[128];
	if (!value)
		return HB_ERR_ARG;
	int rc = hb_scpi_query(scpi, command, reply, sizeof reply);
	if (rc < 0)
		return rc;
	rc = hb_scpi_parse_double(reply, value);
	if (rc == HB_ERR_OVERLOAD)
		return scpi_fail(scpi, HB_ERR_OVERLOAD, "%s: '%.60s' answered the overload/not-a-number value '%s'",
				 scpi->name, command, reply);
	if (rc < 0)
		return shape_error(scpi, command, reply, "a number");
	return HB_OK;
}

static void copy_trimmed(char *dst, size_t cap, const char *src, size_t len)
{
	while (len > 0 && isspace((unsigned char)*src))
		src++, len--;
	while (len > 0 && isspace((unsigned char)src[len - 1]))
		len--;
	if (len >= cap)
		len = cap - 1;
	memcpy(dst, src, len);
	dst[len] = '\0';
}

int hb_scpi_idn(hb_scpi *scpi, hb_idn *idn)
{
	if (!idn)
		return HB_ERR_ARG;
	memset(idn, 0, sizeof *idn);
	char reply[sizeof idn->raw];
	int rc = hb_scpi_query(scpi, "*IDN?", reply, sizeof reply);
	if (rc < 0)
		return rc;
	if (!scpi->echo && is_echo(reply, "*IDN?")) {
		/* The instrument sent the command back: it echoes. The reply
		 * follows; the caller decides whether echo handling is set up
		 * (a profile's link.echo) or the user must be told. */
		scpi->echo_seen = true;
		rc = hb_scpi_read_line(scpi, reply, sizeof reply);
		if (rc < 0)
			return rc;
	}
	snprintf(idn->raw, sizeof idn->raw, "%s", reply);
	/* IEEE 488.2 10.14: four comma-separated fields; some instruments
	 * leave the last ones out, so only the first comma is required. */
	if (!strchr(reply, ','))
		return shape_error(scpi, "*IDN?", reply, "maker,model,serial,firmware");
	char *fields[4] = { idn->maker, idn->model, idn->serial, idn->firmware };
	const char *p = reply;
	for (int i = 0; i < 4 && p; i++) {
		const char *comma = i < 3 ? strchr(p, ',') : NULL;
		size_t len = comma ? (size_t)(comma - p) : strlen(p);
		copy_trimmed(fields[i], HB_IDN_FIELD_MAX, p, len);
		/* The fields are printed, stored and matched: a control
		 * character (an escape sequence from a confused or hostile
		 * peer) becomes '?', so no reply can drive the terminal. */
		for (char *c = fields[i]; *c; c++)
			if ((unsigned char)*c < 0x20 || *c == 0x7F)
				*c = '?';
		p = comma ? comma + 1 : NULL;
	}
	if (!idn->maker[0] && !idn->model[0])
		return shape_error(scpi, "*IDN?", reply, "maker,model,serial,firmware (maker and model empty)");
	return HB_OK;
}

int hb_scpi_opc(hb_scpi *scpi)
{
	char reply[32];
	int rc = hb_scpi_query(scpi, "*OPC?", reply, sizeof reply);
	if (rc < 0)
		return rc;
	char trimmed[32];
	copy_trimmed(trimmed, sizeof trimmed, reply, strlen(reply));
	if (strcmp(trimmed, "1") != 0 && strcmp(trimmed, "+1") != 0)
		return shape_error(scpi, "*OPC?", reply, "1");
	return HB_OK;
}

int hb_scpi_reset(hb_scpi *scpi)
{
	int rc = hb_scpi_write(scpi, "*RST");
	if (rc < 0)
		return rc;
	return hb_scpi_opc(scpi);
}

int hb_scpi_clear(hb_scpi *scpi)
{
	return hb_scpi_write(scpi, "*CLS");
}

/* SYST:ERR? reply: <code>,"<message>" (SCPI-99 vol. 2, 21.8.8). */
static bool parse_error_reply(const char *reply, hb_scpi_error *e)
{
	const char *p = reply;
	while (isspace((unsigned char)*p))
		p++;
	char *end = NULL;
	errno = 0;
	long code = strtol(p, &end, 10);
	if (end == p || errno == ERANGE || code < -32768 || code > 32767)
		return false;
	p = end;
	while (isspace((unsigned char)*p))
		p++;
	e->code = (int)code;
	e->message[0] = '\0';
	if (*p == '\0')
		return true; /* bare code: tolerated */
	if (*p != ',')
		return false;
	p++;
	size_t len = strlen(p);
	while (len > 0 && isspace((unsigned char)*p))
		p++, len--;
	while (len > 0 && isspace((unsigned char)p[len - 1]))
		len--;
	if (len >= 2 && p[0] == '"' && p[len - 1] == '"')
		p++, len -= 2;
	copy_trimmed(e->message, sizeof e->message, p, len);
	return true;
}

bool hb_scpi_parse_error(const char *reply, hb_scpi_error *error)
{
	/* Stricter than the queue reader: a probe must not take a plain
	 * numeric reply ("1") for an error code. */
	return reply && strchr(reply, ',') && strchr(reply, '"') && parse_error_reply(reply, error);
}

int hb_scpi_errors(hb_scpi *scpi, hb_scpi_error *list, size_t cap, size_t *count, bool *lost)
{
	size_t stored = 0;
	bool overflow = false;
	if (count)
		*count = 0;
	if (lost)
		*lost = false;
	int rc = check_usable(scpi);
	if (rc < 0)
		return rc;
	for (int i = 0; i < SCPI_ERROR_READS_MAX; i++) {
		char reply[HB_SCPI_ERRMSG_MAX + 32];
		rc = hb_scpi_query(scpi, "SYST:ERR?", reply, sizeof reply);
		if (rc < 0)
			goto out;
		hb_scpi_error e;
		if (!parse_error_reply(reply, &e)) {
			rc = shape_error(scpi, "SYST:ERR?", reply, "code,\"message\"");
			goto out;
		}
		if (e.code == 0) {
			rc = HB_OK;
			goto out;
		}
		if (e.code == -350) {
			overflow = true; /* the instrument dropped entries: say so, don't list it */
			continue;
		}
		if (list && stored < cap)
			list[stored++] = e;
		else
			overflow = true; /* our list is full: the rest are lost to the caller */
	}
	rc = scpi_fail(scpi, HB_ERR_PROTOCOL, "%s: error queue still not empty after %d reads of SYST:ERR?",
		       scpi->name, SCPI_ERROR_READS_MAX);
out:
	if (count)
		*count = stored;
	if (lost)
		*lost = overflow;
	return rc;
}
