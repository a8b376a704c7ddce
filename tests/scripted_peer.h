/* tests/scripted_peer.h - a scripted instrument for link and SCPI tests: answers per a script over TCP loopback or a pty master */
#ifndef HB_TEST_SCRIPTED_PEER_H
#define HB_TEST_SCRIPTED_PEER_H

#include <errno.h>
#include <poll.h>
#include <pthread.h>
#include <signal.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>
#include <arpa/inet.h>
#include <netinet/in.h>
#include <sys/socket.h>

/* Every wait of the peer is bounded so a broken test fails instead of hanging. */
#define PEER_WAIT_MS 5000

typedef enum peer_action {
	PEER_REPLY,  /* send reply in one write */
	PEER_SPLIT,  /* send reply one byte per write */
	PEER_SILENT, /* read the command, answer nothing */
	PEER_CLOSE   /* read the command (if any), then hang up */
} peer_action;

typedef struct peer_step {
	const char *expect; /* command the client must send (line end stripped); NULL: don't wait for one */
	peer_action action;
	const char *reply;  /* bytes sent verbatim (include the line end) */
	int delay_ms;       /* before acting */
	size_t reply_len;   /* 0: strlen(reply); set for replies holding NUL bytes */
} peer_step;

typedef struct peer {
	int listen_fd; /* -1 for a pty peer */
	int port;
	int fd;
	bool is_socket;
	pthread_t thread;
	bool started;
	const peer_step *steps;
	size_t nsteps;
	char inbuf[4096];
	size_t inlen;
	/* results, read after peer_finish() */
	int mismatches;
	char mismatch[256];
	size_t commands_seen;
	size_t commands_with_cr;
	/* steps acted on so far, for tests that wait on the peer's progress */
	pthread_mutex_t mu;
	pthread_cond_t cv;
	size_t acted;
} peer;

static inline void peer_sleep_ms(int ms)
{
	struct timespec ts = { ms / 1000, (long)(ms % 1000) * 1000000L };
	while (nanosleep(&ts, &ts) < 0 && errno == EINTR)
		;
}

static void peer_send(peer *p, const void *buf, size_t len)
{
	const char *c = buf;
	while (len > 0) {
		ssize_t n = p->is_socket ? send(p->fd, c, len, MSG_NOSIGNAL) : write(p->fd, c, len);
		if (n < 0 && errno == EINTR)
			continue;
		if (n <= 0)
			return;
		c += n;
		len -= (size_t)n;
	}
}

/* One command line from the client; false on EOF, error or PEER_WAIT_MS silence. */
static bool peer_read_line(peer *p, char *line, size_t cap)
{
	for (;;) {
		char *lf = memchr(p->inbuf, '\n', p->inlen);
		if (lf) {
			size_t n = (size_t)(lf - p->inbuf);
			bool cr = n > 0 && p->inbuf[n - 1] == '\r';
			size_t keep = cr ? n - 1 : n;
			if (keep >= cap)
				keep = cap - 1;
			memcpy(line, p->inbuf, keep);
			line[keep] = '\0';
			memmove(p->inbuf, lf + 1, p->inlen - n - 1);
			p->inlen -= n + 1;
			p->commands_seen++;
			if (cr)
				p->commands_with_cr++;
			return true;
		}
		if (p->inlen == sizeof p->inbuf)
			return false;
		struct pollfd pfd = { .fd = p->fd, .events = POLLIN };
		int r = poll(&pfd, 1, PEER_WAIT_MS);
		if (r < 0 && errno == EINTR)
			continue;
		if (r <= 0)
			return false;
		ssize_t n = read(p->fd, p->inbuf + p->inlen, sizeof p->inbuf - p->inlen);
		if (n < 0 && errno == EINTR)
			continue;
		if (n <= 0)
			return false;
		p->inlen += (size_t)n;
	}
}

static void peer_mark_acted(peer *p)
{
	pthread_mutex_lock(&p->mu);
	p->acted++;
	pthread_cond_broadcast(&p->cv);
	pthread_mutex_unlock(&p->mu);
}

/* Waits until the peer has acted on `steps` steps of its script (a reply
 * written: on TCP loopback the bytes are then in the client's receive
 * queue). PEER_WAIT_MS is only the hang guard. Returns whether it did. */
static inline bool peer_wait_acted(peer *p, size_t steps)
{
	struct timespec until;
	clock_gettime(CLOCK_REALTIME, &until);
	until.tv_sec += PEER_WAIT_MS / 1000;
	pthread_mutex_lock(&p->mu);
	int rc = 0;
	while (p->acted < steps && rc == 0)
		rc = pthread_cond_timedwait(&p->cv, &p->mu, &until);
	bool done = p->acted >= steps;
	pthread_mutex_unlock(&p->mu);
	return done;
}

