/* drivers/lcr.c - LCR meter driver: every command text comes from the dialect profile */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "hb_drivers.h"
#include "profile_internal.h"

#define LCR_REPLY_MAX 256

struct hb_lcr {
	hb_instrument in;
	hb_pair pair;  /* last function set: decides the primary's scale */
	bool bias_on;  /* internal bias we switched on, switched off on close */
};

int hb_lcr_open(const char *resource, FILE *trace, hb_lcr **out)
{
	if (!out)
		return HB_ERR_ARG;
	hb_lcr *lcr = calloc(1, sizeof *lcr);
	*out = lcr;
	if (!lcr)
		return HB_ERR_NOMEM;
	lcr->pair = HB_PAIR_L_R;
	int rc = hb_instrument_open(&lcr->in, "lcr meter", "lcr", HB_KIND_LCR, resource, trace);
	/* A supply on the meter's resource gets no meter commands: the
	 * bench refuses it by its IDN (hb_lcr_answers_as_meter). */
	if (rc < 0 || !lcr->in.kind_confirmed)
		return rc;
	/* Optional settings are probed with the defaults (series L-R, one
	 * reading, medium speed): what a sweep sets anyway before it reads. One the meter rejects is then absent, and asking for
	 * anything but the default is refused before a sweep starts. */
	const hb_profile *p = lcr->in.profile;
	if (hb_profile_optional(p, HB_PK_LCR_FUNCTION) && hb_profile_has(p, HB_PK_LCR_EQUIV_SERIES) &&
	    hb_profile_has(p, HB_PK_LCR_PAIR_LR)) {
		hb_parg args[2] = { { .name = "equiv", .choice = HB_EQUIV_SERIES }, { .name = "pair", .choice = HB_PAIR_L_R } };
		rc = hb_instrument_probe(&lcr->in, HB_PK_LCR_FUNCTION, args, 2);
		if (rc < 0)
			return rc;
	}
	if (hb_profile_optional(p, HB_PK_LCR_AVERAGING)) {
		hb_parg one = { .name = "count", .integer = 1 };
		rc = hb_instrument_probe(&lcr->in, HB_PK_LCR_AVERAGING, &one, 1);
		if (rc < 0)
			return rc;
	}
	if (hb_profile_optional(p, HB_PK_LCR_APERTURE) && hb_profile_has(p, HB_PK_LCR_APERTURE_MEDIUM)) {
		hb_parg medium = { .name = "aperture", .choice = HB_APERTURE_MEDIUM };
		rc = hb_instrument_probe(&lcr->in, HB_PK_LCR_APERTURE, &medium, 1);
		if (rc < 0)
			return rc;
	}
	return HB_OK;
}

void hb_lcr_close(hb_lcr *lcr)
{
	if (!lcr)
		return;
	if (lcr->bias_on && lcr->in.profile) {
		/* Current through the part stores energy: never leave it on. */
		char err[64];
		hb_parg off = { .name = "state", .choice = 0 };
		(void)hb_profile_send(lcr->in.scpi, lcr->in.profile, HB_PK_LCR_BIAS_STATE, &off, 1, "bias off", err,
				      sizeof err);
	}
	hb_instrument_release(&lcr->in);
	free(lcr);
}

const char *hb_lcr_errmsg(const hb_lcr *lcr)
{
	return hb_instrument_errmsg(lcr ? &lcr->in : NULL);
}

const hb_idn *hb_lcr_idn(const hb_lcr *lcr)
{
	return lcr ? &lcr->in.idn : NULL;
}

const char *hb_lcr_profile_name(const hb_lcr *lcr)
{
	return lcr && lcr->in.profile ? hb_profile_name(lcr->in.profile) : NULL;
}

hb_scpi *hb_lcr_scpi(hb_lcr *lcr)
{
	return lcr ? lcr->in.scpi : NULL;
}

