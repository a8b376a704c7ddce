/* db/db_part_core.c - the core set of a part: its IEC 60205 shape, dimensions and gap placement (schema step 8) */
#include <stdio.h>
#include <string.h>

#include "db_internal.h"

/* Prepared per call: these run once per command, and keeping them out of
 * the statement cache keeps the catalogue's statements as they were. */
void hb_db_part_core_init(hb_db_part_core *c)
{
	memset(c, 0, sizeof *c);
	snprintf(c->gap_at, sizeof c->gap_at, "centre");
}

int hb_db_part_core_get(hb_db *db, const char *part_number, hb_db_part_core *out)
{
	if (!db || !part_number || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_part_number(db, part_number);
	if (mirrored < 0)
		return mirrored;
	hb_db_part_core_init(out);
	if (db->old_version && db->old_version < 8)
		return HB_OK; /* an older store has no core set: none */
	sqlite3_stmt *st = db_prepare_once(db, "SELECT core_shape, core_dims, gap_at FROM parts WHERE part_number = ?1",
				   "reading a part's core set");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, part_number);
	int rc = sqlite3_step(st), status = HB_OK;
	if (rc == SQLITE_ROW) {
		db_col_text(st, 0, out->shape, sizeof out->shape);
		db_col_text(st, 1, out->dims, sizeof out->dims);
		db_col_text(st, 2, out->gap_at, sizeof out->gap_at);
	} else if (rc == SQLITE_DONE) {
		status = db_error(db, HB_ERR_NOTFOUND, "no part %s in %s", part_number, db->path);
	} else {
		status = db_fail(db, rc, "reading a part's core set");
	}
	sqlite3_finalize(st);
	return status;
}

int hb_db_part_core_put(hb_db *db, const char *part_number, const hb_db_part_core *in)
{
	if (!db || !part_number || !in)
		return HB_ERR_ARG;
	if (strcmp(in->gap_at, "centre") != 0 && strcmp(in->gap_at, "spacer") != 0)
		return db_error(db, HB_ERR_ARG, "gap placement '%s': accepted centre or spacer", in->gap_at);
	if (strlen(in->dims) >= sizeof in->dims - 1)
		return db_error(db, HB_ERR_ARG, "core dimensions too long to store whole");
	sqlite3_stmt *st = db_prepare_once(db, "UPDATE parts SET core_shape = ?2, core_dims = ?3, gap_at = ?4 WHERE part_number = ?1",
				   "storing a part's core set");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, part_number);
	db_bind_text(st, 2, in->shape);
	db_bind_text(st, 3, in->dims);
	db_bind_text(st, 4, in->gap_at);
	int status = HB_OK;
	if (db_write_begin(db, "storing a part's core set") != HB_OK) {
		sqlite3_finalize(st);
		return HB_ERR_DB;
	}
	int rc = sqlite3_step(st);
	if (rc != SQLITE_DONE)
		status = db_fail(db, rc, "storing a part's core set");
	else if (sqlite3_changes(db->conn) == 0)
		status = db_error(db, HB_ERR_NOTFOUND, "no part %s in %s", part_number, db->path);
	sqlite3_finalize(st);
	if (status == HB_OK)
		status = db_write_commit(db, "storing a part's core set");
	else
		db_write_rollback(db);
	return status;
}
