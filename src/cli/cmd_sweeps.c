/* src/cli/cmd_sweeps.c - commands `sweeps` (list stored sweeps) and `show` (one sweep: settings and points) */
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../io/io.h"
#include "../quality/quality.h"
#include "cli.h"

/* "YYYY-MM-DD" or "YYYY-MM-DDTHH:MM[:SS][Z]", always UTC. */
static int take_since(const hb_opt *o, const char *text, void *field)
{
	double *out = field;
	(void)o;
	int y, mo, d, h = 0, mi = 0, s = 0, used = 0;
	struct tm tm;
	memset(&tm, 0, sizeof tm);
	if (sscanf(text, "%4d-%2d-%2d%n", &y, &mo, &d, &used) != 3)
		goto bad;
	const char *rest = text + used;
	if (*rest == 'T' || *rest == ' ') {
		int n2 = 0;
		if (sscanf(rest + 1, "%2d:%2d%n", &h, &mi, &n2) != 2)
			goto bad;
		rest += 1 + n2;
		if (*rest == ':') {
			int n3 = 0;
			if (sscanf(rest + 1, "%2d%n", &s, &n3) != 1)
				goto bad;
			rest += 1 + n3;
		}
		if (*rest == 'Z')
			rest++;
	}
	if (*rest || mo < 1 || mo > 12 || d < 1 || d > 31 || h > 23 || mi > 59 || s > 60)
		goto bad;
	tm.tm_year = y - 1900;
	tm.tm_mon = mo - 1;
	tm.tm_mday = d;
	tm.tm_hour = h;
	tm.tm_min = mi;
	tm.tm_sec = s;
	*out = (double)timegm(&tm);
	return HB_OK;
bad:
	hb_cli_error("--since '%s' is not a date: accepted YYYY-MM-DD or YYYY-MM-DDTHH:MM[:SS]Z (UTC)", text);
	return HB_ERR_ARG;
}

/* ---------------- sweeps ---------------- */

static int match_status(const char *text, int *code)
{
	hb_db_sweep_status st;
	if (hb_db_sweep_status_parse(text, &st) != HB_OK)
		return HB_ERR_ARG;
	*code = (int)st;
	return HB_OK;
}

static const char *const status_words[] = { "running", "complete", "aborted", "failed", "interrupted", NULL };

typedef struct sweeps_args {
	hb_db_sweep_filter f;
	bool json, csv, all;
} sweeps_args;

/* Without --limit or --all: the newest this many (a store of tens of
 * thousands of sweeps is not a screenful). */
enum { SWEEPS_DEFAULT_LIMIT = 50 };

static const hb_opt sweeps_table[] = {
	{ .name = "part", .kind = HB_OPT_TEXT, .arg = "P", .off = offsetof(sweeps_args, f.part_number), .help = "part number" },
	{ .name = "unit", .kind = HB_OPT_TEXT, .arg = "SERIAL", .off = offsetof(sweeps_args, f.serial),
	  .help = "unit serial number" },
	{ .name = "lot", .kind = HB_OPT_TEXT, .arg = "L", .off = offsetof(sweeps_args, f.lot_code), .help = "lot code" },
	{ .name = "status", .kind = HB_OPT_ENUM, .words = status_words, .match = match_status,
	  .off = offsetof(sweeps_args, f.status), .help = "how the sweep ended" },
	{ .name = "kind", .kind = HB_OPT_ENUM, .words = hb_opt_kind_words, .match = hb_opt_match_kind,
	  .off = offsetof(sweeps_args, f.kind), .help = "kind of sweep" },
	{ .name = "since", .kind = HB_OPT_CUSTOM, .arg = "DATE", .parse = take_since, .off = offsetof(sweeps_args, f.since),
	  .help = "started on or after DATE (UTC), e.g. 2024-05-01 or 2024-05-01T08:00Z" },
	{ .name = "limit", .kind = HB_OPT_LONG, .arg = "N", .min = 1, .max = 100000000L,
	  .off = offsetof(sweeps_args, f.limit), .help = "at most N sweeps (default 50)" },
	{ .name = "all", .kind = HB_OPT_FLAG, .off = offsetof(sweeps_args, all), .help = "every matching sweep, no limit" },
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(sweeps_args, json), .help = "machine-readable output" },
	{ .name = "csv", .kind = HB_OPT_FLAG, .off = offsetof(sweeps_args, csv),
	  .help = "one CSV row per sweep (RFC 4180, the dialect of export --csv)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_sweeps = {
	.name = "sweeps",
	.usage = "[--part P] [--unit SERIAL] [--lot L] [--status S]\n"
		 "                         [--kind bias|frequency] [--since DATE] [--limit N | --all] [--json|--csv]",
	.about = "\nLists stored sweeps, newest first: the newest 50 unless --limit or --all says otherwise\n"
		 "(a note on stderr says how many matched).\n",
	.opts = sweeps_table,
	.max_operands = 0,
};