bool hb_lcr_supports(const hb_lcr *lcr, const char *operation)
{
	return lcr && hb_instrument_supports(&lcr->in, HB_KIND_LCR, operation);
}

static const char *const equiv_words[] = { "series", "parallel" };
static const char *const pair_words[] = { "lr", "lq", "ld", "zth" };
static const char *const aperture_words[] = { "short", "medium", "long" };

static int word_index(const char *const *words, int n, const char *text, size_t len)
{
	for (int i = 0; i < n; i++)
		if (strlen(words[i]) == len && strncasecmp(words[i], text, len) == 0)
			return i;
	return -1;
}

/* Whether the meter measures this function: selected through 'function'
 * with tokens for both values, or its one function.fixed. */
static bool function_possible(const hb_lcr *lcr, hb_equiv equiv, hb_pair pair)
{
	const hb_profile *p = lcr->in.profile;
	if (hb_instrument_has(&lcr->in, HB_PK_LCR_FUNCTION))
		return hb_profile_has(p, (hb_pkey)(HB_PK_LCR_EQUIV_SERIES + equiv)) &&
		       hb_profile_has(p, (hb_pkey)(HB_PK_LCR_PAIR_LR + pair));
	hb_equiv fe;
	hb_pair fp;
	bool any;
	if (hb_profile_function_fixed(p, &fe, &fp, &any) != HB_OK)
		return false;
	return fp == pair && (any || fe == equiv);
}

bool hb_lcr_can(const hb_lcr *lcr, const char *setting)
{
	if (!lcr || !lcr->in.profile || !setting)
		return false;
	const char *eq = strchr(setting, '=');
	if (!eq)
		return hb_lcr_supports(lcr, setting);
	size_t klen = (size_t)(eq - setting);
	const char *value = eq + 1;
	const hb_profile *p = lcr->in.profile;
	if (klen == 9 && strncmp(setting, "averaging", 9) == 0) {
		char *end;
		long n = strtol(value, &end, 10);
		if (end == value || *end || n < 1)
			return false;
		return n == 1 || hb_instrument_has(&lcr->in, HB_PK_LCR_AVERAGING);
	}
	if (klen == 8 && strncmp(setting, "aperture", 8) == 0) {
		int a = word_index(aperture_words, 3, value, strlen(value));
		if (a < 0)
			return false;
		/* Without the operation the meter has one speed, taken as medium. */
		if (!hb_instrument_has(&lcr->in, HB_PK_LCR_APERTURE))
			return a == HB_APERTURE_MEDIUM;
		return hb_profile_has(p, (hb_pkey)(HB_PK_LCR_APERTURE_SHORT + a));
	}
	if (klen == 8 && strncmp(setting, "function", 8) == 0) {
		const char *dash = strchr(value, '-');
		if (!dash)
			return false;
		int e = word_index(equiv_words, 2, value, (size_t)(dash - value));
		int pr = word_index(pair_words, 4, dash + 1, strlen(dash + 1));
		if (e < 0 || pr < 0)
			return false;
		return function_possible(lcr, (hb_equiv)e, (hb_pair)pr);
	}
	return false;
}

bool hb_lcr_answers_as_meter(const hb_lcr *lcr)
{
	return lcr && lcr->in.profile && lcr->in.kind_confirmed;
}

static int usable(hb_lcr *lcr)
{
	return lcr ? hb_instrument_usable(&lcr->in) : HB_ERR_ARG;
}

int hb_lcr_reset(hb_lcr *lcr)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	const char *command = hb_profile_text(lcr->in.profile, HB_PK_LCR_RESET);
	if (!command)
		command = "*RST";
	rc = hb_instrument_command_opc(&lcr->in, command, "reset");
	if (rc < 0)
		return rc;
	lcr->bias_on = false;
	lcr->pair = HB_PAIR_L_R;
	return hb_instrument_settle_check(&lcr->in, (int)hb_profile_number(lcr->in.profile, HB_PK_LCR_SETTLE_MS, 0),
					  "reset", command);
}

