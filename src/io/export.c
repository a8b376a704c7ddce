/* src/io/export.c - commands `export` (sweeps as CSV or JSON) and `import` (a meter's own CSV log as a stored sweep) */
#include <ctype.h>
#include <errno.h>
#include <getopt.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <time.h>

#include <jansson.h>

#include "../../fit/hb_fit.h"
#include "../quality/analysis.h"
#include "../cli/cli.h"
#include "../report/report.h"

#ifndef HB_VERSION
#define HB_VERSION "unknown"
#endif

/* A meter log bigger than this is not one sweep. */
enum { MAX_IMPORT_BYTES = 64 << 20, MAX_IMPORT_ROWS = 100000 };

static void set_err(char *err, size_t cap, const char *fmt, ...) __attribute__((format(printf, 3, 4)));
static void set_err(char *err, size_t cap, const char *fmt, ...)
{
	if (!err || !cap)
		return;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(err, cap, fmt, ap);
	va_end(ap);
}

/* Numbers in files are C-locale whatever the caller's locale is. */
typedef struct c_numeric {
	locale_t c, old;
} c_numeric;

static void c_numeric_enter(c_numeric *s)
{
	s->c = newlocale(LC_NUMERIC_MASK, "C", (locale_t)0);
	s->old = s->c ? uselocale(s->c) : (locale_t)0;
}

static void c_numeric_leave(c_numeric *s)
{
	if (s->c) {
		uselocale(s->old);
		freelocale(s->c);
	}
}

/* ---------------- export ---------------- */

/* Column of one reading of the measured pair: "Ls-Rs" -> L_H, R_ohm. */
static const char *reading_column(const char *pair, int which)
{
	const char *dash = strchr(pair, '-');
	const char *name = which == 0 ? pair : (dash ? dash + 1 : "");
	if (which == 1 && strcmp(name, "theta") == 0)
		return "theta_deg";
	switch (name[0]) {
	case 'L': return which == 0 ? "L_H" : "L2_H";
	case 'C': return "C_F";
	case 'R': return "R_ohm";
	case 'X': return "X_ohm";
	case 'Z': return "Z_ohm";
	case 'G': return "G_S";
	case 'B': return "B_S";
	case 'Q': return "Q";
	case 'D': return "D";
	default: return which == 0 ? "primary" : "secondary";
	}
}

/* RFC 4180: a field with the delimiter, a quote, CR or LF is quoted, quotes doubled. */
static void csv_text(FILE *out, const char *s)
{
	if (!strpbrk(s, ",\"\r\n") && !(s[0] == ' ' || (s[0] && s[strlen(s) - 1] == ' '))) {
		fputs(s, out);
		return;
	}
	fputc('"', out);
	for (; *s; s++) {
		if (*s == '"')
			fputc('"', out);
		fputc(*s, out);
	}
	fputc('"', out);
}

static void csv_num(FILE *out, double v)
{
	if (isfinite(v))
		fprintf(out, "%.10g", v);
}

int hb_export_csv(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen)
{
	hb_db_sweep *sw = calloc(n ? n : 1, sizeof *sw);
	if (!sw) {
		set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	int rc = HB_OK;
	for (size_t i = 0; i < n && rc == HB_OK; i++)
		if ((rc = hb_db_sweep_get(db, ids[i], &sw[i])) != HB_OK)
			set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
	if (rc != HB_OK) {
		free(sw);
		return rc;
	}
	/* Readings get their own SI names when every sweep read the same pair. */
	bool same_pair = true;
	for (size_t i = 1; i < n; i++)
		if (strcmp(sw[i].measured_pair, sw[0].measured_pair) != 0)
			same_pair = false;
	const char *c1 = n && same_pair ? reading_column(sw[0].measured_pair, 0) : "primary";
	const char *c2 = n && same_pair ? reading_column(sw[0].measured_pair, 1) : "secondary";
	c_numeric loc;
	c_numeric_enter(&loc);
	fprintf(out, "sweep_id,kind,part_number,serial,lot_code,measured_pair,seq,direction,bias_set_A,bias_measured_A,"
		     "supply_V,frequency_Hz,%s,%s,reading_status,t_s,settle_readings,settle_s\r\n", c1, c2);
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		hb_db_point *pts = NULL;
		size_t np = 0;
		if ((rc = hb_db_points_get(db, ids[i], &pts, &np)) != HB_OK) {
			set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			break;
		}
		for (size_t k = 0; k < np; k++) {
			const hb_db_point *p = &pts[k];
			fprintf(out, "%lld,%s,", (long long)sw[i].id, hb_db_sweep_kind_name(sw[i].kind));
			csv_text(out, sw[i].part_number);
			fputc(',', out);
			csv_text(out, sw[i].serial);
			fputc(',', out);
			csv_text(out, sw[i].lot_code);
			fputc(',', out);
			csv_text(out, sw[i].measured_pair);
			fprintf(out, ",%d,%s,", p->seq, p->direction == HB_DB_DIR_DOWN ? "down" : "up");
			csv_num(out, p->bias_set_a);
			fputc(',', out);
			csv_num(out, p->bias_meas_a);
			fputc(',', out);
			csv_num(out, p->supply_v);
			fputc(',', out);
			csv_num(out, p->freq_hz);
			fputc(',', out);
			csv_num(out, p->primary);
			fputc(',', out);
			csv_num(out, p->secondary);
			fprintf(out, ",%s,", p->reading_status == HB_OK ? "ok" : hb_status_name(p->reading_status));
			csv_num(out, p->t_s);
			fprintf(out, ",%d,", p->settle_readings);
			csv_num(out, p->settle_s);
			fputs("\r\n", out);
		}
		hb_db_points_free(pts);
	}
	c_numeric_leave(&loc);
	free(sw);
	if (rc == HB_OK && ferror(out)) {
		set_err(err, errlen, "write failed");
		rc = HB_ERR_IO;
	}
	return rc;
}

