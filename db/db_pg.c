/* db/db_pg.c - many stations, one server: connecting to the shared PostgreSQL store, its migrations, and pushing what the server lacks */
#include <errno.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "db_pg_internal.h"

extern const char hb_db_schema_pg_sql[];

/* ---------------- connection and the server's migrations ---------------- */

static int pg_error(hb_db *db, PGconn *conn, const PGresult *res, const char *what)
{
	const char *msg = res ? PQresultErrorMessage(res) : NULL;
	if (!msg || !*msg)
		msg = conn ? PQerrorMessage(conn) : "?";
	char one[600];
	snprintf(one, sizeof one, "%s", msg);
	for (char *p = one; *p; p++)
		if (*p == '\n' || *p == '\t')
			*p = (p[1] ? ' ' : '\0');
	return db_error(db, HB_ERR_DB, "server: %s failed: %s", what, one);
}

int db_pg_simple(hb_db *db, PGconn *conn, const char *sql, const char *what)
{
	PGresult *res = PQexec(conn, sql);
	int status = HB_OK;
	if (PQresultStatus(res) != PGRES_COMMAND_OK && PQresultStatus(res) != PGRES_TUPLES_OK)
		status = pg_error(db, conn, res, what);
	PQclear(res);
	return status;
}

int db_pg_prepare(hb_db *db, PGconn *conn, const char *name, const char *sql, const char *what)
{
	PGresult *res = PQprepare(conn, name, sql, 0, NULL);
	int status = HB_OK;
	if (PQresultStatus(res) != PGRES_COMMAND_OK)
		status = pg_error(db, conn, res, what);
	PQclear(res);
	return status;
}

int db_pg_exec(hb_db *db, PGconn *conn, const char *name, int n, const char *const *params, const char *what,
	       PGresult **out)
{
	PGresult *res = PQexecPrepared(conn, name, n, params, NULL, NULL, 0);
	ExecStatusType st = PQresultStatus(res);
	if (st != PGRES_COMMAND_OK && st != PGRES_TUPLES_OK) {
		int status = pg_error(db, conn, res, what);
		PQclear(res);
		return status;
	}
	if (out)
		*out = res;
	else
		PQclear(res);
	/* reads of a server handle under the plan watch (db_pg_plan.c) */
	if (db->pg == conn)
		db_pg_plan_note(db, conn, name, n, params);
	return HB_OK;
}

/* The "-- step N" pieces of schema_pg.sql, in order; -1 when they are not 1, 2, 3, ... */
static int pg_steps(const char **start, size_t *len, int max)
{
	static const char marker[] = "-- step ";
	const char *p = hb_db_schema_pg_sql;
	int n = 0;
	while ((p = strstr(p, marker)) != NULL) {
		if (p != hb_db_schema_pg_sql && p[-1] != '\n') {
			p += sizeof marker - 1;
			continue;
		}
		if (n == max || atoi(p + sizeof marker - 1) != n + 1)
			return -1;
		start[n] = p;
		if (n > 0)
			len[n - 1] = (size_t)(p - start[n - 1]);
		n++;
		p += sizeof marker - 1;
	}
	if (n > 0)
		len[n - 1] = strlen(start[n - 1]);
	return n;
}

/* One transaction under an advisory lock: two stations meeting a new server migrate it once. */
static int pg_migrate(hb_db *db, PGconn *conn)
{
	enum { MAX_STEPS = 32 };
	const char *start[MAX_STEPS];
	size_t len[MAX_STEPS];
	int latest = pg_steps(start, len, MAX_STEPS);
	if (latest <= 0)
		return db_error(db, HB_ERR_DB, "embedded server schema is malformed");
	int status = db_pg_simple(db, conn, "BEGIN", "starting the migration");
	if (status < 0)
		return status;
	/* 0x6862 = "hb": the lock only henrybench takes */
	status = db_pg_simple(db, conn, "SELECT pg_advisory_xact_lock(26722)", "locking the schema");
	if (status == HB_OK)
		status = db_pg_simple(db, conn, "CREATE TABLE IF NOT EXISTS hb_schema (version INTEGER NOT NULL)",
				      "creating the schema table");
	if (status == HB_OK)
		status = db_pg_simple(db, conn, "INSERT INTO hb_schema SELECT 0 WHERE NOT EXISTS (SELECT 1 FROM hb_schema)",
				      "creating the schema table");
	int version = 0;
	if (status == HB_OK) {
		PGresult *res = PQexec(conn, "SELECT version FROM hb_schema");
		if (PQresultStatus(res) == PGRES_TUPLES_OK && PQntuples(res) == 1)
			version = atoi(PQgetvalue(res, 0, 0));
		else
			status = pg_error(db, conn, res, "reading the server's schema version");
		PQclear(res);
	}
	if (status == HB_OK && version > latest)
		status = db_error(db, HB_ERR_DB,
				  "the server has schema version %d, newer than the %d this henrybench knows: update henrybench",
				  version, latest);
	for (int i = version; status == HB_OK && i < latest; i++) {
		char *sql = strndup(start[i], len[i]);
		if (!sql) {
			status = db_error(db, HB_ERR_NOMEM, "out of memory migrating the server");
			break;
		}
		char what[64];
		snprintf(what, sizeof what, "migrating the server to schema version %d", i + 1);
		status = db_pg_simple(db, conn, sql, what);
		free(sql);
		if (status == HB_OK) {
			char upd[64];
			snprintf(upd, sizeof upd, "UPDATE hb_schema SET version = %d", i + 1);
			status = db_pg_simple(db, conn, upd, what);
		}
	}
	if (status == HB_OK)
		return db_pg_simple(db, conn, "COMMIT", "committing the migration");
	PQclear(PQexec(conn, "ROLLBACK"));
	return status;
}

void hb_db_server_name(const char *url, char *out, size_t cap)
{
	char *err = NULL;
	PQconninfoOption *opts = url ? PQconninfoParse(url, &err) : NULL;
	const char *host = NULL, *dbname = NULL;
	for (PQconninfoOption *o = opts; o && o->keyword; o++) {
		if (strcmp(o->keyword, "host") == 0)
			host = o->val;
		else if (strcmp(o->keyword, "dbname") == 0)
			dbname = o->val;
	}
	if (opts)
		snprintf(out, cap, "host %s, database %s", host && *host ? host : "localhost",
			 dbname && *dbname ? dbname : "(the user's)");
	else
		snprintf(out, cap, "a URL libpq cannot read");
	PQconninfoFree(opts);
	PQfreemem(err);
}

/* A server that does not answer must not hold a bench for the system's TCP timeout (minutes): 10 s
 * unless the URL or PGCONNECT_TIMEOUT says otherwise (later keywords, the URL's, win). */
static PGconn *connect_url(const char *url)
{
	const char *env = getenv("PGCONNECT_TIMEOUT");
	const char *const keys[] = { "connect_timeout", "dbname", NULL };
	const char *const vals[] = { env && *env ? env : "10", url, NULL };
	return PQconnectdbParams(keys, vals, 1);
}

