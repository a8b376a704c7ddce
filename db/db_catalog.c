/* db/db_catalog.c - parts, lots, units and lot inspection records */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_internal.h"

/* ---------------- parts ---------------- */

#define PART_COLUMNS                                                                              \
	"id, part_number, description, maker, nominal_h, tolerance, test_freq_hz, test_level,"   \
	" test_level_kind, sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2," \
	" le_m, window_m, toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, created, updated, decision_rule,"  \
	" guard_r"

void hb_db_part_init(hb_db_part *p)
{
	if (!p)
		return;
	memset(p, 0, sizeof *p);
	p->nominal_h = p->tolerance = p->test_freq_hz = p->test_level = NAN;
	p->sat_current_a = p->sat_drop = p->rated_current_a = p->dcr_max_ohm = NAN;
	p->ae_m2 = p->le_m = p->window_m = NAN;
	p->toroid_od_m = p->toroid_id_m = p->toroid_h_m = NAN;
	p->mu_i = p->bsat_t = NAN;
	p->guard_r = NAN;
}

void db_read_part_row(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_part *p = row;
	hb_db_part_init(p);
	p->id = sqlite3_column_int64(st, 0);
	db_col_text(st, 1, p->part_number, sizeof p->part_number);
	db_col_text(st, 2, p->description, sizeof p->description);
	db_col_text(st, 3, p->maker, sizeof p->maker);
	p->nominal_h = db_col_real(st, 4);
	p->tolerance = db_col_real(st, 5);
	p->test_freq_hz = db_col_real(st, 6);
	p->test_level = db_col_real(st, 7);
	const unsigned char *k = sqlite3_column_text(st, 8);
	p->test_level_kind = (k && k[0] == 'A') ? HB_DB_LEVEL_CURRENT : HB_DB_LEVEL_VOLTAGE;
	p->sat_current_a = db_col_real(st, 9);
	p->sat_drop = db_col_real(st, 10);
	p->rated_current_a = db_col_real(st, 11);
	p->dcr_max_ohm = db_col_real(st, 12);
	p->turns = sqlite3_column_int(st, 13);
	p->ae_m2 = db_col_real(st, 14);
	p->le_m = db_col_real(st, 15);
	p->window_m = db_col_real(st, 16);
	p->toroid_od_m = db_col_real(st, 17);
	p->toroid_id_m = db_col_real(st, 18);
	p->toroid_h_m = db_col_real(st, 19);
	p->mu_i = db_col_real(st, 20);
	p->bsat_t = db_col_real(st, 21);
	db_col_text(st, 22, p->created, sizeof p->created);
	db_col_text(st, 23, p->updated, sizeof p->updated);
	db_col_text(st, 24, p->decision_rule, sizeof p->decision_rule);
	p->guard_r = db_col_real(st, 25);
}

