/* src/cli/cmd_sim.c - command `sim`: serve the simulated bench over TCP or a pseudo-terminal until SIGINT/SIGTERM */
#include <errno.h>
#include <stddef.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../drivers/hb_drivers.h"
#include "cli.h"

static volatile sig_atomic_t sim_stop;

static void on_signal(int sig)
{
	(void)sig;
	sim_stop = 1;
}

/* hb_parse_value knows the SI units it is asked for; the simulator's
 * compound units (K/W, 1/K, C) take plain numbers. */
static const char *parse_unit(const char *unit)
{
	static const char *const known[] = { "H", "A", "V", "Hz", "ohm", "s", "m", "m2", "T", "W", "F", "K" };
	for (size_t i = 0; i < sizeof known / sizeof known[0]; i++)
		if (strcmp(unit, known[i]) == 0)
			return unit;
	return "";
}

static int apply_param(hb_sim *sim, const char *text)
{
	const char *eq = strchr(text, '=');
	char key[64];
	if (!eq || eq == text || (size_t)(eq - text) >= sizeof key) {
		hb_cli_error("sim: --param '%s': expected KEY=VALUE (see --list-params)", text);
		return HB_ERR_ARG;
	}
	memcpy(key, text, (size_t)(eq - text));
	key[eq - text] = '\0';
	/* Nothing would move a virtual clock in a served bench: its clients'
	 * waits are their own, on the wall clock. */
	if (strcmp(key, "virtual_time") == 0) {
		hb_cli_error("sim: --param virtual_time: only the in-process bench (sim:lcr, sim:supply) runs in virtual time");
		return HB_ERR_ARG;
	}
	const char *unit = hb_sim_param_unit(key);
	if (!unit) {
		hb_cli_error("sim: --param: parameter '%s' unknown (see --list-params)", key);
		return HB_ERR_ARG;
	}
	double v;
	char err[256];
	if (hb_parse_value(eq + 1, parse_unit(unit), &v, err, sizeof err) != HB_OK) {
		hb_cli_error("sim: --param %s: %s", key, err);
		return HB_ERR_ARG;
	}
	if (hb_sim_set_param(sim, key, v) != HB_OK) {
		hb_cli_error("sim: --param: %s", hb_sim_errmsg(sim));
		return HB_ERR_ARG;
	}
	return HB_OK;
}

/* "tcp://HOST:PORT" or "pty"; prints the line the caller connects with. */
static int serve_resource(hb_sim *sim, hb_sim_role role, const char *name, const char *text)
{
	if (strcmp(text, "pty") == 0) {
		char path[256];
		if (hb_sim_open_pty(sim, role, path, sizeof path) != HB_OK) {
			hb_cli_error("sim: --%s pty: %s", name, hb_sim_errmsg(sim));
			return HB_EXIT_RUNTIME;
		}
		printf("%s: tty:%s\n", name, path);
		return HB_EXIT_OK;
	}
	if (strncmp(text, "tcp://", 6) != 0) {
		hb_cli_error("sim: --%s '%s': accepted tcp://HOST:PORT (PORT 0 .. 65535) or pty", name, text);
		return HB_EXIT_USAGE;
	}
	char host[128];
	const char *h = text + 6;
	const char *colon = strrchr(h, ':');
	long port = 5025;
	size_t hl = colon ? (size_t)(colon - h) : strlen(h);
	if (hl == 0 || hl >= sizeof host) {
		hb_cli_error("sim: --%s '%s': host missing; accepted tcp://HOST:PORT", name, text);
		return HB_EXIT_USAGE;
	}
	memcpy(host, h, hl);
	host[hl] = '\0';
	if (colon) {
		char *end;
		errno = 0;
		port = strtol(colon + 1, &end, 10);
		if (end == colon + 1 || *end || errno || port < 0 || port > 65535) {
			hb_cli_error("sim: --%s '%s': port '%s' out of range: accepted 0 .. 65535", name, text, colon + 1);
			return HB_EXIT_USAGE;
		}
	}
	int bound = 0;
	if (hb_sim_listen_tcp(sim, role, host, (int)port, &bound) != HB_OK) {
		hb_cli_error("sim: --%s %s: %s", name, text, hb_sim_errmsg(sim));
		return HB_EXIT_RUNTIME;
	}
	printf("%s: tcp://%s:%d\n", name, host, bound);
	return HB_EXIT_OK;
}

