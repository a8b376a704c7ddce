/* drivers/sim/sim.c - the simulated bench: handle, parameters, faults, log, single-threaded poll server, TCP, pty, in-process thread, virtual time and its direct links */
#define _GNU_SOURCE /* posix_openpt and ptsname_r are XSI / GNU, not plain POSIX */
#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <math.h>
#include <netdb.h>
#include <netinet/in.h>
#include <poll.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/socket.h>
#include <sys/types.h>
#include <termios.h>
#include <time.h>
#include <unistd.h>

#include <gsl/gsl_errno.h>

#include "sim_internal.h"

static const char *const role_names[] = { "lcr", "supply" };

/* Settled means within half a milliampere: the log's resolution. */
#define SETTLED_AMPS 0.5e-3
/* Gap between bytes of a reply under the split fault, wall seconds. */
#define SPLIT_GAP 0.002

double sim_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

double sim_clock(const hb_sim *sim)
{
	return sim->virtual_on ? sim->vnow : sim_now();
}

/* Connection ids are never reused, so a link outliving its bench cannot
 * reach a stranger's connection. */
static unsigned long next_conn_id;

static void lock_sim(const hb_sim *sim)
{
	if (sim && sim->mutex)
		pthread_mutex_lock(sim->mutex);
}

static void unlock_sim(const hb_sim *sim)
{
	if (sim && sim->mutex)
		pthread_mutex_unlock(sim->mutex);
}

static void wake_server(hb_sim *sim)
{
	if (sim->wake_fd >= 0) {
		char c = 1;
		/* A full pipe already holds a wake-up; nothing is lost. */
		if (write(sim->wake_fd, &c, 1) < 0 && errno != EAGAIN)
			return;
	}
}

