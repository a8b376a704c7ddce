/* src/bench/profile_check.c - bring-up: each operation of a profile sent to its instrument, what went out, what came back and how it was read */
#define _POSIX_C_SOURCE 200809L /* open_memstream */
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "../../common/hb_text.h"
#include "bias_supply.h"
#include "profile_check.h"
#include "sweep_internal.h" /* the signal flag a ramp up stops on */

/* The exchanges of one operation are cut out of a trace written to memory. */
typedef struct capture {
	FILE *f;
	char *buf;
	size_t len, mark;
	FILE *tee;
} capture;

static void cap_begin(capture *c)
{
	fflush(c->f);
	c->mark = c->len;
}

/* Trace lines are "TIME TAG D text" (drivers/scpi.c); D is '>' sent, '<'
 * received, '!' an error, '~' input drained. Kept: "D text". */
static void cap_end(capture *c, char *out, size_t cap)
{
	fflush(c->f);
	size_t used = strlen(out);
	const char *p = c->buf + c->mark, *end = c->buf + c->len;
	if (c->tee && end > p)
		fwrite(p, 1, (size_t)(end - p), c->tee);
	while (p < end) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		const char *line_end = nl ? nl : end;
		const char *sp1 = memchr(p, ' ', (size_t)(line_end - p));
		const char *sp2 = sp1 ? memchr(sp1 + 1, ' ', (size_t)(line_end - sp1 - 1)) : NULL;
		if (sp2 && used + 2 < cap) {
			int n = snprintf(out + used, cap - used, "%.*s\n", (int)(line_end - sp2 - 1), sp2 + 1);
			if (n > 0)
				used = (size_t)n + used < cap ? used + (size_t)n : cap - 1;
		}
		p = nl ? nl + 1 : end;
	}
	c->mark = c->len;
}

static hb_pcheck_item *item(hb_pcheck_report *r, const char *op)
{
	if (r->n >= HB_PCHECK_MAX_ITEMS)
		return &r->items[HB_PCHECK_MAX_ITEMS - 1];
	hb_pcheck_item *it = &r->items[r->n++];
	memset(it, 0, sizeof *it);
	snprintf(it->op, sizeof it->op, "%s", op);
	return it;
}

static void set_note(hb_pcheck_item *it, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void set_note(hb_pcheck_item *it, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(it->note, sizeof it->note, fmt, ap);
	va_end(ap);
}

static void set_read(hb_pcheck_item *it, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void set_read(hb_pcheck_item *it, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(it->read_as, sizeof it->read_as, fmt, ap);
	va_end(ap);
}

static void tally(hb_pcheck_report *r)
{
	r->works = r->fails = r->absent = r->held = 0;
	for (size_t i = 0; i < r->n; i++) {
		switch (r->items[i].result) {
		case HB_PCHECK_WORKS: r->works++; break;
		case HB_PCHECK_FAILS: r->fails++; break;
		case HB_PCHECK_ABSENT: r->absent++; break;
		case HB_PCHECK_HELD: r->held++; break;
		}
	}
}

int hb_pcheck_kind(const char *resource, hb_instrument_kind *kind, hb_idn *idn, char *err, size_t errlen)
{
	hb_resource res;
	int rc = hb_resource_parse(resource, &res, err, errlen);
	if (rc != HB_OK)
		return rc;
	hb_scpi *scpi = NULL;
	memset(idn, 0, sizeof *idn);
	rc = hb_scpi_open(resource, &scpi);
	if (rc == HB_OK)
		rc = hb_scpi_idn(scpi, idn);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "%s: %s", resource, hb_scpi_errmsg(scpi));
		hb_scpi_close(scpi);
		return rc;
	}
	hb_scpi_close(scpi);
	if (res.profile[0]) {
		hb_profile *p = NULL;
		if ((rc = hb_profile_find(res.profile, &p, err, errlen)) != HB_OK)
			return rc;
		*kind = hb_profile_kind(p);
		hb_profile_free(p);
		return HB_OK;
	}
	hb_profile *cand[2] = { NULL, NULL };
	const hb_instrument_kind kinds[2] = { HB_KIND_LCR, HB_KIND_SUPPLY };
	for (int i = 0; i < 2; i++)
		if ((rc = hb_profile_match(kinds[i], idn, &cand[i], err, errlen)) != HB_OK) {
			hb_profile_free(cand[0]);
			return rc;
		}
	bool m0 = hb_profile_matches(cand[0], idn), m1 = hb_profile_matches(cand[1], idn);
	hb_profile_free(cand[0]);
	hb_profile_free(cand[1]);
	if (m0 == m1) {
		hb_set_err(err, errlen,
			   "%s answers '%s': %s; force a profile with --profile NAME|PATH, or start one with "
			   "'henrybench profile new --from %s'",
			   resource, idn->raw, m0 ? "both a meter and a supply profile claim it" : "no profile claims it",
			   resource);
		return HB_ERR_NOTFOUND;
	}
	*kind = m0 ? HB_KIND_LCR : HB_KIND_SUPPLY;
	return HB_OK;
}

