/*
 * raw_io: MIDI as plain bytes in files: FIFOs, raw MIDI devices
 * (/dev/snd/midiC1D0) and regular files.  It needs no MIDI system at all,
 * which is what lets the whole daemon be tested end to end natively.
 *
 * Input: each path in [input] connect is one source (0, 1, ... in order),
 * opened O_RDONLY|O_NONBLOCK.  A source counts as connected when its first
 * bytes arrive.  At end of file:
 *   - a FIFO's writer has gone: SOURCE_GONE, and the FIFO is opened again
 *     to wait for the next writer (a fresh descriptor does not report the
 *     old hang-up, so poll sleeps until someone writes);
 *   - a regular file has been read once: SOURCE_GONE, and it is done;
 *   - a device that fails (unplugged): SOURCE_GONE, reopened on the tick.
 * A FIFO removed and made again (mkfifo) under the same name is a new
 * FIFO the old descriptor never sees: twice a second the name is looked up
 * again, and when it names another FIFO, what the old one still holds is
 * read, its source reported gone (its notes end), and the new one opened;
 * both the removal and the new FIFO are told to the log (MIDI_IO_NOTICE).
 * Reading stops whenever the daemon is not accepting input (backpressure):
 * the bytes wait in the FIFO or device.
 *
 * Output: the first path in each [output NAME] connect, opened
 * O_WRONLY|O_NONBLOCK (a regular file is created if missing and appended
 * to).  A FIFO with no reader cannot be opened yet (ENXIO): the output
 * waits, retried on a 100 ms tick, and reports OUTPUT_CONNECTED when a
 * reader comes (the daemon then sends the synth set-up).  Until then, and
 * for an output with no path, messages are accepted and go nowhere, as on
 * a sequencer port nobody subscribed to.  send() puts a message in a small
 * per-output buffer and flush() writes the buffer in one write (a batch of
 * messages, one system call); a write cut short keeps the rest there, in
 * order.  A message that finds the buffer full and the reader taking
 * nothing is refused (the output thread tries it again later); a reader
 * that goes away (EPIPE; the daemon ignores SIGPIPE) or a device that fails
 * makes the output wait again, reported as OUTPUT_GONE.
 *
 * Threads: the input side and the reopening run on the input thread, the
 * writes on the output thread.  They share one thing per output, its
 * descriptor, as an atomic int: only the input thread turns -1 into an open
 * descriptor, only the output thread turns an open one into -1 (closing it
 * first), so each descriptor has one owner at a time.
 */
#include <errno.h>
#include <fcntl.h>
#include <glob.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "midi_io.h"

#define RAW_PENDING_MAX 16384
#define RAW_RETRY_MS 100
#define RAW_RENAME_CHECK_MS 500

enum raw_kind { RAW_FIFO, RAW_DEVICE, RAW_FILE };

struct raw_input {
	char path[MIDI_IO_NAME_MAX];
	enum raw_kind kind;
	int fd;                      /* -1: closed (device gone, file done) */
	bool connected;              /* bytes seen since (re)opening */
	bool done;                   /* a regular file read to its end */
	dev_t dev;                   /* what fd is (a FIFO made again is another) */
	ino_t ino;
	bool missing_told;           /* the log knows the FIFO's name is gone */
};

struct raw_output {
	char path[MIDI_IO_NAME_MAX]; /* empty: writes go nowhere */
	enum raw_kind kind;
	atomic_int fd;               /* see the thread rule above */
	atomic_bool gone;            /* output thread saw the reader go */
	bool reported_connected;     /* input thread's: OUTPUT_CONNECTED told for this fd */
	/* output thread's */
	size_t pending_length;
	uint8_t pending[RAW_PENDING_MAX];
};

struct midi_io {
	struct midi_io_callbacks callbacks;
	int64_t renames_checked_ms;
	int input_count;
	struct raw_input inputs[MIDI_IO_MAX_PATTERNS];
	int output_count;
	struct raw_output outputs[MIDI_IO_MAX_OUTPUTS];
};