int db_pg_connect(hb_db *db, const char *url, char server_uid[HB_DB_UID_LEN], PGconn **out)
{
	*out = NULL;
	PGconn *conn = connect_url(url);
	if (!conn)
		return db_error(db, HB_ERR_NOMEM, "out of memory connecting to the server");
	if (PQstatus(conn) != CONNECTION_OK) {
		char one[400];
		snprintf(one, sizeof one, "%s", PQerrorMessage(conn));
		for (char *p = one; *p; p++)
			if (*p == '\n' || *p == '\t')
				*p = (p[1] ? ' ' : '\0');
		/* named by host and database, not by the URL: a URL may hold a password */
		int status = db_error(db, HB_ERR_IO, "cannot reach the server (host %s, database %s): %s",
				      PQhost(conn) ? PQhost(conn) : "?", PQdb(conn) ? PQdb(conn) : "?", one);
		PQfinish(conn);
		return status;
	}
	PQclear(PQexec(conn, "SET client_min_messages = error"));
	PGresult *res = NULL;
	int status = pg_migrate(db, conn);
	if (status == HB_OK)
		status = db_pg_prepare(db, conn, "server_uid", "SELECT value FROM hb_meta WHERE key = 'server_uid'",
				       "reading the server's identity");
	if (status == HB_OK)
		status = db_pg_exec(db, conn, "server_uid", 0, NULL, "reading the server's identity", &res);
	if (status == HB_OK && PQntuples(res) != 1)
		status = db_error(db, HB_ERR_DB, "the server (host %s, database %s) has no identity (hb_meta): not a henrybench store",
				  PQhost(conn) ? PQhost(conn) : "?", PQdb(conn) ? PQdb(conn) : "?");
	if (status == HB_OK)
		snprintf(server_uid, HB_DB_UID_LEN, "%s", PQgetvalue(res, 0, 0));
	PQclear(res);
	if (status < 0) {
		PQfinish(conn);
		return status;
	}
	*out = conn;
	return HB_OK;
}

/* ---------------- what is pushed, table by table ---------------- */

/* A record's rows hanging off it (points of a sweep, values of a fit): sent in the same transaction, those
 * of the whole batch in one statement. The local query takes ?1 = the record's local id; the server
 * statement takes one array per column: $1 the records' identities, $2 = local column 0 of every row, ... */
typedef struct push_child {
	const char *local_sql;
	const char *pg_sql;   /* NULL: the rows are the record's own, one array per column appended to the
	                       * record's parameters (a drawing's curve mask travels with the drawing) */
	const char *bin;      /* non-NULL: the arrays go in PostgreSQL's binary format, one letter per array
	                       * (t text, b bigint, f float8; the first is the identity): no number is
	                       * printed here nor parsed there, and a double arrives bit for bit */
} push_child;

/* PUSH_VER: the local query's last two columns are the record's key and its version (not sent); the
 * record waits again once its version differs from the one noted when it was pushed (an edit). */
/* PUSH_ARRAY: the batch's records go as one statement of one array per column (unnest), not one
 * statement each: the bulk tables (units, sweeps, fits), where per-statement cost dominated. */
enum { PUSH_ALWAYS = 1u, PUSH_MARK = 2u, PUSH_VER = 4u, PUSH_ARRAY = 8u };

/* A server table. The local query takes ?1 = the server's identity, ?2 = the batch size and ?3 = the
 * last local id sent; column 0 is the local id, columns 1.. are the server statement's $1.. (with
 * PUSH_MARK, column 1 is the identity noted in sync_pushed once the server committed).
 * PUSH_ALWAYS: small master data sent at every sync (the server statement decides what changes). */
typedef struct push_table {
	const char *name;
	unsigned flags;
	const char *local_sql;
	const char *pg_sql;
	const char *count_sql; /* ?1 = the server's identity: records waiting */
	push_child children[2];
} push_table;

#define NOT_PUSHED(tbl, key) " NOT EXISTS (SELECT 1 FROM sync_pushed WHERE server = ?1 AND tbl = '" tbl "' AND uid = " key ")"
#define NOT_PUSHED_VER(tbl, key, ver) " NOT EXISTS (SELECT 1 FROM sync_pushed WHERE server = ?1 AND tbl = '" tbl "'" \
	" AND uid = " key " AND ver = " ver ")"
#define PUSHED(tbl, key) " EXISTS (SELECT 1 FROM sync_pushed WHERE server = ?1 AND tbl = '" tbl "' AND uid = " key ")"
#define SPEC_COLS "description, maker, nominal_h, tolerance, test_freq_hz, test_level, test_level_kind, sat_current_a, " \
	"sat_drop, rated_current_a, dcr_max_ohm, turns, ae_m2, le_m, window_m, toroid_od_m, toroid_id_m, toroid_h_m, " \
	"mu_i, bsat_t"
#define SWEEP_COLS "kind, started_at, started_unix, ended_at, ended_unix, status, status_reason, station, operator, " \
	"host, boot_id, pid, lcr_idn, lcr_profile, supply_idn, supply_profile, test_freq_hz, test_level, " \
	"test_level_kind, bias_a, circuit, measured_pair, averaging, aperture, settle_mode, settle_delay_s, " \
	"settle_tolerance, settle_max_readings, settle_max_s, plan_from, plan_to, plan_steps, plan_spacing, " \
	"limit_current_a, limit_voltage_v, ambient_c, note, reading_noise_rel, dcr_meter_ohm, supply_found_a, " \
	"supply_off_a, supply_decay_s, meter_accuracy_rel, meter_accuracy, supply_accuracy_rel, " \
	"supply_accuracy_offset_a, supply_accuracy, station_decision_rule, station_guard_r"
#define POINT_COLS "seq, bias_set_a, bias_meas_a, supply_v, freq_hz, primary_value, secondary_value, reading_status, " \
	"t_s, settle_readings, settle_s, direction, bias_spread_a, settled"
/* the register: the later calibration wins; on the same calibration date the later due date, then the
 * greater certificate, then the greater accuracy texts: one order everywhere, so all converge */
#define CAL_NEWER "(EXCLUDED.cal_date, EXCLUDED.due_date, EXCLUDED.certificate, EXCLUDED.accuracy," \
	" EXCLUDED.accuracy_freq_above) > (instruments.cal_date, instruments.due_date, instruments.certificate," \
	" instruments.accuracy, instruments.accuracy_freq_above)"
#define LOT_COLS "lot_code, lot_size, aql, inspection_level, severity, decision, created, code_letter, sample_size, " \
	"accept_number, reject_number, decided_at, supplier, production_irregular, decided_unix"

