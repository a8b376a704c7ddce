/* db/db_pg_internal.h - what the server-side files of the store share: connecting, the server's migrations, prepared statements */
#ifndef HB_DB_PG_INTERNAL_H
#define HB_DB_PG_INTERNAL_H

#include <libpq-fe.h>

#include "db_internal.h"

/* Connects to url, brings the server's schema to the latest step of db/schema_pg.sql and reads the
 * server's identity into server_uid; *out stays NULL on error (HB_ERR_IO: server not reached). */
int db_pg_connect(hb_db *db, const char *url, char server_uid[HB_DB_UID_LEN], PGconn **out);
/* Prepares sql under name on conn (once per connection: the caller keeps names unique). */
int db_pg_prepare(hb_db *db, PGconn *conn, const char *name, const char *sql, const char *what);
/* Runs the prepared statement name with n text parameters (NULL = SQL NULL); *res (may be NULL) gets the
 * result for the caller to PQclear. */
int db_pg_exec(hb_db *db, PGconn *conn, const char *name, int n, const char *const *params, const char *what,
	       PGresult **res);
/* BEGIN, COMMIT, ROLLBACK on the server. */
int db_pg_simple(hb_db *db, PGconn *conn, const char *sql, const char *what);

#endif
