/* src/report/report_file.c - filed reports: report number, data hash over the canonical points, file hash, and their verification */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "../../common/hb_sha256.h"
#include "../../common/hb_text.h"
#include "../../common/hb_uid.h"
#include "html.h"
#include "report.h"
#include "report_internal.h"
#include "../io/io.h"

/* The page being filed; PLplot already makes report writing one thread at a time. */
static const rpt_stamp *current;

const rpt_stamp *rpt_current_stamp(void)
{
	return current;
}

hb_html *rpt_html_open(FILE *out, const char *title, const char *subtitle)
{
	if (!current)
		return hb_html_open(out, title, subtitle);
	const char *meta[] = { "hb-report", current->number, "hb-data-sha256", current->data_sha256, "hb-software",
			       "henrybench " HB_VERSION };
	return hb_html_open_meta(out, title, subtitle, meta, 3);
}

/* ---------------- canonical points ---------------- */

/* Appends one field: "%.17g" for a real, "null" for a value not known. */
static void put_real(char *line, size_t cap, size_t *len, double v)
{
	if (*len >= cap)
		return;
	if (isnan(v))
		*len += (size_t)snprintf(line + *len, cap - *len, " null");
	else
		*len += (size_t)snprintf(line + *len, cap - *len, " %.17g", v);
}

int hb_report_points_canonical(hb_db *db, const int64_t *ids, size_t n, FILE *out, char hex[65], size_t *points,
			       char *err, size_t errlen)
{
	hb_sha256 *sha = hb_sha256_create();
	if (!sha) {
		hb_set_err(err, errlen, "out of memory");
		return HB_ERR_NOMEM;
	}
	size_t total = 0;
	int rc = HB_OK;
	char line[1024];
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	snprintf(line, sizeof line, "henrybench-points 1\n");
	hb_sha256_update(sha, line, strlen(line));
	if (out)
		fputs(line, out);
	for (size_t k = 0; k < n && rc == HB_OK; k++) {
		char uid[HB_DB_UID_LEN] = "", puid[HB_DB_UID_LEN] = "";
		hb_db_point *pts = NULL;
		size_t np = 0;
		rc = hb_db_uid_of(db, HB_DB_REC_SWEEP, ids[k], uid);
		if (rc == HB_OK)
			rc = hb_db_uid_of(db, HB_DB_REC_POINTS, ids[k], puid);
		if (rc == HB_OK)
			rc = hb_db_points_get(db, ids[k], &pts, &np);
		if (rc != HB_OK) {
			hb_set_err(err, errlen, "sweep %lld: %s", (long long)ids[k], hb_db_errmsg(db));
			break;
		}
		snprintf(line, sizeof line, "sweep %s %s %zu\n", uid, puid, np);
		hb_sha256_update(sha, line, strlen(line));
		if (out)
			fputs(line, out);
		for (size_t i = 0; i < np; i++) {
			const hb_db_point *p = &pts[i];
			size_t len = (size_t)snprintf(line, sizeof line, "%d %s", p->seq,
						      p->direction == HB_DB_DIR_DOWN ? "down" : "up");
			put_real(line, sizeof line, &len, p->bias_set_a);
			put_real(line, sizeof line, &len, p->bias_meas_a);
			put_real(line, sizeof line, &len, p->supply_v);
			put_real(line, sizeof line, &len, p->freq_hz);
			put_real(line, sizeof line, &len, p->primary);
			put_real(line, sizeof line, &len, p->secondary);
			len += (size_t)snprintf(line + len, sizeof line - len, " %d", p->reading_status);
			put_real(line, sizeof line, &len, p->t_s);
			len += (size_t)snprintf(line + len, sizeof line - len, " %d", p->settle_readings);
			put_real(line, sizeof line, &len, p->settle_s);
			put_real(line, sizeof line, &len, p->bias_spread_a);
			len += (size_t)snprintf(line + len, sizeof line - len, " %d\n", p->settled ? 1 : 0);
			hb_sha256_update(sha, line, strlen(line));
			if (out)
				fputs(line, out);
		}
		total += np;
		hb_db_points_free(pts);
	}
	hb_c_numeric_leave(&loc);
	if (rc != HB_OK) {
		hb_sha256_free(sha);
		return rc;
	}
	rc = hb_sha256_finish(sha, hex);
	if (rc != HB_OK)
		hb_set_err(err, errlen, "SHA-256 of the points failed");
	if (points)
		*points = total;
	return rc;
}

