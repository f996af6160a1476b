/*
 * midi_io: the one small interface every MIDI backend implements.
 *
 * Contract (all backends):
 *   - open() creates the daemon's ports: one input (any number of devices
 *     may feed it; each feeding device is a "source", numbered 0..15 by the
 *     backend) and one output per configured output, and connects whatever
 *     matches the configured name patterns.  It fails with one line saying
 *     what is missing and how to fix it.
 *   - The input side runs on the input thread only: input_fds() gives the
 *     descriptors to poll for POLLIN (with *tick_ms = -1: no tick needed),
 *     or none and a tick in milliseconds for a backend that must be polled
 *     (PortMidi has no descriptor).  service_input() may be called at any
 *     time, with nothing pending too.
 *     service_input() reads everything pending and reports it through the
 *     callbacks: raw MIDI bytes per source, in arrival order (SysEx may
 *     come in several pieces; the daemon's parser per source joins them),
 *     connection events, and INPUT_LOST where a queue overflowed (the
 *     events lost cannot be named, only that there were some).  Hotplug (a matching port appearing) is
 *     handled inside service_input().  Callbacks are only ever called from
 *     service_input(): connections made by open() are reported by the
 *     first call.
 *     Backpressure: before each read of input, service_input() asks
 *     accepting() (when set); false means the daemon cannot take more now,
 *     and the backend reads nothing more in this call, leaving the input
 *     where the system keeps it (FIFO, device, sequencer queue) until a
 *     later call.  What one read has delivered is always taken.
 *   - The output side runs on the output thread only: send() queues one
 *     complete message (status byte first: running status is not taken)
 *     for one output without blocking and returns false
 *     if it cannot (the caller tries it again later); flush() pushes queued
 *     messages out after a batch and returns false while some are still
 *     held back (the receiver is not reading): call it again later.
 *   - describe() (input thread) and list() (any thread, no open needed)
 *     report ports and connections as text lines for `latticed status`
 *     and `latticed ports`; connect() (optional, no open needed) links two
 *     ports of other programs for `latticed connect`.
 * Events and bytes are converted at this edge: nothing above sees a
 * backend's own event types.
 */
#ifndef LATTICED_MIDI_IO_H
#define LATTICED_MIDI_IO_H

#include <poll.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define MIDI_IO_MAX_OUTPUTS 8
#define MIDI_IO_MAX_PATTERNS 8
#define MIDI_IO_MAX_SOURCES 16
#define MIDI_IO_NAME_MAX 64

enum midi_io_event {
	MIDI_IO_SOURCE_CONNECTED,   /* index = source */
	MIDI_IO_SOURCE_GONE,        /* index = source: end the notes it started */
	MIDI_IO_OUTPUT_CONNECTED,   /* index = output: send its set-up again */
	MIDI_IO_OUTPUT_GONE,        /* index = output: nothing listens now */
	MIDI_IO_INPUT_LOST,         /* index = source, or -1 for every source: an
	                             * input queue overflowed and events were lost;
	                             * any of them may have been a note-off */
	MIDI_IO_NOTICE,             /* index = source or -1; name = one sentence
	                             * for the log (e.g. a FIFO made again) */
};

struct midi_io_callbacks {
	void *context;
	void (*input)(void *context, uint8_t source, const uint8_t *bytes, size_t length);
	/* name: the port or device concerned, e.g. "USB Keys:USB Keys MIDI 1" */
	void (*event)(void *context, enum midi_io_event kind, int index, const char *name);
	/* optional: false stops reading input for now (backpressure, above) */
	bool (*accepting)(void *context);
};

struct midi_io_port_spec {
	char name[MIDI_IO_NAME_MAX];             /* our port's name */
	int connect_count;
	char connect[MIDI_IO_MAX_PATTERNS][MIDI_IO_NAME_MAX]; /* fnmatch patterns */
};

struct midi_io_spec {
	char client_name[MIDI_IO_NAME_MAX];      /* "latticed" */
	struct midi_io_port_spec input;          /* name "in" */
	int output_count;
	struct midi_io_port_spec outputs[MIDI_IO_MAX_OUTPUTS];
};

struct midi_io; /* a backend's own state */

typedef void (*midi_io_line_fn)(void *context, const char *line);

struct midi_io_backend {
	const char *name;
	/* send() writes the bytes themselves to a wire or a file (raw), so
	 * leaving out repeated status bytes (running status) saves time on a
	 * slow link; other backends take whole events. */
	bool byte_stream;
	struct midi_io *(*open)(const struct midi_io_spec *spec,
				const struct midi_io_callbacks *callbacks,
				char *err, size_t err_size);
	int (*input_fds)(struct midi_io *io, struct pollfd *fds, int max, int *tick_ms);
	void (*service_input)(struct midi_io *io);
	bool (*send)(struct midi_io *io, int output, const uint8_t *bytes, size_t length);
	bool (*flush)(struct midi_io *io);
	void (*describe)(struct midi_io *io, midi_io_line_fn line, void *context);
	bool (*list)(midi_io_line_fn line, void *context, char *err, size_t err_size);
	/* Optional (NULL: the backend makes no connections on request, its
	 * ports are files or devices): connects, or with undo disconnects, the
	 * one port others may read from that `from` names to the one port
	 * others may write to that `to` names, each a pattern as in connect
	 * lists or a client:port number; says what it did through line(),
	 * fails with one line in err (a side matching no port or several). */
	bool (*connect)(const char *from, const char *to, bool undo, midi_io_line_fn line,
			void *context, char *err, size_t err_size);
	void (*close)(struct midi_io *io);
};

/* The backend called `name` ("alsa", "portmidi", "raw", "null"), or NULL
 * if it is unknown or was not built. */
const struct midi_io_backend *midi_io_find(const char *name);

/* Names of the backends built into this binary, comma separated. */
const char *midi_io_available(void);

/* Does `name` match one of the port's patterns (fnmatch)?  For a port
 * "client:port", the pattern may match the whole name, the client or the port. */
bool midi_io_matches(const struct midi_io_port_spec *port, const char *client,
		     const char *port_name);

/* For describe() lines: appends to the NUL-terminated line, never past size. */
void midi_io_appendf(char *line, size_t size, const char *fmt, ...)
	__attribute__((format(printf, 3, 4)));
/* Appends "; connect 'a' 'b'" or "; no connect patterns". */
void midi_io_append_patterns(const struct midi_io_port_spec *port, char *line, size_t size);

#endif