static const push_table tables[] = {
	/* a part's row is its current spec: the newest edit wins; every revision is kept beside it */
	{ "parts", PUSH_MARK | PUSH_VER,
	  "SELECT p.id, p.uid, p.part_number, " SPEC_COLS ", p.created, p.updated, p.decision_rule, p.guard_r, p.core_shape,"
	  " p.core_dims, p.gap_at, p.uid, " DB_PG_PART_VER("p") " FROM parts p WHERE p.id > ?3 AND"
	  NOT_PUSHED_VER("parts", "p.uid", DB_PG_PART_VER("p")) " ORDER BY p.id LIMIT ?2",
	  "INSERT INTO parts (uid, part_number, " SPEC_COLS ", created, updated, decision_rule, guard_r, core_shape,"
	  " core_dims, gap_at) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18,"
	  " $19, $20, $21, $22, $23, $24, $25, $26, $27, $28, $29)"
	  " ON CONFLICT (uid) DO UPDATE SET description = EXCLUDED.description, maker = EXCLUDED.maker,"
	  " nominal_h = EXCLUDED.nominal_h, tolerance = EXCLUDED.tolerance, test_freq_hz = EXCLUDED.test_freq_hz,"
	  " test_level = EXCLUDED.test_level, test_level_kind = EXCLUDED.test_level_kind,"
	  " sat_current_a = EXCLUDED.sat_current_a, sat_drop = EXCLUDED.sat_drop,"
	  " rated_current_a = EXCLUDED.rated_current_a, dcr_max_ohm = EXCLUDED.dcr_max_ohm, turns = EXCLUDED.turns,"
	  " ae_m2 = EXCLUDED.ae_m2, le_m = EXCLUDED.le_m, window_m = EXCLUDED.window_m,"
	  " toroid_od_m = EXCLUDED.toroid_od_m, toroid_id_m = EXCLUDED.toroid_id_m, toroid_h_m = EXCLUDED.toroid_h_m,"
	  " mu_i = EXCLUDED.mu_i, bsat_t = EXCLUDED.bsat_t, updated = EXCLUDED.updated,"
	  " decision_rule = EXCLUDED.decision_rule, guard_r = EXCLUDED.guard_r, core_shape = EXCLUDED.core_shape,"
	  " core_dims = EXCLUDED.core_dims, gap_at = EXCLUDED.gap_at WHERE EXCLUDED.updated > parts.updated",
	  "SELECT count(*) FROM parts p WHERE" NOT_PUSHED_VER("parts", "p.uid", DB_PG_PART_VER("p")), { { 0 } } },
	{ "spec_revisions", PUSH_MARK,
	  "SELECT r.id, r.uid, p.uid, r.revision, r.created, r.description, r.maker, r.nominal_h, r.tolerance,"
	  " r.test_freq_hz, r.test_level, r.test_level_kind, r.sat_current_a, r.sat_drop, r.rated_current_a,"
	  " r.dcr_max_ohm, r.turns, r.ae_m2, r.le_m, r.window_m, r.toroid_od_m, r.toroid_id_m, r.toroid_h_m, r.mu_i,"
	  " r.bsat_t, r.decision_rule, r.guard_r FROM spec_revisions r JOIN parts p ON p.id = r.part_id"
	  " WHERE r.id > ?3 AND" NOT_PUSHED("spec_revisions", "r.uid") " ORDER BY r.id LIMIT ?2",
	  "INSERT INTO spec_revisions (uid, part_uid, revision, created, " SPEC_COLS ", decision_rule, guard_r)"
	  " VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17, $18, $19, $20, $21, $22,"
	  " $23, $24, $25, $26) ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM spec_revisions r WHERE" NOT_PUSHED("spec_revisions", "r.uid"), { { 0 } } },
	/* a lot is its station's: the station's row (sample plan, decision) is the truth */
	{ "lots", PUSH_ALWAYS | PUSH_MARK,
	  "SELECT l.id, l.uid, p.uid, l.lot_code, l.lot_size, l.aql, l.inspection_level, l.severity, l.decision,"
	  " l.created, l.code_letter, l.sample_size, l.accept_number, l.reject_number, l.decided_at, l.supplier,"
	  " l.production_irregular, l.decided_unix FROM lots l JOIN parts p ON p.id = l.part_id"
	  " WHERE l.id > ?3 AND ?1 IS NOT NULL ORDER BY l.id LIMIT ?2",
	  "INSERT INTO lots (uid, part_uid, " LOT_COLS ") VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13,"
	  " $14, $15, $16, $17) ON CONFLICT (uid) DO UPDATE SET lot_size = EXCLUDED.lot_size, aql = EXCLUDED.aql,"
	  " inspection_level = EXCLUDED.inspection_level, severity = EXCLUDED.severity, decision = EXCLUDED.decision,"
	  " code_letter = EXCLUDED.code_letter, sample_size = EXCLUDED.sample_size,"
	  " accept_number = EXCLUDED.accept_number, reject_number = EXCLUDED.reject_number,"
	  " decided_at = EXCLUDED.decided_at, supplier = EXCLUDED.supplier,"
	  " production_irregular = EXCLUDED.production_irregular, decided_unix = EXCLUDED.decided_unix",
	  "SELECT count(*) FROM lots l WHERE" NOT_PUSHED("lots", "l.uid"), { { 0 } } },
	{ "lot_decisions", PUSH_MARK,
	  "SELECT d.id, d.uid, l.uid, d.decision, d.decided_at, d.code_letter, d.sample_size, d.accept_number,"
	  " d.reject_number, d.aql, d.severity FROM lot_decisions d JOIN lots l ON l.id = d.lot_id"
	  " WHERE d.id > ?3 AND" NOT_PUSHED("lot_decisions", "d.uid") " ORDER BY d.id LIMIT ?2",
	  "INSERT INTO lot_decisions (uid, lot_uid, decision, decided_at, code_letter, sample_size, accept_number,"
	  " reject_number, aql, severity) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10) ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM lot_decisions d WHERE" NOT_PUSHED("lot_decisions", "d.uid"), { { 0 } } },
	{ "stream_events", PUSH_ALWAYS,
	  "SELECT e.id, p.uid, e.supplier, e.kind, e.note, e.at, e.at_unix FROM stream_events e"
	  " JOIN parts p ON p.id = e.part_id WHERE e.id > ?3 AND ?1 IS NOT NULL ORDER BY e.id LIMIT ?2",
	  "INSERT INTO stream_events (part_uid, supplier, kind, note, at, at_unix) VALUES ($1, $2, $3, $4, $5, $6)"
	  " ON CONFLICT (part_uid, supplier, kind, at_unix) DO NOTHING",
	  NULL, { { 0 } } },
	{ "units", PUSH_MARK | PUSH_ARRAY,
	  "SELECT u.id, u.uid, p.uid, u.serial, l.uid, u.created FROM units u JOIN parts p ON p.id = u.part_id"
	  " LEFT JOIN lots l ON l.id = u.lot_id WHERE u.id > ?3 AND" NOT_PUSHED("units", "u.uid") " ORDER BY u.id LIMIT ?2",
	  "INSERT INTO units (uid, part_uid, serial, lot_uid, created) SELECT * FROM unnest($1::text[], $2::text[], $3::text[], $4::text[], $5::text[])"
	  " ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM units u WHERE" NOT_PUSHED("units", "u.uid"), { { 0 } } },
	/* the register: a later calibration (by its date) wins; the span seen is the union */
	{ "instruments", PUSH_MARK | PUSH_VER,
	  "SELECT i.id, i.kind, i.maker, i.model, i.serial, i.firmware, i.first_seen, i.last_seen, i.accuracy,"
	  " i.accuracy_freq_above, i.cal_date, i.due_date, i.certificate, " DB_PG_INSTR_KEY("i") ", " DB_PG_INSTR_VER("i")
	  " FROM instruments i WHERE i.id > ?3 AND" NOT_PUSHED_VER("instruments", DB_PG_INSTR_KEY("i"), DB_PG_INSTR_VER("i"))
	  " ORDER BY i.id LIMIT ?2",
	  "INSERT INTO instruments (kind, maker, model, serial, firmware, first_seen, last_seen, accuracy,"
	  " accuracy_freq_above, cal_date, due_date, certificate) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11,"
	  " $12) ON CONFLICT (maker, model, serial) DO UPDATE SET"
	  " first_seen = LEAST(instruments.first_seen, EXCLUDED.first_seen),"
	  " last_seen = GREATEST(instruments.last_seen, EXCLUDED.last_seen),"
	  " firmware = CASE WHEN EXCLUDED.last_seen > instruments.last_seen THEN EXCLUDED.firmware"
	  " ELSE instruments.firmware END,"
	  " accuracy = CASE WHEN " CAL_NEWER " THEN EXCLUDED.accuracy ELSE instruments.accuracy END,"
	  " accuracy_freq_above = CASE WHEN " CAL_NEWER " THEN EXCLUDED.accuracy_freq_above"
	  " ELSE instruments.accuracy_freq_above END,"
	  " due_date = CASE WHEN " CAL_NEWER " THEN EXCLUDED.due_date ELSE instruments.due_date END,"
	  " certificate = CASE WHEN " CAL_NEWER " THEN EXCLUDED.certificate ELSE instruments.certificate END,"
	  " cal_date = CASE WHEN " CAL_NEWER " THEN EXCLUDED.cal_date ELSE instruments.cal_date END",
	  "SELECT count(*) FROM instruments i WHERE" NOT_PUSHED_VER("instruments", DB_PG_INSTR_KEY("i"),
	  DB_PG_INSTR_VER("i")), { { 0 } } },
	/* a part's drawing with its curve mask, whole: the newest drawing (by its time) wins */
	{ "part_drawing", PUSH_MARK | PUSH_VER,
	  "SELECT d.part_id, p.uid, d.gap_m, d.gap_tol_m, d.curve_tol, d.curve_source, d.updated, p.uid, "
	  DB_PG_DRAWING_VER("d") " FROM part_drawing d JOIN parts p ON p.id = d.part_id WHERE d.part_id > ?3 AND"
	  NOT_PUSHED_VER("part_drawing", "p.uid", DB_PG_DRAWING_VER("d")) " ORDER BY d.part_id LIMIT ?2",
	  "WITH d AS (INSERT INTO part_drawing (part_uid, gap_m, gap_tol_m, curve_tol, curve_source, updated)"
	  " VALUES ($1, $2, $3, $4, $5, $6) ON CONFLICT (part_uid) DO UPDATE SET gap_m = EXCLUDED.gap_m,"
	  " gap_tol_m = EXCLUDED.gap_tol_m, curve_tol = EXCLUDED.curve_tol, curve_source = EXCLUDED.curve_source,"
	  " updated = EXCLUDED.updated WHERE EXCLUDED.updated > part_drawing.updated RETURNING part_uid),"
	  /* the winning drawing's mask replaces the old one: rows past its length go, the rest are
	   * written over (one statement never touches a row twice) */
	  " gone AS (DELETE FROM part_curve_mask WHERE part_uid IN (SELECT part_uid FROM d)"
	  " AND ord >= coalesce(cardinality($7::float8[]), 0))"
	  " INSERT INTO part_curve_mask (part_uid, ord, current_a, inductance_h, tol)"
	  " SELECT d.part_uid, m.ord - 1, m.c, m.l, m.t FROM d CROSS JOIN"
	  " unnest($7::float8[], $8::float8[], $9::float8[]) WITH ORDINALITY AS m (c, l, t, ord)"
	  " ON CONFLICT (part_uid, ord) DO UPDATE SET current_a = EXCLUDED.current_a,"
	  " inductance_h = EXCLUDED.inductance_h, tol = EXCLUDED.tol",
	  "SELECT count(*) FROM part_drawing d JOIN parts p ON p.id = d.part_id WHERE"
	  NOT_PUSHED_VER("part_drawing", "p.uid", DB_PG_DRAWING_VER("d")),
	  { { "SELECT current_a, inductance_h, tol FROM part_curve_mask WHERE part_id = ?1 ORDER BY ord", NULL, NULL } } },
	{ "fixture_compensations", PUSH_ALWAYS,
	  "SELECT c.id, c.fixture, c.kind, c.method, i.maker, i.model, i.serial, c.at, c.at_unix, c.residuals, c.operator,"
	  " c.note FROM fixture_compensations c LEFT JOIN instruments i ON i.id = c.instrument_id"
	  " WHERE c.id > ?3 AND ?1 IS NOT NULL ORDER BY c.id LIMIT ?2",
	  "INSERT INTO fixture_compensations (fixture, kind, method, instrument_id, at, at_unix, residuals, operator, note)"
	  " VALUES ($1, $2, $3, (SELECT id FROM instruments WHERE maker = $4 AND model = $5 AND serial = $6), $7, $8, $9,"
	  " $10, $11) ON CONFLICT (fixture, kind, at_unix) DO NOTHING",
	  NULL, { { 0 } } },
	/* a running sweep waits until it ends */
	{ "sweeps", PUSH_MARK | PUSH_ARRAY,
	  "SELECT s.id, s.uid, s.points_uid, u.uid, " SWEEP_COLS " FROM sweeps s LEFT JOIN units u ON u.id = s.unit_id"
	  " WHERE s.id > ?3 AND s.status <> 'running' AND" NOT_PUSHED("sweeps", "s.uid") " ORDER BY s.id LIMIT ?2",
	  "INSERT INTO sweeps (uid, points_uid, unit_uid, " SWEEP_COLS ") SELECT * FROM unnest("
	  "$1::text[], $2::text[], $3::text[], $4::text[], $5::text[], $6::float8[], $7::text[], $8::float8[],"
	  " $9::text[], $10::text[], $11::text[], $12::text[], $13::text[], $14::text[], $15::bigint[],"
	  " $16::text[], $17::text[], $18::text[], $19::text[], $20::float8[], $21::float8[], $22::text[],"
	  " $23::float8[], $24::text[], $25::text[], $26::bigint[], $27::text[], $28::text[], $29::float8[],"
	  " $30::float8[], $31::bigint[], $32::float8[], $33::float8[], $34::float8[], $35::bigint[],"
	  " $36::text[], $37::float8[], $38::float8[], $39::float8[], $40::text[], $41::float8[], $42::float8[],"
	  " $43::float8[], $44::float8[], $45::float8[], $46::float8[], $47::text[], $48::float8[],"
	  " $49::float8[], $50::text[], $51::text[], $52::float8[]"
	  ") ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM sweeps s WHERE s.status <> 'running' AND" NOT_PUSHED("sweeps", "s.uid"),
	  { { "SELECT " POINT_COLS " FROM points WHERE sweep_id = ?1 ORDER BY seq",
	      "INSERT INTO points (sweep_id, " POINT_COLS ") SELECT s.id, p.seq, p.bias_set_a, p.bias_meas_a, p.supply_v,"
	      " p.freq_hz, p.primary_value, p.secondary_value, p.reading_status, p.t_s, p.settle_readings, p.settle_s,"
	      " p.direction, p.bias_spread_a, p.settled FROM unnest($1::text[], $2::bigint[], $3::float8[],"
	      " $4::float8[], $5::float8[], $6::float8[], $7::float8[], $8::float8[], $9::bigint[], $10::float8[],"
	      " $11::bigint[], $12::float8[], $13::text[], $14::float8[], $15::bigint[]) AS p (sweep_uid, " POINT_COLS
	      ") JOIN sweeps s ON s.uid = p.sweep_uid ON CONFLICT DO NOTHING", "tbffffffbfbftfb" },
	    { "SELECT li.maker, li.model, li.serial, si.maker, si.model, si.serial, t.cal_status, t.overdue_allowed,"
	      " t.fixture, oc.fixture, oc.kind, oc.at_unix, sc.fixture, sc.kind, sc.at_unix, t.fixture_status,"
	      " t.fixture_applied, t.settings_start, t.settings_end, t.settings_changed FROM sweep_trace t"
	      " LEFT JOIN instruments li ON li.id = t.lcr_instrument_id"
	      " LEFT JOIN instruments si ON si.id = t.supply_instrument_id"
	      " LEFT JOIN fixture_compensations oc ON oc.id = t.open_comp_id"
	      " LEFT JOIN fixture_compensations sc ON sc.id = t.short_comp_id WHERE t.sweep_id = ?1",
	      "INSERT INTO sweep_trace (sweep_uid, lcr_instrument_id, supply_instrument_id, cal_status, overdue_allowed,"
	      " fixture, open_comp_id, short_comp_id, fixture_status, fixture_applied, settings_start, settings_end,"
	      " settings_changed) SELECT a.sw, (SELECT id FROM instruments WHERE maker = a.lm AND model = a.lo AND"
	      " serial = a.ls), (SELECT id FROM instruments WHERE maker = a.sm AND model = a.so AND serial = a.ss),"
	      " a.cs, a.oa, a.fx, (SELECT id FROM fixture_compensations WHERE fixture = a.of AND kind = a.ok AND"
	      " at_unix = a.ou), (SELECT id FROM fixture_compensations WHERE fixture = a.sf AND kind = a.sk AND"
	      " at_unix = a.su), a.fs, a.fa, a.st, a.se, a.sc FROM unnest($1::text[], $2::text[], $3::text[], $4::text[],"
	      " $5::text[], $6::text[], $7::text[], $8::text[], $9::bigint[], $10::text[], $11::text[], $12::text[],"
	      " $13::float8[], $14::text[], $15::text[], $16::float8[], $17::text[], $18::bigint[], $19::text[],"
	      " $20::text[], $21::text[]) AS a (sw, lm, lo, ls, sm, so, ss, cs, oa, fx, of, ok, ou, sf, sk, su, fs, fa, st,"
	      " se, sc) ON CONFLICT DO NOTHING", NULL } } },
	{ "fits", PUSH_MARK | PUSH_ARRAY,
	  "SELECT f.id, f.uid, s.uid, f.model, f.law, f.code_version, f.created, f.rss, f.dof, f.aic, f.covariance,"
	  " f.flags FROM fits f JOIN sweeps s ON s.id = f.sweep_id WHERE f.id > ?3 AND" NOT_PUSHED("fits", "f.uid")
	  " AND" PUSHED("sweeps", "s.uid") " ORDER BY f.id LIMIT ?2",
	  "INSERT INTO fits (uid, sweep_uid, model, law, code_version, created, rss, dof, aic, covariance, flags)"
	  " SELECT * FROM unnest($1::text[], $2::text[], $3::text[], $4::text[], $5::text[], $6::text[], $7::float8[],"
	  " $8::bigint[], $9::float8[], $10::text[], $11::text[]) ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM fits f JOIN sweeps s ON s.id = f.sweep_id WHERE s.status <> 'running' AND"
	  NOT_PUSHED("fits", "f.uid"),
	  { { "SELECT ord, name, value, std_error, unit FROM fit_values WHERE fit_id = ?1 ORDER BY ord, name",
	      "INSERT INTO fit_values (fit_uid, ord, name, value, std_error, unit) SELECT * FROM unnest($1::text[], $2::bigint[],"
	      " $3::text[], $4::float8[], $5::float8[], $6::text[]) ON CONFLICT DO NOTHING", NULL },
	    { "SELECT name, value, u_c, dof, k, U, budget, note FROM fit_uncertainty WHERE fit_id = ?1 ORDER BY name",
	      "INSERT INTO fit_uncertainty (fit_uid, name, value, u_c, dof, k, \"U\", budget, note) SELECT *"
	      " FROM unnest($1::text[], $2::text[], $3::float8[], $4::float8[], $5::float8[], $6::float8[], $7::float8[],"
	      " $8::text[], $9::text[]) ON CONFLICT DO NOTHING", NULL } } },
	{ "verdicts", PUSH_MARK,
	  "SELECT v.id, v.uid, s.uid, v.check_name, v.measured, v.limit_low, v.limit_high, v.margin, v.outcome, v.note,"
	  " v.created, v.decision_rule, v.guard_r, v.expanded_u, v.coverage_k, v.accept_low, v.accept_high,"
	  " v.p_false_accept, r.uid, v.operator FROM verdicts v JOIN sweeps s ON s.id = v.sweep_id"
	  " LEFT JOIN spec_revisions r ON r.id = v.spec_rev_id WHERE v.id > ?3 AND" NOT_PUSHED("verdicts", "v.uid")
	  " AND" PUSHED("sweeps", "s.uid") " ORDER BY v.id LIMIT ?2",
	  "INSERT INTO verdicts (uid, sweep_uid, check_name, measured, limit_low, limit_high, margin, outcome, note,"
	  " created, decision_rule, guard_r, expanded_u, coverage_k, accept_low, accept_high, p_false_accept,"
	  " spec_rev_uid, operator) VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10, $11, $12, $13, $14, $15, $16, $17,"
	  " $18, $19) ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM verdicts v JOIN sweeps s ON s.id = v.sweep_id WHERE s.status <> 'running' AND"
	  NOT_PUSHED("verdicts", "v.uid"), { { 0 } } },
	{ "inspections", PUSH_MARK,
	  "SELECT i.id, i.uid, l.uid, i.sequence, u.uid, s.uid, i.outcome, i.note, i.at, i.at_unix, i.conditional"
	  " FROM inspections i JOIN lots l ON l.id = i.lot_id LEFT JOIN units u ON u.id = i.unit_id"
	  " LEFT JOIN sweeps s ON s.id = i.sweep_id WHERE i.id > ?3 AND" NOT_PUSHED("inspections", "i.uid")
	  " AND (s.uid IS NULL OR" PUSHED("sweeps", "s.uid") ") ORDER BY i.id LIMIT ?2",
	  "INSERT INTO inspections (uid, lot_uid, sequence, unit_uid, sweep_uid, outcome, note, at, at_unix, conditional)"
	  " VALUES ($1, $2, $3, $4, $5, $6, $7, $8, $9, $10) ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM inspections i WHERE" NOT_PUSHED("inspections", "i.uid"), { { 0 } } },
	{ "reports", PUSH_MARK,
	  "SELECT r.id, r.uid, r.kind, r.subject, r.path, r.file_sha256, r.data_sha256, r.software_version, r.created"
	  " FROM reports r WHERE r.id > ?3 AND" NOT_PUSHED("reports", "r.uid") " AND NOT EXISTS (SELECT 1 FROM"
	  " report_sweeps rs JOIN sweeps s ON s.id = rs.sweep_id WHERE rs.report_id = r.id AND NOT"
	  PUSHED("sweeps", "s.uid") ") ORDER BY r.id LIMIT ?2",
	  "INSERT INTO reports (uid, kind, subject, path, file_sha256, data_sha256, software_version, created)"
	  " VALUES ($1, $2, $3, $4, $5, $6, $7, $8) ON CONFLICT (uid) DO NOTHING",
	  "SELECT count(*) FROM reports r WHERE" NOT_PUSHED("reports", "r.uid"),
	  { { "SELECT s.uid FROM report_sweeps rs JOIN sweeps s ON s.id = rs.sweep_id WHERE rs.report_id = ?1",
	      "INSERT INTO report_sweeps (report_uid, sweep_uid) SELECT * FROM unnest($1::text[], $2::text[])"
	      " ON CONFLICT DO NOTHING", NULL } } },
};
enum { N_TABLES = sizeof tables / sizeof tables[0] };