/* ---------------- which sweeps a page rests on ---------------- */

static int cmp_id(const void *a, const void *b)
{
	int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
	return (x > y) - (x < y);
}

/* Sorted, without repeats. */
static size_t unique_ids(int64_t *ids, size_t n)
{
	if (n == 0)
		return 0;
	qsort(ids, n, sizeof *ids, cmp_id);
	size_t m = 1;
	for (size_t i = 1; i < n; i++)
		if (ids[i] != ids[m - 1])
			ids[m++] = ids[i];
	return m;
}

static int subject_sweeps(hb_db *db, const hb_report_request *rq, int64_t **out, size_t *n, char *subject,
			  size_t subject_cap, char *err, size_t errlen)
{
	*out = NULL;
	*n = 0;
	if (rq->kind == HB_REPORT_SWEEP) {
		hb_db_sweep s;
		if (hb_db_sweep_get(db, rq->sweep_id, &s) != HB_OK) {
			hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
			return HB_ERR_NOTFOUND;
		}
		*out = malloc(sizeof **out);
		if (!*out)
			return HB_ERR_NOMEM;
		(*out)[0] = rq->sweep_id;
		*n = 1;
		snprintf(subject, subject_cap, "sweep %lld", (long long)rq->sweep_id);
		return HB_OK;
	}
	if (rq->kind == HB_REPORT_LOT) {
		hb_db_lot lot;
		int rc = hb_report_find_lot(db, rq->part_number, rq->lot_code, &lot, err, errlen);
		if (rc != HB_OK)
			return rc;
		hb_db_inspection *recs = NULL;
		size_t nr = 0;
		if (hb_db_inspection_list(db, lot.id, &recs, &nr) != HB_OK) {
			hb_set_err(err, errlen, "lot %s: %s", lot.lot_code, hb_db_errmsg(db));
			return HB_ERR_DB;
		}
		*out = malloc(sizeof **out * (nr ? nr : 1));
		if (!*out) {
			hb_db_inspections_free(recs);
			return HB_ERR_NOMEM;
		}
		for (size_t i = 0; i < nr; i++)
			if (recs[i].sweep_id > 0)
				(*out)[(*n)++] = recs[i].sweep_id;
		hb_db_inspections_free(recs);
		*n = unique_ids(*out, *n);
		snprintf(subject, subject_cap, "lot %s (lot id %lld)", lot.lot_code, (long long)lot.id);
		return HB_OK;
	}
	hb_db_history_filter f;
	hb_db_history_filter_init(&f);
	f.part_number = rq->part_number;
	hb_db_history_row *rows = NULL;
	size_t nr = 0;
	if (!rq->part_number || hb_db_history(db, &f, &rows, &nr) != HB_OK) {
		hb_set_err(err, errlen, "part '%s': %s", rq->part_number ? rq->part_number : "",
			   rq->part_number ? hb_db_errmsg(db) : "no part number");
		return HB_ERR_NOTFOUND;
	}
	*out = malloc(sizeof **out * (nr ? nr : 1));
	if (!*out) {
		hb_db_history_free(rows);
		return HB_ERR_NOMEM;
	}
	for (size_t i = 0; i < nr; i++)
		(*out)[(*n)++] = rows[i].sweep_id;
	hb_db_history_free(rows);
	*n = unique_ids(*out, *n);
	snprintf(subject, subject_cap, "part %s", rq->part_number);
	return HB_OK;
}

