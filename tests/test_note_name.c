/*
 * Tests of the 12-TET note names (src/core/note_name.c).
 *
 * Source: MIDI note-number naming as commonly practised, key 60 = C4 and
 * key 69 = A4 = 440 Hz (ISO 16 pitch, the MTS key numbering); the piano's
 * range A0 (21) to C8 (108) (common practice).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>

#include "latticed/note_name.h"

static void known_keys(void **state)
{
	(void)state;
	const struct { int key; const char *name; } table[] = {
		{60, "C4"}, {69, "A4"}, {61, "C#4"}, {59, "B3"}, {21, "A0"},
		{108, "C8"}, {0, "C-1"}, {1, "C#-1"}, {127, "G9"}, {57, "A3"},
		{64, "E4"}, {70, "A#4"}, {72, "C5"},
	};
	char buf[NOTE_NAME_MAX];
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++)
		assert_string_equal(note_name(table[i].key, buf, sizeof buf), table[i].name);
}

static void outside_the_keys(void **state)
{
	(void)state;
	char buf[NOTE_NAME_MAX];
	assert_string_equal(note_name(-1, buf, sizeof buf), "?");
	assert_string_equal(note_name(128, buf, sizeof buf), "?");
}

static void black_keys(void **state)
{
	(void)state;
	/* five black keys per octave: C# D# F# G# A# (common practice) */
	int black = 0;
	for (int k = 60; k < 72; k++)
		black += note_is_black(k);
	assert_int_equal(black, 5);
	assert_true(note_is_black(61));
	assert_true(note_is_black(70));
	assert_false(note_is_black(60));
	assert_false(note_is_black(64));
	assert_false(note_is_black(65));
	assert_true(note_is_black(1));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(known_keys),
		cmocka_unit_test(outside_the_keys),
		cmocka_unit_test(black_keys),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
