/* tests/store_fixture.h - fixtures shared by the report and export tests: a throw-away store in its own temporary directory, and reading back what a writer put in a stream */
#ifndef HB_TEST_STORE_FIXTURE_H
#define HB_TEST_STORE_FIXTURE_H

/* Include after <cmocka.h>: stream_read_back asserts. */
#include <stdio.h>
#include <stdlib.h>

#include "db/hb_db.h"

/* Creates /tmp/hb-test-<tag>-XXXXXX and opens bench.db inside it. Returns -1
 * on any failure, the way a cmocka group setup reports one. */
static inline int temp_store_open(char *dir, size_t dir_cap, const char *tag, char *db_path, size_t path_cap, hb_db **db)
{
	snprintf(dir, dir_cap, "/tmp/hb-test-%s-XXXXXX", tag);
	if (!mkdtemp(dir))
		return -1;
	snprintf(db_path, path_cap, "%s/bench.db", dir);
	return hb_db_open(db_path, db) == HB_OK ? 0 : -1;
}

/* Closes the store and removes the directory with everything the tests
 * wrote into it (the store's -wal/-shm files, reports, CSV files). */
static inline int temp_store_remove(const char *dir, hb_db *db)
{
	hb_db_close(db);
	char cmd[400];
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", dir);
	return system(cmd) == 0 ? 0 : -1;
}

/* Everything written to f so far, as a malloc'd string; closes f. */
static inline char *stream_read_back(FILE *f, long *len_out)
{
	long len = ftell(f);
	rewind(f);
	char *buf = malloc((size_t)len + 1);
	assert_non_null(buf);
	assert_int_equal(fread(buf, 1, (size_t)len, f), (size_t)len);
	buf[len] = '\0';
	fclose(f);
	if (len_out)
		*len_out = len;
	return buf;
}

#endif