/* ---------------- the meter ---------------- */

static void lcr_result(hb_pcheck_item *it, hb_lcr *lcr, int rc)
{
	it->result = rc == HB_OK ? HB_PCHECK_WORKS : HB_PCHECK_FAILS;
	if (rc != HB_OK)
		set_note(it, "%s", hb_lcr_errmsg(lcr));
}

static void check_lcr(const hb_pcheck_options *opt, hb_lcr *lcr, capture *c, hb_pcheck_report *r)
{
	char a[48], b[48];
	hb_pcheck_item *it;
	int rc;

	/* reset is the IEEE 488.2 *RST when the profile names none */
	it = item(r, "reset");
	cap_begin(c);
	rc = hb_lcr_reset(lcr);
	cap_end(c, it->exchange, sizeof it->exchange);
	lcr_result(it, lcr, rc);

	/* 1 kHz and 0.1 V or 1 mA: within the range of any impedance meter (common practice) */
	it = item(r, "frequency");
	if (!hb_lcr_supports(lcr, "frequency")) {
		it->result = HB_PCHECK_ABSENT;
	} else {
		cap_begin(c);
		rc = hb_lcr_set_frequency(lcr, 1e3);
		cap_end(c, it->exchange, sizeof it->exchange);
		lcr_result(it, lcr, rc);
		set_read(it, "set to %s", hb_format_si(a, sizeof a, 1e3, "Hz", 4));
	}
	static const struct {
		const char *op;
		hb_level_kind kind;
		double value;
		const char *unit;
	} levels[] = { { "level.current", HB_LEVEL_CURRENT, 1e-3, "A" }, { "level.voltage", HB_LEVEL_VOLTAGE, 0.1, "V" } };
	for (size_t i = 0; i < 2; i++) {
		it = item(r, levels[i].op);
		if (!hb_lcr_supports(lcr, levels[i].op)) {
			it->result = HB_PCHECK_ABSENT;
			continue;
		}
		cap_begin(c);
		rc = hb_lcr_set_level(lcr, levels[i].kind, levels[i].value);
		cap_end(c, it->exchange, sizeof it->exchange);
		lcr_result(it, lcr, rc);
		set_read(it, "set to %s", hb_format_si(a, sizeof a, levels[i].value, levels[i].unit, 4));
	}

	it = item(r, "function");
	if (!hb_lcr_supports(lcr, "function") && !hb_lcr_can(lcr, "function=series")) {
		it->result = HB_PCHECK_ABSENT;
	} else {
		cap_begin(c);
		rc = hb_lcr_set_function(lcr, HB_EQUIV_SERIES, HB_PAIR_L_R);
		cap_end(c, it->exchange, sizeof it->exchange);
		lcr_result(it, lcr, rc);
		set_read(it, "series L-R%s", hb_lcr_supports(lcr, "function") ? "" : " (the meter's one fixed function)");
	}

	/* averaging and aperture go out together (drivers/lcr.c builds both first) */
	bool has_avg = hb_lcr_supports(lcr, "averaging"), has_ap = hb_lcr_supports(lcr, "aperture");
	hb_pcheck_item *avg = item(r, "averaging");
	hb_pcheck_item *ap = item(r, "aperture");
	if (has_avg || has_ap) {
		char ex[HB_PCHECK_EXCHANGE] = "";
		cap_begin(c);
		rc = hb_lcr_set_averaging(lcr, 1, HB_APERTURE_MEDIUM);
		cap_end(c, ex, sizeof ex);
		if (has_avg) {
			snprintf(avg->exchange, sizeof avg->exchange, "%s", ex);
			lcr_result(avg, lcr, rc);
			set_read(avg, "1 reading");
		}
		if (has_ap) {
			snprintf(ap->exchange, sizeof ap->exchange, "%s", ex);
			lcr_result(ap, lcr, rc);
			set_read(ap, "medium");
		}
	}
	if (!has_avg)
		avg->result = HB_PCHECK_ABSENT;
	if (!has_ap)
		ap->result = HB_PCHECK_ABSENT;

	/* The internal bias at 0 A only: switched on at zero current (nothing
	 * flows), then off. */
	bool has_bc = hb_lcr_supports(lcr, "bias.current"), has_bs = hb_lcr_supports(lcr, "bias.state");
	hb_pcheck_item *bc = item(r, "bias.current");
	hb_pcheck_item *bs = item(r, "bias.state");
	if (has_bc || has_bs) {
		char ex[HB_PCHECK_EXCHANGE] = "";
		cap_begin(c);
		rc = hb_lcr_set_internal_bias(lcr, true, 0);
		cap_end(c, ex, sizeof ex);
		snprintf(bc->exchange, sizeof bc->exchange, "%s", ex);
		snprintf(bs->exchange, sizeof bs->exchange, "%s", ex);
		lcr_result(bc, lcr, rc);
		set_read(bc, "0 A");
		int rc_off = hb_lcr_set_internal_bias(lcr, false, 0);
		cap_end(c, bs->exchange, sizeof bs->exchange);
		lcr_result(bs, lcr, rc != HB_OK ? rc : rc_off);
		set_read(bs, "on at 0 A, then off");
	}
	if (!has_bc)
		bc->result = HB_PCHECK_ABSENT;
	if (!has_bs)
		bs->result = HB_PCHECK_ABSENT;

	it = item(r, "measure");
	if (!hb_lcr_supports(lcr, "measure")) {
		it->result = HB_PCHECK_ABSENT;
	} else {
		hb_lcr_reading rd;
		cap_begin(c);
		rc = hb_lcr_measure(lcr, &rd);
		cap_end(c, it->exchange, sizeof it->exchange);
		if (rc == HB_ERR_OVERLOAD || (rc == HB_OK && rd.overload)) {
			/* The profile recognised the meter's overload value: read right. */
			it->result = HB_PCHECK_WORKS;
			set_read(it, "overload (not a reading): nothing or an open winding at the terminals?");
		} else {
			lcr_result(it, lcr, rc);
			if (rc == HB_OK)
				set_read(it, "L %s, R %s, status %d", hb_format_si(a, sizeof a, rd.primary, "H", 5),
					 hb_format_si(b, sizeof b, rd.secondary, "ohm", 4), rd.status);
		}
	}

	it = item(r, "dcr");
	if (!hb_lcr_supports(lcr, "dcr")) {
		it->result = HB_PCHECK_ABSENT;
	} else {
		double ohms = NAN;
		cap_begin(c);
		rc = hb_lcr_measure_dcr(lcr, &ohms);
		cap_end(c, it->exchange, sizeof it->exchange);
		lcr_result(it, lcr, rc);
		if (rc == HB_OK)
			set_read(it, "R %s", hb_format_si(a, sizeof a, ohms, "ohm", 4));
	}

	/* A correction measures the fixture and replaces the meter's stored
	 * one: sent only when the operator has the fixture open / shorted. */
	static const struct {
		const char *op;
		hb_correction which;
		const char *fixture;
	} corr[] = { { "correct.open", HB_CORRECTION_OPEN, "open" }, { "correct.short", HB_CORRECTION_SHORT, "short" } };
	/* The built-in simulator keeps no stored correction to lose: its
	 * corrections are always sent, so a check of it covers every operation. */
	hb_resource res;
	char perr[256];
	bool simulated = hb_resource_parse(opt->resource, &res, perr, sizeof perr) == HB_OK && res.kind == HB_RES_SIM;
	for (size_t i = 0; i < 2; i++) {
		it = item(r, corr[i].op);
		if (!hb_lcr_supports(lcr, corr[i].op)) {
			it->result = HB_PCHECK_ABSENT;
		} else if (!opt->corrections && !simulated) {
			it->result = HB_PCHECK_HELD;
			set_note(it, "not sent: it replaces the meter's stored %s correction; with the fixture %s, add "
				     "--corrections",
				 corr[i].fixture, i == 0 ? "open" : "shorted");
		} else {
			cap_begin(c);
			rc = hb_lcr_correct(lcr, corr[i].which);
			cap_end(c, it->exchange, sizeof it->exchange);
			lcr_result(it, lcr, rc);
			if (rc == HB_OK && !opt->corrections)
				set_note(it, "sent without --corrections: the built-in simulator keeps no stored %s "
					     "correction to lose (a real meter's is held back)",
					 corr[i].fixture);
		}
	}

	it = item(r, "errors");
	hb_scpi_error errs[8];
	size_t n = 0;
	bool lost = false;
	cap_begin(c);
	rc = hb_lcr_errors(lcr, errs, 8, &n, &lost);
	cap_end(c, it->exchange, sizeof it->exchange);
	lcr_result(it, lcr, rc);
	if (rc == HB_OK)
		set_read(it, n == 0 && !lost ? "queue empty" : "%zu error(s) left in the queue%s", n,
			 lost ? ", more lost" : "");
}

