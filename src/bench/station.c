/* src/bench/station.c - reads the station file (INI, via libinih) with its limits */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <pwd.h>
#include <stdbool.h>
#include <unistd.h>

#include <ini.h>

#include "../../common/hb_text.h"
#include "station.h"

/* The operator recorded with every sweep when the station file names
 * none: $USER when it is one line of UTF-8 within the limit, else the
 * account name, else "-". An unusable $USER is said (never echoed: it may
 * hold terminal escapes) in operator_warning. */
static void default_operator(hb_station *s)
{
	const char *user = getenv("USER");
	char why[160];
	size_t limit = sizeof s->operator_name - 1;
	if (user && *user && hb_text_check("$USER", user, limit, why, sizeof why) == HB_OK) {
		snprintf(s->operator_name, sizeof s->operator_name, "%s", user);
		return;
	}
	const struct passwd *pw = getpwuid(geteuid());
	bool account = pw && pw->pw_name && *pw->pw_name &&
		       hb_text_check("account name", pw->pw_name, limit, NULL, 0) == HB_OK;
	snprintf(s->operator_name, sizeof s->operator_name, "%s", account ? pw->pw_name : "-");
	if (user && *user)
		snprintf(s->operator_warning, sizeof s->operator_warning,
			 "%s; the operator is recorded as %s (set [station] operator in the station file)", why,
			 account ? "the account name" : "'-'");
}

void hb_station_defaults(hb_station *s)
{
	memset(s, 0, sizeof *s);
	if (gethostname(s->name, sizeof s->name - 1) != 0)
		snprintf(s->name, sizeof s->name, "bench");
	default_operator(s);
	s->max_current = NAN;
	s->max_voltage = NAN;
	s->max_power = NAN;
	s->confirm_above = NAN;
	s->ramp_rate = NAN;
	s->off_threshold = NAN;
	s->part_overdrive = HB_STATION_PART_OVERDRIVE;
	s->part_overdrive_set = false;
	s->lock_limits = false;
	hb_accuracy_init(&s->meter_accuracy);
	hb_accuracy_init(&s->supply_accuracy);
	s->guard_r = NAN;
	s->refuse_overdue = false;
	s->fixture_max_age_h = NAN;
}

typedef struct parse_ctx {
	FILE *file;
	int line;     /* counted by our reader: libinih's handler is not told */
	hb_station *station;
	char *err;
	size_t errlen;
	int failed;
} parse_ctx;

static int set_limit(parse_ctx *c, const char *value, const char *unit, double *out, int line, const char *key)
{
	char msg[200];
	double v;
	if (hb_parse_value(value, unit, &v, msg, sizeof msg) != HB_OK || !(v > 0)) {
		snprintf(c->err, c->errlen, "%s:%d: key '%s': '%s' is not a positive value in %s", c->station->path, line,
			 key, value, unit);
		c->failed = 1;
		return 0;
	}
	*out = v;
	return 1;
}

/* A key with two accepted words: *is_first tells which was given; 0 (message set) for anything else. */
static int two_words(parse_ctx *c, int line, const char *key, const char *value, const char *first, const char *second,
		     bool *is_first)
{
	if (strcmp(value, first) && strcmp(value, second)) {
		snprintf(c->err, c->errlen, "%s:%d: key '%s': '%s' is not %s or %s", c->station->path, line, key, value, first,
			 second);
		c->failed = 1;
		return 0;
	}
	*is_first = strcmp(value, first) == 0;
	return 1;
}

/* [store] path, server, sync. A relative path is taken from the station file's directory, so that
 * the file means the same store whatever directory henrybench runs in; a server URL as the path makes
 * a desk that reads the shared server (its writing commands refuse). */
