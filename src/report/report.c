/* src/report/report.c - the pieces every filed report is built from: one sweep with everything stored about it, page sections, figures */
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


#ifndef HB_VERSION
#define HB_VERSION "unknown"
#endif

/* ---------------- one sweep with everything stored about it ---------------- */

void rpt_sweep_data_free(sweep_data *d)
{
	hb_db_points_free(d->pts);
	hb_db_verdicts_free(d->verdicts);
	hb_db_fit_uncs_free(d->unc);
	free(d->fit);
	memset(d, 0, sizeof *d);
}

int rpt_load_sweep(hb_db *db, int64_t id, sweep_data *d, char *err, size_t errlen)
{
	memset(d, 0, sizeof *d);
	int rc = hb_db_sweep_get(db, id, &d->sweep);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "sweep %lld: %s", (long long)id, hb_db_errmsg(db));
		return rc;
	}
	hb_db_part_init(&d->part);
	if (d->sweep.part_id > 0 && hb_db_part_get_id(db, d->sweep.part_id, &d->part) == HB_OK)
		d->have_part = true;
	d->fit = calloc(1, sizeof *d->fit);
	if (!d->fit) {
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	hb_db_fit_init(d->fit);
	rc = hb_db_fit_get_latest(db, id, NULL, d->fit);
	if (rc == HB_OK)
		d->have_fit = true;
	else if (rc != HB_ERR_NOTFOUND)
		goto db_error;
	rc = hb_db_points_get(db, id, &d->pts, &d->n);
	if (rc != HB_OK)
		goto db_error;
	rc = hb_db_verdict_list(db, id, &d->verdicts, &d->nv);
	if (rc != HB_OK)
		goto db_error;
	if (d->have_fit) {
		rc = hb_db_fit_unc_list(db, d->fit->id, &d->unc, &d->nunc);
		if (rc != HB_OK)
			goto db_error;
	}
	return HB_OK;
db_error:
	hb_set_err(err, errlen, "sweep %lld: %s", (long long)id, hb_db_errmsg(db));
	rpt_sweep_data_free(d);
	return rc;
}

bool rpt_part_has_geometry(const hb_db_part *p)
{
	return p->turns > 0 && p->ae_m2 > 0 && p->le_m > 0;
}

int rpt_render(hb_plot *plot, char **svg, char *err, size_t errlen)
{
	int rc = hb_plot_render_svg(plot, svg, NULL);
	if (rc != HB_OK)
		hb_set_err(err, errlen, "plot: %s", hb_plot_error(plot));
	hb_plot_free(plot);
	return rc;
}

/* ---------------- page pieces ---------------- */

const char *rpt_si(char *buf, size_t cap, double v, const char *unit, int digits)
{
	/* the one formatter of every text output: prefixes (squared for m2, H2), no exponent, "-" when unknown */
	return hb_format_si(buf, cap, v, unit, digits);
}

const char *rpt_pct(char *buf, size_t cap, double frac)
{
	if (!isfinite(frac))
		snprintf(buf, cap, "-");
	else
		snprintf(buf, cap, "%+.1f %%", frac * 100);
	return buf;
}

const char *rpt_or_dash(const char *s)
{
	return s && *s ? s : "-";
}

static void now_iso(char *buf, size_t cap)
{
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(buf, cap, "%Y-%m-%dT%H:%M:%SZ", &tm);
}

