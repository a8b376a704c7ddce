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
	hb_db_sweep *sw = calloc(n ? n : 1, sizeof *sw);
	if (!sw) {
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	int rc = HB_OK;
	for (size_t i = 0; i < n && rc == HB_OK; i++)
		if ((rc = hb_db_sweep_get(db, ids[i], &sw[i])) != HB_OK)
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
	if (rc != HB_OK) {
		free(sw);
		return rc;
	}
	/* Readings get their own SI names when every sweep read the same pair. */
	bool same_pair = true;
	for (size_t i = 1; i < n; i++)
		if (strcmp(sw[i].measured_pair, sw[0].measured_pair) != 0)
			same_pair = false;
	static const char *const head[] = { "sweep_id", "kind", "part_number", "serial", "lot_code", "measured_pair",
					    "seq", "direction", "bias_set_A", "bias_measured_A", "supply_V",
					    "frequency_Hz" };
	static const char *const tail[] = { "reading_status", "t_s", "settle_readings", "settle_s" };
	hb_csv_writer w;
	hb_csv_begin(&w, out);
	for (size_t k = 0; k < sizeof head / sizeof head[0]; k++)
		hb_csv_text(&w, head[k]);
	hb_csv_text(&w, n && same_pair ? hb_io_reading_column(sw[0].measured_pair, 0) : "primary");
	hb_csv_text(&w, n && same_pair ? hb_io_reading_column(sw[0].measured_pair, 1) : "secondary");
	for (size_t k = 0; k < sizeof tail / sizeof tail[0]; k++)
		hb_csv_text(&w, tail[k]);
	hb_csv_row_end(&w);
	for (size_t i = 0; i < n && rc == HB_OK; i++) {
		hb_db_point *pts = NULL;
		size_t np = 0;
		if ((rc = hb_db_points_get(db, ids[i], &pts, &np)) != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[i], hb_db_errmsg(db));
			break;
		}
		for (size_t k = 0; k < np; k++) {
			const hb_db_point *p = &pts[k];
			hb_csv_int(&w, sw[i].id);
			hb_csv_text(&w, hb_db_sweep_kind_name(sw[i].kind));
			hb_csv_text(&w, sw[i].part_number);
			hb_csv_text(&w, sw[i].serial);
			hb_csv_text(&w, sw[i].lot_code);
			hb_csv_text(&w, sw[i].measured_pair);
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
	int wrc = hb_csv_end(&w);
	free(sw);
	if (rc == HB_OK && wrc != HB_OK) {
		hb_set_err(err, errlen, "write failed");
		rc = wrc;
	}
	return rc;
}

int hb_export_json(hb_db *db, const int64_t *ids, size_t n, FILE *out, char *err, size_t errlen)
{
	json_t *root = json_object(), *parts = json_array(), *sweeps = json_array();
	int64_t *part_ids = calloc(n ? n : 1, sizeof *part_ids);
	size_t nparts = 0;
	int rc = HB_OK;
	if (!root || !parts || !sweeps || !part_ids) {
		hb_set_err(err, errlen, "out of memory");
		rc = HB_ERR_NOMEM;
		goto out;
	}
	char now[32];
	time_t t = time(NULL);
	struct tm tm;
	gmtime_r(&t, &tm);
	strftime(now, sizeof now, "%Y-%m-%dT%H:%M:%SZ", &tm);
	json_object_set_new(root, "format", json_string("henrybench-export"));
	json_object_set_new(root, "format_version", json_integer(2));
	json_object_set_new(root, "exported", json_string(now));
	json_object_set_new(root, "henrybench", json_string(HB_VERSION));
	json_object_set_new(root, "units", json_string("SI: A, V, Hz, H, ohm, F, s, m, m2, T; fractions not percent"));
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
		json_array_append_new(sweeps, o);
		bool seen = s.part_id <= 0;
		for (size_t k = 0; k < nparts && !seen; k++)
			seen = part_ids[k] == s.part_id;
		hb_db_part p;
		if (!seen && hb_db_part_get_id(db, s.part_id, &p) == HB_OK) {
			part_ids[nparts++] = s.part_id;
			json_t *pj = hb_json_part(&p);
			/* the drawn gap and the data-sheet curve go with the part (empty when none) */
			hb_db_part_drawing dr;
			if (hb_db_part_drawing_get(db, p.id, &dr) == HB_OK)
				json_object_set_new(pj, "drawing", hb_json_part_drawing(&dr));
			json_array_append_new(parts, pj);
		}
	}
	json_object_set(root, "parts", parts);
	json_object_set(root, "sweeps", sweeps);
	if (hb_json_write(root, out) != HB_OK) {
		hb_set_err(err, errlen, "write failed");
		rc = HB_ERR_IO;
	}
out:
	json_decref(parts);
	json_decref(sweeps);
	json_decref(root);
	free(part_ids);
	return rc;
}
