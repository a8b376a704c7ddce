/* db/db_trace.c - traceability in the store: identity functions and triggers, spec revisions, append-only verdicts, filed reports */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <pwd.h>
#include <unistd.h>

#include "../common/hb_text.h"
#include "../common/hb_uid.h"
#include "db_internal.h"

/* ---------------- identities ---------------- */

static void sql_uid(sqlite3_context *ctx, int argc, sqlite3_value **argv)
{
	(void)argc;
	(void)argv;
	char uid[HB_UID_TEXT_LEN];
	if (hb_uid_new(uid) != HB_OK) {
		sqlite3_result_error(ctx, "no random bits for a record identity (getrandom failed)", -1);
		return;
	}
	sqlite3_result_text(ctx, uid, -1, SQLITE_TRANSIENT);
}

static void sql_uid_at(sqlite3_context *ctx, int argc, sqlite3_value **argv)
{
	(void)argc;
	/* a record without a readable time gets the epoch: still unique, visibly undated */
	int64_t ms = sqlite3_value_type(argv[0]) == SQLITE_NULL ? 0 : sqlite3_value_int64(argv[0]);
	char uid[HB_UID_TEXT_LEN];
	if (hb_uid_at(ms, uid) != HB_OK) {
		sqlite3_result_error(ctx, "no random bits for a record identity (getrandom failed)", -1);
		return;
	}
	sqlite3_result_text(ctx, uid, -1, SQLITE_TRANSIENT);
}

int db_trace_register(hb_db *db)
{
	/* Not SQLITE_DETERMINISTIC: every call gives a new identity. */
	int rc = sqlite3_create_function(db->conn, "hb_uid", 0, SQLITE_UTF8, NULL, sql_uid, NULL, NULL);
	if (rc == SQLITE_OK)
		rc = sqlite3_create_function(db->conn, "hb_uid_at", 1, SQLITE_UTF8, NULL, sql_uid_at, NULL, NULL);
	return rc == SQLITE_OK ? HB_OK : db_fail(db, rc, "registering the identity functions");
}

/* Table and column of each kind's identity, and the column its local id is in. */
static const struct {
	const char *name, *table, *column, *key;
} records[HB_DB_REC_COUNT] = {
	[HB_DB_REC_PART] = { "part", "parts", "uid", "id" },
	[HB_DB_REC_SPEC_REVISION] = { "spec-revision", "spec_revisions", "uid", "id" },
	[HB_DB_REC_UNIT] = { "unit", "units", "uid", "id" },
	[HB_DB_REC_LOT] = { "lot", "lots", "uid", "id" },
	[HB_DB_REC_LOT_DECISION] = { "lot-decision", "lot_decisions", "uid", "id" },
	[HB_DB_REC_SWEEP] = { "sweep", "sweeps", "uid", "id" },
	[HB_DB_REC_POINTS] = { "points", "sweeps", "points_uid", "id" },
	[HB_DB_REC_FIT] = { "fit", "fits", "uid", "id" },
	[HB_DB_REC_VERDICT] = { "verdict", "verdicts", "uid", "id" },
	[HB_DB_REC_INSPECTION] = { "inspection", "inspections", "uid", "id" },
	[HB_DB_REC_REPORT] = { "report", "reports", "uid", "id" },
};

const char *hb_db_record_name(hb_db_record kind)
{
	return (unsigned)kind < HB_DB_REC_COUNT ? records[kind].name : "?";
}

int db_trace_attach(hb_db *db)
{
	int version = 0;
	int status = hb_db_schema_version(db, &version);
	if (status < 0 || version < DB_STEP_TRACE)
		return status;
	/* TEMP triggers live in this connection only: a new record gets its identity
	 * in the statement that makes it, from hb_uid() of this process. */
	static const char *const tables[] = { "parts", "spec_revisions", "units", "lots", "lot_decisions",
					      "fits", "verdicts", "inspections" };
	char sql[600];
	for (size_t i = 0; i < sizeof tables / sizeof *tables; i++) {
		snprintf(sql, sizeof sql,
			 "CREATE TEMP TRIGGER IF NOT EXISTS hb_uid_%s AFTER INSERT ON main.%s WHEN NEW.uid IS NULL"
			 " BEGIN UPDATE %s SET uid = hb_uid() WHERE rowid = NEW.rowid; END",
			 tables[i], tables[i], tables[i]);
		int rc = sqlite3_exec(db->conn, sql, NULL, NULL, NULL);
		if (rc != SQLITE_OK)
			return db_fail(db, rc, "preparing record identities");
	}
	int rc = sqlite3_exec(db->conn,
			      "CREATE TEMP TRIGGER IF NOT EXISTS hb_uid_sweeps AFTER INSERT ON main.sweeps"
			      " WHEN NEW.uid IS NULL OR NEW.points_uid IS NULL BEGIN UPDATE sweeps SET"
			      " uid = coalesce(uid, hb_uid()), points_uid = coalesce(points_uid, hb_uid())"
			      " WHERE rowid = NEW.rowid; END",
			      NULL, NULL, NULL);
	return rc == SQLITE_OK ? HB_OK : db_fail(db, rc, "preparing record identities");
}

