/*
 * draw_keys: the keyboard chart as SVG, sized for A4 landscape (297 x 210
 * mm, 4 units to the millimetre) and growing downwards when the chords
 * need more room.  Which keys play what comes from the core (key_chart);
 * this file draws it.
 *
 * The keys look like a piano's: white keys in a row, black keys over the
 * boundaries between them, so a player finds the key by its place.  Each
 * key says its own name and number, the tone it plays (seeds and ratio)
 * and the 12-TET note its pitch is nearest, with the deviation in whole
 * cents; silent keys are grey.  A long stretch is cut into rows, at
 * keyboard period boundaries where a period fits a row.  Below: every
 * chord with the keys to press, low to high.
 */
#include "draw_cmd.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/key_chart.h"
#include "latticed/note_name.h"
#include "svg_write.h"

#define PAGE_W 1188.0
#define PAGE_H 840.0
#define UNITS_PER_MM 4.0
#define MARGIN 48.0
#define ROW_MAX_KEYS 24
#define WHITE_MAX 100.0
#define WHITE_BASE 76.0     /* the white key width the base font sizes are for */
#define FONT_GROWTH_MAX 1.3
#define BLACK_SHARE 0.8      /* black key width / white key width */
#define BLACK_H 124.0
#define WHITE_H (BLACK_H + 104.0)
#define ROW_LABEL_H 34.0
#define ROW_GAP 26.0
#define ROWS_TOP 176.0
#define ENTRY_H 46.0
#define PROPORTION_FONT 15.0
#define CHORD_FONT 14.0
#define ENTRY_GAP 28.0
#define MIN_FONT_SHARE 0.55

/* Base font sizes of a key's four lines; scaled down together to fit. */
static const double font_base[4] = {12.0, 16.0, 15.0, 13.0};

static const char style[] =
	".latticed-keys text { font-family: 'DejaVu Sans', Verdana, Arial, sans-serif; fill: #111; }\n"
	".latticed-keys .heading { font-size: 30px; font-weight: bold; }\n"
	".latticed-keys .subheading { font-size: 18px; }\n"
	".latticed-keys .key rect { stroke: #111; stroke-width: 1.5; }\n"
	".latticed-keys .key text { text-anchor: middle; }\n"
	".latticed-keys .key.white rect { fill: #fff; }\n"
	".latticed-keys .key.black rect { fill: #1c1c1c; }\n"
	".latticed-keys .key.black text { fill: #fff; }\n"
	".latticed-keys .key.white.silent rect { fill: #d0d0d0; }\n"
	".latticed-keys .key.black.silent rect { fill: #8c8c8c; }\n"
	".latticed-keys .key.silent text { fill: #4a4a4a; }\n"
	".latticed-keys .key.black.silent text { fill: #eee; }\n"
	".latticed-keys .key.lit.white rect { fill: #ffd21f; }\n"
	".latticed-keys .key.lit.black rect { fill: #b38f00; }\n"
	".latticed-keys .key .seeds { font-weight: bold; }\n"
	".latticed-keys .period text { font-size: 15px; }\n"
	".latticed-keys .period line { stroke: #111; stroke-width: 2; }\n"
	".latticed-keys .chords text { font-size: 14px; }\n"
	".latticed-keys .chords .proportion { font-weight: bold; font-size: 15px; }\n"
	".latticed-keys .chords .heading2 { font-size: 20px; font-weight: bold; }\n"
	".latticed-keys .swatch { stroke-width: 2.5; }\n"
	".latticed-keys .swatch.harmonic { fill: #ffd9b3; stroke: #b34700; }\n"
	".latticed-keys .swatch.subharmonic { fill: #cddcff; stroke: #1646b8; stroke-dasharray: 6 4; }\n";

struct key_text {
	char line[4][LATTICE_LABEL_MAX + 16];
};

struct chart_view {
	const struct lattice *lat;
	const struct keymap *map;
	const struct key_chart *chart;
	double white_w;
	double font_share;
	int row_keys;              /* keys per row */
	int rows;
};

static void format_cents(char *buf, size_t size, double cents)
{
	long whole = lround(cents);
	snprintf(buf, size, "%s%ld\xC2\xA2", whole > 0 ? "+" : "", whole);
}

