/*
 * key_chart: the lattice on the keyboard, for a player finding tones and
 * chords: which keys of a stretch of the keyboard play each tone, and which
 * keys to press for each chord.
 *
 * Model: the stretch is one or more keyboard periods, the keys over which
 * the key map runs through the lattice once:
 *   sequential  N keys (N tones) from the key that plays tone 0 in period 0
 *               (root_key + transpose);
 *   table       the table's M slots from that same key;
 *   nearest     the period rounded to whole 12-TET keys (12 for 2/1, 19
 *               for 3/1) from the key that plays tone 0 in period 0.
 * The stretch is clipped to keys 0..127.  Only sounding keys play a tone.
 *
 * A chord's keys: its tones in closest position (as struct chord lists
 * them), each on the lowest key of the stretch that sounds above the
 * previous one, starting from the lowest key that plays the first.  When
 * the stretch is too short for that, the next inversion (the list rotated
 * by one) is tried, and so on; a chord with a tone that no key of the
 * stretch plays gets no keys.
 *
 * Fixed-size like the lattice, so a command or the daemon builds it once
 * and reads it without allocation.
 */
#ifndef LATTICED_KEY_CHART_H
#define LATTICED_KEY_CHART_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/error.h"
#include "latticed/keymap.h"
#include "latticed/lattice.h"

#define KEY_CHART_MAX_PERIODS 8

struct key_chart_chord {
	bool playable;         /* every tone has a key in the stretch */
	int inversion;         /* 0: closest position; j: starts on its tone j */
	int key_count;         /* = the chord's tone_count when playable */
	uint8_t keys[LATTICE_MAX_CHORD_TONES]; /* low to high */
};

struct key_chart {
	int first_key;         /* the stretch: first_key .. first_key + key_count - 1 */
	int key_count;
	int period_keys;       /* keys per keyboard period */
	int periods;           /* periods asked for (the stretch may be clipped) */
	int tone_count;
	uint64_t tone_keys[LATTICE_MAX_TONES][2]; /* bit k of 128: key k plays the tone */
	int chord_count;
	struct key_chart_chord chords[LATTICE_MAX_CHORDS];
};

/* Keys per keyboard period for this lattice and key map spec (>= 1). */
int key_chart_period_keys(const struct lattice *lat, const struct keymap_spec *spec);

/*
 * Builds the chart of `periods` keyboard periods (1..KEY_CHART_MAX_PERIODS)
 * of a built key map (its layout read from map->spec).  Fails only on a
 * bad period count.
 */
bool key_chart_build(struct key_chart *out, const struct lattice *lat,
		     const struct keymap *map, int periods, struct core_error *err);

/* True when key plays tone within the chart's stretch. */
bool key_chart_tone_on_key(const struct key_chart *chart, int tone, int key);

/* Number of keys of the stretch that play tone. */
int key_chart_tone_key_count(const struct key_chart *chart, int tone);

#endif
