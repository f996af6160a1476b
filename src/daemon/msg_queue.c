/*
 * msg_queue: messages cut into slots, a ring per output; see msg_queue.h.
 * The consumer trusts the FIRST/LAST marks and the length in the first
 * slot because only this file writes slots and it always writes a complete
 * run before publishing it.
 */
#include "msg_queue.h"

#include <string.h>

void msg_queue_init(struct msg_queue *q)
{
	for (int i = 0; i < MIDI_IO_MAX_OUTPUTS; i++)
		(void)spsc_queue_init(&q->outputs[i].ring, q->outputs[i].slots, MSG_QUEUE_SLOTS,
				      sizeof q->outputs[i].slots[0]);
}

size_t msg_queue_slots_for(size_t length)
{
	return length == 0 ? 1 : (length + MSG_QUEUE_SLOT_BYTES - 1) / MSG_QUEUE_SLOT_BYTES;
}

static struct spsc_queue *ring_of(struct msg_queue *q, int output)
{
	return &q->outputs[output].ring;
}

size_t msg_queue_room(struct msg_queue *q, int output)
{
	return spsc_queue_room(ring_of(q, output));
}

size_t msg_queue_fill(struct msg_queue *q, int output)
{
	return spsc_queue_count(ring_of(q, output));
}

static bool push(struct msg_queue *q, int output, enum msg_kind kind, const uint8_t *bytes,
		 size_t length)
{
	struct spsc_queue *ring = ring_of(q, output);
	size_t count = msg_queue_slots_for(length);
	if (length > MSG_QUEUE_MESSAGE_MAX || spsc_queue_room(ring) < count)
		return false;
	for (size_t i = 0; i < count; i++) {
		struct msg_slot *s = spsc_queue_slot_ahead(ring, i);
		size_t offset = i * MSG_QUEUE_SLOT_BYTES;
		size_t part = length - offset;
		if (part > MSG_QUEUE_SLOT_BYTES)
			part = MSG_QUEUE_SLOT_BYTES;
		s->kind = (uint8_t)kind;
		s->flags = (uint8_t)((i == 0 ? MSG_SLOT_FIRST : 0) |
				     (i + 1 == count ? MSG_SLOT_LAST : 0));
		s->length = (uint16_t)length;
		if (part)
			memcpy(s->bytes, bytes + offset, part);
	}
	spsc_queue_publish(ring, count);
	return true;
}

bool msg_queue_push(struct msg_queue *q, int output, const uint8_t *bytes, size_t length)
{
	return length > 0 && push(q, output, MSG_MIDI, bytes, length);
}

bool msg_queue_push_marker(struct msg_queue *q, int output, enum msg_kind kind)
{
	return push(q, output, kind, NULL, 0);
}

size_t msg_queue_peek(struct msg_queue *q, int output, enum msg_kind *kind, uint8_t *buf,
		      size_t capacity)
{
	struct spsc_queue *ring = ring_of(q, output);
	const struct msg_slot *s = spsc_queue_peek_ahead(ring, 0);
	if (!s)
		return 0;
	size_t length = s->length, count = msg_queue_slots_for(length);
	*kind = (enum msg_kind)s->kind;
	if (length > capacity)
		return 0;
	for (size_t i = 0; i < count; i++) {
		if (i > 0)
			s = spsc_queue_peek_ahead(ring, i); /* published together: never NULL */
		if (!s)
			return 0;
		size_t offset = i * MSG_QUEUE_SLOT_BYTES;
		size_t part = length - offset;
		if (part > MSG_QUEUE_SLOT_BYTES)
			part = MSG_QUEUE_SLOT_BYTES;
		if (part)
			memcpy(buf + offset, s->bytes, part);
	}
	return *kind == MSG_MIDI ? length : 1;
}

void msg_queue_release(struct msg_queue *q, int output)
{
	struct spsc_queue *ring = ring_of(q, output);
	const struct msg_slot *s = spsc_queue_peek_ahead(ring, 0);
	if (s)
		spsc_queue_release_many(ring, msg_queue_slots_for(s->length));
}