void db_login_name(char *buf, size_t cap)
{
	/* the login name the shell gives, else the account's, else "-"; each
	 * only when it is one line of UTF-8 that fits (a $USER with terminal
	 * escapes is never stored, nor cut) */
	struct passwd *pw = getpwuid(getuid());
	const char *cand[] = { getenv("USER"), getenv("LOGNAME"), pw ? pw->pw_name : NULL };
	const char *user = "-";
	for (size_t i = 0; i < sizeof cand / sizeof cand[0]; i++) {
		if (cand[i] && *cand[i] && hb_text_check("operator", cand[i], cap - 1, NULL, 0) == HB_OK) {
			user = cand[i];
			break;
		}
	}
	snprintf(buf, cap, "%s", user);
}

int hb_db_uid_of(hb_db *db, hb_db_record kind, int64_t id, char uid[HB_DB_UID_LEN])
{
	if (!db || !uid || (unsigned)kind >= HB_DB_REC_COUNT)
		return HB_ERR_ARG;
	int mirrored = db_mirror_record(db, kind, id);
	if (mirrored < 0)
		return mirrored;
	uid[0] = '\0';
	char sql[200];
	snprintf(sql, sizeof sql, "SELECT %s FROM %s WHERE %s = ?1", records[kind].column, records[kind].table,
		 records[kind].key);
	sqlite3_stmt *st = db_prepare_cached(db, &db->uid_of[kind], sql);
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, id);
	int rc = sqlite3_step(st);
	int status = HB_OK;
	if (rc == SQLITE_ROW)
		db_col_text(st, 0, uid, HB_DB_UID_LEN);
	else if (rc == SQLITE_DONE)
		status = db_error(db, HB_ERR_NOTFOUND, "no %s %lld in %s", records[kind].name, (long long)id, db->path);
	else
		status = db_fail(db, rc, "reading an identity");
	db_release(st);
	return status;
}

int hb_db_uid_find(hb_db *db, hb_db_record kind, const char *uid, int64_t *id)
{
	if (!db || !uid || !id || (unsigned)kind >= HB_DB_REC_COUNT)
		return HB_ERR_ARG;
	int mirrored = db_mirror_uid(db, kind, uid);
	if (mirrored < 0)
		return mirrored;
	/* identities are stored in lower case; one typed in capitals is the same identity */
	char low[HB_DB_UID_LEN];
	size_t n = 0;
	for (; uid[n] && n + 1 < sizeof low; n++)
		low[n] = (char)(uid[n] >= 'A' && uid[n] <= 'F' ? uid[n] - 'A' + 'a' : uid[n]);
	low[n] = '\0';
	char sql[200];
	snprintf(sql, sizeof sql, "SELECT %s FROM %s WHERE %s = ?1", records[kind].key, records[kind].table,
		 records[kind].column);
	sqlite3_stmt *st = db_prepare_cached(db, &db->uid_find[kind], sql);
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, low);
	int rc = sqlite3_step(st);
	int status = HB_OK;
	if (rc == SQLITE_ROW)
		*id = sqlite3_column_int64(st, 0);
	else if (rc == SQLITE_DONE)
		status = db_error(db, HB_ERR_NOTFOUND, "no %s with identity %s in %s", records[kind].name, uid, db->path);
	else
		status = db_fail(db, rc, "looking up an identity");
	db_release(st);
	return status;
}

int hb_db_resolve_id(hb_db *db, hb_db_record kind, const char *text, int64_t *id)
{
	if (!db || !text || !id)
		return HB_ERR_ARG;
	char *end = NULL;
	long long v = strtoll(text, &end, 10);
	if (*text && end && !*end && v > 0) {
		*id = v;
		return HB_OK;
	}
	uint8_t b[16];
	if (hb_uid_parse(text, b) != HB_OK)
		return db_error(db, HB_ERR_ARG, "%s '%s' is neither a positive integer nor a global identity "
				"(8-4-4-4-12 hexadecimal)", hb_db_record_name(kind), text);
	return hb_db_uid_find(db, kind, text, id);
}