/* ---------------- turning local rows into server parameters ---------------- */

/* One local row's columns as text: REAL with 17 significant digits, so a double comes back bit for bit. */
static char *col_text(sqlite3_stmt *st, int col)
{
	char num[40];
	switch (sqlite3_column_type(st, col)) {
	case SQLITE_NULL:
		return NULL;
	case SQLITE_INTEGER:
		snprintf(num, sizeof num, "%lld", (long long)sqlite3_column_int64(st, col));
		return strdup(num);
	case SQLITE_FLOAT:
		snprintf(num, sizeof num, "%.17g", sqlite3_column_double(st, col));
		return strdup(num);
	default:
		return strdup((const char *)sqlite3_column_text(st, col));
	}
}

typedef struct sbuf {
	char *s;
	size_t len, cap;
} sbuf;

static int sb_put(sbuf *b, const char *text, size_t n)
{
	if (b->len + n + 1 > b->cap) {
		size_t cap = b->cap ? b->cap : 256;
		while (cap < b->len + n + 1)
			cap *= 2;
		char *s = realloc(b->s, cap);
		if (!s)
			return HB_ERR_NOMEM;
		b->s = s;
		b->cap = cap;
	}
	memcpy(b->s + b->len, text, n);
	b->len += n;
	b->s[b->len] = '\0';
	return HB_OK;
}

