/* fit/hb_fit.h - the fit engine: model-free bias results, knee and core models, frequency model, core geometry */
#ifndef HB_FIT_H
#define HB_FIT_H

#include <stdbool.h>
#include <stddef.h>

#include "../common/hb_status.h"

/*
 * Everything here takes plain arrays in SI units (A, H, m, m^2, Hz, ohm, T)
 * and returns plain structs. Standard errors are NAN where none applies.
 * The bias sweep's L is the meter's reading: the INCREMENTAL (small-signal)
 * inductance dpsi/dI at the DC bias point, not the secant psi/I.
 */

#define HB_FIT_CODE_VERSION "hb-fit 1.2"
#define HB_FIT_INCREMENTAL_NOTE \
	"L is the incremental (small-signal) inductance dpsi/dI read by the LCR meter at each DC bias"
#define HB_FIT_MU0 1.25663706212e-6 /* H/m, CODATA 2018 */

#define HB_FIT_MAX_PARAMS 8
#define HB_FIT_MAX_FRACTIONS 8
#define HB_FIT_MAX_VALUES 96

/* ------------------------------------------------------------------ */
/* Generic nonlinear least squares: the ONE wrapper every model uses.  */
/* ------------------------------------------------------------------ */

/* Fills f[0..n-1] with the model at theta and, when jac is not NULL, the
 * n x p Jacobian df_i/dtheta_j row-major. Returns 0, or nonzero when theta
 * is outside the model's domain. */
typedef int (*hb_fit_model_fn)(const double *theta, void *ctx, double *f, double *jac);

typedef struct hb_fit_problem {
	size_t n, p;            /* observations, parameters (p <= HB_FIT_MAX_PARAMS) */
	const double *y;        /* n observations */
	const double *sigma;    /* n reading uncertainties (weights 1/sigma^2) or NULL */
	hb_fit_model_fn model;
	void *ctx;
	int max_iter;           /* per run; 0 -> 300 */
	bool single_start;      /* check but do not restart: the caller has a fallback */
} hb_fit_problem;

/* hb_fit_nlls_result.flags */
enum {
	HB_NLLS_RESTARTED = 1 << 0,       /* the first run was suspect; more starts were tried */
	HB_NLLS_FALSE_CAUGHT = 1 << 1,    /* a "converged" run was rejected as a wrong point */
	HB_NLLS_SINGULAR = 1 << 2,        /* Jacobian rank-deficient at the result */
	HB_NLLS_NOT_CONVERGED = 1 << 3,   /* no run met the tolerances */
};

typedef struct hb_fit_nlls_result {
	size_t n, p, dof;
	double theta[HB_FIT_MAX_PARAMS];
	double std_err[HB_FIT_MAX_PARAMS];                /* sqrt(diag(cov)) */
	double cov[HB_FIT_MAX_PARAMS * HB_FIT_MAX_PARAMS]; /* (J'WJ)^-1 * chi2/dof, row-major p x p */
	double rss;          /* sum (f - y)^2, unweighted */
	double chi2;         /* sum ((f - y)/sigma)^2 (= rss without sigma) */
	double residual_sd;  /* sqrt(chi2/dof) */
	double rcond;        /* reciprocal condition number of the column-scaled Jacobian */
	int iterations, starts, flags;
} hb_fit_nlls_result;

typedef struct hb_fit_nlls hb_fit_nlls; /* workspace cache; reuse it across fits */

hb_fit_nlls *hb_fit_nlls_new(void);
void hb_fit_nlls_free(hb_fit_nlls *w);
/* check = false gives one plain trust-region LM run with no false-convergence
 * check (tests use it to show what the check catches). Default true. */
void hb_fit_nlls_set_check(hb_fit_nlls *w, bool check);
/* HB_OK, HB_ERR_ARG, HB_ERR_NOMEM, or HB_ERR_FIT (no trustworthy minimum:
 * out still holds the best run found, with flags saying why). */
int hb_fit_nlls_run(hb_fit_nlls *w, const hb_fit_problem *prob, const double *start, hb_fit_nlls_result *out);
const char *hb_fit_nlls_error(const hb_fit_nlls *w);

/* ------------------------------------------------------------------ */
/* Options, workspace, named values                                    */
/* ------------------------------------------------------------------ */

/* B = mu0 H + J(H), the polarisation J = Js s(a H / Js), a = mu0 (mu_i - 1):
 * dB/dH = mu0 mu_i at zero field and never below mu0. */
typedef enum hb_core_law {
	HB_CORE_FROHLICH = 0, /* J = a H Js / (Js + a |H|) */
	HB_CORE_LANGEVIN = 1, /* J = Js Lang(3 a H / Js), Lang(x) = coth x - 1/x */
	HB_CORE_TANH = 2,     /* J = Js tanh(a H / Js) */
	HB_CORE_NLAWS = 3
} hb_core_law;

