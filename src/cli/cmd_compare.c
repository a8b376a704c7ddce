/* src/cli/cmd_compare.c - the `compare` command: stored sweeps side by side as a table, JSON or an overlay plot */
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
		snprintf(col->part_number, sizeof col->part_number, "%s", sw.part_number);
		snprintf(col->serial, sizeof col->serial, "%s", sw.serial);
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
		json_array_append_new(cur, json_real(t->currents[k]));
	json_object_set_new(j, "currents_A", cur);
	json_t *arr = json_array();
	for (size_t i = 0; i < t->n; i++) {
		const hb_compare_column *c = &t->cols[i];
		json_t *o = json_object();
		json_object_set_new(o, "sweep_id", json_integer(c->sweep_id));
		json_object_set_new(o, "part", json_string(c->part_number));
		json_object_set_new(o, "serial", json_string(c->serial));
		json_object_set_new(o, "lot", c->lot_code[0] ? json_string(c->lot_code) : json_null());
		json_object_set_new(o, "started", json_string(c->started_iso));
		json_object_set_new(o, "status", json_string(c->status));
		json_object_set_new(o, "L0_H", hb_json_num(c->l0_h));
		json_t *drops = json_object();
		for (int k = 0; k < HB_DB_HISTORY_DROPS; k++) {
			char key[16];
			snprintf(key, sizeof key, "%d", t->drop_percent[k]);
			json_object_set_new(drops, key, hb_json_num(c->i_drop_a[k]));
		}
		json_object_set_new(o, "I_drop_A", drops);
		json_object_set_new(o, "mu_e", hb_json_num(c->mu_e));
		json_object_set_new(o, "gap_m", hb_json_num(c->gap_m));
		json_object_set_new(o, "verdict", json_string(hb_db_outcome_name(c->verdict)));
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
		printf(" %13.13s", t->cols[i].part_number);
	printf("\n%-18s", "serial");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13.13s", t->cols[i].serial[0] ? t->cols[i].serial : "-");
	printf("\n%-18s", "lot");
	for (size_t i = 0; i < t->n; i++)
		printf(" %13.13s", t->cols[i].lot_code[0] ? t->cols[i].lot_code : "-");
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

static void compare_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench compare SWEEP_ID SWEEP_ID... [--currents N] [--plot FILE.svg] [--json]\n"
		"Bias sweeps side by side: L0, currents at -10/-20/-30 %% L, mu_e, gap and verdict from the\n"
		"newest fit, and L read at N common currents (default 6) spread over the range every\n"
		"sweep covers. --plot writes the sweeps overlaid in one SVG plot.\n");
}

static int write_overlay(hb_db *db, const int64_t *ids, size_t n, const char *path)
{
	char *svg = NULL;
	int rc = hb_report_compare_svg(db, ids, n, &svg);
	if (rc != HB_OK) {
		hb_cli_error("compare --plot: %s", hb_status_name(rc));
		return rc;
	}
	FILE *f = fopen(path, "w");
	if (!f || fputs(svg, f) == EOF || fclose(f) != 0) {
		hb_cli_error("compare --plot %s: cannot write: %s", path, strerror(errno));
		if (f)
			fclose(f);
		free(svg);
		return HB_ERR_IO;
	}
	free(svg);
	return HB_OK;
}

int hb_cmd_compare(int argc, char **argv)
{
	static const struct option opts[] = {
		{ "json", no_argument, NULL, 'j' },
		{ "currents", required_argument, NULL, 'n' },
		{ "plot", required_argument, NULL, 'p' },
		{ "help", no_argument, NULL, 'h' },
		{ NULL, 0, NULL, 0 },
	};
	bool json = false;
	const char *plot_path = NULL;
	long n_currents = 6;
	int c;
	optind = 1;
	opterr = 0;
	while ((c = getopt_long(argc, argv, "h", opts, NULL)) != -1) {
		switch (c) {
		case 'j': json = true; break;
		case 'n':
			if (hb_opt_int("--currents", optarg, 2, HB_COMPARE_MAX_CURRENTS, &n_currents) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case 'p': plot_path = optarg; break;
		case 'h': compare_usage(stdout); return HB_EXIT_OK;
		default:
			hb_cli_error("compare: unknown or incomplete option '%s' (try --help)", argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	size_t n = (size_t)(argc - optind);
	if (n < 2 || n > HB_COMPARE_MAX_SWEEPS) {
		hb_cli_error("compare: give 2 to %d sweep ids (got %zu; see 'henrybench sweeps')", HB_COMPARE_MAX_SWEEPS, n);
		return HB_EXIT_USAGE;
	}
	int64_t ids[HB_COMPARE_MAX_SWEEPS];
	for (size_t i = 0; i < n; i++) {
		long long id;
		if (hb_cli_parse_sweep_id(argv[optind + (int)i], &id) != HB_OK)
			return HB_EXIT_USAGE;
		ids[i] = id;
	}
	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_compare_table t;
	memset(&t, 0, sizeof t);
	char err[320];
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("store: %s", db ? hb_db_errmsg(db) : "out of memory");
		goto out;
	}
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
	} else {
		print_compare_text(&t);
	}
	if (plot_path && write_overlay(db, ids, n, plot_path) != HB_OK)
		goto out;
	if (fflush(stdout) != 0) {
		hb_cli_error("compare: cannot write to standard output");
		goto out;
	}
	exit_code = HB_EXIT_OK;
out:
	hb_compare_free(&t);
	hb_db_close(db);
	return exit_code;
}
