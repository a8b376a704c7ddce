/* db/db_internal.h - what the store's source files share: the handle, statement cache, helpers */
#ifndef HB_DB_INTERNAL_H
#define HB_DB_INTERNAL_H

#include <sqlite3.h>

#include "hb_db.h"

/* One slot per statement; each is prepared once per handle on first use. */
enum db_stmt_slot {
	ST_BEGIN, ST_COMMIT, ST_ROLLBACK, ST_USER_VERSION,
	ST_PART_UPSERT, ST_PART_GET, ST_PART_GET_ID, ST_PART_LIST,
	ST_LOT_FIND, ST_LOT_INSERT, ST_LOT_GET, ST_LOT_UPDATE,
	ST_UNIT_FIND, ST_UNIT_INSERT, ST_UNIT_SET_LOT, ST_UNIT_GET,
	ST_SWEEP_INSERT, ST_SWEEP_END, ST_SWEEP_GET, ST_SWEEP_EXISTS, ST_SWEEP_NOISE, ST_SWEEP_DCR, ST_SWEEP_SUPPLY, ST_POINT_ADD_V4,
	ST_RUNNING_MINE, ST_MARK_INTERRUPTED,
	ST_POINT_ADD, ST_POINTS_GET,
	ST_FIT_INSERT, ST_FIT_VALUE_INSERT, ST_FIT_LATEST, ST_FIT_LATEST_ANY, ST_FIT_VALUES,
	ST_VERDICT_UPSERT, ST_VERDICT_LIST,
	ST_INSP_UPSERT, ST_INSP_LIST, ST_INSP_PROGRESS,
	ST_HISTORY,
	ST_FIT_UNC_PUT, ST_FIT_UNC_LIST, ST_SWEEP_ACCURACY, ST_VERDICT_UPSERT_V5, ST_PART_UPSERT_V5,
	/* traceability (db_trace.c) */
	ST_VERDICT_APPEND, ST_VERDICT_INFORCE, ST_VERDICT_ALL, ST_SPEC_REV_LATEST, ST_SPEC_REV_GET,
	ST_REPORT_PUT, ST_REPORT_SWEEP_PUT, ST_REPORT_GET, ST_REPORT_SWEEPS, ST_LOT_DECISIONS,
	/* append-only inspection records (db_catalog.c) */
	ST_INSP_LIST_ALL, ST_INSP_APPEND,
	ST_COUNT
};

/* Six optional filters of hb_db_sweep_list: one statement per combination. */
enum { DB_SWEEP_FILTERS = 6 };

struct hb_db {
	sqlite3 *conn;
	char *path;
	char errmsg[768];
	sqlite3_stmt *stmt[ST_COUNT];
	sqlite3_stmt *sweep_list[1 << DB_SWEEP_FILTERS];
	sqlite3_stmt *sweep_count[1 << DB_SWEEP_FILTERS];
	/* hb_db_uid_of / hb_db_uid_find, one statement per kind of record (an export asks per sweep) */
	sqlite3_stmt *uid_of[HB_DB_REC_COUNT], *uid_find[HB_DB_REC_COUNT];
	int batch;          /* inside hb_db_batch_begin */
	int read_txn;       /* inside hb_db_read_begin */
	int recovered;
	int old_version;     /* opened at an older schema on purpose (migration tests): 0 = latest */
	char host[HB_DB_ID_LEN];
	char boot_id[64];
	bool plan_watch;     /* hb_db_plan_watch: each newly prepared statement's plan is checked */
	char *plan_findings; /* full scans of growing tables found, one line each */
	size_t plan_checked;
	/* read-only opens (db_readonly.c) */
	int readonly;        /* opened read-only: nothing is written, not even recovery */
	int immutable;       /* opened with immutable=1: no -shm could be had */
	int64_t *dead;       /* running sweeps whose owner is gone, shown interrupted */
	size_t n_dead;
	/* --db postgresql://...: the server's connection (PGconn); the records a read needs are copied into
	 * this handle's in-memory store (db_pg_mirror.c), written only while pg_filling */
	void *pg;
	void *mirror;
	int pg_filling;
	int pg_plan_ready; /* the plan watch's session setting made on the server */
};

