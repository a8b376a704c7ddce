/* tests/test_resource.c - resource-string parsing: defaults, every option, and a message naming each bad part */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "drivers/hb_drivers.h"

static void test_defaults(void **state)
{
	(void)state;
	hb_resource r;
	char err[256];
	assert_int_equal(hb_resource_parse("serial:/dev/ttyUSB0", &r, err, sizeof err), HB_OK);
	assert_int_equal(r.kind, HB_RES_SERIAL);
	assert_string_equal(r.path, "/dev/ttyUSB0");
	assert_int_equal(r.baud, 9600);
	assert_int_equal(r.data_bits, 8);
	assert_int_equal(r.parity, HB_PARITY_NONE);
	assert_int_equal(r.stop_bits, 1);
	assert_int_equal(r.flow, HB_FLOW_NONE);
	assert_int_equal(r.timeout_ms, 2000);
	assert_int_equal(r.eol, HB_EOL_LF);
	assert_string_equal(r.profile, "");

	assert_int_equal(hb_resource_parse("tcp://bench-lcr.local", &r, err, sizeof err), HB_OK);
	assert_int_equal(r.kind, HB_RES_TCP);
	assert_string_equal(r.path, "bench-lcr.local");
	assert_int_equal(r.port, 5025);

	assert_int_equal(hb_resource_parse("sim:supply", &r, err, sizeof err), HB_OK);
	assert_int_equal(r.kind, HB_RES_SIM);
	assert_string_equal(r.path, "supply");
}

static void test_all_options(void **state)
{
	(void)state;
	hb_resource r;
	char err[256];
	assert_int_equal(hb_resource_parse("serial:/dev/ttyACM1?baud=115200&data=7&parity=even&stop=2&flow=rtscts"
					   "&timeout=5000&eol=crlf&profile=generic-lcr",
					   &r, err, sizeof err),
			 HB_OK);
	assert_int_equal(r.baud, 115200);
	assert_int_equal(r.data_bits, 7);
	assert_int_equal(r.parity, HB_PARITY_EVEN);
	assert_int_equal(r.stop_bits, 2);
	assert_int_equal(r.flow, HB_FLOW_RTSCTS);
	assert_int_equal(r.timeout_ms, 5000);
	assert_int_equal(r.eol, HB_EOL_CRLF);
	assert_string_equal(r.profile, "generic-lcr");

	assert_int_equal(hb_resource_parse("tty:/dev/pts/7?parity=odd&flow=xonxoff", &r, err, sizeof err), HB_OK);
	assert_int_equal(r.kind, HB_RES_TTY);
	assert_string_equal(r.path, "/dev/pts/7");
	assert_int_equal(r.parity, HB_PARITY_ODD);
	assert_int_equal(r.flow, HB_FLOW_XONXOFF);

	assert_int_equal(hb_resource_parse("tcp://192.168.1.20:5555?timeout=1&profile=/etc/x.ini", &r, err, sizeof err),
			 HB_OK);
	assert_string_equal(r.path, "192.168.1.20");
	assert_int_equal(r.port, 5555);
	assert_int_equal(r.timeout_ms, 1);
	assert_string_equal(r.profile, "/etc/x.ini");

	assert_int_equal(hb_resource_parse("tcp://[::1]:6000", &r, err, sizeof err), HB_OK);
	assert_string_equal(r.path, "::1");
	assert_int_equal(r.port, 6000);
	assert_int_equal(hb_resource_parse("tcp://[fe80::1]", &r, err, sizeof err), HB_OK);
	assert_int_equal(r.port, 5025);

	assert_int_equal(hb_resource_parse("sim:lcr?timeout=600000&eol=lf", &r, err, sizeof err), HB_OK);
	assert_int_equal(r.timeout_ms, 600000);
}

/* Each bad string, and a word its message must contain: the bad part
 * and, where there is a list, one of the accepted values. */
