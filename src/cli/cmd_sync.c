/* src/cli/cmd_sync.c - command `sync`: push this station's finished records to the shared server, pull the master data other stations added, or say what waits */
#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../db/hb_db.h"
#include "../bench/station.h"
#include "cli.h"

typedef struct sync_args {
	const char *server;
	bool status;
	bool push_only;
} sync_args;

static const hb_opt sync_table[] = {
	{ .name = "server", .kind = HB_OPT_TEXT, .arg = "URL", .off = offsetof(sync_args, server),
	  .help = "the shared server, a PostgreSQL URL (default: $HENRYBENCH_SERVER, else [store] server of the station file)" },
	{ .name = "status", .kind = HB_OPT_FLAG, .off = offsetof(sync_args, status),
	  .help = "only say what waits to be pushed (counts per table), change nothing" },
	{ .name = "push-only", .kind = HB_OPT_FLAG, .off = offsetof(sync_args, push_only),
	  .help = "push, but do not pull the master data other stations added" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_sync = {
	.name = "sync",
	.usage = "[--server URL] [--status] [--push-only]",
	.about = "\nPushes every finished record of this station's store that the shared server lacks (parts and\n"
		 "spec revisions, part drawings and curve masks, lots and their decisions, units, the\n"
		 "instrument register, fixture compensations, sweeps with their points, fits, verdicts,\n"
		 "inspections, filed reports' hashes), in batches of one server transaction each, then pulls\n"
		 "the parts, spec revisions, drawings and instruments other stations added or changed. Records\n"
		 "travel by their global identity: a sync can be repeated or rerun after any interruption and\n"
		 "nothing is sent twice; a part, instrument or drawing edited after its push waits again.\n"
		 "Running sweeps wait until they end. The server's tables are created on first contact.\n"
		 "URL: postgresql://USER@HOST/DATABASE, or postgresql:///DATABASE?host=/socket/dir for a\n"
		 "local socket; --server, else $HENRYBENCH_SERVER, else [store] server of the station file,\n"
		 "whose sync = after-sweep also pushes after every stored sweep (docs/store.md, \"Many\n"
		 "stations\").\n",
	.opts = sync_table,
	.max_operands = 0,
};

static void print_status(const hb_db_sync_stats *s)
{
	printf("waiting for server %s:\n", s->server_uid);
	long long total = 0;
	for (int i = 0; i < s->n; i++) {
		if (s->count[i] < 0) {
			printf("  %-22s sent at every sync (small master data)\n", s->table[i]);
			continue;
		}
		printf("  %-22s %lld", s->table[i], s->count[i]);
		if (strcmp(s->table[i], "sweeps") == 0)
			printf(" (%lld points)", s->points);
		putchar('\n');
		total += s->count[i];
	}
	printf("%lld record%s waiting", total, total == 1 ? "" : "s");
	if (s->running > 0)
		printf("; %lld running sweep%s sent once ended", s->running, s->running == 1 ? "" : "s");
	putchar('\n');
}

/* Parts, lots and the small master data are sent at every sync (the server keeps the newer); the
 * counts say what was sent, not what was new. */
static void print_push(const hb_db_sync_stats *s)
{
	printf("sent to server %s:", s->server_uid);
	for (int i = 0; i < s->n; i++)
		if (s->count[i] > 0)
			printf(" %s %lld,", s->table[i], s->count[i]);
	double rate = s->seconds > 0 ? (double)s->points / s->seconds : 0;
	printf(" points %lld; %lld batch%s in %.2f s (%.0f points/s)\n", s->points, s->batches,
	       s->batches == 1 ? "" : "es", s->seconds, rate);
}

static void print_pull(const hb_db_sync_stats *s)
{
	printf("pulled: %lld part%s, %lld spec revision%s, %lld instrument%s; %lld calibration%s updated\n",
	       s->pulled_parts, s->pulled_parts == 1 ? "" : "s", s->pulled_revisions, s->pulled_revisions == 1 ? "" : "s",
	       s->pulled_instruments, s->pulled_instruments == 1 ? "" : "s", s->updated_instruments,
	       s->updated_instruments == 1 ? "" : "s");
	if (s->pulled_drawings > 0)
		printf("pulled: %lld part drawing%s (with curve masks)\n", s->pulled_drawings, s->pulled_drawings == 1 ? "" : "s");
	if (s->conflicts > 0)
		printf("note: %lld part number%s of the server held here under another identity: this store keeps its own"
		       " record (the server keeps both)\n",
		       s->conflicts, s->conflicts == 1 ? "" : "s");
}

int hb_cmd_sync(int argc, char **argv)
{
	sync_args a = { 0 };
	hb_opts_result res;
	if (hb_opts_parse(&hb_opts_sync, argc, argv, &a, &res) != HB_OK)
		return HB_EXIT_USAGE;
	if (res.done)
		return HB_EXIT_OK;
	/* command line > environment > station file */
	hb_station station;
	char err[600];
	if (hb_station_read(&station, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return HB_EXIT_USAGE;
	}
	const char *url = hb_cli_server_url(a.server, &station);
	if (!url) {
		hb_cli_error("sync: no server named: give --server URL, set HENRYBENCH_SERVER or [store] server in the "
			     "station file (e.g. postgresql:///henrybench?host=/var/run/postgresql)");
		return HB_EXIT_USAGE;
	}
	int code = HB_EXIT_OK;
	hb_db *db = hb_cli_open_store_as(HB_DB_OPEN_EXISTING, &code);
	if (!db)
		return code;
	hb_db_sync_stats stats;
	int rc;
	if (a.status) {
		rc = hb_db_sync_status(db, url, &stats);
		if (rc == HB_OK)
			print_status(&stats);
	} else {
		rc = hb_db_sync_push(db, url, &stats);
		if (rc == HB_OK)
			print_push(&stats);
		if (rc == HB_OK && !a.push_only) {
			rc = hb_db_sync_pull(db, url, &stats);
			if (rc == HB_OK)
				print_pull(&stats);
		}
	}
	if (rc != HB_OK) {
		hb_cli_error("sync: %s; this store is unchanged apart from what the server confirmed, "
			     "the rest waits for the next sync",
			     hb_db_errmsg(db));
		code = HB_EXIT_RUNTIME;
	}
	fflush(stdout);
	hb_db_close(db);
	return code;
}
