/* drivers/link_tcp.c - tcp:// transport: raw SCPI socket, connect with a time-out, no Nagle delay */
#include <errno.h>
#include <netdb.h>
#include <poll.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>
#include <netinet/in.h>
#include <netinet/tcp.h>
#include <sys/socket.h>

#include "link_internal.h"

/* Non-blocking connect so an unreachable host costs the resource's
 * time-out, not the kernel's minutes of SYN retries. */
static int connect_one(const struct addrinfo *ai, int64_t deadline, int *fd_out, int *err_out)
{
	int fd = socket(ai->ai_family, ai->ai_socktype | SOCK_CLOEXEC | SOCK_NONBLOCK, ai->ai_protocol);
	if (fd < 0) {
		*err_out = errno;
		return HB_ERR_IO;
	}
	int rc = connect(fd, ai->ai_addr, ai->ai_addrlen);
	/* An interrupted connect carries on in the background, like EINPROGRESS. */
	if (rc < 0 && errno != EINPROGRESS && errno != EINTR) {
		*err_out = errno;
		close(fd);
		return HB_ERR_IO;
	}
	if (rc < 0) {
		int ev = hb_fd_wait(fd, POLLOUT, deadline);
		if (ev == 0) {
			*err_out = ETIMEDOUT;
			close(fd);
			return HB_ERR_TIMEOUT;
		}
		int so_error = 0;
		socklen_t len = sizeof so_error;
		if (ev < 0 || getsockopt(fd, SOL_SOCKET, SO_ERROR, &so_error, &len) < 0)
			so_error = errno;
		if (so_error) {
			*err_out = so_error;
			close(fd);
			return HB_ERR_IO;
		}
	}
	/* Commands are short and each is answered before the next: Nagle's
	 * algorithm would only add a delayed-ACK wait to every exchange. */
	int one = 1;
	setsockopt(fd, IPPROTO_TCP, TCP_NODELAY, &one, sizeof one);
	setsockopt(fd, SOL_SOCKET, SO_KEEPALIVE, &one, sizeof one);
	*fd_out = fd;
	return HB_OK;
}

static int tcp_open(hb_link *link, int64_t deadline)
{
	char service[16];
	snprintf(service, sizeof service, "%d", link->res.port);
	struct addrinfo hints = { .ai_family = AF_UNSPEC, .ai_socktype = SOCK_STREAM };
	struct addrinfo *list = NULL;
	int gai = getaddrinfo(link->res.path, service, &hints, &list);
	if (gai != 0)
		return hb_link_set_error(link, HB_ERR_IO, "cannot resolve host '%s': %s", link->res.path,
					 gai_strerror(gai));
	int rc = HB_ERR_IO, last_err = 0;
	for (const struct addrinfo *ai = list; ai; ai = ai->ai_next) {
		rc = connect_one(ai, deadline, &link->fd, &last_err);
		if (rc == HB_OK || rc == HB_ERR_TIMEOUT)
			break;
	}
	freeaddrinfo(list);
	if (rc == HB_ERR_TIMEOUT)
		return hb_link_set_error(link, HB_ERR_TIMEOUT, "connect: no answer within %d ms", link->res.timeout_ms);
	if (rc < 0)
		return hb_link_set_error(link, HB_ERR_IO, "connect: %s", strerror(last_err ? last_err : EIO));
	return HB_OK;
}

static int tcp_write_some(hb_link *link, const void *buf, size_t len, int64_t deadline)
{
	return hb_fd_write_some(link, true, buf, len, deadline);
}

static int tcp_read_some(hb_link *link, void *buf, size_t cap, int64_t deadline)
{
	return hb_fd_read_some(link, true, buf, cap, deadline);
}

static void tcp_close(hb_link *link)
{
	if (link->fd >= 0)
		close(link->fd);
	link->fd = -1;
}

const hb_link_ops hb_link_tcp_ops = {
	.prefix = "tcp",
	.open = tcp_open,
	.write_some = tcp_write_some,
	.read_some = tcp_read_some,
	.close = tcp_close,
};
