/* src/cli/cli_store.c - the store opened as a command needs it: read commands and dry runs never create one, watchers only read, writers check first */
#include <stdio.h>

#include "../../db/hb_db.h"
#include "cli.h"

struct hb_db *hb_cli_open_store_as(int mode, int *exit_code)
{
	hb_db *db = NULL;
	int rc = hb_db_open_as(hb_global.db_path, (hb_db_open_mode)mode, &db);
	if (rc != HB_OK) {
		hb_cli_error("%s", hb_db_errmsg(db));
		hb_db_close(db);
		/* A mistyped --db is a usage error: the command line named no store. */
		if (exit_code)
			*exit_code = rc == HB_ERR_NOTFOUND ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		return NULL;
	}
	return db;
}

struct hb_db *hb_cli_open_store_read(int *exit_code)
{
	/* read-only store, directory or file system: read without writing (docs/store.md) */
	return hb_cli_open_store_as(HB_DB_OPEN_READ, exit_code);
}

int hb_cli_check_writable(struct hb_db *db)
{
	if (hb_db_check_writable(db) != HB_OK) {
		hb_cli_error("store: %s; no instrument was opened", hb_db_errmsg(db));
		return HB_EXIT_RUNTIME;
	}
	return HB_EXIT_OK;
}
