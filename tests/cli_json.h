/* tests/cli_json.h - the command-line tests' JSON look-ups: a value under any of the names its key has had, so renamed keys do not break the tests */
#ifndef HB_TESTS_CLI_JSON_H
#define HB_TESTS_CLI_JSON_H

/* Include after <cmocka.h> and cli_fixture.h. */
#include <jansson.h>

/* ------------------------------------------------------------------ */
/* JSON, looked up by meaning                                          */

/* The output's JSON keys may be renamed; a value is looked up under each
 * name it has had or plausibly gets, first found wins. */
static inline json_t *jget(json_t *o, const char *const *names)
{
	for (; *names; names++) {
		json_t *v = json_object_get(o, *names);
		if (v)
			return v;
	}
	return NULL;
}

static inline double jnum(json_t *o, const char *const *names)
{
	json_t *v = jget(o, names);
	if (!json_is_number(v))
		fail_msg("no number under '%s' (or its other names)", names[0]);
	return json_number_value(v);
}

static inline const char *jtext(json_t *o, const char *const *names)
{
	json_t *v = jget(o, names);
	if (!json_is_string(v))
		fail_msg("no text under '%s' (or its other names)", names[0]);
	return json_string_value(v);
}

static inline json_t *parse_out(const run *r)
{
	json_error_t jerr;
	json_t *j = json_loads(r->out, 0, &jerr);
	if (!j)
		fail_msg("not JSON (%s): %s", jerr.text, r->out);
	return j;
}

#endif