int hb_db_part_put(hb_db *db, hb_db_part *p)
{
	if (!db || !p)
		return HB_ERR_ARG;
	if (!p->part_number[0])
		return db_error(db, HB_ERR_ARG, "a part needs a part number");
	/* an older store (the migration tests) has no decision-rule columns */
	bool old = db->old_version && db->old_version < 6;
	sqlite3_stmt *st = old ? db_stmt(db, ST_PART_UPSERT_V5,
		"INSERT INTO parts (part_number, description, maker, nominal_h, tolerance, test_freq_hz,"
		" test_level, test_level_kind, sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns,"
		" ae_m2, le_m, window_m, toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, created, updated)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18,"
		" ?19, ?20, ?21, ?22, ?22)"
		" ON CONFLICT (part_number) DO UPDATE SET description = excluded.description,"
		" maker = excluded.maker, nominal_h = excluded.nominal_h, tolerance = excluded.tolerance,"
		" test_freq_hz = excluded.test_freq_hz, test_level = excluded.test_level,"
		" test_level_kind = excluded.test_level_kind, sat_current_a = excluded.sat_current_a,"
		" sat_drop = excluded.sat_drop, rated_current_a = excluded.rated_current_a,"
		" dcr_max_ohm = excluded.dcr_max_ohm, turns = excluded.turns, ae_m2 = excluded.ae_m2,"
		" le_m = excluded.le_m, window_m = excluded.window_m, toroid_od_m = excluded.toroid_od_m,"
		" toroid_id_m = excluded.toroid_id_m, toroid_h_m = excluded.toroid_h_m,"
		" mu_i = excluded.mu_i, bsat_t = excluded.bsat_t, updated = excluded.updated"
		" RETURNING id") :
		db_stmt(db, ST_PART_UPSERT,
		"INSERT INTO parts (part_number, description, maker, nominal_h, tolerance, test_freq_hz,"
		" test_level, test_level_kind, sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns,"
		" ae_m2, le_m, window_m, toroid_od_m, toroid_id_m, toroid_h_m, mu_i, bsat_t, created, updated,"
		" decision_rule, guard_r)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17, ?18,"
		" ?19, ?20, ?21, ?22, ?22, ?23, ?24)"
		" ON CONFLICT (part_number) DO UPDATE SET description = excluded.description,"
		" maker = excluded.maker, nominal_h = excluded.nominal_h, tolerance = excluded.tolerance,"
		" test_freq_hz = excluded.test_freq_hz, test_level = excluded.test_level,"
		" test_level_kind = excluded.test_level_kind, sat_current_a = excluded.sat_current_a,"
		" sat_drop = excluded.sat_drop, rated_current_a = excluded.rated_current_a,"
		" dcr_max_ohm = excluded.dcr_max_ohm, turns = excluded.turns, ae_m2 = excluded.ae_m2,"
		" le_m = excluded.le_m, window_m = excluded.window_m, toroid_od_m = excluded.toroid_od_m,"
		" toroid_id_m = excluded.toroid_id_m, toroid_h_m = excluded.toroid_h_m,"
		" mu_i = excluded.mu_i, bsat_t = excluded.bsat_t, updated = excluded.updated,"
		" decision_rule = excluded.decision_rule, guard_r = excluded.guard_r"
		" RETURNING id");
	if (!st)
		return HB_ERR_DB;
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	db_bind_text(st, 1, p->part_number);
	db_bind_text(st, 2, p->description);
	db_bind_text(st, 3, p->maker);
	db_bind_real(st, 4, p->nominal_h);
	db_bind_real(st, 5, p->tolerance);
	db_bind_real(st, 6, p->test_freq_hz);
	db_bind_real(st, 7, p->test_level);
	db_bind_text(st, 8, p->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V");
	db_bind_real(st, 9, p->sat_current_a);
	db_bind_real(st, 10, p->sat_drop);
	db_bind_real(st, 11, p->rated_current_a);
	db_bind_real(st, 12, p->dcr_max_ohm);
	if (p->turns > 0)
		sqlite3_bind_int(st, 13, p->turns);
	db_bind_real(st, 14, p->ae_m2);
	db_bind_real(st, 15, p->le_m);
	db_bind_real(st, 16, p->window_m);
	db_bind_real(st, 17, p->toroid_od_m);
	db_bind_real(st, 18, p->toroid_id_m);
	db_bind_real(st, 19, p->toroid_h_m);
	db_bind_real(st, 20, p->mu_i);
	db_bind_real(st, 21, p->bsat_t);
	db_bind_text(st, 22, now);
	if (!old) {
		db_bind_text(st, 23, p->decision_rule);
		db_bind_real(st, 24, p->guard_r);
	}
	int64_t id = 0;
	int status = db_write_one(db, st, "storing a part", &id, NULL);
	if (status == HB_OK) {
		p->id = id;
		snprintf(p->updated, sizeof p->updated, "%s", now);
		if (!p->created[0])
			snprintf(p->created, sizeof p->created, "%s", now);
	}
	return status;
}

int hb_db_part_get(hb_db *db, const char *part_number, hb_db_part *out)
{
	if (!db || !part_number || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_part_number(db, part_number);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_PART_GET, "SELECT " PART_COLUMNS " FROM parts WHERE part_number = ?1");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, part_number);
	return db_read_one(db, st, db_read_part_row, out, NULL, "part", part_number, "reading a part");
}