static void key_text_of(const struct chart_view *v, int key, struct key_text *out)
{
	const struct key_pitch *kp = &v->map->keys[key];
	char name[NOTE_NAME_MAX], cents[16];
	snprintf(out->line[0], sizeof out->line[0], "%s %d", note_name(key, name, sizeof name), key);
	if (kp->state == KEY_SOUNDING) {
		const struct tone *t = &v->lat->tones[kp->tone];
		lattice_label(&v->lat->spec, t->seeds, out->line[1], sizeof out->line[1]);
		ratio_format(t->ratio, out->line[2], sizeof out->line[2]);
		format_cents(cents, sizeof cents, kp->cents_off);
		snprintf(out->line[3], sizeof out->line[3], "%s %s", note_name(kp->out_key, name, sizeof name),
			 cents);
	} else {
		snprintf(out->line[1], sizeof out->line[1], "silent");
		snprintf(out->line[2], sizeof out->line[2], "%s",
			 kp->state == KEY_OUT_OF_RANGE ? "no MIDI pitch" : "");
		out->line[3][0] = '\0';
	}
}

/* White keys a row of keys [first, first + count) spans, in white widths:
 * a black key at either end sticks out by half a white key. */
static double row_span(int first, int count)
{
	double whites = 0.0;
	for (int k = first; k < first + count; k++)
		whites += !note_is_black(k);
	if (count > 0 && note_is_black(first))
		whites += 0.5;
	if (count > 0 && note_is_black(first + count - 1))
		whites += 0.5;
	return whites;
}

static int rows_key_count(const struct key_chart *chart)
{
	if (chart->key_count <= ROW_MAX_KEYS)
		return chart->key_count > 0 ? chart->key_count : 1;
	if (chart->period_keys <= ROW_MAX_KEYS)
		return ROW_MAX_KEYS / chart->period_keys * chart->period_keys;
	return ROW_MAX_KEYS;
}

static void plan_view(struct chart_view *v)
{
	const struct key_chart *chart = v->chart;
	v->row_keys = rows_key_count(chart);
	v->rows = (chart->key_count + v->row_keys - 1) / v->row_keys;
	double widest_span = 1.0;
	for (int r = 0; r < v->rows; r++) {
		int first = chart->first_key + r * v->row_keys;
		int count = chart->key_count - r * v->row_keys;
		double span = row_span(first, count < v->row_keys ? count : v->row_keys);
		if (span > widest_span)
			widest_span = span;
	}
	v->white_w = (PAGE_W - 2 * MARGIN) / widest_span;
	if (v->white_w > WHITE_MAX)
		v->white_w = WHITE_MAX;
	/* the longest line of any key must fit a black key */
	double room = v->white_w * BLACK_SHARE - 8.0, need = 0.0;
	for (int k = chart->first_key; k < chart->first_key + chart->key_count; k++) {
		struct key_text kt;
		key_text_of(v, k, &kt);
		for (int i = 0; i < 4; i++) {
			double w = svg_text_width(kt.line[i], font_base[i]);
			if (w > need)
				need = w;
		}
	}
	double grow = v->white_w / WHITE_BASE;
	if (grow > FONT_GROWTH_MAX)
		grow = FONT_GROWTH_MAX;
	need *= grow;
	v->font_share = need > room ? grow * room / need : grow;
	if (v->font_share < MIN_FONT_SHARE)
		v->font_share = MIN_FONT_SHARE;
}

