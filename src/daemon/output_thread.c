/*
 * output_thread: see output_thread.h.  The eventfd protocol cannot lose a
 * wake-up: the input thread pushes and then writes the eventfd; this
 * thread clears the eventfd and then drains, so a push it did not see
 * has written the eventfd after the clear, and the next poll returns at
 * once.  room_wanted works the same way round: the input thread stores
 * its level and then looks at the fill again; this thread releases slots
 * and then looks at the level, so one of the two sees the other.  So does
 * the side's hand-back: this thread marks side_wanted and then tries to
 * take the side again; the input thread frees the side and then looks at
 * side_wanted (all sequentially consistent).
 */
#include "output_thread.h"

#include <errno.h>
#include <poll.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "clock.h"

#define STOP_RETRY_MS 2000
#define RETRY_FIRST_MS 1
#define RETRY_MAX_MS 4
#define BATCH_MESSAGES 256           /* per output per round, so none waits long */
#define BLOCKED_LOG_INTERVAL_MS 1000

/* who holds the backend's output side */
enum { SIDE_FREE, SIDE_OUTPUT_THREAD, SIDE_INPUT_THREAD };

void wake_fd_signal(int fd)
{
	uint64_t one = 1;
	ssize_t n;
	do
		n = write(fd, &one, sizeof one);
	while (n < 0 && errno == EINTR);
	/* EAGAIN: the counter is enormous, a wake-up is pending anyway */
}

void wake_fd_clear(int fd)
{
	uint64_t value;
	ssize_t n;
	do
		n = read(fd, &value, sizeof value);
	while (n < 0 && errno == EINTR);
}

void output_thread_init(struct output_thread *t)
{
	atomic_init(&t->stop, false);
	atomic_init(&t->side, SIDE_FREE);
	atomic_init(&t->side_wanted, false);
	t->borrowed_sent = false;
	for (int i = 0; i < MIDI_IO_MAX_OUTPUTS; i++) {
		atomic_init(&t->sent[i], 0);
		atomic_init(&t->send_drops[i], 0);
		atomic_init(&t->refused[i], 0);
		atomic_init(&t->room_wanted[i], 0);
		midi_running_status_reset(&t->wire[i]);
		t->blocked[i] = false;
		t->blocked_logged_ms[i] = 0;
	}
	t->held_back = false;
	t->input_wake_fd = -1;
	log_ring_init(&t->log);
}

void output_thread_want_room(struct output_thread *t, int output, size_t fill)
{
	atomic_store(&t->room_wanted[output], fill);
}

static void note_refused(struct output_thread *t, int output)
{
	uint64_t refused = atomic_fetch_add_explicit(&t->refused[output], 1, memory_order_relaxed) + 1;
	int64_t now = monotonic_ms();
	if (t->blocked_logged_ms[output] && now - t->blocked_logged_ms[output] < BLOCKED_LOG_INTERVAL_MS)
		return;
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "output %s: the synth is not taking messages (refused %llu time(s) so far, %zu slot(s) "
		      "waiting); latticed waits for it and drops nothing",
		      t->names[output], (unsigned long long)refused, msg_queue_fill(t->messages, output));
	t->blocked_logged_ms[output] = now;
	wake_fd_signal(t->main_wake_fd);
}

static bool send_one(struct output_thread *t, int output, const uint8_t *bytes, size_t length)
{
	size_t skip = t->running_status[output] ? midi_running_status_skip(&t->wire[output], bytes) : 0;
	const uint8_t *start = bytes + skip;
	size_t n = length - skip;
	if (!t->backend->send(t->io, output, start, n)) {
		midi_running_status_reset(&t->wire[output]);
		return false;
	}
	midi_running_status_sent(&t->wire[output], bytes[0]);
	return true;
}

static void wake_input_if_wanted(struct output_thread *t, int output)
{
	size_t want = atomic_load(&t->room_wanted[output]);
	if (want && msg_queue_fill(t->messages, output) < want &&
	    atomic_exchange(&t->room_wanted[output], 0) && t->input_wake_fd >= 0)
		wake_fd_signal(t->input_wake_fd);
}

/* Sends up to a batch of one output's messages; returns how many went. */
static int drain_output(struct output_thread *t, int output, bool *more)
{
	int count = 0;
	enum msg_kind kind;
	size_t length;
	while (count < BATCH_MESSAGES &&
	       (length = msg_queue_peek(t->messages, output, &kind, t->buffer, sizeof t->buffer)) > 0) {
		if (kind == MSG_RECONNECTED) {
			midi_running_status_reset(&t->wire[output]);
		} else if (!send_one(t, output, t->buffer, length)) {
			if (!t->blocked[output])
				note_refused(t, output);
			t->blocked[output] = true;
			break;
		} else {
			atomic_fetch_add_explicit(&t->sent[output], 1, memory_order_relaxed);
		}
		t->blocked[output] = false;
		msg_queue_release(t->messages, output);
		count++;
	}
	if (count == BATCH_MESSAGES)
		*more = true;
	if (count)
		wake_input_if_wanted(t, output);
	return count;
}