static int set_error(hb_sim *sim, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static int set_error(hb_sim *sim, int status, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(sim->errmsg, sizeof sim->errmsg, fmt, ap);
	va_end(ap);
	return status;
}

void sim_log(hb_sim *sim, const char *fmt, ...)
{
	if (!sim->log)
		return;
	struct timespec ts;
	struct tm tm;
	clock_gettime(CLOCK_REALTIME, &ts);
	gmtime_r(&ts.tv_sec, &tm);
	char stamp[32];
	strftime(stamp, sizeof stamp, "%Y-%m-%dT%H:%M:%S", &tm);
	char text[SIM_LINE_MAX + 64];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(text, sizeof text, fmt, ap);
	va_end(ap);
	fprintf(sim->log, "%s.%03ld %s\n", stamp, ts.tv_nsec / 1000000L, text);
	fflush(sim->log);
}

static const char *mode_name(hb_supply_mode mode)
{
	switch (mode) {
	case HB_SUPPLY_MODE_CC: return "CC";
	case HB_SUPPLY_MODE_CV: return "CV";
	case HB_SUPPLY_MODE_OFF: return "OFF";
	default: return "UNKNOWN";
	}
}

/* The reading in progress that owes the earliest impedance sample, and
 * that sample's model time. */
static sim_conn *next_sample(const hb_sim *sim, double *when)
{
	sim_conn *best = NULL;
	*when = INFINITY;
	for (sim_conn *c = sim->conns; c; c = c->next) {
		if (c->pending != SIM_PEND_READ || c->pend_samples >= SIM_READ_SAMPLES)
			continue;
		double t = c->pend_t0 + (c->pend_samples + 0.5) * (c->pend_t1 - c->pend_t0) / SIM_READ_SAMPLES;
		if (t < *when) {
			*when = t;
			best = c;
		}
	}
	return best;
}

void sim_advance(hb_sim *sim, double now)
{
	double dt = (now - sim->t_model) / sim->p.time_scale;
	if (dt > 0) {
		/* Stop at every instant a reading in progress samples the
		 * impedance, so a bias moving under the reading shows in it. */
		double t_end = sim->s.t + dt, when;
		sim_conn *c;
		while ((c = next_sample(sim, &when)) && when <= t_end) {
			sim_state_step(&sim->p, &sim->s, when - sim->s.t);
			sim_sample_reading(sim, c);
		}
		sim_state_step(&sim->p, &sim->s, t_end - sim->s.t);
		sim->t_model = now;
	}
	hb_supply_mode mode;
	double target = sim_supply_target(&sim->p, &sim->s, &mode);
	if (mode != sim->last_mode) {
		sim_log(sim, "supply mode %s", mode_name(mode));
		sim->last_mode = mode;
	}
	if (fabs(sim->s.amps - target) < SETTLED_AMPS && fabs(sim->s.amps - sim->last_logged_amps) >= SETTLED_AMPS) {
		sim_log(sim, "supply current %.3f A", sim->s.amps);
		sim->last_logged_amps = sim->s.amps;
	}
}

/* ------------------------------------------------------------------ */
/* handle and parameters                                               */

int hb_sim_new(const char *preset, hb_sim **out)
{
	*out = NULL;
	hb_sim *sim = calloc(1, sizeof *sim);
	if (!sim)
		return HB_ERR_NOMEM;
	*out = sim;
	gsl_set_error_handler_off();
	sim->wake_fd = -1;
	sim_params_defaults(&sim->p);
	sim->rng = gsl_rng_alloc(gsl_rng_mt19937);
	sim->rng_rb = gsl_rng_alloc(gsl_rng_mt19937);
	if (!sim->rng || !sim->rng_rb)
		return set_error(sim, HB_ERR_NOMEM, "out of memory");
	gsl_rng_set(sim->rng, (unsigned long)sim->p.seed);
	gsl_rng_set(sim->rng_rb, (unsigned long)sim->p.seed ^ 0x5bd1e995UL);
	sim_state_reset(&sim->p, &sim->s);
	sim->s.temp_c = sim->p.t_amb;
	sim->s.hist = &sim->hist;
	sim_history_push(&sim->hist, 0, 0, 0);
	sim_meter_reset(&sim->meter);
	sim->last_mode = HB_SUPPLY_MODE_OFF;
	sim->t_model = sim_now();
	if (preset && strcmp(preset, "default") != 0)
		return hb_sim_load_preset(sim, preset);
	return HB_OK;
}

static void conn_free(sim_conn *c)
{
	while (c->out_head) {
		sim_out *o = c->out_head;
		c->out_head = o->next;
		free(o);
	}
	if (c->fd >= 0)
		close(c->fd);
	if (c->pty_hold >= 0)
		close(c->pty_hold);
	free(c);
}

void hb_sim_free(hb_sim *sim)
{
	if (!sim)
		return;
	sim_advance(sim, sim_clock(sim));
	if (sim->s.output)
		sim_log(sim, "supply exit output ON current %.3f A", sim->s.amps);
	else if (fabs(sim->s.amps - sim->last_logged_amps) >= SETTLED_AMPS)
		sim_log(sim, "supply current %.3f A", sim->s.amps);
	while (sim->conns) {
		sim_conn *c = sim->conns;
		sim->conns = c->next;
		conn_free(c);
	}
	if (sim->rng)
		gsl_rng_free(sim->rng);
	if (sim->rng_rb)
		gsl_rng_free(sim->rng_rb);
	free(sim);
}

const char *hb_sim_errmsg(const hb_sim *sim)
{
	if (!sim)
		return "out of memory";
	return sim->errmsg[0] ? sim->errmsg : "no error";
}

int hb_sim_load_preset(hb_sim *sim, const char *preset)
{
	lock_sim(sim);
	int rc = HB_OK;
	sim_advance(sim, sim_clock(sim));
	if (sim_params_preset(&sim->p, preset ? preset : "default") != HB_OK) {
		char names[160] = "";
		for (const char *const *n = hb_sim_presets(); *n; n++) {
			strncat(names, *n, sizeof names - strlen(names) - 3);
			if (n[1])
				strncat(names, ", ", sizeof names - strlen(names) - 1);
		}
		rc = set_error(sim, HB_ERR_ARG, "preset '%s' unknown; accepted: %s", preset, names);
	}
	unlock_sim(sim);
	return rc;
}

int hb_sim_load_dynamics(hb_sim *sim, const char *name)
{
	if (!sim)
		return HB_ERR_ARG;
	lock_sim(sim);
	int rc = HB_OK;
	/* Time up to now runs under the old dynamics. */
	sim_advance(sim, sim_clock(sim));
	if (!name || sim_params_dynamics(&sim->p, name) != HB_OK) {
		char names[160] = "";
		for (const char *const *n = hb_sim_dynamics(); *n; n++) {
			strncat(names, *n, sizeof names - strlen(names) - 3);
			if (n[1])
				strncat(names, ", ", sizeof names - strlen(names) - 1);
		}
		rc = set_error(sim, HB_ERR_ARG, "dynamics '%s' unknown; accepted: %s", name ? name : "(null)", names);
	}
	wake_server(sim);
	unlock_sim(sim);
	return rc;
}

static void set_virtual(hb_sim *sim, bool on);

/* State the tests and the command read back; not settable. */
static int state_value(const hb_sim *sim, const char *key, double *value)
{
	if (strcmp(key, "state.amps") == 0)
		*value = sim->s.amps;
	else if (strcmp(key, "state.temp") == 0)
		*value = sim->s.temp_c;
	else if (strcmp(key, "state.output") == 0)
		*value = sim->s.output ? 1 : 0;
	else if (strcmp(key, "state.setpoint") == 0)
		*value = sim->s.setpoint;
	else if (strcmp(key, "state.time") == 0)
		*value = sim->s.t;
	else if (strcmp(key, "state.clock") == 0)
		*value = sim_clock(sim);
	else if (strcmp(key, "state.readback") == 0)
		*value = sim_readback_amps(&sim->p, &sim->s);
	else
		return HB_ERR_NOTFOUND;
	return HB_OK;
}

int hb_sim_set_param(hb_sim *sim, const char *key, double value)
{
	lock_sim(sim);
	int rc = HB_OK;
	const sim_param_info *info = key ? sim_param_find(key) : NULL;
	if (!info) {
		rc = set_error(sim, HB_ERR_ARG, "parameter '%s' unknown (list them with 'henrybench sim --list-params')",
			       key ? key : "(null)");
		goto out;
	}
	if (!(value >= info->min && value <= info->max) || (info->integer && value != floor(value))) {
		rc = set_error(sim, HB_ERR_ARG, "%s=%g out of range: accepted %s%g .. %g %s", key, value,
			       info->integer ? "integers " : "", info->min, info->max, info->unit);
		goto out;
	}
	if (strcmp(key, "virtual_time") == 0) {
		set_virtual(sim, value != 0);
		goto out;
	}
	/* Time up to now runs under the old value. */
	sim_advance(sim, sim_clock(sim));
	*(double *)((char *)&sim->p + info->offset) = value;
	if (strcmp(key, "seed") == 0) {
		gsl_rng_set(sim->rng, (unsigned long)value);
		gsl_rng_set(sim->rng_rb, (unsigned long)value ^ 0x5bd1e995UL);
	}
	if (strcmp(key, "vmax") == 0 && sim->s.vlimit > value)
		sim->s.vlimit = value;
	if (strcmp(key, "imax") == 0 && sim->s.setpoint > value)
		sim->s.setpoint = value;
	wake_server(sim);
out:
	unlock_sim(sim);
	return rc;
}

int hb_sim_get_param(const hb_sim *sim, const char *key, double *value)
{
	if (!sim || !key || !value)
		return HB_ERR_ARG;
	lock_sim(sim);
	int rc = HB_OK;
	const sim_param_info *info = sim_param_find(key);
	/* The state is brought up to the present first, so what is read is
	 * what a query sent now would see. */
	if (strncmp(key, "state.", 6) == 0)
		sim_advance((hb_sim *)sim, sim_clock(sim));
	if (info)
		*value = *(const double *)((const char *)&sim->p + info->offset);
	else
		rc = state_value(sim, key, value) == HB_OK ? HB_OK : HB_ERR_ARG;
	unlock_sim(sim);
	return rc;
}

const char *hb_sim_param_unit(const char *key)
{
	const sim_param_info *info = key ? sim_param_find(key) : NULL;
	return info ? info->unit : NULL;
}

void hb_sim_list_params(FILE *out)
{
	sim_params d;
	sim_params_defaults(&d);
	for (size_t i = 0; i < sim_param_count; i++) {
		const sim_param_info *info = &sim_param_table[i];
		double v = *(const double *)((const char *)&d + info->offset);
		fprintf(out, "%-16s %-12g %-4s %s; %g .. %g%s\n", info->key, v, info->unit[0] ? info->unit : "-",
			info->desc, info->min, info->max, info->part ? " (part)" : "");
	}
}

/* ------------------------------------------------------------------ */
/* faults                                                              */

static int fault_one(hb_sim *sim, hb_sim_role role, const char *spec)
{
	sim_faults *f = &sim->faults[role];
	char name[32];
	const char *eq = strchr(spec, '=');
	size_t nl = eq ? (size_t)(eq - spec) : strlen(spec);
	if (nl == 0 || nl >= sizeof name)
		goto bad;
	memcpy(name, spec, nl);
	name[nl] = '\0';
	if (strcmp(name, "mute") == 0) {
		/* Text, not a number: the command whose replies are lost. */
		if (!eq || !eq[1] || strlen(eq + 1) >= sizeof f->mute)
			goto bad;
		snprintf(f->mute, sizeof f->mute, "%s", eq + 1);
		return HB_OK;
	}
	long v = 0;
	if (eq) {
		char *end;
		errno = 0;
		v = strtol(eq + 1, &end, 10);
		if (end == eq + 1 || *end || errno)
			goto bad;
	}
	struct {
		const char *name;
		int *field;
		long min, max;
	} counts[] = {
		{ "delay", &f->delay_ms, 0, 600000 },	  { "drop", &f->drop, 0, 1000000 },
		{ "garble", &f->garble, 0, 1000000 },	  { "disconnect", &f->disconnect, 0, 1000000 },
		{ "late", &f->late_ms, 0, 600000 },	  { "deaf", &f->deaf_ms, 0, 600000 },
		{ "error", &f->error_code, -999, 999 },	  { "relevel", &f->relevel, 0, 1000000 },
	};
	for (size_t i = 0; i < sizeof counts / sizeof counts[0]; i++) {
		if (strcmp(name, counts[i].name) != 0)
			continue;
		if (!eq || v < counts[i].min || v > counts[i].max)
			return set_error(sim, HB_ERR_ARG, "fault '%s': %s=N needs N in %ld .. %ld", spec, name,
					 counts[i].min, counts[i].max);
		*counts[i].field = (int)v;
		if (strcmp(name, "late") == 0)
			f->late_armed = v > 0;
		if (strcmp(name, "relevel") == 0)
			f->relevel_reads = 0;
		if (strcmp(name, "error") == 0 && v != 0)
			sim_errq_push(sim, role, (int)v, "injected");
		return HB_OK;
	}
	struct {
		const char *name;
		bool *flag;
	} flags[] = { { "crlf", &f->crlf }, { "split", &f->split }, { "echo", &f->echo }, { "trip", &f->trip } };
	for (size_t i = 0; i < sizeof flags / sizeof flags[0]; i++) {
		if (strcmp(name, flags[i].name) != 0)
			continue;
		if (eq && v != 0 && v != 1)
			goto bad;
		*flags[i].flag = eq ? v == 1 : true;
		return HB_OK;
	}
	if (strcmp(name, "none") == 0 && !eq) {
		memset(f, 0, sizeof *f);
		return HB_OK;
	}
bad:
	return set_error(sim, HB_ERR_ARG,
			 "fault '%s' unknown; accepted: delay=MS drop=N garble=N disconnect=N error=CODE late=MS "
			 "deaf=MS mute=COMMAND relevel=N crlf split echo trip none (comma-separated)",
			 spec);
}

int hb_sim_set_fault(hb_sim *sim, hb_sim_role role, const char *spec)
{
	if (!sim || (role != HB_SIM_LCR && role != HB_SIM_SUPPLY) || !spec)
		return HB_ERR_ARG;
	lock_sim(sim);
	int rc = HB_OK;
	char buf[256];
	snprintf(buf, sizeof buf, "%s", spec);
	char *save = NULL;
	for (char *tok = strtok_r(buf, ", ", &save); tok && rc == HB_OK; tok = strtok_r(NULL, ", ", &save))
		rc = fault_one(sim, role, tok);
	wake_server(sim);
	unlock_sim(sim);
	return rc;
}

void hb_sim_set_log(hb_sim *sim, FILE *log)
{
	lock_sim(sim);
	sim->log = log;
	unlock_sim(sim);
}

/* ------------------------------------------------------------------ */
/* connections                                                         */

static int make_nonblocking(int fd)
{
	int fl = fcntl(fd, F_GETFL);
	if (fl < 0 || fcntl(fd, F_SETFL, fl | O_NONBLOCK) < 0)
		return -1;
	fcntl(fd, F_SETFD, FD_CLOEXEC);
	return 0;
}

static sim_conn *conn_add(hb_sim *sim, hb_sim_role role, int fd, sim_conn_kind kind)
{
	sim_conn *c = calloc(1, sizeof *c);
	if (!c)
		return NULL;
	c->fd = fd;
	c->pty_hold = -1;
	c->role = role;
	c->kind = kind;
	c->id = ++next_conn_id;
	int type;
	socklen_t tl = sizeof type;
	c->is_socket = fd >= 0 && getsockopt(fd, SOL_SOCKET, SO_TYPE, &type, &tl) == 0;
	/* Appended, so the order of service is the order of attachment. */
	sim_conn **pp = &sim->conns;
	while (*pp)
		pp = &(*pp)->next;
	*pp = c;
	return c;
}

int hb_sim_attach(hb_sim *sim, hb_sim_role role, int fd)
{
	if (!sim || fd < 0 || (role != HB_SIM_LCR && role != HB_SIM_SUPPLY)) {
		if (fd >= 0)
			close(fd);
		return HB_ERR_ARG;
	}
	lock_sim(sim);
	int rc = HB_OK;
	if (make_nonblocking(fd) < 0) {
		rc = set_error(sim, HB_ERR_IO, "attach %s: %s", role_names[role], strerror(errno));
		close(fd);
	} else if (!conn_add(sim, role, fd, SIM_CONN_STREAM)) {
		close(fd);
		rc = set_error(sim, HB_ERR_NOMEM, "out of memory");
	} else {
		sim_log(sim, "%s connect", role_names[role]);
		wake_server(sim);
	}
	unlock_sim(sim);
	return rc;
}

int hb_sim_listen_tcp(hb_sim *sim, hb_sim_role role, const char *host, int port, int *bound_port)
{
	if (!sim || port < 0 || port > 65535 || (role != HB_SIM_LCR && role != HB_SIM_SUPPLY))
		return HB_ERR_ARG;
	lock_sim(sim);
	int rc = HB_OK, fd = -1;
	struct addrinfo hints = { .ai_family = AF_UNSPEC, .ai_socktype = SOCK_STREAM, .ai_flags = AI_PASSIVE | AI_NUMERICSERV };
	struct addrinfo *res = NULL;
	char service[16];
	snprintf(service, sizeof service, "%d", port);
	int gai = getaddrinfo(host && *host ? host : "127.0.0.1", service, &hints, &res);
	if (gai != 0) {
		rc = set_error(sim, HB_ERR_ARG, "listen %s:%d: %s", host ? host : "", port, gai_strerror(gai));
		goto out;
	}
	for (struct addrinfo *ai = res; ai; ai = ai->ai_next) {
		fd = socket(ai->ai_family, ai->ai_socktype, ai->ai_protocol);
		if (fd < 0)
			continue;
		int one = 1;
		setsockopt(fd, SOL_SOCKET, SO_REUSEADDR, &one, sizeof one);
		if (bind(fd, ai->ai_addr, ai->ai_addrlen) == 0 && listen(fd, 8) == 0)
			break;
		close(fd);
		fd = -1;
	}
	if (fd < 0) {
		rc = set_error(sim, HB_ERR_IO, "listen %s:%d: %s", host ? host : "", port, strerror(errno));
		goto out;
	}
	struct sockaddr_storage ss;
	socklen_t sl = sizeof ss;
	int got = port;
	if (getsockname(fd, (struct sockaddr *)&ss, &sl) == 0)
		got = ntohs(ss.ss_family == AF_INET6 ? ((struct sockaddr_in6 *)&ss)->sin6_port
						     : ((struct sockaddr_in *)&ss)->sin_port);
	if (make_nonblocking(fd) < 0 || !conn_add(sim, role, fd, SIM_CONN_LISTEN)) {
		close(fd);
		rc = set_error(sim, HB_ERR_IO, "listen: cannot serve the socket");
		goto out;
	}
	if (bound_port)
		*bound_port = got;
	wake_server(sim);
out:
	if (res)
		freeaddrinfo(res);
	unlock_sim(sim);
	return rc;
}

int hb_sim_open_pty(hb_sim *sim, hb_sim_role role, char *slave_path, size_t cap)
{
	if (!sim || !slave_path || cap == 0 || (role != HB_SIM_LCR && role != HB_SIM_SUPPLY))
		return HB_ERR_ARG;
	lock_sim(sim);
	int rc = HB_OK, hold = -1;
	int fd = posix_openpt(O_RDWR | O_NOCTTY);
	if (fd < 0 || grantpt(fd) < 0 || unlockpt(fd) < 0) {
		rc = set_error(sim, HB_ERR_IO, "pseudo-terminal: %s", strerror(errno));
		goto fail;
	}
	char name[128];
	if (ptsname_r(fd, name, sizeof name) != 0 || strlen(name) >= cap) {
		rc = set_error(sim, HB_ERR_IO, "pseudo-terminal: no usable slave name");
		goto fail;
	}
	snprintf(slave_path, cap, "%s", name);
	/* Without an open slave the master reports hang-up between clients;
	 * holding one ourselves lets clients come and go. */
	hold = open(slave_path, O_RDWR | O_NOCTTY);
	if (hold < 0) {
		rc = set_error(sim, HB_ERR_IO, "%s: %s", slave_path, strerror(errno));
		goto fail;
	}
	struct termios t;
	if (tcgetattr(hold, &t) == 0) {
		cfmakeraw(&t);
		tcsetattr(hold, TCSANOW, &t);
	}
	sim_conn *c;
	if (make_nonblocking(fd) < 0 || !(c = conn_add(sim, role, fd, SIM_CONN_PTY))) {
		rc = set_error(sim, HB_ERR_IO, "pseudo-terminal: cannot serve it");
		goto fail;
	}
	fcntl(hold, F_SETFD, FD_CLOEXEC);
	c->pty_hold = hold;
	sim_log(sim, "%s pty %s", role_names[role], slave_path);
	wake_server(sim);
	unlock_sim(sim);
	return HB_OK;
fail:
	if (hold >= 0)
		close(hold);
	if (fd >= 0)
		close(fd);
	unlock_sim(sim);
	return rc;
}

/* ------------------------------------------------------------------ */
/* serving                                                             */

static void queue_out(sim_conn *c, const char *data, size_t len, double not_before)
{
	sim_out *o = malloc(sizeof *o + len);
	if (!o)
		return;
	o->next = NULL;
	o->not_before = not_before;
	o->len = len;
	o->off = 0;
	memcpy(o->data, data, len);
	if (c->out_tail)
		c->out_tail->next = o;
	else
		c->out_head = o;
	c->out_tail = o;
}

static void emit_reply(hb_sim *sim, sim_conn *c, double now)
{
	sim_faults *f = &sim->faults[c->role];
	c->replies++;
	double delay = f->delay_ms / 1000.0;
	if (f->late_armed) {
		delay += f->late_ms / 1000.0;
		f->late_armed = false;
	}
	c->busy_until = now + delay;
	if (f->drop > 0 && c->replies % (unsigned long)f->drop == 0) {
		sim_log(sim, "%s fault drop", role_names[c->role]);
		return;
	}
	if (f->mute[0] && strstr(c->line, f->mute)) {
		sim_log(sim, "%s fault mute %s", role_names[c->role], f->mute);
		return;
	}
	char buf[SIM_REPLY_MAX + 2];
	memcpy(buf, c->reply, c->reply_len);
	size_t n = c->reply_len;
	if (f->garble > 0 && c->replies % (unsigned long)f->garble == 0) {
		static const char junk[] = "#~@!";
		for (size_t i = 0; i < n; i += 3)
			buf[i] = junk[gsl_rng_uniform_int(sim->rng, sizeof junk - 1)];
		sim_log(sim, "%s fault garble", role_names[c->role]);
	}
	if (f->crlf)
		buf[n++] = '\r';
	buf[n++] = '\n';
	queue_out(c, buf, n, now + delay);
}

/* Next ';' outside a quoted string, or the end. */
static size_t unit_end(const char *s, size_t from)
{
	char quote = 0;
	size_t i = from;
	for (; s[i]; i++) {
		if (quote) {
			if (s[i] == quote)
				quote = 0;
		} else if (s[i] == '"' || s[i] == '\'') {
			quote = s[i];
		} else if (s[i] == ';') {
			break;
		}
	}
	return i;
}

static void service_input(hb_sim *sim, sim_conn *c, double now)
{
	sim_faults *f = &sim->faults[c->role];
	while (!c->dead && now >= c->busy_until) {
		if (c->pending != SIM_PEND_NONE) {
			sim_finish_pending(sim, c, now);
			continue;
		}
		if (c->line_active) {
			size_t len = strlen(c->line);
			if (c->line_pos >= len) {
				c->line_active = false;
				if (c->reply_len > 0)
					emit_reply(sim, c, now);
				continue;
			}
			size_t e = unit_end(c->line, c->line_pos);
			char unit[SIM_LINE_MAX];
			memcpy(unit, c->line + c->line_pos, e - c->line_pos);
			unit[e - c->line_pos] = '\0';
			c->line_pos = e < len ? e + 1 : e;
			sim_execute_unit(sim, c, unit, now);
			continue;
		}
		char *nl = memchr(c->in, '\n', c->in_len);
		if (!nl)
			break;
		size_t ll = (size_t)(nl - c->in);
		size_t keep = ll < sizeof c->line - 1 ? ll : sizeof c->line - 1;
		memcpy(c->line, c->in, keep);
		c->line[keep] = '\0';
		memmove(c->in, nl + 1, c->in_len - ll - 1);
		c->in_len -= ll + 1;
		/* CR of a CRLF ending, and NULs that would cut the text short */
		for (size_t i = 0; i < keep; i++)
			if (c->line[i] == '\r' || c->line[i] == '\0')
				c->line[i] = ' ';
		if (now < c->deaf_until)
			continue;
		c->commands++;
		sim_log(sim, "%s cmd %s", role_names[c->role], c->line);
		if (f->disconnect > 0 && c->commands >= (unsigned long)f->disconnect) {
			sim_log(sim, "%s fault disconnect", role_names[c->role]);
			c->dead = true;
			break;
		}
		if (f->echo) {
			char buf[SIM_LINE_MAX + 2];
			size_t n = strlen(c->line);
			memcpy(buf, c->line, n);
			if (f->crlf)
				buf[n++] = '\r';
			buf[n++] = '\n';
			queue_out(c, buf, n, now);
		}
		c->line_active = true;
		c->line_pos = 0;
		c->reply_len = 0;
		c->reply_is_query = false;
	}
}

static void service_output(hb_sim *sim, sim_conn *c, double now)
{
	bool split = sim->faults[c->role].split;
	while (!c->dead && c->out_head && c->out_head->not_before <= now && (!split || now >= c->next_send)) {
		sim_out *o = c->out_head;
		size_t n = split ? 1 : o->len - o->off;
		ssize_t w = c->is_socket ? send(c->fd, o->data + o->off, n, MSG_NOSIGNAL) : write(c->fd, o->data + o->off, n);
		if (w < 0) {
			if (errno == EAGAIN || errno == EWOULDBLOCK || errno == EINTR) {
				c->want_write = true;
				return;
			}
			c->dead = true;
			return;
		}
		c->want_write = false;
		o->off += (size_t)w;
		if (o->off == o->len) {
			c->out_head = o->next;
			if (!c->out_head)
				c->out_tail = NULL;
			free(o);
		}
		if (split) {
			c->next_send = now + SPLIT_GAP;
			return;
		}
	}
}

static void service_read(hb_sim *sim, sim_conn *c)
{
	for (;;) {
		if (c->in_len == sizeof c->in) {
			/* A line longer than the buffer: drop it, as an instrument would. */
			c->in_len = 0;
			sim_errq_push(sim, c->role, -363, NULL);
		}
		ssize_t n = read(c->fd, c->in + c->in_len, sizeof c->in - c->in_len);
		if (n > 0) {
			c->in_len += (size_t)n;
			continue;
		}
		if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK || errno == EINTR))
			return;
		c->dead = true;
		return;
	}
}

