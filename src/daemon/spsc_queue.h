/*
 * spsc_queue: a lock-free ring of fixed-size slots between exactly one
 * producer thread and exactly one consumer thread.
 *
 * Ownership: the producer alone writes `tail` and the slots between tail
 * and head (the free ones); the consumer alone writes `head` and reads the
 * slots between head and tail (the full ones).  A slot changes hands when
 * the index that covers it is published: the producer fills a slot, then
 * stores tail with release order; the consumer loads tail with acquire
 * order before reading the slot, and stores head with release order after
 * copying it out, which hands the slot back.  So every item is seen whole,
 * in the order pushed, exactly once, with no lock and no system call.
 *
 * The indices run freely (unsigned wrap-around) and the capacity is a power
 * of two, so `tail - head` is the fill level even after wrapping.  Each side
 * keeps a private copy of the other side's index and reloads it only when
 * the copy says full (or empty), which keeps the shared cache line quiet.
 * The storage is the caller's, given at init: nothing is allocated here.
 * A full queue refuses the push (the caller counts a drop); it never waits.
 */
#ifndef LATTICED_SPSC_QUEUE_H
#define LATTICED_SPSC_QUEUE_H

#include <stdalign.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stddef.h>

#define SPSC_CACHE_LINE 64

struct spsc_queue {
	/* producer's line */
	alignas(SPSC_CACHE_LINE) atomic_size_t tail;
	size_t head_seen;            /* producer's last look at head */
	/* consumer's line */
	alignas(SPSC_CACHE_LINE) atomic_size_t head;
	size_t tail_seen;            /* consumer's last look at tail */
	/* fixed at init, read by both */
	alignas(SPSC_CACHE_LINE) size_t capacity; /* slots, a power of two */
	size_t slot_size;            /* bytes per slot */
	unsigned char *slots;        /* capacity * slot_size bytes, the caller's */
};

/* capacity must be a power of two >= 2; storage holds capacity * slot_size
 * bytes and must outlive the queue.  Returns false for a bad capacity. */
bool spsc_queue_init(struct spsc_queue *q, void *storage, size_t capacity,
		     size_t slot_size);

/* Producer: copies one item in; false (nothing changed) if full. */
bool spsc_queue_push(struct spsc_queue *q, const void *item);

/* Producer: slots free now (at least this many pushes will succeed). */
size_t spsc_queue_room(struct spsc_queue *q);

/* Producer, for items spanning several slots: the slot `ahead` places past
 * the tail (ahead < spsc_queue_room()), to fill in place; then publish
 * `count` filled slots at once. */
void *spsc_queue_slot_ahead(struct spsc_queue *q, size_t ahead);
void spsc_queue_publish(struct spsc_queue *q, size_t count);

/* Consumer: copies the oldest item out; false if empty. */
bool spsc_queue_pop(struct spsc_queue *q, void *item);

/* Consumer: the oldest item in place (NULL if empty); release it with
 * spsc_queue_release once copied. */
const void *spsc_queue_peek(struct spsc_queue *q);
void spsc_queue_release(struct spsc_queue *q);

/* Consumer, for items spanning several slots: the slot `ahead` places past
 * the head (NULL if fewer items are there), and a release of `count` at
 * once; a slot stays the consumer's until released, so it can be read
 * again (an item the next stage refused is retried, not lost). */
const void *spsc_queue_peek_ahead(struct spsc_queue *q, size_t ahead);
void spsc_queue_release_many(struct spsc_queue *q, size_t count);

/* Either side: an estimate of the fill level (exact when the other is idle). */
size_t spsc_queue_count(struct spsc_queue *q);

#endif
