/*
 * midi_msg: one MIDI 1.0 message as the rest of latticed sees it.
 *
 * Provisional copy of the interface the parser module implements; the
 * parser branch owns this file.
 */
#ifndef LATTICED_MIDI_MSG_H
#define LATTICED_MIDI_MSG_H

#include <stdbool.h>
#include <stdint.h>

enum {
	MIDI_NOTE_OFF = 0x80, MIDI_NOTE_ON = 0x90, MIDI_POLY_PRESSURE = 0xA0,
	MIDI_CONTROL = 0xB0, MIDI_PROGRAM = 0xC0, MIDI_CHANNEL_PRESSURE = 0xD0,
	MIDI_PITCH_BEND = 0xE0, MIDI_SYSEX = 0xF0, MIDI_MTC_QUARTER = 0xF1,
	MIDI_SONG_POSITION = 0xF2, MIDI_SONG_SELECT = 0xF3, MIDI_TUNE_REQUEST = 0xF6,
	MIDI_SYSEX_END = 0xF7, MIDI_CLOCK = 0xF8, MIDI_START = 0xFA,
	MIDI_CONTINUE = 0xFB, MIDI_STOP = 0xFC, MIDI_ACTIVE_SENSING = 0xFE,
	MIDI_RESET = 0xFF,
};

struct midi_msg {
	uint8_t status;
	uint8_t data[2];
	uint16_t sysex_length;
	const uint8_t *sysex;
};

static inline bool midi_msg_is_channel(const struct midi_msg *m)
{
	return m->status >= 0x80 && m->status < 0xF0;
}

static inline uint8_t midi_msg_type(const struct midi_msg *m)
{
	return midi_msg_is_channel(m) ? (uint8_t)(m->status & 0xF0) : m->status;
}

static inline uint8_t midi_msg_channel(const struct midi_msg *m)
{
	return (uint8_t)(m->status & 0x0F);
}

#endif
