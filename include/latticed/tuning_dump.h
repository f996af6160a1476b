/*
 * tuning_dump: a whole key map as MIDI Tuning Standard messages, for a
 * synth to keep: what `latticed table --syx` writes, a .syx file any
 * SysEx librarian can send.
 *
 * Model: the synth is played directly, without latticed, so key k must
 * sound key k's pitch: a sounding key gets its own MTS frequency word; a
 * key the map leaves silent, or whose pitch MIDI cannot express, keeps
 * its 12-TET pitch (word kk 00 00).  Two forms of the same 128 words:
 *   bulk       one bulk tuning dump (F0 7E dd 08 01 tt, a 16-character
 *              name, 128 words, checksum, F7): 408 bytes;
 *   single     real-time single-note tuning changes (F0 7F dd 08 02 tt ll
 *              ...), two messages of 64 keys, for synths that take only
 *              that form: 528 bytes.
 * dd is the device ID (0x7F: every device), tt the tuning program.
 */
#ifndef LATTICED_TUNING_DUMP_H
#define LATTICED_TUNING_DUMP_H

#include <stddef.h>
#include <stdint.h>

#include "latticed/keymap.h"

#define TUNING_DUMP_MAX 528
#define TUNING_DUMP_ALL_DEVICES 0x7F
#define TUNING_DUMP_NAME_MAX 16

enum tuning_dump_form { TUNING_DUMP_BULK, TUNING_DUMP_SINGLE };

/* The 128 words described above. */
void tuning_dump_words(const struct keymap *map, uint8_t words[128][3]);

/*
 * Writes the messages of `form` into out (cap >= TUNING_DUMP_MAX) and
 * returns their length, or 0 if cap is too small.  name (bulk only) is cut
 * to 16 characters, padded with spaces, non-ASCII bytes replaced by '?'.
 */
size_t tuning_dump_build(enum tuning_dump_form form, const struct keymap *map,
			 uint8_t device, uint8_t program, const char *name,
			 uint8_t *out, size_t cap);

#endif
