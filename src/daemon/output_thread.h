/*
 * output_thread: the thread that hands finished messages to the backend.
 *
 * The backend's output side (send() and flush()) has one user at a time.
 * It is this thread's, and it lends it to the input thread whenever it is
 * idle: an output whose ring is empty gets its next message sent by the
 * input thread itself, at once, with no hand-over, which is what a live
 * note usually meets (output_thread_borrow, _send_borrowed,
 * _give_back).  Whoever holds the side alone calls send() and flush() and
 * touches the running-status state and held_back; the side changes hands
 * through one atomic (acquire when taken, release when given back), so
 * each sees what the other did.  Order per output holds because the
 * input thread sends directly only while that output's ring is empty:
 * everything queued before has been sent.  A message the backend refuses
 * then goes into the ring after all, at its head, and waits as below.
 *
 * Otherwise this thread sleeps in poll() on its eventfd, which the input
 * thread writes after putting messages in a ring (so a message waits for
 * no timer), or after giving the side back when this thread wanted it;
 * it then drains every output's ring in order, sends each message, and
 * flushes once per batch.
 *
 * Waiting on a synth is this thread's job: a message the backend refuses
 * (the synth is not reading, its buffers are full) stays at the head of
 * its output's ring and is sent again, first after 1 ms, then every few
 * ms, while the other outputs go on; nothing is dropped for being refused
 * (`refused` counts the refusals).  The input thread, which decides what
 * goes into a ring, may ask to be woken when a ring has drained below a
 * level (room_wanted); this thread writes the input thread's eventfd then.
 * A flush that leaves bytes in the backend (its receiver is full) is tried
 * again the same way, so the tail of a burst never waits for the next
 * message.  When told to stop, it drains everything left, still retrying,
 * for up to two seconds in all, so the last note-offs get out; what a synth
 * that never reads leaves after that is counted as dropped (send_drops) and
 * logged.  Idle (nothing queued or held back), it sleeps with no timeout:
 * no core spins, and neither does the input thread, which never waits for
 * the side (it queues instead).
 *
 * Running status (running_status = yes) is applied by whoever sends, only
 * for a backend whose bytes go to the wire as they are (byte_stream, the raw
 * backend), by the core's rule (midi_running_status): a channel message
 * whose status byte equals the last one written goes without it.  After a refused
 * message the next attempt always carries its status byte, so a refusal can
 * never leave the receiver reading data bytes under the wrong status.
 */
#ifndef LATTICED_OUTPUT_THREAD_H
#define LATTICED_OUTPUT_THREAD_H

#include <pthread.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>

#include "latticed/midi_encoder.h"
#include "log_ring.h"
#include "midi_io.h"
#include "msg_queue.h"

struct output_thread {
	/* set up by the main thread before the thread starts */
	const struct midi_io_backend *backend;
	struct midi_io *io;
	struct msg_queue *messages;      /* consumer side */
	int wake_fd;                     /* ours */
	int main_wake_fd;                /* the main thread's, for log lines */
	int input_wake_fd;               /* the input thread's, for room_wanted */
	int output_count;
	char names[MIDI_IO_MAX_OUTPUTS][MIDI_IO_NAME_MAX];
	bool running_status[MIDI_IO_MAX_OUTPUTS];
	struct log_ring log;             /* producer side */

	/* written by the main thread, read here */
	atomic_bool stop;
	/* who holds the backend's output side (enum in output_thread.c), and
	 * whether this thread waits for the input thread to give it back */
	atomic_int side;
	atomic_bool side_wanted;
	/* written by the input thread, cleared here: wake it when the ring's
	 * fill is below this (0: not wanted) */
	atomic_size_t room_wanted[MIDI_IO_MAX_OUTPUTS];
	/* written here, read by the input thread (status) */
	atomic_uint_fast64_t sent[MIDI_IO_MAX_OUTPUTS];
	atomic_uint_fast64_t send_drops[MIDI_IO_MAX_OUTPUTS];
	atomic_uint_fast64_t refused[MIDI_IO_MAX_OUTPUTS];

	/* the side's holder's */
	struct midi_running_status wire[MIDI_IO_MAX_OUTPUTS];
	bool held_back;                  /* the last flush left bytes in the backend */
	bool borrowed_sent;              /* the input thread sent since it borrowed the side */

	/* the thread's own */
	pthread_t thread;
	bool blocked[MIDI_IO_MAX_OUTPUTS];   /* its head message was refused */
	int64_t blocked_logged_ms[MIDI_IO_MAX_OUTPUTS];
	uint8_t buffer[MSG_QUEUE_MESSAGE_MAX];
};

/* Zeroes the counters and sets up the log ring; the caller fills the rest. */
void output_thread_init(struct output_thread *t);

void *output_thread_run(void *arg);

/* Main thread: drain what is queued, then return from output_thread_run. */
void output_thread_stop(struct output_thread *t);

/* Input thread: wake me when `output`'s ring holds fewer than `fill` slots. */
void output_thread_want_room(struct output_thread *t, int output, size_t fill);

/* Input thread: takes the backend's output side if this thread is idle;
 * false (never waits) when it is busy. */
bool output_thread_borrow(struct output_thread *t);
/* Input thread, holding the side, `output`'s ring empty: sends the message
 * now; false if the backend refused it (queue it instead). */
bool output_thread_send_borrowed(struct output_thread *t, int output, const uint8_t *bytes,
				 size_t length);
/* Input thread: flushes what it sent and gives the side back, waking this
 * thread if it waited for it or the flush left bytes held back. */
void output_thread_give_back(struct output_thread *t);

/* Adds one to an eventfd (a wake-up); never blocks. */
void wake_fd_signal(int fd);
/* Resets an eventfd after a wake-up. */
void wake_fd_clear(int fd);

#endif
