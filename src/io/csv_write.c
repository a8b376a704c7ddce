/* src/io/csv_write.c - the one CSV writer: RFC 4180 quoting, CRLF rows, numbers that read back exactly in any locale */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../common/hb_dtoa.h"
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
	/* The fewest digits that read back as the same double (0.1 stays 0.1,
	 * no value is rounded on its way to a spreadsheet), laid out as %.15g
	 * (%.16g, %.17g when it takes those) would: exponent form below 1e-4
	 * and from 1e15 up. */
	char text[HB_DTOA_LEN];
	if (!isfinite(v))
		text[0] = '\0';
	else
		hb_dtoa_g(text, v, 15);
	if (cap)
		snprintf(buf, cap, "%s", text);
	return buf;
}

void hb_csv_num(hb_csv_writer *w, double v)
{
	char buf[HB_DTOA_LEN + 1];
	size_t n = 0;
	if (w->col++ > 0)
		buf[n++] = ',';
	if (isfinite(v))
		n += hb_dtoa_g(buf + n, v, 15);
	fwrite(buf, 1, n, w->out);
}

void hb_csv_int(hb_csv_writer *w, long long v)
{
	/* digits from the right; no printf: a row of an export has several */
	char buf[24];
	char *p = buf + sizeof buf;
	unsigned long long u = v < 0 ? 0ull - (unsigned long long)v : (unsigned long long)v;
	do
		*--p = (char)('0' + u % 10);
	while (u /= 10);
	if (v < 0)
		*--p = '-';
	if (w->col++ > 0)
		*--p = ',';
	fwrite(p, 1, (size_t)(buf + sizeof buf - p), w->out);
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