const char *hb_core_law_name(hb_core_law law); /* "frohlich-kennelly", "langevin", "tanh" */

typedef struct hb_core_geometry {
	double turns;         /* N */
	double Ae, le;        /* effective area m^2, path length m */
	double window_height; /* G for the fringing correction, m; 0 = none */
} hb_core_geometry;

typedef struct hb_fit_options {
	size_t n_fractions;                      /* 0 -> 10, 20, 30 % */
	double fractions[HB_FIT_MAX_FRACTIONS];  /* 0.10 = L fallen by 10 % of L0 */
	size_t l0_points;                        /* points in the zero-bias fit, 0 -> 6 (quadratic from 5) */
	double noise_sigma;                      /* reading noise, H (repeated readings); 0 = estimate */
	double rated_current;                    /* A; 0 -> the last bias point */
	bool knee;                               /* fit the 4-parameter knee model (default true) */
	hb_core_geometry geo;                    /* turns, Ae, le > 0 enable the core model */
	double fix_mu_i, fix_gap, fix_bsat;      /* datasheet values held fixed (mu_i > 1, gap >= 0, Js > 0); NAN = fit */
	unsigned laws;                           /* bit (1 << hb_core_law); 0 = all three */
	double noise_ratio_limit;                /* residual rms / noise above which no law fits; 0 -> 3 */
	/* Winding capacitance Cp (F, e.g. from hb_fit_freq on the same unit) and
	 * the bias sweep's test frequency (Hz): the core model then fits the
	 * series reading L / (1 - w^2 L Cp). 0 = no correction. */
	double parallel_c, test_freq;
} hb_fit_options;

void hb_fit_options_init(hb_fit_options *opt);

/* Why a value has no number: it lies beyond the measured bias range, or
 * the data do not determine it. Outputs print the reason, never a number. */
#define HB_FIT_REASON_BEYOND "beyond the data"
#define HB_FIT_REASON_UNDETERMINED "not determined by these data"
#define HB_FIT_REASON_FLOOR_HELD "held at 0: the sweep shows no floor"

typedef struct hb_fit_value {
	char name[40];   /* e.g. "knee.Ik", "core.mu_e" */
	double value;    /* NAN = no number: reason says why */
	double std_err;  /* NAN = none (reason says why when the value is a parameter not determined) */
	char unit[12];   /* SI: "H", "A", "m", "T", "J", "", ... */
	char reason[72]; /* "" or e.g. "beyond the data (highest bias 2.00 A)", "not determined by these data" */
	bool misfit;     /* from a model whose residuals exceed the reading noise (knee.*, core.*) */
} hb_fit_value;

typedef struct hb_fit_values {
	size_t count;
	hb_fit_value v[HB_FIT_MAX_VALUES];
} hb_fit_values;

/* True for a model's fit diagnostics (knee.rss, *.dof, *.noise_ratio,
 * *.undetermined, *.flags, core.aicc.*) and for values the model-free L0
 * gives whatever the law (core.mu_e, core.AL): never marked misfit. */
bool hb_fit_value_is_diagnostic(const char *name);

/* Value by name or NULL. */
const hb_fit_value *hb_fit_values_find(const hb_fit_values *vals, const char *name);

/* Holds GSL workspaces and scratch space reused from fit to fit. */
typedef struct hb_fit_ws hb_fit_ws;
hb_fit_ws *hb_fit_ws_new(void);
void hb_fit_ws_free(hb_fit_ws *ws);
const char *hb_fit_ws_error(const hb_fit_ws *ws); /* why the last call failed */

/* ------------------------------------------------------------------ */
/* 1. Model-free results from the measured points                      */
/* ------------------------------------------------------------------ */

typedef struct hb_fit_drop {
	double fraction;  /* 0.20 = L has fallen to 80 % of L0 */
	bool reached;     /* false: the crossing lies beyond the highest bias point (or nowhere):
			   * current and std_err are NAN, never an extrapolation */
	double current, std_err;
} hb_fit_drop;

enum { /* hb_fit_modelfree_result.flags */
	HB_MF_NOISE_ESTIMATED = 1 << 0, /* reading noise estimated from the scatter, not given */
	HB_MF_NONMONOTONE = 1 << 1,     /* L rose with bias by more than 3 noise sd somewhere */
};

