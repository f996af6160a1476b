/*
 * svg_write: the pieces every SVG latticed writes is made of: text that is
 * safe inside XML, and numbers that are the same bytes everywhere.
 *
 * Text comes from the config (seed texts, preset names), so it is escaped
 * every time it goes out, in element content and in attribute values
 * alike; bytes that are not well-formed UTF-8, and characters XML 1.0 does
 * not allow at all (controls), become '?', so a parser never rejects the
 * file.  Numbers are written with integer arithmetic, never printf's %f, so
 * the output does not depend on the locale or on how a value rounds in the
 * last bit (a -0.0 prints as 0).
 */
#ifndef LATTICED_SVG_WRITE_H
#define LATTICED_SVG_WRITE_H

#include <stdio.h>

#define SVG_NUM_MAX 48

/* v with `decimals` (0 to 6) digits after the point; returns buf. */
const char *svg_num(char buf[SVG_NUM_MAX], double v, int decimals);

/* Writes text escaped for XML content or a quoted attribute value. */
void svg_escaped(FILE *f, const char *text);

/* Text width guess in the same units as font_size, for a sans-serif face:
 * wide enough for digits, which are what labels are made of. */
double svg_text_width(const char *text, double font_size);

/* The opening <svg> element with its size (in px, or in mm when mm != 0,
 * the viewBox staying in units), the stylesheet and a <title>. */
void svg_begin(FILE *f, double width, double height, double units_per_mm,
	       const char *css_class, const char *title, const char *style);
void svg_end(FILE *f);

#endif
