/* tests/test_identify_queries.c - `identify` names the read-back queries (query.*) a profile defines among its operations, in text and JSON */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "cli_fixture.h"
#include "cli_json.h"

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("idqueries");
}

/* The query.* keys the profile file defines (its own text is the source:
 * drivers/profiles/generic-*.ini, key = value lines, ';' or '#' comments). */
static size_t profile_queries(const char *path, char names[][64], size_t cap)
{
	char *text = slurp(path);
	assert_non_null(text);
	size_t n = 0;
	for (char *line = text; line && *line;) {
		char *end = strchr(line, '\n');
		if (end)
			*end = '\0';
		while (*line == ' ' || *line == '\t')
			line++;
		if (strncmp(line, "query.", 6) == 0 && n < cap) {
			size_t k = strcspn(line, " \t=");
			snprintf(names[n++], 64, "%.*s", (int)k, line);
		}
		line = end ? end + 1 : NULL;
	}
	free(text);
	return n;
}

static bool has_word(const char *line, const char *word)
{
	size_t len = strlen(word);
	for (const char *p = line; (p = strstr(p, word)) != NULL; p += len) {
		bool start = p == line || p[-1] == ' ';
		bool stop = p[len] == '\0' || p[len] == ' ' || p[len] == '\n' || p[len] == '?';
		if (start && stop)
			return true;
	}
	return false;
}

static bool json_has(json_t *array, const char *word)
{
	size_t i;
	json_t *v;
	json_array_foreach(array, i, v)
	{
		const char *s = json_string_value(v);
		if (s && (strcmp(s, word) == 0 || (strncmp(s, word, strlen(word)) == 0 && strcmp(s + strlen(word), "?") == 0)))
			return true;
	}
	return false;
}

static void test_identify_lists_queries(void **state)
{
	(void)state;
	run r;
	hb_run(&r, station_bare, "identify", "--json", "sim:lcr", "sim:supply", NULL);
	if (r.status != 0)
		fail_msg("identify exited %d: %s", r.status, r.err);
	json_t *list = parse_out(&r);
	assert_int_equal(json_array_size(list), 2);
	size_t total = 0;
	for (size_t i = 0; i < 2; i++) {
		json_t *prof = json_object_get(json_array_get(list, i), "profile");
		assert_non_null(prof);
		const char *path = json_string_value(json_object_get(prof, "path"));
		assert_non_null(path);
		json_t *ops = json_object_get(prof, "operations");
		assert_true(json_is_array(ops));
		char names[32][64];
		size_t n = profile_queries(path, names, 32);
		for (size_t k = 0; k < n; k++)
			if (!json_has(ops, names[k]))
				fail_msg("%s: profile %s defines %s, identify --json does not list it", i ? "supply" : "meter",
					 path, names[k]);
		total += n;
	}
	/* both shipped generic profiles have read-back queries (drivers/profiles) */
	assert_true(total >= 2);
	json_decref(list);
	run_free(&r);

	/* the text form: the "operations:" line of each instrument */
	hb_run(&r, station_bare, "identify", "sim:lcr", NULL);
	assert_int_equal(r.status, 0);
	const char *line = strstr(r.out, "\n  operations:  ");
	assert_non_null(line);
	char one[2048];
	size_t len = strcspn(line + 1, "\n");
	snprintf(one, sizeof one, "%.*s", (int)len, line + 1);
	char names[32][64];
	char prof[1100];
	const char *pl = strstr(r.out, "generic-lcr.ini");
	assert_non_null(pl);
	const char *ps = pl;
	while (ps > r.out && ps[-1] != ' ' && ps[-1] != '\n' && ps[-1] != '(')
		ps--;
	snprintf(prof, sizeof prof, "%.*s", (int)(pl - ps) + (int)strlen("generic-lcr.ini"), ps);
	size_t n = profile_queries(prof, names, 32);
	assert_true(n >= 1);
	for (size_t k = 0; k < n; k++)
		if (!has_word(one + strlen("  operations:  "), names[k]))
			fail_msg("identify's operations line lacks %s: %s", names[k], one);
	run_free(&r);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_identify_lists_queries),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