int hb_cmd_sweeps(int argc, char **argv)
{
	sweeps_args a = { .json = false };
	hb_db_sweep_filter_init(&a.f);
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_sweeps, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	hb_db_sweep_filter f = a.f;
	bool json = a.json;
	if (a.json && a.csv) {
		hb_cli_error("sweeps: give --json or --csv, not both");
		return HB_EXIT_USAGE;
	}
	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	if (a.all && f.limit > 0) {
		hb_db_close(db);
		hb_cli_error("sweeps: --all and --limit %ld contradict each other; give one", f.limit);
		return HB_EXIT_USAGE;
	}
	if (!a.all && f.limit <= 0)
		f.limit = SWEEPS_DEFAULT_LIMIT;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	int64_t matched = 0;
	if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK ||
	    (f.limit > 0 && (size_t)f.limit == n && hb_db_sweep_count(db, &f, &matched) != HB_OK)) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_sweeps_free(list);
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	if ((size_t)matched > n)
		fprintf(stderr, "sweeps: the newest %zu of %lld matching sweeps shown; --limit N or --all for more\n", n,
			(long long)matched);
	if (json) {
		json_t *arr = json_array();
		for (size_t i = 0; i < n; i++) {
			json_t *o = hb_json_sweep_summary(&list[i]);
			char uid[HB_DB_UID_LEN] = "";
			if (o && hb_db_uid_of(db, HB_DB_REC_SWEEP, list[i].id, uid) == HB_OK && uid[0])
				json_object_set_new(o, "uid", json_string(uid));
			json_array_append_new(arr, o);
		}
		hb_db_close(db);
		hb_db_sweeps_free(list);
		return hb_print_json(arr) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	hb_db_close(db);
	if (a.csv) {
		int crc = hb_cli_sweeps_csv(list, n, stdout);
		hb_db_sweeps_free(list);
		if (crc != HB_OK || fflush(stdout) != 0) {
			hb_cli_error("sweeps: cannot write the CSV output");
			return HB_EXIT_RUNTIME;
		}
		return HB_EXIT_OK;
	}
	printf("%8s  %-20s  %-20s  %-14s  %-9s  %-11s  %6s  %s\n", "id", "started (UTC)", "part", "unit", "kind",
	       "status", "points", "station");
	for (size_t i = 0; i < n; i++) {
		const hb_db_sweep *s = &list[i];
		/* user text padded by display width, so non-ASCII part numbers keep the columns */
		printf("%8lld  %-20s  ", (long long)s->id, s->started_iso);
		hb_fput_cell(stdout, s->part_number, 20, true);
		printf("  ");
		hb_fput_cell(stdout, s->serial, 14, true);
		printf("  %-9s  %-11s  %6ld  %s\n", hb_db_sweep_kind_name(s->kind), hb_db_sweep_status_name(s->status), s->n_points,
		       s->station[0] ? s->station : "-");
	}
	hb_db_sweeps_free(list);
	return HB_EXIT_OK;
}