static void service_accept(hb_sim *sim, sim_conn *listener)
{
	for (;;) {
		int fd = accept(listener->fd, NULL, NULL);
		if (fd < 0)
			return;
		if (make_nonblocking(fd) < 0 || !conn_add(sim, listener->role, fd, SIM_CONN_STREAM)) {
			close(fd);
			continue;
		}
		sim_log(sim, "%s connect tcp", role_names[listener->role]);
	}
}

/* Earliest moment something is due, or INFINITY. */
static double next_due(const hb_sim *sim, double now)
{
	double due = INFINITY;
	for (const sim_conn *c = sim->conns; c; c = c->next) {
		if (c->kind == SIM_CONN_LISTEN || c->kind == SIM_CONN_DIRECT)
			continue;
		bool work = c->pending != SIM_PEND_NONE || c->line_active || memchr(c->in, '\n', c->in_len);
		if (work && c->busy_until < due)
			due = c->busy_until;
		if (c->out_head) {
			double t = c->out_head->not_before;
			if (sim->faults[c->role].split && c->next_send > t)
				t = c->next_send;
			if (t < due)
				due = t;
		}
	}
	hb_supply_mode mode;
	double target = sim_supply_target(&sim->p, &sim->s, &mode);
	bool unlogged = fabs(sim->s.amps - sim->last_logged_amps) >= SETTLED_AMPS;
	if (fabs(sim->s.amps - target) >= SETTLED_AMPS || unlogged) {
		/* Look again while the current settles so the log sees it arrive. */
		double fastest = sim->p.f_n > 0 ? 1.0 / (2.0 * M_PI * sim->p.f_n) : sim->p.tau_settle;
		double t = now + fastest * sim->p.time_scale / 4;
		if (t < due)
			due = t;
	}
	return due;
}

