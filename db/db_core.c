/* db/db_core.c - store connection: open, pragmas, step-wise migration, recovery of dead sweeps, errors */
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "db_internal.h"

/* db/schema.sql, embedded by db/schema.S. */
extern const char hb_db_schema_sql[];

/* Long enough that a sweep committing points, a second station and a
 * reader never give up on each other; a point transaction lasts milliseconds. */

/* ---------------- helpers shared by the store's files ---------------- */

sqlite3_stmt *db_prepare_cached(hb_db *db, sqlite3_stmt **cache, const char *sql)
{
	if (*cache)
		return *cache;
	int rc = sqlite3_prepare_v3(db->conn, sql, -1, SQLITE_PREPARE_PERSISTENT, cache, NULL);
	if (rc != SQLITE_OK) {
		/* on a server handle a writing statement is refused where it is prepared (db_pg_mirror.c) */
		db_fail(db, rc, db->pg ? db_pg_what(sql) : "preparing a query");
		*cache = NULL;
	} else {
		db_plan_note(db, sql);
	}
	return *cache;
}

sqlite3_stmt *db_prepare_once(hb_db *db, const char *sql, const char *what)
{
	sqlite3_stmt *st = NULL;
	int rc = sqlite3_prepare_v2(db->conn, sql, -1, &st, NULL);
	if (rc != SQLITE_OK) {
		db_fail(db, rc, what);
		sqlite3_finalize(st);
		return NULL;
	}
	return st;
}

sqlite3_stmt *db_stmt(hb_db *db, enum db_stmt_slot slot, const char *sql)
{
	return db_prepare_cached(db, &db->stmt[slot], sql);
}

void db_release(sqlite3_stmt *st)
{
	if (!st)
		return;
	sqlite3_reset(st);
	sqlite3_clear_bindings(st);
}

int db_error(hb_db *db, int status, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(db->errmsg, sizeof db->errmsg, fmt, ap);
	va_end(ap);
	return status;
}

int db_fail(hb_db *db, int rc, const char *what)
{
	/* a server handle is read, never written: records reach the server by sync (db_pg_mirror.c) */
	if (db->pg && (rc & 0xff) == SQLITE_AUTH)
		return db_error(db, HB_ERR_UNSUPPORTED, "a server is read from, not written to: %s"
				" (write on a station's store; sync takes it to the server)", what);
	const char *msg = db->conn ? sqlite3_errmsg(db->conn) : sqlite3_errstr(rc);
	switch (rc & 0xff) {
	case SQLITE_FULL:
		return db_error(db, HB_ERR_DB_FULL,
				"disk full while %s in %s: nothing more can be stored; "
				"everything committed before is kept",
				what, db->path ? db->path : "?");
	case SQLITE_BUSY:
	case SQLITE_LOCKED:
		return db_error(db, HB_ERR_BUSY, "store %s stayed locked for more than %d s while %s",
				db->path ? db->path : "?", DB_BUSY_TIMEOUT_MS / 1000, what);
	case SQLITE_NOMEM:
		return db_error(db, HB_ERR_NOMEM, "out of memory while %s", what);
	case SQLITE_IOERR:
		return db_error(db, HB_ERR_IO, "i/o error while %s in %s: %s", what,
				db->path ? db->path : "?", msg);
	case SQLITE_CONSTRAINT:
		if (rc == SQLITE_CONSTRAINT_FOREIGNKEY)
			return db_error(db, HB_ERR_NOTFOUND, "%s: refers to a record that is not in the store",
					what);
		return db_error(db, HB_ERR_ARG, "%s: %s", what, msg);
	case SQLITE_READONLY:
		return db_error(db, HB_ERR_IO,
				"store %s cannot be written (read-only file, directory or file system) while %s: "
				"nothing was changed; read commands still work there",
				db->path ? db->path : "?", what);
	case SQLITE_NOTADB:
		return db_error(db, HB_ERR_DB, "%s is not a henrybench store: %s",
				db->path ? db->path : "?", msg);
	default:
		return db_error(db, HB_ERR_DB, "store error while %s: %s", what, msg);
	}
}

