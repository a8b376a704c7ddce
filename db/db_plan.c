/* db/db_plan.c - query-plan watch: every statement the store prepares is checked with EXPLAIN QUERY PLAN for full scans of the tables that grow */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "db_internal.h"

/*
 * Tables that stay small whatever the store's age (a part list, the lots of
 * a few suppliers), under their names and the aliases the queries give
 * them: a full scan of these is fine. Every other table grows with the
 * sweeps (units, sweeps, points, fits, verdicts, ...), so a query that
 * reads it from end to end gets slower with every sweep stored.
 */
static const char *const small_tables[] = { "parts", "p", "lots", "l", "sqlite_master", "sqlite_schema", NULL };

static bool small_table(const char *name, size_t len)
{
	for (size_t i = 0; small_tables[i]; i++)
		if (strlen(small_tables[i]) == len && strncmp(small_tables[i], name, len) == 0)
			return true;
	return false;
}

/* "SCAN t" (no index: every row of t read) on a growing table. Subqueries
 * ("SCAN (subquery-1)"), constant rows and index scans are not findings. */
static bool full_scan(const char *detail)
{
	if (strncmp(detail, "SCAN ", 5) != 0)
		return false;
	const char *name = detail + 5;
	if (*name == '(' || strstr(name, " USING ") || strncmp(name, "CONSTANT ROW", 12) == 0)
		return false;
	size_t len = strcspn(name, " ");
	return !small_table(name, len);
}

/*
 * "SEARCH t USING INDEX i (status=?...)": the index's leading column takes
 * a handful of values, so the search walks a large share of the table. In
 * a query that also names a part, unit or lot, the planner should have
 * started from those few rows instead.
 */
static bool low_selectivity_drive(const char *detail, const char *sql)
{
	static const char *const coarse[] = { "(status=", "(kind=", "(model=", "(outcome=", NULL };
	if (strncmp(detail, "SEARCH ", 7) != 0 || !strstr(detail, " USING "))
		return false;
	bool coarse_lead = false;
	for (size_t i = 0; coarse[i]; i++)
		coarse_lead |= strstr(detail, coarse[i]) != NULL;
	if (!coarse_lead)
		return false;
	static const char *const selective[] = { "u.serial = ?", "p.part_number = ?", "l.lot_code = ?", "unit_id = ?",
						 "sweep_id = ?", NULL };
	for (size_t i = 0; selective[i]; i++)
		if (strstr(sql, selective[i]))
			return true;
	return false;
}

static void add_finding(hb_db *db, const char *detail, const char *sql)
{
	size_t old = db->plan_findings ? strlen(db->plan_findings) : 0;
	size_t add = strlen(detail) + strlen(sql) + 8;
	char *grown = realloc(db->plan_findings, old + add);
	if (!grown)
		return;
	db->plan_findings = grown;
	snprintf(grown + old, add, "%s in: %s\n", detail, sql);
}

void db_plan_note(hb_db *db, const char *sql)
{
	/* a server handle's in-memory copy holds what one command read: the server's plans are the ones
	 * watched (db_pg_plan.c) */
	if (!db->plan_watch || db->pg)
		return;
	size_t len = strlen(sql) + 32;
	char *explain = malloc(len);
	if (!explain)
		return;
	snprintf(explain, len, "EXPLAIN QUERY PLAN %s", sql);
	sqlite3_stmt *st = NULL;
	if (sqlite3_prepare_v2(db->conn, explain, -1, &st, NULL) == SQLITE_OK) {
		db->plan_checked++;
		while (sqlite3_step(st) == SQLITE_ROW) {
			const char *detail = (const char *)sqlite3_column_text(st, 3);
			if (detail && (full_scan(detail) || low_selectivity_drive(detail, sql)))
				add_finding(db, detail, sql);
		}
	}
	sqlite3_finalize(st);
	free(explain);
}

int hb_db_plan_watch(hb_db *db, bool on)
{
	if (!db)
		return HB_ERR_ARG;
	db->plan_watch = on;
	return HB_OK;
}

const char *hb_db_plan_findings(const hb_db *db)
{
	return db && db->plan_findings ? db->plan_findings : "";
}

size_t hb_db_plan_checked(const hb_db *db)
{
	return db ? db->plan_checked : 0;
}
