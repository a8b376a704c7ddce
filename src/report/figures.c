/* src/report/figures.c - the reports' plots as SVG: L against bias, B-H, L and R against frequency, histogram, sweeps overlaid */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../fit/hb_fit.h"
#include "../quality/quality.h"
#include "../../common/hb_text.h"
#include "html.h"
#include "plot.h"
#include "report.h"
#include "report_internal.h"


enum { MODEL_POINTS = 200, MAX_COMPARE = 12 };

static const hb_db_fit_value *fit_find(const sweep_data *d, const char *name)
{
	if (!d->have_fit)
		return NULL;
	for (size_t i = 0; i < d->fit->n_values; i++)
		if (strcmp(d->fit->values[i].name, name) == 0)
			return &d->fit->values[i];
	return NULL;
}

static double fit_get(const sweep_data *d, const char *name)
{
	const hb_db_fit_value *v = fit_find(d, name);
	return v ? v->value : NAN;
}

/* Series L and R of one frequency-sweep point, whatever pair the meter read. */
static bool point_series_lr(const hb_db_sweep *s, const hb_db_point *p, double *Ls, double *Rs)
{
	if (!isfinite(p->primary) || !(p->freq_hz > 0))
		return false;
	if (strcmp(s->measured_pair, "Z-theta") == 0) {
		if (!isfinite(p->secondary))
			return false;
		hb_fit_z_to_series(p->freq_hz, p->primary, p->secondary * M_PI / 180.0, Ls, Rs);
		return true;
	}
	*Ls = p->primary;
	*Rs = strncmp(s->measured_pair, "Ls-Rs", 5) == 0 ? p->secondary : NAN;
	return true;
}

/* ---------------- plots ---------------- */

static int core_law_from_name(const char *name, hb_core_law *law)
{
	for (int l = 0; l < HB_CORE_NLAWS; l++)
		if (strcmp(name, hb_core_law_name((hb_core_law)l)) == 0) {
			*law = (hb_core_law)l;
			return HB_OK;
		}
	return HB_ERR_NOTFOUND;
}

static void add_bias_models(hb_plot *plot, const sweep_data *d, double i_max)
{
	double I[MODEL_POINTS], L[MODEL_POINTS];
	for (int k = 0; k < MODEL_POINTS; k++)
		I[k] = i_max * k / (MODEL_POINTS - 1);
	double knee[HB_KNEE_NP] = { fit_get(d, "knee.L0"), fit_get(d, "knee.Lf"), fit_get(d, "knee.Ik"),
				    fit_get(d, "knee.p") };
	if (isfinite(knee[0]) && isfinite(knee[1]) && isfinite(knee[2]) && isfinite(knee[3])) {
		for (int k = 0; k < MODEL_POINTS; k++)
			L[k] = hb_fit_knee_eval(knee, I[k]);
		double ratio = NAN;
		char label[64] = "knee model";
		/* a misfitting curve says so in the legend, beside the points it misses */
		if (d->have_fit && hb_analysis_value_misfit(d->fit, "knee.L0", &ratio))
			snprintf(label, sizeof label, "knee model (MISFIT, residuals %.0f x noise)", ratio);
		hb_plot_add_series(plot, HB_AXIS_Y, I, L, MODEL_POINTS, label, HB_PLOT_LINE);
	}
	hb_core_law law;
	/* Fits from hb-fit 1.0 stored the saturation value as core.bsat. */
	double js = fit_get(d, "core.Js");
	if (!isfinite(js))
		js = fit_get(d, "core.bsat");
	hb_core_params par = { fit_get(d, "core.mu_i"), fit_get(d, "core.gap"), js };
	if (d->have_part && rpt_part_has_geometry(&d->part) && core_law_from_name(d->fit->law, &law) == HB_OK &&
	    isfinite(par.mu_i) && isfinite(par.gap) && isfinite(par.bsat)) {
		hb_core_geometry geo = { d->part.turns, d->part.ae_m2, d->part.le_m,
					 isfinite(d->part.window_m) ? d->part.window_m : 0 };
		if (hb_core_model_eval(law, &par, &geo, I, MODEL_POINTS, L, NULL) == HB_OK) {
			char label[64];
			double ratio = NAN;
			if (hb_analysis_value_misfit(d->fit, "core.mu_i", &ratio))
				snprintf(label, sizeof label, "core model (%s, MISFIT, residuals %.1f x noise)",
					 hb_core_law_name(law), ratio);
			else
				snprintf(label, sizeof label, "core model (%s)", hb_core_law_name(law));
			hb_plot_add_series(plot, HB_AXIS_Y, I, L, MODEL_POINTS, label, HB_PLOT_LINE);
		}
	}
}