typedef struct sim_args {
	const char *lcr_res, *supply_res, *preset, *dynamics, *log_path, *fault_lcr, *fault_supply;
	const char **params; /* room for every argument */
	int nparams;
	bool list;
} sim_args;

/* --param KEY=VALUE is collected here and applied once the model is built. */
static int take_param(const hb_opt *o, const char *text, void *field)
{
	sim_args *a = field;
	(void)o;
	a->params[a->nparams++] = text;
	return HB_OK;
}

static const hb_opt sim_table[] = {
	{ .name = "lcr", .kind = HB_OPT_TEXT, .arg = "RESOURCE", .off = offsetof(sim_args, lcr_res),
	  .help = "serve the meter: tcp://HOST:PORT (PORT 0 picks a free one) or pty" },
	{ .name = "supply", .kind = HB_OPT_TEXT, .arg = "RESOURCE", .off = offsetof(sim_args, supply_res),
	  .help = "serve the supply: tcp://HOST:PORT or pty" },
	{ .name = "preset", .kind = HB_OPT_TEXT, .arg = "NAME", .words_fn = hb_sim_presets,
	  .off = offsetof(sim_args, preset), .help = "part to simulate" },
	{ .name = "dynamics", .kind = HB_OPT_TEXT, .arg = "NAME", .words_fn = hb_sim_dynamics,
	  .off = offsetof(sim_args, dynamics),
	  .help = "supply current dynamics (applied before --param, which can adjust it)" },
	{ .name = "param", .kind = HB_OPT_CUSTOM, .arg = "KEY=VALUE", .parse = take_param, .off = 0,
	  .flags = HB_OPT_REPEAT, .help = "model parameter, with units (gap=0.3mm, cp=10pF)" },
	{ .name = "log", .kind = HB_OPT_PATH, .arg = "FILE", .off = offsetof(sim_args, log_path),
	  .help = "timestamped log of commands and supply output changes" },
	{ .name = "fault-lcr", .kind = HB_OPT_TEXT, .arg = "SPEC", .off = offsetof(sim_args, fault_lcr),
	  .help = "faults of the meter, e.g. delay=300,drop=5 (see docs/simulator.md)" },
	{ .name = "fault-supply", .kind = HB_OPT_TEXT, .arg = "SPEC", .off = offsetof(sim_args, fault_supply),
	  .help = "faults of the supply" },
	{ .name = "list-params", .kind = HB_OPT_FLAG, .off = offsetof(sim_args, list), .flags = HB_OPT_STOP,
	  .help = "print the parameters and their ranges, then exit" },
	{ .name = NULL },
};

const hb_cmd_opts hb_opts_sim = {
	.name = "sim",
	.usage = "[--lcr RESOURCE] [--supply RESOURCE] [--preset NAME]\n"
		 "                      [--dynamics NAME] [--param KEY=VALUE ...] [--log FILE]\n"
		 "                      [--fault-lcr SPEC] [--fault-supply SPEC] [--list-params]",
	.about = "\nServes the simulated LCR meter and DC supply (one shared part model) until\n"
		 "SIGINT or SIGTERM. RESOURCE is tcp://HOST:PORT (PORT 0 picks a free one) or\n"
		 "pty (a pseudo-terminal; use the printed tty: path). One line per instrument\n"
		 "is printed on start, e.g. \"lcr: tcp://127.0.0.1:5025\".\n",
	.opts = sim_table,
	.max_operands = 0,
};

