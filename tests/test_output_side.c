/*
 * Tests of the backend's output side as the two MIDI threads share it
 * (output_thread.h): this test is the input thread, sending a message
 * itself while its output's ring is empty and the output thread idle,
 * queueing it otherwise, as input_thread.c does; the real output thread
 * drains the rings into a backend of our own that refuses a message now
 * and then and holds bytes back after some flushes.  Checked (our rules):
 * every message reaches the backend once, in order per output, whoever
 * sent it; send() and flush() are never called by both threads at once
 * (and under ThreadSanitizer, stage 25-tsan, every hand-over orders what
 * each thread did to the backend); both ways were taken; a refused
 * message is sent again, never lost; a message queued while the input
 * thread holds the side goes out once the side is given back, with no
 * other wake-up.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <pthread.h>
#include <sched.h>
#include <stdatomic.h>
#include <stdlib.h>
#include <string.h>
#include <sys/eventfd.h>
#include <time.h>
#include <unistd.h>

#include "msg_queue.h"
#include "output_thread.h"

#define OUTPUTS 2
#define MESSAGES 200000u             /* per output */

struct midi_io {                     /* the fake backend's state */
	atomic_int inside;               /* a send() or flush() is running */
	atomic_bool overlapped;          /* two ran at once */
	uint32_t next[OUTPUTS];          /* serial expected next, per output */
	uint32_t disorder;               /* first serial out of order + 1 */
	uint32_t calls, refusals, held;
	uint32_t direct;                 /* sends from the input thread (this test) */
	pthread_t input_thread;
};

static void enter(struct midi_io *io)
{
	if (atomic_exchange(&io->inside, 1))
		atomic_store(&io->overlapped, true);
}

static void leave(struct midi_io *io)
{
	atomic_store(&io->inside, 0);
}

/* The message's serial: 14 bits in the two data bytes. */
static uint32_t serial_of(const uint8_t *bytes)
{
	return (uint32_t)bytes[1] | (uint32_t)bytes[2] << 7;
}

static bool fake_send(struct midi_io *io, int output, const uint8_t *bytes, size_t length)
{
	enter(io);
	bool ok = ++io->calls % 97 != 0; /* refuse now and then */
	if (ok) {
		if (length != 3 || serial_of(bytes) != (io->next[output] & 0x3FFF))
			io->disorder = io->disorder ? io->disorder : io->next[output] + 1;
		io->next[output]++;
		if (pthread_equal(pthread_self(), io->input_thread))
			io->direct++;
	} else {
		io->refusals++;
	}
	leave(io);
	return ok;
}

static bool fake_flush(struct midi_io *io)
{
	enter(io);
	bool all = ++io->calls % 89 != 0; /* bytes held back now and then */
	io->held += !all;
	leave(io);
	return all;
}

static const struct midi_io_backend fake = {
	.name = "fake", .send = fake_send, .flush = fake_flush,
};

static void pause_ms(long ms)
{
	struct timespec t = {ms / 1000, (ms % 1000) * 1000000L};
	nanosleep(&t, NULL);
}

static void message(uint8_t bytes[3], int output, uint32_t serial)
{
	bytes[0] = (uint8_t)(0x90 | output);
	bytes[1] = (uint8_t)(serial & 0x7F);
	bytes[2] = (uint8_t)((serial >> 7) & 0x7F);
}

static struct output_thread out;
static struct midi_io io;

/* The output thread running over a fresh queue and backend. */
static struct msg_queue *start(void)
{
	struct msg_queue *mq = malloc(sizeof *mq);
	assert_non_null(mq);
	msg_queue_init(mq);
	memset(&io, 0, sizeof io);
	io.input_thread = pthread_self();
	output_thread_init(&out);
	out.backend = &fake;
	out.io = &io;
	out.messages = mq;
	out.output_count = OUTPUTS;
	out.wake_fd = eventfd(0, EFD_NONBLOCK | EFD_CLOEXEC);
	out.main_wake_fd = eventfd(0, EFD_NONBLOCK | EFD_CLOEXEC);
	out.input_wake_fd = eventfd(0, EFD_NONBLOCK | EFD_CLOEXEC);
	assert_true(out.wake_fd >= 0 && out.main_wake_fd >= 0 && out.input_wake_fd >= 0);
	assert_int_equal(pthread_create(&out.thread, NULL, output_thread_run, &out), 0);
	return mq;
}

