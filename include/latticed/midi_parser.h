/*
 * midi_parser: turns a MIDI 1.0 byte stream into messages, one byte at a time.
 *
 * Contract (MIDI 1.0):
 *   - Running status: after a channel message, data bytes without a status
 *     byte reuse the last channel status.  Real-time bytes leave it alone;
 *     system common (F1..F7) and SysEx (F0) cancel it, after which a bare
 *     data byte is a stray byte: counted and dropped.
 *   - Real-time bytes (F8..FF) are delivered at once as their own message
 *     wherever they arrive, even between the data bytes of a note or inside
 *     a SysEx; the interrupted message then continues.
 *   - Undefined bytes F4, F5 (system common range) and F9, FD (real-time
 *     range) are counted and deliver nothing.  F9/FD, being real-time bytes,
 *     leave everything as it was; F4/F5 are status bytes and, like any
 *     system common byte, end a partial message and cancel running status.
 *   - SysEx of any length is collected in the caller's buffer and delivered
 *     whole (F0 ... F7) when F7 arrives.  One that does not fit is dropped
 *     whole and counted, never delivered truncated.  One cut short by
 *     another non-real-time status byte is dropped and counted (we cannot
 *     know it was complete); the new status byte then starts its message.
 *   - A channel or system common message cut short by a status byte is
 *     dropped and counted in truncated_messages.
 *   - Note On with velocity 0 is delivered as Note Off (0x8n, same key)
 *     with release velocity 64.
 *   - F7 with no SysEx in progress is ignored and counted.
 * Messages that point at the SysEx buffer stay valid until the next feed.
 * The parser never allocates; it owns no memory.
 */
#ifndef LATTICED_MIDI_PARSER_H
#define LATTICED_MIDI_PARSER_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/midi_msg.h"

struct midi_parser_stats {
	uint32_t stray_data_bytes;    /* data bytes with no status to belong to */
	uint32_t sysex_overflows;     /* SysEx longer than the buffer, dropped */
	uint32_t sysex_interrupted;   /* SysEx ended by a status byte other than F7, dropped */
	uint32_t undefined_bytes;     /* F4, F5, F9, FD */
	uint32_t truncated_messages;  /* channel/system common message cut short, dropped */
	uint32_t stray_sysex_ends;    /* F7 with no SysEx in progress */
};

struct midi_parser {
	/* private state */
	uint8_t status;          /* status the next data bytes belong to, 0 = none */
	uint8_t data[2];
	uint8_t data_count;
	uint8_t data_needed;
	bool partial;            /* a message has begun and is not complete */
	bool in_sysex;
	bool sysex_overflowed;
	uint8_t *sysex_buffer;
	size_t sysex_capacity;   /* at most UINT16_MAX is used */
	size_t sysex_length;
	struct midi_parser_stats stats;
};

/* sysex_buffer may be NULL (capacity 0): every SysEx is then an overflow. */
void midi_parser_init(struct midi_parser *p, uint8_t *sysex_buffer, size_t sysex_capacity);

/* Feeds one byte; returns true and fills *out when a message is complete. */
bool midi_parser_feed(struct midi_parser *p, uint8_t byte, struct midi_msg *out);

/* forget running status and any partial message; keeps buffer and stats */
void midi_parser_reset(struct midi_parser *p);

#endif