static json_t *part_json(const hb_db_part *p)
{
	json_t *o = json_object();
	json_object_set_new(o, "part_number", json_string(p->part_number));
	json_object_set_new(o, "description", json_string(p->description));
	json_object_set_new(o, "maker", json_string(p->maker));
	json_object_set_new(o, "nominal_H", hb_json_num(p->nominal_h));
	json_object_set_new(o, "tolerance", hb_json_num(p->tolerance));
	json_object_set_new(o, "test_frequency_Hz", hb_json_num(p->test_freq_hz));
	json_object_set_new(o, "test_level", hb_json_num(p->test_level));
	json_object_set_new(o, "test_level_unit", json_string(p->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V"));
	json_object_set_new(o, "sat_current_A", hb_json_num(p->sat_current_a));
	json_object_set_new(o, "sat_drop", hb_json_num(p->sat_drop));
	json_object_set_new(o, "rated_current_A", hb_json_num(p->rated_current_a));
	json_object_set_new(o, "dcr_max_ohm", hb_json_num(p->dcr_max_ohm));
	json_object_set_new(o, "turns", p->turns > 0 ? json_integer(p->turns) : json_null());
	json_object_set_new(o, "Ae_m2", hb_json_num(p->ae_m2));
	json_object_set_new(o, "le_m", hb_json_num(p->le_m));
	json_object_set_new(o, "window_m", hb_json_num(p->window_m));
	json_object_set_new(o, "mu_i", hb_json_num(p->mu_i));
	json_object_set_new(o, "bsat_T", hb_json_num(p->bsat_t));
	return o;
}

static json_t *sweep_json(const hb_db_sweep *s)
{
	json_t *o = hb_json_sweep_head(s);
	json_object_set_new(o, "part_number", json_string(s->part_number));
	json_object_set_new(o, "serial", json_string(s->serial));
	json_object_set_new(o, "lot_code", json_string(s->lot_code));
	json_object_set_new(o, "station", json_string(s->station));
	json_object_set_new(o, "operator", json_string(s->operator_name));
	json_object_set_new(o, "host", json_string(s->host));
	json_object_set_new(o, "instruments", hb_json_sweep_instruments(s));
	json_t *set = hb_json_sweep_conditions(s);
	json_object_set_new(set, "averaging", json_integer(s->averaging));
	json_object_set_new(set, "aperture", json_string(s->aperture));
	json_object_set_new(set, "settle_mode", json_string(s->settle_mode));
	json_object_set_new(set, "settle_delay_s", hb_json_num(s->settle_delay_s));
	json_object_set_new(set, "settle_tolerance", hb_json_num(s->settle_tolerance));
	json_object_set_new(set, "settle_max_readings", json_integer(s->settle_max_readings));
	json_object_set_new(set, "settle_max_s", hb_json_num(s->settle_max_s));
	json_object_set_new(set, "plan_from", hb_json_num(s->plan_from));
	json_object_set_new(set, "plan_to", hb_json_num(s->plan_to));
	json_object_set_new(set, "plan_unit", json_string(s->kind == HB_DB_SWEEP_FREQUENCY ? "Hz" : "A"));
	json_object_set_new(set, "plan_steps", json_integer(s->plan_steps));
	json_object_set_new(set, "plan_spacing", json_string(s->plan_spacing));
	json_object_set_new(set, "limit_current_A", hb_json_num(s->limit_current_a));
	json_object_set_new(set, "limit_voltage_V", hb_json_num(s->limit_voltage_v));
	json_object_set_new(set, "ambient_C", hb_json_num(s->ambient_c));
	json_object_set_new(set, "reading_noise_rel", hb_json_num(s->reading_noise_rel));
	json_object_set_new(o, "settings", set);
	json_object_set_new(o, "supply_record", hb_json_supply_record(s));
	json_object_set_new(o, "note", json_string(s->note));
	return o;
}

static json_t *fit_json(const hb_db_fit *f)
{
	json_t *o = json_object();
	json_object_set_new(o, "id", json_integer(f->id));
	json_object_set_new(o, "model", json_string(f->model));
	json_object_set_new(o, "law", json_string(f->law));
	json_object_set_new(o, "code_version", json_string(f->code_version));
	json_object_set_new(o, "created", json_string(f->created));
	json_object_set_new(o, "rss", hb_json_num(f->rss));
	json_object_set_new(o, "dof", json_integer(f->dof));
	json_object_set_new(o, "aic", hb_json_num(f->aic));
	json_t *cov = f->covariance_json[0] ? json_loads(f->covariance_json, 0, NULL) : NULL;
	json_object_set_new(o, "covariance", cov ? cov : json_null());
	json_object_set_new(o, "flags", json_string(f->flags));
	json_object_set_new(o, "note", json_string(HB_FIT_INCREMENTAL_NOTE));
	json_t *vals = json_object();
	for (size_t i = 0; i < f->n_values; i++) {
		/* a value without a number says why; a misfitting model's values say so */
		const hb_db_fit_value *fv = &f->values[i];
		char why[96];
		const char *reason = hb_analysis_value_reason(f, fv, why, sizeof why);
		json_object_set_new(vals, fv->name,
				    hb_analysis_value_object(fv->value, fv->std_error, fv->unit, reason,
							     hb_analysis_value_misfit(f, fv->name, NULL)));
	}
	json_object_set_new(o, "values", vals);
	return o;
}

static json_t *sweep_full_json(hb_db *db, const hb_db_sweep *s, hb_db_fit *fit, char *err, size_t errlen)
{
	hb_db_point *pts = NULL;
	hb_db_verdict *v = NULL;
	size_t np = 0, nv = 0;
	if (hb_db_points_get(db, s->id, &pts, &np) != HB_OK || hb_db_verdict_list(db, s->id, &v, &nv) != HB_OK) {
		set_err(err, errlen, "sweep %lld: %s", (long long)s->id, hb_db_errmsg(db));
		hb_db_points_free(pts);
		return NULL;
	}
	json_t *o = sweep_json(s);
	const char *c1 = reading_column(s->measured_pair, 0), *c2 = reading_column(s->measured_pair, 1);
	json_t *arr = json_array();
	for (size_t i = 0; i < np; i++) {
		const hb_db_point *p = &pts[i];
		json_t *q = json_object();
		json_object_set_new(q, "seq", json_integer(p->seq));
		json_object_set_new(q, "direction", json_string(p->direction == HB_DB_DIR_DOWN ? "down" : "up"));
		json_object_set_new(q, "bias_set_A", hb_json_num(p->bias_set_a));
		json_object_set_new(q, "bias_measured_A", hb_json_num(p->bias_meas_a));
		json_object_set_new(q, "supply_V", hb_json_num(p->supply_v));
		json_object_set_new(q, "frequency_Hz", hb_json_num(p->freq_hz));
		json_object_set_new(q, c1, hb_json_num(p->primary));
		json_object_set_new(q, c2, hb_json_num(p->secondary));
		json_object_set_new(q, "reading_status",
				    json_string(p->reading_status == HB_OK ? "ok" : hb_status_name(p->reading_status)));
		json_object_set_new(q, "t_s", hb_json_num(p->t_s));
		json_object_set_new(q, "settle_readings", json_integer(p->settle_readings));
		json_object_set_new(q, "settle_s", hb_json_num(p->settle_s));
		json_object_set_new(q, "bias_spread_A", hb_json_num(p->bias_spread_a));
		json_object_set_new(q, "settled", json_boolean(p->settled));
		json_array_append_new(arr, q);
	}
	json_object_set_new(o, "points", arr);
	hb_db_fit_init(fit);
	json_object_set_new(o, "fit", hb_db_fit_get_latest(db, s->id, NULL, fit) == HB_OK ? fit_json(fit) : json_null());
	arr = json_array();
	for (size_t i = 0; i < nv; i++) {
		json_t *q = json_object();
		json_object_set_new(q, "check", json_string(v[i].check_name));
		json_object_set_new(q, "outcome", json_string(hb_db_outcome_name(v[i].outcome)));
		json_object_set_new(q, "measured", hb_json_num(v[i].measured));
		json_object_set_new(q, "limit_low", hb_json_num(v[i].limit_low));
		json_object_set_new(q, "limit_high", hb_json_num(v[i].limit_high));
		json_object_set_new(q, "margin", hb_json_num(v[i].margin));
		json_object_set_new(q, "note", json_string(v[i].note));
		json_array_append_new(arr, q);
	}
	json_object_set_new(o, "verdicts", arr);
	hb_db_points_free(pts);
	hb_db_verdicts_free(v);
	return o;
}

int hb_export_json(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen)
{
	json_t *root = json_object(), *parts = json_array(), *sweeps = json_array();
	hb_db_fit *fit = calloc(1, sizeof *fit);
	int64_t *part_ids = calloc(n ? n : 1, sizeof *part_ids);
	size_t nparts = 0;
	int rc = HB_OK;
	if (!root || !parts || !sweeps || !fit || !part_ids) {
		set_err(err, errlen, "out of memory");
		rc = HB_ERR_NOMEM;
		goto out;
	}
	char now[32];
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(now, sizeof now, "%Y-%m-%dT%H:%M:%SZ", &tm);
	json_object_set_new(root, "format", json_string("henrybench-export"));
	json_object_set_new(root, "format_version", json_integer(1));
	json_object_set_new(root, "exported", json_string(now));
	json_object_set_new(root, "henrybench", json_string(HB_VERSION));
	json_object_set_new(root, "units", json_string("SI: A, V, Hz, H, ohm, F, s, m, m2, T; fractions not percent"));
	for (size_t i = 0; i < n; i++) {
		hb_db_sweep s;
		if ((rc = hb_db_sweep_get(db, ids[i], &s)) != HB_OK) {
			set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			goto out;
		}
		json_t *o = sweep_full_json(db, &s, fit, err, errlen);
		if (!o) {
			rc = HB_ERR_DB;
			goto out;
		}
		json_array_append_new(sweeps, o);
		bool seen = s.part_id <= 0;
		for (size_t k = 0; k < nparts && !seen; k++)
			seen = part_ids[k] == s.part_id;
		hb_db_part p;
		if (!seen && hb_db_part_get_id(db, s.part_id, &p) == HB_OK) {
			part_ids[nparts++] = s.part_id;
			json_array_append_new(parts, part_json(&p));
		}
	}
	json_object_set(root, "parts", parts);
	json_object_set(root, "sweeps", sweeps);
	c_numeric loc;
	c_numeric_enter(&loc);
	if (json_dumpf(root, out, JSON_INDENT(2) | JSON_REAL_PRECISION(12)) != 0 || fputc('\n', out) == EOF) {
		set_err(err, errlen, "write failed");
		rc = HB_ERR_IO;
	}
	c_numeric_leave(&loc);
out:
	json_decref(parts);
	json_decref(sweeps);
	json_decref(root);
	free(fit);
	free(part_ids);
	return rc;
}

/* ---------------- CSV reading (RFC 4180) ---------------- */

/*
 * A small reader of our own: Debian's libcsv ships no pkg-config file, and
 * the one thing the import needs beyond it - the line each record starts
 * on, for the error messages - is most of the work anyway.
 */
typedef struct csv_record {
	int line;       /* physical line the record starts on, 1-based */
	size_t nf;
	char **field;   /* NUL-terminated copies */
} csv_record;

typedef struct csv_table {
	size_t n, cap;
	csv_record *rec;
} csv_table;

static void csv_table_free(csv_table *t)
{
	for (size_t i = 0; i < t->n; i++) {
		for (size_t k = 0; k < t->rec[i].nf; k++)
			free(t->rec[i].field[k]);
		free(t->rec[i].field);
	}
	free(t->rec);
	memset(t, 0, sizeof *t);
}

typedef struct csv_buf {
	char *s;
	size_t len, cap;
} csv_buf;

static int buf_put(csv_buf *b, char c)
{
	if (b->len + 1 >= b->cap) {
		size_t cap = b->cap ? 2 * b->cap : 64;
		char *s = realloc(b->s, cap);
		if (!s)
			return HB_ERR_NOMEM;
		b->s = s;
		b->cap = cap;
	}
	b->s[b->len++] = c;
	return HB_OK;
}

static char detect_delimiter(const char *s, size_t len)
{
	size_t comma = 0, semi = 0, tab = 0;
	bool quoted = false;
	for (size_t i = 0; i < len && (quoted || (s[i] != '\n' && s[i] != '\r')); i++) {
		if (s[i] == '"')
			quoted = !quoted;
		else if (!quoted && s[i] == ',')
			comma++;
		else if (!quoted && s[i] == ';')
			semi++;
		else if (!quoted && s[i] == '\t')
			tab++;
	}
	if (tab > comma && tab >= semi)
		return '\t';
	if (semi > comma)
		return ';';
	return ',';
}

static int csv_parse(const char *s, size_t len, char delim, csv_table *t, char *err, size_t errlen)
{
	csv_buf fb = { 0 };
	char **fields = NULL;
	size_t nf = 0, fcap = 0;
	int line = 1, rec_line = 1, rc = HB_OK;
	size_t i = 0;
	bool record_has_text = false;
	while (i <= len) {
		/* one field */
		fb.len = 0;
		if (i < len && s[i] == '"') {
			record_has_text = true;
			int open_line = line;
			i++;
			for (;;) {
				if (i >= len) {
					set_err(err, errlen, "line %d: a quoted field is not closed before the end of the file",
						open_line);
					rc = HB_ERR_ARG;
					goto out;
				}
				if (s[i] == '"') {
					if (i + 1 < len && s[i + 1] == '"') {
						if ((rc = buf_put(&fb, '"')) != HB_OK)
							goto out;
						i += 2;
						continue;
					}
					i++;
					break;
				}
				if (s[i] == '\n')
					line++;
				if ((rc = buf_put(&fb, s[i++])) != HB_OK)
					goto out;
			}
			if (i < len && s[i] != delim && s[i] != '\n' && s[i] != '\r') {
				set_err(err, errlen, "line %d, column %zu: text after the closing quote", line, nf + 1);
				rc = HB_ERR_ARG;
				goto out;
			}
		} else {
			while (i < len && s[i] != delim && s[i] != '\n' && s[i] != '\r') {
				if ((rc = buf_put(&fb, s[i++])) != HB_OK)
					goto out;
			}
		}
		if (fb.len > 0)
			record_has_text = true;
		if ((rc = buf_put(&fb, '\0')) != HB_OK)
			goto out;
		if (nf == fcap) {
			size_t cap = fcap ? 2 * fcap : 16;
			char **f = realloc(fields, cap * sizeof *f);
			if (!f) {
				rc = HB_ERR_NOMEM;
				goto out;
			}
			fields = f;
			fcap = cap;
		}
		fields[nf] = strdup(fb.s);
		if (!fields[nf]) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
		nf++;
		if (i < len && s[i] == delim) {
			i++;
			record_has_text = true;
			continue;
		}
		/* end of record: CRLF, LF, lone CR or the end of the file */
		if (i < len && s[i] == '\r')
			i++;
		if (i < len && s[i] == '\n')
			i++;
		bool at_end = i >= len;
		if (record_has_text) {
			if (t->n == t->cap) {
				size_t cap = t->cap ? 2 * t->cap : 64;
				csv_record *r = realloc(t->rec, cap * sizeof *r);
				if (!r) {
					rc = HB_ERR_NOMEM;
					goto out;
				}
				t->rec = r;
				t->cap = cap;
			}
			t->rec[t->n++] = (csv_record){ .line = rec_line, .nf = nf, .field = fields };
			fields = NULL;
			fcap = 0;
			if (t->n > MAX_IMPORT_ROWS) {
				set_err(err, errlen, "line %d: more than %d rows; not one sweep", rec_line, MAX_IMPORT_ROWS);
				rc = HB_ERR_ARG;
				goto out;
			}
		} else {
			for (size_t k = 0; k < nf; k++)
				free(fields[k]);
		}
		nf = 0;
		record_has_text = false;
		line++;
		rec_line = line;
		if (at_end)
			break;
	}
out:
	for (size_t k = 0; k < nf; k++)
		free(fields[k]);
	free(fields);
	free(fb.s);
	if (rc == HB_ERR_NOMEM)
		set_err(err, errlen, "out of memory");
	return rc;
}

/* ---------------- import ---------------- */

static const char *const role_names[HB_IMPORT_NROLES] = { "current", "current_measured", "voltage", "frequency",
							  "inductance", "resistance", "direction" };
static const char *const role_units[HB_IMPORT_NROLES] = { "A", "A", "V", "Hz", "H", "ohm", NULL };

/* Header names each role answers to, after normalising (lower case, no
 * unit, no spaces, '_' or '-'). Earlier entries win. */
static const char *const role_aliases[HB_IMPORT_NROLES][12] = {
	{ "current", "bias", "biasset", "i", "ibias", "idc", "biascurrent", "dcbias", "iset", "currentset", NULL },
	{ "biasmeasured", "biasmeas", "currentmeasured", "measuredcurrent", "imeas", "imeasured", NULL },
	{ "supply", "supplyv", "voltage", "supplyvoltage", "vsupply", "v", "u", NULL },
	{ "frequency", "f", "freq", "testfrequency", NULL },
	{ "inductance", "l", "ls", "lp", "lseries", "seriesinductance", NULL },
	{ "resistance", "r", "rs", "esr", "rseries", "seriesresistance", NULL },
	{ "direction", "dir", NULL },
};

void hb_import_options_init(hb_import_options *opt)
{
	memset(opt, 0, sizeof *opt);
	opt->kind = -1;
	opt->test_freq_hz = NAN;
	opt->analyse = true;
}

const char *hb_import_role_name(hb_import_role role)
{
	return role >= 0 && role < HB_IMPORT_NROLES ? role_names[role] : "?";
}

static int role_parse(const char *name, hb_import_role *role)
{
	static const struct { const char *alias; hb_import_role role; } extra[] = {
		{ "bias", HB_IMPORT_CURRENT }, { "i", HB_IMPORT_CURRENT }, { "measured_current", HB_IMPORT_CURRENT_MEASURED },
		{ "bias_measured", HB_IMPORT_CURRENT_MEASURED }, { "supply", HB_IMPORT_VOLTAGE },
		{ "f", HB_IMPORT_FREQUENCY }, { "l", HB_IMPORT_INDUCTANCE }, { "r", HB_IMPORT_RESISTANCE },
	};
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		if (strcasecmp(name, role_names[r]) == 0) {
			*role = (hb_import_role)r;
			return HB_OK;
		}
	for (size_t i = 0; i < sizeof extra / sizeof extra[0]; i++)
		if (strcasecmp(name, extra[i].alias) == 0) {
			*role = extra[i].role;
			return HB_OK;
		}
	return HB_ERR_ARG;
}

static void trim(char *s)
{
	size_t n = strlen(s);
	while (n && isspace((unsigned char)s[n - 1]))
		s[--n] = '\0';
	size_t k = 0;
	while (s[k] && isspace((unsigned char)s[k]))
		k++;
	memmove(s, s + k, n - k + 1);
}

static bool is_unit_token(const char *u)
{
	static const char *const units[] = { "A", "V", "Hz", "H", "ohm", "F" };
	char text[48], e[64];
	double v;
	if (!*u || strlen(u) > 20)
		return false;
	snprintf(text, sizeof text, "1%s", u);
	for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
		if (hb_parse_value(text, units[i], &v, e, sizeof e) == HB_OK)
			return true;
	return false;
}

/* "Bias current [mA]" -> name "biascurrent", unit "mA"; "L_H" -> "l", "H". */
static void split_header(const char *header, char *name, size_t ncap, char *unit, size_t ucap)
{
	char h[256];
	snprintf(h, sizeof h, "%s", header);
	trim(h);
	unit[0] = '\0';
	char *open = strpbrk(h, "[(");
	if (open) {
		char *close = strchr(open, open[0] == '[' ? ']' : ')');
		if (close) {
			*close = '\0';
			snprintf(unit, ucap, "%s", open + 1);
			trim(unit);
		}
		*open = '\0';
	} else {
		char *us = strrchr(h, '_');
		if (us && is_unit_token(us + 1)) {
			snprintf(unit, ucap, "%s", us + 1);
			*us = '\0';
		}
	}
	size_t k = 0;
	for (const char *p = h; *p && k + 1 < ncap; p++)
		if (!isspace((unsigned char)*p) && *p != '_' && *p != '-' && *p != '.')
			name[k++] = (char)tolower((unsigned char)*p);
	name[k] = '\0';
}

typedef struct column_info {
	char name[128];
	char unit[32];
} column_info;

static bool plain_number(const char *s)
{
	if (!*s)
		return false;
	for (; *s; s++)
		if (!isdigit((unsigned char)*s) && !strchr("+-.eE", *s))
			return false;
	return true;
}

/* Parses one cell into SI; empty = not known. */
static int parse_cell(const char *cell, hb_import_role role, double scale, char delim, double *out, char *why,
		      size_t whylen)
{
	char text[128];
	snprintf(text, sizeof text, "%s", cell);
	trim(text);
	if (!text[0]) {
		*out = NAN;
		return HB_OK;
	}
	/* Semicolon files come from comma-decimal locales: "2,5" is 2.5. */
	if (delim == ';' && strchr(text, ',') && !strchr(text, '.'))
		for (char *p = text; *p; p++)
			if (*p == ',')
				*p = '.';
	double v;
	if (hb_parse_value(text, role_units[role], &v, why, whylen) != HB_OK)
		return HB_ERR_ARG;
	if (!isfinite(v)) {
		snprintf(why, whylen, "'%s' is not a finite number", text);
		return HB_ERR_ARG;
	}
	/* A unit in the header scales bare numbers only: "100" under "L (uH)". */
	*out = plain_number(text) ? v * scale : v;
	return HB_OK;
}

static int find_column(const csv_record *hdr, const column_info *cols, const char *want, int *col)
{
	char *end = NULL;
	long k = strtol(want, &end, 10);
	if (end && end != want && *end == '\0') {
		if (k < 1 || (size_t)k > hdr->nf)
			return HB_ERR_NOTFOUND;
		*col = (int)k - 1;
		return HB_OK;
	}
	char name[128], unit[32];
	split_header(want, name, sizeof name, unit, sizeof unit);
	for (size_t c = 0; c < hdr->nf; c++) {
		char h[256];
		snprintf(h, sizeof h, "%s", hdr->field[c]);
		trim(h);
		if (strcasecmp(h, want) == 0) {
			*col = (int)c;
			return HB_OK;
		}
	}
	for (size_t c = 0; c < hdr->nf; c++)
		if (strcmp(cols[c].name, name) == 0) {
			*col = (int)c;
			return HB_OK;
		}
	return HB_ERR_NOTFOUND;
}

static void header_list(const csv_record *hdr, char *buf, size_t cap)
{
	size_t len = 0;
	buf[0] = '\0';
	for (size_t c = 0; c < hdr->nf && len + 1 < cap; c++)
		len += (size_t)snprintf(buf + len, cap - len, "%s'%s'", c ? ", " : "", hdr->field[c]);
}

static int map_columns(const csv_record *hdr, const column_info *cols, const char *mapping, int col[HB_IMPORT_NROLES],
		       char *err, size_t errlen)
{
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		col[r] = -1;
	if (mapping && *mapping) {
		char *copy = strdup(mapping);
		if (!copy)
			return HB_ERR_NOMEM;
		int rc = HB_OK;
		char *save = NULL;
		for (char *item = strtok_r(copy, ",", &save); item && rc == HB_OK; item = strtok_r(NULL, ",", &save)) {
			char *eq = strchr(item, '=');
			hb_import_role role;
			if (!eq) {
				set_err(err, errlen, "--columns item '%s' is not ROLE=COLUMN (roles: current, current_measured, "
					"voltage, frequency, inductance, resistance, direction)", item);
				rc = HB_ERR_ARG;
				break;
			}
			*eq = '\0';
			trim(item);
			char *want = eq + 1;
			trim(want);
			if (role_parse(item, &role) != HB_OK) {
				set_err(err, errlen, "--columns role '%s' unknown (accepted: current, current_measured, "
					"voltage, frequency, inductance, resistance, direction)", item);
				rc = HB_ERR_ARG;
			} else if (find_column(hdr, cols, want, &col[role]) != HB_OK) {
				char list[400];
				header_list(hdr, list, sizeof list);
				set_err(err, errlen, "--columns %s=%s: no such column (the header has %s)", item, want, list);
				rc = HB_ERR_ARG;
			}
		}
		free(copy);
		if (rc != HB_OK)
			return rc;
	}
	/* Roles the mapping left open are found by name. */
	for (int r = 0; r < HB_IMPORT_NROLES; r++) {
		if (col[r] >= 0)
			continue;
		for (int a = 0; role_aliases[r][a] && col[r] < 0; a++)
			for (size_t c = 0; c < hdr->nf; c++) {
				bool taken = false;
				for (int q = 0; q < HB_IMPORT_NROLES; q++)
					taken = taken || col[q] == (int)c;
				if (!taken && strcmp(cols[c].name, role_aliases[r][a]) == 0) {
					col[r] = (int)c;
					break;
				}
			}
	}
	return HB_OK;
}

static int read_file(const char *path, char **data, size_t *len, char *err, size_t errlen)
{
	FILE *f = fopen(path, "rb");
	if (!f) {
		set_err(err, errlen, "cannot open %s: %s", path, strerror(errno));
		return HB_ERR_IO;
	}
	size_t cap = 65536, n = 0;
	char *buf = malloc(cap);
	int rc = HB_OK;
	while (buf) {
		if (n + 1 >= cap) {
			if (cap >= MAX_IMPORT_BYTES) {
				set_err(err, errlen, "%s is larger than %d MiB: not one sweep", path, MAX_IMPORT_BYTES >> 20);
				rc = HB_ERR_ARG;
				break;
			}
			char *b = realloc(buf, cap * 2);
			if (!b)
				break;
			buf = b;
			cap *= 2;
		}
		size_t got = fread(buf + n, 1, cap - n - 1, f);
		n += got;
		if (got == 0)
			break;
	}
	if (!buf) {
		rc = HB_ERR_NOMEM;
		set_err(err, errlen, "out of memory");
	} else if (rc == HB_OK && ferror(f)) {
		rc = HB_ERR_IO;
		set_err(err, errlen, "cannot read %s: %s", path, strerror(errno));
	}
	fclose(f);
	if (rc != HB_OK) {
		free(buf);
		return rc;
	}
	buf[n] = '\0';
	*data = buf;
	*len = n;
	return HB_OK;
}

static bool column_varies(const double *v, size_t n)
{
	double first = NAN;
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(v[i]))
			continue;
		if (!isfinite(first))
			first = v[i];
		else if (fabs(v[i] - first) > 1e-9 * fabs(first))
			return true;
	}
	return false;
}

