/* src/io/io.h - sweeps in and out as files: the one CSV writer, the one JSON serialiser per record, export, CSV import */
#ifndef HB_IO_H
#define HB_IO_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include <jansson.h>

#include "../../common/hb_text.h"
#include "../../db/hb_db.h"

/* On error a one-line explanation is left in err (which may be NULL). */

/* ---------------- export ---------------- */

/* Points of the sweeps as one CSV table (RFC 4180, one header row, SI
 * units in the column names, C locale numbers, empty cell = not known). */
int hb_export_csv(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen);
/* One JSON document: the parts involved and each sweep with its
 * settings, points, latest fit with values and verdicts. */
int hb_export_json(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen);

/* ---------------- import ---------------- */

/* Column roles an imported table can fill. */
typedef enum hb_import_role {
	HB_IMPORT_CURRENT,          /* DC bias, A (set point, and measured when no own column) */
	HB_IMPORT_CURRENT_MEASURED, /* A */
	HB_IMPORT_VOLTAGE,          /* supply voltage, V */
	HB_IMPORT_FREQUENCY,        /* Hz */
	HB_IMPORT_INDUCTANCE,       /* series L, H */
	HB_IMPORT_RESISTANCE,       /* series R, ohm */
	HB_IMPORT_DIRECTION,        /* "up" / "down" */
	HB_IMPORT_NROLES
} hb_import_role;

typedef struct hb_import_options {
	const char *part_number;    /* must be stored */
	const char *serial;
	const char *lot_code;       /* NULL = none */
	int kind;                   /* hb_db_sweep_kind, or -1 = from the columns */
	double test_freq_hz;        /* bias sweep without a frequency column; NAN = not known */
	const char *note;           /* appended to "imported from FILE" */
	/* "current=I (A),inductance=L" : header names (case-insensitive) or
	 * 1-based column numbers; NULL = found by header name. */
	const char *columns;
	bool analyse;               /* fit and judge after the import (default true) */
	int skip_lines;             /* lines above the header; -1 (default) = the first line that reads as a header */
} hb_import_options;

typedef struct hb_import_result {
	int64_t sweep_id;
	size_t n_points;
	hb_db_sweep_kind kind;
	char delimiter;
	int column[HB_IMPORT_NROLES]; /* 0-based column used, -1 none */
	int line;                   /* line of the first error, 0 = none */
	int field;                  /* its 1-based column, 0 = whole row */
	int header_line;            /* 1-based line of the header row */
	const char *encoding;       /* "UTF-8", "UTF-16LE with BOM", ... */
} hb_import_result;

void hb_import_options_init(hb_import_options *opt);
const char *hb_import_role_name(hb_import_role role); /* "current", "inductance", ... */
/*
 * Reads a CSV file (comma, semicolon or tab, detected from the header; a
 * UTF-8 byte-order mark is skipped, UTF-16 converted; RFC 4180 quoting;
 * metadata lines above the header skipped, see skip_lines; no row limit
 * but memory) and stores it as one
 * complete sweep at station "import". Every row is checked before the first
 * write: a malformed row leaves the store untouched and err names its line
 * (and column). Fitted with hb_analysis_sweep when opt->analyse.
 */
int hb_import_csv(hb_db *db, const char *path, const hb_import_options *opt, hb_import_result *res, char *err,
		  size_t errlen);

/* ---------------- CSV: the one writer (csv_write.c) ---------------- */

/*
 * Every CSV henrybench writes (export, show --csv, history --csv) goes
 * through this writer, so all share one dialect: RFC 4180 quoting (a field
 * holding a comma, quote, CR or LF, or starting or ending with a space, is
 * quoted, quotes doubled), CRLF row ends, C-locale numbers in the fewest
 * digits that read back as the same double, an empty cell for a value not
 * known. Column names carry SI units: bias_measured_A, L_H, frequency_Hz.
 * Between begin and end this thread's LC_NUMERIC is "C".
 */
typedef struct hb_csv_writer {
	FILE *out;
	size_t col;        /* cells written in the current row */
	hb_c_numeric loc;
} hb_csv_writer;

void hb_csv_begin(hb_csv_writer *w, FILE *out);
/* NULL = empty cell; text starting with '=', '+', '-', '@', tab or CR gets
 * a leading single quote so that no spreadsheet runs it as a formula. */
void hb_csv_text(hb_csv_writer *w, const char *s);
/* Whether text starts like a spreadsheet formula (the cells hb_csv_text neutralises). */
bool hb_csv_formula_like(const char *s);
void hb_csv_num(hb_csv_writer *w, double v);       /* NaN, infinity = empty cell */
void hb_csv_int(hb_csv_writer *w, long long v);
void hb_csv_row_end(hb_csv_writer *w);
/* HB_OK, or HB_ERR_IO when a write to the stream failed. */
int hb_csv_end(hb_csv_writer *w);
/* v as the CSV writer writes it ("" for NaN, infinity); returns buf. */
char *hb_csv_format_num(char *buf, size_t cap, double v);

