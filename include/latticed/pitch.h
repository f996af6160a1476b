/*
 * pitch: the arithmetic between frequencies and what MIDI can say.
 *
 * A pitch is carried as a fractional MIDI note number ("note"):
 * 69 + 12 log2(hz / 440), so key 69 = A4 = 440 Hz (ISO 16) and one unit is
 * one 12-TET semitone.  From a note the two ways to sound it follow:
 *   - a 12-TET key plus a 14-bit pitch bend, for a bend range of R
 *     semitones: value = 8192 + round(c / (100 R) * 8192), clamped to
 *     0..16383 (0 is exactly -R, 16383 is R * 8191/8192);
 *   - an MTS frequency word xx yy zz: xx the key at or below, yy zz the
 *     14-bit fraction of that semitone (big-endian), 7F 7F 7F reserved as
 *     "no change", so the highest word is 7F 7F 7E.
 * `played_fraction` is how much of a specified bend a synth really plays
 * (1 for a correct synth, 127/128 for FluidSynth 2.3): the value sent is
 * scaled so the sounding bend is right.
 */
#ifndef LATTICED_PITCH_H
#define LATTICED_PITCH_H

#include <stdbool.h>
#include <stdint.h>

#define PITCH_A4_KEY 69
#define PITCH_A4_HZ 440.0
#define PITCH_BEND_CENTRE 8192
#define PITCH_BEND_MAX 16383
#define MTS_FRACTION_STEPS 16384
/* Highest MTS word 7F 7F 7E as a note number. */
#define MTS_NOTE_MAX (127.0 + 16382.0 / 16384.0)

double pitch_note_of_hz(double hz);
double pitch_hz_of_note(double note);

struct bend {
	uint16_t value;       /* 0..16383, centre 8192 */
	double error_cents;   /* sounding minus wanted, after quantising */
	bool clamped;         /* wanted more than the range allows */
};

struct bend pitch_bend_for_cents(double cents, double range_semitones,
				 double played_fraction);
/* Its value alone, with *clamped set as above: no error computed, for the
 * event path. */
uint16_t pitch_bend_value(double cents, double range_semitones, double played_fraction,
			  bool *clamped);
/* Cents a bend value sounds at on a synth playing played_fraction of it. */
double pitch_cents_of_bend(uint16_t value, double range_semitones,
			   double played_fraction);

/* False when note lies outside 00 00 00 .. 7F 7F 7E. */
bool pitch_mts_word(double note, uint8_t word[3]);
double pitch_note_of_mts(const uint8_t word[3]);

#endif