static double first_finite(const double *v, size_t n)
{
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i]))
			return v[i];
	return NAN;
}

static int store_import(hb_db *db, const hb_import_options *opt, const char *path, const double *vals[HB_IMPORT_NROLES],
			const int *dir, size_t n, hb_import_result *res, char *err, size_t errlen)
{
	hb_db_part part;
	int rc = hb_db_part_get(db, opt->part_number, &part);
	if (rc != HB_OK) {
		set_err(err, errlen, "part '%s' is not in the store (add it with 'henrybench part add')", opt->part_number);
		return rc;
	}
	rc = hb_db_batch_begin(db);
	if (rc != HB_OK)
		goto db_error;
	int64_t lot_id = 0, unit_id = 0;
	if (opt->lot_code && *opt->lot_code && (rc = hb_db_lot_ensure(db, part.id, opt->lot_code, &lot_id)) != HB_OK)
		goto rollback;
	if ((rc = hb_db_unit_ensure(db, part.id, opt->serial, lot_id, &unit_id)) != HB_OK)
		goto rollback;
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = res->kind;
	s.unit_id = unit_id;
	snprintf(s.station, sizeof s.station, "import");
	const char *base = strrchr(path, '/');
	base = base ? base + 1 : path;
	snprintf(s.note, sizeof s.note, "imported from %s%s%s", base, opt->note && *opt->note ? "; " : "",
		 opt->note ? opt->note : "");
	bool have_r = vals[HB_IMPORT_RESISTANCE] != NULL;
	snprintf(s.measured_pair, sizeof s.measured_pair, have_r ? "Ls-Rs" : "Ls");
	snprintf(s.circuit, sizeof s.circuit, "series");
	snprintf(s.plan_spacing, sizeof s.plan_spacing, "list");
	s.plan_steps = (int)n;
	const double *axis = res->kind == HB_DB_SWEEP_BIAS ? vals[HB_IMPORT_CURRENT] : vals[HB_IMPORT_FREQUENCY];
	double lo = INFINITY, hi = -INFINITY;
	for (size_t i = 0; i < n; i++)
		if (isfinite(axis[i])) {
			lo = fmin(lo, axis[i]);
			hi = fmax(hi, axis[i]);
		}
	s.plan_from = isfinite(lo) ? lo : NAN;
	s.plan_to = isfinite(hi) ? hi : NAN;
	if (res->kind == HB_DB_SWEEP_BIAS)
		s.test_freq_hz = isfinite(opt->test_freq_hz) ? opt->test_freq_hz :
				 vals[HB_IMPORT_FREQUENCY] ? first_finite(vals[HB_IMPORT_FREQUENCY], n) : NAN;
	else
		s.bias_a = vals[HB_IMPORT_CURRENT] ? first_finite(vals[HB_IMPORT_CURRENT], n) : NAN;
	if ((rc = hb_db_sweep_begin(db, &s)) != HB_OK)
		goto rollback;
	for (size_t i = 0; i < n; i++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = (int)i;
		p.bias_set_a = vals[HB_IMPORT_CURRENT] ? vals[HB_IMPORT_CURRENT][i] : NAN;
		p.bias_meas_a = vals[HB_IMPORT_CURRENT_MEASURED] ? vals[HB_IMPORT_CURRENT_MEASURED][i] : p.bias_set_a;
		p.supply_v = vals[HB_IMPORT_VOLTAGE] ? vals[HB_IMPORT_VOLTAGE][i] : NAN;
		p.freq_hz = vals[HB_IMPORT_FREQUENCY] ? vals[HB_IMPORT_FREQUENCY][i] : s.test_freq_hz;
		p.primary = vals[HB_IMPORT_INDUCTANCE][i];
		p.secondary = have_r ? vals[HB_IMPORT_RESISTANCE][i] : NAN;
		p.reading_status = HB_OK;
		p.direction = dir && dir[i] ? HB_DB_DIR_DOWN : HB_DB_DIR_UP;
		if ((rc = hb_db_point_add(db, &p)) != HB_OK)
			goto rollback;
	}
	if ((rc = hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, "imported")) != HB_OK)
		goto rollback;
	if ((rc = hb_db_batch_commit(db)) != HB_OK)
		goto db_error;
	res->sweep_id = s.id;
	res->n_points = n;
	return HB_OK;