typedef struct hb_fit_modelfree {
	double L0, L0_std_err;  /* zero-bias value as the meter reads it: polynomial through the points
				 * below the knee, at I = 0 (what a nominal L and older fits mean) */
	size_t L0_points;
	char L0_basis[24];      /* the polynomial AICc chose, e.g. "1, I^2, I^4" or "1, |I|, I^2" */
	double L0_part, L0_part_std_err; /* the part's own L0, Cp removed; = L0 when not cp_corrected */
	bool cp_corrected;      /* the drop currents (and L_at_max, L0_part) come from L corrected for the
				 * winding capacitance: the fractions are of L0_part */
	double noise_sigma;     /* reading noise used for the uncertainties, H */
	size_t n_drops;
	hb_fit_drop drop[HB_FIT_MAX_FRACTIONS];
	double I_max, L_at_max; /* last bias point */
	int flags;
} hb_fit_modelfree_result;

/* I strictly increasing, >= 0, n >= 3, all finite, L > 0. */
int hb_fit_modelfree(const double *current, const double *L, const double *sigma, size_t n,
		     const hb_fit_options *opt, hb_fit_modelfree_result *out);

/* ------------------------------------------------------------------ */
/* 2. Knee model L(I) = Lf + (L0 - Lf) / (1 + (I/Ik)^p)                */
/* ------------------------------------------------------------------ */

enum { HB_KNEE_L0 = 0, HB_KNEE_LF, HB_KNEE_IK, HB_KNEE_P, HB_KNEE_NP };

enum { /* hb_fit_knee_result.flags */
	HB_KNEE_FLOOR_HELD = 1 << 0, /* a free floor went negative (the sweep shows no floor): Lf held at 0 */
	HB_KNEE_POINT_BEYOND = 1 << 1, /* the knee point lies beyond the highest bias: knee_current NAN */
	HB_KNEE_MISFIT = 1 << 2,     /* residual rms > noise_ratio_limit x the reading noise */
	HB_KNEE_NOISE_UNKNOWN = 1 << 3, /* no noise figure: the fit quality could not be judged */
};

/* identifiability flags: bit (1 << parameter index) in .undetermined */
typedef struct hb_fit_knee_result {
	double param[HB_KNEE_NP], std_err[HB_KNEE_NP];
	double cov[HB_KNEE_NP * HB_KNEE_NP]; /* natural units, scaled by chi2/dof */
	double rss, chi2, residual_rms;
	size_t n, dof;
	size_t n_drops;
	hb_fit_drop drop[HB_FIT_MAX_FRACTIONS]; /* on the model, brent root finder */
	double knee_current, knee_L;           /* maximum curvature of L/L0 against I/Ik; NAN beyond the data */
	double I_max;                           /* highest bias point of the sweep */
	double noise_sigma, noise_ratio;        /* residual rms / reading noise (sqrt(chi2/dof) with sigma) */
	unsigned undetermined;                  /* |corr| > 0.99 or relative sd > 50 % */
	int flags;                              /* HB_KNEE_* */
	int nlls_flags, iterations, starts; /* from the NLLS wrapper */
} hb_fit_knee_result;

double hb_fit_knee_eval(const double param[HB_KNEE_NP], double current);
int hb_fit_knee(hb_fit_ws *ws, const double *current, const double *L, const double *sigma, size_t n,
		const hb_fit_options *opt, hb_fit_knee_result *out);

/* ------------------------------------------------------------------ */
/* 3. Core model: N I = H le + B(H) g / mu0, L = N Ae dB/dI            */
/* ------------------------------------------------------------------ */

enum { HB_CORE_MU_I = 0, HB_CORE_GAP, HB_CORE_BSAT, HB_CORE_NP };

/* HB_CORE_BSAT, .bsat and fix_bsat hold Js, the saturation POLARISATION
 * (T): B itself keeps rising as mu0 H beyond it. */
typedef struct hb_core_params {
	double mu_i;  /* initial relative permeability of the material, > 1 */
	double gap;   /* effective magnetic gap, m */
	double bsat;  /* Js, saturation polarisation, T */
} hb_core_params;

/* Incremental L (and B when B_out != NULL) at each current; no parallel C. */
int hb_core_model_eval(hb_core_law law, const hb_core_params *par, const hb_core_geometry *geo,
		       const double *current, size_t n, double *L_out, double *B_out);

enum { /* hb_fit_core_result.flags */
	HB_CORE_NO_LAW_FITS = 1 << 0,   /* residual rms > limit x noise: lean on the model-free results */
	HB_CORE_KNEE_UNREACHED = 1 << 1,/* the sweep never reached a 30 % drop */
	HB_CORE_GAP_ZERO = 1 << 2,      /* gap not resolved from zero; refitted with gap = 0 */
	HB_CORE_NOISE_UNKNOWN = 1 << 3, /* no noise estimate: the fit quality could not be judged */
};

