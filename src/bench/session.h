/* src/bench/session.h - one measured sweep from start to store: unit record, engine run, points committed, end status */
#ifndef HB_SESSION_H
#define HB_SESSION_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>

#include "../../db/hb_db.h"
#include "../../drivers/hb_drivers.h"
#include "station.h"
#include "sweep.h"

typedef struct hb_session {
	hb_db *db;
	hb_lcr *lcr;
	hb_supply *supply;        /* NULL for an unbiased frequency sweep */
	const hb_station *station;
	FILE *progress;           /* live progress; NULL = quiet */
	bool progress_tty;        /* rewrite one line instead of printing many */
	double ambient_c;         /* NAN = not given */
	bool dcr_from_meter;      /* read the winding's DC resistance with the meter before the sweep
	                           * (only where the fixture passes DC to the meter) */
	/* traceability (docs/traceability.md) */
	bool allow_overdue;       /* --allow-overdue: go ahead with an instrument past its due date, recorded */
	const char *fixture;      /* the fixture whose compensation is in force; NULL = "default" */
} hb_session;

/* Measures one unit of the part: records the unit (and lot), begins the
 * sweep in the store, runs the engine committing each point, ends the
 * sweep with its status and reason. Returns the engine's status; *sweep_id
 * is set once the sweep exists in the store (0 before). */
int hb_session_measure(hb_session *s, const hb_db_part *part, const char *serial, int64_t lot_id,
		       const hb_sweep_plan *plan, const char *note, int64_t *sweep_id, hb_sweep_result *result);

/* Prints the loud warning when nobody could switch the supply off. */
void hb_session_warn_current_may_flow(FILE *out);

#endif
