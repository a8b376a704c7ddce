/* db/db_pg_mirror.c - reads against a server: the records a read needs are copied by identity into the handle's in-memory store of a station's shape, where the station's own queries answer */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_pg_internal.h"

/*
 * Why a copy and not a second set of queries: every read command then prints through the very
 * statements and row readers it uses on a station's store, so the output against a server cannot
 * drift from a station's (tests/test_pg_sync.c compares them byte for byte). The copy holds only
 * what the command touched: a sweep with its unit, part, lot, fits, verdicts and trace, and the
 * points of one sweep at a time (export stays at constant memory).
 *
 * On the server records refer to each other by global identity; in the copy they carry the server's
 * own ids, so an id printed by a read against a server is the server's. A part number registered
 * at several stations is one part here, as in the server's history: the first registration (lowest
 * server id) stands for it, and units and lots of the others are filed under it.
 */

/* The server id of the first registration of the part number of the part with identity `uid_expr`. */
#define CANON_PART(uid_expr)                                                                        \
	"(SELECT min(c.id) FROM parts c WHERE c.part_number = (SELECT q.part_number FROM parts q WHERE q.uid = " \
	uid_expr "))"

#define PART_COLS                                                                                              \
	"id, part_number, description, maker, nominal_h, tolerance, test_freq_hz, test_level, test_level_kind,"   \
	" sat_current_a, sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m, window_m, toroid_od_m,"      \
	" toroid_id_m, toroid_h_m, mu_i, bsat_t, created, updated, decision_rule, guard_r, core_shape, core_dims," \
	" gap_at, uid"
#define SPEC_COLS                                                                                            \
	"description, maker, nominal_h, tolerance, test_freq_hz, test_level, test_level_kind, sat_current_a,"   \
	" sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m, window_m, toroid_od_m, toroid_id_m,"      \
	" toroid_h_m, mu_i, bsat_t, decision_rule, guard_r"
#define LOT_COLS                                                                                               \
	"lot_code, lot_size, aql, inspection_level, severity, decision, created, code_letter, sample_size,"      \
	" accept_number, reject_number, decided_at, uid, supplier, production_irregular, decided_unix"
#define SWEEP_COLS                                                                                             \
	"uid, points_uid, kind, started_at, started_unix, ended_at, ended_unix, status, status_reason, station,"  \
	" operator, host, boot_id, pid, lcr_idn, lcr_profile, supply_idn, supply_profile, test_freq_hz,"          \
	" test_level, test_level_kind, bias_a, circuit, measured_pair, averaging, aperture, settle_mode,"          \
	" settle_delay_s, settle_tolerance, settle_max_readings, settle_max_s, plan_from, plan_to, plan_steps,"    \
	" plan_spacing, limit_current_a, limit_voltage_v, ambient_c, note, reading_noise_rel, dcr_meter_ohm,"     \
	" supply_found_a, supply_off_a, supply_decay_s, meter_accuracy_rel, meter_accuracy, supply_accuracy_rel," \
	" supply_accuracy_offset_a, supply_accuracy, station_decision_rule, station_guard_r"
#define POINT_COLS                                                                                          \
	"sweep_id, seq, bias_set_a, bias_meas_a, supply_v, freq_hz, primary_value, secondary_value,"            \
	" reading_status, t_s, settle_readings, settle_s, direction, bias_spread_a, settled"
#define VERDICT_COLS                                                                                          \
	"check_name, measured, limit_low, limit_high, margin, outcome, note, created, decision_rule, guard_r,"   \
	" expanded_u, coverage_k, accept_low, accept_high, p_false_accept, operator"
#define INSTRUMENT_COLS                                                                                      \
	"id, kind, maker, model, serial, firmware, first_seen, last_seen, accuracy, accuracy_freq_above,"       \
	" cal_date, due_date, certificate"
#define COMP_COLS "id, fixture, kind, method, instrument_id, at, at_unix, residuals, operator, note"
#define TRACE_COLS                                                                                              \
	"lcr_instrument_id, supply_instrument_id, cal_status, overdue_allowed, fixture, open_comp_id,"             \
	" short_comp_id, fixture_status, fixture_applied, settings_start, settings_end, settings_changed"
#define REPORT_COLS "id, uid, kind, subject, path, file_sha256, data_sha256, software_version, created"

/* One copy: a server query with one parameter (a bigint array or a text) whose columns are, in order, the
 * columns of `table` named in `cols`. */
typedef struct mirror_copy {
	const char *pg;
	const char *table;
	const char *cols;
} mirror_copy;

enum mirror_copy_id {
	C_PARTS, C_ALL_PARTS, C_SPEC_REVS, C_LOTS, C_LOT_DECISIONS, C_UNITS, C_SWEEPS, C_POINT_COUNTS, C_POINTS,
	C_FITS, C_FIT_VALUES, C_FIT_UNC, C_VERDICTS, C_TRACE, C_INSTRUMENTS, C_COMPS, C_LOT_SAMPLES,
	C_SWEEP_SAMPLES, C_REPORT, C_REPORT_SWEEPS, C_DRAWINGS, C_CURVE_MASKS,
	C_COUNT
};

