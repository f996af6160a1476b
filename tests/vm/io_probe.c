/*
 * io_probe: drives a MIDI backend through src/io/include/midi_io.h alone, the way
 * the daemon does (an input thread that polls and services the input, an
 * output thread that sends and flushes), so the VM tests can check the
 * backends without the rest of latticed.
 *
 *   io_probe BACKEND forward [--in PATTERN]... [--out PATTERN]... [--seconds S]
 *       Opens client "latticed" with input "in" and output "synth",
 *       connected by the patterns.  Every complete message that arrives is
 *       sent to output 0 unchanged (a loopback through the interface).
 *       Prints one line per connection event ("source-connected 0 NAME",
 *       "source-gone 0 NAME", "output-connected 0 NAME", "output-gone 0
 *       NAME", "input-lost -1 " after an overflow), describe() on SIGUSR1, and totals at the end (SIGTERM,
 *       SIGINT or after S seconds, default 120).  SIGUSR2 makes the input
 *       thread stop reading for --pause seconds (default 4), so that the
 *       kernel's input queue can overflow.
 *   io_probe BACKEND loop [--in PATTERN]... [--out PATTERN]... [--seconds S]
 *       Waits until a source and output 0 are connected, sends a fixed set
 *       of messages (see `loop_messages`) once and checks that the same
 *       bytes come back from the source: for a loopback port such as the
 *       kernel's "Midi Through".
 *   io_probe BACKEND list
 *       The backend's list() lines.
 *   io_probe BACKEND open [--in PATTERN]... [--out PATTERN]...
 *       Opens and closes again: prints the error line and exits 1 if open
 *       fails.
 *
 * Exit status: 0 success, 1 failure, 2 bad command line.
 */
#include <errno.h>
#include <poll.h>
#include <pthread.h>
#include <signal.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "midi_io.h"

#define EXIT_FAIL 1
#define EXIT_USAGE 2
#define MESSAGE_MAX 4096
#define QUEUE_BYTES (1 << 20)

static volatile sig_atomic_t stop_requested, describe_requested, pause_requested;
static double pause_seconds = 4;

static void on_signal(int sig)
{
	if (sig == SIGUSR1)
		describe_requested = 1;
	else if (sig == SIGUSR2)
		pause_requested = 1;
	else
		stop_requested = 1;
}

static double now_s(void)
{
	struct timespec t;
	clock_gettime(CLOCK_MONOTONIC, &t);
	return (double)t.tv_sec + (double)t.tv_nsec / 1e9;
}

/* ---- messages out of a byte stream, unchanged ---------------------------
 * The backends deliver bytes, SysEx possibly in pieces; send() wants one
 * complete message.  Status and lengths: MIDI 1.0.  A Note On with
 * velocity 0 stays what it is (the core's parser would turn it into a
 * Note Off, which is why it is not used here). */
struct framer {
	uint8_t msg[MESSAGE_MAX];
	size_t len, need;
	bool in_sysex;
	uint8_t running;
};

static size_t data_length(uint8_t s)
{
	if (s < 0xF0)
		return (s & 0xE0) == 0xC0 ? 1 : 2;
	return s == 0xF2 ? 2 : (s == 0xF1 || s == 0xF3) ? 1 : 0;
}

typedef void (*message_fn)(const uint8_t *msg, size_t len);

static void framer_feed(struct framer *f, const uint8_t *bytes, size_t n, message_fn emit)
{
	for (size_t i = 0; i < n; i++) {
		uint8_t b = bytes[i];
		if (b >= 0xF8) {
			emit(&b, 1);
			continue;
		}
		if (f->in_sysex) {
			if (f->len < MESSAGE_MAX)
				f->msg[f->len++] = b;
			if (b == 0xF7) {
				f->in_sysex = false;
				emit(f->msg, f->len);
				f->len = 0;
				continue;
			}
			if (!(b & 0x80))
				continue;
			f->in_sysex = false; /* cut short: b starts the next message */
			f->len = 0;
		}
		if (b == 0xF0) {
			f->in_sysex = true;
			f->msg[0] = b;
			f->len = 1;
			f->running = 0;
			continue;
		}
		if (b & 0x80) {
			f->msg[0] = b;
			f->len = 1;
			f->need = 1 + data_length(b);
			f->running = b < 0xF0 ? b : 0;
		} else if (f->len == 0) {
			if (!f->running)
				continue;
			f->msg[0] = f->running;
			f->len = 1;
			f->need = 1 + data_length(f->running);
			f->msg[f->len++] = b;
		} else {
			f->msg[f->len++] = b;
		}
		if (f->len == f->need) {
			emit(f->msg, f->len);
			f->len = 0;
		}
	}
}

