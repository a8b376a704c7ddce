// LDFLAGS: -Wl,--wrap=sp_get_port_by_name,--wrap=sp_open,--wrap=sp_close,--wrap=sp_free_port,--wrap=sp_set_baudrate,--wrap=sp_set_bits,--wrap=sp_set_parity,--wrap=sp_set_stopbits,--wrap=sp_set_flowcontrol,--wrap=sp_get_port_handle,--wrap=sp_flush,--wrap=sp_blocking_read_next,--wrap=sp_nonblocking_read,--wrap=sp_blocking_write,--wrap=sp_last_error_code,--wrap=sp_last_error_message,--wrap=sp_free_error_message
/* tests/test_serial.c - the serial: transport's use of libserialport, checked against wrapped sp_* functions (no hardware) */
#include <errno.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <cmocka.h>
#include <libserialport.h>

#include "drivers/hb_drivers.h"

/* ---------------- the fake libserialport ---------------- */

static char fake_port_storage[64];
#define FAKE_PORT ((struct sp_port *)fake_port_storage)

static struct {
	/* what the driver asked for */
	char name[128];
	int opens, closes, frees;
	enum sp_mode mode;
	int baud, bits, stopbits;
	enum sp_parity parity;
	enum sp_flowcontrol flow;
	int reads, writes, nonblocking_reads;
	unsigned min_read_timeout, min_write_timeout;
	char written[512];
	size_t written_len;
	int messages_made, messages_freed;
	/* what the fake answers */
	enum sp_return by_name_rc, open_rc, baud_rc, flow_rc, read_rc;
	int error_code;
	const char *error_text;
	const char *input; /* bytes handed out by reads, a few at a time */
	size_t input_pos, chunk;
	size_t write_limit; /* bytes accepted per sp_blocking_write; 0 = all */
	const char *const *replies; /* next one becomes input after each line written */
	size_t next_reply;
} fake;

static void fake_reset(void)
{
	memset(&fake, 0, sizeof fake);
	fake.min_read_timeout = fake.min_write_timeout = ~0u;
	fake.chunk = 3;
}

enum sp_return __wrap_sp_get_port_by_name(const char *portname, struct sp_port **port_ptr)
{
	snprintf(fake.name, sizeof fake.name, "%s", portname);
	if (fake.by_name_rc != SP_OK) {
		*port_ptr = NULL;
		return fake.by_name_rc;
	}
	*port_ptr = FAKE_PORT;
	return SP_OK;
}

enum sp_return __wrap_sp_open(struct sp_port *port, enum sp_mode flags)
{
	assert_ptr_equal(port, FAKE_PORT);
	fake.opens++;
	fake.mode = flags;
	return fake.open_rc;
}

enum sp_return __wrap_sp_close(struct sp_port *port)
{
	assert_ptr_equal(port, FAKE_PORT);
	fake.closes++;
	return SP_OK;
}

void __wrap_sp_free_port(struct sp_port *port)
{
	assert_ptr_equal(port, FAKE_PORT);
	fake.frees++;
}

enum sp_return __wrap_sp_set_baudrate(struct sp_port *port, int baudrate)
{
	(void)port;
	fake.baud = baudrate;
	return fake.baud_rc;
}

enum sp_return __wrap_sp_set_bits(struct sp_port *port, int bits)
{
	(void)port;
	fake.bits = bits;
	return SP_OK;
}

enum sp_return __wrap_sp_set_parity(struct sp_port *port, enum sp_parity parity)
{
	(void)port;
	fake.parity = parity;
	return SP_OK;
}

enum sp_return __wrap_sp_set_stopbits(struct sp_port *port, int stopbits)
{
	(void)port;
	fake.stopbits = stopbits;
	return SP_OK;
}

enum sp_return __wrap_sp_set_flowcontrol(struct sp_port *port, enum sp_flowcontrol flowcontrol)
{
	(void)port;
	fake.flow = flowcontrol;
	return fake.flow_rc;
}

