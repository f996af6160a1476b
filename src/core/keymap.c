/*
 * keymap: lays the lattice out on the 128 keys.
 *
 * The nearest layout works in a "virtual key" space twice the keyboard's
 * width so that transposition can shift tones on or off the keyboard
 * without changing which tone claimed which key.  Two tones nearest the
 * same key share out the free keys on either side of them, in pitch order.
 * It refuses sets denser than the keyboard (more tones per period than
 * 12-TET keys per period): collisions would then cascade through the whole
 * range and every key would end up far from its tone.
 */
#include "latticed/keymap.h"

#include <math.h>
#include <string.h>

#include "latticed/pitch.h"

#define VIRTUAL_KEYS 256

const char *key_layout_name(enum key_layout layout)
{
	switch (layout) {
	case KEY_LAYOUT_SEQUENTIAL:
		return "sequential";
	case KEY_LAYOUT_NEAREST:
		return "nearest";
	case KEY_LAYOUT_TABLE:
		return "table";
	}
	return "?";
}

double keymap_period_cents(const struct lattice *lat)
{
	return ratio_cents(lat->spec.period);
}

static int floor_div(int a, int b)
{
	int q = a / b;
	if ((a % b != 0) && ((a < 0) != (b < 0)))
		q--;
	return q;
}

static double note_of(const struct lattice *lat, double root_note, int tone,
		      int period)
{
	return root_note + (lat->tones[tone].cents +
			    period * keymap_period_cents(lat)) / 100.0;
}

static void place(struct keymap *map, int key, int tone, int period,
		  double note)
{
	struct key_pitch *k = &map->keys[key];
	k->tone = (int16_t)tone;
	k->period = (int16_t)period;
	k->note = note;
	k->hz = pitch_hz_of_note(note);
	if (!pitch_mts_word(note, k->mts)) {
		k->state = KEY_OUT_OF_RANGE;
		map->out_of_range_count++;
		return;
	}
	long nearest = lround(note);
	if (nearest > 127)
		nearest = 127;
	k->state = KEY_SOUNDING;
	k->out_key = (uint8_t)nearest;
	k->cents_off = (note - (double)nearest) * 100.0;
	map->sounding_count++;
}

/*
 * Key v, the nearest to `note`, is taken: by the run of claimed keys
 * lo..hi around it, all of them lower tones (the walk goes up in pitch).
 * Keeping the keys in pitch order, the new tone goes either just above the
 * run, or on hi with the whole run moved down onto the free key below it;
 * whichever leaves the keys nearer their pitches in all (a tie goes up).
 * Returns the key for the new tone (VIRTUAL_KEYS: none).
 */
static int make_room(int16_t *tone, int16_t *period, double *notes, int v, double note)
{
	int lo = v, hi = v;
	while (lo > 0 && tone[lo - 1] >= 0)
		lo--;
	while (hi + 1 < VIRTUAL_KEYS && tone[hi + 1] >= 0)
		hi++;
	double up = fabs(hi + 1 - note);
	double down = fabs(hi - note);
	for (int k = lo; k <= hi; k++)
		down += fabs(k - 1 - notes[k]) - fabs(k - notes[k]);
	if (lo == 0 || !(down < up))
		return hi + 1;
	for (int k = lo; k <= hi; k++) {
		tone[k - 1] = tone[k];
		period[k - 1] = period[k];
		notes[k - 1] = notes[k];
	}
	return hi;
}

static bool build_nearest(struct keymap *map, const struct lattice *lat,
			  const struct keymap_spec *spec, double root_note,
			  struct core_error *err)
{
	double period_keys = keymap_period_cents(lat) / 100.0;
	int capacity = (int)floor(period_keys + 1e-9);
	if (lat->tone_count > capacity)
		return core_fail(err, "layout",
				 "the nearest layout fits at most %d tones per period on 12-TET keys, this set has %d; use layout = sequential or table",
				 capacity, lat->tone_count);

	int16_t claimed_tone[VIRTUAL_KEYS];
	int16_t claimed_period[VIRTUAL_KEYS];
	double claimed_note[VIRTUAL_KEYS];
	for (int v = 0; v < VIRTUAL_KEYS; v++)
		claimed_tone[v] = -1;