static void write_key(FILE *f, const struct chart_view *v, int key, double x, double y)
{
	const struct key_pitch *kp = &v->map->keys[key];
	bool black = note_is_black(key);
	double w = black ? v->white_w * BLACK_SHARE : v->white_w, h = black ? BLACK_H : WHITE_H;
	struct key_text kt;
	key_text_of(v, key, &kt);
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX], c[SVG_NUM_MAX], d[SVG_NUM_MAX], name[NOTE_NAME_MAX];
	fprintf(f, "<g id=\"key-%d\" class=\"key %s %s\" data-key=\"%d\" data-name=\"%s\"", key,
		black ? "black" : "white", kp->state == KEY_SOUNDING ? "sounding" : "silent", key,
		note_name(key, name, sizeof name));
	if (kp->state == KEY_SOUNDING) {
		fprintf(f, " data-tone=\"%d\" data-period=\"%d\" data-seeds=\"", kp->tone, kp->period);
		svg_escaped(f, kt.line[1]);
		svg_num(c, kp->cents_off, 3);
		fprintf(f, "\" data-ratio=\"%s\" data-nearest=\"%s\" data-cents=\"%s%s\"", kt.line[2],
			note_name(kp->out_key, name, sizeof name), c[0] == '-' ? "" : "+", c);
	}
	fprintf(f, "><rect x=\"%s\" y=\"%s\" width=\"%s\" height=\"%s\" rx=\"4\"/>",
		svg_num(a, x, 1), svg_num(b, y, 1), svg_num(c, w, 1), svg_num(d, h, 1));
	/* black keys carry their text from the top, white keys below the black ones */
	double line_y = black ? y + 8.0 : y + BLACK_H + 10.0;
	svg_num(a, x + w / 2, 1);
	static const char *const cls[4] = {"name", "seeds", "ratio", "near"};
	for (int i = 0; i < 4; i++) {
		double size = font_base[i] * v->font_share;
		line_y += size * 1.25;
		if (!kt.line[i][0])
			continue;
		fprintf(f, "<text class=\"%s\" x=\"%s\" y=\"%s\" style=\"font-size:%spx\">", cls[i], a,
			svg_num(b, line_y, 1), svg_num(c, size, 1));
		svg_escaped(f, kt.line[i]);
		fputs("</text>", f);
	}
	fputs("</g>\n", f);
}

/* x of each key's left edge in a row; black keys straddle a boundary. */
static double key_left(const struct chart_view *v, int first, int key, double x0)
{
	double whites = note_is_black(first) ? 0.5 : 0.0;
	for (int k = first; k < key; k++)
		whites += !note_is_black(k);
	if (note_is_black(key))
		return x0 + whites * v->white_w - v->white_w * BLACK_SHARE / 2;
	return x0 + whites * v->white_w;
}

static void write_period_marks(FILE *f, const struct chart_view *v, int first, int count,
			       double x0, double y)
{
	const struct key_chart *chart = v->chart;
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX], c[SVG_NUM_MAX];
	fputs("<g class=\"period\">", f);
	for (int k = first; k < first + count; k++) {
		int offset = k - chart->first_key;
		if (offset % chart->period_keys != 0)
			continue;
		double x = key_left(v, first, k, x0);
		fprintf(f, "<line x1=\"%s\" y1=\"%s\" x2=\"%s\" y2=\"%s\"/>", svg_num(a, x, 1),
			svg_num(b, y + 6, 1), a, svg_num(c, y + ROW_LABEL_H, 1));
		fprintf(f, "<text x=\"%s\" y=\"%s\">keyboard period %d from here</text>",
			svg_num(a, x + 6, 1), svg_num(b, y + 20, 1), offset / chart->period_keys + 1);
	}
	fputs("</g>\n", f);
}

/* White keys first, black keys over them.  Returns the row's bottom. */
static double write_row(FILE *f, const struct chart_view *v, int row, double y)
{
	const struct key_chart *chart = v->chart;
	int first = chart->first_key + row * v->row_keys;
	int count = chart->key_count - row * v->row_keys;
	if (count > v->row_keys)
		count = v->row_keys;
	double x0 = MARGIN;
	write_period_marks(f, v, first, count, x0, y);
	double keys_y = y + ROW_LABEL_H;
	fprintf(f, "<g class=\"keys\" data-row=\"%d\">\n", row);
	for (int pass = 0; pass < 2; pass++)
		for (int k = first; k < first + count; k++)
			if (note_is_black(k) == (pass == 1))
				write_key(f, v, k, key_left(v, first, k, x0), keys_y);
	fputs("</g>\n", f);
	return keys_y + WHITE_H + ROW_GAP;
}

