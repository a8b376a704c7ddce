/* drivers/hb_drivers.h - public API of the instrument layer: links, SCPI, profiles, meter and supply drivers, simulated bench */
#ifndef HB_DRIVERS_H
#define HB_DRIVERS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <signal.h>

#include "../common/hb_status.h"

/*
 * Every handle here follows one pattern: an _open/_new that always hands
 * back a handle when memory allows (so the caller can read the reason for a
 * failure with _errmsg), and a _close/_free that accepts NULL.
 */

/* ------------------------------------------------------------------ */
/* Resource strings                                                    */
/* ------------------------------------------------------------------ */

typedef enum hb_resource_kind {
	HB_RES_SERIAL, /* serial:/dev/ttyUSB0?baud=9600&parity=none&stop=1&flow=none (libserialport) */
	HB_RES_TTY,    /* tty:/dev/pts/3?baud=...   plain termios */
	HB_RES_TCP,    /* tcp://host[:port]         raw SCPI socket, port 5025 by default */
	HB_RES_SIM     /* sim:lcr | sim:supply      in-process simulated bench over a socketpair */
} hb_resource_kind;

typedef enum hb_eol { HB_EOL_LF, HB_EOL_CRLF } hb_eol;
typedef enum hb_parity { HB_PARITY_NONE, HB_PARITY_ODD, HB_PARITY_EVEN } hb_parity;
typedef enum hb_flow { HB_FLOW_NONE, HB_FLOW_RTSCTS, HB_FLOW_XONXOFF } hb_flow;

#define HB_RES_TEXT_MAX 256

typedef struct hb_resource {
	hb_resource_kind kind;
	char path[HB_RES_TEXT_MAX];    /* device path, host name, or "lcr"/"supply" for sim */
	int port;                      /* tcp only */
	int baud;                      /* serial/tty; default 9600 */
	int data_bits;                 /* default 8 */
	hb_parity parity;              /* default none */
	int stop_bits;                 /* default 1 */
	hb_flow flow;                  /* default none */
	int timeout_ms;                /* per operation; default 2000, accepted 1..600000 */
	hb_eol eol;                    /* line ending we send; default lf */
	char profile[HB_RES_TEXT_MAX]; /* forced profile name or path; empty = match on *IDN? */
	bool echo;                     /* echo=yes: the instrument echoes every command line */
} hb_resource;

/* Parse a resource string. On failure returns HB_ERR_ARG and writes a
 * one-line message naming the offending part into err. */
int hb_resource_parse(const char *text, hb_resource *out, char *err, size_t errlen);

/* ------------------------------------------------------------------ */
/* Links: byte transports behind one table of operations               */
/* ------------------------------------------------------------------ */

typedef struct hb_link hb_link;

/* Opens the transport named by the resource. *out is set whenever memory
 * allows, also on failure, so hb_link_errmsg() can say why. */
int hb_link_open(const hb_resource *res, hb_link **out);
void hb_link_close(hb_link *link);
const char *hb_link_errmsg(const hb_link *link);
const hb_resource *hb_link_resource(const hb_link *link);

/* Sends all bytes within timeout_ms (one write where the transport allows). */
int hb_link_write(hb_link *link, const void *buf, size_t len, int timeout_ms);
/* Reads one line ending in LF; strips the LF and any CR before it or stray
 * CRs. Returns the length (>= 0) or a negative status. Surplus bytes stay
 * buffered for the next call. */
int hb_link_read_line(hb_link *link, char *buf, size_t cap, int timeout_ms);
/* Discards input until nothing has arrived for quiet_ms (bounded by
 * max_ms overall). Returns the number of bytes discarded or a status. */
int hb_link_drain(hb_link *link, int quiet_ms, int max_ms);

/* ------------------------------------------------------------------ */
/* SCPI over any link                                                  */
/* ------------------------------------------------------------------ */

typedef struct hb_scpi hb_scpi;

