/* tests/test_link.c - links over real transports: TCP loopback and a pseudo-terminal pair, with a scripted peer and faults */
#define _XOPEN_SOURCE 700 /* posix_openpt, grantpt, ptsname */
#include <errno.h>
#include <fcntl.h>
#include <setjmp.h>
#include <signal.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <termios.h>
#include <unistd.h>
#include <sys/time.h>

#include <cmocka.h>

#include "drivers/hb_drivers.h"
#include "scripted_peer.h"

#define N(a) (sizeof(a) / sizeof((a)[0]))

/* SIGPIPE keeps its default action here on purpose: a send to a dead
 * peer without MSG_NOSIGNAL would kill this test. */

/* Every resource text these tests write is well formed: what they look at
 * is the open and the traffic, so a parse failure is only a broken test. */
static void parse_ok(const char *text, hb_resource *res)
{
	char err[256];
	assert_int_equal(hb_resource_parse(text, res, err, sizeof err), HB_OK);
}

static hb_link *open_text(const char *text)
{
	hb_resource res;
	parse_ok(text, &res);
	hb_link *link = NULL;
	int rc = hb_link_open(&res, &link);
	if (rc != HB_OK)
		fail_msg("open %s: %s", text, hb_link_errmsg(link));
	return link;
}

/* A scripted peer on TCP loopback and a link to it. */
static hb_link *start_tcp(peer *p, const peer_step *steps, size_t nsteps, int timeout_ms)
{
	assert_int_equal(peer_start_tcp(p, steps, nsteps), 0);
	char text[128];
	snprintf(text, sizeof text, "tcp://127.0.0.1:%d?timeout=%d", p->port, timeout_ms);
	return open_text(text);
}

static void send_text(hb_link *link, const char *text)
{
	assert_int_equal(hb_link_write(link, text, strlen(text), 2000), HB_OK);
}

static void expect_line(hb_link *link, const char *want)
{
	char line[256];
	int n = hb_link_read_line(link, line, sizeof line, 3000);
	if (n < 0)
		fail_msg("read_line: %s", hb_link_errmsg(link));
	assert_string_equal(line, want);
	assert_int_equal(n, (int)strlen(want));
}

/* The commonest exchange: one command, one line back. */
static void ask(hb_link *link, const char *command, const char *want)
{
	send_text(link, command);
	expect_line(link, want);
}

static void finish(hb_link *link, peer *p)
{
	hb_link_close(link);
	peer_finish(p);
	if (p->mismatches)
		fail_msg("peer: %s", p->mismatch);
}

static void test_tcp_basic(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "*IDN?", PEER_REPLY, "ACME,LCR-1,0042,1.0\n", 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	assert_int_equal(hb_link_resource(link)->port, p.port);
	ask(link, "*IDN?\n", "ACME,LCR-1,0042,1.0");
	finish(link, &p);
}

static void test_tcp_byte_by_byte(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "MEAS?", PEER_SPLIT, "1.2345E-3\r\n", 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 3000);
	ask(link, "MEAS?\n", "1.2345E-3");
	finish(link, &p);
}

static void test_tcp_two_replies_one_packet(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "A?", PEER_REPLY, "first\nsecond\r\n", 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	ask(link, "A?\n", "first");
	expect_line(link, "second"); /* surplus kept in the buffer */
	finish(link, &p);
}

static void test_tcp_crlf_and_stray_cr(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "A?", PEER_REPLY, "one\r\n", 0, 0 },
		{ "B?", PEER_REPLY, "\rtw\ro\r\r\n", 0, 0 },
		{ "C?", PEER_REPLY, "\n", 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	ask(link, "A?\n", "one");
	ask(link, "B?\n", "two");
	ask(link, "C?\n", "");
	finish(link, &p);
}

static void test_tcp_timeout_then_late_bytes_kept(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "SLOW?", PEER_SILENT, NULL, 0, 0 },
		{ "NEXT?", PEER_REPLY, "ok\n", 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	send_text(link, "SLOW?\n");
	char line[64];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 150), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_link_errmsg(link), "no reply within 150 ms"));
	assert_non_null(strstr(hb_link_errmsg(link), "tcp://127.0.0.1:"));
	ask(link, "NEXT?\n", "ok");
	finish(link, &p);
}

static void test_tcp_partial_line_timeout(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "A?", PEER_REPLY, "12", 0, 0 },
		{ NULL, PEER_REPLY, "34\n", 300, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	send_text(link, "A?\n");
	char line[64];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 100), HB_ERR_TIMEOUT);
	assert_non_null(strstr(hb_link_errmsg(link), "unfinished line"));
	/* The partial bytes stay: the rest of the line completes them. */
	expect_line(link, "1234");
	finish(link, &p);
}