int hb_lcr_set_frequency(hb_lcr *lcr, double hertz)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	if (!isfinite(hertz) || hertz <= 0)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "set frequency: %g Hz is not a positive frequency",
					  hertz);
	char what[80];
	snprintf(what, sizeof what, "set frequency to %g Hz", hertz);
	hb_parg arg = { .name = "hz", .real = hertz };
	return hb_instrument_send(&lcr->in, HB_PK_LCR_FREQUENCY, &arg, 1, what);
}

int hb_lcr_set_level(hb_lcr *lcr, hb_level_kind kind, double value)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	bool volts = kind == HB_LEVEL_VOLTAGE;
	const char *unit = volts ? "V" : "A";
	if (!isfinite(value) || value <= 0)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "set level: %g %s is not a positive level", value,
					  unit);
	char what[80];
	snprintf(what, sizeof what, "set %s level to %g %s", volts ? "voltage" : "current", value, unit);
	hb_parg arg = { .name = volts ? "volts" : "amps", .real = value };
	return hb_instrument_send(&lcr->in, volts ? HB_PK_LCR_LEVEL_VOLTAGE : HB_PK_LCR_LEVEL_CURRENT, &arg, 1, what);
}

static const char *pair_name(hb_pair pair)
{
	static const char *const names[] = { "L-R", "L-Q", "L-D", "Z-theta" };
	return pair >= HB_PAIR_L_R && pair <= HB_PAIR_Z_THETA ? names[pair] : "?";
}

int hb_lcr_set_function(hb_lcr *lcr, hb_equiv equiv, hb_pair pair)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	if ((equiv != HB_EQUIV_SERIES && equiv != HB_EQUIV_PARALLEL) || pair < HB_PAIR_L_R || pair > HB_PAIR_Z_THETA)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "set function: unknown circuit %d or pair %d",
					  (int)equiv, (int)pair);
	char what[80];
	snprintf(what, sizeof what, "set function to %s %s", equiv == HB_EQUIV_SERIES ? "series" : "parallel",
		 pair_name(pair));
	if (!hb_instrument_has(&lcr->in, HB_PK_LCR_FUNCTION)) {
		/* A meter that always measures one pair needs no command: asking
		 * for that pair succeeds, asking for another one cannot. */
		const char *fixed = hb_profile_text(lcr->in.profile, HB_PK_LCR_FUNCTION_FIXED);
		if (fixed && function_possible(lcr, equiv, pair)) {
			lcr->pair = pair;
			return HB_OK;
		}
		if (fixed)
			return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED,
						  "%s: the meter measures only %s (function.fixed in profile '%s')", what,
						  fixed, hb_profile_name(lcr->in.profile));
		return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED,
					  "%s: profile '%s' has neither 'function' nor 'function.fixed'", what,
					  hb_profile_name(lcr->in.profile));
	}
	hb_parg args[2] = { { .name = "equiv", .choice = (int)equiv }, { .name = "pair", .choice = (int)pair } };
	rc = hb_instrument_send(&lcr->in, HB_PK_LCR_FUNCTION, args, 2, what);
	if (rc == HB_OK)
		lcr->pair = pair;
	return rc;
}