#define HB_IDN_FIELD_MAX 96
typedef struct hb_idn {
	char maker[HB_IDN_FIELD_MAX];
	char model[HB_IDN_FIELD_MAX];
	char serial[HB_IDN_FIELD_MAX];
	char firmware[HB_IDN_FIELD_MAX];
	char raw[4 * HB_IDN_FIELD_MAX]; /* the reply as received */
} hb_idn;

#define HB_SCPI_ERRMSG_MAX 160
typedef struct hb_scpi_error {
	int code;
	char message[HB_SCPI_ERRMSG_MAX];
} hb_scpi_error;

/* Parses and opens the resource; *out is always set when memory allows. */
int hb_scpi_open(const char *resource, hb_scpi **out);
void hb_scpi_close(hb_scpi *scpi);
const char *hb_scpi_errmsg(const hb_scpi *scpi);
const hb_resource *hb_scpi_resource(const hb_scpi *scpi);

/* Logs every exchange with a timestamp and the tag (e.g. "lcr") to trace;
 * NULL turns tracing off. The FILE stays owned by the caller. */
void hb_scpi_set_trace(hb_scpi *scpi, FILE *trace, const char *tag);

int hb_scpi_write(hb_scpi *scpi, const char *command);
/* Drains stale input, sends, reads one reply line. */
int hb_scpi_query(hb_scpi *scpi, const char *command, char *reply, size_t cap);
/* Numeric reply in the C locale. 9.9E37 / 9.91E37 give HB_ERR_OVERLOAD
 * with *value set to the raw number. */
int hb_scpi_query_double(hb_scpi *scpi, const char *command, double *value);
int hb_scpi_idn(hb_scpi *scpi, hb_idn *idn);
/* Reads one more reply line (after hb_scpi_write of a query). */
int hb_scpi_read_line(hb_scpi *scpi, char *reply, size_t cap);
/* Waits until the line has been quiet long enough for a late reply to have
 * come and gone, discarding it: before retrying a lost or garbled query. */
int hb_scpi_drain(hb_scpi *scpi);
/* Parses a SYST:ERR? reply of the form code,"message"; false otherwise. */
bool hb_scpi_parse_error(const char *reply, hb_scpi_error *error);
int hb_scpi_reset(hb_scpi *scpi);  /* *RST then *OPC? */
int hb_scpi_clear(hb_scpi *scpi);  /* *CLS */
int hb_scpi_opc(hb_scpi *scpi);    /* *OPC? until "1" */
/* Drains SYST:ERR? (bounded) into list; *count gets the number stored,
 * *lost is set when -350 (queue overflow) was seen. */
int hb_scpi_errors(hb_scpi *scpi, hb_scpi_error *list, size_t cap, size_t *count, bool *lost);

/* Locale-independent number helpers used by every layer of the drivers. */
int hb_scpi_parse_double(const char *text, double *value); /* HB_ERR_OVERLOAD for 9.9E37/9.91E37 */
int hb_scpi_format_double(char *buf, size_t cap, double value);

/* ------------------------------------------------------------------ */
/* Dialect profiles (INI files under drivers/profiles/)                */
/* ------------------------------------------------------------------ */

typedef enum hb_instrument_kind { HB_KIND_LCR, HB_KIND_SUPPLY } hb_instrument_kind;

typedef struct hb_profile hb_profile;

/* Loads one profile file. Errors name file, line and key in err. */
int hb_profile_load(const char *path, hb_profile **out, char *err, size_t errlen);
/* A name ("generic-lcr") is looked up in the profile search path; anything
 * containing '/' or ending in ".ini" is a path. */
int hb_profile_find(const char *name_or_path, hb_profile **out, char *err, size_t errlen);
/* The highest-priority profile of this kind on the search path whose
 * regular expressions match the *IDN? maker and model (ties: first on the
 * path, then by file name); the kind's generic profile when none does. A
 * malformed profile on the path is an error (HB_ERR_PROFILE), not skipped. */
int hb_profile_match(hb_instrument_kind kind, const hb_idn *idn, hb_profile **out, char *err, size_t errlen);
/* Whether this profile's match.maker/match.model accept the IDN (false for
 * a profile without either: it is only used when forced or as fallback). */
