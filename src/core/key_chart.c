/*
 * key_chart: keys per tone and per chord over a stretch of keyboard
 * periods (contract in key_chart.h).
 *
 * Pitch order is the key map's exact note numbers, not key numbers: a key
 * table may shift a slot by a period, so a higher key can sound lower.
 */
#include "latticed/key_chart.h"

#include <math.h>
#include <string.h>

int key_chart_period_keys(const struct lattice *lat, const struct keymap_spec *spec)
{
	int keys;
	switch (spec->layout) {
	case KEY_LAYOUT_TABLE:
		keys = spec->table_length;
		break;
	case KEY_LAYOUT_NEAREST:
		keys = (int)lround(keymap_period_cents(lat) / 100.0);
		break;
	case KEY_LAYOUT_SEQUENTIAL:
	default:
		keys = lat->tone_count;
		break;
	}
	return keys < 1 ? 1 : keys;
}

/* The key that plays tone 0 in period 0: where the stretch starts. */
static int stretch_start(const struct keymap *map, const struct keymap_spec *spec)
{
	if (spec->layout != KEY_LAYOUT_NEAREST)
		return spec->root_key + spec->transpose;
	for (int k = 0; k < KEYMAP_KEYS; k++)
		if (map->keys[k].state != KEY_SILENT && map->keys[k].tone == 0 &&
		    map->keys[k].period == 0)
			return k;
	/* tone 0 pushed off the keyboard: the lowest key of period 0 */
	for (int k = 0; k < KEYMAP_KEYS; k++)
		if (map->keys[k].state != KEY_SILENT && map->keys[k].period == 0)
			return k;
	return 60;
}

bool key_chart_tone_on_key(const struct key_chart *chart, int tone, int key)
{
	if (tone < 0 || tone >= chart->tone_count || key < 0 || key >= KEYMAP_KEYS)
		return false;
	return (chart->tone_keys[tone][key / 64] >> (key % 64)) & 1u;
}

int key_chart_tone_key_count(const struct key_chart *chart, int tone)
{
	if (tone < 0 || tone >= chart->tone_count)
		return 0;
	return __builtin_popcountll(chart->tone_keys[tone][0]) +
	       __builtin_popcountll(chart->tone_keys[tone][1]);
}

/* Lowest-sounding key of the stretch that plays tone above `above` (a note
 * number; -INFINITY for any), or -1. */
static int key_above(const struct key_chart *chart, const struct keymap *map,
		     int tone, double above)
{
	int best = -1;
	for (int k = chart->first_key; k < chart->first_key + chart->key_count; k++) {
		if (!key_chart_tone_on_key(chart, tone, k) || !(map->keys[k].note > above))
			continue;
		if (best < 0 || map->keys[k].note < map->keys[best].note)
			best = k;
	}
	return best;
}

/* The keys of one inversion, each above the last, from the lowest start
 * that completes it; false when no start does. */
static bool voice(const struct key_chart *chart, const struct keymap *map,
		  const struct chord *ch, int inversion, struct key_chart_chord *out)
{
	int m = ch->tone_count;
	double start_above = -INFINITY;
	for (;;) {
		int first = key_above(chart, map, ch->tones[inversion], start_above);
		if (first < 0)
			return false;
		out->keys[0] = (uint8_t)first;
		int placed = 1;
		double last = map->keys[first].note;
		for (; placed < m; placed++) {
			int k = key_above(chart, map, ch->tones[(inversion + placed) % m], last);
			if (k < 0)
				break;
			out->keys[placed] = (uint8_t)k;
			last = map->keys[k].note;
		}
		if (placed == m) {
			out->key_count = m;
			out->inversion = inversion;
			out->playable = true;
			return true;
		}
		start_above = map->keys[first].note;
	}
}

static void chart_chord(struct key_chart *chart, const struct keymap *map,
			const struct chord *ch, struct key_chart_chord *out)
{
	memset(out, 0, sizeof *out);
	for (int i = 0; i < ch->tone_count; i++)
		if (key_chart_tone_key_count(chart, ch->tones[i]) == 0)
			return;
	for (int inversion = 0; inversion < ch->tone_count; inversion++)
		if (voice(chart, map, ch, inversion, out))
			return;
}

bool key_chart_build(struct key_chart *out, const struct lattice *lat,
		     const struct keymap *map, int periods, struct core_error *err)
{
	const struct keymap_spec *spec = &map->spec;
	if (periods < 1 || periods > KEY_CHART_MAX_PERIODS)
		return core_fail(err, "periods", "%d keyboard periods asked for, expected 1 to %d",
				 periods, KEY_CHART_MAX_PERIODS);
	memset(out, 0, sizeof *out);
	out->period_keys = key_chart_period_keys(lat, spec);
	out->periods = periods;
	out->tone_count = lat->tone_count;
	out->chord_count = lat->chord_count;
	int first = stretch_start(map, spec);
	int last = first + periods * out->period_keys - 1;
	if (first < 0)
		first = 0;
	if (last > KEYMAP_KEYS - 1)
		last = KEYMAP_KEYS - 1;
	out->first_key = first <= last ? first : 0;
	out->key_count = first <= last ? last - first + 1 : 0;
	for (int k = out->first_key; k < out->first_key + out->key_count; k++) {
		const struct key_pitch *kp = &map->keys[k];
		if (kp->state == KEY_SOUNDING && kp->tone >= 0 && kp->tone < lat->tone_count)
			out->tone_keys[kp->tone][k / 64] |= UINT64_C(1) << (k % 64);
	}
	for (int c = 0; c < lat->chord_count; c++)
		chart_chord(out, map, &lat->chords[c], &out->chords[c]);
	return true;
}
