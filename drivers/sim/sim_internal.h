/* drivers/sim/sim_internal.h - simulator internals shared by its files and its test: part model, SCPI engine, server state */
#ifndef HB_SIM_INTERNAL_H
#define HB_SIM_INTERNAL_H

#include <complex.h>
#include <pthread.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include <gsl/gsl_rng.h>

#include "../hb_drivers.h"

/* Magnetic constant, CODATA 2018 (NIST SP 961), H/m. */
#define SIM_MU0 1.25663706212e-6

enum { SIM_LAW_FROHLICH = 0, SIM_LAW_LANGEVIN = 1, SIM_LAW_TANH = 2 };

/* Every number the model uses, SI units. Part parameters are replaced by a
 * preset; bench parameters survive one. */
typedef struct sim_params {
	/* part */
	double turns, ae, le, mu_i, bsat, gap, window, law;
	double rdc, cp, rlead, cfix, tan_delta, rth, tau_th;
	/* bench */
	double t_amb, alpha_cu, tau_settle, imax, vmax, bias_max;
	double time_scale, seed, noise, t_short, t_medium, t_long, t_supply;
	/* supply dynamics and read-back (a dynamics preset sets these) */
	double slew, zeta, f_n, rb_latency, rb_average;
	double rb_noise, rb_noise_abs, status_subsystem, virtual_time;
	/* the meter's gain error: every impedance it reports is (1 + gain) times the true one */
	double gain;
	/* the fixture: lead inductance in series with rlead; what sits in it
	 * (0 the part, 1 nothing: open, 2 a shorting bar: short) */
	double llead, fixture_state;
} sim_params;

typedef struct sim_param_info {
	const char *key;
	size_t offset;
	const char *unit;
	double min, max;
	bool part;
	bool integer;
	const char *desc;
} sim_param_info;

extern const sim_param_info sim_param_table[];
extern const size_t sim_param_count;

const sim_param_info *sim_param_find(const char *key);
void sim_params_defaults(sim_params *p);
/* Replaces the part parameters; HB_ERR_NOTFOUND for an unknown name. */
int sim_params_preset(sim_params *p, const char *name);
/* Replaces the supply-dynamics parameters (tau_settle, slew, zeta, f_n,
 * rb_latency, rb_average); HB_ERR_NOTFOUND for an unknown name. */
int sim_params_dynamics(sim_params *p, const char *name);

/* ---- magnetics ---- */
/* McLyman's fringing factor F = 1 + (g/sqrt(Ae)) ln(2G/g); 1 without a gap. */
double sim_fringing(const sim_params *p);
double sim_gap_eff(const sim_params *p);
/* B(H) of the core material (T) and dB/dH. */
double sim_law_b(const sim_params *p, double h, double *dbdh);
/* Solves N*I = H*le + B(H)*g_eff/mu0 for the core field; HB_ERR_FIT when
 * the root finder fails (it should not: the function is monotone). */
int sim_core_solve(const sim_params *p, double amps, double *h, double *b);
/* Incremental inductance N*Ae*dB/dI at a DC bias, H. */
double sim_inductance(const sim_params *p, double amps);
/* mu0 N^2 Ae / (le/mu_i + g_eff): the unsaturated value. */
double sim_l0_closed_form(const sim_params *p);
double sim_winding_r(const sim_params *p, double temp_c);

/* ---- supply and winding state ---- */

/* Recent output current against model time, for delayed and averaged
 * read-backs. Older samples are thinned to min_gap apart so the ring spans
 * the read-back window whatever the step size; the newest sample is always
 * the present. */
#define SIM_HIST_MAX 8192
typedef struct sim_history {
	double t[SIM_HIST_MAX];
	double amps[SIM_HIST_MAX];
	size_t head, count; /* oldest at head */
} sim_history;

void sim_history_push(sim_history *h, double t, double amps, double min_gap);
/* The current at model time t, linear between samples; the oldest / newest
 * sample outside the span. NAN when empty. */
