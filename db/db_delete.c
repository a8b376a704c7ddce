/* db/db_delete.c - deleting a sweep or a part with what hangs on it, in one transaction, and the log of deletions */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_internal.h"

/* Deletions are rare: statements are prepared per call, not cached. */
static int count_of(hb_db *db, const char *sql, int64_t id, long *out)
{
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn, sql, -1, &st, NULL);
	if (rc != SQLITE_OK)
		return db_fail(db, rc, "counting dependent records");
	sqlite3_bind_int64(st, 1, id);
	rc = sqlite3_step(st);
	int status = HB_OK;
	if (rc == SQLITE_ROW)
		*out = (long)sqlite3_column_int64(st, 0);
	else
		status = db_fail(db, rc, "counting dependent records");
	sqlite3_finalize(st);
	return status;
}

static int exec_id(hb_db *db, const char *sql, int64_t id, const char *what)
{
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn, sql, -1, &st, NULL);
	if (rc != SQLITE_OK)
		return db_fail(db, rc, what);
	sqlite3_bind_int64(st, 1, id);
	rc = sqlite3_step(st);
	int status = rc == SQLITE_DONE || rc == SQLITE_ROW ? HB_OK : db_fail(db, rc, what);
	sqlite3_finalize(st);
	return status;
}

int hb_db_sweep_dependents(hb_db *db, int64_t sweep_id, hb_db_sweep_deps *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	long exists = 0;
	int rc = count_of(db, "SELECT count(*) FROM sweeps WHERE id = ?1", sweep_id, &exists);
	if (rc == HB_OK && !exists)
		return db_error(db, HB_ERR_NOTFOUND, "no sweep %lld in %s", (long long)sweep_id, db->path);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM points WHERE sweep_id = ?1", sweep_id, &out->points);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM fits WHERE sweep_id = ?1", sweep_id, &out->fits);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM verdicts WHERE sweep_id = ?1", sweep_id, &out->verdicts);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM inspections WHERE sweep_id = ?1", sweep_id, &out->inspections);
	return rc;
}

int hb_db_part_dependents(hb_db *db, int64_t part_id, hb_db_part_deps *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	memset(out, 0, sizeof *out);
	int rc = count_of(db, "SELECT count(*) FROM units WHERE part_id = ?1", part_id, &out->units);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM lots WHERE part_id = ?1", part_id, &out->lots);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM lots WHERE part_id = ?1 AND decision <> 'open'", part_id,
			      &out->decided_lots);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM sweeps WHERE unit_id IN (SELECT id FROM units WHERE part_id = ?1)",
			      part_id, &out->sweeps);
	if (rc == HB_OK)
		rc = count_of(db,
			      "SELECT count(*) FROM verdicts WHERE sweep_id IN (SELECT s.id FROM sweeps s"
			      " JOIN units u ON u.id = s.unit_id WHERE u.part_id = ?1)",
			      part_id, &out->verdicts);
	if (rc == HB_OK)
		rc = count_of(db, "SELECT count(*) FROM inspections WHERE lot_id IN (SELECT id FROM lots WHERE part_id = ?1)",
			      part_id, &out->inspections);
	return rc;
}

static int log_deletion(hb_db *db, const hb_db_deletion *log, const char *what)
{
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn,
				    "INSERT INTO deletions (at_unix, at, operator, host, what, reason, forced)"
				    " VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7)",
				    -1, &st, NULL);
	if (rc != SQLITE_OK)
		return db_fail(db, rc, "recording the deletion");
	double now = db_now();
	char iso[HB_DB_TIME_LEN];
	db_iso_time(now, iso, sizeof iso);
	sqlite3_bind_double(st, 1, now);
	db_bind_text(st, 2, iso);
	db_bind_text(st, 3, log ? log->operator_name : "");
	db_bind_text(st, 4, db->host);
	db_bind_text(st, 5, what);
	db_bind_text(st, 6, log ? log->reason : "");
	sqlite3_bind_int(st, 7, log && log->forced ? 1 : 0);
	rc = sqlite3_step(st);
	int status = rc == SQLITE_DONE ? HB_OK : db_fail(db, rc, "recording the deletion");
	sqlite3_finalize(st);
	return status;
}