static void reap_dead(hb_sim *sim)
{
	for (sim_conn **pp = &sim->conns; *pp;) {
		sim_conn *c = *pp;
		/* A direct connection is freed when its link closes. */
		if (!c->dead || c->kind == SIM_CONN_DIRECT) {
			pp = &c->next;
			continue;
		}
		sim_log(sim, "%s disconnect", role_names[c->role]);
		*pp = c->next;
		conn_free(c);
	}
}

/* One round: wait for descriptors or a due time (at most wait_s), then
 * serve everything that is ready. Called with the lock held; releases it
 * while waiting. */
static int serve_round(hb_sim *sim, double wait_s, int wake_read_fd)
{
	size_t n = 0;
	for (sim_conn *c = sim->conns; c; c = c->next)
		n++;
	struct pollfd *pf = calloc(n + 1, sizeof *pf);
	sim_conn **pc = calloc(n + 1, sizeof *pc);
	if (!pf || !pc) {
		free(pf);
		free(pc);
		return HB_ERR_NOMEM;
	}
	size_t k = 0;
	for (sim_conn *c = sim->conns; c; c = c->next, k++) {
		pc[k] = c;
		pf[k].fd = c->fd;
		pf[k].events = POLLIN;
		if (c->want_write)
			pf[k].events |= POLLOUT;
	}
	if (wake_read_fd >= 0) {
		pf[k].fd = wake_read_fd;
		pf[k].events = POLLIN;
		k++;
	}
	double now = sim_clock(sim);
	double due = next_due(sim, now);
	double wait = due - now;
	/* In virtual time nothing comes due by waiting: the clock moves
	 * when the bench's users move it, and they wake us. */
	if (sim->virtual_on && wait > 0)
		wait = wait_s;
	if (wait > wait_s)
		wait = wait_s;
	if (wait < 0)
		wait = 0;
	/* Nanosecond waits: rounding every due time up to a whole millisecond
	 * would add up to 1 ms to each timed reply and blur the overhead the
	 * benchmarks measure. */
	struct timespec ts = { (time_t)wait, (long)((wait - (double)(time_t)wait) * 1e9) };
	unlock_sim(sim);
	int pr = ppoll(pf, k, &ts, NULL);
	int saved = errno;
	lock_sim(sim);
	if (pr < 0 && saved != EINTR) {
		free(pf);
		free(pc);
		return set_error(sim, HB_ERR_IO, "poll: %s", strerror(saved));
	}
	now = sim_clock(sim);
	sim_advance(sim, now);
	for (size_t i = 0; i < n; i++) {
		sim_conn *c = pc[i];
		if (pr > 0 && pf[i].revents) {
			if (c->kind == SIM_CONN_LISTEN)
				service_accept(sim, c);
			else if (pf[i].revents & (POLLIN | POLLHUP | POLLERR))
				service_read(sim, c);
		}
	}
	if (wake_read_fd >= 0 && pr > 0 && pf[k - 1].revents) {
		char drain[64];
		while (read(wake_read_fd, drain, sizeof drain) > 0)
			;
	}
	/* Every connection, including ones attached while we waited. */
	for (sim_conn *c = sim->conns; c; c = c->next) {
		if (c->kind == SIM_CONN_LISTEN || c->kind == SIM_CONN_DIRECT)
			continue;
		service_input(sim, c, now);
		service_output(sim, c, now);
	}
	reap_dead(sim);
	free(pf);
	free(pc);
	return HB_OK;
}

