/* src/report/report.c - filed reports: one sweep, one inspected lot, one part's history, and the plots they carry */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../fit/hb_fit.h"
#include "../quality/analysis.h"
#include "../cli/cli.h"
#include "html.h"
#include "plot.h"
#include "../quality/rules.h"
#include "report.h"

#ifndef HB_VERSION
#define HB_VERSION "unknown"
#endif

enum { MODEL_POINTS = 200, MAX_COMPARE = 12 };

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

/* ---------------- one sweep with everything stored about it ---------------- */

typedef struct sweep_data {
	hb_db_sweep sweep;
	bool have_part;
	hb_db_part part;
	hb_db_point *pts;
	size_t n;
	bool have_fit;
	hb_db_fit *fit;
	hb_db_verdict *verdicts;
	size_t nv;
} sweep_data;

static void sweep_data_free(sweep_data *d)
{
	hb_db_points_free(d->pts);
	hb_db_verdicts_free(d->verdicts);
	free(d->fit);
	memset(d, 0, sizeof *d);
}

static int load_sweep(hb_db *db, int64_t id, sweep_data *d, char *err, size_t errlen)
{
	memset(d, 0, sizeof *d);
	int rc = hb_db_sweep_get(db, id, &d->sweep);
	if (rc != HB_OK) {
		set_err(err, errlen, "sweep %lld: %s", (long long)id, hb_db_errmsg(db));
		return rc;
	}
	hb_db_part_init(&d->part);
	if (d->sweep.part_id > 0 && hb_db_part_get_id(db, d->sweep.part_id, &d->part) == HB_OK)
		d->have_part = true;
	d->fit = calloc(1, sizeof *d->fit);
	if (!d->fit) {
		set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	hb_db_fit_init(d->fit);
	rc = hb_db_fit_get_latest(db, id, NULL, d->fit);
	if (rc == HB_OK)
		d->have_fit = true;
	else if (rc != HB_ERR_NOTFOUND)
		goto db_error;
	rc = hb_db_points_get(db, id, &d->pts, &d->n);
	if (rc != HB_OK)
		goto db_error;
	rc = hb_db_verdict_list(db, id, &d->verdicts, &d->nv);
	if (rc != HB_OK)
		goto db_error;
	return HB_OK;
db_error:
	set_err(err, errlen, "sweep %lld: %s", (long long)id, hb_db_errmsg(db));
	sweep_data_free(d);
	return rc;
}

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

static bool part_has_geometry(const hb_db_part *p)
{
	return p->turns > 0 && p->ae_m2 > 0 && p->le_m > 0;
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

static int render(hb_plot *plot, char **svg, char *err, size_t errlen)
{
	int rc = hb_plot_render_svg(plot, svg, NULL);
	if (rc != HB_OK)
		set_err(err, errlen, "plot: %s", hb_plot_error(plot));
	hb_plot_free(plot);
	return rc;
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
	if (d->have_part && part_has_geometry(&d->part) && core_law_from_name(d->fit->law, &law) == HB_OK &&
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

/* Every per-sweep plot starts the same way: refuse an empty sweep, then a
 * titled plot naming sweep, part and unit so a printed page stays traceable. */
static int sweep_plot_open(const sweep_data *d, int64_t sweep_id, size_t points, const char *what, hb_plot **plot,
			   char *err, size_t errlen)
{
	if (points == 0) {
		set_err(err, errlen, "sweep %lld has no finite readings to plot", (long long)sweep_id);
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
	int rc = load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	double *I = NULL, *L = NULL;
	size_t m = 0;
	hb_plot *plot = NULL;
	if (d.sweep.kind != HB_DB_SWEEP_BIAS) {
		set_err(err, errlen, "sweep %lld is a frequency sweep", (long long)sweep_id);
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
		char label[64];
		snprintf(label, sizeof label, "min. L at %g A (-%g %%)", d.part.sat_current_a, d.part.sat_drop * 100);
		hb_plot_add_marker(plot, HB_AXIS_Y, d.part.sat_current_a, (1 - d.part.sat_drop) * l0, label);
	}
	rc = render(plot, svg, err, errlen);
	plot = NULL;
out:
	hb_plot_free(plot);
	free(I);
	free(L);
	sweep_data_free(&d);
	return rc;
}

int hb_report_bh_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	sweep_data d;
	int rc = load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	double *I = NULL, *L = NULL, *B = NULL, *H = NULL;
	size_t m = 0;
	if (d.sweep.kind != HB_DB_SWEEP_BIAS || !d.have_part || !part_has_geometry(&d.part)) {
		set_err(err, errlen, "a B-H curve needs a bias sweep of a part with turns, Ae and le");
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
		set_err(err, errlen, "sweep %lld: too few points for a B-H curve", (long long)sweep_id);
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
	rc = render(plot, svg, err, errlen);
out:
	free(I);
	free(L);
	free(B);
	free(H);
	sweep_data_free(&d);
	return rc;
}

int hb_report_freq_svg(hb_db *db, int64_t sweep_id, char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	sweep_data d;
	int rc = load_sweep(db, sweep_id, &d, err, errlen);
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
		set_err(err, errlen, "sweep %lld is a bias sweep", (long long)sweep_id);
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
	rc = render(plot, svg, err, errlen);
	plot = NULL;
out:
	hb_plot_free(plot);
	free(f);
	free(Ls);
	free(Rs);
	sweep_data_free(&d);
	return rc;
}

int hb_report_histogram_svg(const double *values, size_t n, double lsl, double usl, const char *title,
			    char **svg, char *err, size_t errlen)
{
	*svg = NULL;
	hb_stats st;
	if (hb_stats_compute(values, n, &st) != HB_OK) {
		set_err(err, errlen, "no measured values for a histogram");
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
	return render(plot, svg, err, errlen);
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
		rc = load_sweep(db, ids[s], &d, NULL, 0);
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
			sweep_data_free(&d);
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
		sweep_data_free(&d);
	}
	if (rc == HB_OK)
		rc = hb_plot_render_svg(plot, svg, NULL);
	hb_plot_free(plot);
	return rc;
}

/* ---------------- page pieces ---------------- */

static const char *si(char *buf, size_t cap, double v, const char *unit, int digits)
{
	if (!isfinite(v)) {
		snprintf(buf, cap, "-");
		return buf;
	}
	/* Squared units would square the prefix too, dimensionless ones need none. */
	if (!unit || !*unit || strcmp(unit, "H2") == 0 || strcmp(unit, "m2") == 0) {
		snprintf(buf, cap, "%.*g%s%s", digits, v, unit && *unit ? " " : "", unit ? unit : "");
		return buf;
	}
	return hb_format_si(buf, cap, v, unit, digits);
}

static const char *pct(char *buf, size_t cap, double frac)
{
	if (!isfinite(frac))
		snprintf(buf, cap, "-");
	else
		snprintf(buf, cap, "%+.1f %%", frac * 100);
	return buf;
}

static const char *or_dash(const char *s)
{
	return s && *s ? s : "-";
}

static void now_iso(char *buf, size_t cap)
{
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(buf, cap, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

static void part_section(hb_html *h, const hb_db_part *p)
{
	char a[48], b[48], c[48], line[256];
	hb_html_section_begin(h, "Part and specification");
	hb_html_kv_begin(h, NULL);
	hb_html_kv_row(h, "Part number", p->part_number);
	hb_html_kv_row(h, "Description", or_dash(p->description));
	hb_html_kv_row(h, "Maker", or_dash(p->maker));
	if (isfinite(p->nominal_h)) {
		snprintf(line, sizeof line, "%s, tolerance +-%g %% (limits %s to %s)", si(a, sizeof a, p->nominal_h, "H", 4),
			 isfinite(p->tolerance) ? p->tolerance * 100 : NAN,
			 si(b, sizeof b, isfinite(p->tolerance) ? p->nominal_h * (1 - p->tolerance) : NAN, "H", 4),
			 si(c, sizeof c, isfinite(p->tolerance) ? p->nominal_h * (1 + p->tolerance) : NAN, "H", 4));
		hb_html_kv_row(h, "Nominal inductance at zero bias", line);
	}
	if (isfinite(p->test_freq_hz) || isfinite(p->test_level)) {
		snprintf(line, sizeof line, "%s, %s", si(a, sizeof a, p->test_freq_hz, "Hz", 4),
			 si(b, sizeof b, p->test_level, p->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V", 3));
		hb_html_kv_row(h, "Specified test signal", line);
	}
	if (isfinite(p->sat_current_a)) {
		snprintf(line, sizeof line, "L at %s at least %g %% of L0 (drop at most %g %%)",
			 si(a, sizeof a, p->sat_current_a, "A", 4), isfinite(p->sat_drop) ? 100 * (1 - p->sat_drop) : NAN,
			 isfinite(p->sat_drop) ? 100 * p->sat_drop : NAN);
		hb_html_kv_row(h, "Saturation specification", line);
	}
	if (isfinite(p->rated_current_a))
		hb_html_kv_row(h, "Rated current", si(a, sizeof a, p->rated_current_a, "A", 4));
	if (isfinite(p->dcr_max_ohm))
		hb_html_kv_row(h, "DC resistance, maximum", si(a, sizeof a, p->dcr_max_ohm, "ohm", 4));
	if (part_has_geometry(p)) {
		snprintf(line, sizeof line, "N = %d turns, Ae = %.4g mm2, le = %s%s%s", p->turns, p->ae_m2 * 1e6,
			 si(a, sizeof a, p->le_m, "m", 4), isfinite(p->window_m) ? ", window height " : "",
			 isfinite(p->window_m) ? si(b, sizeof b, p->window_m, "m", 4) : "");
		hb_html_kv_row(h, "Winding and effective core geometry", line);
	}
	if (isfinite(p->mu_i) || isfinite(p->bsat_t)) {
		snprintf(line, sizeof line, "mu_i %s, Bsat %s", si(a, sizeof a, p->mu_i, "", 4),
			 si(b, sizeof b, p->bsat_t, "T", 3));
		hb_html_kv_row(h, "Material data", line);
	}
	hb_html_kv_end(h);
	hb_html_section_end(h);
}

static const char *overall_of(const hb_db_verdict *v, size_t n)
{
	bool all_pass = n > 0;
	for (size_t i = 0; i < n; i++) {
		if (v[i].outcome == HB_DB_FAIL)
			return "fail";
		if (v[i].outcome != HB_DB_PASS)
			all_pass = false;
	}
	return all_pass ? "pass" : "incomplete";
}

static const char *check_unit(const char *check)
{
	if (strcmp(check, "DCR") == 0)
		return "ohm";
	if (strncmp(check, "I", 1) == 0)
		return "A";
	return "H";
}

static void verdict_section(hb_html *h, const sweep_data *d)
{
	char line[160];
	hb_html_section_begin(h, "Verdicts against the specification");
	if (d->nv == 0) {
		hb_html_paragraph(h, "No check was recorded for this sweep (no specification applies, or the fit did not run).");
		hb_html_section_end(h);
		return;
	}
	snprintf(line, sizeof line, "Unit %s, sweep %lld, overall:", or_dash(d->sweep.serial), (long long)d->sweep.id);
	hb_html_verdict(h, line, overall_of(d->verdicts, d->nv));
	static const char *const head[] = { "Check", "Result", "Measured", "Lower limit", "Upper limit", "Margin",
					    "Basis" };
	hb_html_table_begin(h, "Margin: distance to the nearer limit as a fraction of that limit; negative = outside.",
			    head, 7);
	for (size_t i = 0; i < d->nv; i++) {
		const hb_db_verdict *v = &d->verdicts[i];
		const char *u = check_unit(v->check_name);
		char m[40], lo[40], hi[40], mg[24];
		const char *cells[7] = { v->check_name, hb_db_outcome_name(v->outcome), si(m, sizeof m, v->measured, u, 5),
					 si(lo, sizeof lo, v->limit_low, u, 5), si(hi, sizeof hi, v->limit_high, u, 5),
					 pct(mg, sizeof mg, v->margin), v->note };
		hb_html_table_row_class(h, hb_db_outcome_name(v->outcome), cells, 7);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);
}

static bool flag_token(const hb_db_fit *f, const char *token)
{
	size_t len = strlen(token);
	for (const char *p = f->flags; (p = strstr(p, token)) != NULL; p += len)
		if ((p == f->flags || p[-1] == ' ') && (p[len] == 0 || p[len] == ' '))
			return true;
	return false;
}

/* What a stored fit value means, in words a reviewer can check. */
static const char *value_meaning(const char *name, char *buf, size_t cap)
{
	static const struct { const char *name, *text; } known[] = {
		{ "L0", "zero-bias inductance, model-free (polynomial in I^2, or with an |I| term, through the points "
			"below the knee, at I = 0)" },
		{ "L0_part", "zero-bias inductance of the part itself, the winding capacitance removed" },
		{ "knee.noise_ratio", "knee model: residual rms over reading noise" },
		{ "knee.undetermined", "knee model: parameters the data do not determine (bit set)" },
		{ "knee.flags", "knee model: condition flags (bit set: 1 floor held at 0, 2 knee beyond the data, 4 misfit)" },
		{ "knee.misfit.current_ratio", "knee misfit check: bias spread x |dL/dI| over the residuals" },
		{ "knee.misfit.heating_ratio", "knee misfit check: falling against rising readings over the residuals" },
		{ "core.misfit.current_ratio", "core misfit check: bias spread x |dL/dI| over the residuals" },
		{ "core.misfit.heating_ratio", "core misfit check: falling against rising readings over the residuals" },
		{ "noise_sigma", "reading noise used for the uncertainties" },
		{ "I_max", "highest bias current of the sweep" },
		{ "L_at_max", "inductance at the highest bias current" },
		{ "rated_current", "current at which energy and flux are evaluated" },
		{ "psi_rated", "flux linkage at that current (integral of L dI)" },
		{ "W_rated", "stored energy at that current (from the data)" },
		{ "B_rated", "flux density at that current (from the data)" },
		{ "H_rated", "applied field per length N I / le at that current (magnetomotive force over the path "
			     "length; not the field in the core)" },
		{ "core.H_core_rated", "core model: field in the core H at the rated current, solving "
				       "N I = H le + B(H) g / mu0" },
		{ "knee.L0", "knee model: L at zero bias" },
		{ "knee.Lf", "knee model: floor inductance far above the knee" },
		{ "knee.Ik", "knee model: characteristic current" },
		{ "knee.p", "knee model: sharpness exponent" },
		{ "knee.I_knee", "knee model: current of maximum curvature" },
		{ "knee.L_knee", "knee model: L at that current" },
		{ "knee.rss", "knee model: residual sum of squares" },
		{ "knee.dof", "knee model: degrees of freedom" },
		{ "core.mu_i", "core model: initial permeability of the material" },
		{ "core.gap", "core model: effective magnetic gap" },
		{ "core.Js", "core model: saturation polarisation Js (B = mu0 H + J)" },
		{ "core.bsat", "core model: saturation flux density (hb-fit 1.0)" },
		{ "Cp_used", "winding capacitance the core fit corrected for" },
		{ "Cp_from_sweep", "frequency sweep that capacitance came from" },
		{ "DCR", "winding resistance used for the DCR verdict" },
		{ "core.mu_e", "core model: effective permeability of the gapped core" },
		{ "core.AL", "core model: inductance factor AL = L0 / N^2" },
		{ "core.gap_implied", "gap implied by mu_e and the fitted mu_i" },
		{ "core.gap_physical", "physical gap, fringing corrected" },
		{ "core.fringing_factor", "fringing factor at the physical gap" },
		{ "core.B_peak", "core model: flux density at the rated current" },
		{ "core.psi_rated", "core model: flux linkage at the rated current" },
		{ "core.W_rated", "core model: stored energy at the rated current" },
		{ "core.noise_ratio", "core model: residual rms over reading noise" },
		{ "core.flags", "core model: condition flags (bit set)" },
		{ "core.undetermined", "core model: parameters the data do not determine (bit set)" },
		{ "mu_e", "effective permeability (as the history query reads it)" },
		{ "gap", "gap (as the history query reads it)" },
		{ "DCR", "winding resistance, two-wire from the supply's V/I, leads included" },
		{ "L", "low-frequency series inductance of the model" },
		{ "R", "series (winding) resistance of the model" },
		{ "C", "parallel (winding) capacitance of the model" },
		{ "Rp", "parallel loss resistance of the model" },
		{ "srf", "self-resonant frequency 1/(2 pi sqrt(LC))" },
		{ "q_max_measured", "highest measured quality factor Q = Xs/Rs of one reading" },
		{ "q_max_measured_freq", "frequency of the reading with the highest measured Q" },
		{ "q_peak", "model Q with a constant R (hb-fit 1.1 and older; overstates the part's Q)" },
		{ "q_peak_freq", "frequency of that model Q (hb-fit 1.1 and older)" },
		{ "band_lo", "measured Ls within 5 % of its low-frequency value: from" },
		{ "band_hi", "measured Ls within 5 % of its low-frequency value: up to" },
		{ "model_band_hi", "model Ls within 5 % of L up to" },
	};
	for (size_t i = 0; i < sizeof known / sizeof known[0]; i++)
		if (strcmp(name, known[i].name) == 0)
			return known[i].text;
	int p = 0;
	char tail = 0;
	if (sscanf(name, "I_drop%d%c", &p, &tail) == 1)
		snprintf(buf, cap, "current where L has fallen %d %% below L0 (model-free; of L0_part when Cp-corrected)",
			 p);
	else if (sscanf(name, "knee.I_drop%d%c", &p, &tail) == 1)
		snprintf(buf, cap, "knee model: current where L has fallen %d %% below L0", p);
	else if (strncmp(name, "core.aicc.", 10) == 0)
		snprintf(buf, cap, "core model: AICc of the %s law (lower = better)", name + 10);
	else
		snprintf(buf, cap, "-");
	return buf;
}

static void fit_section(hb_html *h, const sweep_data *d)
{
	char a[48], b[48], line[256];
	hb_html_section_begin(h, "Fit results");
	if (!d->have_fit) {
		hb_html_paragraph(h, "No fit is stored for this sweep ('henrybench fit SWEEP_ID' fits it).");
		hb_html_section_end(h);
		return;
	}
	const hb_db_fit *f = d->fit;
	if (d->sweep.kind == HB_DB_SWEEP_BIAS)
		hb_html_paragraph(h, "Important: " HB_FIT_INCREMENTAL_NOTE
				  ". It is not the secant inductance psi/I that some datasheets quote.");
	hb_html_kv_begin(h, NULL);
	snprintf(line, sizeof line, "%lld, of sweep %lld, stored %s", (long long)f->id, (long long)f->sweep_id,
		 f->created);
	hb_html_kv_row(h, "Fit id", line);
	hb_html_kv_row(h, "Fit code version", or_dash(f->code_version));
	hb_html_kv_row(h, "Headline model", or_dash(f->model));
	if (f->law[0])
		hb_html_kv_row(h, "Saturation law (lowest AICc)", f->law);
	snprintf(line, sizeof line, "RSS %s, %d degrees of freedom%s%s", si(a, sizeof a, f->rss, "", 4), f->dof,
		 isfinite(f->aic) ? ", AICc " : "", isfinite(f->aic) ? si(b, sizeof b, f->aic, "", 5) : "");
	hb_html_kv_row(h, "Goodness of fit", line);
	hb_html_kv_row(h, "Flags", f->flags[0] ? f->flags : "none");
	hb_html_kv_end(h);
	/* A misfitting model is named before its values, and each of its values
	 * carries the mark in its own row: never a bare number beside a measured one. */
	static const struct { const char *probe, *what, *which; } models[] = { { "knee.L0", "knee model", "knee" },
									      { "core.mu_i", "core model", "core" } };
	for (size_t m = 0; m < sizeof models / sizeof models[0]; m++) {
		double ratio = NAN;
		if (hb_analysis_value_misfit(f, models[m].probe, &ratio)) {
			snprintf(line, sizeof line,
				 "MISFIT: the %s's residuals are %.1f x the reading noise. Its values below are marked "
				 "\"misfit\" and do not describe this part; rely on the model-free values.",
				 models[m].what, ratio);
			hb_html_paragraph(h, line);
			/* the causes checked before the law was blamed */
			hb_misfit_diag dg;
			if (hb_analysis_stored_diag(f, models[m].which, &dg)) {
				char lines[4][HB_ANALYSIS_LINE];
				size_t k = hb_analysis_misfit_lines(models[m].what, &dg, lines);
				for (size_t i = 0; i < k; i++)
					hb_html_paragraph(h, lines[i]);
			}
		}
	}
	if (flag_token(f, "cp-corrected"))
		hb_html_paragraph(h, "The drop currents come from the part's own inductance: every reading was corrected "
				     "for the winding capacitance Cp_used (cp_corrected: true), and the fractions are of "
				     "L0_part. L0 is the zero-bias value as the meter reads it, Cp included.");
	else if (d->sweep.kind == HB_DB_SWEEP_BIAS)
		hb_html_paragraph(h, "No winding capacitance was known for this unit: the drop currents come from the "
				     "readings as they are (cp_corrected: false).");
	static const char *const head[] = { "Value", "Meaning", "Result", "Standard uncertainty", "Relative" };
	hb_html_table_begin(h,
			    "Uncertainties are one standard deviation from the fit covariance (k = 1). A value beyond "
			    "the measured bias range is not given as a number.",
			    head, 5);
	for (size_t i = 0; i < f->n_values; i++) {
		const hb_db_fit_value *v = &f->values[i];
		char meaning[160], val[128], se[96], rel[24], why[96];
		const char *reason = hb_analysis_value_reason(f, v, why, sizeof why);
		double ratio = NAN;
		bool misfit = hb_analysis_value_misfit(f, v->name, &ratio);
		if (isfinite(v->std_error) && v->std_error > 0 && v->value != 0)
			snprintf(rel, sizeof rel, "%.2g %%", 100 * v->std_error / fabs(v->value));
		else
			snprintf(rel, sizeof rel, "-");
		if (!isfinite(v->value)) {
			snprintf(val, sizeof val, "%s", reason ? reason : "-");
		} else {
			char num[48];
			si(num, sizeof num, v->value, v->unit, 5);
			snprintf(val, sizeof val, "%s%s", num, misfit ? " (misfit)" : "");
		}
		if (isfinite(v->std_error))
			si(se, sizeof se, v->std_error, v->unit, 3);
		else if (reason && isfinite(v->value))
			snprintf(se, sizeof se, "none (%s)", reason);
		else
			snprintf(se, sizeof se, "-");
		const char *mean = value_meaning(v->name, meaning, sizeof meaning);
		char mbuf[200];
		if (misfit) {
			snprintf(mbuf, sizeof mbuf, "%s [model misfit: residuals %.1f x the reading noise]", mean, ratio);
			mean = mbuf;
		}
		const char *cells[5] = { v->name, mean, val, se, rel };
		hb_html_table_row(h, cells, 5);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);
}

static void measurement_section(hb_html *h, const hb_db_sweep *s)
{
	char a[48], b[48], c[48], line[400];
	hb_html_section_begin(h, "Measurement");
	hb_html_kv_begin(h, NULL);
	snprintf(line, sizeof line, "%lld (%s sweep, %ld points)", (long long)s->id, hb_db_sweep_kind_name(s->kind),
		 s->n_points);
	hb_html_kv_row(h, "Sweep id", line);
	hb_html_kv_row(h, "Unit (serial)", or_dash(s->serial));
	hb_html_kv_row(h, "Lot", or_dash(s->lot_code));
	snprintf(line, sizeof line, "%s%s%s", hb_db_sweep_status_name(s->status), s->status_reason[0] ? ": " : "",
		 s->status_reason);
	hb_html_kv_row(h, "Status", line);
	snprintf(line, sizeof line, "%s to %s (UTC)", or_dash(s->started_iso), or_dash(s->ended_iso));
	hb_html_kv_row(h, "Date", line);
	hb_html_kv_row(h, "Operator", or_dash(s->operator_name));
	snprintf(line, sizeof line, "%s (host %s, process %ld)", or_dash(s->station), or_dash(s->host), s->pid);
	hb_html_kv_row(h, "Station", line);
	snprintf(line, sizeof line, "%s [profile %s]", or_dash(s->lcr_idn), or_dash(s->lcr_profile));
	hb_html_kv_row(h, "LCR meter", line);
	snprintf(line, sizeof line, "%s [profile %s]", or_dash(s->supply_idn), or_dash(s->supply_profile));
	hb_html_kv_row(h, "Bias supply", line);
	snprintf(line, sizeof line, "%s at %s; %s equivalent circuit, reading %s; averaging %d, aperture %s",
		 si(a, sizeof a, s->test_level, s->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V", 3),
		 s->kind == HB_DB_SWEEP_FREQUENCY ? "each sweep frequency" : si(b, sizeof b, s->test_freq_hz, "Hz", 4),
		 or_dash(s->circuit), or_dash(s->measured_pair), s->averaging, or_dash(s->aperture));
	hb_html_kv_row(h, "Test signal", line);
	const char *u = s->kind == HB_DB_SWEEP_FREQUENCY ? "Hz" : "A";
	snprintf(line, sizeof line, "%s to %s, %d steps, %s spacing", si(a, sizeof a, s->plan_from, u, 4),
		 si(b, sizeof b, s->plan_to, u, 4), s->plan_steps, or_dash(s->plan_spacing));
	hb_html_kv_row(h, "Plan", line);
	if (s->kind == HB_DB_SWEEP_FREQUENCY)
		hb_html_kv_row(h, "DC bias during the sweep", si(a, sizeof a, isfinite(s->bias_a) ? s->bias_a : 0, "A", 4));
	if (strcmp(s->settle_mode, "fixed") == 0)
		snprintf(line, sizeof line, "fixed: wait %s after each step, then one reading",
			 si(a, sizeof a, s->settle_delay_s, "s", 3));
	else
		snprintf(line, sizeof line,
			 "%s: bias read-back steady, then readings until two successive differences lie within "
			 "%s x sqrt(2) x the reading noise; at most %s per point",
			 or_dash(s->settle_mode), isfinite(s->settle_tolerance) ? si(b, sizeof b, s->settle_tolerance, "", 3) : "-",
			 si(c, sizeof c, s->settle_max_s, "s", 3));
	hb_html_kv_row(h, "Settling", line);
	snprintf(line, sizeof line, "current %s, voltage %s", si(a, sizeof a, s->limit_current_a, "A", 4),
		 si(b, sizeof b, s->limit_voltage_v, "V", 4));
	hb_html_kv_row(h, "Supply limits in force", line);
	if (isfinite(s->ambient_c)) {
		snprintf(line, sizeof line, "%.1f degC", s->ambient_c);
		hb_html_kv_row(h, "Ambient temperature", line);
	}
	if (isfinite(s->reading_noise_rel)) {
		snprintf(line, sizeof line, "%.2g %% of the reading (learnt at the first point)", 100 * s->reading_noise_rel);
		hb_html_kv_row(h, "Reading noise", line);
	}
	hb_html_kv_row(h, "Note", or_dash(s->note));
	hb_html_kv_end(h);
	hb_html_section_end(h);
}

static const char *pair_letter_unit(const char *pair, int which, char *buf, size_t cap)
{
	const char *dash = strchr(pair, '-');
	const char *name = which == 0 ? pair : (dash ? dash + 1 : "");
	size_t len = which == 0 && dash ? (size_t)(dash - pair) : strlen(name);
	snprintf(buf, cap, "%.*s", (int)len, name);
	return buf;
}

static const char *reading_unit(const char *name)
{
	switch (name[0]) {
	case 'L': return "H";
	case 'C': return "F";
	case 'R': case 'X': case 'Z': return "ohm";
	case 'G': case 'B': return "S";
	default: return "";
	}
}

static void points_section(hb_html *h, const sweep_data *d)
{
	const hb_db_sweep *s = &d->sweep;
	char n1[24], n2[24], h1[40], h2[40];
	pair_letter_unit(s->measured_pair, 0, n1, sizeof n1);
	pair_letter_unit(s->measured_pair, 1, n2, sizeof n2);
	const char *u1 = reading_unit(n1), *u2 = strcmp(n2, "theta") == 0 ? "deg" : reading_unit(n2);
	snprintf(h1, sizeof h1, "%s", n1[0] ? n1 : "primary");
	snprintf(h2, sizeof h2, "%s", n2[0] ? n2 : "secondary");
	hb_html_page_break(h);
	hb_html_section_begin(h, "Measured points");
	static const char *head[] = { "Seq", "Dir", "Bias set", "Bias measured", "Supply V", "Frequency", NULL, NULL,
				      "Status" };
	const char *hd[9];
	memcpy(hd, head, sizeof hd);
	hd[6] = h1;
	hd[7] = h2;
	char cap[96];
	snprintf(cap, sizeof cap, "Every point of sweep %lld as stored, in sequence order.", (long long)s->id);
	hb_html_table_begin(h, cap, hd, 9);
	for (size_t i = 0; i < d->n; i++) {
		const hb_db_point *p = &d->pts[i];
		char seq[16], c2[32], c3[32], c4[32], c5[32], c6[32], c7[32];
		snprintf(seq, sizeof seq, "%d", p->seq);
		if (strcmp(u2, "deg") == 0)
			snprintf(c7, sizeof c7, isfinite(p->secondary) ? "%.4f deg" : "-", p->secondary);
		else
			si(c7, sizeof c7, p->secondary, u2, 5);
		const char *cells[9] = { seq, p->direction == HB_DB_DIR_DOWN ? "down" : "up",
					 si(c2, sizeof c2, p->bias_set_a, "A", 4), si(c3, sizeof c3, p->bias_meas_a, "A", 5),
					 si(c4, sizeof c4, p->supply_v, "V", 4), si(c5, sizeof c5, p->freq_hz, "Hz", 5),
					 si(c6, sizeof c6, p->primary, u1, 6), c7,
					 p->reading_status == HB_OK ? "ok" : hb_status_name(p->reading_status) };
		hb_html_table_row(h, cells, 9);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);
}

static void figure(hb_html *h, int rc, char *svg, const char *caption, const char *err)
{
	if (rc == HB_OK && svg) {
		hb_html_svg(h, svg, caption);
	} else {
		char line[300];
		snprintf(line, sizeof line, "(figure not drawn: %s)", err && *err ? err : hb_status_name(rc));
		hb_html_paragraph(h, line);
	}
	free(svg);
}

static void trace_paragraph(hb_html *h, hb_db *db, const char *what)
{
	char now[32], line[1400];
	now_iso(now, sizeof now);
	snprintf(line, sizeof line,
		 "%s Store: %s. Page written %s by henrybench %s (fit code %s). Every number on this page is read from "
		 "the store; re-run 'henrybench show SWEEP_ID' to see the same records.",
		 what, or_dash(hb_db_path(db)), now, HB_VERSION, HB_FIT_CODE_VERSION);
	hb_html_paragraph(h, line);
}

/* ---------------- sweep report ---------------- */

int hb_report_sweep(hb_db *db, int64_t sweep_id, FILE *out, char *err, size_t errlen)
{
	sweep_data d;
	int rc = load_sweep(db, sweep_id, &d, err, errlen);
	if (rc != HB_OK)
		return rc;
	char title[200], subtitle[300], e[200] = "";
	snprintf(title, sizeof title, "Measurement record: sweep %lld, %s unit %s", (long long)sweep_id,
		 or_dash(d.sweep.part_number), or_dash(d.sweep.serial));
	snprintf(subtitle, sizeof subtitle, "Inductance against %s, %s, started %s UTC at station %s",
		 d.sweep.kind == HB_DB_SWEEP_BIAS ? "DC bias" : "frequency", hb_db_sweep_status_name(d.sweep.status),
		 or_dash(d.sweep.started_iso), or_dash(d.sweep.station));
	hb_html *h = hb_html_open(out, title, subtitle);
	if (!h) {
		sweep_data_free(&d);
		set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	if (d.have_part)
		part_section(h, &d.part);
	else
		hb_html_paragraph(h, "This sweep belongs to no stored part: no specification applies.");
	measurement_section(h, &d.sweep);
	verdict_section(h, &d);
	fit_section(h, &d);

	hb_html_section_begin(h, "Figures");
	char *svg = NULL;
	char cap[300];
	if (d.sweep.kind == HB_DB_SWEEP_BIAS) {
		rc = hb_report_bias_svg(db, sweep_id, &svg, e, sizeof e);
		snprintf(cap, sizeof cap,
			 "Sweep %lld: incremental inductance against DC bias with the stored model curves, the currents at "
			 "the stored drop fractions (vertical lines) and the specification limits.",
			 (long long)sweep_id);
		figure(h, rc, svg, cap, e);
		if (d.have_part && part_has_geometry(&d.part)) {
			rc = hb_report_bh_svg(db, sweep_id, &svg, e, sizeof e);
			snprintf(cap, sizeof cap,
				 "Sweep %lld: B = psi/(N Ae) with psi the integral of L dI, against the applied field per "
				 "length N I / le (magnetomotive force over the path length, not the field in the core); "
				 "derived from the measured points and the part's geometry, not measured directly.",
				 (long long)sweep_id);
			figure(h, rc, svg, cap, e);
		}
	} else {
		rc = hb_report_freq_svg(db, sweep_id, &svg, e, sizeof e);
		snprintf(cap, sizeof cap,
			 "Sweep %lld: series-equivalent L and R against frequency, the fitted (R + jwL) || C model and "
			 "the self-resonance (vertical line).",
			 (long long)sweep_id);
		figure(h, rc, svg, cap, e);
	}
	hb_html_section_end(h);
	points_section(h, &d);

	hb_html_section_begin(h, "Traceability");
	char what[300];
	if (d.have_fit)
		snprintf(what, sizeof what, "Points, settings and verdicts: sweep %lld. Fit values: fit %lld (%s).",
			 (long long)sweep_id, (long long)d.fit->id, d.fit->code_version);
	else
		snprintf(what, sizeof what, "Points, settings and verdicts: sweep %lld. No fit stored.", (long long)sweep_id);
	trace_paragraph(h, db, what);
	hb_html_section_end(h);
	rc = hb_html_close(h);
	if (rc != HB_OK)
		set_err(err, errlen, "writing the report failed");
	sweep_data_free(&d);
	return rc;
}

/* ---------------- lot report ---------------- */

int hb_report_find_lot(hb_db *db, const char *part_number, const char *lot_code, hb_db_lot *lot, char *err,
		       size_t errlen)
{
	hb_db_lot_init(lot);
	if (part_number) {
		hb_db_part p;
		int rc = hb_db_part_get(db, part_number, &p);
		if (rc != HB_OK) {
			set_err(err, errlen, "part '%s' is not in the store", part_number);
			return rc;
		}
		rc = hb_db_lot_find(db, p.id, lot_code, lot);
		if (rc != HB_OK)
			set_err(err, errlen, "part %s has no lot '%s'", part_number, lot_code);
		return rc;
	}
	hb_db_part *parts = NULL;
	size_t np = 0;
	int rc = hb_db_part_list(db, &parts, &np);
	if (rc != HB_OK) {
		set_err(err, errlen, "%s", hb_db_errmsg(db));
		return rc;
	}
	int found = 0;
	for (size_t i = 0; i < np; i++) {
		hb_db_lot l;
		if (hb_db_lot_find(db, parts[i].id, lot_code, &l) == HB_OK) {
			if (found++ == 0)
				*lot = l;
		}
	}
	hb_db_parts_free(parts);
	if (found == 0) {
		set_err(err, errlen, "no lot '%s' in the store", lot_code);
		return HB_ERR_NOTFOUND;
	}
	if (found > 1) {
		set_err(err, errlen, "lot code '%s' is used by %d parts: name one with --part", lot_code, found);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static const hb_db_verdict *verdict_find(const hb_db_verdict *v, size_t n, const char *check)
{
	for (size_t i = 0; i < n; i++)
		if (strcmp(v[i].check_name, check) == 0)
			return &v[i];
	return NULL;
}

static void stats_row(hb_html *h, const char *name, const double *vals, size_t n, double lsl, double usl,
		      const char *unit)
{
	hb_stats st;
	char c[8][40];
	snprintf(c[0], sizeof c[0], "%s", name);
	if (hb_stats_compute(vals, n, &st) != HB_OK) {
		const char *cells[9] = { c[0], "0", "-", "-", "-", "-", "-", "-", "no finite values" };
		hb_html_table_row(h, cells, 9);
		return;
	}
	double cp = NAN, cpk = NAN;
	const char *why = "";
	if (!isfinite(lsl) && !isfinite(usl))
		why = "no limits";
	else if (hb_capability(&st, lsl, usl, &cp, &cpk) != HB_OK)
		why = st.n < 2 ? "needs 2 or more units" : "no spread";
	snprintf(c[1], sizeof c[1], "%zu", st.n);
	char cpb[24], cpkb[24];
	snprintf(cpb, sizeof cpb, isfinite(cp) ? "%.2f" : "-", cp);
	snprintf(cpkb, sizeof cpkb, isfinite(cpk) ? "%.2f" : "-", cpk);
	char limits[96], lo[40], hi[40];
	snprintf(limits, sizeof limits, "%s .. %s%s%s", si(lo, sizeof lo, lsl, unit, 4), si(hi, sizeof hi, usl, unit, 4),
		 *why ? "; " : "", why);
	const char *cells[9] = { c[0], c[1], si(c[2], sizeof c[2], st.mean, unit, 5), si(c[3], sizeof c[3], st.stddev, unit, 3),
				 si(c[4], sizeof c[4], st.min, unit, 5), si(c[5], sizeof c[5], st.max, unit, 5), cpb, cpkb,
				 limits };
	hb_html_table_row(h, cells, 9);
}

static const char *const stats_head[] = { "Quantity", "n", "Mean", "Std. deviation (n-1)", "Min", "Max", "Cp", "Cpk",
					  "Limits" };

int hb_report_lot(hb_db *db, const char *part_number, const char *lot_code, FILE *out, char *err, size_t errlen)
{
	hb_db_lot lot;
	int rc = hb_report_find_lot(db, part_number, lot_code, &lot, err, errlen);
	if (rc != HB_OK)
		return rc;
	hb_db_part part;
	rc = hb_db_part_get_id(db, lot.part_id, &part);
	if (rc != HB_OK) {
		set_err(err, errlen, "lot %s: %s", lot_code, hb_db_errmsg(db));
		return rc;
	}
	hb_db_inspection *recs = NULL;
	size_t nr = 0;
	rc = hb_db_inspection_list(db, lot.id, &recs, &nr);
	if (rc != HB_OK) {
		set_err(err, errlen, "lot %s: %s", lot_code, hb_db_errmsg(db));
		return rc;
	}
	double *l0 = calloc(nr ? nr : 1, sizeof *l0), *dcr = calloc(nr ? nr : 1, sizeof *dcr);
	hb_db_fit *fit = calloc(1, sizeof *fit);
	hb_html *h = NULL;
	if (!l0 || !dcr || !fit) {
		rc = HB_ERR_NOMEM;
		set_err(err, errlen, "out of memory");
		goto out;
	}
	char title[200], subtitle[300], line[400], a[48];
	snprintf(title, sizeof title, "Lot inspection record: lot %s of %s", lot.lot_code, part.part_number);
	snprintf(subtitle, sizeof subtitle, "Single sampling by ISO 2859-1; decision: %s%s%s",
		 hb_db_lot_decision_name(lot.decision), lot.decided[0] ? ", " : "", lot.decided);
	h = hb_html_open(out, title, subtitle);
	if (!h) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	part_section(h, &part);

	hb_html_section_begin(h, "Lot and sampling plan");
	hb_html_verdict(h, "Lot decision:",
			lot.decision == HB_DB_LOT_ACCEPT ? "accept" : lot.decision == HB_DB_LOT_REJECT ? "reject" : "open");
	hb_html_kv_begin(h, NULL);
	hb_html_kv_row(h, "Lot code", lot.lot_code);
	snprintf(line, sizeof line, lot.lot_size > 0 ? "%ld units" : "not given", lot.lot_size);
	hb_html_kv_row(h, "Lot size", line);
	char aql[24];
	hb_html_kv_row(h, "AQL (% nonconforming)", isfinite(lot.aql) ? hb_iso2859_aql_format(lot.aql, aql, sizeof aql) : "-");
	snprintf(line, sizeof line, "%s, %s inspection", or_dash(lot.inspection_level), or_dash(lot.severity));
	hb_html_kv_row(h, "Inspection level and severity", line);
	if (lot.sample_size > 0)
		snprintf(line, sizeof line, "code letter %s: sample n = %ld, accept with Ac = %ld, reject with Re = %ld "
			 "nonconforming units", or_dash(lot.code_letter), lot.sample_size, lot.accept_number, lot.reject_number);
	else
		snprintf(line, sizeof line, "no plan recorded");
	hb_html_kv_row(h, "Sampling plan", line);
	hb_html_kv_row(h, "Opened", or_dash(lot.created));
	hb_html_kv_row(h, "Decided", or_dash(lot.decided));
	int passed = 0, failed = 0, skipped = 0;
	for (size_t i = 0; i < nr; i++) {
		if (recs[i].outcome == HB_DB_PASS)
			passed++;
		else if (recs[i].outcome == HB_DB_FAIL)
			failed++;
		else if (recs[i].outcome == HB_DB_SKIPPED)
			skipped++;
	}
	snprintf(line, sizeof line, "%d tested: %d conforming, %d nonconforming; %d skipped", passed + failed, passed,
		 failed, skipped);
	hb_html_kv_row(h, "Tally", line);
	hb_html_kv_end(h);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Sample units");
	static const char *const head[] = { "#", "Serial", "Sweep", "Fit", "L0", "L0 margin", "Lsat", "DCR", "Unit result",
					    "Recorded", "Note" };
	hb_html_table_begin(h, "Each sample position with the sweep and fit its figures come from.", head, 11);
	size_t nl = 0, ndcr = 0;
	for (size_t i = 0; i < nr; i++) {
		const hb_db_inspection *r = &recs[i];
		char seq[16], sw[24], fi[24], l0s[40], mg[24];
		const char *lsat = "-", *dcrs = "-";
		snprintf(seq, sizeof seq, "%d", r->sequence);
		snprintf(sw, sizeof sw, r->sweep_id > 0 ? "%lld" : "-", (long long)r->sweep_id);
		snprintf(fi, sizeof fi, "-");
		snprintf(l0s, sizeof l0s, "-");
		snprintf(mg, sizeof mg, "-");
		hb_db_verdict *v = NULL;
		size_t nv = 0;
		if (r->sweep_id > 0) {
			hb_db_fit_init(fit);
			if (hb_db_fit_get_latest(db, r->sweep_id, NULL, fit) == HB_OK) {
				snprintf(fi, sizeof fi, "%lld", (long long)fit->id);
				for (size_t k = 0; k < fit->n_values; k++) {
					if (strcmp(fit->values[k].name, HB_DB_FV_L0) == 0) {
						si(l0s, sizeof l0s, fit->values[k].value, "H", 5);
						if (r->outcome != HB_DB_SKIPPED)
							l0[nl++] = fit->values[k].value;
					} else if (strcmp(fit->values[k].name, "DCR") == 0 && r->outcome != HB_DB_SKIPPED) {
						dcr[ndcr++] = fit->values[k].value;
					}
				}
			}
			if (hb_db_verdict_list(db, r->sweep_id, &v, &nv) == HB_OK) {
				const hb_db_verdict *x = verdict_find(v, nv, "L0");
				if (x)
					pct(mg, sizeof mg, x->margin);
				x = verdict_find(v, nv, "Lsat");
				if (x)
					lsat = hb_db_outcome_name(x->outcome);
				x = verdict_find(v, nv, "DCR");
				if (x)
					dcrs = hb_db_outcome_name(x->outcome);
			}
		}
		const char *result = r->outcome == HB_DB_PASS ? "pass" : r->outcome == HB_DB_FAIL ? "fail" : "skipped";
		const char *cells[11] = { seq, or_dash(r->serial), sw, fi, l0s, mg, lsat, dcrs, result, or_dash(r->at_iso),
					  or_dash(r->note) };
		hb_html_table_row_class(h, result, cells, 11);
		hb_db_verdicts_free(v);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Statistics of the sample");
	double lsl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 - part.tolerance) : NAN;
	double usl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 + part.tolerance) : NAN;
	hb_html_table_begin(h, "Cp = (USL - LSL)/(6 s), Cpk = min(USL - mean, mean - LSL)/(3 s), s the sample standard "
			    "deviation (ISO 22514-2); a handful of units gives only a rough estimate.",
			    stats_head, 9);
	stats_row(h, "L0 (zero-bias)", l0, nl, lsl, usl, "H");
	stats_row(h, "DCR (two-wire)", dcr, ndcr, NAN, part.dcr_max_ohm, "ohm");
	hb_html_table_end(h);
	char *svg = NULL, e[200] = "";
	snprintf(line, sizeof line, "Lot %s: L0 of the sample", lot.lot_code);
	rc = hb_report_histogram_svg(l0, nl, lsl, usl, line, &svg, e, sizeof e);
	snprintf(line, sizeof line, "Lot %s: zero-bias inductance of %zu sample units against the tolerance band %s +-%g %%.",
		 lot.lot_code, nl, si(a, sizeof a, part.nominal_h, "H", 4), part.tolerance * 100);
	figure(h, rc, svg, line, e);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Traceability");
	snprintf(line, sizeof line, "Plan and decision: lot record %lld. Unit figures: the sweep and fit ids in the "
		 "table above.", (long long)lot.id);
	trace_paragraph(h, db, line);
	hb_html_section_end(h);
	rc = hb_html_close(h);
	h = NULL;
	if (rc != HB_OK)
		set_err(err, errlen, "writing the report failed");
out:
	if (h)
		hb_html_close(h);
	free(l0);
	free(dcr);
	free(fit);
	hb_db_inspections_free(recs);
	return rc;
}

/* ---------------- part report ---------------- */

int hb_report_part(hb_db *db, const char *part_number, FILE *out, char *err, size_t errlen)
{
	hb_db_part part;
	int rc = hb_db_part_get(db, part_number, &part);
	if (rc != HB_OK) {
		set_err(err, errlen, "part '%s' is not in the store", part_number);
		return rc;
	}
	hb_db_history_filter f;
	hb_db_history_filter_init(&f);
	f.part_number = part_number;
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	rc = hb_db_history(db, &f, &rows, &n);
	if (rc != HB_OK) {
		set_err(err, errlen, "history of %s: %s", part_number, hb_db_errmsg(db));
		return rc;
	}
	double *l0 = calloc(n ? n : 1, sizeof *l0), *order = calloc(n ? n : 1, sizeof *order);
	double *sel = calloc(n ? n : 1, sizeof *sel);
	hb_html *h = NULL;
	if (!l0 || !order || !sel) {
		rc = HB_ERR_NOMEM;
		set_err(err, errlen, "out of memory");
		goto out;
	}
	char title[200], line[400], a[48];
	snprintf(title, sizeof title, "Part history: %s", part.part_number);
	snprintf(line, sizeof line, "%zu units, each by its latest complete bias sweep", n);
	h = hb_html_open(out, title, line);
	if (!h) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	part_section(h, &part);

	hb_html_section_begin(h, "Units measured");
	char d0[24], d1[24], d2[24];
	snprintf(d0, sizeof d0, "I at -%d %%", f.drop_percent[0]);
	snprintf(d1, sizeof d1, "I at -%d %%", f.drop_percent[1]);
	snprintf(d2, sizeof d2, "I at -%d %%", f.drop_percent[2]);
	const char *head[] = { "Sweep", "Started (UTC)", "Station", "Lot", "Serial", "L0", d0, d1, d2, "mu_e", "Gap",
			       "Verdict" };
	hb_html_table_begin(h, "Oldest first. L is the incremental inductance; currents where L has fallen the stated "
			    "fraction below L0.", head, 12);
	for (size_t i = 0; i < n; i++) {
		const hb_db_history_row *r = &rows[i];
		char c[12][40];
		snprintf(c[0], sizeof c[0], "%lld", (long long)r->sweep_id);
		const char *cells[12] = { c[0], or_dash(r->started_iso), or_dash(r->station), or_dash(r->lot_code),
					  or_dash(r->serial), si(c[5], sizeof c[5], r->l0_h, "H", 5),
					  si(c[6], sizeof c[6], r->i_drop_a[0], "A", 4), si(c[7], sizeof c[7], r->i_drop_a[1], "A", 4),
					  si(c[8], sizeof c[8], r->i_drop_a[2], "A", 4), si(c[9], sizeof c[9], r->mu_e, "", 4),
					  si(c[10], sizeof c[10], r->gap_m, "m", 4), hb_db_outcome_name(r->verdict) };
		hb_html_table_row_class(h, hb_db_outcome_name(r->verdict), cells, 12);
		l0[i] = r->l0_h;
		order[i] = (double)(i + 1);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);

	double lsl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 - part.tolerance) : NAN;
	double usl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 + part.tolerance) : NAN;
	hb_html_section_begin(h, "Statistics per lot");
	hb_html_table_begin(h, "L0 against the tolerance; Cp and Cpk with the sample standard deviation (ISO 22514-2).",
			    stats_head, 9);
	/* Lots in order of first appearance; rows of one lot gathered into sel. */
	for (size_t i = 0; i < n; i++) {
		bool seen = false;
		for (size_t j = 0; j < i && !seen; j++)
			seen = strcmp(rows[j].lot_code, rows[i].lot_code) == 0;
		if (seen)
			continue;
		size_t m = 0;
		for (size_t j = i; j < n; j++)
			if (strcmp(rows[j].lot_code, rows[i].lot_code) == 0)
				sel[m++] = rows[j].l0_h;
		char name[96];
		snprintf(name, sizeof name, rows[i].lot_code[0] ? "lot %s" : "no lot%s", rows[i].lot_code);
		hb_db_lot lot;
		if (rows[i].lot_code[0] && hb_db_lot_find(db, part.id, rows[i].lot_code, &lot) == HB_OK &&
		    lot.decision != HB_DB_LOT_OPEN) {
			size_t len = strlen(name);
			snprintf(name + len, sizeof name - len, " (%s)", hb_db_lot_decision_name(lot.decision));
		}
		stats_row(h, name, sel, m, lsl, usl, "H");
	}
	if (n > 0)
		stats_row(h, "all units", l0, n, lsl, usl, "H");
	hb_html_table_end(h);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Trend and distribution");
	char *svg = NULL, e[200] = "";
	if (n > 0) {
		hb_plot *plot = hb_plot_new("L0 in measurement order");
		if (!plot) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
		hb_plot_set_axis(plot, HB_AXIS_X, "Unit, in order of measurement", "", false);
		hb_plot_set_axis(plot, HB_AXIS_Y, "Zero-bias inductance L0", "H", false);
		hb_plot_add_series(plot, HB_AXIS_Y, order, l0, n, "L0 per unit", HB_PLOT_LINE_POINTS);
		if (isfinite(usl))
			hb_plot_add_hline(plot, HB_AXIS_Y, usl, "upper limit");
		if (isfinite(lsl))
			hb_plot_add_hline(plot, HB_AXIS_Y, lsl, "lower limit");
		if (isfinite(part.nominal_h))
			hb_plot_add_hline(plot, HB_AXIS_Y, part.nominal_h, "nominal");
		rc = render(plot, &svg, e, sizeof e);
		snprintf(line, sizeof line, "%s: L0 of each unit in the order measured (the sweep ids are in the table "
			 "above), with the tolerance limits.", part.part_number);
		figure(h, rc, svg, line, e);
		rc = hb_report_histogram_svg(l0, n, lsl, usl, "L0 of every unit", &svg, e, sizeof e);
		snprintf(line, sizeof line, "%s: distribution of L0 against the tolerance band %s +-%g %%.",
			 part.part_number, si(a, sizeof a, part.nominal_h, "H", 4), part.tolerance * 100);
		figure(h, rc, svg, line, e);
	} else {
		hb_html_paragraph(h, "No complete bias sweep of this part is stored yet.");
	}
	hb_html_section_end(h);

	hb_html_section_begin(h, "Traceability");
	trace_paragraph(h, db, "Each row: the unit's latest complete bias sweep (id in the first column) and its "
			       "latest fit.");
	hb_html_section_end(h);
	rc = hb_html_close(h);
	h = NULL;
	if (rc != HB_OK)
		set_err(err, errlen, "writing the report failed");
out:
	if (h)
		hb_html_close(h);
	free(l0);
	free(order);
	free(sel);
	hb_db_history_free(rows);
	return rc;
}
