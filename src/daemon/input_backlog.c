/*
 * input_backlog: see input_backlog.h.  A unit is 16 bits: a byte is
 * source << 8 | byte (sources 0..15, so bit 15 clear); an event is
 * 0x8000 | kind << 8 | (index + 1).
 */
#include "input_backlog.h"

#define EVENT_BIT 0x8000u

void input_backlog_init(struct input_backlog *b)
{
	b->head = b->tail = 0;
	b->overflows = 0;
}

bool input_backlog_empty(const struct input_backlog *b)
{
	return b->head == b->tail;
}

static size_t room(const struct input_backlog *b)
{
	return INPUT_BACKLOG_UNITS - (b->tail - b->head);
}

bool input_backlog_put_bytes(struct input_backlog *b, uint8_t source, const uint8_t *bytes,
			     size_t length)
{
	if (length > room(b)) {
		b->overflows += length;
		return false;
	}
	for (size_t i = 0; i < length; i++)
		b->units[b->tail++ & (INPUT_BACKLOG_UNITS - 1)] =
			(uint16_t)(((source & 0x0F) << 8) | bytes[i]);
	return true;
}

bool input_backlog_put_event(struct input_backlog *b, int kind, int index)
{
	if (room(b) == 0) {
		b->overflows++;
		return false;
	}
	b->units[b->tail++ & (INPUT_BACKLOG_UNITS - 1)] =
		(uint16_t)(EVENT_BIT | ((kind & 0x7F) << 8) | ((index + 1) & 0xFF));
	return true;
}

bool input_backlog_peek(const struct input_backlog *b, struct backlog_unit *u)
{
	if (input_backlog_empty(b))
		return false;
	uint16_t v = b->units[b->head & (INPUT_BACKLOG_UNITS - 1)];
	u->is_event = v & EVENT_BIT;
	if (u->is_event) {
		u->kind = (v >> 8) & 0x7F;
		u->index = (int)(v & 0xFF) - 1;
		u->source = 0;
		u->byte = 0;
	} else {
		u->source = (uint8_t)(v >> 8);
		u->byte = (uint8_t)(v & 0xFF);
		u->kind = u->index = 0;
	}
	return true;
}

void input_backlog_drop(struct input_backlog *b)
{
	if (!input_backlog_empty(b))
		b->head++;
}
