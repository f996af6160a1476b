/*
 * Tests of pitch math: note numbers and Hz, pitch-bend values and MTS
 * frequency words, against the published formulas and vectors.
 *
 * Sources (tags in DEVELOPERS.md): MIDI 1.0 pitch bend, 14 bits, centre
 * 8192 = bytes 00 40 ([M1]; alsa-lib seq_midi_event.c [AL] agrees); MIDI
 * Tuning Standard frequency word xx yy zz, 100/16384 cent steps, 7F 7F 7F
 * = no change [MTS] (the spec's own example table has rounding slips, so
 * vectors are computed from its definition); A4 = 440 Hz = key 69
 * (ISO 16, [MTS]).
 * Numeric vectors were computed from those formulas in double precision
 * (marked "computed").
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>

#include "latticed/pitch.h"
#include "latticed/ratio.h"

static double cents_of(double ratio)
{
	return 1200.0 * log2(ratio);
}

static void key_frequencies(void **state)
{
	(void)state;
	/* f(n) = 440 * 2^((n-69)/12); values computed, 4 decimals */
	const struct { int key; double hz; } table[] = {
		{0, 8.1758}, {12, 16.3516}, {60, 261.6256}, {61, 277.1826},
		{69, 440.0}, {120, 8372.0181}, {127, 12543.8540},
	};
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++) {
		assert_true(fabs(pitch_hz_of_note(table[i].key) - table[i].hz) < 0.00005);
		assert_true(fabs(pitch_note_of_hz(table[i].hz) - table[i].key) < 1e-5);
	}
}

static void bend_vectors(void **state)
{
	(void)state;
	/* 5/4 and 7/4 above a key: -13.686 and -31.174 cents from the nearest
	 * 12-TET key.  R = 2: 7631 and 6915; R = 48: 8169 and 8139 (computed). */
	double c54 = cents_of(5.0 / 4.0) - 400.0, c74 = cents_of(7.0 / 4.0) - 1000.0;
	assert_int_equal(pitch_bend_for_cents(c54, 2, 1.0).value, 7631);
	assert_int_equal(pitch_bend_for_cents(c74, 2, 1.0).value, 6915);
	assert_int_equal(pitch_bend_for_cents(c54, 48, 1.0).value, 8169);
	assert_int_equal(pitch_bend_for_cents(c74, 48, 1.0).value, 8139);
	/* the centre is 8192 (MIDI 1.0) */
	assert_int_equal(pitch_bend_for_cents(0.0, 2, 1.0).value, 8192);
	assert_false(pitch_bend_for_cents(0.0, 2, 1.0).clamped);
}

static void bend_range_edges(void **state)
{
	(void)state;
	/* 0 is exactly -R; 16383 is +R * 8191/8192 because the centre is 8192
	 * (alsa-lib and FluidSynth bipolar mapping around 8192). */
	assert_true(fabs(pitch_cents_of_bend(0, 2, 1.0) + 200.0) < 1e-12);
	assert_true(fabs(pitch_cents_of_bend(16383, 2, 1.0) - 199.9755859375) < 1e-9);
	assert_true(fabs(pitch_cents_of_bend(16383, 48, 1.0) - 4799.4140625) < 1e-9);
	struct bend b = pitch_bend_for_cents(-200.0, 2, 1.0);
	assert_int_equal(b.value, 0);
	assert_false(b.clamped);
	b = pitch_bend_for_cents(-250.0, 2, 1.0);
	assert_int_equal(b.value, 0);
	assert_true(b.clamped);
	assert_true(fabs(b.error_cents - 50.0) < 1e-9);
	b = pitch_bend_for_cents(200.0, 2, 1.0);
	assert_int_equal(b.value, 16383);
	assert_true(b.clamped);
}

