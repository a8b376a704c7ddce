/* src/io/json.c - the one JSON serialiser of each stored record (part, sweep, point, fit, verdict) and the one JSON writer */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../common/hb_text.h"
#include "../quality/quality.h"
#include "io.h"

json_t *hb_json_num(double v)
{
	/* JSON has no NaN or infinity; jansson refuses them. */
	return isfinite(v) ? json_real(v) : json_null();
}

/* A count or index that is 0 or less was never set: null, like a NaN. */
static json_t *count_or_null(long v)
{
	return v > 0 ? json_integer(v) : json_null();
}

const char *hb_io_reading_column(const char *pair, int which)
{
	/* "Ls-Rs" -> L_H, R_ohm; "Z-theta" -> Z_ohm, theta_deg (the meters report
	 * the phase in degrees). Matched on the whole reading name first, so that
	 * "theta" is not taken for a letter of its own. */
	const char *dash = strchr(pair, '-');
	const char *name = which == 0 ? pair : (dash ? dash + 1 : "");
	if (strcmp(name, "theta") == 0)
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

json_t *hb_json_part(const hb_db_part *p)
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
	json_object_set_new(o, "turns", count_or_null(p->turns));
	json_object_set_new(o, "Ae_m2", hb_json_num(p->ae_m2));
	json_object_set_new(o, "le_m", hb_json_num(p->le_m));
	json_object_set_new(o, "window_m", hb_json_num(p->window_m));
	if (isnan(p->toroid_od_m)) {
		json_object_set_new(o, "toroid", json_null());
	} else {
		json_t *t = json_object();
		json_object_set_new(t, "od_m", hb_json_num(p->toroid_od_m));
		json_object_set_new(t, "id_m", hb_json_num(p->toroid_id_m));
		json_object_set_new(t, "h_m", hb_json_num(p->toroid_h_m));
		json_object_set_new(o, "toroid", t);
	}
	json_object_set_new(o, "mu_i", hb_json_num(p->mu_i));
	json_object_set_new(o, "bsat_T", hb_json_num(p->bsat_t));
	/* "" = none stated: the station's default applies (null, not a rule name) */
	json_object_set_new(o, "decision_rule", p->decision_rule[0] ? json_string(p->decision_rule) : json_null());
	json_object_set_new(o, "guard_r", hb_json_num(p->guard_r));
	json_object_set_new(o, "created", json_string(p->created));
	json_object_set_new(o, "updated", json_string(p->updated));
	return o;
}

/* The keys a listed sweep and a full sweep share. */
static json_t *sweep_head(const hb_db_sweep *s)
{
	json_t *o = json_object();
	json_object_set_new(o, "id", json_integer(s->id));
	json_object_set_new(o, "kind", json_string(hb_db_sweep_kind_name(s->kind)));
	json_object_set_new(o, "status", json_string(hb_db_sweep_status_name(s->status)));
	json_object_set_new(o, "status_reason", json_string(s->status_reason));
	json_object_set_new(o, "started", json_string(s->started_iso));
	json_object_set_new(o, "ended", s->ended_iso[0] ? json_string(s->ended_iso) : json_null());
	json_object_set_new(o, "part_number", json_string(s->part_number));
	json_object_set_new(o, "serial", json_string(s->serial));
	json_object_set_new(o, "lot_code", json_string(s->lot_code));
	json_object_set_new(o, "station", json_string(s->station));
	json_object_set_new(o, "operator", json_string(s->operator_name));
	return o;
}

json_t *hb_json_sweep_summary(const hb_db_sweep *s)
{
	json_t *o = sweep_head(s);
	json_object_set_new(o, "n_points", json_integer(s->n_points));
	return o;
}

json_t *hb_json_supply_record(const hb_db_sweep *s)
{
	json_t *o = json_object();
	json_object_set_new(o, "found_flowing_A", hb_json_num(s->supply_found_a));
	json_object_set_new(o, "at_switch_off_A", hb_json_num(s->supply_off_a));
	json_object_set_new(o, "decay_s", hb_json_num(s->supply_decay_s));
	return o;
}