/* ---- the output thread: a queue of messages ------------------------------ */
static pthread_mutex_t queue_lock = PTHREAD_MUTEX_INITIALIZER;
static pthread_cond_t queue_cond = PTHREAD_COND_INITIALIZER;
static uint8_t queue[QUEUE_BYTES];
static size_t queue_head, queue_tail; /* byte offsets; each entry: 2 length bytes + message */
static bool queue_closed;
static atomic_ulong sent_count, dropped_count, queue_full_count;

static const struct midi_io_backend *backend;
static struct midi_io *io;

static void enqueue(const uint8_t *msg, size_t len)
{
	pthread_mutex_lock(&queue_lock);
	size_t used = queue_tail - queue_head;
	if (used + len + 2 > QUEUE_BYTES) {
		atomic_fetch_add(&queue_full_count, 1);
	} else {
		queue[queue_tail++ % QUEUE_BYTES] = (uint8_t)(len >> 8);
		queue[queue_tail++ % QUEUE_BYTES] = (uint8_t)len;
		for (size_t i = 0; i < len; i++)
			queue[queue_tail++ % QUEUE_BYTES] = msg[i];
		pthread_cond_signal(&queue_cond);
	}
	pthread_mutex_unlock(&queue_lock);
}

static void *output_thread(void *arg)
{
	static uint8_t msg[MESSAGE_MAX];
	(void)arg;
	pthread_mutex_lock(&queue_lock);
	for (;;) {
		while (queue_head == queue_tail && !queue_closed)
			pthread_cond_wait(&queue_cond, &queue_lock);
		if (queue_head == queue_tail)
			break;
		while (queue_head != queue_tail) {
			size_t len = (size_t)queue[queue_head++ % QUEUE_BYTES] << 8;
			len |= queue[queue_head++ % QUEUE_BYTES];
			for (size_t i = 0; i < len; i++)
				msg[i] = queue[queue_head++ % QUEUE_BYTES];
			pthread_mutex_unlock(&queue_lock);
			if (backend->send(io, 0, msg, len))
				atomic_fetch_add(&sent_count, 1);
			else
				atomic_fetch_add(&dropped_count, 1);
			pthread_mutex_lock(&queue_lock);
		}
		pthread_mutex_unlock(&queue_lock);
		(void)backend->flush(io);
		pthread_mutex_lock(&queue_lock);
	}
	pthread_mutex_unlock(&queue_lock);
	return NULL;
}

/* ---- callbacks (input thread) -------------------------------------------- */
static struct framer framers[MIDI_IO_MAX_SOURCES];
static unsigned long input_bytes, input_calls;
static bool verbose;
static bool looping; /* loop mode: collect instead of forwarding */
static uint8_t loop_got[MESSAGE_MAX * 2];
static size_t loop_got_len;
static bool source_up, output_up;

static void on_input(void *context, uint8_t source, const uint8_t *bytes, size_t length)
{
	(void)context;
	input_bytes += length;
	input_calls++;
	if (verbose) {
		printf("input %u:", source);
		for (size_t i = 0; i < length && i < 16; i++)
			printf(" %02X", bytes[i]);
		printf(length > 16 ? " ... (%zu bytes)\n" : "\n", length);
	}
	if (looping) {
		for (size_t i = 0; i < length && loop_got_len < sizeof loop_got; i++)
			loop_got[loop_got_len++] = bytes[i];
		return;
	}
	if (source < MIDI_IO_MAX_SOURCES)
		framer_feed(&framers[source], bytes, length, enqueue);
}

