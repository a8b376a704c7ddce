/* src/bench/fixture.c - open/short fixture compensation: the meter's own correction or residuals measured and stored here, and applied to readings */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <jansson.h>

#include "../../common/hb_text.h"

#include "traceability.h"

/* A reading as an impedance, and back (the definitions of the pairs:
 * Ls-Rs: Z = Rs + jwLs; Lp-Rp: Y = 1/Rp + 1/(jwLp); Q = X/R; D = 1/Q;
 * Z-theta in degrees). */
static double complex reading_to_z(double f, hb_equiv equiv, hb_pair pair, double primary, double secondary)
{
	double w = 2.0 * M_PI * f;
	if (pair == HB_PAIR_Z_THETA) {
		double th = secondary * M_PI / 180.0;
		return primary * (cos(th) + I * sin(th));
	}
	if (equiv == HB_EQUIV_SERIES) {
		double x = w * primary;
		double r = pair == HB_PAIR_L_R ? secondary : pair == HB_PAIR_L_Q ? x / secondary : secondary * x;
		return r + I * x;
	}
	/* parallel: Y = G + 1/(jwLp) = G - j/(wLp); B = -1/(wLp); Q = |B|/G for an inductor: G = |B|/Q */
	double b = -1.0 / (w * primary);
	double g = pair == HB_PAIR_L_R ? 1.0 / secondary : pair == HB_PAIR_L_Q ? fabs(b) / secondary : secondary * fabs(b);
	return 1.0 / (g + I * b);
}

static void z_to_reading(double complex z, double f, hb_equiv equiv, hb_pair pair, double *primary, double *secondary)
{
	double w = 2.0 * M_PI * f;
	if (pair == HB_PAIR_Z_THETA) {
		*primary = cabs(z);
		*secondary = carg(z) * 180.0 / M_PI;
		return;
	}
	double r = creal(z), x = cimag(z);
	if (equiv == HB_EQUIV_SERIES) {
		*primary = x / w;
		*secondary = pair == HB_PAIR_L_R ? r : pair == HB_PAIR_L_Q ? x / r : r / x;
		return;
	}
	double complex y = 1.0 / z;
	double g = creal(y), b = cimag(y);
	*primary = -1.0 / (w * b);
	*secondary = pair == HB_PAIR_L_R ? 1.0 / g : pair == HB_PAIR_L_Q ? fabs(b) / g : g / fabs(b);
}

/* The index of the frequency nearest f on a log scale, -1 for none. */
static int nearest(const double *fs, int n, double f)
{
	int best = -1;
	double d = INFINITY;
	for (int i = 0; i < n; i++) {
		double e = fabs(log(fs[i] / f));
		if (e < d) {
			d = e;
			best = i;
		}
	}
	return best;
}

int hb_fixture_compensate(const hb_fixture_model *m, double f, hb_equiv equiv, hb_pair pair, double *primary,
			  double *secondary)
{
	if (!m || !(f > 0) || !isfinite(*primary) || !isfinite(*secondary))
		return HB_ERR_ARG;
	double w = 2.0 * M_PI * f;
	double complex zs = 0, yo = 0;
	int i = nearest(m->f_short, m->n_short, f);
	if (i >= 0)
		zs = m->r_short[i] + I * w * m->l_short[i];
	int j = nearest(m->f_open, m->n_open, f);
	if (j >= 0)
		yo = m->g_open[j] + I * w * m->c_open[j];
	double complex zm = reading_to_z(f, equiv, pair, *primary, *secondary);
	double complex d = zm - zs;
	double complex z = d / (1.0 - d * yo);
	z_to_reading(z, f, equiv, pair, primary, secondary);
	return HB_OK;
}

