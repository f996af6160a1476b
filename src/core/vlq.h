/*
 * vlq: the variable-length quantities of Standard MIDI Files.
 *
 * Seven payload bits per byte, most significant group first, bit 7 set on
 * every byte but the last; at most four bytes, so the largest value is
 * 0x0FFFFFFF (SMF 1.0).  Private to the core (the SMF reader and writer).
 */
#ifndef LATTICED_CORE_VLQ_H
#define LATTICED_CORE_VLQ_H

#include <stddef.h>
#include <stdint.h>

#define VLQ_MAX_BYTES 4
#define VLQ_MAX_VALUE 0x0FFFFFFFu

enum vlq_result {
	VLQ_OK,
	VLQ_TRUNCATED,   /* the bytes ran out before a byte with bit 7 clear */
	VLQ_TOO_LONG,    /* a fifth byte would be needed */
};

/* Writes value (at most VLQ_MAX_VALUE) into out; returns the byte count
 * (1..4), or 0 if the value is too large. */
size_t vlq_encode(uint32_t value, uint8_t out[VLQ_MAX_BYTES]);

/* Bytes vlq_encode needs for value (0 if too large). */
size_t vlq_length(uint32_t value);

/* Reads one quantity from bytes[0..available); on VLQ_OK sets *value and
 * *used (the bytes consumed). */
enum vlq_result vlq_decode(const uint8_t *bytes, size_t available, uint32_t *value, size_t *used);

#endif