int hb_lcr_set_averaging(hb_lcr *lcr, int count, hb_aperture aperture)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	if (count < 1)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "set averaging: count %d is below 1", count);
	if (aperture < HB_APERTURE_SHORT || aperture > HB_APERTURE_LONG)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "set averaging: unknown aperture %d", (int)aperture);
	static const char *const apertures[] = { "short", "medium", "long" };
	const hb_profile *p = lcr->in.profile;
	char avg_cmd[256] = "", ap_cmd[256] = "", err[HB_INSTRUMENT_ERRMSG_MAX - 64];
	char avg_what[64], ap_what[64];
	snprintf(avg_what, sizeof avg_what, "set averaging to %d", count);
	snprintf(ap_what, sizeof ap_what, "set aperture to %s", apertures[aperture]);
	/* Both commands are built before either goes out, so an unsupported
	 * aperture leaves the meter untouched. A meter without one of these
	 * settings is fine as long as only its one behaviour is asked for. */
	if (hb_instrument_has(&lcr->in, HB_PK_LCR_AVERAGING)) {
		hb_parg arg = { .name = "count", .integer = count };
		rc = hb_profile_expand(p, HB_PK_LCR_AVERAGING, &arg, 1, avg_cmd, sizeof avg_cmd, err, sizeof err);
		if (rc < 0)
			return hb_instrument_fail(&lcr->in, rc, "%s: %s", avg_what, err);
	} else if (count != 1) {
		return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED, "%s: profile '%s' has no 'averaging' operation",
					  avg_what, hb_profile_name(p));
	}
	if (hb_instrument_has(&lcr->in, HB_PK_LCR_APERTURE)) {
		hb_parg arg = { .name = "aperture", .choice = (int)aperture };
		rc = hb_profile_expand(p, HB_PK_LCR_APERTURE, &arg, 1, ap_cmd, sizeof ap_cmd, err, sizeof err);
		if (rc < 0)
			return hb_instrument_fail(&lcr->in, rc, "%s: %s", ap_what, err);
	} else if (aperture != HB_APERTURE_MEDIUM) {
		return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED, "%s: profile '%s' has no 'aperture' operation",
					  ap_what, hb_profile_name(p));
	}
	char why[HB_INSTRUMENT_ERRMSG_MAX];
	if (avg_cmd[0] && (rc = hb_profile_send_text(lcr->in.scpi, p, avg_cmd, avg_what, why, sizeof why)) < 0)
		return hb_instrument_fail(&lcr->in, rc, "%s", why);
	if (ap_cmd[0] && (rc = hb_profile_send_text(lcr->in.scpi, p, ap_cmd, ap_what, why, sizeof why)) < 0)
		return hb_instrument_fail(&lcr->in, rc, "%s", why);
	return HB_OK;
}

/* Status field -> number: through measure.status.map when the meter
 * answers words, else the integer itself. */
static int status_code(const hb_profile *p, const char *field, long *code)
{
	const char *map = hb_profile_text(p, HB_PK_LCR_MEASURE_STATUS_MAP);
	if (map) {
		size_t flen = strlen(field);
		for (const char *s = map; *s;) {
			while (*s == ' ' || *s == ',' || *s == '\t')
				s++;
			const char *start = s;
			while (*s && *s != ' ' && *s != ',' && *s != '\t')
				s++;
			const char *eq = memchr(start, '=', (size_t)(s - start));
			if (eq && (size_t)(eq - start) == flen && strncasecmp(start, field, flen) == 0) {
				char num[32];
				size_t nlen = (size_t)(s - eq - 1);
				if (nlen >= sizeof num)
					return HB_ERR_PROTOCOL;
				memcpy(num, eq + 1, nlen);
				num[nlen] = '\0';
				return hb_profile_parse_long(num, code);
			}
		}
	}
	return hb_profile_parse_long(field, code);
}

static bool status_is_overload(const hb_profile *p, long code)
{
	const char *list = hb_profile_text(p, HB_PK_LCR_MEASURE_STATUS_OVERLOAD);
	if (!list)
		return false;
	char text[32];
	snprintf(text, sizeof text, "%ld", code);
	return hb_profile_word_in(list, text);
}