rollback:
	set_err(err, errlen, "store: %s (nothing of %s was stored)", hb_db_errmsg(db), path);
	hb_db_batch_rollback(db);
	return rc;
db_error:
	set_err(err, errlen, "store: %s", hb_db_errmsg(db));
	return rc;
}

int hb_import_csv(hb_db *db, const char *path, const hb_import_options *opt, hb_import_result *res, char *err,
		  size_t errlen)
{
	memset(res, 0, sizeof *res);
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		res->column[r] = -1;
	if (!db || !path || !opt || !opt->part_number || !*opt->part_number || !opt->serial || !*opt->serial) {
		set_err(err, errlen, "import needs a file, a part number and a unit serial");
		return HB_ERR_ARG;
	}
	char *data = NULL;
	size_t len = 0;
	int rc = read_file(path, &data, &len, err, errlen);
	if (rc != HB_OK)
		return rc;
	csv_table t = { 0 };
	column_info *cols = NULL;
	double *vals[HB_IMPORT_NROLES] = { NULL };
	int *dir = NULL;
	const char *text = data;
	if (len >= 3 && memcmp(text, "\xEF\xBB\xBF", 3) == 0) {
		text += 3;
		len -= 3;
	}
	res->delimiter = detect_delimiter(text, len);
	if ((rc = csv_parse(text, len, res->delimiter, &t, err, errlen)) != HB_OK)
		goto out;
	if (t.n == 0) {
		set_err(err, errlen, "%s is empty: no header row", path);
		rc = HB_ERR_DATA;
		goto out;
	}
	const csv_record *hdr = &t.rec[0];
	size_t nrow = t.n - 1;
	if (nrow == 0) {
		set_err(err, errlen, "%s has a header but no data rows", path);
		rc = HB_ERR_DATA;
		goto out;
	}
	cols = calloc(hdr->nf, sizeof *cols);
	if (!cols) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	int sweep_id_col = -1;
	for (size_t c = 0; c < hdr->nf; c++) {
		split_header(hdr->field[c], cols[c].name, sizeof cols[c].name, cols[c].unit, sizeof cols[c].unit);
		if (strcmp(cols[c].name, "sweepid") == 0)
			sweep_id_col = (int)c;
	}
	if ((rc = map_columns(hdr, cols, opt->columns, res->column, err, errlen)) != HB_OK)
		goto out;
	/* Scale of bare numbers from a unit in the header. */
	double scale[HB_IMPORT_NROLES];
	for (int r = 0; r < HB_IMPORT_NROLES; r++) {
		scale[r] = 1;
		int c = res->column[r];
		if (c < 0 || !role_units[r] || !cols[c].unit[0])
			continue;
		char one[48], why[128];
		snprintf(one, sizeof one, "1%s", cols[c].unit);
		if (hb_parse_value(one, role_units[r], &scale[r], why, sizeof why) != HB_OK) {
			set_err(err, errlen, "line %d, column %d ('%s'): unit '%s' is not a unit of %s (%s)", hdr->line, c + 1,
				hdr->field[c], cols[c].unit, role_names[r], role_units[r]);
			rc = HB_ERR_ARG;
			res->line = hdr->line;
			res->field = c + 1;
			goto out;
		}
	}
	if (res->column[HB_IMPORT_INDUCTANCE] < 0) {
		char list[400];
		header_list(hdr, list, sizeof list);
		set_err(err, errlen, "%s: no inductance column (the header has %s); name it with --columns inductance=NAME",
			path, list);
		rc = HB_ERR_ARG;
		goto out;
	}
	for (int r = 0; r < HB_IMPORT_NROLES; r++) {
		if (res->column[r] < 0)
			continue;
		if (r == HB_IMPORT_DIRECTION) {
			dir = calloc(nrow, sizeof *dir);
			if (!dir) {
				rc = HB_ERR_NOMEM;
				goto out;
			}
			continue;
		}
		vals[r] = malloc(nrow * sizeof *vals[r]);
		if (!vals[r]) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
	}
	/* Every row checked before anything is written. */
	c_numeric loc;
	c_numeric_enter(&loc);
	char first_sweep[64] = "";
	for (size_t i = 0; i < nrow && rc == HB_OK; i++) {
		const csv_record *row = &t.rec[i + 1];
		if (row->nf != hdr->nf) {
			set_err(err, errlen, "line %d: %zu fields, the header has %zu (nothing was stored)", row->line, row->nf,
				hdr->nf);
			res->line = row->line;
			rc = HB_ERR_ARG;
			break;
		}
		if (sweep_id_col >= 0) {
			const char *id = row->field[sweep_id_col];
			if (!first_sweep[0])
				snprintf(first_sweep, sizeof first_sweep, "%s", id);
			else if (strcmp(first_sweep, id) != 0) {
				set_err(err, errlen, "line %d: a second sweep (sweep_id %s after %s); import one sweep per file "
					"(nothing was stored)", row->line, id, first_sweep);
				res->line = row->line;
				rc = HB_ERR_ARG;
				break;
			}
		}
		for (int r = 0; r < HB_IMPORT_NROLES && rc == HB_OK; r++) {
			int c = res->column[r];
			if (c < 0)
				continue;
			char cell[128];
			snprintf(cell, sizeof cell, "%s", row->field[c]);
			trim(cell);
			if (r == HB_IMPORT_DIRECTION) {
				if (strcasecmp(cell, "down") == 0)
					dir[i] = 1;
				else if (cell[0] && strcasecmp(cell, "up") != 0) {
					set_err(err, errlen, "line %d, column %d ('%s'): direction '%s' is not up or down "
						"(nothing was stored)", row->line, c + 1, hdr->field[c], cell);
					res->line = row->line;
					res->field = c + 1;
					rc = HB_ERR_ARG;
				}
				continue;
			}
			char why[160];
			if (parse_cell(cell, (hb_import_role)r, scale[r], res->delimiter, &vals[r][i], why, sizeof why) != HB_OK) {
				set_err(err, errlen, "line %d, column %d ('%s'): '%s' is not a value in %s (%s): %s (nothing was stored)",
					row->line, c + 1, hdr->field[c], cell, role_units[r], role_names[r], why);
				res->line = row->line;
				res->field = c + 1;
				rc = HB_ERR_ARG;
			}
		}
	}
	c_numeric_leave(&loc);
	if (rc != HB_OK)
		goto out;

	if (opt->kind >= 0)
		res->kind = (hb_db_sweep_kind)opt->kind;
	else if (vals[HB_IMPORT_FREQUENCY] && column_varies(vals[HB_IMPORT_FREQUENCY], nrow) &&
		 !(vals[HB_IMPORT_CURRENT] && column_varies(vals[HB_IMPORT_CURRENT], nrow)))
		res->kind = HB_DB_SWEEP_FREQUENCY;
	else
		res->kind = HB_DB_SWEEP_BIAS;
	hb_import_role need = res->kind == HB_DB_SWEEP_BIAS ? HB_IMPORT_CURRENT : HB_IMPORT_FREQUENCY;
	if (!vals[need]) {
		char list[400];
		header_list(hdr, list, sizeof list);
		set_err(err, errlen, "%s: a %s sweep needs a %s column (the header has %s); name it with --columns %s=NAME",
			path, hb_db_sweep_kind_name(res->kind), role_names[need], list, role_names[need]);
		rc = HB_ERR_ARG;
		goto out;
	}
	size_t usable = 0;
	for (size_t i = 0; i < nrow; i++)
		if (isfinite(vals[need][i]) && isfinite(vals[HB_IMPORT_INDUCTANCE][i]))
			usable++;
	if (usable == 0) {
		set_err(err, errlen, "%s: no row has both a %s and an inductance value", path, role_names[need]);
		rc = HB_ERR_DATA;
		goto out;
	}
	rc = store_import(db, opt, path, (const double **)vals, dir, nrow, res, err, errlen);
	if (rc == HB_OK && opt->analyse) {
		hb_analysis_options aopt;
		hb_analysis_options_init(&aopt);
		hb_analysis_summary *an = calloc(1, sizeof *an);
		if (an) {
			/* A fit that fails leaves the sweep stored: the data are the record. */
			hb_analysis_sweep(db, res->sweep_id, &aopt, an);
			free(an);
		}
	}
out:
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		free(vals[r]);
	free(dir);
	free(cols);
	csv_table_free(&t);
	free(data);
	return rc;
}