/* An element of a PostgreSQL array literal: NULL bare, anything else in double quotes with " and \ escaped. */
static int sb_element(sbuf *b, sqlite3_stmt *st, int col)
{
	if (b->len > 1 && sb_put(b, ",", 1) < 0)
		return HB_ERR_NOMEM;
	char *text = col_text(st, col);
	if (!text)
		return sqlite3_column_type(st, col) == SQLITE_NULL ? sb_put(b, "NULL", 4) : HB_ERR_NOMEM;
	int status = sb_put(b, "\"", 1);
	for (const char *p = text; status == HB_OK && *p; p++) {
		if (*p == '"' || *p == '\\')
			status = sb_put(b, "\\", 1);
		if (status == HB_OK)
			status = sb_put(b, p, 1);
	}
	free(text);
	return status == HB_OK ? sb_put(b, "\"", 1) : status;
}

/* Queues a prepared statement in the batch's pipeline (pipeline mode: the batch costs one round trip). */
static int pipe_send(hb_db *db, PGconn *conn, const char *name, int n, const char *const *params, int *sent)
{
	if (!PQsendQueryPrepared(conn, name, n, params, NULL, NULL, 0))
		return pg_error(db, conn, NULL, "sending a batch");
	(*sent)++;
	return HB_OK;
}