int hb_sim_poll(hb_sim *sim, int timeout_ms)
{
	if (!sim)
		return HB_ERR_ARG;
	lock_sim(sim);
	double end = sim_now() + (timeout_ms > 0 ? timeout_ms / 1000.0 : 0);
	int rc;
	do {
		rc = serve_round(sim, end - sim_now(), -1);
	} while (rc == HB_OK && sim_now() < end);
	unlock_sim(sim);
	return rc;
}

int hb_sim_run(hb_sim *sim, volatile sig_atomic_t *stop)
{
	while (!*stop) {
		int rc = hb_sim_poll(sim, 100);
		if (rc != HB_OK)
			return rc;
	}
	return HB_OK;
}

static pthread_once_t inproc_once = PTHREAD_ONCE_INIT;
static pthread_mutex_t inproc_mutex;
static pthread_t inproc_thread;
static int inproc_pipe[2] = { -1, -1 };
static bool inproc_stop;

/* ------------------------------------------------------------------ */
/* virtual time                                                        */

static bool has_served_conns(const hb_sim *sim)
{
	for (const sim_conn *c = sim->conns; c; c = c->next)
		if (c->kind != SIM_CONN_DIRECT)
			return true;
	return false;
}

/* When a direct connection next has something to do, in clock time. */
static double direct_due(const sim_conn *c)
{
	if (c->dead)
		return INFINITY;
	bool work = c->pending != SIM_PEND_NONE || c->line_active || memchr(c->in, '\n', c->in_len);
	return work ? c->busy_until : INFINITY;
}