/* issue 13: the data sheet's curve as points and its tolerance band as two
 * lines through the band limits at the mask points. */
static void add_curve_mask(hb_plot *plot, hb_db *db, const sweep_data *d)
{
	hb_db_part_drawing dr;
	if (hb_db_part_drawing_get(db, d->part.id, &dr) != HB_OK || dr.n_curve == 0)
		return;
	double x[HB_DB_MASK_MAX], y[HB_DB_MASK_MAX], lo[HB_DB_MASK_MAX], hi[HB_DB_MASK_MAX];
	bool one_tol = true;
	for (size_t i = 0; i < dr.n_curve; i++) {
		double t = hb_db_curve_point_tol(&dr, i);
		x[i] = dr.curve[i].current_a;
		y[i] = dr.curve[i].inductance_h;
		lo[i] = y[i] * (1 - t);
		hi[i] = y[i] * (1 + t);
		one_tol &= fabs(t - hb_db_curve_point_tol(&dr, 0)) < 1e-12;
	}
	char up[48], dn[48];
	if (one_tol) {
		snprintf(up, sizeof up, "mask +%g %%", hb_db_curve_point_tol(&dr, 0) * 100);
		snprintf(dn, sizeof dn, "mask -%g %%", hb_db_curve_point_tol(&dr, 0) * 100);
	} else {
		snprintf(up, sizeof up, "mask upper limit");
		snprintf(dn, sizeof dn, "mask lower limit");
	}
	hb_plot_add_series(plot, HB_AXIS_Y, x, y, dr.n_curve, "data sheet curve (mask points)", HB_PLOT_POINTS);
	hb_plot_add_series(plot, HB_AXIS_Y, x, hi, dr.n_curve, up, HB_PLOT_LINE_POINTS);
	hb_plot_add_series(plot, HB_AXIS_Y, x, lo, dr.n_curve, dn, HB_PLOT_LINE_POINTS);
}

/* Every per-sweep plot starts the same way: refuse an empty sweep, then a
 * titled plot naming sweep, part and unit so a printed page stays traceable. */
static int sweep_plot_open(const sweep_data *d, int64_t sweep_id, size_t points, const char *what, hb_plot **plot,
			   char *err, size_t errlen)
{
	if (points == 0) {
		hb_set_err(err, errlen, "sweep %lld has no finite readings to plot", (long long)sweep_id);
		return HB_ERR_DATA;
	}
	char title[160];
	snprintf(title, sizeof title, "Sweep %lld: %s, %s %s", (long long)sweep_id, what, d->sweep.part_number,
		 d->sweep.serial);
	*plot = hb_plot_new(title);
	return *plot ? HB_OK : HB_ERR_NOMEM;
}

