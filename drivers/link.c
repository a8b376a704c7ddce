/* drivers/link.c - transport-independent link: operations table by resource kind, deadlines, line buffering, draining */
#include <errno.h>
#include <limits.h>
#include <poll.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <fcntl.h>
#include <unistd.h>
#include <sys/socket.h>

#include "link_internal.h"

int hb_link_set_error(hb_link *link, int status, const char *fmt, ...)
{
	if (!link)
		return status;
	char text[HB_LINK_ERRMSG_MAX];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(text, sizeof text, fmt, ap);
	va_end(ap);
	/* Built in a copy first: the arguments may point into errmsg itself. */
	int n = snprintf(link->errmsg, sizeof link->errmsg, "%.120s: ", link->name);
	size_t used = n < 0 ? 0 : (size_t)n;
	size_t room = sizeof link->errmsg - used - 1;
	size_t len = strlen(text);
	if (len > room)
		len = room;
	memcpy(link->errmsg + used, text, len);
	link->errmsg[used + len] = '\0';
	return status;
}

int64_t hb_monotonic_ns(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (int64_t)ts.tv_sec * INT64_C(1000000000) + ts.tv_nsec;
}

int64_t hb_deadline_after(int timeout_ms)
{
	int64_t now = hb_monotonic_ns();
	if (timeout_ms <= 0)
		return now;
	return now + (int64_t)timeout_ms * INT64_C(1000000);
}

int hb_deadline_left_ms(int64_t deadline)
{
	int64_t left = deadline - hb_monotonic_ns();
	if (left <= 0)
		return 0;
	int64_t ms = (left + 999999) / 1000000;
	return ms > INT_MAX ? INT_MAX : (int)ms;
}

int hb_fd_set_nonblocking(int fd)
{
	int flags = fcntl(fd, F_GETFL);
	if (flags < 0 || fcntl(fd, F_SETFL, flags | O_NONBLOCK) < 0)
		return HB_ERR_IO;
	return HB_OK;
}

int hb_fd_wait(int fd, short events, int64_t deadline)
{
	for (;;) {
		int wait_ms = 0;
		if (deadline != HB_LINK_NOWAIT) {
			wait_ms = hb_deadline_left_ms(deadline);
			if (wait_ms == 0)
				return 0;
		}
		struct pollfd p = { .fd = fd, .events = events };
		int r = poll(&p, 1, wait_ms);
		if (r < 0 && errno == EINTR)
			continue; /* the deadline is absolute: the retry waits only the time left */
		if (r < 0)
			return HB_ERR_IO;
		if (r > 0)
			return p.revents;
		if (deadline == HB_LINK_NOWAIT)
			return 0;
	}
}

static bool errno_means_lost(int e)
{
	return e == ECONNRESET || e == EPIPE || e == EIO || e == ENXIO || e == ENODEV || e == ENOTCONN ||
	       e == ETIMEDOUT || e == ECONNABORTED || e == EHOSTUNREACH || e == ENETUNREACH;
}

int hb_fd_read_some(hb_link *link, bool is_socket, void *buf, size_t cap, int64_t deadline)
{
	for (;;) {
		ssize_t n = is_socket ? recv(link->fd, buf, cap, 0) : read(link->fd, buf, cap);
		if (n > 0)
			return n > INT_MAX ? INT_MAX : (int)n;
		if (n == 0)
			return hb_link_set_error(link, HB_ERR_CLOSED, "link closed by the other end (end of file)");
		if (errno == EINTR)
			continue;
		if (errno_means_lost(errno))
			return hb_link_set_error(link, HB_ERR_CLOSED, "link lost: %s", strerror(errno));
		if (errno != EAGAIN && errno != EWOULDBLOCK)
			return hb_link_set_error(link, HB_ERR_IO, "read: %s", strerror(errno));
		if (deadline == HB_LINK_NOWAIT)
			return HB_ERR_TIMEOUT;
		int ev = hb_fd_wait(link->fd, POLLIN, deadline);
		if (ev == 0)
			return HB_ERR_TIMEOUT;
		if (ev < 0)
			return hb_link_set_error(link, HB_ERR_IO, "poll: %s", strerror(errno));
		if (ev & POLLNVAL)
			return hb_link_set_error(link, HB_ERR_IO, "poll: descriptor not open");
		/* Readable or in error: the next read tells which. A bare hang-up
		 * with nothing to read must end here, or the loop would spin. */
		if (!(ev & (POLLIN | POLLERR)) && (ev & POLLHUP))
			return hb_link_set_error(link, HB_ERR_CLOSED, "link lost: hang-up");
	}
}

