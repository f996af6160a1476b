/*
 * msg_queue: finished MIDI messages (encoded bytes plus the output they
 * are for) from the input thread to the output thread.
 *
 * Built on one spsc_queue of small slots: a message of n bytes takes
 * ceil(n / MSG_QUEUE_SLOT_BYTES) consecutive slots, the first marked
 * FIRST and the last LAST.  A push reserves every slot it needs before it
 * publishes any of them, so the consumer sees whole messages or nothing,
 * and a full queue drops a message whole (the producer counts it).
 * Ordering: messages come out in the order they went in, across all
 * outputs.  Same ownership rules as spsc_queue: one producer, one consumer.
 */
#ifndef LATTICED_MSG_QUEUE_H
#define LATTICED_MSG_QUEUE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "spsc_queue.h"

#define MSG_QUEUE_SLOT_BYTES 28
#define MSG_QUEUE_SLOTS 8192         /* 256 KB: ~2700 three-byte messages */
#define MSG_QUEUE_MESSAGE_MAX 8192   /* longest message (a SysEx) carried */

enum { MSG_SLOT_FIRST = 1, MSG_SLOT_LAST = 2 };

/* An output index with this bit set is a marker, not a message: the output
 * (index without the bit) was reconnected, so what the receiver holds is
 * unknown (e.g. its running status). */
#define MSG_OUTPUT_RECONNECTED 0x80

struct msg_slot {
	uint8_t output;
	uint8_t flags;
	uint16_t length;                 /* total message length (FIRST slot) */
	uint8_t bytes[MSG_QUEUE_SLOT_BYTES];
};

struct msg_queue {
	struct spsc_queue ring;
	struct msg_slot slots[MSG_QUEUE_SLOTS];
};

void msg_queue_init(struct msg_queue *q);

/* Producer: false if the message does not fit now (or is too long). */
bool msg_queue_push(struct msg_queue *q, uint8_t output, const uint8_t *bytes, size_t length);

/* Producer: room for a message of this length right now? */
bool msg_queue_has_room(struct msg_queue *q, size_t length);

/* Consumer: the oldest message into buf (capacity >= MSG_QUEUE_MESSAGE_MAX);
 * returns its length and sets *output, or 0 if the queue is empty. */
size_t msg_queue_pop(struct msg_queue *q, uint8_t *output, uint8_t *buf, size_t capacity);

#endif
