/* src/report/html.h - self-contained engineering-record HTML pages: escaping, sections, tables, inline SVG */
#ifndef HB_HTML_H
#define HB_HTML_H

#include <stddef.h>
#include <stdio.h>

#include "../../common/hb_status.h"

/* Writes s with & < > " ' escaped (NULL writes nothing). HB_ERR_IO on a write error. */
int hb_html_escape(FILE *out, const char *s);
/* The same into a malloc'd string; NULL when out of memory. */
char *hb_html_escape_dup(const char *s);

/*
 * A page writer over a caller's FILE. Every text argument is user data and
 * is escaped; only hb_html_svg takes markup (a PLplot rendering). The page
 * fetches nothing from the network: styles are inline, figures inline SVG.
 * Write errors are sticky: later calls do nothing and hb_html_close
 * reports the first one.
 */
typedef struct hb_html hb_html;

/* Writes the head (title, inline CSS for screen and print) and the page
 * heading. subtitle may be NULL. */
hb_html *hb_html_open(FILE *out, const char *title, const char *subtitle);
/* The same with machine-readable <meta name content> pairs in the head:
 * meta[2i] the name, meta[2i+1] the content, nmeta pairs. */
hb_html *hb_html_open_meta(FILE *out, const char *title, const char *subtitle, const char *const *meta, size_t nmeta);
/* Closes open elements, ends the page, frees h; returns the sticky status.
 * Does not close the FILE. hb_html_close(NULL) returns HB_OK. */
int hb_html_close(hb_html *h);
const char *hb_html_error(const hb_html *h);

/* <section> with a heading; sections nest up to three deep. */
int hb_html_section_begin(hb_html *h, const char *heading);
int hb_html_section_end(hb_html *h);
/* Starts the next section on a new printed page. */
int hb_html_page_break(hb_html *h);
int hb_html_paragraph(hb_html *h, const char *text);
/* A verdict word styled by its class: "pass", "fail", "incomplete",
 * "not-tested" (anything else is shown plainly). */
int hb_html_verdict(hb_html *h, const char *label, const char *verdict);

/* Key / value table (record headers: part, lot, instrument, date ...). */
int hb_html_kv_begin(hb_html *h, const char *caption);
int hb_html_kv_row(hb_html *h, const char *key, const char *value);
int hb_html_kv_end(hb_html *h);

/* Data table; numeric columns are right-aligned when the cell looks like a number. */
int hb_html_table_begin(hb_html *h, const char *caption, const char *const *headers, size_t ncol);
int hb_html_table_row(hb_html *h, const char *const *cells, size_t ncol);
/* A row whose cells carry a verdict class (e.g. a failed check in red-free bold). */
int hb_html_table_row_class(hb_html *h, const char *verdict, const char *const *cells, size_t ncol);
int hb_html_table_end(hb_html *h);

/* Inline figure: svg is a document from hb_plot_render_svg (its XML prolog
 * and DOCTYPE are dropped); caption is escaped. */
int hb_html_svg(hb_html *h, const char *svg, const char *caption);

#endif
