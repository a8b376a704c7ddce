/* db/db_pg_read.c - many stations, one server: --db postgresql://... connects a handle to the shared server; a part's history and lot streams are read there directly */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_pg_internal.h"

bool db_pg_is_url(const char *path)
{
	return path && (strncmp(path, "postgresql://", 13) == 0 || strncmp(path, "postgres://", 11) == 0);
}

/* "SELECT ... FROM sweeps ..." -> "sweeps": enough to name what a command wanted. */
const char *db_pg_what(const char *sql)
{
	static char what[64];
	bool writes = strncmp(sql, "INSERT", 6) == 0 || strncmp(sql, "UPDATE", 6) == 0 ||
		      strncmp(sql, "DELETE", 6) == 0 || strncmp(sql, "REPLACE", 7) == 0;
	const char *from = writes ? NULL : strstr(sql, " FROM ");
	const char *verb = from ? "reading" : "writing";
	const char *p = from ? from + 6 : sql;
	if (!from) {
		const char *into = strstr(sql, " INTO ");
		const char *upd = strncmp(sql, "UPDATE ", 7) == 0 ? sql + 7 : NULL;
		p = into ? into + 6 : upd ? upd : sql;
	}
	size_t n = strcspn(p, " ,(");
	if (n > 40)
		n = 40;
	snprintf(what, sizeof what, "%s %.*s", verb, (int)n, p);
	return what;
}

/* A part's units with their newest complete bias sweep, as a station's store reads them (db_sweeps.c):
 * each fit value from the newest fit of the sweep that has that value, the verdict from the verdicts
 * in force (the newest of each check, a station's superseded_by derived). Written with one lateral
 * join per unit for the fit values instead of one subquery per value: at 2,000 units the six
 * subqueries were most of the time. */
#define PG_PICK(param) " max(x.value) FILTER (WHERE x.name = " param ")"
static const char pg_history_sql[] =
	"SELECT s.id, u.id, s.started_unix, s.started_at, s.station, coalesce(l.lot_code, ''), u.serial,"
	" fv.v5, fv.v6, fv.v7, fv.v8, fv.v9, fv.v10,"
	" (SELECT CASE WHEN sum(CASE WHEN v.outcome IN ('fail', 'conditional-fail') THEN 1 ELSE 0 END) > 0 THEN 2"
	"  WHEN count(*) > 0 AND sum(CASE WHEN v.outcome IN ('pass', 'conditional-pass') THEN 1 ELSE 0 END) = count(*)"
	"  THEN 1 ELSE 0 END FROM verdicts v WHERE v.sweep_uid = s.uid AND NOT EXISTS (SELECT 1 FROM verdicts w"
	"  WHERE w.sweep_uid = v.sweep_uid AND w.check_name = v.check_name AND w.id > v.id)),"
	" s.uid, u.uid"
	" FROM units u JOIN parts p ON p.uid = u.part_uid LEFT JOIN lots l ON l.uid = u.lot_uid"
	" JOIN LATERAL (SELECT s2.id, s2.uid, s2.started_unix, s2.started_at, s2.station FROM sweeps s2"
	"  WHERE s2.unit_uid = u.uid AND s2.kind = 'bias' AND s2.status = 'complete'"
	"  ORDER BY s2.started_unix DESC, s2.id DESC LIMIT 1) s ON true"
	" LEFT JOIN LATERAL (SELECT" PG_PICK("$5") " AS v5," PG_PICK("$6") " AS v6," PG_PICK("$7") " AS v7,"
	PG_PICK("$8") " AS v8," PG_PICK("$9") " AS v9," PG_PICK("$10") " AS v10"
	"  FROM (SELECT DISTINCT ON (fvl.name) fvl.name, fvl.value FROM fits f JOIN fit_values fvl ON fvl.fit_uid = f.uid"
	"  WHERE f.sweep_uid = s.uid AND fvl.name IN ($5, $6, $7, $8, $9, $10) ORDER BY fvl.name, f.id DESC) x) fv ON true"
	" WHERE p.part_number = $1 AND ($2::text IS NULL OR l.lot_code = $2) AND ($3::text IS NULL OR u.serial = $3)"
	" AND ($4::float8 IS NULL OR s.started_unix >= $4)"
	" ORDER BY s.started_unix, s.id";