static void on_event(void *context, enum midi_io_event kind, int index, const char *name)
{
	static const char *const names[] = { "source-connected", "source-gone", "output-connected",
					      "output-gone", "input-lost", "notice" };
	(void)context;
	printf("%s %d %s\n", names[kind], index, name);
	if (kind == MIDI_IO_SOURCE_CONNECTED)
		source_up = true;
	if (kind == MIDI_IO_SOURCE_GONE && index < MIDI_IO_MAX_SOURCES)
		framers[index] = (struct framer){ 0 };
	if (kind == MIDI_IO_OUTPUT_CONNECTED)
		output_up = true;
}

static void print_line(void *context, const char *line)
{
	printf("%s%s\n", (const char *)context, line);
}

/* One round of the input thread's loop: wait for input, service it. */
static void input_round(void)
{
	struct pollfd fds[8];
	int tick = -1;
	int n = backend->input_fds(io, fds, 8, &tick);
	int timeout = 100;
	if (n == 0 && tick >= 0 && tick < timeout)
		timeout = tick;
	if (poll(fds, (nfds_t)n, timeout) < 0 && errno != EINTR)
		perror("io_probe: poll");
	backend->service_input(io);
	if (pause_requested) {
		pause_requested = 0;
		printf("pause: %g s\n", pause_seconds);
		struct timespec t = { (time_t)pause_seconds,
				      (long)((pause_seconds - (double)(time_t)pause_seconds) * 1e9) };
		while (nanosleep(&t, &t) < 0 && errno == EINTR)
			;
		printf("pause: over\n");
	}
	if (describe_requested) {
		describe_requested = 0;
		backend->describe(io, print_line, "describe: ");
	}
}

/* ---- loop mode ------------------------------------------------------------ */
static size_t loop_messages(uint8_t *out)
{
	/* MIDI 1.0 messages: Note On, Note On velocity 0 (stays a Note On),
	 * Note Off, CC 7, bend lowest / highest / centre, Program Change,
	 * channel pressure, poly pressure, a 300-byte SysEx (manufacturer ID
	 * 7D, non-commercial), a clock. */
	static const uint8_t fixed[] = {
		0x90, 0x3C, 0x64, 0x90, 0x3C, 0x00, 0x80, 0x3E, 0x40, 0xB1, 0x07, 0x64, 0xE0, 0x00, 0x00,
		0xE0, 0x7F, 0x7F, 0xE0, 0x00, 0x40, 0xC2, 0x05, 0xD3, 0x30, 0xA4, 0x3C, 0x20,
	};
	size_t n = sizeof fixed;
	memcpy(out, fixed, n);
	out[n++] = 0xF0;
	out[n++] = 0x7D;
	for (int i = 0; i < 297; i++)
		out[n++] = (uint8_t)((i * 7 + 3) & 0x7F);
	out[n++] = 0xF7;
	out[n++] = 0xF8;
	return n;
}

static void send_stream(const uint8_t *bytes, size_t n)
{
	struct framer f = { 0 };
	looping = true;
	framer_feed(&f, bytes, n, enqueue);
}

static int run_loop(double seconds)
{
	uint8_t want[MESSAGE_MAX];
	size_t nwant = loop_messages(want);
	double deadline = now_s() + seconds;

	looping = true;
	while (!(source_up && output_up) && now_s() < deadline && !stop_requested)
		input_round();
	if (!(source_up && output_up)) {
		fprintf(stderr, "io_probe: no %s within %g s\n", source_up ? "output" : "source", seconds);
		return EXIT_FAIL;
	}
	send_stream(want, nwant);
	while (loop_got_len < nwant && now_s() < deadline && !stop_requested)
		input_round();
	if (loop_got_len != nwant || memcmp(want, loop_got, nwant) != 0) {
		fprintf(stderr, "io_probe: %zu bytes sent, %zu came back, ", nwant, loop_got_len);
		size_t i = 0;
		while (i < nwant && i < loop_got_len && want[i] == loop_got[i])
			i++;
		fprintf(stderr, "first difference at byte %zu\n", i);
		return EXIT_FAIL;
	}
	printf("loop: %zu bytes (11 channel messages, a 300-byte SysEx, a clock) came back unchanged\n", nwant);
	return 0;
}

