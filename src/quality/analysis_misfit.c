/* src/quality/analysis_misfit.c - why a flagged model misfits: the cause checks run on its residuals, the bias spread and the falling points */
#include <math.h>
#include <stdlib.h>

#include "analysis.h"
#include "analysis_internal.h"

/* Why a flagged model misfits: its residuals at the rising points, the
 * points' bias spread and the falling-bias points go to the checks. */
static int diagnose_one(hb_misfit_diag *dg, const double *I, const double *L, const double *model, const double *spread,
			size_t m, const double *Id, const double *Ld, size_t nd, double noise, double *resid)
{
	for (size_t i = 0; i < m; i++)
		resid[i] = L[i] - model[i];
	/* the model already failed its own noise test: always look for the cause */
	return hb_fit_misfit_diagnose(I, L, resid, spread, m, Id, Ld, nd, noise, 1e-300, dg);
}

int hb_analysis__diagnose_misfits(hb_analysis_summary *s, const hb_db_point *pts, size_t n, const double *I, const double *L,
				  const double *spread, size_t m, const hb_fit_options *fo)
{
	const hb_fit_bias_result *b = &s->bias;
	bool knee_bad = b->knee_status == HB_OK && (b->knee.flags & HB_KNEE_MISFIT);
	bool core_bad = b->core_status == HB_OK && (b->core.flags & HB_CORE_NO_LAW_FITS);
	if (!knee_bad && !core_bad)
		return HB_OK;
	int rc = HB_ERR_NOMEM;
	double *model = malloc(sizeof *model * (m ? m : 1)), *resid = malloc(sizeof *resid * (m ? m : 1));
	double *Id = malloc(sizeof *Id * (n ? n : 1)), *Ld = malloc(sizeof *Ld * (n ? n : 1));
	if (!model || !resid || !Id || !Ld)
		goto cleanup;
	size_t nd = 0;
	for (size_t i = 0; i < n; i++) {
		const hb_db_point *p = &pts[i];
		double amps = isfinite(p->bias_meas_a) ? p->bias_meas_a : p->bias_set_a;
		if (p->direction != HB_DB_DIR_DOWN || !isfinite(p->primary) || !isfinite(amps))
			continue;
		Id[nd] = amps;
		Ld[nd++] = p->primary;
	}
	if (knee_bad) {
		for (size_t i = 0; i < m; i++)
			model[i] = hb_fit_knee_eval(b->knee.param, I[i]);
		if (diagnose_one(&s->knee_diag, I, L, model, spread, m, Id, Ld, nd, b->knee.noise_sigma, resid) == HB_OK) {
			s->knee_diagnosed = true;
			/* one figure everywhere: the one the model was flagged with */
			s->knee_diag.noise_ratio = b->knee.noise_ratio;
		}
	}
	if (core_bad) {
		const hb_fit_core_law_result *lr = &b->core.law[b->core.best];
		hb_core_params par = { lr->param[HB_CORE_MU_I], lr->param[HB_CORE_GAP], lr->param[HB_CORE_BSAT] };
		if (hb_core_model_eval(b->core.best, &par, &fo->geo, I, m, model, NULL) == HB_OK) {
			/* the reading the model predicts, Cp in parallel, as the fit compared */
			double w = 2 * M_PI * fo->test_freq, w2c = w * w * fo->parallel_c;
			for (size_t i = 0; i < m; i++)
				model[i] /= 1 - w2c * model[i];
			if (diagnose_one(&s->core_diag, I, L, model, spread, m, Id, Ld, nd, b->core.noise_sigma, resid) ==
			    HB_OK) {
				s->core_diagnosed = true;
				s->core_diag.noise_ratio = b->core.noise_ratio;
			}
		}
	}
	rc = HB_OK;
cleanup:
	free(model);
	free(resid);
	free(Id);
	free(Ld);
	return rc;
}
