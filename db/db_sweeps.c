/* db/db_sweeps.c - sweeps and their points, fits with named values, verdicts, the history query */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "db_internal.h"

/* ---------------- sweeps ---------------- */

#define SWEEP_COLUMNS_COUNTED(points)                                                                              \
	"s.id, s.kind, s.unit_id, u.part_id, p.part_number, u.serial, l.lot_code, s.started_unix,"  \
	" s.started_at, s.ended_unix, s.ended_at, s.status, s.status_reason, s.station, s.operator," \
	" s.host, s.pid, s.lcr_idn, s.lcr_profile, s.supply_idn, s.supply_profile, s.test_freq_hz,"  \
	" s.test_level, s.test_level_kind, s.bias_a, s.circuit, s.measured_pair, s.averaging,"       \
	" s.aperture, s.settle_mode, s.settle_delay_s, s.settle_tolerance, s.settle_max_readings,"   \
	" s.settle_max_s, s.plan_from, s.plan_to, s.plan_steps, s.plan_spacing, s.limit_current_a,"  \
	" s.limit_voltage_v, s.ambient_c, s.note,"                                                  \
	" " points ", s.reading_noise_rel, s.dcr_meter_ohm,"        \
	" s.supply_found_a, s.supply_off_a, s.supply_decay_s, s.meter_accuracy_rel, s.meter_accuracy,"            \
	" s.supply_accuracy_rel, s.supply_accuracy_offset_a, s.supply_accuracy, s.station_decision_rule,"       \
	" s.station_guard_r"
#define SWEEP_COLUMNS SWEEP_COLUMNS_COUNTED("(SELECT count(*) FROM points pt WHERE pt.sweep_id = s.id)")
/* A server handle's copy holds the points of one sweep at a time, and each copied sweep's count
 * (db_pg_mirror.c). */
#define SWEEP_COLUMNS_SERVER SWEEP_COLUMNS_COUNTED("(SELECT c.n FROM pg_point_counts c WHERE c.sweep_id = s.id)")
#define SWEEP_COLUMNS_OF(db) ((db)->pg ? SWEEP_COLUMNS_SERVER : SWEEP_COLUMNS)

void hb_db_sweep_init(hb_db_sweep *s)
{
	if (!s)
		return;
	memset(s, 0, sizeof *s);
	s->ended = NAN;
	s->test_freq_hz = s->test_level = s->bias_a = NAN;
	s->settle_delay_s = s->settle_tolerance = s->settle_max_s = NAN;
	s->plan_from = s->plan_to = NAN;
	s->reading_noise_rel = s->dcr_meter_ohm = NAN;
	s->supply_found_a = s->supply_off_a = s->supply_decay_s = NAN;
	s->meter_accuracy_rel = s->supply_accuracy_rel = s->supply_accuracy_offset_a = s->station_guard_r = NAN;
	s->limit_current_a = s->limit_voltage_v = s->ambient_c = NAN;
}

void hb_db_sweep_filter_init(hb_db_sweep_filter *f)
{
	if (!f)
		return;
	memset(f, 0, sizeof *f);
	f->status = -1;
	f->kind = -1;
}

static void read_sweep(sqlite3_stmt *st, void *row, const void *ctx)
{
	hb_db_sweep *s = row;
	hb_db_sweep_init(s);
	s->id = sqlite3_column_int64(st, 0);
	hb_db_sweep_kind_parse((const char *)sqlite3_column_text(st, 1), &s->kind);
	s->unit_id = sqlite3_column_int64(st, 2);
	s->part_id = sqlite3_column_int64(st, 3);
	db_col_text(st, 4, s->part_number, sizeof s->part_number);
	db_col_text(st, 5, s->serial, sizeof s->serial);
	db_col_text(st, 6, s->lot_code, sizeof s->lot_code);
	s->started = sqlite3_column_double(st, 7);
	db_col_text(st, 8, s->started_iso, sizeof s->started_iso);
	s->ended = db_col_real(st, 9);
	db_col_text(st, 10, s->ended_iso, sizeof s->ended_iso);
	hb_db_sweep_status_parse((const char *)sqlite3_column_text(st, 11), &s->status);
	db_col_text(st, 12, s->status_reason, sizeof s->status_reason);
	db_col_text(st, 13, s->station, sizeof s->station);
	db_col_text(st, 14, s->operator_name, sizeof s->operator_name);
	db_col_text(st, 15, s->host, sizeof s->host);
	s->pid = (long)sqlite3_column_int64(st, 16);
	db_col_text(st, 17, s->lcr_idn, sizeof s->lcr_idn);
	db_col_text(st, 18, s->lcr_profile, sizeof s->lcr_profile);
	db_col_text(st, 19, s->supply_idn, sizeof s->supply_idn);
	db_col_text(st, 20, s->supply_profile, sizeof s->supply_profile);
	s->test_freq_hz = db_col_real(st, 21);
	s->test_level = db_col_real(st, 22);
	const unsigned char *k = sqlite3_column_text(st, 23);
	s->test_level_kind = (k && k[0] == 'A') ? HB_DB_LEVEL_CURRENT : HB_DB_LEVEL_VOLTAGE;
	s->bias_a = db_col_real(st, 24);
	db_col_text(st, 25, s->circuit, sizeof s->circuit);
	db_col_text(st, 26, s->measured_pair, sizeof s->measured_pair);
	s->averaging = sqlite3_column_int(st, 27);
	db_col_text(st, 28, s->aperture, sizeof s->aperture);
	db_col_text(st, 29, s->settle_mode, sizeof s->settle_mode);
	s->settle_delay_s = db_col_real(st, 30);
	s->settle_tolerance = db_col_real(st, 31);
	s->settle_max_readings = sqlite3_column_int(st, 32);
	s->settle_max_s = db_col_real(st, 33);
	s->plan_from = db_col_real(st, 34);
	s->plan_to = db_col_real(st, 35);
	s->plan_steps = sqlite3_column_int(st, 36);
	db_col_text(st, 37, s->plan_spacing, sizeof s->plan_spacing);
	s->limit_current_a = db_col_real(st, 38);
	s->limit_voltage_v = db_col_real(st, 39);
	s->ambient_c = db_col_real(st, 40);
	db_col_text(st, 41, s->note, sizeof s->note);
	s->n_points = (long)sqlite3_column_int64(st, 42);
	s->reading_noise_rel = db_col_real(st, 43);
	s->dcr_meter_ohm = db_col_real(st, 44);
	s->supply_found_a = db_col_real(st, 45);
	s->supply_off_a = db_col_real(st, 46);
	s->supply_decay_s = db_col_real(st, 47);
	s->meter_accuracy_rel = db_col_real(st, 48);
	db_col_text(st, 49, s->meter_accuracy, sizeof s->meter_accuracy);
	s->supply_accuracy_rel = db_col_real(st, 50);
	s->supply_accuracy_offset_a = db_col_real(st, 51);
	db_col_text(st, 52, s->supply_accuracy, sizeof s->supply_accuracy);
	db_col_text(st, 53, s->station_decision_rule, sizeof s->station_decision_rule);
	s->station_guard_r = db_col_real(st, 54);
	db_view_sweep(ctx, s);
}