typedef struct hb_fit_core_law_result {
	hb_core_law law;
	int status;                          /* hb_status of this law's fit */
	double param[HB_CORE_NP], std_err[HB_CORE_NP]; /* std_err 0 for fixed parameters */
	double cov[HB_CORE_NP * HB_CORE_NP];
	bool fixed[HB_CORE_NP];
	double rss, chi2, residual_rms, aicc;
	size_t dof;
	unsigned undetermined;               /* bit (1 << HB_CORE_*) */
	int nlls_flags, iterations, starts; /* from the NLLS wrapper */
} hb_fit_core_law_result;

typedef struct hb_fit_core_result {
	hb_core_law best;                    /* lowest AICc among the laws that fitted */
	hb_fit_core_law_result law[HB_CORE_NLAWS]; /* status HB_ERR_UNSUPPORTED = not tried */
	double mu_e, mu_e_se;                /* L0 le / (mu0 N^2 Ae): always determined */
	double AL, AL_se;                    /* L0 / N^2, H */
	double gap_implied, gap_implied_se;  /* le (1/mu_e - 1/mu_i) with the best law's mu_i */
	double gap_physical, gap_physical_se;/* g with g/F(g) = fitted effective gap (needs G) */
	double fringing_factor;              /* F at the physical gap */
	double rated_current;
	double B_peak, B_peak_se;            /* model flux density at the rated current, T */
	double H_core_rated;                 /* model field IN THE CORE at the rated current, A/m: solves
					      * N I = H le + B(H) g / mu0 (the applied N I / le minus the gap's share) */
	double psi_rated, W_rated;           /* model flux linkage (Wb) and energy (J) there */
	double noise_sigma, noise_ratio;     /* residual rms / reading noise */
	int flags;
} hb_fit_core_result;

int hb_fit_core(hb_fit_ws *ws, const double *current, const double *L, const double *sigma, size_t n,
		const hb_fit_options *opt, hb_fit_core_result *out);

/* ------------------------------------------------------------------ */
/* 4. Derived curves from the data                                     */
/* ------------------------------------------------------------------ */

/* psi(I) = integral of L dI from 0 (trapezoid; L0 or L[0] taken flat below
 * I[0]), B = psi/(N Ae), H = N I / le, W = integral of i dpsi. Any output
 * may be NULL; B and H need geo (NULL otherwise). L0 NAN -> L[0]. */
int hb_fit_curves(const double *current, const double *L, size_t n, double L0, const hb_core_geometry *geo,
		  double *psi, double *B, double *H, double *W);

/* ------------------------------------------------------------------ */
/* Everything for one bias sweep, and a flat list for the store        */
/* ------------------------------------------------------------------ */

typedef struct hb_fit_bias_result {
	char code_version[24];               /* HB_FIT_CODE_VERSION */
	char model[48];                      /* headline model, e.g. "knee", "core:tanh" */
	hb_fit_modelfree_result modelfree;
	int knee_status;                     /* HB_ERR_UNSUPPORTED = not run */
	hb_fit_knee_result knee;
	int core_status;                     /* HB_ERR_UNSUPPORTED = no geometry */
	hb_fit_core_result core;
	double rated_current, psi_rated, B_rated, H_rated, W_rated; /* from the data */
	/* headline model's fit, for generic storage */
	size_t p, dof;
	char param_names[HB_FIT_MAX_PARAMS][16];
	double cov[HB_FIT_MAX_PARAMS * HB_FIT_MAX_PARAMS];
	double rss;
	hb_fit_values values;                /* every result as (name, value, std_err, unit) */
	char message[160];                   /* why a part failed, "" if none */
} hb_fit_bias_result;

/* HB_OK when the model-free results exist (a model that failed is reported
 * in knee_status / core_status and message); else the model-free status. */
int hb_fit_bias_analyse(const double *current, const double *L, const double *sigma, size_t n,
			const hb_fit_options *opt, hb_fit_bias_result *out);
int hb_fit_bias_analyse_ws(hb_fit_ws *ws, const double *current, const double *L, const double *sigma,
			   size_t n, const hb_fit_options *opt, hb_fit_bias_result *out);

/* ------------------------------------------------------------------ */
/* Why a model misfits: checked causes, the law blamed last            */
/* ------------------------------------------------------------------ */

typedef enum hb_misfit_cause {
	HB_MISFIT_NONE = 0,        /* residual rms within limit x noise */
	HB_MISFIT_CURRENT_MOVED,   /* bias spread x |dL/dI| accounts for the residuals */
	HB_MISFIT_HEATING,         /* the falling-bias readings are off the rising ones by as much */
	HB_MISFIT_LAW,             /* neither: the law does not follow this part */
} hb_misfit_cause;

const char *hb_misfit_cause_name(hb_misfit_cause cause); /* "none", "current-moved", "heating", "law-mismatch" */

