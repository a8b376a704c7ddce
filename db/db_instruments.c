/* db/db_instruments.c - the instrument register, fixture compensations, what each sweep ran with, and the reverse query (which records an instrument made) */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_internal.h"

/*
 * These statements run a few times per sweep at most, so each is prepared
 * when needed and finalised after; the statement cache stays for the point
 * path.
 */
/* One row by its id (bound as ?1): the statement prepared, read into out
 * and finalised; noun and the id name the row in a not-found message. */
static int read_by_id(hb_db *db, const char *sql, int64_t id, db_row_reader *read, void *out, const char *noun,
		      const char *what)
{
	sqlite3_stmt *st = db_prepare_once(db, sql, what);
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, id);
	char key[32];
	snprintf(key, sizeof key, "%lld", (long long)id);
	int rc = db_read_one(db, st, read, out, NULL, noun, key, what);
	sqlite3_finalize(st);
	return rc;
}

#define INSTR_COLS                                                                                                \
	"id, kind, maker, model, serial, firmware, first_seen, last_seen, accuracy, accuracy_freq_above, cal_date, " \
	"due_date, certificate"

static void read_instrument(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_instrument *o = row;
	memset(o, 0, sizeof *o);
	o->id = sqlite3_column_int64(st, 0);
	db_col_text(st, 1, o->kind, sizeof o->kind);
	db_col_text(st, 2, o->maker, sizeof o->maker);
	db_col_text(st, 3, o->model, sizeof o->model);
	db_col_text(st, 4, o->serial, sizeof o->serial);
	db_col_text(st, 5, o->firmware, sizeof o->firmware);
	db_col_text(st, 6, o->first_seen, sizeof o->first_seen);
	db_col_text(st, 7, o->last_seen, sizeof o->last_seen);
	db_col_text(st, 8, o->accuracy, sizeof o->accuracy);
	db_col_text(st, 9, o->accuracy_freq_above, sizeof o->accuracy_freq_above);
	db_col_text(st, 10, o->cal_date, sizeof o->cal_date);
	db_col_text(st, 11, o->due_date, sizeof o->due_date);
	db_col_text(st, 12, o->certificate, sizeof o->certificate);
}

int hb_db_instrument_get(hb_db *db, int64_t id, hb_db_instrument *out)
{
	int mirrored = db_mirror_register(db);
	if (mirrored < 0)
		return mirrored;
	return read_by_id(db, "SELECT " INSTR_COLS " FROM instruments WHERE id = ?1", id, read_instrument, out, "instrument",
			  "reading an instrument");
}

int hb_db_instrument_ensure(hb_db *db, const char *kind, const char *maker, const char *model, const char *serial,
			    const char *firmware, hb_db_instrument *out, bool *created)
{
	if (created)
		*created = false;
	if (!kind || (strcmp(kind, "lcr") && strcmp(kind, "supply")))
		return db_error(db, HB_ERR_ARG, "instrument kind '%s': accepted lcr or supply", kind ? kind : "");
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	/* Insert when new; the RETURNING row tells which happened. */
	sqlite3_stmt *st = db_prepare_once(db,
				"INSERT INTO instruments (kind, maker, model, serial, firmware, first_seen, last_seen) "
				"VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?6) ON CONFLICT (maker, model, serial) DO NOTHING RETURNING id",
				"recording an instrument");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, kind);
	db_bind_text(st, 2, maker ? maker : "");
	db_bind_text(st, 3, model ? model : "");
	db_bind_text(st, 4, serial ? serial : "");
	db_bind_text(st, 5, firmware ? firmware : "");
	db_bind_text(st, 6, now);
	int64_t id = 0;
	int rc = db_write_one(db, st, "recording an instrument", &id, NULL);
	sqlite3_finalize(st);
	if (rc != HB_OK)
		return rc;
	if (id > 0) {
		if (created)
			*created = true;
		return hb_db_instrument_get(db, id, out);
	}
	st = db_prepare_once(db,
		  "UPDATE instruments SET last_seen = ?4, firmware = ?5 WHERE maker = ?1 AND model = ?2 AND serial = ?3 "
		  "RETURNING id",
		  "updating an instrument");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, maker ? maker : "");
	db_bind_text(st, 2, model ? model : "");
	db_bind_text(st, 3, serial ? serial : "");
	db_bind_text(st, 4, now);
	db_bind_text(st, 5, firmware ? firmware : "");
	rc = db_write_one(db, st, "updating an instrument", &id, NULL);
	sqlite3_finalize(st);
	if (rc != HB_OK)
		return rc;
	return hb_db_instrument_get(db, id, out);
}

