/* src/cli/demo.h - the invented demo scenario, shared by the demo command and the tests */
#ifndef HB_DEMO_H
#define HB_DEMO_H

#include "../../db/hb_db.h"
#include "../../drivers/hb_drivers.h"
#include "../bench/bench.h"

/* Loads the demo part into the in-process simulated bench with its time
 * scaled (0.01 = a hundred times faster than real) and the given gap. */
int hb_demo_configure_sim(double time_scale, unsigned seed, double gap_m);
void hb_demo_part(hb_db_part *part);
/* The demo part's drawn gap and data-sheet curve mask (issue 13). */
void hb_demo_drawing(hb_db_part_drawing *drawing, int64_t part_id);
void hb_demo_station(hb_station *station);
void hb_demo_bias_plan(hb_sweep_plan *plan, const hb_station *station);
/* Lot inspection and reports of the demo (after the sweeps). */
int hb_demo_extras(hb_db *db, hb_lcr *lcr, hb_supply *supply, const hb_station *station,
		   const hb_db_part *part, const char *out_dir, double time_scale);

/* The demo lot's simulated units (demo_extras.c): each sample position
 * gets its own core, the gaps spread a few per cent around the nominal, and
 * the unit at bad_sequence (0 = none) has a much smaller gap, so its L0 is
 * far above tolerance. Pass a hb_demo_lot_sim as ctx of the inspection's
 * before_unit hook. */
typedef struct hb_demo_lot_sim {
	double time_scale;
	unsigned seed;
	int bad_sequence;
} hb_demo_lot_sim;
double hb_demo_lot_gap(const hb_demo_lot_sim *sim, int sequence);
int hb_demo_lot_before_unit(void *ctx, int sequence, const char *serial);

/* Reports of the inspected demo lot (demo_reports.c). */
int hb_demo_reports(hb_db *db, const hb_db_part *part, int64_t lot_id, const char *lot_code, const char *out_dir);

/* The simulated instruments in the register with invented calibration
 * dates, and an open/short compensation of the demo fixture (demo_trace.c). */
int hb_demo_traceability(hb_db *db, hb_lcr *lcr, hb_supply *supply, const hb_station *st);

#endif
