/* src/io/io.h - sweeps in and out as files: CSV and JSON export, CSV import, the JSON blocks show and export share */
#ifndef HB_IO_H
#define HB_IO_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include <jansson.h>

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
} hb_import_options;

typedef struct hb_import_result {
	int64_t sweep_id;
	size_t n_points;
	hb_db_sweep_kind kind;
	char delimiter;
	int column[HB_IMPORT_NROLES]; /* 0-based column used, -1 none */
	int line;                   /* line of the first error, 0 = none */
	int field;                  /* its 1-based column, 0 = whole row */
} hb_import_result;

void hb_import_options_init(hb_import_options *opt);
const char *hb_import_role_name(hb_import_role role); /* "current", "inductance", ... */
/*
 * Reads a CSV file (comma, semicolon or tab, detected from the header; a
 * UTF-8 byte-order mark is skipped; RFC 4180 quoting) and stores it as one
 * complete sweep at station "import". Every row is checked before the first
 * write: a malformed row leaves the store untouched and err names its line
 * (and column). Fitted with hb_analysis_sweep when opt->analyse.
 */
int hb_import_csv(hb_db *db, const char *path, const hb_import_options *opt, hb_import_result *res, char *err,
		  size_t errlen);

/* ---------------- JSON blocks (json.c) ---------------- */

/* A JSON number, or null for NaN and infinity (JSON has neither). */
json_t *hb_json_num(double v);

/* The parts of a stored sweep that show and export write with the same keys,
 * so the two documents cannot drift apart: the sweep object begun with its id,
 * kind, status and times; its "instruments" object; and a "settings" object
 * begun with the test conditions (frequency, level, bias, circuit, pair).
 * The caller completes each in its own layout. */
json_t *hb_json_sweep_head(const hb_db_sweep *s);
json_t *hb_json_sweep_instruments(const hb_db_sweep *s);
json_t *hb_json_sweep_conditions(const hb_db_sweep *s);
/* What the supply's state machine recorded: current found flowing at the
 * start, current at switch-off, decay time (null where unknown). */
json_t *hb_json_supply_record(const hb_db_sweep *s);

#endif
