/*
 * seq_event_bytes: ALSA sequencer events <-> raw MIDI bytes, the edge
 * conversion of the alsa backend, kept apart so that it can be tested
 * without a sequencer.
 *
 * Event to bytes (input): every message comes out whole with its status
 * byte (no running status), so the bytes of one event can go to a MIDI
 * parser as they are.
 *   - Pitch bend is signed around 0 in the sequencer (-8192..8191) and
 *     becomes the 14-bit wire value 0..16383, LSB first.  Values outside
 *     the range are clamped (alsa-lib's own decoder wraps them).
 *   - A Note On with velocity 0 stays a Note On: releasing is the parser's
 *     business.
 *   - CONTROL14, REGPARAM and NONREGPARAM (sent only by software clients)
 *     expand into the CC sequence alsa-lib's decoder produces: CC n (MSB)
 *     then CC n+32 (LSB) for a controller below 32, one 7-bit CC above;
 *     101, 100 (RPN) or 99, 98 (NRPN), then 6 and 38 (data entry).
 *   - SysEx is not copied: seq_event_sysex() hands out the event's own
 *     bytes.  A long SysEx arrives as several events; only the first holds
 *     F0 and only the last F7.
 *   - Events that carry no MIDI message (notices, queue control, ...)
 *     give no bytes.
 *
 * Bytes to event (output): one complete message, status byte first, fills
 * an event's type and data; the caller sets source, destination and
 * queue.  A SysEx (F0 ... F7, any length) becomes one variable-length
 * event that points at the caller's bytes: they must stay valid until
 * snd_seq_event_output() has copied them.
 */
#ifndef LATTICED_SEQ_EVENT_BYTES_H
#define LATTICED_SEQ_EVENT_BYTES_H

#include <alsa/asoundlib.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

/* The longest expansion: an RPN/NRPN event is four CCs of three bytes. */
#define SEQ_EVENT_BYTES_MAX 12

/* Bytes of a non-SysEx event into out; returns their count, 0 if none. */
size_t seq_event_to_bytes(const snd_seq_event_t *ev, uint8_t out[SEQ_EVENT_BYTES_MAX]);

/* For a SYSEX event with data: its bytes and length; false otherwise. */
bool seq_event_sysex(const snd_seq_event_t *ev, const uint8_t **bytes, size_t *length);

/* Fills ev->type, ev->flags (length mode) and ev->data from one complete
 * message; false (ev untouched) if the bytes are not one well-formed
 * message: unknown or undefined status, wrong length, a data byte with
 * bit 7 set, a SysEx not ending in F7. */
bool seq_event_from_bytes(snd_seq_event_t *ev, const uint8_t *bytes, size_t length);

#endif
