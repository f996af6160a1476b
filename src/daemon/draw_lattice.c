/*
 * draw_lattice: the lattice as SVG.  Geometry comes from the core
 * (lattice_layout); this file decides sizes, styles and text.
 *
 * Each tone is a white box holding three lines (seeds, ratio, cents), so a
 * label can never be crossed by an edge or hidden by a face.  The scale is
 * the smallest at which no two boxes touch, with room to spare, so small
 * sets (a hexany) and large ones (an eikosany) read alike; a set too dense
 * for that (hundreds of tones) is capped in size and may overlap.  Faces
 * are drawn first, inset a little towards their centre so that a
 * harmonic and a subharmonic face sharing an edge both show their outline:
 * harmonic solid with one hatching, subharmonic dashed with the other, so
 * the two kinds differ in print without colour.  Then edges, then tones.
 */
#include "draw_cmd.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/lattice_layout.h"
#include "svg_write.h"

#define MARGIN 40.0
#define SEEDS_FONT 21.0
#define RATIO_FONT 20.0
#define CENTS_FONT 16.0
#define BOX_PAD 10.0
#define BOX_GAP 16.0        /* least room between two boxes, before SPARE */
#define SPARE 1.3           /* how much wider than just clear of each other */
#define MIN_UNIT_BOXES 3.0  /* a seed step is at least this many boxes long */
#define MAX_EXTENT 7000.0   /* px, the widest drawing of the dense sets */
#define FACE_INSET 0.64     /* share of the distance to the centroid kept */
#define TITLE_HEIGHT 132.0
#define LEGEND_HEIGHT 200.0
#define MIN_WIDTH 1000.0
#define DENSE_FACES 12

static const char style[] =
	".latticed-lattice text { font-family: 'DejaVu Sans', Verdana, Arial, sans-serif; fill: #111; }\n"
	".latticed-lattice .heading { font-size: 30px; font-weight: bold; }\n"
	".latticed-lattice .subheading { font-size: 20px; }\n"
	".latticed-lattice .edge { stroke: #444; stroke-width: 2.5; }\n"
	".latticed-lattice .chord { stroke-width: 3; stroke-linejoin: round; }\n"
	".latticed-lattice .chord.harmonic { fill: url(#latticed-fill-harmonic); stroke: #b34700; }\n"
	".latticed-lattice .chord.subharmonic { fill: url(#latticed-fill-subharmonic); stroke: #1646b8; stroke-dasharray: 12 7; }\n"
	".latticed-lattice .dense .chord { stroke-width: 1.8; stroke-opacity: 0.6; fill-opacity: 0.45; }\n"
	".latticed-lattice .chord.lit { stroke-width: 7; stroke-opacity: 1; }\n"
	".latticed-lattice .chord.harmonic.lit { fill: #ff9a3d; fill-opacity: 0.55; }\n"
	".latticed-lattice .chord.subharmonic.lit { fill: #5b8cff; fill-opacity: 0.55; }\n"
	".latticed-lattice .tone rect { fill: #fff; stroke: #111; stroke-width: 2.5; }\n"
	".latticed-lattice .tone.lit rect { fill: #ffd21f; stroke-width: 5; }\n"
	".latticed-lattice .tone text { text-anchor: middle; }\n"
	".latticed-lattice .tone .seeds { font-size: 21px; font-weight: bold; }\n"
	".latticed-lattice .tone .ratio { font-size: 20px; }\n"
	".latticed-lattice .tone .cents { font-size: 16px; fill: #333; }\n"
	".latticed-lattice .legend text { font-size: 18px; }\n"
	".latticed-lattice .compass line { stroke: #111; stroke-width: 2; }\n"
	".latticed-lattice .compass text { font-size: 17px; font-weight: bold; text-anchor: middle; }\n";

/* Hatching: harmonic rising, subharmonic falling, each on a pale ground. */
static const char patterns[] =
	"<defs>\n"
	"<pattern id=\"latticed-fill-harmonic\" width=\"14\" height=\"14\" patternUnits=\"userSpaceOnUse\""
	" patternTransform=\"rotate(45)\">"
	"<rect width=\"14\" height=\"14\" fill=\"#ffb066\" fill-opacity=\"0.16\"/>"
	"<line x1=\"0\" y1=\"0\" x2=\"0\" y2=\"14\" stroke=\"#b34700\" stroke-width=\"2.5\""
	" stroke-opacity=\"0.45\"/></pattern>\n"
	"<pattern id=\"latticed-fill-subharmonic\" width=\"14\" height=\"14\" patternUnits=\"userSpaceOnUse\""
	" patternTransform=\"rotate(-45)\">"
	"<rect width=\"14\" height=\"14\" fill=\"#7aa2ff\" fill-opacity=\"0.16\"/>"
	"<circle cx=\"7\" cy=\"7\" r=\"2.2\" fill=\"#1646b8\" fill-opacity=\"0.5\"/></pattern>\n"
	"</defs>\n";

