/* src/io/import.c - a meter's own CSV log read, checked row by row and stored as one sweep, then analysed */
#include <ctype.h>
#include <errno.h>
#include <getopt.h>
#include <locale.h>
#include <math.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <time.h>

#include <jansson.h>

#include "../../common/hb_text.h"
#include "../../fit/hb_fit.h"
#include "../quality/quality.h"
#include "csv.h"
#include "io.h"

/* ---------------- import ---------------- */

static const char *const role_names[HB_IMPORT_NROLES] = { "current", "current_measured", "voltage", "frequency",
							  "inductance", "resistance", "direction" };
static const char *const role_units[HB_IMPORT_NROLES] = { "A", "A", "V", "Hz", "H", "ohm", NULL };

/* Header names each role answers to, after normalising (lower case, no
 * unit, no spaces, '_' or '-'). Earlier entries win. */
static const char *const role_aliases[HB_IMPORT_NROLES][12] = {
	{ "current", "bias", "biasset", "i", "ibias", "idc", "biascurrent", "dcbias", "iset", "currentset", NULL },
	{ "biasmeasured", "biasmeas", "currentmeasured", "measuredcurrent", "imeas", "imeasured", NULL },
	{ "supply", "supplyv", "voltage", "supplyvoltage", "vsupply", "v", "u", NULL },
	{ "frequency", "f", "freq", "testfrequency", NULL },
	{ "inductance", "l", "ls", "lp", "lseries", "seriesinductance", NULL },
	{ "resistance", "r", "rs", "esr", "rseries", "seriesresistance", NULL },
	{ "direction", "dir", NULL },
};

void hb_import_options_init(hb_import_options *opt)
{
	memset(opt, 0, sizeof *opt);
	opt->kind = -1;
	opt->test_freq_hz = NAN;
	opt->analyse = true;
	opt->skip_lines = -1;
}

const char *hb_import_role_name(hb_import_role role)
{
	return role >= 0 && role < HB_IMPORT_NROLES ? role_names[role] : "?";
}

static int role_parse(const char *name, hb_import_role *role)
{
	static const struct { const char *alias; hb_import_role role; } extra[] = {
		{ "bias", HB_IMPORT_CURRENT }, { "i", HB_IMPORT_CURRENT }, { "measured_current", HB_IMPORT_CURRENT_MEASURED },
		{ "bias_measured", HB_IMPORT_CURRENT_MEASURED }, { "supply", HB_IMPORT_VOLTAGE },
		{ "f", HB_IMPORT_FREQUENCY }, { "l", HB_IMPORT_INDUCTANCE }, { "r", HB_IMPORT_RESISTANCE },
	};
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		if (strcasecmp(name, role_names[r]) == 0) {
			*role = (hb_import_role)r;
			return HB_OK;
		}
	for (size_t i = 0; i < sizeof extra / sizeof extra[0]; i++)
		if (strcasecmp(name, extra[i].alias) == 0) {
			*role = extra[i].role;
			return HB_OK;
		}
	return HB_ERR_ARG;
}

static void trim(char *s)
{
	size_t n = strlen(s);
	while (n && isspace((unsigned char)s[n - 1]))
		s[--n] = '\0';
	size_t k = 0;
	while (s[k] && isspace((unsigned char)s[k]))
		k++;
	memmove(s, s + k, n - k + 1);
}

static bool is_unit_token(const char *u)
{
	static const char *const units[] = { "A", "V", "Hz", "H", "ohm", "F" };
	char text[48], e[64];
	double v;
	if (!*u || strlen(u) > 20)
		return false;
	snprintf(text, sizeof text, "1%s", u);
	for (size_t i = 0; i < sizeof units / sizeof units[0]; i++)
		if (hb_parse_value(text, units[i], &v, e, sizeof e) == HB_OK)
			return true;
	return false;
}

