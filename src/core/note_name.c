/*
 * note_name: key numbers to note names (contract in note_name.h).
 *
 * The octave is floor(key / 12) - 1; keys are 0..127, so plain integer
 * division is the floor.
 */
#include "latticed/note_name.h"

#include <stdio.h>

static const char *const pitch_class_names[12] = {
	"C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B",
};

char *note_name(int key, char *buf, size_t size)
{
	if (key < 0 || key > 127)
		snprintf(buf, size, "?");
	else
		snprintf(buf, size, "%s%d", pitch_class_names[key % 12], key / 12 - 1);
	return buf;
}

bool note_is_black(int key)
{
	int pc = ((key % 12) + 12) % 12;
	return pc == 1 || pc == 3 || pc == 6 || pc == 8 || pc == 10;
}