/* ---------------- filing ---------------- */

static int write_page(hb_db *db, const hb_report_request *rq, FILE *out, char *err, size_t errlen)
{
	if (rq->kind == HB_REPORT_SWEEP)
		return hb_report_sweep(db, rq->sweep_id, out, err, errlen);
	if (rq->kind == HB_REPORT_LOT)
		return hb_report_lot(db, rq->part_number, rq->lot_code, out, err, errlen);
	return hb_report_part(db, rq->part_number, out, err, errlen);
}

int hb_report_file(hb_db *db, const hb_report_request *rq, char number[HB_DB_UID_LEN], char *err, size_t errlen)
{
	if (!db || !rq || !rq->path || !*rq->path)
		return hb_set_err(err, errlen, "no report path");
	static const char *const kinds[] = { "sweep", "lot", "part" };
	if ((unsigned)rq->kind > HB_REPORT_PART)
		return hb_set_err(err, errlen, "unknown report kind");
	hb_db_report rec;
	memset(&rec, 0, sizeof rec);
	int rc = subject_sweeps(db, rq, &rec.sweep_ids, &rec.n_sweeps, rec.subject, sizeof rec.subject, err, errlen);
	if (rc != HB_OK)
		return rc;
	rc = hb_report_points_canonical(db, rec.sweep_ids, rec.n_sweeps, NULL, rec.data_sha256, NULL, err, errlen);
	if (rc == HB_OK && hb_uid_new(rec.uid) != HB_OK) {
		rc = HB_ERR_IO;
		hb_set_err(err, errlen, "no random bits for a report number");
	}
	if (rc != HB_OK) {
		hb_db_report_clear(&rec);
		return rc;
	}
	snprintf(rec.kind, sizeof rec.kind, "%s", kinds[rq->kind]);
	snprintf(rec.software_version, sizeof rec.software_version, "%s", HB_VERSION);
	bool to_stdout = strcmp(rq->path, "-") == 0;
	if (to_stdout || rq->path[0] == '/') {
		snprintf(rec.path, sizeof rec.path, "%s", rq->path);
	} else {
		char cwd[2048];
		snprintf(rec.path, sizeof rec.path, "%s/%s", getcwd(cwd, sizeof cwd) ? cwd : ".", rq->path);
	}
	rpt_stamp stamp = { .number = rec.uid, .kind = rec.kind, .data_sha256 = rec.data_sha256,
			    .sweeps = rec.sweep_ids, .n_sweeps = rec.n_sweeps };
	/* Written beside the target and renamed over a regular file only
	 * (src/io/out_file.c), so a failed run never leaves half a record and a
	 * FIFO, device or link at the path is never replaced. */
	hb_out *o = NULL;
	rc = hb_out_open(rq->path, &o, err, errlen);
	if (rc != HB_OK) {
		hb_db_report_clear(&rec);
		return rc;
	}
	current = &stamp;
	rc = write_page(db, rq, hb_out_stream(o), err, errlen);
	current = NULL;
	if (rc == HB_OK)
		rc = hb_out_close_data(o, err, errlen);
	/* the file hash is over the bytes as written, before the rename makes them the record */
	if (rc == HB_OK && !to_stdout && hb_sha256_file(hb_out_data_path(o), rec.file_sha256) != HB_OK) {
		rc = HB_ERR_IO;
		hb_set_err(err, errlen, "cannot read back %s to hash it", hb_out_data_path(o));
	}
	if (rc == HB_OK && hb_db_report_put(db, &rec) != HB_OK) {
		rc = HB_ERR_DB;
		hb_set_err(err, errlen, "filing the report: %s", hb_db_errmsg(db));
	}
	if (rc == HB_OK)
		rc = hb_out_commit(o, err, errlen);
	else
		hb_out_abort(o);
	if (rc == HB_OK && number)
		snprintf(number, HB_DB_UID_LEN, "%s", rec.uid);
	hb_db_report_clear(&rec);
	return rc;
}