int db_pg_attach(hb_db *db, const char *url)
{
	char server_uid[HB_DB_UID_LEN];
	PGconn *conn = NULL;
	int status = db_pg_connect(db, url, server_uid, &conn);
	if (status < 0)
		return status;
	status = db_pg_prepare(db, conn, "history", pg_history_sql, "preparing reads");
	/* a part's lot streams: every registration of its number (the server joins them by number) */
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "stream_suppliers",
				       "SELECT l.supplier FROM lots l JOIN parts p ON p.uid = l.part_uid WHERE p.part_number ="
				       " (SELECT part_number FROM parts WHERE id = $1) AND l.decision IN ('accept', 'reject')"
				       " UNION SELECT e.supplier FROM stream_events e JOIN parts p ON p.uid = e.part_uid"
				       " WHERE p.part_number = (SELECT part_number FROM parts WHERE id = $1) ORDER BY 1",
				       "preparing reads");
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "stream_lots",
				       "SELECT l.id, $1::bigint, l.lot_code, l.lot_size, l.aql, l.inspection_level, l.severity,"
				       " l.code_letter, l.sample_size, l.accept_number, l.reject_number, l.decision, l.created,"
				       " l.decided_at, l.supplier, l.production_irregular,"
				       /* the records in force: a sample recorded again (a later record at the same
				        * position) supersedes the earlier one, as in the station's store (step 14) */
				       " (SELECT count(*) FROM inspections i WHERE i.lot_uid = l.uid AND i.outcome = 'fail'"
				       "  AND NOT EXISTS (SELECT 1 FROM inspections j WHERE j.lot_uid = i.lot_uid"
				       "  AND j.sequence = i.sequence AND (j.at_unix, j.uid) > (i.at_unix, i.uid))),"
				       " coalesce(l.decided_unix, extract(epoch FROM l.decided_at::timestamptz)::float8) AS t"
				       " FROM lots l JOIN parts p ON p.uid = l.part_uid WHERE p.part_number ="
				       " (SELECT part_number FROM parts WHERE id = $1) AND l.supplier = $2"
				       " AND l.decision IN ('accept', 'reject') ORDER BY t, l.id",
				       "preparing reads");
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "stream_events",
				       "SELECT e.id, e.kind, e.note, e.at, e.at_unix FROM stream_events e"
				       " JOIN parts p ON p.uid = e.part_uid WHERE p.part_number ="
				       " (SELECT part_number FROM parts WHERE id = $1) AND e.supplier = $2"
				       " ORDER BY e.at_unix, e.id",
				       "preparing reads");
	/* the server by host and database in messages, not by the URL: a URL may hold a password */
	char name[512];
	snprintf(name, sizeof name, "the server (host %s, database %s)", PQhost(conn) ? PQhost(conn) : "?",
		 PQdb(conn) ? PQdb(conn) : "?");
	(void)url;
	char *path = status == HB_OK ? strdup(name) : NULL;
	if (status == HB_OK && !path)
		status = db_error(db, HB_ERR_NOMEM, "out of memory opening the server");
	if (status < 0) {
		PQfinish(conn);
		return status;
	}
	free(db->path);
	db->path = path;
	db->pg = conn;
	return db_mirror_attach(db);
}

void db_pg_detach(hb_db *db)
{
	db_mirror_detach(db);
	if (db && db->pg) {
		PQfinish(db->pg);
		db->pg = NULL;
	}
}

static double pg_real(const PGresult *r, int row, int col)
{
	return PQgetisnull(r, row, col) ? NAN : strtod(PQgetvalue(r, row, col), NULL);
}

static void pg_text(const PGresult *r, int row, int col, char *buf, size_t cap)
{
	snprintf(buf, cap, "%s", PQgetisnull(r, row, col) ? "" : PQgetvalue(r, row, col));
}