typedef struct hb_misfit_diag {
	hb_misfit_cause cause;
	double residual_rms, noise_ratio; /* rms of the residuals, and over the reading noise */
	double current_ratio;   /* rms(bias_spread |dL/dI|) / residual rms; NAN = no spread known */
	size_t current_points;  /* points that had a bias spread */
	double heating_ratio;   /* rms(L_down - L_up at the same current) / residual rms; NAN = no falling points */
	size_t heating_points;
} hb_misfit_diag;

/* current strictly increasing (rising bias) with readings L and a model's residuals
 * L - model; bias_spread (A, max - min of the supply read-backs around each
 * accepted reading; NULL or NAN entries = unknown); the falling-bias points
 * (may be 0). A ratio >= 0.5 counts as comparable: the current's movement
 * is checked first, then heating, and only then is the law blamed.
 * "comparable" needs limit (0 -> 3) x noise exceeded first, else NONE. */
int hb_fit_misfit_diagnose(const double *current, const double *L, const double *resid, const double *bias_spread,
			   size_t n, const double *current_down, const double *L_down, size_t n_down, double noise,
			   double limit, hb_misfit_diag *out);

/* ------------------------------------------------------------------ */
/* 5. Frequency model: (R + j w L) parallel C [parallel Rp]            */
/* ------------------------------------------------------------------ */

enum { HB_FREQ_L = 0, HB_FREQ_R, HB_FREQ_C, HB_FREQ_RP, HB_FREQ_NP };

typedef struct hb_fit_freq_options {
	bool parallel_r;    /* also fit a parallel loss resistance Rp */
	double within;      /* flat-band tolerance, 0 -> 0.05 */
} hb_fit_freq_options;

typedef struct hb_fit_freq_result {
	double param[HB_FREQ_NP], std_err[HB_FREQ_NP]; /* Rp = INFINITY when not fitted */
	double cov[HB_FREQ_NP * HB_FREQ_NP];
	size_t p, dof;
	double rss;           /* relative: residuals are (Zmodel - Zmeas)/|Zmeas| */
	double srf, srf_se;   /* 1/(2 pi sqrt(LC)), Hz */
	double q_max, q_max_freq;   /* highest MEASURED Q = w Ls / Rs over the readings (Rs > 0) and its
				     * frequency; NAN when no reading has Rs > 0. No model Q is given:
				     * the model's R is constant, the part's is not. */
	double band_lo, band_hi;    /* measured: Ls within `within` of the lowest-frequency reading */
	double model_band_hi;       /* model: Ls(f) = (1 + within) L */
	unsigned undetermined;
	int nlls_flags, iterations, starts; /* from the NLLS wrapper */
} hb_fit_freq_result;

/* Converts an |Z|, theta (rad) reading to series Ls, Rs. */
void hb_fit_z_to_series(double f, double zmag, double theta, double *Ls, double *Rs);
/* Model series-equivalent Ls, Rs and Q at f. The model's R is constant over
 * frequency, so its Q is not the part's: never report it as such. */
void hb_fit_freq_eval(const hb_fit_freq_result *res, double f, double *Ls, double *Rs, double *Q);
/* f strictly increasing, > 0; n >= p + 1. */
int hb_fit_freq(hb_fit_ws *ws, const double *f, const double *Ls, const double *Rs, size_t n,
		const hb_fit_freq_options *opt, hb_fit_freq_result *out);

/* ------------------------------------------------------------------ */
/* 6. Geometry and expected inductance                                 */
/* ------------------------------------------------------------------ */

typedef struct hb_core_effective {
	double C1;  /* sum l/A, 1/m */
	double C2;  /* sum l/A^2, 1/m^3 */
	double le, Ae, Ve; /* C1^2/C2, C1/C2, le Ae (IEC 60205) */
} hb_core_effective;

/* Rectangular-section toroid, IEC 60205 closed form. */
int hb_fit_geom_toroid(double od, double id, double height, hb_core_effective *out);
/* Series chain of uniform sections. */
int hb_fit_geom_sections(const double *length, const double *area, size_t n, hb_core_effective *out);
/* mu_e = mu_i / (1 + mu_i g / le). */
double hb_fit_mu_gapped(double mu_i, double gap, double le);
/* L = mu0 mu N^2 Ae / le, and L = AL N^2. NAN on bad input. */
double hb_fit_expected_L_mu(double mu, double turns, double Ae, double le);
double hb_fit_expected_L_al(double al, double turns);
/* McLyman: F = 1 + (g/sqrt(Ae)) ln(2G/g); NAN on bad input. */
double hb_fit_fringing_factor(double gap, double Ae, double window_height);
/* Physical gap whose g/F(g) equals g_eff (brent root finder). */
int hb_fit_gap_physical(double g_eff, double Ae, double window_height, double *g_phys);
/* Nagaoka coefficient of a current sheet, exact via complete elliptic integrals. */
int hb_fit_nagaoka(double diameter, double length, double *k);
/* Single-layer air-core solenoid: exact (Nagaoka) and Wheeler 1928. Any output may be NULL. */
int hb_fit_solenoid(double diameter, double length, double turns, double *L_exact, double *L_wheeler,
		    double *nagaoka_k);
