/*
 * retune_table: shifts a key map's pitches and recomputes the MIDI side
 * (see retune_table.h).
 */
#include "latticed/retune_table.h"

#include <math.h>
#include <string.h>

#include "latticed/pitch.h"

void retune_table_build(struct retune_table *t, const struct keymap *map,
			double shift_cents)
{
	memset(t, 0, sizeof *t);
	for (int key = 0; key < 128; key++) {
		const struct key_pitch *src = &map->keys[key];
		struct retune_key *k = &t->keys[key];
		k->tone = src->tone;
		k->period = src->period;
		if (src->state != KEY_SOUNDING)
			continue;
		k->note = src->note + shift_cents / 100.0;
		if (!pitch_mts_word(k->note, k->mts))
			continue;
		long nearest = lround(k->note);
		if (nearest > 127)
			nearest = 127;
		k->out_key = (uint8_t)nearest;
		k->cents = (k->note - (double)nearest) * 100.0;
		k->sounding = true;
	}
}

/* Folded down a period when the tone lies above half of it. */
static bool root_folds(const struct lattice *lat, int tone)
{
	return lat->tones[tone].cents > ratio_cents(lat->spec.period) / 2;
}

double retune_root_shift(const struct lattice *lat, int tone)
{
	if (tone < 0 || tone >= lat->tone_count)
		return 0.0;
	double shift = lat->tones[tone].cents;
	if (root_folds(lat, tone))
		shift -= ratio_cents(lat->spec.period);
	return shift;
}

bool retune_root_ratio(const struct lattice *lat, int tone, struct ratio *out)
{
	if (tone < 0 || tone >= lat->tone_count) {
		*out = (struct ratio){1, 1};
		return true;
	}
	struct ratio r = lat->tones[tone].ratio;
	if (root_folds(lat, tone))
		return ratio_div(r, lat->spec.period, out);
	*out = r;
	return true;
}

bool retune_sounding_ratio(const struct lattice *lat, int tone, int period, int root_slot,
			   struct ratio *out)
{
	if (tone < 0 || tone >= lat->tone_count)
		return false;
	struct ratio root, shift, r;
	return retune_root_ratio(lat, root_slot - 1, &root) &&
	       ratio_pow(lat->spec.period, period, &shift) &&
	       ratio_mul(lat->tones[tone].ratio, shift, &r) && ratio_mul(r, root, out);
}