/* One round over every output; returns messages sent, sets *blocked when
 * a message was refused or the backend still holds some back. */
static int drain(struct output_thread *t, bool *blocked, bool *more)
{
	int count = 0;
	*blocked = *more = false;
	for (int k = 0; k < t->output_count; k++) {
		count += drain_output(t, k, more);
		*blocked |= t->blocked[k];
	}
	if (count || *blocked || t->held_back)
		t->held_back = !t->backend->flush(t->io);
	*blocked |= t->held_back;
	return count;
}

static size_t left_over(struct output_thread *t)
{
	size_t left = 0;
	for (int k = 0; k < t->output_count; k++)
		left += msg_queue_fill(t->messages, k);
	return left;
}

/* Stopping: what a synth that never read could not take. */
static void give_up(struct output_thread *t)
{
	enum msg_kind kind;
	for (int k = 0; k < t->output_count; k++) {
		uint64_t dropped = 0;
		while (msg_queue_peek(t->messages, k, &kind, t->buffer, sizeof t->buffer) > 0) {
			dropped += kind == MSG_MIDI;
			msg_queue_release(t->messages, k);
		}
		if (!dropped && !t->held_back)
			continue;
		atomic_fetch_add_explicit(&t->send_drops[k], dropped, memory_order_relaxed);
		log_ring_post(&t->log, LOG_LEVEL_ERROR,
			      "output %s: its synth took nothing for %d ms at shutdown; %llu queued message(s) "
			      "and what its port still held could not be sent (notes may hang there)",
			      t->names[k], STOP_RETRY_MS, (unsigned long long)dropped);
	}
	wake_fd_signal(t->main_wake_fd);
}

/* ---- the side ------------------------------------------------------------------ */

static bool take_side(struct output_thread *t, int who)
{
	int expected = SIDE_FREE;
	return atomic_compare_exchange_strong(&t->side, &expected, who);
}

/* For this thread; false while the input thread holds the side (it wakes
 * this thread when it gives it back). */
static bool take_side_here(struct output_thread *t)
{
	if (!take_side(t, SIDE_OUTPUT_THREAD)) {
		atomic_store(&t->side_wanted, true);
		if (!take_side(t, SIDE_OUTPUT_THREAD))
			return false;
	}
	atomic_store(&t->side_wanted, false);
	return true;
}

bool output_thread_borrow(struct output_thread *t)
{
	if (!take_side(t, SIDE_INPUT_THREAD))
		return false;
	t->borrowed_sent = false;
	return true;
}

bool output_thread_send_borrowed(struct output_thread *t, int output, const uint8_t *bytes,
				 size_t length)
{
	if (!send_one(t, output, bytes, length)) {
		atomic_fetch_add_explicit(&t->refused[output], 1, memory_order_relaxed);
		return false;
	}
	atomic_fetch_add_explicit(&t->sent[output], 1, memory_order_relaxed);
	t->borrowed_sent = true;
	return true;
}

void output_thread_give_back(struct output_thread *t)
{
	bool wake = false;
	if (t->borrowed_sent || t->held_back) {
		t->held_back = !t->backend->flush(t->io);
		wake = t->held_back; /* this thread retries it */
	}
	atomic_store(&t->side, SIDE_FREE);
	if (atomic_exchange(&t->side_wanted, false))
		wake = true;
	if (wake)
		wake_fd_signal(t->wake_fd);
}

/* ---- the loop ------------------------------------------------------------------ */

void *output_thread_run(void *arg)
{
	struct output_thread *t = arg;
	struct pollfd pfd = {.fd = t->wake_fd, .events = POLLIN};
	int retry_ms = RETRY_FIRST_MS;
	int64_t stop_deadline = 0;
	for (;;) {
		wake_fd_clear(t->wake_fd);
		bool stopping = atomic_load_explicit(&t->stop, memory_order_acquire);
		if (!take_side_here(t)) {
			(void)poll(&pfd, 1, -1);
			continue;
		}
		bool blocked, more, done = false;
		if (drain(t, &blocked, &more) > 0)
			retry_ms = RETRY_FIRST_MS;
		else if (blocked && retry_ms < RETRY_MAX_MS)
			retry_ms *= 2;
		if (stopping) {
			/* the input thread has stopped: nothing more can arrive */
			if (!stop_deadline)
				stop_deadline = monotonic_ms() + STOP_RETRY_MS;
			done = left_over(t) == 0 && !t->held_back;
			if (!done && monotonic_ms() >= stop_deadline) {
				give_up(t);
				done = true;
			}
		}
		atomic_store(&t->side, SIDE_FREE);
		if (done)
			break;
		/* idle (nothing queued, nothing held back): sleep until woken */
		int timeout = more ? 0 : blocked ? retry_ms : -1;
		(void)poll(&pfd, 1, timeout);
	}
	return NULL;
}

void output_thread_stop(struct output_thread *t)
{
	atomic_store_explicit(&t->stop, true, memory_order_release);
	wake_fd_signal(t->wake_fd);
}