int hb_cmd_sim(int argc, char **argv)
{
	sim_args a = { .params = NULL };
	int rc = HB_EXIT_OK;
	hb_sim *sim = NULL;
	FILE *log = NULL;
	a.params = calloc((size_t)argc + 1, sizeof *a.params);
	const char **params = a.params;
	if (!params) {
		hb_cli_error("sim: out of memory");
		return HB_EXIT_RUNTIME;
	}

	hb_opts_result r;
	if (hb_opts_parse(&hb_opts_sim, argc, argv, &a, &r) != HB_OK) {
		rc = HB_EXIT_USAGE;
		goto out;
	}
	if (r.done) {
		if (a.list) {
			hb_sim_list_params(stdout);
			printf("presets:");
			for (const char *const *n = hb_sim_presets(); *n; n++)
				printf(" %s", *n);
			printf("\ndynamics:");
			for (const char *const *n = hb_sim_dynamics(); *n; n++)
				printf(" %s", *n);
			printf("\n");
		}
		goto out;
	}
	const char *lcr_res = a.lcr_res, *supply_res = a.supply_res, *preset = a.preset, *dynamics = a.dynamics;
	const char *log_path = a.log_path, *fault_lcr = a.fault_lcr, *fault_supply = a.fault_supply;
	int nparams = a.nparams;
	if (!lcr_res && !supply_res) {
		hb_cli_error("sim: give --lcr RESOURCE and/or --supply RESOURCE (tcp://HOST:PORT or pty)");
		rc = HB_EXIT_USAGE;
		goto out;
	}

	int st = hb_sim_new(preset, &sim);
	if (st != HB_OK) {
		hb_cli_error("sim: --preset: %s", hb_sim_errmsg(sim));
		rc = st == HB_ERR_ARG ? HB_EXIT_USAGE : HB_EXIT_RUNTIME;
		goto out;
	}
	/* The preset first, so --param can adjust one of its values. */
	if (dynamics && hb_sim_load_dynamics(sim, dynamics) != HB_OK) {
		hb_cli_error("sim: --dynamics: %s", hb_sim_errmsg(sim));
		rc = HB_EXIT_USAGE;
		goto out;
	}
	for (int i = 0; i < nparams; i++) {
		if (apply_param(sim, params[i]) != HB_OK) {
			rc = HB_EXIT_USAGE;
			goto out;
		}
	}
	if ((fault_lcr && hb_sim_set_fault(sim, HB_SIM_LCR, fault_lcr) != HB_OK) ||
	    (fault_supply && hb_sim_set_fault(sim, HB_SIM_SUPPLY, fault_supply) != HB_OK)) {
		hb_cli_error("sim: %s", hb_sim_errmsg(sim));
		rc = HB_EXIT_USAGE;
		goto out;
	}
	if (log_path) {
		log = fopen(log_path, "a");
		if (!log) {
			hb_cli_error("sim: --log %s: %s", log_path, strerror(errno));
			rc = HB_EXIT_RUNTIME;
			goto out;
		}
		setvbuf(log, NULL, _IOLBF, 0);
		hb_sim_set_log(sim, log);
	}

	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	/* no SA_RESTART: poll must return so the loop sees the flag */
	sigaction(SIGINT, &sa, NULL);
	sigaction(SIGTERM, &sa, NULL);
	signal(SIGPIPE, SIG_IGN);

	if (lcr_res && (rc = serve_resource(sim, HB_SIM_LCR, "lcr", lcr_res)) != HB_EXIT_OK)
		goto out;
	if (supply_res && (rc = serve_resource(sim, HB_SIM_SUPPLY, "supply", supply_res)) != HB_EXIT_OK)
		goto out;
	fflush(stdout);

	if (hb_sim_run(sim, &sim_stop) != HB_OK) {
		hb_cli_error("sim: %s", hb_sim_errmsg(sim));
		rc = HB_EXIT_RUNTIME;
	}
out:
	/* hb_sim_free logs a supply left on, so the log closes after it. */
	hb_sim_free(sim);
	if (log)
		fclose(log);
	free(params);
	return rc;
}