/* "Bias current [mA]" -> name "biascurrent", unit "mA"; "L_H" -> "l", "H". */
static void split_header(const char *header, char *name, size_t ncap, char *unit, size_t ucap)
{
	char h[256];
	snprintf(h, sizeof h, "%s", header);
	trim(h);
	unit[0] = '\0';
	char *open = strpbrk(h, "[(");
	if (open) {
		char *close = strchr(open, open[0] == '[' ? ']' : ')');
		if (close) {
			*close = '\0';
			snprintf(unit, ucap, "%s", open + 1);
			trim(unit);
		}
		*open = '\0';
	} else {
		char *us = strrchr(h, '_');
		if (us && is_unit_token(us + 1)) {
			snprintf(unit, ucap, "%s", us + 1);
			*us = '\0';
		}
	}
	size_t k = 0;
	for (const char *p = h; *p && k + 1 < ncap; p++)
		if (!isspace((unsigned char)*p) && *p != '_' && *p != '-' && *p != '.')
			name[k++] = (char)tolower((unsigned char)*p);
	name[k] = '\0';
}

typedef struct column_info {
	char name[128];
	char unit[32];
} column_info;

static bool plain_number(const char *s)
{
	if (!*s)
		return false;
	for (; *s; s++)
		if (!isdigit((unsigned char)*s) && !strchr("+-.eE", *s))
			return false;
	return true;
}

/* Parses one cell into SI; empty = not known. */
static int parse_cell(const char *cell, hb_import_role role, double scale, char delim, double *out, char *why,
		      size_t whylen)
{
	char text[128];
	snprintf(text, sizeof text, "%s", cell);
	trim(text);
	if (!text[0]) {
		*out = NAN;
		return HB_OK;
	}
	/* Semicolon files come from comma-decimal locales: "2,5" is 2.5. */
	if (delim == ';' && strchr(text, ',') && !strchr(text, '.'))
		for (char *p = text; *p; p++)
			if (*p == ',')
				*p = '.';
	double v;
	if (hb_parse_value(text, role_units[role], &v, why, whylen) != HB_OK)
		return HB_ERR_ARG;
	if (!isfinite(v)) {
		snprintf(why, whylen, "'%s' is not a finite number", text);
		return HB_ERR_ARG;
	}
	/* A unit in the header scales bare numbers only: "100" under "L (uH)". */
	*out = plain_number(text) ? v * scale : v;
	/* Checked again after scaling: "1e300" under "(TH)" is no number. */
	if (!isfinite(*out)) {
		snprintf(why, whylen, "'%s' scaled by the header's unit is not a finite number", text);
		return HB_ERR_ARG;
	}
	return HB_OK;
}

static int find_column(const csv_record *hdr, const column_info *cols, const char *want, int *col)
{
	char *end = NULL;
	long k = strtol(want, &end, 10);
	if (end && end != want && *end == '\0') {
		if (k < 1 || (size_t)k > hdr->nf)
			return HB_ERR_NOTFOUND;
		*col = (int)k - 1;
		return HB_OK;
	}
	char name[128], unit[32];
	split_header(want, name, sizeof name, unit, sizeof unit);
	for (size_t c = 0; c < hdr->nf; c++) {
		char h[256];
		snprintf(h, sizeof h, "%s", hdr->field[c]);
		trim(h);
		if (strcasecmp(h, want) == 0) {
			*col = (int)c;
			return HB_OK;
		}
	}
	for (size_t c = 0; c < hdr->nf; c++)
		if (strcmp(cols[c].name, name) == 0) {
			*col = (int)c;
			return HB_OK;
		}
	return HB_ERR_NOTFOUND;
}

static void header_list(const csv_record *hdr, char *buf, size_t cap)
{
	size_t len = 0;
	buf[0] = '\0';
	for (size_t c = 0; c < hdr->nf && len + 1 < cap; c++)
		len += (size_t)snprintf(buf + len, cap - len, "%s'%s'", c ? ", " : "", hdr->field[c]);
}