static enum raw_kind kind_of(int fd)
{
	struct stat st;
	if (fstat(fd, &st) != 0)
		return RAW_DEVICE;
	if (S_ISFIFO(st.st_mode))
		return RAW_FIFO;
	if (S_ISREG(st.st_mode))
		return RAW_FILE;
	return RAW_DEVICE;
}

static const char *kind_name(enum raw_kind kind)
{
	return kind == RAW_FIFO ? "FIFO" : kind == RAW_FILE ? "file" : "device";
}

static int open_input_fd(struct raw_input *in)
{
	int fd = open(in->path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
	struct stat st;
	if (fd >= 0 && fstat(fd, &st) == 0) {
		in->dev = st.st_dev;
		in->ino = st.st_ino;
	}
	return fd;
}

static int64_t now_ms(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}

static void notice(struct midi_io *io, int source, const char *fmt, const char *path)
{
	char text[MIDI_IO_NAME_MAX * 3];
	snprintf(text, sizeof text, fmt, path);
	if (io->callbacks.event)
		io->callbacks.event(io->callbacks.context, MIDI_IO_NOTICE, source, text);
}

static bool accepting(struct midi_io *io)
{
	return !io->callbacks.accepting || io->callbacks.accepting(io->callbacks.context);
}

static int open_output_fd(const char *path)
{
	return open(path, O_WRONLY | O_NONBLOCK | O_CLOEXEC | O_CREAT | O_APPEND, 0644);
}

static struct midi_io *raw_open(const struct midi_io_spec *spec,
				const struct midi_io_callbacks *callbacks,
				char *err, size_t err_size)
{
	struct midi_io *io = calloc(1, sizeof *io);
	if (!io) {
		snprintf(err, err_size, "raw backend: out of memory");
		return NULL;
	}
	io->callbacks = *callbacks;
	for (int i = 0; i < MIDI_IO_MAX_OUTPUTS; i++)
		atomic_init(&io->outputs[i].fd, -1);
	for (int i = 0; i < spec->input.connect_count && i < MIDI_IO_MAX_PATTERNS; i++) {
		struct raw_input *in = &io->inputs[io->input_count++];
		snprintf(in->path, sizeof in->path, "%s", spec->input.connect[i]);
		in->fd = open_input_fd(in);
		if (in->fd < 0) {
			snprintf(err, err_size,
				 "raw backend: cannot open input %s: %s (make it with mkfifo, or fix [input] connect)",
				 in->path, strerror(errno));
			goto fail;
		}
		in->kind = kind_of(in->fd);
	}
	io->output_count = spec->output_count;
	for (int i = 0; i < spec->output_count && i < MIDI_IO_MAX_OUTPUTS; i++) {
		struct raw_output *out = &io->outputs[i];
		if (spec->outputs[i].connect_count == 0)
			continue;
		snprintf(out->path, sizeof out->path, "%s", spec->outputs[i].connect[0]);
		int fd = open_output_fd(out->path);
		if (fd < 0 && errno != ENXIO) {
			snprintf(err, err_size,
				 "raw backend: cannot open output %s for [output %s]: %s (fix its connect =)",
				 out->path, spec->outputs[i].name, strerror(errno));
			goto fail;
		}
		if (fd >= 0) {
			/* reported by the first service_input (midi_io.h) */
			out->kind = kind_of(fd);
		} else {
			out->kind = RAW_FIFO; /* ENXIO: a FIFO without a reader */
		}
		atomic_store(&out->fd, fd);
	}
	return io;
fail:
	for (int i = 0; i < io->input_count; i++)
		if (io->inputs[i].fd >= 0)
			close(io->inputs[i].fd);
	for (int i = 0; i < MIDI_IO_MAX_OUTPUTS; i++) {
		int fd = atomic_load(&io->outputs[i].fd);
		if (fd >= 0)
			close(fd);
	}
	free(io);
	return NULL;
}

static bool output_waiting(struct raw_output *out)
{
	return out->path[0] && (atomic_load_explicit(&out->fd, memory_order_acquire) < 0 ||
				atomic_load_explicit(&out->gone, memory_order_relaxed));
}

static int raw_input_fds(struct midi_io *io, struct pollfd *fds, int max, int *tick_ms)
{
	int n = 0;
	bool retry = false;
	for (int i = 0; i < io->input_count; i++) {
		struct raw_input *in = &io->inputs[i];
		if (in->fd < 0) {
			retry |= !in->done;
			continue;
		}
		if (n < max) {
			fds[n].fd = in->fd;
			fds[n].events = POLLIN;
			fds[n].revents = 0;
			n++;
		}
	}
	for (int i = 0; i < io->output_count; i++)
		retry |= output_waiting(&io->outputs[i]);
	*tick_ms = retry ? RAW_RETRY_MS : -1;
	return n;
}

static void input_gone(struct midi_io *io, int source)
{
	struct raw_input *in = &io->inputs[source];
	if (in->connected && io->callbacks.event)
		io->callbacks.event(io->callbacks.context, MIDI_IO_SOURCE_GONE, source, in->path);
	in->connected = false;
	close(in->fd);
	in->fd = -1;
	if (in->kind == RAW_FILE)
		in->done = true;
	else if (in->kind == RAW_FIFO)
		in->fd = open_input_fd(in); /* the next writer (-1 if removed: retried on the tick) */
}

static void service_one_input(struct midi_io *io, int source)
{
	struct raw_input *in = &io->inputs[source];
	uint8_t buf[1024];
	for (;;) {
		if (!accepting(io))
			return; /* backpressure: the rest waits in the FIFO or device */
		ssize_t n = read(in->fd, buf, sizeof buf);
		if (n > 0) {
			if (!in->connected) {
				in->connected = true;
				if (io->callbacks.event)
					io->callbacks.event(io->callbacks.context,
							    MIDI_IO_SOURCE_CONNECTED, source, in->path);
			}
			io->callbacks.input(io->callbacks.context, (uint8_t)source, buf, (size_t)n);
			if (io->callbacks.input_done)
				io->callbacks.input_done(io->callbacks.context);
			continue;
		}
		if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK))
			return;
		if (n < 0 && errno == EINTR)
			continue;
		input_gone(io, source); /* end of file, or the device failed */
		return;
	}
}

