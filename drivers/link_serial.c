/* drivers/link_serial.c - serial: transport through libserialport (real UART / USB serial hardware) */
#include <errno.h>
#include <poll.h>
#include <stdio.h>
#include <string.h>
#include <sys/file.h>

#include <libserialport.h>

#include "link_internal.h"

/* Turns a libserialport failure into our status and a message that names
 * the step and carries the operating system's own words. */
static int sp_failure(hb_link *link, enum sp_return r, const char *step)
{
	switch (r) {
	case SP_ERR_ARG:
		return hb_link_set_error(link, HB_ERR_ARG, "%s: rejected by libserialport (invalid argument)", step);
	case SP_ERR_MEM:
		return hb_link_set_error(link, HB_ERR_NOMEM, "%s: out of memory", step);
	case SP_ERR_SUPP:
		return hb_link_set_error(link, HB_ERR_UNSUPPORTED, "%s: not supported by this port or its driver", step);
	case SP_ERR_FAIL: {
		int code = sp_last_error_code();
		char *text = sp_last_error_message();
		int status = (code == EIO || code == ENXIO || code == ENODEV) ? HB_ERR_CLOSED : HB_ERR_IO;
		hb_link_set_error(link, status, "%s: %s%s", step, status == HB_ERR_CLOSED ? "link lost: " : "",
				  text && *text ? text : "operating-system error");
		sp_free_error_message(text);
		return status;
	}
	default:
		return hb_link_set_error(link, HB_ERR_IO, "%s: libserialport error %d", step, (int)r);
	}
}

static int serial_open(hb_link *link, int64_t deadline)
{
	(void)deadline;
	const hb_resource *res = &link->res;
	struct sp_port *port = NULL;
	enum sp_return r = sp_get_port_by_name(res->path, &port);
	if (r != SP_OK) {
		if (r == SP_ERR_ARG || (r == SP_ERR_FAIL && sp_last_error_code() == ENOENT))
			return hb_link_set_error(link, HB_ERR_NOTFOUND,
						 "no such serial port (see 'henrybench ports'; pseudo-terminals need tty:)");
		return sp_failure(link, r, "cannot look up the port");
	}
	r = sp_open(port, SP_MODE_READ_WRITE);
	if (r != SP_OK) {
		int rc;
		if (r == SP_ERR_FAIL && sp_last_error_code() == ENOENT)
			rc = hb_link_set_error(link, HB_ERR_NOTFOUND, "no such serial port (see 'henrybench ports')");
		else
			rc = sp_failure(link, r, "cannot open");
		sp_free_port(port);
		return rc;
	}
	link->port = port;

	char step[96];
	int rc;
	snprintf(step, sizeof step, "cannot set baud %d", res->baud);
	r = sp_set_baudrate(port, res->baud);
	if (r != SP_OK)
		goto fail;
	snprintf(step, sizeof step, "cannot set %d data bits", res->data_bits);
	r = sp_set_bits(port, res->data_bits);
	if (r != SP_OK)
		goto fail;
	snprintf(step, sizeof step, "cannot set parity");
	r = sp_set_parity(port, res->parity == HB_PARITY_ODD    ? SP_PARITY_ODD
				: res->parity == HB_PARITY_EVEN ? SP_PARITY_EVEN
								: SP_PARITY_NONE);
	if (r != SP_OK)
		goto fail;
	snprintf(step, sizeof step, "cannot set %d stop bits", res->stop_bits);
	r = sp_set_stopbits(port, res->stop_bits);
	if (r != SP_OK)
		goto fail;
	snprintf(step, sizeof step, "cannot set flow control");
	r = sp_set_flowcontrol(port, res->flow == HB_FLOW_RTSCTS    ? SP_FLOWCONTROL_RTSCTS
				     : res->flow == HB_FLOW_XONXOFF ? SP_FLOWCONTROL_XONXOFF
								    : SP_FLOWCONTROL_NONE);
	if (r != SP_OK)
		goto fail;

	/* libserialport does not lock; a second henrybench on the same port
	 * would interleave commands, so take the same advisory lock as tty:. */
	int fd = -1;
	if (sp_get_port_handle(port, &fd) == SP_OK && fd >= 0 && flock(fd, LOCK_EX | LOCK_NB) < 0 &&
	    errno == EWOULDBLOCK) {
		rc = hb_link_set_error(link, HB_ERR_IO, "in use by another process (locked)");
		goto fail_rc;
	}
	/* Bytes from before we opened belong to nobody's question. */
	sp_flush(port, SP_BUF_BOTH);
	return HB_OK;

fail:
	rc = sp_failure(link, r, step);
fail_rc:
	sp_close(port);
	sp_free_port(port);
	link->port = NULL;
	return rc;
}

/* libserialport's blocking read loops quietly over a hang-up until its
 * time-out, so a timed-out read asks the descriptor whether the device is
 * gone to report that instead of an idle line. */
static bool serial_hung_up(hb_link *link)
{
	int fd = -1;
	if (sp_get_port_handle(link->port, &fd) != SP_OK || fd < 0)
		return false;
	int ev = hb_fd_wait(fd, POLLIN, HB_LINK_NOWAIT);
	return ev > 0 && (ev & (POLLHUP | POLLERR | POLLNVAL));
}

static int serial_read_some(hb_link *link, void *buf, size_t cap, int64_t deadline)
{
	if (deadline == HB_LINK_NOWAIT) {
		enum sp_return r = sp_nonblocking_read(link->port, buf, cap);
		if (r > 0)
			return (int)r;
		if (r == 0)
			return HB_ERR_TIMEOUT;
		return sp_failure(link, r, "read");
	}
	for (;;) {
		int left = hb_deadline_left_ms(deadline);
		if (left <= 0)
			break;
		/* left > 0 always: a zero time-out means "wait forever" to
		 * libserialport, which must never happen here. */
		enum sp_return r = sp_blocking_read_next(link->port, buf, cap, (unsigned)left);
		if (r > 0)
			return (int)r;
		if (r < 0)
			return sp_failure(link, r, "read");
	}
	if (serial_hung_up(link))
		return hb_link_set_error(link, HB_ERR_CLOSED, "link lost: the device hung up (unplugged?)");
	return HB_ERR_TIMEOUT;
}

static int serial_write_some(hb_link *link, const void *buf, size_t len, int64_t deadline)
{
	int left = hb_deadline_left_ms(deadline);
	if (deadline == HB_LINK_NOWAIT || left <= 0)
		return HB_ERR_TIMEOUT;
	enum sp_return r = sp_blocking_write(link->port, buf, len, (unsigned)left);
	if (r > 0)
		return (int)r;
	if (r == 0)
		return HB_ERR_TIMEOUT;
	return sp_failure(link, r, "write");
}

static void serial_close(hb_link *link)
{
	if (link->port) {
		sp_close(link->port);
		sp_free_port(link->port);
	}
	link->port = NULL;
}

const hb_link_ops hb_link_serial_ops = {
	.prefix = "serial",
	.open = serial_open,
	.write_some = serial_write_some,
	.read_some = serial_read_some,
	.close = serial_close,
};