/* ---- main ------------------------------------------------------------------- */
static void usage(void)
{
	fprintf(stderr, "usage: io_probe BACKEND forward|loop|list|open [--in PATTERN]... [--out PATTERN]... "
			"[--seconds S] [--pause S] [--verbose]\n");
	exit(EXIT_USAGE);
}

static void add_pattern(struct midi_io_port_spec *p, const char *pattern)
{
	if (p->connect_count == MIDI_IO_MAX_PATTERNS || strlen(pattern) >= MIDI_IO_NAME_MAX) {
		fprintf(stderr, "io_probe: too many or too long patterns\n");
		exit(EXIT_USAGE);
	}
	strcpy(p->connect[p->connect_count++], pattern);
}

int main(int argc, char **argv)
{
	struct midi_io_spec spec = { 0 };
	double seconds = 120;
	char err[256] = "";

	setvbuf(stdout, NULL, _IOLBF, 0);
	if (argc < 3)
		usage();
	backend = midi_io_find(argv[1]);
	if (!backend) {
		fprintf(stderr, "io_probe: no backend '%s' (built: %s)\n", argv[1], midi_io_available());
		return EXIT_USAGE;
	}
	const char *mode = argv[2];
	strcpy(spec.client_name, "latticed");
	strcpy(spec.input.name, "in");
	spec.output_count = 1;
	strcpy(spec.outputs[0].name, "synth");
	for (int i = 3; i < argc; i++) {
		if (!strcmp(argv[i], "--in") && i + 1 < argc)
			add_pattern(&spec.input, argv[++i]);
		else if (!strcmp(argv[i], "--out") && i + 1 < argc)
			add_pattern(&spec.outputs[0], argv[++i]);
		else if (!strcmp(argv[i], "--seconds") && i + 1 < argc)
			seconds = atof(argv[++i]);
		else if (!strcmp(argv[i], "--pause") && i + 1 < argc)
			pause_seconds = atof(argv[++i]);
		else if (!strcmp(argv[i], "--verbose"))
			verbose = true;
		else
			usage();
	}
	if (!strcmp(mode, "list")) {
		if (!backend->list(print_line, "", err, sizeof err)) {
			fprintf(stderr, "io_probe: %s\n", err);
			return EXIT_FAIL;
		}
		return 0;
	}
	if (strcmp(mode, "forward") && strcmp(mode, "loop") && strcmp(mode, "open"))
		usage();

	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	sigaction(SIGINT, &sa, NULL);
	sigaction(SIGTERM, &sa, NULL);
	sigaction(SIGUSR1, &sa, NULL);
	sigaction(SIGUSR2, &sa, NULL);

	struct midi_io_callbacks cb = { .context = NULL, .input = on_input, .event = on_event };
	io = backend->open(&spec, &cb, err, sizeof err);
	if (!io) {
		fprintf(stderr, "io_probe: %s\n", err);
		return EXIT_FAIL;
	}
	printf("open: %s\n", backend->name);
	if (!strcmp(mode, "open")) {
		backend->describe(io, print_line, "describe: ");
		backend->close(io);
		return 0;
	}

	pthread_t out;
	pthread_create(&out, NULL, output_thread, NULL);
	int status = 0;
	if (!strcmp(mode, "loop")) {
		status = run_loop(seconds);
	} else {
		double deadline = now_s() + seconds;
		while (!stop_requested && now_s() < deadline)
			input_round();
	}
	pthread_mutex_lock(&queue_lock);
	queue_closed = true;
	pthread_cond_signal(&queue_cond);
	pthread_mutex_unlock(&queue_lock);
	pthread_join(out, NULL);
	backend->describe(io, print_line, "describe: ");
	backend->close(io);
	printf("totals: %lu bytes in %lu pieces, %lu messages sent, %lu refused by send, %lu lost in a full queue\n",
	       input_bytes, input_calls, atomic_load(&sent_count), atomic_load(&dropped_count),
	       atomic_load(&queue_full_count));
	return status;
}