/* ---------------- spec revisions ---------------- */

/* The revision's columns in PART_COLUMNS' order (db_read_part_row), then its own. */
#define REV_COLUMNS                                                                                          \
	"r.part_id, p.part_number, r.description, r.maker, r.nominal_h, r.tolerance, r.test_freq_hz,"          \
	" r.test_level, r.test_level_kind, r.sat_current_a, r.sat_drop, r.rated_current_a, r.dcr_max_ohm,"     \
	" r.turns, r.ae_m2, r.le_m, r.window_m, r.toroid_od_m, r.toroid_id_m, r.toroid_h_m, r.mu_i, r.bsat_t," \
	" r.created, r.created, r.decision_rule, r.guard_r, r.id, r.revision, r.uid"

static void read_revision(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_spec_revision *r = row;
	memset(r, 0, sizeof *r);
	db_read_part_row(st, &r->spec, NULL);
	r->part_id = r->spec.id;
	snprintf(r->created, sizeof r->created, "%s", r->spec.created);
	r->id = sqlite3_column_int64(st, 26);
	r->revision = sqlite3_column_int(st, 27);
	db_col_text(st, 28, r->uid, sizeof r->uid);
}

int hb_db_spec_revision_get(hb_db *db, int64_t part_id, int revision, hb_db_spec_revision *out)
{
	if (!db || !out || revision < 0)
		return HB_ERR_ARG;
	int mirrored = db_mirror_parts(db, &part_id, 1);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_SPEC_REV_LATEST,
		"SELECT " REV_COLUMNS " FROM spec_revisions r JOIN parts p ON p.id = r.part_id"
		" WHERE r.part_id = ?1 AND (?2 = 0 OR r.revision = ?2) ORDER BY r.revision DESC LIMIT 1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, part_id);
	sqlite3_bind_int(st, 2, revision);
	char what[64];
	snprintf(what, sizeof what, "%d of part id %lld", revision, (long long)part_id);
	return db_read_one(db, st, read_revision, out, NULL, "spec revision", what, "reading a spec revision");
}

int hb_db_spec_revision_get_id(hb_db *db, int64_t spec_rev_id, hb_db_spec_revision *out)
{
	if (!db || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_record(db, HB_DB_REC_SPEC_REVISION, spec_rev_id);
	if (mirrored < 0)
		return mirrored;
	sqlite3_stmt *st = db_stmt(db, ST_SPEC_REV_GET,
		"SELECT " REV_COLUMNS " FROM spec_revisions r JOIN parts p ON p.id = r.part_id WHERE r.id = ?1");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, spec_rev_id);
	char what[32];
	snprintf(what, sizeof what, "id %lld", (long long)spec_rev_id);
	return db_read_one(db, st, read_revision, out, NULL, "spec revision", what, "reading a spec revision");
}

/* ---------------- append-only verdicts ---------------- */

int db_verdict_append(hb_db *db, hb_db_verdict *v)
{
	sqlite3_stmt *st = db_stmt(db, ST_VERDICT_APPEND,
		"INSERT INTO verdicts (sweep_id, check_name, measured, limit_low, limit_high, margin, outcome,"
		" note, created, decision_rule, guard_r, expanded_u, coverage_k, accept_low, accept_high, p_false_accept,"
		" operator) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12, ?13, ?14, ?15, ?16, ?17)"
		" RETURNING id");
	if (!st)
		return HB_ERR_DB;
	db_iso_time(db_now(), v->created, sizeof v->created);
	/* who ran the judgement */
	if (!v->operator_name[0])
		db_login_name(v->operator_name, sizeof v->operator_name);
	sqlite3_bind_int64(st, 1, v->sweep_id);
	db_bind_text(st, 2, v->check_name);
	db_bind_real(st, 3, v->measured);
	db_bind_real(st, 4, v->limit_low);
	db_bind_real(st, 5, v->limit_high);
	db_bind_real(st, 6, v->margin);
	db_bind_text(st, 7, hb_db_outcome_name(v->outcome));
	db_bind_text(st, 8, v->note);
	db_bind_text(st, 9, v->created);
	db_bind_text(st, 10, v->decision_rule[0] ? v->decision_rule : "simple");
	db_bind_real(st, 11, v->guard_r);
	db_bind_real(st, 12, v->expanded_u);
	db_bind_real(st, 13, v->coverage_k);
	db_bind_real(st, 14, v->accept_low);
	db_bind_real(st, 15, v->accept_high);
	db_bind_real(st, 16, v->p_false_accept);
	db_bind_text(st, 17, v->operator_name);
	v->superseded_by = 0;
	return db_write_one(db, st, "storing a verdict", &v->id, NULL);
}

