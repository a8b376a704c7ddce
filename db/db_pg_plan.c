/* db/db_pg_plan.c - query-plan watch on the server: each read a server handle runs is explained with sequential scans disabled, and a sequential scan of a table that grows is a finding */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_pg_internal.h"

/*
 * With enable_seqscan off the planner takes any index that can serve the
 * query, however small the tables of a test store are (common practice:
 * PostgreSQL's documented way to see whether an index is usable). A
 * "Seq Scan" left in the plan then means no index serves that table, and on
 * a table that grows with the sweeps that read gets slower with every sweep
 * pushed. The register, the parts and the lots stay small: read whole by
 * design.
 */
static const char *const small_tables[] = { "parts", "lots", "instruments", "fixture_compensations",
					    "stream_events", "hb_meta", "hb_schema", NULL };

static bool small_table(const char *name, size_t len)
{
	for (size_t i = 0; small_tables[i]; i++)
		if (strlen(small_tables[i]) == len && strncmp(small_tables[i], name, len) == 0)
			return true;
	return false;
}

static void add_finding(hb_db *db, const char *line, const char *name)
{
	size_t old = db->plan_findings ? strlen(db->plan_findings) : 0;
	size_t add = strlen(line) + strlen(name) + 32;
	char *grown = realloc(db->plan_findings, old + add);
	if (!grown)
		return;
	db->plan_findings = grown;
	snprintf(grown + old, add, "%s in server statement %s\n", line, name);
}

/* The table a scan node reads ("Seq Scan on t x", "Index Scan using i on t x"), NULL if not a scan of
 * a growing table. */
static const char *growing_scan(const char *line, const char *kind)
{
	const char *at = strstr(line, kind);
	if (!at)
		return NULL;
	const char *on = strstr(at, " on ");
	if (!on)
		return NULL;
	const char *table = on + 4;
	return small_table(table, strcspn(table, " ")) ? NULL : at;
}

/*
 * A finding is a sequential scan of a growing table, or an index scan of one
 * with no Index Cond under it: with sequential scans disabled the planner
 * walks a whole index instead, which reads every row just the same.
 */
static void note_plan(hb_db *db, const PGresult *r, const char *name)
{
	const char *open_index = NULL; /* an index scan whose detail lines are being read */
	int rows = PQntuples(r);
	/* a top-N read (a Limit over rows an index gives in order, nothing sorted whole) stops after N: its walk
	 * of an index without a condition is not a full read */
	bool top_n = rows > 0 && strstr(PQgetvalue(r, 0, 0), "Limit") != NULL;
	for (int row = 0; row < rows && top_n; row++) {
		/* a full sort reads everything first; an incremental one follows the index's order */
		const char *line = PQgetvalue(r, row, 0);
		top_n = !strstr(line, "Sort  (") || strstr(line, "Incremental Sort  (");
	}
	for (int row = 0; row <= rows; row++) {
		const char *line = row < rows ? PQgetvalue(r, row, 0) : "->";
		bool node = strstr(line, "->") != NULL || row == 0;
		if (open_index && strstr(line, "Index Cond:"))
			open_index = NULL;
		if (node && open_index) {
			add_finding(db, open_index, name);
			open_index = NULL;
		}
		if (row == rows)
			break;
		if (!node)
			continue;
		const char *seq = growing_scan(line, "Seq Scan");
		if (seq)
			add_finding(db, seq, name);
		/* "Index Scan using i on t" and "Index Only Scan using i on t"; a Bitmap Index Scan names
		 * its index, and its heap scan reads what the index found */
		if (!top_n && !strstr(line, "Bitmap Index Scan"))
			open_index = growing_scan(line, "Index Scan");
		if (!top_n && !open_index)
			open_index = growing_scan(line, "Index Only Scan");
	}
}

void db_pg_plan_note(hb_db *db, PGconn *conn, const char *name, int n, const char *const *params)
{
	if (!db->plan_watch)
		return;
	if (!db->pg_plan_ready) {
		PGresult *r = PQexec(conn, "SET enable_seqscan = off");
		PQclear(r);
		db->pg_plan_ready = 1;
	}
	/* EXPLAIN EXECUTE name(literal, ...): the plan of the statement with the very parameters it ran with */
	size_t cap = strlen(name) + 32, len = 0;
	char **lit = calloc((size_t)(n > 0 ? n : 1), sizeof *lit);
	if (!lit)
		return;
	for (int i = 0; i < n; i++) {
		lit[i] = params[i] ? PQescapeLiteral(conn, params[i], strlen(params[i])) : NULL;
		cap += (lit[i] ? strlen(lit[i]) : 4) + 2;
	}
	char *sql = malloc(cap);
	if (sql) {
		len = (size_t)snprintf(sql, cap, "EXPLAIN EXECUTE %s", name);
		for (int i = 0; i < n; i++)
			len += (size_t)snprintf(sql + len, cap - len, "%s%s", i ? ", " : "(", lit[i] ? lit[i] : "NULL");
		if (n > 0)
			snprintf(sql + len, cap - len, ")");
		PGresult *r = PQexec(conn, sql);
		if (PQresultStatus(r) == PGRES_TUPLES_OK) {
			db->plan_checked++;
			note_plan(db, r, name);
		}
		PQclear(r);
		free(sql);
	}
	for (int i = 0; i < n; i++)
		PQfreemem(lit[i]);
	free(lit);
}