static void test_tcp_peer_closes(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "BYE?", PEER_CLOSE, NULL, 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 5000);
	send_text(link, "BYE?\n");
	char line[64];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 5000), HB_ERR_CLOSED);
	assert_non_null(strstr(hb_link_errmsg(link), "closed"));
	/* Writing into the dead socket: an error status, never SIGPIPE. */
	int rc = HB_OK;
	for (int i = 0; i < 20 && rc == HB_OK; i++)
		rc = hb_link_write(link, "X\n", 2, 500);
	assert_int_equal(rc, HB_ERR_CLOSED);
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 500), HB_ERR_CLOSED);
	finish(link, &p);
}

static void test_tcp_connect_refused(void **state)
{
	(void)state;
	/* A port that was just free and nobody listens on. */
	int s = socket(AF_INET, SOCK_STREAM, 0);
	struct sockaddr_in a = { .sin_family = AF_INET, .sin_addr.s_addr = htonl(INADDR_LOOPBACK) };
	socklen_t alen = sizeof a;
	assert_int_equal(bind(s, (struct sockaddr *)&a, sizeof a), 0);
	assert_int_equal(getsockname(s, (struct sockaddr *)&a, &alen), 0);
	int port = ntohs(a.sin_port);
	close(s);

	char text[96];
	snprintf(text, sizeof text, "tcp://127.0.0.1:%d?timeout=2000", port);
	hb_resource res;
	parse_ok(text, &res);
	hb_link *link = NULL;
	assert_int_equal(hb_link_open(&res, &link), HB_ERR_IO);
	assert_non_null(link); /* set on failure, so the reason can be read */
	assert_non_null(strstr(hb_link_errmsg(link), "refused"));
	assert_non_null(strstr(hb_link_errmsg(link), "tcp://127.0.0.1:"));
	char line[8];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 100), HB_ERR_CLOSED);
	hb_link_close(link);
}

static void test_tcp_drain(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "GO", PEER_REPLY, "junk-1\njunk-2\n", 0, 0 },
		{ NULL, PEER_SPLIT, "tail\n", 20, 0 },
		{ "PING?", PEER_REPLY, "pong\n", 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	send_text(link, "GO\n");
	/* Quiet 400 ms: the split tail (a byte per 2 ms) cannot slip through. */
	int n = hb_link_drain(link, 400, 4000);
	assert_int_equal(n, (int)strlen("junk-1\njunk-2\ntail\n"));
	ask(link, "PING?\n", "pong");
	assert_int_equal(hb_link_drain(link, 0, 100), 0);
	finish(link, &p);
}

static void test_tcp_overlong_lines(void **state)
{
	(void)state;
	static char big[HB_RES_TEXT_MAX * 40];
	memset(big, 'x', sizeof big - 1);
	big[sizeof big - 1] = '\0';
	const peer_step steps[] = {
		{ "LONG?", PEER_REPLY, "0123456789abcdef\nshort\n", 0, 0 },
		{ "HUGE?", PEER_REPLY, big, 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);
	send_text(link, "LONG?\n");
	char line[8];
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 2000), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_link_errmsg(link), "does not fit"));
	expect_line(link, "short"); /* the over-long line was dropped whole */
	send_text(link, "HUGE?\n");
	char line2[64];
	assert_int_equal(hb_link_read_line(link, line2, sizeof line2, 2000), HB_ERR_PROTOCOL);
	assert_non_null(strstr(hb_link_errmsg(link), "no line end"));
	finish(link, &p);
}

static volatile sig_atomic_t alarms;
static void on_alarm(int sig)
{
	(void)sig;
	alarms++;
}

static void test_tcp_eintr_storm(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "SLOW?", PEER_REPLY, "late but fine\n", 150, 0 },
		{ "NONE?", PEER_SILENT, NULL, 0, 0 },
	};
	peer p;
	hb_link *link = start_tcp(&p, steps, N(steps), 2000);

	/* No SA_RESTART: every tick interrupts poll() with EINTR. */
	struct sigaction sa = { .sa_handler = on_alarm }, old;
	sigemptyset(&sa.sa_mask);
	sigaction(SIGALRM, &sa, &old);
	struct itimerval tick = { { 0, 5000 }, { 0, 5000 } }, off = { { 0, 0 }, { 0, 0 } };
	setitimer(ITIMER_REAL, &tick, NULL);

	send_text(link, "SLOW?\n");
	char line[64];
	int n = hb_link_read_line(link, line, sizeof line, 3000);
	send_text(link, "NONE?\n");
	int n2 = hb_link_read_line(link, line + 32, 32, 100);

	setitimer(ITIMER_REAL, &off, NULL);
	sigaction(SIGALRM, &old, NULL);
	assert_true(alarms > 0);
	assert_int_equal(n, (int)strlen("late but fine"));
	assert_string_equal(line, "late but fine");
	assert_int_equal(n2, HB_ERR_TIMEOUT);
	finish(link, &p);
}

