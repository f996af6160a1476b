/*
 * keymap: which lattice tone each of the 128 MIDI keys plays, and at what
 * exact frequency.
 *
 * Model: the 1/1 of the lattice sounds at root_hz.  Tone t in period p
 * sounds at root_hz * ratio(t) * P^p.  A layout decides the (t, p) of every
 * key:
 *   sequential  key root_key + i plays tone i mod N in period floor(i / N);
 *   table       key root_key + i plays slot i mod M of an explicit list of
 *               M slots in keyboard period floor(i / M); a slot is silent
 *               or names a tone and a period shift;
 *   nearest     every tone, in every period MIDI can sound, goes to the
 *               12-TET key nearest its pitch; when lower tones already
 *               hold that key, it goes to the free key just above them, or
 *               they move down onto the free key just below them and it
 *               takes the last of theirs, whichever keeps the keys nearer
 *               their pitches in all (keys stay in pitch order); keys
 *               nobody claims are silent.
 * Transposition moves the finished map up by whole keys: key k plays what
 * key k - transpose played.
 *
 * For every sounding key the map keeps the pitch as a fractional note
 * number (see pitch.h), the nearest 12-TET output key, the deviation from
 * it in cents and the MTS frequency word.  A key whose pitch lies outside
 * what MIDI can express (below key 0 or above the highest MTS word) is
 * silent and counted in out_of_range_count.
 */
#ifndef LATTICED_KEYMAP_H
#define LATTICED_KEYMAP_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/error.h"
#include "latticed/lattice.h"

#define KEYMAP_KEYS 128
#define KEYMAP_TABLE_MAX 128

enum key_layout { KEY_LAYOUT_SEQUENTIAL, KEY_LAYOUT_NEAREST, KEY_LAYOUT_TABLE };

#define KEYMAP_SLOT_SILENT (-1)

struct keymap_slot {
	int16_t tone;          /* KEYMAP_SLOT_SILENT or a tone index */
	int16_t period_shift;  /* added to the keyboard period */
};

struct keymap_spec {
	double root_hz;        /* frequency of the 1/1 */
	int root_key;          /* plays tone 0, period 0 (sequential, table) */
	enum key_layout layout;
	int transpose;         /* whole keys */
	int table_length;      /* table layout: slots per keyboard period */
	struct keymap_slot table[KEYMAP_TABLE_MAX];
};

enum key_state {
	KEY_SILENT,            /* no tone on this key */
	KEY_SOUNDING,
	KEY_OUT_OF_RANGE,      /* a tone, but a pitch MIDI cannot express */
};

struct key_pitch {
	enum key_state state;
	int16_t tone;          /* -1 when silent */
	int16_t period;
	double note;           /* exact pitch as a fractional note number */
	double hz;
	uint8_t out_key;       /* nearest 12-TET key, clamped to 0..127 */
	double cents_off;      /* exact pitch minus out_key, in cents */
	uint8_t mts[3];        /* MTS frequency word */
};

struct keymap {
	struct key_pitch keys[KEYMAP_KEYS];
	int sounding_count;
	int out_of_range_count;
	struct keymap_spec spec;  /* what it was built from, table slots resolved */
};

const char *key_layout_name(enum key_layout layout);

bool keymap_build(struct keymap *out, const struct lattice *lat,
		  const struct keymap_spec *spec, struct core_error *err);

/*
 * Moves every sounding key's pitch by `cents` (a re-rooting: see
 * retune_root_shift), keeping its tone and period, as the engine's
 * retune table does: a key that leaves MIDI's range becomes out of range,
 * and keys silent or out of range before stay so.
 */
void keymap_shift(struct keymap *map, double cents);

/* Cents of the period: the pitch distance between period p and p + 1. */
double keymap_period_cents(const struct lattice *lat);

#endif