static void service_outputs(struct midi_io *io)
{
	for (int i = 0; i < io->output_count; i++) {
		struct raw_output *out = &io->outputs[i];
		if (!out->path[0])
			continue;
		if (atomic_exchange(&out->gone, false)) {
			out->reported_connected = false;
			if (io->callbacks.event)
				io->callbacks.event(io->callbacks.context, MIDI_IO_OUTPUT_GONE, i, out->path);
		}
		if (atomic_load_explicit(&out->fd, memory_order_acquire) < 0) {
			int fd = open_output_fd(out->path);
			if (fd < 0)
				continue;
			out->kind = kind_of(fd);
			int expected = -1;
			if (!atomic_compare_exchange_strong(&out->fd, &expected, fd)) {
				close(fd); /* cannot happen: only this thread fills a -1 */
				continue;
			}
		}
		if (out->reported_connected)
			continue;
		out->reported_connected = true;
		if (io->callbacks.event)
			io->callbacks.event(io->callbacks.context, MIDI_IO_OUTPUT_CONNECTED, i, out->path);
	}
}

/* Only what is there now: an idle FIFO would read as end of file. */
static void read_ready(struct midi_io *io, int source)
{
	struct pollfd pfd = {.fd = io->inputs[source].fd, .events = POLLIN};
	if (pfd.fd >= 0 && poll(&pfd, 1, 0) > 0 && (pfd.revents & (POLLIN | POLLHUP | POLLERR)))
		service_one_input(io, source);
}