int hb_fd_write_some(hb_link *link, bool is_socket, const void *buf, size_t len, int64_t deadline)
{
	for (;;) {
		ssize_t n = is_socket ? send(link->fd, buf, len, MSG_NOSIGNAL) : write(link->fd, buf, len);
		if (n > 0)
			return n > INT_MAX ? INT_MAX : (int)n;
		if (n < 0 && errno == EINTR)
			continue;
		if (n < 0 && errno_means_lost(errno))
			return hb_link_set_error(link, HB_ERR_CLOSED, "link lost: %s", strerror(errno));
		if (n < 0 && errno != EAGAIN && errno != EWOULDBLOCK)
			return hb_link_set_error(link, HB_ERR_IO, "write: %s", strerror(errno));
		if (deadline == HB_LINK_NOWAIT)
			return HB_ERR_TIMEOUT;
		int ev = hb_fd_wait(link->fd, POLLOUT, deadline);
		if (ev == 0)
			return HB_ERR_TIMEOUT;
		if (ev < 0)
			return hb_link_set_error(link, HB_ERR_IO, "poll: %s", strerror(errno));
		if (!(ev & POLLOUT) && (ev & (POLLHUP | POLLERR | POLLNVAL)))
			return hb_link_set_error(link, HB_ERR_CLOSED, "link lost: hang-up while sending");
	}
}

static void format_name(hb_link *link)
{
	const hb_resource *r = &link->res;
	switch (r->kind) {
	case HB_RES_SERIAL:
		snprintf(link->name, sizeof link->name, "serial:%s", r->path);
		break;
	case HB_RES_TTY:
		snprintf(link->name, sizeof link->name, "tty:%s", r->path);
		break;
	case HB_RES_TCP:
		if (strchr(r->path, ':'))
			snprintf(link->name, sizeof link->name, "tcp://[%s]:%d", r->path, r->port);
		else
			snprintf(link->name, sizeof link->name, "tcp://%s:%d", r->path, r->port);
		break;
	case HB_RES_SIM:
		snprintf(link->name, sizeof link->name, "sim:%s", r->path);
		break;
	default:
		snprintf(link->name, sizeof link->name, "link");
		break;
	}
}

static const hb_link_ops *ops_for(hb_resource_kind kind)
{
	switch (kind) {
	case HB_RES_SERIAL: return &hb_link_serial_ops;
	case HB_RES_TTY: return &hb_link_tty_ops;
	case HB_RES_TCP: return &hb_link_tcp_ops;
	case HB_RES_SIM: return &hb_link_sim_ops;
	}
	return NULL;
}

static int effective_timeout(const hb_link *link, int timeout_ms)
{
	/* Zero or negative would mean "don't wait" or "wait forever" to some
	 * APIs; neither is ever what a caller wants, so use the resource's. */
	if (timeout_ms > 0)
		return timeout_ms;
	return link->res.timeout_ms > 0 ? link->res.timeout_ms : 2000;
}

int hb_link_open(const hb_resource *res, hb_link **out)
{
	if (!out)
		return HB_ERR_ARG;
	*out = NULL;
	hb_link *link = calloc(1, sizeof *link);
	if (!link)
		return HB_ERR_NOMEM;
	link->fd = -1;
	*out = link;
	snprintf(link->name, sizeof link->name, "link");
	if (!res)
		return hb_link_set_error(link, HB_ERR_ARG, "no resource given");
	link->res = *res;
	format_name(link);
	link->ops = ops_for(res->kind);
	if (!link->ops)
		return hb_link_set_error(link, HB_ERR_ARG, "unknown transport kind %d", (int)res->kind);
	int rc = link->ops->open(link, hb_deadline_after(effective_timeout(link, res->timeout_ms)));
	if (rc < 0) {
		if (!link->errmsg[0])
			hb_link_set_error(link, rc, "cannot open: %s", hb_status_name(rc));
		return rc;
	}
	link->open = true;
	link->errmsg[0] = '\0';
	return HB_OK;
}

void hb_link_close(hb_link *link)
{
	if (!link)
		return;
	if (link->open && link->ops && link->ops->close)
		link->ops->close(link);
	else if (link->fd >= 0)
		close(link->fd);
	free(link);
}

const char *hb_link_errmsg(const hb_link *link)
{
	if (!link)
		return "out of memory";
	return link->errmsg[0] ? link->errmsg : "no error";
}

const hb_resource *hb_link_resource(const hb_link *link)
{
	return link ? &link->res : NULL;
}

static int check_open(hb_link *link)
{
	if (!link)
		return HB_ERR_ARG;
	if (!link->open)
		return hb_link_set_error(link, HB_ERR_CLOSED, "link is not open");
	return HB_OK;
}

int hb_link_write(hb_link *link, const void *buf, size_t len, int timeout_ms)
{
	int rc = check_open(link);
	if (rc < 0)
		return rc;
	int ms = effective_timeout(link, timeout_ms);
	int64_t deadline = hb_deadline_after(ms);
	const unsigned char *p = buf;
	size_t done = 0;
	while (done < len) {
		rc = link->ops->write_some(link, p + done, len - done, deadline);
		if (rc == HB_ERR_TIMEOUT)
			return hb_link_set_error(link, HB_ERR_TIMEOUT, "could not send %zu of %zu bytes within %d ms",
						 len - done, len, ms);
		if (rc < 0)
			return rc;
		done += (size_t)rc;
	}
	return HB_OK;
}

