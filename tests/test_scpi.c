/* tests/test_scpi.c - SCPI layer against a scripted TCP peer: framing, time-outs, stale input, reply shapes, error queue, numbers, trace */
#include <errno.h>
#include <locale.h>
#include <math.h>
#include <regex.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "drivers/hb_drivers.h"
#include "scripted_peer.h"
#include "comma_locale.h"

#define N(a) (sizeof(a) / sizeof((a)[0]))

static hb_scpi *open_peer(const peer *p, const char *options)
{
	char text[160];
	snprintf(text, sizeof text, "tcp://127.0.0.1:%d%s", p->port, options ? options : "?timeout=2000");
	hb_scpi *s = NULL;
	int rc = hb_scpi_open(text, &s);
	if (rc != HB_OK)
		fail_msg("open %s: %s", text, hb_scpi_errmsg(s));
	return s;
}

static void finish(hb_scpi *s, peer *p)
{
	hb_scpi_close(s);
	peer_finish(p);
	if (p->mismatches)
		fail_msg("peer: %s", p->mismatch);
}

static void test_query_and_trace(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "FREQ 1000", PEER_SILENT, NULL, 0, 0 },
		{ "FREQ?", PEER_REPLY, "1.000000E+03\r\n", 0, 0 },
		{ "TEXT?", PEER_REPLY, "a\tb\x01" "c\\\n", 0, 0 },
		{ "NONE?", PEER_SILENT, NULL, 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, "?timeout=300");
	char *log = NULL;
	size_t loglen = 0;
	FILE *trace = open_memstream(&log, &loglen);
	assert_non_null(trace);
	hb_scpi_set_trace(s, trace, "lcr");

	assert_int_equal(hb_scpi_write(s, "FREQ 1000"), HB_OK);
	double f = 0;
	assert_int_equal(hb_scpi_query_double(s, "FREQ?", &f), HB_OK);
	assert_true(f == 1000.0);
	char reply[64];
	assert_int_equal(hb_scpi_query(s, "TEXT?", reply, sizeof reply), HB_OK);
	assert_string_equal(reply, "a\tb\x01" "c\\");
	assert_int_equal(hb_scpi_query(s, "NONE?", reply, sizeof reply), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_scpi_errmsg(s), "NONE?"));
	assert_non_null(strstr(hb_scpi_errmsg(s), "300 ms"));
	hb_scpi_set_trace(s, NULL, NULL);
	fclose(trace);

	/* ISO-8601 UTC with milliseconds, the tag, the direction, escaped text. */
	regex_t re;
	assert_int_equal(regcomp(&re,
				 "^[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9]{2}:[0-9]{2}:[0-9]{2}\\.[0-9]{3}Z lcr > FREQ\\?$",
				 REG_EXTENDED | REG_NEWLINE),
		     0);
	assert_int_equal(regexec(&re, log, 0, NULL, 0), 0);
	regfree(&re);
	assert_non_null(strstr(log, "lcr > FREQ 1000\n"));
	assert_non_null(strstr(log, "lcr < 1.000000E+03\n"));
	assert_non_null(strstr(log, "lcr < a\\tb\\x01c\\\\\n"));
	assert_non_null(strstr(log, "lcr ! "));
	assert_non_null(strstr(log, "no reply within 300 ms"));
	free(log);
	finish(s, &p);
}

static void test_late_reply_does_not_shift(void **state)
{
	(void)state;
	/* The reply to MEAS? comes 150 ms after the 300 ms time-out; it must
	 * be thrown away, not taken as the answer to *IDN? or MEAS? after it. */
	static const peer_step steps[] = {
		{ "MEAS?", PEER_REPLY, "1.5E-3\n", 450, 0 },
		{ "*IDN?", PEER_REPLY, "ACME,LCR-9,77,2.1\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "2.5E-3\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, "?timeout=300");
	double v = 0;
	assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_ERR_TIMEOUT);
	hb_idn idn;
	if (hb_scpi_idn(s, &idn) != HB_OK)
		fail_msg("idn: %s", hb_scpi_errmsg(s));
	assert_string_equal(idn.maker, "ACME");
	assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_OK);
	assert_true(v == 2.5e-3);
	finish(s, &p);
}