const char *draw_lattice_style(void)
{
	return style;
}

/* Where things go on the page: layout units to px. */
struct frame {
	double scale;
	double box_w, box_h;
	double left, top;          /* px of the layout's low.x, high.y */
	double width, height;      /* of the whole drawing */
	double drawing_bottom;
	const struct lattice_layout *layout;
};

static double px_x(const struct frame *fr, double x)
{
	return fr->left + (x - fr->layout->low.x) * fr->scale;
}

static double px_y(const struct frame *fr, double y)
{
	return fr->top + (fr->layout->high.y - y) * fr->scale;
}

struct tone_text {
	char seeds[LATTICE_LABEL_MAX];
	char ratio[RATIO_TEXT_MAX];
	char cents[SVG_NUM_MAX + 8];
};

static void tone_text_of(const struct lattice *lat, int t, struct tone_text *out)
{
	char num[SVG_NUM_MAX];
	lattice_label(&lat->spec, lat->tones[t].seeds, out->seeds, sizeof out->seeds);
	ratio_format(lat->tones[t].ratio, out->ratio, sizeof out->ratio);
	snprintf(out->cents, sizeof out->cents, "%s\xC2\xA2", svg_num(num, lat->tones[t].cents, 1));
}

static void measure_boxes(const struct lattice *lat, struct frame *fr)
{
	double widest = svg_text_width("0000.0c", CENTS_FONT);
	for (int t = 0; t < lat->tone_count; t++) {
		struct tone_text tt;
		tone_text_of(lat, t, &tt);
		double w = svg_text_width(tt.seeds, SEEDS_FONT);
		if (w > widest)
			widest = w;
		w = svg_text_width(tt.ratio, RATIO_FONT);
		if (w > widest)
			widest = w;
	}
	fr->box_w = widest + 2 * BOX_PAD;
	fr->box_h = SEEDS_FONT + RATIO_FONT + CENTS_FONT + 12.0 + 2 * BOX_PAD;
}

static void place_frame(const struct lattice *lat, const struct lattice_layout *layout,
			struct frame *fr)
{
	fr->layout = layout;
	measure_boxes(lat, fr);
	double fit = lattice_layout_fit_scale(layout, fr->box_w + BOX_GAP, fr->box_h + BOX_GAP);
	double box = fr->box_w > fr->box_h ? fr->box_w : fr->box_h;
	double scale = fit * SPARE;
	if (scale < MIN_UNIT_BOXES * box)
		scale = MIN_UNIT_BOXES * box;
	double extent_x = layout->high.x - layout->low.x, extent_y = layout->high.y - layout->low.y;
	double extent = extent_x > extent_y ? extent_x : extent_y;
	if (extent > 0.0 && scale * extent > MAX_EXTENT)
		scale = MAX_EXTENT / extent;
	fr->scale = scale;
	double drawing_w = extent_x * scale + fr->box_w;
	fr->width = drawing_w + 2 * MARGIN;
	if (fr->width < MIN_WIDTH)
		fr->width = MIN_WIDTH;
	fr->left = (fr->width - drawing_w) / 2 + fr->box_w / 2;
	fr->top = TITLE_HEIGHT + MARGIN + fr->box_h / 2;
	fr->drawing_bottom = fr->top + extent_y * scale + fr->box_h / 2 + MARGIN;
	fr->height = fr->drawing_bottom + LEGEND_HEIGHT;
}

static void write_points(FILE *f, const struct frame *fr, const struct layout_face *face)
{
	const struct lattice_layout *l = fr->layout;
	double cx = 0.0, cy = 0.0;
	int m = face->vertex_count;
	for (int i = 0; i < m; i++) {
		cx += l->position[face->vertices[i]].x / m;
		cy += l->position[face->vertices[i]].y / m;
	}
	double keep = m > 2 ? FACE_INSET : 1.0;
	for (int i = 0; i < m; i++) {
		struct layout_point p = l->position[face->vertices[i]];
		char x[SVG_NUM_MAX], y[SVG_NUM_MAX];
		fprintf(f, "%s%s,%s", i ? " " : "", svg_num(x, px_x(fr, cx + (p.x - cx) * keep), 1),
			svg_num(y, px_y(fr, cy + (p.y - cy) * keep), 1));
	}
}

