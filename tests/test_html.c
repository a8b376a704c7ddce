/* tests/test_html.c - HTML escaping, page structure, print CSS, inline SVG, misuse and full-disk errors */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "src/report/html.h"

static const char *evil = "<script>alert(\"x\" & 'y')</script>";

static void test_escape(void **state)
{
	(void)state;
	char *s = hb_html_escape_dup(evil);
	assert_non_null(s);
	assert_string_equal(s, "&lt;script&gt;alert(&quot;x&quot; &amp; &#39;y&#39;)&lt;/script&gt;");
	free(s);
	s = hb_html_escape_dup(NULL);
	assert_string_equal(s, "");
	free(s);

	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	assert_int_equal(hb_html_escape(f, "a<b>\xc2\xb5H"), HB_OK);
	fclose(f);
	assert_string_equal(buf, "a&lt;b&gt;\xc2\xb5H"); /* UTF-8 passes through */
	free(buf);
}

static char *write_page(void)
{
	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	assert_non_null(f);
	hb_html *h = hb_html_open(f, evil, "part <A>");
	assert_non_null(h);
	assert_int_equal(hb_html_section_begin(h, "Record"), HB_OK);
	assert_int_equal(hb_html_kv_begin(h, "Part"), HB_OK);
	assert_int_equal(hb_html_kv_row(h, "Operator", evil), HB_OK);
	assert_int_equal(hb_html_kv_end(h), HB_OK);
	assert_int_equal(hb_html_verdict(h, "Verdict:", "fail"), HB_OK);
	const char *headers[] = { "Check", "Measured", "Limit" };
	assert_int_equal(hb_html_table_begin(h, "Checks", headers, 3), HB_OK);
	const char *row1[] = { "L0", "98.7 uH", "90 uH ... 110 uH" };
	const char *row2[] = { evil, "", "n/a" };
	assert_int_equal(hb_html_table_row(h, row1, 3), HB_OK);
	assert_int_equal(hb_html_table_row_class(h, "not-tested", row2, 3), HB_OK);
	assert_int_equal(hb_html_table_end(h), HB_OK);
	assert_int_equal(hb_html_page_break(h), HB_OK);
	const char *svg = "<?xml version=\"1.0\"?>\n<!DOCTYPE svg>\n<svg viewBox=\"0 0 10 10\"><rect/></svg>\n";
	assert_int_equal(hb_html_svg(h, svg, "Figure 1 <L>"), HB_OK);
	assert_int_equal(hb_html_section_end(h), HB_OK);
	assert_int_equal(hb_html_paragraph(h, "done & dusted"), HB_OK);
	assert_int_equal(hb_html_close(h), HB_OK);
	fclose(f);
	return buf;
}

static void test_page(void **state)
{
	(void)state;
	char *page = write_page();
	assert_true(strncmp(page, "<!DOCTYPE html>", 15) == 0);
	/* No user text reaches the page unescaped. */
	assert_null(strstr(page, "<script"));
	assert_null(strstr(page, "'y'"));
	assert_non_null(strstr(page, "&lt;script&gt;"));
	assert_non_null(strstr(page, "part &lt;A&gt;"));
	/* Self-contained: no links, scripts or remote resources. */
	assert_null(strstr(page, "http://"));
	assert_null(strstr(page, "https://"));
	assert_null(strstr(page, "<link"));
	assert_null(strstr(page, "src="));
	assert_non_null(strstr(page, "@media print"));
	assert_non_null(strstr(page, "page-break-before:always"));
	/* The figure is inlined without its XML prolog. */
	assert_null(strstr(page, "<?xml"));
	assert_null(strstr(page, "<!DOCTYPE svg"));
	assert_non_null(strstr(page, "<figure>\n<svg viewBox"));
	assert_non_null(strstr(page, "Figure 1 &lt;L&gt;"));
	assert_non_null(strstr(page, "<td class=\"num\">98.7 uH</td>"));
	assert_non_null(strstr(page, "<tr class=\"not-tested\">"));
	assert_non_null(strstr(page, "<span class=\"verdict fail\">fail</span>"));
	assert_non_null(strstr(page, "</section>\n<p>done &amp; dusted</p>\n</body>\n</html>\n"));
	free(page);
}

static void test_misuse_is_sticky(void **state)
{
	(void)state;
	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	hb_html *h = hb_html_open(f, "t", NULL);
	assert_int_equal(hb_html_kv_row(h, "k", "v"), HB_ERR_ARG);
	assert_non_null(strstr(hb_html_error(h), "outside"));
	assert_int_equal(hb_html_paragraph(h, "later"), HB_ERR_ARG); /* sticky */
	assert_int_equal(hb_html_close(h), HB_ERR_ARG);
	fclose(f);
	free(buf);

	f = open_memstream(&buf, &len);
	h = hb_html_open(f, "t", NULL);
	const char *hd[] = { "a", "b" };
	const char *one[] = { "x" };
	hb_html_table_begin(h, NULL, hd, 2);
	assert_int_equal(hb_html_table_row(h, one, 1), HB_ERR_ARG);
	assert_int_equal(hb_html_close(h), HB_ERR_ARG);
	fclose(f);
	free(buf);

	f = open_memstream(&buf, &len);
	h = hb_html_open(f, "t", NULL);
	assert_int_equal(hb_html_svg(h, "<p>not svg</p>", NULL), HB_ERR_ARG);
	assert_int_equal(hb_html_section_end(h), HB_ERR_ARG);
	hb_html_close(h);
	fclose(f);
	free(buf);
	assert_int_equal(hb_html_close(NULL), HB_OK);
	assert_null(hb_html_open(NULL, "t", NULL));
}

static void test_disk_full(void **state)
{
	(void)state;
	/* /dev/full fails every write with ENOSPC: the report must say so. */
	FILE *f = fopen("/dev/full", "w");
	if (!f)
		skip();
	hb_html *h = hb_html_open(f, "t", NULL);
	assert_non_null(h);
	for (int i = 0; i < 2000; i++)
		hb_html_paragraph(h, "filling the buffer until a write reaches the device");
	assert_int_equal(hb_html_close(h), HB_ERR_IO);
	fclose(f);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_escape),
		cmocka_unit_test(test_page),
		cmocka_unit_test(test_misuse_is_sticky),
		cmocka_unit_test(test_disk_full),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
