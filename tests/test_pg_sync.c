/* tests/test_pg_sync.c - many stations, one server: two stations with colliding local ids push to a real PostgreSQL, an interrupted push resumes, a station works with the server down, master data reaches the other station */
#include <fcntl.h>
#include <setjmp.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#include <cmocka.h>
#include <libpq-fe.h>
#include <sqlite3.h>

#include "pg_fixture.h"
#include "db/hb_db.h"

/*
 * What is checked is bookkeeping, not physics: the truth is the stations' own stores (what they
 * measured) and the server must hold exactly the union of them, record by record, by global
 * identity (RFC 9562 UUIDs: distinct stations never make the same one, common practice). The
 * server is a real PostgreSQL started for this program (pg_fixture.h).
 */

static pg_fixture pg;
static char dir[256];
static const char *bin = "./henrybench";

/* The tables whose records carry a global identity (docs/store.md, "Traceability"). */
static const char *const uid_tables[] = { "parts", "spec_revisions", "lots", "lot_decisions", "units", "sweeps",
					  "fits", "verdicts", "inspections", "reports" };
enum { N_UID_TABLES = sizeof uid_tables / sizeof uid_tables[0] };

/* Runs henrybench with args (NULL-ended); stdout and stderr go to files in dir; extra_env "K=V" or NULL. */
static int run_hb(const char *extra_env, const char *const *args, char *err, size_t cap)
{
	char out_path[320], err_path[320];
	snprintf(out_path, sizeof out_path, "%s/out.txt", dir);
	snprintf(err_path, sizeof err_path, "%s/err.txt", dir);
	fflush(NULL);
	pid_t pid = fork();
	if (pid == 0) {
		unsetenv("HENRYBENCH_DB");
		unsetenv("HENRYBENCH_SERVER");
		unsetenv("HB_SYNC_FAIL_AFTER");
		if (extra_env)
			putenv((char *)extra_env);
		int o = open(out_path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
		int e = open(err_path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
		int in = open("/dev/null", O_RDONLY);
		if (o < 0 || e < 0 || in < 0)
			_exit(127);
		dup2(in, 0);
		dup2(o, 1);
		dup2(e, 2);
		const char *argv[24] = { bin };
		for (int i = 0; args[i] && i < 22; i++)
			argv[i + 1] = args[i];
		execv(bin, (char *const *)argv);
		_exit(127);
	}
	assert_true(pid > 0);
	int st = 0;
	assert_int_equal(waitpid(pid, &st, 0), pid);
	if (err) {
		err[0] = '\0';
		FILE *f = fopen(err_path, "r");
		if (f) {
			size_t n = fread(err, 1, cap - 1, f);
			err[n] = '\0';
			fclose(f);
		}
	}
	return WIFEXITED(st) ? WEXITSTATUS(st) : 128 + WTERMSIG(st);
}

/* A station: its own store, made by the demo (its ids start at 1 like every other station's). */
static void make_station(const char *name, char *db_path, size_t cap)
{
	char out[320];
	snprintf(out, sizeof out, "%s/%s", dir, name);
	const char *args[] = { "demo", "--out", out, NULL };
	assert_int_equal(run_hb(NULL, args, NULL, 0), 0);
	snprintf(db_path, cap, "%s/bench.db", out);
}

static int sync_station(const char *db_path, const char *url, const char *env, char *err, size_t cap)
{
	const char *args[] = { "--db", db_path, "sync", "--server", url, NULL };
	return run_hb(env, args, err, cap);
}

static long long local_count(const char *db_path, const char *sql)
{
	sqlite3 *conn = NULL;
	assert_int_equal(sqlite3_open_v2(db_path, &conn, SQLITE_OPEN_READONLY, NULL), SQLITE_OK);
	sqlite3_stmt *st = NULL;
	assert_int_equal(sqlite3_prepare_v2(conn, sql, -1, &st, NULL), SQLITE_OK);
	assert_int_equal(sqlite3_step(st), SQLITE_ROW);
	long long n = sqlite3_column_int64(st, 0);
	sqlite3_finalize(st);
	sqlite3_close(conn);
	return n;
}

static long long server_count(PGconn *c, const char *sql, const char *param)
{
	PGresult *r = PQexecParams(c, sql, param ? 1 : 0, NULL, param ? &param : NULL, NULL, NULL, 0);
	assert_int_equal(PQresultStatus(r), PGRES_TUPLES_OK);
	long long n = atoll(PQgetvalue(r, 0, 0));
	PQclear(r);
	return n;
}

static PGconn *server(const char *url)
{
	PGconn *c = PQconnectdb(url);
	assert_int_equal(PQstatus(c), CONNECTION_OK);
	return c;
}

/* Every identity of every station is on the server exactly once, and the server holds nothing else:
 * 0 lost, 0 duplicated. The points of each sweep come back value for value. */
static void assert_union(const char *url, const char *const *stores, int n_stores)
{
	PGconn *c = server(url);
	for (int t = 0; t < N_UID_TABLES; t++) {
		long long expected = 0;
		for (int s = 0; s < n_stores; s++) {
			char sql[200];
			snprintf(sql, sizeof sql, "SELECT count(*) FROM %s", uid_tables[t]);
			expected += local_count(stores[s], sql);
			/* each local identity once on the server */
			sqlite3 *conn = NULL;
			assert_int_equal(sqlite3_open_v2(stores[s], &conn, SQLITE_OPEN_READONLY, NULL), SQLITE_OK);
			sqlite3_stmt *st = NULL;
			snprintf(sql, sizeof sql, "SELECT uid FROM %s", uid_tables[t]);
			assert_int_equal(sqlite3_prepare_v2(conn, sql, -1, &st, NULL), SQLITE_OK);
			char q[200];
			snprintf(q, sizeof q, "SELECT count(*) FROM %s WHERE uid = $1", uid_tables[t]);
			while (sqlite3_step(st) == SQLITE_ROW) {
				long long on_server = server_count(c, q, (const char *)sqlite3_column_text(st, 0));
				if (on_server != 1)
					print_error("%s %s: %lld on the server\n", uid_tables[t], sqlite3_column_text(st, 0),
						    on_server);
				assert_int_equal(on_server, 1);
			}
			sqlite3_finalize(st);
			sqlite3_close(conn);
		}
		char sql[200];
		snprintf(sql, sizeof sql, "SELECT count(*) FROM %s", uid_tables[t]);
		assert_int_equal(server_count(c, sql, NULL), expected);
		snprintf(sql, sizeof sql, "SELECT count(DISTINCT uid) FROM %s", uid_tables[t]);
		assert_int_equal(server_count(c, sql, NULL), expected);
	}
	/* the points: as many as the stations hold, and each sweep's own, value for value */
	long long points = 0;
	for (int s = 0; s < n_stores; s++) {
		points += local_count(stores[s], "SELECT count(*) FROM points");
		sqlite3 *conn = NULL;
		assert_int_equal(sqlite3_open_v2(stores[s], &conn, SQLITE_OPEN_READONLY, NULL), SQLITE_OK);
		sqlite3_stmt *st = NULL;
		assert_int_equal(sqlite3_prepare_v2(conn,
						    "SELECT s.uid, p.seq, p.primary_value, p.bias_meas_a FROM points p"
						    " JOIN sweeps s ON s.id = p.sweep_id ORDER BY s.id, p.seq",
						    -1, &st, NULL),
				 SQLITE_OK);
		while (sqlite3_step(st) == SQLITE_ROW) {
			char seq[32];
			snprintf(seq, sizeof seq, "%lld", (long long)sqlite3_column_int64(st, 1));
			const char *params[2] = { (const char *)sqlite3_column_text(st, 0), seq };
			PGresult *r = PQexecParams(c,
						   "SELECT p.primary_value, p.bias_meas_a FROM points p JOIN sweeps s ON"
						   " s.id = p.sweep_id WHERE s.uid = $1 AND p.seq = $2::bigint",
						   2, NULL, params, NULL, NULL, 0);
			assert_int_equal(PQresultStatus(r), PGRES_TUPLES_OK);
			assert_int_equal(PQntuples(r), 1);
			/* a double sent as 17 significant digits comes back bit for bit (IEEE 754-2008 5.12.2) */
			if (sqlite3_column_type(st, 2) == SQLITE_NULL)
				assert_true(PQgetisnull(r, 0, 0));
			else
				assert_true(strtod(PQgetvalue(r, 0, 0), NULL) == sqlite3_column_double(st, 2));
			if (sqlite3_column_type(st, 3) == SQLITE_NULL)
				assert_true(PQgetisnull(r, 0, 1));
			else
				assert_true(strtod(PQgetvalue(r, 0, 1), NULL) == sqlite3_column_double(st, 3));
			PQclear(r);
		}
		sqlite3_finalize(st);
		sqlite3_close(conn);
	}
	assert_int_equal(server_count(c, "SELECT count(*) FROM points", NULL), points);
	PQfinish(c);
}

static void need_server(void)
{
	if (!pg.up) {
		print_message("SKIPPED: no PostgreSQL server for this test: %s\n", pg.why);
		skip();
	}
}

/* Two stations, each with sweeps 1..10 in its own store, push to one server. */
static void test_two_stations_collide_nothing_lost(void **state)
{
	(void)state;
	need_server();
	char a[320], b[320], url[400], err[2048];
	make_station("two-a", a, sizeof a);
	make_station("two-b", b, sizeof b);
	/* the local ids collide: both stores number their sweeps alike */
	assert_int_equal(local_count(a, "SELECT min(id) FROM sweeps"), local_count(b, "SELECT min(id) FROM sweeps"));
	assert_int_equal(local_count(a, "SELECT count(*) FROM sweeps"), local_count(b, "SELECT count(*) FROM sweeps"));
	assert_int_equal(pg_fixture_createdb(&pg, "two", url, sizeof url), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	/* a second sync of each sends nothing new and changes nothing */
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	const char *stores[] = { a, b };
	assert_union(url, stores, 2);
}

/* A push stopped right after the server committed its n-th batch, before the station noted it (the
 * worst moment for a crash), then run again: the server holds each record once. Each n has its own
 * server database, so that every batch of the push is the one cut once. */
static void test_interrupted_push_resumes(void **state)
{
	(void)state;
	need_server();
	char a[320], url[400], err[2048];
	make_station("resume-a", a, sizeof a);
	const char *stores[] = { a };
	int interrupted = 0;
	for (int n = 1; n < 60; n++) {
		char name[32], env[64];
		snprintf(name, sizeof name, "resume%d", n);
		assert_int_equal(pg_fixture_createdb(&pg, name, url, sizeof url), 0);
		snprintf(env, sizeof env, "HB_SYNC_FAIL_AFTER=%d", n);
		int rc = sync_station(a, url, env, err, sizeof err);
		if (rc == 0)
			break;
		assert_int_equal(rc, 1);
		interrupted++;
		assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
		assert_union(url, stores, 1);
	}
	/* one batch per table of the demo store at least: every table was cut once */
	assert_true(interrupted >= N_UID_TABLES);
}

/* The server is down: the station measures and stores as ever, sync says so and exits 1; once the
 * server is back, the same command sends everything. */
static void test_server_down_then_later(void **state)
{
	(void)state;
	need_server();
	char c[320], url[400], err[2048];
	assert_int_equal(pg_fixture_createdb(&pg, "later", url, sizeof url), 0);
	char cmd[1000];
	snprintf(cmd, sizeof cmd, "%s '%s/pg_ctl' -D '%s/data' -m fast -w stop >/dev/null 2>&1", pg.as_user, pg.bin, pg.dir);
	assert_int_equal(pg_sh(cmd), 0);
	make_station("later-c", c, sizeof c);
	assert_true(local_count(c, "SELECT count(*) FROM sweeps WHERE status = 'complete'") > 0);
	assert_int_equal(sync_station(c, url, NULL, err, sizeof err), 1);
	assert_non_null(strstr(err, "cannot reach the server"));
	snprintf(cmd, sizeof cmd,
		 "%s '%s/pg_ctl' -D '%s/data' -l '%s/server.log' -w -t 60 -o \"-k %s -c listen_addresses='' -c fsync=off\""
		 " start >/dev/null 2>&1",
		 pg.as_user, pg.bin, pg.dir, pg.dir, pg.dir);
	assert_int_equal(pg_sh(cmd), 0);
	assert_int_equal(sync_station(c, url, NULL, err, sizeof err), 0);
	const char *stores[] = { c };
	assert_union(url, stores, 1);
}

static void text_of(const char *db_path, const char *sql, char *out, size_t cap)
{
	sqlite3 *conn = NULL;
	assert_int_equal(sqlite3_open_v2(db_path, &conn, SQLITE_OPEN_READONLY, NULL), SQLITE_OK);
	sqlite3_stmt *st = NULL;
	assert_int_equal(sqlite3_prepare_v2(conn, sql, -1, &st, NULL), SQLITE_OK);
	out[0] = '\0';
	if (sqlite3_step(st) == SQLITE_ROW && sqlite3_column_text(st, 0))
		snprintf(out, cap, "%s", (const char *)sqlite3_column_text(st, 0));
	sqlite3_finalize(st);
	sqlite3_close(conn);
}

/* A part added and then edited at station A reaches station B with the same identities; a later
 * calibration recorded at A replaces B's older one. */
static void test_master_data_pulled(void **state)
{
	(void)state;
	need_server();
	char a[320], b[320], url[400], err[2048];
	make_station("pull-a", a, sizeof a);
	make_station("pull-b", b, sizeof b);
	assert_int_equal(pg_fixture_createdb(&pg, "pull", url, sizeof url), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	const char *add[] = { "--db", a, "part", "add", "HB-PULL-7", "--nominal", "47uH", "--tol", "10%", "--freq",
			      "100kHz", "--level", "0.1V", NULL };
	assert_int_equal(run_hb(NULL, add, err, sizeof err), 0);
	const char *edit[] = { "--db", a, "part", "edit", "HB-PULL-7", "--tol", "5%", NULL };
	assert_int_equal(run_hb(NULL, edit, err, sizeof err), 0);
	const char *cal[] = { "--db", a, "instrument", "edit", "SL0001", "--cal-date", "2099-01-02", "--due-date",
			      "2100-01-02", NULL };
	assert_int_equal(run_hb(NULL, cal, err, sizeof err), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);

	char ua[256], ub[256];
	text_of(a, "SELECT uid FROM parts WHERE part_number = 'HB-PULL-7'", ua, sizeof ua);
	text_of(b, "SELECT uid FROM parts WHERE part_number = 'HB-PULL-7'", ub, sizeof ub);
	assert_true(ua[0] != '\0');
	assert_string_equal(ua, ub);
	/* both revisions, same identities, same order; the current spec is the edited one */
	text_of(a, "SELECT group_concat(uid, ',') FROM (SELECT r.uid FROM spec_revisions r JOIN parts p ON p.id = r.part_id"
		   " WHERE p.part_number = 'HB-PULL-7' ORDER BY r.revision)",
		ua, sizeof ua);
	text_of(b, "SELECT group_concat(uid, ',') FROM (SELECT r.uid FROM spec_revisions r JOIN parts p ON p.id = r.part_id"
		   " WHERE p.part_number = 'HB-PULL-7' ORDER BY r.revision)",
		ub, sizeof ub);
	assert_true(strchr(ua, ',') != NULL);
	assert_string_equal(ua, ub);
	/* 5 % entered as the edit: 0.05 as a fraction */
	assert_int_equal(local_count(b, "SELECT tolerance = 0.05 FROM parts WHERE part_number = 'HB-PULL-7'"), 1);
	text_of(b, "SELECT cal_date FROM instruments WHERE serial = 'SL0001'", ub, sizeof ub);
	assert_string_equal(ub, "2099-01-02");
	text_of(b, "SELECT due_date FROM instruments WHERE serial = 'SL0001'", ub, sizeof ub);
	assert_string_equal(ub, "2100-01-02");
	/* the server holds the part once: what B pulled is not sent back as another record */
	PGconn *conn = server(url);
	assert_int_equal(server_count(conn, "SELECT count(*) FROM parts WHERE part_number = 'HB-PULL-7'", NULL), 1);
	assert_int_equal(server_count(conn,
				      "SELECT count(*) FROM spec_revisions r JOIN parts p ON p.uid = r.part_uid"
				      " WHERE p.part_number = 'HB-PULL-7'",
				      NULL),
			 2);
	PQfinish(conn);
}

/* What the last run_hb wrote on stdout, malloc'd. */
static char *last_out(void)
{
	char path[320];
	snprintf(path, sizeof path, "%s/out.txt", dir);
	FILE *f = fopen(path, "r");
	assert_non_null(f);
	char *buf = calloc(1, 1 << 20);
	assert_non_null(buf);
	size_t n = fread(buf, 1, (1 << 20) - 1, f);
	buf[n] = '\0';
	fclose(f);
	return buf;
}

/* Drops the line holding key (a time stamp the command writes when it runs). */
static void drop_line(char *text, const char *key)
{
	char *p = strstr(text, key);
	if (!p)
		return;
	while (p > text && p[-1] != '\n')
		p--;
	char *end = strchr(p, '\n');
	memmove(p, end ? end + 1 : p + strlen(p), strlen(end ? end + 1 : p + strlen(p)) + 1);
}

/* --db postgresql://... : every read command prints against the server what it prints against the
 * station's store, byte for byte (one station on a server of its own: the server numbers the records
 * in the order the station did, so ids match too). What is compared is the station's own output: the
 * truth is the store the records came from. */
static void test_reads_from_server(void **state)
{
	(void)state;
	need_server();
	char a[320], url[400], err[2048], part[128], lot[128], sweep_uid[64], serial[64], report[400];
	make_station("read-a", a, sizeof a);
	/* sweep 2 fitted and judged again: a newer fit, and verdicts that supersede the first ones */
	const char *refit[] = { "--db", a, "fit", "2", NULL };
	assert_int_equal(run_hb(NULL, refit, err, sizeof err), 0);
	assert_true(local_count(a, "SELECT count(*) FROM verdicts WHERE superseded_by IS NOT NULL") > 0);
	assert_int_equal(pg_fixture_createdb(&pg, "read", url, sizeof url), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	text_of(a, "SELECT part_number FROM parts ORDER BY id LIMIT 1", part, sizeof part);
	text_of(a, "SELECT lot_code FROM lots ORDER BY id LIMIT 1", lot, sizeof lot);
	text_of(a, "SELECT uid FROM sweeps WHERE kind = 'bias' ORDER BY id LIMIT 1", sweep_uid, sizeof sweep_uid);
	text_of(a, "SELECT serial FROM instruments WHERE kind = 'lcr' ORDER BY id LIMIT 1", serial, sizeof serial);
	const char *const cmds[][8] = {
		{ "sweeps", NULL },
		{ "sweeps", "--all", "--csv", NULL },
		{ "sweeps", "--part", part, "--kind", "frequency", NULL },
		{ "sweeps", "--lot", lot, "--limit", "3", NULL },
		{ "show", "2", NULL },
		{ "show", "2", "--all-verdicts", NULL },
		{ "show", "2", "--json", NULL },
		{ "show", sweep_uid, "--json", NULL },
		{ "show", "1", "--csv", NULL },
		{ "history", part, NULL },
		{ "history", part, "--json", NULL },
		{ "history", part, "--csv", NULL },
		{ "compare", "2", "3", "4", NULL },
		{ "compare", "2", "3", "--json", NULL },
		{ "export", "2", "3", "--csv", NULL },
		{ "export", "--part", part, "--csv", NULL },
		{ "export", "--lot", lot, "--csv", NULL },
		{ "instrument", "list", NULL },
		{ "instrument", "show", serial, "--json", NULL },
		{ "instrument", "affected", serial, "--since", "2000-01-01", NULL },
		{ "instrument", "affected", serial, "--since", "2000-01-01", "--json", NULL },
		{ "part", "list", NULL },
		{ "part", "show", part, NULL },
		{ "part", "show", part, "--json", NULL },
		{ "export", "--part", part, "--json", NULL },
	};
	for (size_t i = 0; i < sizeof cmds / sizeof cmds[0]; i++) {
		const char *local[12] = { "--db", a };
		const char *remote[12] = { "--db", url };
		for (int k = 0; cmds[i][k]; k++)
			local[k + 2] = remote[k + 2] = cmds[i][k];
		assert_int_equal(run_hb(NULL, local, err, sizeof err), 0);
		char *want = last_out();
		int rc = run_hb(NULL, remote, err, sizeof err);
		if (rc != 0)
			print_message("%s %s: %s", cmds[i][0], cmds[i][1] ? cmds[i][1] : "", err);
		assert_int_equal(rc, 0);
		char *got = last_out();
		drop_line(want, "\"exported\"");
		drop_line(got, "\"exported\"");
		/* the output is not empty: two empty answers would compare equal */
		assert_true(strchr(want, '\n') != NULL);
		if (strcmp(got, want) != 0)
			print_message("differs: %s %s %s\n", cmds[i][0], cmds[i][1] ? cmds[i][1] : "",
				      cmds[i][1] && cmds[i][2] ? cmds[i][2] : "");
		assert_string_equal(got, want);
		free(want);
		free(got);
	}
	/* a desk whose station file names the server as its store reads it without --db */
	char station_file[400], station_env[420];
	snprintf(station_file, sizeof station_file, "%s/desk.ini", dir);
	FILE *desk = fopen(station_file, "w");
	assert_non_null(desk);
	fprintf(desk, "[store]\npath = %s\n", url);
	fclose(desk);
	snprintf(station_env, sizeof station_env, "HENRYBENCH_STATION=%s", station_file);
	const char *by_file[] = { "history", part, "--json", NULL };
	const char *by_db[] = { "--db", a, "history", part, "--json", NULL };
	assert_int_equal(run_hb(NULL, by_db, err, sizeof err), 0);
	char *want_desk = last_out();
	assert_int_equal(run_hb(station_env, by_file, err, sizeof err), 0);
	char *got_desk = last_out();
	assert_string_equal(got_desk, want_desk);
	free(want_desk);
	free(got_desk);

	/* the demo's filed report verifies against the server (its points came through the push) */
	snprintf(report, sizeof report, "%s/read-a/report.html", dir);
	const char *verify_station[] = { "--db", url, "verify", report, NULL };
	assert_int_equal(run_hb(NULL, verify_station, err, sizeof err), 0);
	/* a report written from the server's records is filed there and verifies there */
	char page[400];
	snprintf(page, sizeof page, "%s/from-server.html", dir);
	const char *write[] = { "--db", url, "report", "--part", part, "--out", page, NULL };
	assert_int_equal(run_hb(NULL, write, err, sizeof err), 0);
	const char *verify_server[] = { "--db", url, "verify", page, NULL };
	assert_int_equal(run_hb(NULL, verify_server, err, sizeof err), 0);
	/* nothing is written through a server handle: records reach the server by sync only */
	const char *edit[] = { "--db", url, "part", "edit", part, "--desc", "changed on the server", NULL };
	assert_int_equal(run_hb(NULL, edit, err, sizeof err), 1);
	assert_non_null(strstr(err, "a server is read from, not written to"));
	const char *show[] = { "--db", url, "part", "show", part, NULL };
	assert_int_equal(run_hb(NULL, show, err, sizeof err), 0);
	char *after = last_out();
	assert_null(strstr(after, "changed on the server"));
	free(after);
}

/* The count `sync --status` prints for table (its line "  TABLE  N"), from the last run's stdout. */
static long long status_count(const char *table)
{
	char *out = last_out();
	char key[64];
	snprintf(key, sizeof key, "\n  %s ", table);
	char *at = strstr(out, key);
	long long n = at ? atoll(at + strlen(key) + strspn(at + strlen(key), " ")) : -1;
	free(out);
	return n;
}

static void write_text(const char *path, const char *text)
{
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs(text, f);
	fclose(f);
}

/* The clock's second changes: edits stamped in whole seconds are then strictly ordered (a wait for a
 * condition, bounded, not a fixed sleep). */
static void next_second(void)
{
	time_t t0 = time(NULL);
	for (int i = 0; i < 300 && time(NULL) == t0; i++) {
		struct timespec ts = { 0, 10 * 1000 * 1000 };
		nanosleep(&ts, NULL);
	}
	assert_true(time(NULL) != t0);
}

static void pg_stop_start(bool start)
{
	char cmd[1000];
	if (start)
		snprintf(cmd, sizeof cmd,
			 "%s '%s/pg_ctl' -D '%s/data' -l '%s/server.log' -w -t 60 -o \"-k %s -c listen_addresses='' -c fsync=off\""
			 " start >/dev/null 2>&1",
			 pg.as_user, pg.bin, pg.dir, pg.dir, pg.dir);
	else
		snprintf(cmd, sizeof cmd, "%s '%s/pg_ctl' -D '%s/data' -m fast -w stop >/dev/null 2>&1", pg.as_user, pg.bin,
			 pg.dir);
	assert_int_equal(pg_sh(cmd), 0);
}

/* [store] sync = after-sweep: a sweep lands on the server as it ends; with the server down the sweep
 * still succeeds, one warning names the server (never the password of its URL), the sweep waits and
 * a later `sync` (server and store from the station file) sends it. */
static void test_sync_after_sweep(void **state)
{
	(void)state;
	need_server();
	char a[320], url[400], err[4096], station[400], env[460], part[128];
	make_station("after-a", a, sizeof a);
	assert_int_equal(pg_fixture_createdb(&pg, "after", url, sizeof url), 0);
	text_of(a, "SELECT part_number FROM parts ORDER BY id LIMIT 1", part, sizeof part);
	/* the store by a path relative to the station file, the server with a password it must not echo */
	snprintf(station, sizeof station, "%s/after-a/station.ini", dir);
	char ini[1200];
	snprintf(ini, sizeof ini,
		 "[limits]\nmax_current = 3\nmax_voltage = 5\nmax_power = 20\n"
		 "[store]\npath = bench.db\nsync = after-sweep\nserver = %s&password=SeCrEt-42\n",
		 url);
	write_text(station, ini);
	snprintf(env, sizeof env, "HENRYBENCH_STATION=%s", station);
	const char *sweep[] = { "sweep", "--part", part, "--unit", "AFTER-1", "--lcr", "sim:lcr", "--supply", "sim:supply",
				"--to", "2", "--steps", "5", "--yes", "--no-fit", NULL };
	assert_int_equal(run_hb(env, sweep, err, sizeof err), 0);
	char uid[64];
	text_of(a, "SELECT uid FROM sweeps ORDER BY id DESC LIMIT 1", uid, sizeof uid);
	PGconn *c = server(url);
	assert_int_equal(server_count(c, "SELECT count(*) FROM sweeps WHERE uid = $1", uid), 1);
	/* 5 points planned, 5 on the server */
	assert_int_equal(server_count(c, "SELECT count(*) FROM points p JOIN sweeps s ON s.id = p.sweep_id WHERE s.uid = $1",
				      uid),
			 5);
	PQfinish(c);

	pg_stop_start(false);
	sweep[4] = "AFTER-2";
	assert_int_equal(run_hb(env, sweep, err, sizeof err), 0);
	assert_non_null(strstr(err, "warning: sync after sweep"));
	assert_non_null(strstr(err, "database after"));
	assert_null(strstr(err, "SeCrEt-42"));
	/* one line */
	assert_true(strchr(err, '\n') == NULL || strchr(err, '\n')[1] == '\0');
	char uid2[64];
	text_of(a, "SELECT uid FROM sweeps ORDER BY id DESC LIMIT 1", uid2, sizeof uid2);
	assert_string_not_equal(uid, uid2);
	assert_int_equal(local_count(a, "SELECT count(*) FROM sweeps WHERE unit_id = (SELECT id FROM units WHERE"
					" serial = 'AFTER-2') AND status = 'complete'"),
			 1);

	pg_stop_start(true);
	const char *status[] = { "sync", "--status", NULL };
	assert_int_equal(run_hb(env, status, err, sizeof err), 0);
	assert_int_equal(status_count("sweeps"), 1);
	const char *sync[] = { "sync", NULL };
	assert_int_equal(run_hb(env, sync, err, sizeof err), 0);
	c = server(url);
	assert_int_equal(server_count(c, "SELECT count(*) FROM sweeps WHERE uid = $1", uid2), 1);
	PQfinish(c);
	assert_int_equal(run_hb(env, status, err, sizeof err), 0);
	assert_int_equal(status_count("sweeps"), 0);

	/* command line > environment > station file: a station file naming a server that does not exist
	 * is overridden by HENRYBENCH_SERVER, and that by --server */
	snprintf(ini, sizeof ini, "[store]\npath = bench.db\nserver = postgresql:///nowhere?host=%s/none\n", dir);
	write_text(station, ini);
	assert_int_equal(run_hb(env, status, err, sizeof err), 1);
	assert_non_null(strstr(err, "database nowhere"));
	char server_env[500];
	snprintf(server_env, sizeof server_env, "HENRYBENCH_SERVER=%s", url);
	setenv("HENRYBENCH_STATION", station, 1);
	assert_int_equal(run_hb(server_env, status, err, sizeof err), 0);
	const char *bad_cmdline[] = { "sync", "--status", "--server", "postgresql:///nowhere2?host=/nonexistent", NULL };
	assert_int_equal(run_hb(server_env, bad_cmdline, err, sizeof err), 1);
	assert_non_null(strstr(err, "database nowhere2"));
	unsetenv("HENRYBENCH_STATION");
}

/* Two stations edit the same part, instrument and drawing after both pushed them. The rule
 * (docs/store.md, "Many stations"): the part's head row and the drawing follow the newest edit by
 * time, whichever station pushes first; every spec revision is kept; the register follows the later
 * calibration date, and on the same date the later due date, then the greater certificate. */
static void test_later_edits_follow_the_rule(void **state)
{
	(void)state;
	need_server();
	char a[320], b[320], url[400], err[2048], t[512];
	make_station("edit-a", a, sizeof a);
	make_station("edit-b", b, sizeof b);
	assert_int_equal(pg_fixture_createdb(&pg, "edits", url, sizeof url), 0);
	const char *add[] = { "--db", a, "part", "add", "HB-EDIT-1", "--nominal", "47uH", "--tol", "10%", "--freq", "100kHz",
			      "--level", "0.1V", "--gap", "0.5mm", "--gap-tol", "0.05mm", "--curve", "0:47u,2:40u,4:30u",
			      "--curve-tol", "10%", NULL };
	assert_int_equal(run_hb(NULL, add, err, sizeof err), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	/* B pulled the part with its drawing and curve mask (the values entered above) */
	assert_int_equal(local_count(b, "SELECT count(*) FROM part_curve_mask m JOIN parts p ON p.id = m.part_id"
					" WHERE p.part_number = 'HB-EDIT-1'"),
			 3);
	assert_int_equal(local_count(b, "SELECT abs(d.gap_m - 0.0005) < 1e-12 FROM part_drawing d JOIN parts p"
					" ON p.id = d.part_id WHERE p.part_number = 'HB-EDIT-1'"),
			 1);

	/* A edits first, B a second later: B's edits are the newest */
	const char *edit_a[] = { "--db", a, "part", "edit", "HB-EDIT-1", "--tol", "5%", "--curve", "0:47u,3:35u", NULL };
	assert_int_equal(run_hb(NULL, edit_a, err, sizeof err), 0);
	const char *cal_a[] = { "--db", a, "instrument", "edit", "SL0001", "--cal-date", "2099-01-02", "--due-date",
				"2100-01-02", "--certificate", "CERT-A", NULL };
	assert_int_equal(run_hb(NULL, cal_a, err, sizeof err), 0);
	/* an edit after the push waits again */
	const char *status_a[] = { "--db", a, "sync", "--status", "--server", url, NULL };
	assert_int_equal(run_hb(NULL, status_a, err, sizeof err), 0);
	assert_int_equal(status_count("parts"), 1);
	assert_int_equal(status_count("part_drawing"), 1);
	assert_true(status_count("instruments") >= 1);
	next_second();
	const char *edit_b[] = { "--db", b, "part", "edit", "HB-EDIT-1", "--tol", "2%", "--curve", "0:47u,1:45u,5:20u,6:10u",
				 NULL };
	assert_int_equal(run_hb(NULL, edit_b, err, sizeof err), 0);
	const char *cal_b[] = { "--db", b, "instrument", "edit", "SL0001", "--cal-date", "2099-01-02", "--due-date",
				"2100-01-02", "--certificate", "CERT-B", NULL };
	assert_int_equal(run_hb(NULL, cal_b, err, sizeof err), 0);

	/* the newest pushes first, the older after it: the rule is by time, not by arrival */
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	PGconn *c = server(url);
	/* 2 % entered at B: 0.02 as a fraction */
	assert_int_equal(server_count(c, "SELECT count(*) FROM parts WHERE part_number = 'HB-EDIT-1' AND tolerance = 0.02",
				      NULL),
			 1);
	/* nothing lost: the first spec and both edits */
	assert_int_equal(server_count(c, "SELECT count(*) FROM spec_revisions r JOIN parts p ON p.uid = r.part_uid"
					 " WHERE p.part_number = 'HB-EDIT-1'",
				      NULL),
			 3);
	assert_int_equal(server_count(c, "SELECT count(*) FROM part_curve_mask m JOIN parts p ON p.uid = m.part_uid"
					 " WHERE p.part_number = 'HB-EDIT-1'",
				      NULL),
			 4);
	/* the same calibration date: the greater certificate, whichever came last */
	PGresult *r = PQexec(c, "SELECT certificate FROM instruments WHERE serial = 'SL0001'");
	assert_int_equal(PQntuples(r), 1);
	assert_string_equal(PQgetvalue(r, 0, 0), "CERT-B");
	PQclear(r);
	PQfinish(c);
	/* A pulled B's edits: both stations now agree with the server */
	assert_int_equal(local_count(a, "SELECT tolerance = 0.02 FROM parts WHERE part_number = 'HB-EDIT-1'"), 1);
	text_of(a, "SELECT group_concat(current_a, ',') FROM (SELECT m.current_a FROM part_curve_mask m JOIN parts p"
		   " ON p.id = m.part_id WHERE p.part_number = 'HB-EDIT-1' ORDER BY m.ord)",
		t, sizeof t);
	assert_string_equal(t, "0.0,1.0,5.0,6.0");
	text_of(a, "SELECT certificate FROM instruments WHERE serial = 'SL0001'", t, sizeof t);
	assert_string_equal(t, "CERT-B");
	/* a later calibration date wins over the greater certificate */
	const char *cal_a2[] = { "--db", a, "instrument", "edit", "SL0001", "--cal-date", "2099-06-01", "--due-date",
				 "2100-06-01", "--certificate", "CERT-A2", NULL };
	assert_int_equal(run_hb(NULL, cal_a2, err, sizeof err), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	assert_int_equal(sync_station(b, url, NULL, err, sizeof err), 0);
	text_of(b, "SELECT certificate || ' ' || cal_date FROM instruments WHERE serial = 'SL0001'", t, sizeof t);
	assert_string_equal(t, "CERT-A2 2099-06-01");
	/* after all this, nothing waits at either station */
	assert_int_equal(run_hb(NULL, status_a, err, sizeof err), 0);
	assert_int_equal(status_count("parts"), 0);
	assert_int_equal(status_count("part_drawing"), 0);
	assert_int_equal(status_count("instruments"), 0);
}

/* Every read a server handle runs, on a server an index serves: the library's reads under the plan
 * watch (EXPLAIN of each statement run, sequential scans disabled so that any usable index is taken,
 * common practice), no finding; with one index dropped, the watch names the table it then scans. */
static const char *server_reads(const char *url, const char *part, const char *lot, const char *serial,
				size_t *checked)
{
	static char findings[8192];
	hb_db *db = NULL;
	assert_int_equal(hb_db_open_as(url, HB_DB_OPEN_READ, &db), HB_OK);
	assert_int_equal(hb_db_plan_watch(db, true), HB_OK);
	hb_db_part p;
	assert_int_equal(hb_db_part_get(db, part, &p), HB_OK);
	hb_db_history_filter hf;
	hb_db_history_filter_init(&hf);
	hf.part_number = part;
	hb_db_history_row *rows = NULL;
	size_t n = 0;
	assert_int_equal(hb_db_history(db, &hf, &rows, &n), HB_OK);
	assert_true(n > 0);
	int64_t sweep_id = rows[0].sweep_id;
	hb_db_history_free(rows);
	/* the sweep list and count with each filter the commands use */
	hb_db_sweep_filter sf;
	const char *filters[][3] = { { NULL, NULL, NULL }, { part, NULL, NULL }, { NULL, serial, NULL },
				     { part, NULL, lot } };
	for (size_t i = 0; i < sizeof filters / sizeof filters[0]; i++) {
		hb_db_sweep_filter_init(&sf);
		sf.part_number = filters[i][0];
		sf.serial = filters[i][1];
		sf.lot_code = filters[i][2];
		sf.limit = 50;
		hb_db_sweep *sw = NULL;
		size_t m = 0;
		int64_t count = 0;
		assert_int_equal(hb_db_sweep_list(db, &sf, &sw, &m), HB_OK);
		assert_true(m > 0);
		/* counting every sweep of the store reads them all by its nature: counts with a filter only */
		if (i > 0) {
			assert_int_equal(hb_db_sweep_count(db, &sf, &count), HB_OK);
			assert_true(count >= (int64_t)m);
		}
		hb_db_sweeps_free(sw);
	}
	hb_db_sweep s;
	assert_int_equal(hb_db_sweep_get(db, sweep_id, &s), HB_OK);
	hb_db_point *pts = NULL;
	assert_int_equal(hb_db_points_get(db, sweep_id, &pts, &n), HB_OK);
	assert_true(n > 0);
	hb_db_points_free(pts);
	hb_db_lot lt;
	assert_int_equal(hb_db_lot_find(db, p.id, lot, &lt), HB_OK);
	hb_db_inspection *insp = NULL;
	assert_int_equal(hb_db_inspection_list(db, lt.id, &insp, &n), HB_OK);
	hb_db_inspections_free(insp);
	hb_db_instrument inst;
	assert_int_equal(hb_db_instrument_find(db, "SL0001", &inst), HB_OK);
	hb_db_affected *aff = NULL;
	assert_int_equal(hb_db_instrument_affected(db, inst.id, 0, &aff, &n), HB_OK);
	assert_true(n > 0);
	free(aff);
	char uid[HB_DB_UID_LEN];
	int64_t found = 0;
	assert_int_equal(hb_db_uid_of(db, HB_DB_REC_SWEEP, sweep_id, uid), HB_OK);
	assert_int_equal(hb_db_uid_find(db, HB_DB_REC_SWEEP, uid, &found), HB_OK);
	assert_int_equal(found, sweep_id);
	char(*suppliers)[HB_DB_ID_LEN] = NULL;
	assert_int_equal(hb_db_stream_suppliers(db, p.id, &suppliers, &n), HB_OK);
	free(suppliers);
	*checked = hb_db_plan_checked(db);
	snprintf(findings, sizeof findings, "%s", hb_db_plan_findings(db));
	hb_db_close(db);
	return findings;
}

static void test_server_plans(void **state)
{
	(void)state;
	need_server();
	char a[320], url[400], err[2048], part[128], lot[128], serial[128];
	make_station("plans-a", a, sizeof a);
	assert_int_equal(pg_fixture_createdb(&pg, "plans", url, sizeof url), 0);
	assert_int_equal(sync_station(a, url, NULL, err, sizeof err), 0);
	text_of(a, "SELECT part_number FROM parts ORDER BY id LIMIT 1", part, sizeof part);
	text_of(a, "SELECT lot_code FROM lots ORDER BY id LIMIT 1", lot, sizeof lot);
	text_of(a, "SELECT serial FROM units ORDER BY id LIMIT 1", serial, sizeof serial);
	size_t checked = 0;
	const char *findings = server_reads(url, part, lot, serial, &checked);
	if (*findings)
		print_message("server plan findings:\n%s", findings);
	assert_string_equal(findings, "");
	/* the reads ran and were explained: a watch that checked nothing would also find nothing */
	assert_true(checked >= 20);
	/* the watch can see: without the index on a fit's sweep, the fits are scanned */
	PGconn *conn = server(url);
	PGresult *r = PQexec(conn, "DROP INDEX fits_sweep");
	assert_int_equal(PQresultStatus(r), PGRES_COMMAND_OK);
	PQclear(r);
	PQfinish(conn);
	findings = server_reads(url, part, lot, serial, &checked);
	assert_non_null(strstr(findings, " on fits f "));
}

static int group_setup(void **state)
{
	(void)state;
	const char *env = getenv("HENRYBENCH_BIN");
	if (env)
		bin = env;
	snprintf(dir, sizeof dir, "/tmp/hb-test-pgsync-XXXXXX");
	if (!mkdtemp(dir))
		return -1;
	pg_fixture_start(&pg);
	if (!pg.up)
		print_message("PostgreSQL not started, the sync tests skip: %s\n", pg.why);
	return 0;
}

static int group_teardown(void **state)
{
	(void)state;
	pg_fixture_stop(&pg);
	char cmd[400];
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
	return system(cmd) == 0 ? 0 : -1;
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_two_stations_collide_nothing_lost),
		cmocka_unit_test(test_interrupted_push_resumes),
		cmocka_unit_test(test_server_down_then_later),
		cmocka_unit_test(test_master_data_pulled),
		cmocka_unit_test(test_reads_from_server),
		cmocka_unit_test(test_sync_after_sweep),
		cmocka_unit_test(test_later_edits_follow_the_rule),
		cmocka_unit_test(test_server_plans),
	};
	return cmocka_run_group_tests(tests, group_setup, group_teardown);
}