static const struct {
	const char *text;
	const char *names[2];
} bad_cases[] = {
	{ "", { "empty", "tcp://" } },
	{ "usb:/dev/x", { "'usb'", "serial:" } },
	{ "/dev/ttyUSB0", { "unknown transport", "tty:" } },
	{ "tcp:host", { "tcp://", "two slashes" } },
	{ "tcp://", { "no host", "HOST" } },
	{ "tcp://host:0", { "'0'", "1..65535" } },
	{ "tcp://host:70000", { "'70000'", "1..65535" } },
	{ "tcp://host:50x", { "'50x'", "1..65535" } },
	{ "tcp://host:", { "''", "1..65535" } },
	{ "tcp://::1", { "brackets", "[ADDR]" } },
	{ "tcp://[::1", { "']'", "[ADDR]" } },
	{ "tcp://:5025", { "empty host", "HOST" } },
	{ "serial:", { "no device path", "serial:/dev/" } },
	{ "tty:?baud=9600", { "no device path", "tty:/dev/" } },
	{ "sim:dmm", { "'dmm'", "supply" } },
	{ "sim:", { "''", "lcr" } },
	{ "serial:/dev/ttyS0?baud=fast", { "'fast'", "50..4000000" } },
	{ "serial:/dev/ttyS0?baud=10", { "'10'", "50..4000000" } },
	{ "serial:/dev/ttyS0?baud=-9600", { "'-9600'", "50..4000000" } },
	{ "serial:/dev/ttyS0?data=9", { "'9'", "5, 6, 7, 8" } },
	{ "serial:/dev/ttyS0?parity=mark", { "'mark'", "none, odd, even" } },
	{ "serial:/dev/ttyS0?stop=1.5", { "'1.5'", "1, 2" } },
	{ "serial:/dev/ttyS0?flow=dtrdsr", { "'dtrdsr'", "rtscts" } },
	{ "serial:/dev/ttyS0?timeout=0", { "'0'", "1..600000" } },
	{ "tcp://h?timeout=600001", { "'600001'", "1..600000" } },
	{ "tcp://h?timeout=2s", { "'2s'", "1..600000" } },
	{ "tcp://h?eol=cr", { "'cr'", "lf, crlf" } },
	{ "tcp://h?baud=9600", { "'baud'", "serial: and tty:" } },
	{ "sim:lcr?parity=odd", { "'parity'", "serial: and tty:" } },
	{ "tcp://h?speed=1", { "'speed'", "timeout" } },
	{ "tcp://h?timeout", { "'timeout'", "timeout=VALUE" } },
	{ "tcp://h?timeout=", { "'timeout'", "timeout=VALUE" } },
	{ "tcp://h?", { "'?'", "key=value" } },
	{ "tcp://h?timeout=5&&eol=lf", { "empty option", "'&'" } },
	{ "tcp://h?timeout=5&timeout=6", { "'timeout'", "twice" } },
	{ "tcp://h?profile=", { "'profile'", "profile=VALUE" } },
};

static void test_bad_strings(void **state)
{
	(void)state;
	for (size_t i = 0; i < sizeof bad_cases / sizeof bad_cases[0]; i++) {
		hb_resource r;
		char err[256] = "";
		int rc = hb_resource_parse(bad_cases[i].text, &r, err, sizeof err);
		if (rc != HB_ERR_ARG)
			fail_msg("'%s' accepted (rc %d)", bad_cases[i].text, rc);
		if (strchr(err, '\n'))
			fail_msg("'%s': message has several lines: %s", bad_cases[i].text, err);
		for (int k = 0; k < 2; k++)
			if (!strstr(err, bad_cases[i].names[k]))
				fail_msg("'%s': message lacks \"%s\": %s", bad_cases[i].text, bad_cases[i].names[k], err);
	}
}

static void test_null_and_small_buffers(void **state)
{
	(void)state;
	hb_resource r;
	assert_int_equal(hb_resource_parse(NULL, &r, NULL, 0), HB_ERR_ARG);
	assert_int_equal(hb_resource_parse("sim:lcr", NULL, NULL, 0), HB_ERR_ARG);
	char tiny[8];
	assert_int_equal(hb_resource_parse("bogus", &r, tiny, sizeof tiny), HB_ERR_ARG);
	assert_true(strlen(tiny) < sizeof tiny);
	char path[600];
	memset(path, 'a', sizeof path - 1);
	path[sizeof path - 1] = '\0';
	memcpy(path, "tty:/", 5);
	char err[256];
	assert_int_equal(hb_resource_parse(path, &r, err, sizeof err), HB_ERR_ARG);
	assert_non_null(strstr(err, "longer"));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_defaults),
		cmocka_unit_test(test_all_options),
		cmocka_unit_test(test_bad_strings),
		cmocka_unit_test(test_null_and_small_buffers),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
