/*
 * lattice_layout: positions, edges and faces of a lattice drawing
 * (contract in lattice_layout.h).
 *
 * Why these directions: n unit vectors at equal angles sum to zero, and a
 * sum of some of them vanishes or repeats another only when the angles
 * contain a regular polygon of fewer sides, which needs n with a proper
 * factor.  Odd n = 3, 5, 7, 11 and, with the centre seed, even n = 4, 6,
 * 8, 12 (n - 1 on the circle) give every tone a spot of its own; 9 and 10
 * seeds have coinciding sums, which the nudge separates.  Exact
 * coincidences are sums that differ only by rounding, hence the epsilon.
 */
#include "latticed/lattice_layout.h"

#include <math.h>
#include <string.h>

#define SAME_SPOT 1e-6
/* How far a nudged tone moves, as a share of the closest distinct spots. */
#define NUDGE_SHARE 0.3

static const double two_pi = 6.283185307179586;

static int popcount16(unsigned v)
{
	return __builtin_popcount(v & 0xFFFFu);
}

static int lowest_seed(unsigned v)
{
	return __builtin_ctz(v);
}

static double distance(struct layout_point a, struct layout_point b)
{
	return hypot(a.x - b.x, a.y - b.y);
}

static void place_directions(struct lattice_layout *l, int n)
{
	int on_circle = n % 2 == 0 ? n - 1 : n;
	l->centre_seed = n % 2 == 0 ? 0 : -1;
	for (int i = 0, j = 0; i < n; i++) {
		if (i == l->centre_seed) {
			l->seed_direction[i] = (struct layout_point){0.0, 0.0};
			continue;
		}
		/* from the top, clockwise */
		double a = two_pi / 4.0 - two_pi * j / on_circle;
		l->seed_direction[i] = (struct layout_point){cos(a), sin(a)};
		j++;
	}
}

static void place_tones(struct lattice_layout *l, const struct lattice *lat)
{
	for (int t = 0; t < lat->tone_count; t++) {
		struct layout_point p = {0.0, 0.0};
		for (int i = 0; i < lat->spec.seed_count; i++) {
			if (lat->tones[t].seeds & (1u << i)) {
				p.x += l->seed_direction[i].x;
				p.y += l->seed_direction[i].y;
			}
		}
		l->position[t] = p;
	}
}

/*
 * Every group of tones on one spot moves onto a circle around it, first
 * tone at the top, clockwise; the circle is small enough to stay clear of
 * the neighbouring spots.
 */
static void nudge_coinciding(struct lattice_layout *l)
{
	int spot_of[LATTICE_MAX_TONES];
	int group_size[LATTICE_MAX_TONES] = {0};
	double closest = 0.0;
	for (int t = 0; t < l->tone_count; t++) {
		spot_of[t] = t;
		for (int u = 0; u < t; u++) {
			double d = distance(l->position[t], l->position[u]);
			if (d < SAME_SPOT) {
				spot_of[t] = spot_of[u];
				break;
			}
			if (closest == 0.0 || d < closest)
				closest = d;
		}
		group_size[spot_of[t]]++;
	}
	double radius = NUDGE_SHARE * (closest > 0.0 ? closest : 1.0);
	int seen[LATTICE_MAX_TONES] = {0};
	struct layout_point spot_centre[LATTICE_MAX_TONES];
	memcpy(spot_centre, l->position, sizeof(l->position[0]) * (size_t)l->tone_count);
	for (int t = 0; t < l->tone_count; t++) {
		int spot = spot_of[t], m = group_size[spot];
		if (m < 2)
			continue;
		double a = two_pi / 4.0 - two_pi * seen[spot]++ / m;
		struct layout_point centre = spot_centre[spot];
		l->position[t].x = centre.x + radius * cos(a);
		l->position[t].y = centre.y + radius * sin(a);
		l->nudged_count++;
	}
}