static void chord_lines(const struct chart_view *v, int c, char *top, size_t top_size,
			char *bottom, size_t bottom_size)
{
	const struct lattice *lat = v->lat;
	const struct chord *ch = &lat->chords[c];
	const struct key_chart_chord *kc = &v->chart->chords[c];
	char label[LATTICE_LABEL_MAX], name[NOTE_NAME_MAX];
	int used = 0;
	for (int i = 0; i < ch->tone_count && ch->proportion_ok && used >= 0 && (size_t)used < top_size; i++)
		used += snprintf(top + used, top_size - (size_t)used, "%s%lld", i ? ":" : "",
				 (long long)ch->proportion[i]);
	if (used >= 0 && (size_t)used < top_size)
		snprintf(top + used, top_size - (size_t)used, "%s%s %s %s", used ? "  " : "",
			 ch->kind == CHORD_HARMONIC ? "harmonic," : "subharmonic,",
			 ch->kind == CHORD_HARMONIC ? "sharing" : "inside",
			 ch->seeds ? lattice_label(&lat->spec, ch->seeds, label, sizeof label) : "no seed");
	if (!kc->playable) {
		snprintf(bottom, bottom_size, "not on these keys: a tone has no key here");
		return;
	}
	used = 0;
	for (int i = 0; i < kc->key_count && used >= 0 && (size_t)used < bottom_size; i++)
		used += snprintf(bottom + used, bottom_size - (size_t)used, "%s%s", i ? " " : "",
				 note_name(kc->keys[i], name, sizeof name));
	for (int i = 0; i < kc->key_count && used >= 0 && (size_t)used < bottom_size; i++)
		used += snprintf(bottom + used, bottom_size - (size_t)used, "%s%d%s", i ? " " : "  (",
				 kc->keys[i], i + 1 == kc->key_count ? ")" : "");
	if (kc->inversion && used >= 0 && (size_t)used < bottom_size)
		snprintf(bottom + used, bottom_size - (size_t)used, ", inverted");
}

#define CHORD_LINE_MAX (LATTICE_MAX_CHORD_TONES * 24 + LATTICE_LABEL_MAX + 64)

static double entry_width(const struct chart_view *v)
{
	double widest = 200.0;
	for (int c = 0; c < v->lat->chord_count; c++) {
		char top[CHORD_LINE_MAX], bottom[CHORD_LINE_MAX];
		chord_lines(v, c, top, sizeof top, bottom, sizeof bottom);
		double w = svg_text_width(top, PROPORTION_FONT);
		if (svg_text_width(bottom, CHORD_FONT) > w)
			w = svg_text_width(bottom, CHORD_FONT);
		if (w > widest)
			widest = w;
	}
	return widest + 48.0;
}

static void write_chord_entry(FILE *f, const struct chart_view *v, int c, double x, double y)
{
	const struct chord *ch = &v->lat->chords[c];
	const struct key_chart_chord *kc = &v->chart->chords[c];
	const char *kind = ch->kind == CHORD_HARMONIC ? "harmonic" : "subharmonic";
	char top[CHORD_LINE_MAX], bottom[CHORD_LINE_MAX];
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX], c1[SVG_NUM_MAX], d[SVG_NUM_MAX], e[SVG_NUM_MAX];
	chord_lines(v, c, top, sizeof top, bottom, sizeof bottom);
	fprintf(f, "<g id=\"keys-chord-%d\" class=\"chord-keys %s\" data-chord=\"%d\" data-keys=\"",
		c, kind, c);
	for (int i = 0; i < kc->key_count; i++)
		fprintf(f, "%s%d", i ? " " : "", kc->keys[i]);
	svg_num(a, x, 1);
	svg_num(b, x + 24, 1);
	svg_num(c1, x + 12, 1);
	fprintf(f, "\"><polygon class=\"swatch %s\" points=\"%s,%s %s,%s %s,%s\"/>", kind, a,
		svg_num(d, y + 4, 1), b, d, c1, svg_num(e, y - 16, 1));
	fprintf(f, "<text class=\"proportion\" x=\"%s\" y=\"%s\">", svg_num(a, x + 34, 1),
		svg_num(b, y, 1));
	svg_escaped(f, top);
	fprintf(f, "</text><text x=\"%s\" y=\"%s\">", a, svg_num(b, y + 19, 1));
	svg_escaped(f, bottom);
	fputs("</text></g>\n", f);
}

static double chords_height(const struct chart_view *v, int *columns)
{
	double w = entry_width(v);
	int cols = (int)((PAGE_W - 2 * MARGIN) / w);
	*columns = cols < 1 ? 1 : cols;
	int per_column = (v->lat->chord_count + *columns - 1) / *columns;
	return 40.0 + per_column * ENTRY_H;
}