/* Ends the batch's pipeline: a sync point, then the result of each of the sent statements; the first
 * failure is the one reported (the statements after it are skipped by the server). */
static int pipe_finish(hb_db *db, PGconn *conn, int sent, int status)
{
	if (!PQpipelineSync(conn))
		return pg_error(db, conn, NULL, "sending a batch");
	for (int i = 0; i < sent; i++) {
		PGresult *r;
		while ((r = PQgetResult(conn)) != NULL) {
			ExecStatusType st = PQresultStatus(r);
			if (status == HB_OK && st != PGRES_COMMAND_OK && st != PGRES_TUPLES_OK)
				status = pg_error(db, conn, r, "storing a batch");
			PQclear(r);
		}
	}
	PGresult *r = PQgetResult(conn);
	if (status == HB_OK && PQresultStatus(r) != PGRES_PIPELINE_SYNC)
		status = pg_error(db, conn, r, "ending a batch");
	PQclear(r);
	if (!PQexitPipelineMode(conn) && status == HB_OK)
		status = pg_error(db, conn, NULL, "ending a batch");
	return status;
}

/* The child rows of a batch, one array literal per column (column 0: the records' identities). */
typedef struct child_acc {
	sbuf *arr;
	int ncol;         /* columns of the local query; arrays: ncol + 1 */
	long long rows;
	const char *bin;  /* binary arrays (push_child.bin), else text literals */
	bool *nulls;      /* binary: the array holds a NULL */
} child_acc;

static void acc_reset(child_acc *a)
{
	for (int k = 0; a->arr && k <= a->ncol; k++) {
		a->arr[k].len = 0;
		if (a->arr[k].s)
			a->arr[k].s[0] = '\0';
		if (a->nulls)
			a->nulls[k] = false;
	}
	a->rows = 0;
}

static void acc_free(child_acc *a)
{
	for (int k = 0; a->arr && k <= a->ncol; k++)
		free(a->arr[k].s);
	free(a->arr);
	free(a->nulls);
	a->arr = NULL;
	a->nulls = NULL;
}

/* Network byte order (PostgreSQL's binary formats). */
static int sb_u32(sbuf *b, uint32_t v)
{
	unsigned char x[4] = { (unsigned char)(v >> 24), (unsigned char)(v >> 16), (unsigned char)(v >> 8),
			       (unsigned char)v };
	return sb_put(b, (const char *)x, 4);
}

static int sb_u64(sbuf *b, uint64_t v)
{
	int status = sb_u32(b, (uint32_t)(v >> 32));
	return status == HB_OK ? sb_u32(b, (uint32_t)v) : status;
}

/* One element of a binary array: its length (-1: NULL), then its bytes. The array's header (one
 * dimension, the NULL flag, the element type, length, lower bound 1: 20 bytes) is written by acc_send
 * in the space kept at the start. */
static int bin_element(child_acc *a, int k, char type, sqlite3_stmt *st, int col, const char *text)
{
	sbuf *b = &a->arr[k];
	int status = HB_OK;
	if (b->len == 0)
		status = sb_put(b, "\0\0\0\0\0\0\0\0\0\0\0\0\0\0\0\0\0\0\0\0", 20);
	if (status != HB_OK)
		return status;
	if (!text && sqlite3_column_type(st, col) == SQLITE_NULL) {
		a->nulls[k] = true;
		return sb_u32(b, 0xffffffffu);
	}
	if (type == 'f') {
		double d = sqlite3_column_double(st, col);
		uint64_t u;
		memcpy(&u, &d, sizeof u);
		status = sb_u32(b, 8);
		return status == HB_OK ? sb_u64(b, u) : status;
	}
	if (type == 'b') {
		status = sb_u32(b, 8);
		return status == HB_OK ? sb_u64(b, (uint64_t)sqlite3_column_int64(st, col)) : status;
	}
	if (!text)
		text = (const char *)sqlite3_column_text(st, col);
	if (!text)
		return HB_ERR_NOMEM;
	size_t n = strlen(text);
	status = sb_u32(b, (uint32_t)n);
	return status == HB_OK ? sb_put(b, text, n) : status;
}

/* Fills the header kept at the start of binary array k. */
static void bin_header(child_acc *a, int k)
{
	static const uint32_t oid[] = { ['t'] = 25, ['b'] = 20, ['f'] = 701 };
	uint32_t h[5] = { 1, a->nulls[k] ? 1 : 0, oid[(unsigned char)a->bin[k]], (uint32_t)a->rows, 1 };
	unsigned char *p = (unsigned char *)a->arr[k].s;
	for (int i = 0; i < 5; i++) {
		p[4 * i] = (unsigned char)(h[i] >> 24);
		p[4 * i + 1] = (unsigned char)(h[i] >> 16);
		p[4 * i + 2] = (unsigned char)(h[i] >> 8);
		p[4 * i + 3] = (unsigned char)h[i];
	}
}

/* An array element of text (a record's identity). */
static int sb_text_element(sbuf *b, const char *text)
{
	int status = b->len > 1 ? sb_put(b, ",", 1) : HB_OK;
	if (status == HB_OK)
		status = sb_put(b, "\"", 1);
	for (const char *p = text; status == HB_OK && *p; p++) {
		if (*p == '"' || *p == '\\')
			status = sb_put(b, "\\", 1);
		if (status == HB_OK)
			status = sb_put(b, p, 1);
	}
	return status == HB_OK ? sb_put(b, "\"", 1) : status;
}

/* Adds the child rows of one record to the batch's arrays. */
static int acc_add(hb_db *db, child_acc *a, sqlite3_stmt *st, long long local_id, const char *uid, long long *rows_sent)
{
	int status = HB_OK;
	if (!a->arr) {
		a->ncol = sqlite3_column_count(st);
		a->arr = calloc((size_t)a->ncol + 1, sizeof *a->arr);
		a->nulls = calloc((size_t)a->ncol + 1, sizeof *a->nulls);
		if (!a->arr || !a->nulls)
			return db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	}
	for (int k = 0; status == HB_OK && !a->bin && k <= a->ncol; k++)
		if (a->arr[k].len == 0)
			status = sb_put(&a->arr[k], "{", 1);
	sqlite3_reset(st);
	sqlite3_bind_int64(st, 1, local_id);
	int rc = SQLITE_OK;
	while (status == HB_OK && (rc = sqlite3_step(st)) == SQLITE_ROW) {
		if (a->bin) {
			status = bin_element(a, 0, 't', st, 0, uid);
			for (int k = 0; status == HB_OK && k < a->ncol; k++)
				status = bin_element(a, k + 1, a->bin[k + 1], st, k, NULL);
			a->rows++;
			(*rows_sent)++;
			continue;
		}
		status = sb_text_element(&a->arr[0], uid);
		for (int k = 0; status == HB_OK && k < a->ncol; k++)
			status = sb_element(&a->arr[k + 1], st, k);
		a->rows++;
		(*rows_sent)++;
	}
	sqlite3_reset(st);
	if (status == HB_OK && rc != SQLITE_DONE)
		return db_fail(db, rc, "reading records to push");
	if (status < 0 && status != HB_ERR_DB)
		return db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	return status;
}

