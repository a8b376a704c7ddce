/* src/quality/budget.h - GUM uncertainty budgets of a bias sweep's reported quantities: Type A from the fit, Type B from the instruments' accuracy, the fringing model and temperature */
#ifndef HB_BUDGET_H
#define HB_BUDGET_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../../fit/hb_fit.h"

enum { HB_BUDGET_MAX_INPUTS = 8, HB_BUDGET_MAX = 16 };

/* Reference temperature of a DC resistance when the spec states none, C. */
#define HB_BUDGET_T_REF 20.0
/* The ambient stands in for the winding's temperature: +- this many K,
 * rectangular (an assumption, stated in the budget). */
#define HB_BUDGET_T_HALF_WIDTH 2.0
/* Copper's coefficient: 0.00393/K (annealed, 100 % IACS) is common
 * practice; hard-drawn wire is nearer 0.0038/K, so +-0.0001/K
 * rectangular (from memory). */
#define HB_BUDGET_ALPHA_HALF_WIDTH 0.0001
/* McLyman's fringing factor F = 1 + (g/sqrt Ae) ln(2G/g) is an
 * approximation; its fringing term (F - 1) is taken as uncertain by +-25 %,
 * rectangular (from memory: comparisons with field solutions in the
 * literature scatter by tens of percent). */
#define HB_BUDGET_FRINGING_SPREAD 0.25

typedef struct hb_budget_input {
	char input[40];      /* "L0 fit (Type A)", "meter gain", "bias current", ... */
	hb_unc_type type;
	double value;        /* x_i */
	char unit[12];       /* of x_i */
	double u;            /* u(x_i) */
	double c;            /* sensitivity coefficient, unit of y per unit of x_i */
	double contribution; /* |c| u(x_i), unit of y */
	double dof;          /* INFINITY for a specification */
	char source[160];    /* where u(x_i) comes from */
} hb_budget_input;

typedef struct hb_budget {
	char name[32];       /* the fit value's name: "L0", "I_drop20", "core.mu_i", "core.gap",
			      * "core.gap_physical", "core.Js", "core.mu_e", "core.AL", "DCR"; "Lsat" for its check */
	char unit[12];
	double value;        /* y (DCR: referred to 20 C when a temperature is stored) */
	double std_err;      /* Type A as the fit gives it (k = 1) */
	double u_c, dof, k, U, p; /* combined, Welch-Satterthwaite dof, coverage factor, U = k u_c, probability */
	size_t n;
	hb_budget_input in[HB_BUDGET_MAX_INPUTS];
	char note[HB_DB_TEXT_LEN]; /* e.g. "referred to 20 C from 23.0 C ..." or "uncorrected: no temperature stored" */
} hb_budget;

/* What the budgets take from the sweep and its instruments. */
typedef struct hb_budget_context {
	double meter_rel;        /* meter accuracy, +- fraction of reading (half-width); NAN = none stated */
	char meter_spec[HB_DB_TEXT_LEN];
	double supply_rel, supply_offset; /* read-back current accuracy +-(rel I + offset); rel NAN = none */
	char supply_spec[HB_DB_TEXT_LEN];
	double temperature_c;    /* ambient or part temperature; NAN = none stored */
	double t_ref_c;          /* HB_BUDGET_T_REF */
	bool dcr_from_meter;     /* the meter's DC-resistance reading, else the supply's V/I */
	double fringing_spread;  /* HB_BUDGET_FRINGING_SPREAD */
	/* the fixture's residual series inductance after compensation: +- this
	 * half-width, rectangular (NAN = no compensation recorded) */
	double fixture_l_half;
	char fixture_source[160];
} hb_budget_context;

/* The fixture term of L0 (docs/uncertainty.md "Fixture residual"): the
 * short compensation in force for the sweep states the leads' series
 * inductance; what the compensation leaves of it is bounded by the whole
 * of it (an assumption: the leads as the part is seated are not the leads
 * as the short was, the geometry changes, and no better bound is
 * recorded). Sets fixture_l_half when the sweep names a short compensation. */
void hb_budget_context_fixture(hb_budget_context *ctx, hb_db *db, int64_t sweep_id);

void hb_budget_context_init(hb_budget_context *ctx);
/* From the sweep's stored accuracy and ambient. */
void hb_budget_context_from_sweep(hb_budget_context *ctx, const hb_db_sweep *sw);

