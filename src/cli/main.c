/* src/cli/main.c - henrybench entry point: global options, command dispatch, help and version */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <locale.h>
#include <signal.h>

#include <gsl/gsl_errno.h>

#include "cli.h"

static const hb_command commands[] = {
	{ "ports", hb_cmd_ports, "list serial ports" },
	{ "identify", hb_cmd_identify, "ask instruments who they are (*IDN?, profile, error queue)" },
	{ "sim", hb_cmd_sim, "serve the simulated bench over TCP or a pseudo-terminal" },
	{ "demo", hb_cmd_demo, "run the main job on the simulated bench" },
	{ "core", hb_cmd_core, "core geometry: effective parameters, expected inductance" },
	{ "sweep", hb_cmd_sweep, "measure L against DC bias, store every point, fit and judge" },
	{ "fsweep", hb_cmd_fsweep, "measure L and R against frequency (optionally under bias)" },
	{ "fit", hb_cmd_fit, "fit a stored sweep again and store the fit" },
	{ "plan", hb_cmd_plan, "ISO 2859-1 sampling plan for a lot: code letter, sample size, Ac/Re" },
	{ "sweeps", hb_cmd_sweeps, "list stored sweeps (filters: part, unit, lot, status, kind)" },
	{ "show", hb_cmd_show, "one stored sweep: settings and points (text, JSON, CSV)" },
	{ "part", hb_cmd_part, "part specs: add, list, show, edit" },
	{ "inspect", hb_cmd_inspect, "inspect a lot by ISO 2859-1 sampling: sweep, judge, tally, decide (resumable)" },
	{ "history", hb_cmd_history, "a part's measured units, lot statistics with Cpk, trend across lots" },
	{ "compare", hb_cmd_compare, "stored bias sweeps side by side: L0, drop currents, mu_e, gap, verdict" },
	{ "report", hb_cmd_report, "write an HTML record of a sweep, a lot or a part (inline plots)" },
	{ "export", hb_cmd_export, "stored sweeps as CSV or JSON, SI units in every column" },
	{ "import", hb_cmd_import, "store a sweep a meter logged on its own (CSV), then fit it" },
};

static void usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench [--db PATH] [--trace[=FILE]] COMMAND [ARGS]\n"
		"       henrybench COMMAND --help\n\n"
		"Inductance against DC bias and frequency, measured, stored, fitted and judged.\n\n"
		"commands:\n");
	for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++)
		fprintf(out, "  %-10s %s\n", commands[i].name, commands[i].summary);
	fprintf(out,
		"\nglobal options (accepted anywhere on the line):\n"
		"  --db PATH        store (default $HENRYBENCH_DB or\n"
		"                   ${XDG_DATA_HOME:-~/.local/share}/henrybench/bench.db)\n"
		"  --trace[=FILE]   log every instrument exchange with a timestamp (stderr by default)\n"
		"  --help, --version\n");
}

/* Takes --db and --trace out of argv wherever they stand, so every command
 * accepts them without repeating them in its own option table. */
static int strip_global_options(int *argc, char **argv)
{
	int out = 1;
	for (int i = 1; i < *argc; i++) {
		const char *a = argv[i];
		if (strcmp(a, "--") == 0) {
			while (i < *argc)
				argv[out++] = argv[i++];
			break;
		}
		int rc = 0;
		if (strcmp(a, "--db") == 0) {
			if (i + 1 >= *argc) {
				hb_cli_error("--db needs a PATH");
				return -1;
			}
			rc = hb_cli_global_option("db", argv[++i]);
		} else if (strncmp(a, "--db=", 5) == 0) {
			rc = hb_cli_global_option("db", a + 5);
		} else if (strcmp(a, "--trace") == 0) {
			rc = hb_cli_global_option("trace", NULL);
		} else if (strncmp(a, "--trace=", 8) == 0) {
			rc = hb_cli_global_option("trace", a + 8);
		} else {
			argv[out++] = argv[i];
			continue;
		}
		if (rc < 0)
			return -1;
	}
	argv[out] = NULL;
	*argc = out;
	return 0;
}

int main(int argc, char **argv)
{
	/* Numbers on the wire and in files are C-locale; the user's locale
	 * only decides message language, which we do not translate. */
	setlocale(LC_ALL, "C");
	gsl_set_error_handler_off();
	/* A lost socket must be an error status, not a dead process. */
	signal(SIGPIPE, SIG_IGN);

	const char *env_db = getenv("HENRYBENCH_DB");
	if (env_db && *env_db)
		hb_global.db_path = env_db;
	if (strip_global_options(&argc, argv) < 0)
		return HB_EXIT_USAGE;

	if (argc < 2 || strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0 ||
	    strcmp(argv[1], "help") == 0) {
		usage(argc < 2 ? stderr : stdout);
		return argc < 2 ? HB_EXIT_USAGE : HB_EXIT_OK;
	}
	if (strcmp(argv[1], "--version") == 0 || strcmp(argv[1], "version") == 0) {
		printf("henrybench %s\n", HB_VERSION);
		return HB_EXIT_OK;
	}
	for (size_t i = 0; i < sizeof commands / sizeof commands[0]; i++) {
		if (strcmp(argv[1], commands[i].name) == 0) {
			int rc = commands[i].run(argc - 1, argv + 1);
			hb_cli_global_cleanup();
			return rc;
		}
	}
	hb_cli_error("unknown command '%s' (try 'henrybench --help')", argv[1]);
	return HB_EXIT_USAGE;
}