/* A FIFO removed, or removed and made again under its name (see the top). */
static void check_renamed(struct midi_io *io, int source)
{
	struct raw_input *in = &io->inputs[source];
	struct stat st;
	if (stat(in->path, &st) != 0) {
		if (!in->missing_told)
			notice(io, source, "input FIFO %s was removed; latticed reads what is left in it and "
			       "opens the FIFO again when one is made under that name", in->path);
		in->missing_told = true;
		return;
	}
	if (!S_ISFIFO(st.st_mode) || (st.st_dev == in->dev && st.st_ino == in->ino))
		return;
	int fd = open(in->path, O_RDONLY | O_NONBLOCK | O_CLOEXEC);
	if (fd < 0)
		return;
	read_ready(io, source);
	if (in->fd < 0 || in->kind != RAW_FIFO) {
		close(fd); /* ended while reading what was left: open it the usual way */
		return;
	}
	if (in->connected && io->callbacks.event)
		io->callbacks.event(io->callbacks.context, MIDI_IO_SOURCE_GONE, source, in->path);
	in->connected = false;
	close(in->fd);
	in->fd = fd;
	in->dev = st.st_dev;
	in->ino = st.st_ino;
	in->missing_told = false;
	notice(io, source, "input FIFO %s was made again; reading the new one", in->path);
}

static void reopen_input(struct midi_io *io, int source)
{
	struct raw_input *in = &io->inputs[source];
	in->fd = open_input_fd(in); /* replugged, or the FIFO made again? */
	if (in->fd >= 0 && in->kind == RAW_FIFO && in->missing_told) {
		in->missing_told = false;
		notice(io, source, "input FIFO %s was made again; reading the new one", in->path);
	}
}

static void raw_service_input(struct midi_io *io)
{
	struct pollfd fds[MIDI_IO_MAX_PATTERNS];
	int index[MIDI_IO_MAX_PATTERNS], n = 0;
	int64_t now = now_ms();
	bool check = now - io->renames_checked_ms >= RAW_RENAME_CHECK_MS;
	if (check)
		io->renames_checked_ms = now;
	for (int i = 0; i < io->input_count; i++) {
		struct raw_input *in = &io->inputs[i];
		if (in->fd < 0 && !in->done && (in->kind == RAW_DEVICE || in->kind == RAW_FIFO)) {
			reopen_input(io, i);
			continue;
		}
		if (check && in->fd >= 0 && in->kind == RAW_FIFO && accepting(io))
			check_renamed(io, i);
		if (in->fd < 0)
			continue;
		fds[n].fd = in->fd;
		fds[n].events = POLLIN;
		fds[n].revents = 0;
		index[n++] = i;
	}
	/* only the ready ones: an idle FIFO would read as end of file */
	if (n > 0 && accepting(io) && poll(fds, (nfds_t)n, 0) > 0)
		for (int k = 0; k < n; k++)
			if (fds[k].revents & (POLLIN | POLLHUP | POLLERR))
				service_one_input(io, index[k]);
	service_outputs(io);
}

/* Output thread: a reader that went away, or a device that failed. */
static void output_lost(struct raw_output *out)
{
	int fd = atomic_exchange(&out->fd, -1);
	if (fd >= 0)
		close(fd);
	out->pending_length = 0;
	atomic_store(&out->gone, true);
}

/* Writes what it can of bytes; returns how many went, or -1 if the output was lost. */
static ssize_t write_some(struct raw_output *out, int fd, const uint8_t *bytes, size_t length)
{
	size_t done = 0;
	while (done < length) {
		ssize_t n = write(fd, bytes + done, length - done);
		if (n > 0) {
			done += (size_t)n;
			continue;
		}
		if (n < 0 && errno == EINTR)
			continue;
		if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK))
			break;
		output_lost(out);
		return -1;
	}
	return (ssize_t)done;
}

static bool write_pending(struct raw_output *out, int fd)
{
	if (out->pending_length == 0)
		return true;
	ssize_t n = write_some(out, fd, out->pending, out->pending_length);
	if (n < 0)
		return false;
	memmove(out->pending, out->pending + n, out->pending_length - (size_t)n);
	out->pending_length -= (size_t)n;
	return out->pending_length == 0;
}