/* Straight round wire, low frequency (Rosa / Grover): 2l[ln(2l/r) - 0.75] nH, l, r in cm. */
double hb_fit_wire_inductance(double length, double radius);

/* ------------------------------------------------------------------ */
/* 7. Uncertainty budget (GUM, JCGM 100:2008)                          */
/* ------------------------------------------------------------------ */

/*
 * One budget per reported quantity y = f(x_1..x_N): each input carries its
 * estimate x_i, standard uncertainty u(x_i), sensitivity coefficient c_i and
 * degrees of freedom nu_i. hb_unc_evaluate gives the combined standard
 * uncertainty (law of propagation, GUM 5.1.2 / 5.2.2), the contributions
 * u_i(y) = |c_i| u(x_i), the effective degrees of freedom (Welch-Satterthwaite,
 * GUM G.4.1), the coverage factor k from Student's t (GUM G.3) and U = k u_c.
 */

#define HB_UNC_MAX_INPUTS 32
/* Coverage probability of k = 2 for a normal distribution, erf(sqrt 2):
 * "95.45 %" (GUM G.1.3, Table G.1). The default of hb_unc_evaluate. */
#define HB_UNC_P_K2 0.9544997361036416
/* Copper's temperature coefficient of resistance at 20 C, 1/K (annealed
 * copper, 100 % IACS: the value in common practice). */
#define HB_UNC_ALPHA_CU20 0.00393

typedef enum hb_unc_type {
	HB_UNC_TYPE_A = 0, /* statistical analysis of series of observations (GUM 4.2) */
	HB_UNC_TYPE_B = 1, /* other means: specification, certificate, handbook (GUM 4.3) */
} hb_unc_type;

typedef struct hb_unc_input {
	char name[40];
	hb_unc_type type;
	double value;        /* x_i */
	double u;            /* u(x_i) >= 0 */
	double c;            /* c_i = df/dx_i at the estimates (given, or computed by hb_unc_evaluate) */
	bool c_numeric;      /* c was computed from the model by central differences */
	double dof;          /* nu_i > 0; INFINITY = u(x_i) taken as exactly known */
	double contribution; /* u_i(y) = |c_i| u(x_i), filled by hb_unc_evaluate */
	char unit[12];       /* of x_i, SI ("H", "A", "K", "1/K", ""); for the budget table */
	char source[64];     /* where u(x_i) comes from, e.g. "meter spec 0.2 % rect", "fit covariance" */
} hb_unc_input;

enum { /* hb_unc_result.flags */
	HB_UNC_CORRELATED = 1 << 0, /* correlations entered u_c; Welch-Satterthwaite (G.4.1) assumes
				     * independent inputs, so nu_eff is then only indicative */
	HB_UNC_DOF_TRUNCATED = 1 << 1, /* k uses nu_eff truncated to the next lower integer (G.4.1) */
};

typedef struct hb_unc_result {
	double y;        /* f at the estimates; NAN when the budget has no model */
	double u_c;      /* combined standard uncertainty */
	double dof_eff;  /* Welch-Satterthwaite; INFINITY when every nu_i is */
	double dof_used; /* degrees of freedom k was taken at (dof_eff truncated) */
	double p;        /* coverage probability */
	double k;        /* coverage factor t_p(dof_used); the normal quantile for infinite dof */
	double U;        /* expanded uncertainty k u_c */
	int flags;
} hb_unc_result;

/* y = f(x): 0, or nonzero when x is outside the model's domain. x has
 * hb_unc_count() elements in the order the inputs were added. */
typedef int (*hb_unc_model_fn)(const double *x, void *ctx, double *y);

typedef struct hb_unc_budget hb_unc_budget; /* inputs, correlation matrix, scratch: reuse it */

hb_unc_budget *hb_unc_new(void);
void hb_unc_free(hb_unc_budget *b);
/* Forget the inputs, correlations and model; keep the allocations. */
void hb_unc_reset(hb_unc_budget *b);
const char *hb_unc_error(const hb_unc_budget *b); /* why the last call failed */

/* Adds an input; returns its index (>= 0) or a negative hb_status. c = NAN:
 * computed from the model (hb_unc_set_model) by central differences.
 * dof = INFINITY for an exactly known u (most Type B inputs). */
int hb_unc_add(hb_unc_budget *b, const char *name, hb_unc_type type, double value, double u, double c,
	       double dof);