static int step_done(hb_db *db, sqlite3_stmt *st, const char *what)
{
	int rc = sqlite3_step(st);
	int status = (rc == SQLITE_DONE || rc == SQLITE_ROW) ? HB_OK : db_fail(db, rc, what);
	db_release(st);
	return status;
}

int db_write_begin(hb_db *db, const char *what)
{
	if (db->batch)
		return HB_OK;
	sqlite3_stmt *st = db_stmt(db, ST_BEGIN, "BEGIN IMMEDIATE");
	if (!st)
		return HB_ERR_DB;
	return step_done(db, st, what);
}

void db_write_rollback(hb_db *db)
{
	if (db->batch || sqlite3_get_autocommit(db->conn))
		return;
	/* Not cached: after SQLITE_FULL the cached statements may be mid-step. */
	sqlite3_exec(db->conn, "ROLLBACK", NULL, NULL, NULL);
}

int db_write_commit(hb_db *db, const char *what)
{
	if (db->batch)
		return HB_OK;
	sqlite3_stmt *st = db_stmt(db, ST_COMMIT, "COMMIT");
	if (!st) {
		db_write_rollback(db);
		return HB_ERR_DB;
	}
	int status = step_done(db, st, what);
	if (status < 0)
		db_write_rollback(db);
	return status;
}

int db_write_one(hb_db *db, sqlite3_stmt *st, const char *what, int64_t *id, int *changes)
{
	int status = db_write_begin(db, what);
	if (status < 0) {
		db_release(st);
		return status;
	}
	int rc = sqlite3_step(st);
	if (rc == SQLITE_ROW) {
		if (id)
			*id = sqlite3_column_int64(st, 0);
		/* Finish the statement so its changes are complete before COMMIT. */
		while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		}
	}
	if (rc != SQLITE_DONE) {
		status = db_fail(db, rc, what);
		db_release(st);
		db_write_rollback(db);
		return status;
	}
	if (changes)
		*changes = sqlite3_changes(db->conn);
	db_release(st);
	return db_write_commit(db, what);
}

int db_bind_real(sqlite3_stmt *st, int idx, double v)
{
	return isnan(v) ? sqlite3_bind_null(st, idx) : sqlite3_bind_double(st, idx, v);
}

int db_bind_text(sqlite3_stmt *st, int idx, const char *s)
{
	return sqlite3_bind_text(st, idx, s ? s : "", -1, SQLITE_TRANSIENT);
}

int db_bind_id(sqlite3_stmt *st, int idx, int64_t id)
{
	return id > 0 ? sqlite3_bind_int64(st, idx, id) : sqlite3_bind_null(st, idx);
}

double db_col_real(sqlite3_stmt *st, int col)
{
	return sqlite3_column_type(st, col) == SQLITE_NULL ? NAN : sqlite3_column_double(st, col);
}

void db_col_text(sqlite3_stmt *st, int col, char *buf, size_t cap)
{
	const char *t = (const char *)sqlite3_column_text(st, col);
	if (!t)
		t = "";
	size_t n = strlen(t);
	if (cap == 0)
		return;
	if (n < cap) {
		memcpy(buf, t, n + 1);
		return;
	}
	/* Longer than its field (stored before the input limits): shown cut,
	 * but visibly, "..." at a UTF-8 character boundary, never silently. */
	if (cap < 4) {
		buf[0] = '\0';
		return;
	}
	size_t keep = cap - 4;
	while (keep > 0 && ((unsigned char)t[keep] & 0xC0) == 0x80)
		keep--;
	memcpy(buf, t, keep);
	memcpy(buf + keep, "...", 4);
}

double db_now(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_REALTIME, &ts);
	return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

void db_iso_time(double unix_s, char *buf, size_t cap)
{
	time_t t = (time_t)floor(unix_s);
	struct tm tm;
	if (!gmtime_r(&t, &tm) || strftime(buf, cap, "%Y-%m-%dT%H:%M:%SZ", &tm) == 0)
		snprintf(buf, cap, "?");
}

