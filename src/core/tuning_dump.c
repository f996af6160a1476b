/*
 * tuning_dump: the key map's words into MTS messages (contract in
 * tuning_dump.h), through the same builders the mts method sends with.
 */
#include "latticed/tuning_dump.h"

#include <string.h>

#include "mts.h"

#define SINGLE_KEYS 64

_Static_assert(TUNING_DUMP_MAX >= MTS_BULK_DUMP_LENGTH, "a bulk dump fits");
_Static_assert(TUNING_DUMP_MAX == 2 * MTS_SINGLE_NOTE_LENGTH(SINGLE_KEYS), "two messages fit");

void tuning_dump_words(const struct keymap *map, uint8_t words[128][3])
{
	for (int key = 0; key < 128; key++) {
		const struct key_pitch *kp = &map->keys[key];
		if (kp->state == KEY_SOUNDING) {
			memcpy(words[key], kp->mts, 3);
		} else {
			words[key][0] = (uint8_t)key;
			words[key][1] = words[key][2] = 0;
		}
	}
}

size_t tuning_dump_build(enum tuning_dump_form form, const struct keymap *map,
			 uint8_t device, uint8_t program, const char *name,
			 uint8_t *out, size_t cap)
{
	uint8_t words[128][3];
	tuning_dump_words(map, words);
	if (cap < TUNING_DUMP_MAX)
		return 0;
	if (form == TUNING_DUMP_BULK)
		return mts_bulk_dump(device, program, name, (const uint8_t (*)[3])words, out, cap);
	uint8_t keys[128];
	for (int k = 0; k < 128; k++)
		keys[k] = (uint8_t)k;
	size_t n = 0;
	for (int first = 0; first < 128; first += SINGLE_KEYS)
		n += mts_single_note_change(device, program, SINGLE_KEYS, keys + first,
					    (const uint8_t (*)[3])(words + first), out + n, cap - n);
	return n;
}