/* ---------------- commands ---------------- */

static int cmp_id(const void *a, const void *b)
{
	int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
	return x < y ? -1 : x > y;
}

static void export_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench export (SWEEP_ID... | --part P | --lot L [--part P]) (--csv | --json) [--out FILE]\n\n"
		"Writes stored sweeps for spreadsheets and scripts, SI units named in every column.\n"
		"  --csv         the points as one RFC 4180 table, one header row\n"
		"  --json        sweeps with settings, points, latest fit and verdicts, and the parts\n"
		"  --part P      every sweep of part P (with --lot: of that lot of P)\n"
		"  --lot L       every sweep of lot L\n"
		"  --out FILE    write FILE instead of standard output\n");
}

int hb_cmd_export(int argc, char **argv)
{
	static const struct option options[] = {
		{ "part", required_argument, NULL, 'p' }, { "lot", required_argument, NULL, 'l' },
		{ "csv", no_argument, NULL, 'c' },        { "json", no_argument, NULL, 'j' },
		{ "out", required_argument, NULL, 'o' },  { "help", no_argument, NULL, 'h' },
		{ NULL, 0, NULL, 0 },
	};
	const char *part = NULL, *lot = NULL, *out_path = NULL;
	bool csv = false, json = false;
	optind = 1;
	opterr = 0;
	int c;
	while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
		switch (c) {
		case 'p': part = optarg; break;
		case 'l': lot = optarg; break;
		case 'c': csv = true; break;
		case 'j': json = true; break;
		case 'o': out_path = optarg; break;
		case 'h': export_usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("export: unknown or incomplete option '%s' (try 'henrybench export --help')",
				     argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (csv == json) {
		hb_cli_error("export: choose one of --csv or --json");
		return HB_EXIT_USAGE;
	}
	size_t nids = (size_t)(argc - optind);
	if ((nids > 0) == (part || lot)) {
		hb_cli_error("export needs SWEEP_IDs or --part / --lot (one of the two; try 'henrybench export --help')");
		return HB_EXIT_USAGE;
	}
	int64_t *ids = NULL;
	size_t n = 0;
	if (nids > 0) {
		ids = calloc(nids, sizeof *ids);
		if (!ids)
			return HB_EXIT_RUNTIME;
		for (size_t i = 0; i < nids; i++) {
			long long id;
			if (hb_cli_parse_sweep_id(argv[optind + (int)i], &id) != HB_OK) {
				free(ids);
				return HB_EXIT_USAGE;
			}
			ids[n++] = id;
		}
	}
	hb_db *db = NULL;
	int exit_code = HB_EXIT_RUNTIME;
	FILE *out = NULL;
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("%s", db ? hb_db_errmsg(db) : "out of memory");
		goto done;
	}
	if (!ids) {
		hb_db_sweep_filter f;
		hb_db_sweep_filter_init(&f);
		f.part_number = part;
		f.lot_code = lot;
		hb_db_sweep *list = NULL;
		if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK) {
			hb_cli_error("%s", hb_db_errmsg(db));
			goto done;
		}
		if (n == 0) {
			hb_cli_error("export: no stored sweep of %s%s%s%s", part ? "part " : "", part ? part : "",
				     part && lot ? ", " : "", lot ? lot : "");
			hb_db_sweeps_free(list);
			goto done;
		}
		ids = calloc(n, sizeof *ids);
		for (size_t i = 0; ids && i < n; i++)
			ids[i] = list[i].id;
		hb_db_sweeps_free(list);
		if (!ids)
			goto done;
		qsort(ids, n, sizeof *ids, cmp_id);
	}
	out = out_path ? fopen(out_path, "w") : stdout;
	if (!out) {
		hb_cli_error("cannot write %s: %s", out_path, strerror(errno));
		goto done;
	}
	char err[300] = "";
	int rc = csv ? hb_export_csv(db, ids, n, out, err, sizeof err) : hb_export_json(db, ids, n, out, err, sizeof err);
	if (out_path) {
		if (fclose(out) != 0 && rc == HB_OK) {
			rc = HB_ERR_IO;
			snprintf(err, sizeof err, "cannot write %s: %s", out_path, strerror(errno));
		}
	} else if (fflush(stdout) != 0 && rc == HB_OK) {
		rc = HB_ERR_IO;
		snprintf(err, sizeof err, "write to standard output failed");
	}
	if (rc != HB_OK) {
		hb_cli_error("export: %s", err[0] ? err : hb_status_name(rc));
		if (rc == HB_ERR_NOTFOUND)
			exit_code = HB_EXIT_USAGE;
		goto done;
	}
	if (out_path)
		fprintf(stderr, "exported %zu sweep%s to %s\n", n, n == 1 ? "" : "s", out_path);
	exit_code = HB_EXIT_OK;
done:
	free(ids);
	hb_db_close(db);
	return exit_code;
}