bool hb_profile_matches(const hb_profile *profile, const hb_idn *idn);
void hb_profile_free(hb_profile *profile);
const char *hb_profile_name(const hb_profile *profile);
const char *hb_profile_path(const hb_profile *profile);
const char *hb_profile_description(const hb_profile *profile); /* NULL when absent */
hb_instrument_kind hb_profile_kind(const hb_profile *profile);
/* The driver operations the profile provides and those it lacks, each a
 * blank-separated list for 'identify'. An optional operation (probed at
 * open, see docs/profiles.md) ends in '?'; a meter that measures one fixed
 * function lists "function.fixed=ls-rs". */
void hb_profile_operations(const hb_profile *profile, char *provided, size_t pcap, char *absent, size_t acap);
/* Search path: $HENRYBENCH_PROFILE_PATH (colon-separated), then the
 * installed directory, then drivers/profiles next to the executable. */
int hb_profile_search_path(char *buf, size_t cap);

/* ------------------------------------------------------------------ */
/* Accuracy specifications (docs/profiles.md "Accuracy")              */
/* ------------------------------------------------------------------ */

/*
 * The maker's accuracy of a reading as a half-width (a +- limit), in the
 * form data sheets print it: a fraction of the reading plus an offset in
 * the quantity's unit, and for a meter an extra fraction above a
 * frequency. The GUM treats such a +- limit as a rectangular distribution
 * (JCGM 100:2008 4.3.7): u = a / sqrt(3); that is the reader's business.
 */
typedef struct hb_accuracy {
	double rel;            /* fraction of the reading, 0.001 = 0.1 %; NAN = not stated */
	double offset;         /* in the quantity's unit (A for a supply read-back), 0 = none */
	double freq_above_hz;  /* meter: above this frequency ... NAN = no such term */
	double freq_above_rel; /* ... this fraction is added to rel */
	bool placeholder;      /* an illustrative value, not yet taken from the instrument's data sheet */
	char source[128];      /* "profile generic-lcr: ...", "station file ..." */
} hb_accuracy;

void hb_accuracy_init(hb_accuracy *a);
/* "0.1%" or "0.05% + 1mA" (offset_unit "A"; NULL = no offset term allowed).
 * HB_ERR_ARG with a message naming the text. */
int hb_accuracy_parse_rel(const char *text, const char *offset_unit, double *rel, double *offset, char *err,
			  size_t errlen);
/* "100kHz:0.05%": the fraction added above the frequency. */
int hb_accuracy_parse_freq_above(const char *text, double *hz, double *rel, char *err, size_t errlen);
/* The fraction of reading in force at freq_hz (NAN freq: the basic term); NAN when not stated. */
double hb_accuracy_rel_at(const hb_accuracy *a, double freq_hz);
/* "0.1% ; above 100 kHz +0.05%", "0.05% + 1.000 mA (placeholder)"; "" when not stated. */
char *hb_accuracy_format(const hb_accuracy *a, const char *offset_unit, char *buf, size_t cap);
/* The accuracy a loaded profile states (rel NAN when it states none). */
void hb_profile_lcr_accuracy(const hb_profile *profile, hb_accuracy *out);
void hb_profile_supply_accuracy(const hb_profile *profile, hb_accuracy *out);

/* ------------------------------------------------------------------ */
/* LCR meter                                                           */
/* ------------------------------------------------------------------ */

typedef struct hb_lcr hb_lcr;

typedef enum hb_level_kind { HB_LEVEL_VOLTAGE, HB_LEVEL_CURRENT } hb_level_kind;
typedef enum hb_equiv { HB_EQUIV_SERIES, HB_EQUIV_PARALLEL } hb_equiv;
/* Primary is always inductance (H); the secondary is chosen here. */
typedef enum hb_pair { HB_PAIR_L_R, HB_PAIR_L_Q, HB_PAIR_L_D, HB_PAIR_Z_THETA } hb_pair;
typedef enum hb_aperture { HB_APERTURE_SHORT, HB_APERTURE_MEDIUM, HB_APERTURE_LONG } hb_aperture;
typedef enum hb_correction { HB_CORRECTION_OPEN, HB_CORRECTION_SHORT } hb_correction;

