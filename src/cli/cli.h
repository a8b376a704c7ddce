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

/* A command: argv[0] is the command name; it parses the rest with hb_opts_parse. */
typedef int (*hb_command_fn)(int argc, char **argv);

struct hb_cmd_opts;

typedef struct hb_command {
	const char *name;
	hb_command_fn run;
	const char *summary;
	const struct hb_cmd_opts *opts; /* its option table (help, completion) */
} hb_command;

/* Every command, in the order --help lists them (commands.c); ended by a NULL name. */
extern const hb_command hb_commands[];

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

/* Formats the inclusive range min..max of a value in unit as "1 Hz to 1 GHz",
 * "up to 5 A" or "from 0 A" (unit "%": fractions shown as percent). */
char *hb_opt_range_text(char *buf, size_t cap, const char *unit, double min, double max);

/* ---------------- one option table per command (opt_table.c) ---------------- */

/* What an option's argument is; each kind decides parsing, the range check,
 * its --help line and its shell completion. */
typedef enum hb_opt_kind {
	HB_OPT_FLAG,   /* no argument: bool set true */
	HB_OPT_TEXT,   /* const char *, free text (part number, serial, resource) */
	HB_OPT_PATH,   /* const char *, a file name (completed as one) */
	HB_OPT_VALUE,  /* double: engineering value in unit, min..max */
	HB_OPT_INT,    /* int: whole number, min..max */
	HB_OPT_LONG,   /* long: whole number, min..max */
	HB_OPT_ENUM,   /* int: one of words (stored as codes[i], else i) */
	HB_OPT_ID,     /* long long: a positive record id */
	HB_OPT_CUSTOM, /* parse() decides; words, when given, are offered in help and completion */
} hb_opt_kind;

/* hb_opt.flags */
enum {
	HB_OPT_REPEAT = 1u, /* may be given more than once (parse() collects them) */
	HB_OPT_STOP = 2u,   /* ends the command line: the command acts on it alone (like --help) */
};

typedef struct hb_opt {
	const char *name;          /* long name without "--"; NULL ends a table */
	char alias;                /* short alias ("-j"), or 0 */
	hb_opt_kind kind;
	const char *arg;           /* argument's name in --help ("A", "N", "FILE"); ENUM: words joined by | */
	const char *unit;          /* HB_OPT_VALUE: the SI unit (hb_parse_value) */
	double min, max;           /* VALUE, INT, LONG: inclusive range */
	const char *const *words;  /* ENUM: accepted words, NULL-terminated; CUSTOM: offered ones */
	const int *codes;          /* ENUM: value stored for words[i]; NULL = i */
	const char *const *(*words_fn)(void); /* words known only at run time (offered, not checked), or NULL */
	int (*match)(const char *text, int *code);                 /* ENUM: own matching (aliases), or NULL */
	int (*parse)(const struct hb_opt *o, const char *text, void *field); /* CUSTOM: HB_ERR_ARG after the one-line error */
	size_t off;                /* where the value goes: offsetof in the command's struct */
	size_t given;              /* HB_OPT_GIVEN(type, member) of a bool set when given; 0 = none */
	unsigned flags;
	const char *help;          /* one line for --help */
} hb_opt;

/* The bool at member is set true whenever the option is given. */
#define HB_OPT_GIVEN(type, member) (offsetof(type, member) + 1)

/* A command's whole command line. */
typedef struct hb_cmd_opts {
	const char *name;          /* as typed after henrybench: "sweep" */
	const char *usage;         /* after "usage: henrybench NAME ", may hold "\n       henrybench ..." */
	const char *about;         /* description paragraph (what the table cannot say), or NULL */
	const hb_opt *opts;        /* the table, ended by { .name = NULL } */
	int max_operands;          /* operands accepted after the options; -1 = the command counts them */
	const char *operands;      /* words completed as the first operand ("add list show edit"), or NULL */
	const char *epilog;        /* text after the option list, or NULL */
} hb_cmd_opts;

typedef struct hb_opts_result {
	int first;                 /* argv[first..argc) are the operands, in order */
	bool done;                 /* --help printed or a STOP option met: the command exits 0 after it */
	const hb_opt *stop;        /* the STOP option met (NULL for --help) */
} hb_opts_result;

