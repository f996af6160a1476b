/*
 * retune_table: what one output must do for each of the 128 input keys
 * under the current preset and root.
 *
 * Model: the key map gives every key an exact pitch (a fractional note
 * number).  An output may shift all pitches by a fixed number of cents
 * (its synth correction), and the player may move the 1/1 to another
 * tone of the set (re-rooting, a just modulation), which multiplies every
 * pitch by that tone's ratio, folded by one period when that is closer.
 * From the shifted pitch follow the nearest 12-TET key, the deviation
 * from it (for pitch bend) and the MTS word.  Keys whose shifted pitch
 * leaves MIDI's range are silent.
 */
#ifndef LATTICED_RETUNE_TABLE_H
#define LATTICED_RETUNE_TABLE_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/keymap.h"
#include "latticed/ratio.h"

struct retune_key {
	bool sounding;
	uint8_t out_key;       /* nearest 12-TET key */
	int16_t tone, period;  /* from the key map, for status displays */
	double note;           /* exact pitch as a note number, shift included */
	double cents;          /* note - out_key, in cents */
	uint8_t mts[3];
};

struct retune_table {
	struct retune_key keys[128];
};

/*
 * Builds the table from a key map.  shift_cents moves every pitch (root
 * change plus synth offset).  Runs in bounded time without allocating, so
 * it may be called on the event path when the player re-roots.
 */
void retune_table_build(struct retune_table *t, const struct keymap *map,
			double shift_cents);

/* The shift that moves the 1/1 to `tone`, folded into half a period either way. */
double retune_root_shift(const struct lattice *lat, int tone);

/* The same shift as an exact ratio (the tone's ratio, over the period when
 * it folds down); 1/1 for a tone outside the set (home).  False on overflow. */
bool retune_root_ratio(const struct lattice *lat, int tone, struct ratio *out);

/* What a note of `tone` in `period` sounds at under root slot root_slot
 * (0 = home, t + 1 = tone t is 1/1), as an exact ratio to the home 1/1:
 * ratio(tone) * P^period * the root's ratio.  False on overflow or a tone
 * outside the set. */
bool retune_sounding_ratio(const struct lattice *lat, int tone, int period, int root_slot,
			   struct ratio *out);

#endif