static int map_columns(const csv_record *hdr, const column_info *cols, const char *mapping, int col[HB_IMPORT_NROLES],
		       char *err, size_t errlen)
{
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		col[r] = -1;
	if (mapping && *mapping) {
		char *copy = strdup(mapping);
		if (!copy)
			return HB_ERR_NOMEM;
		int rc = HB_OK;
		char *save = NULL;
		for (char *item = strtok_r(copy, ",", &save); item && rc == HB_OK; item = strtok_r(NULL, ",", &save)) {
			char *eq = strchr(item, '=');
			hb_import_role role;
			if (!eq) {
				hb_set_err(err, errlen, "--columns item '%s' is not ROLE=COLUMN (roles: current, current_measured, "
					"voltage, frequency, inductance, resistance, direction)", item);
				rc = HB_ERR_ARG;
				break;
			}
			*eq = '\0';
			trim(item);
			char *want = eq + 1;
			trim(want);
			if (role_parse(item, &role) != HB_OK) {
				hb_set_err(err, errlen, "--columns role '%s' unknown (accepted: current, current_measured, "
					"voltage, frequency, inductance, resistance, direction)", item);
				rc = HB_ERR_ARG;
			} else if (find_column(hdr, cols, want, &col[role]) != HB_OK) {
				char list[400];
				header_list(hdr, list, sizeof list);
				hb_set_err(err, errlen, "--columns %s=%s: no such column (the header has %s)", item, want, list);
				rc = HB_ERR_ARG;
			}
		}
		free(copy);
		if (rc != HB_OK)
			return rc;
	}
	/* Roles the mapping left open are found by name. */
	for (int r = 0; r < HB_IMPORT_NROLES; r++) {
		if (col[r] >= 0)
			continue;
		for (int a = 0; role_aliases[r][a] && col[r] < 0; a++)
			for (size_t c = 0; c < hdr->nf; c++) {
				bool taken = false;
				for (int q = 0; q < HB_IMPORT_NROLES; q++)
					taken = taken || col[q] == (int)c;
				if (!taken && strcmp(cols[c].name, role_aliases[r][a]) == 0) {
					col[r] = (int)c;
					break;
				}
			}
	}
	return HB_OK;
}

static int read_file(const char *path, char **data, size_t *len, char *err, size_t errlen)
{
	FILE *f = fopen(path, "rb");
	if (!f) {
		hb_set_err(err, errlen, "cannot open %s: %s", path, strerror(errno));
		return HB_ERR_IO;
	}
	size_t cap = 65536, n = 0;
	char *buf = malloc(cap);
	int rc = HB_OK;
	while (buf) {
		if (n + 1 >= cap) {
			char *b = realloc(buf, cap * 2);
			if (!b)
				break;
			buf = b;
			cap *= 2;
		}
		size_t got = fread(buf + n, 1, cap - n - 1, f);
		n += got;
		if (got == 0)
			break;
	}
	if (!buf) {
		rc = HB_ERR_NOMEM;
		hb_set_err(err, errlen, "out of memory");
	} else if (rc == HB_OK && ferror(f)) {
		rc = HB_ERR_IO;
		hb_set_err(err, errlen, "cannot read %s: %s", path, strerror(errno));
	}
	fclose(f);
	if (rc != HB_OK) {
		free(buf);
		return rc;
	}
	buf[n] = '\0';
	*data = buf;
	*len = n;
	return HB_OK;
}

static bool column_varies(const double *v, size_t n)
{
	double first = NAN;
	for (size_t i = 0; i < n; i++) {
		if (!isfinite(v[i]))
			continue;
		if (!isfinite(first))
			first = v[i];
		else if (fabs(v[i] - first) > 1e-9 * fabs(first))
			return true;
	}
	return false;
}

static double first_finite(const double *v, size_t n)
{
	for (size_t i = 0; i < n; i++)
		if (isfinite(v[i]))
			return v[i];
	return NAN;
}