static int store_entry(parse_ctx *c, const char *name, const char *value, int line)
{
	hb_station *s = c->station;
	if (strcmp(name, "path") == 0) {
		const char *slash = strrchr(s->path, '/');
		bool url = strncmp(value, "postgresql://", 13) == 0 || strncmp(value, "postgres://", 11) == 0;
		int n = value[0] == '/' || url || !slash ? 0 : (int)(slash - s->path) + 1;
		if (!*value || snprintf(s->store_path, sizeof s->store_path, "%.*s%s", n, s->path, value) >=
				       (int)sizeof s->store_path) {
			snprintf(c->err, c->errlen, "%s:%d: key 'path': '%s' is not a store path of 1 to %zu bytes",
				 s->path, line, value, sizeof s->store_path - 1 - (size_t)n);
			c->failed = 1;
			return 0;
		}
		return 1;
	}
	if (strcmp(name, "server") == 0) {
		/* the URL itself is never echoed: it may hold a password */
		if (strncmp(value, "postgresql://", 13) != 0 && strncmp(value, "postgres://", 11) != 0) {
			snprintf(c->err, c->errlen, "%s:%d: key 'server': not a postgresql:// or postgres:// URL", s->path,
				 line);
			c->failed = 1;
			return 0;
		}
		if (strlen(value) >= sizeof s->server) {
			snprintf(c->err, c->errlen, "%s:%d: key 'server': longer than %zu bytes", s->path, line,
				 sizeof s->server - 1);
			c->failed = 1;
			return 0;
		}
		snprintf(s->server, sizeof s->server, "%s", value);
		return 1;
	}
	if (strcmp(name, "sync") == 0)
		return two_words(c, line, "sync", value, "after-sweep", "manual", &s->sync_after_sweep);
	snprintf(c->err, c->errlen, "%s:%d: unknown key '%s' in section [store] (known: path, server, sync)", s->path, line,
		 name);
	c->failed = 1;
	return 0;
}

static char *read_counting(char *str, int num, void *stream)
{
	parse_ctx *c = stream;
	char *r = fgets(str, num, c->file);
	if (r)
		c->line++;
	return r;
}

static int on_entry(void *user, const char *section, const char *name, const char *value)
{
	parse_ctx *c = user;
	int line = c->line;
	hb_station *s = c->station;
	if (c->failed)
		return 0;
	if (strcmp(section, "station") == 0) {
		if (strcmp(name, "name") == 0) {
			/* stored with every sweep: one line of UTF-8, never cut */
			char why[160];
			if (hb_text_check("station name", value, sizeof s->name - 1, why, sizeof why) != HB_OK) {
				snprintf(c->err, c->errlen, "%s:%d: key 'name': %s", s->path, line, why);
				c->failed = 1;
				return 0;
			}
			snprintf(s->name, sizeof s->name, "%s", value);
			return 1;
		}
		if (strcmp(name, "operator") == 0) {
			/* stored with every sweep: one line of UTF-8, never cut */
			char why[160];
			if (hb_text_check("operator", value, sizeof s->operator_name - 1, why, sizeof why) != HB_OK) {
				snprintf(c->err, c->errlen, "%s:%d: key 'operator': %s", s->path, line, why);
				c->failed = 1;
				return 0;
			}
			snprintf(s->operator_name, sizeof s->operator_name, "%s", value);
			s->operator_warning[0] = '\0'; /* $USER is not used */
			return 1;
		}
		if (strcmp(name, "decision_rule") == 0) {
			if (strcmp(value, "simple") && strcmp(value, "guarded") && strcmp(value, "non-binary")) {
				snprintf(c->err, c->errlen, "%s:%d: key 'decision_rule': '%s' is not simple, guarded or non-binary",
					 s->path, line, value);
				c->failed = 1;
				return 0;
			}
			snprintf(s->decision_rule, sizeof s->decision_rule, "%s", value);
			return 1;
		}
		if (strcmp(name, "guard_r") == 0)
			return set_limit(c, value, "", &s->guard_r, line, name);
	} else if (strcmp(section, "accuracy") == 0) {
		char why[200];
		int rc = HB_ERR_ARG;
		hb_accuracy *a = strncmp(name, "meter", 5) == 0 ? &s->meter_accuracy : &s->supply_accuracy;
		if (strcmp(name, "meter") == 0)
			rc = hb_accuracy_parse_rel(value, NULL, &a->rel, &a->offset, why, sizeof why);
		else if (strcmp(name, "meter.freq_above") == 0)
			rc = hb_accuracy_parse_freq_above(value, &a->freq_above_hz, &a->freq_above_rel, why, sizeof why);
		else if (strcmp(name, "supply.current") == 0)
			rc = hb_accuracy_parse_rel(value, "A", &a->rel, &a->offset, why, sizeof why);
		else
			goto unknown;
		if (rc != HB_OK) {
			snprintf(c->err, c->errlen, "%s:%d: key '%s': %s", s->path, line, name, why);
			c->failed = 1;
			return 0;
		}
		snprintf(a->source, sizeof a->source, "station file %s", s->path);
		return 1;
	} else if (strcmp(section, "calibration") == 0) {
		if (strcmp(name, "overdue") == 0) {
			bool warn = true;
			int ok = two_words(c, line, "overdue", value, "warn", "refuse", &warn);
			s->refuse_overdue = ok && !warn;
			return ok;
		}
	} else if (strcmp(section, "fixture") == 0) {
		if (strcmp(name, "max_age_hours") == 0)
			return set_limit(c, value, "", &s->fixture_max_age_h, line, name);
	} else if (strcmp(section, "store") == 0) {
		return store_entry(c, name, value, line);
	} else if (strcmp(section, "limits") == 0) {
		if (strcmp(name, "max_current") == 0)
			return set_limit(c, value, "A", &s->max_current, line, name);
		if (strcmp(name, "max_voltage") == 0)
			return set_limit(c, value, "V", &s->max_voltage, line, name);
		if (strcmp(name, "max_power") == 0)
			return set_limit(c, value, "W", &s->max_power, line, name);
		if (strcmp(name, "confirm_above") == 0)
			return set_limit(c, value, "A", &s->confirm_above, line, name);
		if (strcmp(name, "ramp_rate") == 0)
			return set_limit(c, value, "A/s", &s->ramp_rate, line, name);
		if (strcmp(name, "off_threshold") == 0)
			return set_limit(c, value, "A", &s->off_threshold, line, name);
		if (strcmp(name, "part_overdrive") == 0) {
			s->part_overdrive_set = true;
			return set_limit(c, value, "", &s->part_overdrive, line, name);
		}
		if (strcmp(name, "lock_limits") == 0) {
			if (strcmp(value, "yes") == 0 || strcmp(value, "true") == 0) {
				s->lock_limits = true;
				return 1;
			}
			if (strcmp(value, "no") == 0 || strcmp(value, "false") == 0) {
				s->lock_limits = false;
				return 1;
			}
			snprintf(c->err, c->errlen, "%s:%d: key 'lock_limits': '%s' is not yes or no", s->path, line,
				 value);
			c->failed = 1;
			return 0;
		}
	}
unknown:
	snprintf(c->err, c->errlen, "%s:%d: unknown key '%s' in section [%s] (known: [station] name, operator, decision_rule, guard_r; [limits] max_current, max_voltage, max_power, confirm_above, ramp_rate, off_threshold, part_overdrive, lock_limits; [accuracy] meter, meter.freq_above, supply.current; [calibration] overdue; [fixture] max_age_hours; [store] path, server, sync)",
		 s->path, line, name, section);
	c->failed = 1;
	return 0;
}