static const mirror_copy copies[C_COUNT] = {
	[C_PARTS] = { "SELECT " PART_COLS " FROM parts WHERE id = ANY($1::bigint[])", "parts", PART_COLS },
	/* every part number once, as its first registration */
	[C_ALL_PARTS] = { "SELECT DISTINCT ON (part_number) " PART_COLS " FROM parts WHERE $1::text IS NOT NULL"
			  " ORDER BY part_number, id", "parts",
			  PART_COLS },
	[C_SPEC_REVS] = { "SELECT r.id, r.uid, p.id, r.revision, r.created, r.description, r.maker, r.nominal_h, r.tolerance, r.test_freq_hz, r.test_level, r.test_level_kind, r.sat_current_a, r.sat_drop, r.rated_current_a, r.dcr_max_ohm, r.turns, r.ae_m2, r.le_m, r.window_m, r.toroid_od_m, r.toroid_id_m, r.toroid_h_m, r.mu_i, r.bsat_t, r.decision_rule, r.guard_r"
			  " FROM spec_revisions r JOIN parts p ON p.uid = r.part_uid WHERE p.id = ANY($1::bigint[])"
			  " ORDER BY r.revision, r.id",
			  "spec_revisions", "id, uid, part_id, revision, created, " SPEC_COLS },
	[C_LOTS] = { "SELECT l.id, " CANON_PART("l.part_uid") ", " LOT_COLS " FROM lots l WHERE l.id = ANY($1::bigint[])",
		     "lots", "id, part_id, " LOT_COLS },
	[C_LOT_DECISIONS] = { "SELECT d.id, d.uid, l.id, d.decision, d.decided_at, d.code_letter, d.sample_size,"
			      " d.accept_number, d.reject_number, d.aql, d.severity FROM lot_decisions d"
			      " JOIN lots l ON l.uid = d.lot_uid WHERE l.id = ANY($1::bigint[]) ORDER BY d.id",
			      "lot_decisions",
			      "id, uid, lot_id, decision, decided_at, code_letter, sample_size, accept_number,"
			      " reject_number, aql, severity" },
	[C_UNITS] = { "SELECT u.id, " CANON_PART("u.part_uid") ", u.serial, (SELECT l.id FROM lots l WHERE l.uid = u.lot_uid),"
		      " u.created, u.uid FROM units u WHERE u.id = ANY($1::bigint[])",
		      "units", "id, part_id, serial, lot_id, created, uid" },
	[C_SWEEPS] = { "SELECT s.id, (SELECT u.id FROM units u WHERE u.uid = s.unit_uid), " SWEEP_COLS
		       " FROM sweeps s WHERE s.id = ANY($1::bigint[])",
		       "sweeps", "id, unit_id, " SWEEP_COLS },
	/* a listed sweep's number of points, without its points */
	[C_POINT_COUNTS] = { "SELECT s.id, (SELECT count(*) FROM points p WHERE p.sweep_id = s.id) FROM sweeps s"
			     " WHERE s.id = ANY($1::bigint[])",
			     "temp.pg_point_counts", "sweep_id, n" },
	[C_POINTS] = { "SELECT " POINT_COLS " FROM points WHERE sweep_id = ANY($1::bigint[]) ORDER BY sweep_id, seq",
		       "points", POINT_COLS },
	[C_FITS] = { "SELECT f.id, f.uid, s.id, f.model, f.law, f.code_version, f.created, f.rss, f.dof, f.aic,"
		     " f.covariance, f.flags FROM fits f JOIN sweeps s ON s.uid = f.sweep_uid"
		     " WHERE s.id = ANY($1::bigint[]) ORDER BY f.id",
		     "fits", "id, uid, sweep_id, model, law, code_version, created, rss, dof, aic, covariance, flags" },
	[C_FIT_VALUES] = { "SELECT f.id, v.ord, v.name, v.value, v.std_error, v.unit FROM fits f"
			   " JOIN sweeps s ON s.uid = f.sweep_uid JOIN fit_values v ON v.fit_uid = f.uid"
			   " WHERE s.id = ANY($1::bigint[])",
			   "fit_values", "fit_id, ord, name, value, std_error, unit" },
	[C_FIT_UNC] = { "SELECT f.id, v.name, v.value, v.u_c, v.dof, v.k, v.\"U\", v.budget, v.note FROM fits f"
			" JOIN sweeps s ON s.uid = f.sweep_uid JOIN fit_uncertainty v ON v.fit_uid = f.uid"
			" WHERE s.id = ANY($1::bigint[])",
			"fit_uncertainty", "fit_id, name, value, u_c, dof, k, U, budget, note" },
	/* superseded_by as a station's trigger would have set it: the next judgement of the same check */
	[C_VERDICTS] = { "SELECT v.id, v.uid, s.id, v.check_name, v.measured, v.limit_low, v.limit_high, v.margin, v.outcome, v.note, v.created, v.decision_rule, v.guard_r, v.expanded_u, v.coverage_k, v.accept_low, v.accept_high, v.p_false_accept, v.operator, (SELECT r.id FROM spec_revisions r"
			 " WHERE r.uid = v.spec_rev_uid), (SELECT min(w.id) FROM verdicts w WHERE w.sweep_uid = v.sweep_uid"
			 " AND w.check_name = v.check_name AND w.id > v.id) FROM verdicts v"
			 " JOIN sweeps s ON s.uid = v.sweep_uid WHERE s.id = ANY($1::bigint[]) ORDER BY v.id",
			 "verdicts", "id, uid, sweep_id, " VERDICT_COLS ", spec_rev_id, superseded_by" },
	[C_TRACE] = { "SELECT s.id, t.lcr_instrument_id, t.supply_instrument_id, t.cal_status, t.overdue_allowed, t.fixture, t.open_comp_id, t.short_comp_id, t.fixture_status, t.fixture_applied, t.settings_start, t.settings_end, t.settings_changed FROM sweep_trace t JOIN sweeps s ON s.uid = t.sweep_uid"
		      " WHERE s.id = ANY($1::bigint[])",
		      "sweep_trace", "sweep_id, " TRACE_COLS },
	[C_INSTRUMENTS] = { "SELECT " INSTRUMENT_COLS " FROM instruments WHERE $1::text IS NOT NULL ORDER BY id",
			    "instruments", INSTRUMENT_COLS },
	[C_COMPS] = { "SELECT " COMP_COLS " FROM fixture_compensations WHERE $1::text IS NOT NULL ORDER BY id",
		      "fixture_compensations", COMP_COLS },
	/* a lot's sample records; the record in force at a position is the newest (as db_pg_read.c counts) */
#define SAMPLE_SELECT                                                                                            \
	"SELECT i.id, i.uid, l.id, i.sequence, (SELECT u.id FROM units u WHERE u.uid = i.unit_uid),"            \
	" (SELECT s.id FROM sweeps s WHERE s.uid = i.sweep_uid), i.outcome, i.note, i.at, i.at_unix, i.conditional," \
	" (SELECT j.id FROM inspections j WHERE j.lot_uid = i.lot_uid AND j.sequence = i.sequence"             \
	"  AND (j.at_unix, j.uid) > (i.at_unix, i.uid) ORDER BY j.at_unix, j.uid LIMIT 1)"                      \
	" FROM inspections i JOIN lots l ON l.uid = i.lot_uid"
#define SAMPLE_COLS "id, uid, lot_id, sequence, unit_id, sweep_id, outcome, note, at, at_unix, conditional, superseded_by"
	[C_LOT_SAMPLES] = { SAMPLE_SELECT " WHERE l.id = ANY($1::bigint[])", "inspections", SAMPLE_COLS },
	[C_SWEEP_SAMPLES] = { SAMPLE_SELECT " JOIN sweeps s ON s.uid = i.sweep_uid WHERE s.id = ANY($1::bigint[])",
			      "inspections", SAMPLE_COLS },
	[C_REPORT] = { "SELECT " REPORT_COLS " FROM reports WHERE uid = lower($1::text)", "reports", REPORT_COLS },
	[C_REPORT_SWEEPS] = { "SELECT r.id, s.id FROM report_sweeps x JOIN reports r ON r.uid = x.report_uid"
			      " JOIN sweeps s ON s.uid = x.sweep_uid WHERE r.uid = lower($1::text)",
			      "report_sweeps", "report_id, sweep_id" },
	/* a part's drawing and data-sheet curve mask (server step 2), with the part */
	[C_DRAWINGS] = { "SELECT p.id, d.gap_m, d.gap_tol_m, d.curve_tol, d.curve_source, d.updated FROM part_drawing d"
			 " JOIN parts p ON p.uid = d.part_uid WHERE p.id = ANY($1::bigint[])",
			 "part_drawing", "part_id, gap_m, gap_tol_m, curve_tol, curve_source, updated" },
	[C_CURVE_MASKS] = { "SELECT p.id, c.ord, c.current_a, c.inductance_h, c.tol FROM part_curve_mask c"
			    " JOIN parts p ON p.uid = c.part_uid WHERE p.id = ANY($1::bigint[]) ORDER BY p.id, c.ord",
			    "part_curve_mask", "part_id, ord, current_a, inductance_h, tol" },
};