int hb_db_part_get_id(hb_db *db, int64_t id, hb_db_part *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_parts(db, &id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_PART_GET_ID, "SELECT " PART_COLUMNS " FROM parts WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, id);
	char what[32];
	snprintf(what, sizeof what, "id %lld", (long long)id);
	return db_read_one(db, st, db_read_part_row, out, NULL, "part", what, "reading a part");
}

int hb_db_part_list(hb_db *db, hb_db_part **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_all_parts(db);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = db_stmt(db, ST_PART_LIST, "SELECT " PART_COLUMNS " FROM parts ORDER BY part_number");
	if (!st)
		return HB_ERR_DB;
	return db_read_all(db, st, db_read_part_row, NULL, sizeof **out, "listing parts", (void **)out, count);
}

void hb_db_parts_free(hb_db_part *parts)
{
	free(parts);
}

/* ---------------- lots ---------------- */

#define LOT_COLUMNS                                                                               \
	"id, part_id, lot_code, lot_size, aql, inspection_level, severity, code_letter, sample_size," \
	" accept_number, reject_number, decision, created, decided_at"

void hb_db_lot_init(hb_db_lot *lot)
{
	if (!lot)
		return;
	memset(lot, 0, sizeof *lot);
	lot->aql = NAN;
}

static void read_lot(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_lot *l = row;
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
	l->decision = !d ? HB_DB_LOT_OPEN
		      : strcmp(d, "accept") == 0 ? HB_DB_LOT_ACCEPT
		      : strcmp(d, "reject") == 0 ? HB_DB_LOT_REJECT
						 : HB_DB_LOT_OPEN;
	db_col_text(st, 12, l->created, sizeof l->created);
	db_col_text(st, 13, l->decided, sizeof l->decided);
}

int hb_db_lot_ensure(hb_db *db, int64_t part_id, const char *lot_code, int64_t *lot_id)
{
	if (!db || !lot_code || !lot_id)
		return HB_ERR_ARG;
	if (!*lot_code)
		return db_error(db, HB_ERR_ARG, "a lot needs a lot code");
	/* never stored longer than the field it is read back into */
	if (strlen(lot_code) >= HB_DB_ID_LEN)
		return db_error(db, HB_ERR_ARG, "lot code: %zu bytes, limit %d", strlen(lot_code), HB_DB_ID_LEN - 1);
	/* The no-op update makes RETURNING give the id of an existing lot too. */
	sqlite3_stmt *st = db_stmt(db, ST_LOT_INSERT,
		"INSERT INTO lots (part_id, lot_code, created) VALUES (?1, ?2, ?3)"
		" ON CONFLICT (part_id, lot_code) DO UPDATE SET lot_code = excluded.lot_code RETURNING id");
	if (!st)
		return HB_ERR_DB;
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	sqlite3_bind_int64(st, 1, part_id);
	db_bind_text(st, 2, lot_code);
	db_bind_text(st, 3, now);
	return db_write_one(db, st, "storing a lot", lot_id, NULL);
}

int hb_db_lot_get(hb_db *db, int64_t lot_id, hb_db_lot *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lots(db, &lot_id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_LOT_GET, "SELECT " LOT_COLUMNS " FROM lots WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	char what[32];
	snprintf(what, sizeof what, "id %lld", (long long)lot_id);
	return db_read_one(db, st, read_lot, out, NULL, "lot", what, "reading a lot");
}

int hb_db_lot_find(hb_db *db, int64_t part_id, const char *lot_code, hb_db_lot *out)
{
	if (!db || !lot_code || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lot_code(db, part_id, lot_code);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_LOT_FIND,
				   "SELECT " LOT_COLUMNS " FROM lots WHERE part_id = ?1 AND lot_code = ?2");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, part_id);
	db_bind_text(st, 2, lot_code);
	return db_read_one(db, st, read_lot, out, NULL, "lot", lot_code, "reading a lot");
}

int hb_db_lot_update(hb_db *db, const hb_db_lot *lot)
{
	if (!db || !lot)
		return HB_ERR_ARG;
	if (lot->lot_size < 0 || lot->sample_size < 0 || lot->accept_number < 0 || lot->reject_number < 0)
		return db_error(db, HB_ERR_ARG, "lot %s: sizes and plan numbers must not be negative",
				lot->lot_code);
	sqlite3_stmt *st = db_stmt(db, ST_LOT_UPDATE,
		"UPDATE lots SET lot_size = ?2, aql = ?3, inspection_level = ?4, severity = ?5,"
		" code_letter = ?6, sample_size = ?7, accept_number = ?8, reject_number = ?9,"
		" decision = ?10,"
		" decided_at = CASE WHEN ?10 = 'open' THEN ''"
		"   WHEN decision = ?10 AND decided_at <> '' THEN decided_at ELSE ?11 END"
		" WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	sqlite3_bind_int64(st, 1, lot->id);
	if (lot->lot_size > 0)
		sqlite3_bind_int64(st, 2, lot->lot_size);
	db_bind_real(st, 3, lot->aql);
	db_bind_text(st, 4, lot->inspection_level);
	db_bind_text(st, 5, lot->severity);
	db_bind_text(st, 6, lot->code_letter);
	sqlite3_bind_int64(st, 7, lot->sample_size);
	sqlite3_bind_int64(st, 8, lot->accept_number);
	sqlite3_bind_int64(st, 9, lot->reject_number);
	db_bind_text(st, 10, hb_db_lot_decision_name(lot->decision));
	db_bind_text(st, 11, now);
	int changes = 0;
	int status = db_write_one(db, st, "updating a lot", NULL, &changes);
	if (status == HB_OK && changes == 0)
		status = db_error(db, HB_ERR_NOTFOUND, "no lot id %lld in %s", (long long)lot->id, db->path);
	return status;
}

/* ---------------- units ---------------- */

int hb_db_unit_ensure(hb_db *db, int64_t part_id, const char *serial, int64_t lot_id, int64_t *unit_id)
{
	if (!db || !serial || !unit_id)
		return HB_ERR_ARG;
	if (!*serial)
		return db_error(db, HB_ERR_ARG, "a unit needs a serial number");
	if (strlen(serial) >= HB_DB_ID_LEN)
		return db_error(db, HB_ERR_ARG, "serial: %zu bytes, limit %d", strlen(serial), HB_DB_ID_LEN - 1);
	sqlite3_stmt *st = db_stmt(db, ST_UNIT_INSERT,
		"INSERT INTO units (part_id, serial, lot_id, created) VALUES (?1, ?2, ?3, ?4)"
		" ON CONFLICT (part_id, serial) DO UPDATE SET lot_id = coalesce(excluded.lot_id, lot_id)"
		" RETURNING id");
	if (!st)
		return HB_ERR_DB;
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	sqlite3_bind_int64(st, 1, part_id);
	db_bind_text(st, 2, serial);
	db_bind_id(st, 3, lot_id);
	db_bind_text(st, 4, now);
	return db_write_one(db, st, "storing a unit", unit_id, NULL);
}

static void read_unit(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_unit *u = row;
	memset(u, 0, sizeof *u);
	u->id = sqlite3_column_int64(st, 0);
	u->part_id = sqlite3_column_int64(st, 1);
	u->lot_id = sqlite3_column_int64(st, 2);
	db_col_text(st, 3, u->serial, sizeof u->serial);
}

int hb_db_unit_get(hb_db *db, int64_t unit_id, hb_db_unit *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_units(db, &unit_id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_UNIT_GET, "SELECT id, part_id, lot_id, serial FROM units WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, unit_id);
	char what[32];
	snprintf(what, sizeof what, "id %lld", (long long)unit_id);
	return db_read_one(db, st, read_unit, out, NULL, "unit", what, "reading a unit");
}

/* ---------------- inspection records ---------------- */

void hb_db_inspection_init(hb_db_inspection *rec)
{
	if (rec)
		memset(rec, 0, sizeof *rec);
}

int hb_db_inspection_put(hb_db *db, hb_db_inspection *rec)
{
	if (!db || !rec)
		return HB_ERR_ARG;
	if (rec->sequence < 1)
		return db_error(db, HB_ERR_ARG, "inspection sequence %d: must be 1 or more", rec->sequence);
	if (rec->outcome != HB_DB_PASS && rec->outcome != HB_DB_FAIL && rec->outcome != HB_DB_SKIPPED)
		return db_error(db, HB_ERR_ARG, "inspection outcome must be pass, fail or skipped");
	/* a store held at an older schema on purpose (migration tests) has no operator column */
	bool old = db->old_version && db->old_version < DB_STEP_INSP_APPEND;
	sqlite3_stmt *st = old ? db_stmt(db, ST_INSP_UPSERT,
		"INSERT INTO inspections (lot_id, sequence, unit_id, sweep_id, outcome, note, at, at_unix, conditional)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9) RETURNING id") : db_stmt(db, ST_INSP_APPEND,
		"INSERT INTO inspections (lot_id, sequence, unit_id, sweep_id, outcome, note, at, at_unix, conditional,"
		" operator) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10) RETURNING id");
	if (!st)
		return HB_ERR_DB;
	if (rec->at <= 0)
		rec->at = db_now();
	if (!rec->operator_name[0])
		db_login_name(rec->operator_name, sizeof rec->operator_name);
	rec->superseded_by = 0;
	db_iso_time(rec->at, rec->at_iso, sizeof rec->at_iso);
	sqlite3_bind_int64(st, 1, rec->lot_id);
	sqlite3_bind_int(st, 2, rec->sequence);
	db_bind_id(st, 3, rec->unit_id);
	db_bind_id(st, 4, rec->sweep_id);
	db_bind_text(st, 5, hb_db_outcome_name(rec->outcome));
	db_bind_text(st, 6, rec->note);
	db_bind_text(st, 7, rec->at_iso);
	sqlite3_bind_double(st, 8, rec->at);
	sqlite3_bind_int(st, 9, rec->conditional ? 1 : 0);
	if (!old)
		db_bind_text(st, 10, rec->operator_name);
	return db_write_one(db, st, "storing an inspection record", &rec->id, NULL);
}

#define INSPECTION_COLUMNS                                                                          \
	"i.id, i.lot_id, i.unit_id, i.sweep_id, i.sequence, i.outcome, i.at_unix, i.at, coalesce(u.serial, ''),"  \
	" i.note, i.conditional, i.operator, i.superseded_by"

static void read_inspection(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_inspection *r = row;
	hb_db_inspection_init(r);
	r->id = sqlite3_column_int64(st, 0);
	r->lot_id = sqlite3_column_int64(st, 1);
	r->unit_id = sqlite3_column_int64(st, 2);
	r->sweep_id = sqlite3_column_int64(st, 3);
	r->sequence = sqlite3_column_int(st, 4);
	const char *o = (const char *)sqlite3_column_text(st, 5);
	r->outcome = !o ? HB_DB_SKIPPED
		     : strcmp(o, "pass") == 0 ? HB_DB_PASS
		     : strcmp(o, "fail") == 0 ? HB_DB_FAIL
					      : HB_DB_SKIPPED;
	r->at = sqlite3_column_double(st, 6);
	db_col_text(st, 7, r->at_iso, sizeof r->at_iso);
	db_col_text(st, 8, r->serial, sizeof r->serial);
	db_col_text(st, 9, r->note, sizeof r->note);
	r->conditional = sqlite3_column_int(st, 10) != 0;
	db_col_text(st, 11, r->operator_name, sizeof r->operator_name);
	r->superseded_by = sqlite3_column_int64(st, 12);
}

int hb_db_inspection_list(hb_db *db, int64_t lot_id, hb_db_inspection **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lot_samples(db, lot_id);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = db_stmt(db, ST_INSP_LIST,
		"SELECT " INSPECTION_COLUMNS " FROM inspections i LEFT JOIN units u ON u.id = i.unit_id"
		" WHERE i.lot_id = ?1 AND i.superseded_by IS NULL ORDER BY i.sequence");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	return db_read_all(db, st, read_inspection, NULL, sizeof **out, "listing inspection records", (void **)out,
			   count);
}

int hb_db_inspection_list_all(hb_db *db, int64_t lot_id, hb_db_inspection **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lot_samples(db, lot_id);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = db_stmt(db, ST_INSP_LIST_ALL,
		"SELECT " INSPECTION_COLUMNS " FROM inspections i LEFT JOIN units u ON u.id = i.unit_id"
		" WHERE i.lot_id = ?1 ORDER BY i.sequence, i.id");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	return db_read_all(db, st, read_inspection, NULL, sizeof **out, "listing inspection records", (void **)out,
			   count);
}

void hb_db_inspections_free(hb_db_inspection *recs)
{
	free(recs);
}

int hb_db_inspection_progress(hb_db *db, int64_t lot_id, int *next_sequence, int *passed, int *failed)
{
	if (!db)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lot_samples(db, lot_id);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_INSP_PROGRESS,
		"SELECT coalesce(max(sequence), 0) + 1, coalesce(sum(outcome = 'pass'), 0),"
		" coalesce(sum(outcome = 'fail'), 0) FROM inspections WHERE lot_id = ?1 AND superseded_by IS NULL");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	int rc = sqlite3_step(st);
	int status = HB_OK;
	if (rc == SQLITE_ROW) {
		if (next_sequence)
			*next_sequence = sqlite3_column_int(st, 0);
		if (passed)
			*passed = sqlite3_column_int(st, 1);
		if (failed)
			*failed = sqlite3_column_int(st, 2);
	} else {
		status = db_fail(db, rc, "reading inspection progress");
	}
	db_release(st);
	return status;
}
