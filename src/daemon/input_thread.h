/*
 * input_thread: the thread that turns the player's bytes into every
 * output's messages.
 *
 * It owns, and alone touches: the backend's input side, one midi_parser
 * per source (so SysEx from two devices never mixes), one engine per
 * output, the current tuning set and the retired ones still needed by
 * sounding notes.  Each loop it polls the backend's descriptors, its
 * request wake-up descriptor and a timeout (the backend's tick, and the
 * heartbeat period so the watchdog sees it alive with no MIDI at all),
 * services the backend, then takes the main thread's requests, which
 * therefore always land between two messages.
 *
 * It talks to the others only through queues: encoded messages to the
 * output thread (msg_queue, a ring per output, then a write to the output
 * thread's eventfd), replies and log lines to the main thread (spsc_queue
 * and log_ring, then a write to the main thread's eventfd).  Values read
 * across threads without a queue are atomics: its heartbeat counter (read
 * by the main thread for the watchdog), the output thread's per-output
 * counters (read here for status snapshots) and room_wanted (set here,
 * cleared there).
 *
 * Load (input_feed.c): an engine is only given a message when its output's
 * ring has room for everything the message can make it send, so no ring
 * ever refuses an engine's message and what the engine believes the synth
 * was told is what the synth is told.  Per output ring (MSG_QUEUE_SLOTS):
 *   - below INPUT_HIGH_WATER every message goes to the engine;
 *   - at or above it, new note-ons and system messages are left out and
 *     continuous data is merged into the output's guard_store, given to the
 *     engine once the ring is below the mark again (output_guard.h);
 *   - note-offs, pedal releases and the rest of the MUST class always go,
 *     into the slots above the mark (the reserve: after the largest single
 *     message below the mark it still holds more than one panic can send,
 *     with 512 notes, 512 pass-through notes and their pedals held);
 *   - when even the reserve lacks room for one, the input waits
 *     (backpressure): the message is held, the rest of what the backend
 *     delivered goes into the input_backlog, the backend is told to stop
 *     reading (the bytes wait in the FIFO, device or sequencer queue), and
 *     requests that would send something wait too;
 *   - an output whose synth takes nothing for INPUT_CUT_OFF_MS while the
 *     input waits for it is cut off: it gets no more input (controller
 *     values are still kept for it), the others go on, and once its ring
 *     has drained every note it holds is ended (engine_panic) before it
 *     hears the input again.
 * A synth that is gone (OUTPUT_GONE) keeps its engine's notes; when one
 * connects there again, every note is ended for it first (engine_panic,
 * then pedals up and All Notes Off on all 16 channels), then it gets its
 * set-up, so a synth that was only unsubscribed has nothing left hanging.
 *
 * Nothing in the loop allocates, locks or prints.  The waits are bounded:
 * a held message waits at most INPUT_CUT_OFF_MS (polling every few ms), the
 * final panic of a shutdown at most SHUTDOWN_WAIT_MS for room.
 */
#ifndef LATTICED_INPUT_THREAD_H
#define LATTICED_INPUT_THREAD_H

#include <pthread.h>
#include <stdatomic.h>
#include <stdint.h>

#include "config.h"
#include "input_backlog.h"
#include "latticed/engine.h"
#include "latticed/midi_parser.h"
#include "log_ring.h"
#include "midi_io.h"
#include "msg_queue.h"
#include "output_guard.h"
#include "request.h"
#include "spsc_queue.h"
#include "tuning.h"

#define INPUT_RETIRED_MAX 4
#define INPUT_OUTBOX_MAX 32
#define INPUT_HIGH_WATER (MSG_QUEUE_SLOTS / 2)   /* new notes only below this */
#define INPUT_CUT_OFF_MS 1000

struct output_thread;
struct event_ring;

struct input_output {                /* one output, as the input thread sees it */
	struct input_thread *owner;
	uint8_t index;
	char name[ENGINE_NAME_MAX];
	struct engine engine;
	int bend_range;                  /* its engine's, for notice lines */
	uint64_t queued, queue_drops;    /* queue_drops: refused by a full ring (never expected) */
	uint64_t drops_logged;           /* queue_drops when last logged */
	int64_t drop_logged_ms;
	struct output_guard guard;       /* what is left out or held back under load */
	uint64_t shed_logged;            /* guard counters' sum when last logged */
	int64_t shed_logged_ms;
	size_t want;                     /* wake when the ring's fill is below this */
	int64_t waiting_since_ms;        /* a message has waited for room here since */
	bool cut_off;                    /* fell behind: no input until its ring drains */
	bool ended_while_cut_off;        /* a MIDI panic came meanwhile: end all 16 channels */
	uint64_t cut_offs;
	bool was_gone;                   /* OUTPUT_GONE since its last connection */
	bool reconnect_pending;          /* OUTPUT_CONNECTED still to handle */
};

