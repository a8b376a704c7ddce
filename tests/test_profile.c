/* tests/test_profile.c - dialect profiles: parsing, validation messages, template expansion, search path, matching */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "drivers/hb_drivers.h"
#include "drivers/profile_internal.h"

static char data_dir[1024];   /* tests/data/profiles */
static char source_dir[1024]; /* drivers/profiles */

/* Fixtures live in the source tree; find it from the test binary
 * (build-x/tests/test_profile) so the test runs from any directory. */
static int find_dirs(void **state)
{
	(void)state;
	char exe[900];
	ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
	assert_true(n > 0);
	exe[n] = '\0';
	for (int up = 0; up < 3; up++) {
		char *slash = strrchr(exe, '/');
		assert_non_null(slash);
		*slash = '\0';
		snprintf(data_dir, sizeof data_dir, "%s/tests/data/profiles", exe);
		snprintf(source_dir, sizeof source_dir, "%s/drivers/profiles", exe);
		if (access(data_dir, F_OK) == 0)
			return 0;
	}
	snprintf(data_dir, sizeof data_dir, "tests/data/profiles");
	snprintf(source_dir, sizeof source_dir, "drivers/profiles");
	return 0;
}

static void fixture(char *buf, size_t cap, const char *rel)
{
	snprintf(buf, cap, "%s/%s", data_dir, rel);
}

static void expect_bad(const char *file, int line, const char *fragment)
{
	char path[PATH_MAX], err[512], want[PATH_MAX + 32];
	fixture(path, sizeof path, file);
	hb_profile *p = (hb_profile *)0x1;
	int rc = hb_profile_load(path, &p, err, sizeof err);
	if (rc != HB_ERR_PROFILE || !strstr(err, fragment))
		print_error("%s: rc %d, message: %s\n", file, rc, err);
	assert_int_equal(rc, HB_ERR_PROFILE);
	assert_null(p);
	snprintf(want, sizeof want, "%s:%d: ", path, line);
	if (strncmp(err, want, strlen(want)) != 0)
		print_error("%s: expected prefix '%s', got '%s'\n", file, want, err);
	assert_true(strncmp(err, want, strlen(want)) == 0);
	assert_non_null(strstr(err, fragment));
}

static void test_generic_profiles_load(void **state)
{
	(void)state;
	static const char *const files[] = { "generic-lcr.ini", "generic-supply.ini", "example-lcr-microhenry.ini",
					     "example-supply-tokens.ini" };
	for (size_t i = 0; i < 4; i++) {
		char path[PATH_MAX + 64], err[512] = "";
		snprintf(path, sizeof path, "%s/%s", source_dir, files[i]);
		hb_profile *p = NULL;
		int rc = hb_profile_load(path, &p, err, sizeof err);
		if (rc != HB_OK)
			print_error("%s\n", err);
		assert_int_equal(rc, HB_OK);
		assert_string_equal(hb_profile_path(p), path);
		hb_profile_free(p);
	}
}

static void test_valid_fields(void **state)
{
	(void)state;
	char path[PATH_MAX], err[512];
	hb_profile *p;
	snprintf(path, sizeof path, "%s/generic-lcr.ini", source_dir);
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "generic-lcr");
	assert_int_equal(hb_profile_kind(p), HB_KIND_LCR);
	assert_non_null(hb_profile_description(p));
	assert_int_equal(p->priority, -100);
	assert_true(p->check_errors);
	assert_true(hb_profile_supports(p, HB_KIND_LCR, "dcr"));
	assert_true(hb_profile_supports(p, HB_KIND_LCR, "bias"));
	assert_true(hb_profile_supports(p, HB_KIND_LCR, "level"));
	assert_true(hb_profile_supports(p, HB_KIND_LCR, "level.current"));
	assert_false(hb_profile_supports(p, HB_KIND_LCR, "lev"));
	assert_false(hb_profile_supports(p, HB_KIND_SUPPLY, "dcr"));
	assert_int_equal((int)hb_profile_number(p, HB_PK_LCR_MEASURE_STATUS, 0), 3);
	hb_profile_free(p);

	fixture(path, sizeof path, "good/testco-psu.ini");
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_int_equal(hb_profile_kind(p), HB_KIND_SUPPLY);
	/* inline comment stripped, line comment ignored */
	assert_string_equal(hb_profile_text(p, HB_PK_SUP_CURRENT), "I {amps:real}");
	assert_false(hb_profile_supports(p, HB_KIND_SUPPLY, "mode"));
	assert_true(hb_profile_supports(p, HB_KIND_SUPPLY, "reset")); /* *RST by default */
	assert_null(hb_profile_description(p));
	hb_profile_free(p);
}

