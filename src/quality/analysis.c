/* src/quality/analysis.c - a stored sweep analysed: points read, fitted, diagnosed, judged and stored; the meeting point of db/ and fit/ */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis.h"
#include "analysis_internal.h"
#include "../../common/hb_text.h"

void hb_analysis_options_init(hb_analysis_options *opt)
{
	memset(opt, 0, sizeof *opt);
	opt->knee = true;
	opt->core = true;
	opt->fix_mu_i = opt->fix_gap = opt->fix_bsat = NAN;
	opt->store = true;
	opt->default_rule = HB_DECISION_SIMPLE;
	opt->default_r = NAN;
}

/* The winding's parallel capacitance, from the newest frequency sweep of
 * the same unit, else of any unit of the part: the meter reads
 * L/(1 - w^2 L C) at the test frequency, and the core fit corrects for it. */
static double winding_capacitance(hb_db *db, const hb_db_sweep *sw, int64_t *from_sweep)
{
	*from_sweep = 0;
	const char *serials[2] = { sw->serial, NULL };
	for (int pass = 0; pass < 2; pass++) {
		hb_db_sweep_filter f;
		hb_db_sweep_filter_init(&f);
		f.part_number = sw->part_number;
		f.serial = serials[pass];
		f.kind = HB_DB_SWEEP_FREQUENCY;
		f.status = HB_DB_COMPLETE;
		f.limit = 5;
		hb_db_sweep *list = NULL;
		size_t n = 0;
		if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK)
			continue;
		double c = NAN;
		for (size_t i = 0; i < n && !isfinite(c); i++) {
			hb_db_fit *fit = calloc(1, sizeof *fit);
			if (!fit)
				break;
			if (hb_db_fit_get_latest(db, list[i].id, NULL, fit) == HB_OK) {
				for (size_t k = 0; k < fit->n_values; k++)
					if (strcmp(fit->values[k].name, "C") == 0 && fit->values[k].value > 0) {
						c = fit->values[k].value;
						*from_sweep = list[i].id;
					}
			}
			free(fit);
		}
		hb_db_sweeps_free(list);
		if (isfinite(c))
			return c;
	}
	return NAN;
}

static int analyse_frequency(hb_analysis_summary *s, const hb_db_sweep *sw, const hb_db_point *pts, size_t n)
{
	double *f = malloc(sizeof *f * (n ? n : 1));
	double *Ls = malloc(sizeof *Ls * (n ? n : 1));
	double *Rs = malloc(sizeof *Rs * (n ? n : 1));
	int rc = HB_ERR_NOMEM;
	if (!f || !Ls || !Rs)
		goto out;
	bool zth = strcmp(sw->measured_pair, "Z-theta") == 0;
	bool lr = strncmp(sw->measured_pair, "Ls-Rs", 5) == 0;
	if (!zth && !lr) {
		rc = HB_ERR_DATA;
		snprintf(s->message, sizeof s->message,
			 "the frequency model needs series L-R or Z-theta readings, this sweep has %s", sw->measured_pair);
		goto out;
	}
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(pts[i].primary) || !isfinite(pts[i].secondary) || !(pts[i].freq_hz > 0))
			continue;
		if (m > 0 && pts[i].freq_hz <= f[m - 1])
			continue;
		f[m] = pts[i].freq_hz;
		if (zth)
			hb_fit_z_to_series(f[m], pts[i].primary, pts[i].secondary * M_PI / 180.0, &Ls[m], &Rs[m]);
		else {
			Ls[m] = pts[i].primary;
			Rs[m] = pts[i].secondary;
		}
		m++;
	}
	hb_fit_ws *ws = hb_fit_ws_new();
	if (!ws)
		goto out;
	hb_fit_freq_options fo = { .parallel_r = false, .within = 0.05 };
	rc = hb_fit_freq(ws, f, Ls, Rs, m, &fo, &s->freq);
	if (rc != HB_OK) {
		snprintf(s->message, sizeof s->message, "frequency fit: %s", hb_fit_ws_error(ws));
	} else {
		hb_budget_context bc;
		hb_budget_context_from_sweep(&bc, sw);
		s->n_budgets = hb_budget_freq(&s->freq, f, Ls, Rs, m, &fo, &bc, s->budgets, HB_BUDGET_MAX);
		s->freq_f_max = f[m - 1];
	}
	hb_fit_ws_free(ws);
out:
	free(f);
	free(Ls);
	free(Rs);
	return rc;
}

/* Nothing to fit: no fit is stored and no value printed (an empty fit
 * would show L0 0 H, a number from no data). */
static int no_points(hb_analysis_summary *s, size_t n)
{
	snprintf(s->message, sizeof s->message, n == 0 ? "no points to fit: the sweep has none" :
			 "no points to fit: none of its %zu points is a usable reading (overload, not finite, "
			 "or not positive)", n);
	s->fit_status = HB_ERR_DATA;
	return HB_ERR_DATA;
}

