/*
 * input_feed: how the input thread gives the player's messages to the
 * engines when the output rings fill: left out, merged, held back, waited
 * for, or cut off (the model is in input_thread.h).  Every function runs
 * on the input thread.
 */
#ifndef LATTICED_INPUT_FEED_H
#define LATTICED_INPUT_FEED_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "input_thread.h"

/* Bytes from a source: parsed and given to the engines, or kept in the
 * backlog behind a message that waits. */
void feed_input(struct input_thread *t, uint8_t source, const uint8_t *bytes, size_t length);

/* A source connected, went away or lost input (MIDI_IO_SOURCE_*,
 * MIDI_IO_INPUT_LOST), in order with its bytes. */
void feed_source_event(struct input_thread *t, int kind, int index, const char *name);

/* An output's receiver connected: its set-up (and, after it was gone, the
 * end of every note first) as soon as its ring has room. */
void feed_output_connected(struct input_thread *t, struct input_output *o);

/* May the backend read more input now? */
bool feed_accepting(struct input_thread *t);

/* Each loop: cut-off outputs that drained, connections, the held message
 * and the backlog, held-back values; then the wake-ups that are needed. */
void feed_resume(struct input_thread *t);
/* After a loop's work: tells the output thread which drains to wake us
 * for; returns the longest the loop may sleep now (-1: until woken). */
int feed_arrange_wakeups(struct input_thread *t);

/* Room on every output (not cut off) for `slots`, or for what
 * engine_panic can send when slots < 0; false: wait and ask again. */
bool feed_room_everywhere(struct input_thread *t, int slots);

/* A message found no room in o's ring after all: o is cut off so its
 * notes are ended once it drains. */
void feed_cut_off(struct input_thread *t, struct input_output *o, const char *why);

#endif