int db_grow(hb_db *db, void **arr, size_t *cap, size_t n, size_t elem)
{
	if (n < *cap)
		return HB_OK;
	size_t ncap = *cap ? *cap * 2 : 16;
	while (ncap <= n)
		ncap *= 2;
	void *p = realloc(*arr, ncap * elem);
	if (!p)
		return db_error(db, HB_ERR_NOMEM, "out of memory reading from the store");
	*arr = p;
	*cap = ncap;
	return HB_OK;
}

int db_read_one(hb_db *db, sqlite3_stmt *st, db_row_reader *read, void *row, const void *ctx, const char *noun,
		const char *key, const char *reading)
{
	int rc = sqlite3_step(st);
	int status = HB_OK;
	if (rc == SQLITE_ROW)
		read(st, row, ctx);
	else if (rc == SQLITE_DONE)
		status = db_error(db, HB_ERR_NOTFOUND, "no %s %s in %s", noun, key, db->path);
	else
		status = db_fail(db, rc, reading);
	db_release(st);
	return status;
}

int db_read_all(hb_db *db, sqlite3_stmt *st, db_row_reader *read, const void *ctx, size_t elem, const char *reading,
		void **out, size_t *count)
{
	void *arr = NULL;
	size_t n = 0, cap = 0;
	int status = HB_OK, rc;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		status = db_grow(db, &arr, &cap, n, elem);
		if (status < 0)
			break;
		read(st, (char *)arr + n++ * elem, ctx);
	}
	if (status == HB_OK && rc != SQLITE_DONE)
		status = db_fail(db, rc, reading);
	db_release(st);
	if (status < 0) {
		free(arr);
		return status;
	}
	*out = arr;
	*count = n;
	return HB_OK;
}

/* ---------------- names ---------------- */

static const char *const kind_names[] = { "bias", "frequency" };
static const char *const status_names[] = { "running", "complete", "aborted", "failed", "interrupted" };
static const char *const outcome_names[] = { "not-tested", "pass", "fail", "skipped", "conditional-pass",
						    "conditional-fail" };
static const char *const decision_names[] = { "open", "accept", "reject" };

#define NAME_OF(table, i) ((unsigned)(i) < sizeof table / sizeof table[0] ? table[i] : "?")

const char *hb_db_sweep_kind_name(hb_db_sweep_kind kind) { return NAME_OF(kind_names, kind); }
const char *hb_db_sweep_status_name(hb_db_sweep_status status) { return NAME_OF(status_names, status); }
const char *hb_db_outcome_name(hb_db_outcome outcome) { return NAME_OF(outcome_names, outcome); }
const char *hb_db_lot_decision_name(hb_db_lot_decision d) { return NAME_OF(decision_names, d); }

static int parse_name(const char *const *names, int n, const char *text, int *out)
{
	if (!text)
		return HB_ERR_ARG;
	for (int i = 0; i < n; i++) {
		if (strcmp(names[i], text) == 0) {
			*out = i;
			return HB_OK;
		}
	}
	return HB_ERR_ARG;
}

int hb_db_sweep_kind_parse(const char *name, hb_db_sweep_kind *kind)
{
	int v = 0;
	int rc = parse_name(kind_names, 2, name, &v);
	if (rc == HB_OK && kind)
		*kind = (hb_db_sweep_kind)v;
	return rc;
}

int hb_db_sweep_status_parse(const char *name, hb_db_sweep_status *status)
{
	int v = 0;
	int rc = parse_name(status_names, 5, name, &v);
	if (rc == HB_OK && status)
		*status = (hb_db_sweep_status)v;
	return rc;
}

/* ---------------- default location ---------------- */

static int mkdir_p(char *path)
{
	for (char *p = path + 1; *p; p++) {
		if (*p != '/')
			continue;
		*p = '\0';
		int rc = mkdir(path, 0755);
		*p = '/';
		if (rc != 0 && errno != EEXIST)
			return HB_ERR_IO;
	}
	if (mkdir(path, 0755) != 0 && errno != EEXIST)
		return HB_ERR_IO;
	return HB_OK;
}

