/* src/bench/session_trace.h - the session's traceability record: instruments and calibration at start, fixture compensation, settings snapshots */
#ifndef HB_SESSION_TRACE_H
#define HB_SESSION_TRACE_H

#include "session.h"
#include "traceability.h"

enum { HB_SNAPSHOT_MAX = 10 };

typedef struct hb_snapshot {
	int n;
	char name[HB_SNAPSHOT_MAX][32];  /* "meter.frequency", "supply.voltage", ... */
	char value[HB_SNAPSHOT_MAX][64]; /* the reply as given; "" = could not be read */
} hb_snapshot;

typedef struct hb_session_trace {
	hb_db_sweep_trace t;
	hb_db_instrument lcr_in, sup_in;
	bool have_lcr, have_sup;
	hb_fixture_model model; /* applied to the readings when t.fixture_applied */
	hb_snapshot start, end;
	bool started;           /* the start snapshot was taken */
} hb_session_trace;

/* Registers the instruments, checks their calibration and finds the
 * fixture compensation in force; warnings go to the session's progress
 * (stderr when quiet). A refusal (overdue with [calibration] overdue =
 * refuse and no --allow-overdue) fills result and returns HB_ERR_LIMIT:
 * nothing was switched on and no sweep was begun. */
int hb_session_trace_begin(hb_session *s, const hb_sweep_plan *plan, hb_session_trace *tr, hb_sweep_result *result);
/* The register's accuracy overrides (rel NAN when none). */
void hb_session_trace_accuracy(hb_session *s, const hb_session_trace *tr, hb_accuracy *meter, hb_accuracy *supply);
/* Reads back what the instruments hold; when = 0 start, 1 end (which
 * compares and fills t.settings_changed). */
void hb_session_trace_snapshot(hb_session *s, const hb_sweep_plan *plan, hb_session_trace *tr, int when);
/* Prints the end-of-sweep line on settings and stores the record. */
int hb_session_trace_finish(hb_session *s, hb_session_trace *tr);

#endif