static void test_wrong_shape_resettles(void **state)
{
	(void)state;
	/* A peer answering one behind: shape checks catch every mismatch. */
	static const peer_step steps[] = {
		{ "*OPC?", PEER_REPLY, "ACME,X,1,2\n", 0, 0 },
		{ "*IDN?", PEER_REPLY, "1\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "ACME,X,1,2\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "1.2.3\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "\xff\xfe" "1.0\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "0x1p3\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "3.25\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, "?timeout=200");
	assert_int_equal(hb_scpi_opc(s), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_scpi_errmsg(s), "*OPC?"));
	hb_idn idn;
	assert_int_equal(hb_scpi_idn(s, &idn), HB_ERR_PROTOCOL);
	assert_string_equal(idn.raw, "1");
	double v = -1;
	for (int i = 0; i < 4; i++) {
		assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_ERR_PROTOCOL);
		assert_non_null(strstr(hb_scpi_errmsg(s), "not a number"));
	}
	assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_OK);
	assert_true(v == 3.25);
	finish(s, &p);
}

static void test_stale_input_drained(void **state)
{
	(void)state;
	/* The peer answers a command that has no reply, twice; both lines
	 * are stale by the time the query goes out. */
	static const peer_step steps[] = {
		{ "*CLS", PEER_REPLY, "stale one\nstale two\n", 0, 0 },
		{ "*IDN?", PEER_REPLY, "ACME,LCR-9,77,2.1\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, NULL);
	char *log = NULL;
	size_t loglen = 0;
	FILE *trace = open_memstream(&log, &loglen);
	hb_scpi_set_trace(s, trace, "lcr");
	assert_int_equal(hb_scpi_clear(s), HB_OK);
	/* The stray lines must be there before the query goes out: wait until
	 * the peer has written them (step 1 of its script). */
	assert_true(peer_wait_acted(&p, 1));
	hb_idn idn;
	if (hb_scpi_idn(s, &idn) != HB_OK)
		fail_msg("idn: %s", hb_scpi_errmsg(s));
	assert_string_equal(idn.model, "LCR-9");
	fclose(trace);
	assert_non_null(strstr(log, "lcr ~ discarded 20 stale bytes: stale one\\nstale two\\n"));
	free(log);
	finish(s, &p);
}

static void test_idn_fields(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "  Maker Inc , LCR 100 ,SN-1,  fw 1.2,beta \r\n", 0, 0 },
		{ "*IDN?", PEER_SPLIT, "ACME,LCR-9\n", 0, 0 },
		{ "*IDN?", PEER_REPLY, "ACME,,,\n", 0, 0 },
		{ "*IDN?", PEER_REPLY, " , ,1,2\n", 0, 0 },
		{ "*IDN?", PEER_REPLY, "\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, "?timeout=300");
	hb_idn idn;
	assert_int_equal(hb_scpi_idn(s, &idn), HB_OK);
	assert_string_equal(idn.maker, "Maker Inc");
	assert_string_equal(idn.model, "LCR 100");
	assert_string_equal(idn.serial, "SN-1");
	assert_string_equal(idn.firmware, "fw 1.2,beta");
	assert_string_equal(idn.raw, "  Maker Inc , LCR 100 ,SN-1,  fw 1.2,beta ");

	assert_int_equal(hb_scpi_idn(s, &idn), HB_OK);
	assert_string_equal(idn.maker, "ACME");
	assert_string_equal(idn.model, "LCR-9");
	assert_string_equal(idn.serial, "");
	assert_string_equal(idn.firmware, "");

	assert_int_equal(hb_scpi_idn(s, &idn), HB_OK);
	assert_string_equal(idn.maker, "ACME");
	assert_string_equal(idn.model, "");

	assert_int_equal(hb_scpi_idn(s, &idn), HB_ERR_PROTOCOL);
	assert_int_equal(hb_scpi_idn(s, &idn), HB_ERR_PROTOCOL);
	finish(s, &p);
}

static void test_error_queue(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "SYST:ERR?", PEER_REPLY, "-222,\"Data out of range\"\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "-113, \"Undefined header; IMP:FRQ\"\r\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "+0,\"No error\"\n", 0, 0 },
		/* second drain: overflow reported, not listed */
		{ "SYST:ERR?", PEER_REPLY, "-100,\"Command error\"\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "-350,\"Queue overflow\"\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "0,\"No error\"\n", 0, 0 },
		/* third: more than the caller's list holds */
		{ "SYST:ERR?", PEER_REPLY, "-102,\"Syntax error\"\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "-224,\"Illegal parameter value\"\n", 0, 0 },
		{ "SYST:ERR?", PEER_REPLY, "0\n", 0, 0 },
		/* fourth: garbled */
		{ "SYST:ERR?", PEER_REPLY, "error!\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, NULL);
	hb_scpi_error list[4];
	size_t count = 99;
	bool lost = true;
	assert_int_equal(hb_scpi_errors(s, list, N(list), &count, &lost), HB_OK);
	assert_int_equal(count, 2);
	assert_false(lost);
	assert_int_equal(list[0].code, -222);
	assert_string_equal(list[0].message, "Data out of range");
	assert_int_equal(list[1].code, -113);
	assert_string_equal(list[1].message, "Undefined header; IMP:FRQ");

	assert_int_equal(hb_scpi_errors(s, list, N(list), &count, &lost), HB_OK);
	assert_int_equal(count, 1);
	assert_true(lost);
	assert_int_equal(list[0].code, -100);

	assert_int_equal(hb_scpi_errors(s, list, 1, &count, &lost), HB_OK);
	assert_int_equal(count, 1);
	assert_true(lost);
	assert_int_equal(list[0].code, -102);

	assert_int_equal(hb_scpi_errors(s, list, N(list), &count, &lost), HB_ERR_PROTOCOL);
	assert_int_equal(count, 0);
	finish(s, &p);
}

static void test_error_queue_never_empties(void **state)
{
	(void)state;
	enum { STEPS = 80 };
	peer_step *steps = calloc(STEPS, sizeof *steps);
	assert_non_null(steps);
	for (int i = 0; i < STEPS; i++)
		steps[i] = (peer_step){ "SYST:ERR?", PEER_REPLY, "-410,\"Query INTERRUPTED\"\n", 0, 0 };
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, STEPS), 0);
	hb_scpi *s = open_peer(&p, NULL);
	hb_scpi_error list[100];
	size_t count = 0;
	bool lost = false;
	assert_int_equal(hb_scpi_errors(s, list, N(list), &count, &lost), HB_ERR_PROTOCOL);
	assert_true(count > 0 && count <= 64);
	assert_int_equal(list[0].code, -410);
	assert_non_null(strstr(hb_scpi_errmsg(s), "not empty"));
	finish(s, &p);
	assert_true(p.commands_seen <= 64);
	free(steps);
}

