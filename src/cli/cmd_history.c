/* src/cli/cmd_history.c - the `history` command: a part's units, lot statistics and trend as text, JSON or CSV */
#include <errno.h>
#include <getopt.h>
#include <math.h>
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

/* ---------------- output helpers ---------------- */

/* RFC 4180: quote a field holding a comma, quote or line break. */
static void csv_text(FILE *out, const char *s)
{
	if (!strpbrk(s, ",\"\r\n")) {
		fputs(s, out);
		return;
	}
	fputc('"', out);
	for (; *s; s++) {
		if (*s == '"')
			fputc('"', out);
		fputc(*s, out);
	}
	fputc('"', out);
}

static void csv_num(FILE *out, double v)
{
	if (isfinite(v))
		fprintf(out, ",%.9g", v);
	else
		fputc(',', out);
}

/* ---------------- history command ---------------- */

static void history_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench history PARTNO [--lot L] [--unit S] [--since YYYY-MM-DD] [--json|--csv]\n"
		"Every measured unit of the part (its latest complete bias sweep, with the newest fit and\n"
		"verdicts), then per lot: count, mean, standard deviation, min and max of L0 and Cp/Cpk\n"
		"against the part's tolerance, and the trend of the lot means of L0 and of the saturation\n"
		"current (I at the part's saturation drop, else at -30 %% L) in time order.\n\n"
		"  --lot L        only this lot\n"
		"  --unit S       only this serial\n"
		"  --since DATE   only sweeps started on or after this day (UTC)\n"
		"  --json         units, lots and trend as one JSON object\n"
		"  --csv          one row per unit, SI units named in the header\n");
}

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
		printf("%-20s %-12s %-12s %-14s %6lld %-11s", r->started_iso, r->station, r->lot_code[0] ? r->lot_code : "-",
		       r->serial, (long long)r->sweep_id, hb_si_or_dash(a, sizeof a, r->l0_h, "H"));
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
			printf(" %-9s", hb_si_or_dash(b, sizeof b, r->i_drop_a[k], "A"));
		if (isfinite(r->mu_e))
			snprintf(c, sizeof c, "%.1f", r->mu_e);
		else
			snprintf(c, sizeof c, "-");
		printf(" %-8s %-10s %s\n", c, hb_si_or_dash(d, sizeof d, r->gap_m, "m"), hb_db_outcome_name(r->verdict));
	}
	printf("\nper lot (L0; Cp/Cpk against nominal +- tolerance, ISO 22514-2 with the sample s):\n");
	printf("%-14s %5s %5s %5s %-11s %-10s %-11s %-11s %6s %6s  %s\n", "lot", "units", "pass", "fail", "mean", "s", "min",
	       "max", "Cp", "Cpk", "first measured");
	for (size_t k = 0; k < s->n_lots; k++) {
		const hb_history_lot *l = &s->lots[k];
		printf("%-14s %5zu %5zu %5zu %-11s %-10s %-11s %-11s", l->lot_code[0] ? l->lot_code : "(no lot)", l->n_units,
		       l->n_pass, l->n_fail, hb_si_or_dash(a, sizeof a, l->l0.mean, "H"),
		       hb_si_or_dash(b, sizeof b, l->l0.stddev, "H"), hb_si_or_dash(c, sizeof c, l->l0.min, "H"),
		       hb_si_or_dash(d, sizeof d, l->l0.max, "H"));
		if (isfinite(l->cp))
			printf(" %6.2f", l->cp);
		else
			printf(" %6s", "-");
		if (isfinite(l->cpk))
			printf(" %6.2f", l->cpk);
		else
			printf(" %6s", "-");
		printf("  %s\n", l->first_iso);
	}
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
	json_object_set_new(j, "part", json_string(part->part_number));
	json_object_set_new(j, "nominal_H", hb_json_num(part->nominal_h));
	json_object_set_new(j, "tolerance", hb_json_num(part->tolerance));
	json_t *units = json_array();
	for (size_t i = 0; i < n; i++) {
		const hb_db_history_row *r = &rows[i];
		json_t *u = json_object();
		json_object_set_new(u, "started", json_string(r->started_iso));
		json_object_set_new(u, "station", json_string(r->station));
		json_object_set_new(u, "lot", r->lot_code[0] ? json_string(r->lot_code) : json_null());
		json_object_set_new(u, "serial", json_string(r->serial));
		json_object_set_new(u, "sweep_id", json_integer(r->sweep_id));
		json_object_set_new(u, "L0_H", hb_json_num(r->l0_h));
		json_t *drops = json_object();
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
			char key[16];
			snprintf(key, sizeof key, "%d", f->drop_percent[k]);
			json_object_set_new(drops, key, hb_json_num(r->i_drop_a[k]));
		}
		json_object_set_new(u, "I_drop_A", drops);
		json_object_set_new(u, "mu_e", hb_json_num(r->mu_e));
		json_object_set_new(u, "gap_m", hb_json_num(r->gap_m));
		json_object_set_new(u, "verdict", json_string(hb_db_outcome_name(r->verdict)));
		json_array_append_new(units, u);
	}
	json_object_set_new(j, "units", units);
	json_t *lots = json_array();
	for (size_t k = 0; k < s->n_lots; k++) {
		const hb_history_lot *l = &s->lots[k];
		json_t *o = json_object();
		json_object_set_new(o, "lot", l->lot_code[0] ? json_string(l->lot_code) : json_null());
		json_object_set_new(o, "units", json_integer((json_int_t)l->n_units));
		json_object_set_new(o, "pass", json_integer((json_int_t)l->n_pass));
		json_object_set_new(o, "fail", json_integer((json_int_t)l->n_fail));
		json_object_set_new(o, "not_tested", json_integer((json_int_t)l->n_not_tested));
		json_object_set_new(o, "first_measured", json_string(l->first_iso));
		json_object_set_new(o, "last_measured", json_string(l->last_iso));
		json_object_set_new(o, "L0_H", stats_json(&l->l0));
		json_object_set_new(o, "Cp", hb_json_num(l->cp));
		json_object_set_new(o, "Cpk", hb_json_num(l->cpk));
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

static void history_csv(const hb_db_history_row *rows, size_t n, const hb_db_history_filter *f)
{
	printf("started_utc,station,lot,serial,sweep_id,L0_H");
	for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
		printf(",I_drop%d_A", f->drop_percent[k]);
	printf(",mu_e,gap_m,verdict\n");
	for (size_t i = 0; i < n; i++) {
		const hb_db_history_row *r = &rows[i];
		csv_text(stdout, r->started_iso);
		fputc(',', stdout);
		csv_text(stdout, r->station);
		fputc(',', stdout);
		csv_text(stdout, r->lot_code);
		fputc(',', stdout);
		csv_text(stdout, r->serial);
		printf(",%lld", (long long)r->sweep_id);
		csv_num(stdout, r->l0_h);
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++)
			csv_num(stdout, r->i_drop_a[k]);
		csv_num(stdout, r->mu_e);
		csv_num(stdout, r->gap_m);
		printf(",%s\n", hb_db_outcome_name(r->verdict));
	}
}

