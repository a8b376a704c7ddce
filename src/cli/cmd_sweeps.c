/* src/cli/cmd_sweeps.c - commands `sweeps` (list stored sweeps) and `show` (one sweep: settings and points) */
#include <errno.h>
#include <getopt.h>
#include <math.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../io/io.h"
#include "cli.h"

/* "YYYY-MM-DD" or "YYYY-MM-DDTHH:MM[:SS][Z]", always UTC. */
static int parse_since(const char *text, double *out)
{
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

static void sweeps_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench sweeps [--part P] [--unit SERIAL] [--lot L] [--status S]\n"
		"                         [--kind bias|frequency] [--since DATE] [--limit N] [--json]\n\n"
		"Lists stored sweeps, newest first.\n\n"
		"  --part P        part number\n"
		"  --unit SERIAL   unit serial number\n"
		"  --lot L         lot code\n"
		"  --status S      running, complete, aborted, failed or interrupted\n"
		"  --kind K        bias or frequency\n"
		"  --since DATE    started on or after DATE (UTC), e.g. 2024-05-01\n"
		"  --limit N       at most N sweeps\n"
		"  --json          machine-readable output\n");
}

int hb_cmd_sweeps(int argc, char **argv)
{
	enum { O_PART = 256, O_UNIT, O_LOT, O_STATUS, O_KIND, O_SINCE, O_LIMIT, O_JSON, O_HELP };
	static const struct option options[] = {
		{ "part", required_argument, NULL, O_PART },
		{ "unit", required_argument, NULL, O_UNIT },
		{ "lot", required_argument, NULL, O_LOT },
		{ "status", required_argument, NULL, O_STATUS },
		{ "kind", required_argument, NULL, O_KIND },
		{ "since", required_argument, NULL, O_SINCE },
		{ "limit", required_argument, NULL, O_LIMIT },
		{ "json", no_argument, NULL, O_JSON },
		{ "help", no_argument, NULL, O_HELP },
		{ NULL, 0, NULL, 0 },
	};
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	bool json = false;
	optind = 1;
	opterr = 0;
	for (;;) {
		int c = getopt_long(argc, argv, "h", options, NULL);
		if (c == -1)
			break;
		switch (c) {
		case O_PART:
			f.part_number = optarg;
			break;
		case O_UNIT:
			f.serial = optarg;
			break;
		case O_LOT:
			f.lot_code = optarg;
			break;
		case O_STATUS: {
			hb_db_sweep_status st;
			if (hb_db_sweep_status_parse(optarg, &st) != HB_OK) {
				hb_cli_error("--status '%s' unknown (accepted: running, complete, aborted, failed, "
					     "interrupted)",
					     optarg);
				return HB_EXIT_USAGE;
			}
			f.status = (int)st;
			break;
		}
		case O_KIND: {
			hb_db_sweep_kind k;
			if (hb_db_sweep_kind_parse(optarg, &k) != HB_OK) {
				hb_cli_error("--kind '%s' unknown (accepted: bias, frequency)", optarg);
				return HB_EXIT_USAGE;
			}
			f.kind = (int)k;
			break;
		}
		case O_SINCE:
			if (parse_since(optarg, &f.since) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case O_LIMIT:
			if (hb_opt_int("--limit", optarg, 1, 100000000L, &f.limit) != HB_OK)
				return HB_EXIT_USAGE;
			break;
		case O_JSON:
			json = true;
			break;
		case O_HELP:
			sweeps_usage(stdout);
			return HB_EXIT_OK;
		default:
			hb_cli_error("sweeps: unknown option '%s' (try 'henrybench sweeps --help')", argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (optind != argc) {
		hb_cli_error("sweeps: unexpected argument '%s' (try 'henrybench sweeps --help')", argv[optind]);
		return HB_EXIT_USAGE;
	}
	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	if (hb_db_sweep_list(db, &f, &list, &n) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return HB_EXIT_RUNTIME;
	}
	hb_db_close(db);
	if (json) {
		json_t *arr = json_array();
		for (size_t i = 0; i < n; i++)
			json_array_append_new(arr, hb_json_sweep_summary(&list[i]));
		hb_db_sweeps_free(list);
		return hb_print_json(arr) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	}
	printf("%8s  %-20s  %-20s  %-14s  %-9s  %-11s  %6s  %s\n", "id", "started (UTC)", "part", "unit", "kind",
	       "status", "points", "station");
	for (size_t i = 0; i < n; i++) {
		const hb_db_sweep *s = &list[i];
		printf("%8lld  %-20s  %-20s  %-14s  %-9s  %-11s  %6ld  %s\n", (long long)s->id, s->started_iso,
		       s->part_number[0] ? s->part_number : "-", s->serial[0] ? s->serial : "-",
		       hb_db_sweep_kind_name(s->kind), hb_db_sweep_status_name(s->status), s->n_points,
		       s->station[0] ? s->station : "-");
	}
	hb_db_sweeps_free(list);
	return HB_EXIT_OK;
}

/* ---------------- show ---------------- */

static void show_usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench show SWEEP_ID [--json | --csv]\n\n"
		"Prints one stored sweep: its settings, instruments, verdicts and every point.\n"
		"  --json   one JSON document\n"
		"  --csv    the points only, SI units named in the header\n");
}

static const char *si(char *buf, size_t cap, double v, const char *unit)
{
	return isnan(v) ? "-" : hb_format_si(buf, cap, v, unit, 4);
}

static void print_text(const hb_db_sweep *s, const hb_db_point *pts, size_t n, const hb_db_verdict *v, size_t nv)
{
	char a[48], b[48], c[48];
	printf("sweep %lld: %s, %s%s%s\n", (long long)s->id, hb_db_sweep_kind_name(s->kind),
	       hb_db_sweep_status_name(s->status), s->status_reason[0] ? " - " : "", s->status_reason);
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
	char tol[32] = "-";
	if (!isnan(s->settle_tolerance))
		snprintf(tol, sizeof tol, "%g", s->settle_tolerance);
	printf("  settle              %s, delay %s, tolerance %s, max %d readings / %s\n",
	       s->settle_mode[0] ? s->settle_mode : "-", si(a, sizeof a, s->settle_delay_s, "s"), tol,
	       s->settle_max_readings, si(b, sizeof b, s->settle_max_s, "s"));
	printf("  limits              %s, %s\n", si(a, sizeof a, s->limit_current_a, "A"),
	       si(b, sizeof b, s->limit_voltage_v, "V"));
	if (!isnan(s->ambient_c))
		printf("  ambient             %.1f degC\n", s->ambient_c);
	if (s->note[0])
		printf("  note                %s\n", s->note);
	for (size_t i = 0; i < nv; i++)
		printf("  check %-12s  %-10s measured %.6g, limits [%.6g, %.6g], margin %.3g\n", v[i].check_name,
		       hb_db_outcome_name(v[i].outcome), v[i].measured, v[i].limit_low, v[i].limit_high, v[i].margin);
	printf("\n%5s %-4s %12s %12s %12s %14s %14s %9s %6s\n", "seq", "dir", "bias_set_A", "bias_A", "freq_Hz",
	       hb_io_reading_column(s->measured_pair, 0), hb_io_reading_column(s->measured_pair, 1), "t_s", "status");
	for (size_t i = 0; i < n; i++) {
		const hb_db_point *p = &pts[i];
		printf("%5d %-4s %12.6g %12.6g %12.6g %14.7g %14.7g %9.3f %6s\n", p->seq,
		       p->direction == HB_DB_DIR_DOWN ? "down" : "up", p->bias_set_a, p->bias_meas_a, p->freq_hz,
		       p->primary, p->secondary, p->t_s, p->reading_status == 0 ? "ok" : hb_status_name(p->reading_status));
	}
}

int hb_cmd_show(int argc, char **argv)
{
	enum { O_JSON = 256, O_CSV, O_HELP };
	static const struct option options[] = {
		{ "json", no_argument, NULL, O_JSON },
		{ "csv", no_argument, NULL, O_CSV },
		{ "help", no_argument, NULL, O_HELP },
		{ NULL, 0, NULL, 0 },
	};
	bool json = false, csv = false;
	optind = 1;
	opterr = 0;
	for (;;) {
		int c = getopt_long(argc, argv, "h", options, NULL);
		if (c == -1)
			break;
		switch (c) {
		case O_JSON:
			json = true;
			break;
		case O_CSV:
			csv = true;
			break;
		case O_HELP:
			show_usage(stdout);
			return HB_EXIT_OK;
		default:
			hb_cli_error("show: unknown option '%s' (try 'henrybench show --help')", argv[optind - 1]);
			return HB_EXIT_USAGE;
		}
	}
	if (json && csv) {
		hb_cli_error("show: choose --json or --csv, not both");
		return HB_EXIT_USAGE;
	}
	if (optind != argc - 1) {
		hb_cli_error("show needs one SWEEP_ID (try 'henrybench sweeps' to list them)");
		return HB_EXIT_USAGE;
	}
	const char *text = argv[optind];
	char *end = NULL;
	errno = 0;
	long long id = strtoll(text, &end, 10);
	if (errno || end == text || *end || id <= 0) {
		hb_cli_error("sweep id '%s' is not a positive integer", text);
		return HB_EXIT_USAGE;
	}

	hb_db *db = hb_cli_open_store();
	if (!db)
		return HB_EXIT_RUNTIME;
	int exit_code = HB_EXIT_RUNTIME;
	hb_db_sweep s;
	hb_db_point *pts = NULL;
	hb_db_verdict *verdicts = NULL;
	size_t n = 0, nv = 0;
	int status = hb_db_sweep_get(db, id, &s);
	if (status == HB_OK)
		status = hb_db_points_get(db, id, &pts, &n);
	if (status == HB_OK)
		status = hb_db_verdict_list(db, id, &verdicts, &nv);
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
		exit_code = hb_print_json(root) == HB_OK ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	} else if (csv) {
		/* the export's table of this one sweep, so it imports back */
		char err[300] = "";
		if (hb_export_csv(db, &s.id, 1, stdout, err, sizeof err) != HB_OK || fflush(stdout) != 0) {
			hb_cli_error("show: %s", err[0] ? err : "cannot write to standard output");
			goto out;
		}
		exit_code = HB_EXIT_OK;
	} else {
		print_text(&s, pts, n, verdicts, nv);
		exit_code = HB_EXIT_OK;
	}
out:
	hb_db_points_free(pts);
	hb_db_verdicts_free(verdicts);
	hb_db_close(db);
	return exit_code;
}