int db_pg_history(hb_db *db, const hb_db_history_filter *f, hb_db_history_row **out, size_t *count)
{
	char since[40], drop_names[HB_DB_HISTORY_DROPS][32];
	snprintf(since, sizeof since, "%.17g", f->since);
	const char *params[10] = { f->part_number, f->lot_code, f->serial, f->since > 0 ? since : NULL, HB_DB_FV_L0 };
	for (int i = 0; i < HB_DB_HISTORY_DROPS; i++) {
		snprintf(drop_names[i], sizeof drop_names[i], HB_DB_FV_DROP_FMT, f->drop_percent[i]);
		params[5 + i] = drop_names[i];
	}
	params[8] = HB_DB_FV_MU_E;
	params[9] = HB_DB_FV_GAP;
	PGresult *r = NULL;
	int status = db_pg_exec(db, db->pg, "history", 10, params, "reading history", &r);
	if (status < 0)
		return status;
	size_t n = (size_t)PQntuples(r);
	hb_db_history_row *rows = calloc(n ? n : 1, sizeof *rows);
	if (!rows) {
		PQclear(r);
		return db_error(db, HB_ERR_NOMEM, "out of memory reading history");
	}
	for (size_t i = 0; i < n; i++) {
		int k = (int)i;
		hb_db_history_row *h = &rows[i];
		h->sweep_id = strtoll(PQgetvalue(r, k, 0), NULL, 10);
		h->unit_id = strtoll(PQgetvalue(r, k, 1), NULL, 10);
		h->started = pg_real(r, k, 2);
		pg_text(r, k, 3, h->started_iso, sizeof h->started_iso);
		pg_text(r, k, 4, h->station, sizeof h->station);
		pg_text(r, k, 5, h->lot_code, sizeof h->lot_code);
		pg_text(r, k, 6, h->serial, sizeof h->serial);
		h->l0_h = pg_real(r, k, 7);
		for (int d = 0; d < HB_DB_HISTORY_DROPS; d++)
			h->i_drop_a[d] = pg_real(r, k, 8 + d);
		h->mu_e = pg_real(r, k, 11);
		h->gap_m = pg_real(r, k, 12);
		h->verdict = (hb_db_outcome)atoi(PQgetvalue(r, k, 13));
		pg_text(r, k, 14, h->sweep_uid, sizeof h->sweep_uid);
		pg_text(r, k, 15, h->unit_uid, sizeof h->unit_uid);
	}
	PQclear(r);
	/* a part report reads each listed sweep next: they are copied in chunks (db_pg_mirror.c) */
	int64_t *ids = malloc((n ? n : 1) * sizeof *ids);
	for (size_t i = 0; ids && i < n; i++)
		ids[i] = rows[i].sweep_id;
	status = ids ? db_mirror_hint(db, ids, n) : db_error(db, HB_ERR_NOMEM, "out of memory reading history");
	free(ids);
	if (status < 0) {
		free(rows);
		return status;
	}
	*out = rows;
	*count = n;
	return HB_OK;
}

/* ---------------- a part's lot streams (db_streams.c's reads) ---------------- */

static int stream_query(hb_db *db, const char *name, int64_t part_id, const char *supplier, PGresult **r)
{
	char id[32];
	snprintf(id, sizeof id, "%lld", (long long)part_id);
	const char *params[2] = { id, supplier };
	return db_pg_exec(db, db->pg, name, supplier ? 2 : 1, params, "reading a lot stream", r);
}

int db_pg_stream_suppliers(hb_db *db, int64_t part_id, char (**out)[HB_DB_ID_LEN], size_t *count)
{
	PGresult *r = NULL;
	int status = stream_query(db, "stream_suppliers", part_id, NULL, &r);
	if (status < 0)
		return status;
	size_t n = (size_t)PQntuples(r);
	char (*rows)[HB_DB_ID_LEN] = calloc(n ? n : 1, HB_DB_ID_LEN);
	if (!rows) {
		PQclear(r);
		return db_error(db, HB_ERR_NOMEM, "out of memory reading a lot stream");
	}
	for (size_t i = 0; i < n; i++)
		pg_text(r, (int)i, 0, rows[i], HB_DB_ID_LEN);
	PQclear(r);
	*out = rows;
	*count = n;
	return HB_OK;
}