/* What has been copied, by kind and server id (a temp table of the copy). */
enum mirror_kind { K_PART = 1, K_LOT, K_UNIT, K_SWEEP, K_LOT_SAMPLES, K_SWEEP_SAMPLES, K_REGISTER, K_ALL_PARTS };

/* A growing list of ids, also spelt as a PostgreSQL array literal for the queries above. */
typedef struct id_list {
	int64_t *ids;
	size_t n, cap;
} id_list;

typedef struct db_mirror {
	sqlite3_stmt *insert[C_COUNT];
	sqlite3_stmt *mark;
	sqlite3_stmt *evict;
	sqlite3_stmt *count_of;
	sqlite3_stmt *is_copied;
	/* The sweeps of the last listing, in order (a history, a sweep list): a command that lists and then
	 * reads each listed sweep gets them copied in chunks, not one round trip after another. */
	id_list ahead;
	id_list points; /* the sweeps whose points are in the copy */
	char **named;      /* the server statements prepared on this connection */
	size_t n_named, cap_named;
} db_mirror;


static int ids_add(hb_db *db, id_list *l, int64_t id)
{
	if (id <= 0)
		return HB_OK;
	for (size_t i = 0; i < l->n; i++)
		if (l->ids[i] == id)
			return HB_OK;
	int status = db_grow(db, (void **)&l->ids, &l->cap, l->n, sizeof *l->ids);
	if (status < 0)
		return status;
	l->ids[l->n++] = id;
	return HB_OK;
}

static char *ids_literal(hb_db *db, const int64_t *ids, size_t n)
{
	char *s = malloc(n * 21 + 3);
	if (!s) {
		db_error(db, HB_ERR_NOMEM, "out of memory reading from the server");
		return NULL;
	}
	size_t k = 0;
	s[k++] = '{';
	for (size_t i = 0; i < n; i++)
		k += (size_t)sprintf(s + k, "%s%lld", i ? "," : "", (long long)ids[i]);
	s[k++] = '}';
	s[k] = '\0';
	return s;
}

/* The SQLite side may write only while a copy is being made: a writing command on a server handle is
 * refused where its statement is prepared, with the message db_fail gives for SQLITE_AUTH. */
static int mirror_authorizer(void *ctx, int action, const char *a, const char *b, const char *c, const char *d)
{
	hb_db *db = ctx;
	(void)a, (void)b, (void)c, (void)d;
	switch (action) {
	case SQLITE_INSERT:
	case SQLITE_UPDATE:
	case SQLITE_DELETE:
		return db->pg_filling ? SQLITE_OK : SQLITE_DENY;
	default:
		return SQLITE_OK;
	}
}

int db_mirror_attach(hb_db *db)
{
	db_mirror *m = calloc(1, sizeof *m);
	if (!m)
		return db_error(db, HB_ERR_NOMEM, "out of memory opening the server");
	/* The copy holds the server's records as they are: the triggers that make a station's records (a
	 * part's first revision, a lot's decision record, supersession) would make them a second time,
	 * and references may point at records not copied. */
	static const char setup[] =
		"PRAGMA foreign_keys = OFF;"
		"DROP TRIGGER parts_first_revision; DROP TRIGGER parts_next_revision; DROP TRIGGER lots_decided;"
		"DROP TRIGGER verdicts_append; DROP TRIGGER inspections_append;"
		"CREATE TEMP TABLE mirror_copied (kind INTEGER NOT NULL, id INTEGER NOT NULL, PRIMARY KEY (kind, id))"
		" WITHOUT ROWID;"
		"CREATE TEMP TABLE pg_point_counts (sweep_id INTEGER PRIMARY KEY, n INTEGER NOT NULL);";
	char *msg = NULL;
	int rc = sqlite3_exec(db->conn, setup, NULL, NULL, &msg);
	if (rc != SQLITE_OK) {
		int status = db_error(db, HB_ERR_DB, "preparing the copy of server records: %s", msg ? msg : "?");
		sqlite3_free(msg);
		free(m);
		return status;
	}
	db->mirror = m;
	sqlite3_set_authorizer(db->conn, mirror_authorizer, db);
	return HB_OK;
}