static void test_expand(void **state)
{
	(void)state;
	char path[PATH_MAX], err[512], out[128];
	hb_profile *p;
	fixture(path, sizeof path, "good/braces.ini");
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_false(p->check_errors);

	hb_parg hz = { .name = "hz", .real = 1000.5 };
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_FREQUENCY, &hz, 1, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "SET {F} 1000.5;:X");

	hb_parg cnt = { .name = "count", .integer = 16 };
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_AVERAGING, &cnt, 1, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "AV 16");

	hb_parg fn[2] = { { .name = "equiv", .choice = HB_EQUIV_SERIES }, { .name = "pair", .choice = HB_PAIR_L_Q } };
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_FUNCTION, fn, 2, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "FN Q/S");
	/* a value without a token is unsupported, and the message names the key to add */
	fn[1].choice = HB_PAIR_L_D;
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_FUNCTION, fn, 2, out, sizeof out, err, sizeof err),
			 HB_ERR_UNSUPPORTED);
	assert_non_null(strstr(err, "pair.ld"));

	hb_parg on = { .name = "state", .choice = 1 };
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_BIAS_STATE, &on, 1, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "B ON");
	on.choice = 0;
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_BIAS_STATE, &on, 1, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "B OFF");

	/* an operation the profile leaves out */
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_DCR, NULL, 0, out, sizeof out, err, sizeof err),
			 HB_ERR_UNSUPPORTED);
	assert_non_null(strstr(err, "dcr"));
	/* a buffer too short is an error, never a truncated command */
	assert_int_equal(hb_profile_expand(p, HB_PK_LCR_FREQUENCY, &hz, 1, out, 8, err, sizeof err), HB_ERR_ARG);
	hb_profile_free(p);
}