typedef struct hb_lcr_reading {
	double primary;   /* H (or ohm for |Z|) */
	double secondary; /* ohm, Q, D or degrees, per the chosen pair */
	int status;       /* the meter's own status field; 0 = good */
	bool overload;    /* the meter returned its overload value: not a reading */
} hb_lcr_reading;

/* Opens the link, asks *IDN?, picks the profile (forced by the resource's
 * profile= or matched on the IDN). */
int hb_lcr_open(const char *resource, FILE *trace, hb_lcr **out);
void hb_lcr_close(hb_lcr *lcr);
const char *hb_lcr_errmsg(const hb_lcr *lcr);
const hb_idn *hb_lcr_idn(const hb_lcr *lcr);
const char *hb_lcr_profile_name(const hb_lcr *lcr);
hb_scpi *hb_lcr_scpi(hb_lcr *lcr);
/* Whether the profile defines an operation, by its key (e.g. "bias", "dcr"). */
bool hb_lcr_supports(const hb_lcr *lcr, const char *operation);
/* False when the instrument's *IDN? is claimed only by supply profiles (it
 * is a supply, as 'identify' would say); true when a meter profile claims
 * it, nothing claims it, or the resource forced profile=. */
bool hb_lcr_answers_as_meter(const hb_lcr *lcr);
/* Whether the meter can apply a requested setting, before anything is
 * sent: "averaging=N" (1 always), "aperture=short|medium|long" (medium
 * always: a meter without the operation has one speed),
 * "function=series|parallel-lr|lq|ld|zth" (through 'function' or the
 * profile's function.fixed), or an operation name as for hb_lcr_supports.
 * Operations the probe at open found absent count as missing. */
bool hb_lcr_can(const hb_lcr *lcr, const char *setting);

int hb_lcr_reset(hb_lcr *lcr);
int hb_lcr_set_frequency(hb_lcr *lcr, double hertz);
int hb_lcr_set_level(hb_lcr *lcr, hb_level_kind kind, double value);
int hb_lcr_set_function(hb_lcr *lcr, hb_equiv equiv, hb_pair pair);
int hb_lcr_set_averaging(hb_lcr *lcr, int count, hb_aperture aperture);
/* Triggers one measurement and fetches it. An overload (9.9E37 or a
 * status code the profile lists as overload) returns HB_ERR_OVERLOAD with
 * reading->overload set and primary/secondary NaN: never a reading. */
int hb_lcr_measure(hb_lcr *lcr, hb_lcr_reading *reading);
/* Optional operations: HB_ERR_UNSUPPORTED when the profile lacks them. */
int hb_lcr_set_internal_bias(hb_lcr *lcr, bool on, double amps);
int hb_lcr_correct(hb_lcr *lcr, hb_correction which);
int hb_lcr_measure_dcr(hb_lcr *lcr, double *ohms);
/* The accuracy the meter's profile states (rel NAN when none). */
void hb_lcr_accuracy(const hb_lcr *lcr, hb_accuracy *out);
/* Reads the instrument's error queue; nonzero count means trouble. */
int hb_lcr_errors(hb_lcr *lcr, hb_scpi_error *list, size_t cap, size_t *count, bool *lost);

/* ------------------------------------------------------------------ */
/* DC supply used as the bias-current source                          */
/* ------------------------------------------------------------------ */

typedef struct hb_supply hb_supply;

typedef enum hb_supply_mode {
	HB_SUPPLY_MODE_UNKNOWN, /* the instrument does not report it */
	HB_SUPPLY_MODE_OFF,
	HB_SUPPLY_MODE_CC,      /* regulating current: what a bias sweep needs */
	HB_SUPPLY_MODE_CV       /* hit its voltage limit: compliance */
} hb_supply_mode;

