/* drivers/profile.c - dialect profiles: the key table and the INI loader that checks every value (libinih) */
#include <ctype.h>
#include <dirent.h>
#include <errno.h>
#include <limits.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <ini.h>

#include "../common/hb_text.h"
#include "profile_internal.h"
#include "profile_keys.h"

#ifndef HB_PROFILE_DIR
#define HB_PROFILE_DIR "/usr/local/share/henrybench/profiles"
#endif

/* inih's fixed line buffer (INI_MAX_LINE, 200 with the Debian build); a
 * longer line would be split silently, so the reader refuses it. */
#define PROFILE_LINE_MAX 196

static const char *const section_names[] = { "profile", "lcr", "supply" };



static const char *const equiv_values[] = { "series", "parallel", NULL };
static const char *const pair_values[] = { "lr", "lq", "ld", "zth", NULL };
static const char *const aperture_values[] = { "short", "medium", "long", NULL };
static const char *const state_values[] = { "on", "off", NULL };

static const phdef ph_hz[] = { { "hz", HB_PT_REAL, NULL, 0 }, { NULL, 0, NULL, 0 } };
static const phdef ph_volts[] = { { "volts", HB_PT_REAL, NULL, 0 }, { NULL, 0, NULL, 0 } };
static const phdef ph_amps[] = { { "amps", HB_PT_REAL, NULL, 0 }, { NULL, 0, NULL, 0 } };
static const phdef ph_count[] = { { "count", HB_PT_INT, NULL, 0 }, { NULL, 0, NULL, 0 } };
static const phdef ph_function[] = {
	{ "equiv", HB_PT_ENUM, equiv_values, HB_PK_LCR_EQUIV_SERIES },
	{ "pair", HB_PT_ENUM, pair_values, HB_PK_LCR_PAIR_LR },
	{ NULL, 0, NULL, 0 }
};
static const phdef ph_aperture[] = {
	{ "aperture", HB_PT_ENUM, aperture_values, HB_PK_LCR_APERTURE_SHORT }, { NULL, 0, NULL, 0 }
};
static const phdef ph_state[] = { { "state", HB_PT_BOOL, state_values, HB_PK_LCR_STATE_ON }, { NULL, 0, NULL, 0 } };


#define FIELD_MAX 32

