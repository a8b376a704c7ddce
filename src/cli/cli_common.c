/* src/cli/cli_common.c - helpers the commands share: JSON documents printed, SI text or a dash, the store opened, the exit status of a sweep */
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "../bench/bench.h"
#include "../io/io.h"
#include "cli.h"

int hb_print_json(json_t *root)
{
	if (!root)
		return HB_ERR_NOMEM;
	/* the io room's writer: every JSON document in one number format */
	int rc = hb_json_write(root, stdout);
	if (rc == HB_OK && fflush(stdout) != 0)
		rc = HB_ERR_IO;
	if (rc == HB_ERR_IO)
		hb_cli_stdout_error(NULL);
	json_decref(root);
	return rc;
}

const char *hb_si_or_dash(char *buf, size_t cap, double v, const char *unit)
{
	if (!isfinite(v))
		return "-";
	return hb_format_si(buf, cap, v, unit, 4);
}

hb_db *hb_cli_open_store(void)
{
	hb_db *db = NULL;
	if (hb_db_open(hb_global.db_path, &db) != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		return NULL;
	}
	return db;
}

int hb_session_exit_code(const hb_sweep_result *r)
{
	if (r->end == HB_SWEEP_COMPLETE && r->status == HB_OK)
		return HB_EXIT_OK;
	if (r->interrupted_by_signal && r->signal_number == SIGINT)
		return HB_EXIT_SIGINT;
	if (r->interrupted_by_signal)
		return 128 + r->signal_number;
	return HB_EXIT_RUNTIME;
}
