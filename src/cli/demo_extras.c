/* src/cli/demo_extras.c - the demo's lot inspection: an invented lot of chokes inspected on the simulated bench */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "cli.h"
#include "demo.h"
#include "../quality/quality.h"
#include "../bench/bench.h"

/*
 * The scenario (invented): the supplier, Brackenfold Windings (an invented
 * name), delivers lot LOT-2611-A, 40 chokes
 * HBX-108G. Incoming inspection is ISO 2859-1 single sampling, level II,
 * normal, AQL 1.0. Table 1 gives code letter D; at AQL 1.0 row D carries an
 * arrow down to E, so the plan is n = 13, Ac 0, Re 1. The sixth unit drawn
 * had its gap spacer left out at assembly (a much smaller gap, L0 far too
 * high): that one nonconforming unit reaches Re, inspection stops there
 * and the lot is rejected without sweeping the other seven.
 */
#define DEMO_LOT_CODE "LOT-2611-A"
#define DEMO_SUPPLIER "Brackenfold Windings" /* invented; the lot stream is kept per part and supplier */
#define DEMO_FIRST_SERIAL "A2611-0001"
enum { DEMO_LOT_SIZE = 40, DEMO_BAD_SEQUENCE = 6 };
static const double demo_lot_aql = 1.0;

static const double nominal_gap_m = 0.50e-3;
static const double bad_gap_m = 0.30e-3;
static const double nominal_mu_i = 2300;

double hb_demo_lot_gap(const hb_demo_lot_sim *sim, int sequence)
{
	if (sim->bad_sequence > 0 && sequence == sim->bad_sequence)
		return bad_gap_m;
	/* A deterministic spread of about +-3 %, like spacers from one batch. */
	return nominal_gap_m * (1 + 0.03 * sin(2.1 * sequence + 0.1 * sim->seed));
}

int hb_demo_lot_before_unit(void *ctx, int sequence, const char *serial)
{
	(void)serial;
	const hb_demo_lot_sim *sim = ctx;
	int rc = hb_demo_configure_sim(sim->time_scale, sim->seed + (unsigned)sequence, hb_demo_lot_gap(sim, sequence));
	if (rc != HB_OK)
		return rc;
	hb_sim *bench = hb_sim_inproc();
	if (!bench)
		return HB_ERR_NOMEM;
	hb_sim_inproc_lock();
	rc = hb_sim_set_param(bench, "mu_i", nominal_mu_i * (1 + 0.04 * cos(1.7 * sequence)));
	if (rc != HB_OK)
		hb_cli_error("simulated bench: %s", hb_sim_errmsg(bench));
	hb_sim_inproc_unlock();
	return rc;
}

static hb_inspect_action demo_next_unit(void *ctx, int sequence, const char *complaint, char *serial, size_t cap)
{
	(void)ctx;
	if (complaint)
		return HB_INSPECT_PAUSE;
	return hb_inspect_serial_nth(DEMO_FIRST_SERIAL, sequence - 1, serial, cap) == HB_OK ? HB_INSPECT_MEASURE :
											  HB_INSPECT_PAUSE;
}

int hb_demo_extras(hb_db *db, hb_lcr *lcr, hb_supply *supply, const hb_station *station,
		   const hb_db_part *part, const char *out_dir, double time_scale)
{
	printf("incoming inspection of lot %s: %d units of %s from the supplier %s\n", DEMO_LOT_CODE, DEMO_LOT_SIZE,
	       part->part_number, DEMO_SUPPLIER);
	hb_inspect_config cfg;
	hb_inspect_config_init(&cfg);
	cfg.db = db;
	cfg.lcr = lcr;
	cfg.supply = supply;
	cfg.station = station;
	cfg.part = part;
	cfg.lot_code = DEMO_LOT_CODE;
	cfg.supplier = DEMO_SUPPLIER;
	cfg.lot_size = DEMO_LOT_SIZE;
	cfg.aql = demo_lot_aql;
	cfg.level = HB_LEVEL_II;
	cfg.severity = HB_SEVERITY_NORMAL;
	hb_demo_bias_plan(&cfg.plan, station);
	/* Up to 1.25 x the saturation-spec current: enough to judge Lsat, and
	 * 13 points keep the demo quick. */
	cfg.plan.to = 1.25 * part->sat_current_a;
	cfg.plan.steps = 13;
	cfg.ambient_c = 23.0;
	cfg.out = stdout;
	cfg.progress = NULL;

	hb_demo_lot_sim sim = { .time_scale = time_scale, .seed = 100, .bad_sequence = DEMO_BAD_SEQUENCE };
	hb_inspect_callbacks cb = { .ctx = &sim, .next_unit = demo_next_unit, .before_unit = hb_demo_lot_before_unit };
	hb_inspect_result res;
	int rc = hb_inspect_run(&cfg, &cb, &res);
	if (rc != HB_OK) {
		hb_cli_error("demo inspection: %s", res.message);
		return rc;
	}
	if (res.current_may_flow)
		hb_session_warn_current_may_flow(stderr);
	if (res.end != HB_INSPECT_DECIDED) {
		hb_cli_error("demo inspection did not finish: %s", res.message);
		return HB_ERR_INTERRUPTED;
	}
	printf("  (simulated: unit %d of the draw had a %.2f mm gap instead of %.2f mm)\n\n", DEMO_BAD_SEQUENCE,
	       bad_gap_m * 1e3, nominal_gap_m * 1e3);
	return hb_demo_reports(db, part, res.lot_id, DEMO_LOT_CODE, out_dir);
}