enum sp_return __wrap_sp_get_port_handle(const struct sp_port *port, void *result_ptr)
{
	(void)port;
	*(int *)result_ptr = -1; /* no descriptor: nothing to lock or poll */
	return SP_ERR_SUPP;
}

enum sp_return __wrap_sp_flush(struct sp_port *port, enum sp_buffer buffers)
{
	(void)port;
	(void)buffers;
	return SP_OK;
}

static size_t hand_out(void *buf, size_t count)
{
	if (!fake.input)
		return 0;
	size_t left = strlen(fake.input) - fake.input_pos;
	size_t n = left < fake.chunk ? left : fake.chunk;
	if (n > count)
		n = count;
	memcpy(buf, fake.input + fake.input_pos, n);
	fake.input_pos += n;
	return n;
}

enum sp_return __wrap_sp_blocking_read_next(struct sp_port *port, void *buf, size_t count, unsigned int timeout_ms)
{
	(void)port;
	fake.reads++;
	/* 0 would block forever in the real library: never acceptable. */
	assert_true(timeout_ms > 0);
	if (timeout_ms < fake.min_read_timeout)
		fake.min_read_timeout = timeout_ms;
	if (fake.read_rc != SP_OK)
		return fake.read_rc;
	size_t n = hand_out(buf, count);
	if (n == 0) {
		/* behave like a quiet line: the time passes */
		unsigned ms = timeout_ms < 5 ? timeout_ms : 5;
		struct timespec ts = { 0, (long)ms * 1000000L };
		nanosleep(&ts, NULL);
	}
	return (enum sp_return)n;
}

enum sp_return __wrap_sp_nonblocking_read(struct sp_port *port, void *buf, size_t count)
{
	(void)port;
	fake.nonblocking_reads++;
	return (enum sp_return)hand_out(buf, count);
}

enum sp_return __wrap_sp_blocking_write(struct sp_port *port, const void *buf, size_t count, unsigned int timeout_ms)
{
	(void)port;
	fake.writes++;
	assert_true(timeout_ms > 0);
	if (timeout_ms < fake.min_write_timeout)
		fake.min_write_timeout = timeout_ms;
	size_t n = fake.write_limit && count > fake.write_limit ? fake.write_limit : count;
	if (fake.written_len + n < sizeof fake.written) {
		memcpy(fake.written + fake.written_len, buf, n);
		fake.written_len += n;
	}
	if (fake.replies && n > 0 && ((const char *)buf)[n - 1] == '\n' && fake.replies[fake.next_reply]) {
		fake.input = fake.replies[fake.next_reply++];
		fake.input_pos = 0;
	}
	return (enum sp_return)n;
}

int __wrap_sp_last_error_code(void)
{
	return fake.error_code;
}

char *__wrap_sp_last_error_message(void)
{
	fake.messages_made++;
	return strdup(fake.error_text ? fake.error_text : "?");
}

void __wrap_sp_free_error_message(char *message)
{
	if (message)
		fake.messages_freed++;
	free(message);
}

/* ---------------- tests ---------------- */

static int open_serial(const char *text, hb_link **link)
{
	hb_resource res;
	char err[256];
	assert_int_equal(hb_resource_parse(text, &res, err, sizeof err), HB_OK);
	*link = NULL;
	return hb_link_open(&res, link);
}

