/*
 * subscription: the main thread's side of `subscribe` on the control
 * socket: what sounds, pushed to every subscriber as JSON lines.
 *
 * Model: the input thread posts fixed-size events into the event ring
 * (event_ring.h); the main thread keeps from them its own picture of what
 * sounds (every note per output, with its tone, period, key, preset and
 * generation) and of the tuning (preset and root with their labels), and
 * turns each event into one line for the subscribers.  A new subscriber
 * gets the picture as its first line (the state), then the events; the
 * first subscriber, or one after a time with none, waits for a sync from
 * the input thread, since nothing is posted while nobody listens.  When the
 * ring overflowed, the input thread posts a sync and every subscriber gets
 * a fresh state (with how many events were lost); so does everyone when
 * more than SUBSCRIPTION_LINES_MAX events wait at once, which says the same
 * in fewer bytes.  A subscriber never holds anything up: the control
 * server drops one that lets its output pile up.
 *
 * A subscriber of states (`subscribe states`, what `latticed view` asks
 * for) gets no events: after its first state, a fresh state whenever what
 * sounds or the tuning changed, at most one per SUBSCRIPTION_STATE_MS, the
 * last one always.  A page needs the picture, not its history: a burst of
 * 10 000 notes a second makes 50 lines a second instead of 10 000, for the
 * daemon to write and the subscriber to read, while a note played alone
 * is seen as soon as an event would show it.  Lines of events are not
 * even made while only subscribers of states listen.
 *
 * The main thread leaves events in the ring for SUBSCRIPTION_DELAY_MS
 * after the first of them arrives: the lines, the subscribers' work (a
 * view drawing, browsers painting) and a synth on the same machine would
 * otherwise all want the CPU at the moment a note goes out; a few
 * milliseconds later the note is long at the synth, and a chord's notes
 * go out together.  The protocol is in
 * latticed(8), "Subscribing".
 */
#ifndef LATTICED_SUBSCRIPTION_H
#define LATTICED_SUBSCRIPTION_H

#include <limits.h>
#include <stdbool.h>
#include <stdint.h>

#include "event_ring.h"
#include "latticed/engine.h"
#include "midi_io.h"

#define SUBSCRIPTION_LINES_MAX 256   /* events per main-loop turn sent one by one */
#define SUBSCRIPTION_DELAY_MS 5      /* events wait this long before the main thread takes them */
#define SUBSCRIPTION_STATE_MS 20     /* states to subscribers of states at most this often */

struct subscription_note {
	uint32_t id;                 /* the engine's start serial: unique on its output */
	uint32_t generation;
	int16_t preset, tone, period;
	uint8_t source, channel, key;
};

struct subscription_output {
	char name[ENGINE_NAME_MAX];
	int count;
	struct subscription_note notes[ENGINE_MAX_NOTES];
};

struct subscription_tuning {
	int preset, root, presets;
	uint32_t generation;
	char preset_name[ENGINE_NAME_MAX];
	char root_label[EVENT_LABEL_MAX];
};

struct subscription {
	struct event_ring ring;
	bool active;                 /* the ring is on: somebody subscribes */
	bool known;                  /* the picture is whole: a sync came since it went on */
	bool in_sync;                /* between a sync's begin and end */
	bool stated;                 /* a state went out this turn */
	bool changed;                /* the picture changed since the last state went out */
	int64_t state_sent_ms;       /* when a state last went out to subscribers of states */
	int64_t waiting_since_ms;    /* events wait in the ring since (0: none) */
	uint64_t lost_seen;          /* the ring's losses covered by the last sync */
	int output_count;
	struct subscription_output outputs[MIDI_IO_MAX_OUTPUTS];
	struct subscription_tuning tuning;
	char config_from[PATH_MAX];  /* the config path config_full was found for */
	char config_full[PATH_MAX];
};

struct daemon;
struct config;

/* Prepares the picture and the ring (allocated once); false if out of memory. */
bool subscription_init(struct subscription *s, const struct config *cfg);
void subscription_free(struct subscription *s);

/* A `subscribe` request from control client id: of every event, or
 * (states_only, `subscribe states`) of a state per change. */
void subscription_request(struct daemon *d, int id, bool states_only);

/* Every main-loop turn: the ring's events to the subscribers; the ring off
 * once nobody subscribes. */
void subscription_service(struct daemon *d);

/* Milliseconds until events waiting in the ring or a state owed to the
 * subscribers of states are due, or -1 (main's poll timeout). */
int subscription_timeout_ms(const struct daemon *d, int64_t now_ms);

/* Tells every subscriber the daemon stops, and writes it out now. */
void subscription_shutdown(struct daemon *d);

#endif
