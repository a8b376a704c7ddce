/* drivers/link_sim.c - sim: transport: a socketpair to the in-process simulated bench, or direct synchronous calls into it in virtual time */
#include <errno.h>
#include <stdint.h>
#include <string.h>
#include <unistd.h>
#include <sys/socket.h>

#include "link_internal.h"
#include "sim/sim_internal.h"

/* In virtual time the link holds no descriptor: `port` (unused by this
 * transport otherwise) carries the bench's connection id, so the client's
 * thread runs each line itself, in the order it sends them. */
static unsigned long direct_id(const hb_link *link)
{
	return (unsigned long)(uintptr_t)link->port;
}

static int sim_open(hb_link *link, int64_t deadline)
{
	(void)deadline;
	hb_sim_role role = strcmp(link->res.path, "supply") == 0 ? HB_SIM_SUPPLY : HB_SIM_LCR;
	unsigned long id = 0;
	int rc = sim_direct_open(role, &id);
	if (rc == HB_OK) {
		link->port = (void *)(uintptr_t)id;
		link->fd = -1;
		return HB_OK;
	}
	if (rc != HB_ERR_UNSUPPORTED)
		return hb_link_set_error(link, rc, "cannot attach the simulated instrument: %s", hb_status_name(rc));
	int fds[2];
	if (socketpair(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0, fds) < 0)
		return hb_link_set_error(link, HB_ERR_IO, "socketpair: %s", strerror(errno));
	if (hb_fd_set_nonblocking(fds[0]) < 0) {
		int e = errno;
		close(fds[0]);
		close(fds[1]);
		return hb_link_set_error(link, HB_ERR_IO, "fcntl: %s", strerror(e));
	}
	hb_sim_inproc_lock();
	hb_sim *sim = hb_sim_inproc();
	if (sim) {
		rc = hb_sim_attach(sim, role, fds[1]); /* takes fds[1], also on failure */
	} else {
		close(fds[1]);
		rc = HB_ERR_UNSUPPORTED;
	}
	if (rc < 0) {
		const char *why = sim ? hb_sim_errmsg(sim) : "simulated bench not available";
		hb_link_set_error(link, rc, "cannot attach the simulated instrument: %s", why ? why : "unknown");
		hb_sim_inproc_unlock();
		close(fds[0]);
		return rc;
	}
	hb_sim_inproc_unlock();
	link->fd = fds[0];
	return HB_OK;
}

static int sim_write_some(hb_link *link, const void *buf, size_t len, int64_t deadline)
{
	if (link->port) {
		int rc = sim_direct_write(direct_id(link), buf, len);
		if (rc == HB_ERR_CLOSED)
			return hb_link_set_error(link, rc, "link closed by the simulated instrument");
		return rc;
	}
	return hb_fd_write_some(link, true, buf, len, deadline);
}

/* The time-out a read waits, in seconds; -1 only looks. Virtual time
 * advances by it, so it is made independent of how long this thread took
 * to get here: whole milliseconds, and the link's own time-out when the
 * deadline is that time-out less a little wall time. */
static double direct_timeout(const hb_link *link, int64_t deadline)
{
	if (deadline == HB_LINK_NOWAIT)
		return -1;
	int ms = hb_deadline_left_ms(deadline);
	int own = link->res.timeout_ms > 0 ? link->res.timeout_ms : 2000;
	if (ms <= own && ms > own - 100)
		ms = own;
	return ms / 1000.0;
}

static int sim_read_some(hb_link *link, void *buf, size_t cap, int64_t deadline)
{
	if (link->port) {
		int rc = sim_direct_read(direct_id(link), buf, cap, direct_timeout(link, deadline));
		if (rc == HB_ERR_CLOSED)
			return hb_link_set_error(link, rc, "link closed by the simulated instrument");
		return rc;
	}
	return hb_fd_read_some(link, true, buf, cap, deadline);
}

static void sim_close(hb_link *link)
{
	if (link->port)
		sim_direct_close(direct_id(link));
	link->port = NULL;
	if (link->fd >= 0)
		close(link->fd);
	link->fd = -1;
}

const hb_link_ops hb_link_sim_ops = {
	.prefix = "sim",
	.open = sim_open,
	.write_some = sim_write_some,
	.read_some = sim_read_some,
	.close = sim_close,
};
