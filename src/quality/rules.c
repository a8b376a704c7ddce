/* src/quality/rules.c - ISO 2859-1 single sampling plans, capability statistics and part verdicts (no I/O) */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include <gsl/gsl_errno.h>
#include <gsl/gsl_statistics_double.h>

#include "../../common/hb_text.h"
#include "iso2859_tables.h"
#include "rules.h"

/*
 * Table I, sample size code letters: MIL-STD-105E Table I as given in the
 * project's verified reference data (sampling-tables-mil-std-105e.md,
 * section 3.1: four sources and a scan of the standard agree on every cell;
 * ISO 2859-1 Table 1 and ANSI/ASQ Z1.4 Table I are the same).
 * Columns: S-1 S-2 S-3 S-4 I II III.
 */
static const struct {
	long max_lot;
	char letter[7];
} table1[] = {
	{ 8, { 'A', 'A', 'A', 'A', 'A', 'A', 'B' } },
	{ 15, { 'A', 'A', 'A', 'A', 'A', 'B', 'C' } },
	{ 25, { 'A', 'A', 'B', 'B', 'B', 'C', 'D' } },
	{ 50, { 'A', 'B', 'B', 'C', 'C', 'D', 'E' } },
	{ 90, { 'B', 'B', 'C', 'C', 'C', 'E', 'F' } },
	{ 150, { 'B', 'B', 'C', 'D', 'D', 'F', 'G' } },
	{ 280, { 'B', 'C', 'D', 'E', 'E', 'G', 'H' } },
	{ 500, { 'B', 'C', 'D', 'E', 'F', 'H', 'J' } },
	{ 1200, { 'C', 'C', 'E', 'F', 'G', 'J', 'K' } },
	{ 3200, { 'C', 'D', 'E', 'G', 'H', 'K', 'L' } },
	{ 10000, { 'C', 'D', 'F', 'G', 'J', 'L', 'M' } },
	{ 35000, { 'C', 'D', 'F', 'H', 'K', 'M', 'N' } },
	{ 150000, { 'D', 'E', 'G', 'J', 'L', 'N', 'P' } },
	{ 500000, { 'D', 'E', 'G', 'J', 'M', 'P', 'Q' } },
	{ -1, { 'D', 'E', 'H', 'K', 'N', 'Q', 'R' } }, /* 500 001 and over */
};

/* Row order of Tables II-A/B/C; S (3150) exists in the tightened table only. */
static const char letters[] = "ABCDEFGHJKLMNPQRS";
enum { N_ROWS = ISO2859_N_ROWS, N_ROWS_TIGHT = ISO2859_N_ROWS_TIGHT, N_AQL = ISO2859_N_AQL };

static const double aql_series[N_AQL] = {
	0.010, 0.015, 0.025, 0.040, 0.065, 0.10, 0.15, 0.25, 0.40, 0.65, 1.0, 1.5, 2.5,
	4.0, 6.5, 10, 15, 25, 40, 65, 100, 150, 250, 400, 650, 1000,
};

size_t hb_iso2859_aql_series(const double **series)
{
	if (series)
		*series = aql_series;
	return N_AQL;
}

int hb_iso2859_aql_index(double aql)
{
	if (!isfinite(aql) || aql <= 0)
		return -1;
	for (int i = 0; i < N_AQL; i++)
		if (fabs(aql - aql_series[i]) <= 1e-9 * aql_series[i])
			return i;
	return -1;
}

char *hb_iso2859_aql_format(double aql, char *buf, size_t cap)
{
	if (!buf || !cap)
		return buf;
	/* As the standard prints them: 0.010 ... 0.065 with three decimals,
	 * 0.10 ... 0.65 with two, 1.0 ... 6.5 with one, the rest as integers. */
	int decimals = aql < 0.1 - 1e-9 ? 3 : aql < 1 - 1e-9 ? 2 : aql < 10 - 1e-9 ? 1 : 0;
	snprintf(buf, cap, "%.*f", decimals, aql);
	return buf;
}

char *hb_iso2859_aql_series_text(char *buf, size_t cap)
{
	size_t used = 0;
	if (!buf || !cap)
		return buf;
	buf[0] = '\0';
	for (int i = 0; i < N_AQL && used < cap; i++) {
		char one[16];
		int w = snprintf(buf + used, cap - used, "%s%s", i ? ", " : "",
				 hb_iso2859_aql_format(aql_series[i], one, sizeof one));
		if (w < 0)
			break;
		used += (size_t)w;
	}
	return buf;
}

static const char *const level_names[] = { "S-1", "S-2", "S-3", "S-4", "I", "II", "III" };