static void read_verdict_v7(sqlite3_stmt *st, void *row, const void *ctx)
{
	hb_db_verdict *v = row;
	db_verdict_columns(st, v, *(const int64_t *)ctx);
	db_col_text(st, 15, v->uid, sizeof v->uid);
	db_col_text(st, 16, v->created, sizeof v->created);
	db_col_text(st, 17, v->operator_name, sizeof v->operator_name);
	v->spec_rev_id = sqlite3_column_int64(st, 18);
	v->spec_revision = sqlite3_column_int(st, 19);
	v->superseded_by = sqlite3_column_int64(st, 20);
}

#define VERDICT_V7_SELECT                                                                                     \
	"SELECT v.id, v.check_name, v.measured, v.limit_low, v.limit_high, v.margin, v.outcome, v.note,"       \
	" v.decision_rule, v.guard_r, v.expanded_u, v.coverage_k, v.accept_low, v.accept_high, v.p_false_accept," \
	" v.uid, v.created, v.operator, v.spec_rev_id, r.revision, v.superseded_by"                             \
	" FROM verdicts v LEFT JOIN spec_revisions r ON r.id = v.spec_rev_id WHERE v.sweep_id = ?1"

int db_verdict_list_v7(hb_db *db, int64_t sweep_id, bool all, hb_db_verdict **out, size_t *count)
{
	sqlite3_stmt *st = all ? db_stmt(db, ST_VERDICT_ALL, VERDICT_V7_SELECT " ORDER BY v.check_name, v.id") :
				 db_stmt(db, ST_VERDICT_INFORCE,
					 VERDICT_V7_SELECT " AND v.superseded_by IS NULL ORDER BY v.check_name");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, sweep_id);
	return db_read_all(db, st, read_verdict_v7, &sweep_id, sizeof **out, "listing verdicts", (void **)out, count);
}

int hb_db_verdict_list_all(hb_db *db, int64_t sweep_id, hb_db_verdict **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_sweeps(db, &sweep_id, 1);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	if (db->old_version && db->old_version < DB_STEP_TRACE)
		return hb_db_verdict_list(db, sweep_id, out, count);
	return db_verdict_list_v7(db, sweep_id, true, out, count);
}

/* ---------------- lot decisions ---------------- */

static void read_lot_decision(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_lot_decision_rec *r = row;
	memset(r, 0, sizeof *r);
	r->id = sqlite3_column_int64(st, 0);
	r->lot_id = sqlite3_column_int64(st, 1);
	db_col_text(st, 2, r->uid, sizeof r->uid);
	const char *d = (const char *)sqlite3_column_text(st, 3);
	r->decision = d && strcmp(d, "reject") == 0 ? HB_DB_LOT_REJECT : HB_DB_LOT_ACCEPT;
	db_col_text(st, 4, r->decided, sizeof r->decided);
	r->sample_size = (long)sqlite3_column_int64(st, 5);
	r->accept_number = (long)sqlite3_column_int64(st, 6);
	r->reject_number = (long)sqlite3_column_int64(st, 7);
}

int hb_db_lot_decision_list(hb_db *db, int64_t lot_id, hb_db_lot_decision_rec **out, size_t *count)
{
	if (!db || !out || !count)
		return HB_ERR_ARG;
	int mirrored = db_mirror_lots(db, &lot_id, 1);
	if (mirrored < 0)
		return mirrored;
	*out = NULL;
	*count = 0;
	sqlite3_stmt *st = db_stmt(db, ST_LOT_DECISIONS,
		"SELECT id, lot_id, uid, decision, decided_at, sample_size, accept_number, reject_number"
		" FROM lot_decisions WHERE lot_id = ?1 ORDER BY id");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, lot_id);
	return db_read_all(db, st, read_lot_decision, NULL, sizeof **out, "listing lot decisions", (void **)out, count);
}

void hb_db_lot_decisions_free(hb_db_lot_decision_rec *recs)
{
	free(recs);
}

/* ---------------- filed reports ---------------- */

