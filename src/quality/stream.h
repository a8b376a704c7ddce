/* src/quality/stream.h - a part's lot stream from one supplier, replayed from the store through the switching rules */
#ifndef HB_STREAM_H
#define HB_STREAM_H

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include <jansson.h>

#include "../../db/hb_db.h"
#include "switching.h"

/* One step of the stream: a decided lot, or an event (approval, withdrawal, resumption). */
typedef struct hb_stream_entry {
	bool is_lot;
	hb_db_stream_lot lot;          /* when is_lot */
	hb_db_stream_event event;      /* otherwise */
	hb_lot_decision decision;      /* the lot's, accept-reinstate-normal told apart */
	hb_severity severity;          /* the lot's severity as recorded */
	int score_after;               /* switching score after it (normal) */
	hb_switch_rule rule;           /* the rule it fired (HB_SWITCH_STAY: none) */
	hb_severity severity_after;    /* the rules' severity after it */
	bool discontinued_after;
	char why[400];                 /* the state's why after it, when a rule fired */
} hb_stream_entry;

typedef struct hb_stream {
	char part_number[HB_DB_ID_LEN];
	char supplier[HB_DB_ID_LEN];
	hb_stream_entry *entries;
	size_t n;
	hb_switch_state state;         /* after the last entry */
	bool reduced_approved;         /* the latest approve/withdraw event approves */
	char approved_note[HB_DB_TEXT_LEN];
} hb_stream;

/* Replays the decided lots and the events of (part, supplier) in time
 * order. out->entries must be freed with hb_stream_free. */
int hb_stream_load(hb_db *db, const hb_db_part *part, const char *supplier, hb_stream *out);
void hb_stream_free(hb_stream *s);
/* The next lot's severity (irregular: the lot about to be inspected is flagged so). */
void hb_stream_next(const hb_stream *s, bool irregular, hb_switch_next *out);

/* A lot's decision as the stream reads it: a reduced lot accepted with Ac < d < Re is accept-reinstate. */
hb_lot_decision hb_stream_lot_decision(const hb_db_stream_lot *lot);

/* "supplier X" or "no supplier named". */
const char *hb_stream_supplier_text(const char *supplier, char *buf, size_t cap);
/* The state for the next lot, two or three lines: severity, why, progress. */
void hb_stream_print_state(FILE *out, const hb_stream *s, const hb_switch_next *next);
/* The sequence of lots with their severities and the rule each fired. */
void hb_stream_print_lots(FILE *out, const hb_stream *s);
/* {"supplier", "severity_next", "rule", "clause", "why", "progress", "discontinued", "reduced_approved",
 *  "switching_score", "lots": [{"lot", "severity", "code_letter", "n", "ac", "re", "nonconforming",
 *  "decision", "switching_score", "severity_after", "rule", "why"} | {"event", "note", "at"}]} */
json_t *hb_stream_json(const hb_stream *s, const hb_switch_next *next);

/* Every stream of the part (one per supplier): the lots, then the state (history's text). */
int hb_stream_print_all(FILE *out, hb_db *db, const hb_db_part *part);
/* The same as a JSON array of hb_stream_json objects; NULL on a store error. */
json_t *hb_stream_all_json(hb_db *db, const hb_db_part *part);

/* Explains the reduced table's accept-and-reinstate rule for a plan with re > ac + 1 (nothing otherwise). */
void hb_stream_print_reinstate_rule(FILE *out, const hb_sampling_plan *plan);

/* ---- for the reports (report_stream.c) ---- */
/* A lot's decision in words: "accept", "accept, reinstate normal", "REJECT". */
const char *hb_stream_decision_text(hb_lot_decision d);

#endif
