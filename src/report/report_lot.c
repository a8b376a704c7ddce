/* src/report/report_lot.c - the filed record of one inspected lot: plan, sample, decision, statistics, histogram */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../fit/hb_fit.h"
#include "../quality/quality.h"
#include "../../common/hb_text.h"
#include "html.h"
#include "plot.h"
#include "report.h"
#include "report_internal.h"


/* ---------------- lot report ---------------- */

int hb_report_find_lot(hb_db *db, const char *part_number, const char *lot_code, hb_db_lot *lot, char *err,
		       size_t errlen)
{
	hb_db_lot_init(lot);
	if (part_number) {
		hb_db_part p;
		int rc = hb_db_part_get(db, part_number, &p);
		if (rc != HB_OK) {
			hb_set_err(err, errlen, "part '%s' is not in the store", part_number);
			return rc;
		}
		rc = hb_db_lot_find(db, p.id, lot_code, lot);
		if (rc != HB_OK)
			hb_set_err(err, errlen, "part %s has no lot '%s'", part_number, lot_code);
		return rc;
	}
	hb_db_part *parts = NULL;
	size_t np = 0;
	int rc = hb_db_part_list(db, &parts, &np);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
		return rc;
	}
	int found = 0;
	for (size_t i = 0; i < np; i++) {
		hb_db_lot l;
		if (hb_db_lot_find(db, parts[i].id, lot_code, &l) == HB_OK) {
			if (found++ == 0)
				*lot = l;
		}
	}
	hb_db_parts_free(parts);
	if (found == 0) {
		hb_set_err(err, errlen, "no lot '%s' in the store", lot_code);
		return HB_ERR_NOTFOUND;
	}
	if (found > 1) {
		hb_set_err(err, errlen, "lot code '%s' is used by %d parts: name one with --part", lot_code, found);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static const hb_db_verdict *verdict_find(const hb_db_verdict *v, size_t n, const char *check)
{
	for (size_t i = 0; i < n; i++)
		if (strcmp(v[i].check_name, check) == 0)
			return &v[i];
	return NULL;
}

void rpt_stats_row(hb_html *h, const char *name, const double *vals, size_t n, double lsl, double usl,
		      const char *unit)
{
	hb_stats st;
	char c[8][40];
	snprintf(c[0], sizeof c[0], "%s", name);
	if (hb_stats_compute(vals, n, &st) != HB_OK) {
		const char *cells[9] = { c[0], "0", "-", "-", "-", "-", "-", "-", "no finite values" };
		hb_html_table_row(h, cells, 9);
		return;
	}
	double cp = NAN, cpk = NAN;
	const char *why = "";
	if (!isfinite(lsl) && !isfinite(usl))
		why = "no limits";
	else if (hb_capability(&st, lsl, usl, &cp, &cpk) != HB_OK)
		why = st.n < 2 ? "needs 2 or more units" : "no spread";
	snprintf(c[1], sizeof c[1], "%zu", st.n);
	char cpb[24], cpkb[96];
	snprintf(cpb, sizeof cpb, isfinite(cp) ? "%.2f" : "-", cp);
	/* Cpk with its Bissell interval and the small-sample warning, never "-0.00" */
	hb_cpk_text(cpk, st.n, cpkb, sizeof cpkb);
	char limits[96], lo[40], hi[40];
	snprintf(limits, sizeof limits, "%s .. %s%s%s", rpt_si(lo, sizeof lo, lsl, unit, 4), rpt_si(hi, sizeof hi, usl, unit, 4),
		 *why ? "; " : "", why);
	const char *cells[9] = { c[0], c[1], rpt_si(c[2], sizeof c[2], st.mean, unit, 5), rpt_si(c[3], sizeof c[3], st.stddev, unit, 3),
				 rpt_si(c[4], sizeof c[4], st.min, unit, 5), rpt_si(c[5], sizeof c[5], st.max, unit, 5), cpb, cpkb,
				 limits };
	hb_html_table_row(h, cells, 9);
}

const char *const rpt_stats_head[] = { "Quantity", "n", "Mean", "Std. deviation (n-1)", "Min", "Max", "Cp",
					  "Cpk (95 % interval)",
					  "Limits" };

/* Sample records recorded again are kept (append-only, docs/store.md): the
 * earlier ones are listed under the records in force. */
static void superseded_table(hb_html *h, hb_db *db, int64_t lot_id)
{
	hb_db_inspection *all = NULL;
	size_t n = 0, old = 0;
	if (hb_db_inspection_list_all(db, lot_id, &all, &n) != HB_OK)
		return;
	for (size_t i = 0; i < n; i++)
		old += all[i].superseded_by != 0;
	if (old > 0) {
		static const char *const head[] = { "#", "Serial", "Sweep", "Result", "Recorded", "Operator",
						    "Superseded by record", "Note" };
		hb_html_table_begin(h, "Superseded records: sample positions recorded again; kept as recorded, "
				    "not counted in the tally", head, 8);
		for (size_t i = 0; i < n; i++) {
			const hb_db_inspection *r = &all[i];
			if (!r->superseded_by)
				continue;
			char seq[16], sw[24], by[24];
			snprintf(seq, sizeof seq, "%d", r->sequence);
			snprintf(sw, sizeof sw, r->sweep_id > 0 ? "%lld" : "-", (long long)r->sweep_id);
			snprintf(by, sizeof by, "%lld", (long long)r->superseded_by);
			const char *cells[8] = { seq, rpt_or_dash(r->serial), sw, hb_db_outcome_name(r->outcome),
						 rpt_or_dash(r->at_iso), rpt_or_dash(r->operator_name), by, rpt_or_dash(r->note) };
			hb_html_table_row(h, cells, 8);
		}
		hb_html_table_end(h);
	}
	hb_db_inspections_free(all);
}

int hb_report_lot(hb_db *db, const char *part_number, const char *lot_code, FILE *out, char *err, size_t errlen)
{
	hb_db_lot lot;
	int rc = hb_report_find_lot(db, part_number, lot_code, &lot, err, errlen);
	if (rc != HB_OK)
		return rc;
	hb_db_part part;
	rc = hb_db_part_get_id(db, lot.part_id, &part);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "lot %s: %s", lot_code, hb_db_errmsg(db));
		return rc;
	}
	hb_db_inspection *recs = NULL;
	size_t nr = 0;
	rc = hb_db_inspection_list(db, lot.id, &recs, &nr);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "lot %s: %s", lot_code, hb_db_errmsg(db));
		return rc;
	}
	double *l0 = calloc(nr ? nr : 1, sizeof *l0), *dcr = calloc(nr ? nr : 1, sizeof *dcr);
	hb_db_fit *fit = calloc(1, sizeof *fit);
	hb_html *h = NULL;
	if (!l0 || !dcr || !fit) {
		rc = HB_ERR_NOMEM;
		hb_set_err(err, errlen, "out of memory");
		goto out;
	}
	char title[200], subtitle[300], line[400], a[48];
	snprintf(title, sizeof title, "Lot inspection record: lot %s of %s", lot.lot_code, part.part_number);
	snprintf(subtitle, sizeof subtitle, "Single sampling by ISO 2859-1; decision: %s%s%s",
		 hb_db_lot_decision_name(lot.decision), lot.decided[0] ? ", " : "", lot.decided);
	h = rpt_html_open(out, title, subtitle);
	if (!h) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	rpt_part_section(h, &part);

	hb_html_section_begin(h, "Lot and sampling plan");
	hb_html_verdict(h, "Lot decision:",
			lot.decision == HB_DB_LOT_ACCEPT ? "accept" : lot.decision == HB_DB_LOT_REJECT ? "reject" : "open");
	hb_html_kv_begin(h, NULL);
	hb_html_kv_row(h, "Lot code", lot.lot_code);
	snprintf(line, sizeof line, lot.lot_size > 0 ? "%ld units" : "not given", lot.lot_size);
	hb_html_kv_row(h, "Lot size", line);
	char aql[24];
	hb_html_kv_row(h, "AQL (% nonconforming)", isfinite(lot.aql) ? hb_iso2859_aql_format(lot.aql, aql, sizeof aql) : "-");
	snprintf(line, sizeof line, "%s, %s inspection", rpt_or_dash(lot.inspection_level), rpt_or_dash(lot.severity));
	hb_html_kv_row(h, "Inspection level and severity", line);
	if (lot.sample_size > 0)
		snprintf(line, sizeof line, "code letter %s: sample n = %ld, accept with Ac = %ld, reject with Re = %ld "
			 "nonconforming units", rpt_or_dash(lot.code_letter), lot.sample_size, lot.accept_number, lot.reject_number);
	else
		snprintf(line, sizeof line, "no plan recorded");
	hb_html_kv_row(h, "Sampling plan", line);
	{
		/* The lot stream's part of the record: who delivered the lot, and
		 * a reduced lot accepted inside Ac < d < Re (normal reinstated). */
		char supplier[HB_DB_ID_LEN] = "";
		bool irregular = false;
		if (hb_db_lot_get_stream(db, lot.id, supplier, sizeof supplier, &irregular) == HB_OK) {
			hb_html_kv_row(h, "Supplier", supplier[0] ? supplier : "not named");
			if (irregular)
				hb_html_kv_row(h, "Production", "irregular or delayed (stated at inspection)");
		}
		long d = 0;
		for (size_t i = 0; i < nr; i++)
			d += recs[i].outcome == HB_DB_FAIL;
		if (lot.decision == HB_DB_LOT_ACCEPT && strcmp(lot.severity, "reduced") == 0 && d > lot.accept_number &&
		    d < lot.reject_number)
			hb_html_kv_row(h, "Switching", "accepted with Ac < d < Re on reduced inspection: normal inspection is "
						     "reinstated from the next lot (MIL-STD-105E Table II-C)");
	}
	hb_html_kv_row(h, "Opened", rpt_or_dash(lot.created));
	hb_html_kv_row(h, "Decided", rpt_or_dash(lot.decided));
	int passed = 0, failed = 0, skipped = 0, cond = 0, cond_nc = 0;
	for (size_t i = 0; i < nr; i++) {
		if (recs[i].outcome == HB_DB_PASS)
			passed++;
		else if (recs[i].outcome == HB_DB_FAIL)
			failed++;
		else if (recs[i].outcome == HB_DB_SKIPPED)
			skipped++;
		if (recs[i].conditional && recs[i].outcome != HB_DB_SKIPPED) {
			cond++;
			cond_nc += recs[i].outcome == HB_DB_FAIL;
		}
	}
	/* conditional units (a rule with a guard band) shown apart: the plan's policy counted them */
	snprintf(line, sizeof line, "%d tested: %d conforming, %d nonconforming; %d skipped; %d conditional (%d of them "
		 "counted nonconforming)", passed + failed, passed, failed, skipped, cond, cond_nc);
	hb_html_kv_row(h, "Tally", line);
	hb_html_kv_end(h);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Sample units");
	static const char *const head[] = { "#", "Serial", "Sweep", "Fit", "L0", "L0 margin", "Lsat", "DCR", "Unit result",
					    "Recorded", "Note" };
	hb_html_table_begin(h, "Each sample position with the sweep and fit its figures come from.", head, 11);
	size_t nl = 0, ndcr = 0;
	for (size_t i = 0; i < nr; i++) {
		const hb_db_inspection *r = &recs[i];
		char seq[16], sw[24], fi[24], l0s[40], mg[24];
		const char *lsat = "-", *dcrs = "-";
		snprintf(seq, sizeof seq, "%d", r->sequence);
		snprintf(sw, sizeof sw, r->sweep_id > 0 ? "%lld" : "-", (long long)r->sweep_id);
		snprintf(fi, sizeof fi, "-");
		snprintf(l0s, sizeof l0s, "-");
		snprintf(mg, sizeof mg, "-");
		hb_db_verdict *v = NULL;
		size_t nv = 0;
		if (r->sweep_id > 0) {
			hb_db_fit_init(fit);
			if (hb_db_fit_get_latest(db, r->sweep_id, NULL, fit) == HB_OK) {
				snprintf(fi, sizeof fi, "%lld", (long long)fit->id);
				for (size_t k = 0; k < fit->n_values; k++) {
					if (strcmp(fit->values[k].name, HB_DB_FV_L0) == 0) {
						rpt_si(l0s, sizeof l0s, fit->values[k].value, "H", 5);
						if (r->outcome != HB_DB_SKIPPED)
							l0[nl++] = fit->values[k].value;
					} else if (strcmp(fit->values[k].name, "DCR") == 0 && r->outcome != HB_DB_SKIPPED) {
						dcr[ndcr++] = fit->values[k].value;
					}
				}
			}
			if (hb_db_verdict_list(db, r->sweep_id, &v, &nv) == HB_OK) {
				const hb_db_verdict *x = verdict_find(v, nv, "L0");
				if (x)
					rpt_pct(mg, sizeof mg, x->margin);
				x = verdict_find(v, nv, "Lsat");
				if (x)
					lsat = hb_db_outcome_name(x->outcome);
				x = verdict_find(v, nv, "DCR");
				if (x)
					dcrs = hb_db_outcome_name(x->outcome);
			}
		}
		const char *result = r->outcome == HB_DB_PASS ? (r->conditional ? "pass (conditional)" : "pass") :
				     r->outcome == HB_DB_FAIL ? (r->conditional ? "fail (conditional)" : "fail") : "skipped";
		const char *cells[11] = { seq, rpt_or_dash(r->serial), sw, fi, l0s, mg, lsat, dcrs, result, rpt_or_dash(r->at_iso),
					  rpt_or_dash(r->note) };
		hb_html_table_row_class(h, r->outcome == HB_DB_PASS ? "pass" : r->outcome == HB_DB_FAIL ? "fail" : "skipped",
					cells, 11);
		hb_db_verdicts_free(v);
	}
	hb_html_table_end(h);
	superseded_table(h, db, lot.id);
	hb_html_section_end(h);

	hb_html_section_begin(h, "Statistics of the sample");
	double lsl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 - part.tolerance) : NAN;
	double usl = isfinite(part.nominal_h) && isfinite(part.tolerance) ? part.nominal_h * (1 + part.tolerance) : NAN;
	hb_html_table_begin(h, "Cp = (USL - LSL)/(6 s), Cpk = min(USL - mean, mean - LSL)/(3 s), s the sample standard "
			    "deviation (ISO 22514-2); Cpk with its two-sided 95 % interval, Bissell's normal approximation "
			    "(Applied Statistics 39, 1990); below 30 units the interval is wide and the approximation rough.",
			    rpt_stats_head, 9);
	rpt_stats_row(h, "L0 (zero-bias)", l0, nl, lsl, usl, "H");
	rpt_stats_row(h, "DCR (two-wire)", dcr, ndcr, NAN, part.dcr_max_ohm, "ohm");
	hb_html_table_end(h);
	char *svg = NULL, e[200] = "";
	snprintf(line, sizeof line, "Lot %s: L0 of the sample", lot.lot_code);
	rc = hb_report_histogram_svg(l0, nl, lsl, usl, line, &svg, e, sizeof e);
	snprintf(line, sizeof line, "Lot %s: zero-bias inductance of %zu sample units against the tolerance band %s +-%g %%.",
		 lot.lot_code, nl, rpt_si(a, sizeof a, part.nominal_h, "H", 4), part.tolerance * 100);
	rpt_figure(h, rc, svg, line, e);
	hb_html_section_end(h);

	{
		int64_t *ids = calloc(nr ? nr : 1, sizeof *ids);
		size_t ns = 0;
		for (size_t i = 0; ids && i < nr; i++)
			if (recs[i].sweep_id > 0)
				ids[ns++] = recs[i].sweep_id;
		if (ids)
			rpt_sweeps_instruments_section(h, db, ids, ns,
						       "Every instrument that measured a sample unit of this lot, once each");
		free(ids);
	}

	hb_html_section_begin(h, "Traceability");
	snprintf(line, sizeof line, "Plan and decision: lot record %lld. Unit figures: the sweep and fit ids in the "
		 "table above.", (long long)lot.id);
	rpt_trace_paragraph(h, db, line);
	hb_html_section_end(h);
	rc = hb_html_close(h);
	h = NULL;
	if (rc != HB_OK)
		hb_set_err(err, errlen, "writing the report failed");
out:
	if (h)
		hb_html_close(h);
	free(l0);
	free(dcr);
	free(fit);
	hb_db_inspections_free(recs);
	return rc;
}