static void test_expand_locale_independent(void **state)
{
	(void)state;
	char path[PATH_MAX], err[512], out[128];
	hb_profile *p;
	snprintf(path, sizeof path, "%s/generic-supply.ini", source_dir);
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	hb_parg a = { .name = "amps", .real = 0.125 };
	assert_int_equal(hb_profile_expand(p, HB_PK_SUP_CURRENT, &a, 1, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "SOUR:CURR 0.125");
	a.real = 1e-7;
	assert_int_equal(hb_profile_expand(p, HB_PK_SUP_CURRENT, &a, 1, out, sizeof out, err, sizeof err), HB_OK);
	assert_string_equal(out, "SOUR:CURR 1e-07");
	hb_profile_free(p);
}

static void test_bad_profiles(void **state)
{
	(void)state;
	expect_bad("bad/missing-name.ini", 2, "key 'name': missing from [profile]");
	expect_bad("bad/missing-measure.ini", 6, "key 'measure': missing from [lcr]");
	expect_bad("bad/bad-placeholder.ini", 8, "key 'frequency': unknown placeholder '{freq:real}'");
	expect_bad("bad/bad-type.ini", 8, "key 'frequency': placeholder '{hz:int}' has the wrong type (expected {hz:real})");
	expect_bad("bad/lacks-placeholder.ini", 7, "key 'frequency': template lacks the placeholder {hz:real}");
	expect_bad("bad/bad-regex.ini", 5, "key 'match.model': bad regular expression '(TL-'");
	expect_bad("bad/unknown-key.ini", 8, "key 'frequncy': unknown key in [lcr]");
	expect_bad("bad/duplicate.ini", 8, "key 'frequency': duplicate (first set on line 6)");
	expect_bad("bad/wrong-section.ini", 8, "section [supply]: does not fit kind = lcr");
	expect_bad("bad/unknown-section.ini", 5, "section [meter]: unknown section");
	expect_bad("bad/no-tokens.ini", 8, "key 'aperture': placeholder {aperture:enum} has no tokens");
	expect_bad("bad/bad-int.ini", 5, "key 'priority': '5000' is not a whole number in -1000..1000");
	expect_bad("bad/syntax.ini", 5, "syntax error");
	expect_bad("bad/indented.ini", 7, "continuation lines are not supported");
	expect_bad("bad/mode-no-reply.ini", 11, "key 'mode.reply': missing");
	expect_bad("bad/bad-kind.ini", 4, "key 'kind': 'scope' is not a kind");
	expect_bad("bad/empty-value.ini", 8, "key 'dcr': empty value");
	expect_bad("bad/unterminated.ini", 7, "key 'frequency': unterminated placeholder");
	expect_bad("bad/status-map.ini", 9, "key 'measure.status.map': 'OVER' is not TOKEN=number");
	expect_bad("bad/long-line.ini", 4, "line longer than");
	expect_bad("bad/fixed-and-function.ini", 8, "key 'function.fixed': give 'function'");
	expect_bad("bad/fixed-unknown.ini", 8, "key 'function.fixed': 'cs-rs' is none of ls-rs");
	expect_bad("bad/optional-undefined.ini", 11, "key 'optional': 'mode' is not defined in this profile");
	expect_bad("bad/optional-required.ini", 8, "key 'optional': 'measure' cannot be optional");
}

/* Optional operations, the fixed function and the operations list that
 * 'identify' prints (facts: drivers/profiles/generic-*.ini and the fixtures). */
static void test_optional_and_fixed(void **state)
{
	(void)state;
	char path[PATH_MAX], err[512], has[512], lacks[512];
	hb_profile *p;
	snprintf(path, sizeof path, "%s/generic-supply.ini", source_dir);
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_true(hb_profile_has(p, HB_PK_SUP_CURRENT_QUERY));
	assert_string_equal(hb_profile_text(p, HB_PK_SUP_CURRENT_QUERY), "SOUR:CURR?");
	assert_true(hb_profile_optional(p, HB_PK_SUP_MODE));
	assert_true(hb_profile_optional(p, HB_PK_SUP_OUTPUT_STATE));
	assert_true(hb_profile_optional(p, HB_PK_SUP_CURRENT_QUERY));
	assert_false(hb_profile_optional(p, HB_PK_SUP_MEASURE_CURRENT));
	hb_profile_operations(p, has, sizeof has, lacks, sizeof lacks);
	assert_non_null(strstr(has, "current.query?"));
	assert_non_null(strstr(has, "mode?"));
	assert_non_null(strstr(has, "measure.current "));
	assert_string_equal(lacks, "");
	hb_profile_free(p);

	snprintf(path, sizeof path, "%s/generic-lcr.ini", source_dir);
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	assert_true(hb_profile_optional(p, HB_PK_LCR_FUNCTION));
	assert_true(hb_profile_optional(p, HB_PK_LCR_AVERAGING));
	assert_true(hb_profile_optional(p, HB_PK_LCR_APERTURE));
	hb_profile_free(p);

	fixture(path, sizeof path, "good/fixed-meter.ini");
	assert_int_equal(hb_profile_load(path, &p, err, sizeof err), HB_OK);
	hb_equiv e;
	hb_pair pr;
	bool any = true;
	assert_int_equal(hb_profile_function_fixed(p, &e, &pr, &any), HB_OK);
	assert_int_equal(e, HB_EQUIV_SERIES);
	assert_int_equal(pr, HB_PAIR_L_R);
	assert_false(any);
	hb_profile_operations(p, has, sizeof has, lacks, sizeof lacks);
	assert_non_null(strstr(has, "function.fixed=ls-rs"));
	assert_non_null(strstr(lacks, "averaging"));
	assert_non_null(strstr(lacks, "aperture"));
	assert_null(strstr(lacks, "function"));
	hb_profile_free(p);
}

static void test_missing_file(void **state)
{
	(void)state;
	char err[512];
	hb_profile *p;
	assert_int_equal(hb_profile_load("/nonexistent/x.ini", &p, err, sizeof err), HB_ERR_NOTFOUND);
	assert_null(p);
	assert_non_null(strstr(err, "/nonexistent/x.ini"));
}

static void test_search_path(void **state)
{
	(void)state;
	char good[PATH_MAX], env[2 * PATH_MAX + 8], sp[4096];
	fixture(good, sizeof good, "good");
	snprintf(env, sizeof env, "%s::/nonexistent-dir", good);
	setenv("HENRYBENCH_PROFILE_PATH", env, 1);
	assert_int_equal(hb_profile_search_path(sp, sizeof sp), HB_OK);
	char real_good[PATH_MAX], real_src[PATH_MAX];
	assert_non_null(realpath(good, real_good));
	assert_non_null(realpath(source_dir, real_src));
	/* the user's directories come first, the source tree is found from the executable */
	assert_true(strncmp(sp, real_good, strlen(real_good)) == 0);
	assert_non_null(strstr(sp, "/nonexistent-dir"));
	assert_non_null(strstr(sp, real_src));
	assert_int_equal(hb_profile_search_path(sp, 8), HB_ERR_ARG);
	unsetenv("HENRYBENCH_PROFILE_PATH");
}

static void test_find(void **state)
{
	(void)state;
	char good[PATH_MAX], err[512];
	hb_profile *p;
	fixture(good, sizeof good, "good");
	setenv("HENRYBENCH_PROFILE_PATH", good, 1);
	assert_int_equal(hb_profile_find("testco-tl1", &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "testco-tl1");
	hb_profile_free(p);
	/* names not in the user directory fall through to the source tree */
	assert_int_equal(hb_profile_find("generic-supply", &p, err, sizeof err), HB_OK);
	assert_int_equal(hb_profile_kind(p), HB_KIND_SUPPLY);
	hb_profile_free(p);
	assert_int_equal(hb_profile_find("no-such-profile", &p, err, sizeof err), HB_ERR_NOTFOUND);
	assert_non_null(strstr(err, "'no-such-profile' not found"));
	/* a path is loaded as given */
	char path[PATH_MAX];
	fixture(path, sizeof path, "good/braces.ini");
	assert_int_equal(hb_profile_find(path, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "braces");
	hb_profile_free(p);
	unsetenv("HENRYBENCH_PROFILE_PATH");
}

static hb_idn make_idn(const char *maker, const char *model)
{
	hb_idn idn;
	memset(&idn, 0, sizeof idn);
	snprintf(idn.maker, sizeof idn.maker, "%s", maker);
	snprintf(idn.model, sizeof idn.model, "%s", model);
	return idn;
}

static void expect_match(hb_instrument_kind kind, const char *maker, const char *model, const char *want)
{
	char err[512] = "";
	hb_profile *p = NULL;
	hb_idn idn = make_idn(maker, model);
	int rc = hb_profile_match(kind, &idn, &p, err, sizeof err);
	if (rc != HB_OK)
		print_error("%s\n", err);
	assert_int_equal(rc, HB_OK);
	assert_string_equal(hb_profile_name(p), want);
	hb_profile_free(p);
}

static void test_match(void **state)
{
	(void)state;
	char good[PATH_MAX];
	fixture(good, sizeof good, "good");
	setenv("HENRYBENCH_PROFILE_PATH", good, 1);
	/* highest priority among matches, case-insensitive */
	expect_match(HB_KIND_LCR, "TestCo", "TL-1", "testco-any");
	expect_match(HB_KIND_LCR, "testco", "TX-9", "testco-low");
	/* kind decides between profiles of one maker */
	expect_match(HB_KIND_SUPPLY, "Testco", "TP30", "testco-psu");
	/* nothing specific: the generic profile of the kind */
	expect_match(HB_KIND_SUPPLY, "Nobody", "Box", "generic-supply");
	expect_match(HB_KIND_LCR, "Nobody", "Box", "generic-lcr");
	/* the example dialects are claimed by their invented makers */
	expect_match(HB_KIND_LCR, "Fennick Labs", "FL-9", "example-lcr-microhenry");
	expect_match(HB_KIND_SUPPLY, "Orrin", "OP-30", "example-supply-tokens");

	hb_idn idn = make_idn("Testco", "TL-1");
	hb_profile *p;
	char err[512];
	assert_int_equal(hb_profile_find("testco-tl1", &p, err, sizeof err), HB_OK);
	assert_true(hb_profile_matches(p, &idn));
	hb_profile_free(p);
	assert_int_equal(hb_profile_find("braces", &p, err, sizeof err), HB_OK);
	assert_false(hb_profile_matches(p, &idn)); /* no match keys: only ever forced */
	hb_profile_free(p);
	unsetenv("HENRYBENCH_PROFILE_PATH");
}

/* A directory of broken profiles no longer blocks the search (issue 15:
 * one bad file blocked every command): each is skipped with a warning
 * naming file:line on stderr, and the generic profile is chosen. */
static void test_match_skips_broken_profile(void **state)
{
	(void)state;
	char bad[PATH_MAX], err[512];
	fixture(bad, sizeof bad, "bad");
	setenv("HENRYBENCH_PROFILE_PATH", bad, 1);
	hb_profile *p = NULL;
	hb_idn idn = make_idn("Nobody", "Box");
	assert_int_equal(hb_profile_match(HB_KIND_LCR, &idn, &p, err, sizeof err), HB_OK);
	assert_non_null(p);
	assert_string_equal(hb_profile_name(p), "generic-lcr");
	hb_profile_free(p);
	unsetenv("HENRYBENCH_PROFILE_PATH");
}

static void test_user_copy_shadows_installed(void **state)
{
	(void)state;
	char dir[] = "/tmp/hb-profile-XXXXXX";
	assert_non_null(mkdtemp(dir));
	char path[sizeof dir + 32], err[512];
	snprintf(path, sizeof path, "%s/generic-lcr.ini", dir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs("[profile]\nname = my-generic\nkind = lcr\n[lcr]\nfrequency = F {hz:real}\nmeasure = M?\n", f);
	fclose(f);
	setenv("HENRYBENCH_PROFILE_PATH", dir, 1);
	hb_profile *p;
	hb_idn idn = make_idn("Nobody", "Box");
	assert_int_equal(hb_profile_match(HB_KIND_LCR, &idn, &p, err, sizeof err), HB_OK);
	assert_string_equal(hb_profile_name(p), "my-generic");
	hb_profile_free(p);
	unsetenv("HENRYBENCH_PROFILE_PATH");
	unlink(path);
	rmdir(dir);
}

static void test_free_null(void **state)
{
	(void)state;
	hb_profile_free(NULL);
	assert_null(hb_profile_name(NULL));
	double v;
	assert_int_equal(hb_profile_strtod("2.5e-3", &v), HB_OK);
	assert_true(fabs(v - 2.5e-3) < 1e-18);
	assert_int_equal(hb_profile_strtod("2,5", &v), HB_ERR_ARG);
	assert_int_equal(hb_profile_strtod("", &v), HB_ERR_ARG);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_generic_profiles_load),
		cmocka_unit_test(test_valid_fields),
		cmocka_unit_test(test_expand),
		cmocka_unit_test(test_expand_locale_independent),
		cmocka_unit_test(test_bad_profiles),
		cmocka_unit_test(test_optional_and_fixed),
		cmocka_unit_test(test_missing_file),
		cmocka_unit_test(test_search_path),
		cmocka_unit_test(test_find),
		cmocka_unit_test(test_match),
		cmocka_unit_test(test_match_skips_broken_profile),
		cmocka_unit_test(test_user_copy_shadows_installed),
		cmocka_unit_test(test_free_null),
	};
	return cmocka_run_group_tests(tests, find_dirs, NULL);
}
