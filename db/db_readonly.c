/* db/db_readonly.c - reading a store that cannot be written: read-only files and file systems, WAL stores without their -shm, dead sweeps shown interrupted without recording it */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <unistd.h>

#include "db_internal.h"

bool hb_db_store_writable(const char *path)
{
	if (!path || !*path)
		return true;
	struct stat sb;
	/* a missing store is the open's error to report, with its own wording */
	if (stat(path, &sb) != 0)
		return true;
	struct statvfs vfs;
	if (statvfs(path, &vfs) == 0 && (vfs.f_flag & ST_RDONLY))
		return false;
	if (access(path, W_OK) != 0)
		return false;
	/* the journal (-wal, -shm) is made beside the store */
	char dir[4096];
	snprintf(dir, sizeof dir, "%s", path);
	char *slash = strrchr(dir, '/');
	if (!slash)
		snprintf(dir, sizeof dir, ".");
	else if (slash == dir)
		dir[1] = '\0';
	else
		*slash = '\0';
	return access(dir, W_OK) == 0;
}

/* "file:" URI of path: every byte but the unreserved ones and '/' as %XX,
 * so that '?', '#' and '%' in a file name stay part of the name. */
static int uri_of(const char *path, const char *query, char *buf, size_t cap)
{
	static const char hex[] = "0123456789ABCDEF";
	size_t n = 0;
	const char *head = "file:";
	for (const char *h = head; *h && n + 1 < cap; h++)
		buf[n++] = *h;
	for (const unsigned char *p = (const unsigned char *)path; *p; p++) {
		bool plain = (*p >= 'a' && *p <= 'z') || (*p >= 'A' && *p <= 'Z') || (*p >= '0' && *p <= '9') ||
			     *p == '/' || *p == '.' || *p == '-' || *p == '_' || *p == '~';
		if (n + 4 >= cap)
			return HB_ERR_ARG;
		if (plain) {
			buf[n++] = (char)*p;
		} else {
			buf[n++] = '%';
			buf[n++] = hex[*p >> 4];
			buf[n++] = hex[*p & 15];
		}
	}
	int w = snprintf(buf + n, cap - n, "?%s", query);
	return w < 0 || (size_t)w >= cap - n ? HB_ERR_ARG : HB_OK;
}

/* The write-ahead journal beside the store holds committed records not yet
 * copied into it (a writer that died, or one still running). */
static bool wal_has_content(const char *path)
{
	char wal[4200];
	snprintf(wal, sizeof wal, "%s-wal", path);
	struct stat sb;
	return stat(wal, &sb) == 0 && sb.st_size > 0;
}

static int open_uri(hb_db *db, const char *path, const char *query)
{
	char uri[8192];
	if (uri_of(path, query, uri, sizeof uri) != HB_OK)
		return db_error(db, HB_ERR_ARG, "store path too long: %s", path);
	sqlite3_close(db->conn);
	db->conn = NULL;
	int rc = sqlite3_open_v2(uri, &db->conn, SQLITE_OPEN_READONLY | SQLITE_OPEN_URI, NULL);
	if (rc != SQLITE_OK)
		return rc;
	sqlite3_extended_result_codes(db->conn, 1);
	sqlite3_busy_timeout(db->conn, DB_BUSY_TIMEOUT_MS);
	/* opening is lazy: the first read is where a missing -shm shows */
	return sqlite3_exec(db->conn, "SELECT count(*) FROM sqlite_master", NULL, NULL, NULL);
}

int db_open_readonly_conn(hb_db *db, const char *path)
{
	db->readonly = 1;
	int rc = open_uri(db, path, "mode=ro");
	if (rc == SQLITE_OK)
		return HB_OK;
	/* A WAL store read-only needs its -shm, which a read-only directory or
	 * file system cannot give. Immutable reads the store file alone, which
	 * is the whole store when no journal is left beside it; nothing can be
	 * writing it there (docs/store.md). */
	/* (SQLITE_READONLY_CANTINIT where the -shm cannot be made, SQLITE_CANTOPEN where the directory
	 * cannot be written) */
	bool no_shm = (rc & 0xff) == SQLITE_CANTOPEN || (rc & 0xff) == SQLITE_READONLY;
	if (no_shm && !hb_db_store_writable(path) && !wal_has_content(path)) {
		rc = open_uri(db, path, "immutable=1");
		if (rc == SQLITE_OK) {
			db->immutable = 1;
			return HB_OK;
		}
	} else if (no_shm && wal_has_content(path)) {
		return db_error(db, HB_ERR_DB,
				"cannot read store %s: its journal %s-wal holds records not yet in the store and "
				"the read-only location gives no %s-shm to read it with; copy the three files to a "
				"writable place and read them there", path, path, path);
	}
	db_error(db, HB_ERR_DB, "cannot open store %s read-only: %s", path,
		 db->conn ? sqlite3_errmsg(db->conn) : sqlite3_errstr(rc));
	return (rc & 0xff) == SQLITE_NOMEM ? HB_ERR_NOMEM : HB_ERR_DB;
}

int db_note_dead_sweeps(hb_db *db)
{
	sqlite3_stmt *st = db_stmt(db, ST_RUNNING_MINE,
				   "SELECT id, pid, boot_id FROM sweeps WHERE status = 'running' AND host = ?1");
	if (!st)
		return HB_ERR_DB;
	db_bind_text(st, 1, db->host);
	int rc, status = HB_OK;
	size_t cap = 0;
	while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
		char boot[64];
		db_col_text(st, 2, boot, sizeof boot);
		if (!db_owner_dead(db, (long)sqlite3_column_int64(st, 1), boot))
			continue;
		if (db_grow(db, (void **)&db->dead, &cap, db->n_dead, sizeof *db->dead) < 0) {
			status = HB_ERR_NOMEM;
			break;
		}
		db->dead[db->n_dead++] = sqlite3_column_int64(st, 0);
	}
	if (status == HB_OK && rc != SQLITE_DONE)
		status = db_fail(db, rc, "looking for interrupted sweeps");
	db_release(st);
	return status;
}

void db_view_sweep(const hb_db *db, hb_db_sweep *s)
{
	if (!db || !db->readonly || s->status != HB_DB_RUNNING)
		return;
	for (size_t i = 0; i < db->n_dead; i++) {
		if (db->dead[i] != s->id)
			continue;
		/* shown as what a writing open will record; the store itself is not changed */
		s->status = HB_DB_INTERRUPTED;
		snprintf(s->status_reason, sizeof s->status_reason, "owner process gone; not yet recorded");
		return;
	}
}

bool hb_db_is_readonly(const hb_db *db)
{
	return db && db->readonly;
}

bool hb_db_is_immutable(const hb_db *db)
{
	return db && db->immutable;
}