int hb_report_bias_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	sweep_data d;
	int rc = rpt_load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	double *I = NULL, *L = NULL;
	size_t m = 0;
	hb_plot *plot = NULL;
	if (d.sweep.kind != HB_DB_SWEEP_BIAS) {
		hb_set_err(err, errlen, "sweep %lld is a frequency sweep", (long long)sweep_id);
		rc = HB_ERR_ARG;
		goto out;
	}
	rc = hb_analysis_bias_arrays(d.pts, d.n, &I, &L, &m);
	if (rc != HB_OK)
		goto out;
	rc = sweep_plot_open(&d, sweep_id, m, "L against DC bias", &plot, err, errlen);
	if (rc != HB_OK)
		goto out;
	hb_plot_set_axis(plot, HB_AXIS_X, "DC bias current", "A", false);
	hb_plot_set_axis(plot, HB_AXIS_Y, "Incremental inductance", "H", false);
	hb_plot_set_range(plot, HB_AXIS_Y, 0, NAN);
	hb_plot_add_series(plot, HB_AXIS_Y, I, L, m, "measured (rising bias)", HB_PLOT_POINTS);
	/* Points on the way down show any hysteresis or heating. */
	size_t nd = 0;
	for (size_t i = 0; i < d.n; i++)
		if (d.pts[i].direction == HB_DB_DIR_DOWN && isfinite(d.pts[i].primary))
			nd++;
	if (nd > 0) {
		double *x = malloc(sizeof *x * nd), *y = malloc(sizeof *y * nd);
		if (x && y) {
			size_t k = 0;
			for (size_t i = 0; i < d.n; i++) {
				const hb_db_point *p = &d.pts[i];
				if (p->direction != HB_DB_DIR_DOWN || !isfinite(p->primary))
					continue;
				x[k] = isfinite(p->bias_meas_a) ? p->bias_meas_a : p->bias_set_a;
				y[k++] = p->primary;
			}
			hb_plot_add_series(plot, HB_AXIS_Y, x, y, k, "measured (falling bias)", HB_PLOT_POINTS);
		}
		free(x);
		free(y);
	}
	add_bias_models(plot, &d, I[m - 1]);
	if (d.have_fit)
		for (size_t i = 0; i < d.fit->n_values; i++) {
			const hb_db_fit_value *v = &d.fit->values[i];
			int pct = 0;
			char tail = 0;
			if (sscanf(v->name, "I_drop%d%c", &pct, &tail) == 1 && isfinite(v->value)) {
				char label[32];
				snprintf(label, sizeof label, "-%d %%", pct);
				hb_plot_add_vline(plot, v->value, label);
			}
		}
	if (d.have_part && isfinite(d.part.nominal_h) && isfinite(d.part.tolerance)) {
		char label[48];
		snprintf(label, sizeof label, "L0 max (+%g %%)", d.part.tolerance * 100);
		hb_plot_add_hline(plot, HB_AXIS_Y, d.part.nominal_h * (1 + d.part.tolerance), label);
		snprintf(label, sizeof label, "L0 min (-%g %%)", d.part.tolerance * 100);
		hb_plot_add_hline(plot, HB_AXIS_Y, d.part.nominal_h * (1 - d.part.tolerance), label);
	}
	double l0 = fit_get(&d, HB_DB_FV_L0);
	if (d.have_part && isfinite(d.part.sat_current_a) && isfinite(d.part.sat_drop) && isfinite(l0)) {
		char label[96], at[40];
		snprintf(label, sizeof label, "min. L at %s (-%g %%)", hb_format_si(at, sizeof at, d.part.sat_current_a, "A", 4),
			 d.part.sat_drop * 100);
		hb_plot_add_marker(plot, HB_AXIS_Y, d.part.sat_current_a, (1 - d.part.sat_drop) * l0, label);
	}
	if (d.have_part)
		add_curve_mask(plot, db, &d);
	rc = rpt_render(plot, svg, err, errlen);
	plot = NULL;
out:
	hb_plot_free(plot);
	free(I);
	free(L);
	rpt_sweep_data_free(&d);
	return rc;
}

int hb_report_bh_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	sweep_data d;
	int rc = rpt_load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	double *I = NULL, *L = NULL, *B = NULL, *H = NULL;
	size_t m = 0;
	if (d.sweep.kind != HB_DB_SWEEP_BIAS || !d.have_part || !rpt_part_has_geometry(&d.part)) {
		hb_set_err(err, errlen, "a B-H curve needs a bias sweep of a part with turns, Ae and le");
		rc = HB_ERR_DATA;
		goto out;
	}
	rc = hb_analysis_bias_arrays(d.pts, d.n, &I, &L, &m);
	if (rc != HB_OK)
		goto out;
	B = malloc(sizeof *B * (m ? m : 1));
	H = malloc(sizeof *H * (m ? m : 1));
	if (!B || !H) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	hb_core_geometry geo = { d.part.turns, d.part.ae_m2, d.part.le_m, 0 };
	rc = m >= 2 ? hb_fit_curves(I, L, m, fit_get(&d, HB_DB_FV_L0), &geo, NULL, B, H, NULL) : HB_ERR_DATA;
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "sweep %lld: too few points for a B-H curve", (long long)sweep_id);
		goto out;
	}
	char title[160];
	snprintf(title, sizeof title, "Sweep %lld: B-H derived from L(I), N = %d", (long long)sweep_id, d.part.turns);
	hb_plot *plot = hb_plot_new(title);
	if (!plot) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	/* N I / le is the applied mmf per length, gap included: not the core's H */
	hb_plot_set_axis(plot, HB_AXIS_X, "Applied field per length N I / le", "A/m", false);
	hb_plot_set_axis(plot, HB_AXIS_Y, "Flux density B", "T", false);
	hb_plot_add_series(plot, HB_AXIS_Y, H, B, m, "from the measured points", HB_PLOT_LINE_POINTS);
	if (isfinite(d.part.bsat_t) && d.part.bsat_t > 0)
		hb_plot_add_hline(plot, HB_AXIS_Y, d.part.bsat_t, "Bsat (part data)");
	rc = rpt_render(plot, svg, err, errlen);
