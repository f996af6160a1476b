/*
 * output_thread: see output_thread.h.  The eventfd protocol cannot lose a
 * wake-up: the input thread pushes and then writes the eventfd; this
 * thread clears the eventfd and then drains, so a push it did not see
 * has written the eventfd after the clear, and the next poll returns at
 * once.
 */
#include "output_thread.h"

#include <errno.h>
#include <poll.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "clock.h"

#define STOP_RETRY_MS 2000
#define IDLE_FLUSH_MS 10
#define IDLE_FLUSHES 5
#define DROP_LOG_INTERVAL_MS 1000

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
	for (int i = 0; i < MIDI_IO_MAX_OUTPUTS; i++) {
		atomic_init(&t->sent[i], 0);
		atomic_init(&t->send_drops[i], 0);
		t->wire_status[i] = 0;
		t->drops_logged[i] = 0;
		t->drop_logged_ms[i] = 0;
	}
	log_ring_init(&t->log);
}

static void note_drop(struct output_thread *t, int output)
{
	uint64_t drops = atomic_fetch_add_explicit(&t->send_drops[output], 1,
						   memory_order_relaxed) + 1;
	int64_t now = monotonic_ms();
	if (now - t->drop_logged_ms[output] < DROP_LOG_INTERVAL_MS && t->drops_logged[output])
		return;
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "output %s: the backend refused %llu message(s) so far (the receiver is not keeping up)",
		      t->names[output], (unsigned long long)drops);
	t->drops_logged[output] = drops;
	t->drop_logged_ms[output] = now;
	wake_fd_signal(t->main_wake_fd);
}

static bool is_channel_status(uint8_t b)
{
	return b >= 0x80 && b < 0xF0;
}

static bool send_one(struct output_thread *t, int output, const uint8_t *bytes, size_t length,
		     bool retry)
{
	const uint8_t *start = bytes;
	size_t n = length;
	bool compress = t->running_status[output] && is_channel_status(bytes[0]) &&
			bytes[0] == t->wire_status[output];
	if (compress) {
		start++;
		n--;
	}
	bool ok = t->backend->send(t->io, output, start, n);
	if (!ok && retry) {
		int64_t give_up = monotonic_ms() + STOP_RETRY_MS;
		const struct timespec pause = {0, 1000000};
		while (!ok && monotonic_ms() < give_up) {
			t->backend->flush(t->io);
			nanosleep(&pause, NULL);
			ok = t->backend->send(t->io, output, start, n);
		}
	}
	if (!ok) {
		t->wire_status[output] = 0;
		return false;
	}
	if (is_channel_status(bytes[0]))
		t->wire_status[output] = bytes[0];
	else if (bytes[0] < 0xF8)
		t->wire_status[output] = 0; /* system common and SysEx cancel it (MIDI 1.0) */
	return true;
}

/* Sends everything queued; returns how many messages went. */
static int drain(struct output_thread *t, bool retry)
{
	int count = 0;
	uint8_t output;
	size_t length;
	while ((length = msg_queue_pop(t->messages, &output, t->buffer, sizeof t->buffer)) > 0) {
		if (output & MSG_OUTPUT_RECONNECTED) {
			if ((output & ~MSG_OUTPUT_RECONNECTED) < t->output_count)
				t->wire_status[output & ~MSG_OUTPUT_RECONNECTED] = 0;
			continue;
		}
		if (output >= t->output_count)
			continue;
		if (send_one(t, output, t->buffer, length, retry))
			atomic_fetch_add_explicit(&t->sent[output], 1, memory_order_relaxed);
		else
			note_drop(t, output);
		count++;
	}
	if (count)
		t->backend->flush(t->io);
	return count;
}

void *output_thread_run(void *arg)
{
	struct output_thread *t = arg;
	struct pollfd pfd = {.fd = t->wake_fd, .events = POLLIN};
	int idle_flushes = 0;
	for (;;) {
		wake_fd_clear(t->wake_fd);
		bool stopping = atomic_load_explicit(&t->stop, memory_order_acquire);
		if (drain(t, stopping) > 0)
			idle_flushes = IDLE_FLUSHES;
		if (stopping) {
			/* the input thread has stopped: nothing more can arrive */
			while (drain(t, true) > 0)
				;
			t->backend->flush(t->io);
			break;
		}
		int timeout = idle_flushes > 0 ? IDLE_FLUSH_MS : -1;
		int r = poll(&pfd, 1, timeout);
		if (r == 0 && idle_flushes > 0) {
			/* let a backend finish a write it had to cut short */
			t->backend->flush(t->io);
			idle_flushes--;
		}
	}
	return NULL;
}

void output_thread_stop(struct output_thread *t)
{
	atomic_store_explicit(&t->stop, true, memory_order_release);
	wake_fd_signal(t->wake_fd);
}