static void test_line_settings_mapping(void **state)
{
	(void)state;
	fake_reset();
	hb_link *link;
	assert_int_equal(open_serial("serial:/dev/ttyFAKE0?baud=19200&data=7&parity=even&stop=2&flow=rtscts", &link),
			 HB_OK);
	assert_string_equal(fake.name, "/dev/ttyFAKE0");
	assert_int_equal(fake.opens, 1);
	assert_int_equal(fake.mode, SP_MODE_READ_WRITE);
	assert_int_equal(fake.baud, 19200);
	assert_int_equal(fake.bits, 7);
	assert_int_equal(fake.parity, SP_PARITY_EVEN);
	assert_int_equal(fake.stopbits, 2);
	assert_int_equal(fake.flow, SP_FLOWCONTROL_RTSCTS);
	hb_link_close(link);
	assert_int_equal(fake.closes, 1);
	assert_int_equal(fake.frees, 1);

	fake_reset();
	assert_int_equal(open_serial("serial:/dev/ttyFAKE1?parity=odd&flow=xonxoff", &link), HB_OK);
	assert_int_equal(fake.parity, SP_PARITY_ODD);
	assert_int_equal(fake.flow, SP_FLOWCONTROL_XONXOFF);
	hb_link_close(link);

	fake_reset();
	assert_int_equal(open_serial("serial:/dev/ttyFAKE2", &link), HB_OK);
	assert_int_equal(fake.baud, 9600);
	assert_int_equal(fake.bits, 8);
	assert_int_equal(fake.parity, SP_PARITY_NONE);
	assert_int_equal(fake.stopbits, 1);
	assert_int_equal(fake.flow, SP_FLOWCONTROL_NONE);
	hb_link_close(link);
}

static void test_reads_never_wait_forever(void **state)
{
	(void)state;
	fake_reset();
	hb_link *link;
	assert_int_equal(open_serial("serial:/dev/ttyFAKE0?timeout=50", &link), HB_OK);
	fake.input = "4.7E-6\r\nrest";
	char line[64];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 2000), 6);
	assert_string_equal(line, "4.7E-6");
	/* "rest" has no line end: the read must run out of time, each wait
	 * given a positive time-out, down to the last millisecond. */
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 20), HB_ERR_TIMEOUT);
	assert_true(fake.reads > 2);
	assert_true(fake.min_read_timeout >= 1);
	/* Very short time-outs too. */
	for (int ms = 1; ms <= 3; ms++)
		assert_int_equal(hb_link_read_line(link, line, sizeof line, ms), HB_ERR_TIMEOUT);
	assert_true(fake.min_read_timeout >= 1);
	/* A drain without waiting takes the non-blocking read. */
	fake.input = "junk\n";
	fake.input_pos = 0;
	assert_int_equal(hb_link_drain(link, 0, 100), 4 + 5);
	assert_true(fake.nonblocking_reads > 0);
	hb_link_close(link);
}

static void test_write_whole_command(void **state)
{
	(void)state;
	fake_reset();
	hb_link *link;
	assert_int_equal(open_serial("serial:/dev/ttyFAKE0?eol=crlf", &link), HB_OK);
	fake.write_limit = 4; /* a slow UART taking a few bytes per call */
	assert_int_equal(hb_link_write(link, "IMP:FREQ 1000\r\n", 15, 500), HB_OK);
	assert_int_equal(fake.written_len, 15);
	assert_memory_equal(fake.written, "IMP:FREQ 1000\r\n", 15);
	assert_int_equal(fake.writes, 4);
	assert_true(fake.min_write_timeout >= 1);
	hb_link_close(link);
}

