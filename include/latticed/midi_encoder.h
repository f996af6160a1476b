/*
 * midi_encoder: writes messages as MIDI 1.0 bytes into a caller's buffer.
 *
 * With running status on, a channel message whose status equals the last
 * channel status written goes out without its status byte (MIDI 1.0
 * running status).  System common messages and SysEx cancel running status,
 * real-time messages do not, mirroring what a receiver does.  Messages that
 * are not valid MIDI (see midi_msg_is_valid) are refused, so the encoder can
 * never put a stray status byte into a stream.  It never allocates.
 */
#ifndef LATTICED_MIDI_ENCODER_H
#define LATTICED_MIDI_ENCODER_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/midi_msg.h"

struct midi_encoder {
	uint8_t running_status;   /* last channel status written, 0 = none */
	bool use_running_status;
};

void midi_encoder_init(struct midi_encoder *e, bool use_running_status);

/* Forget the running status, so the next channel message carries its
 * status byte (e.g. after the output was reopened). */
void midi_encoder_reset(struct midi_encoder *e);

/* Writes the bytes of m; returns the count, or 0 if capacity is too small or
 * m is not a valid message (nothing written, state unchanged).
 * With running status on, omits a status byte equal to the last channel status;
 * system common and SysEx cancel running status, real-time bytes do not. */
size_t midi_encoder_write(struct midi_encoder *e, const struct midi_msg *m, uint8_t *out,
			  size_t capacity);

/* stateless, full status; same return convention */
size_t midi_msg_encode(const struct midi_msg *m, uint8_t *out, size_t capacity);

/* Bytes midi_msg_encode would write for m (0 if m is not valid). */
size_t midi_msg_encoded_length(const struct midi_msg *m);

#endif
