/* drivers/sim/sim_scpi.c - the simulated instruments' command language: header matching, numeric suffixes, error queue, command handlers */
#include <ctype.h>
#include <errno.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <gsl/gsl_randist.h>

#include "../../common/hb_text.h"
#include "sim_internal.h"

#define SIM_OVERLOAD 9.9e37

/* Numbers on the wire are C-locale whatever locale the host process runs
 * in (hb_c_numeric_enter); uselocale is per thread, so the server thread
 * cannot disturb others. */
static void reply_add(sim_conn *conn, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void reply_add(sim_conn *conn, const char *fmt, ...)
{
	size_t cap = sizeof conn->reply;
	if (conn->reply_len + 2 >= cap)
		return;
	/* IEEE 488.2: answers to several queries of one message share one
	 * line, separated by ';'. */
	if (conn->reply_is_query)
		conn->reply[conn->reply_len++] = ';';
	va_list ap;
	va_start(ap, fmt);
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	int n = vsnprintf(conn->reply + conn->reply_len, cap - conn->reply_len, fmt, ap);
	hb_c_numeric_leave(&cn);
	va_end(ap);
	if (n > 0)
		conn->reply_len += (size_t)n < cap - conn->reply_len ? (size_t)n : cap - conn->reply_len - 1;
	conn->reply_is_query = true;
}

/* ------------------------------------------------------------------ */
/* error queue                                                         */

static const struct {
	int code;
	const char *text;
} error_texts[] = {
	{ 0, "No error" },
	{ -100, "Command error" },
	{ -102, "Syntax error" },
	{ -104, "Data type error" },
	{ -108, "Parameter not allowed" },
	{ -109, "Missing parameter" },
	{ -113, "Undefined header" },
	{ -131, "Invalid suffix" },
	{ -200, "Execution error" },
	{ -221, "Settings conflict" },
	{ -222, "Data out of range" },
	{ -224, "Illegal parameter value" },
	{ -350, "Queue overflow" },
	{ -363, "Input buffer overrun" },
	{ -410, "Query INTERRUPTED" },
};

const char *sim_scpi_error_text(int code)
{
	for (size_t i = 0; i < sizeof error_texts / sizeof error_texts[0]; i++)
		if (error_texts[i].code == code)
			return error_texts[i].text;
	return "Device-specific error";
}

void sim_errq_push(hb_sim *sim, hb_sim_role role, int code, const char *detail)
{
	sim_errq *q = &sim->errq[role];
	if (code <= -100 && code > -200)
		q->esr |= 0x20; /* command error */
	else if (code <= -200 && code > -300)
		q->esr |= 0x10; /* execution error */
	else if (code <= -400 && code > -500)
		q->esr |= 0x04; /* query error */
	else
		q->esr |= 0x08; /* device-dependent */
	int slot;
	if (q->count < SIM_ERRQ_MAX) {
		slot = q->count++;
	} else {
		/* SCPI-1999 21.8: a full queue replaces its newest entry by -350. */
		slot = SIM_ERRQ_MAX - 1;
		code = -350;
		detail = NULL;
	}
	q->code[slot] = code;
	if (detail && *detail)
		snprintf(q->text[slot], sizeof q->text[slot], "%s;%.60s", sim_scpi_error_text(code), detail);
	else
		snprintf(q->text[slot], sizeof q->text[slot], "%s", sim_scpi_error_text(code));
}

static void errq_pop(sim_errq *q, int *code, char *text, size_t cap)
{
	if (q->count == 0) {
		*code = 0;
		snprintf(text, cap, "No error");
		return;
	}
	*code = q->code[0];
	snprintf(text, cap, "%s", q->text[0]);
	q->count--;
	memmove(&q->code[0], &q->code[1], (size_t)q->count * sizeof q->code[0]);
	memmove(&q->text[0], &q->text[1], (size_t)q->count * sizeof q->text[0]);
}

/* ------------------------------------------------------------------ */
/* header matching and parameters                                      */

static bool node_matches(const char *node, size_t node_len, const char *in, size_t in_len)
{
	size_t short_len = 0;
	while (short_len < node_len && (isupper((unsigned char)node[short_len]) || isdigit((unsigned char)node[short_len])))
		short_len++;
	if (in_len == node_len && strncasecmp(node, in, in_len) == 0)
		return true;
	return in_len == short_len && strncasecmp(node, in, in_len) == 0;
}

typedef struct span {
	const char *s;
	size_t n;
	bool optional;
} span;

static bool match_from(const span *pat, int np, const span *in, int ni)
{
	if (np == 0)
		return ni == 0;
	if (ni > 0 && node_matches(pat->s, pat->n, in->s, in->n) && match_from(pat + 1, np - 1, in + 1, ni - 1))
		return true;
	return pat->optional && match_from(pat + 1, np - 1, in, ni);
}

bool sim_scpi_header_match(const char *pattern, const char *header)
{
	span pat[12], in[12];
	int np = 0, ni = 0;
	for (const char *p = pattern; *p && np < 12;) {
		while (*p == ' ')
			p++;
		if (!*p)
			break;
		bool opt = *p == '?';
		if (opt)
			p++;
		const char *e = p;
		while (*e && *e != ' ')
			e++;
		pat[np++] = (span){ p, (size_t)(e - p), opt };
		p = e;
	}
	const char *h = header;
	if (*h == ':')
		h++;
	while (*h) {
		if (ni == 12)
			return false;
		const char *e = h;
		while (*e && *e != ':')
			e++;
		if (e == h)
			return false;
		in[ni++] = (span){ h, (size_t)(e - h), false };
		h = *e ? e + 1 : e;
		if (*e == ':' && !*h)
			return false;
	}
	return match_from(pat, np, in, ni);
}

static const struct {
	const char *text;
	double factor;
} multipliers[] = {
	/* SCPI-1999 Vol 1, 7.7.3: M is milli, MA is mega. */
	{ "", 1 },	   { "EX", 1e18 }, { "PE", 1e15 }, { "T", 1e12 }, { "G", 1e9 }, { "MA", 1e6 },
	{ "K", 1e3 },	   { "M", 1e-3 },  { "U", 1e-6 },  { "N", 1e-9 }, { "P", 1e-12 }, { "F", 1e-15 },
	{ "A", 1e-18 },
};

int sim_scpi_number(const char *text, const char *unit, double *value)
{
	while (isspace((unsigned char)*text))
		text++;
	if (!(isdigit((unsigned char)*text) || *text == '.' || *text == '+' || *text == '-'))
		return -224;
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	char *end;
	errno = 0;
	double v = strtod(text, &end);
	int saved = errno;
	hb_c_numeric_leave(&cn);
	if (end == text || saved == ERANGE || !isfinite(v) || memchr(text, 'x', (size_t)(end - text)) ||
	    memchr(text, 'X', (size_t)(end - text)))
		return -224;
	while (isspace((unsigned char)*end))
		end++;
	char suffix[16];
	size_t n = 0;
	while (end[n] && !isspace((unsigned char)end[n])) {
		if (!isalpha((unsigned char)end[n]) || n + 1 >= sizeof suffix)
			return -131;
		suffix[n] = (char)toupper((unsigned char)end[n]);
		n++;
	}
	suffix[n] = '\0';
	for (const char *t = end + n; *t; t++)
		if (!isspace((unsigned char)*t))
			return -224;
	double factor = 0;
	if ((strcmp(unit, "HZ") == 0 && strcmp(suffix, "MHZ") == 0) ||
	    (strcmp(unit, "OHM") == 0 && strcmp(suffix, "MOHM") == 0)) {
		factor = 1e6;
	} else {
		size_t ul = strlen(unit);
		if (ul && n >= ul && strcmp(suffix + n - ul, unit) == 0)
			suffix[n - ul] = '\0';
		for (size_t i = 0; i < sizeof multipliers / sizeof multipliers[0]; i++)
			if (strcmp(suffix, multipliers[i].text) == 0)
				factor = multipliers[i].factor;
		if (factor == 0)
			return -131;
	}
	*value = v * factor;
	return 0;
}

/* A numeric parameter with MINimum / MAXimum / DEFault and a range check. */
static int param_number(const char *text, const char *unit, double min, double max, double def, double *value)
{
	if (!text || !*text)
		return -109;
	if (strcasecmp(text, "MIN") == 0 || strcasecmp(text, "MINIMUM") == 0) {
		*value = min;
		return 0;
	}
	if (strcasecmp(text, "MAX") == 0 || strcasecmp(text, "MAXIMUM") == 0) {
		*value = max;
		return 0;
	}
	if (strcasecmp(text, "DEF") == 0 || strcasecmp(text, "DEFAULT") == 0) {
		*value = def;
		return 0;
	}
	double v;
	int rc = sim_scpi_number(text, unit, &v);
	if (rc)
		return rc;
	if (v < min * (1 - 1e-12) - 1e-300 || v > max * (1 + 1e-12) + 1e-300)
		return -222;
	*value = v;
	return 0;
}

/* Keyword matching with short and long forms, e.g. "SERies". */
static bool keyword_is(const char *text, const char *keyword)
{
	return node_matches(keyword, strlen(keyword), text, strlen(text));
}

static int param_bool(const char *text, bool *value)
{
	if (!text || !*text)
		return -109;
	if (strcasecmp(text, "ON") == 0 || strcmp(text, "1") == 0) {
		*value = true;
		return 0;
	}
	if (strcasecmp(text, "OFF") == 0 || strcmp(text, "0") == 0) {
		*value = false;
		return 0;
	}
	return -224;
}

/* ------------------------------------------------------------------ */
/* the commands                                                        */

typedef enum cmd_id {
	C_IDN, C_RST, C_CLS, C_OPC, C_ESR, C_ESE, C_SRE, C_STB, C_WAI, C_TST,
	C_SYST_ERR, C_SYST_ERR_COUNT,
	C_FREQ, C_LEV_VOLT, C_LEV_CURR, C_FUNC, C_AVER, C_APER, C_READ, C_DCR, C_BIAS_CURR, C_BIAS_STAT,
	C_CORR_OPEN, C_CORR_SHORT,
	C_CURR, C_VOLT, C_OUTP, C_MEAS_CURR, C_MEAS_VOLT, C_QUES_COND, C_VOLT_TRIP, C_OUTP_PROT_CLEAR,
} cmd_id;

enum { ROLE_BOTH = -1 };

static const struct {
	const char *pattern;
	int role;
	cmd_id id;
} commands[] = {
	{ "SYSTem ERRor ?NEXT", ROLE_BOTH, C_SYST_ERR },
	{ "SYSTem ERRor COUNt", ROLE_BOTH, C_SYST_ERR_COUNT },
	{ "IMPedance FREQuency", HB_SIM_LCR, C_FREQ },
	{ "IMPedance LEVel VOLTage", HB_SIM_LCR, C_LEV_VOLT },
	{ "IMPedance LEVel CURRent", HB_SIM_LCR, C_LEV_CURR },
	{ "IMPedance FUNCtion", HB_SIM_LCR, C_FUNC },
	{ "IMPedance AVERage", HB_SIM_LCR, C_AVER },
	{ "IMPedance APERture", HB_SIM_LCR, C_APER },
	{ "IMPedance READ", HB_SIM_LCR, C_READ },
	{ "IMPedance DCR", HB_SIM_LCR, C_DCR },
	{ "IMPedance BIAS CURRent", HB_SIM_LCR, C_BIAS_CURR },
	{ "IMPedance BIAS STATe", HB_SIM_LCR, C_BIAS_STAT },
	{ "IMPedance CORRection OPEN", HB_SIM_LCR, C_CORR_OPEN },
	{ "IMPedance CORRection SHORt", HB_SIM_LCR, C_CORR_SHORT },
	{ "?SOURce CURRent ?LEVel ?IMMediate ?AMPLitude", HB_SIM_SUPPLY, C_CURR },
	{ "?SOURce VOLTage ?LEVel ?IMMediate ?AMPLitude", HB_SIM_SUPPLY, C_VOLT },
	{ "OUTPut ?STATe", HB_SIM_SUPPLY, C_OUTP },
	{ "MEASure CURRent ?DC", HB_SIM_SUPPLY, C_MEAS_CURR },
	{ "MEASure VOLTage ?DC", HB_SIM_SUPPLY, C_MEAS_VOLT },
	{ "STATus QUEStionable CONDition", HB_SIM_SUPPLY, C_QUES_COND },
	{ "?SOURce VOLTage PROTection TRIPped", HB_SIM_SUPPLY, C_VOLT_TRIP },
	{ "OUTPut PROTection CLEar", HB_SIM_SUPPLY, C_OUTP_PROT_CLEAR },
};

static const struct {
	const char *name;
	cmd_id id;
} common_commands[] = {
	{ "*IDN", C_IDN }, { "*RST", C_RST }, { "*CLS", C_CLS }, { "*OPC", C_OPC }, { "*ESR", C_ESR },
	{ "*ESE", C_ESE }, { "*SRE", C_SRE }, { "*STB", C_STB }, { "*WAI", C_WAI }, { "*TST", C_TST },
};

void sim_meter_reset(sim_meter *m)
{
	m->freq = 1000;
	m->level_v = 1.0;
	m->level_a = 0.01;
	m->level_kind = HB_LEVEL_VOLTAGE;
	m->equiv = HB_EQUIV_SERIES;
	m->pair = HB_PAIR_L_Q;
	m->average = 1;
	m->aperture = HB_APERTURE_MEDIUM;
	m->bias_a = 0;
	m->bias_on = false;
	m->short_corr = false;
	m->open_corr = false;
}

static double aperture_seconds(const hb_sim *sim)
{
	switch (sim->meter.aperture) {
	case HB_APERTURE_SHORT: return sim->p.t_short;
	case HB_APERTURE_LONG: return sim->p.t_long;
	default: return sim->p.t_medium;
	}
}

static double meter_bias(const hb_sim *sim)
{
	/* The supply's real output current flows through the same winding. */
	return sim->s.amps + (sim->meter.bias_on ? sim->meter.bias_a : 0);
}

static double complex meter_z(const hb_sim *sim)
{
	return sim_impedance(&sim->p, &sim->s, sim->meter.freq, meter_bias(sim), sim->meter.short_corr,
			     sim->meter.open_corr);
}

static void start_wait(hb_sim *sim, sim_conn *conn, sim_pending kind, double seconds, double now)
{
	conn->pending = kind;
	conn->busy_until = now + seconds * sim->p.time_scale;
}

void sim_sample_reading(hb_sim *sim, sim_conn *conn)
{
	conn->pend_zsum += meter_z(sim);
	conn->pend_samples++;
}

void sim_finish_pending(hb_sim *sim, sim_conn *conn, double now)
{
	/* Advanced while still pending, so the reading takes its samples. */
	sim_advance(sim, now);
	sim_pending kind = conn->pending;
	conn->pending = SIM_PEND_NONE;
	const sim_meter *m = &sim->meter;
	double ap = aperture_seconds(sim) * m->average;
	/* Averaging and longer apertures shrink the noise as 1/sqrt(time). */
	double sigma = sim->p.noise * sqrt(sim->p.t_medium / ap);
	if (kind == SIM_PEND_READ) {
		/* The reading integrates while the bias may still move: the mean
		 * of the impedance over its window, sampled at SIM_READ_SAMPLES
		 * midpoints (any the clock did not reach are taken now). */
		while (conn->pend_samples < SIM_READ_SAMPLES)
			sim_sample_reading(sim, conn);
		/* a gain error scales what the meter reports, not the part */
		double complex z = conn->pend_zsum / SIM_READ_SAMPLES * (1 + sim->p.gain);
		double mag = cabs(z);
		z += sigma * mag * (gsl_ran_gaussian(sim->rng, 1.0) + I * gsl_ran_gaussian(sim->rng, 1.0));
		int status = 0;
		double primary, secondary;
		if (!(mag < 1e8) || mag < 1e-6) {
			status = 1;
			primary = secondary = SIM_OVERLOAD;
		} else {
			sim_reading_from_z(z, m->freq, m->equiv, m->pair, &primary, &secondary);
			/* The meter's source gives at most 2 V rms. */
			if (m->level_kind == HB_LEVEL_CURRENT && m->level_a * mag > 2.0)
				status = 2;
		}
		reply_add(conn, "%.7E,%.7E,%d", primary, secondary, status);
	} else if (kind == SIM_PEND_DCR) {
		double r = sim_winding_r(&sim->p, sim->s.temp_c) + (m->short_corr ? 0 : sim->p.rlead);
		r *= (1 + sim->p.gain) * (1 + sigma * gsl_ran_gaussian(sim->rng, 1.0));
		reply_add(conn, "%.7E", r);
	} else if (kind == SIM_PEND_WAIT) {
		reply_add(conn, "%.7E", conn->pend_value);
	}
}

static void supply_measure(hb_sim *sim, sim_conn *conn, bool volts, double now)
{
	sim_advance(sim, now);
	/* The converter's read-back path: delayed and filtered as set, then
	 * noise from the read-back's own stream, one draw whatever the terms. */
	double real = sim_readback_amps(&sim->p, &sim->s);
	double sigma = sim->p.noise * 1e-3 * sim->p.imax + sim->p.rb_noise * fabs(real) + sim->p.rb_noise_abs;
	double noise = gsl_ran_gaussian(sim->rng_rb, 1.0) * sigma;
	double amps = real + noise;
	double v = 0;
	if (sim->s.output)
		v = real * (sim_winding_r(&sim->p, sim->s.temp_c) + sim->p.rlead) + noise * 0.01;
	conn->pend_value = volts ? v : amps;
	start_wait(sim, conn, SIM_PEND_WAIT, sim->p.t_supply, now);
}

static void supply_set_output(hb_sim *sim, bool on)
{
	bool asked_on = on;
	if (on && sim->faults[HB_SIM_SUPPLY].trip) {
		sim->faults[HB_SIM_SUPPLY].trip = false;
		sim->s.tripped = true;
		sim_log(sim, "supply protection TRIPPED");
	}
	if (on && sim->s.tripped) {
		sim_errq_push(sim, HB_SIM_SUPPLY, -221, "protection tripped");
		on = false;
	}
	/* The witness line for the safety tests: every command that leaves
	 * the output on or switches it off, with the current really flowing at
	 * that instant. An ON refused by a trip while off switches nothing. */
	if (!(asked_on && !on && !sim->s.output))
		sim_log(sim, "supply output %s at %.4f A", on ? "ON" : "OFF", sim->s.amps);
	sim->s.output = on;
	sim->last_output = on;
}

static void instrument_reset(hb_sim *sim, sim_conn *conn, double now)
{
	sim_advance(sim, now);
	if (conn->role == HB_SIM_LCR) {
		/* Correction data survive *RST, as a meter keeps its open/short
		 * data until the next correction or power-down (common practice). */
		bool open_corr = sim->meter.open_corr, short_corr = sim->meter.short_corr;
		sim_meter_reset(&sim->meter);
		sim->meter.open_corr = open_corr;
		sim->meter.short_corr = short_corr;
		return;
	}
	supply_set_output(sim, false);
	double old_set = sim->s.setpoint, old_v = sim->s.vlimit;
	sim_state_reset(&sim->p, &sim->s);
	if (old_set != sim->s.setpoint)
		sim_log(sim, "supply setpoint %.4f A at %.4f A", sim->s.setpoint, sim->s.amps);
	if (old_v != sim->s.vlimit)
		sim_log(sim, "supply vlimit %.4f V", sim->s.vlimit);
}

static const char *pair_name(hb_pair p)
{
	switch (p) {
	case HB_PAIR_L_R: return "LR";
	case HB_PAIR_L_D: return "LD";
	case HB_PAIR_Z_THETA: return "ZTH";
	default: return "LQ";
	}
}

/* Splits "a, b ,c" in place into at most cap trimmed items. */
static int split_params(char *text, char **items, int cap)
{
	int n = 0;
	if (!text)
		return 0;
	while (isspace((unsigned char)*text))
		text++;
	if (!*text)
		return 0;
	for (char *p = text;;) {
		char *comma = strchr(p, ',');
		if (comma)
			*comma = '\0';
		while (isspace((unsigned char)*p))
			p++;
		char *e = p + strlen(p);
		while (e > p && isspace((unsigned char)e[-1]))
			*--e = '\0';
		if (n < cap)
			items[n] = p;
		n++;
		if (!comma)
			break;
		p = comma + 1;
	}
	return n;
}

static int run_command(hb_sim *sim, sim_conn *conn, cmd_id id, bool query, char **arg, int nargs, double now)
{
	sim_meter *m = &sim->meter;
	sim_errq *q = &sim->errq[conn->role];
	const char *a0 = nargs > 0 ? arg[0] : NULL;
	double v;
	bool b;
	int rc = 0;

	/* Queries take no parameters here, settings take exactly the ones they need. */
	if (query && nargs > 0)
		return -108;
	/* A plain SCPI-1999 supply has no STATus subsystem and no protection
	 * queries: the headers are simply unknown to it. */
	if (!sim->p.status_subsystem && (id == C_QUES_COND || id == C_VOLT_TRIP || id == C_OUTP_PROT_CLEAR))
		return -113;

	switch (id) {
	case C_IDN:
		if (!query)
			return -113;
		reply_add(conn, "Henrybench,%s,%s,%s", conn->role == HB_SIM_LCR ? "SIM-LCR1" : "SIM-DCS1",
			  conn->role == HB_SIM_LCR ? "SL0001" : "SD0001", "1.0");
		return 0;
	case C_RST:
		if (query)
			return -113;
		instrument_reset(sim, conn, now);
		if (sim->faults[conn->role].deaf_ms > 0)
			conn->deaf_until = now + sim->faults[conn->role].deaf_ms / 1000.0;
		return 0;
	case C_CLS:
		if (query)
			return -113;
		q->count = 0;
		q->esr = 0;
		return 0;
	case C_OPC:
		if (query)
			reply_add(conn, "1");
		else
			q->esr |= 0x01;
		return 0;
	case C_ESR:
		if (!query)
			return -113;
		reply_add(conn, "%d", q->esr);
		q->esr = 0;
		return 0;
	case C_ESE:
	case C_SRE: {
		int *reg = id == C_ESE ? &q->ese : &q->sre;
		if (query) {
			reply_add(conn, "%d", *reg);
			return 0;
		}
		rc = param_number(a0, "", 0, 255, 0, &v);
		if (!rc)
			*reg = (int)v;
		return rc;
	}
	case C_STB:
		if (!query)
			return -113;
		reply_add(conn, "%d", (q->count ? 4 : 0) | ((q->esr & q->ese) ? 32 : 0));
		return 0;
	case C_WAI:
		return query ? -113 : 0;
	case C_TST:
		if (!query)
			return -113;
		reply_add(conn, "0");
		return 0;
	case C_SYST_ERR: {
		if (!query)
			return -113;
		int code;
		char text[96];
		errq_pop(q, &code, text, sizeof text);
		reply_add(conn, "%d,\"%s\"", code, text);
		return 0;
	}
	case C_SYST_ERR_COUNT:
		if (!query)
			return -113;
		reply_add(conn, "%d", q->count);
		return 0;
	case C_FREQ:
		if (query) {
			reply_add(conn, "%.7E", m->freq);
			return 0;
		}
		rc = param_number(a0, "HZ", 20, 10e6, 1000, &v);
		if (!rc)
			m->freq = v;
		return rc;
	case C_LEV_VOLT:
		if (query) {
			reply_add(conn, "%.7E", m->level_v);
			return 0;
		}
		rc = param_number(a0, "V", 0.005, 2, 1, &v);
		if (!rc) {
			m->level_v = v;
			m->level_kind = HB_LEVEL_VOLTAGE;
		}
		return rc;
	case C_LEV_CURR:
		if (query) {
			reply_add(conn, "%.7E", m->level_a);
			return 0;
		}
		rc = param_number(a0, "A", 50e-6, 20e-3, 0.01, &v);
		if (!rc) {
			m->level_a = v;
			m->level_kind = HB_LEVEL_CURRENT;
		}
		return rc;
	case C_FUNC: {
		if (query) {
			reply_add(conn, "%s,%s", m->equiv == HB_EQUIV_SERIES ? "SER" : "PAR", pair_name(m->pair));
			return 0;
		}
		if (nargs < 2)
			return -109;
		if (nargs > 2)
			return -108;
		hb_equiv e;
		hb_pair p;
		if (keyword_is(arg[0], "SERies"))
			e = HB_EQUIV_SERIES;
		else if (keyword_is(arg[0], "PARallel"))
			e = HB_EQUIV_PARALLEL;
		else
			return -224;
		if (strcasecmp(arg[1], "LR") == 0)
			p = HB_PAIR_L_R;
		else if (strcasecmp(arg[1], "LQ") == 0)
			p = HB_PAIR_L_Q;
		else if (strcasecmp(arg[1], "LD") == 0)
			p = HB_PAIR_L_D;
		else if (strcasecmp(arg[1], "ZTH") == 0)
			p = HB_PAIR_Z_THETA;
		else
			return -224;
		m->equiv = e;
		m->pair = p;
		return 0;
	}
	case C_AVER:
		if (query) {
			reply_add(conn, "%d", m->average);
			return 0;
		}
		rc = param_number(a0, "", 1, 256, 1, &v);
		if (!rc && v != floor(v))
			rc = -224;
		if (!rc)
			m->average = (int)v;
		return rc;
	case C_APER:
		if (query) {
			reply_add(conn, "%s", m->aperture == HB_APERTURE_SHORT ? "SHOR" :
					      m->aperture == HB_APERTURE_LONG ? "LONG" : "MED");
			return 0;
		}
		if (!a0)
			return -109;
		if (keyword_is(a0, "SHORt"))
			m->aperture = HB_APERTURE_SHORT;
		else if (keyword_is(a0, "MEDium"))
			m->aperture = HB_APERTURE_MEDIUM;
		else if (keyword_is(a0, "LONG"))
			m->aperture = HB_APERTURE_LONG;
		else
			return -224;
		return 0;
	case C_READ:
	case C_DCR:
		if (!query)
			return -113;
		sim_advance(sim, now);
		if (id == C_READ && sim->faults[conn->role].relevel > 0 &&
		    ++sim->faults[conn->role].relevel_reads == sim->faults[conn->role].relevel) {
			/* Someone at the front panel: the level the sweep set is gone. */
			m->level_v *= 0.5;
			m->level_a *= 0.5;
			sim_log(sim, "lcr fault relevel: test level halved after %d readings",
				sim->faults[conn->role].relevel);
		}
		if (id == C_READ) {
			/* The window in model time; sim_advance samples it. */
			conn->pend_t0 = sim->s.t;
			conn->pend_t1 = sim->s.t + aperture_seconds(sim) * m->average;
			conn->pend_samples = 0;
			conn->pend_zsum = 0;
		}
		start_wait(sim, conn, id == C_READ ? SIM_PEND_READ : SIM_PEND_DCR, aperture_seconds(sim) * m->average,
			   now);
		return 0;
	case C_BIAS_CURR:
		if (query) {
			reply_add(conn, "%.7E", m->bias_a);
			return 0;
		}
		rc = param_number(a0, "A", 0, sim->p.bias_max, 0, &v);
		if (!rc) {
			sim_advance(sim, now);
			m->bias_a = v;
		}
		return rc;
	case C_BIAS_STAT:
		if (query) {
			reply_add(conn, "%d", m->bias_on ? 1 : 0);
			return 0;
		}
		rc = param_bool(a0, &b);
		if (!rc) {
			sim_advance(sim, now);
			m->bias_on = b;
		}
		return rc;
	case C_CORR_OPEN:
	case C_CORR_SHORT:
		if (query)
			return -113;
		if (id == C_CORR_OPEN)
			m->open_corr = true;
		else
			m->short_corr = true;
		/* Compensation measures for a while; *OPC? answers after it. */
		start_wait(sim, conn, SIM_PEND_NONE, sim->p.t_long * 4, now);
		return 0;
	case C_CURR:
		if (query) {
			reply_add(conn, "%.7E", sim->s.setpoint);
			return 0;
		}
		rc = param_number(a0, "A", 0, sim->p.imax, 0, &v);
		if (!rc) {
			sim_advance(sim, now);
			if (v != sim->s.setpoint)
				sim_log(sim, "supply setpoint %.4f A at %.4f A", v, sim->s.amps);
			sim->s.setpoint = v;
		}
		return rc;
	case C_VOLT:
		if (query) {
			reply_add(conn, "%.7E", sim->s.vlimit);
			return 0;
		}
		rc = param_number(a0, "V", 0, sim->p.vmax, 5 < sim->p.vmax ? 5 : sim->p.vmax, &v);
		if (!rc) {
			sim_advance(sim, now);
			if (v != sim->s.vlimit)
				sim_log(sim, "supply vlimit %.4f V", v);
			sim->s.vlimit = v;
		}
		return rc;
	case C_OUTP:
		if (query) {
			reply_add(conn, "%d", sim->s.output ? 1 : 0);
			return 0;
		}
		rc = param_bool(a0, &b);
		if (!rc) {
			sim_advance(sim, now);
			supply_set_output(sim, b);
		}
		return rc;
	case C_MEAS_CURR:
	case C_MEAS_VOLT:
		if (!query)
			return -113;
		supply_measure(sim, conn, id == C_MEAS_VOLT, now);
		return 0;
	case C_QUES_COND: {
		if (!query)
			return -113;
		sim_advance(sim, now);
		hb_supply_mode mode;
		sim_supply_target(&sim->p, &sim->s, &mode);
		reply_add(conn, "%d", mode == HB_SUPPLY_MODE_CC ? 1 : mode == HB_SUPPLY_MODE_CV ? 2 : 0);
		return 0;
	}
	case C_VOLT_TRIP:
		if (!query)
			return -113;
		reply_add(conn, "%d", sim->s.tripped ? 1 : 0);
		return 0;
	case C_OUTP_PROT_CLEAR:
		if (query)
			return -113;
		sim->s.tripped = false;
		return 0;
	}
	return -113;
}

/* Commands that take no parameter reject one; numeric settings are checked
 * by their handlers. */
static bool takes_no_parameter(cmd_id id)
{
	switch (id) {
	case C_RST: case C_CLS: case C_OPC: case C_WAI: case C_CORR_OPEN: case C_CORR_SHORT:
	case C_OUTP_PROT_CLEAR:
		return true;
	default:
		return false;
	}
}

void sim_execute_unit(hb_sim *sim, sim_conn *conn, char *unit, double now)
{
	while (isspace((unsigned char)*unit))
		unit++;
	char *end = unit + strlen(unit);
	while (end > unit && isspace((unsigned char)end[-1]))
		*--end = '\0';
	if (!*unit)
		return;
	char *header = unit, *params = NULL;
	char *sp = unit;
	while (*sp && !isspace((unsigned char)*sp))
		sp++;
	if (*sp) {
		*sp = '\0';
		params = sp + 1;
	}
	size_t hl = strlen(header);
	bool query = hl > 0 && header[hl - 1] == '?';
	if (query)
		header[--hl] = '\0';

	int id = -1;
	if (header[0] == '*') {
		for (size_t i = 0; i < sizeof common_commands / sizeof common_commands[0]; i++)
			if (strcasecmp(header, common_commands[i].name) == 0)
				id = (int)common_commands[i].id;
	} else {
		for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++) {
			if (commands[i].role != ROLE_BOTH && commands[i].role != (int)conn->role)
				continue;
			if (sim_scpi_header_match(commands[i].pattern, header)) {
				id = (int)commands[i].id;
				break;
			}
		}
	}
	if (id < 0) {
		sim_errq_push(sim, conn->role, -113, header);
		return;
	}
	char *args[8];
	int n = split_params(params, args, 8);
	int rc;
	if (n > 8)
		rc = -108;
	else if (n > 0 && takes_no_parameter((cmd_id)id))
		rc = -108;
	else
		rc = run_command(sim, conn, (cmd_id)id, query, args, n, now);
	if (rc)
		sim_errq_push(sim, conn->role, rc, header);
}
