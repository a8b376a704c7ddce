/* src/demo.h - the invented demo scenario, shared by the demo command and the tests */
#ifndef HB_DEMO_H
#define HB_DEMO_H

#include "../db/hb_db.h"
#include "../drivers/hb_drivers.h"
#include "station.h"
#include "sweep.h"

/* Loads the demo part into the in-process simulated bench with its time
 * scaled (0.01 = a hundred times faster than real) and the given gap. */
int hb_demo_configure_sim(double time_scale, unsigned seed, double gap_m);
void hb_demo_part(hb_db_part *part);
void hb_demo_station(hb_station *station);
void hb_demo_bias_plan(hb_sweep_plan *plan, const hb_station *station);
/* Lot inspection and reports of the demo (after the sweeps). */
int hb_demo_extras(hb_db *db, hb_lcr *lcr, hb_supply *supply, const hb_station *station,
		   const hb_db_part *part, const char *out_dir, double time_scale);

#endif
