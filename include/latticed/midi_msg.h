/*
 * midi_msg: one MIDI 1.0 message as a plain value.
 *
 * A channel message carries its channel in the low nibble of `status`
 * (0x80..0xEF) and up to two 7-bit data bytes.  A system message has status
 * 0xF0..0xFF.  A SysEx message (0xF0) does not copy its bytes: `sysex` points
 * at the complete message from F0 to F7 in a buffer someone else owns (the
 * parser's, a file's, the caller's), so a message stays a small value that
 * can be copied freely on the event path.
 */
#ifndef LATTICED_MIDI_MSG_H
#define LATTICED_MIDI_MSG_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

/* status values */
enum {
	MIDI_NOTE_OFF = 0x80,
	MIDI_NOTE_ON = 0x90,
	MIDI_POLY_PRESSURE = 0xA0,
	MIDI_CONTROL = 0xB0,
	MIDI_PROGRAM = 0xC0,
	MIDI_CHANNEL_PRESSURE = 0xD0,
	MIDI_PITCH_BEND = 0xE0,
	MIDI_SYSEX = 0xF0,
	MIDI_MTC_QUARTER = 0xF1,
	MIDI_SONG_POSITION = 0xF2,
	MIDI_SONG_SELECT = 0xF3,
	MIDI_TUNE_REQUEST = 0xF6,
	MIDI_SYSEX_END = 0xF7,
	MIDI_CLOCK = 0xF8,
	MIDI_START = 0xFA,
	MIDI_CONTINUE = 0xFB,
	MIDI_STOP = 0xFC,
	MIDI_ACTIVE_SENSING = 0xFE,
	MIDI_RESET = 0xFF
};

/* Release velocity for a Note On with velocity 0 read as Note Off: the
 * velocity MIDI 1.0 prescribes for senders without velocity sensing (from memory). */
#define MIDI_DEFAULT_VELOCITY 64

#define MIDI_PITCH_BEND_CENTRE 8192

struct midi_msg {
	uint8_t status;          /* 0x80..0xEF channel messages (channel in low nibble), 0xF0..0xFF system */
	uint8_t data[2];         /* data bytes 0..127; unused ones are 0 */
	uint16_t sysex_length;   /* status 0xF0 only: bytes at `sysex`, F0 and F7 included */
	const uint8_t *sysex;    /* status 0xF0 only: the complete message F0 ... F7 */
};

static inline bool midi_msg_is_channel(const struct midi_msg *m)
{
	return m->status >= 0x80 && m->status < 0xF0;
}

/* status & 0xF0 for channel messages, else status */
static inline uint8_t midi_msg_type(const struct midi_msg *m)
{
	return midi_msg_is_channel(m) ? (uint8_t)(m->status & 0xF0) : m->status;
}

/* 0..15; meaningful for channel messages only (0 for system messages). */
static inline uint8_t midi_msg_channel(const struct midi_msg *m)
{
	return midi_msg_is_channel(m) ? (uint8_t)(m->status & 0x0F) : 0;
}

/* Real-time messages (F8..FF) may appear anywhere in a stream. */
static inline bool midi_status_is_realtime(uint8_t status)
{
	return status >= 0xF8;
}

/* Number of data bytes a status byte takes (0, 1 or 2); for F0 returns 0
 * (variable).  Returns -1 for a data byte (below 0x80). */
int midi_status_data_length(uint8_t status);

/* The same for a channel status (80..EF): program change and channel
 * pressure (Cn, Dn) take one, the others two. */
static inline int midi_channel_data_length(uint8_t status)
{
	return (status & 0xE0) == 0xC0 ? 1 : 2;
}

/* A message from its parts; data bytes are masked to 7 bits. */
static inline struct midi_msg midi_msg_make(uint8_t status, uint8_t d1, uint8_t d2)
{
	struct midi_msg m = { status, { (uint8_t)(d1 & 0x7F), (uint8_t)(d2 & 0x7F) }, 0, NULL };
	return m;
}

static inline struct midi_msg midi_msg_channel_make(uint8_t type, uint8_t channel,
						    uint8_t d1, uint8_t d2)
{
	return midi_msg_make((uint8_t)((type & 0xF0) | (channel & 0x0F)), d1, d2);
}

static inline struct midi_msg midi_msg_note_on(uint8_t channel, uint8_t key, uint8_t velocity)
{
	return midi_msg_channel_make(MIDI_NOTE_ON, channel, key, velocity);
}

static inline struct midi_msg midi_msg_note_off(uint8_t channel, uint8_t key, uint8_t velocity)
{
	return midi_msg_channel_make(MIDI_NOTE_OFF, channel, key, velocity);
}

static inline struct midi_msg midi_msg_control(uint8_t channel, uint8_t controller, uint8_t value)
{
	return midi_msg_channel_make(MIDI_CONTROL, channel, controller, value);
}

static inline struct midi_msg midi_msg_program(uint8_t channel, uint8_t program)
{
	return midi_msg_channel_make(MIDI_PROGRAM, channel, program, 0);
}

static inline struct midi_msg midi_msg_channel_pressure(uint8_t channel, uint8_t pressure)
{
	return midi_msg_channel_make(MIDI_CHANNEL_PRESSURE, channel, pressure, 0);
}

static inline struct midi_msg midi_msg_poly_pressure(uint8_t channel, uint8_t key, uint8_t pressure)
{
	return midi_msg_channel_make(MIDI_POLY_PRESSURE, channel, key, pressure);
}

/* value 0..16383 (clamped), centre 8192; sent LSB first. */
static inline struct midi_msg midi_msg_pitch_bend(uint8_t channel, unsigned value)
{
	if (value > 16383)
		value = 16383;
	return midi_msg_channel_make(MIDI_PITCH_BEND, channel, (uint8_t)(value & 0x7F),
				     (uint8_t)(value >> 7));
}

/* The 14-bit value of a pitch bend message (or of a song position pointer). */
static inline unsigned midi_msg_pitch_bend_value(const struct midi_msg *m)
{
	return (unsigned)m->data[0] | ((unsigned)m->data[1] << 7);
}

/* A SysEx message over `bytes`, which must hold the whole message F0 ... F7.
 * The bytes are not copied. */
static inline struct midi_msg midi_msg_sysex(const uint8_t *bytes, uint16_t length)
{
	struct midi_msg m = { MIDI_SYSEX, { 0, 0 }, length, bytes };
	return m;
}

/* A message with a status byte and the right number of 7-bit data bytes;
 * a SysEx must start with F0, end with F7 and hold only data bytes between.
 * The undefined status bytes F4, F5, F9 and FD are not valid messages. */
bool midi_msg_is_valid(const struct midi_msg *m);

/* Same status and data; for SysEx, the same bytes (not the same pointer). */
bool midi_msg_equal(const struct midi_msg *a, const struct midi_msg *b);

#endif
