/*
 * mts: MIDI Tuning Standard messages.
 *
 *   single-note tuning change (real time):
 *     F0 7F dd 08 02 tt ll [kk xx yy zz] x ll F7      (8 + 4 ll bytes)
 *   bulk tuning dump:
 *     F0 7E dd 08 01 tt <16-byte name> [xx yy zz] x 128 cs F7   (408 bytes)
 * dd is the device ID (7F = every device), tt the tuning program, kk a
 * key, xx yy zz a frequency word (see pitch.h).  The dump's checksum is
 * the XOR of every byte from 7E to the last data byte, masked to 7 bits:
 * sources disagree on the exact span, this one is the recommended choice,
 * and receivers are advised not to reject on a mismatch.
 * Private to the core (the engine sends them).
 */
#ifndef LATTICED_CORE_MTS_H
#define LATTICED_CORE_MTS_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define MTS_BULK_DUMP_LENGTH 408
#define MTS_SINGLE_NOTE_LENGTH(count) (8 + 4 * (count))
#define MTS_DEVICE_ALL 0x7F

/* Returns the length written, or 0 if cap is too small or count is not 1..127. */
size_t mts_single_note_change(uint8_t device, uint8_t program, int count,
			      const uint8_t *keys, const uint8_t (*words)[3],
			      uint8_t *out, size_t cap);

/* name: up to 16 characters, padded with spaces; non-ASCII replaced by '?'. */
size_t mts_bulk_dump(uint8_t device, uint8_t program, const char *name,
		     const uint8_t (*words)[3], uint8_t *out, size_t cap);

/* XOR of bytes[0..length-1] masked to 7 bits. */
uint8_t mts_checksum(const uint8_t *bytes, size_t length);

#endif
