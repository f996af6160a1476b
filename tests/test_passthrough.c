/*
 * test_passthrough: the record of pass-through notes and pedals, checked
 * against the MIDI 1.0 receiver rules it models: a note sounds until its
 * note-off (a note-on with velocity 0 is one), longer while the sustain
 * pedal (CC64 >= 64) is down, or sostenuto (CC66) if it was down when the
 * pedal went down; All Sound Off (CC120) ends a channel's notes, All Notes
 * Off (CC123, and the mode messages 124-127) releases them, Reset All
 * Controllers (CC121) lifts the pedals.  What passthrough_end sends is
 * recorded as bytes and read back message by message.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include <cmocka.h>

#include "latticed/passthrough.h"

struct sent {
	int count;
	uint8_t bytes[4096][3];
};

static struct passthrough p;
static struct sent out;

static void record(void *context, const struct midi_msg *m)
{
	struct sent *s = context;
	if (s->count < 4096) {
		s->bytes[s->count][0] = m->status;
		s->bytes[s->count][1] = m->data[0];
		s->bytes[s->count][2] = m->data[1];
	}
	s->count++;
}

static void pass(uint8_t source, uint8_t status, uint8_t d1, uint8_t d2)
{
	struct midi_msg m = midi_msg_make(status, d1, d2);
	assert_true(passthrough_record(&p, source, &m));
}

static int end(int source)
{
	memset(&out, 0, sizeof out);
	return passthrough_end(&p, source, record, &out);
}

static void expect_sent(int i, uint8_t status, uint8_t d1, uint8_t d2)
{
	assert_true(i < out.count);
	assert_int_equal(out.bytes[i][0], status);
	assert_int_equal(out.bytes[i][1], d1);
	assert_int_equal(out.bytes[i][2], d2);
}

static int setup(void **state)
{
	(void)state;
	passthrough_init(&p);
	return 0;
}

static void a_released_note_leaves_nothing_to_end(void **state)
{
	(void)state;
	pass(0, 0x99, 36, 100);
	pass(0, 0x89, 36, 0);
	pass(0, 0x99, 38, 100);
	pass(0, 0x99, 38, 0);                 /* velocity 0: a note-off */
	assert_int_equal(passthrough_held(&p), 0);
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), 0);
}

static void a_held_note_gets_its_note_off(void **state)
{
	(void)state;
	pass(0, 0x99, 36, 100);
	pass(3, 0x9B, 40, 90);
	assert_int_equal(passthrough_held(&p), 2);
	assert_int_equal(passthrough_end_size(&p), 2);
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), 2);
	expect_sent(0, 0x89, 36, 64);
	expect_sent(1, 0x8B, 40, 64);
	assert_int_equal(passthrough_held(&p), 0);
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), 0);
}

static void a_source_takes_only_its_own_notes_and_pedals(void **state)
{
	(void)state;
	pass(0, 0x99, 36, 100);
	pass(1, 0xB9, 64, 127);               /* source 1 holds the pedal of 10 */
	pass(1, 0x9B, 40, 90);
	assert_int_equal(end(1), 2);
	expect_sent(0, 0x8B, 40, 64);
	expect_sent(1, 0xB9, 64, 0);
	assert_true(passthrough_holds(&p, 0, 9, 36));
	assert_false(passthrough_pedal_down(&p, 9, 64));
	assert_int_equal(end(1), 0);
	assert_int_equal(end(0), 1);
	expect_sent(0, 0x89, 36, 64);
}

static void a_note_released_under_sustain_rings_until_the_pedal_goes_up(void **state)
{
	(void)state;
	pass(0, 0xB9, 64, 127);
	pass(0, 0x99, 42, 90);
	pass(0, 0x89, 42, 0);
	assert_int_equal(passthrough_held(&p), 0);
	assert_int_equal(passthrough_ringing(&p), 1);
	pass(0, 0xB9, 64, 0);
	assert_int_equal(passthrough_ringing(&p), 0);
	/* and a panic lifts a pedal left down */
	pass(0, 0xB9, 64, 100);
	pass(0, 0x99, 42, 90);
	pass(0, 0x89, 42, 0);
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), 1);
	expect_sent(0, 0xB9, 64, 0);
	assert_int_equal(passthrough_ringing(&p), 0);
}

