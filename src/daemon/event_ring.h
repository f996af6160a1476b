/*
 * event_ring: what sounds, from the input thread to the main thread, for
 * the control socket's subscribers (`subscribe`, subscription.c).
 *
 * Model: a lock-free single-producer/single-consumer ring (spsc_queue) of
 * fixed-size events, its slots allocated once at start.  The input thread
 * posts a note-on or note-off for every note that starts or stops sounding
 * on any output (the engines' note watch), a tuning event when the preset
 * or root moves (from MIDI too) and a reload event when new tunings are
 * swapped in.  It never waits, allocates or locks for it: a push that finds
 * the ring full is dropped and counted, and from then on the input thread
 * posts nothing more until it can post a sync: every sounding note (at most
 * EVENT_SYNC_NOTES per output) and the tuning between a sync-begin and a
 * sync-end, published in one step, so the main thread never sees half of
 * one.  The main thread rebuilds its picture from a sync and gives its
 * subscribers a fresh full state.
 *
 * Nothing is posted while nobody subscribes (`active` false); the main
 * thread switches it on, asks for a sync (its picture is stale by then)
 * and wakes the input thread.  The input thread wakes the main thread only
 * for the first event after the ring was found empty (`main_idle`): the
 * main thread then takes everything SUBSCRIPTION_DELAY_MS later on a timer
 * of its own, so a chord or a burst costs the MIDI thread one wake-up, not
 * a system call per note.  Between threads only `active`, `sync_asked`,
 * `main_idle` and `lost` are shared, all atomics; `pending` is the input
 * thread's own.
 * A note's generation is the number of reloads swapped in before it began
 * (the input thread's `reloads`), so a subscriber can tell which tunings
 * its preset and tone index refer to.
 */
#ifndef LATTICED_EVENT_RING_H
#define LATTICED_EVENT_RING_H

#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>

#include "latticed/engine.h"
#include "spsc_queue.h"

#define EVENT_RING_SLOTS 2048        /* a power of two */
#define EVENT_SYNC_NOTES 128         /* notes per output listed by a sync */
#define EVENT_LABEL_MAX 48

enum ring_event_kind {
	RING_NOTE_ON,
	RING_NOTE_OFF,
	RING_TUNING,                 /* the preset or root new notes get */
	RING_RELOAD,                 /* new tunings swapped in; a RING_TUNING follows */
	RING_SYNC_BEGIN,             /* everything again: the notes, the tuning, RING_SYNC_END */
	RING_SYNC_END,
};

struct ring_event {
	uint8_t kind;
	uint8_t output;              /* notes: index of the output */
	uint8_t source, channel, key;/* notes: the player's source, channel (0..15), key */
	int16_t preset, tone, period;/* notes: what the note plays; tuning: preset (index) */
	int16_t root;                /* tuning: root slot, 0 home, n: tone n-1 is 1/1 */
	uint16_t presets;            /* tuning, reload: how many presets there are */
	uint32_t note;               /* notes: the engine's start serial, its id on that output */
	uint32_t generation;         /* tunings swapped in so far (0: as started) */
	uint64_t lost;               /* sync-begin: events dropped so far, in all */
	char preset_name[ENGINE_NAME_MAX];   /* tuning */
	char root_label[EVENT_LABEL_MAX];    /* tuning: "home" or the tone's seeds */
};

struct event_ring {
	struct spsc_queue queue;
	struct ring_event *slots;    /* EVENT_RING_SLOTS of them, malloc'd once */
	atomic_bool active;          /* main: somebody subscribes */
	atomic_bool sync_asked;      /* main: post a sync */
	atomic_uint_fast64_t lost;   /* input thread: pushes that found the ring full */
	atomic_bool main_idle;       /* main: the ring was empty and it has no timer for it */
	bool pending;                /* input thread: a sync is owed */
};

struct input_thread;
struct input_output;

/* Main thread, before the input thread starts; false if out of memory. */
bool event_ring_init(struct event_ring *r);
void event_ring_free(struct event_ring *r);

/* Main thread: start posting (and ask for a sync, waking the input thread
 * through wake_fd), or stop. */
void event_ring_activate(struct event_ring *r, bool on, int wake_fd);

/* Main thread: the oldest event; false if none. */
bool event_ring_take(struct event_ring *r, struct ring_event *out);

/* Main thread, having found the ring empty and going to sleep without a
 * timer for it: the next post wakes it.  False if an event came in the
 * meantime (it is to be taken with the usual delay, no wake-up follows). */
bool event_ring_idle(struct event_ring *r);

/* Input thread: the engines' note watch (context: the struct input_output). */
void event_ring_watch(void *context, bool sounding, const struct engine_note_info *note);
/* Input thread: the preset or root moved; new tunings were swapped in. */
void event_ring_tuning_changed(struct input_thread *t);
void event_ring_reloaded(struct input_thread *t);
/* Input thread, every loop: posts a sync that is owed, if the ring has room. */
void event_ring_service(struct input_thread *t);

#endif
