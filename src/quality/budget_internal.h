/* src/quality/budget_internal.h - what the budget files of quality/ share: one input before evaluation, evaluation, the meter's source text */
#ifndef HB_BUDGET_INTERNAL_H
#define HB_BUDGET_INTERNAL_H

#include "budget.h"

/* One input before evaluation. */
typedef struct hb_budget_pending {
	const char *input, *unit;
	hb_unc_type type;
	double value, u, c, dof;
	char source[160];
} hb_budget_pending;

/* Evaluates the inputs (c given) into bg; false when the budget cannot be
 * evaluated (no finite input). */
bool hb_budget__evaluate(hb_unc_budget *ub, hb_budget *bg, const hb_budget_pending *in, size_t n);
void hb_budget__start(hb_budget *bg, const char *name, const char *unit, double value, double se);
/* "meter accuracy +-0.1 % of reading, rectangular (GUM 4.3.7): ..." */
void hb_budget__meter_source(const hb_budget_context *c, char *buf, size_t cap);

#endif