void db_mirror_detach(hb_db *db)
{
	db_mirror *m = db ? db->mirror : NULL;
	if (!m)
		return;
	for (int i = 0; i < C_COUNT; i++)
		sqlite3_finalize(m->insert[i]);
	sqlite3_finalize(m->mark);
	sqlite3_finalize(m->evict);
	sqlite3_finalize(m->count_of);
	sqlite3_finalize(m->is_copied);
	free(m->ahead.ids);
	free(m->points.ids);
	for (size_t i = 0; i < m->n_named; i++)
		free(m->named[i]);
	free(m->named);
	free(m);
	db->mirror = NULL;
}

static sqlite3_stmt *prep(hb_db *db, sqlite3_stmt **st, const char *sql)
{
	if (*st)
		return *st;
	db->pg_filling++;
	int rc = sqlite3_prepare_v3(db->conn, sql, -1, SQLITE_PREPARE_PERSISTENT, st, NULL);
	db->pg_filling--;
	if (rc != SQLITE_OK) {
		db_error(db, HB_ERR_DB, "preparing the copy of server records: %s", sqlite3_errmsg(db->conn));
		*st = NULL;
	}
	return *st;
}

static sqlite3_stmt *insert_stmt(hb_db *db, enum mirror_copy_id c)
{
	db_mirror *m = db->mirror;
	if (m->insert[c])
		return m->insert[c];
	char sql[2048];
	int n = 1;
	for (const char *p = copies[c].cols; *p; p++)
		n += *p == ',';
	int k = snprintf(sql, sizeof sql, "INSERT OR IGNORE INTO %s (%s) VALUES (?", copies[c].table, copies[c].cols);
	for (int i = 1; i < n && k < (int)sizeof sql - 4; i++)
		k += snprintf(sql + k, sizeof sql - (size_t)k, ", ?");
	snprintf(sql + k, sizeof sql - (size_t)k, ")");
	return prep(db, &m->insert[c], sql);
}

static int named(hb_db *db, const char *name, const char *sql);

/* Runs copy c with param on the server and stores its rows; each row's column `collect_col[i]` (when >= 0)
 * goes to collect[i]: the records the copied ones refer to. */
static int copy_rows(hb_db *db, enum mirror_copy_id c, const char *param, const int collect_col[2], id_list *collect[2])
{
	char name[32];
	snprintf(name, sizeof name, "mirror_%d", (int)c);
	int status = named(db, name, copies[c].pg);
	if (status < 0)
		return status;
	sqlite3_stmt *ins = insert_stmt(db, c);
	if (!ins)
		return HB_ERR_DB;
	PGresult *r = NULL;
	status = db_pg_exec(db, db->pg, name, 1, &param, "reading from the server", &r);
	if (status < 0)
		return status;
	int rows = PQntuples(r), cols = PQnfields(r);
	db->pg_filling++;
	for (int i = 0; i < rows && status == HB_OK; i++) {
		for (int j = 0; j < cols; j++) {
			const char *v = PQgetvalue(r, i, j);
			if (PQgetisnull(r, i, j))
				sqlite3_bind_null(ins, j + 1);
			else if (strcmp(v, "Infinity") == 0 || strcmp(v, "-Infinity") == 0)
				/* the server's spelling of an infinite float8 (infinite degrees of freedom, say) */
				sqlite3_bind_double(ins, j + 1, v[0] == '-' ? -INFINITY : INFINITY);
			else
				sqlite3_bind_text(ins, j + 1, PQgetvalue(r, i, j), PQgetlength(r, i, j), SQLITE_STATIC);
		}
		int rc = sqlite3_step(ins);
		db_release(ins);
		if (rc != SQLITE_DONE)
			status = db_error(db, HB_ERR_DB, "copying server records into %s: %s", copies[c].table,
					  sqlite3_errmsg(db->conn));
		for (int k = 0; k < 2 && status == HB_OK && collect_col; k++)
			if (collect_col[k] >= 0 && !PQgetisnull(r, i, collect_col[k]))
				status = ids_add(db, collect[k], strtoll(PQgetvalue(r, i, collect_col[k]), NULL, 10));
	}
	db->pg_filling--;
	PQclear(r);
	return status;
}

static int copy_ids(hb_db *db, enum mirror_copy_id c, const id_list *keys, const int collect_col[2],
		    id_list *collect[2])
{
	if (keys->n == 0)
		return HB_OK;
	char *lit = ids_literal(db, keys->ids, keys->n);
	if (!lit)
		return HB_ERR_NOMEM;
	int status = copy_rows(db, c, lit, collect_col, collect);
	free(lit);
	return status;
}

/* The ids of `ids` not copied yet as `kind`, now marked copied. */
static int not_yet(hb_db *db, enum mirror_kind kind, const int64_t *ids, size_t n, id_list *out)
{
	db_mirror *m = db->mirror;
	sqlite3_stmt *st = prep(db, &m->mark, "INSERT OR IGNORE INTO temp.mirror_copied (kind, id) VALUES (?1, ?2)");
	if (!st)
		return HB_ERR_DB;
	int status = HB_OK;
	db->pg_filling++;
	for (size_t i = 0; i < n && status == HB_OK; i++) {
		if (ids[i] <= 0)
			continue;
		sqlite3_bind_int(st, 1, kind);
		sqlite3_bind_int64(st, 2, ids[i]);
		int rc = sqlite3_step(st);
		db_release(st);
		if (rc != SQLITE_DONE)
			status = db_error(db, HB_ERR_DB, "noting copied records: %s", sqlite3_errmsg(db->conn));
		else if (sqlite3_changes(db->conn) == 1)
			status = ids_add(db, out, ids[i]);
	}
	db->pg_filling--;
	return status;
}

