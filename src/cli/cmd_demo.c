/* src/cli/cmd_demo.c - the `demo` command: an invented characterisation job run end to end on the simulated bench */
#include <errno.h>
#include <math.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "../quality/quality.h"
#include "cli.h"
#include "demo.h"
#include "../bench/bench.h"

/*
 * The scenario (invented): a magnetics designer has wound three prototypes
 * of a gapped ferrite choke, part HBX-108G, on cores from one batch whose
 * gap spacers came out slightly different. She sweeps each against bias,
 * takes a frequency sweep of the first, and wants to know which gap each
 * core really has.
 */
static const double demo_gaps_m[] = { 0.48e-3, 0.50e-3, 0.53e-3 };
static const char *const demo_serials[] = { "P1-0001", "P1-0002", "P1-0003" };

typedef struct demo_args {
	const char *out_dir;
	bool real_time;
} demo_args;

static const hb_opt demo_table[] = {
	{ .name = "out", .kind = HB_OPT_PATH, .arg = "DIR", .off = offsetof(demo_args, out_dir),
	  .help = "folder of the fresh store and the reports (default ./demo-out)" },
	{ .name = "real-time", .kind = HB_OPT_FLAG, .off = offsetof(demo_args, real_time),
	  .help = "run against the wall clock at physical speed (default: virtual time, seconds)" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_demo = {
	.name = "demo",
	.usage = "[--out DIR] [--real-time]",
	.about = "Runs an invented job on the simulated bench: a demo part, bias sweeps of three\n"
		 "prototype units whose core gaps differ slightly, a frequency sweep of one, fits and\n"
		 "verdicts for each, a small lot inspection and the reports. Everything goes into a\n"
		 "fresh store DIR/bench.db (default DIR: ./demo-out).\n",
	.opts = demo_table,
	.max_operands = 0,
};

int hb_demo_configure_sim(double time_scale, unsigned seed, double gap_m)
{
	hb_sim *sim = hb_sim_inproc();
	if (!sim)
		return HB_ERR_NOMEM;
	hb_sim_inproc_lock();
	int rc = hb_sim_load_preset(sim, "default");
	if (rc == HB_OK)
		rc = hb_sim_set_param(sim, "time_scale", time_scale);
	if (rc == HB_OK)
		rc = hb_sim_set_param(sim, "seed", seed);
	if (rc == HB_OK && gap_m > 0)
		rc = hb_sim_set_param(sim, "gap", gap_m);
	if (rc != HB_OK)
		hb_cli_error("simulated bench: %s", hb_sim_errmsg(sim));
	hb_sim_inproc_unlock();
	return rc;
}

void hb_demo_part(hb_db_part *p)
{
	hb_db_part_init(p);
	snprintf(p->part_number, sizeof p->part_number, "HBX-108G");
	snprintf(p->description, sizeof p->description, "Gapped ferrite choke, prototype winding, 27 turns");
	snprintf(p->maker, sizeof p->maker, "in-house prototype");
	p->nominal_h = 108e-6;
	p->tolerance = 0.10;
	p->test_freq_hz = 100e3;
	p->test_level = 0.5;
	p->test_level_kind = HB_DB_LEVEL_VOLTAGE;
	p->sat_current_a = 3.2;
	p->sat_drop = 0.30;
	p->rated_current_a = 3.0;
	p->dcr_max_ohm = 0.040;
	p->turns = 27;
	p->ae_m2 = 50e-6;
	p->le_m = 60e-3;
	p->window_m = 9e-3;
	p->mu_i = 2300;
	p->bsat_t = 0.39;
}

/* The demo part's drawing and data sheet (invented): spacers of 0.50 mm
 * +- 0.025 mm, and an L-against-current curve read off the supplier's
 * typical-curve figure at five currents, +-10 %. The simulated cores of
 * the gaps and permeabilities the demo uses stay inside the band; the
 * third prototype's 0.53 mm spacer is outside the drawing. */
void hb_demo_drawing(hb_db_part_drawing *d, int64_t part_id)
{
	static const double curve[][2] = { { 0, 108e-6 }, { 1, 104e-6 }, { 2, 97.5e-6 }, { 3, 85e-6 }, { 3.5, 76e-6 } };
	hb_db_part_drawing_init(d);
	d->part_id = part_id;
	d->gap_m = 0.50e-3;
	d->gap_tol_m = 0.025e-3;
	d->curve_tol = 0.10;
	snprintf(d->curve_source, sizeof d->curve_source, "data sheet typical curve (invented for the demo)");
	for (size_t i = 0; i < sizeof curve / sizeof curve[0]; i++) {
		d->curve[i].current_a = curve[i][0];
		d->curve[i].inductance_h = curve[i][1];
		d->curve[i].tol = NAN;
	}
	d->n_curve = sizeof curve / sizeof curve[0];
}

void hb_demo_station(hb_station *st)
{
	hb_station_defaults(st);
	snprintf(st->name, sizeof st->name, "demo-bench");
	snprintf(st->operator_name, sizeof st->operator_name, "demo");
	st->max_current = 10;
	st->max_voltage = 5;
	st->max_power = 50;
	st->ramp_rate = 40;
}

void hb_demo_bias_plan(hb_sweep_plan *plan, const hb_station *st)
{
	hb_sweep_plan_defaults(plan);
	plan->kind = HB_SWEEP_BIAS;
	plan->from = 0;
	plan->to = 8;
	plan->steps = 25;
	plan->frequency = 100e3;
	plan->level = 0.5;
	plan->settle_timeout = 2;
	plan->limits.max_current = st->max_current;
	plan->limits.max_voltage = st->max_voltage;
	plan->limits.max_power = st->max_power;
	plan->limits.ramp_rate = st->ramp_rate;
}

static int make_dir(const char *dir)
{
	if (mkdir(dir, 0777) == 0 || errno == EEXIST)
		return HB_OK;
	hb_cli_error("cannot create %s: %s", dir, strerror(errno));
	return HB_ERR_IO;
}

int hb_cmd_demo(int argc, char **argv)
{
	/* Virtual time by default: the simulated bench keeps its own clock, so
	 * the demo takes seconds and two runs store the same readings to the
	 * bit. --real-time runs it against the wall clock at physical speed. */
	double time_scale = 1.0;
	demo_args a = { .out_dir = "demo-out" };
	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_demo, argc, argv, &a, &r) != HB_OK)
		return HB_EXIT_USAGE;
	if (r.done)
		return HB_EXIT_OK;
	const char *out_dir = a.out_dir;
	bool real_time = a.real_time;
	if (make_dir(out_dir) != HB_OK)
		return HB_EXIT_RUNTIME;

	char db_path[1024];
	snprintf(db_path, sizeof db_path, "%s/bench.db", out_dir);
	/* A fresh store each run, so the demo's numbers are its own. */
	const char *suffixes[] = { "", "-wal", "-shm" };
	for (int i = 0; i < 3; i++) {
		char p[1100];
		snprintf(p, sizeof p, "%s%s", db_path, suffixes[i]);
		unlink(p);
	}

	int exit_code = HB_EXIT_RUNTIME;
	hb_db *db = NULL;
	hb_lcr *lcr = NULL;
	hb_supply *supply = NULL;
	hb_analysis_summary *an = calloc(1, sizeof *an);
	if (!an)
		return HB_EXIT_RUNTIME;
	printf("henrybench demo: an invented job on the simulated bench (nothing here is a real part)\n");
	printf("store: %s\n\n", db_path);
	if (hb_db_open(db_path, &db) != HB_OK) {
		hb_cli_error("store: %s", db ? hb_db_errmsg(db) : "out of memory");
		goto out;
	}
	hb_db_part part;
	hb_demo_part(&part);
	if (hb_db_part_put(db, &part) != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		goto out;
	}
	hb_db_part_drawing drawing;
	hb_demo_drawing(&drawing, part.id);
	if (hb_db_part_drawing_put(db, &drawing) != HB_OK) {
		hb_cli_error("store: %s", hb_db_errmsg(db));
		goto out;
	}
	printf("part %s: %s, %.0f uH +-%.0f %% at 100 kHz, L >= 70 %% of L0 at %.1f A, DCR <= %.0f mOhm\n",
	       part.part_number, part.description, part.nominal_h * 1e6, part.tolerance * 100, part.sat_current_a,
	       part.dcr_max_ohm * 1e3);
	printf("drawing: gap %.2f mm +-%.3f mm; data sheet curve: %zu points, +-%.0f %%\n\n", drawing.gap_m * 1e3,
	       drawing.gap_tol_m * 1e3, drawing.n_curve, drawing.curve_tol * 100);
	hb_station st;
	hb_demo_station(&st);
	if (hb_demo_configure_sim(time_scale, 1, demo_gaps_m[0]) != HB_OK)
		goto out;
	if (hb_sim_inproc_virtual(!real_time) != HB_OK) {
		hb_cli_error("simulated bench: could not switch %s virtual time", real_time ? "off" : "on");
		goto out;
	}

	hb_sweep_install_signals();
	hb_sweep_clear_signal();
	if (hb_lcr_open("sim:lcr", hb_global.trace, &lcr) != HB_OK) {
		hb_cli_error("meter sim:lcr: %s", lcr ? hb_lcr_errmsg(lcr) : "out of memory");
		goto out;
	}
	if (hb_supply_open("sim:supply", hb_global.trace, &supply) != HB_OK) {
		hb_cli_error("supply sim:supply: %s", supply ? hb_supply_errmsg(supply) : "out of memory");
		goto out;
	}
	printf("meter:  %s (profile %s)\n", hb_lcr_idn(lcr)->raw, hb_lcr_profile_name(lcr));
	printf("supply: %s (profile %s)\n\n", hb_supply_idn(supply)->raw, hb_supply_profile_name(supply));
	if (hb_demo_traceability(db, lcr, supply, &st) != HB_OK)
		goto out;

	hb_sweep_plan plan;
	hb_demo_bias_plan(&plan, &st);
	hb_sweep_print_cautions(stdout, part.nominal_h, plan.to, plan.limits.max_voltage);
	printf("\n");

	hb_session s = { .db = db, .lcr = lcr, .supply = supply, .station = &st, .progress = stdout,
			 .progress_tty = isatty(STDOUT_FILENO), .ambient_c = 23.0 };
	/* The frequency sweep comes first: its winding capacitance lets the
	 * core fit of every bias sweep correct the readings at 100 kHz. */
	if (hb_demo_configure_sim(time_scale, 20, demo_gaps_m[0]) != HB_OK)
		goto out;
	hb_sweep_plan fplan;
	hb_sweep_plan_defaults(&fplan);
	fplan.kind = HB_SWEEP_FREQUENCY;
	fplan.f_from = 1e3;
	fplan.f_to = 10e6;
	fplan.f_points = 41;
	fplan.level = 0.5;
	fplan.settle = HB_SETTLE_FIXED;
	fplan.settle_time = 0.002;
	fplan.limits = plan.limits;
	printf("unit %s: frequency sweep 1 kHz to 10 MHz, %d points\n", demo_serials[0], fplan.f_points);
	hb_session fs = s;
	fs.supply = NULL;
	int64_t fid = 0;
	hb_sweep_result fres;
	hb_session_measure(&fs, &part, demo_serials[0], 0, &fplan, "demo frequency sweep", &fid, &fres);
	if (fres.end != HB_SWEEP_COMPLETE) {
		hb_cli_error("demo frequency sweep ended: %s", fres.reason);
		exit_code = hb_session_exit_code(&fres);
		goto out;
	}
	hb_analysis_options fopt;
	hb_analysis_options_init(&fopt);
	hb_analysis_sweep(db, fid, &fopt, an);
	hb_analysis_print(stdout, an);
	printf("\n");

	int64_t ids[3] = { 0, 0, 0 };
	for (int u = 0; u < 3; u++) {
		if (hb_demo_configure_sim(time_scale, 10 + (unsigned)u, demo_gaps_m[u]) != HB_OK)
			goto out;
		printf("unit %s: bias sweep 0 to %.0f A, %d points\n", demo_serials[u], plan.to, plan.steps);
		hb_sweep_result res;
		char note[128];
		snprintf(note, sizeof note, "demo prototype %d of 3", u + 1);
		hb_session_measure(&s, &part, demo_serials[u], 0, &plan, note, &ids[u], &res);
		if (res.current_may_flow)
			hb_session_warn_current_may_flow(stderr);
		if (res.end != HB_SWEEP_COMPLETE) {
			hb_cli_error("demo sweep of %s ended: %s", demo_serials[u], res.reason);
			exit_code = hb_session_exit_code(&res);
			goto out;
		}
		hb_analysis_options aopt;
		hb_analysis_options_init(&aopt);
		aopt.noise_rel = res.noise_rel;
		hb_analysis_sweep(db, ids[u], &aopt, an);
		hb_analysis_print(stdout, an);
		printf("  (simulated part's physical gap: %.3f mm)\n\n", demo_gaps_m[u] * 1e3);
	}

	int rc = hb_demo_extras(db, lcr, supply, &st, &part, out_dir, time_scale);
	if (rc != HB_OK)
		goto out;

	printf("stored: bias sweeps %lld, %lld, %lld and frequency sweep %lld in %s\n", (long long)ids[0],
	       (long long)ids[1], (long long)ids[2], (long long)fid, db_path);
	printf("try:    ./henrybench --db %s sweeps\n        ./henrybench --db %s show %lld\n"
	       "        ./henrybench --db %s history %s\n",
	       db_path, db_path, (long long)ids[0], db_path, part.part_number);
	/* the one command that pushes this store to a server on this machine (README, "Many stations") */
	printf("sync:   ./henrybench --db %s sync --server 'postgresql:///henrybench?host=/var/run/postgresql'\n"
	       "        (a server on this machine with a database henrybench your account may write: README,"
	       " \"Many stations, one server\")\n",
	       db_path);
	exit_code = HB_EXIT_OK;
out:
	free(an);
	hb_supply_close(supply);
	hb_lcr_close(lcr);
	hb_db_close(db);
	hb_sweep_restore_signals();
	hb_sim_inproc_shutdown();
	return exit_code;
}
