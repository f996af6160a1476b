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

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(mpe_setup_sends_mcm_then_ranges),
		cmocka_unit_test(mpe_notes_rotate_wheel_on_master),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