/* Prepared statement of slot, preparing sql on first use; NULL on error
 * (message set). */
sqlite3_stmt *db_stmt(hb_db *db, enum db_stmt_slot slot, const char *sql);
sqlite3_stmt *db_prepare_cached(hb_db *db, sqlite3_stmt **cache, const char *sql);
/* A statement prepared for one use (the caller finalises it); NULL on error, the message naming what. */
sqlite3_stmt *db_prepare_once(hb_db *db, const char *sql, const char *what);
/* Resets and clears bindings so the statement holds no read snapshot. */
void db_release(sqlite3_stmt *st);
/* With the plan watch on, EXPLAIN QUERY PLAN of sql; full scans are kept as findings. */
void db_plan_note(hb_db *db, const char *sql);

/* Records "what: sqlite message" and maps the SQLite code to an hb_status. */
int db_fail(hb_db *db, int rc, const char *what);
int db_error(hb_db *db, int status, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

/* Write transaction unless a batch is open. */
int db_write_begin(hb_db *db, const char *what);
int db_write_commit(hb_db *db, const char *what);
void db_write_rollback(hb_db *db);

/* Runs one bound write statement in its own transaction (unless batched)
 * and releases it; *id (may be NULL) gets column 0 of a RETURNING row and
 * *changes the rows changed. */
int db_write_one(hb_db *db, sqlite3_stmt *st, const char *what, int64_t *id, int *changes);

/* NAN <-> NULL, "" stays "". */
int db_bind_real(sqlite3_stmt *st, int idx, double v);
int db_bind_text(sqlite3_stmt *st, int idx, const char *s);
int db_bind_id(sqlite3_stmt *st, int idx, int64_t id); /* 0 -> NULL */
double db_col_real(sqlite3_stmt *st, int col);
void db_col_text(sqlite3_stmt *st, int col, char *buf, size_t cap);

/* Current time as unix seconds and ISO-8601 UTC text. */
double db_now(void);
void db_iso_time(double unix_s, char *buf, size_t cap);

/* Grows *arr (of elem bytes) so index n fits. */
int db_grow(hb_db *db, void **arr, size_t *cap, size_t n, size_t elem);

/* Copies one result row into the struct at row; ctx carries what the query
 * knew but the row does not (the sweep id of a point, say). */
typedef void db_row_reader(sqlite3_stmt *st, void *row, const void *ctx);
/* Steps a bound single-row query into row and releases the statement: no row
 * is HB_ERR_NOTFOUND "no <noun> <key> in <path>", a failure names reading. */
int db_read_one(hb_db *db, sqlite3_stmt *st, db_row_reader *read, void *row, const void *ctx, const char *noun,
		const char *key, const char *reading);
/* Steps a bound query to its end, one elem-byte struct per row, and releases
 * the statement; only on success do *out (for free()) and *count change. */
int db_read_all(hb_db *db, sqlite3_stmt *st, db_row_reader *read, const void *ctx, size_t elem, const char *reading,
		void **out, size_t *count);

int db_recover_running(hb_db *db);

/* The schema step that brought identities, spec revisions and append-only verdicts
 * (db/schema.sql); a store opened at an older step keeps the older statements. */
enum { DB_STEP_TRACE = 9 };

/* Traceability (db_trace.c): the SQL functions hb_uid() and hb_uid_at(ms), registered before the
 * migration runs; then, on a store at step 9 or later, this connection's triggers that give every
 * new record its identity. */
int db_trace_register(hb_db *db);
int db_trace_attach(hb_db *db);
/* One row of PART_COLUMNS' shape into an hb_db_part (db_catalog.c). */
void db_read_part_row(sqlite3_stmt *st, void *row, const void *ctx);
/* Step-7 forms of hb_db_verdict_put / hb_db_verdict_list. */
int db_verdict_append(hb_db *db, hb_db_verdict *v);
int db_verdict_list_v7(hb_db *db, int64_t sweep_id, bool all, hb_db_verdict **out, size_t *count);

/* ---------------- read-only opens (db_readonly.c) ---------------- */

enum { DB_BUSY_TIMEOUT_MS = 10000 };
/* Opens db->conn read-only (mode=ro, else immutable=1 where no -shm can be made). */
int db_open_readonly_conn(hb_db *db, const char *path);
/* Notes the running sweeps of this host whose owner is gone, without writing. */
int db_note_dead_sweeps(hb_db *db);
/* On a read-only handle, a noted dead sweep reads as interrupted. */
void db_view_sweep(const hb_db *db, hb_db_sweep *s);
/* The owner of a running sweep of this host is gone (db_core.c). */
int db_owner_dead(const hb_db *db, long pid, const char *boot_id);

/* The schema step that made inspection records append-only. */
enum { DB_STEP_INSP_APPEND = 14 };
/* The login name the shell gives, else the account's (who recorded a record). */
void db_login_name(char *buf, size_t cap);
/* Columns 0-14 of a verdict row (id, check_name ... p_false_accept) into v (db_sweeps.c). */
void db_verdict_columns(sqlite3_stmt *st, hb_db_verdict *v, int64_t sweep_id);
/* Many stations (db_pg_read.c): whether path is a server URL (postgresql:// or postgres://); connecting
 * an open handle to it, and letting it go; a few words naming what a statement reads, for the message of
 * a function not implemented against a server. */
bool db_pg_is_url(const char *path);
int db_pg_attach(hb_db *db, const char *url);
void db_pg_detach(hb_db *db);
const char *db_pg_what(const char *sql);
/* The reads a server answers itself (db->pg set): a part's history and lot streams. */
int db_pg_history(hb_db *db, const hb_db_history_filter *f, hb_db_history_row **out, size_t *count);
int db_pg_stream_suppliers(hb_db *db, int64_t part_id, char (**out)[HB_DB_ID_LEN], size_t *count);
int db_pg_stream_lots(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_lot **out, size_t *count);
int db_pg_stream_events(hb_db *db, int64_t part_id, const char *supplier, hb_db_stream_event **out, size_t *count);

/* Reads against a server (db_pg_mirror.c). Before a station query runs on a server handle, the records
 * it reads are copied from the server into the handle's in-memory store, by the server's ids; each call
 * copies a record once per handle and is a no-op on a station's store. */
int db_mirror_attach(hb_db *db);
void db_mirror_detach(hb_db *db);
int db_mirror_parts(hb_db *db, const int64_t *ids, size_t n);
int db_mirror_part_number(hb_db *db, const char *part_number);
int db_mirror_all_parts(hb_db *db);
int db_mirror_lots(hb_db *db, const int64_t *ids, size_t n);
int db_mirror_lot_code(hb_db *db, int64_t part_id, const char *lot_code);
int db_mirror_units(hb_db *db, const int64_t *ids, size_t n);
/* a sweep with its unit, part, lot, fits, verdicts, trace and number of points (not the points) */
int db_mirror_sweeps(hb_db *db, const int64_t *ids, size_t n);
/* the sweeps of a listing just read, in order: reading one of them later copies the next ones along */
int db_mirror_hint(hb_db *db, const int64_t *ids, size_t n);
/* the points of a sweep (with those of the listed sweeps after it, to a bound); those copied before are dropped */
int db_mirror_points(hb_db *db, int64_t sweep_id);
int db_mirror_lot_samples(hb_db *db, int64_t lot_id);
/* the instrument register and the fixture compensations */
int db_mirror_register(hb_db *db);
/* the sweeps hb_db_sweep_list would list; the count of those the filter matches, from the server */
int db_mirror_sweep_list(hb_db *db, const hb_db_sweep_filter *f);
int db_mirror_sweep_count(hb_db *db, const hb_db_sweep_filter *f, int64_t *count);
/* the sweeps an instrument measured since, with the lots that sampled them */
int db_mirror_affected(hb_db *db, int64_t instrument_id, double since_unix);
/* a record by kind and id, or by identity, with what it belongs to */
int db_mirror_record(hb_db *db, hb_db_record kind, int64_t id);
int db_mirror_uid(hb_db *db, hb_db_record kind, const char *uid);
int db_mirror_report(hb_db *db, const char *uid);
/* a report written from a server's records, filed on the server */
int db_pg_report_put(hb_db *db, hb_db_report *r);

#endif