static void test_reset_clear_opc_crlf(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*RST", PEER_SILENT, NULL, 0, 0 },
		{ "*OPC?", PEER_REPLY, "1\n", 100, 0 },
		{ "*CLS", PEER_SILENT, NULL, 0, 0 },
		{ "*OPC?", PEER_REPLY, "+1\r\n", 0, 0 },
		{ "*OPC?", PEER_REPLY, "0\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, "?timeout=2000&eol=crlf");
	assert_int_equal(hb_scpi_resource(s)->eol, HB_EOL_CRLF);
	assert_int_equal(hb_scpi_reset(s), HB_OK);
	assert_int_equal(hb_scpi_clear(s), HB_OK);
	assert_int_equal(hb_scpi_opc(s), HB_OK);
	assert_int_equal(hb_scpi_opc(s), HB_ERR_PROTOCOL);
	finish(s, &p);
	assert_int_equal(p.commands_seen, 5);
	assert_int_equal(p.commands_with_cr, 5);
}

static void test_closed_and_bad_input(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "MEAS?", PEER_REPLY, "1.0\0" "00\n", 0, 7 },
		{ "GONE?", PEER_CLOSE, NULL, 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, "?timeout=300");
	char reply[32];
	assert_int_equal(hb_scpi_write(s, "BAD\nCMD"), HB_ERR_ARG);
	assert_int_equal(hb_scpi_write(s, ""), HB_ERR_ARG);
	assert_int_equal(hb_scpi_query(s, "MEAS?", reply, sizeof reply), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_scpi_errmsg(s), "NUL"));
	assert_int_equal(hb_scpi_query(s, "GONE?", reply, sizeof reply), HB_ERR_CLOSED);
	assert_int_equal(hb_scpi_query(s, "MORE?", reply, sizeof reply), HB_ERR_CLOSED);
	finish(s, &p);
}

