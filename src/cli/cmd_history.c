/* src/cli/cmd_history.c - the `history` command (units, lot statistics, trend) and the table of `compare` */
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <jansson.h>

#include "../quality/quality.h"
#include "../io/io.h"
#include "cli.h"
#include "../report/report.h"
#include "compare.h"

/* ---------------- history command ---------------- */

/* YYYY-MM-DD as the unix time of its midnight UTC. */
static int parse_date(const char *text, double *out)
{
	int y, m, d;
	char extra;
	if (sscanf(text, "%4d-%2d-%2d%c", &y, &m, &d, &extra) != 3 || y < 1970 || m < 1 || m > 12 || d < 1 || d > 31)
		return HB_ERR_ARG;
	struct tm tm = { .tm_year = y - 1900, .tm_mon = m - 1, .tm_mday = d };
	time_t t = timegm(&tm);
	struct tm back;
	if (t == (time_t)-1 || !gmtime_r(&t, &back) || back.tm_mday != d || back.tm_mon != m - 1)
		return HB_ERR_ARG;
	*out = (double)t;
	return HB_OK;
}

static void print_history_text(const hb_db_part *part, const hb_db_history_row *rows, size_t n,
			       const hb_db_history_filter *f, const hb_history_summary *s)
{
	char a[32], b[32], c[32], d[32], e[32];
	printf("part %s", part->part_number);
	if (isfinite(part->nominal_h))
		printf(": nominal %s", hb_si_or_dash(a, sizeof a, part->nominal_h, "H"));
	if (isfinite(part->tolerance))
		printf(" +-%.3g %%", part->tolerance * 100);
	printf("; %zu unit%s measured\n\n", n, n == 1 ? "" : "s");
	if (n == 0)
		return;
	printf("%-20s %-12s %-12s %-14s %6s %-11s", "date (UTC)", "station", "lot", "serial", "sweep", "L0");
	for (int i = 0; i < HB_DB_HISTORY_DROPS; i++) {
		char label[16];
		snprintf(label, sizeof label, "I@-%d%%", f->drop_percent[i]);
		printf(" %-9s", label);
	}
	printf(" %-8s %-10s %s\n", "mu_e", "gap", "verdict");
	for (size_t i = 0; i < n; i++) {
		const hb_db_history_row *r = &rows[i];
		/* user text padded by display width: a serial in CJK or with a micro sign stays in its column */
		printf("%-20s ", r->started_iso);
		hb_fput_cell(stdout, r->station, 12, true);
		putchar(' ');
		hb_fput_cell(stdout, r->lot_code, 12, true);
		putchar(' ');
		hb_fput_cell(stdout, r->serial, 14, true);
		printf(" %6lld %-11s", (long long)r->sweep_id, hb_si_or_dash(a, sizeof a, r->l0_h, "H"));
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
			printf(" %-9s", hb_si_or_dash(b, sizeof b, r->i_drop_a[k], "A"));
		if (isfinite(r->mu_e))
			snprintf(c, sizeof c, "%.1f", r->mu_e);
		else
			snprintf(c, sizeof c, "-");
		printf(" %-8s %-10s %s\n", c, hb_si_or_dash(d, sizeof d, r->gap_m, "m"), hb_db_outcome_name(r->verdict));
	}
	printf("\nper lot (L0; Cp/Cpk against nominal +- tolerance, ISO 22514-2 with the sample s;\n"
	       "Cpk with its 95 %% interval, Bissell 1990):\n");
	printf("%-14s %5s %5s %5s %-11s %-10s %-11s %-11s %6s  %-20s  %s\n", "lot", "units", "pass", "fail", "mean", "s",
	       "min", "max", "Cp", "first measured", "Cpk");
	bool small = false;
	for (size_t k = 0; k < s->n_lots; k++) {
		const hb_history_lot *l = &s->lots[k];
		char cpk[96];
		printf("%-14s %5zu %5zu %5zu %-11s %-10s %-11s %-11s", l->lot_code[0] ? l->lot_code : "(no lot)", l->n_units,
		       l->n_pass, l->n_fail, hb_si_or_dash(a, sizeof a, l->l0.mean, "H"),
		       hb_si_or_dash(b, sizeof b, l->l0.stddev, "H"), hb_si_or_dash(c, sizeof c, l->l0.min, "H"),
		       hb_si_or_dash(d, sizeof d, l->l0.max, "H"));
		if (isfinite(l->cp))
			printf(" %6.2f", hb_cpk_unsigned_zero(l->cp, 2));
		else
			printf(" %6s", "-");
		/* the interval is long: last, so the columns before it stay aligned */
		printf("  %-20s  %s\n", l->first_iso, hb_history_cpk_text(l, cpk, sizeof cpk));
		small |= isfinite(l->cpk) && l->l0.n < HB_CPK_MIN_N;
	}
	if (small)
		printf("  warning: a lot with fewer than %d units has a wide Cpk interval and the normal approximation is "
		       "rough;\n  read its Cpk as an indication, not a capability\n",
		       HB_CPK_MIN_N);
	printf("\ntrend across lots in time order (change from the first lot; Isat = I at -%d %% L):\n",
	       s->sat_drop_percent);
	if (s->n_trend_lots < 2) {
		printf("  fewer than two lots with L0 values: no trend\n");
		return;
	}
	printf("%-14s %-11s %-10s %8s  %-10s %-10s %8s\n", "lot", "L0 mean", "change", "", "Isat mean", "change", "");
	for (size_t k = 0; k < s->n_lots; k++) {
		const hb_history_lot *l = &s->lots[k];
		if (!l->lot_code[0] || l->l0.n == 0)
			continue;
		printf("%-14s %-11s ", l->lot_code, hb_si_or_dash(a, sizeof a, l->l0.mean, "H"));
		if (isfinite(l->l0_change_h))
			printf("%-10s %+7.2f%%", hb_si_or_dash(b, sizeof b, l->l0_change_h, "H"), l->l0_change_rel * 100);
		else
			printf("%-10s %8s", "(first)", "");
		printf("  %-10s ", hb_si_or_dash(e, sizeof e, l->isat.mean, "A"));
		if (isfinite(l->isat_change_a))
			printf("%-10s %+7.2f%%", hb_si_or_dash(c, sizeof c, l->isat_change_a, "A"), l->isat_change_rel * 100);
		else
			printf("%-10s %8s", "-", "");
		printf("%s%s\n", l->l0_shift ? "  L0 SHIFT" : "", l->isat_shift ? "  Isat SHIFT" : "");
	}
	if (s->l0_drift)
		printf("  L0 DRIFT: the lot mean %s at every lot\n", s->l0_drift > 0 ? "rose" : "fell");
	if (s->isat_drift)
		printf("  Isat DRIFT: the lot mean %s at every lot\n", s->isat_drift > 0 ? "rose" : "fell");
	if (s->l0_shift)
		printf("  L0 SHIFT: a lot mean moved more than a third of the tolerance half-width from the first lot\n");
	if (s->isat_shift)
		printf("  Isat SHIFT: a lot mean moved more than 10 %% from the first lot\n");
	if (!s->l0_drift && !s->isat_drift && !s->l0_shift && !s->isat_shift)
		printf("  no drift or shift flagged\n");
}