/* Virtual time: moves the clock to t, doing on the way, in time order,
 * whatever the direct connections have due (a measurement completing, the
 * command queued behind it), so the result depends only on the order the
 * client sent its commands in. */
static void vclock_run_to(hb_sim *sim, double t)
{
	for (;;) {
		sim_conn *first = NULL;
		double due = INFINITY;
		for (sim_conn *c = sim->conns; c; c = c->next) {
			if (c->kind != SIM_CONN_DIRECT)
				continue;
			double d = direct_due(c);
			if (d < due) {
				due = d;
				first = c;
			}
		}
		if (!first || due > t)
			break;
		if (due > sim->vnow)
			sim->vnow = due;
		sim_advance(sim, sim->vnow);
		service_input(sim, first, sim->vnow);
	}
	if (t > sim->vnow)
		sim->vnow = t;
	sim_advance(sim, sim->vnow);
	/* Descriptor clients of a virtual bench are served by the thread at
	 * the new time. */
	if (has_served_conns(sim))
		wake_server(sim);
}

static hb_sim *inproc_sim;

static double vclock_now(void *ctx)
{
	(void)ctx;
	hb_sim_inproc_lock();
	double t = inproc_sim ? sim_clock(inproc_sim) : sim_now();
	hb_sim_inproc_unlock();
	return t;
}