/* Parses argv[1..argc) (argv[0] is the command) against cmd's table into
 * out (the struct the offsets point into): long options (--name VALUE,
 * --name=VALUE, a unique prefix), short aliases, "--" ending options, and
 * operands anywhere (moved to the end of argv, in order). --help and -h
 * print the help and set res->done. Every value is parsed and range-checked
 * by its kind; a bad one is one line on stderr naming the option, the value
 * and what is accepted, and HB_ERR_ARG (exit 2). */
int hb_opts_parse(const hb_cmd_opts *cmd, int argc, char **argv, void *out, hb_opts_result *res);

/* Option arguments several commands share (opt_words.c): a sweep kind,
 * the ISO 2859-1 inspection level and severity (ENUM match functions and
 * their words) and an AQL of the ISO 2859-1 series (CUSTOM, into a double). */
extern const char *const hb_opt_kind_words[];
extern const char *const hb_opt_level_words[];
extern const char *const hb_opt_severity_words[];
int hb_opt_match_kind(const char *text, int *code);
int hb_opt_match_level(const char *text, int *code);
int hb_opt_match_severity(const char *text, int *code);
int hb_opt_take_aql(const hb_opt *o, const char *text, void *field);

/* The command's --help text, generated from its table. */
void hb_opts_help(const hb_cmd_opts *cmd, FILE *out);

/* The bash completion script for every command of hb_commands. */
void hb_opts_completion_bash(FILE *out);

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
/* The shared server (cli_sync.c): cmdline (--server), else $HENRYBENCH_SERVER, else the station
 * file's [store] server; NULL = none named. */
struct hb_station;
const char *hb_cli_server_url(const char *cmdline, const struct hb_station *station);
/* With [store] sync = after-sweep: pushes to the server once a sweep is stored and the supply is off;
 * a failure is one warning line on stderr (exit status unchanged). false = the push failed. */
bool hb_cli_sync_after(struct hb_db *db, const struct hb_station *station, FILE *info);
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
int hb_cmd_completion(int argc, char **argv);

/* The option table of each command (in its cmd_*.c). */
extern const hb_cmd_opts hb_opts_ports;
extern const hb_cmd_opts hb_opts_identify;
extern const hb_cmd_opts hb_opts_sim;
extern const hb_cmd_opts hb_opts_demo;
extern const hb_cmd_opts hb_opts_core;
extern const hb_cmd_opts hb_opts_sweep;
extern const hb_cmd_opts hb_opts_fsweep;
extern const hb_cmd_opts hb_opts_fit;
extern const hb_cmd_opts hb_opts_plan;
extern const hb_cmd_opts hb_opts_sweeps;
extern const hb_cmd_opts hb_opts_show;
extern const hb_cmd_opts hb_opts_part;
extern const hb_cmd_opts hb_opts_inspect;
extern const hb_cmd_opts hb_opts_history;
extern const hb_cmd_opts hb_opts_compare;
extern const hb_cmd_opts hb_opts_report;
extern const hb_cmd_opts hb_opts_export;
extern const hb_cmd_opts hb_opts_import;
extern const hb_cmd_opts hb_opts_completion;

/* ---------------- design (cmd_design.c) ---------------- */
int hb_cmd_design(int argc, char **argv);
extern const hb_cmd_opts hb_opts_design;
/* ---------------- record handles (cli_ids.c) ---------------- */
/* A record handle as typed: a positive integer (the local id) or a global
 * identity, looked up in the store of --db. Prints the one-line error;
 * HB_ERR_ARG for a malformed or unknown handle. kind is an hb_db_record. */
int hb_cli_resolve_id(int kind, const char *text, long long *id);
/* A part's global identity typed where a part number is asked: its part
 * number (in buf); anything else is returned as it is. */
const char *hb_cli_part_number(const char *text, char *buf, size_t cap);
/* A lot's global identity typed where a lot code is asked: its code (in
 * code), and *part_number set to its part's number (in part); anything else
 * is returned as it is and *part_number left alone. */
const char *hb_cli_lot_code(const char *text, char *code, size_t code_cap, char *part, size_t part_cap,
			    const char **part_number);

/* ---------------- verify (cmd_verify.c) ---------------- */
int hb_cmd_verify(int argc, char **argv);
extern const hb_cmd_opts hb_opts_verify;
/* ---------------- the man page and zsh completion from the option tables (opt_docs.c) ---------------- */