static int measure_once(hb_lcr *lcr, hb_lcr_reading *reading)
{
	int rc;
	memset(reading, 0, sizeof *reading);
	reading->primary = NAN;
	reading->secondary = NAN;
	const hb_profile *p = lcr->in.profile;
	char reply[LCR_REPLY_MAX], err[HB_INSTRUMENT_ERRMSG_MAX];
	rc = hb_profile_ask(lcr->in.scpi, p, HB_PK_LCR_MEASURE, "measure", reply, sizeof reply, err, sizeof err);
	if (rc < 0)
		return hb_instrument_fail(&lcr->in, rc, "%s", err);

	int fprim = (int)hb_profile_number(p, HB_PK_LCR_MEASURE_PRIMARY, 1);
	int fsec = (int)hb_profile_number(p, HB_PK_LCR_MEASURE_SECONDARY, 2);
	int fstat = (int)hb_profile_number(p, HB_PK_LCR_MEASURE_STATUS, 0);
	int nfields;
	char text[96];
	(void)hb_profile_reply_field(reply, 1, text, sizeof text, &nfields);
	int need = fprim > fsec ? fprim : fsec;
	need = fstat > need ? fstat : need;
	if (hb_profile_has(p, HB_PK_LCR_MEASURE_FIELDS) ? nfields != (int)hb_profile_number(p, HB_PK_LCR_MEASURE_FIELDS, 0)
						       : nfields < need)
		return hb_instrument_fail(&lcr->in, HB_ERR_PROTOCOL,
					  "measure: reply '%.100s' has %d field(s), profile '%s' expects %d", reply,
					  nfields, hb_profile_name(p),
					  (int)hb_profile_number(p, HB_PK_LCR_MEASURE_FIELDS, need));

	bool overload = false;
	if (fstat) {
		long code;
		if (hb_profile_reply_field(reply, fstat, text, sizeof text, NULL) < 0 || status_code(p, text, &code) < 0)
			return hb_instrument_fail(&lcr->in, HB_ERR_PROTOCOL,
						  "measure: status field %d of reply '%.100s' is not a known code",
						  fstat, reply);
		reading->status = (int)code;
		overload = status_is_overload(p, code);
	}
	double values[2];
	const int fields[2] = { fprim, fsec };
	for (int i = 0; i < 2; i++) {
		if (hb_profile_reply_field(reply, fields[i], text, sizeof text, NULL) < 0)
			return hb_instrument_fail(&lcr->in, HB_ERR_PROTOCOL, "measure: reply '%.100s' lacks field %d",
						  reply, fields[i]);
		rc = hb_scpi_parse_double(text, &values[i]);
		if (rc == HB_ERR_OVERLOAD) {
			overload = true;
		} else if (rc < 0) {
			return hb_instrument_fail(&lcr->in, HB_ERR_PROTOCOL,
						  "measure: field %d of reply '%.100s' is not a number", fields[i],
						  reply);
		}
	}
	if (overload) {
		reading->overload = true;
		return hb_instrument_fail(&lcr->in, HB_ERR_OVERLOAD,
					  "measure: the meter reports overload (reply '%.100s')", reply);
	}
	double pscale = lcr->pair == HB_PAIR_Z_THETA ? hb_profile_number(p, HB_PK_LCR_MEASURE_PRIMARY_SCALE_ZTH, 1.0)
						     : hb_profile_number(p, HB_PK_LCR_MEASURE_PRIMARY_SCALE, 1.0);
	reading->primary = values[0] * pscale;
	reading->secondary = values[1] * hb_profile_number(p, HB_PK_LCR_MEASURE_SECONDARY_SCALE, 1.0);
	return HB_OK;
}

int hb_lcr_measure(hb_lcr *lcr, hb_lcr_reading *reading)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	if (!reading)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "measure: no place for the reading");
	rc = measure_once(lcr, reading);
	/* A lost or garbled reading is asked for once more after a drain. When
	 * the profile's measure query triggers (IMP:READ?, READ?) the retry
	 * takes a new reading rather than fetching the lost one: at the same
	 * bias that is as good a reading, and the engine's settle rule sees
	 * only readings that arrived whole. */
	if ((rc == HB_ERR_TIMEOUT || rc == HB_ERR_PROTOCOL) && hb_scpi_drain(lcr->in.scpi) == HB_OK)
		rc = measure_once(lcr, reading);
	return rc;
}

