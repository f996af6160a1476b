/*
 * pm_bytes: PortMidi's 32-bit event words <-> raw MIDI bytes, the edge
 * conversion of the portmidi backend, kept apart so that it can be tested
 * without PortMidi.
 *
 * A PmEvent's message holds up to four bytes, the first in the low byte
 * (portmidi.h).  A channel or system message takes one word.  A SysEx is
 * packed four bytes a word from its F0 to its F7; bytes after the F7 in the
 * last word mean nothing.  A real-time message may arrive between two SysEx
 * words, always as a word of its own (portmidi.h, "A real-time message can
 * occur within a sysex message").  The converter passes such a byte on at
 * once and stays inside the SysEx; a status byte of any other kind ends the
 * SysEx (MIDI 1.0), and a data word with no SysEx open (we joined in the
 * middle of one) is dropped.  A real-time byte found inside a packed word,
 * which PortMidi promises not to produce, is passed on where it stands.
 */
#ifndef LATTICED_PM_BYTES_H
#define LATTICED_PM_BYTES_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

struct pm_bytes {
	bool in_sysex;
	uint32_t dropped_words;   /* SysEx data with no F0 before it */
};

void pm_bytes_init(struct pm_bytes *c);

/* The bytes one word stands for, in order, into out; returns their count. */
size_t pm_bytes_from_word(struct pm_bytes *c, uint32_t message, uint8_t out[4]);

/* Data bytes after a status byte (MIDI 1.0); 0 for real-time and for bytes
 * that are no status. */
int pm_bytes_data_length(uint8_t status);

/* The word for a channel, system common or real-time message of up to
 * three bytes (Pm_Message), or false for SysEx and malformed input. */
bool pm_bytes_to_word(const uint8_t *bytes, size_t length, uint32_t *message);

#endif
