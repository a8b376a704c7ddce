/* db/db_streams.c - the lot stream of a part from one supplier: its decided lots in order and the events that steer its switching */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_internal.h"

/* Statements here run a few times per command: prepared per call, not
 * cached, so the shared slot table stays as it is. */
const char *hb_db_stream_kind_name(hb_db_stream_kind kind)
{
	switch (kind) {
	case HB_DB_STREAM_APPROVE_REDUCED:
		return "approve-reduced";
	case HB_DB_STREAM_WITHDRAW_REDUCED:
		return "withdraw-reduced";
	case HB_DB_STREAM_RESUME:
		return "resume";
	}
	return "?";
}

int hb_db_lot_set_stream(hb_db *db, int64_t lot_id, const char *supplier, bool irregular)
{
	if (!db || !supplier)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_prepare_once(db, "UPDATE lots SET supplier = ?2, production_irregular = ?3 WHERE id = ?1", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	db_bind_text(st, 2, supplier);
	sqlite3_bind_int(st, 3, irregular ? 1 : 0);
	int changes = 0;
	int status = db_write_one(db, st, "naming a lot's supplier", NULL, &changes);
	sqlite3_finalize(st);
	if (status == HB_OK && changes == 0)
		status = db_error(db, HB_ERR_NOTFOUND, "no lot id %lld in %s", (long long)lot_id, db->path);
	return status;
}

static void read_supplier(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_stream_lot *l = row;
	db_col_text(st, 0, l->supplier, sizeof l->supplier);
	l->irregular = sqlite3_column_int(st, 1) != 0;
}

int hb_db_lot_get_stream(hb_db *db, int64_t lot_id, char *supplier, size_t cap, bool *irregular)
{
	if (!db || !supplier || !cap)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lots(db, &lot_id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_prepare_once(db, "SELECT supplier, production_irregular FROM lots WHERE id = ?1", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	hb_db_stream_lot row;
	memset(&row, 0, sizeof row);
	char what[32];
	snprintf(what, sizeof what, "id %lld", (long long)lot_id);
	int status = db_read_one(db, st, read_supplier, &row, NULL, "lot", what, "reading a lot's supplier");
	sqlite3_finalize(st);
	if (status == HB_OK) {
		snprintf(supplier, cap, "%s", row.supplier);
		if (irregular)
			*irregular = row.irregular;
	}
	return status;
}

int hb_db_lot_stamp_decided(hb_db *db, int64_t lot_id)
{
	if (!db)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_prepare_once(db, "UPDATE lots SET decided_unix = ?2 WHERE id = ?1", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	sqlite3_bind_double(st, 2, db_now());
	int status = db_write_one(db, st, "stamping a lot's decision", NULL, NULL);
	sqlite3_finalize(st);
	return status;
}

static void read_stream_lot(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_stream_lot *s = row;
	memset(s, 0, sizeof *s);
	hb_db_lot *l = &s->lot;
	hb_db_lot_init(l);
	l->id = sqlite3_column_int64(st, 0);
	l->part_id = sqlite3_column_int64(st, 1);
	db_col_text(st, 2, l->lot_code, sizeof l->lot_code);
	l->lot_size = (long)sqlite3_column_int64(st, 3);
	l->aql = db_col_real(st, 4);
	db_col_text(st, 5, l->inspection_level, sizeof l->inspection_level);
	db_col_text(st, 6, l->severity, sizeof l->severity);
	db_col_text(st, 7, l->code_letter, sizeof l->code_letter);
	l->sample_size = (long)sqlite3_column_int64(st, 8);
	l->accept_number = (long)sqlite3_column_int64(st, 9);
	l->reject_number = (long)sqlite3_column_int64(st, 10);
	const char *d = (const char *)sqlite3_column_text(st, 11);
	l->decision = d && strcmp(d, "accept") == 0 ? HB_DB_LOT_ACCEPT
		      : d && strcmp(d, "reject") == 0 ? HB_DB_LOT_REJECT
						      : HB_DB_LOT_OPEN;
	db_col_text(st, 12, l->created, sizeof l->created);
	db_col_text(st, 13, l->decided, sizeof l->decided);
	db_col_text(st, 14, s->supplier, sizeof s->supplier);
	s->irregular = sqlite3_column_int(st, 15) != 0;
	s->nonconforming = (long)sqlite3_column_int64(st, 16);
	s->decided_unix = db_col_real(st, 17);
}

int hb_db_stream_lots(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_lot **out, size_t *count)
{
	if (!db || !supplier || !out || !count)
		return HB_ERR_ARG;
	if (db->pg)
		return db_pg_stream_lots(db, part_id, supplier, out, count);
	/* Lots decided before decided_unix existed keep their whole-second
	 * decided_at; the id breaks ties in the order they were begun. */
	sqlite3_stmt *st = db_prepare_once(db,
		"SELECT id, part_id, lot_code, lot_size, aql, inspection_level, severity, code_letter, sample_size,"
		" accept_number, reject_number, decision, created, decided_at, supplier, production_irregular,"
		" (SELECT count(*) FROM inspections i WHERE i.lot_id = lots.id AND i.outcome = 'fail'"
		" AND i.superseded_by IS NULL),"
		" coalesce(decided_unix, CAST(strftime('%s', decided_at) AS REAL)) AS t"
		" FROM lots WHERE part_id = ?1 AND supplier = ?2 AND decision IN ('accept', 'reject')"
		" ORDER BY t, id", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, part_id);
	db_bind_text(st, 2, supplier);
	int status = db_read_all(db, st, read_stream_lot, NULL, sizeof(hb_db_stream_lot), "reading a lot stream",
				 (void **)out, count);
	sqlite3_finalize(st);
	return status;
}

void hb_db_stream_lots_free(hb_db_stream_lot *lots)
{
	free(lots);
}

static void read_supplier_name(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	db_col_text(st, 0, row, HB_DB_ID_LEN);
}

int hb_db_stream_suppliers(hb_db *db, int64_t part_id, char (**out)[HB_DB_ID_LEN], size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	if (db->pg)
		return db_pg_stream_suppliers(db, part_id, out, count);
	sqlite3_stmt *st = db_prepare_once(db,
		"SELECT supplier FROM lots WHERE part_id = ?1 AND decision IN ('accept', 'reject')"
		" UNION SELECT supplier FROM stream_events WHERE part_id = ?1 ORDER BY 1", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, part_id);
	int status = db_read_all(db, st, read_supplier_name, NULL, HB_DB_ID_LEN, "reading a part's suppliers",
				 (void **)out, count);
	sqlite3_finalize(st);
	return status;
}

int hb_db_stream_event_add(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_kind kind, const char *note)
{
	if (!db || !supplier || (unsigned)kind > HB_DB_STREAM_RESUME)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_prepare_once(db, "INSERT INTO stream_events (part_id, supplier, kind, note, at, at_unix)"
				       " VALUES (?1, ?2, ?3, ?4, ?5, ?6)", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	double now = db_now();
	char iso[HB_DB_TIME_LEN];
	db_iso_time(now, iso, sizeof iso);
	sqlite3_bind_int64(st, 1, part_id);
	db_bind_text(st, 2, supplier);
	db_bind_text(st, 3, hb_db_stream_kind_name(kind));
	db_bind_text(st, 4, note ? note : "");
	db_bind_text(st, 5, iso);
	sqlite3_bind_double(st, 6, now);
	int status = db_write_one(db, st, "recording a lot-stream event", NULL, NULL);
	sqlite3_finalize(st);
	return status;
}

static void read_event(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_stream_event *e = row;
	memset(e, 0, sizeof *e);
	e->id = sqlite3_column_int64(st, 0);
	const char *k = (const char *)sqlite3_column_text(st, 1);
	e->kind = k && strcmp(k, "approve-reduced") == 0 ? HB_DB_STREAM_APPROVE_REDUCED
		  : k && strcmp(k, "withdraw-reduced") == 0 ? HB_DB_STREAM_WITHDRAW_REDUCED
							    : HB_DB_STREAM_RESUME;
	db_col_text(st, 2, e->note, sizeof e->note);
	db_col_text(st, 3, e->at_iso, sizeof e->at_iso);
	e->at = sqlite3_column_double(st, 4);
}

int hb_db_stream_events(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_event **out, size_t *count)
{
	if (!db || !supplier || !out || !count)
		return HB_ERR_ARG;
	if (db->pg)
		return db_pg_stream_events(db, part_id, supplier, out, count);
	sqlite3_stmt *st = db_prepare_once(db, "SELECT id, kind, note, at, at_unix FROM stream_events"
				       " WHERE part_id = ?1 AND supplier = ?2 ORDER BY at_unix, id", "preparing a lot-stream query");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, part_id);
	db_bind_text(st, 2, supplier);
	int status = db_read_all(db, st, read_event, NULL, sizeof(hb_db_stream_event), "reading lot-stream events",
				 (void **)out, count);
	sqlite3_finalize(st);
	return status;
}

void hb_db_stream_events_free(hb_db_stream_event *events)
{
	free(events);
}