/* ---------------- show ---------------- */

typedef struct show_args {
	bool json, csv, all_verdicts;
} show_args;

static const hb_opt show_table[] = {
	{ .name = "json", .kind = HB_OPT_FLAG, .off = offsetof(show_args, json), .help = "one JSON document" },
	{ .name = "csv", .kind = HB_OPT_FLAG, .off = offsetof(show_args, csv),
	  .help = "the points only, SI units named in the header" },
	{ .name = "all-verdicts", .kind = HB_OPT_FLAG, .off = offsetof(show_args, all_verdicts),
	  .help = "also the verdicts superseded by a later judgement (text and JSON)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_show = {
	.name = "show",
	.usage = "SWEEP_ID [--json | --csv] [--all-verdicts]",
	.about = "\nPrints one stored sweep: its settings, instruments, verdicts and every point.\n"
		 "SWEEP_ID is the local number or the sweep's global identity. The verdicts shown\n"
		 "are those in force; --all-verdicts adds the ones a later judgement superseded.\n",
	.opts = show_table,
	.max_operands = -1,
};

static const char *si(char *buf, size_t cap, double v, const char *unit)
{
	return isnan(v) ? "-" : hb_format_si(buf, cap, v, unit, 4);
}

static const char *si6(char *buf, size_t cap, double v, const char *unit, int digits)
{
	return hb_format_si(buf, cap, v, unit, digits);
}

/* seconds since the sweep began, to the millisecond the store keeps */
static const char *time_text(char *buf, size_t cap, double t)
{
	if (!isfinite(t))
		return HB_TEXT_ABSENT;
	snprintf(buf, cap, "%.3f s", t);
	return buf;
}

/* "L_H" -> "L" and "H"; "theta_deg" -> "theta" and "deg". */
static void reading_name(const char *pair, int which, char *name, size_t ncap, char *unit, size_t ucap)
{
	const char *col = hb_io_reading_column(pair[0] ? pair : "Ls-Rs", which);
	const char *us = strrchr(col, '_');
	size_t len = us ? (size_t)(us - col) : strlen(col);
	snprintf(name, ncap, "%.*s", (int)len, col);
	snprintf(unit, ucap, "%s", us ? us + 1 : "");
}

static void print_text(hb_db *db, const hb_db_sweep *s, const hb_db_point *pts, size_t n, const hb_db_verdict *v,
		       size_t nv)
{
	char a[48], b[48], c[48];
	printf("sweep %lld: %s, %s%s%s\n", (long long)s->id, hb_db_sweep_kind_name(s->kind),
	       hb_db_sweep_status_name(s->status), s->status_reason[0] ? " - " : "", s->status_reason);
	char uid[HB_DB_UID_LEN] = "", puid[HB_DB_UID_LEN] = "";
	if (hb_db_uid_of(db, HB_DB_REC_SWEEP, s->id, uid) == HB_OK && uid[0] &&
	    hb_db_uid_of(db, HB_DB_REC_POINTS, s->id, puid) == HB_OK)
		printf("  identity            %s (points %s)\n", uid, puid[0] ? puid : "-");
	printf("  part / unit / lot   %s / %s / %s\n", s->part_number[0] ? s->part_number : "-",
	       s->serial[0] ? s->serial : "-", s->lot_code[0] ? s->lot_code : "-");
	printf("  started / ended     %s / %s (UTC)\n", s->started_iso, s->ended_iso[0] ? s->ended_iso : "-");
	printf("  station / operator  %s / %s (host %s, pid %ld)\n", s->station[0] ? s->station : "-",
	       s->operator_name[0] ? s->operator_name : "-", s->host, s->pid);
	printf("  LCR meter           %s [%s]\n", s->lcr_idn[0] ? s->lcr_idn : "-", s->lcr_profile);
	printf("  supply              %s [%s]\n", s->supply_idn[0] ? s->supply_idn : "-", s->supply_profile);
	printf("  test signal         %s at %s, %s %s, averaging %d, aperture %s\n",
	       si(a, sizeof a, s->test_level, s->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V"),
	       si(b, sizeof b, s->test_freq_hz, "Hz"), s->circuit[0] ? s->circuit : "-",
	       s->measured_pair[0] ? s->measured_pair : "-", s->averaging, s->aperture[0] ? s->aperture : "-");
	const char *u = s->kind == HB_DB_SWEEP_FREQUENCY ? "Hz" : "A";
	printf("  plan                %s to %s, %d steps, %s", si(a, sizeof a, s->plan_from, u),
	       si(b, sizeof b, s->plan_to, u), s->plan_steps, s->plan_spacing[0] ? s->plan_spacing : "-");
	if (s->kind == HB_DB_SWEEP_FREQUENCY)
		printf(", bias %s", si(c, sizeof c, s->bias_a, "A"));
	putchar('\n');
	/* what the settling rule was, in words: an unrecorded part is left out, never shown as 0 */
	printf("  settle              %s", s->settle_mode[0] ? s->settle_mode : "-");
	if (isfinite(s->settle_delay_s))
		printf(", delay %s", si(a, sizeof a, s->settle_delay_s, "s"));
	if (isfinite(s->settle_tolerance))
		printf(", successive readings within %.3g x the noise", s->settle_tolerance);
	if (s->settle_max_readings > 0)
		printf(", at most %d readings", s->settle_max_readings);
	if (isfinite(s->settle_max_s))
		printf(", at most %s", si(b, sizeof b, s->settle_max_s, "s"));
	putchar('\n');
	printf("  limits              %s, %s\n", si(a, sizeof a, s->limit_current_a, "A"),
	       si(b, sizeof b, s->limit_voltage_v, "V"));
	if (isfinite(s->ambient_c))
		printf("  ambient             %.1f degC\n", s->ambient_c);
	if (s->note[0])
		printf("  note                %s\n", s->note);
	/* the accuracy the budgets took for this sweep, as recorded with it */
	printf("  meter accuracy      %s\n", s->meter_accuracy[0] ? s->meter_accuracy : "not stated");
	printf("  supply accuracy     %s\n", s->supply_accuracy[0] ? s->supply_accuracy : "not stated");
	if (nv)
		printf("  verdicts\n");
	for (size_t i = 0; i < nv; i++) {
		hb_analysis_print_stored_verdict(stdout, &v[i], hb_analysis_check_unit(v[i].check_name));
		if (!v[i].uid[0])
			continue;
		char rev[32] = "no part spec";
		if (v[i].spec_revision > 0)
			snprintf(rev, sizeof rev, "spec revision %d", v[i].spec_revision);
		printf("      judged %s by %s against %s, verdict %s%s", v[i].created,
		       v[i].operator_name[0] ? v[i].operator_name : "-", rev, v[i].uid,
		       v[i].superseded_by ? ", SUPERSEDED" : "");
		if (v[i].superseded_by) {
			char by[HB_DB_UID_LEN] = "";
			hb_db_uid_of(db, HB_DB_REC_VERDICT, v[i].superseded_by, by);
			printf(" by %s", by[0] ? by : "-");
		}
		putchar('\n');
	}
	/* the two readings' names and units as the meter's measured pair gives them ("L_H", "Z_ohm") */
	char name0[24], unit0[16], name1[24], unit1[16];
	reading_name(s->measured_pair, 0, name0, sizeof name0, unit0, sizeof unit0);
	reading_name(s->measured_pair, 1, name1, sizeof name1, unit1, sizeof unit1);
	printf("\n%5s %-4s %13s %13s %13s %15s %15s %10s  %s\n", "seq", "dir", "bias set", "bias", "frequency", name0, name1,
	       "t", "status");
	for (size_t i = 0; i < n; i++) {
		const hb_db_point *p = &pts[i];
		char f[48], r0[48], r1[48], t[48];
		printf("%5d %-4s %13s %13s %13s %15s %15s %10s  %s\n", p->seq, p->direction == HB_DB_DIR_DOWN ? "down" : "up",
		       si6(a, sizeof a, p->bias_set_a, "A", 6), si6(b, sizeof b, p->bias_meas_a, "A", 6),
		       si6(f, sizeof f, p->freq_hz, "Hz", 6), si6(r0, sizeof r0, p->primary, unit0, 7),
		       si6(r1, sizeof r1, p->secondary, unit1, 7), time_text(t, sizeof t, p->t_s),
		       p->reading_status == 0 ? "ok" : hb_status_name(p->reading_status));
	}
}

int hb_cmd_show(int argc, char **argv)
{
	show_args a = { .json = false, .csv = false };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_show, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	bool json = a.json, csv = a.csv;
	if (json && csv) {
		hb_cli_error("show: choose --json or --csv, not both");
		return HB_EXIT_USAGE;
	}
	if (r.first != argc - 1) {
		hb_cli_error("show needs one SWEEP_ID (try 'henrybench sweeps' to list them)");
		return HB_EXIT_USAGE;
	}
	long long id = 0;
	if (hb_cli_parse_sweep_id(argv[r.first], &id) != HB_OK)
		return HB_EXIT_USAGE;

	int open_exit = HB_EXIT_RUNTIME;
	hb_db *db = hb_cli_open_store_read(&open_exit);
	if (!db)
		return open_exit;
	int exit_code = HB_EXIT_RUNTIME;
	hb_db_sweep s;
	hb_db_point *pts = NULL;
	hb_db_verdict *verdicts = NULL;
	size_t n = 0, nv = 0;
	int status = hb_db_sweep_get(db, id, &s);
	if (status == HB_OK)
		status = hb_db_points_get(db, id, &pts, &n);
	if (status == HB_OK)
		status = a.all_verdicts ? hb_db_verdict_list_all(db, id, &verdicts, &nv) :
					  hb_db_verdict_list(db, id, &verdicts, &nv);
	if (status != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		if (status == HB_ERR_NOTFOUND)
			exit_code = HB_EXIT_USAGE;
		goto out;
	}
	if (json) {
		/* the very object export --json holds for this sweep: one serialiser */
		char err[300] = "";
		json_t *root = hb_json_sweep_record(db, &s, err, sizeof err);
		if (!root) {
			hb_cli_error("show: %s", err);
			goto out;
		}
		if (a.all_verdicts) {
			/* the judgements a later one replaced, kept beside those in force */
			json_t *old = json_array();
			for (size_t i = 0; i < nv; i++)
				if (verdicts[i].superseded_by)
					json_array_append_new(old, hb_json_verdict(&verdicts[i]));
			json_object_set_new(root, "superseded_verdicts", old);
		}
		exit_code = hb_print_json(root) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	} else if (csv) {
		/* the export's table of this one sweep, so it imports back */
		char err[300] = "";
		int xrc = hb_export_csv(db, &s.id, 1, stdout, err, sizeof err);
		if (xrc == HB_OK && fflush(stdout) != 0)
			xrc = HB_ERR_IO;
		if (xrc != HB_OK) {
			if (ferror(stdout))
				hb_cli_stdout_error("show");
			else
				hb_cli_error("show: %s", err[0] ? err : hb_status_name(xrc));
			goto out;
		}
		exit_code = HB_EXIT_OK;
	} else {
		print_text(db, &s, pts, n, verdicts, nv);
		hb_show_trace(stdout, db, s.id);
		exit_code = HB_EXIT_OK;
	}
out:
	hb_db_points_free(pts);
	hb_db_verdicts_free(verdicts);
	hb_db_close(db);
	return exit_code;
}