int hb_db_sweep_begin(hb_db *db, hb_db_sweep *s)
{
	if (!db || !s)
		return HB_ERR_ARG;
	if (s->kind != HB_DB_SWEEP_BIAS && s->kind != HB_DB_SWEEP_FREQUENCY)
		return db_error(db, HB_ERR_ARG, "sweep kind %d: must be bias or frequency", (int)s->kind);
	sqlite3_stmt *st = db_stmt(db, ST_SWEEP_INSERT,
		"INSERT INTO sweeps (kind, unit_id, started_at, started_unix, status, station, operator,"
		" host, boot_id, pid, lcr_idn, lcr_profile, supply_idn, supply_profile, test_freq_hz,"
		" test_level, test_level_kind, bias_a, circuit, measured_pair, averaging, aperture,"
		" settle_mode, settle_delay_s, settle_tolerance, settle_max_readings, settle_max_s,"
		" plan_from, plan_to, plan_steps, plan_spacing, limit_current_a, limit_voltage_v,"
		" ambient_c, note)"
		" VALUES (?1, ?2, ?3, ?4, 'running', ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16,"
		" ?17, ?18, ?19, ?20, ?21, ?22, ?23, ?24, ?25, ?26, ?27, ?28, ?29, ?30, ?31, ?32, ?33, ?34)"
		" RETURNING id");
	if (!st)
		return HB_ERR_DB;
	if (s->started <= 0)
		s->started = db_now();
	db_iso_time(s->started, s->started_iso, sizeof s->started_iso);
	snprintf(s->host, sizeof s->host, "%s", db->host);
	s->pid = (long)getpid();
	db_bind_text(st, 1, hb_db_sweep_kind_name(s->kind));
	db_bind_id(st, 2, s->unit_id);
	db_bind_text(st, 3, s->started_iso);
	sqlite3_bind_double(st, 4, s->started);
	db_bind_text(st, 5, s->station);
	db_bind_text(st, 6, s->operator_name);
	db_bind_text(st, 7, db->host);
	db_bind_text(st, 8, db->boot_id);
	sqlite3_bind_int64(st, 9, s->pid);
	db_bind_text(st, 10, s->lcr_idn);
	db_bind_text(st, 11, s->lcr_profile);
	db_bind_text(st, 12, s->supply_idn);
	db_bind_text(st, 13, s->supply_profile);
	db_bind_real(st, 14, s->test_freq_hz);
	db_bind_real(st, 15, s->test_level);
	db_bind_text(st, 16, s->test_level_kind == HB_DB_LEVEL_CURRENT ? "A" : "V");
	db_bind_real(st, 17, s->bias_a);
	db_bind_text(st, 18, s->circuit);
	db_bind_text(st, 19, s->measured_pair);
	if (s->averaging > 0)
		sqlite3_bind_int(st, 20, s->averaging);
	db_bind_text(st, 21, s->aperture);
	db_bind_text(st, 22, s->settle_mode);
	db_bind_real(st, 23, s->settle_delay_s);
	db_bind_real(st, 24, s->settle_tolerance);
	if (s->settle_max_readings > 0)
		sqlite3_bind_int(st, 25, s->settle_max_readings);
	db_bind_real(st, 26, s->settle_max_s);
	db_bind_real(st, 27, s->plan_from);
	db_bind_real(st, 28, s->plan_to);
	if (s->plan_steps > 0)
		sqlite3_bind_int(st, 29, s->plan_steps);
	db_bind_text(st, 30, s->plan_spacing);
	db_bind_real(st, 31, s->limit_current_a);
	db_bind_real(st, 32, s->limit_voltage_v);
	db_bind_real(st, 33, s->ambient_c);
	db_bind_text(st, 34, s->note);
	int status = db_write_one(db, st, "starting a sweep", &s->id, NULL);
	/* A store held at an older schema (only the migration tests do that)
	 * has no step-6 columns; a fresh sweep records them here. */
	if (status == HB_OK && !(db->old_version && db->old_version < 6))
		status = hb_db_sweep_set_accuracy(db, s);
	if (status == HB_OK) {
		s->status = HB_DB_RUNNING;
		s->ended = NAN;
		s->ended_iso[0] = '\0';
		s->n_points = 0;
	}
	return status;
}