static json_t *stats_json(const hb_stats *st)
{
	json_t *o = json_object();
	json_object_set_new(o, "n", json_integer((json_int_t)st->n));
	json_object_set_new(o, "mean", hb_json_num(st->mean));
	json_object_set_new(o, "stddev", hb_json_num(st->stddev));
	json_object_set_new(o, "min", hb_json_num(st->min));
	json_object_set_new(o, "max", hb_json_num(st->max));
	return o;
}

static json_t *history_json(const hb_db_part *part, const hb_db_history_row *rows, size_t n,
			    const hb_db_history_filter *f, const hb_history_summary *s)
{
	json_t *j = json_object();
	json_object_set_new(j, "part_number", json_string(part->part_number));
	json_object_set_new(j, "nominal_H", hb_json_num(part->nominal_h));
	json_object_set_new(j, "tolerance", hb_json_num(part->tolerance));
	json_t *units = json_array();
	for (size_t i = 0; i < n; i++) {
		json_t *u = hb_json_unit_result(&rows[i], f->drop_percent);
		/* which sweep and unit, across stores too (the local ids are this store's) */
		json_object_set_new(u, "sweep_uid", rows[i].sweep_uid[0] ? json_string(rows[i].sweep_uid) : json_null());
		json_object_set_new(u, "unit_uid", rows[i].unit_uid[0] ? json_string(rows[i].unit_uid) : json_null());
		json_array_append_new(units, u);
	}
	json_object_set_new(j, "units", units);
	json_t *lots = json_array();
	for (size_t k = 0; k < s->n_lots; k++) {
		const hb_history_lot *l = &s->lots[k];
		json_t *o = json_object();
		json_object_set_new(o, "lot_code", l->lot_code[0] ? json_string(l->lot_code) : json_null());
		json_object_set_new(o, "units", json_integer((json_int_t)l->n_units));
		json_object_set_new(o, "pass", json_integer((json_int_t)l->n_pass));
		json_object_set_new(o, "fail", json_integer((json_int_t)l->n_fail));
		json_object_set_new(o, "not_tested", json_integer((json_int_t)l->n_not_tested));
		json_object_set_new(o, "first_measured", json_string(l->first_iso));
		json_object_set_new(o, "last_measured", json_string(l->last_iso));
		json_object_set_new(o, "L0_H", stats_json(&l->l0));
		json_object_set_new(o, "Cp", hb_json_num(l->cp));
		json_object_set_new(o, "Cpk", hb_json_num(l->cpk));
		/* the one serialiser of Cpk's confidence (text, JSON and HTML agree) */
		json_object_set_new(o, "Cpk_interval", hb_history_cpk_json(l));
		json_object_set_new(o, "I_sat_A", stats_json(&l->isat));
		json_object_set_new(o, "L0_change_H", hb_json_num(l->l0_change_h));
		json_object_set_new(o, "L0_change_rel", hb_json_num(l->l0_change_rel));
		json_object_set_new(o, "I_sat_change_A", hb_json_num(l->isat_change_a));
		json_object_set_new(o, "I_sat_change_rel", hb_json_num(l->isat_change_rel));
		json_object_set_new(o, "L0_shift", json_boolean(l->l0_shift));
		json_object_set_new(o, "I_sat_shift", json_boolean(l->isat_shift));
		json_array_append_new(lots, o);
	}
	json_object_set_new(j, "lots", lots);
	json_t *t = json_object();
	json_object_set_new(t, "sat_drop_percent", json_integer(s->sat_drop_percent));
	json_object_set_new(t, "lots", json_integer((json_int_t)s->n_trend_lots));
	json_object_set_new(t, "L0_drift", json_string(s->l0_drift > 0 ? "rising" : s->l0_drift < 0 ? "falling" : "none"));
	json_object_set_new(t, "I_sat_drift",
			    json_string(s->isat_drift > 0 ? "rising" : s->isat_drift < 0 ? "falling" : "none"));
	json_object_set_new(t, "L0_shift", json_boolean(s->l0_shift));
	json_object_set_new(t, "I_sat_shift", json_boolean(s->isat_shift));
	json_object_set_new(j, "trend", t);
	return j;
}

