/* src/io/csv.c - the RFC 4180 reader: comma, semicolon or tab, quoted fields, the line each record starts on */
#include <stdbool.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "csv.h"

void csv_table_free(csv_table *t)
{
	for (size_t i = 0; i < t->n; i++) {
		for (size_t k = 0; k < t->rec[i].nf; k++)
			free(t->rec[i].field[k]);
		free(t->rec[i].field);
	}
	free(t->rec);
	memset(t, 0, sizeof *t);
}

typedef struct csv_buf {
	char *s;
	size_t len, cap;
} csv_buf;

static int buf_put(csv_buf *b, char c)
{
	if (b->len + 1 >= b->cap) {
		size_t cap = b->cap ? 2 * b->cap : 64;
		char *s = realloc(b->s, cap);
		if (!s)
			return HB_ERR_NOMEM;
		b->s = s;
		b->cap = cap;
	}
	b->s[b->len++] = c;
	return HB_OK;
}

char csv_detect_delimiter(const char *s, size_t len)
{
	size_t comma = 0, semi = 0, tab = 0;
	bool quoted = false;
	for (size_t i = 0; i < len && (quoted || (s[i] != '\n' && s[i] != '\r')); i++) {
		if (s[i] == '"')
			quoted = !quoted;
		else if (!quoted && s[i] == ',')
			comma++;
		else if (!quoted && s[i] == ';')
			semi++;
		else if (!quoted && s[i] == '\t')
			tab++;
	}
	if (tab > comma && tab >= semi)
		return '\t';
	if (semi > comma)
		return ';';
	return ',';
}

int csv_parse(const char *s, size_t len, char delim, csv_table *t, char *err, size_t errlen)
{
	csv_buf fb = { 0 };
	char **fields = NULL;
	size_t nf = 0, fcap = 0;
	int line = 1, rec_line = 1, rc = HB_OK;
	size_t i = 0;
	bool record_has_text = false;
	while (i <= len) {
		/* one field */
		fb.len = 0;
		if (i < len && s[i] == '"') {
			record_has_text = true;
			int open_line = line;
			i++;
			for (;;) {
				if (i >= len) {
					hb_set_err(err, errlen, "line %d: a quoted field is not closed before the end of the file",
						open_line);
					rc = HB_ERR_ARG;
					goto out;
				}
				if (s[i] == '"') {
					if (i + 1 < len && s[i + 1] == '"') {
						if ((rc = buf_put(&fb, '"')) != HB_OK)
							goto out;
						i += 2;
						continue;
					}
					i++;
					break;
				}
				if (s[i] == '\n')
					line++;
				if ((rc = buf_put(&fb, s[i++])) != HB_OK)
					goto out;
			}
			if (i < len && s[i] != delim && s[i] != '\n' && s[i] != '\r') {
				hb_set_err(err, errlen, "line %d, column %zu: text after the closing quote", line, nf + 1);
				rc = HB_ERR_ARG;
				goto out;
			}
		} else {
			while (i < len && s[i] != delim && s[i] != '\n' && s[i] != '\r') {
				if ((rc = buf_put(&fb, s[i++])) != HB_OK)
					goto out;
			}
		}
		if (fb.len > 0)
			record_has_text = true;
		if ((rc = buf_put(&fb, '\0')) != HB_OK)
			goto out;
		if (nf == fcap) {
			size_t cap = fcap ? 2 * fcap : 16;
			char **f = realloc(fields, cap * sizeof *f);
			if (!f) {
				rc = HB_ERR_NOMEM;
				goto out;
			}
			fields = f;
			fcap = cap;
		}
		fields[nf] = strdup(fb.s);
		if (!fields[nf]) {
			rc = HB_ERR_NOMEM;
			goto out;
		}
		nf++;
		if (i < len && s[i] == delim) {
			i++;
			record_has_text = true;
			continue;
		}
		/* end of record: CRLF, LF, lone CR or the end of the file */
		if (i < len && s[i] == '\r')
			i++;
		if (i < len && s[i] == '\n')
			i++;
		bool at_end = i >= len;
		if (record_has_text) {
			if (t->n == t->cap) {
				size_t cap = t->cap ? 2 * t->cap : 64;
				csv_record *r = realloc(t->rec, cap * sizeof *r);
				if (!r) {
					rc = HB_ERR_NOMEM;
					goto out;
				}
				t->rec = r;
				t->cap = cap;
			}
			t->rec[t->n++] = (csv_record){ .line = rec_line, .nf = nf, .field = fields };
			fields = NULL;
			fcap = 0;
		} else {
			for (size_t k = 0; k < nf; k++)
				free(fields[k]);
		}
		nf = 0;
		record_has_text = false;
		line++;
		rec_line = line;
		if (at_end)
			break;
	}
out:
	for (size_t k = 0; k < nf; k++)
		free(fields[k]);
	free(fields);
	free(fb.s);
	if (rc == HB_ERR_NOMEM)
		hb_set_err(err, errlen, "out of memory");
	return rc;
}