static int load_list(const char *text, bool open, double *f, double *a, double *b, int *n)
{
	*n = 0;
	json_error_t e;
	json_t *root = json_loads(text, 0, &e);
	if (!json_is_array(root)) {
		json_decref(root);
		return HB_ERR_DATA;
	}
	size_t k;
	json_t *item;
	json_array_foreach(root, k, item)
	{
		if (*n >= HB_FIXTURE_MAX_FREQS)
			break;
		/* an overload entry: the meter's correction already removed it all */
		if (json_is_true(json_object_get(item, "overload")))
			continue;
		double fv = json_number_value(json_object_get(item, "freq_hz"));
		double av = json_number_value(json_object_get(item, open ? "g_s" : "r_ohm"));
		double bv = json_number_value(json_object_get(item, open ? "c_f" : "l_h"));
		if (!(fv > 0))
			continue;
		f[*n] = fv;
		a[*n] = av;
		b[*n] = bv;
		(*n)++;
	}
	json_decref(root);
	return HB_OK;
}

int hb_fixture_model_load(hb_fixture_model *m, const hb_db_fixture_comp *open, const hb_db_fixture_comp *shrt)
{
	memset(m, 0, sizeof *m);
	int rc = HB_OK;
	if (open)
		rc = load_list(open->residuals, true, m->f_open, m->g_open, m->c_open, &m->n_open);
	if (rc == HB_OK && shrt)
		rc = load_list(shrt->residuals, false, m->f_short, m->r_short, m->l_short, &m->n_short);
	return rc;
}

double hb_fixture_lead_inductance(const hb_db_fixture_comp *shrt)
{
	hb_fixture_model m;
	if (!shrt || hb_fixture_model_load(&m, NULL, shrt) != HB_OK || m.n_short == 0)
		return NAN;
	double worst = 0;
	for (int i = 0; i < m.n_short; i++)
		if (isfinite(m.l_short[i]))
			worst = fmax(worst, fabs(m.l_short[i]));
	return worst;
}

/* One residual reading: the fixture's impedance at f as series L-R. */
static int read_residual(hb_lcr *lcr, double f, double complex *z, char *err, size_t errlen)
{
	int rc = hb_lcr_set_frequency(lcr, f);
	if (rc == HB_OK) {
		hb_lcr_reading r;
		rc = hb_lcr_measure(lcr, &r);
		if (rc == HB_OK) {
			*z = reading_to_z(f, HB_EQUIV_SERIES, HB_PAIR_L_R, r.primary, r.secondary);
			return HB_OK;
		}
		if (rc == HB_ERR_OVERLOAD) {
			snprintf(err, errlen, "the meter read overload at %g Hz: is the fixture really %s?", f,
				 "open or shorted as asked");
			return rc;
		}
	}
	snprintf(err, errlen, "meter at %g Hz: %s", f, hb_lcr_errmsg(lcr));
	return rc;
}