int hb_db_default_path(char *buf, size_t cap)
{
	if (!buf || cap == 0)
		return HB_ERR_ARG;
	char dir[PATH_MAX];
	const char *xdg = getenv("XDG_DATA_HOME");
	const char *home = getenv("HOME");
	int n;
	/* The XDG base-directory spec says to ignore a relative XDG_DATA_HOME. */
	if (xdg && xdg[0] == '/')
		n = snprintf(dir, sizeof dir, "%s/henrybench", xdg);
	else if (home && *home)
		n = snprintf(dir, sizeof dir, "%s/.local/share/henrybench", home);
	else
		return HB_ERR_ARG;
	if (n < 0 || (size_t)n >= sizeof dir)
		return HB_ERR_ARG;
	if (mkdir_p(dir) < 0)
		return HB_ERR_IO;
	n = snprintf(buf, cap, "%s/bench.db", dir);
	if (n < 0 || (size_t)n >= cap)
		return HB_ERR_ARG;
	return HB_OK;
}

/* ---------------- migrations ---------------- */

typedef struct schema_step {
	int number;
	const char *sql;
	size_t len;
} schema_step;

enum { DB_MAX_STEPS = 64 };

/* Splits schema.sql at its "-- step N" lines. */
static int schema_steps(schema_step *steps, int max)
{
	int n = 0;
	const char *p = hb_db_schema_sql;
	static const char marker[] = "-- step ";
	while ((p = strstr(p, marker)) != NULL) {
		if (p != hb_db_schema_sql && p[-1] != '\n') {
			p += sizeof marker - 1;
			continue;
		}
		if (n == max)
			return -1;
		steps[n].number = atoi(p + sizeof marker - 1);
		steps[n].sql = p;
		if (n > 0)
			steps[n - 1].len = (size_t)(p - steps[n - 1].sql);
		n++;
		p += sizeof marker - 1;
	}
	if (n > 0)
		steps[n - 1].len = strlen(steps[n - 1].sql);
	for (int i = 0; i < n; i++)
		if (steps[i].number != i + 1)
			return -1;
	return n;
}

int hb_db_latest_version(void)
{
	schema_step steps[DB_MAX_STEPS];
	int n = schema_steps(steps, DB_MAX_STEPS);
	return n < 0 ? 0 : n;
}

static int read_user_version(hb_db *db, int *version)
{
	sqlite3_stmt *st = db_stmt(db, ST_USER_VERSION, "PRAGMA user_version");
	if (!st)
		return HB_ERR_DB;
	int rc = sqlite3_step(st);
	int status = HB_OK;
	if (rc == SQLITE_ROW)
		*version = sqlite3_column_int(st, 0);
	else
		status = db_fail(db, rc, "reading the schema version");
	db_release(st);
	return status;
}

int hb_db_schema_version(hb_db *db, int *version)
{
	if (!db || !version)
		return HB_ERR_ARG;
	return read_user_version(db, version);
}

static int apply_step(hb_db *db, const schema_step *step)
{
	char *sql = strndup(step->sql, step->len);
	if (!sql)
		return db_error(db, HB_ERR_NOMEM, "out of memory migrating the store");
	char *err = NULL;
	int rc = sqlite3_exec(db->conn, sql, NULL, NULL, &err);
	free(sql);
	if (rc != SQLITE_OK) {
		int status = db_fail(db, rc, "migrating the store");
		if (status == HB_ERR_DB)
			db_error(db, HB_ERR_DB, "migrating %s to schema version %d failed: %s", db->path,
				 step->number, err ? err : "?");
		sqlite3_free(err);
		return status;
	}
	char pragma[64];
	snprintf(pragma, sizeof pragma, "PRAGMA user_version = %d", step->number);
	rc = sqlite3_exec(db->conn, pragma, NULL, NULL, NULL);
	return rc == SQLITE_OK ? HB_OK : db_fail(db, rc, "migrating the store");
}