double sim_history_at(const sim_history *h, double t);
/* Mean over [t0, t1] (trapezoids between samples); sim_history_at(t1)
 * when the interval is empty. */
double sim_history_mean(const sim_history *h, double t0, double t1);
/* Rebases every sample time by -shift (the virtual clock starts at 0). */
void sim_history_shift(sim_history *h, double shift);

typedef struct sim_state {
	double amps;     /* real output current */
	double dadt;     /* its rate of change, A/s (state of the second-order response) */
	double t;        /* model seconds since the bench started */
	double temp_c;   /* winding temperature */
	double setpoint; /* A */
	double vlimit;   /* V */
	bool output;
	bool tripped;
	sim_history *hist; /* NULL: not recorded */
} sim_state;

void sim_state_reset(const sim_params *p, sim_state *s);
/* The current the supply regulates towards and the mode it is in. */
double sim_supply_target(const sim_params *p, const sim_state *s, hb_supply_mode *mode);
/* Advances the state by dt model seconds. */
void sim_state_step(const sim_params *p, sim_state *s, double dt);
/* The longest step sim_state_step takes inside: a fraction of the fastest
 * time constant in play. */
double sim_step_max(const sim_params *p);
/* What MEAS:CURR? reports before noise: the current rb_latency ago,
 * averaged over rb_average when that is set. */
double sim_readback_amps(const sim_params *p, const sim_state *s);

/* Impedance the meter terminals see at a bias; corrections remove the
 * fixture terms as compensation would. */
double complex sim_impedance(const sim_params *p, const sim_state *s, double hertz, double bias_amps,
			     bool short_corrected, bool open_corrected);
/* Primary and secondary of a reading from Z (overload not handled here). */
void sim_reading_from_z(double complex z, double hertz, hb_equiv equiv, hb_pair pair, double *primary,
			double *secondary);

/* ---- SCPI text ---- */
/* Number with an optional SCPI-1999 suffix for unit ("HZ", "V", "A", "OHM",
 * "" for none). Returns 0 or the SCPI error code to queue. */
int sim_scpi_number(const char *text, const char *unit, double *value);
/* pattern: nodes separated by spaces, '?' before an optional node, long
 * form with the short form in upper case: "?SOURce CURRent ?LEVel". */
bool sim_scpi_header_match(const char *pattern, const char *header);
const char *sim_scpi_error_text(int code);

/* ---- instruments and server ---- */
#define SIM_ERRQ_MAX 10
#define SIM_LINE_MAX 1024
#define SIM_REPLY_MAX 4096

typedef struct sim_errq {
	int code[SIM_ERRQ_MAX];
	char text[SIM_ERRQ_MAX][96];
	int count;
	int esr, ese, sre;
} sim_errq;

typedef struct sim_faults {
	int delay_ms, drop, garble, disconnect, error_code, late_ms, deaf_ms;
	bool crlf, split, echo, trip;
	bool late_armed;
	char mute[32]; /* replies to a command containing this text are lost (empty: none) */
	int relevel;       /* after this many readings the meter's test level halves (front panel touched); 0 = never */
	int relevel_reads; /* readings counted towards it */
} sim_faults;

typedef struct sim_meter {
	double freq, level_v, level_a;
	hb_level_kind level_kind;
	hb_equiv equiv;
	hb_pair pair;
	int average;
	hb_aperture aperture;
	double bias_a;
	bool bias_on, short_corr, open_corr;
} sim_meter;

typedef enum sim_pending { SIM_PEND_NONE, SIM_PEND_READ, SIM_PEND_DCR, SIM_PEND_WAIT } sim_pending;

typedef struct sim_out {
	struct sim_out *next;
	double not_before;
	size_t len, off;
	char data[];
} sim_out;

/* DIRECT: no descriptor; the sim: link of the in-process bench calls in
 * synchronously (virtual time), see sim_direct_*. */
typedef enum sim_conn_kind { SIM_CONN_STREAM, SIM_CONN_LISTEN, SIM_CONN_PTY, SIM_CONN_DIRECT } sim_conn_kind;