static void write_chord_facts(FILE *f, const struct lattice *lat, int c)
{
	const struct chord *ch = &lat->chords[c];
	char label[LATTICE_LABEL_MAX];
	fputs(" data-seeds=\"", f);
	svg_escaped(f, ch->seeds ? lattice_label(&lat->spec, ch->seeds, label, sizeof label) : "");
	fputs("\" data-tones=\"", f);
	for (int i = 0; i < ch->tone_count; i++)
		fprintf(f, "%s%d", i ? " " : "", ch->tones[i]);
	fputs("\" data-proportion=\"", f);
	for (int i = 0; i < ch->tone_count && ch->proportion_ok; i++)
		fprintf(f, "%s%lld", i ? ":" : "", (long long)ch->proportion[i]);
	fputc('"', f);
}

/* "harmonic chord 4:5:6 on 7: 1.7 5.7 3.7" */
static void write_chord_title(FILE *f, const struct lattice *lat, int c)
{
	const struct chord *ch = &lat->chords[c];
	char label[LATTICE_LABEL_MAX];
	fprintf(f, "<title>%s chord ", ch->kind == CHORD_HARMONIC ? "harmonic" : "subharmonic");
	for (int i = 0; i < ch->tone_count && ch->proportion_ok; i++)
		fprintf(f, "%s%lld", i ? ":" : "", (long long)ch->proportion[i]);
	fputs(ch->kind == CHORD_HARMONIC ? " sharing " : " inside ", f);
	svg_escaped(f, ch->seeds ? lattice_label(&lat->spec, ch->seeds, label, sizeof label) : "no seed");
	fputs(":", f);
	for (int i = 0; i < ch->tone_count; i++) {
		fputc(' ', f);
		svg_escaped(f, lattice_label(&lat->spec, lat->tones[ch->tones[i]].seeds, label,
					     sizeof label));
	}
	fputs("</title>", f);
}

/* Subharmonic faces first, so the harmonic ones' solid outlines lie on top. */
static void write_faces(FILE *f, const struct frame *fr, const struct lattice *lat)
{
	/* past a dozen faces they overlap everywhere: fainter, so edges and a
	 * lit chord stand out */
	fprintf(f, "<g class=\"chords%s\">\n", fr->layout->face_count > DENSE_FACES ? " dense" : "");
	for (int pass = 0; pass < 2; pass++) {
		enum chord_kind kind = pass == 0 ? CHORD_SUBHARMONIC : CHORD_HARMONIC;
		for (int i = 0; i < fr->layout->face_count; i++) {
			const struct layout_face *face = &fr->layout->faces[i];
			const struct chord *ch = &lat->chords[face->chord];
			if (ch->kind != kind)
				continue;
			const char *name = kind == CHORD_HARMONIC ? "harmonic" : "subharmonic";
			fprintf(f, "<polygon id=\"chord-%d\" class=\"chord %s\" data-chord=\"%d\""
				" data-kind=\"%s\"", face->chord, name, face->chord, name);
			write_chord_facts(f, lat, face->chord);
			fputs(" points=\"", f);
			write_points(f, fr, face);
			fputs("\">", f);
			write_chord_title(f, lat, face->chord);
			fputs("</polygon>\n", f);
		}
	}
	fputs("</g>\n", f);
}

static void write_edges(FILE *f, const struct frame *fr)
{
	const struct lattice_layout *l = fr->layout;
	fputs("<g class=\"edges\">\n", f);
	for (int e = 0; e < l->edge_count; e++) {
		const struct layout_edge *ed = &l->edges[e];
		char x1[SVG_NUM_MAX], y1[SVG_NUM_MAX], x2[SVG_NUM_MAX], y2[SVG_NUM_MAX];
		fprintf(f, "<line class=\"edge\" data-tones=\"%d %d\" x1=\"%s\" y1=\"%s\" x2=\"%s\""
			" y2=\"%s\"/>\n", ed->a, ed->b,
			svg_num(x1, px_x(fr, l->position[ed->a].x), 1),
			svg_num(y1, px_y(fr, l->position[ed->a].y), 1),
			svg_num(x2, px_x(fr, l->position[ed->b].x), 1),
			svg_num(y2, px_y(fr, l->position[ed->b].y), 1));
	}
	fputs("</g>\n", f);
}