int hb_db_report_put(hb_db *db, hb_db_report *r)
{
	if (!db || !r || (r->n_sweeps && !r->sweep_ids))
		return HB_ERR_ARG;
	if (!hb_uid_is_v7(r->uid))
		return db_error(db, HB_ERR_ARG, "report number '%s' is not a global identity", r->uid);
	if (strlen(r->data_sha256) != 64)
		return db_error(db, HB_ERR_ARG, "report %s: no data hash", r->uid);
	if (db->pg)
		return db_pg_report_put(db, r);
	int status = db_write_begin(db, "storing a report record");
	if (status < 0)
		return status;
	sqlite3_stmt *st = db_stmt(db, ST_REPORT_PUT,
		"INSERT INTO reports (uid, kind, subject, path, file_sha256, data_sha256, software_version, created)"
		" VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8) RETURNING id");
	if (!st) {
		db_write_rollback(db);
		return HB_ERR_DB;
	}
	db_iso_time(db_now(), r->created, sizeof r->created);
	db_bind_text(st, 1, r->uid);
	db_bind_text(st, 2, r->kind);
	db_bind_text(st, 3, r->subject);
	db_bind_text(st, 4, r->path);
	db_bind_text(st, 5, r->file_sha256);
	db_bind_text(st, 6, r->data_sha256);
	db_bind_text(st, 7, r->software_version);
	db_bind_text(st, 8, r->created);
	int rc = sqlite3_step(st);
	if (rc == SQLITE_ROW) {
		r->id = sqlite3_column_int64(st, 0);
		rc = sqlite3_step(st);
	}
	db_release(st);
	if (rc != SQLITE_DONE) {
		status = db_fail(db, rc, "storing a report record");
		db_write_rollback(db);
		return status;
	}
	for (size_t i = 0; i < r->n_sweeps; i++) {
		st = db_stmt(db, ST_REPORT_SWEEP_PUT,
			     "INSERT OR IGNORE INTO report_sweeps (report_id, sweep_id) VALUES (?1, ?2)");
		if (!st) {
			db_write_rollback(db);
			return HB_ERR_DB;
		}
		sqlite3_bind_int64(st, 1, r->id);
		sqlite3_bind_int64(st, 2, r->sweep_ids[i]);
		rc = sqlite3_step(st);
		db_release(st);
		if (rc != SQLITE_DONE) {
			status = db_fail(db, rc, "storing a report's sweeps");
			db_write_rollback(db);
			return status;
		}
	}
	return db_write_commit(db, "storing a report record");
}

static void read_report(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	hb_db_report *r = row;
	r->id = sqlite3_column_int64(st, 0);
	db_col_text(st, 1, r->uid, sizeof r->uid);
	db_col_text(st, 2, r->kind, sizeof r->kind);
	db_col_text(st, 3, r->subject, sizeof r->subject);
	db_col_text(st, 4, r->path, sizeof r->path);
	db_col_text(st, 5, r->file_sha256, sizeof r->file_sha256);
	db_col_text(st, 6, r->data_sha256, sizeof r->data_sha256);
	db_col_text(st, 7, r->software_version, sizeof r->software_version);
	db_col_text(st, 8, r->created, sizeof r->created);
}

static void read_sweep_id(sqlite3_stmt *st, void *row, const void *ctx)
{
	(void)ctx;
	*(int64_t *)row = sqlite3_column_int64(st, 0);
}

int hb_db_report_get(hb_db *db, const char *uid, hb_db_report *out)
{
	if (!db || !uid || !out)
		return HB_ERR_ARG;
	int mirrored = db_mirror_report(db, uid);
	if (mirrored < 0)
		return mirrored;
	memset(out, 0, sizeof *out);
	sqlite3_stmt *st = db_stmt(db, ST_REPORT_GET,
		"SELECT id, uid, kind, subject, path, file_sha256, data_sha256, software_version, created"
		" FROM reports WHERE uid = lower(?1)");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, uid);
	int status = db_read_one(db, st, read_report, out, NULL, "report", uid, "reading a report record");
	if (status != HB_OK)
		return status;
	st = db_stmt(db, ST_REPORT_SWEEPS, "SELECT sweep_id FROM report_sweeps WHERE report_id = ?1 ORDER BY sweep_id");
	if (!st)
		return HB_ERR_DB;
	sqlite3_bind_int64(st, 1, out->id);
	void *ids = NULL;
	status = db_read_all(db, st, read_sweep_id, NULL, sizeof(int64_t), "reading a report's sweeps", &ids,
			     &out->n_sweeps);
	out->sweep_ids = ids;
	return status;
}

void hb_db_report_clear(hb_db_report *r)
{
	if (!r)
		return;
	free(r->sweep_ids);
	r->sweep_ids = NULL;
	r->n_sweeps = 0;
}
