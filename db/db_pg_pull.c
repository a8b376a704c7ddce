/* db/db_pg_pull.c - many stations, one server: bringing the master data other stations added (parts, spec revisions, instrument register) into this store */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_pg_internal.h"

/* The spec fields of a part and of each of its revisions, in the order the server returns them after
 * uid, revision, created. */
#define SPEC_FIELDS "description, maker, nominal_h, tolerance, test_freq_hz, test_level, test_level_kind, " \
	"sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m, window_m, toroid_od_m, toroid_id_m, " \
	"toroid_h_m, mu_i, bsat_t, decision_rule, guard_r"
enum { N_SPEC = 22, REV_FIRST_SPEC = 3 };

static const char sql_update_part[] =
	"UPDATE parts SET description = ?2, maker = ?3, nominal_h = ?4, tolerance = ?5, test_freq_hz = ?6,"
	" test_level = ?7, test_level_kind = ?8, sat_current_a = ?9, sat_drop = ?10, rated_current_a = ?11,"
	" dcr_max_ohm = ?12, turns = ?13, ae_m2 = ?14, le_m = ?15, window_m = ?16, toroid_od_m = ?17,"
	" toroid_id_m = ?18, toroid_h_m = ?19, mu_i = ?20, bsat_t = ?21, decision_rule = ?22, guard_r = ?23,"
	" updated = ?24 WHERE id = ?1";
static const char sql_insert_part[] =
	"INSERT INTO parts (uid, part_number, " SPEC_FIELDS ", created, updated, core_shape, core_dims, gap_at)"
	" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18, ?19, ?20, ?21, ?22,"
	" ?23, ?24, ?25, ?26, ?27, ?28, ?29) RETURNING id";
static const char sql_insert_rev[] =
	"INSERT INTO spec_revisions (part_id, uid, revision, created, " SPEC_FIELDS ") VALUES (?1, ?2, ?3, ?4, ?5, ?6,"
	" ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18, ?19, ?20, ?21, ?22, ?23, ?24, ?25, ?26)";

typedef struct pull_ctx {
	hb_db *db;
	const char *server;
	hb_db_sync_stats *stats;
} pull_ctx;

/* Binds the server's text (or NULL) at idx: the store's column affinity makes numbers of it. */
static void bind_pg(sqlite3_stmt *st, int idx, const PGresult *res, int row, int col)
{
	if (PQgetisnull(res, row, col))
		sqlite3_bind_null(st, idx);
	else
		sqlite3_bind_text(st, idx, PQgetvalue(res, row, col), -1, SQLITE_TRANSIENT);
}

/* Runs sql with the bindings bind() made; *id (may be NULL) gets column 0 of the first row. */
static int run_local(hb_db *db, const char *sql, void (*bind)(sqlite3_stmt *, const void *), const void *ctx,
		     int64_t *id)
{
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn, sql, -1, &st, NULL);
	if (rc == SQLITE_OK) {
		bind(st, ctx);
		rc = sqlite3_step(st);
		if (rc == SQLITE_ROW && id)
			*id = sqlite3_column_int64(st, 0);
		else if (rc == SQLITE_ROW)
			;
		else if (rc == SQLITE_DONE && id)
			*id = 0;
	}
	int status = rc == SQLITE_ROW || rc == SQLITE_DONE ? HB_OK : db_fail(db, rc, "storing what the server holds");
	sqlite3_finalize(st);
	return status;
}

typedef struct args {
	const char *text[4];
	int64_t num[2];
} args;

static void bind_args(sqlite3_stmt *st, const void *p)
{
	const args *a = p;
	int n = sqlite3_bind_parameter_count(st);
	for (int i = 0; i < 4 && i < n; i++)
		if (a->text[i])
			sqlite3_bind_text(st, i + 1, a->text[i], -1, SQLITE_STATIC);
	for (int i = 0; i < 2 && 5 + i <= n; i++)
		sqlite3_bind_int64(st, 5 + i, a->num[i]);
}

/* Notes a pulled record as held by the server, so that it is not sent back. */
static int note_held(pull_ctx *c, const char *tbl, const char *uid)
{
	args a = { { c->server, tbl, uid, NULL }, { 0, 0 } };
	return run_local(c->db, "INSERT OR IGNORE INTO sync_pushed (server, tbl, uid) VALUES (?1, ?2, ?3)", bind_args,
			 &a, NULL);
}