int hb_supply_open(const char *resource, FILE *trace, hb_supply **out);
void hb_supply_close(hb_supply *supply);
const char *hb_supply_errmsg(const hb_supply *supply);
const hb_idn *hb_supply_idn(const hb_supply *supply);
const char *hb_supply_profile_name(const hb_supply *supply);
hb_scpi *hb_supply_scpi(hb_supply *supply);
bool hb_supply_supports(const hb_supply *supply, const char *operation);
/* The supply's counterpart of hb_lcr_answers_as_meter. */
bool hb_supply_answers_as_supply(const hb_supply *supply);

int hb_supply_reset(hb_supply *supply);
int hb_supply_set_voltage_limit(hb_supply *supply, double volts);
int hb_supply_set_current(hb_supply *supply, double amps);
int hb_supply_output(hb_supply *supply, bool on);
int hb_supply_measure_current(hb_supply *supply, double *amps);
int hb_supply_measure_voltage(hb_supply *supply, double *volts);
int hb_supply_get_mode(hb_supply *supply, hb_supply_mode *mode);
/* Whether the output is switched on (profile operation output.state);
 * HB_ERR_UNSUPPORTED when the profile cannot ask. */
int hb_supply_output_state(hb_supply *supply, bool *on);
/* The current set-point as the supply holds it (profile operation
 * current.query); HB_ERR_UNSUPPORTED when the profile cannot ask. */
int hb_supply_query_current(hb_supply *supply, double *amps);
/* The read-back current accuracy the supply's profile states (rel NAN when none). */
void hb_supply_accuracy(const hb_supply *supply, hb_accuracy *out);
/* *tripped set when over-voltage/over-current protection has tripped. */
int hb_supply_protection(hb_supply *supply, bool *tripped);
int hb_supply_errors(hb_supply *supply, hb_scpi_error *list, size_t cap, size_t *count, bool *lost);

/* ------------------------------------------------------------------ */
/* Simulated bench: a gapped ferrite core behind a meter and a supply  */
/* ------------------------------------------------------------------ */

typedef struct hb_sim hb_sim;

typedef enum hb_sim_role { HB_SIM_LCR, HB_SIM_SUPPLY } hb_sim_role;

/* Creates a bench with the named preset part ("default" when NULL). */
int hb_sim_new(const char *preset, hb_sim **out);
void hb_sim_free(hb_sim *sim);
const char *hb_sim_errmsg(const hb_sim *sim);
/* Loads a preset part, resetting all part parameters (not the faults). */
int hb_sim_load_preset(hb_sim *sim, const char *preset);
/* key=value in SI units; unknown keys or out-of-range values give
 * HB_ERR_ARG with the accepted range in the message. */
int hb_sim_set_param(hb_sim *sim, const char *key, double value);
int hb_sim_get_param(const hb_sim *sim, const char *key, double *value);
/* Writes "key value unit  description" lines for --help and docs. */
void hb_sim_list_params(FILE *out);
/* The SI unit of a parameter ("m", "m2", "A", "F", ... "" for a plain
 * number), for parsing "gap=0.5mm"; NULL for an unknown key. */
const char *hb_sim_param_unit(const char *key);
/* The preset names, NULL-terminated. */
const char *const *hb_sim_presets(void);
/* Loads a named supply-dynamics preset: sets tau_settle, slew, zeta, f_n,
 * rb_latency and rb_average (bench parameters; the part is kept). Names:
 * hb_sim_dynamics(), NULL-terminated; "default" is the original behaviour. */
int hb_sim_load_dynamics(hb_sim *sim, const char *name);
const char *const *hb_sim_dynamics(void);
/* Fault injection, e.g. "delay=300", "drop=5", "garble=7", "disconnect=20",
 * "error=-222", "crlf", "split", "late=2100", "echo", "deaf=500";
 * applies to the given role. */
int hb_sim_set_fault(hb_sim *sim, hb_sim_role role, const char *spec);
/* Every command received and every change of the supply's output state and
 * current, timestamped. The FILE stays owned by the caller. */