static int migrate(hb_db *db, int target)
{
	schema_step steps[DB_MAX_STEPS];
	int latest = schema_steps(steps, DB_MAX_STEPS);
	if (latest <= 0)
		return db_error(db, HB_ERR_DB, "embedded schema is malformed");
	if (target <= 0 || target > latest)
		target = latest;

	int version = 0;
	int status = read_user_version(db, &version);
	if (status < 0)
		return status;
	if (version > latest)
		return db_error(db, HB_ERR_DB,
				"%s has schema version %d, newer than the %d this henrybench knows: "
				"update henrybench",
				db->path, version, latest);
	/* Most opens find nothing to do and take no write lock. */
	while (version < target) {
		status = db_write_begin(db, "migrating the store");
		if (status < 0)
			return status;
		/* Another process may have migrated while we waited for the lock. */
		status = read_user_version(db, &version);
		if (status < 0 || version >= target) {
			db_write_rollback(db);
			break;
		}
		status = apply_step(db, &steps[version]);
		if (status < 0) {
			db_write_rollback(db);
			return status;
		}
		status = db_write_commit(db, "migrating the store");
		if (status < 0)
			return status;
		version++;
	}
	return status;
}

/* ---------------- open / close ---------------- */

static void sleep_ms(long ms)
{
	struct timespec ts = { ms / 1000, (ms % 1000) * 1000000L };
	while (nanosleep(&ts, &ts) != 0 && errno == EINTR) {
	}
}

/* WAL so one writer and any readers proceed together. Changing the journal
 * mode of a new file needs a moment of exclusive access, which the busy
 * handler does not wait for. */
static int set_wal(hb_db *db)
{
	for (long waited = 0;; waited += 20) {
		sqlite3_stmt *st = NULL;
		int rc = sqlite3_prepare_v2(db->conn, "PRAGMA journal_mode = WAL", -1, &st, NULL);
		if (rc == SQLITE_OK) {
			rc = sqlite3_step(st);
			if (rc == SQLITE_ROW) {
				const char *mode = (const char *)sqlite3_column_text(st, 0);
				int is_wal = mode && strcmp(mode, "wal") == 0;
				sqlite3_finalize(st);
				if (!is_wal)
					return db_error(db, HB_ERR_DB, "%s: cannot switch to write-ahead logging (mode %s)",
							db->path, mode ? mode : "?");
				return HB_OK;
			}
		}
		sqlite3_finalize(st);
		if ((rc & 0xff) != SQLITE_BUSY || waited >= DB_BUSY_TIMEOUT_MS)
			return db_fail(db, rc, "opening the store");
		sleep_ms(20);
	}
}

static void read_identity(hb_db *db)
{
	if (gethostname(db->host, sizeof db->host) != 0)
		snprintf(db->host, sizeof db->host, "unknown");
	db->host[sizeof db->host - 1] = '\0';
	/* A new boot id means every process of the previous boot is gone. */
	FILE *f = fopen("/proc/sys/kernel/random/boot_id", "r");
	if (f) {
		if (!fgets(db->boot_id, sizeof db->boot_id, f))
			db->boot_id[0] = '\0';
		db->boot_id[strcspn(db->boot_id, "\n")] = '\0';
		fclose(f);
	}
}

/* A read-only handle cannot migrate nor recover: it reads the store as it
 * is, which must be the schema this program knows. */
static int open_readonly_check(hb_db *db)
{
	int version = 0;
	int status = read_user_version(db, &version);
	if (status < 0)
		return status;
	int latest = hb_db_latest_version();
	if (version != latest)
		return db_error(db, HB_ERR_DB,
				"%s has schema version %d, this henrybench reads %d: %s", db->path, version, latest,
				version < latest ? "open it once with a writing command to migrate it" : "update henrybench");
	return HB_OK;
}