/*
 * Budgets of a bias sweep's fit: L0, each reached drop current, and with a
 * core fit mu_i, the effective gap, Js, the physical gap, mu_e and AL; then the DCR
 * (dcr_ohm NAN: none). The instruments' terms of the core parameters come
 * from refitting the best law with the readings (or currents) scaled
 * (central differences), so I, L, sigma and fo must be those of the fit.
 * Returns the number of budgets written to out (at most cap).
 */
size_t hb_budget_bias(const hb_fit_bias_result *b, const double *I, const double *L, const double *sigma, size_t n,
		      const hb_fit_options *fo, double dcr_ohm, const hb_budget_context *ctx, hb_budget *out,
		      size_t cap);

/* The Lsat check: L at the saturation-spec current against (1 - drop) L0.
 * The check is of L_at - (1 - drop) L0, so the meter's gain enters only
 * through that difference; the reading noise, the bias current's accuracy
 * through dL/dI and the L0 fit's scatter (through the limit) enter as they are. */
void hb_budget_lsat(const hb_fit_bias_result *b, double i_sat, double l_at, double dl_di, double drop,
		    const hb_budget_context *ctx, hb_budget *out);

/*
 * Budgets of a frequency sweep's fit ((R + j w L) parallel C): "L", "R", "C"
 * and "srf". Type A from the fit's covariance (its degrees of freedom);
 * Type B from the meter's gain accuracy, its sensitivity found by refitting
 * with every reading scaled (a gain error scales every impedance, so L and
 * R follow it, C goes the other way and the resonance does not move). The
 * meter's phase and source-frequency accuracy are not stated in the
 * accuracy form and are not included: each budget's note says so.
 * f, Ls, Rs and fo must be those of the fit. Returns the budgets written.
 */
size_t hb_budget_freq(const hb_fit_freq_result *q, const double *f, const double *Ls, const double *Rs, size_t n,
		      const hb_fit_freq_options *fo, const hb_budget_context *ctx, hb_budget *out, size_t cap);

/* The budget as stored (fit_uncertainty row, budget JSON text) and back. */
void hb_budget_to_db(const hb_budget *bg, int64_t fit_id, hb_db_fit_unc *out);
/* The budget's inputs as JSON: [{"input":..,"u":..,"c":..,"contribution":..,"source":..,
 * "type":"A"|"B","value":..,"unit":..,"dof":..|null}, ...]. */
json_t *hb_budget_inputs_json(const hb_budget *bg);
/*
 * Adds the uncertainty to a value object of the one shape every output uses
 * (hb_analysis_value_object): "u_c", "k", "U", "dof" (null = infinite),
 * "coverage": 0.9545, "budget": [...], and "note" when there is one. The
 * stored form: the JSON serialiser in src/io calls this with the rows of
 * hb_db_fit_unc_list. Returns value_obj.
 */
json_t *hb_budget_add_stored_json(json_t *value_obj, const hb_db_fit_unc *u);
/* The same from a budget just computed. */
json_t *hb_budget_add_json(json_t *value_obj, const hb_budget *bg);

/* ---------------- curve masks (issue 13): L of the measured curve at a mask point ---------------- */

/*
 * L at a data-sheet mask point's current i_mask, linear between the two
 * measured points that bracket it, at fraction t of the way (0 = on the
 * lower point). Inputs: the reading noise of both points (one reading's
 * sd noise_sigma, weights 1 - t and t, dof noise_dof), the meter's gain
 * (c = L: the band is the data sheet's and does not move with the
 * meter), the bias current's read-back accuracy through the segment's
 * dL/dI, and the interpolation's own error: half-width interp_hw
 * (t (1 - t) h^2 |L''| / 2), rectangular. The budget is named name.
 */
void hb_budget_mask_point(const char *name, double i_mask, double l_at, double t, double dl_di, double interp_hw,
			  double noise_sigma, double noise_dof, const hb_budget_context *ctx, hb_budget *out);
/* The degrees of freedom of the bias fit's reading noise as the L0 and Lsat
 * budgets take it (its L0 polynomial's points less its terms). */
double hb_budget_noise_dof(const hb_fit_modelfree_result *mf);

#endif
