/* tests/test_lot_instruments.c - the lot report names every instrument that measured its sample, once, with the calibration status recorded at each sweep's start; superseded sample records listed apart */
#define _GNU_SOURCE /* open_memstream, strndup */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include <cmocka.h>

#include "src/report/report.h"
#include "store_fixture.h"

static char dir[128], path[200];

static int setup(void **state)
{
	hb_db *db = NULL;
	if (temp_store_open(dir, sizeof dir, "lotinstr", path, sizeof path, &db) != 0)
		return -1;
	*state = db;
	return 0;
}

static int teardown(void **state)
{
	return temp_store_remove(dir, *state);
}

static int64_t instrument(hb_db *db, const char *kind, const char *model, const char *serial, const char *cal,
			  const char *due)
{
	hb_db_instrument in;
	assert_int_equal(hb_db_instrument_ensure(db, kind, "Test Instruments", model, serial, "2.1", &in, NULL), HB_OK);
	snprintf(in.cal_date, sizeof in.cal_date, "%s", cal);
	snprintf(in.due_date, sizeof in.due_date, "%s", due);
	assert_int_equal(hb_db_instrument_update(db, &in), HB_OK);
	return in.id;
}

/* One sampled unit: its sweep, the instruments it ran with and the
 * calibration status the bench recorded at the sweep's start. */
static int64_t sample(hb_db *db, int64_t part, int64_t lot, int seq, int64_t meter, int64_t supply, const char *cal_status)
{
	char serial[32];
	snprintf(serial, sizeof serial, "LI-%d", seq);
	int64_t unit = 0;
	assert_int_equal(hb_db_unit_ensure(db, part, serial, lot, &unit), HB_OK);
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = HB_DB_SWEEP_BIAS;
	s.unit_id = unit;
	snprintf(s.measured_pair, sizeof s.measured_pair, "Ls-Rs");
	s.test_freq_hz = 100e3;
	s.test_level = 0.5;
	s.plan_to = 2;
	s.plan_steps = 3;
	assert_int_equal(hb_db_sweep_begin(db, &s), HB_OK);
	assert_int_equal(hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, ""), HB_OK);
	hb_db_sweep_trace *t = calloc(1, sizeof *t);
	assert_non_null(t);
	hb_db_sweep_trace_init(t);
	t->sweep_id = s.id;
	t->lcr_instrument_id = meter;
	t->supply_instrument_id = supply;
	snprintf(t->cal_status, sizeof t->cal_status, "%s", cal_status);
	assert_int_equal(hb_db_sweep_trace_put(db, t), HB_OK);
	free(t);
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	rec.lot_id = lot;
	rec.sequence = seq;
	rec.unit_id = unit;
	rec.sweep_id = s.id;
	rec.outcome = HB_DB_PASS;
	snprintf(rec.operator_name, sizeof rec.operator_name, "op-%d", seq);
	assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);
	return s.id;
}

/* The rows of the table whose caption starts with caption, as one string. */
static char *table_of(const char *page, const char *caption)
{
	const char *c = strstr(page, caption);
	if (!c)
		return NULL;
	const char *end = strstr(c, "</table>");
	assert_non_null(end);
	return strndup(c, (size_t)(end - c));
}

static int rows_with(const char *table, const char *text)
{
	int n = 0;
	for (const char *r = strstr(table, "<tr"); r; r = strstr(r + 3, "<tr")) {
		const char *next = strstr(r + 3, "<tr");
		size_t len = next ? (size_t)(next - r) : strlen(r);
		char *row = strndup(r, len);
		n += strstr(row, text) != NULL;
		free(row);
	}
	return n;
}

/* ISO 9001:2015 7.1.5.2: when measuring equipment is found unfit, the
 * validity of earlier results must be judged, which needs the record to say
 * which instrument measured which sample, in calibration or not at the time.
 * Three sample units measured with the same meter (in calibration at the
 * first sweep, past its due date at the next two) and two supplies: the meter
 * is one row naming its three sweeps and the two recorded statuses, the row
 * marked; each supply one row with its own sweeps. A sample position recorded again: the earlier record is
 * listed with its operator under "Superseded records". */