/* head: "-j, --json" or "--steps N" as --help shows it; range: the accepted
 * values in words ("2 to 10000", "bias or frequency"), or "". */
void hb_opt_describe(const hb_opt *o, char *head, size_t hcap, char *range, size_t rcap);
/* The words an option offers (its own or known at run time), or NULL. */
const char *const *hb_opt_words(const hb_opt *o);
/* --help / -h, which every command takes without listing it in its table. */
const hb_opt *hb_opt_help_entry(void);
/* The zsh completion function for every command of hb_commands. */
void hb_opts_completion_zsh(FILE *out);
/* The man page henrybench(1) in roff (man(7) macros): every command and
 * option, exit statuses, files and environment. */
void hb_opts_manpage(FILE *out);
int hb_cmd_manpage(int argc, char **argv);
extern const hb_cmd_opts hb_opts_manpage_cmd;
/* ---------------- lot streams (switching rules) ---------------- */
int hb_cmd_stream(int argc, char **argv);
extern const hb_cmd_opts hb_opts_stream;
/* ================ store hygiene, deletions, watch (issue 15; cli_store.c, cmd_delete.c, cmd_watch.c) ================ */

/* Opens the store named by --db in mode (hb_db_open_mode); NULL after the
 * one-line error, *exit_code 2 when no store is at the path (read
 * commands never create one), else 1. */
struct hb_db *hb_cli_open_store_as(int mode, int *exit_code);
/* The mode of read commands and dry runs: an existing store only. */
struct hb_db *hb_cli_open_store_read(int *exit_code);
/* HB_EXIT_OK, or HB_EXIT_RUNTIME after naming a store that cannot be written. */
int hb_cli_check_writable(struct hb_db *db);

/* `sweep delete ID` and `part delete PARTNO`. */
int hb_cmd_sweep_delete(int argc, char **argv);
int hb_cmd_part_delete(int argc, char **argv);
extern const hb_cmd_opts hb_opts_sweep_delete;
extern const hb_cmd_opts hb_opts_part_delete;

/* --csv of `sweeps` and `compare` (cli_csv.c), through the one CSV writer. */
struct hb_db_sweep;
struct hb_compare_table;
int hb_cli_sweeps_csv(const struct hb_db_sweep *list, size_t n, FILE *out);
int hb_cli_compare_csv(const struct hb_compare_table *t, FILE *out);

int hb_cmd_watch(int argc, char **argv);
extern const hb_cmd_opts hb_opts_watch;

/* `profile check` and `profile new` (cmd_profile.c): bring-up of a new instrument. */
int hb_cmd_profile(int argc, char **argv);
extern const hb_cmd_opts hb_opts_profile;
/* ---- output checked to the end (cli.c) ---- */

/* Reports once, on stderr, that standard output could not be written
 * ("CMD: cannot write to standard output: REASON"); cmd may be NULL. */
void hb_cli_stdout_error(const char *cmd);
/* Run by main after the command: flushes and closes standard output and,
 * when any write to it failed (a full disk, a closed pipe: EPIPE, since
 * SIGPIPE is ignored), says the output was lost and turns a 0 status into
 * HB_EXIT_RUNTIME. Anything already stored stays stored. */
int hb_cli_finish_stdout(int status);
/* ---------------- traceability commands (cmd_instrument.c, cmd_fixture.c) ---------------- */
int hb_cmd_instrument(int argc, char **argv);
int hb_cmd_fixture(int argc, char **argv);
extern const hb_cmd_opts hb_opts_instrument;
extern const hb_cmd_opts hb_opts_fixture;
/* The lines `show` prints on what the sweep ran with (nothing for a sweep
 * without a record of it). */
void hb_show_trace(FILE *out, struct hb_db *db, long long sweep_id);

/* ---------------- text operands (cli_ids.c) ---------------- */
/* A part number, serial or id typed as an operand, checked as the writing
 * commands check theirs (hb_text_check: UTF-8, no control characters, at
 * most limit bytes) before any message can echo it. Prints the one-line
 * error naming field and limit; HB_ERR_ARG (exit 2) when it fails. */
int hb_cli_text_arg(const char *field, const char *text, size_t limit);
/* ---------------- many stations: sync with the shared server (cmd_sync.c) ---------------- */
int hb_cmd_sync(int argc, char **argv);
extern const hb_cmd_opts hb_opts_sync;

#endif