/* ---------------- the supply ---------------- */

static void sup_result(hb_pcheck_item *it, hb_supply *s, int rc)
{
	it->result = rc == HB_OK ? HB_PCHECK_WORKS : HB_PCHECK_FAILS;
	if (rc != HB_OK)
		set_note(it, "%s", hb_supply_errmsg(s));
}

static const char *mode_name(hb_supply_mode m)
{
	static const char *const names[] = { "unknown", "off", "constant current (CC)", "constant voltage (CV)" };
	return (unsigned)m < 4 ? names[m] : "?";
}

/* The read-backs: nothing here changes the supply. The numeric ones differ
 * only in the call, the unit and a label, so one path reads them all. */
static void supply_reads(hb_supply *s, capture *c, hb_pcheck_report *r, const char *when)
{
	char a[48];
	int rc;
	hb_pcheck_item *it;
	char op[48];
	static const struct {
		const char *op;
		int (*value)(hb_supply *, double *); /* a number with its unit; NULL: told below */
		const char *unit, *label;
	} ops[] = {
		{ "output.state", NULL, NULL, NULL },
		{ "current.query", hb_supply_query_current, "A", "set-point " },
		{ "measure.current", hb_supply_measure_current, "A", "" },
		{ "measure.voltage", hb_supply_measure_voltage, "V", "" },
		{ "mode", NULL, NULL, NULL },
		{ "protection", NULL, NULL, NULL },
	};
	for (size_t i = 0; i < sizeof ops / sizeof ops[0]; i++) {
		snprintf(op, sizeof op, "%s%s", ops[i].op, when);
		it = item(r, op);
		if (!hb_supply_supports(s, ops[i].op)) {
			it->result = HB_PCHECK_ABSENT;
			continue;
		}
		cap_begin(c);
		switch (i) {
		case 0: {
			bool on = false;
			rc = hb_supply_output_state(s, &on);
			if (rc == HB_OK)
				set_read(it, "output %s", on ? "on" : "off");
			break;
		}
		case 4: {
			hb_supply_mode m = HB_SUPPLY_MODE_UNKNOWN;
			rc = hb_supply_get_mode(s, &m);
			if (rc == HB_OK)
				set_read(it, "%s", mode_name(m));
			break;
		}
		case 5: {
			bool tripped = false;
			rc = hb_supply_protection(s, &tripped);
			if (rc == HB_OK)
				set_read(it, "%s", tripped ? "TRIPPED" : "not tripped");
			break;
		}
		default: {
			double v = NAN;
			rc = ops[i].value(s, &v);
			if (rc == HB_OK)
				set_read(it, "%s%s", ops[i].label, hb_format_si(a, sizeof a, v, ops[i].unit, 4));
			break;
		}
		}
		cap_end(c, it->exchange, sizeof it->exchange);
		sup_result(it, s, rc);
	}
}