json_t *hb_json_sweep(const hb_db_sweep *s)
{
	json_t *o = sweep_head(s);
	json_object_set_new(o, "host", json_string(s->host));
	json_object_set_new(o, "pid", count_or_null(s->pid));
	json_t *inst = json_object();
	json_object_set_new(inst, "lcr_idn", json_string(s->lcr_idn));
	json_object_set_new(inst, "lcr_profile", json_string(s->lcr_profile));
	json_object_set_new(inst, "supply_idn", json_string(s->supply_idn));
	json_object_set_new(inst, "supply_profile", json_string(s->supply_profile));
	json_object_set_new(o, "instruments", inst);
	json_t *set = json_object();
	json_object_set_new(set, "test_frequency_Hz", hb_json_num(s->test_freq_hz));
	json_object_set_new(set, "test_level", hb_json_num(s->test_level));
	json_object_set_new(set, "test_level_unit", json_string(s->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V"));
	json_object_set_new(set, "bias_A", hb_json_num(s->bias_a));
	json_object_set_new(set, "circuit", json_string(s->circuit));
	json_object_set_new(set, "measured_pair", json_string(s->measured_pair));
	json_object_set_new(set, "averaging", count_or_null(s->averaging));
	json_object_set_new(set, "aperture", json_string(s->aperture));
	json_object_set_new(set, "settle_mode", json_string(s->settle_mode));
	json_object_set_new(set, "settle_delay_s", hb_json_num(s->settle_delay_s));
	json_object_set_new(set, "settle_tolerance", hb_json_num(s->settle_tolerance));
	json_object_set_new(set, "settle_max_readings", count_or_null(s->settle_max_readings));
	json_object_set_new(set, "settle_max_s", hb_json_num(s->settle_max_s));
	json_object_set_new(set, "plan_from", hb_json_num(s->plan_from));
	json_object_set_new(set, "plan_to", hb_json_num(s->plan_to));
	json_object_set_new(set, "plan_unit", json_string(s->kind == HB_DB_SWEEP_FREQUENCY ? "Hz" : "A"));
	json_object_set_new(set, "plan_steps", count_or_null(s->plan_steps));
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

const char *hb_io_reading_status(int status)
{
	return status == HB_OK ? "ok" : hb_status_name(status);
}

json_t *hb_json_point(const hb_db_sweep *s, const hb_db_point *p)
{
	json_t *q = json_object();
	json_object_set_new(q, "seq", json_integer(p->seq));
	json_object_set_new(q, "direction", json_string(p->direction == HB_DB_DIR_DOWN ? "down" : "up"));
	json_object_set_new(q, "bias_set_A", hb_json_num(p->bias_set_a));
	json_object_set_new(q, "bias_measured_A", hb_json_num(p->bias_meas_a));
	json_object_set_new(q, "supply_V", hb_json_num(p->supply_v));
	json_object_set_new(q, "frequency_Hz", hb_json_num(p->freq_hz));
	json_object_set_new(q, hb_io_reading_column(s->measured_pair, 0), hb_json_num(p->primary));
	json_object_set_new(q, hb_io_reading_column(s->measured_pair, 1), hb_json_num(p->secondary));
	json_object_set_new(q, "reading_status", json_string(hb_io_reading_status(p->reading_status)));
	json_object_set_new(q, "t_s", hb_json_num(p->t_s));
	json_object_set_new(q, "settle_readings", json_integer(p->settle_readings));
	json_object_set_new(q, "settle_s", hb_json_num(p->settle_s));
	json_object_set_new(q, "bias_spread_A", hb_json_num(p->bias_spread_a));
	json_object_set_new(q, "settled", json_boolean(p->settled));
	return q;
}

/* The stored uncertainty row that belongs to a fit value. The budgets are
 * named after the quantities the analysis computed; the history's short
 * names ("mu_e", "gap") and the referred DCR carry the same number under
 * another name. A row is taken only when its value is the value's own, so
 * the measured DCR never shows the budget of the one referred to 20 C. */
static const hb_db_fit_unc *unc_of(const hb_db_fit_value *fv, const hb_db_fit_unc *unc, size_t n)
{
	const char *names[3] = { fv->name, NULL, NULL };
	if (strcmp(fv->name, HB_DB_FV_MU_E) == 0) {
		names[1] = "core.mu_e";
	} else if (strcmp(fv->name, HB_DB_FV_GAP) == 0) {
		names[1] = "core.gap_physical";
		names[2] = "core.gap"; /* no physical gap: the effective one stood in */
	} else if (strcmp(fv->name, "DCR_20C") == 0) {
		names[1] = "DCR";
	}
	for (size_t k = 0; k < 3 && names[k]; k++)
		for (size_t i = 0; i < n; i++) {
			if (strcmp(unc[i].name, names[k]) != 0)
				continue;
			double a = unc[i].value, b = fv->value;
			if (a == b || fabs(a - b) <= 1e-9 * fmax(fabs(a), fabs(b)))
				return &unc[i];
		}
	return NULL;
}

json_t *hb_json_fit(const hb_db_fit *f, const hb_db_fit_unc *unc, size_t n_unc)
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
		json_t *vo = hb_analysis_value_object(fv->value, fv->std_error, fv->unit, reason,
						      hb_analysis_value_misfit(f, fv->name, NULL));
		const hb_db_fit_unc *u = unc ? unc_of(fv, unc, n_unc) : NULL;
		if (u)
			hb_budget_add_stored_json(vo, u);
		json_object_set_new(vals, fv->name, vo);
	}
	json_object_set_new(o, "values", vals);
	return o;
}

json_t *hb_json_verdict(const hb_db_verdict *v)
{
	/* the analysis's own shape of a stored verdict, so that fit --json, show
	 * and export state the rule, U and the acceptance limits alike */
	json_t *o = hb_analysis_stored_verdict_json(v, hb_analysis_check_unit(v->check_name));
	/* traceability (step 9): which judgement this is, when, by whom, against which spec revision */
	if (o && v->uid[0]) {
		json_object_set_new(o, "uid", json_string(v->uid));
		json_object_set_new(o, "judged_at", json_string(v->created));
		json_object_set_new(o, "operator", json_string(v->operator_name));
		json_object_set_new(o, "spec_revision", v->spec_revision > 0 ? json_integer(v->spec_revision) : json_null());
		json_object_set_new(o, "superseded_by", v->superseded_by > 0 ? json_integer(v->superseded_by) : json_null());
	}
	return o;
}

/* "uid" and friends of a stored record: its global identity, null where the store has none. */
static void set_uid(json_t *o, const char *key, hb_db *db, hb_db_record kind, int64_t id)
{
	char uid[HB_DB_UID_LEN] = "";
	if (id > 0 && hb_db_uid_of(db, kind, id, uid) == HB_OK && uid[0])
		json_object_set_new(o, key, json_string(uid));
	else
		json_object_set_new(o, key, json_null());
}

json_t *hb_json_sweep_record(hb_db *db, const hb_db_sweep *s, char *err, size_t errlen)
{
	hb_db_point *pts = NULL;
	hb_db_verdict *v = NULL;
	size_t np = 0, nv = 0;
	hb_db_fit *fit = calloc(1, sizeof *fit);
	if (!fit) {
		hb_set_err(err, errlen, "out of memory");
		return NULL;
	}
	if (hb_db_points_get(db, s->id, &pts, &np) != HB_OK || hb_db_verdict_list(db, s->id, &v, &nv) != HB_OK) {
		hb_set_err(err, errlen, "sweep %lld: %s", (long long)s->id, hb_db_errmsg(db));
		hb_db_points_free(pts);
		free(fit);
		return NULL;
	}
	json_t *o = hb_json_sweep(s);
	set_uid(o, "uid", db, HB_DB_REC_SWEEP, s->id);
	set_uid(o, "points_uid", db, HB_DB_REC_POINTS, s->id);
	set_uid(o, "unit_uid", db, HB_DB_REC_UNIT, s->unit_id);
	set_uid(o, "part_uid", db, HB_DB_REC_PART, s->part_id);
	json_t *arr = json_array();
	for (size_t i = 0; i < np; i++)
		json_array_append_new(arr, hb_json_point(s, &pts[i]));
	json_object_set_new(o, "points", arr);
	hb_db_fit_init(fit);
	json_t *jf = NULL;
	if (hb_db_fit_get_latest(db, s->id, NULL, fit) == HB_OK) {
		hb_db_fit_unc *unc = NULL;
		size_t nu = 0;
		if (hb_db_fit_unc_list(db, fit->id, &unc, &nu) != HB_OK) {
			/* a record without its uncertainty would read as one that has none */
			hb_set_err(err, errlen, "fit %lld: %s", (long long)fit->id, hb_db_errmsg(db));
			json_decref(o);
			hb_db_points_free(pts);
			hb_db_verdicts_free(v);
			free(fit);
			return NULL;
		}
		jf = hb_json_fit(fit, unc, nu);
		hb_db_fit_uncs_free(unc);
		if (jf)
			set_uid(jf, "uid", db, HB_DB_REC_FIT, fit->id);
	}
	json_object_set_new(o, "fit", jf ? jf : json_null());
	arr = json_array();
	for (size_t i = 0; i < nv; i++)
		json_array_append_new(arr, hb_json_verdict(&v[i]));
	json_object_set_new(o, "verdicts", arr);
	hb_db_points_free(pts);
	hb_db_verdicts_free(v);
	free(fit);
	return o;
}

json_t *hb_json_unit_result(const hb_db_history_row *r, const int drop_percent[HB_DB_HISTORY_DROPS])
{
	json_t *u = json_object();
	json_object_set_new(u, "sweep_id", json_integer(r->sweep_id));
	json_object_set_new(u, "started", json_string(r->started_iso));
	json_object_set_new(u, "station", json_string(r->station));
	json_object_set_new(u, "lot_code", r->lot_code[0] ? json_string(r->lot_code) : json_null());
	json_object_set_new(u, "serial", json_string(r->serial));
	json_object_set_new(u, "L0_H", hb_json_num(r->l0_h));
	/* keyed by the percentage, so a reader need not know which drops were asked for */
	json_t *drops = json_object();
	for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
		char key[16];
		snprintf(key, sizeof key, "%d", drop_percent[k]);
		json_object_set_new(drops, key, hb_json_num(r->i_drop_a[k]));
	}
	json_object_set_new(u, "I_drop_A", drops);
	json_object_set_new(u, "mu_e", hb_json_num(r->mu_e));
	json_object_set_new(u, "gap_m", hb_json_num(r->gap_m));
	json_object_set_new(u, "verdict", json_string(hb_db_outcome_name(r->verdict)));
	return u;
}