/* 1 running, 0 ended, HB_ERR_NOTFOUND, or another error. */
static int sweep_state(hb_db *db, int64_t sweep_id)
{
	sqlite3_stmt *st = db_stmt(db, ST_SWEEP_EXISTS, "SELECT status = 'running' FROM sweeps WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	int rc = sqlite3_step(st);
	int state;
	if (rc == SQLITE_ROW)
		state = sqlite3_column_int(st, 0);
	else if (rc == SQLITE_DONE)
		state = db_error(db, HB_ERR_NOTFOUND, "no sweep %lld in %s", (long long)sweep_id, db->path);
	else
		state = db_fail(db, rc, "reading a sweep");
	db_release(st);
	return state;
}

int hb_db_sweep_end(hb_db *db, int64_t sweep_id, hb_db_sweep_status status, const char *reason)
{
	if (!db)
		return HB_ERR_ARG;
	if (status == HB_DB_RUNNING || (unsigned)status > HB_DB_INTERRUPTED)
		return db_error(db, HB_ERR_ARG, "a sweep must end complete, aborted, failed or interrupted");
	sqlite3_stmt *st = db_stmt(db, ST_SWEEP_END,
		"UPDATE sweeps SET status = ?2, status_reason = ?3, ended_unix = ?4, ended_at = ?5"
		" WHERE id = ?1 AND status = 'running'");
	if (!st)
		return HB_ERR_DB;
	double now = db_now();
	char iso[HB_DB_TIME_LEN];
	db_iso_time(now, iso, sizeof iso);
	sqlite3_bind_int64(st, 1, sweep_id);
	db_bind_text(st, 2, hb_db_sweep_status_name(status));
	db_bind_text(st, 3, reason);
	sqlite3_bind_double(st, 4, now);
	db_bind_text(st, 5, iso);
	int changes = 0;
	int rc = db_write_one(db, st, "ending a sweep", NULL, &changes);
	if (rc < 0 || changes > 0)
		return rc;
	rc = sweep_state(db, sweep_id);
	if (rc < 0)
		return rc;
	return db_error(db, HB_ERR_ARG, "sweep %lld has already ended", (long long)sweep_id);
}

/* One measured number recorded on the sweep after it began, whatever its state. */
static int sweep_set_real(hb_db *db, enum db_stmt_slot slot, const char *sql, int64_t sweep_id, double value,
			  const char *what)
{
	if (!db)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_stmt(db, slot, sql);
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	db_bind_real(st, 2, value);
	int changes = 0;
	int rc = db_write_one(db, st, what, NULL, &changes);
	if (rc < 0)
		return rc;
	return changes > 0 ? HB_OK : db_error(db, HB_ERR_NOTFOUND, "no sweep %lld", (long long)sweep_id);
}

int hb_db_sweep_set_noise(hb_db *db, int64_t sweep_id, double noise_rel)
{
	return sweep_set_real(db, ST_SWEEP_NOISE, "UPDATE sweeps SET reading_noise_rel = ?2 WHERE id = ?1", sweep_id,
			      noise_rel, "recording the reading noise");
}

int hb_db_sweep_set_dcr(hb_db *db, int64_t sweep_id, double ohms)
{
	return sweep_set_real(db, ST_SWEEP_DCR, "UPDATE sweeps SET dcr_meter_ohm = ?2 WHERE id = ?1", sweep_id, ohms,
			      "recording the meter's DC resistance");
}

int hb_db_sweep_set_accuracy(hb_db *db, const hb_db_sweep *s)
{
	if (!db || !s)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_stmt(db, ST_SWEEP_ACCURACY,
		"UPDATE sweeps SET meter_accuracy_rel = ?2, meter_accuracy = ?3, supply_accuracy_rel = ?4,"
		" supply_accuracy_offset_a = ?5, supply_accuracy = ?6, station_decision_rule = ?7, station_guard_r = ?8"
		" WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, s->id);
	db_bind_real(st, 2, s->meter_accuracy_rel);
	db_bind_text(st, 3, s->meter_accuracy);
	db_bind_real(st, 4, s->supply_accuracy_rel);
	db_bind_real(st, 5, s->supply_accuracy_offset_a);
	db_bind_text(st, 6, s->supply_accuracy);
	db_bind_text(st, 7, s->station_decision_rule);
	db_bind_real(st, 8, s->station_guard_r);
	return db_write_one(db, st, "recording the accuracy in force", NULL, NULL);
}

int hb_db_sweep_set_supply_record(hb_db *db, int64_t sweep_id, double found_a, double off_a, double decay_s)
{
	if (!db)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_stmt(db, ST_SWEEP_SUPPLY,
		"UPDATE sweeps SET supply_found_a = ?2, supply_off_a = ?3, supply_decay_s = ?4 WHERE id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	db_bind_real(st, 2, found_a);
	db_bind_real(st, 3, off_a);
	db_bind_real(st, 4, decay_s);
	return db_write_one(db, st, "recording the supply's start and switch-off", NULL, NULL);
}

int hb_db_sweep_get(hb_db *db, int64_t sweep_id, hb_db_sweep *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_sweeps(db, &sweep_id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_SWEEP_GET,
				   db->pg ? "SELECT " SWEEP_COLUMNS_SERVER " FROM sweeps s LEFT JOIN units u ON u.id = s.unit_id"
					    " LEFT JOIN parts p ON p.id = u.part_id LEFT JOIN lots l ON l.id = u.lot_id WHERE s.id = ?1"
					  : "SELECT " SWEEP_COLUMNS " FROM sweeps s LEFT JOIN units u ON u.id = s.unit_id"
					    " LEFT JOIN parts p ON p.id = u.part_id LEFT JOIN lots l ON l.id = u.lot_id WHERE s.id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	char what[32];
	snprintf(what, sizeof what, "%lld", (long long)sweep_id);
	return db_read_one(db, st, read_sweep, out, db, "sweep", what, "reading a sweep");
}

enum { F_PART = 1, F_SERIAL = 2, F_LOT = 4, F_STATUS = 8, F_KIND = 16, F_SINCE = 32 };

/* The statement for one combination of filters, so each keeps plain
 * equality terms the planner can drive from an index. With a part, unit or
 * lot named, the sweep's own terms are written +s.x: that keeps the planner
 * from driving the query by the status or start-time index (every complete
 * sweep of the store walked to find one unit's, 30-46 ms at 40,000 sweeps)
 * and makes it start from the few units named. */
/* SELECT columns ... WHERE <the mask's filters> tail. */
static void sweep_filter_sql(char *sql, size_t cap, unsigned mask, const char *columns, const char *tail)
{
	int by_unit = (mask & (F_PART | F_SERIAL | F_LOT)) != 0;
	snprintf(sql, cap,
		 "SELECT %s FROM sweeps s %s units u ON u.id = s.unit_id"
		 " %s parts p ON p.id = u.part_id %s lots l ON l.id = u.lot_id WHERE 1%s%s%s%s%s%s%s",
		 columns, by_unit ? "JOIN" : "LEFT JOIN", by_unit ? "JOIN" : "LEFT JOIN",
		 (mask & F_LOT) ? "JOIN" : "LEFT JOIN",
		 (mask & F_PART) ? " AND p.part_number = ?1" : "",
		 (mask & F_SERIAL) ? " AND u.serial = ?2" : "",
		 (mask & F_LOT) ? " AND l.lot_code = ?3" : "",
		 (mask & F_STATUS) ? (by_unit ? " AND +s.status = ?4" : " AND s.status = ?4") : "",
		 (mask & F_KIND) ? (by_unit ? " AND +s.kind = ?5" : " AND s.kind = ?5") : "",
		 (mask & F_SINCE) ? (by_unit ? " AND +s.started_unix >= ?6" : " AND s.started_unix >= ?6") : "", tail);
}

static sqlite3_stmt *sweep_list_stmt(hb_db *db, unsigned mask)
{
	if (db->sweep_list[mask])
		return db->sweep_list[mask];
	char sql[2048];
	sweep_filter_sql(sql, sizeof sql, mask, SWEEP_COLUMNS_OF(db), " ORDER BY s.started_unix DESC, s.id DESC LIMIT ?7");
	return db_prepare_cached(db, &db->sweep_list[mask], sql);
}

static sqlite3_stmt *sweep_count_stmt(hb_db *db, unsigned mask)
{
	if (db->sweep_count[mask])
		return db->sweep_count[mask];
	char sql[1024];
	sweep_filter_sql(sql, sizeof sql, mask, "count(*)", "");
	return db_prepare_cached(db, &db->sweep_count[mask], sql);
}

/* The filter's mask; -1 (message set) for an unknown status or kind. */
static int sweep_filter_mask(hb_db *db, const hb_db_sweep_filter *f, unsigned *mask)
{
	*mask = 0;
	if (f->part_number)
		*mask |= F_PART;
	if (f->serial)
		*mask |= F_SERIAL;
	if (f->lot_code)
		*mask |= F_LOT;
	if (f->status >= 0)
		*mask |= F_STATUS;
	if (f->kind >= 0)
		*mask |= F_KIND;
	if (f->since > 0)
		*mask |= F_SINCE;
	if (f->status > HB_DB_INTERRUPTED || f->kind > HB_DB_SWEEP_FREQUENCY)
		return db_error(db, HB_ERR_ARG, "sweep filter: unknown status or kind");
	return HB_OK;
}

static void sweep_filter_bind(sqlite3_stmt *st, unsigned mask, const hb_db_sweep_filter *f)
{
	if (mask & F_PART)
		db_bind_text(st, 1, f->part_number);
	if (mask & F_SERIAL)
		db_bind_text(st, 2, f->serial);
	if (mask & F_LOT)
		db_bind_text(st, 3, f->lot_code);
	if (mask & F_STATUS)
		db_bind_text(st, 4, hb_db_sweep_status_name((hb_db_sweep_status)f->status));
	if (mask & F_KIND)
		db_bind_text(st, 5, hb_db_sweep_kind_name((hb_db_sweep_kind)f->kind));
	if (mask & F_SINCE)
		sqlite3_bind_double(st, 6, f->since);
}

/* A read-only handle shows dead running sweeps as interrupted (db_readonly.c):
 * a filter on running or interrupted then matches what is shown, not what is
 * stored, so those rows are filtered after reading. */
static bool status_shown_differs(const hb_db *db, const hb_db_sweep_filter *f)
{
	return db->readonly && db->n_dead > 0 && (f->status == HB_DB_RUNNING || f->status == HB_DB_INTERRUPTED);
}

static int sweep_list_shown(hb_db *db, const hb_db_sweep_filter *f, hb_db_sweep **out, size_t *count)
{
	hb_db_sweep_filter g = *f;
	g.status = -1;
	g.limit = 0;
	int rc = hb_db_sweep_list(db, &g, out, count);
	if (rc != HB_OK)
		return rc;
	size_t k = 0;
	for (size_t i = 0; i < *count; i++) {
		if ((int)(*out)[i].status != f->status || (f->limit > 0 && k >= (size_t)f->limit))
			continue;
		if (k != i)
			(*out)[k] = (*out)[i];
		k++;
	}
	*count = k;
	return HB_OK;
}

int hb_db_sweep_list(hb_db *db, const hb_db_sweep_filter *f, hb_db_sweep **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	*out = NULL;
	*count = 0;
	hb_db_sweep_filter any;
	if (!f) {
		hb_db_sweep_filter_init(&any);
		f = &any;
	}
	if (status_shown_differs(db, f))
		return sweep_list_shown(db, f, out, count);
	int mirrored = db_mirror_sweep_list(db, f);
	if (mirrored < 0)
		return mirrored;
	unsigned mask;
	if (sweep_filter_mask(db, f, &mask) != HB_OK)
		return HB_ERR_ARG;
	sqlite3_stmt *st = sweep_list_stmt(db, mask);
	if (!st)
		return HB_ERR_DB;
	sweep_filter_bind(st, mask, f);
	sqlite3_bind_int64(st, 7, f->limit > 0 ? f->limit : -1);
	return db_read_all(db, st, read_sweep, db, sizeof **out, "listing sweeps", (void **)out, count);
}

static void read_count(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	*(int64_t *)row = sqlite3_column_int64(st, 0);
}

int hb_db_sweep_count(hb_db *db, const hb_db_sweep_filter *f, int64_t *count)
{
	if (!db || !f || !count)
		return HB_ERR_ARG;
	/* the server counts what it holds; the copy holds only what was listed */
	if (db->pg)
		return db_mirror_sweep_count(db, f, count);
	if (status_shown_differs(db, f)) {
		hb_db_sweep_filter g = *f;
		g.limit = 0;
		hb_db_sweep *rows = NULL;
		size_t n = 0;
		int rc = sweep_list_shown(db, &g, &rows, &n);
		free(rows);
		*count = (int64_t)n;
		return rc;
	}
	unsigned mask;
	if (sweep_filter_mask(db, f, &mask) != HB_OK)
		return HB_ERR_ARG;
	sqlite3_stmt *st = sweep_count_stmt(db, mask);
	if (!st)
		return HB_ERR_DB;
	sweep_filter_bind(st, mask, f);
	return db_read_one(db, st, read_count, count, NULL, "count", "of sweeps", "counting sweeps");
}

void hb_db_sweeps_free(hb_db_sweep *sweeps)
{
	free(sweeps);
}

/* ---------------- points ---------------- */

void hb_db_point_init(hb_db_point *p)
{
	if (!p)
		return;
	memset(p, 0, sizeof *p);
	p->bias_set_a = p->bias_meas_a = p->supply_v = p->freq_hz = NAN;
	p->primary = p->secondary = p->t_s = p->settle_s = NAN;
	p->bias_spread_a = NAN;
	p->settled = true;
}

int hb_db_point_add(hb_db *db, const hb_db_point *p)
{
	if (!db || !p)
		return HB_ERR_ARG;
	if (p->seq < 0)
		return db_error(db, HB_ERR_ARG, "point sequence %d: must be 0 or more", p->seq);
	/* Only a running sweep takes points: an interrupted one stays as found. */
	/* A store held at an older schema (only the migration tests do that)
	 * has no columns for the read-back spread and the settled flag. */
	sqlite3_stmt *st = db->old_version && db->old_version < 5 ?
		db_stmt(db, ST_POINT_ADD_V4,
		"INSERT INTO points (sweep_id, seq, bias_set_a, bias_meas_a, supply_v, freq_hz,"
		" primary_value, secondary_value, reading_status, t_s, settle_readings, settle_s, direction)"
		" SELECT ?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13"
		" WHERE EXISTS (SELECT 1 FROM sweeps WHERE id = ?1 AND status = 'running')") :
		db_stmt(db, ST_POINT_ADD,
		"INSERT INTO points (sweep_id, seq, bias_set_a, bias_meas_a, supply_v, freq_hz,"
		" primary_value, secondary_value, reading_status, t_s, settle_readings, settle_s, direction,"
		" bias_spread_a, settled)"
		" SELECT ?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15"
		" WHERE EXISTS (SELECT 1 FROM sweeps WHERE id = ?1 AND status = 'running')");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, p->sweep_id);
	sqlite3_bind_int(st, 2, p->seq);
	db_bind_real(st, 3, p->bias_set_a);
	db_bind_real(st, 4, p->bias_meas_a);
	db_bind_real(st, 5, p->supply_v);
	db_bind_real(st, 6, p->freq_hz);
	db_bind_real(st, 7, p->primary);
	db_bind_real(st, 8, p->secondary);
	sqlite3_bind_int(st, 9, p->reading_status);
	db_bind_real(st, 10, p->t_s);
	sqlite3_bind_int(st, 11, p->settle_readings);
	db_bind_real(st, 12, p->settle_s);
	db_bind_text(st, 13, p->direction == HB_DB_DIR_DOWN ? "down" : "up");
	if (!(db->old_version && db->old_version < 5)) {
		db_bind_real(st, 14, p->bias_spread_a);
		sqlite3_bind_int(st, 15, p->settled ? 1 : 0);
	}
	int changes = 0;
	int rc = db_write_one(db, st, "storing a point", NULL, &changes);
	if (rc < 0 || changes > 0)
		return rc;
	rc = sweep_state(db, p->sweep_id);
	if (rc < 0)
		return rc;
	return db_error(db, HB_ERR_ARG, "sweep %lld is not running: it takes no more points",
			(long long)p->sweep_id);
}

static void read_point(sqlite3_stmt *st, void *row, const void *ctx)
{
	hb_db_point *p = row;
	p->sweep_id = *(const int64_t *)ctx;
	p->seq = sqlite3_column_int(st, 0);
	p->bias_set_a = db_col_real(st, 1);
	p->bias_meas_a = db_col_real(st, 2);
	p->supply_v = db_col_real(st, 3);
	p->freq_hz = db_col_real(st, 4);
	p->primary = db_col_real(st, 5);
	p->secondary = db_col_real(st, 6);
	p->reading_status = sqlite3_column_int(st, 7);
	p->t_s = db_col_real(st, 8);
	p->settle_readings = sqlite3_column_int(st, 9);
	p->settle_s = db_col_real(st, 10);
	const unsigned char *d = sqlite3_column_text(st, 11);
	p->direction = (d && d[0] == 'd') ? HB_DB_DIR_DOWN : HB_DB_DIR_UP;
	p->bias_spread_a = db_col_real(st, 12);
	p->settled = sqlite3_column_int(st, 13) != 0;
}

int hb_db_points_get(hb_db *db, int64_t sweep_id, hb_db_point **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_points(db, sweep_id);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = db_stmt(db, ST_POINTS_GET,
		"SELECT seq, bias_set_a, bias_meas_a, supply_v, freq_hz, primary_value, secondary_value,"
		" reading_status, t_s, settle_readings, settle_s, direction, bias_spread_a, settled FROM points"
		" WHERE sweep_id = ?1 ORDER BY seq");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	return db_read_all(db, st, read_point, &sweep_id, sizeof **out, "reading points", (void **)out, count);
}

void hb_db_points_free(hb_db_point *points)
{
	free(points);
}

/* ---------------- fits ---------------- */

void hb_db_fit_init(hb_db_fit *f)
{
	if (!f)
		return;
	memset(f, 0, sizeof *f);
	f->rss = f->aic = NAN;
	for (size_t i = 0; i < HB_DB_FIT_MAX_VALUES; i++)
		f->values[i].value = f->values[i].std_error = NAN;
}

int hb_db_fit_put(hb_db *db, hb_db_fit *f)
{
	if (!db || !f)
		return HB_ERR_ARG;
	if (!f->model[0])
		return db_error(db, HB_ERR_ARG, "a fit needs a model name");
	if (f->n_values > HB_DB_FIT_MAX_VALUES)
		return db_error(db, HB_ERR_ARG, "a fit has at most %d values", HB_DB_FIT_MAX_VALUES);
	sqlite3_stmt *st = db_stmt(db, ST_FIT_INSERT,
		"INSERT INTO fits (sweep_id, model, law, code_version, created, rss, dof, aic, covariance, flags)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10) RETURNING id");
	sqlite3_stmt *sv = db_stmt(db, ST_FIT_VALUE_INSERT,
		"INSERT INTO fit_values (fit_id, ord, name, value, std_error, unit) VALUES (?1, ?2, ?3, ?4, ?5, ?6)");
	if (!st || !sv)
		return HB_ERR_DB;
	int status = db_write_begin(db, "storing a fit");
	if (status < 0)
		return status;
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	sqlite3_bind_int64(st, 1, f->sweep_id);
	db_bind_text(st, 2, f->model);
	db_bind_text(st, 3, f->law);
	db_bind_text(st, 4, f->code_version);
	db_bind_text(st, 5, now);
	db_bind_real(st, 6, f->rss);
	sqlite3_bind_int(st, 7, f->dof);
	db_bind_real(st, 8, f->aic);
	db_bind_text(st, 9, f->covariance_json);
	db_bind_text(st, 10, f->flags);
	int64_t id = 0;
	int rc = sqlite3_step(st);
	if (rc == SQLITE_ROW) {
		id = sqlite3_column_int64(st, 0);
		rc = sqlite3_step(st);
	}
	db_release(st);
	if (rc != SQLITE_DONE) {
		status = db_fail(db, rc, "storing a fit");
		goto fail;
	}
	for (size_t i = 0; i < f->n_values; i++) {
		const hb_db_fit_value *v = &f->values[i];
		sqlite3_bind_int64(sv, 1, id);
		sqlite3_bind_int(sv, 2, (int)i);
		db_bind_text(sv, 3, v->name);
		db_bind_real(sv, 4, v->value);
		db_bind_real(sv, 5, v->std_error);
		db_bind_text(sv, 6, v->unit);
		rc = sqlite3_step(sv);
		db_release(sv);
		if (rc != SQLITE_DONE) {
			status = db_fail(db, rc, "storing a fit value");
			goto fail;
		}
	}
	status = db_write_commit(db, "storing a fit");
	if (status == HB_OK) {
		f->id = id;
		snprintf(f->created, sizeof f->created, "%s", now);
	}
	return status;
fail:
	db_write_rollback(db);
	return status;
}

static void read_fit(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_fit *f = row;
	hb_db_fit_init(f);
	f->id = sqlite3_column_int64(st, 0);
	f->sweep_id = sqlite3_column_int64(st, 1);
	db_col_text(st, 2, f->model, sizeof f->model);
	db_col_text(st, 3, f->law, sizeof f->law);
	db_col_text(st, 4, f->code_version, sizeof f->code_version);
	db_col_text(st, 5, f->created, sizeof f->created);
	f->rss = db_col_real(st, 6);
	f->dof = sqlite3_column_int(st, 7);
	f->aic = db_col_real(st, 8);
	db_col_text(st, 9, f->covariance_json, sizeof f->covariance_json);
	db_col_text(st, 10, f->flags, sizeof f->flags);
}

int hb_db_fit_get_latest(hb_db *db, int64_t sweep_id, const char *model, hb_db_fit *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_sweeps(db, &sweep_id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = model
		? db_stmt(db, ST_FIT_LATEST,
			  "SELECT id, sweep_id, model, law, code_version, created, rss, dof, aic, covariance, flags"
			  " FROM fits WHERE sweep_id = ?1 AND model = ?2 ORDER BY id DESC LIMIT 1")
		: db_stmt(db, ST_FIT_LATEST_ANY,
			  "SELECT id, sweep_id, model, law, code_version, created, rss, dof, aic, covariance, flags"
			  " FROM fits WHERE sweep_id = ?1 ORDER BY id DESC LIMIT 1");
	sqlite3_stmt *sv = db_stmt(db, ST_FIT_VALUES,
		"SELECT name, value, std_error, unit FROM fit_values WHERE fit_id = ?1 ORDER BY ord");
	if (!st || !sv)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	if (model)
		db_bind_text(st, 2, model);
	/* Reads "no <model> fit of sweep N" or "no fit of sweep N" when missing. */
	char what[64];
	snprintf(what, sizeof what, "%sof sweep %lld", model ? "fit " : "", (long long)sweep_id);
	int status = db_read_one(db, st, read_fit, out, NULL, model ? model : "fit", what, "reading a fit");
	if (status < 0)
		return status;

	sqlite3_bind_int64(sv, 1, out->id);
	int rc;
	while ((rc = sqlite3_step(sv)) == SQLITE_ROW && out->n_values < HB_DB_FIT_MAX_VALUES) {
		hb_db_fit_value *v = &out->values[out->n_values++];
		db_col_text(sv, 0, v->name, sizeof v->name);
		v->value = db_col_real(sv, 1);
		v->std_error = db_col_real(sv, 2);
		db_col_text(sv, 3, v->unit, sizeof v->unit);
	}
	if (rc != SQLITE_DONE && rc != SQLITE_ROW)
		status = db_fail(db, rc, "reading fit values");
	db_release(sv);
	return status;
}

/* ---------------- fit uncertainty ---------------- */

void hb_db_fit_unc_init(hb_db_fit_unc *u)
{
	if (!u)
		return;
	memset(u, 0, sizeof *u);
	u->value = u->u_c = u->dof = u->k = u->U = NAN;
	snprintf(u->budget, sizeof u->budget, "[]");
}

int hb_db_fit_unc_put(hb_db *db, const hb_db_fit_unc *u)
{
	if (!db || !u || !u->name[0] || u->fit_id <= 0)
		return HB_ERR_ARG;
	sqlite3_stmt *st = db_stmt(db, ST_FIT_UNC_PUT,
		"INSERT OR REPLACE INTO fit_uncertainty (fit_id, name, value, u_c, dof, k, U, budget, note)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, u->fit_id);
	db_bind_text(st, 2, u->name);
	db_bind_real(st, 3, u->value);
	db_bind_real(st, 4, u->u_c);
	db_bind_real(st, 5, u->dof); /* SQLite keeps an IEEE infinity: every input exactly known */
	db_bind_real(st, 6, u->k);
	db_bind_real(st, 7, u->U);
	db_bind_text(st, 8, u->budget[0] ? u->budget : "[]");
	db_bind_text(st, 9, u->note);
	return db_write_one(db, st, "storing a fit uncertainty", NULL, NULL);
}

static void read_fit_unc(sqlite3_stmt *st, void *row, const void *ctx)
{
	hb_db_fit_unc *u = row;
	hb_db_fit_unc_init(u);
	u->fit_id = *(const int64_t *)ctx;
	db_col_text(st, 0, u->name, sizeof u->name);
	u->value = db_col_real(st, 1);
	u->u_c = db_col_real(st, 2);
	u->dof = db_col_real(st, 3);
	u->k = db_col_real(st, 4);
	u->U = db_col_real(st, 5);
	db_col_text(st, 6, u->budget, sizeof u->budget);
	db_col_text(st, 7, u->note, sizeof u->note);
}

int hb_db_fit_unc_list(hb_db *db, int64_t fit_id, hb_db_fit_unc **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_record(db, HB_DB_REC_FIT, fit_id);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = db_stmt(db, ST_FIT_UNC_LIST,
		"SELECT name, value, u_c, dof, k, U, budget, note FROM fit_uncertainty WHERE fit_id = ?1 ORDER BY name");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, fit_id);
	return db_read_all(db, st, read_fit_unc, &fit_id, sizeof **out, "listing fit uncertainties", (void **)out,
			   count);
}

void hb_db_fit_uncs_free(hb_db_fit_unc *list)
{
	free(list);
}

/* ---------------- verdicts ---------------- */

void hb_db_verdict_init(hb_db_verdict *v)
{
	if (!v)
		return;
	memset(v, 0, sizeof *v);
	v->measured = v->limit_low = v->limit_high = v->margin = NAN;
	snprintf(v->decision_rule, sizeof v->decision_rule, "simple");
	v->guard_r = v->expanded_u = v->coverage_k = v->accept_low = v->accept_high = v->p_false_accept = NAN;
}

int hb_db_verdict_put(hb_db *db, hb_db_verdict *v)
{
	if (!db || !v)
		return HB_ERR_ARG;
	if (!v->check_name[0])
		return db_error(db, HB_ERR_ARG, "a verdict needs a check name");
	if (v->outcome == HB_DB_SKIPPED || (unsigned)v->outcome > HB_DB_CONDITIONAL_FAIL)
		return db_error(db, HB_ERR_ARG,
				"verdict %s: outcome must be pass, conditional-pass, conditional-fail, fail or not-tested",
				v->check_name);
	if (!db->old_version || db->old_version >= DB_STEP_TRACE)
		return db_verdict_append(db, v);
	/* an older store (the migration tests) takes the columns it has; the
	 * rule's columns then keep their defaults */
	bool old = db->old_version && db->old_version < 6;
	sqlite3_stmt *st = old ? db_stmt(db, ST_VERDICT_UPSERT_V5,
		"INSERT INTO verdicts (sweep_id, check_name, measured, limit_low, limit_high, margin, outcome,"
		" note, created) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9)"
		" ON CONFLICT (sweep_id, check_name) DO UPDATE SET measured = excluded.measured,"
		" limit_low = excluded.limit_low, limit_high = excluded.limit_high, margin = excluded.margin,"
		" outcome = excluded.outcome, note = excluded.note, created = excluded.created RETURNING id") :
		db_stmt(db, ST_VERDICT_UPSERT,
		"INSERT INTO verdicts (sweep_id, check_name, measured, limit_low, limit_high, margin, outcome,"
		" note, created, decision_rule, guard_r, expanded_u, coverage_k, accept_low, accept_high, p_false_accept)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16)"
		" ON CONFLICT (sweep_id, check_name) DO UPDATE SET measured = excluded.measured,"
		" limit_low = excluded.limit_low, limit_high = excluded.limit_high, margin = excluded.margin,"
		" outcome = excluded.outcome, note = excluded.note, created = excluded.created,"
		" decision_rule = excluded.decision_rule, guard_r = excluded.guard_r, expanded_u = excluded.expanded_u,"
		" coverage_k = excluded.coverage_k, accept_low = excluded.accept_low, accept_high = excluded.accept_high,"
		" p_false_accept = excluded.p_false_accept RETURNING id");
	if (!st)
		return HB_ERR_DB;
	char now[HB_DB_TIME_LEN];
	db_iso_time(db_now(), now, sizeof now);
	sqlite3_bind_int64(st, 1, v->sweep_id);
	db_bind_text(st, 2, v->check_name);
	db_bind_real(st, 3, v->measured);
	db_bind_real(st, 4, v->limit_low);
	db_bind_real(st, 5, v->limit_high);
	db_bind_real(st, 6, v->margin);
	db_bind_text(st, 7, hb_db_outcome_name(v->outcome));
	db_bind_text(st, 8, v->note);
	db_bind_text(st, 9, now);
	if (old)
		return db_write_one(db, st, "storing a verdict", &v->id, NULL);
	db_bind_text(st, 10, v->decision_rule[0] ? v->decision_rule : "simple");
	db_bind_real(st, 11, v->guard_r);
	db_bind_real(st, 12, v->expanded_u);
	db_bind_real(st, 13, v->coverage_k);
	db_bind_real(st, 14, v->accept_low);
	db_bind_real(st, 15, v->accept_high);
	db_bind_real(st, 16, v->p_false_accept);
	return db_write_one(db, st, "storing a verdict", &v->id, NULL);
}

static hb_db_outcome outcome_of(const unsigned char *text)
{
	if (!text)
		return HB_DB_NOT_TESTED;
	if (strcmp((const char *)text, "pass") == 0)
		return HB_DB_PASS;
	if (strcmp((const char *)text, "fail") == 0)
		return HB_DB_FAIL;
	if (strcmp((const char *)text, "conditional-pass") == 0)
		return HB_DB_CONDITIONAL_PASS;
	if (strcmp((const char *)text, "conditional-fail") == 0)
		return HB_DB_CONDITIONAL_FAIL;
	return HB_DB_NOT_TESTED;
}

void db_verdict_columns(sqlite3_stmt *st, hb_db_verdict *v, int64_t sweep_id)
{
	hb_db_verdict_init(v);
	v->id = sqlite3_column_int64(st, 0);
	v->sweep_id = sweep_id;
	db_col_text(st, 1, v->check_name, sizeof v->check_name);
	v->measured = db_col_real(st, 2);
	v->limit_low = db_col_real(st, 3);
	v->limit_high = db_col_real(st, 4);
	v->margin = db_col_real(st, 5);
	v->outcome = outcome_of(sqlite3_column_text(st, 6));
	db_col_text(st, 7, v->note, sizeof v->note);
	db_col_text(st, 8, v->decision_rule, sizeof v->decision_rule);
	v->guard_r = db_col_real(st, 9);
	v->expanded_u = db_col_real(st, 10);
	v->coverage_k = db_col_real(st, 11);
	v->accept_low = db_col_real(st, 12);
	v->accept_high = db_col_real(st, 13);
	v->p_false_accept = db_col_real(st, 14);
}

static void read_verdict(sqlite3_stmt *st, void *row, const void *ctx)
{
	db_verdict_columns(st, row, *(const int64_t *)ctx);
}

int hb_db_verdict_list(hb_db *db, int64_t sweep_id, hb_db_verdict **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_sweeps(db, &sweep_id, 1);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	if (!db->old_version || db->old_version >= DB_STEP_TRACE)
		return db_verdict_list_v7(db, sweep_id, false, out, count);
	sqlite3_stmt *st = db_stmt(db, ST_VERDICT_LIST,
		"SELECT id, check_name, measured, limit_low, limit_high, margin, outcome, note, decision_rule, guard_r,"
		" expanded_u, coverage_k, accept_low, accept_high, p_false_accept FROM verdicts"
		" WHERE sweep_id = ?1 ORDER BY check_name");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	return db_read_all(db, st, read_verdict, &sweep_id, sizeof **out, "listing verdicts", (void **)out, count);
}

void hb_db_verdicts_free(hb_db_verdict *verdicts)
{
	free(verdicts);
}

/* ---------------- history ---------------- */

void hb_db_history_filter_init(hb_db_history_filter *f)
{
	if (!f)
		return;
	memset(f, 0, sizeof *f);
	f->drop_percent[0] = 10;
	f->drop_percent[1] = 20;
	f->drop_percent[2] = 30;
}

/* Value `name` of the newest fit of the sweep that has one. */
#define FIT_VALUE(param)                                                                     \
	" (SELECT v.value FROM fits f JOIN fit_values v ON v.fit_id = f.id WHERE f.sweep_id = s.id" \
	" AND v.name = " param " ORDER BY f.id DESC LIMIT 1)"

static void read_history_row(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_history_row *r = row;
	memset(r, 0, sizeof *r);
	r->sweep_id = sqlite3_column_int64(st, 0);
	r->unit_id = sqlite3_column_int64(st, 1);
	r->started = sqlite3_column_double(st, 2);
	db_col_text(st, 3, r->started_iso, sizeof r->started_iso);
	db_col_text(st, 4, r->station, sizeof r->station);
	db_col_text(st, 5, r->lot_code, sizeof r->lot_code);
	db_col_text(st, 6, r->serial, sizeof r->serial);
	r->l0_h = db_col_real(st, 7);
	for (int i = 0; i < HB_DB_HISTORY_DROPS; i++)
		r->i_drop_a[i] = db_col_real(st, 8 + i);
	r->mu_e = db_col_real(st, 11);
	r->gap_m = db_col_real(st, 12);
	r->verdict = (hb_db_outcome)sqlite3_column_int(st, 13);
	db_col_text(st, 14, r->sweep_uid, sizeof r->sweep_uid);
	db_col_text(st, 15, r->unit_uid, sizeof r->unit_uid);
}

int hb_db_history(hb_db *db, const hb_db_history_filter *f, hb_db_history_row **out, size_t *count)
{
	if (!db || !f || !out || !count)
		return HB_ERR_ARG;
	*out = NULL;
	*count = 0;
	if (db->pg)
		return db_pg_history(db, f, out, count);
	if (!f->part_number)
		return db_error(db, HB_ERR_ARG, "history needs a part number");
	hb_db_part part;
	int status = hb_db_part_get(db, f->part_number, &part);
	if (status < 0)
		return status;
	/* The verdict column yields hb_db_outcome values: 2 fail, 1 pass (every check
	 * passed), 0 not tested (an untested check is never a pass). A conditional
	 * outcome counts on its own side of the limit here; lot inspection applies
	 * its stated policy to them separately. */
	sqlite3_stmt *st = db_stmt(db, ST_HISTORY,
		"SELECT s.id, u.id, s.started_unix, s.started_at, s.station, coalesce(l.lot_code, ''), u.serial,"
		FIT_VALUE("?5") "," FIT_VALUE("?6") "," FIT_VALUE("?7") "," FIT_VALUE("?8") ","
		FIT_VALUE("?9") "," FIT_VALUE("?10") ","
		" (SELECT CASE WHEN sum(outcome IN ('fail', 'conditional-fail')) > 0 THEN 2"
		"  WHEN count(*) > 0 AND sum(outcome IN ('pass', 'conditional-pass')) = count(*) THEN 1"
		"  ELSE 0 END FROM verdicts WHERE verdicts.sweep_id = s.id AND verdicts.superseded_by IS NULL),"
		" s.uid, u.uid"
		" FROM units u LEFT JOIN lots l ON l.id = u.lot_id"
		" JOIN sweeps s ON s.id = (SELECT s2.id FROM sweeps s2 WHERE s2.unit_id = u.id"
		"  AND s2.kind = 'bias' AND s2.status = 'complete'"
		"  ORDER BY s2.started_unix DESC, s2.id DESC LIMIT 1)"
		" WHERE u.part_id = ?1 AND (?2 IS NULL OR l.lot_code = ?2) AND (?3 IS NULL OR u.serial = ?3)"
		" AND (?4 IS NULL OR s.started_unix >= ?4)"
		" ORDER BY s.started_unix, s.id");
	if (!st)
		return HB_ERR_DB;
	char drop_names[HB_DB_HISTORY_DROPS][32];
	sqlite3_bind_int64(st, 1, part.id);
	if (f->lot_code)
		db_bind_text(st, 2, f->lot_code);
	if (f->serial)
		db_bind_text(st, 3, f->serial);
	if (f->since > 0)
		sqlite3_bind_double(st, 4, f->since);
	db_bind_text(st, 5, HB_DB_FV_L0);
	for (int i = 0; i < HB_DB_HISTORY_DROPS; i++) {
		snprintf(drop_names[i], sizeof drop_names[i], HB_DB_FV_DROP_FMT, f->drop_percent[i]);
		db_bind_text(st, 6 + i, drop_names[i]);
	}
	db_bind_text(st, 9, HB_DB_FV_MU_E);
	db_bind_text(st, 10, HB_DB_FV_GAP);
	return db_read_all(db, st, read_history_row, NULL, sizeof **out, "reading history", (void **)out, count);
}

void hb_db_history_free(hb_db_history_row *rows)
{
	free(rows);
}