/* r(x_i, x_j) in [-1, 1] (GUM 5.2.2); omitted pairs are uncorrelated. */
int hb_unc_set_correlation(hb_unc_budget *b, size_t i, size_t j, double r);
/* Unit and source text of input i for the budget table; either may be NULL. */
int hb_unc_describe(hb_unc_budget *b, size_t i, const char *unit, const char *source);
int hb_unc_set_model(hb_unc_budget *b, hb_unc_model_fn model, void *ctx);
size_t hb_unc_count(const hb_unc_budget *b);
const hb_unc_input *hb_unc_input_at(const hb_unc_budget *b, size_t i); /* NULL past the end */

/* p = 0 -> HB_UNC_P_K2. HB_ERR_ARG (no inputs, a c_i NAN without a model,
 * p outside (0, 1)), HB_ERR_DATA (the model failed at or near the estimates,
 * or correlations not positive semi-definite). */
int hb_unc_evaluate(hb_unc_budget *b, double p, hb_unc_result *out);

/* k = t_p(dof) two-sided (GUM G.3.4); the normal quantile when dof is infinite. NAN on bad input. */
double hb_unc_coverage_factor(double dof, double p);
/* Type A degrees of freedom of a mean of n observations: n - 1 (GUM G.3.3). */
double hb_unc_dof_type_a(size_t n);
/* Type B: nu = 1/2 (Delta u / u)^-2 from the relative uncertainty of the
 * uncertainty (GUM G.4.2); 0 -> INFINITY. */
double hb_unc_dof_type_b(double rel_unc_of_u);
/* Standard uncertainty of a half-width a (GUM 4.3.7, 4.3.9, F.2.3.3) and of
 * an expanded uncertainty stated with its coverage factor (GUM 4.3.3). */
double hb_unc_rectangular(double a);  /* a / sqrt(3) */
double hb_unc_triangular(double a);   /* a / sqrt(6) */
double hb_unc_arcsine(double a);      /* a / sqrt(2): a cyclic (sinusoidal) variation */
double hb_unc_normal(double U, double k); /* U / k */

/* DC resistance R_T measured at temperature T referred to T_ref:
 * R_ref = R_T / (1 + alpha (T - T_ref)), alpha the coefficient AT T_ref. */
double hb_unc_dcr_refer(double R_T, double T, double T_ref, double alpha);
/* A coefficient given at 20 C moved to T_ref: alpha20 / (1 + alpha20 (T_ref - 20)). */
double hb_unc_alpha_at(double alpha20, double T_ref);

typedef struct hb_unc_dcr {
	double R_T, u_R, dof_R;  /* measured resistance, its standard uncertainty and dof */
	double T, u_T, dof_T;    /* part (or ambient) temperature, C */
	double T_ref;            /* reference temperature, C, exact */
	double alpha20, u_alpha; /* coefficient at 20 C and its standard uncertainty, 1/K */
} hb_unc_dcr;

/* Fills b (reset first) with the inputs "R_T" (ohm), "T" (C), "alpha" (1/K),
 * all Type B (specifications; give dof from hb_unc_dof_type_b or INFINITY),
 * and the referral model, and evaluates it: out->y is R at T_ref. */
int hb_unc_dcr_budget(hb_unc_budget *b, const hb_unc_dcr *in, double p, hb_unc_result *out);

/* ------------------------------------------------------------------ */
/* 8. Core shapes (IEC 60205) and gap placement: fit/shapes.c, fit/design.c */
/* ------------------------------------------------------------------ */

/* Mated core sets; dimensions by the letters of the IEC dimension
 * standards (IEC 61246, IEC 62317 and IEC 63093 families): A overall
 * width or outer diameter, B height of one half, C depth, D window height
 * of one half, E window width or diameter, F centre leg width or diameter,
 * F2 centre leg depth (EFD), G opening or slot width, H centre hole, J and
 * L the PQ/RM outline, K centre leg offset, q chamfer, B2 thickness of an I. */
typedef enum hb_core_shape {
	HB_SHAPE_E = 0, HB_SHAPE_EI, HB_SHAPE_ETD, HB_SHAPE_EFD, HB_SHAPE_EP, HB_SHAPE_PQ, HB_SHAPE_RM, HB_SHAPE_P,
	HB_SHAPE_U, HB_SHAPE_UI, HB_SHAPE_N
} hb_core_shape;

enum {
	HB_DIM_A = 0, HB_DIM_B, HB_DIM_B2, HB_DIM_C, HB_DIM_D, HB_DIM_E, HB_DIM_F, HB_DIM_F2, HB_DIM_G, HB_DIM_H,
	HB_DIM_J, HB_DIM_K, HB_DIM_L, HB_DIM_q, HB_DIM_TYPE, HB_DIM_N
};

typedef struct hb_core_dims {
	double v[HB_DIM_N]; /* m (HB_DIM_TYPE: the RM outline 1..4); NAN = not given */
} hb_core_dims;