static void find_edges(struct lattice_layout *l, const struct lattice *lat)
{
	for (int a = 0; a < lat->tone_count; a++) {
		for (int b = a + 1; b < lat->tone_count; b++) {
			unsigned sa = lat->tones[a].seeds, sb = lat->tones[b].seeds;
			unsigned differ = sa ^ sb;
			if (popcount16(differ) != 2 || popcount16(sa & differ) != 1)
				continue;
			struct layout_edge *e = &l->edges[l->edge_count++];
			e->a = (int16_t)a;
			e->b = (int16_t)b;
			e->seed_a = (int8_t)lowest_seed(sa & differ);
			e->seed_b = (int8_t)lowest_seed(sb & differ);
		}
	}
}

/* Insertion sort by angle around the centroid; ties keep chord order. */
static void order_face(struct layout_face *f, const struct lattice_layout *l)
{
	int m = f->vertex_count;
	struct layout_point c = {0.0, 0.0};
	for (int i = 0; i < m; i++) {
		c.x += l->position[f->vertices[i]].x / m;
		c.y += l->position[f->vertices[i]].y / m;
	}
	double angle[LATTICE_MAX_CHORD_TONES];
	for (int i = 0; i < m; i++) {
		struct layout_point p = l->position[f->vertices[i]];
		angle[i] = atan2(p.y - c.y, p.x - c.x);
	}
	for (int i = 1; i < m; i++) {
		int16_t v = f->vertices[i];
		double a = angle[i];
		int j = i - 1;
		while (j >= 0 && angle[j] > a) {
			f->vertices[j + 1] = f->vertices[j];
			angle[j + 1] = angle[j];
			j--;
		}
		f->vertices[j + 1] = v;
		angle[j + 1] = a;
	}
}

static void find_faces(struct lattice_layout *l, const struct lattice *lat)
{
	for (int c = 0; c < lat->chord_count; c++) {
		const struct chord *ch = &lat->chords[c];
		struct layout_face *f = &l->faces[l->face_count++];
		f->chord = (int16_t)c;
		f->vertex_count = ch->tone_count;
		memcpy(f->vertices, ch->tones, sizeof(ch->tones[0]) * (size_t)ch->tone_count);
		if (f->vertex_count > 2)
			order_face(f, l);
	}
}

static void find_bounds(struct lattice_layout *l)
{
	l->low = l->high = (struct layout_point){0.0, 0.0};
	for (int t = 0; t < l->tone_count; t++) {
		struct layout_point p = l->position[t];
		if (t == 0 || p.x < l->low.x)
			l->low.x = p.x;
		if (t == 0 || p.y < l->low.y)
			l->low.y = p.y;
		if (t == 0 || p.x > l->high.x)
			l->high.x = p.x;
		if (t == 0 || p.y > l->high.y)
			l->high.y = p.y;
	}
}

void lattice_layout_build(struct lattice_layout *out, const struct lattice *lat)
{
	memset(out, 0, sizeof *out);
	out->seed_count = lat->spec.seed_count;
	out->tone_count = lat->tone_count;
	place_directions(out, lat->spec.seed_count);
	place_tones(out, lat);
	nudge_coinciding(out);
	find_edges(out, lat);
	find_faces(out, lat);
	find_bounds(out);
}

double lattice_layout_fit_scale(const struct lattice_layout *layout,
				double box_w, double box_h)
{
	double scale = 0.0;
	for (int a = 0; a < layout->tone_count; a++) {
		for (int b = a + 1; b < layout->tone_count; b++) {
			double dx = fabs(layout->position[a].x - layout->position[b].x);
			double dy = fabs(layout->position[a].y - layout->position[b].y);
			/* apart when either axis clears its box size */
			double need_x = dx > 0.0 ? box_w / dx : INFINITY;
			double need_y = dy > 0.0 ? box_h / dy : INFINITY;
			double need = need_x < need_y ? need_x : need_y;
			if (need > scale)
				scale = need;
		}
	}
	return scale;
}
