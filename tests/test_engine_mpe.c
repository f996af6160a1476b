/*
 * Tests of the mpe method (src/core/engine_mpe.c): the MPE Configuration
 * Message and the bend ranges at set-up (MPE 1.0 sections 2.1, 2.4),
 * notes rotated over the members, the player's wheel and global
 * controllers on the master channel, poly pressure as the member's
 * channel pressure.
 */
#include "engine_test.h"

static void mpe_setup_sends_mcm_then_ranges(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MPE);
	s.output.mpe_members = 2;
	start(&s);
	/* MCM: RPN 6 on the master (channel 1) = 2 members; master range 2;
	 * members 2 and 3 get 48 (MPE 1.0 sections 2.1, 2.4) */
	EXPECT(0xB0, 101, 0, 0xB0, 100, 6, 0xB0, 6, 2, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB0, 101, 0, 0xB0, 100, 0, 0xB0, 6, 2, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB1, 101, 0, 0xB1, 100, 0, 0xB1, 6, 48, 0xB1, 101, 127, 0xB1, 100, 127,
	       0xB2, 101, 0, 0xB2, 100, 0, 0xB2, 6, 48, 0xB2, 101, 127, 0xB2, 100, 127);
}

static void mpe_notes_rotate_wheel_on_master(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MPE);
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	/* member channel 2, bend for +1.955 cents at 48 semitones: 8195 */
	EXPECT(0xE1, 8195 & 0x7F, 8195 >> 7, 0x91, 64, 100);
	model.bend_change_allowed = true;
	harness_send(&h, 0xE0, 0x00, 0x50); /* the wheel goes to the master channel */
	model.bend_change_allowed = false;
	EXPECT(0xE0, 0x00, 0x50);
	harness_send(&h, 0xD0, 40, 0); /* global pressure: master */
	EXPECT(0xD0, 40);
	harness_send(&h, 0xA0, 60, 70); /* poly pressure becomes the member's pressure */
	EXPECT(0xD1, 70);
	double wheel = (0x2800 - 8192) / 8192.0 * 2.0;
	assert_true(fabs(model_pitch(&model, 1, 64) - (key_note(0, 60) + wheel)) <
		    0.5 * 48.0 / 8192 + 0.5 * 2.0 / 8192 + 1e-9);
}

/* Channel 10 left out of the output's channels (the fixture's 2-9, 11-16,
 * as the config's default) is never given a retuned note, and a drum track
 * the input passes through on it goes out unchanged, as with the bend
 * method (our rule; MPE 1.0 section 2.1 puts 10 in a 15-member lower zone,
 * which the MCM still announces). */
static void mpe_passes_a_drum_track_on_10_through(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MPE);
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x99, 36, 100);
	EXPECT(0x99, 36, 100);
	harness_send(&h, 0x89, 36, 0);
	EXPECT(0x89, 36, 0);
	assert_int_equal(stats()->passthrough_blocked, 0);
	/* 20 notes held: 14 members, none on channel 10 */
	for (int k = 0; k < 20; k++)
		harness_send(&h, 0x90, (uint8_t)(40 + k), 100);
	for (size_t i = 0; i < h.length; i++)
		if (h.log[i] >= 0x80 && h.log[i] < 0xF0)
			assert_int_not_equal(h.log[i] & 0x0F, 9);
	/* a member the channels leave out gets no bend range either */
	harness_clear(&h);
	engine_start(&h.engine);
	for (size_t i = 0; i < h.length; i++)
		if (h.log[i] >= 0x80 && h.log[i] < 0xF0)
			assert_int_not_equal(h.log[i] & 0x0F, 9);
}

/* Channels that leave the zone no member are refused (our rule). */
static void mpe_refuses_channels_outside_the_zone(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MPE);
	s.output.mpe_members = 3;       /* members 2-4 */
	s.output.channels = 0xFF00;     /* 9-16 */
	struct engine e;
	struct core_error err;
	assert_false(engine_init(&e, &s, &tunings, harness_emit, &h, &err));
	assert_string_equal(err.field, "channels");
	assert_non_null(strstr(err.text, "2 to 4"));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(mpe_setup_sends_mcm_then_ranges),
		cmocka_unit_test(mpe_notes_rotate_wheel_on_master),
		cmocka_unit_test(mpe_passes_a_drum_track_on_10_through),
		cmocka_unit_test(mpe_refuses_channels_outside_the_zone),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