static int open_at(const char *path, int target, hb_db_open_mode mode, hb_db **out)
{
	if (!out)
		return HB_ERR_ARG;
	*out = NULL;
	hb_db *db = calloc(1, sizeof *db);
	if (!db)
		return HB_ERR_NOMEM;
	*out = db;

	char default_path[PATH_MAX];
	if (!path) {
		int status = hb_db_default_path(default_path, sizeof default_path);
		if (status == HB_ERR_IO)
			return db_error(db, status, "cannot create the store directory "
					"${XDG_DATA_HOME:-$HOME/.local/share}/henrybench: %s", strerror(errno));
		if (status < 0)
			return db_error(db, status, "no store path: set HOME, HENRYBENCH_DB or --db");
		path = default_path;
	}
	if (!*path)
		return db_error(db, HB_ERR_ARG, "empty store path");
	db->path = strdup(path);
	if (!db->path)
		return db_error(db, HB_ERR_NOMEM, "out of memory opening the store");
	read_identity(db);

	/* A read command, a dry run or a watcher never creates a store: a
	 * mistyped path is an error, not a new empty file. */
	struct stat sb;
	if (mode != HB_DB_OPEN_CREATE && stat(path, &sb) != 0)
		return db_error(db, errno == ENOENT ? HB_ERR_NOTFOUND : HB_ERR_IO,
				"no store at %s (%s); this command creates none: check --db or HENRYBENCH_DB", path,
				strerror(errno));
	/* A read command writes (migration, recovery) only where it can. */
	if (mode == HB_DB_OPEN_READ)
		mode = hb_db_store_writable(path) ? HB_DB_OPEN_EXISTING : HB_DB_OPEN_READONLY;
	if (mode == HB_DB_OPEN_READONLY) {
		int status = db_open_readonly_conn(db, path);
		if (status == HB_OK)
			status = open_readonly_check(db);
		if (status == HB_OK)
			status = db_note_dead_sweeps(db);
		return status;
	}
	int flags = mode == HB_DB_OPEN_EXISTING ? SQLITE_OPEN_READWRITE : SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE;
	int rc = sqlite3_open_v2(path, &db->conn, flags, NULL);
	if (rc != SQLITE_OK) {
		db_error(db, HB_ERR_DB, "cannot open store %s: %s", path,
			 db->conn ? sqlite3_errmsg(db->conn) : sqlite3_errstr(rc));
		return (rc & 0xff) == SQLITE_NOMEM ? HB_ERR_NOMEM : HB_ERR_DB;
	}
	sqlite3_extended_result_codes(db->conn, 1);
	sqlite3_busy_timeout(db->conn, DB_BUSY_TIMEOUT_MS);

	/* the in-memory shape of a server handle has no log to write ahead */
	int status = strcmp(path, ":memory:") == 0 ? HB_OK : set_wal(db);
	if (status < 0)
		return status;
	/* FULL: with WAL every commit is fsynced, so a committed point survives
	 * a power cut, not only a crash of the process (docs/store.md). */
	rc = sqlite3_exec(db->conn, "PRAGMA synchronous = FULL; PRAGMA foreign_keys = ON", NULL, NULL, NULL);
	if (rc != SQLITE_OK)
		return db_fail(db, rc, "configuring the store");
	status = db_trace_register(db);
	if (status < 0)
		return status;
	status = migrate(db, target);
	if (status < 0)
		return status;
	status = db_trace_attach(db);
	if (status < 0)
		return status;
	if (target <= 0 || target >= hb_db_latest_version())
		status = db_recover_running(db);
	return status;
}

int hb_db_open(const char *path, hb_db **out)
{
	return open_at(path, 0, HB_DB_OPEN_CREATE, out);
}

int hb_db_open_as(const char *path, hb_db_open_mode mode, hb_db **out)
{
	if (db_pg_is_url(path)) {
		/* a server: an empty in-memory store gives the handle its shape, the reads go to the server */
		int status = open_at(":memory:", 0, HB_DB_OPEN_CREATE, out);
		return status < 0 ? status : db_pg_attach(*out, path);
	}
	return open_at(path, 0, mode, out);
}