/* Through the io room's one CSV writer: the dialect of export --csv. */
static int history_csv(const hb_db_history_row *rows, size_t n, const hb_db_history_filter *f)
{
	hb_csv_writer w;
	hb_csv_begin(&w, stdout);
	static const char *const head[] = { "started_utc", "station", "lot_code", "serial", "sweep_id", "L0_H" };
	for (size_t k = 0; k < sizeof head / sizeof head[0]; k++)
		hb_csv_text(&w, head[k]);
	for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
		char name[32];
		snprintf(name, sizeof name, "I_drop%d_A", f->drop_percent[k]);
		hb_csv_text(&w, name);
	}
	hb_csv_text(&w, "mu_e");
	hb_csv_text(&w, "gap_m");
	hb_csv_text(&w, "verdict");
	hb_csv_row_end(&w);
	for (size_t i = 0; i < n; i++) {
		const hb_db_history_row *r = &rows[i];
		hb_csv_text(&w, r->started_iso);
		hb_csv_text(&w, r->station);
		hb_csv_text(&w, r->lot_code);
		hb_csv_text(&w, r->serial);
		hb_csv_int(&w, r->sweep_id);
		hb_csv_num(&w, r->l0_h);
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
			hb_csv_num(&w, r->i_drop_a[k]);
		hb_csv_num(&w, r->mu_e);
		hb_csv_num(&w, r->gap_m);
		hb_csv_text(&w, hb_db_outcome_name(r->verdict));
		hb_csv_row_end(&w);
	}
	return hb_csv_end(&w);
}