static void *peer_main(void *arg)
{
	peer *p = arg;
	/* Signals are the client's business (the EINTR test aims them at it). */
	sigset_t all;
	sigfillset(&all);
	pthread_sigmask(SIG_BLOCK, &all, NULL);
	if (p->listen_fd >= 0) {
		struct pollfd pfd = { .fd = p->listen_fd, .events = POLLIN };
		if (poll(&pfd, 1, PEER_WAIT_MS) <= 0)
			return NULL;
		p->fd = accept(p->listen_fd, NULL, NULL);
		if (p->fd < 0)
			return NULL;
	}
	for (size_t i = 0; i < p->nsteps; i++) {
		const peer_step *s = &p->steps[i];
		if (s->expect) {
			char line[1024];
			if (!peer_read_line(p, line, sizeof line))
				break; /* the client went away: later steps were not needed */
			if (strcmp(line, s->expect) != 0) {
				p->mismatches++;
				snprintf(p->mismatch, sizeof p->mismatch, "step %zu: expected '%.100s', got '%.100s'", i, s->expect,
					 line);
			}
		}
		if (s->delay_ms > 0)
			peer_sleep_ms(s->delay_ms);
		size_t len = s->reply ? (s->reply_len ? s->reply_len : strlen(s->reply)) : 0;
		if (s->action == PEER_REPLY && len) {
			peer_send(p, s->reply, len);
		} else if (s->action == PEER_SPLIT) {
			for (size_t k = 0; k < len; k++) {
				peer_send(p, s->reply + k, 1);
				peer_sleep_ms(2);
			}
		} else if (s->action == PEER_CLOSE) {
			close(p->fd);
			p->fd = -1;
			peer_mark_acted(p);
			return NULL;
		}
		peer_mark_acted(p);
	}
	/* Script done: stay until the client hangs up, so it never sees EOF early. */
	char sink[256];
	for (;;) {
		struct pollfd pfd = { .fd = p->fd, .events = POLLIN };
		int r = poll(&pfd, 1, PEER_WAIT_MS);
		if (r < 0 && errno == EINTR)
			continue;
		if (r <= 0)
			break;
		ssize_t n = read(p->fd, sink, sizeof sink);
		if (n < 0 && errno == EINTR)
			continue;
		if (n <= 0)
			break;
	}
	return NULL;
}

/* Listens on 127.0.0.1, port chosen by the kernel; the thread accepts one client. */
static inline int peer_start_tcp(peer *p, const peer_step *steps, size_t nsteps)
{
	memset(p, 0, sizeof *p);
	pthread_mutex_init(&p->mu, NULL);
	pthread_cond_init(&p->cv, NULL);
	p->fd = -1;
	p->is_socket = true;
	p->steps = steps;
	p->nsteps = nsteps;
	p->listen_fd = socket(AF_INET, SOCK_STREAM | SOCK_CLOEXEC, 0);
	if (p->listen_fd < 0)
		return -1;
	struct sockaddr_in a = { .sin_family = AF_INET, .sin_addr.s_addr = htonl(INADDR_LOOPBACK) };
	socklen_t alen = sizeof a;
	if (bind(p->listen_fd, (struct sockaddr *)&a, sizeof a) < 0 || listen(p->listen_fd, 1) < 0 ||
	    getsockname(p->listen_fd, (struct sockaddr *)&a, &alen) < 0)
		return -1;
	p->port = ntohs(a.sin_port);
	if (pthread_create(&p->thread, NULL, peer_main, p) != 0)
		return -1;
	p->started = true;
	return 0;
}

/* Serves an already-open descriptor (a pty master); takes ownership. */
static inline int peer_start_fd(peer *p, int fd, const peer_step *steps, size_t nsteps)
{
	memset(p, 0, sizeof *p);
	pthread_mutex_init(&p->mu, NULL);
	pthread_cond_init(&p->cv, NULL);
	p->listen_fd = -1;
	p->fd = fd;
	p->steps = steps;
	p->nsteps = nsteps;
	if (pthread_create(&p->thread, NULL, peer_main, p) != 0)
		return -1;
	p->started = true;
	return 0;
}

/* Call after the client closed its end. */
static inline void peer_finish(peer *p)
{
	if (p->started)
		pthread_join(p->thread, NULL);
	p->started = false;
	if (p->fd >= 0)
		close(p->fd);
	if (p->listen_fd >= 0)
		close(p->listen_fd);
	p->fd = p->listen_fd = -1;
	pthread_cond_destroy(&p->cv);
	pthread_mutex_destroy(&p->mu);
}

#endif