static int store_import(hb_db *db, const hb_import_options *opt, const char *path, const double *vals[HB_IMPORT_NROLES],
			const int *dir, size_t n, hb_import_result *res, char *err, size_t errlen)
{
	hb_db_part part;
	int rc = hb_db_part_get(db, opt->part_number, &part);
	if (rc != HB_OK) {
		hb_set_err(err, errlen, "part '%s' is not in the store (add it with 'henrybench part add')", opt->part_number);
		return rc;
	}
	rc = hb_db_batch_begin(db);
	if (rc != HB_OK)
		goto db_error;
	int64_t lot_id = 0, unit_id = 0;
	if (opt->lot_code && *opt->lot_code && (rc = hb_db_lot_ensure(db, part.id, opt->lot_code, &lot_id)) != HB_OK)
		goto rollback;
	if ((rc = hb_db_unit_ensure(db, part.id, opt->serial, lot_id, &unit_id)) != HB_OK)
		goto rollback;
	hb_db_sweep s;
	hb_db_sweep_init(&s);
	s.kind = res->kind;
	s.unit_id = unit_id;
	snprintf(s.station, sizeof s.station, "import");
	const char *base = strrchr(path, '/');
	base = base ? base + 1 : path;
	snprintf(s.note, sizeof s.note, "imported from %s%s%s", base, opt->note && *opt->note ? "; " : "",
		 opt->note ? opt->note : "");
	bool have_r = vals[HB_IMPORT_RESISTANCE] != NULL;
	snprintf(s.measured_pair, sizeof s.measured_pair, have_r ? "Ls-Rs" : "Ls");
	snprintf(s.circuit, sizeof s.circuit, "series");
	snprintf(s.plan_spacing, sizeof s.plan_spacing, "list");
	s.plan_steps = (int)n;
	const double *axis = res->kind == HB_DB_SWEEP_BIAS ? vals[HB_IMPORT_CURRENT] : vals[HB_IMPORT_FREQUENCY];
	double lo = INFINITY, hi = -INFINITY;
	for (size_t i = 0; i < n; i++)
		if (isfinite(axis[i])) {
			lo = fmin(lo, axis[i]);
			hi = fmax(hi, axis[i]);
		}
	s.plan_from = isfinite(lo) ? lo : NAN;
	s.plan_to = isfinite(hi) ? hi : NAN;
	if (res->kind == HB_DB_SWEEP_BIAS)
		s.test_freq_hz = isfinite(opt->test_freq_hz) ? opt->test_freq_hz :
				 vals[HB_IMPORT_FREQUENCY] ? first_finite(vals[HB_IMPORT_FREQUENCY], n) : NAN;
	else
		s.bias_a = vals[HB_IMPORT_CURRENT] ? first_finite(vals[HB_IMPORT_CURRENT], n) : NAN;
	if ((rc = hb_db_sweep_begin(db, &s)) != HB_OK)
		goto rollback;
	for (size_t i = 0; i < n; i++) {
		hb_db_point p;
		hb_db_point_init(&p);
		p.sweep_id = s.id;
		p.seq = (int)i;
		p.bias_set_a = vals[HB_IMPORT_CURRENT] ? vals[HB_IMPORT_CURRENT][i] : NAN;
		p.bias_meas_a = vals[HB_IMPORT_CURRENT_MEASURED] ? vals[HB_IMPORT_CURRENT_MEASURED][i] : p.bias_set_a;
		p.supply_v = vals[HB_IMPORT_VOLTAGE] ? vals[HB_IMPORT_VOLTAGE][i] : NAN;
		p.freq_hz = vals[HB_IMPORT_FREQUENCY] ? vals[HB_IMPORT_FREQUENCY][i] : s.test_freq_hz;
		p.primary = vals[HB_IMPORT_INDUCTANCE][i];
		p.secondary = have_r ? vals[HB_IMPORT_RESISTANCE][i] : NAN;
		p.reading_status = HB_OK;
		p.direction = dir && dir[i] ? HB_DB_DIR_DOWN : HB_DB_DIR_UP;
		if ((rc = hb_db_point_add(db, &p)) != HB_OK)
			goto rollback;
	}
	if ((rc = hb_db_sweep_end(db, s.id, HB_DB_COMPLETE, "imported")) != HB_OK)
		goto rollback;
	if ((rc = hb_db_batch_commit(db)) != HB_OK)
		goto db_error;
	res->sweep_id = s.id;
	res->n_points = n;
	return HB_OK;
rollback:
	hb_set_err(err, errlen, "store: %s (nothing of %s was stored)", hb_db_errmsg(db), path);
	hb_db_batch_rollback(db);
	return rc;
db_error:
	hb_set_err(err, errlen, "store: %s", hb_db_errmsg(db));
	return rc;
}

/* Lines looked at for a header below metadata; a logger's preamble is a
 * few dozen lines at most. */
enum { HEADER_SEARCH_LINES = 200 };

static bool blank_line(const char *p, const char *end)
{
	for (; p < end && *p != '\n'; p++)
		if (!isspace((unsigned char)*p))
			return false;
	return true;
}

/* Whether the record at p reads as the header: a name gives an inductance
 * column (or --columns maps one), and the next record has as many fields
 * with a value in that column. */
