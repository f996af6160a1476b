/*
 * Tests of the mts method (src/core/engine_mts.c): the tuning program and
 * bank by RPN 3 and 4, a single-note change before a key's note-on only
 * when the synth does not hold the word, a sounding key never retuned,
 * one output channel per input channel (our rules), the bulk dump and its
 * checksum (MIDI Tuning Standard [MTS] layouts in engine_test.h and mts.h).
 */
#include "engine_test.h"

static void mts_setup_selects_program(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	s.output.mts_program = 5;
	s.output.mts_bank = 1;
	start(&s);
	/* RPN 0 range, RPN 4 bank 1 (before the program it applies to), RPN 3 program 5 */
	EXPECT(0xB0, 101, 0, 0xB0, 100, 0, 0xB0, 6, 2, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB0, 101, 0, 0xB0, 100, 4, 0xB0, 6, 1, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB0, 101, 0, 0xB0, 100, 3, 0xB0, 6, 5, 0xB0, 101, 127, 0xB0, 100, 127);
}

static void mts_tunes_a_key_before_its_note(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	const uint8_t *w = keymaps[0].keys[60].mts;
	/* 330 Hz goes out on key 64, tuned to the exact word first */
	EXPECT(0xF0, 0x7F, 0x7F, 0x08, 0x02, 0x00, 0x01, 64, w[0], w[1], w[2], 0xF7,
	       0xE0, 0x00, 0x40, 0x90, 64, 100);
	harness_send(&h, 0x80, 60, 0);
	harness_send(&h, 0x90, 60, 100); /* the synth holds it now: no SysEx */
	EXPECT(0x80, 64, 0, 0x90, 64, 100);
	assert_true(fabs(model_pitch(&model, 0, 64) - key_note(0, 60)) <= 0.5 / 16384 + 1e-12);

	/* own: the note goes out on the key pressed */
	s.output.mts_key = MTS_KEY_OWN;
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	assert_int_equal(h.log[7], 60);
	assert_int_equal(model.last_on_key, 60);
	assert_true(fabs(model_pitch(&model, 0, 60) - key_note(0, 60)) <= 0.5 / 16384 + 1e-12);
}

static void mts_never_retunes_a_sounding_key(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	start(&s);
	harness_send(&h, 0x90, 60, 100); /* key 64 holds 330 Hz */
	harness_send(&h, 0xCF, 1, 0);    /* the dekany */
	/* a dekany key whose pitch is nearest 64 must use another key while
	 * 64 sounds */
	int key = -1;
	for (int k = 0; k < 128 && key < 0; k++)
		if (keymaps[1].keys[k].state == KEY_SOUNDING && lround(keymaps[1].keys[k].note) == 64)
			key = k;
	assert_true(key >= 0);
	harness_send(&h, 0x90, key, 100);
	assert_int_not_equal(model.last_on_key, 64);
	assert_true(fabs(model_pitch(&model, 0, model.last_on_key) - key_note(1, key)) <= 0.5 / 16384 + 1e-12);
	assert_true(fabs(model_pitch(&model, 0, 64) - key_note(0, 60)) <= 0.5 / 16384 + 1e-12);
	assert_int_equal(model.violations, 0);
}

/* Two players' wheels on one MTS channel would bend each other's sounding
 * notes (found by tests/fuzz/fuzz_engine): each input channel gets its own
 * output channel, and too few output channels are refused. */
static void mts_one_output_channel_per_input(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.input.channels = 0x0003;
	s.output.channels = 0x0001;
	struct core_error err;
	memset(&h, 0, sizeof h);
	assert_false(engine_init(&h.engine, &s, &tunings, harness_emit, &h, &err));
	assert_string_equal(err.field, "channels");
	assert_non_null(strstr(err.text, "2 input channels, but only 1 output channel"));

	s.output.channels = 0x0006;
	start(&s);
	harness_send(&h, 0x90, 60, 100);           /* input 1 plays on channel 2 */
	harness_send(&h, 0xE1, 0x00, 0x50);        /* input 2's wheel, nothing sounds there */
	harness_clear(&h);
	harness_send(&h, 0x91, 62, 100);           /* input 2 plays on channel 3, bent */
	assert_int_equal(model.last_on_channel, 2);
	assert_int_equal(model.ch[2].bend, 0x2800);
	assert_int_equal(model.ch[1].bend, 8192);  /* channel 2's note is left alone */
	assert_int_equal(model.violations, 0);
}

static void mts_bulk_dump_with_checksum(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	s.output.mts_bulk = true;
	s.output.mts_key = MTS_KEY_OWN;
	start(&s);
	/* the dump is the last thing set-up sends: 408 bytes */
	assert_true(h.length >= 408);
	const uint8_t *d = h.log + h.length - 408;
	assert_int_equal(d[0], 0xF0);
	assert_int_equal(d[1], 0x7E);
	assert_int_equal(d[4], 0x01);
	assert_int_equal(d[407], 0xF7);
	uint8_t sum = 0;
	for (int i = 1; i < 406; i++) /* 7E through the last data byte */
		sum ^= d[i];
	assert_int_equal(d[406], sum & 0x7F);
	assert_int_equal(memcmp(d + 22 + 3 * 60, keymaps[0].keys[60].mts, 3), 0);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100); /* already held: no single-note change */
	EXPECT(0xE0, 0x00, 0x40, 0x90, 60, 100);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(mts_setup_selects_program),
		cmocka_unit_test(mts_tunes_a_key_before_its_note),
		cmocka_unit_test(mts_never_retunes_a_sounding_key),
		cmocka_unit_test(mts_one_output_channel_per_input),
		cmocka_unit_test(mts_bulk_dump_with_checksum),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
