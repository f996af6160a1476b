/*
 * pitch: frequency <-> note number <-> bend value / MTS word.
 *
 * Rounding is to nearest with halves away from zero (C's lround), as the
 * bend formula in the MIDI tuning literature is written.  MTS fractions
 * that round up to a whole semitone carry into the key byte, so the word
 * always names the key at or below the pitch.
 */
#include "latticed/pitch.h"

#include <math.h>

double pitch_note_of_hz(double hz)
{
	return PITCH_A4_KEY + 12.0 * log2(hz / PITCH_A4_HZ);
}

double pitch_hz_of_note(double note)
{
	return PITCH_A4_HZ * exp2((note - PITCH_A4_KEY) / 12.0);
}

uint16_t pitch_bend_value(double cents, double range_semitones, double played_fraction,
			  bool *clamped)
{
	double full_scale = 100.0 * range_semitones * played_fraction;
	long v = PITCH_BEND_CENTRE + lround(cents / full_scale * 8192.0);
	*clamped = v < 0 || v > PITCH_BEND_MAX;
	return (uint16_t)(v < 0 ? 0 : (v > PITCH_BEND_MAX ? PITCH_BEND_MAX : v));
}

struct bend pitch_bend_for_cents(double cents, double range_semitones,
				 double played_fraction)
{
	struct bend b = {PITCH_BEND_CENTRE, 0.0, false};
	b.value = pitch_bend_value(cents, range_semitones, played_fraction, &b.clamped);
	b.error_cents = pitch_cents_of_bend(b.value, range_semitones,
					    played_fraction) - cents;
	return b;
}

double pitch_cents_of_bend(uint16_t value, double range_semitones,
			   double played_fraction)
{
	return ((double)value - PITCH_BEND_CENTRE) / 8192.0 * 100.0 *
	       range_semitones * played_fraction;
}

bool pitch_mts_word(double note, uint8_t word[3])
{
	if (!(note >= 0.0))
		return false;
	double whole = floor(note);
	long frac = lround((note - whole) * MTS_FRACTION_STEPS);
	long key = (long)whole;
	if (frac >= MTS_FRACTION_STEPS) {
		key++;
		frac -= MTS_FRACTION_STEPS;
	}
	if (key > 127 || (key == 127 && frac > 16382))
		return false;
	word[0] = (uint8_t)key;
	word[1] = (uint8_t)(frac >> 7);
	word[2] = (uint8_t)(frac & 0x7F);
	return true;
}

double pitch_note_of_mts(const uint8_t word[3])
{
	return word[0] + (double)((word[1] << 7) | word[2]) / MTS_FRACTION_STEPS;
}