static void write_tone(FILE *f, const struct frame *fr, const struct lattice *lat, int t)
{
	struct tone_text tt;
	tone_text_of(lat, t, &tt);
	char x[SVG_NUM_MAX], y[SVG_NUM_MAX], w[SVG_NUM_MAX], h[SVG_NUM_MAX], cents[SVG_NUM_MAX];
	double cx = px_x(fr, fr->layout->position[t].x), cy = px_y(fr, fr->layout->position[t].y);
	double top = cy - fr->box_h / 2;
	fprintf(f, "<g id=\"tone-%d\" class=\"tone\" data-tone=\"%d\" data-seeds=\"", t, t);
	svg_escaped(f, tt.seeds);
	fprintf(f, "\" data-ratio=\"%s\" data-cents=\"%s\">", tt.ratio,
		svg_num(cents, lat->tones[t].cents, 3));
	fputs("<title>tone ", f);
	fprintf(f, "%d: ", t);
	svg_escaped(f, tt.seeds);
	fprintf(f, " = %s, %s cents", tt.ratio, cents);
	if (lat->tones[t].merged_count)
		fprintf(f, " (and %d merged product%s)", lat->tones[t].merged_count,
			lat->tones[t].merged_count == 1 ? "" : "s");
	fputs("</title>", f);
	fprintf(f, "<rect x=\"%s\" y=\"%s\" width=\"%s\" height=\"%s\" rx=\"8\"/>",
		svg_num(x, cx - fr->box_w / 2, 1), svg_num(y, top, 1), svg_num(w, fr->box_w, 1),
		svg_num(h, fr->box_h, 1));
	svg_num(x, cx, 1);
	fprintf(f, "<text class=\"seeds\" x=\"%s\" y=\"%s\">", x,
		svg_num(y, top + BOX_PAD + SEEDS_FONT * 0.85, 1));
	svg_escaped(f, tt.seeds);
	fprintf(f, "</text><text class=\"ratio\" x=\"%s\" y=\"%s\">%s</text>", x,
		svg_num(y, top + BOX_PAD + SEEDS_FONT + 6 + RATIO_FONT * 0.85, 1), tt.ratio);
	fprintf(f, "<text class=\"cents\" x=\"%s\" y=\"%s\">%s</text></g>\n", x,
		svg_num(y, top + BOX_PAD + SEEDS_FONT + RATIO_FONT + 12 + CENTS_FONT * 0.85, 1),
		tt.cents);
}

static void write_heading(FILE *f, const struct frame *fr, const struct config *cfg,
			  int preset, const struct lattice *lat)
{
	char text[512], x[SVG_NUM_MAX];
	const struct lattice_layout *l = fr->layout;
	int harmonic = lat->harmonic_count;
	svg_num(x, MARGIN, 0);
	draw_heading(text, sizeof text, lat);
	fprintf(f, "<text class=\"heading\" x=\"%s\" y=\"%s\">", x, "62");
	svg_escaped(f, text);
	draw_subheading(text, sizeof text, cfg, preset, lat);
	fprintf(f, "</text>\n<text class=\"subheading\" x=\"%s\" y=\"%s\">", x, "94");
	svg_escaped(f, text);
	int sub = lat->chord_count - harmonic;
	fprintf(f, "</text>\n<text class=\"subheading\" x=\"%s\" y=\"%s\">%d tone%s, %d edge%s,"
		" %d harmonic and %d subharmonic chord%s</text>\n", x, "122", lat->tone_count,
		lat->tone_count == 1 ? "" : "s", l->edge_count, l->edge_count == 1 ? "" : "s",
		harmonic, sub, sub == 1 ? "" : "s");
}

/* A small triangle standing for a face of either kind. */
static void legend_face(FILE *f, double x, double y, const char *kind)
{
	char x0[SVG_NUM_MAX], x1[SVG_NUM_MAX], x2[SVG_NUM_MAX], y0[SVG_NUM_MAX], y1[SVG_NUM_MAX];
	svg_num(x0, x, 0);
	svg_num(x1, x + 48, 0);
	svg_num(x2, x + 24, 0);
	svg_num(y0, y + 30, 0);
	svg_num(y1, y - 8, 0);
	fprintf(f, "<polygon class=\"chord %s sample\" points=\"%s,%s %s,%s %s,%s\"/>\n", kind,
		x0, y0, x1, y0, x2, y1);
}

static void legend_text(FILE *f, double x, double y, const char *text)
{
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX];
	fprintf(f, "<text x=\"%s\" y=\"%s\">", svg_num(a, x, 0), svg_num(b, y, 0));
	svg_escaped(f, text);
	fputs("</text>\n", f);
}

