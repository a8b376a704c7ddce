/* db/db_drawing.c - a part's drawn gap and its data sheet's L-against-current curve mask (schema step 12) */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "db_internal.h"

/*
 * Statements here are prepared per call, not cached in the handle's slots:
 * a part's drawing is read once per analysis and written by `part add|edit`,
 * and a store opened below step 12 (the migration tests) has no such tables,
 * which a per-call prepare reports without leaving a broken cached slot.
 */

void hb_db_part_drawing_init(hb_db_part_drawing *d)
{
	if (!d)
		return;
	memset(d, 0, sizeof *d);
	d->gap_m = d->gap_tol_m = d->curve_tol = NAN;
}

double hb_db_curve_point_tol(const hb_db_part_drawing *d, size_t i)
{
	if (!d || i >= d->n_curve)
		return NAN;
	return isfinite(d->curve[i].tol) ? d->curve[i].tol : d->curve_tol;
}

/* Prepares sql; *missing is set when the store has no step-7 tables. */
static int prepare(hb_db *db, const char *sql, sqlite3_stmt **st, bool *missing)
{
	*st = NULL;
	if (missing)
		*missing = false;
	int rc = sqlite3_prepare_v2(db->conn, sql, -1, st, NULL);
	if (rc == SQLITE_OK)
		return HB_OK;
	if (missing && strstr(sqlite3_errmsg(db->conn), "no such table"))
		*missing = true;
	return db_fail(db, rc, "preparing a query on a part's drawing");
}

int hb_db_part_drawing_get(hb_db *db, int64_t part_id, hb_db_part_drawing *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_parts(db, &part_id, 1);
	if (mirrored < 0)
		return mirrored;
	hb_db_part_drawing_init(out);
	out->part_id = part_id;
	sqlite3_stmt *st = NULL;
	bool missing = false;
	int status = prepare(db, "SELECT gap_m, gap_tol_m, curve_tol, curve_source FROM part_drawing WHERE part_id = ?1",
			     &st, &missing);
	if (status != HB_OK) {
		if (missing) {
			db->errmsg[0] = 0;
			return HB_OK; /* a store from before step 12: nothing drawn */
		}
		return status;
	}
	sqlite3_bind_int64(st, 1, part_id);
	int rc = sqlite3_step(st);
	if (rc == SQLITE_ROW) {
		out->gap_m = db_col_real(st, 0);
		out->gap_tol_m = db_col_real(st, 1);
		out->curve_tol = db_col_real(st, 2);
		db_col_text(st, 3, out->curve_source, sizeof out->curve_source);
	} else if (rc != SQLITE_DONE) {
		status = db_fail(db, rc, "reading a part's drawing");
	}
	sqlite3_finalize(st);
	if (status != HB_OK)
		return status;
	status = prepare(db, "SELECT current_a, inductance_h, tol FROM part_curve_mask WHERE part_id = ?1 ORDER BY ord",
			 &st, NULL);
	if (status != HB_OK)
		return status;
	sqlite3_bind_int64(st, 1, part_id);
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		if (out->n_curve >= HB_DB_MASK_MAX) {
			/* never silently short: the writer refuses more, so this is a foreign store */
			sqlite3_finalize(st);
			return db_error(db, HB_ERR_DATA, "part id %lld has more than %d curve-mask points",
					(long long)part_id, HB_DB_MASK_MAX);
		}
		hb_db_curve_point *p = &out->curve[out->n_curve++];
		p->current_a = db_col_real(st, 0);
		p->inductance_h = db_col_real(st, 1);
		p->tol = db_col_real(st, 2);
	}
	if (rc != SQLITE_DONE)
		status = db_fail(db, rc, "reading a part's curve mask");
	sqlite3_finalize(st);
	return status;
}

static int run(hb_db *db, sqlite3_stmt *st, const char *what)
{
	int rc = sqlite3_step(st);
	int status = rc == SQLITE_DONE ? HB_OK : db_fail(db, rc, what);
	sqlite3_finalize(st);
	return status;
}

int hb_db_part_drawing_put(hb_db *db, const hb_db_part_drawing *d)
{
	if (!db || !d || d->part_id <= 0)
		return HB_ERR_ARG;
	if (d->n_curve > HB_DB_MASK_MAX)
		return db_error(db, HB_ERR_ARG, "a curve mask holds at most %d points, not %zu", HB_DB_MASK_MAX,
				d->n_curve);
	int status = db_write_begin(db, "storing a part's drawing");
	if (status != HB_OK)
		return status;
	sqlite3_stmt *st = NULL;
	status = prepare(db,
			 "INSERT INTO part_drawing (part_id, gap_m, gap_tol_m, curve_tol, curve_source, updated, edits)"
			 " VALUES (?1, ?2, ?3, ?4, ?5, ?6, 1) ON CONFLICT (part_id) DO UPDATE SET gap_m = excluded.gap_m,"
			 " gap_tol_m = excluded.gap_tol_m, curve_tol = excluded.curve_tol,"
			 " curve_source = excluded.curve_source, updated = excluded.updated, edits = part_drawing.edits + 1",
			 &st, NULL);
	if (status == HB_OK) {
		sqlite3_bind_int64(st, 1, d->part_id);
		db_bind_real(st, 2, d->gap_m);
		db_bind_real(st, 3, d->gap_tol_m);
		db_bind_real(st, 4, d->curve_tol);
		db_bind_text(st, 5, d->curve_source);
		/* when it changed: between stations the newest drawing wins (docs/store.md, "Many stations") */
		char now[HB_DB_TIME_LEN];
		db_iso_time(db_now(), now, sizeof now);
		db_bind_text(st, 6, now);
		status = run(db, st, "storing a part's drawing");
	}
	if (status == HB_OK && (status = prepare(db, "DELETE FROM part_curve_mask WHERE part_id = ?1", &st, NULL)) == HB_OK) {
		sqlite3_bind_int64(st, 1, d->part_id);
		status = run(db, st, "replacing a part's curve mask");
	}
	for (size_t i = 0; i < d->n_curve && status == HB_OK; i++) {
		status = prepare(db,
				 "INSERT INTO part_curve_mask (part_id, ord, current_a, inductance_h, tol)"
				 " VALUES (?1, ?2, ?3, ?4, ?5)",
				 &st, NULL);
		if (status != HB_OK)
			break;
		sqlite3_bind_int64(st, 1, d->part_id);
		sqlite3_bind_int(st, 2, (int)i);
		db_bind_real(st, 3, d->curve[i].current_a);
		db_bind_real(st, 4, d->curve[i].inductance_h);
		db_bind_real(st, 5, d->curve[i].tol);
		status = run(db, st, "storing a curve-mask point");
	}
	if (status != HB_OK) {
		db_write_rollback(db);
		return status;
	}
	return db_write_commit(db, "storing a part's drawing");
}