static void test_open_failures(void **state)
{
	(void)state;
	hb_scpi *s = NULL;
	assert_int_equal(hb_scpi_open("tcp://127.0.0.1:99999", &s), HB_ERR_ARG);
	assert_non_null(s);
	assert_non_null(strstr(hb_scpi_errmsg(s), "'99999'"));
	char reply[8];
	assert_int_equal(hb_scpi_query(s, "*IDN?", reply, sizeof reply), HB_ERR_CLOSED);
	hb_scpi_close(s);
	hb_scpi_close(NULL);
	assert_int_equal(hb_scpi_open("sim:lcr", NULL), HB_ERR_ARG);
	assert_null(hb_scpi_resource(NULL));
	hb_scpi_set_trace(NULL, stderr, "x");
}

static void test_parse_numbers(void **state)
{
	(void)state;
	double v = 0;
	assert_int_equal(hb_scpi_parse_double("1.5", &v), HB_OK);
	assert_true(v == 1.5);
	assert_int_equal(hb_scpi_parse_double(" +4.7E-06 ", &v), HB_OK);
	assert_true(v == 4.7e-6);
	assert_int_equal(hb_scpi_parse_double("-12", &v), HB_OK);
	assert_true(v == -12.0);
	assert_int_equal(hb_scpi_parse_double(".5e1", &v), HB_OK);
	assert_true(v == 5.0);
	/* SCPI-99 vol. 1, 7.2.1.5: 9.9E37 is +INF, 9.91E37 is NaN. */
	v = 0;
	assert_int_equal(hb_scpi_parse_double("9.9E37", &v), HB_ERR_OVERLOAD);
	assert_true(v == 9.9e37);
	assert_int_equal(hb_scpi_parse_double("+9.91E+37", &v), HB_ERR_OVERLOAD);
	assert_true(v == 9.91e37);
	assert_int_equal(hb_scpi_parse_double("-9.9E37", &v), HB_ERR_OVERLOAD);
	assert_int_equal(hb_scpi_parse_double("9.90000E+37", &v), HB_ERR_OVERLOAD);
	assert_int_equal(hb_scpi_parse_double("NAN", &v), HB_ERR_OVERLOAD);
	assert_int_equal(hb_scpi_parse_double("-INF", &v), HB_ERR_OVERLOAD);
	assert_true(isinf(v) && v < 0);
	assert_int_equal(hb_scpi_parse_double("9.8E37", &v), HB_OK);
	const char *bad[] = { "", " ", "1,5", "1.5V", "0x10", "1e", "e5", "--1", "1e999", ".", "1.2.3", NULL };
	for (int i = 0; bad[i]; i++)
		if (hb_scpi_parse_double(bad[i], &v) != HB_ERR_PROTOCOL)
			fail_msg("'%s' accepted", bad[i]);
	assert_int_equal(hb_scpi_parse_double(NULL, &v), HB_ERR_ARG);

	char buf[32];
	assert_int_equal(hb_scpi_format_double(buf, sizeof buf, 0.1 + 0.2), HB_OK);
	assert_string_equal(buf, "0.3");
	assert_int_equal(hb_scpi_format_double(buf, sizeof buf, 1e-6), HB_OK);
	assert_string_equal(buf, "1e-06");
	assert_int_equal(hb_scpi_format_double(buf, sizeof buf, NAN), HB_ERR_ARG);
	assert_int_equal(hb_scpi_format_double(buf, 3, 12345.0), HB_ERR_ARG);
}

/* A locale whose decimal separator is a comma, if this system has one. */
static locale_t comma_locale(const char **name)
{
	static const char *const names[] = { "de_DE.UTF-8", "de_DE.utf8", "de_DE", "fr_FR.UTF-8", "nl_NL.UTF-8",
					     "ru_RU.UTF-8", "it_IT.UTF-8", "es_ES.UTF-8", NULL };
	for (int i = 0; names[i]; i++) {
		locale_t l = newlocale(LC_ALL_MASK, names[i], (locale_t)0);
		if (l == (locale_t)0)
			continue;
		locale_t old = uselocale(l);
		bool comma = strcmp(localeconv()->decimal_point, ",") == 0;
		uselocale(old);
		if (comma) {
			*name = names[i];
			return l;
		}
		freelocale(l);
	}
	/* None installed: build one (tests/comma_locale.h), or skip. */
	char why[200] = "";
	const char *built = comma_locale_find(why, sizeof why);
	if (built && setlocale(LC_ALL, built)) {
		/* Copied from the global locale, not newlocale(built): glibc's
		 * newlocale leaks its copy of LOCPATH (43 bytes, seen by LSan
		 * and valgrind), setlocale does not. */
		locale_t l = duplocale(LC_GLOBAL_LOCALE);
		setlocale(LC_ALL, "C");
		if (l != (locale_t)0) {
			*name = built;
			return l;
		}
	}
	print_message("%s\n", why[0] ? why : "the built comma locale would not load");
	return (locale_t)0;
}

