/* src/cli/cmd_watch.c - command `watch`: follow a running sweep from another terminal, read-only, point by point until it ends */
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "../../db/hb_db.h"
#include "cli.h"

typedef struct watch_args {
	double interval;
} watch_args;

static const hb_opt watch_table[] = {
	{ .name = "interval", .kind = HB_OPT_VALUE, .arg = "T", .unit = "s", .min = 0.01, .max = 60,
	  .off = offsetof(watch_args, interval), .help = "how often the store is read (default 200ms)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_watch = {
	.name = "watch",
	.usage = "[SWEEP_ID] [--interval T]",
	.about = "\nFollows a sweep another henrybench is measuring: prints each point as it is stored, in the\n"
		 "sweep's own progress line, and exits 0 when the sweep ends, saying how (complete, aborted,\n"
		 "failed, interrupted). Without SWEEP_ID: the newest running sweep. The store is opened\n"
		 "read-only: watching never changes it and never creates one.\n",
	.opts = watch_table,
	.max_operands = 1,
};

static void pause_for(double seconds)
{
	struct timespec ts = { (time_t)seconds, (long)((seconds - floor(seconds)) * 1e9) };
	while (nanosleep(&ts, &ts) != 0 && errno == EINTR) {
	}
}

/* The owner of a running sweep on this host is gone: the sweep will never
 * end by itself (a writing open would mark it interrupted). */
static bool owner_gone(const hb_db_sweep *s)
{
	char host[HB_DB_ID_LEN];
	if (gethostname(host, sizeof host) != 0)
		return false;
	host[sizeof host - 1] = '\0';
	if (strcmp(host, s->host) != 0 || s->pid <= 0)
		return false;
	return kill((pid_t)s->pid, 0) != 0 && errno == ESRCH;
}

/* One point in the sweep's own progress format (src/bench/session.c). */
static void print_point(const hb_db_sweep *s, const hb_db_point *p, size_t index, size_t total, double l_first, bool tty)
{
	char l_text[32], x_text[32];
	/* The primary of a Z-theta reading is |Z| in ohm, not an inductance. */
	bool z = strncmp(s->measured_pair, "Z", 1) == 0;
	const char *name = z ? "|Z|" : "L";
	hb_format_si(l_text, sizeof l_text, p->primary, z ? "ohm" : "H", 5);
	double change = isfinite(l_first) && l_first != 0 ? (p->primary / l_first - 1) * 100 : NAN;
	if (s->kind == HB_DB_SWEEP_FREQUENCY) {
		hb_format_si(x_text, sizeof x_text, p->freq_hz, "Hz", 4);
	} else {
		double amps = isfinite(p->bias_meas_a) ? p->bias_meas_a : p->bias_set_a;
		if (fabs(amps) < 5e-5)
			amps = 0;
		snprintf(x_text, sizeof x_text, "%8.4f A", amps);
	}
	if (tty)
		printf("\r\033[K  point %zu/%zu  %s  %s %s  %+6.2f %%  %s", index + 1, total, x_text, name, l_text, change,
		       p->settled ? "" : "(not settled)");
	else
		printf("point %zu/%zu %s %s %s change %+.2f%%%s\n", index + 1, total, x_text, name, l_text, change,
		       p->settled ? "" : " not-settled");
}

static int newest_running(hb_db *db, long long *id)
{
	hb_db_sweep_filter f;
	hb_db_sweep_filter_init(&f);
	f.status = HB_DB_RUNNING;
	f.limit = 1;
	hb_db_sweep *list = NULL;
	size_t n = 0;
	int rc = hb_db_sweep_list(db, &f, &list, &n);
	if (rc != HB_OK) {
		hb_cli_error("watch: %s", hb_db_errmsg(db));
		return HB_EXIT_RUNTIME;
	}
	if (n == 0) {
		hb_db_sweeps_free(list);
		hb_cli_error("watch: no sweep is running in %s (give a SWEEP_ID; see 'henrybench sweeps')", hb_db_path(db));
		return HB_EXIT_USAGE;
	}
	*id = list[0].id;
	hb_db_sweeps_free(list);
	return HB_EXIT_OK;
}

int hb_cmd_watch(int argc, char **argv)
{
	watch_args a = { .interval = 0.2 };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_watch, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	long long id = 0;
	if (r.first < argc && hb_cli_parse_sweep_id(argv[r.first], &id) != HB_OK)
		return HB_EXIT_USAGE;
	int exit_code = HB_EXIT_RUNTIME;
	/* Read-only: a watcher takes no write lock from the sweep it follows. */
	hb_db *db = hb_cli_open_store_as(HB_DB_OPEN_READONLY, &exit_code);
	if (!db)
		return exit_code;
	hb_db_sweep *s = calloc(1, sizeof *s);
	hb_db_point *pts = NULL;
	if (!s) {
		hb_cli_error("out of memory");
		goto out;
	}
	if (id == 0 && (exit_code = newest_running(db, &id)) != HB_EXIT_OK)
		goto out;
	exit_code = HB_EXIT_RUNTIME;
	int rc = hb_db_sweep_get(db, id, s);
	if (rc != HB_OK) {
		hb_cli_error("watch: %s", hb_db_errmsg(db));
		exit_code = rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	bool tty = isatty(STDOUT_FILENO);
	printf("watching sweep %lld: %s, part %s, unit %s, started %s at %s, %d points planned (%s)\n", id,
	       hb_db_sweep_kind_name(s->kind), s->part_number[0] ? s->part_number : "-", s->serial[0] ? s->serial : "-",
	       s->started_iso, s->station[0] ? s->station : "-", s->plan_steps, hb_db_sweep_status_name(s->status));
	fflush(stdout);
	size_t shown = 0;
	double l_first = NAN;
	bool gone = false;
	for (;;) {
		/* Status first, then points: every point of an ended sweep is
		 * committed before its end, so the last read misses none. */
		if ((rc = hb_db_sweep_get(db, id, s)) != HB_OK)
			break;
		bool ended = s->status != HB_DB_RUNNING;
		if (!ended && owner_gone(s))
			ended = gone = true;
		size_t n = 0;
		if ((rc = hb_db_points_get(db, id, &pts, &n)) != HB_OK)
			break;
		size_t total = (size_t)(s->plan_steps > 0 ? s->plan_steps : 0);
		for (; shown < n; shown++) {
			if (shown == 0)
				l_first = pts[0].primary;
			print_point(s, &pts[shown], shown, total > n ? total : n, l_first, tty);
		}
		hb_db_points_free(pts);
		pts = NULL;
		if (fflush(stdout) != 0) {
			hb_cli_error("watch: cannot write to standard output");
			goto out;
		}
		if (ended)
			break;
		pause_for(a.interval);
	}
	if (rc != HB_OK) {
		hb_cli_error("watch: %s", hb_db_errmsg(db));
		goto out;
	}
	if (tty && shown > 0)
		putchar('\n');
	if (gone)
		printf("sweep %lld ended: interrupted (process %ld on %s is gone without closing it; %zu points stored)\n", id,
		       s->pid, s->host, shown);
	else
		printf("sweep %lld ended: %s (%zu points stored%s%s)\n", id, hb_db_sweep_status_name(s->status), shown,
		       s->status_reason[0] ? "; " : "", s->status_reason);
	exit_code = fflush(stdout) == 0 ? HB_EXIT_OK : HB_EXIT_RUNTIME;
	if (exit_code != HB_EXIT_OK)
		hb_cli_error("watch: cannot write to standard output");
out:
	hb_db_points_free(pts);
	free(s);
	hb_db_close(db);
	return exit_code;
}
