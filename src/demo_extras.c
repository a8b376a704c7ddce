/* src/demo_extras.c - the demo's lot inspection and reports */
#include "demo.h"

int hb_demo_extras(hb_db *db, hb_lcr *lcr, hb_supply *supply, const hb_station *station,
		   const hb_db_part *part, const char *out_dir, double time_scale)
{
	(void)db; (void)lcr; (void)supply; (void)station; (void)part; (void)out_dir; (void)time_scale;
	return HB_OK;
}
