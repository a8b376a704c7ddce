/* drivers/link_internal.h - the transport operations table and shared helpers behind hb_link (drivers/ only) */
#ifndef HB_LINK_INTERNAL_H
#define HB_LINK_INTERNAL_H

#include <stdint.h>

#include "hb_drivers.h"

/* Surplus bytes after a line stay here for the next read; a reply longer
 * than this without an LF is a protocol error, not a reason to grow. */
#define HB_LINK_BUF_MAX 8192
#define HB_LINK_ERRMSG_MAX 320
#define HB_LINK_NAME_MAX 300

/* Deadlines are absolute CLOCK_MONOTONIC times in nanoseconds. A read given
 * HB_LINK_NOWAIT takes only what has already arrived and never blocks. */
#define HB_LINK_NOWAIT INT64_C(0)

typedef struct hb_link_ops {
	const char *prefix; /* "tcp", "tty", ... for messages */
	/* Opens the transport named by link->res; fills link->fd or link->port.
	 * On failure sets the message with hb_link_set_error and returns a status. */
	int (*open)(hb_link *link, int64_t deadline);
	/* Writes some bytes before the deadline: count (> 0) or a status. */
	int (*write_some)(hb_link *link, const void *buf, size_t len, int64_t deadline);
	/* Reads what is available, waiting until the deadline for the first
	 * byte: count (> 0), HB_ERR_TIMEOUT when nothing came, or a status
	 * (HB_ERR_CLOSED on EOF / hang-up / reset). */
	int (*read_some)(hb_link *link, void *buf, size_t cap, int64_t deadline);
	void (*close)(hb_link *link);
} hb_link_ops;

struct hb_link {
	const hb_link_ops *ops;
	hb_resource res;
	char name[HB_LINK_NAME_MAX]; /* "tcp://host:port" etc., prefixes messages */
	int fd;                      /* socket / tty descriptor; -1 when unused */
	void *port;                  /* struct sp_port * for serial: */
	bool open;
	unsigned char buf[HB_LINK_BUF_MAX];
	size_t head, tail; /* unread bytes are buf[head..tail) */
	char errmsg[HB_LINK_ERRMSG_MAX];
};

extern const hb_link_ops hb_link_tcp_ops;
extern const hb_link_ops hb_link_tty_ops;
extern const hb_link_ops hb_link_serial_ops;
extern const hb_link_ops hb_link_sim_ops;

/* Keeps "<name>: <formatted text>" as the link's last error; returns status
 * so callers can write `return hb_link_set_error(link, HB_ERR_IO, ...)`. */
int hb_link_set_error(hb_link *link, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

int64_t hb_monotonic_ns(void);
/* Deadline timeout_ms from now; timeout_ms <= 0 means "already due". */
int64_t hb_deadline_after(int timeout_ms);
/* Milliseconds left before deadline, rounded up so a wait is never zero
 * while time remains; 0 once due. */
int hb_deadline_left_ms(int64_t deadline);

/* Descriptor helpers shared by tcp:, tty: and sim:. poll for events until
 * the deadline (HB_LINK_NOWAIT: just look), retrying EINTR with the time
 * left. Returns revents (> 0), 0 on time-out, or HB_ERR_IO. */
int hb_fd_wait(int fd, short events, int64_t deadline);
/* read_some / write_some for a non-blocking descriptor. is_socket selects
 * recv/send with MSG_NOSIGNAL so a dead peer cannot raise SIGPIPE. */
int hb_fd_read_some(hb_link *link, bool is_socket, void *buf, size_t cap, int64_t deadline);
int hb_fd_write_some(hb_link *link, bool is_socket, const void *buf, size_t len, int64_t deadline);
int hb_fd_set_nonblocking(int fd);

/* hb_link_drain that also keeps the first keepcap discarded bytes (for the
 * SCPI trace); quiet_ms 0 takes only what has already arrived. */
int hb_link_drain_keep(hb_link *link, int quiet_ms, int max_ms, char *keep, size_t keepcap, size_t *kept);

#endif