static int vclock_sleep(void *ctx, double seconds, volatile sig_atomic_t *stop)
{
	(void)ctx;
	if (stop && *stop)
		return HB_ERR_INTERRUPTED;
	hb_sim_inproc_lock();
	hb_sim *sim = inproc_sim;
	if (sim && sim->virtual_on && seconds > 0)
		vclock_run_to(sim, sim->vnow + seconds);
	hb_sim_inproc_unlock();
	return HB_OK;
}

static void shift_conn_times(hb_sim *sim, double shift)
{
	for (sim_conn *c = sim->conns; c; c = c->next) {
		c->busy_until += shift;
		c->deaf_until += shift;
		c->next_send += shift;
		for (sim_out *o = c->out_head; o; o = o->next)
			o->not_before += shift;
	}
}

/* Switching on starts the virtual clock and the model time at 0, so two
 * runs from a fresh bench see the same numbers to the last bit. */
static void set_virtual(hb_sim *sim, bool on)
{
	sim->p.virtual_time = on ? 1 : 0;
	if (on == sim->virtual_on)
		return;
	sim_advance(sim, sim_clock(sim));
	double wall = sim_now();
	if (on) {
		shift_conn_times(sim, -wall);
		sim_history_shift(&sim->hist, sim->s.t);
		for (sim_conn *c = sim->conns; c; c = c->next) {
			c->pend_t0 -= sim->s.t;
			c->pend_t1 -= sim->s.t;
		}
		sim->s.t = 0;
		sim->vnow = 0;
		sim->t_model = 0;
	} else {
		shift_conn_times(sim, wall - sim->vnow);
		sim->t_model = wall;
	}
	sim->virtual_on = on;
	if (sim == inproc_sim) {
		static const hb_clock_ops ops = { vclock_now, vclock_sleep, NULL };
		hb_clock_install(on ? &ops : NULL);
	}
	wake_server(sim);
}

/* ------------------------------------------------------------------ */
/* the in-process bench                                                */

static void inproc_init(void)
{
	pthread_mutexattr_t a;
	pthread_mutexattr_init(&a);
	/* Recursive: the public calls lock for themselves and may also run
	 * inside hb_sim_inproc_lock()/unlock(). */
	pthread_mutexattr_settype(&a, PTHREAD_MUTEX_RECURSIVE);
	pthread_mutex_init(&inproc_mutex, &a);
	pthread_mutexattr_destroy(&a);
}

static void *inproc_main(void *arg)
{
	hb_sim *sim = arg;
	lock_sim(sim);
	while (!inproc_stop) {
		if (serve_round(sim, 1.0, inproc_pipe[0]) != HB_OK) {
			/* Keep serving; a failed poll is retried after a pause. */
			unlock_sim(sim);
			usleep(10000);
			lock_sim(sim);
		}
	}
	unlock_sim(sim);
	return NULL;
}

hb_sim *hb_sim_inproc(void)
{
	pthread_once(&inproc_once, inproc_init);
	pthread_mutex_lock(&inproc_mutex);
	if (!inproc_sim) {
		hb_sim *sim = NULL;
		if (hb_sim_new(NULL, &sim) != HB_OK || pipe(inproc_pipe) < 0) {
			hb_sim_free(sim);
			goto out;
		}
		make_nonblocking(inproc_pipe[0]);
		make_nonblocking(inproc_pipe[1]);
		sim->mutex = &inproc_mutex;
		sim->wake_fd = inproc_pipe[1];
		inproc_stop = false;
		if (pthread_create(&inproc_thread, NULL, inproc_main, sim) != 0) {
			sim->mutex = NULL;
			hb_sim_free(sim);
			close(inproc_pipe[0]);
			close(inproc_pipe[1]);
			inproc_pipe[0] = inproc_pipe[1] = -1;
			goto out;
		}
		inproc_sim = sim;
	}
out:;
	hb_sim *sim = inproc_sim;
	pthread_mutex_unlock(&inproc_mutex);
	return sim;
}

void hb_sim_inproc_lock(void)
{
	pthread_once(&inproc_once, inproc_init);
	pthread_mutex_lock(&inproc_mutex);
}

void hb_sim_inproc_unlock(void)
{
	pthread_mutex_unlock(&inproc_mutex);
}

void hb_sim_inproc_shutdown(void)
{
	pthread_once(&inproc_once, inproc_init);
	pthread_mutex_lock(&inproc_mutex);
	hb_sim *sim = inproc_sim;
	if (!sim) {
		pthread_mutex_unlock(&inproc_mutex);
		return;
	}
	inproc_stop = true;
	if (sim->virtual_on)
		hb_clock_install(NULL);
	wake_server(sim);
	pthread_mutex_unlock(&inproc_mutex);
	pthread_join(inproc_thread, NULL);
	pthread_mutex_lock(&inproc_mutex);
	sim->mutex = NULL;
	sim->wake_fd = -1;
	hb_sim_free(sim);
	inproc_sim = NULL;
	close(inproc_pipe[0]);
	close(inproc_pipe[1]);
	inproc_pipe[0] = inproc_pipe[1] = -1;
	pthread_mutex_unlock(&inproc_mutex);
}

