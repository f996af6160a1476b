/*
 * spsc_queue: see spsc_queue.h for the ownership rules.  The only shared
 * writes are the two indices; every other field is either fixed at init or
 * private to one side.  Relaxed loads of one's own index are enough
 * because no other thread writes it.
 */
#include "spsc_queue.h"

#include <string.h>

bool spsc_queue_init(struct spsc_queue *q, void *storage, size_t capacity,
		     size_t slot_size)
{
	if (capacity < 2 || (capacity & (capacity - 1)) != 0 || slot_size == 0 || !storage)
		return false;
	atomic_init(&q->tail, 0);
	atomic_init(&q->head, 0);
	q->head_seen = 0;
	q->tail_seen = 0;
	q->capacity = capacity;
	q->slot_size = slot_size;
	q->slots = storage;
	return true;
}

static unsigned char *slot_at(const struct spsc_queue *q, size_t index)
{
	return q->slots + (index & (q->capacity - 1)) * q->slot_size;
}

size_t spsc_queue_room(struct spsc_queue *q)
{
	size_t tail = atomic_load_explicit(&q->tail, memory_order_relaxed);
	q->head_seen = atomic_load_explicit(&q->head, memory_order_acquire);
	return q->capacity - (tail - q->head_seen);
}

void *spsc_queue_slot_ahead(struct spsc_queue *q, size_t ahead)
{
	size_t tail = atomic_load_explicit(&q->tail, memory_order_relaxed);
	return slot_at(q, tail + ahead);
}

void spsc_queue_publish(struct spsc_queue *q, size_t count)
{
	size_t tail = atomic_load_explicit(&q->tail, memory_order_relaxed);
	atomic_store_explicit(&q->tail, tail + count, memory_order_release);
}

bool spsc_queue_push(struct spsc_queue *q, const void *item)
{
	size_t tail = atomic_load_explicit(&q->tail, memory_order_relaxed);
	if (tail - q->head_seen == q->capacity) {
		q->head_seen = atomic_load_explicit(&q->head, memory_order_acquire);
		if (tail - q->head_seen == q->capacity)
			return false;
	}
	memcpy(slot_at(q, tail), item, q->slot_size);
	atomic_store_explicit(&q->tail, tail + 1, memory_order_release);
	return true;
}

const void *spsc_queue_peek(struct spsc_queue *q)
{
	size_t head = atomic_load_explicit(&q->head, memory_order_relaxed);
	if (head == q->tail_seen) {
		q->tail_seen = atomic_load_explicit(&q->tail, memory_order_acquire);
		if (head == q->tail_seen)
			return NULL;
	}
	return slot_at(q, head);
}

void spsc_queue_release(struct spsc_queue *q)
{
	size_t head = atomic_load_explicit(&q->head, memory_order_relaxed);
	atomic_store_explicit(&q->head, head + 1, memory_order_release);
}

const void *spsc_queue_peek_ahead(struct spsc_queue *q, size_t ahead)
{
	size_t head = atomic_load_explicit(&q->head, memory_order_relaxed);
	if (q->tail_seen - head <= ahead) {
		q->tail_seen = atomic_load_explicit(&q->tail, memory_order_acquire);
		if (q->tail_seen - head <= ahead)
			return NULL;
	}
	return slot_at(q, head + ahead);
}

void spsc_queue_release_many(struct spsc_queue *q, size_t count)
{
	size_t head = atomic_load_explicit(&q->head, memory_order_relaxed);
	atomic_store_explicit(&q->head, head + count, memory_order_release);
}

bool spsc_queue_pop(struct spsc_queue *q, void *item)
{
	const void *slot = spsc_queue_peek(q);
	if (!slot)
		return false;
	memcpy(item, slot, q->slot_size);
	spsc_queue_release(q);
	return true;
}

size_t spsc_queue_count(struct spsc_queue *q)
{
	size_t head = atomic_load_explicit(&q->head, memory_order_acquire);
	size_t tail = atomic_load_explicit(&q->tail, memory_order_acquire);
	return tail - head;
}
