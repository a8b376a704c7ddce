/* src/report/html.c - self-contained engineering-record HTML pages written to a caller's FILE */
#include <ctype.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "html.h"

enum { MAX_DEPTH = 3 };

typedef enum open_block { BLOCK_NONE, BLOCK_KV, BLOCK_TABLE } open_block;

struct hb_html {
	FILE *out;
	int status;
	int depth;
	open_block block;
	size_t ncol;
	char err[160];
};

/* Plain engineering record: black on white, ruled tables, no web fonts.
 * Print: no backgrounds needed; figures, rows and the short key/value
 * tables kept whole, while a long data table breaks between rows with its
 * header repeated on every page (kept whole it would leave a blank page
 * before it); sections may start a page. Identifiers and timestamps
 * (cells without a space) never wrap. */
static const char page_css[] =
	"body{font-family:'DejaVu Sans',Arial,Helvetica,sans-serif;font-size:10.5pt;color:#111;"
	"background:#fff;max-width:60em;margin:1.5em auto;padding:0 1em;line-height:1.35}\n"
	"h1{font-size:17pt;margin:0 0 .2em}h2{font-size:13pt;border-bottom:1px solid #444;margin-top:1.6em}"
	"h3{font-size:11.5pt}h4{font-size:10.5pt}\n"
	".subtitle{color:#333;margin:0 0 1em}\n"
	"table{border-collapse:collapse;margin:.6em 0 1em}caption{text-align:left;font-weight:bold;"
	"padding:.2em 0}\n"
	"th,td{border:1px solid #777;padding:.15em .5em;vertical-align:top}th{background:#eee;text-align:left}\n"
	"table.kv th{width:14em;font-weight:normal;background:#f4f4f4}\n"
	"td.num{text-align:right;font-variant-numeric:tabular-nums;white-space:nowrap}\n"
	".verdict{display:inline-block;padding:0 .4em;border:1px solid #555;font-weight:bold;"
	"text-transform:uppercase;letter-spacing:.04em}\n"
	".verdict.fail{border-width:2px;color:#8b1a1a}.verdict.pass{color:#14532d}"
	".verdict.incomplete,.verdict.not-tested{border-style:dashed;font-style:italic}\n"
	"tr.fail td{font-weight:bold}tr.incomplete td,tr.not-tested td{font-style:italic}\n"
	"figure{margin:1em 0}figure svg{width:100%;height:auto;max-width:50em;display:block}"
	"figcaption{font-size:9.5pt;color:#333}\n"
	".page-break{break-before:page;page-break-before:always}\n"
	"td.nw{white-space:nowrap}\n"
	"@media print{body{margin:0;max-width:none;font-size:9.5pt}"
	"th,table.kv th{background:none}h2,h3,caption{break-after:avoid;page-break-after:avoid}"
	"thead{display:table-header-group}tfoot{display:table-footer-group}"
	"figure,tr,table.kv{break-inside:avoid;page-break-inside:avoid}"
	".verdict.fail,.verdict.pass{color:#000}@page{margin:15mm}}\n";

static void fail_io(hb_html *h)
{
	if (h->status == HB_OK) {
		h->status = HB_ERR_IO;
		snprintf(h->err, sizeof h->err, "write to the report failed");
	}
}

static void put(hb_html *h, const char *s)
{
	if (h->status != HB_OK)
		return;
	if (fputs(s, h->out) == EOF)
		fail_io(h);
}

static void text(hb_html *h, const char *s)
{
	if (h->status != HB_OK)
		return;
	if (hb_html_escape(h->out, s) != HB_OK)
		fail_io(h);
}

static int misuse(hb_html *h, const char *what)
{
	if (h->status == HB_OK) {
		h->status = HB_ERR_ARG;
		snprintf(h->err, sizeof h->err, "%s", what);
	}
	return h->status;
}

int hb_html_escape(FILE *out, const char *s)
{
	if (!out)
		return HB_ERR_ARG;
	if (!s)
		return HB_OK;
	for (const char *c = s; *c; c++) {
		const char *e = NULL;
		switch (*c) {
		case '&': e = "&amp;"; break;
		case '<': e = "&lt;"; break;
		case '>': e = "&gt;"; break;
		case '"': e = "&quot;"; break;
		case '\'': e = "&#39;"; break;
		default: break;
		}
		if (e ? fputs(e, out) == EOF : fputc(*c, out) == EOF)
			return HB_ERR_IO;
	}
	return HB_OK;
}

