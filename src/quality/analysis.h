/* src/quality/analysis.h - fits a stored sweep, stores the fit and judges the unit against its part's spec */
#ifndef HB_ANALYSIS_H
#define HB_ANALYSIS_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../../fit/hb_fit.h"
#include "budget.h"
#include "decision.h"
#include "mask.h"
#include "rules.h"

typedef struct hb_analysis_options {
	double noise_rel;          /* relative reading noise from the sweep; 0 = let the fit estimate it */
	size_t n_drops;            /* 0 = 10, 20, 30 % */
	double drops[HB_FIT_MAX_FRACTIONS];
	bool knee, core;           /* which models to fit (both by default) */
	double fix_mu_i, fix_gap, fix_bsat; /* NAN = fitted */
	bool store;                /* store the fit and verdicts (default true) */
	/* The decision rule for parts that state none, when the sweep recorded
	 * no station default either: simple acceptance unless set. */
	hb_decision_rule default_rule;
	double default_r;          /* NAN = 1 */
} hb_analysis_options;


enum { HB_ANALYSIS_MAX_CHECKS = 8 };

typedef struct hb_analysis_check {
	char name[16];             /* "L0", "Lsat", "DCR" */
	char unit[8];
	hb_check check;            /* the plain comparison with the tolerance limits (margins) */
	char note[160];
	/* The decision rule applied with the value's expanded uncertainty
	 * (decision.h, ILAC-G8:2019): decision.outcome is THE outcome, with
	 * the conditional ones; U, k, acceptance limits and the probability of
	 * false accept are in it. */
	hb_decision decision;
	double guard_r;            /* r of w = r U */
	char rule_note[120];       /* e.g. "no U for this value: judged by simple acceptance" */
} hb_analysis_check;

/* "pass", "conditional-pass", ... as the store and JSON spell it. */
hb_db_outcome hb_analysis_db_outcome(hb_decision_outcome o);
/* The rule a verdict states, in one line: "guarded (r = 1): <statement>". */
const char *hb_analysis_rule_text(const hb_analysis_check *k, char *buf, size_t cap);

typedef struct hb_analysis_summary {
	bool ran;
	int64_t sweep_id, fit_id;
	hb_db_sweep_kind kind;
	int fit_status;
	hb_fit_bias_result bias;   /* bias sweeps */
	hb_fit_freq_result freq;   /* frequency sweeps */
	double freq_f_max;         /* the highest frequency the frequency fit saw, Hz */
	double dcr_ohm;            /* the meter's reading, else the supply's V/I (two-wire, leads in); NAN if none */
	bool dcr_from_meter;
	double dcr_ref_ohm;        /* dcr_ohm referred to 20 C (copper) when a temperature is stored; NAN otherwise */
	double temperature_c;      /* the temperature it was referred from (the sweep's ambient); NAN = none */
	double cp_farad;           /* winding capacitance the core fit corrected for, NAN if none */
	int64_t cp_sweep_id;       /* the frequency sweep it came from */
	bool knee_diagnosed, core_diagnosed; /* a flagged model's misfit was traced to a cause */
	hb_misfit_diag knee_diag, core_diag;
	size_t n_checks;
	hb_analysis_check checks[HB_ANALYSIS_MAX_CHECKS];
	hb_overall overall;
	char message[256];
	/* GUM budgets of the reported quantities (budget.h), bias sweeps */
	size_t n_budgets;
	hb_budget budgets[HB_BUDGET_MAX];
	/* issue 13: the data sheet's curve mask (check "mask": its worst point)
	 * and the gap against the drawing (check "gap") */
	bool have_mask;
	hb_mask_result mask;
	bool have_gap_drawn;
	hb_gap_drawn gap_drawn;
	char gap_sentence[400];
} hb_analysis_summary;

void hb_analysis_options_init(hb_analysis_options *opt);
/* Reads the sweep and its points, fits, stores fit and verdicts. HB_OK when
 * the fit ran (the summary then says how well). */
int hb_analysis_sweep(hb_db *db, int64_t sweep_id, const hb_analysis_options *opt, hb_analysis_summary *out);
void hb_analysis_print(FILE *out, const hb_analysis_summary *summary);
/* One verdict line: outcome by the rule, measured, U and k, the tolerance
 * and acceptance limits, the probability of false accept (guarded rule);
 * with_statement first prints the rule and its statement. */
void hb_analysis_print_check(FILE *out, const hb_analysis_check *k, bool with_statement);
/* One verdict as JSON: {"check","outcome","measured","limit_low","limit_high",
 * "margin_fraction","unit","note","decision_rule":{"name","statement","r",
 * "guard_band"[,"note"]},"U","k","acceptance_low","acceptance_high",
 * ["rejection_low","rejection_high" non-binary],"p_conform","p_false_accept"}. */