int hb_db_instrument_find(hb_db *db, const char *serial, hb_db_instrument *out)
{
	int mirrored = db_mirror_register(db);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_prepare_once(db, "SELECT " INSTR_COLS " FROM instruments WHERE serial = ?1 ORDER BY id",
				"finding an instrument");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, serial ? serial : "");
	hb_db_instrument *rows = NULL;
	size_t n = 0;
	int rc = db_read_all(db, st, read_instrument, NULL, sizeof *rows, "finding an instrument", (void **)&rows, &n);
	sqlite3_finalize(st);
	if (rc != HB_OK)
		return rc;
	if (n == 0)
		rc = db_error(db, HB_ERR_NOTFOUND, "no instrument with serial '%s' in %s (see 'instrument list')",
			      serial ? serial : "", db->path);
	else if (n > 1)
		rc = db_error(db, HB_ERR_ARG, "serial '%s' names %zu instruments (%s %s and %s %s ...): not unique", serial, n,
			      rows[0].maker, rows[0].model, rows[1].maker, rows[1].model);
	else
		*out = rows[0];
	free(rows);
	return rc;
}

int hb_db_instrument_list(hb_db *db, hb_db_instrument **out, size_t *count)
{
	int mirrored = db_mirror_register(db);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_prepare_once(db, "SELECT " INSTR_COLS " FROM instruments ORDER BY kind, serial, id",
				"listing instruments");
	if (!st)
		return HB_ERR_DB;
	int rc = db_read_all(db, st, read_instrument, NULL, sizeof **out, "listing instruments", (void **)out, count);
	sqlite3_finalize(st);
	return rc;
}

int hb_db_instrument_update(hb_db *db, const hb_db_instrument *in)
{
	sqlite3_stmt *st = db_prepare_once(db,
				"UPDATE instruments SET accuracy = ?2, accuracy_freq_above = ?3, cal_date = ?4, due_date = ?5, "
				"certificate = ?6 WHERE id = ?1",
				"updating an instrument");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, in->id);
	db_bind_text(st, 2, in->accuracy);
	db_bind_text(st, 3, in->accuracy_freq_above);
	db_bind_text(st, 4, in->cal_date);
	db_bind_text(st, 5, in->due_date);
	db_bind_text(st, 6, in->certificate);
	int changes = 0;
	int rc = db_write_one(db, st, "updating an instrument", NULL, &changes);
	sqlite3_finalize(st);
	if (rc == HB_OK && changes == 0)
		rc = db_error(db, HB_ERR_NOTFOUND, "no instrument %lld in %s", (long long)in->id, db->path);
	return rc;
}

/* ---------------- fixture compensations ---------------- */

#define COMP_COLS "id, fixture, kind, method, instrument_id, at, at_unix, residuals, operator, note"

static void read_comp(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_fixture_comp *o = row;
	memset(o, 0, sizeof *o);
	o->id = sqlite3_column_int64(st, 0);
	db_col_text(st, 1, o->fixture, sizeof o->fixture);
	db_col_text(st, 2, o->kind, sizeof o->kind);
	db_col_text(st, 3, o->method, sizeof o->method);
	o->instrument_id = sqlite3_column_int64(st, 4);
	db_col_text(st, 5, o->at, sizeof o->at);
	o->at_unix = db_col_real(st, 6);
	db_col_text(st, 7, o->residuals, sizeof o->residuals);
	db_col_text(st, 8, o->operator_name, sizeof o->operator_name);
	db_col_text(st, 9, o->note, sizeof o->note);
}

int hb_db_fixture_comp_add(hb_db *db, hb_db_fixture_comp *c)
{
	sqlite3_stmt *st = db_prepare_once(db,
				"INSERT INTO fixture_compensations (fixture, kind, method, instrument_id, at, at_unix, residuals, "
				"operator, note) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9) RETURNING id",
				"recording a fixture compensation");
	if (!st)
		return HB_ERR_DB;
	c->at_unix = db_now();
	db_iso_time(c->at_unix, c->at, sizeof c->at);
	db_bind_text(st, 1, c->fixture);
	db_bind_text(st, 2, c->kind);
	db_bind_text(st, 3, c->method);
	db_bind_id(st, 4, c->instrument_id);
	db_bind_text(st, 5, c->at);
	sqlite3_bind_double(st, 6, c->at_unix);
	db_bind_text(st, 7, c->residuals[0] ? c->residuals : "[]");
	db_bind_text(st, 8, c->operator_name);
	db_bind_text(st, 9, c->note);
	int rc = db_write_one(db, st, "recording a fixture compensation", &c->id, NULL);
	sqlite3_finalize(st);
	return rc;
}

