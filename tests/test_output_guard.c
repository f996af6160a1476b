/*
 * Tests of the load guard's classes for the messages that steer
 * (output_guard.c with engine_steers): a message that changes the preset
 * or root is never a note or a value the guard may leave out or merge,
 * since every output must step alike; the panic binding is told apart so
 * room for a whole panic is found first.  (Our rules: output_guard.h and
 * the load model in DEVELOPERS.md; the messages are MIDI 1.0's.)
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include "engine_fixture.h"
#include "output_guard.h"

static struct lattice lattices[2];
static struct keymap keymaps[2];
static struct engine_tunings tunings;
static struct engine engine;

static void discard(void *context, const struct midi_msg *m)
{
	(void)context;
	(void)m;
}

static void init(const struct engine_spec *spec)
{
	struct core_error err;
	if (!fixture_two_presets(lattices, keymaps, &tunings, &err) ||
	    !engine_init(&engine, spec, &tunings, discard, NULL, &err))
		fail_msg("%s", err.text);
}

/* A reserved key on the playing channel is a tuning command, not a new
 * note: left out above the high-water mark by one output and not another,
 * it would leave the outputs in different presets. */
static void reserved_keys_are_never_shed(void **state)
{
	(void)state;
	struct engine_spec s = fixture_spec(RETUNE_BEND);
	s.control.preset_keys = 0;
	s.control.root_keys = 100;
	init(&s);
	struct midi_msg m = midi_msg_note_on(0, 1, 100);
	assert_int_equal(guard_classify(&engine, &m), GUARD_MUST);
	m = midi_msg_note_on(0, 103, 100);
	assert_int_equal(guard_classify(&engine, &m), GUARD_MUST);
	m = midi_msg_note_on(0, 60, 100);
	assert_int_equal(guard_classify(&engine, &m), GUARD_NOTE_ON);
}

/* Bound controllers on the playing channel steer; other controllers stay
 * values to merge; the panic binding needs room for a whole panic. */
static void bindings_on_the_playing_channel(void **state)
{
	(void)state;
	struct engine_spec s = fixture_spec(RETUNE_BEND);
	s.control.channel = ENGINE_CONTROL_PLAYING;
	s.control.actions[ENGINE_ACTION_PRESET_NEXT] = (struct engine_binding){ENGINE_BINDING_CC, 80, false};
	s.control.actions[ENGINE_ACTION_PANIC] = (struct engine_binding){ENGINE_BINDING_CC, 119, false};
	init(&s);
	struct midi_msg next = midi_msg_control(0, 80, 127), panic = midi_msg_control(0, 119, 127);
	struct midi_msg mod = midi_msg_control(0, 1, 64);
	assert_int_equal(guard_classify(&engine, &next), GUARD_MUST);
	assert_int_equal(guard_classify(&engine, &panic), GUARD_MUST);
	assert_int_equal(guard_classify(&engine, &mod), GUARD_MERGE);
	assert_int_equal(guard_must_slots(&engine, &panic), guard_end_slots(&engine));
	assert_true(guard_must_slots(&engine, &next) < guard_end_slots(&engine));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(reserved_keys_are_never_shed),
		cmocka_unit_test(bindings_on_the_playing_channel),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
