/*
 * lattice_layout: where each tone of a combination product set goes in a
 * drawing, which tones an edge joins and which tones outline each chord.
 *
 * Model: each seed gets a direction in the plane, a unit vector, and a
 * tone sits at the sum of the directions of its seeds, the usual way
 * lattices are drawn.  The directions share the circle at equal angles,
 * seed 0 pointing up and the rest clockwise.  With an even number of seeds
 * the first seed is drawn with no direction (at the centre) and the others
 * share the circle: opposite directions would cancel, putting different
 * tones on one spot, and this way the hexany shows its familiar outline,
 * the octahedron seen along an axis through two faces (a hexagon of six
 * tones with its triangles).  Tones that still land on one spot (9 and 10
 * seeds have such sums) are nudged apart onto a small circle around it.
 *
 * Coordinates are in units of one seed direction, y pointing up.  A merged
 * tone sits where its first product does.
 *
 * An edge joins two tones whose products differ by exactly one seed (one
 * seed swapped for another).  Each chord of the lattice becomes a face: its
 * tones in order of angle around their centroid, counter-clockwise, which
 * is a simple polygon through all of them (convex when they are).
 */
#ifndef LATTICED_LATTICE_LAYOUT_H
#define LATTICED_LATTICE_LAYOUT_H

#include <stdint.h>

#include "latticed/lattice.h"

/* A tone of k of n seeds has k (n - k) neighbours, at most 6 * 6 = 36. */
#define LATTICE_LAYOUT_MAX_EDGES (LATTICE_MAX_TONES * 36 / 2)

struct layout_point {
	double x, y;
};

struct layout_edge {
	int16_t a, b;          /* tone indices, a < b */
	int8_t seed_a, seed_b; /* the seed only a has, the seed only b has */
};

struct layout_face {
	int16_t chord;                 /* index into lattice.chords */
	int vertex_count;              /* the chord's distinct tones */
	int16_t vertices[LATTICE_MAX_CHORD_TONES]; /* tone indices */
};

struct lattice_layout {
	int seed_count;
	int centre_seed;               /* the seed with no direction, or -1 */
	struct layout_point seed_direction[LATTICE_MAX_SEEDS];
	int tone_count;
	struct layout_point position[LATTICE_MAX_TONES];
	int nudged_count;              /* tones moved off a shared spot */
	int edge_count;
	struct layout_edge edges[LATTICE_LAYOUT_MAX_EDGES];
	int face_count;                /* = lattice.chord_count */
	struct layout_face faces[LATTICE_MAX_CHORDS];
	struct layout_point low, high; /* bounding box of the positions */
};

/* Lays out a built lattice; large (about 0.2 MB): allocate it once. */
void lattice_layout_build(struct lattice_layout *out, const struct lattice *lat);

/*
 * The smallest scale (drawing units per layout unit) at which boxes of
 * box_w x box_h centred on the tones do not overlap; 0 for a single tone.
 */
double lattice_layout_fit_scale(const struct lattice_layout *layout,
				double box_w, double box_h);

#endif
