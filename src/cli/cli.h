/* src/cli/cli.h - the cli room's public face: commands, option values, exit codes, output helpers */
#ifndef HB_CLI_H
#define HB_CLI_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "../../common/hb_status.h"
#include "../../common/hb_text.h"

/* Exit statuses of every command. */
enum { HB_EXIT_OK = 0, HB_EXIT_RUNTIME = 1, HB_EXIT_USAGE = 2, HB_EXIT_SIGINT = 130 };

/* A command: argv[0] is the command name; getopt_long state is fresh. */
typedef int (*hb_command_fn)(int argc, char **argv);

typedef struct hb_command {
	const char *name;
	hb_command_fn run;
	const char *summary;
} hb_command;

/* Options every command accepts, set from the environment and the command line. */
typedef struct hb_global_opts {
	const char *db_path; /* --db PATH or $HENRYBENCH_DB; NULL = default location */
	FILE *trace;         /* --trace[=FILE]: every SCPI exchange; NULL = off */
} hb_global_opts;

extern hb_global_opts hb_global;

/* Handles --db and --trace for any command; returns 1 if the option was
 * consumed, 0 if not ours, or -1 after printing an error. */
int hb_cli_global_option(const char *name, const char *value);
/* Closes the trace file etc. */
void hb_cli_global_cleanup(void);

/* Prints "henrybench: <message>" on stderr (one line). */
void hb_cli_error(const char *fmt, ...) __attribute__((format(printf, 1, 2)));

/* ---------------- engineering values as option arguments (opt_values.c; the parser itself is common/hb_text.h) ---------------- */

/* Parses the option value or prints a one-line error naming option, value
 * and accepted range and returns HB_ERR_ARG. min/max are inclusive; pass
 * -INFINITY/INFINITY for none. */
int hb_opt_value(const char *option, const char *text, const char *unit, double min, double max, double *value);
int hb_opt_int(const char *option, const char *text, long min, long max, long *value);

/* Parses a positive sweep id or prints the one-line error. */
int hb_cli_parse_sweep_id(const char *text, long long *id);

/* ---------------- output shared by the commands (cli_common.c) ---------------- */
/* Declared, not included, so that including cli.h needs neither jansson nor db/. */
struct json_t;
struct hb_db;
struct hb_sweep_result;

/* Prints root as indented JSON and a newline on stdout, then drops root
 * (NULL is taken as out of memory); HB_OK, HB_ERR_NOMEM or HB_ERR_IO. */
int hb_print_json(struct json_t *root);
/* hb_format_si with 4 digits, or "-" for a value not known (NaN, infinity). */
const char *hb_si_or_dash(char *buf, size_t cap, double v, const char *unit);
/* Opens the store named by --db; NULL after printing the error. */
struct hb_db *hb_cli_open_store(void);
/* The exit status the CLI reports for a sweep result. */
int hb_session_exit_code(const struct hb_sweep_result *result);

/* ---------------- commands ---------------- */
int hb_cmd_ports(int argc, char **argv);
int hb_cmd_identify(int argc, char **argv);
int hb_cmd_sim(int argc, char **argv);
int hb_cmd_demo(int argc, char **argv);
int hb_cmd_core(int argc, char **argv);
int hb_cmd_sweep(int argc, char **argv);
int hb_cmd_fsweep(int argc, char **argv);
int hb_cmd_fit(int argc, char **argv);
int hb_cmd_plan(int argc, char **argv);
int hb_cmd_sweeps(int argc, char **argv);
int hb_cmd_show(int argc, char **argv);
int hb_cmd_part(int argc, char **argv);
int hb_cmd_inspect(int argc, char **argv);
int hb_cmd_history(int argc, char **argv);
int hb_cmd_compare(int argc, char **argv);
int hb_cmd_report(int argc, char **argv);
int hb_cmd_export(int argc, char **argv);
int hb_cmd_import(int argc, char **argv);

#endif
