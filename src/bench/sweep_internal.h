/* src/bench/sweep_internal.h - what the sweep engine's files share: the signal flag and the read-back series maths */
#ifndef HB_SWEEP_INTERNAL_H
#define HB_SWEEP_INTERNAL_H

#include <signal.h>
#include <stdbool.h>
#include <stddef.h>

/* The first signal received (0: none); set by the handler, read by the
 * engine at every wait, cleared by hb_sweep_clear_signal(). */
extern volatile sig_atomic_t hb__sweep_pending_signal;

/* One supply read-back and when it was taken (mid-point of the query). */
typedef struct hb_rb_sample {
	double t, amps;
} hb_rb_sample;

/* Least-squares slope (A/s) of series[from .. n_series); *sxx_out gets the
 * spread of the times (for the slope's own noise). */
double hb_transient_slope(const hb_rb_sample *series, size_t from, size_t n_series, double *sxx_out);
/* First-order prediction of the final value of series[0 .. n): false when
 * the fit is not usable; *rms gets the residual spread. */
bool hb_transient_predict(const hb_rb_sample *series, size_t n, double tau, double *a_inf, double *rms);

#endif