static void sostenuto_holds_only_the_notes_down_when_it_went_down(void **state)
{
	(void)state;
	pass(0, 0x99, 36, 100);
	pass(0, 0xB9, 66, 127);
	pass(0, 0x99, 38, 100);
	pass(0, 0x89, 36, 0);                 /* latched: rings */
	pass(0, 0x89, 38, 0);                 /* not latched: ends */
	assert_int_equal(passthrough_ringing(&p), 1);
	pass(0, 0xB9, 66, 0);
	assert_int_equal(passthrough_ringing(&p), 0);
}

static void channel_mode_messages_end_what_they_end_on_a_synth(void **state)
{
	(void)state;
	pass(0, 0x99, 36, 100);
	pass(1, 0x99, 38, 100);
	pass(0, 0x9A, 40, 100);
	pass(0, 0xB9, 123, 0);                /* all notes off on 10: both sources */
	assert_int_equal(passthrough_held(&p), 1);
	pass(0, 0xBA, 120, 0);                /* all sound off on 11 */
	assert_int_equal(passthrough_held(&p), 0);
	pass(0, 0xB9, 64, 127);
	pass(0, 0x99, 36, 100);
	pass(0, 0xB9, 123, 0);                /* released, but the pedal holds it */
	assert_int_equal(passthrough_ringing(&p), 1);
	pass(0, 0xB9, 121, 0);                /* reset all controllers lifts it */
	assert_int_equal(passthrough_ringing(&p), 0);
	assert_false(passthrough_pedal_down(&p, 9, 64));
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), 0);
}

static void the_table_of_held_notes_is_bounded(void **state)
{
	(void)state;
	for (int i = 0; i < PASSTHROUGH_MAX_NOTES; i++)
		pass((uint8_t)(i / 256), (uint8_t)(0x90 | (9 + (i / 128) % 2)), (uint8_t)(i % 128), 100);
	struct midi_msg more = midi_msg_note_on(12, 60, 100);
	assert_false(passthrough_record(&p, 5, &more));
	/* the same note again is no new entry; a note-off makes room */
	struct midi_msg again = midi_msg_note_on(9, 0, 100);
	assert_true(passthrough_record(&p, 0, &again));
	pass(0, 0x89, 0, 0);
	assert_true(passthrough_record(&p, 5, &more));
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), PASSTHROUGH_MAX_NOTES);
}

static void other_messages_change_nothing(void **state)
{
	(void)state;
	pass(0, 0xE9, 0, 64);
	pass(0, 0xC9, 5, 0);
	pass(0, 0xA9, 36, 50);
	pass(0, 0xB9, 7, 100);
	struct midi_msg clock = midi_msg_make(MIDI_CLOCK, 0, 0);
	assert_true(passthrough_record(&p, 0, &clock));
	assert_int_equal(passthrough_end_size(&p), 0);
	assert_int_equal(end(PASSTHROUGH_ALL_SOURCES), 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup(a_released_note_leaves_nothing_to_end, setup),
		cmocka_unit_test_setup(a_held_note_gets_its_note_off, setup),
		cmocka_unit_test_setup(a_source_takes_only_its_own_notes_and_pedals, setup),
		cmocka_unit_test_setup(a_note_released_under_sustain_rings_until_the_pedal_goes_up, setup),
		cmocka_unit_test_setup(sostenuto_holds_only_the_notes_down_when_it_went_down, setup),
		cmocka_unit_test_setup(channel_mode_messages_end_what_they_end_on_a_synth, setup),
		cmocka_unit_test_setup(the_table_of_held_notes_is_bounded, setup),
		cmocka_unit_test_setup(other_messages_change_nothing, setup),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
