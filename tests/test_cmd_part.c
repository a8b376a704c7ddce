/* tests/test_cmd_part.c - `part add/edit/list/show` end to end: what is stored (read back through the db API), what edit leaves alone, exit codes */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"
#include "cli_json.h"
#include "db/hb_db.h"

static char db_path[400];
static int db_counter;

static int store_setup(void **state)
{
	(void)state;
	snprintf(db_path, sizeof db_path, "%s/part-%d.db", tmpdir, ++db_counter);
	return 0;
}

static hb_db_part part_from_store(const char *number)
{
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_part p;
	int rc = hb_db_part_get(db, number, &p);
	hb_db_close(db);
	if (rc != HB_OK)
		fail_msg("part %s is not in the store", number);
	return p;
}

static void near(double got, double want, const char *what)
{
	if (!(fabs(got - want) <= 1e-9 * fabs(want)))
		fail_msg("%s: stored %.12g, want %.12g", what, got, want);
}

static void add_p1(void)
{
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "add", "P1", "--nominal", "10uH", "--tol", "20%", "--freq",
	       "100kHz", "--level", "0.1V", "--desc", "test choke", NULL);
	if (r.status != 0)
		fail_msg("part add exited %d: %s", r.status, r.err);
	run_free(&r);
}

/* What the operator typed, in engineering notation, is what is stored in
 * SI units (the values are the command's own arguments). */
static void test_add_stores_the_datasheet_values(void **state)
{
	(void)state;
	add_p1();
	hb_db_part p = part_from_store("P1");
	near(p.nominal_h, 10e-6, "nominal");
	near(p.tolerance, 0.20, "tolerance");
	near(p.test_freq_hz, 100e3, "test frequency");
	near(p.test_level, 0.1, "test level");
	assert_int_equal(p.test_level_kind, HB_DB_LEVEL_VOLTAGE);
	assert_string_equal(p.description, "test choke");
	/* A second add of the same number is refused and changes nothing. */
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "add", "P1", "--nominal", "22uH", "--tol", "10%", "--freq",
	       "1kHz", "--level", "1V", NULL);
	assert_int_not_equal(r.status, 0);
	run_free(&r);
	near(part_from_store("P1").nominal_h, 10e-6, "nominal after a refused add");
}

/* edit: "only the given fields change" (the command's help). A toroid
 * given by its dimensions gets Ae and le by the IEC 60205 closed form
 * for a ring of rectangular section, computed here:
 * le = 2 pi ln(r2/r1)/(1/r1 - 1/r2), Ae = h ln^2(r2/r1)/(1/r1 - 1/r2). */
static void test_edit_changes_only_the_given_fields(void **state)
{
	(void)state;
	add_p1();
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "edit", "P1", "--sat-current", "4.5A", "--sat-drop", "30%",
	       "--dcr-max", "25mOhm", "--turns", "27", "--core", "toroid:25mm/15mm/10mm", NULL);
	if (r.status != 0)
		fail_msg("part edit exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_db_part p = part_from_store("P1");
	near(p.sat_current_a, 4.5, "saturation current");
	near(p.sat_drop, 0.30, "saturation drop");
	near(p.dcr_max_ohm, 25e-3, "DCR max");
	assert_int_equal(p.turns, 27);
	const double r1 = 7.5e-3, r2 = 12.5e-3, h = 10e-3, lnr = log(r2 / r1);
	near(p.le_m, 2 * M_PI * lnr / (1 / r1 - 1 / r2), "le");
	near(p.ae_m2, h * lnr * lnr / (1 / r1 - 1 / r2), "Ae");
	/* untouched */
	near(p.nominal_h, 10e-6, "nominal");
	near(p.tolerance, 0.20, "tolerance");
	near(p.test_freq_hz, 100e3, "test frequency");
	assert_string_equal(p.description, "test choke");
	assert_true(isnan(p.rated_current_a));

	/* A second edit of one field leaves the first edit's fields alone. */
	hb_run(&r, station_bare, "--db", db_path, "part", "edit", "P1", "--tol", "10%", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	p = part_from_store("P1");
	near(p.tolerance, 0.10, "tolerance after the second edit");
	near(p.sat_current_a, 4.5, "saturation current after the second edit");
	assert_int_equal(p.turns, 27);

	/* A part that does not exist: refused, nothing created. */
	hb_run(&r, station_bare, "--db", db_path, "part", "edit", "P9", "--turns", "3", NULL);
	assert_int_not_equal(r.status, 0);
	run_free(&r);
	hb_db *db = NULL;
	assert_int_equal(hb_db_open(db_path, &db), HB_OK);
	hb_db_part none;
	assert_int_not_equal(hb_db_part_get(db, "P9", &none), HB_OK);
	hb_db_close(db);
	/* A value in the wrong unit is a usage error. */
	hb_run(&r, station_bare, "--db", db_path, "part", "edit", "P1", "--nominal", "10uA", NULL);
	assert_int_equal(r.status, 2);
	run_free(&r);
	near(part_from_store("P1").nominal_h, 10e-6, "nominal after a refused edit");
}

/* list and show: every stored part once, exit 0; show of an unknown part
 * fails. The JSON is read structurally (key names may change). */
static void test_list_and_show(void **state)
{
	(void)state;
	add_p1();
	run r;
	hb_run(&r, station_bare, "--db", db_path, "part", "add", "P2", "--nominal", "4.7mH", "--tol", "5%", "--freq",
	       "1kHz", "--level", "10mA", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);

	static const char *const number_keys[] = { "part_number", "part", "number", NULL };
	static const char *const nominal_keys[] = { "nominal_H", "nominal_h", "nominal", NULL };
	hb_run(&r, station_bare, "--db", db_path, "part", "list", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *list = parse_out(&r);
	assert_int_equal(json_array_size(list), 2);
	bool seen1 = false, seen2 = false;
	for (size_t i = 0; i < 2; i++) {
		const char *n = jtext(json_array_get(list, i), number_keys);
		seen1 |= strcmp(n, "P1") == 0;
		seen2 |= strcmp(n, "P2") == 0;
	}
	assert_true(seen1 && seen2);
	json_decref(list);
	run_free(&r);

	hb_run(&r, station_bare, "--db", db_path, "part", "list", NULL);
	assert_int_equal(r.status, 0);
	/* The table names both parts, each at the start of its own line. */
	assert_non_null(strstr(r.out, "\nP1 "));
	assert_non_null(strstr(r.out, "\nP2 "));
	run_free(&r);

	hb_run(&r, station_bare, "--db", db_path, "part", "show", "P2", "--json", NULL);
	assert_int_equal(r.status, 0);
	json_t *o = parse_out(&r);
	assert_string_equal(jtext(o, number_keys), "P2");
	near(jnum(o, nominal_keys), 4.7e-3, "shown nominal");
	json_decref(o);
	run_free(&r);

	hb_run(&r, station_bare, "--db", db_path, "part", "show", "P9", NULL);
	assert_int_not_equal(r.status, 0);
	assert_int_equal(count_lines(r.err), 1);
	run_free(&r);
}

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("cmd-part");
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup(test_add_stores_the_datasheet_values, store_setup),
		cmocka_unit_test_setup(test_edit_changes_only_the_given_fields, store_setup),
		cmocka_unit_test_setup(test_list_and_show, store_setup),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