static void bias_notice(void *ctx, const char *text)
{
	const hb_pcheck_options *opt = ctx;
	if (opt->notice)
		opt->notice(opt->notice_ctx, text);
}

static void check_supply(const hb_pcheck_options *opt, hb_supply *s, capture *c, hb_pcheck_report *r)
{
	char a[48], b[48];
	supply_reads(s, c, r, "");
	static const char *const changing[] = { "voltage", "output.on", "current", "output.off", "reset" };
	if (!opt->energise) {
		for (size_t i = 0; i < sizeof changing / sizeof changing[0]; i++) {
			hb_pcheck_item *it = item(r, changing[i]);
			if (strcmp(changing[i], "reset") != 0 && !hb_supply_supports(s, changing[i])) {
				it->result = HB_PCHECK_ABSENT;
				continue;
			}
			it->result = HB_PCHECK_HELD;
			set_note(it, "not sent: the supply stays as it is; --energise --max-current A sends it through the "
				     "ramp state machine");
		}
		goto errors;
	}

	/* Energised: every change through the state machine (src/bench/bias_supply.c). */
	hb_bias_config cfg = { .ramp_rate = opt->ramp_rate, .off_threshold = opt->off_threshold, .confirm_timeout = 2.0,
			       .stop = &hb__sweep_pending_signal, .notice = bias_notice, .notice_ctx = (void *)opt };
	hb_bias *bias = NULL;
	int rc = hb_bias_new(s, &cfg, &bias);
	if (rc != HB_OK) {
		snprintf(r->message, sizeof r->message, "out of memory");
		return;
	}
	double found = NAN;
	hb_pcheck_item *v = item(r, "voltage"), *on = item(r, "output.on"), *cur = item(r, "current");
	char ex[HB_PCHECK_EXCHANGE] = "";
	cap_begin(c);
	rc = hb_bias_open(bias, &found);
	if (rc == HB_OK)
		rc = hb_bias_enable(bias, opt->voltage_limit_v);
	cap_end(c, ex, sizeof ex);
	snprintf(v->exchange, sizeof v->exchange, "%s", ex);
	snprintf(on->exchange, sizeof on->exchange, "%s", ex);
	v->result = on->result = rc == HB_OK ? HB_PCHECK_WORKS : HB_PCHECK_FAILS;
	if (rc != HB_OK) {
		set_note(v, "%s", hb_bias_errmsg(bias));
		set_note(on, "%s", hb_bias_errmsg(bias));
	} else {
		set_read(v, "limit %s", hb_format_si(a, sizeof a, opt->voltage_limit_v, "V", 4));
		set_read(on, "output on at 0 A");
	}
	if (rc == HB_OK) {
		cap_begin(c);
		rc = hb_bias_ramp_to(bias, opt->current_a);
		cap_end(c, cur->exchange, sizeof cur->exchange);
		cur->result = rc == HB_OK ? HB_PCHECK_WORKS : HB_PCHECK_FAILS;
		if (rc != HB_OK)
			set_note(cur, "%s", hb_bias_errmsg(bias));
		else
			set_read(cur, "ramped to %s at %s/s", hb_format_si(a, sizeof a, opt->current_a, "A", 4),
				 hb_format_si(b, sizeof b, opt->ramp_rate, "A", 3));
		/* The current rises with the part's L/R: read back until it is
		 * within 10 % of the set-point, 3 s at most (reads only). */
		if (rc == HB_OK) {
			char scratch[HB_PCHECK_EXCHANGE] = "";
			double amps = NAN, waited = 0;
			cap_begin(c);
			for (; waited < 3.0; waited += 0.05) {
				if (hb_supply_measure_current(s, &amps) != HB_OK ||
				    fabs(amps - opt->current_a) <= 0.1 * opt->current_a)
					break;
				struct timespec ts = { 0, 50000000L };
				nanosleep(&ts, NULL);
			}
			cap_end(c, scratch, sizeof scratch);
			size_t len = strlen(cur->read_as);
			snprintf(cur->read_as + len, sizeof cur->read_as - len, "; read back %s after %.2f s%s",
				 hb_format_si(a, sizeof a, amps, "A", 4), waited,
				 fabs(amps - opt->current_a) <= 0.1 * opt->current_a ? "" :
				 " (not within 10 %: is a part or a short across the output?)");
			/* What the supply reads back while the check current flows. */
			supply_reads(s, c, r, " (energised)");
		}
	} else {
		cur->result = HB_PCHECK_HELD;
		set_note(cur, "not sent: enabling the output failed");
	}
	/* The one shut-down, whatever happened above. */
	hb_pcheck_item *off = item(r, "output.off"), *rst = item(r, "reset");
	hb_bias_shutdown_report rep;
	cap_begin(c);
	int down = hb_bias_shutdown(bias, &rep);
	cap_end(c, off->exchange, sizeof off->exchange);
	off->result = down == HB_OK ? HB_PCHECK_WORKS : HB_PCHECK_FAILS;
	if (down != HB_OK) {
		set_note(off, "%s", hb_bias_errmsg(bias));
		r->current_may_flow = true;
	} else {
		set_read(off, "off once below %s%s", hb_format_si(a, sizeof a, opt->off_threshold, "A", 3),
			 rep.confirmed ? " (decay seen on the read-back)" : "");
	}
	if (down == HB_OK) {
		cap_begin(c);
		rc = hb_bias_reset_when_off(bias);
		cap_end(c, rst->exchange, sizeof rst->exchange);
		rst->result = rc == HB_OK ? HB_PCHECK_WORKS : HB_PCHECK_FAILS;
		if (rc != HB_OK) {
			set_note(rst, "%s", hb_bias_errmsg(bias));
			if (hb_bias_get_state(bias) != HB_BIAS_OFF) {
				/* A reset that left the output on: off again, the safe way. */
				if (hb_bias_shutdown(bias, &rep) != HB_OK)
					r->current_may_flow = true;
			}
		} else {
			set_read(rst, "output off after the reset");
		}
	} else {
		rst->result = HB_PCHECK_HELD;
		set_note(rst, "not sent: the shut-down did not confirm the output off");
	}
	hb_bias_free(bias);
errors:;
	hb_pcheck_item *it = item(r, "errors");
	hb_scpi_error errs[8];
	size_t n = 0;
	bool lost = false;
	cap_begin(c);
	rc = hb_supply_errors(s, errs, 8, &n, &lost);
	cap_end(c, it->exchange, sizeof it->exchange);
	sup_result(it, s, rc);
	if (rc == HB_OK)
		set_read(it, n == 0 && !lost ? "queue empty" : "%zu error(s) left in the queue%s", n,
			 lost ? ", more lost" : "");
}