static void bend_error_within_half_step(void **state)
{
	(void)state;
	/* one step is 100 R / 8192 cents (0.0244 at R = 2, 0.5859 at R = 48) */
	const double ranges[] = {1, 2, 12, 24, 48, 96};
	for (size_t r = 0; r < sizeof ranges / sizeof ranges[0]; r++) {
		double step = 100.0 * ranges[r] / 8192.0;
		for (double c = -99.0 * ranges[r]; c <= 99.0 * ranges[r]; c += 0.37 * ranges[r]) {
			struct bend b = pitch_bend_for_cents(c, ranges[r], 1.0);
			assert_false(b.clamped);
			assert_true(fabs(b.error_cents) <= step / 2 + 1e-9);
			assert_true(fabs(pitch_cents_of_bend(b.value, ranges[r], 1.0) - c) <= step / 2 + 1e-9);
		}
	}
}

static void bend_played_fraction(void **state)
{
	(void)state;
	/* A synth that plays 127/128 of every bend (FluidSynth 2.3, measured)
	 * needs the value scaled by 128/127: a 968.826-cent bend at R = 48
	 * sounds right only with the scaled value. */
	double c = cents_of(7.0 / 4.0);
	struct bend plain = pitch_bend_for_cents(c, 48, 1.0);
	struct bend scaled = pitch_bend_for_cents(c, 48, 127.0 / 128.0);
	double heard_plain = pitch_cents_of_bend(plain.value, 48, 127.0 / 128.0);
	double heard_scaled = pitch_cents_of_bend(scaled.value, 48, 127.0 / 128.0);
	assert_true(fabs(heard_plain - c) > 7.0); /* about -7.6 cents */
	assert_true(fabs(heard_scaled - c) <= 0.5 * 100.0 * 48 / 8192.0);
	assert_true(fabs(scaled.error_cents) <= 0.5 * 100.0 * 48 / 8192.0);
}

static void mts_words(void **state)
{
	(void)state;
	uint8_t w[3];
	/* 5/4 above C4 (261.6256 Hz) = 327.0320 Hz -> 3F 6E 3E, key 63 fraction
	 * 14142 (computed from the [MTS] word: the key at or below, then the
	 * fraction of a semitone times 16384, rounded) */
	double note = pitch_note_of_hz(261.6255653005986 * 5.0 / 4.0);
	assert_true(pitch_mts_word(note, w));
	assert_int_equal(w[0], 0x3F);
	assert_int_equal(w[1], 0x6E);
	assert_int_equal(w[2], 0x3E);
	assert_true(fabs(pitch_note_of_mts(w) - note) <= 0.5 / 16384.0);
	/* A4 = 45 00 00 */
	assert_true(pitch_mts_word(69.0, w));
	assert_int_equal(w[0], 0x45);
	assert_int_equal(w[1], 0);
	assert_int_equal(w[2], 0);
	/* the fraction carries into the key: 60.99999999 -> 3D 00 00 */
	assert_true(pitch_mts_word(60.99999999, w));
	assert_int_equal(w[0], 0x3D);
	assert_int_equal(w[1], 0);
	/* 7F 7F 7E is the highest word = 13289.6566 Hz; 7F 7F 7F means "no change" */
	const uint8_t top[3] = {0x7F, 0x7F, 0x7E};
	assert_true(fabs(pitch_hz_of_note(pitch_note_of_mts(top)) - 13289.6566) < 0.00005);
	assert_true(pitch_mts_word(MTS_NOTE_MAX, w));
	assert_int_equal(w[2], 0x7E);
	assert_false(pitch_mts_word(127.0 + 16383.0 / 16384.0, w));
	assert_false(pitch_mts_word(128.0, w));
	/* 00 00 00 is key 0 = 8.1758 Hz, nothing lower */
	assert_true(pitch_mts_word(0.0, w));
	assert_false(pitch_mts_word(-0.001, w));
	assert_false(pitch_mts_word(NAN, w));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(key_frequencies),
		cmocka_unit_test(bend_vectors),
		cmocka_unit_test(bend_range_edges),
		cmocka_unit_test(bend_error_within_half_step),
		cmocka_unit_test(bend_played_fraction),
		cmocka_unit_test(mts_words),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