/* ---------------- verification ---------------- */

int hb_report_read_number(const char *path, char number[HB_DB_UID_LEN], char *err, size_t errlen)
{
	FILE *f = fopen(path, "rb");
	if (!f) {
		hb_set_err(err, errlen, "cannot read %s: %s", path, strerror(errno));
		return HB_ERR_IO;
	}
	/* the number is in the head, which comes first; 64 KiB holds any head we write */
	char buf[65536];
	size_t n = fread(buf, 1, sizeof buf - 1, f);
	fclose(f);
	buf[n] = '\0';
	char *head_end = strstr(buf, "</head>");
	if (head_end)
		*head_end = '\0';
	static const char key[] = "<meta name=\"hb-report\" content=\"";
	const char *p = strstr(buf, key);
	if (!p || !head_end) {
		hb_set_err(err, errlen, "%s carries no report number (not a report filed by henrybench)", path);
		return HB_ERR_DATA;
	}
	p += sizeof key - 1;
	const char *q = strchr(p, '"');
	if (!q || q - p != HB_DB_UID_LEN - 1) {
		hb_set_err(err, errlen, "%s: the report number in its head is malformed", path);
		return HB_ERR_DATA;
	}
	memcpy(number, p, HB_DB_UID_LEN - 1);
	number[HB_DB_UID_LEN - 1] = '\0';
	if (!hb_uid_is_v7(number)) {
		hb_set_err(err, errlen, "%s: report number '%s' is not a global identity", path, number);
		return HB_ERR_DATA;
	}
	return HB_OK;
}

int hb_report_verify(hb_db *db, const char *path, hb_report_check *c, char *err, size_t errlen)
{
	if (!db || !path || !c)
		return hb_set_err(err, errlen, "nothing to verify");
	memset(c, 0, sizeof *c);
	int rc = hb_report_read_number(path, c->number, err, errlen);
	if (rc != HB_OK)
		return rc;
	rc = hb_db_report_get(db, c->number, &c->filed);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "%s", hb_db_errmsg(db));
		return rc;
	}
	if (hb_sha256_file(path, c->file_sha256) != HB_OK) {
		hb_set_err(err, errlen, "cannot read %s: %s", path, strerror(errno));
		return HB_ERR_IO;
	}
	rc = hb_report_points_canonical(db, c->filed.sweep_ids, c->filed.n_sweeps, NULL, c->data_sha256, &c->n_points,
					err, errlen);
	if (rc != HB_OK)
		return rc;
	c->file_intact = c->filed.file_sha256[0] && strcmp(c->file_sha256, c->filed.file_sha256) == 0;
	c->data_intact = strcmp(c->data_sha256, c->filed.data_sha256) == 0;
	return HB_OK;
}

void hb_report_check_clear(hb_report_check *c)
{
	if (c)
		hb_db_report_clear(&c->filed);
}

/* ---------------- the page's traceability table ---------------- */

static void kv_uid(hb_html *h, hb_db *db, const char *key, hb_db_record kind, int64_t id)
{
	char uid[HB_DB_UID_LEN] = "";
	if (id <= 0 || hb_db_uid_of(db, kind, id, uid) != HB_OK || !uid[0])
		return;
	char line[120];
	snprintf(line, sizeof line, "%s (local %s %lld)", uid, hb_db_record_name(kind), (long long)id);
	hb_html_kv_row(h, key, line);
}

