/* db/db_pg_internal.h - what the server-side files of the store share: connecting, the server's migrations, prepared statements */
#ifndef HB_DB_PG_INTERNAL_H
#define HB_DB_PG_INTERNAL_H

#include <libpq-fe.h>

#include "db_internal.h"

/* The versions a station notes in sync_pushed.ver (SQL over its store; the argument is the table's
 * alias): a part's edit time, revision count and the fields outside its revisions; an instrument's
 * calibration and sightings; a drawing's time and write count. An edit makes a new version, so the
 * record waits for the next push again; the instruments' key is their natural key. */
#define DB_PG_PART_VER(p) p ".updated || '#' || (SELECT count(*) FROM spec_revisions sv WHERE sv.part_id = " p \
	".id) || char(31) || " p ".core_shape || char(31) || " p ".core_dims || char(31) || " p ".gap_at"
#define DB_PG_INSTR_KEY(i) i ".maker || char(31) || " i ".model || char(31) || " i ".serial"
#define DB_PG_INSTR_VER(i) i ".cal_date || char(31) || " i ".due_date || char(31) || " i ".certificate || char(31) || " \
	i ".accuracy || char(31) || " i ".accuracy_freq_above || char(31) || " i ".firmware || char(31) || " i \
	".first_seen || char(31) || " i ".last_seen"
#define DB_PG_DRAWING_VER(d) d ".updated || '#' || " d ".edits"

/* Connects to url, brings the server's schema to the latest step of db/schema_pg.sql and reads the
 * server's identity into server_uid; *out stays NULL on error (HB_ERR_IO: server not reached). */
int db_pg_connect(hb_db *db, const char *url, char server_uid[HB_DB_UID_LEN], PGconn **out);
/* Prepares sql under name on conn (once per connection: the caller keeps names unique). */
int db_pg_prepare(hb_db *db, PGconn *conn, const char *name, const char *sql, const char *what);
/* Runs the prepared statement name with n text parameters (NULL = SQL NULL); *res (may be NULL) gets the
 * result for the caller to PQclear. */
int db_pg_exec(hb_db *db, PGconn *conn, const char *name, int n, const char *const *params, const char *what,
	       PGresult **res);
/* Under the plan watch (hb_db_plan_watch), the plan of a read just run on a server handle is checked
 * for sequential scans of the tables that grow; findings join hb_db_plan_findings (db_pg_plan.c). */
void db_pg_plan_note(hb_db *db, PGconn *conn, const char *name, int n, const char *const *params);
/* BEGIN, COMMIT, ROLLBACK on the server. */
int db_pg_simple(hb_db *db, PGconn *conn, const char *sql, const char *what);

#endif
