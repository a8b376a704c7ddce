/* src/io/csv.h - the RFC 4180 reader inside the io room: records with the line each starts on */
#ifndef HB_IO_CSV_H
#define HB_IO_CSV_H

#include <stddef.h>

/*
 * A small reader of our own: Debian's libcsv ships no pkg-config file, and
 * the one thing the import needs beyond it - the line each record starts
 * on, for the error messages - is most of the work anyway.
 */

/* No row or size limit but memory: a long logged run is one sweep too. */

typedef struct csv_record {
	int line;       /* physical line the record starts on, 1-based */
	size_t nf;
	char **field;   /* NUL-terminated copies */
} csv_record;

typedef struct csv_table {
	size_t n, cap;
	csv_record *rec;
} csv_table;

void csv_table_free(csv_table *t);
/* The delimiter of the header line: tab, semicolon or comma, whichever is
 * most frequent outside quotes (comma on a tie). */
char csv_detect_delimiter(const char *s, size_t len);
/* Parses s into t (records of NUL-terminated fields); HB_ERR_ARG with a
 * one-line err naming the line for malformed quoting or too many rows. */
int csv_parse(const char *s, size_t len, char delim, csv_table *t, char *err, size_t errlen);

/* ---------------- text of a meter log (import_decode.c) ---------------- */

/* Makes *data (malloc'd, NUL-terminated, *len bytes) UTF-8: a UTF-8 BOM is
 * dropped, UTF-16 LE or BE (with a BOM, or recognised by its NUL bytes) is
 * converted; *encoding names what was found. HB_ERR_ARG for invalid text. */
int csv_decode_text(char **data, size_t *len, const char **encoding, char *err, size_t errlen);
/* Start of physical line `line` (1-based) of s; s + len past the end. */
const char *csv_line_at(const char *s, size_t len, int line);

#endif
