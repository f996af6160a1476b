/*
 * msg_queue: finished MIDI messages from the input thread to the output
 * thread, one ring per output.
 *
 * A ring per output, so a synth that stops reading holds up only its own
 * messages: the others drain past it, each in its own order.  Each ring
 * is an spsc_queue of small slots: a message of n bytes takes
 * ceil(n / MSG_QUEUE_SLOT_BYTES) consecutive slots, the first marked FIRST
 * and the last LAST.  A push reserves every slot it needs before it
 * publishes any of them, so the consumer sees whole messages or nothing; a
 * push that does not fit changes nothing and says so (the producer checks
 * room first: see input_thread.h for who may use how much of a ring).
 * The consumer reads the oldest message without taking it
 * (msg_queue_peek) and takes it only once the backend has accepted it
 * (msg_queue_release), so a message the backend refused is sent again,
 * never lost.  Same ownership rules as spsc_queue: one producer, one
 * consumer.
 */
#ifndef LATTICED_MSG_QUEUE_H
#define LATTICED_MSG_QUEUE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "midi_io.h"
#include "spsc_queue.h"

#define MSG_QUEUE_SLOT_BYTES 28
#define MSG_QUEUE_SLOTS 4096         /* per output: 128 KB, ~4000 short messages */
#define MSG_QUEUE_MESSAGE_MAX 8192   /* longest message (a SysEx) carried */

enum { MSG_SLOT_FIRST = 1, MSG_SLOT_LAST = 2 };

enum msg_kind {
	MSG_MIDI,                        /* bytes to send */
	MSG_RECONNECTED,                 /* the receiver is new: it knows no
	                                  * running status */
};

struct msg_slot {
	uint8_t kind;                    /* enum msg_kind */
	uint8_t flags;
	uint16_t length;                 /* total message length (FIRST slot) */
	uint8_t bytes[MSG_QUEUE_SLOT_BYTES];
};

struct msg_ring {
	struct spsc_queue ring;
	struct msg_slot slots[MSG_QUEUE_SLOTS];
};

struct msg_queue {
	struct msg_ring outputs[MIDI_IO_MAX_OUTPUTS];
};

void msg_queue_init(struct msg_queue *q);

/* Slots a message of this length takes. */
size_t msg_queue_slots_for(size_t length);

/* Producer: false (nothing queued) if it does not fit now or is too long. */
bool msg_queue_push(struct msg_queue *q, int output, const uint8_t *bytes, size_t length);
/* Producer: a marker of `kind` (one slot). */
bool msg_queue_push_marker(struct msg_queue *q, int output, enum msg_kind kind);

/* Producer: slots free now (exact; only the consumer can make more). */
size_t msg_queue_room(struct msg_queue *q, int output);
/* Either side: slots in use (an estimate while the other side works). */
size_t msg_queue_fill(struct msg_queue *q, int output);

/* Consumer: the oldest message of `output` into buf (capacity >=
 * MSG_QUEUE_MESSAGE_MAX), left in the ring; returns its length and sets
 * *kind, or 0 if the ring is empty.  Then msg_queue_release takes it. */
size_t msg_queue_peek(struct msg_queue *q, int output, enum msg_kind *kind, uint8_t *buf,
		      size_t capacity);
void msg_queue_release(struct msg_queue *q, int output);

#endif