/* Notes a part, an instrument or a drawing that now holds what the server holds, with its version here
 * (db_pg_internal.h): it waits again only once edited here. */
static int note_version(pull_ctx *c, const char *tbl, const char *sql, const char *k1, const char *k2, const char *k3)
{
	args a = { { c->server, k1, k2, k3 }, { 0, 0 } };
	(void)tbl;
	return run_local(c->db, sql, bind_args, &a, NULL);
}

typedef struct rev_bind {
	int64_t part_id;
	const PGresult *res;
	int row;
	int64_t revision;
} rev_bind;

static void bind_update(sqlite3_stmt *st, const void *p)
{
	const rev_bind *b = p;
	sqlite3_bind_int64(st, 1, b->part_id);
	for (int k = 0; k < N_SPEC; k++)
		bind_pg(st, 2 + k, b->res, b->row, REV_FIRST_SPEC + k);
	bind_pg(st, 24, b->res, b->row, 2);
}

static void bind_rev(sqlite3_stmt *st, const void *p)
{
	const rev_bind *b = p;
	sqlite3_bind_int64(st, 1, b->part_id);
	bind_pg(st, 2, b->res, b->row, 0);
	sqlite3_bind_int64(st, 3, b->revision);
	bind_pg(st, 4, b->res, b->row, 2);
	for (int k = 0; k < N_SPEC; k++)
		bind_pg(st, 5 + k, b->res, b->row, REV_FIRST_SPEC + k);
}

static int max_revision(hb_db *db, int64_t part_id, int64_t *rev)
{
	args a = { { NULL }, { part_id, 0 } };
	return run_local(db, "SELECT coalesce(max(revision), 0) FROM spec_revisions WHERE ?1 IS NULL AND part_id = ?5",
			 bind_args, &a, rev);
}

/* Makes the server's revision at row the part's current spec: the part's update trigger writes the
 * revision, which then takes the server's identity and time (a revision that changes no field is
 * appended as it is). */
static int apply_revision(pull_ctx *c, int64_t part_id, const PGresult *revs, int row)
{
	int64_t before = 0, after = 0;
	rev_bind b = { part_id, revs, row, 0 };
	int status = max_revision(c->db, part_id, &before);
	if (status == HB_OK)
		status = run_local(c->db, sql_update_part, bind_update, &b, NULL);
	if (status == HB_OK)
		status = max_revision(c->db, part_id, &after);
	if (status == HB_OK && after > before) {
		args a = { { PQgetvalue(revs, row, 0), PQgetvalue(revs, row, 2), NULL, NULL }, { part_id, after } };
		status = run_local(c->db, "UPDATE spec_revisions SET uid = ?1, created = ?2 WHERE part_id = ?5 AND revision = ?6",
				   bind_args, &a, NULL);
	} else if (status == HB_OK) {
		b.revision = before + 1;
		status = run_local(c->db, sql_insert_rev, bind_rev, &b, NULL);
	}
	if (status == HB_OK) {
		c->stats->pulled_revisions++;
		status = note_held(c, "spec_revisions", PQgetvalue(revs, row, 0));
	}
	return status;
}

static int note_part_id(pull_ctx *c, int64_t part_id)
{
	args a = { { c->server, NULL, NULL, NULL }, { part_id, 0 } };
	return run_local(c->db,
			 "INSERT INTO sync_pushed (server, tbl, uid, ver) SELECT ?1, 'parts', p.uid, " DB_PG_PART_VER("p")
			 " FROM parts p WHERE p.id = ?5 ON CONFLICT (server, tbl, uid) DO UPDATE SET ver = excluded.ver",
			 bind_args, &a, NULL);
}

typedef struct part_bind {
	const PGresult *parts, *revs;
	int row;
} part_bind;

static void bind_new_part(sqlite3_stmt *st, const void *p)
{
	const part_bind *b = p;
	bind_pg(st, 1, b->parts, b->row, 0);
	bind_pg(st, 2, b->parts, b->row, 1);
	for (int k = 0; k < N_SPEC; k++)
		bind_pg(st, 3 + k, b->revs, 0, REV_FIRST_SPEC + k);
	bind_pg(st, 25, b->parts, b->row, 2);
	bind_pg(st, 26, b->revs, 0, 2);
	for (int k = 0; k < 3; k++)
		bind_pg(st, 27 + k, b->parts, b->row, 3 + k);
}

