/* src/quality/history.c - a part's measured history summarised: per-lot statistics, capability, the trend across lots */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "history.h"

/* ---------------- summaries ---------------- */

static int sat_column(const hb_db_part *part, const int drop_percent[HB_DB_HISTORY_DROPS])
{
	if (isfinite(part->sat_drop))
		for (int i = 0; i < HB_DB_HISTORY_DROPS; i++)
			if (fabs(part->sat_drop * 100 - drop_percent[i]) < 0.5)
				return i;
	return HB_DB_HISTORY_DROPS - 1;
}

static int find_lot(const hb_history_summary *s, const char *code)
{
	for (size_t i = 0; i < s->n_lots; i++)
		if (strcmp(s->lots[i].lot_code, code) == 0)
			return (int)i;
	return -1;
}

static int lot_trend_order(const void *a, const void *b)
{
	const hb_history_lot *x = a, *y = b;
	/* Units without a lot are no supplier's delivery: list them last. */
	if (!x->lot_code[0] != !y->lot_code[0])
		return x->lot_code[0] ? -1 : 1;
	return (x->first_started > y->first_started) - (x->first_started < y->first_started);
}

static int drift_direction(const double *means, size_t n)
{
	if (n < 3)
		return 0;
	int dir = means[1] > means[0] ? 1 : means[1] < means[0] ? -1 : 0;
	for (size_t i = 2; i < n && dir; i++)
		if ((means[i] - means[i - 1]) * dir <= 0)
			dir = 0;
	return dir;
}

int hb_history_summarise(const hb_db_part *part, const hb_db_history_row *rows, size_t n,
			 const int drop_percent[HB_DB_HISTORY_DROPS], hb_history_summary *out)
{
	memset(out, 0, sizeof *out);
	out->sat_drop_index = sat_column(part, drop_percent);
	out->sat_drop_percent = drop_percent[out->sat_drop_index];
	double *l0 = malloc(sizeof *l0 * (n ? n : 1));
	double *isat = malloc(sizeof *isat * (n ? n : 1));
	double *l0_means = malloc(sizeof *l0_means * (n ? n : 1));
	double *isat_means = malloc(sizeof *isat_means * (n ? n : 1));
	out->lots = calloc(n ? n : 1, sizeof *out->lots);
	if (!l0 || !isat || !l0_means || !isat_means || !out->lots) {
		free(l0);
		free(isat);
		free(l0_means);
		free(isat_means);
		hb_history_summary_free(out);
		return HB_ERR_NOMEM;
	}
	for (size_t i = 0; i < n; i++) {
		int k = find_lot(out, rows[i].lot_code);
		if (k < 0) {
			k = (int)out->n_lots++;
			hb_history_lot *lot = &out->lots[k];
			snprintf(lot->lot_code, sizeof lot->lot_code, "%s", rows[i].lot_code);
			lot->first_started = rows[i].started;
			snprintf(lot->first_iso, sizeof lot->first_iso, "%s", rows[i].started_iso);
		}
		hb_history_lot *lot = &out->lots[k];
		if (rows[i].started < lot->first_started) {
			lot->first_started = rows[i].started;
			snprintf(lot->first_iso, sizeof lot->first_iso, "%s", rows[i].started_iso);
		}
		snprintf(lot->last_iso, sizeof lot->last_iso, "%s", rows[i].started_iso);
		lot->n_units++;
		if (rows[i].verdict == HB_DB_PASS)
			lot->n_pass++;
		else if (rows[i].verdict == HB_DB_FAIL)
			lot->n_fail++;
		else
			lot->n_not_tested++;
	}
	qsort(out->lots, out->n_lots, sizeof *out->lots, lot_trend_order);
	double lsl = NAN, usl = NAN;
	if (isfinite(part->nominal_h) && isfinite(part->tolerance) && part->tolerance > 0) {
		lsl = part->nominal_h * (1 - part->tolerance);
		usl = part->nominal_h * (1 + part->tolerance);
	}
	size_t n_l0_means = 0, n_isat_means = 0;
	const hb_history_lot *first = NULL;
	for (size_t k = 0; k < out->n_lots; k++) {
		hb_history_lot *lot = &out->lots[k];
		size_t m = 0;
		for (size_t i = 0; i < n; i++)
			if (strcmp(rows[i].lot_code, lot->lot_code) == 0) {
				l0[m] = rows[i].l0_h;
				isat[m] = rows[i].i_drop_a[out->sat_drop_index];
				m++;
			}
		/* A lot with no finite value keeps n = 0 and NaN statistics. */
		if (hb_stats_compute(l0, m, &lot->l0) != HB_OK) {
			memset(&lot->l0, 0, sizeof lot->l0);
			lot->l0.n_missing = m;
			lot->l0.mean = lot->l0.stddev = lot->l0.min = lot->l0.max = NAN;
		}
		if (hb_stats_compute(isat, m, &lot->isat) != HB_OK) {
			memset(&lot->isat, 0, sizeof lot->isat);
			lot->isat.n_missing = m;
			lot->isat.mean = lot->isat.stddev = lot->isat.min = lot->isat.max = NAN;
		}
		lot->cp = lot->cpk = NAN;
		if (lot->l0.n >= 2 && isfinite(lsl) &&
		    hb_capability(&lot->l0, lsl, usl, &lot->cp, &lot->cpk) != HB_OK)
			lot->cp = lot->cpk = NAN;
		/* a mean on a limit gives -0.0: printed it would read "-0.00" */
		if (lot->cpk == 0)
			lot->cpk = 0;
		hb_cpk_confidence(lot->cpk, lot->l0.n, 0.95, &lot->cpk_ci);
		lot->l0_change_h = lot->l0_change_rel = lot->isat_change_a = lot->isat_change_rel = NAN;
		if (!lot->lot_code[0] || lot->l0.n == 0)
			continue;
		out->n_trend_lots++;
		if (!first) {
			first = lot;
		} else {
			lot->l0_change_h = lot->l0.mean - first->l0.mean;
			lot->l0_change_rel = lot->l0_change_h / first->l0.mean;
			/* A third of the tolerance half-width: the common-practice
			 * point at which a mean shift eats visibly into the margin. */
			if (isfinite(lsl) && fabs(lot->l0_change_h) > (usl - lsl) / 6)
				lot->l0_shift = true;
			if (lot->isat.n > 0 && first->isat.n > 0) {
				lot->isat_change_a = lot->isat.mean - first->isat.mean;
				lot->isat_change_rel = lot->isat_change_a / first->isat.mean;
				lot->isat_shift = fabs(lot->isat_change_rel) > 0.10;
			}
		}
		out->l0_shift |= lot->l0_shift;
		out->isat_shift |= lot->isat_shift;
		l0_means[n_l0_means++] = lot->l0.mean;
		if (lot->isat.n > 0)
			isat_means[n_isat_means++] = lot->isat.mean;
	}
	out->l0_drift = drift_direction(l0_means, n_l0_means);
	out->isat_drift = drift_direction(isat_means, n_isat_means);
	free(l0);
	free(isat);
	free(l0_means);
	free(isat_means);
	return HB_OK;
}

