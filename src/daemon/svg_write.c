/*
 * svg_write: escaping, fixed-point numbers and the document frame
 * (contract in svg_write.h).
 *
 * The UTF-8 check follows RFC 3629: no overlong forms, no surrogates,
 * nothing above U+10FFFF; XML 1.0 (section 2.2) further excludes the C0
 * controls other than tab, newline and carriage return, and U+FFFE and
 * U+FFFF.  Tabs and newlines are replaced as well: in an attribute a
 * parser would turn them into spaces anyway.
 */
#include "svg_write.h"

#include <math.h>
#include <stdint.h>
#include <string.h>

const char *svg_num(char buf[SVG_NUM_MAX], double v, int decimals)
{
	static const long scale_of[] = {1, 10, 100, 1000, 10000, 100000, 1000000};
	if (decimals < 0)
		decimals = 0;
	if (decimals > 6)
		decimals = 6;
	if (!isfinite(v) || fabs(v) > 1e12)
		v = 0.0;
	long scale = scale_of[decimals];
	long long units = llround(v * (double)scale);
	const char *sign = units < 0 ? "-" : "";
	unsigned long long mag = units < 0 ? (unsigned long long)(-units) : (unsigned long long)units;
	if (decimals == 0)
		snprintf(buf, SVG_NUM_MAX, "%s%llu", sign, mag);
	else
		snprintf(buf, SVG_NUM_MAX, "%s%llu.%0*llu", sign, mag / (unsigned long long)scale,
			 decimals, mag % (unsigned long long)scale);
	return buf;
}

/* Length of the well-formed UTF-8 character XML allows at s, or 0. */
static size_t xml_char_length(const unsigned char *s)
{
	unsigned c = s[0];
	if (c < 0x80)
		return c >= 0x20 ? 1 : 0;
	size_t n;
	uint32_t cp, min;
	if ((c & 0xE0) == 0xC0) {
		n = 2, cp = c & 0x1F, min = 0x80;
	} else if ((c & 0xF0) == 0xE0) {
		n = 3, cp = c & 0x0F, min = 0x800;
	} else if ((c & 0xF8) == 0xF0) {
		n = 4, cp = c & 0x07, min = 0x10000;
	} else {
		return 0;
	}
	for (size_t i = 1; i < n; i++) {
		if ((s[i] & 0xC0) != 0x80)
			return 0;
		cp = (cp << 6) | (s[i] & 0x3F);
	}
	if (cp < min || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF) ||
	    cp == 0xFFFE || cp == 0xFFFF)
		return 0;
	return n;
}

void svg_escaped(FILE *f, const char *text)
{
	const unsigned char *s = (const unsigned char *)text;
	while (*s) {
		switch (*s) {
		case '&':
			fputs("&amp;", f);
			break;
		case '<':
			fputs("&lt;", f);
			break;
		case '>':
			fputs("&gt;", f);
			break;
		case '"':
			fputs("&quot;", f);
			break;
		case '\'':
			fputs("&apos;", f);
			break;
		default: {
			size_t n = xml_char_length(s);
			if (n == 0) {
				fputc('?', f);
				break;
			}
			fwrite(s, 1, n, f);
			s += n;
			continue;
		}
		}
		s++;
	}
}

double svg_text_width(const char *text, double font_size)
{
	/* DejaVu Sans: digits 0.64 em, '.' and '/' about 0.34 em; other
	 * characters are taken as wide as digits */
	double em = 0.0;
	for (const unsigned char *s = (const unsigned char *)text; *s; s++) {
		if ((*s & 0xC0) == 0x80)
			continue; /* a UTF-8 continuation byte: counted with its lead */
		em += (*s == '.' || *s == '/' || *s == ' ' || *s == ':') ? 0.36 : 0.66;
	}
	return em * font_size;
}

void svg_begin(FILE *f, double width, double height, double units_per_mm,
	       const char *css_class, const char *title, const char *style)
{
	char w[SVG_NUM_MAX], h[SVG_NUM_MAX], mw[SVG_NUM_MAX], mh[SVG_NUM_MAX];
	svg_num(w, width, 0);
	svg_num(h, height, 0);
	fputs("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n", f);
	if (units_per_mm > 0.0)
		fprintf(f, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%smm\" height=\"%smm\"",
			svg_num(mw, width / units_per_mm, 1), svg_num(mh, height / units_per_mm, 1));
	else
		fprintf(f, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%s\" height=\"%s\"", w, h);
	fprintf(f, " viewBox=\"0 0 %s %s\" class=\"%s\">\n<title>", w, h, css_class);
	svg_escaped(f, title);
	fprintf(f, "</title>\n<style>\n%s</style>\n", style);
}

void svg_end(FILE *f)
{
	fputs("</svg>\n", f);
}
