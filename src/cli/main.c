/* src/cli/main.c - henrybench entry point: global options, command dispatch, help and version */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <locale.h>
#include <signal.h>

#include <gsl/gsl_errno.h>

#include "../bench/station.h"
#include "cli.h"


static void usage(FILE *out)
{
	fprintf(out,
		"usage: henrybench [--db PATH] [--trace[=FILE]] COMMAND [ARGS]\n"
		"       henrybench COMMAND --help\n\n"
		"Inductance against DC bias and frequency, measured, stored, fitted and judged.\n\n"
		"commands:\n");
	for (const hb_command *c = hb_commands; c->name; c++)
		fprintf(out, "  %-10s %s\n", c->name, c->summary);
	fprintf(out,
		"\nglobal options (accepted anywhere on the line):\n"
		"  --db PATH        store (default $HENRYBENCH_DB, the station file's [store] path\n"
		"                   or ${XDG_DATA_HOME:-~/.local/share}/henrybench/bench.db)\n"
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

/* The store named by the station file's [store] path, when neither --db nor $HENRYBENCH_DB names one
 * (command line > environment > station file > default location). */
static int station_store(void)
{
	static hb_station station;
	char err[600];
	if (hb_global.db_path)
		return 0;
	if (hb_station_read(&station, err, sizeof err) != HB_OK) {
		hb_cli_error("%s", err);
		return -1;
	}
	if (station.store_path[0])
		hb_global.db_path = station.store_path;
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
		return hb_cli_finish_stdout(argc < 2 ? HB_EXIT_USAGE : HB_EXIT_OK);
	}
	if (strcmp(argv[1], "--version") == 0 || strcmp(argv[1], "version") == 0) {
		printf("henrybench %s\n", HB_VERSION);
		return hb_cli_finish_stdout(HB_EXIT_OK);
	}
	for (const hb_command *c = hb_commands; c->name; c++) {
		if (strcmp(argv[1], c->name) == 0) {
			if (station_store() < 0)
				return HB_EXIT_USAGE;
			int rc = c->run(argc - 1, argv + 1);
			hb_cli_global_cleanup();
			return hb_cli_finish_stdout(rc);
		}
	}
	hb_cli_error("unknown command '%s' (try 'henrybench --help')", argv[1]);
	return HB_EXIT_USAGE;
}