int hb_db_sweep_delete(hb_db *db, int64_t sweep_id, const hb_db_deletion *log)
{
	if (!db || sweep_id <= 0)
		return HB_ERR_ARG;
	hb_db_sweep_deps deps;
	int rc = hb_db_sweep_dependents(db, sweep_id, &deps);
	if (rc != HB_OK)
		return rc;
	hb_db_sweep *s = calloc(1, sizeof *s);
	if (!s)
		return db_error(db, HB_ERR_NOMEM, "out of memory deleting a sweep");
	rc = hb_db_sweep_get(db, sweep_id, s);
	if (rc != HB_OK) {
		free(s);
		return rc;
	}
	char what[HB_DB_TEXT_LEN];
	snprintf(what, sizeof what, "sweep %lld (%s, part %s, unit %s, started %s): %ld points, %ld fits, %ld verdicts, %ld inspection records unlinked",
		 (long long)sweep_id, hb_db_sweep_kind_name(s->kind), s->part_number[0] ? s->part_number : "-",
		 s->serial[0] ? s->serial : "-", s->started_iso, deps.points, deps.fits, deps.verdicts, deps.inspections);
	free(s);
	if ((rc = db_write_begin(db, "deleting a sweep")) != HB_OK)
		return rc;
	/* The lot's sample record stays: its outcome is part of the decision. */
	rc = exec_id(db,
		     "UPDATE inspections SET sweep_id = NULL, note = trim(note || '; sweep ' || ?1 || ' deleted', '; ')"
		     " WHERE sweep_id = ?1",
		     sweep_id, "unlinking inspection records");
	/* A filed report keeps its record (number, hashes); its link to the deleted
	 * sweep goes, so verify says the data it rests on are no longer there. */
	if (rc == HB_OK)
		rc = exec_id(db, "DELETE FROM report_sweeps WHERE sweep_id = ?1", sweep_id, "unlinking filed reports");
	/* Points, fits (their values and uncertainties) and verdicts go by ON DELETE CASCADE. */
	if (rc == HB_OK)
		rc = exec_id(db, "DELETE FROM sweeps WHERE id = ?1", sweep_id, "deleting a sweep");
	if (rc == HB_OK)
		rc = log_deletion(db, log, what);
	if (rc != HB_OK) {
		db_write_rollback(db);
		return rc;
	}
	return db_write_commit(db, "deleting a sweep");
}

int hb_db_part_delete(hb_db *db, int64_t part_id, const hb_db_deletion *log)
{
	if (!db || part_id <= 0)
		return HB_ERR_ARG;
	hb_db_part part;
	int rc = hb_db_part_get_id(db, part_id, &part);
	if (rc != HB_OK)
		return rc;
	hb_db_part_deps deps;
	if ((rc = hb_db_part_dependents(db, part_id, &deps)) != HB_OK)
		return rc;
	char what[HB_DB_TEXT_LEN];
	snprintf(what, sizeof what, "part %s: %ld units, %ld lots (%ld decided), %ld sweeps, %ld verdicts, %ld inspection records",
		 part.part_number, deps.units, deps.lots, deps.decided_lots, deps.sweeps, deps.verdicts, deps.inspections);
	if ((rc = db_write_begin(db, "deleting a part")) != HB_OK)
		return rc;
	static const char *const steps[] = {
		("DELETE FROM inspections WHERE lot_id IN (SELECT id FROM lots WHERE part_id = ?1)"
		 " OR unit_id IN (SELECT id FROM units WHERE part_id = ?1)"
		 " OR sweep_id IN (SELECT s.id FROM sweeps s JOIN units u ON u.id = s.unit_id WHERE u.part_id = ?1)"),
		("DELETE FROM report_sweeps WHERE sweep_id IN (SELECT s.id FROM sweeps s JOIN units u ON u.id = s.unit_id"
		 " WHERE u.part_id = ?1)"),
		"DELETE FROM sweeps WHERE unit_id IN (SELECT id FROM units WHERE part_id = ?1)",
		"DELETE FROM units WHERE part_id = ?1",
		"DELETE FROM lots WHERE part_id = ?1",
		"DELETE FROM stream_events WHERE part_id = ?1",
		"DELETE FROM spec_revisions WHERE part_id = ?1",
		"DELETE FROM parts WHERE id = ?1",
	};
	for (size_t i = 0; rc == HB_OK && i < sizeof steps / sizeof steps[0]; i++)
		rc = exec_id(db, steps[i], part_id, "deleting a part");
	if (rc == HB_OK)
		rc = log_deletion(db, log, what);
	if (rc != HB_OK) {
		db_write_rollback(db);
		return rc;
	}
	return db_write_commit(db, "deleting a part");
}

int hb_db_deletion_list(hb_db *db, hb_db_deletion **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn,
				    "SELECT id, at_unix, at, operator, host, what, reason, forced FROM deletions ORDER BY id",
				    -1, &st, NULL);
	if (rc != SQLITE_OK)
		return db_fail(db, rc, "reading the deletions log");
	hb_db_deletion *arr = NULL;
	size_t n = 0, cap = 0;
	int status = HB_OK;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		if ((status = db_grow(db, (void **)&arr, &cap, n, sizeof *arr)) != HB_OK)
			break;
		hb_db_deletion *d = &arr[n++];
		memset(d, 0, sizeof *d);
		d->id = sqlite3_column_int64(st, 0);
		d->at = sqlite3_column_double(st, 1);
		db_col_text(st, 2, d->at_iso, sizeof d->at_iso);
		db_col_text(st, 3, d->operator_name, sizeof d->operator_name);
		db_col_text(st, 4, d->host, sizeof d->host);
		db_col_text(st, 5, d->what, sizeof d->what);
		db_col_text(st, 6, d->reason, sizeof d->reason);
		d->forced = sqlite3_column_int(st, 7) != 0;
	}
	if (status == HB_OK && rc != SQLITE_DONE)
		status = db_fail(db, rc, "reading the deletions log");
	sqlite3_finalize(st);
	if (status != HB_OK) {
		free(arr);
		return status;
	}
	*out = arr;
	*count = n;
	return HB_OK;
}

void hb_db_deletions_free(hb_db_deletion *list)
{
	free(list);
}
