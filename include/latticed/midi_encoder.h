/*
 * midi_encoder: writes messages as MIDI 1.0 bytes into a caller's buffer,
 * always with their status byte.  Messages that are not valid MIDI (see
 * midi_msg_is_valid) are refused, so the encoder can never put a stray
 * status byte into a stream.  It never allocates.
 *
 * Running status (MIDI 1.0) is a matter of the wire, not of one message:
 * midi_running_status tracks, for one stream of encoded messages, whether
 * the next one may leave out its status byte.  A channel message whose
 * status equals the last channel status sent may; system common messages
 * and SysEx cancel running status, real-time messages do not, mirroring
 * what a receiver does.
 */
#ifndef LATTICED_MIDI_ENCODER_H
#define LATTICED_MIDI_ENCODER_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/midi_msg.h"

/* Writes the bytes of m with its status; returns the count, or 0 if
 * capacity is too small or m is not a valid message (nothing written). */
size_t midi_msg_encode(const struct midi_msg *m, uint8_t *out, size_t capacity);

/* Bytes midi_msg_encode would write for m (0 if m is not valid). */
size_t midi_msg_encoded_length(const struct midi_msg *m);

struct midi_running_status {
	uint8_t status;   /* last channel status sent, 0 = none */
};

/* Forget it (the stream was reopened, or a message did not go out whole):
 * the next channel message carries its status byte. */
void midi_running_status_reset(struct midi_running_status *rs);

/* Leading bytes of the encoded message `bytes` the stream may leave out: 1 or 0. */
size_t midi_running_status_skip(const struct midi_running_status *rs, const uint8_t *bytes);

/* The message whose first byte is `status` went out. */
void midi_running_status_sent(struct midi_running_status *rs, uint8_t status);

#endif