/* ---------------- JSON: one serialiser per stored record (json.c) ---------------- */

/*
 * show, export, sweeps and part build their documents from
 * these, so one record has one set of keys wherever it appears. Keys name
 * their SI unit (bias_measured_A, frequency_Hz, L_H); a value not known is
 * null. Each returns a new reference.
 */

/* A JSON number, or null for NaN and infinity (JSON has neither). */
json_t *hb_json_num(double v);
/* Column (and JSON key) of reading which (0 primary, 1 secondary) of a
 * measured pair: "Ls-Rs" -> "L_H", "R_ohm"; "Z-theta" -> "Z_ohm", "theta_deg";
 * unknown -> "primary", "secondary". */
const char *hb_io_reading_column(const char *pair, int which);
/* "ok" or the status name of a point's reading. */
const char *hb_io_reading_status(int status);

json_t *hb_json_part(const hb_db_part *p);
/* A listed sweep: id, kind, status, times, part_number, serial, lot_code,
 * station, operator, n_points. */
json_t *hb_json_sweep_summary(const hb_db_sweep *s);
/* A sweep with its instruments, "settings" and "supply_record" (no points). */
json_t *hb_json_sweep(const hb_db_sweep *s);
/* What the supply's state machine recorded: current found flowing at the
 * start, current at switch-off, decay time (null where unknown). */
json_t *hb_json_supply_record(const hb_db_sweep *s);
/* One point; its reading keys follow s->measured_pair. */
json_t *hb_json_point(const hb_db_sweep *s, const hb_db_point *p);
/* A stored fit with its values: each value an object of value, std_err,
 * unit and, when they apply, reason and misfit (docs/fitting.md); a value
 * with a stored uncertainty (unc: hb_db_fit_unc_list of the fit, may be
 * NULL) also gets u_c, k, U, dof, coverage and its budget (docs/uncertainty.md). */
json_t *hb_json_fit(const hb_db_fit *f, const hb_db_fit_unc *unc, size_t n_unc);
/* One stored verdict with its decision rule, U, k and acceptance limits. */
json_t *hb_json_verdict(const hb_db_verdict *v);
/* The whole stored sweep: hb_json_sweep with "points", "fit" (the latest,
 * or null) and "verdicts". `show --json` prints it; `export --json` holds
 * one per sweep. NULL with err on a store error. */
json_t *hb_json_sweep_record(hb_db *db, const hb_db_sweep *s, char *err, size_t errlen);

/* A unit's result from its newest fit, as `history` lists it per unit and
 * `compare` per sweep: sweep_id, started, station, lot_code (null: none),
 * serial, L0_H, I_drop_A (keyed by the percentage), mu_e, gap_m, verdict. */
json_t *hb_json_unit_result(const hb_db_history_row *r, const int drop_percent[HB_DB_HISTORY_DROPS]);

/* Writes root as indented JSON and a newline: C locale, 17 significant
 * digits (every double reads back exactly). HB_OK or HB_ERR_IO. */
int hb_json_write(const json_t *root, FILE *out);

/* ---------------- issue 13: a part's drawing and data-sheet curve ---------------- */

/* {"gap_m","gap_tol_m","curve_tol","curve_source","curve":[{"current_A","inductance_H","tol"}]}
 * (each point's tol the band in force: its own, else the mask's); `part show --json`
 * and export put it under "drawing". */
json_t *hb_json_part_drawing(const hb_db_part_drawing *d);
/* ---------------- output files: written beside, renamed over (out_file.c) ---------------- */

/*
 * Every file henrybench writes on request (report --out, export --out,
 * compare --plot, ...) goes through these: the data go to a temporary file
 * in the target's directory, renamed over the target at commit, so a failed
 * run never leaves half a file. Only a regular file (or nothing) is
 * replaced: a FIFO, a device (/dev/full), a directory or a symbolic link at
 * the path is refused before anything is written. "-" is standard output,
 * written in place and flushed at commit.
 */
typedef struct hb_out hb_out;

/* HB_ERR_ARG when the path names something other than a regular file (err
 * says what it is: exit 2, a bad value given), HB_ERR_IO when the temporary
 * file cannot be made (exit 1). */
int hb_out_open(const char *path, hb_out **out, char *err, size_t errlen);
FILE *hb_out_stream(hb_out *o);
/* The path as given ("-" for standard output). */
const char *hb_out_path(const hb_out *o);
/* Flushes, closes and renames; HB_ERR_IO with err on any failure (the
 * temporary file is removed and the target left as it was). Frees o. */
int hb_out_commit(hb_out *o, char *err, size_t errlen);
/* Flushes and closes the data before the commit, so that they can be read
 * back (a filed report hashes the bytes it will rename); the commit then
 * only renames. hb_out_data_path: where they are until then (NULL for
 * standard output). */
int hb_out_close_data(hb_out *o, char *err, size_t errlen);
const char *hb_out_data_path(const hb_out *o);
/* Drops the temporary file; the target is untouched. Frees o; NULL no-op. */
void hb_out_abort(hb_out *o);

#endif