/* ---------------- pseudo-terminal ---------------- */

/* Returns the master side; every test needs one, so failing to get it fails the test. */
static int open_pty(char *slave, size_t cap)
{
	int m = posix_openpt(O_RDWR | O_NOCTTY);
	assert_true(m >= 0);
	assert_true(grantpt(m) == 0 && unlockpt(m) == 0);
	const char *name = ptsname(m);
	assert_non_null(name);
	snprintf(slave, cap, "%s", name);
	return m;
}

static hb_link *open_tty(const char *slave, const char *options)
{
	char text[160];
	snprintf(text, sizeof text, "tty:%s%s", slave, options);
	return open_text(text);
}

static void test_pty_exchange_raw(void **state)
{
	(void)state;
	/* Control bytes that a cooked terminal would eat or translate: CR
	 * (ICRNL), XOFF/XON (IXON), ^C (ISIG), DEL (ICANON erase). */
	static const peer_step steps[] = {
		{ "*IDN?", PEER_SPLIT, "ACME,PTY,1,2\r\n", 0, 0 },
		{ "RAW?", PEER_REPLY, "a\x13" "b\x11" "c\x03" "d\x7f" "e\n", 0, 0 },
		{ "CR?", PEER_REPLY, "x\r\n", 0, 0 },
	};
	char slave[128];
	int master = open_pty(slave, sizeof slave);
	hb_link *link = open_tty(slave, "?baud=115200&timeout=2000");
	peer p;
	assert_int_equal(peer_start_fd(&p, master, steps, N(steps)), 0);

	ask(link, "*IDN?\n", "ACME,PTY,1,2");
	ask(link, "RAW?\n", "a\x13" "b\x11" "c\x03" "d\x7f" "e");
	ask(link, "CR?\r\n", "x");
	/* No echo and no CR->LF translation: nothing more is waiting. */
	assert_int_equal(hb_link_drain(link, 100, 1000), 0);

	/* The settings as the line discipline sees them (when a second open
	 * is allowed, i.e. as root: TIOCEXCL stops everyone else). */
	int fd = open(slave, O_RDWR | O_NOCTTY | O_NONBLOCK);
	if (fd >= 0) {
		struct termios t;
		assert_int_equal(tcgetattr(fd, &t), 0);
		assert_int_equal(t.c_lflag & (ICANON | ECHO | ISIG), 0);
		assert_int_equal(t.c_iflag & (ICRNL | IXON | IXOFF), 0);
		assert_int_equal(t.c_oflag & OPOST, 0);
		assert_int_equal(t.c_cflag & HUPCL, 0);
		assert_int_equal(t.c_cflag & CSIZE, CS8);
		assert_int_equal(cfgetospeed(&t), B115200);
		close(fd);
	} else {
		assert_int_equal(errno, EBUSY);
	}
	finish(link, &p);
}

static void test_pty_line_settings(void **state)
{
	(void)state;
	char slave[128];
	int master = open_pty(slave, sizeof slave);
	hb_link *link = open_tty(slave, "?baud=19200&data=7&parity=even&stop=2&flow=xonxoff");
	int fd = open(slave, O_RDWR | O_NOCTTY | O_NONBLOCK);
	if (fd >= 0) {
		struct termios t;
		assert_int_equal(tcgetattr(fd, &t), 0);
		/* Linux's pty driver forces CS8 without parity whatever is asked
		 * (drivers/tty/pty.c), so only stop bits, flow and speed show. */
		assert_int_equal(t.c_cflag & CSTOPB, CSTOPB);
		assert_int_equal(t.c_iflag & (IXON | IXOFF), IXON | IXOFF);
		assert_int_equal(cfgetispeed(&t), B19200);
		close(fd);
	}
	hb_link_close(link);
	close(master);

	/* A rate termios cannot set is refused by name. */
	master = open_pty(slave, sizeof slave);
	char text[160];
	snprintf(text, sizeof text, "tty:%s?baud=12345", slave);
	hb_resource res;
	parse_ok(text, &res);
	link = NULL;
	assert_int_equal(hb_link_open(&res, &link), HB_ERR_ARG);
	assert_non_null(strstr(hb_link_errmsg(link), "12345"));
	hb_link_close(link);
	close(master);
}