json_t *hb_analysis_check_json(const hb_analysis_check *k);
/* The same two for a verdict read back from the store (show, export, the
 * history of a unit): the rule's statement rebuilt from its name; unit "H",
 * "ohm" or "A" as the check's. */
void hb_analysis_print_stored_verdict(FILE *out, const hb_db_verdict *v, const char *unit);
json_t *hb_analysis_stored_verdict_json(const hb_db_verdict *v, const char *unit);
/* The unit of a stored check's values, which the store does not keep:
 * "ohm" for DCR, "A" for a current check ("I..."), else "H". */
const char *hb_analysis_check_unit(const char *check_name);
/* The budget of the named quantity ("L0", "I_drop20", "core.gap", "DCR"), NULL if none. */
const hb_budget *hb_analysis_budget(const hb_analysis_summary *summary, const char *name);
/* The fitted self-resonance lies above the highest frequency the fit saw:
 * a model value beyond the data, never reported as a number. */
bool hb_analysis_srf_beyond(const hb_analysis_summary *summary);
/*
 * The budget table of a stored fit, one block per quantity: input, value,
 * standard uncertainty, sensitivity coefficient, contribution and source,
 * then u_c, nu_eff, k and U (coverage 95.45 %). `fit ID --budget` prints
 * this from hb_db_fit_unc_list(fit ID); n = 0 prints why there is none.
 */
void hb_analysis_print_budget(FILE *out, const hb_db_fit_unc *list, size_t n);
json_t *hb_analysis_summary_json(const hb_analysis_summary *summary);

/* Why a stored fit value has no number (value NULL: "beyond the data
 * (highest bias 2.00 A)") or no standard error ("not determined by these
 * data"); NULL when it has both. Rebuilt from the stored I_max, the
 * undetermined bits and the flags, as the store keeps no reason column. */
const char *hb_analysis_value_reason(const hb_db_fit *fit, const hb_db_fit_value *v, char *buf, size_t cap);
/* True when the value comes from a model whose residuals exceed the reading
 * noise (flags "knee-misfit" / "no-law-fits"); *noise_ratio (may be NULL)
 * gets that model's residual rms over the noise. */
bool hb_analysis_value_misfit(const hb_db_fit *fit, const char *name, double *noise_ratio);

enum { HB_ANALYSIS_LINE = 200 };
/* The residual warning of a misfitting model ("knee model", "core model"),
 * naming every cause checked and its outcome: returns the line count. */
size_t hb_analysis_misfit_lines(const char *model, const hb_misfit_diag *d, char lines[4][HB_ANALYSIS_LINE]);
/* The stored diagnosis of "knee" or "core" (flags "<which>-cause:<cause>" and
 * values "<which>.misfit.*_ratio"); false when none was stored. Point counts
 * are not stored (0). */
bool hb_analysis_stored_diag(const hb_db_fit *fit, const char *which, hb_misfit_diag *d);

/* One value as JSON, the one shape every output uses:
 * {"value": 3.7 | null, "std_err": 0.02 | null, "unit": "A",
 *  "reason": "beyond the data (highest bias 2.00 A)"   (only when value or std_err is null for a reason),
 *  "misfit": true                                     (only for a model whose residuals exceed the noise)} */
json_t *hb_analysis_value_object(double value, double std_err, const char *unit, const char *reason, bool misfit);
json_t *hb_analysis_value_json(const hb_fit_value *v);

/* The up-going points of a bias sweep with a finite reading, in strictly
 * increasing current (measured where the supply reported it). Caller frees
 * *current and *inductance. */
int hb_analysis_bias_arrays(const hb_db_point *points, size_t n, double **current, double **inductance,
			    size_t *count);

/* ---------------- a stored budget in SI units (analysis_print.c; fit --budget and the report's appendix) ---------------- */

/* The unit of a budget's result into buf: that of an input entering with
 * c = 1, else the verdict check's (DCR ohm, I_ A, L H), "" for mu. */
const char *hb_analysis_budget_unit(const char *name, json_t *inputs, char *buf, size_t cap);
/* One input's value, u(x), c and contribution as text with SI prefixes:
 * value and u(x) in the input's unit, c in y's unit per x's, the
 * contribution in y's. */
void hb_analysis_budget_cells(json_t *input, const char *y_unit, char cells[4][48]);
/* ---------------- issue 13: against the drawing and the data sheet ---------------- */

/* Adds check "mask" (the curve mask's worst point; its budget as "mask")
 * and check "gap" (the physical gap against the drawn one, U from
 * "core.gap_physical") for the part's drawing, judged later by apply's
 * rule (rule, r: the one in force). I, L: the rising points the fit used. */
void hb_analysis_judge_drawing(hb_analysis_summary *s, const hb_db_part *part, hb_decision_rule rule, double r,
			       const hb_db_part_drawing *drw, const double *I, const double *L, size_t n, double noise_rel,
			       const hb_budget_context *bc);

#endif
