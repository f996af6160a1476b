/*
 * input_backlog: input the input thread has read from the backend but
 * cannot give to the engines yet, because an output has no room for what
 * a message could make it send (see input_thread.h): the rest of the chunk
 * being read, and the source events (connected, gone, lost) that arrived
 * behind it, in arrival order.
 *
 * While it holds anything, the backend is told to stop reading
 * (midi_io_callbacks.accepting), so the bytes behind it wait where the
 * kernel keeps them (the FIFO, the device, the sequencer's queue) and the
 * backlog only ever holds what one read delivered.  A ring of units, one
 * per byte or event; one thread.
 */
#ifndef LATTICED_INPUT_BACKLOG_H
#define LATTICED_INPUT_BACKLOG_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define INPUT_BACKLOG_UNITS 16384    /* a power of two; 32 KB */

struct backlog_unit {
	bool is_event;
	uint8_t source;                  /* bytes: the source */
	uint8_t byte;
	int kind;                        /* events: enum midi_io_event */
	int index;                       /* events: the source, -1 for all */
};

struct input_backlog {
	uint16_t units[INPUT_BACKLOG_UNITS];
	size_t head, tail;               /* free-running; tail - head units held */
	uint64_t overflows;              /* units that found no room */
};

void input_backlog_init(struct input_backlog *b);
bool input_backlog_empty(const struct input_backlog *b);

/* Both return false, keeping nothing, when the units do not fit. */
bool input_backlog_put_bytes(struct input_backlog *b, uint8_t source, const uint8_t *bytes,
			     size_t length);
bool input_backlog_put_event(struct input_backlog *b, int kind, int index);

/* The oldest unit, left in place; false if empty.  Then input_backlog_drop. */
bool input_backlog_peek(const struct input_backlog *b, struct backlog_unit *u);
void input_backlog_drop(struct input_backlog *b);

#endif