/* Whether the record was copied as kind (a read that asks for it again costs one lookup). */
static bool copied(hb_db *db, enum mirror_kind kind, int64_t id)
{
	db_mirror *m = db->mirror;
	sqlite3_stmt *st = prep(db, &m->is_copied, "SELECT 1 FROM temp.mirror_copied WHERE kind = ?1 AND id = ?2");
	if (!st)
		return false;
	sqlite3_bind_int(st, 1, kind);
	sqlite3_bind_int64(st, 2, id);
	bool yes = sqlite3_step(st) == SQLITE_ROW;
	db_release(st);
	return yes;
}

static const int no_collect[2] = { -1, -1 };

/* Copies the records of `kind` among ids not copied yet: steps[0] with what its rows refer to collected
 * (columns cols into collect), then the other steps; *copied_n (may be NULL) gets how many were new. */
static int copy_kind(hb_db *db, enum mirror_kind kind, const int64_t *ids, size_t n, const enum mirror_copy_id *steps,
		     size_t n_steps, const int cols[2], id_list *collect[2], size_t *copied_n)
{
	id_list todo = { 0 };
	int status = not_yet(db, kind, ids, n, &todo);
	for (size_t i = 0; i < n_steps && status == HB_OK; i++)
		status = copy_ids(db, steps[i], &todo, i == 0 ? cols : no_collect, i == 0 ? collect : NULL);
	if (copied_n)
		*copied_n = todo.n;
	free(todo.ids);
	return status;
}

int db_mirror_parts(hb_db *db, const int64_t *ids, size_t n)
{
	static const enum mirror_copy_id steps[] = { C_PARTS, C_SPEC_REVS, C_DRAWINGS, C_CURVE_MASKS };
	if (!db->pg)
		return HB_OK;
	return copy_kind(db, K_PART, ids, n, steps, sizeof steps / sizeof steps[0], no_collect, NULL, NULL);
}

int db_mirror_lots(hb_db *db, const int64_t *ids, size_t n)
{
	static const enum mirror_copy_id steps[] = { C_LOTS, C_LOT_DECISIONS };
	static const int cols[2] = { 1, -1 };
	if (!db->pg)
		return HB_OK;
	id_list parts = { 0 };
	id_list *collect[2] = { &parts, NULL };
	int status = copy_kind(db, K_LOT, ids, n, steps, sizeof steps / sizeof steps[0], cols, collect, NULL);
	if (status == HB_OK)
		status = db_mirror_parts(db, parts.ids, parts.n);
	free(parts.ids);
	return status;
}

int db_mirror_units(hb_db *db, const int64_t *ids, size_t n)
{
	static const enum mirror_copy_id steps[] = { C_UNITS };
	static const int cols[2] = { 1, 3 };
	if (!db->pg)
		return HB_OK;
	id_list parts = { 0 }, lots = { 0 };
	id_list *collect[2] = { &parts, &lots };
	int status = copy_kind(db, K_UNIT, ids, n, steps, 1, cols, collect, NULL);
	if (status == HB_OK)
		status = db_mirror_parts(db, parts.ids, parts.n);
	if (status == HB_OK)
		status = db_mirror_lots(db, lots.ids, lots.n);
	free(parts.ids);
	free(lots.ids);
	return status;
}

/* The instrument register and the fixture compensations: small, copied whole once. */
static int mirror_register(hb_db *db)
{
	const int64_t one = 1;
	id_list todo = { 0 };
	int status = not_yet(db, K_REGISTER, &one, 1, &todo);
	if (status == HB_OK && todo.n) {
		status = copy_rows(db, C_INSTRUMENTS, "all", no_collect, NULL);
		if (status == HB_OK)
			status = copy_rows(db, C_COMPS, "all", no_collect, NULL);
	}
	free(todo.ids);
	return status;
}

int db_mirror_register(hb_db *db)
{
	return db->pg ? mirror_register(db) : HB_OK;
}

/* Where id stands in the last listing; SIZE_MAX if not there. */
static size_t ahead_pos(const db_mirror *m, int64_t id)
{
	for (size_t i = 0; i < m->ahead.n; i++)
		if (m->ahead.ids[i] == id)
			return i;
	return SIZE_MAX;
}

enum { AHEAD_SWEEPS = 256, AHEAD_POINTS_SWEEPS = 64, AHEAD_POINTS = 20000 };

int db_mirror_hint(hb_db *db, const int64_t *ids, size_t n)
{
	if (!db->pg)
		return HB_OK;
	db_mirror *m = db->mirror;
	m->ahead.n = 0;
	int status = HB_OK;
	for (size_t i = 0; i < n && status == HB_OK; i++)
		status = ids_add(db, &m->ahead, ids[i]);
	return status;
}

int db_mirror_sweeps(hb_db *db, const int64_t *ids, size_t n)
{
	if (!db->pg)
		return HB_OK;
	db_mirror *m = db->mirror;
	/* one sweep asked for, most often one already copied */
	if (n == 1 && copied(db, K_SWEEP, ids[0]))
		return HB_OK;
	/* one listed sweep asked for: the block of the listing it is in comes along */
	size_t at = n == 1 ? ahead_pos(m, ids[0]) : SIZE_MAX;
	if (at != SIZE_MAX) {
		size_t first = at - at % AHEAD_SWEEPS;
		ids = m->ahead.ids + first;
		n = m->ahead.n - first < AHEAD_SWEEPS ? m->ahead.n - first : AHEAD_SWEEPS;
	}
	static const enum mirror_copy_id steps[] = { C_SWEEPS, C_POINT_COUNTS, C_FITS, C_FIT_VALUES, C_FIT_UNC,
						     C_VERDICTS, C_TRACE };
	static const int cols[2] = { 1, -1 };
	id_list units = { 0 };
	id_list *collect[2] = { &units, NULL };
	size_t new_ones = 0;
	int status = copy_kind(db, K_SWEEP, ids, n, steps, sizeof steps / sizeof steps[0], cols, collect, &new_ones);
	if (status == HB_OK)
		status = db_mirror_units(db, units.ids, units.n);
	if (status == HB_OK && new_ones)
		status = mirror_register(db);
	free(units.ids);
	return status;
}