char *hb_html_escape_dup(const char *s)
{
	if (!s)
		s = "";
	size_t n = 0;
	for (const char *c = s; *c; c++)
		n += *c == '&' ? 5 : *c == '<' || *c == '>' ? 4 : *c == '"' ? 6 : *c == '\'' ? 5 : 1;
	char *out = malloc(n + 1), *o = out;
	if (!out)
		return NULL;
	for (const char *c = s; *c; c++) {
		const char *e = *c == '&' ? "&amp;" : *c == '<' ? "&lt;" : *c == '>' ? "&gt;" : *c == '"' ? "&quot;"
			      : *c == '\'' ? "&#39;" : NULL;
		if (e) {
			size_t l = strlen(e);
			memcpy(o, e, l);
			o += l;
		} else {
			*o++ = *c;
		}
	}
	*o = '\0';
	return out;
}

hb_html *hb_html_open(FILE *out, const char *title, const char *subtitle)
{
	return hb_html_open_meta(out, title, subtitle, NULL, 0);
}

hb_html *hb_html_open_meta(FILE *out, const char *title, const char *subtitle, const char *const *meta, size_t nmeta)
{
	if (!out)
		return NULL;
	hb_html *h = calloc(1, sizeof *h);
	if (!h)
		return NULL;
	h->out = out;
	put(h, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
	       "<meta name=\"generator\" content=\"henrybench\">\n");
	for (size_t i = 0; meta && i < nmeta; i++) {
		put(h, "<meta name=\"");
		text(h, meta[2 * i]);
		put(h, "\" content=\"");
		text(h, meta[2 * i + 1]);
		put(h, "\">\n");
	}
	put(h, "<title>");
	text(h, title);
	put(h, "</title>\n<style>\n");
	put(h, page_css);
	put(h, "</style>\n</head>\n<body>\n<h1>");
	text(h, title);
	put(h, "</h1>\n");
	if (subtitle) {
		put(h, "<p class=\"subtitle\">");
		text(h, subtitle);
		put(h, "</p>\n");
	}
	return h;
}

static void close_block(hb_html *h)
{
	if (h->block != BLOCK_NONE)
		put(h, "</table>\n");
	h->block = BLOCK_NONE;
}

int hb_html_close(hb_html *h)
{
	if (!h)
		return HB_OK;
	close_block(h);
	while (h->depth > 0) {
		put(h, "</section>\n");
		h->depth--;
	}
	put(h, "</body>\n</html>\n");
	if (h->status == HB_OK && fflush(h->out) != 0)
		fail_io(h);
	int rc = h->status;
	free(h);
	return rc;
}

const char *hb_html_error(const hb_html *h)
{
	return h ? h->err : "no page";
}

int hb_html_section_begin(hb_html *h, const char *heading)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->depth >= MAX_DEPTH)
		return misuse(h, "sections nest at most three deep");
	close_block(h);
	h->depth++;
	char tag[8];
	snprintf(tag, sizeof tag, "h%d", h->depth + 1);
	put(h, "<section>\n<");
	put(h, tag);
	put(h, ">");
	text(h, heading);
	put(h, "</");
	put(h, tag);
	put(h, ">\n");
	return h->status;
}

int hb_html_section_end(hb_html *h)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->depth == 0)
		return misuse(h, "section end without a section");
	close_block(h);
	put(h, "</section>\n");
	h->depth--;
	return h->status;
}

int hb_html_page_break(hb_html *h)
{
	if (!h)
		return HB_ERR_ARG;
	close_block(h);
	put(h, "<div class=\"page-break\"></div>\n");
	return h->status;
}

int hb_html_paragraph(hb_html *h, const char *s)
{
	if (!h)
		return HB_ERR_ARG;
	close_block(h);
	put(h, "<p>");
	text(h, s);
	put(h, "</p>\n");
	return h->status;
}

static const char *verdict_class(const char *verdict)
{
	/* A lot's accept/reject reads like a unit's pass/fail. */
	static const char *const known[][2] = { { "pass", "pass" }, { "fail", "fail" },
						 { "incomplete", "incomplete" }, { "not-tested", "not-tested" },
						 { "accept", "pass" }, { "reject", "fail" } };
	for (size_t i = 0; verdict && i < sizeof known / sizeof known[0]; i++)
		if (strcasecmp(verdict, known[i][0]) == 0)
			return known[i][1];
	return NULL;
}

int hb_html_verdict(hb_html *h, const char *label, const char *verdict)
{
	if (!h)
		return HB_ERR_ARG;
	close_block(h);
	const char *cls = verdict_class(verdict);
	put(h, "<p>");
	if (label) {
		text(h, label);
		put(h, " ");
	}
	put(h, cls ? "<span class=\"verdict " : "<span class=\"verdict");
	if (cls)
		put(h, cls);
	put(h, "\">");
	text(h, verdict);
	put(h, "</span></p>\n");
	return h->status;
}