struct input_source {
	bool connected, seen;
	char name[MIDI_IO_NAME_MAX * 2];
	uint64_t messages;
	struct midi_parser parser;
	uint8_t sysex[MSG_QUEUE_MESSAGE_MAX];
};

struct retired_tunings {
	struct tuning_set *set;
	uint32_t serial[MIDI_IO_MAX_OUTPUTS]; /* each engine's serial at the swap */
};

struct input_thread {
	/* set up by the main thread before the thread starts */
	const struct midi_io_backend *backend;
	struct midi_io *io;
	int output_count;
	struct input_output outputs[MIDI_IO_MAX_OUTPUTS];
	struct input_source sources[MIDI_IO_MAX_SOURCES];
	struct tuning_set *tunings;
	struct msg_queue *messages;      /* producer side */
	struct output_thread *output;    /* for its counters only */
	int output_wake_fd;              /* eventfd of the output thread */
	int main_wake_fd;                /* eventfd of the main thread */
	int wake_fd;                     /* ours: a request is waiting */
	int heartbeat_ms;                /* longest sleep */
	struct event_ring *events;       /* what sounds, for subscribers (event_ring.h); may be NULL */
	struct spsc_queue requests;      /* consumer side */
	struct request request_slots[REQUEST_QUEUE_SLOTS];
	struct spsc_queue replies;       /* producer side */
	struct reply reply_slots[REPLY_QUEUE_SLOTS];
	struct log_ring log;             /* producer side */

	/* read by the main thread */
	atomic_uint_fast64_t heartbeat;

	/* the thread's own */
	pthread_t thread;
	bool quit;
	bool shutting_down;              /* the final panic: wait for queue room */
	bool wake_output, wake_main;
	bool borrowed;                   /* holds the backend's output side (output_thread.h) */
	uint32_t reloads;
	uint32_t forgotten_serial[MIDI_IO_MAX_OUTPUTS];
	int retired_count;
	struct retired_tunings retired[INPUT_RETIRED_MAX];
	int outbox_count;
	struct reply outbox[INPUT_OUTBOX_MAX];
	int last_preset, last_root;      /* -1: post the tuning state at the next check */
	int64_t miss_logged_ms;          /* control misses (input_control.c) */
	uint32_t control_panics_logged;
	int64_t retired_checked_ms;
	uint64_t inputs_lost, inputs_lost_logged; /* INPUT_LOST reports */
	int64_t input_lost_logged_ms;
	uint8_t encode_buffer[MSG_QUEUE_MESSAGE_MAX];
	/* backpressure (input_feed.c) */
	struct input_backlog backlog;
	bool held;                       /* held_msg waits for room */
	uint8_t held_source;
	struct midi_msg held_msg;
	bool request_held;               /* held_request waits for room */
	struct request held_request;
	bool again;                      /* room came while arranging a wake-up: loop at once */
	bool forcing;                    /* no waiting: outputs without room are cut off */
	uint64_t pauses, paused_ms;      /* times the input waited, and for how long */
	int64_t paused_since_ms, pause_logged_ms;
	bool overflow_logged;
};

/*
 * Prepares the thread's state: engines for every output of cfg (specs from
 * config_engine_spec) over `tunings`, one parser per source, the queues.
 * The backend is opened by the caller, with input_thread_callbacks() as
 * its callbacks.  Returns false with a message in err.
 */
bool input_thread_init(struct input_thread *t, const struct config *cfg,
		       struct tuning_set *tunings, char *err, size_t err_size);

/* The callbacks the backend must be opened with (context = t). */
struct midi_io_callbacks input_thread_callbacks(struct input_thread *t);

/* Runs the loop; returns when a REQUEST_QUIT has been handled. */
void *input_thread_run(void *arg);

/* Main thread: posts a request and wakes the thread; false if the queue is full. */
bool input_thread_post(struct input_thread *t, const struct request *r);

/* Main thread: the next reply, false if none. */
bool input_thread_take_reply(struct input_thread *t, struct reply *out);

#endif