static void test_lot_report_instruments(void **state)
{
	hb_db *db = *state;
	hb_db_part p;
	hb_db_part_init(&p);
	snprintf(p.part_number, sizeof p.part_number, "P-LI");
	p.nominal_h = 100e-6;
	p.tolerance = 0.1;
	p.test_freq_hz = 100e3;
	p.test_level = 0.5;
	assert_int_equal(hb_db_part_put(db, &p), HB_OK);
	int64_t lot = 0;
	assert_int_equal(hb_db_lot_ensure(db, p.id, "LOT-LI", &lot), HB_OK);
	int64_t meter = instrument(db, "lcr", "LCR-9", "M-100", "2020-01-01", "2021-01-01");
	int64_t sup1 = instrument(db, "supply", "DCS-3", "S-201", "2020-01-01", "2099-01-01");
	int64_t sup2 = instrument(db, "supply", "DCS-3", "S-202", "2020-01-01", "2099-01-01");
	int64_t a = sample(db, p.id, lot, 1, meter, sup1,
			   "meter M-100: calibrated 2020-01-01, due 2021-01-01 (in calibration); "
			   "supply S-201: calibrated 2020-01-01, due 2099-01-01 (in calibration)");
	int64_t b = sample(db, p.id, lot, 2, meter, sup2,
			   "meter M-100: calibrated 2020-01-01, due 2021-01-01 (OVERDUE); "
			   "supply S-202: calibrated 2020-01-01, due 2099-01-01 (in calibration)");
	/* a third with the meter still past its due date: the status is named once */
	int64_t c = sample(db, p.id, lot, 3, meter, sup1,
			   "meter M-100: calibrated 2020-01-01, due 2021-01-01 (OVERDUE); "
			   "supply S-201: calibrated 2020-01-01, due 2099-01-01 (in calibration)");
	/* sample 1 recorded again (same unit and sweep): the first record is superseded */
	hb_db_inspection rec;
	hb_db_inspection_init(&rec);
	rec.lot_id = lot;
	rec.sequence = 1;
	rec.sweep_id = a;
	rec.outcome = HB_DB_FAIL;
	snprintf(rec.operator_name, sizeof rec.operator_name, "op-again");
	assert_int_equal(hb_db_inspection_put(db, &rec), HB_OK);

	char *page = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&page, &len);
	assert_non_null(f);
	char err[300] = "";
	assert_int_equal(hb_report_lot(db, "P-LI", "LOT-LI", f, err, sizeof err), HB_OK);
	fclose(f);

	char *t = table_of(page, "Every instrument that measured a sample unit of this lot");
	if (!t)
		fail_msg("the lot report has no instrument table");
	char sweeps[96];
	assert_int_equal(rows_with(t, "serial M-100,"), 1);
	assert_int_equal(rows_with(t, "serial S-201,"), 1);
	snprintf(sweeps, sizeof sweeps, ">2: %lld, %lld</td>", (long long)a, (long long)c);
	assert_int_equal(rows_with(t, sweeps), 1);
	assert_int_equal(rows_with(t, "serial S-202,"), 1);
	snprintf(sweeps, sizeof sweeps, ">3: %lld, %lld, %lld</td>", (long long)a, (long long)b, (long long)c);
	assert_int_equal(rows_with(t, sweeps), 1);
	assert_int_equal(rows_with(t, ">calibrated 2020-01-01, due 2021-01-01 (in calibration); then calibrated "
				      "2020-01-01, due 2021-01-01 (OVERDUE)</td>"),
			 1);
	/* the meter's row marked: a sample unit was measured past its due date */
	assert_int_equal(rows_with(t, "<tr class=\"fail\">"), 1);
	free(t);

	t = table_of(page, "Superseded records");
	if (!t)
		fail_msg("the lot report does not list the superseded record");
	assert_int_equal(rows_with(t, ">op-1</td>"), 1);
	assert_int_equal(rows_with(t, ">op-again</td>"), 0);
	free(t);
	free(page);

	/* the part report: the same instruments, once each, over each unit's latest sweep */
	page = NULL;
	f = open_memstream(&page, &len);
	assert_non_null(f);
	assert_int_equal(hb_report_part(db, "P-LI", f, err, sizeof err), HB_OK);
	fclose(f);
	t = table_of(page, "Every instrument that measured a unit");
	if (!t)
		fail_msg("the part report has no instrument table");
	assert_int_equal(rows_with(t, "serial M-100,"), 1);
	assert_int_equal(rows_with(t, "serial S-201,"), 1);
	assert_int_equal(rows_with(t, "serial S-202,"), 1);
	free(t);
	free(page);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(test_lot_report_instruments, setup, teardown),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