/* A part of the server: new here (with every revision), or known here (its later revisions). */
static int pull_part(pull_ctx *c, PGconn *conn, const PGresult *parts, int row)
{
	const char *uid = PQgetvalue(parts, row, 0);
	PGresult *revs = NULL;
	int status = db_pg_exec(c->db, conn, "pull_revs", 1, &uid, "reading spec revisions", &revs);
	if (status < 0)
		return status;
	int nrev = PQntuples(revs);
	int64_t part_id = 0;
	args a = { { uid, PQgetvalue(parts, row, 1), NULL, NULL }, { 0, 0 } };
	status = run_local(c->db, "SELECT id FROM parts WHERE uid = ?1 AND ?2 IS NOT NULL", bind_args, &a, &part_id);
	int first = 0;
	if (status == HB_OK && part_id == 0 && nrev > 0) {
		int64_t same_number = 0;
		status = run_local(c->db, "SELECT id FROM parts WHERE ?1 IS NOT NULL AND part_number = ?2", bind_args, &a,
				   &same_number);
		if (status == HB_OK && same_number != 0) {
			/* entered at two stations independently: this store keeps its own record */
			c->stats->conflicts++;
			PQclear(revs);
			return HB_OK;
		}
		part_bind pb = { parts, revs, row };
		if (status == HB_OK)
			status = run_local(c->db, sql_insert_part, bind_new_part, &pb, &part_id);
		if (status == HB_OK) {
			args r = { { PQgetvalue(revs, 0, 0), PQgetvalue(revs, 0, 2), NULL, NULL }, { part_id, 1 } };
			status = run_local(c->db,
					   "UPDATE spec_revisions SET uid = ?1, created = ?2 WHERE part_id = ?5 AND revision = ?6",
					   bind_args, &r, NULL);
		}
		if (status == HB_OK)
			status = note_held(c, "spec_revisions", PQgetvalue(revs, 0, 0));
		if (status == HB_OK) {
			c->stats->pulled_parts++;
			c->stats->pulled_revisions++;
		}
		first = 1;
	}
	int applied = first;
	for (int i = first; status == HB_OK && part_id != 0 && i < nrev; i++) {
		int64_t have = 0, newer = 0;
		args r = { { PQgetvalue(revs, i, 0), PQgetvalue(revs, i, 2), NULL, NULL }, { part_id, 0 } };
		status = run_local(c->db, "SELECT 1 FROM spec_revisions WHERE uid = ?1 AND ?2 IS NOT NULL", bind_args, &r,
				   &have);
		/* a part new here takes every revision; a known one only what is not older than its current
		 * spec (times have whole seconds: the same second counts as newer): the newest edit wins */
		newer = first;
		if (status == HB_OK && !have && !first)
			status = run_local(c->db,
					   "SELECT count(*) = 0 FROM spec_revisions WHERE part_id = ?5 AND created > ?2"
					   " AND ?1 IS NOT NULL",
					   bind_args, &r, &newer);
		if (status == HB_OK && !have && newer) {
			status = apply_revision(c, part_id, revs, i);
			applied = 1;
		}
	}
	/* this store's part now holds the server's newest: not sent back (an edit here makes it wait again) */
	if (status == HB_OK && applied)
		status = note_part_id(c, part_id);
	PQclear(revs);
	return status;
}

typedef struct instr_bind {
	const PGresult *res;
	int row;
} instr_bind;

static void bind_instr(sqlite3_stmt *st, const void *p)
{
	const instr_bind *b = p;
	int n = sqlite3_bind_parameter_count(st);
	for (int k = 0; k < n; k++)
		bind_pg(st, k + 1, b->res, b->row, k);
}

/* The register: an instrument new here is added; one known here takes the server's calibration
 * fields when the server's calibration date is later (the later calibration wins). */