int hb_analysis_sweep(hb_db *db, int64_t sweep_id, const hb_analysis_options *opt, hb_analysis_summary *s)
{
	memset(s, 0, sizeof *s);
	s->sweep_id = sweep_id;
	s->dcr_ohm = NAN;
	s->dcr_ref_ohm = NAN;
	s->freq_f_max = NAN;
	s->temperature_c = NAN;
	s->cp_farad = NAN;
	s->overall = HB_OVERALL_INCOMPLETE;
	hb_db_sweep sw;
	hb_db_part part;
	hb_db_point *pts = NULL;
	size_t n = 0;
	double *I = NULL, *L = NULL, *sigma = NULL, *spread = NULL;
	int rc = hb_db_sweep_get(db, sweep_id, &sw);
	if (rc != HB_OK) {
		snprintf(s->message, sizeof s->message, "%s", hb_db_errmsg(db));
		return rc;
	}
	s->kind = sw.kind;
	hb_db_part_init(&part);
	if (sw.part_id > 0 && hb_db_part_get_id(db, sw.part_id, &part) != HB_OK)
		hb_db_part_init(&part);
	rc = hb_db_points_get(db, sweep_id, &pts, &n);
	if (rc != HB_OK) {
		snprintf(s->message, sizeof s->message, "%s", hb_db_errmsg(db));
		return rc;
	}
	if (sw.kind == HB_DB_SWEEP_FREQUENCY) {
		size_t usable = 0;
		for (size_t i = 0; i < n; i++)
			usable += isfinite(pts[i].primary) && isfinite(pts[i].secondary) && pts[i].freq_hz > 0;
		if (usable == 0) {
			rc = no_points(s, n);
			goto out;
		}
		s->fit_status = analyse_frequency(s, &sw, pts, n);
		s->ran = true;
		goto store;
	}
	size_t m = 0;
	rc = hb_analysis__bias_arrays_spread(pts, n, &I, &L, &spread, &m);
	if (rc == HB_OK && m == 0)
		rc = no_points(s, n);
	if (rc != HB_OK)
		goto out;
	/* The noise the sweep learnt weighs a refit the way the sweep did. */
	double noise_rel = opt->noise_rel > 0 ? opt->noise_rel :
			   (isfinite(sw.reading_noise_rel) && sw.reading_noise_rel > 0 ? sw.reading_noise_rel : 0);
	if (noise_rel > 0) {
		sigma = malloc(sizeof *sigma * (m ? m : 1));
		if (!sigma) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
		for (size_t i = 0; i < m; i++)
			sigma[i] = noise_rel * L[i];
	}
	hb_fit_options fo;
	hb_fit_options_init(&fo);
	if (opt->n_drops > 0) {
		fo.n_fractions = opt->n_drops;
		memcpy(fo.fractions, opt->drops, sizeof fo.fractions[0] * opt->n_drops);
	}
	if (noise_rel > 0 && m > 0)
		fo.noise_sigma = noise_rel * L[0];
	if (isfinite(part.rated_current_a) && part.rated_current_a > 0)
		fo.rated_current = part.rated_current_a;
	fo.knee = opt->knee;
	if (opt->core && part.turns > 0 && part.ae_m2 > 0 && part.le_m > 0) {
		fo.geo.turns = part.turns;
		fo.geo.Ae = part.ae_m2;
		fo.geo.le = part.le_m;
		fo.geo.window_height = isfinite(part.window_m) ? part.window_m : 0;
	}
	if (part.part_number[0] && isfinite(sw.test_freq_hz)) {
		double c = winding_capacitance(db, &sw, &s->cp_sweep_id);
		if (isfinite(c)) {
			fo.parallel_c = c;
			fo.test_freq = sw.test_freq_hz;
			s->cp_farad = c;
		}
	}
	fo.fix_mu_i = opt->fix_mu_i;
	fo.fix_gap = opt->fix_gap;
	fo.fix_bsat = opt->fix_bsat;
	double top = 0;
	for (size_t i = 0; i < n; i++)
		if (isfinite(pts[i].bias_meas_a) && pts[i].bias_meas_a > top)
			top = pts[i].bias_meas_a;
	if (isfinite(sw.dcr_meter_ohm)) {
		s->dcr_ohm = sw.dcr_meter_ohm;
		s->dcr_from_meter = true;
	} else {
		s->dcr_ohm = hb_analysis__dcr_from_points(pts, n, top);
	}
	s->fit_status = hb_fit_bias_analyse(I, L, sigma, m, &fo, &s->bias);
	s->ran = true;
	if (s->fit_status != HB_OK && !s->message[0])
		snprintf(s->message, sizeof s->message, "fit: %s", s->bias.message[0] ? s->bias.message :
			 hb_status_name(s->fit_status));
	if (s->fit_status == HB_OK && hb_analysis__diagnose_misfits(s, pts, n, I, L, spread, m, &fo) == HB_ERR_NOMEM) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	hb_budget_context bc;
	{
		hb_budget_context_from_sweep(&bc, &sw);
		hb_budget_context_fixture(&bc, db, sweep_id);
		s->n_budgets = hb_budget_bias(&s->bias, I, L, sigma, m, &fo, s->dcr_ohm, &bc,
					      s->budgets, HB_BUDGET_MAX);
		const hb_budget *dcr = hb_analysis_budget(s, "DCR");
		if (dcr && isfinite(bc.temperature_c)) {
			s->dcr_ref_ohm = dcr->value;
			s->temperature_c = bc.temperature_c;
		}
	}
	hb_analysis__judge_bias(s, &part, &sw, I, L, m, &bc);
	if (part.id > 0) {
		hb_db_part_drawing drw;
		hb_decision_rule rule;
		double r;
		hb_analysis__resolve_rule(&part, &sw, opt, &rule, &r);
		if (hb_db_part_drawing_get(db, part.id, &drw) == HB_OK)
			hb_analysis_judge_drawing(s, &part, rule, r, &drw, I, L, m, noise_rel, &bc);
	}
	hb_analysis__apply_rules(s, &part, &sw, opt);
store:
	rc = HB_OK;
	if (opt->store && (s->fit_status == HB_OK || s->n_checks > 0))
		rc = hb_analysis__store_results(db, s);
	if (rc == HB_OK)
		rc = s->fit_status;
out:
	free(I);
	free(L);
	free(sigma);
	free(spread);
	hb_db_points_free(pts);
	return rc;
}