int hb_db_fixture_comp_get(hb_db *db, int64_t id, hb_db_fixture_comp *out)
{
	int mirrored = db_mirror_register(db);
	if (mirrored < 0)
		return mirrored;
	return read_by_id(db, "SELECT " COMP_COLS " FROM fixture_compensations WHERE id = ?1", id, read_comp, out,
			  "fixture compensation", "reading a fixture compensation");
}

int hb_db_fixture_comp_latest(hb_db *db, const char *fixture, const char *kind, hb_db_fixture_comp *out)
{
	int mirrored = db_mirror_register(db);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_prepare_once(db,
				"SELECT " COMP_COLS " FROM fixture_compensations WHERE fixture = ?1 AND kind = ?2 "
				"ORDER BY at_unix DESC, id DESC LIMIT 1",
				"reading a fixture compensation");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, fixture);
	db_bind_text(st, 2, kind);
	char key[160];
	snprintf(key, sizeof key, "'%s' (%s)", fixture, kind);
	int rc = db_read_one(db, st, read_comp, out, NULL, "compensation of fixture", key,
			     "reading a fixture compensation");
	sqlite3_finalize(st);
	return rc;
}

/* ---------------- what a sweep ran with ---------------- */

void hb_db_sweep_trace_init(hb_db_sweep_trace *t)
{
	memset(t, 0, sizeof *t);
	snprintf(t->settings_start, sizeof t->settings_start, "{}");
	snprintf(t->settings_end, sizeof t->settings_end, "{}");
}

int hb_db_sweep_trace_put(hb_db *db, const hb_db_sweep_trace *t)
{
	sqlite3_stmt *st = db_prepare_once(db,
				"INSERT OR REPLACE INTO sweep_trace (sweep_id, lcr_instrument_id, supply_instrument_id, cal_status, "
				"overdue_allowed, fixture, open_comp_id, short_comp_id, fixture_status, fixture_applied, "
				"settings_start, settings_end, settings_changed) "
				"VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13)",
				"recording what the sweep ran with");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, t->sweep_id);
	db_bind_id(st, 2, t->lcr_instrument_id);
	db_bind_id(st, 3, t->supply_instrument_id);
	db_bind_text(st, 4, t->cal_status);
	sqlite3_bind_int(st, 5, t->overdue_allowed ? 1 : 0);
	db_bind_text(st, 6, t->fixture);
	db_bind_id(st, 7, t->open_comp_id);
	db_bind_id(st, 8, t->short_comp_id);
	db_bind_text(st, 9, t->fixture_status);
	sqlite3_bind_int(st, 10, t->fixture_applied ? 1 : 0);
	db_bind_text(st, 11, t->settings_start[0] ? t->settings_start : "{}");
	db_bind_text(st, 12, t->settings_end[0] ? t->settings_end : "{}");
	db_bind_text(st, 13, t->settings_changed);
	int rc = db_write_one(db, st, "recording what the sweep ran with", NULL, NULL);
	sqlite3_finalize(st);
	return rc;
}

static void read_trace(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_sweep_trace *t = row;
	hb_db_sweep_trace_init(t);
	t->sweep_id = sqlite3_column_int64(st, 0);
	t->lcr_instrument_id = sqlite3_column_int64(st, 1);
	t->supply_instrument_id = sqlite3_column_int64(st, 2);
	db_col_text(st, 3, t->cal_status, sizeof t->cal_status);
	t->overdue_allowed = sqlite3_column_int(st, 4) != 0;
	db_col_text(st, 5, t->fixture, sizeof t->fixture);
	t->open_comp_id = sqlite3_column_int64(st, 6);
	t->short_comp_id = sqlite3_column_int64(st, 7);
	db_col_text(st, 8, t->fixture_status, sizeof t->fixture_status);
	t->fixture_applied = sqlite3_column_int(st, 9) != 0;
	db_col_text(st, 10, t->settings_start, sizeof t->settings_start);
	db_col_text(st, 11, t->settings_end, sizeof t->settings_end);
	db_col_text(st, 12, t->settings_changed, sizeof t->settings_changed);
}