static int load(hb_station *s, char *err, size_t errlen);

int hb_station_read(hb_station *s, char *err, size_t errlen)
{
	return load(s, err, errlen);
}

int hb_station_load(hb_station *s, char *err, size_t errlen)
{
	int rc = load(s, err, errlen);
	if (rc == HB_OK && s->operator_warning[0])
		fprintf(stderr, "henrybench: warning: %s\n", s->operator_warning);
	return rc;
}

static int load(hb_station *s, char *err, size_t errlen)
{
	hb_station_defaults(s);
	const char *env = getenv("HENRYBENCH_STATION");
	if (env && *env) {
		snprintf(s->path, sizeof s->path, "%s", env);
	} else {
		const char *xdg = getenv("XDG_CONFIG_HOME");
		const char *home = getenv("HOME");
		if (xdg && *xdg)
			snprintf(s->path, sizeof s->path, "%s/henrybench/station.ini", xdg);
		else if (home && *home)
			snprintf(s->path, sizeof s->path, "%s/.config/henrybench/station.ini", home);
		else
			return HB_OK;
	}
	FILE *f = fopen(s->path, "r");
	if (!f) {
		if (errno == ENOENT && !(env && *env)) {
			s->path[0] = '\0';
			return HB_OK;
		}
		snprintf(err, errlen, "station file %s: %s", s->path, strerror(errno));
		return HB_ERR_ARG;
	}
	parse_ctx c = { f, 0, s, err, errlen, 0 };
	int rc = ini_parse_stream(read_counting, &c, on_entry, &c);
	fclose(f);
	if (c.failed)
		return HB_ERR_ARG;
	if (rc != 0) {
		snprintf(err, errlen, "%s:%d: not a valid INI line", s->path, rc);
		return HB_ERR_ARG;
	}
	return HB_OK;
}