static void test_comma_locale(void **state)
{
	(void)state;
	const char *name = NULL;
	locale_t l = comma_locale(&name);
	if (l == (locale_t)0) {
		print_message("no comma-decimal locale installed; skipping\n");
		skip();
	}
	/* Both ways a program may switch: this thread, and the whole process. */
	locale_t old = uselocale(l);
	double v = 0;
	assert_int_equal(hb_scpi_parse_double("1.25E-3", &v), HB_OK);
	assert_true(v == 1.25e-3);
	assert_int_equal(hb_scpi_parse_double("1,25", &v), HB_ERR_PROTOCOL);
	char buf[32];
	assert_int_equal(hb_scpi_format_double(buf, sizeof buf, 2.5), HB_OK);
	assert_string_equal(buf, "2.5");
	/* the test's own check that the locale really is in effect */
	char local[32];
	snprintf(local, sizeof local, "%.1f", 2.5);
	assert_string_equal(local, "2,5");
	uselocale(old);
	freelocale(l);

	char *saved = setlocale(LC_ALL, NULL);
	char saved_copy[128];
	snprintf(saved_copy, sizeof saved_copy, "%s", saved ? saved : "C");
	if (setlocale(LC_ALL, name)) {
		assert_int_equal(hb_scpi_parse_double("3.5", &v), HB_OK);
		assert_true(v == 3.5);
		assert_int_equal(hb_scpi_format_double(buf, sizeof buf, 3.5), HB_OK);
		assert_string_equal(buf, "3.5");
		setlocale(LC_ALL, saved_copy);
	}
}

static void test_query_double_overload(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "MEAS?", PEER_REPLY, "9.9E37\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "9.91E37\n", 0, 0 },
		{ "MEAS?", PEER_REPLY, "4.7E-6\n", 0, 0 },
	};
	peer p;
	assert_int_equal(peer_start_tcp(&p, steps, N(steps)), 0);
	hb_scpi *s = open_peer(&p, NULL);
	double v = 0;
	assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_ERR_OVERLOAD);
	assert_true(v == 9.9e37);
	assert_non_null(strstr(hb_scpi_errmsg(s), "overload"));
	assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_ERR_OVERLOAD);
	assert_int_equal(hb_scpi_query_double(s, "MEAS?", &v), HB_OK);
	assert_true(v == 4.7e-6);
	finish(s, &p);
}

static void test_sim_if_present(void **state)
{
	(void)state;
	if (!hb_sim_inproc())
		skip();
	hb_scpi *s = NULL;
	if (hb_scpi_open("sim:supply", &s) != HB_OK)
		fail_msg("sim:supply: %s", hb_scpi_errmsg(s));
	hb_idn idn;
	if (hb_scpi_idn(s, &idn) != HB_OK)
		fail_msg("sim:supply idn: %s", hb_scpi_errmsg(s));
	assert_true(idn.maker[0] != '\0');
	hb_scpi_error list[8];
	size_t count = 0;
	bool lost = false;
	assert_int_equal(hb_scpi_errors(s, list, 8, &count, &lost), HB_OK);
	hb_scpi_close(s);
	hb_sim_inproc_shutdown();
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_query_and_trace),
		cmocka_unit_test(test_late_reply_does_not_shift),
		cmocka_unit_test(test_wrong_shape_resettles),
		cmocka_unit_test(test_stale_input_drained),
		cmocka_unit_test(test_idn_fields),
		cmocka_unit_test(test_error_queue),
		cmocka_unit_test(test_error_queue_never_empties),
		cmocka_unit_test(test_reset_clear_opc_crlf),
		cmocka_unit_test(test_closed_and_bad_input),
		cmocka_unit_test(test_open_failures),
		cmocka_unit_test(test_parse_numbers),
		cmocka_unit_test(test_comma_locale),
		cmocka_unit_test(test_query_double_overload),
		cmocka_unit_test(test_sim_if_present),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