static void write_compass(FILE *f, const struct lattice *lat, const struct lattice_layout *l,
			  double cx, double cy)
{
	const double r = 52.0;
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX], c[SVG_NUM_MAX], d[SVG_NUM_MAX];
	fputs("<g class=\"compass\">\n", f);
	for (int i = 0; i < l->seed_count; i++) {
		struct layout_point dir = l->seed_direction[i];
		if (i == l->centre_seed)
			continue;
		fprintf(f, "<line x1=\"%s\" y1=\"%s\" x2=\"%s\" y2=\"%s\"/>", svg_num(a, cx, 1),
			svg_num(b, cy, 1), svg_num(c, cx + r * dir.x, 1), svg_num(d, cy - r * dir.y, 1));
		fprintf(f, "<text x=\"%s\" y=\"%s\">", svg_num(a, cx + (r + 16) * dir.x, 1),
			svg_num(b, cy - (r + 16) * dir.y + 6, 1));
		svg_escaped(f, lat->spec.seed_text[i]);
		fputs("</text>\n", f);
	}
	if (l->centre_seed >= 0) {
		fprintf(f, "<circle cx=\"%s\" cy=\"%s\" r=\"5\"/><text x=\"%s\" y=\"%s\">",
			svg_num(a, cx, 1), svg_num(b, cy, 1), svg_num(c, cx, 1), svg_num(d, cy + 24, 1));
		svg_escaped(f, lat->spec.seed_text[l->centre_seed]);
		fputs("</text>\n", f);
	}
	fputs("</g>\n", f);
}

static void write_legend(FILE *f, const struct frame *fr, const struct lattice *lat)
{
	double y = fr->drawing_bottom, x = MARGIN;
	int k = lat->spec.choose;
	char text[160];
	fputs("<g class=\"legend\">\n", f);
	legend_face(f, x, y + 4, "harmonic");
	if (k == 1)
		snprintf(text, sizeof text, "harmonic chord, solid: all the tones (one seed each)");
	else
		snprintf(text, sizeof text, "harmonic chord, solid: tones sharing %d seed%s", k - 1,
			 k - 1 == 1 ? "" : "s");
	legend_text(f, x + 64, y + 28, text);
	legend_face(f, x, y + 52, "subharmonic");
	snprintf(text, sizeof text, "subharmonic chord, dashed: tones inside %d seeds", k + 1);
	legend_text(f, x + 64, y + 76, text);
	char a[SVG_NUM_MAX], b[SVG_NUM_MAX], c[SVG_NUM_MAX];
	svg_num(b, y + 116, 0);
	fprintf(f, "<line class=\"edge\" x1=\"%s\" y1=\"%s\" x2=\"%s\" y2=\"%s\"/>\n",
		svg_num(a, x, 0), b, svg_num(c, x + 48, 0), b);
	legend_text(f, x + 64, y + 122, "edge: the two tones differ by one seed");
	legend_text(f, x, y + 164, "each box: seeds, ratio, cents above 1/1");
	double cx = fr->width - MARGIN - 110;
	fprintf(f, "<text x=\"%s\" y=\"%s\" text-anchor=\"middle\">seed directions</text>\n",
		svg_num(a, cx, 0), svg_num(b, y + 20, 0));
	write_compass(f, lat, fr->layout, cx, y + 110);
	fputs("</g>\n", f);
}

int draw_lattice_svg(FILE *f, const struct config *cfg, int preset, const struct tuning *t)
{
	const struct lattice *lat = &t->lattice;
	struct lattice_layout *layout = malloc(sizeof *layout);
	if (!layout)
		return -1;
	lattice_layout_build(layout, lat);
	struct frame fr;
	place_frame(lat, layout, &fr);
	char title[512];
	draw_heading(title, sizeof title, lat);
	svg_begin(f, fr.width, fr.height, 0.0, "latticed-lattice", title, style);
	fprintf(f, "<rect width=\"100%%\" height=\"100%%\" fill=\"#fff\"/>\n");
	fputs(patterns, f);
	write_heading(f, &fr, cfg, preset, lat);
	write_faces(f, &fr, lat);
	write_edges(f, &fr);
	fputs("<g class=\"tones\">\n", f);
	for (int i = 0; i < lat->tone_count; i++)
		write_tone(f, &fr, lat, i);
	fputs("</g>\n", f);
	write_legend(f, &fr, lat);
	svg_end(f);
	free(layout);
	return 0;
}