static bool header_at(const char *p, const char *end, const hb_import_options *opt)
{
	const char *w = p;
	for (int k = 0; k < 3 && w < end; k++) {
		const char *nl = memchr(w, '\n', (size_t)(end - w));
		w = nl ? nl + 1 : end;
	}
	char delim = csv_detect_delimiter(p, (size_t)(end - p));
	csv_table t = { 0 };
	char e[200];
	bool ok = false;
	column_info *cols = NULL;
	if (csv_parse(p, (size_t)(w - p), delim, &t, e, sizeof e) != HB_OK || t.n < 2 || t.rec[0].nf < 2 ||
	    t.rec[1].nf != t.rec[0].nf)
		goto out;
	cols = calloc(t.rec[0].nf, sizeof *cols);
	if (!cols)
		goto out;
	for (size_t c = 0; c < t.rec[0].nf; c++)
		split_header(t.rec[0].field[c], cols[c].name, sizeof cols[c].name, cols[c].unit, sizeof cols[c].unit);
	int col[HB_IMPORT_NROLES];
	if (map_columns(&t.rec[0], cols, opt->columns, col, e, sizeof e) != HB_OK || col[HB_IMPORT_INDUCTANCE] < 0)
		goto out;
	char cell[128];
	double v;
	snprintf(cell, sizeof cell, "%s", t.rec[1].field[col[HB_IMPORT_INDUCTANCE]]);
	trim(cell);
	if (delim == ';')
		for (char *q = cell; *q; q++)
			if (*q == ',')
				*q = '.';
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	ok = cell[0] && hb_parse_value(cell, "H", &v, e, sizeof e) == HB_OK;
	hb_c_numeric_leave(&loc);
out:
	free(cols);
	csv_table_free(&t);
	return ok;
}

/* The 1-based line of the header: after opt->skip_lines lines (and blank
 * ones), or the first that reads as a header, else the first non-blank. */
static int find_header(const char *text, size_t len, const hb_import_options *opt)
{
	const char *end = text + len;
	int line = 1;
	const char *p = text;
	if (opt->skip_lines >= 0) {
		p = csv_line_at(text, len, opt->skip_lines + 1);
		line = opt->skip_lines + 1;
		while (p < end && blank_line(p, end)) {
			const char *nl = memchr(p, '\n', (size_t)(end - p));
			p = nl ? nl + 1 : end;
			line++;
		}
		return line;
	}
	int first_text = 0;
	for (; p < end && line <= HEADER_SEARCH_LINES; line++) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		if (!blank_line(p, end)) {
			if (!first_text)
				first_text = line;
			if (header_at(p, end, opt))
				return line;
		}
		p = nl ? nl + 1 : end;
	}
	return first_text ? first_text : 1;
}