int hb_fixture_run(hb_db *db, hb_lcr *lcr, const hb_fixture_request *req, hb_db_fixture_comp *rec, char *err,
		   size_t errlen)
{
	bool open = req->which == HB_CORRECTION_OPEN;
	memset(rec, 0, sizeof *rec);
	snprintf(rec->fixture, sizeof rec->fixture, "%s", req->fixture && *req->fixture ? req->fixture : HB_FIXTURE_DEFAULT);
	snprintf(rec->kind, sizeof rec->kind, "%s", open ? "open" : "short");
	snprintf(rec->operator_name, sizeof rec->operator_name, "%s", req->operator_name ? req->operator_name : "");
	bool by_meter = !req->measure_only && hb_lcr_supports(lcr, open ? "correct.open" : "correct.short");
	snprintf(rec->method, sizeof rec->method, "%s", by_meter ? "meter" : "henrybench");
	hb_db_instrument in;
	int rc = hb_trace_register_lcr(db, lcr, &in, NULL);
	if (rc != HB_OK) {
		snprintf(err, errlen, "store: %s", hb_db_errmsg(db));
		return rc;
	}
	rec->instrument_id = in.id;
	double one = 100e3;
	const double *fs = req->freqs;
	int n = req->n_freqs;
	if (n <= 0) {
		fs = &one;
		n = 1;
	}
	/* Series L-R: the reading is Z = R + jwL directly. */
	rc = hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_R);
	if (rc != HB_OK && rc != HB_ERR_UNSUPPORTED) {
		snprintf(err, errlen, "meter: %s", hb_lcr_errmsg(lcr));
		return rc;
	}
	json_t *list = json_array();
	for (int i = 0; i < n; i++) {
		double complex z;
		rc = read_residual(lcr, fs[i], &z, err, errlen);
		json_t *o = json_object();
		json_object_set_new(o, "freq_hz", json_real(fs[i]));
		if (rc == HB_ERR_OVERLOAD && by_meter) {
			/* A meter that already holds a correction may read the open
			 * fixture as infinite or the short as nothing: recorded as
			 * such, and the correction runs again. */
			json_object_set_new(o, "overload", json_true());
			json_array_append_new(list, o);
			if (req->out)
				fprintf(req->out, "%-5s %10.4g Hz: beyond the meter's range (a correction already in force?)\n",
					rec->kind, fs[i]);
			continue;
		}
		if (rc != HB_OK) {
			json_decref(o);
			json_decref(list);
			return rc;
		}
		double w = 2.0 * M_PI * fs[i];
		if (open) {
			double complex y = 1.0 / z;
			json_object_set_new(o, "g_s", json_real(creal(y)));
			json_object_set_new(o, "c_f", json_real(cimag(y) / w));
			if (req->out) {
				char f_txt[32], g_txt[32], c_txt[32];
				fprintf(req->out, "open  %10s: G %s, stray C %s\n", hb_format_si(f_txt, sizeof f_txt, fs[i], "Hz", 4),
					hb_format_si(g_txt, sizeof g_txt, creal(y), "S", 4),
					hb_format_si(c_txt, sizeof c_txt, cimag(y) / w, "F", 4));
			}
		} else {
			json_object_set_new(o, "r_ohm", json_real(creal(z)));
			json_object_set_new(o, "l_h", json_real(cimag(z) / w));
			if (req->out) {
				char f_txt[32], r_txt[32], l_txt[32];
				fprintf(req->out, "short %10s: lead R %s, lead L %s\n", hb_format_si(f_txt, sizeof f_txt, fs[i], "Hz", 4),
					hb_format_si(r_txt, sizeof r_txt, creal(z), "ohm", 4),
					hb_format_si(l_txt, sizeof l_txt, cimag(z) / w, "H", 4));
			}
		}
		json_array_append_new(list, o);
	}
	char *text = json_dumps(list, JSON_COMPACT | JSON_REAL_PRECISION(10));
	json_decref(list);
	if (!text || strlen(text) >= sizeof rec->residuals) {
		free(text);
		snprintf(err, errlen, "residuals of %d frequencies do not fit the record", n);
		return HB_ERR_ARG;
	}
	snprintf(rec->residuals, sizeof rec->residuals, "%s", text);
	free(text);
	if (by_meter) {
		rc = hb_lcr_correct(lcr, req->which);
		if (rc != HB_OK) {
			snprintf(err, errlen, "meter's %s correction: %s", rec->kind, hb_lcr_errmsg(lcr));
			return rc;
		}
		snprintf(rec->note, sizeof rec->note, "the meter's %s correction ran (profile %s); residuals as read before it",
			 rec->kind, hb_lcr_profile_name(lcr));
	} else {
		snprintf(rec->note, sizeof rec->note, "%s residuals measured by henrybench%s; subtracted from later readings",
			 rec->kind, req->measure_only ? " (asked for)" : " (the meter's profile has no correction)");
	}
	rc = hb_db_fixture_comp_add(db, rec);
	if (rc != HB_OK)
		snprintf(err, errlen, "store: %s", hb_db_errmsg(db));
	return rc;
}