/* Queues the batch's child rows of one kind as one statement. */
static int acc_send(hb_db *db, PGconn *conn, child_acc *a, const char *name, int *sent)
{
	if (a->rows == 0)
		return HB_OK;
	const char **params = calloc((size_t)a->ncol + 1, sizeof *params);
	int *lengths = calloc((size_t)a->ncol + 1, sizeof *lengths);
	int *formats = calloc((size_t)a->ncol + 1, sizeof *formats);
	if (!params || !lengths || !formats) {
		free(params);
		free(lengths);
		free(formats);
		return db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	}
	int status = HB_OK;
	for (int k = 0; status == HB_OK && k <= a->ncol; k++) {
		if (a->bin)
			bin_header(a, k);
		else
			status = sb_put(&a->arr[k], "}", 1);
		params[k] = a->arr[k].s;
		lengths[k] = (int)a->arr[k].len;
		formats[k] = a->bin ? 1 : 0;
	}
	if (status == HB_OK && !PQsendQueryPrepared(conn, name, a->ncol + 1, params, lengths, formats, 0))
		status = pg_error(db, conn, NULL, "sending a batch");
	else if (status == HB_OK)
		(*sent)++;
	else
		status = db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	free(params);
	free(lengths);
	free(formats);
	acc_reset(a);
	return status;
}

/* PUSH_ARRAY: one record's parameters appended to the batch's arrays (rows->arr[0..n-1]). */
static int rows_add(hb_db *db, child_acc *rows, char **vals, int n)
{
	if (!rows->arr) {
		rows->ncol = n - 1;
		rows->arr = calloc((size_t)n, sizeof *rows->arr);
		if (!rows->arr)
			return db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	}
	int status = HB_OK;
	for (int k = 0; status == HB_OK && k < n; k++) {
		sbuf *b = &rows->arr[k];
		if (b->len == 0)
			status = sb_put(b, "{", 1);
		if (status == HB_OK && !vals[k])
			status = b->len > 1 ? sb_put(b, ",NULL", 5) : sb_put(b, "NULL", 4);
		else if (status == HB_OK)
			status = sb_text_element(b, vals[k]);
	}
	rows->rows++;
	return status == HB_OK ? HB_OK : db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
}

/* The rows of one record's inline child as one array literal per column, appended at out (*np counts). */
static int inline_arrays(hb_db *db, sqlite3_stmt *st, long long local_id, char **out, int *np)
{
	int ncol = sqlite3_column_count(st);
	sbuf *arr = calloc((size_t)ncol, sizeof *arr);
	int status = arr ? HB_OK : HB_ERR_NOMEM;
	for (int k = 0; status == HB_OK && k < ncol; k++)
		status = sb_put(&arr[k], "{", 1);
	sqlite3_reset(st);
	sqlite3_bind_int64(st, 1, local_id);
	int rc = SQLITE_OK;
	while (status == HB_OK && (rc = sqlite3_step(st)) == SQLITE_ROW)
		for (int k = 0; status == HB_OK && k < ncol; k++)
			status = sb_element(&arr[k], st, k);
	sqlite3_reset(st);
	for (int k = 0; status == HB_OK && k < ncol; k++)
		status = sb_put(&arr[k], "}", 1);
	for (int k = 0; arr && k < ncol; k++) {
		if (status == HB_OK)
			out[k] = arr[k].s;
		else
			free(arr[k].s);
	}
	free(arr);
	if (status != HB_OK)
		return db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	if (rc != SQLITE_DONE)
		return db_fail(db, rc, "reading records to push");
	*np += ncol;
	return HB_OK;
}

/* Notes the batch's identities (with the versions sent) as on the server; a crash before this only
 * means they are sent again. An edit made while the batch travelled has another version: it waits. */
static int mark_pushed(hb_db *db, const char *server, const char *tbl, char **keys, char **vers, int n)
{
	int status = db_write_begin(db, "noting what the server holds");
	if (status < 0)
		return status;
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn,
				    "INSERT INTO sync_pushed (server, tbl, uid, ver) VALUES (?1, ?2, ?3, coalesce(?4, ''))"
				    " ON CONFLICT (server, tbl, uid) DO UPDATE SET ver = excluded.ver",
				    -1, &st, NULL);
	for (int i = 0; rc == SQLITE_OK && i < n; i++) {
		sqlite3_bind_text(st, 1, server, -1, SQLITE_STATIC);
		sqlite3_bind_text(st, 2, tbl, -1, SQLITE_STATIC);
		sqlite3_bind_text(st, 3, keys[i], -1, SQLITE_STATIC);
		sqlite3_bind_text(st, 4, vers[i], -1, SQLITE_STATIC);
		rc = sqlite3_step(st);
		rc = rc == SQLITE_DONE ? SQLITE_OK : rc;
		sqlite3_reset(st);
	}
	sqlite3_finalize(st);
	if (rc != SQLITE_OK) {
		status = db_fail(db, rc, "noting what the server holds");
		db_write_rollback(db);
		return status;
	}
	return db_write_commit(db, "noting what the server holds");
}

enum { PUSH_BATCH = 500 };

/* Test hook: HB_SYNC_FAIL_AFTER=N stops the push right after the N-th batch the server committed, before
 * the station notes it, the worst moment for a crash. */
static long fail_after(void)
{
	const char *e = getenv("HB_SYNC_FAIL_AFTER");
	return e && *e ? strtol(e, NULL, 10) : -1;
}