void hb_core_dims_init(hb_core_dims *d);
const char *hb_core_dim_name(int i);     /* "A", "F2", "q", "type"; NULL past the end */
int hb_core_dim_index(const char *name); /* -1 if unknown (case matters: q is not Q) */
/* "e", "ei", "etd" (also "er"), "efd", "ep", "pq", "rm", "p" (also "pot"), "u", "ui"; any case */
int hb_core_shape_parse(const char *name, hb_core_shape *out);
const char *hb_core_shape_name(hb_core_shape s);
const char *hb_core_shape_letters(hb_core_shape s);  /* required letters, space separated */
const char *hb_core_shape_optional(hb_core_shape s); /* optional letters */
const char *hb_core_shape_about(hb_core_shape s);

typedef struct hb_core_shape_result {
	hb_core_shape shape;    /* HB_SHAPE_N: from Ae/le typed by hand */
	hb_core_effective eff;  /* C1, C2, le, Ae, Ve of the set */
	double Amin;            /* smallest section of the set, m^2 */
	double window_height;   /* the set's full window height (G of the fringing correction), m */
	double A_centre;        /* section of the leg a ground gap is cut in (one leg of a U), m^2 */
	double A_outer;         /* the return legs together, m^2; NAN when unknown */
	int n_outer;            /* return legs the flux splits into (fringing per leg) */
} hb_core_shape_result;

/* HB_OK or HB_ERR_ARG with a one-line reason in err. */
int hb_core_shape_eval(hb_core_shape s, const hb_core_dims *d, hb_core_shape_result *out, char *err, size_t errlen);
/* "A=42.15mm,B=21mm,..." (SI prefixes, a bare number in metres; "type=3"
 * for the RM outline) and back (lengths in mm). HB_ERR_ARG with a
 * one-line reason naming the value and the accepted range. */
int hb_core_dims_parse(const char *text, hb_core_dims *d, char *err, size_t errlen);
int hb_core_dims_format(const hb_core_dims *d, char *buf, size_t cap);
/* A result for a core known only by Ae, le and window (a centre gap only). */
void hb_core_shape_from_effective(double Ae, double le, double window_height, hb_core_shape_result *out);

/* Ground gap in the centre leg, or a spacer of thickness t under every
 * leg (an E pair's flux then crosses t twice: centre leg and outer legs
 * in series). */
typedef enum hb_gap_place { HB_GAP_CENTRE = 0, HB_GAP_SPACER = 1 } hb_gap_place;
const char *hb_gap_place_name(hb_gap_place p); /* "centre", "spacer" */
int hb_gap_place_parse(const char *text, hb_gap_place *out); /* "centre" ("center"), "spacer" */

/* The effective gap g of the core model (a gap of section Ae with the
 * reluctance of the physical one(s), fringing by McLyman per leg with the
 * window height) of a physical gap t; NAN on bad input. */
double hb_core_gap_effective(const hb_core_shape_result *r, hb_gap_place place, double t);
/* Its inverse: the physical t whose effective gap is g_eff. */
int hb_core_gap_physical(const hb_core_shape_result *r, hb_gap_place place, double g_eff, double *t);

/* The design inverse (fit/design.c): with turns > 0 fixed, the physical
 * gap at `place` that gives target_L at `current`; with turns <= 0, the
 * turns for the physical gap `gap`. Of the two roots the core's L(I)
 * allows it takes the one below the knee (largest gap, fewest turns).
 * u_c, U, k: GUM propagation of the fit's mu_i and Js (standard errors
 * and correlation) through the solution; the geometry is taken as exact. */
typedef struct hb_design_in {
	hb_core_law law;
	double mu_i, Js;            /* fitted */
	double u_mu_i, u_Js, r_mu_js; /* their standard uncertainties and correlation */
	double dof;                 /* degrees of freedom of the fit; <= 0: infinite */
	hb_core_shape_result core;  /* Ae, le, window, leg sections */
	hb_gap_place place;
	double target_L, current;   /* H, A */
	double turns;               /* > 0: fixed, solve the gap */
	double gap;                 /* physical, m: fixed when turns <= 0, solve the turns */
} hb_design_in;

typedef struct hb_design_out {
	bool solved_gap;            /* true: the gap was solved; false: the turns */
	double gap_eff, gap_phys;   /* m */
	double turns;
	double u_c, U, k, dof_eff;  /* of the solved quantity (gap_phys in m, or turns) */
	double L0, L_at, B_at;      /* the design's zero-bias L, L and B at the current */
	char why[160];              /* why there is no solution */
} hb_design_out;

/* HB_OK, HB_ERR_ARG (bad input), HB_ERR_DATA (the target cannot be
 * reached: why says how close it gets), HB_ERR_FIT. */
int hb_design_solve(const hb_design_in *in, hb_design_out *out);

#endif