const keydef hb_profile_keys[HB_PK_COUNT] = {
	{ HB_PK_NAME, SEC_PROFILE, "name", VT_NAME, true, 0, 0, NULL },
	{ HB_PK_KIND, SEC_PROFILE, "kind", VT_KIND, true, 0, 0, NULL },
	{ HB_PK_DESCRIPTION, SEC_PROFILE, "description", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_PRIORITY, SEC_PROFILE, "priority", VT_INT, false, -1000, 1000, NULL },
	{ HB_PK_MATCH_MAKER, SEC_PROFILE, "match.maker", VT_REGEX, false, 0, 0, NULL },
	{ HB_PK_MATCH_MODEL, SEC_PROFILE, "match.model", VT_REGEX, false, 0, 0, NULL },
	{ HB_PK_CHECK_ERRORS, SEC_PROFILE, "check.errors", VT_BOOL, false, 0, 0, NULL },

	{ HB_PK_LCR_RESET, SEC_LCR, "reset", VT_TEMPLATE, false, 0, 0, NULL },
	{ HB_PK_LCR_SETTLE_MS, SEC_LCR, "settle.after.reset.ms", VT_INT, false, 0, 60000, NULL },
	{ HB_PK_LCR_FREQUENCY, SEC_LCR, "frequency", VT_TEMPLATE, true, 0, 0, ph_hz },
	{ HB_PK_LCR_LEVEL_VOLTAGE, SEC_LCR, "level.voltage", VT_TEMPLATE, false, 0, 0, ph_volts },
	{ HB_PK_LCR_LEVEL_CURRENT, SEC_LCR, "level.current", VT_TEMPLATE, false, 0, 0, ph_amps },
	{ HB_PK_LCR_FUNCTION, SEC_LCR, "function", VT_TEMPLATE, false, 0, 0, ph_function },
	{ HB_PK_LCR_AVERAGING, SEC_LCR, "averaging", VT_TEMPLATE, false, 0, 0, ph_count },
	{ HB_PK_LCR_APERTURE, SEC_LCR, "aperture", VT_TEMPLATE, false, 0, 0, ph_aperture },
	{ HB_PK_LCR_MEASURE, SEC_LCR, "measure", VT_QUERY, true, 0, 0, NULL },
	{ HB_PK_LCR_MEASURE_FIELDS, SEC_LCR, "measure.fields", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_LCR_MEASURE_PRIMARY, SEC_LCR, "measure.primary", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_LCR_MEASURE_SECONDARY, SEC_LCR, "measure.secondary", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_LCR_MEASURE_STATUS, SEC_LCR, "measure.status", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_LCR_MEASURE_PRIMARY_SCALE, SEC_LCR, "measure.primary.scale", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_LCR_MEASURE_PRIMARY_SCALE_ZTH, SEC_LCR, "measure.primary.scale.zth", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_LCR_MEASURE_SECONDARY_SCALE, SEC_LCR, "measure.secondary.scale", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_LCR_MEASURE_STATUS_MAP, SEC_LCR, "measure.status.map", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_MEASURE_STATUS_OVERLOAD, SEC_LCR, "measure.status.overload", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_DCR, SEC_LCR, "dcr", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_LCR_DCR_FIELD, SEC_LCR, "dcr.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_LCR_DCR_SCALE, SEC_LCR, "dcr.scale", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_LCR_BIAS_CURRENT, SEC_LCR, "bias.current", VT_TEMPLATE, false, 0, 0, ph_amps },
	{ HB_PK_LCR_BIAS_STATE, SEC_LCR, "bias.state", VT_TEMPLATE, false, 0, 0, ph_state },
	{ HB_PK_LCR_CORRECT_OPEN, SEC_LCR, "correct.open", VT_TEMPLATE, false, 0, 0, NULL },
	{ HB_PK_LCR_CORRECT_SHORT, SEC_LCR, "correct.short", VT_TEMPLATE, false, 0, 0, NULL },
	{ HB_PK_LCR_EQUIV_SERIES, SEC_LCR, "equiv.series", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_EQUIV_PARALLEL, SEC_LCR, "equiv.parallel", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_PAIR_LR, SEC_LCR, "pair.lr", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_PAIR_LQ, SEC_LCR, "pair.lq", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_PAIR_LD, SEC_LCR, "pair.ld", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_PAIR_ZTH, SEC_LCR, "pair.zth", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_APERTURE_SHORT, SEC_LCR, "aperture.short", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_APERTURE_MEDIUM, SEC_LCR, "aperture.medium", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_APERTURE_LONG, SEC_LCR, "aperture.long", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_STATE_ON, SEC_LCR, "state.on", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_STATE_OFF, SEC_LCR, "state.off", VT_TEXT, false, 0, 0, NULL },

	{ HB_PK_SUP_RESET, SEC_SUPPLY, "reset", VT_TEMPLATE, false, 0, 0, NULL },
	{ HB_PK_SUP_SETTLE_MS, SEC_SUPPLY, "settle.after.reset.ms", VT_INT, false, 0, 60000, NULL },
	{ HB_PK_SUP_VOLTAGE, SEC_SUPPLY, "voltage", VT_TEMPLATE, true, 0, 0, ph_volts },
	{ HB_PK_SUP_CURRENT, SEC_SUPPLY, "current", VT_TEMPLATE, true, 0, 0, ph_amps },
	{ HB_PK_SUP_OUTPUT_ON, SEC_SUPPLY, "output.on", VT_TEMPLATE, true, 0, 0, NULL },
	{ HB_PK_SUP_OUTPUT_OFF, SEC_SUPPLY, "output.off", VT_TEMPLATE, true, 0, 0, NULL },
	{ HB_PK_SUP_OUTPUT_STATE, SEC_SUPPLY, "output.state", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_SUP_OUTPUT_STATE_FIELD, SEC_SUPPLY, "output.state.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_SUP_MEASURE_CURRENT, SEC_SUPPLY, "measure.current", VT_QUERY, true, 0, 0, NULL },
	{ HB_PK_SUP_MEASURE_CURRENT_FIELD, SEC_SUPPLY, "measure.current.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_SUP_MEASURE_CURRENT_SCALE, SEC_SUPPLY, "measure.current.scale", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_SUP_MEASURE_VOLTAGE, SEC_SUPPLY, "measure.voltage", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_SUP_MEASURE_VOLTAGE_FIELD, SEC_SUPPLY, "measure.voltage.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_SUP_MEASURE_VOLTAGE_SCALE, SEC_SUPPLY, "measure.voltage.scale", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_SUP_MODE, SEC_SUPPLY, "mode", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_SUP_MODE_FIELD, SEC_SUPPLY, "mode.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_SUP_MODE_REPLY, SEC_SUPPLY, "mode.reply", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_MODE_CC, SEC_SUPPLY, "mode.cc", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_MODE_CV, SEC_SUPPLY, "mode.cv", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_MODE_OFF, SEC_SUPPLY, "mode.off", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_PROTECTION, SEC_SUPPLY, "protection", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_SUP_PROTECTION_FIELD, SEC_SUPPLY, "protection.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_SUP_PROTECTION_TRIPPED, SEC_SUPPLY, "protection.tripped", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_STATE_ON, SEC_SUPPLY, "state.on", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_STATE_OFF, SEC_SUPPLY, "state.off", VT_TEXT, false, 0, 0, NULL },

	{ HB_PK_LCR_FUNCTION_FIXED, SEC_LCR, "function.fixed", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_OPTIONAL, SEC_LCR, "optional", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_CURRENT_QUERY, SEC_SUPPLY, "current.query", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_SUP_CURRENT_QUERY_FIELD, SEC_SUPPLY, "current.query.field", VT_INT, false, 1, FIELD_MAX, NULL },
	{ HB_PK_SUP_CURRENT_QUERY_SCALE, SEC_SUPPLY, "current.query.scale", VT_REAL, false, 1e-18, 1e18, NULL },
	{ HB_PK_SUP_CURRENT_TOLERANCE, SEC_SUPPLY, "current.tolerance", VT_REAL, false, 1e-12, 1e3, NULL },
	{ HB_PK_SUP_OPTIONAL, SEC_SUPPLY, "optional", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_ACCURACY_BASIC, SEC_LCR, "accuracy.basic", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_ACCURACY_FREQ_ABOVE, SEC_LCR, "accuracy.freq_above", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LCR_ACCURACY_SOURCE, SEC_LCR, "accuracy.source", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_ACCURACY_CURRENT, SEC_SUPPLY, "accuracy.current", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_SUP_ACCURACY_SOURCE, SEC_SUPPLY, "accuracy.source", VT_TEXT, false, 0, 0, NULL },
	{ HB_PK_LINK_ECHO, SEC_PROFILE, "link.echo", VT_BOOL, false, 0, 0, NULL },
	{ HB_PK_LCR_QUERY_FREQUENCY, SEC_LCR, "query.frequency", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_LCR_QUERY_LEVEL_VOLTAGE, SEC_LCR, "query.level.voltage", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_LCR_QUERY_LEVEL_CURRENT, SEC_LCR, "query.level.current", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_LCR_QUERY_FUNCTION, SEC_LCR, "query.function", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_LCR_QUERY_AVERAGING, SEC_LCR, "query.averaging", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_LCR_QUERY_APERTURE, SEC_LCR, "query.aperture", VT_QUERY, false, 0, 0, NULL },
	{ HB_PK_SUP_QUERY_VOLTAGE, SEC_SUPPLY, "query.voltage", VT_QUERY, false, 0, 0, NULL },
};


/* ------------------------------------------------------------------ */
/* small helpers                                                       */
/* ------------------------------------------------------------------ */

int hb_profile_strtod(const char *text, double *value)
{
	hb_c_numeric cn;
	hb_c_numeric_enter(&cn);
	if (cn.c == (locale_t)0)
		return HB_ERR_NOMEM;
	char *end = NULL;
	errno = 0;
	double v = strtod(text, &end);
	int bad = errno != 0 || end == text;
	hb_c_numeric_leave(&cn);
	if (bad)
		return HB_ERR_ARG;
	while (*end && isspace((unsigned char)*end))
		end++;
	if (*end || !isfinite(v))
		return HB_ERR_ARG;
	*value = v;
	return HB_OK;
}

static int parse_long(const char *text, long *value)
{
	char *end = NULL;
	errno = 0;
	long v = strtol(text, &end, 10);
	if (errno || end == text)
		return HB_ERR_ARG;
	while (*end && isspace((unsigned char)*end))
		end++;
	if (*end)
		return HB_ERR_ARG;
	*value = v;
	return HB_OK;
}

static int parse_bool_word(const char *text, bool *value)
{
	static const char *const yes[] = { "yes", "true", "on", "1" };
	static const char *const no[] = { "no", "false", "off", "0" };
	for (size_t i = 0; i < 4; i++) {
		if (strcasecmp(text, yes[i]) == 0) {
			*value = true;
			return HB_OK;
		}
		if (strcasecmp(text, no[i]) == 0) {
			*value = false;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

/* ------------------------------------------------------------------ */
/* loading                                                             */
/* ------------------------------------------------------------------ */

typedef struct load_ctx {
	hb_profile *p;
	const char *path;
	FILE *file;
	int line;
	int err_line; /* line of the first error; 0 = none */
	char *err;
	size_t errlen;
	bool section_seen[3];
	int section_line[3];
	int header_line; /* line of the latest [section] header */
	char *buf;
	size_t bufcap;
} load_ctx;

static void ctx_err(load_ctx *c, int line, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void ctx_err(load_ctx *c, int line, const char *fmt, ...)
{
	if (c->err_line)
		return;
	c->err_line = line > 0 ? line : 1;
	char what[512];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(what, sizeof what, fmt, ap);
	va_end(ap);
	hb_set_err(c->err, c->errlen, "%s:%d: %s", c->path, c->err_line, what);
}

/* fgets-style reader that counts lines for the handler and refuses what
 * inih would misread: over-long lines and indented continuation lines. */
static char *profile_reader(char *str, int num, void *stream)
{
	load_ctx *c = stream;
	ssize_t n = getline(&c->buf, &c->bufcap, c->file);
	if (n < 0)
		return NULL;
	c->line++;
	if (n > PROFILE_LINE_MAX || n >= num) {
		ctx_err(c, c->line, "line longer than %d characters", PROFILE_LINE_MAX);
		return NULL;
	}
	const char *s = c->buf;
	if (*s == '[')
		c->header_line = c->line;
	if (*s == ' ' || *s == '\t') {
		while (*s == ' ' || *s == '\t')
			s++;
		if (*s && *s != '\n' && *s != '\r' && *s != ';' && *s != '#') {
			ctx_err(c, c->line, "indented line: continuation lines are not supported, keep each key on one line");
			return NULL;
		}
	}
	memcpy(str, c->buf, (size_t)n + 1);
	return str;
}

static int section_of(const char *name)
{
	for (int i = 0; i < 3; i++)
		if (strcmp(name, section_names[i]) == 0)
			return i;
	return -1;
}

static const keydef *find_key(int section, const char *name)
{
	for (size_t i = 0; i < HB_PK_COUNT; i++)
		if ((int)hb_profile_keys[i].section == section && strcmp(hb_profile_keys[i].name, name) == 0)
			return &hb_profile_keys[i];
	return NULL;
}

static int store_value(load_ctx *c, const keydef *kd, const char *value)
{
	hb_profile *p = c->p;
	hb_pvalue *v = &p->v[kd->id];
	char why[400];
	switch (kd->type) {
	case VT_TEMPLATE:
	case VT_QUERY:
		if (hb_profile_check_template(kd, value, why, sizeof why) < 0) {
			ctx_err(c, c->line, "key '%s': %s", kd->name, why);
			return 0;
		}
		break;
	case VT_INT: {
		long n;
		if (parse_long(value, &n) < 0 || n < kd->min || n > kd->max) {
			ctx_err(c, c->line, "key '%s': '%s' is not a whole number in %.0f..%.0f", kd->name, value, kd->min,
				kd->max);
			return 0;
		}
		v->number = (double)n;
		break;
	}
	case VT_REAL: {
		double d;
		if (hb_profile_strtod(value, &d) < 0 || fabs(d) < kd->min || fabs(d) > kd->max) {
			ctx_err(c, c->line, "key '%s': '%s' is not a number of magnitude %g..%g", kd->name, value, kd->min,
				kd->max);
			return 0;
		}
		v->number = d;
		break;
	}
	case VT_BOOL: {
		bool b;
		if (parse_bool_word(value, &b) < 0) {
			ctx_err(c, c->line, "key '%s': '%s' is not yes or no", kd->name, value);
			return 0;
		}
		v->number = b;
		break;
	}
	case VT_KIND:
		if (strcmp(value, "lcr") == 0) {
			v->number = HB_KIND_LCR;
		} else if (strcmp(value, "supply") == 0) {
			v->number = HB_KIND_SUPPLY;
		} else {
			ctx_err(c, c->line, "key '%s': '%s' is not a kind (lcr or supply)", kd->name, value);
			return 0;
		}
		break;
	case VT_NAME:
		for (const char *s = value; *s; s++) {
			if (!isalnum((unsigned char)*s) && *s != '-' && *s != '_' && *s != '.') {
				ctx_err(c, c->line, "key '%s': '%s' may hold only letters, digits, '-', '_' and '.'",
					kd->name, value);
				return 0;
			}
		}
		break;
	case VT_REGEX: {
		pcre2_code *re = hb_profile_regex_compile(value, why, sizeof why);
		if (!re) {
			ctx_err(c, c->line, "key '%s': bad regular expression '%s': %s", kd->name, value, why);
			return 0;
		}
		if (kd->id == HB_PK_MATCH_MAKER)
			p->maker_re = re;
		else
			p->model_re = re;
		break;
	}
	case VT_TEXT: {
		/* an accuracy that cannot be read is an error at load, not a silent zero */
		double a, b;
		int bad = HB_OK;
		if (kd->id == HB_PK_LCR_ACCURACY_BASIC)
			bad = hb_accuracy_parse_rel(value, NULL, &a, &b, why, sizeof why);
		else if (kd->id == HB_PK_SUP_ACCURACY_CURRENT)
			bad = hb_accuracy_parse_rel(value, "A", &a, &b, why, sizeof why);
		else if (kd->id == HB_PK_LCR_ACCURACY_FREQ_ABOVE)
			bad = hb_accuracy_parse_freq_above(value, &a, &b, why, sizeof why);
		if (bad != HB_OK) {
			ctx_err(c, c->line, "key '%s': %s", kd->name, why);
			return 0;
		}
		break;
	}
	}
	v->text = strdup(value);
	if (!v->text) {
		ctx_err(c, c->line, "out of memory");
		return 0;
	}
	v->set = true;
	v->line = c->line;
	return 1;
}

static int ini_handler_fn(void *user, const char *section, const char *name, const char *value)
{
	load_ctx *c = user;
	if (c->err_line)
		return 1; /* report the first error only */
	if (!*section) {
		ctx_err(c, c->line, "key '%s': outside any section (start with [profile])", name);
		return 0;
	}
	int sec = section_of(section);
	if (sec < 0) {
		ctx_err(c, c->header_line, "section [%s]: unknown section (expected [profile], [lcr] or [supply])",
			section);
		return 0;
	}
	if (!c->section_seen[sec]) {
		c->section_seen[sec] = true;
		c->section_line[sec] = c->header_line ? c->header_line : c->line;
	}
	const keydef *kd = find_key(sec, name);
	if (!kd) {
		for (int other = 0; other < 3; other++) {
			if (other != sec && find_key(other, name)) {
				ctx_err(c, c->line, "key '%s': unknown in [%s] (it belongs in [%s])", name, section,
					section_names[other]);
				return 0;
			}
		}
		ctx_err(c, c->line, "key '%s': unknown key in [%s] (see docs/profiles.md)", name, section);
		return 0;
	}
	if (c->p->v[kd->id].set) {
		ctx_err(c, c->line, "key '%s': duplicate (first set on line %d)", name, c->p->v[kd->id].line);
		return 0;
	}
	if (!*value) {
		ctx_err(c, c->line, "key '%s': empty value (leave the key out to mark an operation unsupported)", name);
		return 0;
	}
	return store_value(c, kd, value);
}

static int parse_status_map(const char *text, char *why, size_t whylen)
{
	/* TOKEN=int pairs separated by blanks or commas */
	const char *s = text;
	while (*s) {
		while (*s == ' ' || *s == ',' || *s == '\t')
			s++;
		if (!*s)
			break;
		const char *start = s;
		while (*s && *s != ' ' && *s != ',' && *s != '\t')
			s++;
		const char *eq = memchr(start, '=', (size_t)(s - start));
		char num[32];
		size_t nlen = eq ? (size_t)(s - eq - 1) : 0;
		long v;
		if (!eq || eq == start || nlen == 0 || nlen >= sizeof num) {
			hb_set_err(why, whylen, "'%.*s' is not TOKEN=number", (int)(s - start), start);
			return HB_ERR_PROFILE;
		}
		memcpy(num, eq + 1, nlen);
		num[nlen] = '\0';
		if (parse_long(num, &v) < 0) {
			hb_set_err(why, whylen, "'%.*s' is not TOKEN=number", (int)(s - start), start);
			return HB_ERR_PROFILE;
		}
	}
	return HB_OK;
}

static int parse_int_list(const char *text, char *why, size_t whylen)
{
	char *copy = strdup(text);
	if (!copy)
		return HB_ERR_NOMEM;
	int rc = HB_OK;
	char *save = NULL;
	for (char *tok = strtok_r(copy, " ,\t", &save); tok; tok = strtok_r(NULL, " ,\t", &save)) {
		long v;
		if (parse_long(tok, &v) < 0) {
			hb_set_err(why, whylen, "'%s' is not a whole number", tok);
			rc = HB_ERR_PROFILE;
			break;
		}
	}
	free(copy);
	return rc;
}

/* Which operations of each kind may be listed under 'optional': the
 * queries and settings a generic profile cannot promise every instrument has. */
static const char *const optional_lcr[] = { "function", "averaging", "aperture", NULL };
static const char *const optional_supply[] = { "output.state", "mode", "protection", "current.query", NULL };

static const char *const fixed_names[] = { "ls-rs", "lp-rp", "ls-q", "lp-q", "ls-d", "lp-d", "z-theta", NULL };

int hb_profile_function_fixed(const hb_profile *p, hb_equiv *equiv, hb_pair *pair, bool *any_equiv)
{
	const char *text = hb_profile_text(p, HB_PK_LCR_FUNCTION_FIXED);
	if (!text)
		return HB_ERR_UNSUPPORTED;
	static const hb_pair pairs[] = { HB_PAIR_L_R, HB_PAIR_L_R, HB_PAIR_L_Q, HB_PAIR_L_Q, HB_PAIR_L_D, HB_PAIR_L_D,
					 HB_PAIR_Z_THETA };
	for (int i = 0; fixed_names[i]; i++) {
		if (strcasecmp(text, fixed_names[i]) == 0) {
			*pair = pairs[i];
			*equiv = i < 6 && (i % 2) ? HB_EQUIV_PARALLEL : HB_EQUIV_SERIES;
			*any_equiv = pairs[i] == HB_PAIR_Z_THETA;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

int hb_profile_key_of(hb_instrument_kind kind, const char *name)
{
	enum section sec = kind == HB_KIND_LCR ? SEC_LCR : SEC_SUPPLY;
	for (size_t i = 0; i < HB_PK_COUNT; i++)
		if (hb_profile_keys[i].section == sec && strcmp(hb_profile_keys[i].name, name) == 0)
			return (int)i;
	return -1;
}

bool hb_profile_optional(const hb_profile *p, hb_pkey key)
{
	hb_pkey list = p && p->kind == HB_KIND_LCR ? HB_PK_LCR_OPTIONAL : HB_PK_SUP_OPTIONAL;
	const char *words = hb_profile_text(p, list);
	return words && key < HB_PK_COUNT && hb_profile_word_in(words, hb_profile_keys[key].name);
}

/* Every word of 'optional' names an operation that may be optional and
 * that this profile defines. */
static int check_optional(load_ctx *c, enum section mine)
{
	hb_profile *p = c->p;
	hb_pkey key = mine == SEC_LCR ? HB_PK_LCR_OPTIONAL : HB_PK_SUP_OPTIONAL;
	if (!p->v[key].set)
		return 0;
	const char *const *allowed = mine == SEC_LCR ? optional_lcr : optional_supply;
	const char *s = p->v[key].text;
	while (*s) {
		while (*s == ' ' || *s == ',' || *s == '\t')
			s++;
		const char *start = s;
		while (*s && *s != ' ' && *s != ',' && *s != '\t')
			s++;
		size_t len = (size_t)(s - start);
		if (!len)
			continue;
		char word[64];
		snprintf(word, sizeof word, "%.*s", (int)(len < sizeof word ? len : sizeof word - 1), start);
		bool known = false;
		char list[160] = "";
		for (int i = 0; allowed[i]; i++) {
			known |= strcmp(allowed[i], word) == 0;
			size_t used = strlen(list);
			snprintf(list + used, sizeof list - used, "%s%s", i ? ", " : "", allowed[i]);
		}
		if (!known) {
			ctx_err(c, p->v[key].line, "key 'optional': '%s' cannot be optional (accepted: %s)", word, list);
			return -1;
		}
		int op = hb_profile_key_of(p->kind, word);
		if (op < 0 || !p->v[op].set) {
			ctx_err(c, p->v[key].line, "key 'optional': '%s' is not defined in this profile", word);
			return -1;
		}
	}
	return 0;
}

/* Rules that span keys, checked once the whole file is read. */
static void check_whole(load_ctx *c)
{
	hb_profile *p = c->p;
	int last = c->line > 0 ? c->line : 1;
	char why[400];
	for (int k = HB_PK_NAME; k <= HB_PK_KIND; k++) {
		if (!p->v[k].set) {
			ctx_err(c, c->section_seen[SEC_PROFILE] ? c->section_line[SEC_PROFILE] : last,
				"key '%s': missing from [profile]", hb_profile_keys[k].name);
			return;
		}
	}
	p->kind = (hb_instrument_kind)p->v[HB_PK_KIND].number;
	enum section mine = p->kind == HB_KIND_LCR ? SEC_LCR : SEC_SUPPLY;
	enum section other = p->kind == HB_KIND_LCR ? SEC_SUPPLY : SEC_LCR;
	if (c->section_seen[other]) {
		ctx_err(c, c->section_line[other], "section [%s]: does not fit kind = %s", section_names[other],
			section_names[mine]);
		return;
	}
	for (size_t i = 0; i < HB_PK_COUNT; i++) {
		if (hb_profile_keys[i].section == mine && hb_profile_keys[i].required && !p->v[i].set) {
			ctx_err(c, c->section_seen[mine] ? c->section_line[mine] : last,
				"key '%s': missing from [%s] (every %s profile defines it)", hb_profile_keys[i].name,
				section_names[mine], section_names[mine]);
			return;
		}
	}
	/* An enumerated placeholder with no token at all cannot ever be sent. */
	for (size_t i = 0; i < HB_PK_COUNT; i++) {
		if (hb_profile_keys[i].section != mine || !p->v[i].set || !hb_profile_keys[i].placeholders)
			continue;
		for (const phdef *ph = hb_profile_keys[i].placeholders; ph->name; ph++) {
			if (ph->type != HB_PT_ENUM)
				continue;
			bool any = false;
			char list[160] = "";
			for (int j = 0; ph->values[j]; j++) {
				any |= p->v[ph->token_key + j].set;
				size_t used = strlen(list);
				snprintf(list + used, sizeof list - used, "%s%s", j ? ", " : "", hb_profile_keys[ph->token_key + j].name);
			}
			if (!any) {
				ctx_err(c, p->v[i].line, "key '%s': placeholder {%s:enum} has no tokens (define %s)",
					hb_profile_keys[i].name, ph->name, list);
				return;
			}
		}
	}
	if (check_optional(c, mine) < 0)
		return;
	if (p->kind == HB_KIND_LCR && p->v[HB_PK_LCR_FUNCTION_FIXED].set) {
		hb_equiv e;
		hb_pair pr;
		bool any;
		if (p->v[HB_PK_LCR_FUNCTION].set) {
			ctx_err(c, p->v[HB_PK_LCR_FUNCTION_FIXED].line,
				"key 'function.fixed': give 'function' (the meter can select) or 'function.fixed' (it cannot), not both");
			return;
		}
		if (hb_profile_function_fixed(p, &e, &pr, &any) < 0) {
			ctx_err(c, p->v[HB_PK_LCR_FUNCTION_FIXED].line,
				"key 'function.fixed': '%s' is none of ls-rs, lp-rp, ls-q, lp-q, ls-d, lp-d, z-theta",
				p->v[HB_PK_LCR_FUNCTION_FIXED].text);
			return;
		}
	}
	if (p->kind == HB_KIND_LCR) {
		int prim = (int)hb_profile_number(p, HB_PK_LCR_MEASURE_PRIMARY, 1);
		int sec = (int)hb_profile_number(p, HB_PK_LCR_MEASURE_SECONDARY, 2);
		int stat = (int)hb_profile_number(p, HB_PK_LCR_MEASURE_STATUS, 0);
		int line = p->v[HB_PK_LCR_MEASURE].line;
		if (prim == sec || (stat && (stat == prim || stat == sec))) {
			ctx_err(c, line, "key 'measure': reply fields overlap (primary %d, secondary %d, status %d)", prim,
				sec, stat);
			return;
		}
		if (p->v[HB_PK_LCR_MEASURE_FIELDS].set) {
			int fields = (int)p->v[HB_PK_LCR_MEASURE_FIELDS].number;
			int need = prim > sec ? prim : sec;
			need = stat > need ? stat : need;
			if (fields < need) {
				ctx_err(c, p->v[HB_PK_LCR_MEASURE_FIELDS].line,
					"key 'measure.fields': %d is fewer than the highest field used (%d)", fields, need);
				return;
			}
		}
		if (p->v[HB_PK_LCR_MEASURE_STATUS_MAP].set &&
		    parse_status_map(p->v[HB_PK_LCR_MEASURE_STATUS_MAP].text, why, sizeof why) < 0) {
			ctx_err(c, p->v[HB_PK_LCR_MEASURE_STATUS_MAP].line, "key 'measure.status.map': %s", why);
			return;
		}
		if (p->v[HB_PK_LCR_MEASURE_STATUS_OVERLOAD].set &&
		    parse_int_list(p->v[HB_PK_LCR_MEASURE_STATUS_OVERLOAD].text, why, sizeof why) < 0) {
			ctx_err(c, p->v[HB_PK_LCR_MEASURE_STATUS_OVERLOAD].line, "key 'measure.status.overload': %s", why);
			return;
		}
		if (!stat && (p->v[HB_PK_LCR_MEASURE_STATUS_MAP].set || p->v[HB_PK_LCR_MEASURE_STATUS_OVERLOAD].set)) {
			ctx_err(c, line, "key 'measure.status': missing, but status codes are described");
			return;
		}
	} else if (p->v[HB_PK_SUP_MODE].set) {
		int line = p->v[HB_PK_SUP_MODE].line;
		const char *reply = hb_profile_text(p, HB_PK_SUP_MODE_REPLY);
		if (!reply) {
			ctx_err(c, line, "key 'mode.reply': missing (bits or tokens) while 'mode' is set");
			return;
		}
		if (strcmp(reply, "bits") != 0 && strcmp(reply, "tokens") != 0) {
			ctx_err(c, p->v[HB_PK_SUP_MODE_REPLY].line, "key 'mode.reply': '%s' is neither bits nor tokens",
				reply);
			return;
		}
		if (!p->v[HB_PK_SUP_MODE_CC].set && !p->v[HB_PK_SUP_MODE_CV].set) {
			ctx_err(c, line, "key 'mode.cc': missing (mode needs mode.cc and/or mode.cv)");
			return;
		}
		if (strcmp(reply, "bits") == 0) {
			for (int k = HB_PK_SUP_MODE_CC; k <= HB_PK_SUP_MODE_OFF; k++) {
				long mask;
				if (p->v[k].set && (parse_long(p->v[k].text, &mask) < 0 || mask <= 0 || mask > INT_MAX)) {
					ctx_err(c, p->v[k].line, "key '%s': '%s' is not a bit mask (1..%d)", hb_profile_keys[k].name,
						p->v[k].text, INT_MAX);
					return;
				}
			}
		}
	}
}

static hb_profile *profile_alloc(void)
{
	return calloc(1, sizeof(hb_profile));
}

int hb_profile_load(const char *path, hb_profile **out, char *err, size_t errlen)
{
	*out = NULL;
	if (err && errlen)
		err[0] = '\0';
	load_ctx c = { .path = path, .err = err, .errlen = errlen };
	c.file = fopen(path, "r");
	if (!c.file) {
		hb_set_err(err, errlen, "%s: cannot open profile: %s", path, strerror(errno));
		return errno == ENOENT ? HB_ERR_NOTFOUND : HB_ERR_PROFILE;
	}
	c.p = profile_alloc();
	if (!c.p) {
		fclose(c.file);
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	c.p->path = strdup(path);
	int rc = ini_parse_stream(profile_reader, &c, ini_handler_fn, &c);
	if (ferror(c.file) && !c.err_line)
		ctx_err(&c, c.line, "read error: %s", strerror(errno));
	fclose(c.file);
	free(c.buf);
	if (rc > 0 && (!c.err_line || rc < c.err_line)) {
		c.err_line = 0; /* inih's syntax error came first */
		ctx_err(&c, rc, "syntax error (expected '[section]' or 'key = value')");
	}
	if (!c.err_line)
		check_whole(&c);
	if (!c.p->path && !c.err_line)
		ctx_err(&c, 1, "out of memory");
	if (c.err_line) {
		hb_profile_free(c.p);
		return HB_ERR_PROFILE;
	}
	c.p->priority = (int)hb_profile_number(c.p, HB_PK_PRIORITY, 0);
	c.p->check_errors = hb_profile_number(c.p, HB_PK_CHECK_ERRORS, 1) != 0;
	*out = c.p;
	return HB_OK;
}

void hb_profile_free(hb_profile *p)
{
	if (!p)
		return;
	pcre2_code_free(p->maker_re);
	pcre2_code_free(p->model_re);
	for (size_t i = 0; i < HB_PK_COUNT; i++)
		free(p->v[i].text);
	free(p->path);
	free(p);
}

const char *hb_profile_name(const hb_profile *p)
{
	return p ? p->v[HB_PK_NAME].text : NULL;
}

const char *hb_profile_path(const hb_profile *p)
{
	return p ? p->path : NULL;
}

hb_instrument_kind hb_profile_kind(const hb_profile *p)
{
	return p ? p->kind : HB_KIND_LCR;
}

const char *hb_profile_description(const hb_profile *p)
{
	return p ? p->v[HB_PK_DESCRIPTION].text : NULL;
}

bool hb_profile_has(const hb_profile *p, hb_pkey key)
{
	return p && key < HB_PK_COUNT && p->v[key].set;
}

const char *hb_profile_text(const hb_profile *p, hb_pkey key)
{
	return hb_profile_has(p, key) ? p->v[key].text : NULL;
}

double hb_profile_number(const hb_profile *p, hb_pkey key, double fallback)
{
	return hb_profile_has(p, key) ? p->v[key].number : fallback;
}

const char *hb_profile_key_name(hb_pkey key)
{
	return key < HB_PK_COUNT ? hb_profile_keys[key].name : "?";
}

bool hb_profile_supports(const hb_profile *p, hb_instrument_kind kind, const char *operation)
{
	if (!p || !operation)
		return false;
	enum section sec = kind == HB_KIND_LCR ? SEC_LCR : SEC_SUPPLY;
	size_t len = strlen(operation);
	for (size_t i = 0; i < HB_PK_COUNT; i++) {
		if (hb_profile_keys[i].section != sec || (hb_profile_keys[i].type != VT_TEMPLATE && hb_profile_keys[i].type != VT_QUERY) || !p->v[i].set)
			continue;
		if (strcmp(hb_profile_keys[i].name, operation) == 0)
			return true;
		if (strncmp(hb_profile_keys[i].name, operation, len) == 0 && hb_profile_keys[i].name[len] == '.')
			return true;
	}
	/* reset falls back to *RST, which IEEE 488.2 makes universal */
	return strcmp(operation, "reset") == 0;
}

static void hb_profile_operations_list(const hb_profile *p, const char *const *ops, char *provided, size_t pcap,
				       char *absent, size_t acap);

void hb_profile_operations(const hb_profile *p, char *provided, size_t pcap, char *absent, size_t acap)
{
	static const char *const lcr_ops[] = { "reset", "frequency", "level.voltage", "level.current", "function",
					       "averaging", "aperture", "measure", "dcr", "bias.current", "bias.state",
					       "correct.open", "correct.short", NULL };
	static const char *const supply_ops[] = { "reset", "voltage", "current", "current.query", "output.on",
						  "output.off", "output.state", "measure.current", "measure.voltage",
						  "mode", "protection", NULL };
	if (pcap)
		provided[0] = '\0';
	if (acap)
		absent[0] = '\0';
	if (!p)
		return;
	const char *const *ops = p->kind == HB_KIND_LCR ? lcr_ops : supply_ops;
	hb_profile_operations_list(p, ops, provided, pcap, absent, acap);
	/* The read-back queries (settings snapshots at a sweep's start and end)
	 * are named where the profile has them; without them the settings in
	 * force are recorded as requested, which is not a missing operation. */
	for (size_t i = 0; i < HB_PK_COUNT; i++) {
		if (strncmp(hb_profile_keys[i].name, "query.", 6) != 0 || !p->v[i].set ||
		    hb_profile_keys[i].section != (p->kind == HB_KIND_LCR ? SEC_LCR : SEC_SUPPLY))
			continue;
		size_t used = strlen(provided);
		if (pcap > used)
			snprintf(provided + used, pcap - used, "%s%s", used ? " " : "", hb_profile_keys[i].name);
	}
}

static void hb_profile_operations_list(const hb_profile *p, const char *const *ops, char *provided, size_t pcap,
				       char *absent, size_t acap)
{
	for (int i = 0; ops[i]; i++) {
		int key = hb_profile_key_of(p->kind, ops[i]);
		bool has = strcmp(ops[i], "reset") == 0 || (key >= 0 && p->v[key].set);
		char word[64];
		if (has)
			snprintf(word, sizeof word, "%s%s", ops[i], key >= 0 && hb_profile_optional(p, (hb_pkey)key) ? "?" : "");
		else if (key == HB_PK_LCR_FUNCTION && p->v[HB_PK_LCR_FUNCTION_FIXED].set)
			snprintf(word, sizeof word, "function.fixed=%s", p->v[HB_PK_LCR_FUNCTION_FIXED].text);
		else
			snprintf(word, sizeof word, "%s", ops[i]);
		bool listed_as_has = has || key == HB_PK_LCR_FUNCTION;
		if (key == HB_PK_LCR_FUNCTION && !has && !p->v[HB_PK_LCR_FUNCTION_FIXED].set)
			listed_as_has = false;
		char *buf = listed_as_has ? provided : absent;
		size_t cap = listed_as_has ? pcap : acap;
		size_t used = strlen(buf);
		if (cap > used)
			snprintf(buf + used, cap - used, "%s%s", used ? " " : "", word);
	}
}

int hb_profile_parse_long(const char *text, long *value)
{
	while (isspace((unsigned char)*text))
		text++;
	if (*text == '+')
		text++;
	return parse_long(text, value);
}