int hb_sim_inproc_virtual(bool on)
{
	hb_sim_inproc_lock();
	hb_sim *sim = hb_sim_inproc();
	int rc = sim ? hb_sim_set_param(sim, "virtual_time", on ? 1 : 0) : HB_ERR_NOMEM;
	hb_sim_inproc_unlock();
	return rc;
}

/* ------------------------------------------------------------------ */
/* direct connections: the sim: link in virtual time                   */

static sim_conn *direct_find(unsigned long id)
{
	if (!inproc_sim)
		return NULL;
	for (sim_conn *c = inproc_sim->conns; c; c = c->next)
		if (c->kind == SIM_CONN_DIRECT && c->id == id)
			return c;
	return NULL;
}

int sim_direct_open(hb_sim_role role, unsigned long *id)
{
	hb_sim_inproc_lock();
	int rc = HB_OK;
	hb_sim *sim = hb_sim_inproc();
	sim_conn *c;
	if (!sim) {
		rc = HB_ERR_NOMEM;
	} else if (!sim->virtual_on) {
		rc = HB_ERR_UNSUPPORTED;
	} else if (!(c = conn_add(sim, role, -1, SIM_CONN_DIRECT))) {
		rc = HB_ERR_NOMEM;
	} else {
		*id = c->id;
		sim_log(sim, "%s connect", role_names[role]);
	}
	hb_sim_inproc_unlock();
	return rc;
}

int sim_direct_write(unsigned long id, const void *buf, size_t len)
{
	hb_sim_inproc_lock();
	int rc = (int)len;
	const char *p = buf;
	while (len > 0) {
		sim_conn *c = direct_find(id);
		if (!c || c->dead) {
			rc = HB_ERR_CLOSED;
			break;
		}
		hb_sim *sim = inproc_sim;
		const char *nl = memchr(p, '\n', len);
		size_t n = nl ? (size_t)(nl - p) + 1 : len;
		/* The line travels before it runs; other things due meanwhile
		 * happen first. */
		if (sim->virtual_on && nl)
			vclock_run_to(sim, sim->vnow + SIM_LINK_SECONDS * sim->p.time_scale);
		for (size_t done = 0; done < n;) {
			if (c->in_len == sizeof c->in) {
				/* as service_read: an overlong line is dropped */
				c->in_len = 0;
				sim_errq_push(sim, c->role, -363, NULL);
			}
			size_t k = n - done < sizeof c->in - c->in_len ? n - done : sizeof c->in - c->in_len;
			memcpy(c->in + c->in_len, p + done, k);
			c->in_len += k;
			done += k;
		}
		double now = sim_clock(sim);
		sim_advance(sim, now);
		service_input(sim, c, now);
		p += n;
		len -= n;
	}
	hb_sim_inproc_unlock();
	return rc;
}

/* Copies the reply bytes due by now. */
static int direct_take(sim_conn *c, char *buf, size_t cap, double now)
{
	size_t n = 0;
	while (n < cap && c->out_head && c->out_head->not_before <= now) {
		sim_out *o = c->out_head;
		size_t k = o->len - o->off < cap - n ? o->len - o->off : cap - n;
		memcpy(buf + n, o->data + o->off, k);
		n += k;
		o->off += k;
		if (o->off == o->len) {
			c->out_head = o->next;
			if (!c->out_head)
				c->out_tail = NULL;
			free(o);
		}
	}
	return (int)n;
}

int sim_direct_read(unsigned long id, void *buf, size_t cap, double timeout_s)
{
	if (cap > INT_MAX)
		cap = INT_MAX;
	hb_sim_inproc_lock();
	int rc;
	double limit = NAN;
	for (;;) {
		sim_conn *c = direct_find(id);
		if (!c || c->dead) {
			rc = HB_ERR_CLOSED;
			break;
		}
		hb_sim *sim = inproc_sim;
		double now = sim_clock(sim);
		if (isnan(limit))
			limit = now + timeout_s;
		sim_advance(sim, now);
		service_input(sim, c, now);
		rc = direct_take(c, buf, cap, now);
		if (rc > 0 || timeout_s < 0) {
			if (rc == 0)
				rc = HB_ERR_TIMEOUT;
			break;
		}
		double next = direct_due(c);
		if (c->out_head && c->out_head->not_before < next)
			next = c->out_head->not_before;
		if (sim->virtual_on) {
			/* Nothing arrives by waiting: move the clock to the moment
			 * something would, or to the time-out. */
			if (next <= limit) {
				vclock_run_to(sim, next);
				continue;
			}
			vclock_run_to(sim, limit);
			rc = HB_ERR_TIMEOUT;
			break;
		}
		if (now >= limit) {
			rc = HB_ERR_TIMEOUT;
			break;
		}
		/* Wall time (virtual time was switched off under an open link):
		 * sleep, unlocked, in short slices towards what is due. */
		double until = next < limit ? next : limit;
		double slice = until - now;
		if (slice > 0.02)
			slice = 0.02;
		if (slice < 1e-4)
			slice = 1e-4;
		hb_sim_inproc_unlock();
		struct timespec ts = { 0, (long)(slice * 1e9) };
		nanosleep(&ts, NULL);
		hb_sim_inproc_lock();
	}
	hb_sim_inproc_unlock();
	return rc;
}

void sim_direct_close(unsigned long id)
{
	hb_sim_inproc_lock();
	sim_conn *c = direct_find(id);
	if (c) {
		hb_sim *sim = inproc_sim;
		sim_log(sim, "%s disconnect", role_names[c->role]);
		for (sim_conn **pp = &sim->conns; *pp; pp = &(*pp)->next) {
			if (*pp == c) {
				*pp = c->next;
				break;
			}
		}
		conn_free(c);
	}
	hb_sim_inproc_unlock();
}