static void write_chords(FILE *f, const struct chart_view *v, double y, int columns)
{
	double col_w = (PAGE_W - 2 * MARGIN) / columns;
	int per_column = (v->lat->chord_count + columns - 1) / columns;
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX];
	fprintf(f, "<g class=\"chords\">\n<text class=\"heading2\" x=\"%s\" y=\"%s\">Chords: the"
		" keys to press, low to high (solid: harmonic, dashed: subharmonic)</text>\n",
		svg_num(a, MARGIN, 1), svg_num(b, y + 20, 1));
	for (int c = 0; c < v->lat->chord_count; c++) {
		int col = c / per_column, row = c % per_column;
		write_chord_entry(f, v, c, MARGIN + col * col_w, y + 40.0 + 20.0 + row * ENTRY_H);
	}
	fputs("</g>\n", f);
}

static void write_headings(FILE *f, const struct chart_view *v, const struct config *cfg,
			   int preset)
{
	const struct key_chart *chart = v->chart;
	const struct keymap_spec *keys = &v->map->spec;
	char text[512], lo[NOTE_NAME_MAX], hi[NOTE_NAME_MAX], hz[SVG_NUM_MAX];
	int last = chart->first_key + chart->key_count - 1;
	draw_heading(text, sizeof text, v->lat);
	fputs("<text class=\"heading\" x=\"48\" y=\"74\">", f);
	svg_escaped(f, text);
	fputs(", on the keys", f);
	draw_subheading(text, sizeof text, cfg, preset, v->lat);
	fputs("</text>\n<text class=\"subheading\" x=\"48\" y=\"104\">", f);
	svg_escaped(f, text);
	svg_num(hz, keys->root_hz, 4);
	/* 220.0000 -> 220, 65.4064 stays */
	char *end = hz + strlen(hz);
	while (end > hz && end[-1] == '0')
		*--end = '\0';
	if (end > hz && end[-1] == '.')
		end[-1] = '\0';
	fprintf(f, "; layout %s, 1/1 = %s Hz</text>\n", key_layout_name(keys->layout), hz);
	fprintf(f, "<text class=\"subheading\" x=\"48\" y=\"130\">keys %d to %d (%s to %s): %d"
		" keyboard period%s of %d keys; key 60 = C4</text>\n", chart->first_key, last,
		note_name(chart->first_key, lo, sizeof lo), note_name(last, hi, sizeof hi),
		chart->periods, chart->periods == 1 ? "" : "s", chart->period_keys);
	fputs("<text class=\"subheading\" x=\"48\" y=\"156\">each key: name and number, the tone"
		" it plays (seeds, ratio), the nearest 12-TET note and cents off it; grey: silent</text>\n",
		f);
}

int draw_keys_svg(FILE *f, const struct config *cfg, int preset, const struct tuning *t,
		  int periods)
{
	struct key_chart *chart = malloc(sizeof *chart);
	if (!chart)
		return -1;
	struct core_error err;
	if (!key_chart_build(chart, &t->lattice, &t->keymap, periods, &err)) {
		free(chart);
		return -1;
	}
	struct chart_view v = {.lat = &t->lattice, .map = &t->keymap, .chart = chart};
	plan_view(&v);
	int columns;
	double rows_bottom = ROWS_TOP + v.rows * (ROW_LABEL_H + WHITE_H + ROW_GAP);
	double height = rows_bottom + ENTRY_GAP + chords_height(&v, &columns) + MARGIN;
	if (height < PAGE_H)
		height = PAGE_H;
	char title[512];
	draw_heading(title, sizeof title, &t->lattice);
	svg_begin(f, PAGE_W, height, UNITS_PER_MM, "latticed-keys", title, style);
	fputs("<rect width=\"100%\" height=\"100%\" fill=\"#fff\"/>\n", f);
	write_headings(f, &v, cfg, preset);
	double y = ROWS_TOP;
	for (int r = 0; r < v.rows; r++)
		y = write_row(f, &v, r, y);
	write_chords(f, &v, y + ENTRY_GAP, columns);
	svg_end(f);
	free(chart);
	return 0;
}