const char *hb_iso2859_level_name(hb_insp_level level)
{
	if ((unsigned)level >= sizeof level_names / sizeof level_names[0])
		return "?";
	return level_names[level];
}

int hb_iso2859_parse_level(const char *text, hb_insp_level *level)
{
	if (!text || !level)
		return HB_ERR_ARG;
	for (size_t i = 0; i < sizeof level_names / sizeof level_names[0]; i++) {
		/* "S1" and "S-1" alike: the hyphen is often dropped on drawings. */
		const char *n = level_names[i];
		char compact[4] = { 0 };
		if (n[0] == 'S') {
			compact[0] = 'S';
			compact[1] = n[2];
		}
		if (strcasecmp(text, n) == 0 || (compact[0] && strcasecmp(text, compact) == 0)) {
			*level = (hb_insp_level)i;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

static const char *const severity_names[] = { "normal", "tightened", "reduced" };

const char *hb_iso2859_severity_name(hb_severity severity)
{
	if ((unsigned)severity >= 3)
		return "?";
	return severity_names[severity];
}

int hb_iso2859_parse_severity(const char *text, hb_severity *severity)
{
	if (!text || !severity)
		return HB_ERR_ARG;
	for (int i = 0; i < 3; i++) {
		if (strcasecmp(text, severity_names[i]) == 0) {
			*severity = (hb_severity)i;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

char hb_iso2859_code_letter(long lot_size, hb_insp_level level)
{
	if (lot_size < 2 || (unsigned)level > HB_LEVEL_III)
		return 0;
	for (size_t i = 0; i < sizeof table1 / sizeof table1[0]; i++)
		if (table1[i].max_lot < 0 || lot_size <= table1[i].max_lot)
			return table1[i].letter[level];
	return 0;
}

static int letter_row(char letter)
{
	const char *p = letter ? strchr(letters, letter) : NULL;
	return p ? (int)(p - letters) : -1;
}

static int table_rows(hb_severity severity)
{
	return severity == HB_SEVERITY_TIGHTENED ? N_ROWS_TIGHT : N_ROWS;
}

static const iso2859_cell *cell(hb_severity severity, int row, int col)
{
	switch (severity) {
	case HB_SEVERITY_NORMAL:
		return &iso2859_normal[row][col];
	case HB_SEVERITY_TIGHTENED:
		return &iso2859_tightened[row][col];
	case HB_SEVERITY_REDUCED:
		return &iso2859_reduced[row][col];
	}
	return &iso2859_normal[row][col];
}

long hb_iso2859_sample_size(char letter, hb_severity severity)
{
	int row = letter_row(letter);
	if (row < 0 || row >= table_rows(severity))
		return 0;
	switch (severity) {
	case HB_SEVERITY_NORMAL:
		return iso2859_size_normal[row];
	case HB_SEVERITY_TIGHTENED:
		return iso2859_size_tightened[row];
	case HB_SEVERITY_REDUCED:
		return iso2859_size_reduced[row];
	}
	return 0;
}

/* What `plan` says about a cell the reference leaves unsettled. */
static const char *uncertain_note(unsigned mark)
{
	if (mark & ISO2859_M_EDGE)
		return "the table's arrows run off its edge at this cell; the sources disagree on the plan "
		       "(MIL-STD-105E reference, cells A at AQL 10 and R at AQL 0.015)";
	if (mark & ISO2859_M_SROW)
		return "one source gives 0/1 here, three give the row-S plan 1/2 at n 3150 (kept)";
	if (mark & ISO2859_M_RE)
		return "Re of this reduced plan rests on one source and the table's pattern; another gives a larger Re";
	return NULL;
}

int hb_iso2859_tighter_ac(char letter, double aql)
{
	int row = letter_row(letter);
	int col = hb_iso2859_aql_index(aql);
	if (row < 0 || row >= N_ROWS || col <= 0)
		return -1;
	const iso2859_cell *c = &iso2859_normal[row][col - 1];
	return c->ac >= 0 ? c->ac : -1;
}

int hb_iso2859_plan(long lot_size, double aql, hb_insp_level level, hb_severity severity,
		    hb_sampling_plan *out, char *err, size_t errlen)
{
	if (!out)
		return hb_set_err(err, errlen, "no plan to fill");
	memset(out, 0, sizeof *out);
	if (lot_size < 2)
		return hb_set_err(err, errlen, "lot size %ld out of range (2 or more units)", lot_size);
	if ((unsigned)level > HB_LEVEL_III)
		return hb_set_err(err, errlen, "inspection level %d unknown (S-1, S-2, S-3, S-4, I, II, III)",
			       (int)level);
	if ((unsigned)severity > HB_SEVERITY_REDUCED)
		return hb_set_err(err, errlen, "severity %d unknown (normal, tightened, reduced)", (int)severity);
	int col = hb_iso2859_aql_index(aql);
	if (col < 0) {
		char series[200];
		return hb_set_err(err, errlen, "AQL %g is not in the ISO 2859-1 series (%s)", aql,
			       hb_iso2859_aql_series_text(series, sizeof series));
	}

	char initial = hb_iso2859_code_letter(lot_size, level);
	int row = letter_row(initial);
	const iso2859_cell *c = cell(severity, row, col);
	unsigned mark = c->mark;
	int arrow = 0;
	if (c->ac == ISO2859_DN || c->ac == ISO2859_UP) {
		arrow = c->ac == ISO2859_DN ? +1 : -1;
		int r = row + arrow;
		while (r >= 0 && r < table_rows(severity) && cell(severity, r, col)->ac < 0)
			r += arrow;
		if (r < 0 || r >= table_rows(severity) || cell(severity, r, col)->ac == ISO2859_NO)
			return hb_set_err(err, errlen, "no plan in the %s table for AQL %g, letter %c",
				       hb_iso2859_severity_name(severity), aql, initial);
		row = r;
		c = cell(severity, row, col);
		mark |= c->mark;
	}
	if (c->ac < 0 || c->re <= c->ac)
		return hb_set_err(err, errlen, "no plan in the %s table for AQL %g, letter %c",
			       hb_iso2859_severity_name(severity), aql, initial);

	out->lot_size = lot_size;
	out->aql = aql_series[col];
	out->level = level;
	out->severity = severity;
	out->initial_letter = initial;
	out->letter = letters[row];
	out->arrow = arrow;
	out->table_sample_size = hb_iso2859_sample_size(letters[row], severity);
	out->ac = c->ac;
	out->re = c->re;
	out->uncertain = (mark & ISO2859_M_UNCERTAIN) != 0;
	out->uncertain_note = out->uncertain ? uncertain_note(mark) : NULL;
	/* The footnote of Tables II-A/B/C: when the sample size equals or
	 * exceeds the lot, inspect the whole lot (with the same Ac/Re). */
	out->full_inspection = out->table_sample_size >= lot_size;
	out->sample_size = out->full_inspection ? lot_size : out->table_sample_size;
	return HB_OK;
}

int hb_lot_decide(const hb_sampling_plan *plan, long units_tested, long nonconforming,
		  hb_lot_decision *decision)
{
	if (!plan || !decision || units_tested < 0 || nonconforming < 0 ||
	    nonconforming > units_tested || plan->sample_size < 1 || plan->re <= plan->ac)
		return HB_ERR_ARG;
	if (nonconforming >= plan->re)
		*decision = HB_LOT_REJECT;
	else if (units_tested < plan->sample_size)
		*decision = HB_LOT_CONTINUE;
	else if (nonconforming <= plan->ac)
		*decision = HB_LOT_ACCEPT;
	else
		/* Ac < d < Re, only in a reduced plan with Re - Ac > 1: the lot is
		 * accepted, and normal inspection is reinstated from the next lot
		 * (MIL-STD-105E Table II-C note; ANSI/ASQ Z1.4 10.1.4). */
		*decision = HB_LOT_ACCEPT_REINSTATE;
	return HB_OK;
}

const char *hb_lot_decision_name(hb_lot_decision decision)
{
	switch (decision) {
	case HB_LOT_CONTINUE:
		return "continue";
	case HB_LOT_ACCEPT:
		return "accept";
	case HB_LOT_REJECT:
		return "reject";
	case HB_LOT_ACCEPT_REINSTATE:
		return "accept-reinstate-normal";
	}
	return "?";
}

/* ---------------- statistics ---------------- */

int hb_stats_compute(const double *values, size_t n, hb_stats *out)
{
	if (!out || (n && !values))
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	out->mean = out->stddev = out->min = out->max = NAN;
	double *finite = n ? malloc(n * sizeof *finite) : NULL;
	if (n && !finite)
		return HB_ERR_NOMEM;
	size_t m = 0;
	for (size_t i = 0; i < n; i++) {
		if (isfinite(values[i]))
			finite[m++] = values[i];
	}
	out->n = m;
	out->n_missing = n - m;
	if (m == 0) {
		free(finite);
		return HB_ERR_DATA;
	}
	out->mean = gsl_stats_mean(finite, 1, m);
	out->stddev = m >= 2 ? gsl_stats_sd_m(finite, 1, m, out->mean) : NAN;
	gsl_stats_minmax(&out->min, &out->max, finite, 1, m);
	free(finite);
	return HB_OK;
}

int hb_capability(const hb_stats *stats, double lsl, double usl, double *cp, double *cpk)
{
	if (!stats)
		return HB_ERR_ARG;
	if (cp)
		*cp = NAN;
	if (cpk)
		*cpk = NAN;
	bool has_l = isfinite(lsl), has_u = isfinite(usl);
	if ((!has_l && !has_u) || (has_l && has_u && lsl >= usl))
		return HB_ERR_ARG;
	if (stats->n < 2 || !isfinite(stats->stddev) || stats->stddev <= 0)
		return HB_ERR_DATA;
	double s = stats->stddev, m = stats->mean;
	double k;
	if (has_l && has_u)
		k = fmin(usl - m, m - lsl);
	else if (has_u)
		k = usl - m;
	else
		k = m - lsl;
	if (cpk)
		*cpk = k / (3 * s);
	if (cp && has_l && has_u)
		*cp = (usl - lsl) / (6 * s);
	return HB_OK;
}

/* ---------------- verdicts ---------------- */

/* Slack for limits that arrive through nominal * (1 +/- tol). */
static const double limit_slack = 1e-12;

static bool at_or_above(double v, double limit)
{
	return v >= limit - limit_slack * fabs(limit);
}

static bool at_or_below(double v, double limit)
{
	return v <= limit + limit_slack * fabs(limit);
}

hb_check hb_verdict_limits(double measured, double low, double high)
{
	hb_check c = { .measured = measured, .low = low, .high = high,
		       .outcome = HB_OUTCOME_NOT_TESTED, .margin = NAN, .margin_frac = NAN };
	if (!isfinite(measured))
		return c;
	bool has_l = isfinite(low), has_h = isfinite(high);
	bool ok = (!has_l || at_or_above(measured, low)) && (!has_h || at_or_below(measured, high));
	double m_low = has_l ? measured - low : INFINITY;
	double m_high = has_h ? high - measured : INFINITY;
	/* With no limit at all there is nothing to fail; report it untested so
	 * a check without a spec can never count as a pass. */
	if (!has_l && !has_h)
		return c;
	c.outcome = ok ? HB_OUTCOME_PASS : HB_OUTCOME_FAIL;
	double limit = m_low <= m_high ? low : high;
	c.margin = fmin(m_low, m_high);
	if (ok && c.margin < 0)
		c.margin = 0; /* inside the rounding slack: on the limit */
	if (limit != 0)
		c.margin_frac = c.margin / fabs(limit);
	return c;
}

hb_check hb_verdict_tolerance(double measured, double nominal, double tol_frac)
{
	if (!isfinite(nominal) || !isfinite(tol_frac) || tol_frac < 0)
		return hb_verdict_limits(NAN, NAN, NAN);
	double a = nominal * (1 - tol_frac), b = nominal * (1 + tol_frac);
	return hb_verdict_limits(measured, fmin(a, b), fmax(a, b));
}

hb_check hb_verdict_min(double measured, double min)
{
	return hb_verdict_limits(measured, min, NAN);
}

hb_check hb_verdict_max(double measured, double max)
{
	return hb_verdict_limits(measured, NAN, max);
}

hb_overall hb_verdict_overall(const hb_check *checks, size_t n)
{
	bool untested = n == 0 || !checks;
	for (size_t i = 0; checks && i < n; i++) {
		if (checks[i].outcome == HB_OUTCOME_FAIL)
			return HB_OVERALL_FAIL;
		if (checks[i].outcome != HB_OUTCOME_PASS)
			untested = true;
	}
	return untested ? HB_OVERALL_INCOMPLETE : HB_OVERALL_PASS;
}

const char *hb_outcome_name(hb_outcome outcome)
{
	switch (outcome) {
	case HB_OUTCOME_NOT_TESTED:
		return "not-tested";
	case HB_OUTCOME_PASS:
		return "pass";
	case HB_OUTCOME_FAIL:
		return "fail";
	}
	return "?";
}

const char *hb_overall_name(hb_overall overall)
{
	switch (overall) {
	case HB_OVERALL_PASS:
		return "pass";
	case HB_OVERALL_FAIL:
		return "fail";
	case HB_OVERALL_INCOMPLETE:
		return "incomplete";
	case HB_OVERALL_CONDITIONAL:
		return "conditional";
	}
	return "?";
}
