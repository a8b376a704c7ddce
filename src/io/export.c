/* src/io/export.c - stored sweeps written as one CSV table or one JSON document (C-locale numbers) */
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

#include "../../common/hb_text.h"
#include "../quality/quality.h"
#include "io.h"

#ifndef HB_VERSION
#define HB_VERSION "unknown"
#endif

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
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	int rc = HB_OK;
	for (size_t i = 0; i < n && rc == HB_OK; i++)
		if ((rc = hb_db_sweep_get(db, ids[i], &sw[i])) != HB_OK)
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
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
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	fprintf(out, "sweep_id,kind,part_number,serial,lot_code,measured_pair,seq,direction,bias_set_A,bias_measured_A,"
		     "supply_V,frequency_Hz,%s,%s,reading_status,t_s,settle_readings,settle_s\r\n", c1, c2);
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		hb_db_point *pts = NULL;
		size_t np = 0;
		if ((rc = hb_db_points_get(db, ids[i], &pts, &np)) != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
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
	hb_c_numeric_leave(&loc);
	free(sw);
	if (rc == HB_OK && ferror(out)) {
		hb_set_err(err, errlen, "write failed");
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
		hb_set_err(err, errlen, "sweep %lld: %s", (long long)s->id, hb_db_errmsg(db));
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
		hb_set_err(err, errlen, "out of memory");
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
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
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
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	if (json_dumpf(root, out, JSON_INDENT(2) | JSON_REAL_PRECISION(12)) != 0 || fputc('\n', out) == EOF) {
		hb_set_err(err, errlen, "write failed");
		rc = HB_ERR_IO;
	}
	hb_c_numeric_leave(&loc);
out:
	json_decref(parts);
	json_decref(sweeps);
	json_decref(root);
	free(fit);
	free(part_ids);
	return rc;
}