int hb_db_sweep_trace_get(hb_db *db, int64_t sweep_id, hb_db_sweep_trace *out)
{
	int mirrored = db_mirror_sweeps(db, &sweep_id, 1);
	if (mirrored < 0)
		return mirrored;
	return read_by_id(db,
			  "SELECT sweep_id, lcr_instrument_id, supply_instrument_id, cal_status, overdue_allowed, fixture, "
			  "open_comp_id, short_comp_id, fixture_status, fixture_applied, settings_start, settings_end, "
			  "settings_changed FROM sweep_trace WHERE sweep_id = ?1",
			  sweep_id, read_trace, out, "instrument record of sweep", "reading what the sweep ran with");
}

/* ---------------- reverse traceability ---------------- */

static void read_affected(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_affected *a = row;
	memset(a, 0, sizeof *a);
	db_col_text(st, 0, a->what, sizeof a->what);
	a->id = sqlite3_column_int64(st, 1);
	a->sweep_id = sqlite3_column_int64(st, 2);
	db_col_text(st, 3, a->at, sizeof a->at);
	db_col_text(st, 4, a->role, sizeof a->role);
	db_col_text(st, 5, a->part_number, sizeof a->part_number);
	db_col_text(st, 6, a->serial, sizeof a->serial);
	db_col_text(st, 7, a->lot_code, sizeof a->lot_code);
	db_col_text(st, 8, a->detail, sizeof a->detail);
}

int hb_db_instrument_affected(hb_db *db, int64_t instrument_id, double since_unix, hb_db_affected **out,
			      size_t *count)
{
	int mirrored = db_mirror_affected(db, instrument_id, since_unix);
	if (mirrored < 0)
		return mirrored;
	/* The sweeps first (with their verdicts right after each), ordered by
	 * the sweep's start; then each lot that sampled one of them. */
	static const char sql[] =
		"WITH used AS ("
		"  SELECT s.id AS sweep_id, s.started_at, s.started_unix, s.status, u.serial, p.part_number, "
		"    COALESCE(l.lot_code, '') AS lot_code, "
		"    CASE WHEN t.lcr_instrument_id = ?1 THEN 'lcr' ELSE 'supply' END AS role "
		"  FROM sweep_trace t JOIN sweeps s ON s.id = t.sweep_id "
		"  LEFT JOIN units u ON u.id = s.unit_id LEFT JOIN parts p ON p.id = u.part_id "
		"  LEFT JOIN lots l ON l.id = u.lot_id "
		"  WHERE (t.lcr_instrument_id = ?1 OR t.supply_instrument_id = ?1) AND s.started_unix >= ?2) "
		"SELECT what, id, sweep_id, at, role, part_number, serial, lot_code, detail FROM ("
		"  SELECT 'sweep' AS what, sweep_id AS id, sweep_id, started_at AS at, role, part_number, serial, lot_code, "
		"    status AS detail, started_unix AS k1, 0 AS k2, 0 AS k3 FROM used "
		"  UNION ALL "
		"  SELECT 'verdict', v.id, v.sweep_id, v.created, used.role, used.part_number, used.serial, used.lot_code, "
		"    v.check_name || ': ' || v.outcome, used.started_unix, 1, v.id FROM verdicts v JOIN used ON used.sweep_id = v.sweep_id "
		"  UNION ALL "
		"  SELECT DISTINCT 'lot', l.id, 0, l.decided_at, used.role, p.part_number, '', l.lot_code, l.decision, "
		"    1e300, 2, l.id FROM inspections i JOIN used ON used.sweep_id = i.sweep_id "
		"    JOIN lots l ON l.id = i.lot_id JOIN parts p ON p.id = l.part_id"
		") ORDER BY k1, sweep_id, k2, k3";
	sqlite3_stmt *st = db_prepare_once(db, sql, "listing what an instrument measured");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, instrument_id);
	sqlite3_bind_double(st, 2, isfinite(since_unix) ? since_unix : -1e300);
	int rc = db_read_all(db, st, read_affected, NULL, sizeof **out, "listing what an instrument measured",
			     (void **)out, count);
	sqlite3_finalize(st);
	return rc;
}
