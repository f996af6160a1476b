/*
 * output_thread: the thread that hands finished messages to the backend.
 *
 * It owns the backend's output side: it alone calls send() and flush().
 * It sleeps in poll() on its eventfd, which the input thread writes after
 * putting messages in the queue, so a message waits for no timer; it then
 * drains the queue in order, sends each message, and flushes once per
 * batch.  A message the backend refuses is dropped and counted per output
 * (an atomic counter the input thread reads for status).  When told to
 * stop, it drains everything left, retrying refusals for up to about two
 * seconds so the last note-offs get out, then returns.
 *
 * Running status (running_status = yes) is applied here, only for the raw
 * backend, whose bytes go to the wire as they are: a channel message whose
 * status byte equals the last one written goes without it.  After a refused
 * message the next one always carries its status byte, so a drop can never
 * leave the receiver reading data bytes under the wrong status.
 */
#ifndef LATTICED_OUTPUT_THREAD_H
#define LATTICED_OUTPUT_THREAD_H

#include <pthread.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>

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
	int output_count;
	char names[MIDI_IO_MAX_OUTPUTS][MIDI_IO_NAME_MAX];
	bool running_status[MIDI_IO_MAX_OUTPUTS];
	struct log_ring log;             /* producer side */

	/* written by the main thread, read here */
	atomic_bool stop;
	/* written here, read by the input thread (status) */
	atomic_uint_fast64_t sent[MIDI_IO_MAX_OUTPUTS];
	atomic_uint_fast64_t send_drops[MIDI_IO_MAX_OUTPUTS];

	/* the thread's own */
	pthread_t thread;
	uint8_t wire_status[MIDI_IO_MAX_OUTPUTS];
	uint64_t drops_logged[MIDI_IO_MAX_OUTPUTS];
	int64_t drop_logged_ms[MIDI_IO_MAX_OUTPUTS];
	uint8_t buffer[MSG_QUEUE_MESSAGE_MAX];
};

/* Zeroes the counters and sets up the log ring; the caller fills the rest. */
void output_thread_init(struct output_thread *t);

void *output_thread_run(void *arg);

/* Main thread: drain what is queued, then return from output_thread_run. */
void output_thread_stop(struct output_thread *t);

/* Adds one to an eventfd (a wake-up); never blocks. */
void wake_fd_signal(int fd);
/* Resets an eventfd after a wake-up. */
void wake_fd_clear(int fd);

#endif
