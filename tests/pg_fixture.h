/* tests/pg_fixture.h - a real, throw-away PostgreSQL server for the tests: initdb into a temporary directory, pg_ctl start on a Unix socket there only, stopped and removed afterwards */
#ifndef HB_TESTS_PG_FIXTURE_H
#define HB_TESTS_PG_FIXTURE_H

#include <glob.h>
#include <pwd.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/*
 * The server listens on no TCP port (listen_addresses=''), only on a socket in its own directory, so
 * that tests running side by side never meet; it runs with fsync off (a test server loses nothing
 * that matters on a crash). initdb refuses to run as root: under root (CI) the server is run as the
 * `postgres` system user the Debian package creates (or `nobody`), through runuser.
 */
typedef struct pg_fixture {
	char dir[128];     /* the temporary directory: data/, the socket, logs */
	char bin[256];     /* /usr/lib/postgresql/N/bin */
	char as_user[64];  /* "runuser -u USER --" prefix under root, else "" */
	bool up;
	char why[512];     /* why the server is not up */
} pg_fixture;

/* The newest /usr/lib/postgresql/N/bin with an initdb (Debian's layout); false if none. */
static inline bool pg_find_bin(char *bin, size_t cap)
{
	glob_t g;
	if (glob("/usr/lib/postgresql/*/bin/initdb", 0, NULL, &g) != 0)
		return false;
	/* glob sorts: the last is the newest major version (same number of digits in practice) */
	snprintf(bin, cap, "%s", g.gl_pathv[g.gl_pathc - 1]);
	globfree(&g);
	char *slash = strrchr(bin, '/');
	if (slash)
		*slash = '\0';
	return true;
}

/* Runs a shell command line; 0 when it exited 0. */
static inline int pg_sh(const char *cmd)
{
	int rc = system(cmd);
	return rc == 0 ? 0 : -1;
}

/* Starts the server; on failure pg->up stays false and pg->why says why (the test then skips). */
static inline void pg_fixture_start(pg_fixture *pg)
{
	memset(pg, 0, sizeof *pg);
	if (!pg_find_bin(pg->bin, sizeof pg->bin)) {
		snprintf(pg->why, sizeof pg->why,
			 "no PostgreSQL server binaries under /usr/lib/postgresql/*/bin (Debian package postgresql)");
		return;
	}
	snprintf(pg->dir, sizeof pg->dir, "/tmp/hb-pg-XXXXXX");
	if (!mkdtemp(pg->dir)) {
		snprintf(pg->why, sizeof pg->why, "cannot make a temporary directory");
		return;
	}
	if (geteuid() == 0) {
		const char *user = getpwnam("postgres") ? "postgres" : "nobody";
		struct passwd *pw = getpwnam(user);
		if (!pw || chown(pg->dir, pw->pw_uid, pw->pw_gid) != 0) {
			snprintf(pg->why, sizeof pg->why, "running as root and no unprivileged user (postgres, nobody) to run the server");
			return;
		}
		snprintf(pg->as_user, sizeof pg->as_user, "runuser -u %s --", user);
	}
	char cmd[1400];
	snprintf(cmd, sizeof cmd,
		 "%s '%s/initdb' -D '%s/data' -A trust -U hb --no-sync -E UTF8 --locale=C >'%s/initdb.log' 2>&1", pg->as_user,
		 pg->bin, pg->dir, pg->dir);
	if (pg_sh(cmd) != 0) {
		snprintf(pg->why, sizeof pg->why, "initdb failed (log: %s/initdb.log)", pg->dir);
		return;
	}
	/* -w: pg_ctl returns once the server accepts connections (no sleep here) */
	snprintf(cmd, sizeof cmd,
		 "%s '%s/pg_ctl' -D '%s/data' -l '%s/server.log' -w -t 60 -o \"-k %s -c listen_addresses='' -c fsync=off"
		 " -c full_page_writes=off\" start >'%s/pg_ctl.log' 2>&1",
		 pg->as_user, pg->bin, pg->dir, pg->dir, pg->dir, pg->dir);
	if (pg_sh(cmd) != 0) {
		snprintf(pg->why, sizeof pg->why, "pg_ctl start failed (log: %s/server.log)", pg->dir);
		return;
	}
	pg->up = true;
}

/* Creates database name on the server and writes its URL into url. */
static inline int pg_fixture_createdb(const pg_fixture *pg, const char *name, char *url, size_t cap)
{
	char cmd[800];
	snprintf(cmd, sizeof cmd, "%s '%s/createdb' -h '%s' -U hb '%s' >>'%s/createdb.log' 2>&1", pg->as_user, pg->bin,
		 pg->dir, name, pg->dir);
	if (pg_sh(cmd) != 0)
		return -1;
	snprintf(url, cap, "postgresql:///%s?host=%s&user=hb", name, pg->dir);
	return 0;
}

/* Stops the server (immediate: nothing of it is kept) and removes the directory. */
static inline void pg_fixture_stop(pg_fixture *pg)
{
	char cmd[800];
	if (pg->up) {
		snprintf(cmd, sizeof cmd, "%s '%s/pg_ctl' -D '%s/data' -m immediate -w stop >/dev/null 2>&1", pg->as_user,
			 pg->bin, pg->dir);
		pg_sh(cmd);
		pg->up = false;
	}
	if (pg->dir[0]) {
		snprintf(cmd, sizeof cmd, "rm -rf '%s'", pg->dir);
		pg_sh(cmd);
		pg->dir[0] = '\0';
	}
}

#endif