static void test_pty_exclusive(void **state)
{
	(void)state;
	char slave[128];
	int master = open_pty(slave, sizeof slave);
	hb_link *first = open_tty(slave, "");
	char text[160];
	snprintf(text, sizeof text, "tty:%s", slave);
	hb_resource res;
	parse_ok(text, &res);
	hb_link *second = NULL;
	assert_true(hb_link_open(&res, &second) < 0);
	assert_non_null(strstr(hb_link_errmsg(second), "in use"));
	hb_link_close(second);
	/* Closing the first frees the port for the next user. */
	hb_link_close(first);
	second = NULL;
	assert_int_equal(hb_link_open(&res, &second), HB_OK);
	hb_link_close(second);
	close(master);
}

static void test_pty_timeout_and_hangup(void **state)
{
	(void)state;
	static const peer_step steps[] = {
		{ "NOTHING?", PEER_SILENT, NULL, 0, 0 },
		{ "BYE?", PEER_CLOSE, NULL, 0, 0 },
	};
	char slave[128];
	int master = open_pty(slave, sizeof slave);
	hb_link *link = open_tty(slave, "?timeout=5000");
	peer p;
	assert_int_equal(peer_start_fd(&p, master, steps, N(steps)), 0);
	char line[64];
	send_text(link, "NOTHING?\n");
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 150), HB_ERR_TIMEOUT);
	send_text(link, "BYE?\n");
	/* The master closing is a hang-up: HB_ERR_CLOSED, not a time-out. */
	assert_int_equal(hb_link_read_line(link, line, sizeof line, 5000), HB_ERR_CLOSED);
	if (!strstr(hb_link_errmsg(link), "lost") && !strstr(hb_link_errmsg(link), "closed"))
		fail_msg("message: %s", hb_link_errmsg(link));
	assert_int_equal(hb_link_write(link, "X\n", 2, 500), HB_ERR_CLOSED);
	finish(link, &p);
}

static void test_tty_not_a_terminal(void **state)
{
	(void)state;
	hb_resource res;
	hb_link *link = NULL;
	parse_ok("tty:/dev/null", &res);
	assert_int_equal(hb_link_open(&res, &link), HB_ERR_ARG);
	assert_non_null(strstr(hb_link_errmsg(link), "not a terminal"));
	hb_link_close(link);
	link = NULL;
	parse_ok("tty:/dev/no-such-tty-here", &res);
	assert_int_equal(hb_link_open(&res, &link), HB_ERR_NOTFOUND);
	assert_non_null(strstr(hb_link_errmsg(link), "/dev/no-such-tty-here"));
	hb_link_close(link);
}

/* ---------------- misc ---------------- */

static void test_null_handles(void **state)
{
	(void)state;
	hb_link *link = NULL;
	assert_int_equal(hb_link_open(NULL, &link), HB_ERR_ARG);
	assert_non_null(link);
	assert_non_null(strstr(hb_link_errmsg(link), "no resource"));
	hb_link_close(link);
	hb_link_close(NULL);
	assert_int_equal(hb_link_open(NULL, NULL), HB_ERR_ARG);
	assert_null(hb_link_resource(NULL));
	assert_int_equal(hb_link_write(NULL, "x", 1, 10), HB_ERR_ARG);
}

static void test_sim_if_present(void **state)
{
	(void)state;
	if (!hb_sim_inproc())
		skip(); /* simulator not built yet: drivers/sim tests cover it */
	hb_link *link = open_text("sim:lcr");
	send_text(link, "*IDN?\n");
	char line[256];
	int n = hb_link_read_line(link, line, sizeof line, 3000);
	if (n < 0)
		fail_msg("sim:lcr: %s", hb_link_errmsg(link));
	assert_non_null(strchr(line, ','));
	hb_link_close(link);
	hb_sim_inproc_shutdown();
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_tcp_basic),
		cmocka_unit_test(test_tcp_byte_by_byte),
		cmocka_unit_test(test_tcp_two_replies_one_packet),
		cmocka_unit_test(test_tcp_crlf_and_stray_cr),
		cmocka_unit_test(test_tcp_timeout_then_late_bytes_kept),
		cmocka_unit_test(test_tcp_partial_line_timeout),
		cmocka_unit_test(test_tcp_peer_closes),
		cmocka_unit_test(test_tcp_connect_refused),
		cmocka_unit_test(test_tcp_drain),
		cmocka_unit_test(test_tcp_overlong_lines),
		cmocka_unit_test(test_tcp_eintr_storm),
		cmocka_unit_test(test_pty_exchange_raw),
		cmocka_unit_test(test_pty_line_settings),
		cmocka_unit_test(test_pty_exclusive),
		cmocka_unit_test(test_pty_timeout_and_hangup),
		cmocka_unit_test(test_tty_not_a_terminal),
		cmocka_unit_test(test_null_handles),
		cmocka_unit_test(test_sim_if_present),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
