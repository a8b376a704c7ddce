/* drivers/link_sim.c - sim: transport: a socketpair to the in-process simulated bench, so it speaks real SCPI text */
#include <errno.h>
#include <string.h>
#include <unistd.h>
#include <sys/socket.h>

#include "link_internal.h"

static int sim_open(hb_link *link, int64_t deadline)
{
	(void)deadline;
	hb_sim_role role = strcmp(link->res.path, "supply") == 0 ? HB_SIM_SUPPLY : HB_SIM_LCR;
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
	int rc;
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
	return hb_fd_write_some(link, true, buf, len, deadline);
}

static int sim_read_some(hb_link *link, void *buf, size_t cap, int64_t deadline)
{
	return hb_fd_read_some(link, true, buf, cap, deadline);
}

static void sim_close(hb_link *link)
{
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