int hb_json_write(const json_t *root, FILE *out)
{
	/* 17 significant digits read back as the same double: a JSON file is
	 * data, and a value that changed on the way out would be a new value.
	 * The C locale keeps the decimal point a point on any lab PC. */
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	int rc = json_dumpf(root, out, JSON_INDENT(2) | JSON_REAL_PRECISION(17)) != 0 || fputc('\n', out) == EOF ?
			 HB_ERR_IO :
			 HB_OK;
	hb_c_numeric_leave(&loc);
	return rc;
}

/* ---------------- issue 13: a part's drawing and data-sheet curve ---------------- */

json_t *hb_json_part_drawing(const hb_db_part_drawing *d)
{
	json_t *o = json_object();
	json_object_set_new(o, "gap_m", hb_json_num(d->gap_m));
	json_object_set_new(o, "gap_tol_m", hb_json_num(d->gap_tol_m));
	json_object_set_new(o, "curve_tol", hb_json_num(d->curve_tol));
	json_object_set_new(o, "curve_source", json_string(d->curve_source));
	json_t *a = json_array();
	for (size_t i = 0; i < d->n_curve; i++) {
		json_t *q = json_object();
		json_object_set_new(q, "current_A", hb_json_num(d->curve[i].current_a));
		json_object_set_new(q, "inductance_H", hb_json_num(d->curve[i].inductance_h));
		json_object_set_new(q, "tol", hb_json_num(hb_db_curve_point_tol(d, i)));
		json_array_append_new(a, q);
	}
	json_object_set_new(o, "curve", a);
	return o;
}