out:
	free(I);
	free(L);
	free(B);
	free(H);
	rpt_sweep_data_free(&d);
	return rc;
}

int hb_report_freq_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	sweep_data d;
	int rc = rpt_load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	double *f = malloc(sizeof *f * (d.n ? d.n : 1));
	double *Ls = malloc(sizeof *Ls * (d.n ? d.n : 1));
	double *Rs = malloc(sizeof *Rs * (d.n ? d.n : 1));
	hb_plot *plot = NULL;
	if (!f || !Ls || !Rs) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	if (d.sweep.kind != HB_DB_SWEEP_FREQUENCY) {
		hb_set_err(err, errlen, "sweep %lld is a bias sweep", (long long)sweep_id);
		rc = HB_ERR_ARG;
		goto out;
	}
	size_t m = 0;
	bool r_positive = true, any_r = false;
	for (size_t i = 0; i < d.n; i++)
		if (point_series_lr(&d.sweep, &d.pts[i], &Ls[m], &Rs[m])) {
			f[m] = d.pts[i].freq_hz;
			if (isfinite(Rs[m])) {
				any_r = true;
				if (Rs[m] <= 0)
					r_positive = false;
			}
			m++;
		}
	rc = sweep_plot_open(&d, sweep_id, m, "series L and R against frequency", &plot, err, errlen);
	if (rc != HB_OK)
		goto out;
	hb_plot_set_axis(plot, HB_AXIS_X, "Frequency", "Hz", true);
	hb_plot_set_axis(plot, HB_AXIS_Y, "Series inductance Ls", "H", false);
	/* Rs spans decades from the winding's DC value to resonance; a log axis
	 * keeps the low-frequency end readable, where every value allows it. */
	if (any_r)
		hb_plot_set_axis(plot, HB_AXIS_Y2, "Series resistance Rs", "ohm", r_positive);
	hb_plot_add_series(plot, HB_AXIS_Y, f, Ls, m, "Ls measured", HB_PLOT_POINTS);
	if (any_r)
		hb_plot_add_series(plot, HB_AXIS_Y2, f, Rs, m, "Rs measured", HB_PLOT_POINTS);
	double fl = fit_get(&d, "L"), fr = fit_get(&d, "R"), fc = fit_get(&d, "C"), frp = fit_get(&d, "Rp");
	if (isfinite(fl) && isfinite(fr) && isfinite(fc)) {
		hb_fit_freq_result model;
		memset(&model, 0, sizeof model);
		model.param[HB_FREQ_L] = fl;
		model.param[HB_FREQ_R] = fr;
		model.param[HB_FREQ_C] = fc;
		model.param[HB_FREQ_RP] = isfinite(frp) ? frp : INFINITY;
		model.p = isfinite(frp) ? 4 : 3;
		double mf[MODEL_POINTS], ml[MODEL_POINTS], mr[MODEL_POINTS];
		double lo = log(f[0]), hi = log(f[m - 1]);
		for (int k = 0; k < MODEL_POINTS; k++) {
			mf[k] = exp(lo + (hi - lo) * k / (MODEL_POINTS - 1));
			hb_fit_freq_eval(&model, mf[k], &ml[k], &mr[k], NULL);
		}
		hb_plot_add_series(plot, HB_AXIS_Y, mf, ml, MODEL_POINTS, "Ls model", HB_PLOT_LINE);
		if (any_r)
			hb_plot_add_series(plot, HB_AXIS_Y2, mf, mr, MODEL_POINTS, "Rs model (no core loss)",
					   HB_PLOT_LINE);
		/* Near resonance Ls runs off to +-infinity; keep the useful band readable. */
		hb_plot_set_range(plot, HB_AXIS_Y, -3 * fl, 6 * fl);
	}
	double srf = fit_get(&d, "srf");
	if (isfinite(srf) && srf > 0) {
		char label[48], v[32];
		snprintf(label, sizeof label, "SRF %s", hb_format_si(v, sizeof v, srf, "Hz", 3));
		hb_plot_add_vline(plot, srf, label);
	}
	rc = rpt_render(plot, svg, err, errlen);
	plot = NULL;