static void test_errors_become_messages(void **state)
{
	(void)state;
	hb_link *link;

	fake_reset();
	fake.open_rc = SP_ERR_FAIL;
	fake.error_code = EACCES;
	fake.error_text = "Permission denied";
	assert_int_equal(open_serial("serial:/dev/ttyFAKE0", &link), HB_ERR_IO);
	assert_non_null(link);
	assert_non_null(strstr(hb_link_errmsg(link), "serial:/dev/ttyFAKE0"));
	assert_non_null(strstr(hb_link_errmsg(link), "cannot open"));
	assert_non_null(strstr(hb_link_errmsg(link), "Permission denied"));
	assert_int_equal(fake.messages_made, fake.messages_freed);
	assert_int_equal(fake.frees, 1);
	hb_link_close(link);

	fake_reset();
	fake.open_rc = SP_ERR_FAIL;
	fake.error_code = ENOENT;
	assert_int_equal(open_serial("serial:/dev/ttyGONE", &link), HB_ERR_NOTFOUND);
	assert_non_null(strstr(hb_link_errmsg(link), "no such serial port"));
	hb_link_close(link);

	fake_reset();
	fake.by_name_rc = SP_ERR_ARG;
	assert_int_equal(open_serial("serial:/dev/pts/3", &link), HB_ERR_NOTFOUND);
	assert_non_null(strstr(hb_link_errmsg(link), "tty:"));
	assert_int_equal(fake.opens, 0);
	hb_link_close(link);

	fake_reset();
	fake.baud_rc = SP_ERR_ARG;
	assert_int_equal(open_serial("serial:/dev/ttyFAKE0?baud=12345", &link), HB_ERR_ARG);
	assert_non_null(strstr(hb_link_errmsg(link), "cannot set baud 12345"));
	assert_int_equal(fake.closes, 1); /* a half-configured port is closed again */
	assert_int_equal(fake.frees, 1);
	hb_link_close(link);
	assert_int_equal(fake.closes, 1);

	fake_reset();
	fake.flow_rc = SP_ERR_SUPP;
	assert_int_equal(open_serial("serial:/dev/ttyFAKE0?flow=rtscts", &link), HB_ERR_UNSUPPORTED);
	assert_non_null(strstr(hb_link_errmsg(link), "flow control"));
	hb_link_close(link);

	/* An unplugged USB adapter: the read fails with EIO -> link lost. */
	fake_reset();
	assert_int_equal(open_serial("serial:/dev/ttyUSB9", &link), HB_OK);
	fake.read_rc = SP_ERR_FAIL;
	fake.error_code = EIO;
	fake.error_text = "Input/output error";
	char line[32];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 500), HB_ERR_CLOSED);
	assert_non_null(strstr(hb_link_errmsg(link), "link lost"));
	assert_non_null(strstr(hb_link_errmsg(link), "Input/output error"));
	assert_int_equal(fake.messages_made, fake.messages_freed);
	hb_link_close(link);
}

static void test_scpi_over_serial(void **state)
{
	(void)state;
	fake_reset();
	hb_scpi *s = NULL;
	if (hb_scpi_open("serial:/dev/ttyFAKE0?baud=115200&timeout=500", &s) != HB_OK)
		fail_msg("%s", hb_scpi_errmsg(s));
	static const char *const replies[] = { "ACME,SER-1,9,1.0\r\n", "-222,\"Data out of range\"\n",
					       "0,\"No error\"\n", NULL };
	fake.replies = replies;
	fake.chunk = 1; /* a slow line: one byte per read */
	hb_idn idn;
	if (hb_scpi_idn(s, &idn) != HB_OK)
		fail_msg("%s", hb_scpi_errmsg(s));
	assert_string_equal(idn.model, "SER-1");
	hb_scpi_error list[2];
	size_t count = 0;
	bool lost = true;
	assert_int_equal(hb_scpi_errors(s, list, 2, &count, &lost), HB_OK);
	assert_int_equal(count, 1);
	assert_int_equal(list[0].code, -222);
	assert_false(lost);
	/* Script exhausted: a time-out with a positive wait, never a hang. */
	char reply[32];
	assert_int_equal(hb_scpi_query(s, "*OPC?", reply, sizeof reply), HB_ERR_TIMEOUT);
	assert_true(fake.min_read_timeout >= 1);
	assert_memory_equal(fake.written, "*IDN?\nSYST:ERR?\nSYST:ERR?\n*OPC?\n", 33);
	hb_scpi_close(s);
	assert_int_equal(fake.closes, 1);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_line_settings_mapping),
		cmocka_unit_test(test_reads_never_wait_forever),
		cmocka_unit_test(test_write_whole_command),
		cmocka_unit_test(test_errors_become_messages),
		cmocka_unit_test(test_scpi_over_serial),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
