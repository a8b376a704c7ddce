/* src/io/export.c - stored sweeps written as one CSV table or one JSON document, through the one writer of each format */
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include <jansson.h>

#include "../../common/hb_text.h"
#include "io.h"

#ifndef HB_VERSION
#define HB_VERSION "unknown"
#endif

int hb_export_csv(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen)
{
	/* First pass: every sweep found before a byte is written, and readings
	 * get their own SI names when every sweep read the same pair. Only one
	 * sweep's record and points are in memory at a time. */
	hb_db_sweep *sw = malloc(sizeof *sw);
	char first_pair[sizeof sw->measured_pair] = "";
	if (!sw) {
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	/* one read transaction: the export sees one state of the store, and
	 * the per-query locking is done once */
	int rc = hb_db_read_begin(db);
	if (rc != HB_OK)
		hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
	bool same_pair = true;
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		if ((rc = hb_db_sweep_get(db, ids[i], sw)) != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			break;
		}
		if (i == 0)
			snprintf(first_pair, sizeof first_pair, "%s", sw->measured_pair);
		else if (strcmp(sw->measured_pair, first_pair) != 0)
			same_pair = false;
	}
	if (rc != HB_OK) {
		hb_db_read_end(db);
		free(sw);
		return rc;
	}
	static const char *const head[] = { "sweep_id", "kind", "part_number", "serial", "lot_code", "measured_pair",
					    "seq", "direction", "bias_set_A", "bias_measured_A", "supply_V",
					    "frequency_Hz" };
	static const char *const tail[] = { "reading_status", "t_s", "settle_readings", "settle_s" };
	hb_csv_writer w;
	hb_csv_begin(&w, out);
	for (size_t k = 0; k < sizeof head / sizeof head[0]; k++)
		hb_csv_text(&w, head[k]);
	hb_csv_text(&w, n && same_pair ? hb_io_reading_column(first_pair, 0) : "primary");
	hb_csv_text(&w, n && same_pair ? hb_io_reading_column(first_pair, 1) : "secondary");
	for (size_t k = 0; k < sizeof tail / sizeof tail[0]; k++)
		hb_csv_text(&w, tail[k]);
	hb_csv_row_end(&w);
	/* The sweep's own cells are the same on each of its rows: quoted once
	 * per sweep by the same writer, into memory, and copied per row. */
	char *prefix = NULL;
	size_t prefix_len = 0;
	FILE *pf = open_memstream(&prefix, &prefix_len);
	if (!pf) {
		hb_set_err(err, errlen, "out of memory");
		rc = HB_ERR_NOMEM;
	}
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		hb_db_point *pts = NULL;
		size_t np = 0;
		if ((rc = hb_db_sweep_get(db, ids[i], sw)) != HB_OK || (rc = hb_db_points_get(db, ids[i], &pts, &np)) != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			break;
		}
		hb_csv_writer pw;
		rewind(pf);
		hb_csv_begin(&pw, pf);
		hb_csv_int(&pw, sw->id);
		hb_csv_text(&pw, hb_db_sweep_kind_name(sw->kind));
		hb_csv_text(&pw, sw->part_number);
		hb_csv_text(&pw, sw->serial);
		hb_csv_text(&pw, sw->lot_code);
		hb_csv_text(&pw, sw->measured_pair);
		if (hb_csv_end(&pw) != HB_OK || fflush(pf) != 0) {
			hb_db_points_free(pts);
			hb_set_err(err, errlen, "out of memory");
			rc = HB_ERR_NOMEM;
			break;
		}
		size_t cells = (size_t)ftell(pf);
		for (size_t k = 0; k < np; k++) {
			const hb_db_point *p = &pts[k];
			fwrite(prefix, 1, cells, out);
			w.col = 6;
			hb_csv_int(&w, p->seq);
			hb_csv_text(&w, p->direction == HB_DB_DIR_DOWN ? "down" : "up");
			hb_csv_num(&w, p->bias_set_a);
			hb_csv_num(&w, p->bias_meas_a);
			hb_csv_num(&w, p->supply_v);
			hb_csv_num(&w, p->freq_hz);
			hb_csv_num(&w, p->primary);
			hb_csv_num(&w, p->secondary);
			hb_csv_text(&w, hb_io_reading_status(p->reading_status));
			hb_csv_num(&w, p->t_s);
			hb_csv_int(&w, p->settle_readings);
			hb_csv_num(&w, p->settle_s);
			hb_csv_row_end(&w);
		}
		hb_db_points_free(pts);
	}
	if (pf)
		fclose(pf);
	free(prefix);
	hb_db_read_end(db);
	int wrc = hb_csv_end(&w);
	free(sw);
	if (rc == HB_OK && wrc != HB_OK) {
		hb_set_err(err, errlen, "write failed");
		rc = wrc;
	}
	return rc;
}

/* One value of the document, dumped as hb_json_write would and indented by
 * `indent` spaces after each line break, so the streamed document reads as
 * the one-piece dump did. */