void rpt_trace_identities(hb_html *h, hb_db *db)
{
	const rpt_stamp *st = current;
	if (!st)
		return;
	hb_html_kv_begin(h, "Record identities (global, UUID version 7) and integrity");
	hb_html_kv_row(h, "Report number", st->number);
	hb_html_kv_row(h, "Software", "henrybench " HB_VERSION);
	/* part, spec revision, unit and lot of the first sweep; a lot or part page has one part */
	if (st->n_sweeps > 0) {
		hb_db_sweep s;
		if (hb_db_sweep_get(db, st->sweeps[0], &s) == HB_OK) {
			kv_uid(h, db, "Part", HB_DB_REC_PART, s.part_id);
			hb_db_verdict *v = NULL;
			size_t nv = 0;
			int64_t rev_id = 0;
			if (hb_db_verdict_list(db, s.id, &v, &nv) == HB_OK && nv > 0)
				rev_id = v[0].spec_rev_id;
			hb_db_verdicts_free(v);
			hb_db_spec_revision rev;
			int rrc = rev_id > 0 ? hb_db_spec_revision_get_id(db, rev_id, &rev) :
					       s.part_id > 0 ? hb_db_spec_revision_get(db, s.part_id, 0, &rev) : HB_ERR_NOTFOUND;
			if (rrc == HB_OK) {
				char line[160];
				snprintf(line, sizeof line, "revision %d of %s: %s", rev.revision, rev.created, rev.uid);
				hb_html_kv_row(h, rev_id > 0 ? "Spec revision judged against" : "Spec revision in force",
					       line);
			}
			if (strcmp(st->kind, "sweep") == 0)
				kv_uid(h, db, "Unit", HB_DB_REC_UNIT, s.unit_id);
			hb_db_unit u;
			if (s.unit_id > 0 && hb_db_unit_get(db, s.unit_id, &u) == HB_OK && strcmp(st->kind, "part") != 0) {
				kv_uid(h, db, "Lot", HB_DB_REC_LOT, u.lot_id);
				hb_db_lot_decision_rec *ld = NULL;
				size_t nld = 0;
				if (strcmp(st->kind, "lot") == 0 && u.lot_id > 0 &&
				    hb_db_lot_decision_list(db, u.lot_id, &ld, &nld) == HB_OK) {
					for (size_t i = 0; i < nld; i++) {
						char line[160];
						snprintf(line, sizeof line, "%s at %s: %s",
							 hb_db_lot_decision_name(ld[i].decision), ld[i].decided, ld[i].uid);
						hb_html_kv_row(h, "Lot decision", line);
					}
				}
				hb_db_lot_decisions_free(ld);
			}
		}
	}
	hb_html_kv_row(h, "Data SHA-256", st->data_sha256);
	hb_html_kv_row(h, "File SHA-256",
		       "not in the page itself (a file cannot hold its own hash): stored with the report number in the "
		       "reports table of the store named above; 'henrybench verify FILE' recomputes both hashes");
	hb_html_kv_end(h);
	static const char *const head[] = { "Sweep", "Sweep identity", "Point set identity", "Latest fit identity" };
	hb_html_table_begin(h, "The sweeps this page rests on; the data hash is over the canonical export of their points "
			       "(docs/store.md)", head, 4);
	hb_db_fit *fit = malloc(sizeof *fit);
	for (size_t i = 0; i < st->n_sweeps; i++) {
		char idtxt[24], su[HB_DB_UID_LEN] = "-", pu[HB_DB_UID_LEN] = "-", fu[HB_DB_UID_LEN] = "-";
		snprintf(idtxt, sizeof idtxt, "%lld", (long long)st->sweeps[i]);
		hb_db_uid_of(db, HB_DB_REC_SWEEP, st->sweeps[i], su);
		hb_db_uid_of(db, HB_DB_REC_POINTS, st->sweeps[i], pu);
		if (fit) {
			hb_db_fit_init(fit);
			if (hb_db_fit_get_latest(db, st->sweeps[i], NULL, fit) == HB_OK)
				hb_db_uid_of(db, HB_DB_REC_FIT, fit->id, fu);
		}
		const char *cells[4] = { idtxt, su, pu, fu };
		hb_html_table_row(h, cells, 4);
	}
	free(fit);
	hb_html_table_end(h);
}
