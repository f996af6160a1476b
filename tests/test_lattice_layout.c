/*
 * Tests of the lattice drawing geometry (src/core/lattice_layout.c): node,
 * edge and face counts against published facts about combination product
 * sets, the hexany's outline, distinct spots for every size from 2 to 12
 * seeds, and the box-fitting scale.
 *
 * Sources: the hexany (2 of 4 seeds) is an octahedron: 6 vertices, 12
 * edges, 8 triangular faces, 4 at each vertex (Wikipedia "Hexany";
 * Euler's formula V - E + F = 2); its chords are 4 harmonic and 4
 * subharmonic triads (common practice).  The 2-of-5 dekany has 5 tetrads
 * (tones sharing one seed) and 10 triads (tones inside three seeds); the
 * 3-of-6 eikosany has 15 and 15 tetrads (Wilson's CPS structure, from
 * memory).  In a k-of-n set, swapping one of a tone's k seeds for one of
 * the n - k others gives its k (n - k) neighbours (combinatorics).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "latticed/lattice_layout.h"

static const double pi = 3.14159265358979323846;

static struct lattice lat;            /* large: keep off the stack */
static struct lattice_layout layout;

static const char *const primes[] = {"1", "3", "5", "7", "11", "13", "17", "19", "23", "29", "31", "37"};

static void build(int n, int k)
{
	struct lattice_spec s;
	memset(&s, 0, sizeof s);
	s.seed_count = n;
	for (int i = 0; i < n; i++) {
		assert_true(ratio_parse(primes[i], &s.seeds[i]));
		strcpy(s.seed_text[i], primes[i]);
	}
	s.choose = k;
	s.period = (struct ratio){2, 1};
	struct core_error err;
	if (!lattice_build(&lat, &s, &err))
		fail_msg("lattice_build %d of %d: %s", k, n, err.text);
	lattice_layout_build(&layout, &lat);
}

static int faces_of(enum chord_kind kind, int size)
{
	int count = 0;
	for (int f = 0; f < layout.face_count; f++) {
		const struct chord *ch = &lat.chords[layout.faces[f].chord];
		if (ch->kind == kind && layout.faces[f].vertex_count == size)
			count++;
	}
	return count;
}

static int degree(int tone)
{
	int d = 0;
	for (int e = 0; e < layout.edge_count; e++)
		d += layout.edges[e].a == tone || layout.edges[e].b == tone;
	return d;
}

static double closest_pair(void)
{
	double best = INFINITY;
	for (int a = 0; a < layout.tone_count; a++)
		for (int b = a + 1; b < layout.tone_count; b++) {
			double d = hypot(layout.position[a].x - layout.position[b].x,
					 layout.position[a].y - layout.position[b].y);
			if (d < best)
				best = d;
		}
	return best;
}

static void hexany_is_an_octahedron(void **state)
{
	(void)state;
	build(4, 2);
	assert_int_equal(layout.tone_count, 6);
	assert_int_equal(layout.edge_count, 12);
	assert_int_equal(layout.face_count, 8);
	assert_int_equal(faces_of(CHORD_HARMONIC, 3), 4);
	assert_int_equal(faces_of(CHORD_SUBHARMONIC, 3), 4);
	for (int t = 0; t < 6; t++)
		assert_int_equal(degree(t), 4);
	/* V - E + F = 2 */
	assert_int_equal(layout.tone_count - layout.edge_count + layout.face_count, 2);
	assert_int_equal(layout.nudged_count, 0);
}

static void hexany_outline_is_a_hexagon(void **state)
{
	(void)state;
	build(4, 2);
	/* six tones on the unit circle, 60 degrees apart (our rule: seed 1 at
	 * the centre, 3 5 7 at 120 degrees, as the octahedron is drawn seen
	 * along an axis through two faces) */
	double angles[6];
	for (int t = 0; t < 6; t++) {
		struct layout_point p = layout.position[t];
		assert_true(fabs(hypot(p.x, p.y) - 1.0) < 1e-9);
		angles[t] = atan2(p.y, p.x) * 180.0 / pi;
	}
	for (int a = 0; a < 6; a++)
		for (int b = a + 1; b < 6; b++) {
			double gap = fmod(fabs(angles[a] - angles[b]) + 1e-6, 60.0);
			assert_true(gap < 1e-5);
		}
	/* opposite corners share no seed, so no edge crosses the centre */
	for (int e = 0; e < layout.edge_count; e++) {
		struct layout_point a = layout.position[layout.edges[e].a];
		struct layout_point b = layout.position[layout.edges[e].b];
		assert_true(hypot(a.x + b.x, a.y + b.y) > 0.5);
	}
	/* the edge's seeds are the one swapped */
	for (int e = 0; e < layout.edge_count; e++) {
		const struct layout_edge *ed = &layout.edges[e];
		unsigned sa = lat.tones[ed->a].seeds, sb = lat.tones[ed->b].seeds;
		assert_true(sa & (1u << ed->seed_a));
		assert_false(sb & (1u << ed->seed_a));
		assert_true(sb & (1u << ed->seed_b));
		assert_false(sa & (1u << ed->seed_b));
	}
}

static void dekany_counts(void **state)
{
	(void)state;
	build(5, 2);
	assert_int_equal(layout.tone_count, 10);
	assert_int_equal(layout.edge_count, 10 * 2 * 3 / 2);
	assert_int_equal(faces_of(CHORD_HARMONIC, 4), 5);
	assert_int_equal(faces_of(CHORD_SUBHARMONIC, 3), 10);
	assert_int_equal(layout.face_count, 15);
	build(5, 3);
	assert_int_equal(layout.tone_count, 10);
	assert_int_equal(faces_of(CHORD_HARMONIC, 3), 10);
	assert_int_equal(faces_of(CHORD_SUBHARMONIC, 4), 5);
}