static int put_value(FILE *out, const json_t *v, int indent)
{
	char *text = json_dumps(v, JSON_INDENT(2) | JSON_REAL_PRECISION(17) | JSON_ENCODE_ANY);
	if (!text)
		return HB_ERR_NOMEM;
	int rc = HB_OK;
	/* line by line: one write per line, not per character */
	for (const char *p = text; *p && rc == HB_OK;) {
		const char *nl = strchr(p, '\n');
		size_t len = nl ? (size_t)(nl - p) + 1 : strlen(p);
		if (fwrite(p, 1, len, out) != len)
			rc = HB_ERR_IO;
		else if (nl && fprintf(out, "%*s", indent, "") < 0)
			rc = HB_ERR_IO;
		p += len;
	}
	free(text);
	return rc;
}

static int put_member(FILE *out, const char *key, json_t *v, bool last)
{
	if (!v)
		return HB_ERR_NOMEM;
	int rc = fprintf(out, "  \"%s\": ", key) < 0 ? HB_ERR_IO : put_value(out, v, 2);
	json_decref(v);
	if (rc == HB_OK && fputs(last ? "\n" : ",\n", out) == EOF)
		rc = HB_ERR_IO;
	return rc;
}

/*
 * The document is written as it is read: one sweep (with its points) in
 * memory at a time, so a part of a million points exports at the memory of
 * its largest sweep. The parts the sweeps belong to come after them, each
 * once.
 */
int hb_export_json(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen)
{
	int64_t *part_ids = calloc(n ? n : 1, sizeof *part_ids);
	size_t nparts = 0;
	int rc = HB_OK;
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	if (!part_ids) {
		hb_set_err(err, errlen, "out of memory");
		rc = HB_ERR_NOMEM;
		goto out;
	}
	/* one read transaction: the export sees one state of the store, and the per-query locking is
	 * done once */
	if ((rc = hb_db_read_begin(db)) != HB_OK) {
		hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
		goto out_unlocked;
	}
	/* every sweep is found before a byte is written: a bad id fails the export whole */
	for (size_t i = 0; i < n; i++) {
		hb_db_sweep s;
		if ((rc = hb_db_sweep_get(db, ids[i], &s)) != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			goto out;
		}
		bool seen = s.part_id <= 0;
		for (size_t k = 0; k < nparts && !seen; k++)
			seen = part_ids[k] == s.part_id;
		if (!seen)
			part_ids[nparts++] = s.part_id;
	}
	char now[32];
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(now, sizeof now, "%Y-%m-%dT%H:%M:%SZ", &tm);
	if (fputs("{\n", out) == EOF ||
	    (rc = put_member(out, "format", json_string("henrybench-export"), false)) != HB_OK ||
	    (rc = put_member(out, "format_version", json_integer(2), false)) != HB_OK ||
	    (rc = put_member(out, "exported", json_string(now), false)) != HB_OK ||
	    (rc = put_member(out, "henrybench", json_string(HB_VERSION), false)) != HB_OK ||
	    (rc = put_member(out, "units", json_string("SI: A, V, Hz, H, ohm, F, s, m, m2, T; fractions not percent"),
			      false)) != HB_OK || fputs("  \"sweeps\": [", out) == EOF) {
		rc = rc != HB_OK ? rc : HB_ERR_IO;
		goto write_failed;
	}
	for (size_t i = 0; i < n; i++) {
		hb_db_sweep s;
		if ((rc = hb_db_sweep_get(db, ids[i], &s)) != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			goto out;
		}
		json_t *o = hb_json_sweep_record(db, &s, err, errlen);
		if (!o) {
			rc = HB_ERR_DB;
			goto out;
		}
		rc = fputs(i ? ",\n    " : "\n    ", out) == EOF ? HB_ERR_IO : put_value(out, o, 4);
		json_decref(o);
		if (rc != HB_OK)
			goto write_failed;
	}
	if (fputs(n ? "\n  ],\n  \"parts\": [" : "],\n  \"parts\": [", out) == EOF) {
		rc = HB_ERR_IO;
		goto write_failed;
	}
	size_t written = 0;
	for (size_t k = 0; k < nparts; k++) {
		hb_db_part p;
		if (hb_db_part_get_id(db, part_ids[k], &p) != HB_OK)
			continue;
		json_t *o = hb_json_part(&p);
		/* the drawn gap and the data-sheet curve go with the part (empty when none) */
		hb_db_part_drawing dr;
		if (o && hb_db_part_drawing_get(db, p.id, &dr) == HB_OK)
			json_object_set_new(o, "drawing", hb_json_part_drawing(&dr));
		rc = fputs(written++ ? ",\n    " : "\n    ", out) == EOF ? HB_ERR_IO : put_value(out, o, 4);
		json_decref(o);
		if (rc != HB_OK)
			goto write_failed;
	}
	if (fputs(written ? "\n  ]\n}\n" : "]\n}\n", out) == EOF) {
		rc = HB_ERR_IO;
		goto write_failed;
	}
	goto out;
write_failed:
	hb_set_err(err, errlen, rc == HB_ERR_NOMEM ? "out of memory" : "write failed");
out:
	hb_db_read_end(db);
out_unlocked:
	hb_c_numeric_leave(&loc);
	free(part_ids);
	return rc;
}