/* Hands out one complete line from the buffer, if there is one. */
static int take_line(hb_link *link, char *out, size_t cap)
{
	unsigned char *start = link->buf + link->head;
	unsigned char *lf = memchr(start, '\n', link->tail - link->head);
	if (!lf)
		return HB_ERR_TIMEOUT; /* "not yet" */
	size_t raw = (size_t)(lf - start);
	size_t n = 0;
	bool fits = true;
	for (size_t i = 0; i < raw; i++) {
		if (start[i] == '\r')
			continue; /* CR before the LF, or a stray one inside the line */
		if (n + 1 >= cap) {
			fits = false;
			continue;
		}
		out[n++] = (char)start[i];
	}
	out[n] = '\0';
	link->head += raw + 1;
	if (link->head == link->tail)
		link->head = link->tail = 0;
	if (!fits)
		return hb_link_set_error(link, HB_ERR_PROTOCOL, "reply line of %zu bytes does not fit in %zu", raw,
					 cap - 1);
	return n > INT_MAX ? INT_MAX : (int)n;
}

int hb_link_read_line(hb_link *link, char *buf, size_t cap, int timeout_ms)
{
	int rc = check_open(link);
	if (rc < 0)
		return rc;
	if (!buf || cap == 0)
		return hb_link_set_error(link, HB_ERR_ARG, "no room for a reply");
	buf[0] = '\0';
	int ms = effective_timeout(link, timeout_ms);
	int64_t deadline = hb_deadline_after(ms);
	for (;;) {
		rc = take_line(link, buf, cap);
		if (rc != HB_ERR_TIMEOUT)
			return rc;
		if (link->head > 0) {
			memmove(link->buf, link->buf + link->head, link->tail - link->head);
			link->tail -= link->head;
			link->head = 0;
		}
		if (link->tail == sizeof link->buf) {
			link->head = link->tail = 0;
			return hb_link_set_error(link, HB_ERR_PROTOCOL, "no line end in %zu bytes of input",
						 sizeof link->buf);
		}
		rc = link->ops->read_some(link, link->buf + link->tail, sizeof link->buf - link->tail, deadline);
		if (rc == HB_ERR_TIMEOUT) {
			if (link->tail > 0)
				return hb_link_set_error(link, HB_ERR_TIMEOUT,
							 "no line end within %d ms (%zu bytes of an unfinished line)", ms,
							 link->tail);
			return hb_link_set_error(link, HB_ERR_TIMEOUT, "no reply within %d ms", ms);
		}
		if (rc < 0)
			return rc;
		link->tail += (size_t)rc;
	}
}

/* Like hb_link_drain; keeps the start of what was thrown away in keep (may
 * be NULL) so the SCPI trace can show it. quiet_ms 0 takes only what has
 * already arrived, without waiting. */
int hb_link_drain_keep(hb_link *link, int quiet_ms, int max_ms, char *keep, size_t keepcap, size_t *kept)
{
	size_t kept_n = 0;
	if (kept)
		*kept = 0;
	int rc = check_open(link);
	if (rc < 0)
		return rc;
	long discarded = 0;
	unsigned char tmp[512];

	size_t pending = link->tail - link->head;
	if (keep && keepcap) {
		size_t k = pending < keepcap ? pending : keepcap;
		memcpy(keep, link->buf + link->head, k);
		kept_n = k;
	}
	discarded += (long)pending;
	link->head = link->tail = 0;

	if (max_ms <= 0)
		max_ms = quiet_ms > 0 ? quiet_ms : 1;
	int64_t overall = hb_deadline_after(max_ms);
	for (;;) {
		int64_t until;
		if (quiet_ms <= 0) {
			until = HB_LINK_NOWAIT;
			if (hb_deadline_left_ms(overall) == 0)
				break; /* a peer that never stops talking cannot keep us here */
		} else {
			until = hb_deadline_after(quiet_ms);
			if (until > overall)
				until = overall;
			if (hb_deadline_left_ms(until) == 0)
				break;
		}
		rc = link->ops->read_some(link, tmp, sizeof tmp, until);
		if (rc == HB_ERR_TIMEOUT) {
			if (until == HB_LINK_NOWAIT || until < overall || hb_deadline_left_ms(overall) == 0)
				goto quiet;
			continue;
		}
		if (rc < 0)
			return rc;
		if (keep && kept_n < keepcap) {
			size_t k = (size_t)rc < keepcap - kept_n ? (size_t)rc : keepcap - kept_n;
			memcpy(keep + kept_n, tmp, k);
			kept_n += k;
		}
		discarded += rc;
	}
	if (kept)
		*kept = kept_n;
	return hb_link_set_error(link, HB_ERR_TIMEOUT, "input did not go quiet within %d ms (%ld bytes discarded)",
				 max_ms, discarded);
quiet:
	if (kept)
		*kept = kept_n;
	return discarded > INT_MAX ? INT_MAX : (int)discarded;
}

int hb_link_drain(hb_link *link, int quiet_ms, int max_ms)
{
	return hb_link_drain_keep(link, quiet_ms, max_ms, NULL, 0, NULL);
}