/* The number of points of a copied sweep (its count came with it); 0 if not known. */
static long long points_counted(hb_db *db, int64_t sweep_id)
{
	db_mirror *m = db->mirror;
	sqlite3_stmt *st = prep(db, &m->count_of, "SELECT n FROM temp.pg_point_counts WHERE sweep_id = ?1");
	if (!st)
		return 0;
	sqlite3_bind_int64(st, 1, sweep_id);
	long long n = sqlite3_step(st) == SQLITE_ROW ? sqlite3_column_int64(st, 0) : 0;
	db_release(st);
	return n;
}

int db_mirror_points(hb_db *db, int64_t sweep_id)
{
	if (!db->pg)
		return HB_OK;
	db_mirror *m = db->mirror;
	for (size_t i = 0; i < m->points.n; i++)
		if (m->points.ids[i] == sweep_id)
			return HB_OK;
	/* The copy holds a bounded chunk of points: the sweep asked for and, when it was listed, the listed
	 * sweeps after it up to AHEAD_POINTS points. An export or report of a part walks its sweeps at
	 * constant memory in a few round trips. */
	sqlite3_stmt *st = prep(db, &m->evict, "DELETE FROM points");
	if (!st)
		return HB_ERR_DB;
	db->pg_filling++;
	int rc = sqlite3_step(st);
	db->pg_filling--;
	db_release(st);
	if (rc != SQLITE_DONE)
		return db_error(db, HB_ERR_DB, "dropping copied points: %s", sqlite3_errmsg(db->conn));
	m->points.n = 0;
	int status = ids_add(db, &m->points, sweep_id);
	/* the block of the listing the sweep is in (blocks of AHEAD_POINTS_SWEEPS, whichever way the
	 * command walks the listing each block is fetched once), if its points fit the bound */
	size_t at = ahead_pos(m, sweep_id);
	if (at != SIZE_MAX) {
		size_t first = at - at % AHEAD_POINTS_SWEEPS;
		size_t end = m->ahead.n - first < AHEAD_POINTS_SWEEPS ? m->ahead.n : first + AHEAD_POINTS_SWEEPS;
		long long total = 0;
		for (size_t i = first; i < end && total <= AHEAD_POINTS; i++) {
			long long more = points_counted(db, m->ahead.ids[i]);
			total += more > 0 ? more : AHEAD_POINTS;
		}
		for (size_t i = first; total <= AHEAD_POINTS && i < end && status == HB_OK; i++)
			status = ids_add(db, &m->points, m->ahead.ids[i]);
	}
	if (status == HB_OK)
		status = copy_ids(db, C_POINTS, &m->points, no_collect, NULL);
	if (status < 0)
		m->points.n = 0;
	return status;
}

/* Copies the sample records of lots or of sweeps (`kind`), then what they refer to. */
static int mirror_samples(hb_db *db, enum mirror_kind kind, const int64_t *ids, size_t n)
{
	id_list todo = { 0 }, a = { 0 }, b = { 0 };
	int status = not_yet(db, kind, ids, n, &todo);
	if (kind == K_LOT_SAMPLES) {
		/* a lot's samples: their units and sweeps */
		id_list *collect[2] = { &a, &b };
		const int cols[2] = { 4, 5 };
		if (status == HB_OK)
			status = copy_ids(db, C_LOT_SAMPLES, &todo, cols, collect);
		if (status == HB_OK)
			status = db_mirror_lots(db, todo.ids, todo.n);
		if (status == HB_OK)
			status = db_mirror_units(db, a.ids, a.n);
		if (status == HB_OK)
			status = db_mirror_sweeps(db, b.ids, b.n);
	} else {
		/* a sweep's sample records: the lots that sampled it */
		id_list *collect[2] = { &a, NULL };
		const int cols[2] = { 2, -1 };
		if (status == HB_OK)
			status = copy_ids(db, C_SWEEP_SAMPLES, &todo, cols, collect);
		if (status == HB_OK)
			status = db_mirror_lots(db, a.ids, a.n);
	}
	free(todo.ids);
	free(a.ids);
	free(b.ids);
	return status;
}

int db_mirror_lot_samples(hb_db *db, int64_t lot_id)
{
	return db->pg ? mirror_samples(db, K_LOT_SAMPLES, &lot_id, 1) : HB_OK;
}

/* ---------------- reads that start from something other than an id ---------------- */

/* Prepares sql under name on the server once per connection. */
static int named(hb_db *db, const char *name, const char *sql)
{
	db_mirror *m = db->mirror;
	for (size_t i = 0; i < m->n_named; i++)
		if (strcmp(m->named[i], name) == 0)
			return HB_OK;
	int status = db_grow(db, (void **)&m->named, &m->cap_named, m->n_named, sizeof *m->named);
	if (status < 0)
		return status;
	char *copy = strdup(name);
	if (!copy)
		return db_error(db, HB_ERR_NOMEM, "out of memory reading from the server");
	status = db_pg_prepare(db, db->pg, name, sql, "preparing reads");
	if (status < 0) {
		free(copy);
		return status;
	}
	m->named[m->n_named++] = copy;
	return HB_OK;
}

/* Runs a server query (prepared on first use) whose rows' first column is an id. */
static int query_ids(hb_db *db, const char *name, const char *sql, int n, const char *const *params, id_list *out)
{
	PGresult *r = NULL;
	int status = named(db, name, sql);
	if (status == HB_OK)
		status = db_pg_exec(db, db->pg, name, n, params, "reading from the server", &r);
	if (status < 0)
		return status;
	for (int i = 0; i < PQntuples(r) && status == HB_OK; i++)
		if (!PQgetisnull(r, i, 0))
			status = ids_add(db, out, strtoll(PQgetvalue(r, i, 0), NULL, 10));
	PQclear(r);
	return status;
}

