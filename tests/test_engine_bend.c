/*
 * Tests of the bend method (src/core/engine_bend.c): the set-up RPN 0 on
 * every pool channel, the bend before its note, the free channel with the
 * same bend first and then the one released longest ago, sharing and
 * stealing by the polyphony policy (our rules; the release order is common
 * practice).  Byte layouts: engine_test.h.
 */
#include "engine_test.h"

static void bend_setup_sends_rpn0(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0006; /* channels 2 and 3 */
	start(&s);
	/* RPN 0 = 2 semitones, then RPN null, on each pool channel */
	EXPECT(0xB1, 101, 0, 0xB1, 100, 0, 0xB1, 6, 2, 0xB1, 101, 127, 0xB1, 100, 127,
	       0xB2, 101, 0, 0xB2, 100, 0, 0xB2, 6, 2, 0xB2, 101, 127, 0xB2, 100, 127);
}

static void bend_note_gets_its_bend_first(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_clear(&h);
	/* key 60 plays 3/2 over 220 Hz = 330 Hz: key 64 +1.955 cents, bend 8272
	 * (8192 + round(1.955/200 * 8192)) = bytes 50 40 */
	harness_send(&h, 0x90, 60, 100);
	EXPECT(0xE1, 0x50, 0x40, 0x91, 64, 100);
	harness_send(&h, 0x80, 60, 33); /* release velocity kept */
	EXPECT(0x81, 64, 33);
	/* note-on with velocity 0 is a note-off (MIDI 1.0) */
	harness_send(&h, 0x90, 61, 90);
	harness_clear(&h);
	harness_send(&h, 0x90, 61, 0);
	assert_int_equal(h.log[0] & 0xF0, 0x80);
	assert_int_equal(model.violations, 0);
}

static void free_channel_with_same_bend_first_then_lru(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x000E; /* 2, 3, 4 */
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100); /* 3/2 on channel 2 */
	harness_send(&h, 0x90, 61, 100); /* 7/4 on channel 3 */
	harness_send(&h, 0x90, 62, 100); /* 15/8 on channel 4 */
	harness_send(&h, 0x80, 61, 0);   /* channel 3 free first */
	harness_send(&h, 0x80, 60, 0);   /* then 2 */
	harness_send(&h, 0x80, 62, 0);   /* then 4 */
	harness_clear(&h);
	/* key 66 is 3/2 an octave up: the same bend as channel 2 has, so it
	 * takes channel 2 with no bend message, though 3 was freed earlier */
	harness_send(&h, 0x90, 66, 100);
	EXPECT(0x91, 76, 100);
	/* a new bend: the free channel released longest ago, channel 3 */
	harness_send(&h, 0x90, 58, 100); /* 5/4: 275 Hz, key 61 -13.686 c = 7631 */
	EXPECT(0xE2, 7631 & 0x7F, 7631 >> 7, 0x92, 61, 100);
}

static void share_then_steal(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0002; /* only channel 2 */
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	harness_send(&h, 0x90, 66, 100); /* same bend: shares channel 2 */
	EXPECT(0xE1, 0x50, 0x40, 0x91, 64, 100, 0x91, 76, 100);
	assert_int_equal(stats()->notes_shared, 1);
	/* a different bend: the channel is stolen, its notes ended cleanly
	 * (note-offs, then all-sound-off), then the new note */
	harness_send(&h, 0x90, 61, 100); /* 7/4: 385 Hz, key 67 -31.174 c = 6915 */
	EXPECT(0x81, 64, 64, 0x81, 76, 64, 0xB1, 120, 0, 0xE1, 6915 & 0x7F, 6915 >> 7, 0x91, 67, 100);
	assert_int_equal(stats()->notes_stolen, 1);
	/* the stolen keys' own note-offs are swallowed */
	harness_send(&h, 0x80, 60, 0);
	harness_send(&h, 0x80, 66, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(model.violations, 0);

	s.output.polyphony = POLY_SHARE;
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_clear(&h);
	harness_send(&h, 0x90, 61, 100); /* nowhere to go: dropped */
	expect_bytes(NULL, 0);
	assert_int_equal(stats()->notes_dropped, 1);
	assert_true(engine_take_notices(&h.engine) & NOTICE_NOTE_DROPPED);
	assert_false(engine_take_notices(&h.engine) & NOTICE_NOTE_DROPPED); /* once */

	s.output.polyphony = POLY_STEAL;
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_clear(&h);
	harness_send(&h, 0x90, 66, 100); /* same bend, but steal never shares */
	EXPECT(0x81, 64, 64, 0xB1, 120, 0, 0x91, 76, 100);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(bend_setup_sends_rpn0),
		cmocka_unit_test(bend_note_gets_its_bend_first),
		cmocka_unit_test(free_channel_with_same_bend_first_then_lru),
		cmocka_unit_test(share_then_steal),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