static void stop(struct msg_queue *mq)
{
	output_thread_stop(&out);
	assert_int_equal(pthread_join(out.thread, NULL), 0);
	close(out.wake_fd);
	close(out.main_wake_fd);
	close(out.input_wake_fd);
	free(mq);
}

static void both_ways_keep_order_and_lose_nothing(void **state)
{
	(void)state;
	struct msg_queue *mq = start();

	uint32_t sent[OUTPUTS] = {0}, queued = 0, rng = 12345;
	bool borrowed = false;
	while (sent[0] < MESSAGES || sent[1] < MESSAGES) {
		rng = rng * 1103515245u + 12345u;
		int k = sent[0] == MESSAGES ? 1 : sent[1] == MESSAGES ? 0 : (int)(rng >> 16) & 1;
		uint8_t bytes[3];
		message(bytes, k, sent[k]);
		/* as input_thread.c's emit: directly while the ring is empty */
		if (msg_queue_fill(mq, k) == 0 && (borrowed || (borrowed = output_thread_borrow(&out))) &&
		    output_thread_send_borrowed(&out, k, bytes, sizeof bytes)) {
			sent[k]++;
		} else if (msg_queue_push(mq, k, bytes, sizeof bytes)) {
			sent[k]++;
			queued++;
			wake_fd_signal(out.wake_fd);
		} else {
			sched_yield(); /* full: let the output thread drain */
		}
		if (borrowed && (rng >> 8) % 5 == 0) { /* a read's end */
			output_thread_give_back(&out);
			borrowed = false;
		}
	}
	if (borrowed)
		output_thread_give_back(&out);
	stop(mq);

	assert_false(atomic_load(&io.overlapped));
	if (io.disorder)
		fail_msg("a message out of order or missing: serial %u expected", io.disorder - 1);
	assert_int_equal(io.next[0], MESSAGES);
	assert_int_equal(io.next[1], MESSAGES);
	assert_true(io.direct > 0 && io.direct < 2 * MESSAGES);
	assert_true(queued > 0 && io.refusals > 0 && io.held > 0);
	print_message("%u sent directly, %u queued, %u refusals, %u flushes held back\n", io.direct,
		      queued, io.refusals, io.held);
}

static void queued_behind_a_borrowed_side_goes_after_it(void **state)
{
	(void)state;
	struct msg_queue *mq = start();
	/* the output thread's first pass holds the side for a moment (long
	 * under ThreadSanitizer); a borrow refused then is what the input
	 * thread answers by queueing, so wait for the thread to go idle */
	bool borrowed = false;
	for (int i = 0; i < 2000 && !(borrowed = output_thread_borrow(&out)); i++)
		pause_ms(1);
	assert_true(borrowed);
	uint8_t bytes[3];
	message(bytes, 0, 0);
	assert_true(msg_queue_push(mq, 0, bytes, sizeof bytes));
	wake_fd_signal(out.wake_fd);
	/* the output thread finds the side taken and waits for it */
	for (int i = 0; i < 2000 && !atomic_load(&out.side_wanted); i++)
		pause_ms(1);
	assert_true(atomic_load(&out.side_wanted));
	pause_ms(20);
	assert_int_equal(msg_queue_fill(mq, 0), 1);
	output_thread_give_back(&out);   /* no other wake-up */
	for (int i = 0; i < 2000 && msg_queue_fill(mq, 0) > 0; i++)
		pause_ms(1);
	assert_int_equal(msg_queue_fill(mq, 0), 0);
	assert_int_equal(io.next[0], 1);
	stop(mq);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(both_ways_keep_order_and_lose_nothing),
		cmocka_unit_test(queued_behind_a_borrowed_side_goes_after_it),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