int hb_db_check_writable(hb_db *db)
{
	if (!db || !db->conn)
		return HB_ERR_ARG;
	if (sqlite3_db_readonly(db->conn, "main") == 1)
		return db_error(db, HB_ERR_IO, "store %s is read-only: nothing could be stored", db->path);
	/* Taking the write lock is what a point's commit will do first. */
	int rc = sqlite3_exec(db->conn, "BEGIN IMMEDIATE", NULL, NULL, NULL);
	if (rc != SQLITE_OK) {
		int status = db_fail(db, rc, "checking the store can be written");
		if ((rc & 0xff) == SQLITE_READONLY || (rc & 0xff) == SQLITE_CANTOPEN || (rc & 0xff) == SQLITE_PERM)
			status = db_error(db, HB_ERR_IO, "store %s cannot be written (%s): nothing could be stored",
					  db->path, sqlite3_errmsg(db->conn));
		return status;
	}
	sqlite3_exec(db->conn, "ROLLBACK", NULL, NULL, NULL);
	return HB_OK;
}

int hb_db_open_version(const char *path, int version, hb_db **out)
{
	if (version <= 0)
		return out ? (*out = NULL, HB_ERR_ARG) : HB_ERR_ARG;
	int rc = open_at(path, version, HB_DB_OPEN_CREATE, out);
	if (*out && version < hb_db_latest_version())
		(*out)->old_version = version;
	return rc;
}

void hb_db_close(hb_db *db)
{
	if (!db)
		return;
	for (int i = 0; i < ST_COUNT; i++)
		sqlite3_finalize(db->stmt[i]);
	for (int i = 0; i < (1 << DB_SWEEP_FILTERS); i++) {
		sqlite3_finalize(db->sweep_list[i]);
		sqlite3_finalize(db->sweep_count[i]);
	}
	for (int i = 0; i < HB_DB_REC_COUNT; i++) {
		sqlite3_finalize(db->uid_of[i]);
		sqlite3_finalize(db->uid_find[i]);
	}
	/* the copy's statements go before the connection they were prepared on */
	db_pg_detach(db);
	if (db->conn && !sqlite3_get_autocommit(db->conn))
		sqlite3_exec(db->conn, "ROLLBACK", NULL, NULL, NULL);
	sqlite3_close(db->conn);
	free(db->plan_findings);
	free(db->dead);
	free(db->path);
	free(db);
}

const char *hb_db_errmsg(const hb_db *db)
{
	if (!db)
		return "out of memory opening the store";
	return db->errmsg[0] ? db->errmsg : "no error";
}

const char *hb_db_path(const hb_db *db)
{
	return db && db->path ? db->path : "";
}

int hb_db_recovered_count(const hb_db *db)
{
	return db ? db->recovered : 0;
}

int hb_db_set_max_pages(hb_db *db, long pages)
{
	if (!db || !db->conn || pages <= 0)
		return HB_ERR_ARG;
	char sql[64];
	snprintf(sql, sizeof sql, "PRAGMA max_page_count = %ld", pages);
	int rc = sqlite3_exec(db->conn, sql, NULL, NULL, NULL);
	return rc == SQLITE_OK ? HB_OK : db_fail(db, rc, "limiting the store size");
}

/* ---------------- batches ---------------- */

int hb_db_batch_begin(hb_db *db)
{
	if (!db || !db->conn)
		return HB_ERR_ARG;
	if (db->batch)
		return db_error(db, HB_ERR_ARG, "a batch is already open");
	int status = db_write_begin(db, "starting a batch");
	if (status == HB_OK)
		db->batch = 1;
	return status;
}

int hb_db_batch_commit(hb_db *db)
{
	if (!db || !db->conn)
		return HB_ERR_ARG;
	if (!db->batch)
		return db_error(db, HB_ERR_ARG, "no batch is open");
	db->batch = 0;
	return db_write_commit(db, "committing a batch");
}

int hb_db_batch_rollback(hb_db *db)
{
	if (!db || !db->conn)
		return HB_ERR_ARG;
	db->batch = 0;
	db_write_rollback(db);
	return HB_OK;
}