/* Points at which a reading samples the impedance over its window. */
#define SIM_READ_SAMPLES 16

typedef struct sim_conn {
	struct sim_conn *next;
	int fd;
	int pty_hold; /* our own slave descriptor keeps the master from hanging up */
	hb_sim_role role;
	sim_conn_kind kind;
	bool is_socket, dead, want_write;
	char in[SIM_LINE_MAX * 4];
	size_t in_len;
	bool in_overflow;
	/* the message being executed, one ';' unit at a time */
	char line[SIM_LINE_MAX];
	size_t line_pos;
	bool line_active, reply_is_query;
	char reply[SIM_REPLY_MAX];
	size_t reply_len;
	double busy_until, deaf_until, next_send;
	sim_pending pending;
	double pend_value;
	/* a reading in progress: model-time window and the impedance sum */
	double pend_t0, pend_t1;
	int pend_samples;
	double complex pend_zsum;
	unsigned long id; /* direct connections are found by it */
	int pend_status;
	sim_out *out_head, *out_tail;
	unsigned long commands, replies;
} sim_conn;

struct hb_sim {
	sim_params p;
	sim_state s;
	sim_meter meter;
	sim_errq errq[2];
	sim_faults faults[2];
	sim_conn *conns;
	FILE *log;
	gsl_rng *rng;     /* the meter's noise (and fault garbling) */
	gsl_rng *rng_rb;  /* the supply's read-back noise: a stream of its own, so how many
	                   * read-backs a settle rule takes never shifts the meter's noise */
	double t_model; /* clock time the state was last advanced to */
	bool virtual_on; /* the clock is vnow, advanced only by the bench's users */
	double vnow;     /* virtual clock, seconds from when virtual time was switched on */
	sim_history hist;
	hb_supply_mode last_mode;
	bool last_output;
	double last_logged_amps;
	pthread_mutex_t *mutex; /* the in-process bench only */
	int wake_fd;            /* written to when the server thread must look again */
	char errmsg[256];
};

double sim_now(void);
/* The bench's clock: the monotonic wall clock, or vnow in virtual time. */
double sim_clock(const hb_sim *sim);
void sim_log(hb_sim *sim, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
void sim_advance(hb_sim *sim, double now);
void sim_errq_push(hb_sim *sim, hb_sim_role role, int code, const char *detail);
void sim_meter_reset(sim_meter *m);
/* Executes one ';'-separated unit; appends query answers to conn->reply.
 * May start a measurement (conn->pending, conn->busy_until). */
void sim_execute_unit(hb_sim *sim, sim_conn *conn, char *unit, double now);
/* Adds the impedance the meter sees now to conn's reading in progress. */
void sim_sample_reading(hb_sim *sim, sim_conn *conn);
/* Completes a measurement started by sim_execute_unit. */
void sim_finish_pending(hb_sim *sim, sim_conn *conn, double now);

/* ---- direct connections of the in-process bench (drivers/link_sim.c) ----
 * Each takes the bench's lock itself. A connection is named by an id that
 * is never reused, so a link outliving its bench gets HB_ERR_CLOSED. */
/* Opens one on the in-process bench when it runs in virtual time; returns
 * HB_ERR_UNSUPPORTED in wall time (the link then uses a socketpair). */
int sim_direct_open(hb_sim_role role, unsigned long *id);
/* Takes whole lines: each costs SIM_LINK_SECONDS of model time in virtual
 * time, then runs at once. Count taken or a status. */
int sim_direct_write(unsigned long id, const void *buf, size_t len);
/* Reply bytes that are due. Waits (virtual time: advances the clock) up to
 * timeout_s for them; timeout_s < 0 only looks. Count, HB_ERR_TIMEOUT or
 * HB_ERR_CLOSED. */
int sim_direct_read(unsigned long id, void *buf, size_t cap, double timeout_s);
void sim_direct_close(unsigned long id);

/* Model time one command line costs on the virtual link. */
#define SIM_LINK_SECONDS 0.5e-3

#endif
