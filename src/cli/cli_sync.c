/* src/cli/cli_sync.c - which shared server a command talks to, and the push after a stored sweep ([store] sync = after-sweep) */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../db/hb_db.h"
#include "../bench/station.h"
#include "cli.h"

const char *hb_cli_server_url(const char *cmdline, const struct hb_station *station)
{
	if (cmdline && *cmdline)
		return cmdline;
	const char *env = getenv("HENRYBENCH_SERVER");
	if (env && *env)
		return env;
	return station && station->server[0] ? station->server : NULL;
}

/*
 * Called once the sweep (or the inspected unit) is committed here and the supply's output is off:
 * the server never holds up making the bench safe, and never changes what was measured. A failure is
 * one warning line naming the server by host and database; the records stay waiting for the next
 * sync. Returns false when the push failed, so that a command measuring many units stops trying.
 */
bool hb_cli_sync_after(struct hb_db *db, const struct hb_station *station, FILE *info)
{
	if (!db || !station || !station->sync_after_sweep)
		return true;
	const char *url = hb_cli_server_url(NULL, station);
	if (!url) {
		hb_cli_error("warning: [store] sync = after-sweep but no server named ([store] server or "
			     "HENRYBENCH_SERVER); the records wait here for a sync");
		return false;
	}
	char name[300];
	hb_db_server_name(url, name, sizeof name);
	hb_db_sync_stats stats;
	if (hb_db_sync_push(db, url, &stats) != HB_OK) {
		/* a connection failure already names the server by host and database */
		const char *msg = hb_db_errmsg(db);
		bool named = strstr(msg, "(host ") != NULL;
		hb_cli_error("warning: sync after sweep%s%s%s failed: %s; the records stay here and wait for the next "
			     "sync (henrybench sync --status)",
			     named ? "" : " to the server (", named ? "" : name, named ? "" : ")", msg);
		return false;
	}
	long long sweeps = 0;
	for (int i = 0; i < stats.n; i++)
		if (strcmp(stats.table[i], "sweeps") == 0)
			sweeps = stats.count[i];
	fprintf(info, "synced to the server (%s): %lld sweep%s, %lld point%s\n", name, sweeps, sweeps == 1 ? "" : "s",
		stats.points, stats.points == 1 ? "" : "s");
	return true;
}