int hb_db_read_begin(hb_db *db)
{
	if (!db || !db->conn)
		return HB_ERR_ARG;
	/* Inside a batch or another transaction the reads already share one;
	 * a server answers each read on its own. */
	if (db->pg || db->read_txn || !sqlite3_get_autocommit(db->conn))
		return HB_OK;
	int rc = sqlite3_exec(db->conn, "BEGIN DEFERRED", NULL, NULL, NULL);
	if (rc != SQLITE_OK)
		return db_fail(db, rc, "starting a read");
	db->read_txn = 1;
	return HB_OK;
}

void hb_db_read_end(hb_db *db)
{
	if (!db || !db->read_txn)
		return;
	db->read_txn = 0;
	/* nothing was written: ending it cannot lose anything */
	if (!sqlite3_get_autocommit(db->conn))
		sqlite3_exec(db->conn, "COMMIT", NULL, NULL, NULL);
}

/* ---------------- recovery ---------------- */

/* Another station's host cannot be checked from here, so its sweeps stay
 * running; on this host a sweep is dead when its boot is over or its
 * process is gone. */
int db_owner_dead(const hb_db *db, long pid, const char *boot_id)
{
	if (db->boot_id[0] && boot_id[0] && strcmp(db->boot_id, boot_id) != 0)
		return 1;
	if (pid <= 0 || pid == (long)getpid())
		return 0;
	return kill((pid_t)pid, 0) != 0 && errno == ESRCH;
}

int db_recover_running(hb_db *db)
{
	sqlite3_stmt *st = db_stmt(db, ST_RUNNING_MINE,
				   "SELECT id, pid, boot_id FROM sweeps WHERE status = 'running' AND host = ?1");
	if (!st)
		return HB_ERR_DB;
	int64_t *dead = NULL;
	long *pids = NULL;
	size_t n = 0, cap = 0, pcap = 0;
	int status = HB_OK;
	db_bind_text(st, 1, db->host);
	int rc;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		long pid = (long)sqlite3_column_int64(st, 1);
		char boot[64];
		db_col_text(st, 2, boot, sizeof boot);
		if (!db_owner_dead(db, pid, boot))
			continue;
		if (db_grow(db, (void **)&dead, &cap, n, sizeof *dead) < 0 ||
		    db_grow(db, (void **)&pids, &pcap, n, sizeof *pids) < 0) {
			status = HB_ERR_NOMEM;
			break;
		}
		pids[n] = pid;
		dead[n++] = sqlite3_column_int64(st, 0);
	}
	if (status == HB_OK && rc != SQLITE_DONE)
		status = db_fail(db, rc, "looking for interrupted sweeps");
	db_release(st);

	for (size_t i = 0; status == HB_OK && i < n; i++) {
		st = db_stmt(db, ST_MARK_INTERRUPTED,
			     "UPDATE sweeps SET status = 'interrupted', status_reason = ?2,"
			     " ended_unix = started_unix + coalesce((SELECT max(t_s) FROM points"
			     "   WHERE points.sweep_id = sweeps.id), 0),"
			     " ended_at = strftime('%Y-%m-%dT%H:%M:%SZ', started_unix + coalesce("
			     "   (SELECT max(t_s) FROM points WHERE points.sweep_id = sweeps.id), 0), 'unixepoch')"
			     " WHERE id = ?1 AND status = 'running'");
		if (!st) {
			status = HB_ERR_DB;
			break;
		}
		char reason[HB_DB_TEXT_LEN];
		snprintf(reason, sizeof reason, "process %ld on %s ended without closing the sweep", pids[i],
			 db->host);
		sqlite3_bind_int64(st, 1, dead[i]);
		db_bind_text(st, 2, reason);
		rc = sqlite3_step(st);
		if (rc == SQLITE_DONE)
			db->recovered += sqlite3_changes(db->conn);
		else
			status = db_fail(db, rc, "marking a dead sweep interrupted");
		db_release(st);
	}
	free(dead);
	free(pids);
	return status;
}