static int pull_instruments(pull_ctx *c, PGconn *conn)
{
	PGresult *res = NULL;
	int status = db_pg_exec(c->db, conn, "pull_instr", 0, NULL, "reading the instrument register", &res);
	for (int i = 0; status == HB_OK && i < PQntuples(res); i++) {
		instr_bind b = { res, i };
		int64_t id = 0, changed = 0;
		/* columns: kind, maker, model, serial, firmware, first_seen, last_seen, accuracy,
		 * accuracy_freq_above, cal_date, due_date, certificate */
		args a = { { PQgetvalue(res, i, 1), PQgetvalue(res, i, 2), PQgetvalue(res, i, 3), NULL }, { 0, 0 } };
		status = run_local(c->db, "SELECT id FROM instruments WHERE maker = ?1 AND model = ?2 AND serial = ?3",
				   bind_args, &a, &id);
		if (status == HB_OK && id == 0) {
			status = run_local(c->db,
					   "INSERT INTO instruments (kind, maker, model, serial, firmware, first_seen, last_seen,"
					   " accuracy, accuracy_freq_above, cal_date, due_date, certificate) VALUES (?1, ?2, ?3,"
					   " ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12)",
					   bind_instr, &b, NULL);
			c->stats->pulled_instruments += status == HB_OK;
		} else if (status == HB_OK) {
			/* the server's rule (db_pg.c): later calibration date, then due date, certificate, accuracy */
			status = run_local(c->db,
					   "UPDATE instruments SET accuracy = ?8, accuracy_freq_above = ?9, cal_date = ?10,"
					   " due_date = ?11, certificate = ?12 WHERE maker = ?2 AND model = ?3 AND serial = ?4"
					   " AND (?10, ?11, ?12, ?8, ?9) > (cal_date, due_date, certificate, accuracy,"
					   " accuracy_freq_above) AND ?1 IS NOT NULL AND ?5 IS NOT NULL AND ?6 IS NOT NULL"
					   " AND ?7 IS NOT NULL RETURNING 1",
					   bind_instr, &b, &changed);
			c->stats->updated_instruments += changed;
		}
		if (status == HB_OK && (id == 0 || changed))
			status = note_version(c, "instruments",
					      "INSERT INTO sync_pushed (server, tbl, uid, ver) SELECT ?1, 'instruments', "
					      DB_PG_INSTR_KEY("i") ", " DB_PG_INSTR_VER("i") " FROM instruments i WHERE"
					      " i.maker = ?2 AND i.model = ?3 AND i.serial = ?4"
					      " ON CONFLICT (server, tbl, uid) DO UPDATE SET ver = excluded.ver",
					      PQgetvalue(res, i, 1), PQgetvalue(res, i, 2), PQgetvalue(res, i, 3));
	}
	PQclear(res);
	return status;
}

/* A drawing of the server replaces this store's when it is strictly newer (its `updated`), with its
 * curve mask whole; a drawing of a part this store does not hold waits until the part is pulled. */
