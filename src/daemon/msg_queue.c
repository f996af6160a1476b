/*
 * msg_queue: messages cut into slots; see msg_queue.h.  The consumer
 * trusts the FIRST/LAST marks because only msg_queue_push writes slots
 * and it always writes a complete run before publishing it.
 */
#include "msg_queue.h"

#include <string.h>

void msg_queue_init(struct msg_queue *q)
{
	(void)spsc_queue_init(&q->ring, q->slots, MSG_QUEUE_SLOTS, sizeof q->slots[0]);
}

static size_t slots_for(size_t length)
{
	return (length + MSG_QUEUE_SLOT_BYTES - 1) / MSG_QUEUE_SLOT_BYTES;
}

bool msg_queue_has_room(struct msg_queue *q, size_t length)
{
	return length > 0 && length <= MSG_QUEUE_MESSAGE_MAX &&
	       spsc_queue_room(&q->ring) >= slots_for(length);
}

bool msg_queue_push(struct msg_queue *q, uint8_t output, const uint8_t *bytes, size_t length)
{
	if (!msg_queue_has_room(q, length))
		return false;
	size_t count = slots_for(length);
	for (size_t i = 0; i < count; i++) {
		struct msg_slot *s = spsc_queue_slot_ahead(&q->ring, i);
		size_t offset = i * MSG_QUEUE_SLOT_BYTES;
		size_t part = length - offset;
		if (part > MSG_QUEUE_SLOT_BYTES)
			part = MSG_QUEUE_SLOT_BYTES;
		s->output = output;
		s->flags = (uint8_t)((i == 0 ? MSG_SLOT_FIRST : 0) |
				     (i + 1 == count ? MSG_SLOT_LAST : 0));
		s->length = (uint16_t)length;
		memcpy(s->bytes, bytes + offset, part);
	}
	spsc_queue_publish(&q->ring, count);
	return true;
}

size_t msg_queue_pop(struct msg_queue *q, uint8_t *output, uint8_t *buf, size_t capacity)
{
	const struct msg_slot *s = spsc_queue_peek(&q->ring);
	if (!s)
		return 0;
	size_t length = s->length, used = 0;
	*output = s->output;
	for (;;) {
		size_t part = length - used;
		if (part > MSG_QUEUE_SLOT_BYTES)
			part = MSG_QUEUE_SLOT_BYTES;
		if (used + part <= capacity)
			memcpy(buf + used, s->bytes, part);
		used += part;
		bool last = s->flags & MSG_SLOT_LAST;
		spsc_queue_release(&q->ring);
		if (last)
			break;
		s = spsc_queue_peek(&q->ring); /* published together: never NULL */
		if (!s)
			break;
	}
	return used <= capacity ? length : 0;
}