	/* tones ascend within a period, so walking periods then tones is
	 * walking pitch upward: every key taken so far holds a lower tone */
	int lowest_period = (int)floor((0.0 - root_note) / period_keys) - 1;
	int highest_period = (int)ceil((MTS_NOTE_MAX - root_note) / period_keys) + 1;
	for (int p = lowest_period; p <= highest_period; p++) {
		for (int t = 0; t < lat->tone_count; t++) {
			double note = note_of(lat, root_note, t, p);
			if (note < 0.0 || note > MTS_NOTE_MAX)
				continue;
			int v = (int)lround(note);
			if (v < VIRTUAL_KEYS && claimed_tone[v] >= 0)
				v = make_room(claimed_tone, claimed_period, claimed_note, v, note);
			if (v >= VIRTUAL_KEYS)
				continue;
			claimed_tone[v] = (int16_t)t;
			claimed_period[v] = (int16_t)p;
			claimed_note[v] = note;
		}
	}
	for (int v = 0; v < VIRTUAL_KEYS; v++) {
		int key = v + spec->transpose;
		if (claimed_tone[v] < 0 || key < 0 || key >= KEYMAP_KEYS)
			continue;
		place(map, key, claimed_tone[v], claimed_period[v],
		      claimed_note[v]);
	}
	return true;
}

bool keymap_build(struct keymap *out, const struct lattice *lat,
		  const struct keymap_spec *spec, struct core_error *err)
{
	if (!(spec->root_hz > 0.0) || !isfinite(spec->root_hz))
		return core_fail(err, "root_hz",
				 "root_hz must be a positive frequency in Hz");
	if (spec->root_key < 0 || spec->root_key > 127)
		return core_fail(err, "root_key",
				 "root_key is %d, expected a key from 0 to 127",
				 spec->root_key);
	if (spec->layout == KEY_LAYOUT_TABLE) {
		if (spec->table_length < 1 || spec->table_length > KEYMAP_TABLE_MAX)
			return core_fail(err, "map",
					 "the key table has %d slots, expected 1 to %d",
					 spec->table_length, KEYMAP_TABLE_MAX);
		for (int i = 0; i < spec->table_length; i++) {
			int t = spec->table[i].tone;
			if (t != KEYMAP_SLOT_SILENT && (t < 0 || t >= lat->tone_count))
				return core_fail(err, "map",
						 "slot %d names tone %d, expected a tone from 0 to %d",
						 i + 1, t, lat->tone_count - 1);
		}
	}

	struct keymap map;
	memset(&map, 0, sizeof map);
	for (int key = 0; key < KEYMAP_KEYS; key++) {
		map.keys[key].state = KEY_SILENT;
		map.keys[key].tone = -1;
	}
	map.spec = *spec;
	double root_note = pitch_note_of_hz(spec->root_hz);

	if (spec->layout == KEY_LAYOUT_NEAREST) {
		if (!build_nearest(&map, lat, spec, root_note, err))
			return false;
	} else {
		for (int key = 0; key < KEYMAP_KEYS; key++) {
			int i = key - spec->transpose - spec->root_key;
			int tone, period;
			if (spec->layout == KEY_LAYOUT_SEQUENTIAL) {
				int n = lat->tone_count;
				period = floor_div(i, n);
				tone = i - period * n;
			} else {
				int m = spec->table_length;
				int cycle = floor_div(i, m);
				const struct keymap_slot *slot = &spec->table[i - cycle * m];
				if (slot->tone == KEYMAP_SLOT_SILENT)
					continue;
				tone = slot->tone;
				period = cycle + slot->period_shift;
			}
			place(&map, key, tone, period,
			      note_of(lat, root_note, tone, period));
		}
	}
	*out = map;
	return true;
}

void keymap_shift(struct keymap *map, double cents)
{
	for (int key = 0; key < KEYMAP_KEYS; key++) {
		struct key_pitch *k = &map->keys[key];
		if (k->state != KEY_SOUNDING)
			continue;
		map->sounding_count--;
		place(map, key, k->tone, k->period, k->note + cents / 100.0);
	}
}
