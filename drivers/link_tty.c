/* drivers/link_tty.c - tty: transport: any POSIX terminal (pseudo-terminals, serial-over-network bridges) in raw mode */
#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <string.h>
#include <termios.h>
#include <unistd.h>
#include <sys/file.h>
#include <sys/ioctl.h>

#include "link_internal.h"

static const struct {
	int baud;
	speed_t code;
} tty_speeds[] = {
	{ 50, B50 },         { 75, B75 },         { 110, B110 },       { 134, B134 },         { 150, B150 },
	{ 200, B200 },       { 300, B300 },       { 600, B600 },       { 1200, B1200 },       { 1800, B1800 },
	{ 2400, B2400 },     { 4800, B4800 },     { 9600, B9600 },     { 19200, B19200 },     { 38400, B38400 },
	{ 57600, B57600 },   { 115200, B115200 }, { 230400, B230400 },
#ifdef B460800
	{ 460800, B460800 }, { 500000, B500000 }, { 576000, B576000 }, { 921600, B921600 },   { 1000000, B1000000 },
	{ 1152000, B1152000 }, { 1500000, B1500000 }, { 2000000, B2000000 }, { 2500000, B2500000 },
	{ 3000000, B3000000 }, { 3500000, B3500000 }, { 4000000, B4000000 },
#endif
};

static int speed_code(int baud, speed_t *code)
{
	for (size_t i = 0; i < sizeof tty_speeds / sizeof tty_speeds[0]; i++) {
		if (tty_speeds[i].baud == baud) {
			*code = tty_speeds[i].code;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

static int tty_configure(hb_link *link)
{
	const hb_resource *r = &link->res;
	speed_t speed;
	if (speed_code(r->baud, &speed) < 0)
		return hb_link_set_error(link, HB_ERR_ARG,
					 "baud %d is not a standard termios rate; accepted: 50 .. 4000000 in the usual "
					 "steps (9600, 19200, 38400, 57600, 115200, ...)",
					 r->baud);
	struct termios t;
	if (tcgetattr(link->fd, &t) < 0)
		return hb_link_set_error(link, HB_ERR_IO, "tcgetattr: %s", strerror(errno));
	/* Raw: bytes pass unchanged (no CR/LF translation, no echo, no line
	 * editing, no signals); software flow control only when asked. */
	cfmakeraw(&t);
	t.c_cflag &= ~(tcflag_t)(CSIZE | PARENB | PARODD | CSTOPB | CRTSCTS | HUPCL);
	/* HUPCL off: dropping DTR on close resets some instruments. */
	t.c_cflag |= CLOCAL | CREAD;
	switch (r->data_bits) {
	case 5: t.c_cflag |= CS5; break;
	case 6: t.c_cflag |= CS6; break;
	case 7: t.c_cflag |= CS7; break;
	default: t.c_cflag |= CS8; break;
	}
	if (r->parity == HB_PARITY_ODD)
		t.c_cflag |= PARENB | PARODD;
	else if (r->parity == HB_PARITY_EVEN)
		t.c_cflag |= PARENB;
	if (r->stop_bits == 2)
		t.c_cflag |= CSTOPB;
	t.c_iflag &= ~(tcflag_t)(IXON | IXOFF | IXANY);
	if (r->flow == HB_FLOW_RTSCTS)
		t.c_cflag |= CRTSCTS;
	else if (r->flow == HB_FLOW_XONXOFF)
		t.c_iflag |= IXON | IXOFF;
	/* VMIN 1 with O_NONBLOCK: "no data" is EAGAIN and a 0 from read()
	 * really means hang-up, which keeps lost links from looking idle. */
	t.c_cc[VMIN] = 1;
	t.c_cc[VTIME] = 0;
	cfsetispeed(&t, speed);
	cfsetospeed(&t, speed);
	if (tcsetattr(link->fd, TCSANOW, &t) < 0)
		return hb_link_set_error(link, HB_ERR_IO, "tcsetattr: %s", strerror(errno));
	tcflush(link->fd, TCIOFLUSH);
	return HB_OK;
}

static int tty_open(hb_link *link, int64_t deadline)
{
	(void)deadline;
	int fd = open(link->res.path, O_RDWR | O_NOCTTY | O_NONBLOCK | O_CLOEXEC);
	if (fd < 0) {
		if (errno == EBUSY)
			return hb_link_set_error(link, HB_ERR_IO, "in use: another process holds it exclusively");
		return hb_link_set_error(link, errno == ENOENT ? HB_ERR_NOTFOUND : HB_ERR_IO, "cannot open: %s",
					 strerror(errno));
	}
	link->fd = fd;
	int rc;
	if (!isatty(fd)) {
		rc = hb_link_set_error(link, HB_ERR_ARG, "not a terminal; use tcp:// or serial: for this device");
		goto fail;
	}
	/* Two exclusions: TIOCEXCL stops further opens (except by root), the
	 * advisory lock is honoured by other well-behaved programs and by
	 * a second henrybench even when running as root. */
	if (flock(fd, LOCK_EX | LOCK_NB) < 0) {
		rc = hb_link_set_error(link, HB_ERR_IO, "in use by another process (%s)",
				       errno == EWOULDBLOCK ? "locked" : strerror(errno));
		goto fail;
	}
	if (ioctl(fd, TIOCEXCL) < 0) {
		rc = hb_link_set_error(link, HB_ERR_IO, "cannot take exclusive use: %s", strerror(errno));
		goto fail;
	}
	rc = tty_configure(link);
	if (rc < 0)
		goto fail;
	return HB_OK;
fail:
	close(fd);
	link->fd = -1;
	return rc;
}

static int tty_write_some(hb_link *link, const void *buf, size_t len, int64_t deadline)
{
	return hb_fd_write_some(link, false, buf, len, deadline);
}

static int tty_read_some(hb_link *link, void *buf, size_t cap, int64_t deadline)
{
	return hb_fd_read_some(link, false, buf, cap, deadline);
}

static void tty_close(hb_link *link)
{
	if (link->fd >= 0) {
		ioctl(link->fd, TIOCNXCL);
		close(link->fd);
	}
	link->fd = -1;
}

const hb_link_ops hb_link_tty_ops = {
	.prefix = "tty",
	.open = tty_open,
	.write_some = tty_write_some,
	.read_some = tty_read_some,
	.close = tty_close,
};
