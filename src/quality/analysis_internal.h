/* src/quality/analysis_internal.h - what the analysis files of quality/ share: the steps hb_analysis_sweep (analysis.c) takes, each in its own file */
#ifndef HB_ANALYSIS_INTERNAL_H
#define HB_ANALYSIS_INTERNAL_H

#include "analysis.h"

/* analysis_points.c: the rising points with each one's bias spread (spread
 * may be NULL), and the two-wire winding resistance from the supply's V/I
 * at low current (NAN when it cannot be had). */
int hb_analysis__bias_arrays_spread(const hb_db_point *points, size_t n, double **current, double **inductance,
				    double **spread, size_t *count);
double hb_analysis__dcr_from_points(const hb_db_point *pts, size_t n, double l_top_current);

/* analysis_misfit.c: the cause of a flagged model's misfit into the
 * summary's knee_diag / core_diag; HB_ERR_NOMEM only on no memory. */
int hb_analysis__diagnose_misfits(hb_analysis_summary *s, const hb_db_point *pts, size_t n, const double *I, const double *L,
				  const double *spread, size_t m, const hb_fit_options *fo);

/* analysis_judge.c: the checks of a bias sweep against its part's spec, the
 * rule in force, and every check judged by that rule with the overall
 * verdict. */
/* analysis_judge.c: one check appended to the summary (none past HB_ANALYSIS_MAX_CHECKS), and a check
 * with no limits (not tested); analysis_drawing.c adds its checks the same way. */
void hb_analysis__add_check(hb_analysis_summary *s, const char *name, const char *unit, hb_check c, const char *note);
hb_check hb_analysis__untested(void);
void hb_analysis__judge_bias(hb_analysis_summary *s, const hb_db_part *part, const hb_db_sweep *sw, const double *I,
			     const double *L, size_t n, const hb_budget_context *bc);
void hb_analysis__resolve_rule(const hb_db_part *part, const hb_db_sweep *sw, const hb_analysis_options *opt,
			       hb_decision_rule *rule, double *r);
void hb_analysis__apply_rules(hb_analysis_summary *s, const hb_db_part *part, const hb_db_sweep *sw,
			      const hb_analysis_options *opt);

/* analysis_store.c: the fit, its budgets and its verdicts stored; on an
 * error the summary's message says which. */
int hb_analysis__store_results(hb_db *db, hb_analysis_summary *s);

#endif