static int pull_drawing(pull_ctx *c, PGconn *conn, const PGresult *res, int row)
{
	const char *uid = PQgetvalue(res, row, 0);
	int64_t newer = 0;
	args a = { { uid, PQgetvalue(res, row, 5), NULL, NULL }, { 0, 0 } };
	int status = run_local(c->db,
			       "SELECT p.id FROM parts p LEFT JOIN part_drawing d ON d.part_id = p.id WHERE p.uid = ?1"
			       " AND (d.part_id IS NULL OR d.updated < ?2)",
			       bind_args, &a, &newer);
	if (status < 0 || newer == 0)
		return status;
	PGresult *mask = NULL;
	status = db_pg_exec(c->db, conn, "pull_mask", 1, &uid, "reading a curve mask", &mask);
	if (status < 0)
		return status;
	instr_bind b = { res, row };
	status = run_local(c->db,
			   "INSERT INTO part_drawing (part_id, gap_m, gap_tol_m, curve_tol, curve_source, updated, edits)"
			   " SELECT p.id, ?2, ?3, ?4, ?5, ?6, 1 FROM parts p WHERE p.uid = ?1"
			   " ON CONFLICT (part_id) DO UPDATE SET gap_m = excluded.gap_m, gap_tol_m = excluded.gap_tol_m,"
			   " curve_tol = excluded.curve_tol, curve_source = excluded.curve_source,"
			   " updated = excluded.updated, edits = part_drawing.edits + 1",
			   bind_instr, &b, NULL);
	args pid = { { NULL }, { newer, 0 } };
	if (status == HB_OK)
		status = run_local(c->db, "DELETE FROM part_curve_mask WHERE part_id = ?5", bind_args, &pid, NULL);
	for (int i = 0; status == HB_OK && i < PQntuples(mask); i++) {
		args m = { { PQgetvalue(mask, i, 0), PQgetvalue(mask, i, 1),
			     PQgetisnull(mask, i, 2) ? NULL : PQgetvalue(mask, i, 2), NULL }, { newer, i } };
		status = run_local(c->db,
				   "INSERT INTO part_curve_mask (part_id, ord, current_a, inductance_h, tol)"
				   " VALUES (?5, ?6, ?1, ?2, ?3)",
				   bind_args, &m, NULL);
	}
	PQclear(mask);
	if (status == HB_OK)
		status = note_version(c, "part_drawing",
				      "INSERT INTO sync_pushed (server, tbl, uid, ver) SELECT ?1, 'part_drawing', p.uid, "
				      DB_PG_DRAWING_VER("d") " FROM part_drawing d JOIN parts p ON p.id = d.part_id"
				      " WHERE p.uid = ?2 ON CONFLICT (server, tbl, uid) DO UPDATE SET ver = excluded.ver",
				      uid, NULL, NULL);
	c->stats->pulled_drawings += status == HB_OK;
	return status;
}

static int pull_drawings(pull_ctx *c, PGconn *conn)
{
	PGresult *res = NULL;
	int status = db_pg_exec(c->db, conn, "pull_drawings", 0, NULL, "reading part drawings", &res);
	for (int i = 0; status == HB_OK && i < PQntuples(res); i++)
		status = pull_drawing(c, conn, res, i);
	PQclear(res);
	return status;
}

int hb_db_sync_pull(hb_db *db, const char *url, hb_db_sync_stats *stats)
{
	if (!db || !url || !stats)
		return HB_ERR_ARG;
	stats->pulled_parts = stats->pulled_revisions = stats->pulled_instruments = 0;
	stats->updated_instruments = stats->conflicts = stats->pulled_drawings = 0;
	PGconn *conn = NULL;
	int status = db_pg_connect(db, url, stats->server_uid, &conn);
	if (status < 0)
		return status;
	status = db_pg_prepare(db, conn, "pull_parts",
			       "SELECT uid, part_number, created, core_shape, core_dims, gap_at FROM parts ORDER BY id",
			       "preparing the pull");
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "pull_revs",
				       "SELECT uid, revision, created, " SPEC_FIELDS " FROM spec_revisions"
				       " WHERE part_uid = $1 ORDER BY created, id",
				       "preparing the pull");
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "pull_instr",
				       "SELECT kind, maker, model, serial, firmware, first_seen, last_seen, accuracy,"
				       " accuracy_freq_above, cal_date, due_date, certificate FROM instruments ORDER BY id",
				       "preparing the pull");
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "pull_drawings",
				       "SELECT part_uid, gap_m, gap_tol_m, curve_tol, curve_source, updated FROM part_drawing"
				       " ORDER BY part_uid",
				       "preparing the pull");
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "pull_mask",
				       "SELECT current_a, inductance_h, tol FROM part_curve_mask WHERE part_uid = $1 ORDER BY ord",
				       "preparing the pull");
	PGresult *parts = NULL;
	if (status == HB_OK)
		status = db_pg_exec(db, conn, "pull_parts", 0, NULL, "reading parts", &parts);
	if (status == HB_OK)
		status = db_write_begin(db, "storing the server's master data");
	if (status == HB_OK) {
		pull_ctx c = { db, stats->server_uid, stats };
		for (int i = 0; status == HB_OK && i < PQntuples(parts); i++)
			status = pull_part(&c, conn, parts, i);
		if (status == HB_OK)
			status = pull_instruments(&c, conn);
		if (status == HB_OK)
			status = pull_drawings(&c, conn);
		if (status == HB_OK)
			status = db_write_commit(db, "storing the server's master data");
		else
			db_write_rollback(db);
	}
	PQclear(parts);
	PQfinish(conn);
	return status;
}
