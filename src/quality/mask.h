/* src/quality/mask.h - a bias sweep against its part's data-sheet curve mask, and the gap measured against the drawn one */
#ifndef HB_MASK_H
#define HB_MASK_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "budget.h"
#include "decision.h"
#include "rules.h"

/*
 * Curve mask. At each mask point the measured L is taken at the point's
 * current by LINEAR interpolation in L against I between the two rising
 * points that bracket it (not the fitted curve: the mask judges the data,
 * and a model that misfits near the knee would move the verdict). A point
 * below the first measured current by no more than that point's current
 * read-back accuracy (or 1 mA when none is stated) takes the first reading;
 * a point above the highest swept current is untested: no number is made
 * up beyond the data. Each tested point is judged against its band
 * nominal (1 -+ tol) by the decision rule with its own expanded
 * uncertainty (budget.h, hb_budget_mask_point).
 */

/* Below the first point: how far a mask current may sit under it when the
 * supply states no accuracy, A. */
#define HB_MASK_LOW_SLACK_A 1e-3

typedef struct hb_mask_point_result {
	double current, nominal, tol; /* the mask point */
	double low, high;             /* band limits, nominal (1 -+ tol) */
	bool tested;                  /* false: beyond the swept current */
	double measured;              /* L interpolated at current; NAN untested */
	double t, dl_di;              /* where between the bracketing points, the segment's slope */
	hb_check check;               /* the plain comparison (margin, margin_frac) */
	double u_c, k, U;             /* of measured (NAN when no budget could be made) */
	hb_decision decision;         /* by the rule, with U (simple acceptance when U is unknown) */
	bool rule_fell_back;          /* the rule asked for U and there was none: simple acceptance */
} hb_mask_point_result;

typedef struct hb_mask_result {
	size_t n;
	hb_mask_point_result pt[HB_DB_MASK_MAX];
	double swept_low, swept_high; /* the rising points' current span, A */
	size_t n_tested, n_untested, n_fail, n_conditional;
	int worst;                    /* index of the worst tested point (outcome first, then margin); -1 none */
	hb_decision_outcome outcome;  /* fail if any point fails, else not-tested if any is untested, else the worst's */
} hb_mask_result;

/*
 * Judges the curve (I strictly increasing, n >= 2) against the mask of d.
 * noise_rel > 0: one reading's relative sd; else noise_sigma (H) is taken
 * for every reading. The budget of each point is built with ctx; when
 * worst_budget is not NULL it receives the worst point's budget, named
 * "mask". HB_ERR_ARG for bad input, HB_ERR_DATA when d has no mask.
 */
int hb_mask_evaluate(const double *I, const double *L, size_t n, const hb_db_part_drawing *d, double noise_rel,
		     double noise_sigma, double noise_dof, const hb_budget_context *ctx, hb_decision_rule rule, double r,
		     hb_mask_result *out, hb_budget *worst_budget);

/* "worst margin -2.1 % at 3.20 A (L 81.2 uH, band 85.0 uH to 104 uH); 4 of 5 points
 * inside; 1 beyond the swept 0 to 3.00 A: untested" */
const char *hb_mask_summary_text(const hb_mask_result *m, char *buf, size_t cap);

/*
 * Gap as drawn: the physical gap the core fit measured, with U from its
 * budget, against the drawn gap +- tolerance; the sentence says which way
 * and by how much the part differs, and the fitted mu_i and Js beside the
 * part's stated material values (NAN: not stated / not fitted).
 */
typedef struct hb_gap_drawn {
	double drawn, tol;             /* m */
	double measured, U, k;         /* m; NAN untested */
	double mu_i_fit, mu_i_part, js_fit, bsat_part;
} hb_gap_drawn;

const char *hb_gap_drawn_sentence(const hb_gap_drawn *g, char *buf, size_t cap);

/* The mask point by point: current, band, measured L, margin, U and k, outcome. */
void hb_mask_print(FILE *out, const hb_mask_result *m);
/* {"outcome","worst_margin_fraction","worst_current_A","swept_A":[lo,hi],"points":[{"current_A",
 * "nominal_H","tol","low_H","high_H","measured_H"|null,"margin_fraction"|null,"U_H","k",
 * "outcome","reason"?}, ...]} */
json_t *hb_mask_json(const hb_mask_result *m);
/* {"drawn_m","tol_m","measured_m"|null,"U_m","k","difference_m","mu_i_fit","mu_i_part","Js_fit_T",
 * "Bsat_part_T","sentence"} */
json_t *hb_gap_drawn_json(const hb_gap_drawn *g, const char *sentence);

#endif