int db_mirror_part_number(hb_db *db, const char *part_number)
{
	if (!db->pg)
		return HB_OK;
	id_list ids = { 0 };
	int status = query_ids(db, "mirror_part_number", "SELECT min(id) FROM parts WHERE part_number = $1", 1,
			       &part_number, &ids);
	if (status == HB_OK)
		status = db_mirror_parts(db, ids.ids, ids.n);
	free(ids.ids);
	return status;
}

int db_mirror_all_parts(hb_db *db)
{
	if (!db->pg)
		return HB_OK;
	const int64_t one = 1;
	id_list todo = { 0 }, parts = { 0 };
	id_list *collect[2] = { &parts, NULL };
	const int cols[2] = { 0, -1 };
	int status = not_yet(db, K_ALL_PARTS, &one, 1, &todo);
	if (status == HB_OK && todo.n)
		status = copy_rows(db, C_ALL_PARTS, "all", cols, collect);
	/* their revisions, and marked copied */
	if (status == HB_OK)
		status = db_mirror_parts(db, parts.ids, parts.n);
	free(todo.ids);
	free(parts.ids);
	return status;
}

int db_mirror_lot_code(hb_db *db, int64_t part_id, const char *lot_code)
{
	if (!db->pg)
		return HB_OK;
	char part[24];
	snprintf(part, sizeof part, "%lld", (long long)part_id);
	const char *params[2] = { part, lot_code };
	id_list ids = { 0 };
	int status = query_ids(db, "mirror_lot_code",
			       "SELECT l.id FROM lots l JOIN parts p ON p.uid = l.part_uid WHERE p.part_number ="
			       " (SELECT part_number FROM parts WHERE id = $1::bigint) AND l.lot_code = $2 ORDER BY l.id LIMIT 1",
			       2, params, &ids);
	if (status == HB_OK)
		status = db_mirror_lots(db, ids.ids, ids.n);
	free(ids.ids);
	return status;
}

/* The server side of hb_db_sweep_filter: the same terms, a part number standing for all its registrations. */
#define SWEEP_FILTER_FROM                                                                                      \
	" FROM sweeps s LEFT JOIN units u ON u.uid = s.unit_uid LEFT JOIN parts p ON p.uid = u.part_uid"          \
	" LEFT JOIN lots l ON l.uid = u.lot_uid WHERE ($1::text IS NULL OR p.part_number = $1)"                  \
	" AND ($2::text IS NULL OR u.serial = $2) AND ($3::text IS NULL OR l.lot_code = $3)"                    \
	" AND ($4::text IS NULL OR s.status = $4) AND ($5::text IS NULL OR s.kind = $5)"                        \
	" AND ($6::float8 IS NULL OR s.started_unix >= $6)"

static void filter_params(const hb_db_sweep_filter *f, char since[32], char limit[24], const char *p[7])
{
	snprintf(since, 32, "%.17g", f->since);
	snprintf(limit, 24, "%ld", f->limit > 0 ? f->limit : 0);
	p[0] = f->part_number;
	p[1] = f->serial;
	p[2] = f->lot_code;
	p[3] = f->status >= 0 ? hb_db_sweep_status_name((hb_db_sweep_status)f->status) : NULL;
	p[4] = f->kind >= 0 ? hb_db_sweep_kind_name((hb_db_sweep_kind)f->kind) : NULL;
	p[5] = f->since > 0 ? since : NULL;
	p[6] = f->limit > 0 ? limit : NULL;
}

int db_mirror_sweep_list(hb_db *db, const hb_db_sweep_filter *f)
{
	if (!db->pg)
		return HB_OK;
	char since[32], limit[24];
	const char *p[7];
	filter_params(f, since, limit, p);
	id_list ids = { 0 };
	int status = query_ids(db, "mirror_sweep_list",
			       "SELECT s.id" SWEEP_FILTER_FROM " ORDER BY s.started_unix DESC, s.id DESC LIMIT $7::bigint", 7,
			       p, &ids);
	if (status == HB_OK)
		status = db_mirror_hint(db, ids.ids, ids.n);
	if (status == HB_OK)
		status = db_mirror_sweeps(db, ids.ids, ids.n);
	free(ids.ids);
	return status;
}

int db_mirror_sweep_count(hb_db *db, const hb_db_sweep_filter *f, int64_t *count)
{
	char since[32], limit[24];
	const char *p[7];
	filter_params(f, since, limit, p);
	id_list ids = { 0 };
	/* the count itself is the one "id" */
	int status = query_ids(db, "mirror_sweep_count", "SELECT count(*)" SWEEP_FILTER_FROM, 6, p, &ids);
	*count = ids.n ? ids.ids[0] : 0;
	free(ids.ids);
	return status;
}

int db_mirror_affected(hb_db *db, int64_t instrument_id, double since_unix)
{
	if (!db->pg)
		return HB_OK;
	char inst[24], since[32];
	snprintf(inst, sizeof inst, "%lld", (long long)instrument_id);
	snprintf(since, sizeof since, "%.17g", isfinite(since_unix) ? since_unix : -1e300);
	const char *params[2] = { inst, since };
	id_list ids = { 0 };
	int status = query_ids(db, "mirror_affected",
			       "SELECT s.id FROM sweep_trace t JOIN sweeps s ON s.uid = t.sweep_uid"
			       " WHERE (t.lcr_instrument_id = $1::bigint OR t.supply_instrument_id = $1::bigint)"
			       " AND s.started_unix >= $2::float8",
			       2, params, &ids);
	if (status == HB_OK)
		status = db_mirror_sweeps(db, ids.ids, ids.n);
	if (status == HB_OK)
		status = mirror_samples(db, K_SWEEP_SAMPLES, ids.ids, ids.n);
	free(ids.ids);
	return status;
}