/* --since: a day, 1970-01-01 or later. */
static int take_since(const hb_opt *o, const char *text, void *field)
{
	if (parse_date(text, field) != HB_OK) {
		hb_cli_error("--%s '%s': give a date YYYY-MM-DD (1970-01-01 or later)", o->name, text);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

typedef struct history_args {
	hb_db_history_filter f;
	bool json, csv;
} history_args;

static const hb_opt history_table[] = {
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "L", .off = offsetof(history_args, f.lot_code), .help = "only this lot" },
	{ .name = "unit", .kind = HB_OPT_TEXT, .arg = "S", .off = offsetof(history_args, f.serial), .help = "only this serial" },
	{ .name = "since", .kind = HB_OPT_CUSTOM, .arg = "DATE", .parse = take_since, .off = offsetof(history_args, f.since),
	  .help = "only sweeps started on or after this day (UTC), YYYY-MM-DD" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(history_args, json),
	  .help = "units, lots and trend as one JSON object" },
	{ .name = "csv", .kind = HB_OPT_FLAG, .off = offsetof(history_args, csv),
	  .help = "one row per unit, SI units named in the header" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_history = {
	.name = "history",
	.usage = "PARTNO [--lot L] [--unit S] [--since YYYY-MM-DD] [--json|--csv]",
	.about = "Every measured unit of the part (its latest complete bias sweep, with the newest fit and\n"
		 "verdicts), then per lot: count, mean, standard deviation, min and max of L0 and Cp/Cpk\n"
		 "against the part's tolerance, and the trend of the lot means of L0 and of the saturation\n"
		 "current (I at the part's saturation drop, else at -30 % L) in time order.\n",
	.opts = history_table,
	.max_operands = -1,
};

int hb_cmd_history(int argc, char **argv)
{
	history_args a = { .json = false, .csv = false };
	hb_db_history_filter_init(&a.f);
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_history, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	hb_db_history_filter f = a.f;
	bool json = a.json, csv = a.csv;
	if (r.first + 1 != argc) {
		hb_cli_error(r.first >= argc ? "history: PARTNO is required (try --help)" :
					       "history: one PARTNO only (try --help)");
		return HB_EXIT_USAGE;
	}
	if (json && csv) {
		hb_cli_error("history: give --json or --csv, not both");
		return HB_EXIT_USAGE;
	}
	char pnbuf[HB_DB_ID_LEN];
	if (hb_cli_text_arg("part number", argv[r.first], HB_TEXT_ID_MAX) != HB_OK)
		return HB_EXIT_USAGE;
	f.part_number = hb_cli_part_number(argv[r.first], pnbuf, sizeof pnbuf);

	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	hb_history_summary sum;
	memset(&sum, 0, sizeof sum);
	if (!(db = hb_cli_open_store_read(&exit_code)))
		goto out;
	hb_db_part part;
	int rc = hb_db_part_get(db, f.part_number, &part);
	if (rc == HB_ERR_NOTFOUND) {
		hb_cli_error("no part '%s' in %s (see 'henrybench part list')", f.part_number, hb_db_path(db));
		exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (rc == HB_OK)
		rc = hb_db_history(db, &f, &rows, &n);
	if (rc != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		goto out;
	}
	if (hb_history_summarise(&part, rows, n, f.drop_percent, &sum) != HB_OK) {
		hb_cli_error("history: out of memory");
		goto out;
	}
	if (json) {
		json_t *j = history_json(&part, rows, n, &f, &sum);
		/* The lots as the switching rules saw them, per supplier. */
		json_t *streams = hb_stream_all_json(db, &part);
		if (!streams) {
			json_decref(j);
			hb_cli_error("store: %s", hb_db_errmsg(db));
			goto out;
		}
		json_object_set_new(j, "lot_streams", streams);
		if (hb_print_json(j) != HB_OK) {
			hb_cli_error("history: cannot write the JSON output");
			goto out;
		}
	} else if (csv) {
		if (history_csv(rows, n, &f) != HB_OK) {
			hb_cli_error("history: cannot write the CSV output");
			goto out;
		}
	} else {
		print_history_text(&part, rows, n, &f, &sum);
		if (hb_stream_print_all(stdout, db, &part) != HB_OK) {
			hb_cli_error("store: %s", hb_db_errmsg(db));
			goto out;
		}
	}
	if (fflush(stdout) != 0) {
		hb_cli_stdout_error("history");
		goto out;
	}
	exit_code = HB_EXIT_OK;
out:
	hb_history_summary_free(&sum);
	hb_db_history_free(rows);
	hb_db_close(db);
	return exit_code;
}

/* ---------------- compare: the table ---------------- */

/* Below the first point only when that point is at (near) zero bias, where
 * L is flat: the supply's read-back at "0 A" is offset noise, not a range. */
static double interp(const double *x, const double *y, size_t n, double at)
{
	if (n > 0 && at < x[0] && at >= 0 && x[0] <= 0.01 * x[n - 1])
		return y[0];
	if (n == 0 || at < x[0] || at > x[n - 1])
		return NAN;
	if (n == 1)
		return y[0];
	for (size_t i = 1; i < n; i++)
		if (at <= x[i])
			return y[i - 1] + (y[i] - y[i - 1]) * (at - x[i - 1]) / (x[i] - x[i - 1]);
	return y[n - 1];
}

static double fit_value_named(const hb_db_fit *fit, const char *name)
{
	for (size_t k = 0; k < fit->n_values; k++)
		if (strcmp(fit->values[k].name, name) == 0)
			return fit->values[k].value;
	return NAN;
}

void hb_compare_free(hb_compare_table *t)
{
	if (!t)
		return;
	free(t->cols);
	t->cols = NULL;
	t->n = 0;
}

int hb_compare_load(hb_db *db, const int64_t *ids, size_t n, size_t n_currents, hb_compare_table *out, char *err,
		    size_t errlen)
{
	memset(out, 0, sizeof *out);
	if (n < 1 || n > HB_COMPARE_MAX_SWEEPS || n_currents < 2 || n_currents > HB_COMPARE_MAX_CURRENTS) {
		snprintf(err, errlen, "compare takes 1 to %d sweeps and 2 to %d currents", HB_COMPARE_MAX_SWEEPS,
			 HB_COMPARE_MAX_CURRENTS);
		return HB_ERR_ARG;
	}
	hb_db_history_filter defaults;
	hb_db_history_filter_init(&defaults);
	memcpy(out->drop_percent, defaults.drop_percent, sizeof out->drop_percent);
	out->cols = calloc(n, sizeof *out->cols);
	hb_db_fit *fit = malloc(sizeof *fit);
	double **I = calloc(n, sizeof *I), **L = calloc(n, sizeof *L);
	size_t *m = calloc(n, sizeof *m);
	int rc = HB_ERR_NOMEM;
	if (!out->cols || !fit || !I || !L || !m) {
		snprintf(err, errlen, "out of memory");
		goto fail;
	}
	out->n = n;
	for (size_t i = 0; i < n; i++) {
		hb_compare_column *col = &out->cols[i];
		hb_db_sweep sw;
		rc = hb_db_sweep_get(db, ids[i], &sw);
		if (rc != HB_OK) {
			snprintf(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			goto fail;
		}
		if (sw.kind != HB_DB_SWEEP_BIAS) {
			snprintf(err, errlen, "sweep %lld is a frequency sweep: compare takes bias sweeps", (long long)ids[i]);
			rc = HB_ERR_ARG;
			goto fail;
		}
		col->sweep_id = sw.id;
		/* the identities name the sweep across stores and the server (local ids are one store's) */
		if (hb_db_uid_of(db, HB_DB_REC_SWEEP, sw.id, col->sweep_uid) != HB_OK)
			col->sweep_uid[0] = '\0';
		if (!sw.unit_id || hb_db_uid_of(db, HB_DB_REC_UNIT, sw.unit_id, col->unit_uid) != HB_OK)
			col->unit_uid[0] = '\0';
		snprintf(col->part_number, sizeof col->part_number, "%s", sw.part_number);
		snprintf(col->serial, sizeof col->serial, "%s", sw.serial);
		snprintf(col->station, sizeof col->station, "%s", sw.station);
		snprintf(col->lot_code, sizeof col->lot_code, "%s", sw.lot_code);
		snprintf(col->started_iso, sizeof col->started_iso, "%s", sw.started_iso);
		snprintf(col->status, sizeof col->status, "%s", hb_db_sweep_status_name(sw.status));
		col->l0_h = col->mu_e = col->gap_m = NAN;
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
			col->i_drop_a[k] = NAN;
		rc = hb_db_fit_get_latest(db, sw.id, NULL, fit);
		if (rc == HB_OK) {
			col->l0_h = fit_value_named(fit, HB_DB_FV_L0);
			col->mu_e = fit_value_named(fit, HB_DB_FV_MU_E);
			col->gap_m = fit_value_named(fit, HB_DB_FV_GAP);
			for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
				char name[32];
				snprintf(name, sizeof name, HB_DB_FV_DROP_FMT, out->drop_percent[k]);
				col->i_drop_a[k] = fit_value_named(fit, name);
			}
		} else if (rc != HB_ERR_NOTFOUND) {
			snprintf(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			goto fail;
		}
		hb_db_verdict *v = NULL;
		size_t nv = 0;
		rc = hb_db_verdict_list(db, sw.id, &v, &nv);
		if (rc != HB_OK) {
			snprintf(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			goto fail;
		}
		size_t pass = 0, failed = 0;
		for (size_t k = 0; k < nv; k++) {
			pass += v[k].outcome == HB_DB_PASS;
			failed += v[k].outcome == HB_DB_FAIL;
		}
		col->verdict = failed ? HB_DB_FAIL : (nv > 0 && pass == nv) ? HB_DB_PASS : HB_DB_NOT_TESTED;
		hb_db_verdicts_free(v);
		hb_db_point *pts = NULL;
		size_t np = 0;
		rc = hb_db_points_get(db, sw.id, &pts, &np);
		if (rc == HB_OK)
			rc = hb_analysis_bias_arrays(pts, np, &I[i], &L[i], &m[i]);
		hb_db_points_free(pts);
		if (rc != HB_OK) {
			snprintf(err, errlen, "sweep %lld: %s", (long long)ids[i], rc == HB_ERR_NOMEM ? "out of memory" :
				 hb_db_errmsg(db));
			goto fail;
		}
		col->i_min = m[i] ? I[i][0] : NAN;
		col->i_max = m[i] ? I[i][m[i] - 1] : NAN;
	}
	/* The currents every sweep covers, so each L is read, not extrapolated. */
	double lo = -INFINITY, hi = INFINITY;
	for (size_t i = 0; i < n; i++) {
		lo = fmax(lo, isfinite(out->cols[i].i_min) ? out->cols[i].i_min : INFINITY);
		hi = fmin(hi, isfinite(out->cols[i].i_max) ? out->cols[i].i_max : -INFINITY);
	}
	if (isfinite(lo) && isfinite(hi) && hi > 0 && lo <= 0.01 * hi)
		lo = 0;
	if (isfinite(lo) && isfinite(hi) && hi > lo) {
		out->n_currents = n_currents;
		for (size_t k = 0; k < n_currents; k++)
			out->currents[k] = lo + (hi - lo) * (double)k / (double)(n_currents - 1);
		out->currents[n_currents - 1] = hi;
	}
	for (size_t i = 0; i < n; i++)
		for (size_t k = 0; k < out->n_currents; k++)
			out->cols[i].l_at[k] = interp(I[i], L[i], m[i], out->currents[k]);
	rc = HB_OK;
	goto done;
fail:
	hb_compare_free(out);
done:
	for (size_t i = 0; I && L && i < n; i++) {
		free(I[i]);
		free(L[i]);
	}
	free(I);
	free(L);
	free(m);
	free(fit);
	return rc;
}

json_t *hb_compare_json(const hb_compare_table *t)
{
	json_t *j = json_object();
	json_t *cur = json_array();
	for (size_t k = 0; k < t->n_currents; k++)
		json_array_append_new(cur, hb_json_num(t->currents[k]));
	json_object_set_new(j, "currents_A", cur);
	json_t *arr = json_array();
	for (size_t i = 0; i < t->n; i++) {
		const hb_compare_column *c = &t->cols[i];
		/* the history's unit row, so one result has one set of keys */
		hb_db_history_row r;
		memset(&r, 0, sizeof r);
		r.sweep_id = c->sweep_id;
		snprintf(r.started_iso, sizeof r.started_iso, "%s", c->started_iso);
		snprintf(r.station, sizeof r.station, "%s", c->station);
		snprintf(r.lot_code, sizeof r.lot_code, "%s", c->lot_code);
		snprintf(r.serial, sizeof r.serial, "%s", c->serial);
		r.l0_h = c->l0_h;
		memcpy(r.i_drop_a, c->i_drop_a, sizeof r.i_drop_a);
		r.mu_e = c->mu_e;
		r.gap_m = c->gap_m;
		r.verdict = c->verdict;
		json_t *o = hb_json_unit_result(&r, t->drop_percent);
		json_object_set_new(o, "part_number", json_string(c->part_number));
		json_object_set_new(o, "status", json_string(c->status));
		json_object_set_new(o, "sweep_uid", c->sweep_uid[0] ? json_string(c->sweep_uid) : json_null());
		json_object_set_new(o, "unit_uid", c->unit_uid[0] ? json_string(c->unit_uid) : json_null());
		json_t *l = json_array();
		for (size_t k = 0; k < t->n_currents; k++)
			json_array_append_new(l, hb_json_num(c->l_at[k]));
		json_object_set_new(o, "L_at_H", l);
		json_array_append_new(arr, o);
	}
	json_object_set_new(j, "sweeps", arr);
	return j;
}

static void print_compare_text(const hb_compare_table *t)
{
	char buf[40];
	printf("%-18s", "sweep");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13lld", (long long)t->cols[i].sweep_id);
	printf("\n%-18s", "part");
	for (size_t i = 0; i < t->n; i++)
	{
			putchar(' ');
			hb_fput_cell(stdout, t->cols[i].part_number, 13, false);
		}
	printf("\n%-18s", "serial");
	for (size_t i = 0; i < t->n; i++)
	{
			putchar(' ');
			hb_fput_cell(stdout, t->cols[i].serial, 13, false);
		}
	printf("\n%-18s", "lot");
	for (size_t i = 0; i < t->n; i++)
	{
			putchar(' ');
			hb_fput_cell(stdout, t->cols[i].lot_code, 13, false);
		}
	printf("\n%-18s", "date");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13.10s", t->cols[i].started_iso);
	printf("\n%-18s", "L0");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13s", hb_si_or_dash(buf, sizeof buf, t->cols[i].l0_h, "H"));
	for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
		char label[32];
		snprintf(label, sizeof label, "I at -%d %% L", t->drop_percent[k]);
		printf("\n%-18s", label);
		for (size_t i = 0; i < t->n; i++)
			printf(" %13s", hb_si_or_dash(buf, sizeof buf, t->cols[i].i_drop_a[k], "A"));
	}
	printf("\n%-18s", "mu_e");
	for (size_t i = 0; i < t->n; i++)
		if (isfinite(t->cols[i].mu_e))
			printf(" %13.1f", t->cols[i].mu_e);
		else
			printf(" %13s", "-");
	printf("\n%-18s", "gap");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13s", hb_si_or_dash(buf, sizeof buf, t->cols[i].gap_m, "m"));
	printf("\n%-18s", "verdict");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13s", hb_db_outcome_name(t->cols[i].verdict));
	printf("\n");
	if (t->n_currents == 0) {
		printf("(the sweeps share no current range: no L at common currents)\n");
		return;
	}
	for (size_t k = 0; k < t->n_currents; k++) {
		char label[32];
		snprintf(label, sizeof label, "L at %.3g A", t->currents[k]);
		printf("%-18s", label);
		for (size_t i = 0; i < t->n; i++)
			printf(" %13s", hb_si_or_dash(buf, sizeof buf, t->cols[i].l_at[k], "H"));
		printf("\n");
	}
}

static int write_overlay(hb_db *db, const int64_t *ids, size_t n, const char *path)
{
	char *svg = NULL;
	int rc = hb_report_compare_svg(db, ids, n, &svg);
	if (rc != HB_OK) {
		hb_cli_error("compare --plot: %s", hb_status_name(rc));
		return rc;
	}
	/* through the one output-file path: a failed close is reported once and
	 * the stream is never closed twice; a FIFO or device is refused */
	char err[300] = "";
	hb_out *o = NULL;
	rc = hb_out_open(path, &o, err, sizeof err);
	if (rc == HB_OK) {
		if (fputs(svg, hb_out_stream(o)) == EOF) {
			snprintf(err, sizeof err, "cannot write %s: %s", path, strerror(errno));
			hb_out_abort(o);
			rc = HB_ERR_IO;
		} else {
			rc = hb_out_commit(o, err, sizeof err);
		}
	}
	if (rc != HB_OK) {
		hb_cli_error("compare --plot: %s", err);
		free(svg);
		return rc;
	}
	free(svg);
	return HB_OK;
}

typedef struct compare_args {
	bool json, csv;
	const char *plot_path;
	long n_currents;
} compare_args;

static const hb_opt compare_table[] = {
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(compare_args, json), .help = "one JSON object on stdout" },
	{ .name = "csv", .kind = HB_OPT_FLAG, .off = offsetof(compare_args, csv),
	  .help = "one CSV row per sweep, SI units named in the header" },
	{ .name = "currents", .kind = HB_OPT_LONG, .arg = "N", .min = 2, .max = HB_COMPARE_MAX_CURRENTS,
	  .off = offsetof(compare_args, n_currents), .help = "common currents L is read at (default 6)" },
	{ .name = "plot", .kind = HB_OPT_PATH, .arg = "FILE.svg", .off = offsetof(compare_args, plot_path),
	  .help = "write the sweeps overlaid in one SVG plot" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_compare = {
	.name = "compare",
	.usage = "SWEEP_ID SWEEP_ID... [--currents N] [--plot FILE.svg] [--json|--csv]",
	.about = "Bias sweeps side by side: L0, currents at -10/-20/-30 % L, mu_e, gap and verdict from the\n"
		 "newest fit, and L read at N common currents spread over the range every sweep covers.\n",
	.opts = compare_table,
	.max_operands = -1,
};

int hb_cmd_compare(int argc, char **argv)
{
	compare_args a = { .json = false, .csv = false, .plot_path = NULL, .n_currents = 6 };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_compare, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	if (a.json && a.csv) {
		hb_cli_error("compare: give --json or --csv, not both");
		return HB_EXIT_USAGE;
	}
	bool json = a.json;
	const char *plot_path = a.plot_path;
	long n_currents = a.n_currents;
	int first = r.first;
	size_t n = (size_t)(argc - first);
	if (n < 2 || n > HB_COMPARE_MAX_SWEEPS) {
		hb_cli_error("compare: give 2 to %d sweep ids (got %zu; see 'henrybench sweeps')", HB_COMPARE_MAX_SWEEPS, n);
		return HB_EXIT_USAGE;
	}
	int64_t ids[HB_COMPARE_MAX_SWEEPS];
	for (size_t i = 0; i < n; i++) {
		long long id;
		if (hb_cli_parse_sweep_id(argv[first + (int)i], &id) != HB_OK)
			return HB_EXIT_USAGE;
		ids[i] = id;
	}
	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_compare_table t;
	memset(&t, 0, sizeof t);
	char err[320];
	if (!(db = hb_cli_open_store_read(&exit_code)))
		goto out;
	int rc = hb_compare_load(db, ids, n, (size_t)n_currents, &t, err, sizeof err);
	if (rc != HB_OK) {
		hb_cli_error("compare: %s", err);
		exit_code = rc == HB_ERR_NOTFOUND || rc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	if (json) {
		if (hb_print_json(hb_compare_json(&t)) != HB_OK) {
			hb_cli_error("compare: cannot write the JSON output");
			goto out;
		}
	} else if (a.csv) {
		if (hb_cli_compare_csv(&t, stdout) != HB_OK) {
			hb_cli_error("compare: cannot write the CSV output");
			goto out;
		}
	} else {
		print_compare_text(&t);
	}
	if (plot_path) {
		int prc = write_overlay(db, ids, n, plot_path);
		if (prc != HB_OK) {
			/* a FIFO, device or directory given as the path is a bad value */
			exit_code = prc == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
			goto out;
		}
	}
	if (fflush(stdout) != 0) {
		hb_cli_stdout_error("compare");
		goto out;
	}
	exit_code = HB_EXIT_OK;
out:
	hb_compare_free(&t);
	hb_db_close(db);
	return exit_code;
}
