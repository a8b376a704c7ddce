/* tests/test_report_print.c - a sweep report of 80 points printed to PDF by headless Chromium: no blank page, the points table's header on every page it spans */
#define _XOPEN_SOURCE 700 /* the fixture's terminal */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cli_fixture.h"

static const char *chromium = "/usr/bin/chromium";

static int group_setup(void **state)
{
	(void)state;
	return cli_fixture_setup("report-print");
}

static char *output_of(const char *cmd, int *status)
{
	FILE *p = popen(cmd, "r");
	assert_non_null(p);
	text t = { 0 };
	char buf[4096];
	size_t n;
	while ((n = fread(buf, 1, sizeof buf, p)) > 0)
		text_add(&t, buf, n);
	*status = pclose(p);
	return t.s ? t.s : calloc(1, 1);
}

/* Page objects of a PDF: "/Type /Page" (or "/Type/Page") not followed by
 * "s", which would be the page tree's /Pages (ISO 32000-1 7.7.3). */
static int count_pages(const char *pdf, size_t len)
{
	int n = 0;
	for (size_t i = 0; i + 10 < len; i++) {
		if (memcmp(pdf + i, "/Type", 5) != 0)
			continue;
		size_t k = i + 5;
		while (k < len && pdf[k] == ' ')
			k++;
		if (k + 5 <= len && memcmp(pdf + k, "/Page", 5) == 0 && (k + 5 == len || pdf[k + 5] != 's'))
			n++;
	}
	return n;
}

static char *read_file_bytes(const char *path, size_t *len)
{
	FILE *f = fopen(path, "rb");
	if (!f)
		return NULL;
	text t = { 0 };
	char buf[65536];
	size_t n;
	while ((n = fread(buf, 1, sizeof buf, f)) > 0)
		text_add(&t, buf, n);
	fclose(f);
	*len = t.len;
	return t.s;
}

/* Words on one page as pdftotext (poppler) reads them. */
static int page_words(const char *pdf, int page, char **text_out)
{
	char cmd[1200];
	snprintf(cmd, sizeof cmd, "pdftotext -layout -f %d -l %d '%s' - 2>/dev/null", page, page, pdf);
	int st;
	char *t = output_of(cmd, &st);
	assert_int_equal(st, 0);
	int words = 0;
	bool in = false;
	for (const char *c = t; *c; c++) {
		bool w = !isspace((unsigned char)*c);
		if (w && !in)
			words++;
		in = w;
	}
	*text_out = t;
	return words;
}

/* A line of the points table: "<seq> up ..." (the import stores rising points). */
static bool has_point_row(const char *page)
{
	for (const char *line = page; line && *line;) {
		const char *p = line;
		while (*p == ' ')
			p++;
		if (isdigit((unsigned char)*p)) {
			while (isdigit((unsigned char)*p))
				p++;
			/* the sequence number, then the direction after any run of spaces */
			const char *q = p;
			while (*q == ' ')
				q++;
			if (q > p && strncmp(q, "up ", 3) == 0)
				return true;
		}
		const char *nl = strchr(line, '\n');
		line = nl ? nl + 1 : NULL;
	}
	return false;
}

static void test_80_point_report_prints_without_blank_pages(void **state)
{
	(void)state;
	if (access(chromium, X_OK) != 0 || system("command -v pdftotext >/dev/null 2>&1") != 0) {
		print_message("chromium or pdftotext (poppler-utils) not installed: print check skipped\n");
		skip();
	}
	char db[400], csv[400], html[400], pdf[400];
	snprintf(db, sizeof db, "%s/print.db", tmpdir);
	snprintf(csv, sizeof csv, "%s/p80.csv", tmpdir);
	snprintf(html, sizeof html, "%s/p80.html", tmpdir);
	snprintf(pdf, sizeof pdf, "%s/p80.pdf", tmpdir);
	/* An invented part and 80 synthetic points of a soft-saturating choke
	 * (L0 108 uH, L/L0 = 1/sqrt(1 + (I/3.5 A)^4)): test data only. */
	FILE *f = fopen(csv, "w");
	assert_non_null(f);
	fprintf(f, "I (A),L (uH),R (mohm)\n");
	for (int k = 0; k < 80; k++) {
		double i = 8.0 * k / 79;
		fprintf(f, "%.4f,%.4f,%.3f\n", i, 108 / sqrt(1 + pow(i / 3.5, 4)), 30 + 0.1 * k);
	}
	assert_int_equal(fclose(f), 0);
	run r;
	hb_run(&r, station_bare, "--db", db, "part", "add", "PRN-80", "--nominal", "108uH", "--tol", "10%", "--freq",
	       "100kHz", "--level", "0.5V", NULL);
	assert_int_equal(r.status, 0);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "import", csv, "--part", "PRN-80", "--unit", "SN-0001", "--freq", "100kHz",
	       NULL);
	if (r.status != 0)
		fail_msg("import exited %d: %s", r.status, r.err);
	run_free(&r);
	hb_run(&r, station_bare, "--db", db, "report", "1", "--out", html, NULL);
	if (r.status != 0)
		fail_msg("report exited %d: %s", r.status, r.err);
	run_free(&r);

	char cmd[2400];
	snprintf(cmd, sizeof cmd,
		 "timeout 120 %s --headless --no-sandbox --disable-gpu --disable-quic --no-first-run "
		 "--disable-background-networking --disable-component-update --disable-sync --user-data-dir='%s/profile' "
		 "--no-pdf-header-footer --print-to-pdf-no-header --print-to-pdf='%s' 'file://%s' >/dev/null 2>&1",
		 chromium, tmpdir, pdf, html);
	assert_int_equal(system(cmd), 0);

	size_t len = 0;
	char *bytes = read_file_bytes(pdf, &len);
	assert_non_null(bytes);
	assert_memory_equal(bytes, "%PDF-", 5); /* ISO 32000-1 7.5.2: the header */
	int pages = count_pages(bytes, len);
	free(bytes);
	/* 80 rows of the points table (about 45 to an A4 or Letter page at 9.5 pt) besides the
	 * part, verdicts, fit and figures: more than two pages, far fewer than one a row. */
	if (pages < 3 || pages > 20)
		fail_msg("%d pages for the 80-point report", pages);
	int table_pages = 0;
	for (int p = 1; p <= pages; p++) {
		char *t = NULL;
		int words = page_words(pdf, p, &t);
		/* a page with less than a line of text is a blank one (the old print styles left one
		 * before a table taller than a page) */
		if (words < 10)
			fail_msg("page %d of %d is blank (%d words)", p, pages, words);
		if (has_point_row(t)) {
			table_pages++;
			/* thead repeated on every page the table spans (CSS 2.1 17.2: table-header-group) */
			if (!strstr(t, "Bias measured"))
				fail_msg("page %d holds points but not the table's header:\n%s", p, t);
		}
		free(t);
	}
	/* the 80 rows do not fit one page: the table really was split */
	if (table_pages < 2)
		fail_msg("the points table spans %d page(s); 80 rows need two or more", table_pages);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_80_point_report_prints_without_blank_pages),
	};
	return cmocka_run_group_tests(tests, group_setup, cli_fixture_teardown);
}
