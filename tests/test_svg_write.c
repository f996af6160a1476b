/*
 * Tests of the SVG building blocks (src/daemon/svg_write.c): escaping and
 * fixed-point numbers.
 *
 * Sources: XML 1.0 (Fifth Edition) section 2.4, '<' and '&' never appear
 * raw in text, '"' and '\'' are escaped inside quoted attributes, '>' by
 * habit; section 2.2, the characters a document may hold (no C0 controls
 * but tab, newline and return; no U+FFFE, U+FFFF; no surrogates); RFC 3629
 * for well-formed UTF-8 (no overlong forms, nothing above U+10FFFF).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "svg_write.h"

static char *escaped(const char *text)
{
	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	assert_non_null(f);
	svg_escaped(f, text);
	fclose(f);
	return buf;
}

static void expect_escaped(const char *text, const char *want)
{
	char *got = escaped(text);
	assert_string_equal(got, want);
	free(got);
}

static void markup_characters(void **state)
{
	(void)state;
	expect_escaped("3/2", "3/2");
	expect_escaped("a<b & c>d", "a&lt;b &amp; c&gt;d");
	expect_escaped("say \"hi\" 'there'", "say &quot;hi&quot; &apos;there&apos;");
	expect_escaped("&amp;", "&amp;amp;");
}

static void utf8_and_controls(void **state)
{
	(void)state;
	expect_escaped("702.0\xC2\xA2", "702.0\xC2\xA2");          /* U+00A2 kept */
	expect_escaped("\xE2\x82\xAC \xF0\x9D\x84\x9E", "\xE2\x82\xAC \xF0\x9D\x84\x9E");
	expect_escaped("a\x01" "b\tc\nd", "a?b?c?d");               /* controls */
	expect_escaped("x\xFFy", "x?y");                            /* not UTF-8 */
	expect_escaped("\xC0\xAF", "??");                           /* overlong '/' */
	expect_escaped("\xED\xA0\x80", "???");                      /* surrogate */
	expect_escaped("\xEF\xBF\xBE", "???");                      /* U+FFFE */
	expect_escaped("\xF4\x90\x80\x80", "????");                 /* above U+10FFFF */
	expect_escaped("end\xE2\x82", "end??");                     /* cut short */
}

static void fixed_point(void **state)
{
	(void)state;
	char buf[SVG_NUM_MAX];
	assert_string_equal(svg_num(buf, 12.34, 1), "12.3");
	assert_string_equal(svg_num(buf, -12.36, 1), "-12.4");
	assert_string_equal(svg_num(buf, 1.25, 1), "1.3");   /* halves away from zero */
	assert_string_equal(svg_num(buf, -1.25, 1), "-1.3");
	assert_string_equal(svg_num(buf, -0.04, 1), "0.0");  /* never "-0.0" */
	assert_string_equal(svg_num(buf, -0.0, 0), "0");
	assert_string_equal(svg_num(buf, 701.955000865, 3), "701.955");
	assert_string_equal(svg_num(buf, 0.05, 3), "0.050");
	assert_string_equal(svg_num(buf, 1188.0, 0), "1188");
	assert_string_equal(svg_num(buf, NAN, 1), "0.0");
	assert_string_equal(svg_num(buf, INFINITY, 2), "0.00");
}

static void document_frame(void **state)
{
	(void)state;
	char *buf = NULL;
	size_t len = 0;
	FILE *f = open_memstream(&buf, &len);
	assert_non_null(f);
	svg_begin(f, 1188, 840, 4.0, "sheet", "a < b", ".x { }\n");
	svg_end(f);
	fclose(f);
	assert_non_null(strstr(buf, "width=\"297.0mm\" height=\"210.0mm\" viewBox=\"0 0 1188 840\""));
	assert_non_null(strstr(buf, "<title>a &lt; b</title>"));
	assert_non_null(strstr(buf, "</svg>\n"));
	free(buf);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(markup_characters),
		cmocka_unit_test(utf8_and_controls),
		cmocka_unit_test(fixed_point),
		cmocka_unit_test(document_frame),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