static int push_table_rows(hb_db *db, PGconn *conn, int ti, const char *server, hb_db_sync_stats *stats,
			   long *batches_left)
{
	const push_table *t = &tables[ti];
	char name[32];
	snprintf(name, sizeof name, "t%d", ti);
	sqlite3_stmt *st = NULL, *child[2] = { NULL, NULL };
	child_acc acc[2] = { { .bin = t->children[0].bin }, { .bin = t->children[1].bin } };
	child_acc rows = { 0 };
	int rc = sqlite3_prepare_v2(db->conn, t->local_sql, -1, &st, NULL);
	for (int c = 0; rc == SQLITE_OK && c < 2 && t->children[c].local_sql; c++)
		rc = sqlite3_prepare_v2(db->conn, t->children[c].local_sql, -1, &child[c], NULL);
	int status = rc == SQLITE_OK ? HB_OK : db_fail(db, rc, "reading records to push");
	int ncol = st ? sqlite3_column_count(st) : 0;
	/* the server statement's parameters: columns 1.. of the local query (less key and version), then
	 * one array per column of an inline child */
	int nparam = ncol - 1 - ((t->flags & PUSH_VER) ? 2 : 0);
	int nextra = 0;
	for (int c = 0; c < 2 && child[c]; c++)
		if (!t->children[c].pg_sql)
			nextra += sqlite3_column_count(child[c]);
	char **vals = calloc((size_t)ncol + (size_t)nextra + 1, sizeof *vals);
	char **keys = calloc(PUSH_BATCH, sizeof *keys);
	char **vers = calloc(PUSH_BATCH, sizeof *vers);
	if (status == HB_OK && (!vals || !keys || !vers))
		status = db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
	long long after = 0;
	while (status == HB_OK) {
		sqlite3_reset(st);
		sqlite3_bind_text(st, 1, server, -1, SQLITE_STATIC);
		sqlite3_bind_int(st, 2, PUSH_BATCH);
		sqlite3_bind_int64(st, 3, after);
		int n = 0, sent = 0;
		/* one server transaction per batch, sent in one pipeline */
		if (!PQenterPipelineMode(conn) || !PQsendQueryParams(conn, "BEGIN", 0, NULL, NULL, NULL, NULL, 0)) {
			status = pg_error(db, conn, NULL, "starting a batch");
			break;
		}
		sent++;
		while (status == HB_OK && (rc = sqlite3_step(st)) == SQLITE_ROW) {
			after = sqlite3_column_int64(st, 0);
			for (int k = 1; k < ncol; k++)
				vals[k - 1] = col_text(st, k);
			if (t->flags & PUSH_VER) {
				keys[n] = vals[nparam];
				vers[n] = vals[nparam + 1];
				vals[nparam] = vals[nparam + 1] = NULL;
			} else if (t->flags & PUSH_MARK) {
				keys[n] = vals[0] ? strdup(vals[0]) : NULL;
				if (vals[0] && !keys[n])
					status = db_error(db, HB_ERR_NOMEM, "out of memory pushing records");
			}
			int np = nparam;
			for (int c = 0; status == HB_OK && c < 2 && child[c]; c++)
				if (!t->children[c].pg_sql)
					status = inline_arrays(db, child[c], after, vals + np, &np);
			if (status == HB_OK && (t->flags & PUSH_ARRAY))
				status = rows_add(db, &rows, vals, np);
			else if (status == HB_OK)
				status = pipe_send(db, conn, name, np, (const char *const *)vals, &sent);
			for (int c = 0; status == HB_OK && c < 2 && child[c]; c++) {
				long long ignored = 0;
				if (t->children[c].pg_sql)
					status = acc_add(db, &acc[c], child[c], after, vals[0],
							 c == 0 && strcmp(t->name, "sweeps") == 0 ? &stats->points : &ignored);
			}
			for (int k = 0; k < ncol - 1 + nextra; k++) {
				free(vals[k]);
				vals[k] = NULL;
			}
			n++;
		}
		if (status == HB_OK && rc != SQLITE_DONE)
			status = db_fail(db, rc, "reading records to push");
		sqlite3_reset(st);
		/* the records before their child rows, which find them by identity */
		if (status == HB_OK && n > 0 && (t->flags & PUSH_ARRAY))
			status = acc_send(db, conn, &rows, name, &sent);
		acc_reset(&rows);
		for (int c = 0; status == HB_OK && c < 2 && child[c] && t->children[c].pg_sql; c++) {
			char cname[32];
			snprintf(cname, sizeof cname, "t%dc%d", ti, c);
			status = acc_send(db, conn, &acc[c], cname, &sent);
		}
		acc_reset(&acc[0]);
		acc_reset(&acc[1]);
		int local = status;
		if (PQsendQueryParams(conn, local == HB_OK ? "COMMIT" : "ROLLBACK", 0, NULL, NULL, NULL, NULL, 0))
			sent++;
		status = pipe_finish(db, conn, sent, status);
		if (status != HB_OK && local == HB_OK)
			/* the server refused part of the batch: its transaction is left aborted */
			PQclear(PQexec(conn, "ROLLBACK"));
		if (status == HB_OK && n > 0) {
			stats->batches++;
			stats->count[ti] += n;
			if (*batches_left > 0 && --*batches_left == 0)
				status = db_error(db, HB_ERR_INTERRUPTED,
						  "push stopped after the batch the test hook HB_SYNC_FAIL_AFTER named");
		}
		if (status == HB_OK && (t->flags & PUSH_MARK) && n > 0)
			status = mark_pushed(db, server, t->name, keys, vers, n);
		for (int i = 0; i < PUSH_BATCH && keys && vers; i++) {
			free(keys[i]);
			free(vers[i]);
			keys[i] = vers[i] = NULL;
		}
		if (n < PUSH_BATCH)
			break;
	}
	free(vals);
	free(keys);
	free(vers);
	sqlite3_finalize(st);
	sqlite3_finalize(child[0]);
	sqlite3_finalize(child[1]);
	acc_free(&acc[0]);
	acc_free(&acc[1]);
	acc_free(&rows);
	return status;
}

static void stats_names(hb_db_sync_stats *stats)
{
	stats->n = N_TABLES;
	for (int i = 0; i < N_TABLES; i++)
		stats->table[i] = tables[i].name;
}

static int prepare_push(hb_db *db, PGconn *conn)
{
	int status = HB_OK;
	for (int i = 0; status == HB_OK && i < N_TABLES; i++) {
		char name[32];
		snprintf(name, sizeof name, "t%d", i);
		status = db_pg_prepare(db, conn, name, tables[i].pg_sql, "preparing the push");
		for (int c = 0; status == HB_OK && c < 2 && tables[i].children[c].pg_sql; c++) {
			snprintf(name, sizeof name, "t%dc%d", i, c);
			status = db_pg_prepare(db, conn, name, tables[i].children[c].pg_sql, "preparing the push");
		}
	}
	return status;
}

static double now_s(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

int hb_db_sync_push(hb_db *db, const char *url, hb_db_sync_stats *stats)
{
	if (!db || !url || !stats)
		return HB_ERR_ARG;
	memset(stats, 0, sizeof *stats);
	stats_names(stats);
	double t0 = now_s();
	PGconn *conn = NULL;
	int status = db_pg_connect(db, url, stats->server_uid, &conn);
	if (status < 0)
		return status;
	status = prepare_push(db, conn);
	long left = fail_after();
	for (int i = 0; status == HB_OK && i < N_TABLES; i++)
		status = push_table_rows(db, conn, i, stats->server_uid, stats, &left);
	PQfinish(conn);
	stats->seconds = now_s() - t0;
	return status;
}

/* Counts what a push would send to the server at url (asked only for its identity). */
int hb_db_sync_status(hb_db *db, const char *url, hb_db_sync_stats *stats)
{
	if (!db || !url || !stats)
		return HB_ERR_ARG;
	memset(stats, 0, sizeof *stats);
	stats_names(stats);
	PGconn *conn = NULL;
	int status = db_pg_connect(db, url, stats->server_uid, &conn);
	if (status < 0)
		return status;
	PQfinish(conn);
	for (int i = 0; status == HB_OK && i < N_TABLES; i++) {
		const char *sql = tables[i].count_sql ? tables[i].count_sql : NULL;
		if (!sql) {
			stats->count[i] = -1;
			continue;
		}
		sqlite3_stmt *st = NULL;
		int rc = sqlite3_prepare_v2(db->conn, sql, -1, &st, NULL);
		if (rc == SQLITE_OK) {
			sqlite3_bind_text(st, 1, stats->server_uid, -1, SQLITE_STATIC);
			rc = sqlite3_step(st);
		}
		if (rc == SQLITE_ROW)
			stats->count[i] = sqlite3_column_int64(st, 0);
		else
			status = db_fail(db, rc, "counting what waits for the server");
		sqlite3_finalize(st);
	}
	static const char *const extra[] = {
		"SELECT count(*) FROM points p JOIN sweeps s ON s.id = p.sweep_id WHERE s.status <> 'running' AND"
		NOT_PUSHED("sweeps", "s.uid"),
		"SELECT count(*) FROM sweeps WHERE status = 'running' AND ?1 IS NOT NULL",
	};
	long long *into[] = { &stats->points, &stats->running };
	for (int i = 0; status == HB_OK && i < 2; i++) {
		sqlite3_stmt *st = NULL;
		int rc = sqlite3_prepare_v2(db->conn, extra[i], -1, &st, NULL);
		if (rc == SQLITE_OK) {
			sqlite3_bind_text(st, 1, stats->server_uid, -1, SQLITE_STATIC);
			rc = sqlite3_step(st);
		}
		if (rc == SQLITE_ROW)
			*into[i] = sqlite3_column_int64(st, 0);
		else
			status = db_fail(db, rc, "counting what waits for the server");
		sqlite3_finalize(st);
	}
	return status;
}
