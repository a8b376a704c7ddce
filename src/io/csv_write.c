/* src/io/csv_write.c - the one CSV writer: RFC 4180 quoting, CRLF rows, C-locale numbers that read back exactly */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_text.h"
#include "io.h"

void hb_csv_begin(hb_csv_writer *w, FILE *out)
{
	w->out = out;
	w->col = 0;
	hb_c_numeric_enter(&w->loc);
}

static void separate(hb_csv_writer *w)
{
	if (w->col++ > 0)
		fputc(',', w->out);
}

bool hb_csv_formula_like(const char *s)
{
	/* A spreadsheet takes a cell starting with one of these as a formula
	 * (or, for tab and CR, strips them and looks again): OWASP's CSV
	 * injection guidance, common practice. */
	return s && *s && strchr("=+-@\t\r", *s) != NULL;
}

void hb_csv_text(hb_csv_writer *w, const char *s)
{
	separate(w);
	if (!s)
		return;
	/* Text that a spreadsheet would run as a formula is made inert with a
	 * leading single quote. Only text cells: numbers go through
	 * hb_csv_num, so a negative number stays a number. */
	const char *prefix = hb_csv_formula_like(s) ? "'" : "";
	/* RFC 4180 quotes a field holding the delimiter, a quote, CR or LF; a
	 * leading or trailing space is quoted too, since many readers (ours for
	 * unquoted cells among them) trim it away. */
	size_t len = strlen(s);
	if (!strpbrk(s, ",\"\r\n") && !(len && (s[0] == ' ' || s[len - 1] == ' '))) {
		fputs(prefix, w->out);
		fputs(s, w->out);
		return;
	}
	fputc('"', w->out);
	fputs(prefix, w->out);
	for (; *s; s++) {
		if (*s == '"')
			fputc('"', w->out);
		fputc(*s, w->out);
	}
	fputc('"', w->out);
}

char *hb_csv_format_num(char *buf, size_t cap, double v)
{
	if (!isfinite(v)) {
		if (cap)
			buf[0] = '\0';
		return buf;
	}
	/* The fewest digits that read back as the same double: 0.1 stays 0.1,
	 * and no value is rounded on its way to a spreadsheet. 17 always do. */
	hb_c_numeric loc;
	hb_c_numeric_enter(&loc);
	for (int digits = 15; digits <= 17; digits++) {
		snprintf(buf, cap, "%.*g", digits, v);
		if (digits == 17 || strtod(buf, NULL) == v)
			break;
	}
	hb_c_numeric_leave(&loc);
	return buf;
}

void hb_csv_num(hb_csv_writer *w, double v)
{
	char buf[40];
	separate(w);
	fputs(hb_csv_format_num(buf, sizeof buf, v), w->out);
}

void hb_csv_int(hb_csv_writer *w, long long v)
{
	separate(w);
	fprintf(w->out, "%lld", v);
}

void hb_csv_row_end(hb_csv_writer *w)
{
	fputs("\r\n", w->out);
	w->col = 0;
}

int hb_csv_end(hb_csv_writer *w)
{
	hb_c_numeric_leave(&w->loc);
	return ferror(w->out) ? HB_ERR_IO : HB_OK;
}