static void import_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench import FILE.csv --part P --unit SERIAL [--lot L] [--kind bias|frequency]\n"
		"                         [--columns ROLE=COLUMN,...] [--freq F] [--note TEXT] [--no-fit]\n\n"
		"Stores a sweep a meter logged on its own as one complete sweep (station \"import\"),\n"
		"then fits and judges it. Comma, semicolon or tab delimited (detected), one header row.\n"
		"Columns are found by header name (current/bias/I, inductance/L/Ls, frequency/f,\n"
		"resistance/R/Rs/ESR, supply/voltage/V, bias_measured, direction); a unit in the header,\n"
		"\"L (uH)\" or \"I[mA]\", scales bare numbers; cells may carry their own unit (\"2.5A\",\n"
		"\"100uH\"). A malformed row is reported by line and column and nothing is stored.\n\n"
		"  --part P            stored part (see 'henrybench part add')\n"
		"  --unit SERIAL       unit serial number (created if new)\n"
		"  --lot L             lot of the unit\n"
		"  --kind K            bias or frequency (default: from the columns)\n"
		"  --columns MAP       e.g. current=A,inductance=L or by 1-based number: inductance=3\n"
		"  --freq F            test frequency of a bias sweep, e.g. 100kHz\n"
		"  --note TEXT         added to the sweep's note\n"
		"  --no-fit            store only\n");
}