int db_pg_stream_lots(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_lot **out, size_t *count)
{
	PGresult *r = NULL;
	int status = stream_query(db, "stream_lots", part_id, supplier, &r);
	if (status < 0)
		return status;
	size_t n = (size_t)PQntuples(r);
	hb_db_stream_lot *rows = calloc(n ? n : 1, sizeof *rows);
	if (!rows) {
		PQclear(r);
		return db_error(db, HB_ERR_NOMEM, "out of memory reading a lot stream");
	}
	for (size_t i = 0; i < n; i++) {
		int k = (int)i;
		hb_db_stream_lot *s = &rows[i];
		hb_db_lot *l = &s->lot;
		hb_db_lot_init(l);
		l->id = strtoll(PQgetvalue(r, k, 0), NULL, 10);
		l->part_id = strtoll(PQgetvalue(r, k, 1), NULL, 10);
		pg_text(r, k, 2, l->lot_code, sizeof l->lot_code);
		l->lot_size = PQgetisnull(r, k, 3) ? 0 : atol(PQgetvalue(r, k, 3));
		l->aql = pg_real(r, k, 4);
		pg_text(r, k, 5, l->inspection_level, sizeof l->inspection_level);
		pg_text(r, k, 6, l->severity, sizeof l->severity);
		pg_text(r, k, 7, l->code_letter, sizeof l->code_letter);
		l->sample_size = atol(PQgetvalue(r, k, 8));
		l->accept_number = atol(PQgetvalue(r, k, 9));
		l->reject_number = atol(PQgetvalue(r, k, 10));
		const char *d = PQgetvalue(r, k, 11);
		l->decision = strcmp(d, "accept") == 0 ? HB_DB_LOT_ACCEPT
			      : strcmp(d, "reject") == 0 ? HB_DB_LOT_REJECT
							 : HB_DB_LOT_OPEN;
		pg_text(r, k, 12, l->created, sizeof l->created);
		pg_text(r, k, 13, l->decided, sizeof l->decided);
		pg_text(r, k, 14, s->supplier, sizeof s->supplier);
		s->irregular = atoi(PQgetvalue(r, k, 15)) != 0;
		s->nonconforming = atol(PQgetvalue(r, k, 16));
		s->decided_unix = pg_real(r, k, 17);
	}
	PQclear(r);
	*out = rows;
	*count = n;
	return HB_OK;
}

int db_pg_stream_events(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_event **out, size_t *count)
{
	PGresult *r = NULL;
	int status = stream_query(db, "stream_events", part_id, supplier, &r);
	if (status < 0)
		return status;
	size_t n = (size_t)PQntuples(r);
	hb_db_stream_event *rows = calloc(n ? n : 1, sizeof *rows);
	if (!rows) {
		PQclear(r);
		return db_error(db, HB_ERR_NOMEM, "out of memory reading a lot stream");
	}
	for (size_t i = 0; i < n; i++) {
		int k = (int)i;
		hb_db_stream_event *e = &rows[i];
		e->id = strtoll(PQgetvalue(r, k, 0), NULL, 10);
		const char *kind = PQgetvalue(r, k, 1);
		e->kind = strcmp(kind, "approve-reduced") == 0 ? HB_DB_STREAM_APPROVE_REDUCED
			  : strcmp(kind, "withdraw-reduced") == 0 ? HB_DB_STREAM_WITHDRAW_REDUCED
								  : HB_DB_STREAM_RESUME;
		pg_text(r, k, 2, e->note, sizeof e->note);
		pg_text(r, k, 3, e->at_iso, sizeof e->at_iso);
		e->at = pg_real(r, k, 4);
	}
	PQclear(r);
	*out = rows;
	*count = n;
	return HB_OK;
}