out:
	hb_plot_free(plot);
	free(f);
	free(Ls);
	free(Rs);
	rpt_sweep_data_free(&d);
	return rc;
}

int hb_report_histogram_svg(const double *values, size_t n, double lsl, double usl, const char *title,
			    char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	hb_stats st;
	if (hb_stats_compute(values, n, &st) != HB_OK) {
		hb_set_err(err, errlen, "no measured values for a histogram");
		return HB_ERR_DATA;
	}
	hb_plot *plot = hb_plot_new(title);
	if (!plot)
		return HB_ERR_NOMEM;
	hb_plot_set_axis(plot, HB_AXIS_X, "Zero-bias inductance L0", "H", false);
	hb_plot_set_axis(plot, HB_AXIS_Y, "Units", "", false);
	int bins = (int)ceil(sqrt((double)st.n)) + 2;
	if (bins > 20)
		bins = 20;
	double lo = st.min, hi = st.max;
	if (isfinite(lsl) && lsl < lo)
		lo = lsl;
	if (isfinite(usl) && usl > hi)
		hi = usl;
	double pad = (hi - lo) > 0 ? 0.08 * (hi - lo) : 0.05 * fabs(hi);
	hb_plot_set_range(plot, HB_AXIS_X, lo - pad, hi + pad);
	if (isfinite(lsl) && isfinite(usl))
		hb_plot_add_band(plot, lsl, usl, "tolerance");
	else if (isfinite(lsl))
		hb_plot_add_vline(plot, lsl, "lower limit");
	else if (isfinite(usl))
		hb_plot_add_vline(plot, usl, "upper limit");
	hb_plot_add_histogram(plot, values, n, bins, "units measured");
	if (isfinite(lsl) && isfinite(usl))
		hb_plot_add_vline(plot, 0.5 * (lsl + usl), "nominal");
	return rpt_render(plot, svg, err, errlen);
}

int hb_report_compare_svg(hb_db *db, const int64_t *ids, size_t n, char **svg)
{
	*svg = NULL;
	if (!db || !ids || n == 0 || n > MAX_COMPARE)
		return HB_ERR_ARG;
	hb_plot *plot = hb_plot_new("Sweeps compared");
	if (!plot)
		return HB_ERR_NOMEM;
	int rc = HB_OK;
	int kind = -1;
	for (size_t s = 0; s < n && rc == HB_OK; s++) {
		sweep_data d;
		rc = rpt_load_sweep(db, ids[s], &d, NULL, 0);
		if (rc != HB_OK)
			break;
		if (kind == -1) {
			kind = (int)d.sweep.kind;
			bool freq = kind == HB_DB_SWEEP_FREQUENCY;
			hb_plot_set_axis(plot, HB_AXIS_X, freq ? "Frequency" : "DC bias current", freq ? "Hz" : "A", freq);
			hb_plot_set_axis(plot, HB_AXIS_Y, freq ? "Series inductance Ls" : "Incremental inductance", "H",
					 false);
		} else if (kind != (int)d.sweep.kind) {
			rc = HB_ERR_ARG;
			rpt_sweep_data_free(&d);
			break;
		}
		char label[96];
		snprintf(label, sizeof label, "#%lld %s", (long long)d.sweep.id, d.sweep.serial);
		double *x = NULL, *y = NULL;
		size_t m = 0;
		if (d.sweep.kind == HB_DB_SWEEP_BIAS) {
			rc = hb_analysis_bias_arrays(d.pts, d.n, &x, &y, &m);
		} else {
			x = malloc(sizeof *x * (d.n ? d.n : 1));
			y = malloc(sizeof *y * (d.n ? d.n : 1));
			if (!x || !y)
				rc = HB_ERR_NOMEM;
			double r;
			for (size_t i = 0; rc == HB_OK && i < d.n; i++)
				if (point_series_lr(&d.sweep, &d.pts[i], &y[m], &r))
					x[m++] = d.pts[i].freq_hz;
		}
		if (rc == HB_OK && m > 0)
			rc = hb_plot_add_series(plot, HB_AXIS_Y, x, y, m, label, HB_PLOT_LINE_POINTS);
		free(x);
		free(y);
		rpt_sweep_data_free(&d);
	}
	if (rc == HB_OK)
		rc = hb_plot_render_svg(plot, svg, NULL);
	hb_plot_free(plot);
	return rc;
}