void hb_history_summary_free(hb_history_summary *s)
{
	if (!s)
		return;
	free(s->lots);
	s->lots = NULL;
	s->n_lots = 0;
}

static json_t *num_or_null(double v)
{
	return isfinite(v) ? json_real(v) : json_null();
}

json_t *hb_history_cpk_json(const hb_history_lot *lot)
{
	const hb_cpk_interval *ci = &lot->cpk_ci;
	json_t *o = json_object();
	json_object_set_new(o, "Cpk", num_or_null(lot->cpk));
	json_object_set_new(o, "Cpk_lower", num_or_null(ci->lower));
	json_object_set_new(o, "Cpk_upper", num_or_null(ci->upper));
	json_object_set_new(o, "confidence", json_real(0.95));
	json_object_set_new(o, "n", json_integer((json_int_t)lot->l0.n));
	json_object_set_new(o, "small_sample", json_boolean(lot->l0.n < HB_CPK_MIN_N));
	if (lot->l0.n < HB_CPK_MIN_N) {
		char w[96];
		snprintf(w, sizeof w, "n = %zu < %d: the interval is wide and the normal approximation rough", lot->l0.n,
			 HB_CPK_MIN_N);
		json_object_set_new(o, "warning", json_string(w));
	}
	json_object_set_new(o, "method", json_string("Bissell (1990) normal approximation"));
	return o;
}

char *hb_cpk_text(double cpk, size_t n, char *buf, size_t cap)
{
	if (!buf || !cap)
		return buf;
	if (!isfinite(cpk)) {
		snprintf(buf, cap, "-");
		return buf;
	}
	hb_cpk_interval ci;
	hb_cpk_confidence(cpk, n, 0.95, &ci);
	size_t len = (size_t)snprintf(buf, cap, "%.2f", hb_cpk_unsigned_zero(cpk, 2));
	if (len < cap && isfinite(ci.lower))
		len += (size_t)snprintf(buf + len, cap - len, " (95 %%: %.2f to %.2f%s", hb_cpk_unsigned_zero(ci.lower, 2),
					hb_cpk_unsigned_zero(ci.upper, 2), n < HB_CPK_MIN_N ? "" : ")");
	if (len < cap && isfinite(ci.lower) && n < HB_CPK_MIN_N)
		snprintf(buf + len, cap - len, "; n = %zu < %d, rough)", n, HB_CPK_MIN_N);
	return buf;
}

char *hb_history_cpk_text(const hb_history_lot *lot, char *buf, size_t cap)
{
	return hb_cpk_text(lot->cpk, lot->l0.n, buf, cap);
}