int hb_cmd_import(int argc, char **argv)
{
	static const struct option options[] = {
		{ "part", required_argument, NULL, 'p' },  { "unit", required_argument, NULL, 'u' },
		{ "lot", required_argument, NULL, 'l' },   { "kind", required_argument, NULL, 'k' },
		{ "columns", required_argument, NULL, 'c' }, { "freq", required_argument, NULL, 'f' },
		{ "note", required_argument, NULL, 'n' },  { "no-fit", no_argument, NULL, 'F' },
		{ "help", no_argument, NULL, 'h' },        { NULL, 0, NULL, 0 },
	};
	hb_import_options opt;
	hb_import_options_init(&opt);
	optind = 1;
	opterr = 0;
	int c;
	while ((c = getopt_long(argc, argv, "h", options, NULL)) != -1) {
		switch (c) {
		case 'p': opt.part_number = optarg; break;
		case 'u': opt.serial = optarg; break;
		case 'l': opt.lot_code = optarg; break;
		case 'c': opt.columns = optarg; break;
		case 'n': opt.note = optarg; break;
		case 'F': opt.analyse = false; break;
		case 'k': {
			hb_db_sweep_kind k;
			if (hb_db_sweep_kind_parse(optarg, &k) != HB_OK) {
				hb_cli_error("--kind '%s' unknown (accepted: bias, frequency)", optarg);
				return HB_EXIT_USAGE;
			}
			opt.kind = (int)k;
			break;
		}
		case 'f':
			if (hb_opt_value("--freq", optarg, "Hz", 1e-3, 1e10, &opt.test_freq_hz) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 'h': import_usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("import: unknown or incomplete option '%s' (try 'henrybench import --help')",
				     argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (optind != argc - 1) {
		hb_cli_error("import needs one FILE.csv (try 'henrybench import --help')");
		return HB_EXIT_USAGE;
	}
	if (!opt.part_number || !opt.serial) {
		hb_cli_error("import needs --part P and --unit SERIAL");
		return HB_EXIT_USAGE;
	}
	const char *path = argv[optind];
	hb_db *db = NULL;
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("%s", db ? hb_db_errmsg(db) : "out of memory");
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	hb_import_result res;
	char err[600] = "";
	int rc = hb_import_csv(db, path, &opt, &res, err, sizeof err);
	int exit_code = HB_EXIT_OK;
	if (rc != HB_OK) {
		hb_cli_error("import: %s", err[0] ? err : hb_status_name(rc));
		exit_code = rc == HB_ERR_ARG || rc == HB_ERR_DATA || rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	printf("imported %s: %zu points as %s sweep %lld of %s unit %s (delimiter '%s')\n", path, res.n_points,
	       hb_db_sweep_kind_name(res.kind), (long long)res.sweep_id, opt.part_number, opt.serial,
	       res.delimiter == '\t' ? "\\t" : res.delimiter == ';' ? ";" : ",");
	printf("columns:");
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		if (res.column[r] >= 0)
			printf(" %s=%d", hb_import_role_name((hb_import_role)r), res.column[r] + 1);
	printf("\n");
	if (opt.analyse) {
		hb_db_fit *fit = calloc(1, sizeof *fit);
		if (fit) {
			hb_db_fit_init(fit);
			if (hb_db_fit_get_latest(db, res.sweep_id, NULL, fit) == HB_OK)
				printf("fitted: fit %lld (%s); see 'henrybench show %lld' or 'henrybench report %lld'\n",
				       (long long)fit->id, fit->model, (long long)res.sweep_id, (long long)res.sweep_id);
			else
				printf("not fitted (too few usable points?); the points are stored\n");
			free(fit);
		}
	}
out:
	hb_db_close(db);
	return exit_code;
}
