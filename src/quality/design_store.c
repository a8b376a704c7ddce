/* src/quality/design_store.c - the design inverse's inputs read from the store: a part's latest core fit and its core (for `design` and the part report) */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../common/hb_text.h"
#include "design_store.h"


static const hb_db_fit_value *fit_value(const hb_db_fit *f, const char *name)
{
	for (size_t i = 0; i < f->n_values; i++)
		if (strcmp(f->values[i].name, name) == 0)
			return &f->values[i];
	return NULL;
}

/* Correlation of mu_i and Js from the stored covariance of the free
 * parameters (mu_i, gap, Js in that order, fixed ones left out). */
static bool correlation(const hb_db_fit *f, const bool free_[3], double *r)
{
	json_error_t jerr;
	json_t *m = json_loads(f->covariance_json, 0, &jerr);
	if (!m || !json_is_array(m))
		goto no;
	int at[3], p = 0;
	for (int j = 0; j < 3; j++)
		at[j] = free_[j] ? p++ : -1;
	if ((int)json_array_size(m) != p || at[0] < 0 || at[2] < 0)
		goto no;
	double c[3] = { json_number_value(json_array_get(json_array_get(m, (size_t)at[0]), (size_t)at[0])),
			json_number_value(json_array_get(json_array_get(m, (size_t)at[2]), (size_t)at[2])),
			json_number_value(json_array_get(json_array_get(m, (size_t)at[0]), (size_t)at[2])) };
	json_decref(m);
	if (!(c[0] > 0) || !(c[1] > 0) || !isfinite(c[2]))
		return false;
	*r = c[2] / sqrt(c[0] * c[1]);
	return fabs(*r) <= 1;
no:
	json_decref(m);
	return false;
}

int hb_design_load_fit(hb_db *db, const char *pn, hb_design_fit *out, char *err, size_t errlen)
{
	hb_db_sweep_filter flt;
	hb_db_sweep_filter_init(&flt);
	flt.part_number = pn;
	flt.kind = HB_DB_SWEEP_BIAS;
	flt.status = HB_DB_COMPLETE;
	flt.limit = 1;
	hb_db_sweep *sw = NULL;
	size_t n = 0;
	if (hb_db_sweep_list(db, &flt, &sw, &n) != HB_OK) {
		hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
		return HB_ERR_DB;
	}
	if (n == 0) {
		hb_db_sweeps_free(sw);
		hb_set_err(err, errlen, "part %s has no complete bias sweep: measure it first (henrybench sweep)", pn);
		return HB_ERR_NOTFOUND;
	}
	out->sweep_id = sw[0].id;
	hb_db_sweeps_free(sw);
	hb_db_fit *f = calloc(1, sizeof *f);
	if (!f) {
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	int rc = HB_ERR_DATA;
	if (hb_db_fit_get_latest(db, out->sweep_id, NULL, f) != HB_OK) {
		hb_set_err(err, errlen, "sweep #%lld of part %s has no fit: %s", (long long)out->sweep_id, pn, hb_db_errmsg(db));
		goto done;
	}
	out->fit_id = f->id;
	const hb_db_fit_value *mu = fit_value(f, "core.mu_i"), *js = fit_value(f, "core.Js"), *g = fit_value(f, "core.gap");
	hb_core_law law = HB_CORE_NLAWS;
	for (int l = 0; l < HB_CORE_NLAWS; l++)
		if (strcmp(f->law, hb_core_law_name((hb_core_law)l)) == 0)
			law = (hb_core_law)l;
	if (!mu || !js || law == HB_CORE_NLAWS || !isfinite(mu->value) || !isfinite(js->value)) {
		hb_set_err(err, errlen, "fit #%lld of sweep #%lld has no core-law fit (the part needs turns, Ae and le, e.g. "
			     "--core SHAPE:dims, and 'henrybench fit' again)",
			     (long long)f->id, (long long)out->sweep_id);
		goto done;
	}
	if (!isfinite(mu->std_error) || !isfinite(js->std_error)) {
		hb_set_err(err, errlen, "fit #%lld did not determine %s: no design with an uncertainty can rest on it",
			     (long long)f->id, !isfinite(mu->std_error) ? "mu_i" : "Js");
		goto done;
	}
	out->law = law;
	out->mu_i = mu->value;
	out->u_mu_i = mu->std_error;
	out->Js = js->value;
	out->u_Js = js->std_error;
	out->dof = f->dof;
	/* a parameter held at a datasheet value (or the gap held at 0) has a
	 * standard error of 0 and no row in the covariance */
	bool free_[3] = { mu->std_error > 0, !g || g->std_error != 0, js->std_error > 0 };
	out->r = 0;
	out->r_known = correlation(f, free_, &out->r);
	if (!out->r_known)
		out->r = 0;
	hb_db_point *pts = NULL;
	size_t np = 0;
	out->i_max = NAN;
	if (hb_db_points_get(db, out->sweep_id, &pts, &np) == HB_OK) {
		for (size_t i = 0; i < np; i++) {
			double a = isfinite(pts[i].bias_meas_a) ? pts[i].bias_meas_a : pts[i].bias_set_a;
			if (isfinite(a) && !(fabs(a) <= out->i_max))
				out->i_max = fabs(a);
		}
		hb_db_points_free(pts);
	}
	rc = HB_OK;
done:
	free(f);
	return rc;
}

/* The part's core: its IEC set when it has one, else Ae, le and window. */
int hb_design_load_core(hb_db *db, const hb_db_part *p, hb_core_shape_result *r, hb_gap_place *place,
			char *shape_text, size_t cap, char *err, size_t errlen)
{
	hb_db_part_core cs;
	if (hb_db_part_core_get(db, p->part_number, &cs) != HB_OK) {
		hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
		return HB_ERR_DB;
	}
	hb_gap_place_parse(cs.gap_at, place);
	if (cs.shape[0]) {
		hb_core_shape s;
		hb_core_dims d;
		char why[200];
		if (hb_core_shape_parse(cs.shape, &s) != HB_OK || hb_core_dims_parse(cs.dims, &d, why, sizeof why) != HB_OK ||
		    hb_core_shape_eval(s, &d, r, why, sizeof why) != HB_OK) {
			hb_set_err(err, errlen, "part %s: stored core set '%s %s' does not evaluate", p->part_number, cs.shape,
				   cs.dims);
			return HB_ERR_DATA;
		}
		/* the fit used the part's stored window; keep the design on the same one */
		if (isfinite(p->window_m) && p->window_m > 0)
			r->window_height = p->window_m;
		snprintf(shape_text, cap, "%s %s", cs.shape, cs.dims);
		return HB_OK;
	}
	if (!(p->ae_m2 > 0) || !(p->le_m > 0)) {
		hb_set_err(err, errlen, "part %s has no core geometry: give it --core SHAPE:dims (or --ae and --le)",
			   p->part_number);
		return HB_ERR_ARG;
	}
	hb_core_shape_from_effective(p->ae_m2, p->le_m, isfinite(p->window_m) ? p->window_m : 0, r);
	snprintf(shape_text, cap, "Ae %.4g mm2, le %.4g mm", p->ae_m2 * 1e6, p->le_m * 1e3);
	return HB_OK;
}