static void caption(hb_html *h, const char *c)
{
	if (c) {
		put(h, "<caption>");
		text(h, c);
		put(h, "</caption>\n");
	}
}

int hb_html_kv_begin(hb_html *h, const char *cap)
{
	if (!h)
		return HB_ERR_ARG;
	close_block(h);
	put(h, "<table class=\"kv\">\n");
	caption(h, cap);
	h->block = BLOCK_KV;
	return h->status;
}

/* A serial, part number, lot code or timestamp: one word (no space) of a
 * length a table cell holds; a browser would otherwise break it at a
 * hyphen ("A2611-" / "0001"). */
static bool is_token(const char *s)
{
	size_t n = s ? strlen(s) : 0;
	return n > 0 && n <= 40 && !strpbrk(s, " \t\n");
}

int hb_html_kv_row(hb_html *h, const char *key, const char *value)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->block != BLOCK_KV)
		return misuse(h, "key/value row outside a key/value table");
	put(h, "<tr><th scope=\"row\">");
	text(h, key);
	put(h, is_token(value) ? "</th><td class=\"nw\">" : "</th><td>");
	text(h, value);
	put(h, "</td></tr>\n");
	return h->status;
}

int hb_html_kv_end(hb_html *h)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->block != BLOCK_KV)
		return misuse(h, "key/value table end without its begin");
	close_block(h);
	return h->status;
}

int hb_html_table_begin(hb_html *h, const char *cap, const char *const *headers, size_t ncol)
{
	if (!h)
		return HB_ERR_ARG;
	if (ncol == 0 || !headers)
		return misuse(h, "a data table needs its column headers");
	close_block(h);
	put(h, "<table class=\"data\">\n");
	caption(h, cap);
	put(h, "<thead><tr>");
	for (size_t i = 0; i < ncol; i++) {
		put(h, "<th scope=\"col\">");
		text(h, headers[i]);
		put(h, "</th>");
	}
	put(h, "</tr></thead>\n");
	h->block = BLOCK_TABLE;
	h->ncol = ncol;
	return h->status;
}

/* "12.5", "-3e-6", "4.70 uH", "1.2 %": right-aligned like a number column. */
static bool looks_numeric(const char *s)
{
	if (!s || !*s)
		return false;
	char *end;
	strtod(s, &end);
	if (end == s)
		return false;
	while (*end == ' ')
		end++;
	for (; *end; end++)
		if (!isalpha((unsigned char)*end) && *end != '%' && (unsigned char)*end < 0x80)
			return false;
	return true;
}

int hb_html_table_row_class(hb_html *h, const char *verdict, const char *const *cells, size_t ncol)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->block != BLOCK_TABLE)
		return misuse(h, "table row outside a data table");
	if (ncol != h->ncol || !cells)
		return misuse(h, "table row with a different number of columns than the headers");
	const char *cls = verdict_class(verdict);
	if (cls) {
		put(h, "<tr class=\"");
		put(h, cls);
		put(h, "\">");
	} else {
		put(h, "<tr>");
	}
	for (size_t i = 0; i < ncol; i++) {
		put(h, looks_numeric(cells[i]) ? "<td class=\"num\">" : is_token(cells[i]) ? "<td class=\"nw\">" : "<td>");
		text(h, cells[i]);
		put(h, "</td>");
	}
	put(h, "</tr>\n");
	return h->status;
}

int hb_html_table_row(hb_html *h, const char *const *cells, size_t ncol)
{
	return hb_html_table_row_class(h, NULL, cells, ncol);
}

int hb_html_table_end(hb_html *h)
{
	if (!h)
		return HB_ERR_ARG;
	if (h->block != BLOCK_TABLE)
		return misuse(h, "table end without its begin");
	close_block(h);
	return h->status;
}

int hb_html_svg(hb_html *h, const char *svg, const char *cap)
{
	if (!h)
		return HB_ERR_ARG;
	const char *root = svg ? strstr(svg, "<svg") : NULL;
	if (!root || !strstr(root, "</svg>"))
		return misuse(h, "figure is not an SVG document");
	close_block(h);
	/* HTML5 takes the <svg> element itself; the XML prolog and DOCTYPE
	 * before it are not allowed inline. */
	put(h, "<figure>\n");
	put(h, root);
	if (cap) {
		put(h, "<figcaption>");
		text(h, cap);
		put(h, "</figcaption>\n");
	}
	put(h, "</figure>\n");
	return h->status;
}