void hb_sim_set_log(hb_sim *sim, FILE *log);

/* Serve an already-connected descriptor (socketpair end, accepted socket,
 * pty master) as the given instrument. The sim takes ownership of fd. */
int hb_sim_attach(hb_sim *sim, hb_sim_role role, int fd);
/* Listens on host:port (port 0 picks one; *bound_port gets it). */
int hb_sim_listen_tcp(hb_sim *sim, hb_sim_role role, const char *host, int port, int *bound_port);
/* Opens a pseudo-terminal; slave_path gets the path for tty: resources. */
int hb_sim_open_pty(hb_sim *sim, hb_sim_role role, char *slave_path, size_t cap);
/* Serves requests for up to timeout_ms. */
int hb_sim_poll(hb_sim *sim, int timeout_ms);
/* Serves until *stop becomes nonzero. */
int hb_sim_run(hb_sim *sim, volatile sig_atomic_t *stop);

/* The process-wide bench behind sim:lcr and sim:supply, served by a
 * background thread; created on first use. Configure it (preset, params,
 * faults, log) through the returned handle before or between opens; it
 * lives until hb_sim_inproc_shutdown(). Thread-safe against the server. */
hb_sim *hb_sim_inproc(void);
void hb_sim_inproc_lock(void);
void hb_sim_inproc_unlock(void);
void hb_sim_inproc_shutdown(void);
/* Virtual time for the in-process bench (the same as its parameter
 * virtual_time): no wall time is involved; each command line costs 0.5 ms
 * of model time, a measurement its integration time, a read with nothing
 * to come its time-out, and hb_clock_now/hb_clock_sleep run on the bench's
 * clock (installed here, uninstalled when switched off or at shutdown).
 * Switch it on before opening sim: links. Seeded runs repeat to the bit. */
int hb_sim_inproc_virtual(bool on);

/* ------------------------------------------------------------------ */
/* The bench clock                                                     */
/* ------------------------------------------------------------------ */
/* Every wait and every time stamp of the sweep engine goes through here:
 * the monotonic wall clock on a real bench; the simulated bench's own
 * clock when it runs in virtual time, so seeded runs repeat to the bit. */
double hb_clock_now(void);
/* Waits up to seconds; returns early (HB_ERR_INTERRUPTED) when *stop
 * becomes nonzero (checked at least every 20 ms of wall time). */
int hb_clock_sleep(double seconds, volatile sig_atomic_t *stop);
/* Installs a clock (NULL functions: back to the wall clock). */
typedef struct hb_clock_ops {
	double (*now)(void *ctx);
	int (*sleep)(void *ctx, double seconds, volatile sig_atomic_t *stop);
	void *ctx;
} hb_clock_ops;
void hb_clock_install(const hb_clock_ops *ops);
/* ---- instruments that echo commands (scpi.c) ---- */

/* With echo on, the line the instrument sends back after each command is
 * read and checked to be that command, then dropped; a reply follows for a
 * query. Set at open by the resource's echo=yes, or by a profile's
 * link.echo = yes once the profile is chosen. */
void hb_scpi_set_echo(hb_scpi *scpi, bool echo);
/* True when *IDN? was answered first by "*IDN?" itself while echo was off:
 * the instrument echoes, and hb_scpi_idn read the reply that followed. */
bool hb_scpi_echo_seen(const hb_scpi *scpi);

/* ------------------------------------------------------------------ */
/* Settings read back (drivers/settings.c, docs/profiles.md "Queries") */
/* ------------------------------------------------------------------ */

/* The reply of the profile's query.<name> operation, trimmed, as text.
 * Meter names: frequency, level.voltage, level.current, function,
 * averaging, aperture; supply names: voltage (the voltage limit) and
 * output.state. HB_ERR_UNSUPPORTED when the profile has no such query. */
int hb_lcr_query_setting(hb_lcr *lcr, const char *name, char *reply, size_t cap);
int hb_supply_query_setting(hb_supply *supply, const char *name, char *reply, size_t cap);

#endif