int hb_pcheck_run(const hb_pcheck_options *opt, hb_instrument_kind kind, hb_pcheck_report *out)
{
	memset(out, 0, sizeof *out);
	out->kind = kind;
	if (!opt || !opt->resource)
		return HB_ERR_ARG;
	if (opt->energise && (!(opt->current_a > 0) || !(opt->voltage_limit_v > 0) || !(opt->ramp_rate > 0)))
		return HB_ERR_ARG;
	capture c = { .tee = opt->trace };
	c.f = open_memstream(&c.buf, &c.len);
	if (!c.f) {
		snprintf(out->message, sizeof out->message, "out of memory");
		return HB_ERR_NOMEM;
	}
	hb_resource res;
	char err[256];
	out->forced = hb_resource_parse(opt->resource, &res, err, sizeof err) == HB_OK && res.profile[0];
	int rc;
	if (kind == HB_KIND_LCR) {
		hb_lcr *lcr = NULL;
		rc = hb_lcr_open(opt->resource, c.f, &lcr);
		if (rc != HB_OK) {
			snprintf(out->message, sizeof out->message, "%s", hb_lcr_errmsg(lcr));
		} else {
			out->idn = *hb_lcr_idn(lcr);
			snprintf(out->profile, sizeof out->profile, "%s", hb_lcr_profile_name(lcr));
			check_lcr(opt, lcr, &c, out);
		}
		hb_lcr_close(lcr);
	} else {
		hb_supply *s = NULL;
		rc = hb_supply_open(opt->resource, c.f, &s);
		if (rc != HB_OK) {
			snprintf(out->message, sizeof out->message, "%s", hb_supply_errmsg(s));
		} else {
			out->idn = *hb_supply_idn(s);
			snprintf(out->profile, sizeof out->profile, "%s", hb_supply_profile_name(s));
			check_supply(opt, s, &c, out);
		}
		hb_supply_close(s);
	}
	if (rc == HB_OK && out->profile[0]) {
		hb_profile *p = NULL;
		if (hb_profile_find(out->forced ? res.profile : out->profile, &p, err, sizeof err) == HB_OK)
			snprintf(out->profile_path, sizeof out->profile_path, "%s", hb_profile_path(p));
		hb_profile_free(p);
	}
	fclose(c.f);
	free(c.buf);
	tally(out);
	return rc;
}