void rpt_part_section(hb_html *h, const hb_db_part *p)
{
	char a[48], b[48], c[48], line[256];
	hb_html_section_begin(h, "Part and specification");
	hb_html_kv_begin(h, NULL);
	hb_html_kv_row(h, "Part number", p->part_number);
	hb_html_kv_row(h, "Description", rpt_or_dash(p->description));
	hb_html_kv_row(h, "Maker", rpt_or_dash(p->maker));
	if (isfinite(p->nominal_h)) {
		snprintf(line, sizeof line, "%s, tolerance +-%g %% (limits %s to %s)", rpt_si(a, sizeof a, p->nominal_h, "H", 4),
			 isfinite(p->tolerance) ? p->tolerance * 100 : NAN,
			 rpt_si(b, sizeof b, isfinite(p->tolerance) ? p->nominal_h * (1 - p->tolerance) : NAN, "H", 4),
			 rpt_si(c, sizeof c, isfinite(p->tolerance) ? p->nominal_h * (1 + p->tolerance) : NAN, "H", 4));
		hb_html_kv_row(h, "Nominal inductance at zero bias", line);
	}
	if (isfinite(p->test_freq_hz) || isfinite(p->test_level)) {
		snprintf(line, sizeof line, "%s, %s", rpt_si(a, sizeof a, p->test_freq_hz, "Hz", 4),
			 rpt_si(b, sizeof b, p->test_level, p->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V", 3));
		hb_html_kv_row(h, "Specified test signal", line);
	}
	if (isfinite(p->sat_current_a)) {
		snprintf(line, sizeof line, "L at %s at least %g %% of L0 (drop at most %g %%)",
			 rpt_si(a, sizeof a, p->sat_current_a, "A", 4), isfinite(p->sat_drop) ? 100 * (1 - p->sat_drop) : NAN,
			 isfinite(p->sat_drop) ? 100 * p->sat_drop : NAN);
		hb_html_kv_row(h, "Saturation specification", line);
	}
	if (isfinite(p->rated_current_a))
		hb_html_kv_row(h, "Rated current", rpt_si(a, sizeof a, p->rated_current_a, "A", 4));
	if (isfinite(p->dcr_max_ohm))
		hb_html_kv_row(h, "DC resistance, maximum", rpt_si(a, sizeof a, p->dcr_max_ohm, "ohm", 4));
	if (rpt_part_has_geometry(p)) {
		snprintf(line, sizeof line, "N = %d turns, Ae = %.4g mm2, le = %s%s%s", p->turns, p->ae_m2 * 1e6,
			 rpt_si(a, sizeof a, p->le_m, "m", 4), isfinite(p->window_m) ? ", window height " : "",
			 isfinite(p->window_m) ? rpt_si(b, sizeof b, p->window_m, "m", 4) : "");
		hb_html_kv_row(h, "Winding and effective core geometry", line);
	}
	if (isfinite(p->mu_i) || isfinite(p->bsat_t)) {
		snprintf(line, sizeof line, "mu_i %s, Bsat %s", rpt_si(a, sizeof a, p->mu_i, "", 4),
			 rpt_si(b, sizeof b, p->bsat_t, "T", 3));
		hb_html_kv_row(h, "Material data", line);
	}
	hb_html_kv_end(h);
	hb_html_section_end(h);
}

static const char *overall_of(const hb_db_verdict *v, size_t n)
{
	bool untested = n == 0, conditional = false;
	for (size_t i = 0; i < n; i++) {
		if (v[i].outcome == HB_DB_FAIL)
			return "fail";
		if (v[i].outcome == HB_DB_CONDITIONAL_PASS || v[i].outcome == HB_DB_CONDITIONAL_FAIL)
			conditional = true;
		else if (v[i].outcome != HB_DB_PASS)
			untested = true;
	}
	/* as the analysis decides it (src/quality/analysis_judge.c) */
	return untested ? "incomplete" : conditional ? "conditional" : "pass";
}

void rpt_verdict_section(hb_html *h, const sweep_data *d)
{
	char line[160];
	hb_html_section_begin(h, "Verdicts against the specification");
	if (d->nv == 0) {
		hb_html_paragraph(h, "No check was recorded for this sweep (no specification applies, or the fit did not run).");
		hb_html_section_end(h);
		return;
	}
	snprintf(line, sizeof line, "Unit %s, sweep %lld, overall:", rpt_or_dash(d->sweep.serial), (long long)d->sweep.id);
	hb_html_verdict(h, line, overall_of(d->verdicts, d->nv));
	/* every rule in force is stated in words (ILAC-G8:2019, ISO/IEC 17025 7.8.6) */
	for (size_t i = 0; i < d->nv; i++) {
		bool seen = false;
		for (size_t j = 0; j < i; j++)
			seen |= strcmp(d->verdicts[j].decision_rule, d->verdicts[i].decision_rule) == 0;
		hb_decision_rule rule;
		if (seen || hb_decision_rule_parse(d->verdicts[i].decision_rule, &rule) != HB_OK)
			continue;
		char stmt[400];
		if (rule == HB_DECISION_SIMPLE)
			snprintf(stmt, sizeof stmt, "Decision rule: %s.", hb_decision_rule_statement(rule));
		else
			snprintf(stmt, sizeof stmt, "Decision rule: %s (r = %g).", hb_decision_rule_statement(rule),
				 isfinite(d->verdicts[i].guard_r) ? d->verdicts[i].guard_r : 1);
		hb_html_paragraph(h, stmt);
	}
	static const char *const head[] = { "Check", "Result", "Rule", "Measured", "U (k)", "Lower limit", "Upper limit",
					    "Acceptance limits", "P(false accept)", "Margin", "Basis" };
	hb_html_table_begin(h, "U: expanded uncertainty of the measured value with its coverage factor (95.45 %). "
			       "Acceptance limits: what the rule made of the tolerance limits. Margin: distance to the "
			       "nearer limit as a fraction of that limit; negative = outside.",
			    head, 11);
	for (size_t i = 0; i < d->nv; i++) {
		const hb_db_verdict *v = &d->verdicts[i];
		const char *u = hb_analysis_check_unit(v->check_name);
		char m[40], lo[40], hi[40], mg[24], uu[40], uk[64], al[40], ah[40], acc[96], pfa[24];
		if (isfinite(v->expanded_u))
			snprintf(uk, sizeof uk, "%s (k = %.2f)", hb_format_u(uu, sizeof uu, v->expanded_u, u), v->coverage_k);
		else
			snprintf(uk, sizeof uk, "-");
		if (isfinite(v->accept_low) || isfinite(v->accept_high))
			snprintf(acc, sizeof acc, "%s ... %s", rpt_si(al, sizeof al, v->accept_low, u, 5),
				 rpt_si(ah, sizeof ah, v->accept_high, u, 5));
		else
			snprintf(acc, sizeof acc, "-");
		if (isfinite(v->p_false_accept) && strcmp(v->decision_rule, "guarded") == 0)
			snprintf(pfa, sizeof pfa, "%.2g %%", v->p_false_accept * 100);
		else
			snprintf(pfa, sizeof pfa, "-");
		const char *cells[11] = { v->check_name, hb_db_outcome_name(v->outcome), v->decision_rule,
					  rpt_si(m, sizeof m, v->measured, u, 5), uk,
					  rpt_si(lo, sizeof lo, v->limit_low, u, 5), rpt_si(hi, sizeof hi, v->limit_high, u, 5),
					  acc, pfa, rpt_pct(mg, sizeof mg, v->margin), v->note };
		hb_html_table_row_class(h, hb_db_outcome_name(v->outcome), cells, 11);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);
}

static bool flag_token(const hb_db_fit *f, const char *token)
{
	size_t len = strlen(token);
	for (const char *p = f->flags; (p = strstr(p, token)) != NULL; p += len)
		if ((p == f->flags || p[-1] == ' ') && (p[len] == 0 || p[len] == ' '))
			return true;
	return false;
}

/* What a stored fit value means, in words a reviewer can check. */
static const char *value_meaning(const char *name, char *buf, size_t cap)
{
	static const struct { const char *name, *text; } known[] = {
		{ "L0", "zero-bias inductance, model-free (polynomial in I^2, or with an |I| term, through the points "
			"below the knee, at I = 0)" },
		{ "L0_part", "zero-bias inductance of the part itself, the winding capacitance removed" },
		{ "knee.noise_ratio", "knee model: residual rms over reading noise" },
		{ "knee.undetermined", "knee model: parameters the data do not determine (bit set)" },
		{ "knee.flags", "knee model: condition flags (bit set: 1 floor held at 0, 2 knee beyond the data, 4 misfit)" },
		{ "knee.misfit.current_ratio", "knee misfit check: bias spread x |dL/dI| over the residuals" },
		{ "knee.misfit.heating_ratio", "knee misfit check: falling against rising readings over the residuals" },
		{ "core.misfit.current_ratio", "core misfit check: bias spread x |dL/dI| over the residuals" },
		{ "core.misfit.heating_ratio", "core misfit check: falling against rising readings over the residuals" },
		{ "noise_sigma", "reading noise used for the uncertainties" },
		{ "I_max", "highest bias current of the sweep" },
		{ "L_at_max", "inductance at the highest bias current" },
		{ "rated_current", "current at which energy and flux are evaluated" },
		{ "psi_rated", "flux linkage at that current (integral of L dI)" },
		{ "W_rated", "stored energy at that current (from the data)" },
		{ "B_rated", "flux density at that current (from the data)" },
		{ "H_rated", "applied field per length N I / le at that current (magnetomotive force over the path "
			     "length; not the field in the core)" },
		{ "core.H_core_rated", "core model: field in the core H at the rated current, solving "
				       "N I = H le + B(H) g / mu0" },
		{ "knee.L0", "knee model: L at zero bias" },
		{ "knee.Lf", "knee model: floor inductance far above the knee" },
		{ "knee.Ik", "knee model: characteristic current" },
		{ "knee.p", "knee model: sharpness exponent" },
		{ "knee.I_knee", "knee model: current of maximum curvature" },
		{ "knee.L_knee", "knee model: L at that current" },
		{ "knee.rss", "knee model: residual sum of squares" },
		{ "knee.dof", "knee model: degrees of freedom" },
		{ "core.mu_i", "core model: initial permeability of the material" },
		{ "core.gap", "core model: effective magnetic gap" },
		{ "core.Js", "core model: saturation polarisation Js (B = mu0 H + J)" },
		{ "core.bsat", "core model: saturation flux density (hb-fit 1.0)" },
		{ "Cp_used", "winding capacitance the core fit corrected for" },
		{ "Cp_from_sweep", "frequency sweep that capacitance came from" },
		{ "DCR", "winding resistance used for the DCR verdict" },
		{ "core.mu_e", "core model: effective permeability of the gapped core" },
		{ "core.AL", "core model: inductance factor AL = L0 / N^2" },
		{ "core.gap_implied", "gap implied by mu_e and the fitted mu_i" },
		{ "core.gap_physical", "physical gap, fringing corrected" },
		{ "core.fringing_factor", "fringing factor at the physical gap" },
		{ "core.B_peak", "core model: flux density at the rated current" },
		{ "core.psi_rated", "core model: flux linkage at the rated current" },
		{ "core.W_rated", "core model: stored energy at the rated current" },
		{ "core.noise_ratio", "core model: residual rms over reading noise" },
		{ "core.flags", "core model: condition flags (bit set)" },
		{ "core.undetermined", "core model: parameters the data do not determine (bit set)" },
		{ "mu_e", "effective permeability (as the history query reads it)" },
		{ "gap", "gap (as the history query reads it)" },
		{ "DCR", "winding resistance, two-wire from the supply's V/I, leads included" },
		{ "L", "low-frequency series inductance of the model" },
		{ "R", "series (winding) resistance of the model" },
		{ "C", "parallel (winding) capacitance of the model" },
		{ "Rp", "parallel loss resistance of the model" },
		{ "srf", "self-resonant frequency 1/(2 pi sqrt(LC))" },
		{ "q_max_measured", "highest measured quality factor Q = Xs/Rs of one reading" },
		{ "q_max_measured_freq", "frequency of the reading with the highest measured Q" },
		{ "q_peak", "model Q with a constant R (hb-fit 1.1 and older; overstates the part's Q)" },
		{ "q_peak_freq", "frequency of that model Q (hb-fit 1.1 and older)" },
		{ "band_lo", "measured Ls within 5 % of its low-frequency value: from" },
		{ "band_hi", "measured Ls within 5 % of its low-frequency value: up to" },
		{ "model_band_hi", "model Ls within 5 % of L up to" },
	};
	for (size_t i = 0; i < sizeof known / sizeof known[0]; i++)
		if (strcmp(name, known[i].name) == 0)
			return known[i].text;
	int p = 0;
	char tail = 0;
	if (sscanf(name, "I_drop%d%c", &p, &tail) == 1)
		snprintf(buf, cap, "current where L has fallen %d %% below L0 (model-free; of L0_part when Cp-corrected)",
			 p);
	else if (sscanf(name, "knee.I_drop%d%c", &p, &tail) == 1)
		snprintf(buf, cap, "knee model: current where L has fallen %d %% below L0", p);
	else if (strncmp(name, "core.aicc.", 10) == 0)
		snprintf(buf, cap, "core model: AICc of the %s law (lower = better)", name + 10);
	else
		snprintf(buf, cap, "-");
	return buf;
}

void rpt_fit_section(hb_html *h, const sweep_data *d)
{
	char a[48], b[48], line[256];
	hb_html_section_begin(h, "Fit results");
	if (!d->have_fit) {
		hb_html_paragraph(h, "No fit is stored for this sweep ('henrybench fit SWEEP_ID' fits it).");
		hb_html_section_end(h);
		return;
	}
	const hb_db_fit *f = d->fit;
	if (d->sweep.kind == HB_DB_SWEEP_BIAS)
		hb_html_paragraph(h, "Important: " HB_FIT_INCREMENTAL_NOTE
				  ". It is not the secant inductance psi/I that some datasheets quote.");
	hb_html_kv_begin(h, NULL);
	snprintf(line, sizeof line, "%lld, of sweep %lld, stored %s", (long long)f->id, (long long)f->sweep_id,
		 f->created);
	hb_html_kv_row(h, "Fit id", line);
	hb_html_kv_row(h, "Fit code version", rpt_or_dash(f->code_version));
	hb_html_kv_row(h, "Headline model", rpt_or_dash(f->model));
	if (f->law[0])
		hb_html_kv_row(h, "Saturation law (lowest AICc)", f->law);
	snprintf(line, sizeof line, "RSS %s, %d degrees of freedom%s%s", rpt_si(a, sizeof a, f->rss, "", 4), f->dof,
		 isfinite(f->aic) ? ", AICc " : "", isfinite(f->aic) ? rpt_si(b, sizeof b, f->aic, "", 5) : "");
	hb_html_kv_row(h, "Goodness of fit", line);
	hb_html_kv_row(h, "Flags", f->flags[0] ? f->flags : "none");
	hb_html_kv_end(h);
	/* A misfitting model is named before its values, and each of its values
	 * carries the mark in its own row: never a bare number beside a measured one. */
	static const struct { const char *probe, *what, *which; } models[] = { { "knee.L0", "knee model", "knee" },
									      { "core.mu_i", "core model", "core" } };
	for (size_t m = 0; m < sizeof models / sizeof models[0]; m++) {
		double ratio = NAN;
		if (hb_analysis_value_misfit(f, models[m].probe, &ratio)) {
			snprintf(line, sizeof line,
				 "MISFIT: the %s's residuals are %.1f x the reading noise. Its values below are marked "
				 "\"misfit\" and do not describe this part; rely on the model-free values.",
				 models[m].what, ratio);
			hb_html_paragraph(h, line);
			/* the causes checked before the law was blamed */
			hb_misfit_diag dg;
			if (hb_analysis_stored_diag(f, models[m].which, &dg)) {
				char lines[4][HB_ANALYSIS_LINE];
				size_t k = hb_analysis_misfit_lines(models[m].what, &dg, lines);
				for (size_t i = 0; i < k; i++)
					hb_html_paragraph(h, lines[i]);
			}
		}
	}
	if (flag_token(f, "cp-corrected"))
		hb_html_paragraph(h, "The drop currents come from the part's own inductance: every reading was corrected "
				     "for the winding capacitance Cp_used (cp_corrected: true), and the fractions are of "
				     "L0_part. L0 is the zero-bias value as the meter reads it, Cp included.");
	else if (d->sweep.kind == HB_DB_SWEEP_BIAS)
		hb_html_paragraph(h, "No winding capacitance was known for this unit: the drop currents come from the "
				     "readings as they are (cp_corrected: false).");
	static const char *const head[] = { "Value", "Meaning", "Result", "Standard uncertainty (fit)", "Relative",
					    "Expanded uncertainty U (k)" };
	hb_html_table_begin(h,
			    "Standard uncertainty: one standard deviation from the fit covariance (k = 1, Type A only). "
			    "U: the expanded uncertainty of the whole budget (appendix) with its coverage factor for "
			    "95.45 %. A value beyond the measured bias range is not given as a number.",
			    head, 6);
	for (size_t i = 0; i < f->n_values; i++) {
		const hb_db_fit_value *v = &f->values[i];
		char meaning[160], val[128], se[96], rel[24], why[96];
		const char *reason = hb_analysis_value_reason(f, v, why, sizeof why);
		double ratio = NAN;
		bool misfit = hb_analysis_value_misfit(f, v->name, &ratio);
		if (isfinite(v->std_error) && v->std_error > 0 && v->value != 0)
			snprintf(rel, sizeof rel, "%.2g %%", 100 * v->std_error / fabs(v->value));
		else
			snprintf(rel, sizeof rel, "-");
		if (!isfinite(v->value)) {
			snprintf(val, sizeof val, "%s", reason ? reason : "-");
		} else {
			char num[48];
			rpt_si(num, sizeof num, v->value, v->unit, 5);
			snprintf(val, sizeof val, "%s%s", num, misfit ? " (misfit)" : "");
		}
		if (isfinite(v->std_error))
			hb_format_u(se, sizeof se, v->std_error, v->unit);
		else if (reason && isfinite(v->value))
			snprintf(se, sizeof se, "none (%s)", reason);
		else
			snprintf(se, sizeof se, "-");
		const char *mean = value_meaning(v->name, meaning, sizeof meaning);
		char mbuf[200];
		if (misfit) {
			snprintf(mbuf, sizeof mbuf, "%s [model misfit: residuals %.1f x the reading noise]", mean, ratio);
			mean = mbuf;
		}
		char ub[80] = "-";
		for (size_t q = 0; q < d->nunc; q++)
			if (strcmp(d->unc[q].name, v->name) == 0 && isfinite(d->unc[q].U)) {
				char uu[40];
				snprintf(ub, sizeof ub, "%s (k = %.2f)", hb_format_u(uu, sizeof uu, d->unc[q].U, v->unit), d->unc[q].k);
			}
		const char *cells[6] = { v->name, mean, val, se, rel, ub };
		hb_html_table_row(h, cells, 6);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);
}

void rpt_measurement_section(hb_html *h, const hb_db_sweep *s)
{
	char a[48], b[48], c[48], line[400];
	hb_html_section_begin(h, "Measurement");
	hb_html_kv_begin(h, NULL);
	snprintf(line, sizeof line, "%lld (%s sweep, %ld points)", (long long)s->id, hb_db_sweep_kind_name(s->kind),
		 s->n_points);
	hb_html_kv_row(h, "Sweep id", line);
	hb_html_kv_row(h, "Unit (serial)", rpt_or_dash(s->serial));
	hb_html_kv_row(h, "Lot", rpt_or_dash(s->lot_code));
	snprintf(line, sizeof line, "%s%s%s", hb_db_sweep_status_name(s->status), s->status_reason[0] ? ": " : "",
		 s->status_reason);
	hb_html_kv_row(h, "Status", line);
	snprintf(line, sizeof line, "%s to %s (UTC)", rpt_or_dash(s->started_iso), rpt_or_dash(s->ended_iso));
	hb_html_kv_row(h, "Date", line);
	hb_html_kv_row(h, "Operator", rpt_or_dash(s->operator_name));
	snprintf(line, sizeof line, "%s (host %s, process %ld)", rpt_or_dash(s->station), rpt_or_dash(s->host), s->pid);
	hb_html_kv_row(h, "Station", line);
	snprintf(line, sizeof line, "%s [profile %s]", rpt_or_dash(s->lcr_idn), rpt_or_dash(s->lcr_profile));
	hb_html_kv_row(h, "LCR meter", line);
	snprintf(line, sizeof line, "%s [profile %s]", rpt_or_dash(s->supply_idn), rpt_or_dash(s->supply_profile));
	hb_html_kv_row(h, "Bias supply", line);
	snprintf(line, sizeof line, "%s at %s; %s equivalent circuit, reading %s; averaging %d, aperture %s",
		 rpt_si(a, sizeof a, s->test_level, s->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V", 3),
		 s->kind == HB_DB_SWEEP_FREQUENCY ? "each sweep frequency" : rpt_si(b, sizeof b, s->test_freq_hz, "Hz", 4),
		 rpt_or_dash(s->circuit), rpt_or_dash(s->measured_pair), s->averaging, rpt_or_dash(s->aperture));
	hb_html_kv_row(h, "Test signal", line);
	const char *u = s->kind == HB_DB_SWEEP_FREQUENCY ? "Hz" : "A";
	snprintf(line, sizeof line, "%s to %s, %d steps, %s spacing", rpt_si(a, sizeof a, s->plan_from, u, 4),
		 rpt_si(b, sizeof b, s->plan_to, u, 4), s->plan_steps, rpt_or_dash(s->plan_spacing));
	hb_html_kv_row(h, "Plan", line);
	if (s->kind == HB_DB_SWEEP_FREQUENCY)
		hb_html_kv_row(h, "DC bias during the sweep", rpt_si(a, sizeof a, isfinite(s->bias_a) ? s->bias_a : 0, "A", 4));
	if (strcmp(s->settle_mode, "fixed") == 0)
		snprintf(line, sizeof line, "fixed: wait %s after each step, then one reading",
			 rpt_si(a, sizeof a, s->settle_delay_s, "s", 3));
	else
		snprintf(line, sizeof line,
			 "%s: bias read-back steady, then readings until two successive differences lie within "
			 "%s x sqrt(2) x the reading noise; at most %s per point",
			 rpt_or_dash(s->settle_mode), isfinite(s->settle_tolerance) ? rpt_si(b, sizeof b, s->settle_tolerance, "", 3) : "-",
			 rpt_si(c, sizeof c, s->settle_max_s, "s", 3));
	hb_html_kv_row(h, "Settling", line);
	snprintf(line, sizeof line, "current %s, voltage %s", rpt_si(a, sizeof a, s->limit_current_a, "A", 4),
		 rpt_si(b, sizeof b, s->limit_voltage_v, "V", 4));
	hb_html_kv_row(h, "Supply limits in force", line);
	if (isfinite(s->ambient_c)) {
		snprintf(line, sizeof line, "%.1f degC", s->ambient_c);
		hb_html_kv_row(h, "Ambient temperature", line);
	}
	if (isfinite(s->reading_noise_rel)) {
		snprintf(line, sizeof line, "%.2g %% of the reading (learnt at the first point)", 100 * s->reading_noise_rel);
		hb_html_kv_row(h, "Reading noise", line);
	}
	hb_html_kv_row(h, "Note", rpt_or_dash(s->note));
	hb_html_kv_end(h);
	hb_html_section_end(h);
}

static const char *pair_letter_unit(const char *pair, int which, char *buf, size_t cap)
{
	const char *dash = strchr(pair, '-');
	const char *name = which == 0 ? pair : (dash ? dash + 1 : "");
	size_t len = which == 0 && dash ? (size_t)(dash - pair) : strlen(name);
	snprintf(buf, cap, "%.*s", (int)len, name);
	return buf;
}

static const char *reading_unit(const char *name)
{
	switch (name[0]) {
	case 'L': return "H";
	case 'C': return "F";
	case 'R': case 'X': case 'Z': return "ohm";
	case 'G': case 'B': return "S";
	default: return "";
	}
}

void rpt_points_section(hb_html *h, const sweep_data *d)
{
	const hb_db_sweep *s = &d->sweep;
	char n1[24], n2[24], h1[40], h2[40];
	pair_letter_unit(s->measured_pair, 0, n1, sizeof n1);
	pair_letter_unit(s->measured_pair, 1, n2, sizeof n2);
	const char *u1 = reading_unit(n1), *u2 = strcmp(n2, "theta") == 0 ? "deg" : reading_unit(n2);
	snprintf(h1, sizeof h1, "%s", n1[0] ? n1 : "primary");
	snprintf(h2, sizeof h2, "%s", n2[0] ? n2 : "secondary");
	hb_html_page_break(h);
	hb_html_section_begin(h, "Measured points");
	static const char *head[] = { "Seq", "Dir", "Bias set", "Bias measured", "Supply V", "Frequency", NULL, NULL,
				      "Status" };
	const char *hd[9];
	memcpy(hd, head, sizeof hd);
	hd[6] = h1;
	hd[7] = h2;
	char cap[96];
	snprintf(cap, sizeof cap, "Every point of sweep %lld as stored, in sequence order.", (long long)s->id);
	hb_html_table_begin(h, cap, hd, 9);
	for (size_t i = 0; i < d->n; i++) {
		const hb_db_point *p = &d->pts[i];
		char seq[16], c2[32], c3[32], c4[32], c5[32], c6[32], c7[32];
		snprintf(seq, sizeof seq, "%d", p->seq);
		if (strcmp(u2, "deg") == 0)
			snprintf(c7, sizeof c7, isfinite(p->secondary) ? "%.4f deg" : "-", p->secondary);
		else
			rpt_si(c7, sizeof c7, p->secondary, u2, 5);
		const char *cells[9] = { seq, p->direction == HB_DB_DIR_DOWN ? "down" : "up",
					 rpt_si(c2, sizeof c2, p->bias_set_a, "A", 4), rpt_si(c3, sizeof c3, p->bias_meas_a, "A", 5),
					 rpt_si(c4, sizeof c4, p->supply_v, "V", 4), rpt_si(c5, sizeof c5, p->freq_hz, "Hz", 5),
					 rpt_si(c6, sizeof c6, p->primary, u1, 6), c7,
					 p->reading_status == HB_OK ? "ok" : hb_status_name(p->reading_status) };
		hb_html_table_row(h, cells, 9);
	}
	hb_html_table_end(h);
	hb_html_section_end(h);
}

void rpt_figure(hb_html *h, int rc, char *svg, const char *caption, const char *err)
{
	if (rc == HB_OK && svg) {
		hb_html_svg(h, svg, caption);
	} else {
		char line[300];
		snprintf(line, sizeof line, "(figure not drawn: %s)", err && *err ? err : hb_status_name(rc));
		hb_html_paragraph(h, line);
	}
	free(svg);
}

void rpt_trace_paragraph(hb_html *h, hb_db *db, const char *what)
{
	char now[32], line[1400];
	now_iso(now, sizeof now);
	snprintf(line, sizeof line,
		 "%s Store: %s. Page written %s by henrybench %s (fit code %s). Every number on this page is read from "
		 "the store; re-run 'henrybench show SWEEP_ID' to see the same records.",
		 what, rpt_or_dash(hb_db_path(db)), now, HB_VERSION, HB_FIT_CODE_VERSION);
	hb_html_paragraph(h, line);
	rpt_trace_identities(h, db);
}

void rpt_budget_section(hb_html *h, const sweep_data *d)
{
	if (d->nunc == 0)
		return;
	hb_html_section_begin(h, "Appendix: uncertainty budgets");
	hb_html_paragraph(h, "Each quantity's GUM budget (JCGM 100:2008): input, its value and standard uncertainty "
			     "u(x), sensitivity coefficient c, contribution |c| u(x), and where u(x) comes from; then the "
			     "combined standard uncertainty u_c, the effective degrees of freedom (Welch-Satterthwaite), "
			     "the coverage factor k for 95.45 % and U = k u_c. See docs/uncertainty.md.");
	static const char *const head[] = { "Input", "Type", "Value", "u(x)", "c", "Contribution", "Source" };
	for (size_t q = 0; q < d->nunc; q++) {
		const hb_db_fit_unc *u = &d->unc[q];
		char cap[400], dof[24];
		if (isfinite(u->dof))
			snprintf(dof, sizeof dof, "%.1f", u->dof);
		else
			snprintf(dof, sizeof dof, "infinite");
		json_error_t err;
		json_t *a = json_loads(u->budget, 0, &err);
		char yu[24], vt[96], uct[40], Ut[40];
		hb_analysis_budget_unit(u->name, a, yu, sizeof yu);
		snprintf(cap, sizeof cap, "%s = %s: u_c = %s, nu_eff = %s, k = %.3f, U = %s%s%s", u->name,
			 hb_format_unc(vt, sizeof vt, u->value, u->u_c, yu, 7), hb_format_u(uct, sizeof uct, u->u_c, yu), dof,
			 u->k, hb_format_u(Ut, sizeof Ut, u->U, yu), u->note[0] ? "; " : "", u->note);
		hb_html_table_begin(h, cap, head, 7);
		for (size_t i = 0; json_is_array(a) && i < json_array_size(a); i++) {
			json_t *o = json_array_get(a, i);
			char c[4][48];
			hb_analysis_budget_cells(o, yu, c);
			const char *name = json_string_value(json_object_get(o, "input"));
			const char *type = json_string_value(json_object_get(o, "type"));
			const char *src = json_string_value(json_object_get(o, "source"));
			const char *cells[7] = { name ? name : "?", type ? type : "?", c[0], c[1], c[2], c[3], src ? src : "" };
			hb_html_table_row(h, cells, 7);
		}
		json_decref(a);
		hb_html_table_end(h);
	}
	hb_html_section_end(h);
}