/* Messages collect in the output's buffer and go out in one write at the
 * flush after each batch; a full buffer is written first, and refuses the
 * message only if the reader still takes nothing. */
static bool raw_send(struct midi_io *io, int output, const uint8_t *bytes, size_t length)
{
	if (output < 0 || output >= io->output_count || length > RAW_PENDING_MAX)
		return false;
	struct raw_output *out = &io->outputs[output];
	int fd = atomic_load_explicit(&out->fd, memory_order_acquire);
	if (fd < 0)
		return true; /* nobody listens: nothing to keep */
	if (out->pending_length + length > sizeof out->pending) {
		(void)write_pending(out, fd);
		if (atomic_load_explicit(&out->fd, memory_order_relaxed) < 0)
			return true; /* the reader went away */
		if (out->pending_length + length > sizeof out->pending)
			return false; /* would block: the caller tries again */
	}
	memcpy(out->pending + out->pending_length, bytes, length);
	out->pending_length += length;
	return true;
}

static bool raw_flush(struct midi_io *io)
{
	bool all = true;
	for (int i = 0; i < io->output_count; i++) {
		struct raw_output *out = &io->outputs[i];
		int fd = atomic_load_explicit(&out->fd, memory_order_acquire);
		if (fd >= 0 && !write_pending(out, fd))
			all &= atomic_load_explicit(&out->fd, memory_order_relaxed) < 0;
	}
	return all;
}

static void raw_describe(struct midi_io *io, midi_io_line_fn line, void *context)
{
	char text[256];
	if (io->input_count == 0)
		line(context, "input in: no paths in [input] connect");
	for (int i = 0; i < io->input_count; i++) {
		const struct raw_input *in = &io->inputs[i];
		snprintf(text, sizeof text, "input in: source %d %s (%s, %s)", i, in->path,
			 kind_name(in->kind),
			 in->done ? "read to its end" : in->connected ? "connected"
			 : in->fd < 0 ? "gone" : "waiting for data");
		line(context, text);
	}
	for (int i = 0; i < io->output_count; i++) {
		struct raw_output *out = &io->outputs[i];
		if (!out->path[0]) {
			snprintf(text, sizeof text, "output %d: no path in its connect", i);
		} else {
			bool open_now = atomic_load(&out->fd) >= 0;
			snprintf(text, sizeof text, "output %d: %s (%s, %s)", i, out->path,
				 kind_name(out->kind),
				 open_now ? "open" : out->kind == RAW_FIFO ? "waiting for a reader" : "gone");
		}
		line(context, text);
	}
}

static bool raw_list(midi_io_line_fn line, void *context, char *err, size_t err_size)
{
	(void)err;
	(void)err_size;
	glob_t g;
	char text[300];
	line(context, "raw backend: connect = names files: FIFOs, raw MIDI devices or regular files");
	if (glob("/dev/snd/midiC*D*", 0, NULL, &g) == 0) {
		for (size_t i = 0; i < g.gl_pathc; i++) {
			snprintf(text, sizeof text, "%s", g.gl_pathv[i]);
			line(context, text);
		}
		globfree(&g);
	} else {
		line(context, "(no raw MIDI devices in /dev/snd)");
	}
	return true;
}

static void raw_close(struct midi_io *io)
{
	if (!io)
		return;
	for (int i = 0; i < io->input_count; i++)
		if (io->inputs[i].fd >= 0)
			close(io->inputs[i].fd);
	for (int i = 0; i < io->output_count; i++) {
		int fd = atomic_exchange(&io->outputs[i].fd, -1);
		if (fd >= 0)
			close(fd);
	}
	free(io);
}

const struct midi_io_backend midi_io_raw = {
	.name = "raw",
	.byte_stream = true,
	.open = raw_open,
	.input_fds = raw_input_fds,
	.service_input = raw_service_input,
	.send = raw_send,
	.flush = raw_flush,
	.describe = raw_describe,
	.list = raw_list,
	.close = raw_close,
};