int hb_import_csv(hb_db *db, const char *path, const hb_import_options *opt, hb_import_result *res, char *err,
		  size_t errlen)
{
	memset(res, 0, sizeof *res);
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		res->column[r] = -1;
	if (!db || !path || !opt || !opt->part_number || !*opt->part_number || !opt->serial || !*opt->serial) {
		hb_set_err(err, errlen, "import needs a file, a part number and a unit serial");
		return HB_ERR_ARG;
	}
	char *data = NULL;
	size_t len = 0;
	int rc = read_file(path, &data, &len, err, errlen);
	if (rc != HB_OK)
		return rc;
	csv_table t = { 0 };
	column_info *cols = NULL;
	double *vals[HB_IMPORT_NROLES] = { NULL };
	int *dir = NULL;
	if ((rc = csv_decode_text(&data, &len, &res->encoding, err, errlen)) != HB_OK) {
		char why[300];
		snprintf(why, sizeof why, "%s", err);
		hb_set_err(err, errlen, "%s: %s (nothing was stored)", path, why);
		goto out;
	}
	/* Metadata a logger writes above its header is skipped (the CLI says so). */
	res->header_line = find_header(data, len, opt);
	const char *text = csv_line_at(data, len, res->header_line);
	size_t tlen = len - (size_t)(text - data);
	res->delimiter = csv_detect_delimiter(text, tlen);
	if ((rc = csv_parse(text, tlen, res->delimiter, &t, err, errlen)) != HB_OK) {
		/* The reader counts from the header: name the file's own line. */
		int l = 0;
		char rest[400];
		if (sscanf(err, "line %d%399[^\n]", &l, rest) == 2)
			hb_set_err(err, errlen, "line %d%s", l + res->header_line - 1, rest);
		goto out;
	}
	for (size_t i = 0; i < t.n; i++)
		t.rec[i].line += res->header_line - 1;
	if (t.n == 0) {
		hb_set_err(err, errlen, "%s is empty: no header row", path);
		rc = HB_ERR_DATA;
		goto out;
	}
	const csv_record *hdr = &t.rec[0];
	size_t nrow = t.n - 1;
	if (nrow == 0) {
		hb_set_err(err, errlen, "%s has a header but no data rows", path);
		rc = HB_ERR_DATA;
		goto out;
	}
	cols = calloc(hdr->nf, sizeof *cols);
	if (!cols) {
		rc = HB_ERR_NOMEM;
		goto out;
	}
	int sweep_id_col = -1;
	for (size_t c = 0; c < hdr->nf; c++) {
		split_header(hdr->field[c], cols[c].name, sizeof cols[c].name, cols[c].unit, sizeof cols[c].unit);
		if (strcmp(cols[c].name, "sweepid") == 0)
			sweep_id_col = (int)c;
	}
	if ((rc = map_columns(hdr, cols, opt->columns, res->column, err, errlen)) != HB_OK)
		goto out;
	/* Scale of bare numbers from a unit in the header. */
	double scale[HB_IMPORT_NROLES];
	for (int r = 0; r < HB_IMPORT_NROLES; r++) {
		scale[r] = 1;
		int c = res->column[r];
		if (c < 0 || !role_units[r] || !cols[c].unit[0])
			continue;
		char one[48], why[128];
		snprintf(one, sizeof one, "1%s", cols[c].unit);
		if (hb_parse_value(one, role_units[r], &scale[r], why, sizeof why) != HB_OK) {
			hb_set_err(err, errlen, "line %d, column %d ('%s'): unit '%s' is not a unit of %s (%s)", hdr->line, c + 1,
				hdr->field[c], cols[c].unit, role_names[r], role_units[r]);
			rc = HB_ERR_ARG;
			res->line = hdr->line;
			res->field = c + 1;
			goto out;
		}
	}
	if (res->column[HB_IMPORT_INDUCTANCE] < 0) {
		char list[400];
		header_list(hdr, list, sizeof list);
		hb_set_err(err, errlen, "%s: no inductance column (the header has %s); name it with --columns inductance=NAME",
			path, list);
		rc = HB_ERR_ARG;
		goto out;
	}
	for (int r = 0; r < HB_IMPORT_NROLES; r++) {
		if (res->column[r] < 0)
			continue;
		if (r == HB_IMPORT_DIRECTION) {
			dir = calloc(nrow, sizeof *dir);
			if (!dir) {
				rc = HB_ERR_NOMEM;
				goto out;
			}
			continue;
		}
		vals[r] = malloc(nrow * sizeof *vals[r]);
		if (!vals[r]) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
	}
	/* Every row checked before anything is written. */
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	char first_sweep[64] = "";
	for (size_t i = 0; i < nrow && rc == HB_OK; i++) {
		const csv_record *row = &t.rec[i + 1];
		if (row->nf != hdr->nf) {
			hb_set_err(err, errlen, "line %d: %zu fields, the header has %zu (nothing was stored)", row->line, row->nf,
				hdr->nf);
			res->line = row->line;
			rc = HB_ERR_ARG;
			break;
		}
		if (sweep_id_col >= 0) {
			const char *id = row->field[sweep_id_col];
			if (!first_sweep[0])
				snprintf(first_sweep, sizeof first_sweep, "%s", id);
			else if (strcmp(first_sweep, id) != 0) {
				hb_set_err(err, errlen, "line %d: a second sweep (sweep_id %s after %s); import one sweep per file "
					"(nothing was stored)", row->line, id, first_sweep);
				res->line = row->line;
				rc = HB_ERR_ARG;
				break;
			}
		}
		for (int r = 0; r < HB_IMPORT_NROLES && rc == HB_OK; r++) {
			int c = res->column[r];
			if (c < 0)
				continue;
			char cell[128];
			snprintf(cell, sizeof cell, "%s", row->field[c]);
			trim(cell);
			if (r == HB_IMPORT_DIRECTION) {
				if (strcasecmp(cell, "down") == 0)
					dir[i] = 1;
				else if (cell[0] && strcasecmp(cell, "up") != 0) {
					hb_set_err(err, errlen, "line %d, column %d ('%s'): direction '%s' is not up or down "
						"(nothing was stored)", row->line, c + 1, hdr->field[c], cell);
					res->line = row->line;
					res->field = c + 1;
					rc = HB_ERR_ARG;
				}
				continue;
			}
			char why[160];
			if (parse_cell(cell, (hb_import_role)r, scale[r], res->delimiter, &vals[r][i], why, sizeof why) != HB_OK) {
				hb_set_err(err, errlen, "line %d, column %d ('%s'): '%s' is not a value in %s (%s): %s (nothing was stored)",
					row->line, c + 1, hdr->field[c], cell, role_units[r], role_names[r], why);
				res->line = row->line;
				res->field = c + 1;
				rc = HB_ERR_ARG;
			} else if ((r == HB_IMPORT_INDUCTANCE && vals[r][i] < 0) || (r == HB_IMPORT_FREQUENCY && vals[r][i] <= 0)) {
				/* A negative L is a capacitive reading or a sign lost in a
				 * spreadsheet, never the part's inductance. */
				hb_set_err(err, errlen, "line %d, column %d ('%s'): %s '%s' is %s; accepted %s (nothing was stored)",
					row->line, c + 1, hdr->field[c], role_names[r], cell,
					vals[r][i] < 0 ? "negative" : "zero",
					r == HB_IMPORT_INDUCTANCE ? "0 H or more" : "above 0 Hz");
				res->line = row->line;
				res->field = c + 1;
				rc = HB_ERR_ARG;
			}
		}
	}
	hb_c_numeric_leave(&loc);
	if (rc != HB_OK)
		goto out;

	if (opt->kind >= 0)
		res->kind = (hb_db_sweep_kind)opt->kind;
	else if (vals[HB_IMPORT_FREQUENCY] && column_varies(vals[HB_IMPORT_FREQUENCY], nrow) &&
		 !(vals[HB_IMPORT_CURRENT] && column_varies(vals[HB_IMPORT_CURRENT], nrow)))
		res->kind = HB_DB_SWEEP_FREQUENCY;
	else
		res->kind = HB_DB_SWEEP_BIAS;
	hb_import_role need = res->kind == HB_DB_SWEEP_BIAS ? HB_IMPORT_CURRENT : HB_IMPORT_FREQUENCY;
	if (!vals[need]) {
		char list[400];
		header_list(hdr, list, sizeof list);
		hb_set_err(err, errlen, "%s: a %s sweep needs a %s column (the header has %s); name it with --columns %s=NAME",
			path, hb_db_sweep_kind_name(res->kind), role_names[need], list, role_names[need]);
		rc = HB_ERR_ARG;
		goto out;
	}
	/* The part's L0 check holds at its spec frequency: a bias sweep whose
	 * frequency nobody knows cannot be judged, so it is asked for here
	 * rather than stored as "not tested". */
	if (res->kind == HB_DB_SWEEP_BIAS && !vals[HB_IMPORT_FREQUENCY] && !isfinite(opt->test_freq_hz)) {
		hb_db_part part;
		if (hb_db_part_get(db, opt->part_number, &part) == HB_OK && isfinite(part.test_freq_hz)) {
			char f[48];
			hb_set_err(err, errlen, "%s has no frequency column and part %s states L at %s: give --freq F, the "
				"frequency the meter measured at (nothing was stored)", path, opt->part_number,
				hb_format_si(f, sizeof f, part.test_freq_hz, "Hz", 4));
			rc = HB_ERR_ARG;
			goto out;
		}
	}
	size_t usable = 0;
	for (size_t i = 0; i < nrow; i++)
		if (isfinite(vals[need][i]) && isfinite(vals[HB_IMPORT_INDUCTANCE][i]))
			usable++;
	if (usable == 0) {
		hb_set_err(err, errlen, "%s: no row has both a %s and an inductance value", path, role_names[need]);
		rc = HB_ERR_DATA;
		goto out;
	}
	rc = store_import(db, opt, path, (const double **)vals, dir, nrow, res, err, errlen);
	if (rc == HB_OK && opt->analyse) {
		hb_analysis_options aopt;
		hb_analysis_options_init(&aopt);
		hb_analysis_summary *an = calloc(1, sizeof *an);
		if (an) {
			/* A fit that fails leaves the sweep stored: the data are the record. */
			hb_analysis_sweep(db, res->sweep_id, &aopt, an);
			free(an);
		}
	}
out:
	for (int r = 0; r < HB_IMPORT_NROLES; r++)
		free(vals[r]);
	free(dir);
	free(cols);
	csv_table_free(&t);
	free(data);
	return rc;
}