int hb_lcr_set_internal_bias(hb_lcr *lcr, bool on, double amps)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	if (!hb_profile_has(lcr->in.profile, HB_PK_LCR_BIAS_STATE))
		return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED,
					  "internal bias: profile '%s' has no 'bias.state' operation",
					  hb_profile_name(lcr->in.profile));
	if (on) {
		if (!isfinite(amps) || amps < 0)
			return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "internal bias: %g A is not a current >= 0",
						  amps);
		if (hb_profile_has(lcr->in.profile, HB_PK_LCR_BIAS_CURRENT)) {
			char what[80];
			snprintf(what, sizeof what, "set internal bias to %g A", amps);
			hb_parg arg = { .name = "amps", .real = amps };
			rc = hb_instrument_send(&lcr->in, HB_PK_LCR_BIAS_CURRENT, &arg, 1, what);
			if (rc < 0)
				return rc;
		} else if (amps != 0) {
			return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED,
						  "internal bias: profile '%s' has no 'bias.current' operation",
						  hb_profile_name(lcr->in.profile));
		}
	}
	hb_parg state = { .name = "state", .choice = on ? 1 : 0 };
	/* Count the bias as on from the moment we ask for it: if the reply
	 * is lost, close must still switch it off. */
	if (on)
		lcr->bias_on = true;
	rc = hb_instrument_send(&lcr->in, HB_PK_LCR_BIAS_STATE, &state, 1,
				on ? "internal bias on" : "internal bias off");
	if (rc == HB_OK && !on)
		lcr->bias_on = false;
	return rc;
}

int hb_lcr_correct(hb_lcr *lcr, hb_correction which)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	bool open = which == HB_CORRECTION_OPEN;
	hb_pkey op = open ? HB_PK_LCR_CORRECT_OPEN : HB_PK_LCR_CORRECT_SHORT;
	const char *what = open ? "open correction" : "short correction";
	const char *command = hb_profile_text(lcr->in.profile, op);
	if (!command)
		return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED, "%s: profile '%s' has no '%s' operation", what,
					  hb_profile_name(lcr->in.profile), hb_profile_key_name(op));
	/* The compensation sweep takes a while; *OPC? waits for its end. */
	rc = hb_instrument_command_opc(&lcr->in, command, what);
	if (rc < 0)
		return rc;
	return hb_instrument_settle_check(&lcr->in, 0, what, command);
}

int hb_lcr_measure_dcr(hb_lcr *lcr, double *ohms)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	if (!ohms)
		return hb_instrument_fail(&lcr->in, HB_ERR_ARG, "dcr: no place for the value");
	if (!hb_profile_has(lcr->in.profile, HB_PK_LCR_DCR))
		return hb_instrument_fail(&lcr->in, HB_ERR_UNSUPPORTED, "dcr: profile '%s' has no 'dcr' operation",
					  hb_profile_name(lcr->in.profile));
	return hb_instrument_ask_number(&lcr->in, HB_PK_LCR_DCR, HB_PK_LCR_DCR_FIELD, HB_PK_LCR_DCR_SCALE, "dcr", ohms);
}

int hb_lcr_errors(hb_lcr *lcr, hb_scpi_error *list, size_t cap, size_t *count, bool *lost)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	return hb_instrument_errors(&lcr->in, list, cap, count, lost);
}

void hb_lcr_accuracy(const hb_lcr *lcr, hb_accuracy *out)
{
	hb_profile_lcr_accuracy(lcr ? lcr->in.profile : NULL, out);
}

int hb_lcr_query_setting(hb_lcr *lcr, const char *name, char *reply, size_t cap)
{
	int rc = usable(lcr);
	if (rc < 0)
		return rc;
	return hb_instrument_query_setting(&lcr->in, name, reply, cap);
}