/* The server tables of hb_db_record (as db_trace.c's records[]). */
static const struct {
	const char *table, *column;
} record_tables[HB_DB_REC_COUNT] = {
	[HB_DB_REC_PART] = { "parts", "uid" },
	[HB_DB_REC_SPEC_REVISION] = { "spec_revisions", "uid" },
	[HB_DB_REC_UNIT] = { "units", "uid" },
	[HB_DB_REC_LOT] = { "lots", "uid" },
	[HB_DB_REC_LOT_DECISION] = { "lot_decisions", "uid" },
	[HB_DB_REC_SWEEP] = { "sweeps", "uid" },
	[HB_DB_REC_POINTS] = { "sweeps", "points_uid" },
	[HB_DB_REC_FIT] = { "fits", "uid" },
	[HB_DB_REC_VERDICT] = { "verdicts", "uid" },
	[HB_DB_REC_INSPECTION] = { "inspections", "uid" },
	[HB_DB_REC_REPORT] = { "reports", "uid" },
};

/* A record and what it belongs to, by the kind of record and its server id. */
int db_mirror_record(hb_db *db, hb_db_record kind, int64_t id)
{
	if (!db->pg || (unsigned)kind >= HB_DB_REC_COUNT)
		return HB_OK;
	/* the record that holds it: a spec revision's part, a fit's or verdict's sweep, a decision's or sample's lot */
	static const char *const owner_sql[HB_DB_REC_COUNT] = {
		[HB_DB_REC_SPEC_REVISION] = "SELECT p.id FROM spec_revisions r JOIN parts p ON p.uid = r.part_uid WHERE r.id = $1::bigint",
		[HB_DB_REC_LOT_DECISION] = "SELECT l.id FROM lot_decisions d JOIN lots l ON l.uid = d.lot_uid WHERE d.id = $1::bigint",
		[HB_DB_REC_FIT] = "SELECT s.id FROM fits f JOIN sweeps s ON s.uid = f.sweep_uid WHERE f.id = $1::bigint",
		[HB_DB_REC_VERDICT] = "SELECT s.id FROM verdicts v JOIN sweeps s ON s.uid = v.sweep_uid WHERE v.id = $1::bigint",
		[HB_DB_REC_INSPECTION] = "SELECT l.id FROM inspections i JOIN lots l ON l.uid = i.lot_uid WHERE i.id = $1::bigint",
	};
	int64_t key = id;
	if (owner_sql[kind]) {
		char name[32], text[24];
		snprintf(name, sizeof name, "mirror_owner_%d", (int)kind);
		snprintf(text, sizeof text, "%lld", (long long)id);
		const char *param = text;
		id_list owner = { 0 };
		int status = query_ids(db, name, owner_sql[kind], 1, &param, &owner);
		key = owner.n ? owner.ids[0] : 0;
		free(owner.ids);
		if (status < 0 || key <= 0)
			return status;
	}
	switch (kind) {
	case HB_DB_REC_PART:
	case HB_DB_REC_SPEC_REVISION:
		return db_mirror_parts(db, &key, 1);
	case HB_DB_REC_UNIT:
		return db_mirror_units(db, &key, 1);
	case HB_DB_REC_LOT:
	case HB_DB_REC_LOT_DECISION:
		return db_mirror_lots(db, &key, 1);
	case HB_DB_REC_INSPECTION:
		return db_mirror_lot_samples(db, key);
	case HB_DB_REC_SWEEP:
	case HB_DB_REC_POINTS:
	case HB_DB_REC_FIT:
	case HB_DB_REC_VERDICT:
		return db_mirror_sweeps(db, &key, 1);
	case HB_DB_REC_REPORT:
	default:
		return HB_OK;
	}
}

int db_mirror_uid(hb_db *db, hb_db_record kind, const char *uid)
{
	if (!db->pg || (unsigned)kind >= HB_DB_REC_COUNT)
		return HB_OK;
	if (kind == HB_DB_REC_REPORT)
		return db_mirror_report(db, uid);
	char name[32], sql[160];
	snprintf(name, sizeof name, "mirror_uid_%d", (int)kind);
	snprintf(sql, sizeof sql, "SELECT id FROM %s WHERE %s = lower($1)", record_tables[kind].table,
		 record_tables[kind].column);
	id_list ids = { 0 };
	int status = query_ids(db, name, sql, 1, &uid, &ids);
	if (status == HB_OK && ids.n)
		status = db_mirror_record(db, kind, ids.ids[0]);
	free(ids.ids);
	return status;
}

int db_mirror_report(hb_db *db, const char *uid)
{
	if (!db->pg)
		return HB_OK;
	id_list sweeps = { 0 };
	id_list *collect[2] = { &sweeps, NULL };
	const int cols[2] = { 1, -1 };
	int status = copy_rows(db, C_REPORT, uid, no_collect, NULL);
	if (status == HB_OK)
		status = copy_rows(db, C_REPORT_SWEEPS, uid, cols, collect);
	if (status == HB_OK)
		status = db_mirror_sweeps(db, sweeps.ids, sweeps.n);
	free(sweeps.ids);
	return status;
}

/* A report written from a server's records is filed on the server: its number and hashes go where the
 * records it rests on are (the file stays where it was written, as with a station's reports). */
int db_pg_report_put(hb_db *db, hb_db_report *r)
{
	static const char put_sql[] =
		"WITH rep AS (INSERT INTO reports (uid, kind, subject, path, file_sha256, data_sha256, software_version,"
		" created) VALUES ($1, $2, $3, $4, $5, $6, $7, $8) ON CONFLICT (uid) DO NOTHING RETURNING uid)"
		" INSERT INTO report_sweeps (report_uid, sweep_uid) SELECT rep.uid, s.uid FROM rep"
		" JOIN sweeps s ON s.id = ANY($9::bigint[]) ON CONFLICT DO NOTHING";
	db_iso_time(db_now(), r->created, sizeof r->created);
	char *lit = ids_literal(db, r->sweep_ids, r->n_sweeps);
	if (!lit)
		return HB_ERR_NOMEM;
	const char *p[9] = { r->uid, r->kind, r->subject, r->path, r->file_sha256, r->data_sha256,
			     r->software_version, r->created, lit };
	int status = named(db, "mirror_report_put", put_sql);
	if (status == HB_OK)
		status = db_pg_exec(db, db->pg, "mirror_report_put", 9, p, "filing a report on the server", NULL);
	free(lit);
	return status;
}