int hb_cmd_history(int argc, char **argv)
{
	static const struct option opts[] = {
		{ "lot", required_argument, NULL, 'l' },
		{ "unit", required_argument, NULL, 'u' },
		{ "since", required_argument, NULL, 's' },
		{ "json", no_argument, NULL, 'j' },
		{ "csv", no_argument, NULL, 'c' },
		{ "help", no_argument, NULL, 'h' },
		{ NULL, 0, NULL, 0 },
	};
	hb_db_history_filter f;
	hb_db_history_filter_init(&f);
	bool json = false, csv = false;
	int c;
	optind = 1;
	opterr = 0;
	while ((c = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
		switch (c) {
		case 'l': f.lot_code = optarg; break;
		case 'u': f.serial = optarg; break;
		case 's':
			if (parse_date(optarg, &f.since) != HB_OK) {
				hb_cli_error("--since '%s': give a date YYYY-MM-DD (1970-01-01 or later)", optarg);
				return HB_EXIT_USAGE;
			}
			break;
		case 'j': json = true; break;
		case 'c': csv = true; break;
		case 'h': history_usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("history: unknown or incomplete option '%s' (try --help)", argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (optind + 1 != argc) {
		hb_cli_error(optind >= argc ? "history: PARTNO is required (try --help)" :
					      "history: one PARTNO only (try --help)");
		return HB_EXIT_USAGE;
	}
	if (json && csv) {
		hb_cli_error("history: give --json or --csv, not both");
		return HB_EXIT_USAGE;
	}
	f.part_number = argv[optind];

	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	hb_history_summary sum;
	memset(&sum, 0, sizeof sum);
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("store: %s", db ? hb_db_errmsg(db) : "out of memory");
		goto out;
	}
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
		if (hb_print_json(history_json(&part, rows, n, &f, &sum)) != HB_OK) {
			hb_cli_error("history: cannot write the JSON output");
			goto out;
		}
	} else if (csv) {
		history_csv(rows, n, &f);
	} else {
		print_history_text(&part, rows, n, &f, &sum);
	}
	if (fflush(stdout) != 0) {
		hb_cli_error("history: cannot write to standard output");
		goto out;
	}
	exit_code = HB_EXIT_OK;
out:
	hb_history_summary_free(&sum);
	hb_db_history_free(rows);
	hb_db_close(db);
	return exit_code;
}