static void eikosany_counts(void **state)
{
	(void)state;
	build(6, 3);
	assert_int_equal(layout.tone_count, 20);
	assert_int_equal(layout.edge_count, 20 * 3 * 3 / 2);
	assert_int_equal(faces_of(CHORD_HARMONIC, 4), 15);
	assert_int_equal(faces_of(CHORD_SUBHARMONIC, 4), 15);
	assert_int_equal(layout.nudged_count, 0);
	/* two rings of ten (our rule): legible, nothing close together */
	assert_true(closest_pair() > 0.3);
}

static bool face_holds(const struct layout_face *f, int tone)
{
	for (int i = 0; i < f->vertex_count; i++)
		if (f->vertices[i] == tone)
			return true;
	return false;
}

/* Twice the signed area: positive for counter-clockwise. */
static double signed_area(const struct layout_face *f)
{
	double sum = 0.0;
	for (int i = 0; i < f->vertex_count; i++) {
		struct layout_point p = layout.position[f->vertices[i]];
		struct layout_point q = layout.position[f->vertices[(i + 1) % f->vertex_count]];
		sum += p.x * q.y - q.x * p.y;
	}
	return sum;
}

/* Every size the core builds: distinct spots, the neighbour count, every
 * chord a face through exactly its tones, counter-clockwise. */
static void every_size(void **state)
{
	(void)state;
	for (int n = 2; n <= 12; n++) {
		for (int k = 1; k < n; k++) {
			build(n, k);
			char what[32];
			snprintf(what, sizeof what, "%d of %d", k, n);
			assert_int_equal(layout.tone_count, (int)binomial(n, k));
			if (closest_pair() < 1e-4)
				fail_msg("%s: two tones on one spot", what);
			if (layout.edge_count != (int)binomial(n, k) * k * (n - k) / 2)
				fail_msg("%s: %d edges", what, layout.edge_count);
			assert_int_equal(layout.face_count, lat.chord_count);
			for (int f = 0; f < layout.face_count; f++) {
				const struct layout_face *face = &layout.faces[f];
				const struct chord *ch = &lat.chords[face->chord];
				assert_int_equal(face->chord, f);
				assert_int_equal(face->vertex_count, ch->tone_count);
				for (int i = 0; i < ch->tone_count; i++)
					assert_true(face_holds(face, ch->tones[i]));
				if (face->vertex_count > 2 && signed_area(face) < -1e-9)
					fail_msg("%s: face %d runs clockwise", what, f);
			}
		}
	}
}

static void coinciding_tones_are_nudged(void **state)
{
	(void)state;
	/* 9 directions at 40 degrees: three of them 120 degrees apart cancel,
	 * so different 4-seed sums land on one spot; 10 seeds put 9 on the
	 * circle, the same again */
	build(9, 4);
	assert_true(layout.nudged_count > 0);
	assert_true(closest_pair() > 1e-3);
	build(10, 5);
	assert_true(layout.nudged_count > 0);
	assert_true(closest_pair() > 1e-3);
}

static void seed_directions(void **state)
{
	(void)state;
	build(5, 2);
	assert_int_equal(layout.centre_seed, -1);
	/* equal angles from the top, clockwise */
	for (int i = 0; i < 5; i++) {
		double a = pi / 2 - 2 * pi * i / 5;
		assert_true(fabs(layout.seed_direction[i].x - cos(a)) < 1e-12);
		assert_true(fabs(layout.seed_direction[i].y - sin(a)) < 1e-12);
	}
	build(6, 3);
	assert_int_equal(layout.centre_seed, 0);
	assert_true(layout.seed_direction[0].x == 0.0 && layout.seed_direction[0].y == 0.0);
	assert_true(fabs(layout.seed_direction[1].y - 1.0) < 1e-12);
}

static bool boxes_overlap(double scale, double w, double h)
{
	for (int a = 0; a < layout.tone_count; a++)
		for (int b = a + 1; b < layout.tone_count; b++) {
			double dx = fabs(layout.position[a].x - layout.position[b].x) * scale;
			double dy = fabs(layout.position[a].y - layout.position[b].y) * scale;
			if (dx < w - 1e-9 && dy < h - 1e-9)
				return true;
		}
	return false;
}

static void fit_scale_separates_boxes(void **state)
{
	(void)state;
	const int sizes[][2] = {{4, 2}, {5, 2}, {6, 3}, {7, 3}, {8, 4}};
	for (size_t i = 0; i < sizeof sizes / sizeof sizes[0]; i++) {
		build(sizes[i][0], sizes[i][1]);
		double s = lattice_layout_fit_scale(&layout, 90.0, 60.0);
		assert_true(s > 0.0);
		assert_false(boxes_overlap(s, 90.0, 60.0));
		assert_true(boxes_overlap(s * 0.99, 90.0, 60.0));
	}
	/* the bounding box holds every tone */
	for (int t = 0; t < layout.tone_count; t++) {
		assert_true(layout.position[t].x >= layout.low.x && layout.position[t].x <= layout.high.x);
		assert_true(layout.position[t].y >= layout.low.y && layout.position[t].y <= layout.high.y);
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(hexany_is_an_octahedron),
		cmocka_unit_test(hexany_outline_is_a_hexagon),
		cmocka_unit_test(dekany_counts),
		cmocka_unit_test(eikosany_counts),
		cmocka_unit_test(every_size),
		cmocka_unit_test(coinciding_tones_are_nudged),
		cmocka_unit_test(seed_directions),
		cmocka_unit_test(fit_scale_separates_boxes),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
