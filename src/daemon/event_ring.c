/*
 * event_ring: see event_ring.h.  The input thread's side runs inside its
 * loop and its engines' callbacks, so it only copies fixed-size values into
 * slots it already has; the labels of a tuning event are formatted into
 * the slot itself.
 */
#include "event_ring.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "input_control.h"
#include "input_thread.h"
#include "output_thread.h"

bool event_ring_init(struct event_ring *r)
{
	memset(r, 0, sizeof *r);
	r->slots = calloc(EVENT_RING_SLOTS, sizeof *r->slots);
	if (!r->slots)
		return false;
	(void)spsc_queue_init(&r->queue, r->slots, EVENT_RING_SLOTS, sizeof *r->slots);
	atomic_init(&r->active, false);
	atomic_init(&r->sync_asked, false);
	atomic_init(&r->lost, 0);
	return true;
}

void event_ring_free(struct event_ring *r)
{
	free(r->slots);
	r->slots = NULL;
}

void event_ring_activate(struct event_ring *r, bool on, int wake_fd)
{
	atomic_store_explicit(&r->active, on, memory_order_relaxed);
	if (!on)
		return;
	atomic_store_explicit(&r->sync_asked, true, memory_order_release);
	wake_fd_signal(wake_fd);
}

bool event_ring_take(struct event_ring *r, struct ring_event *out)
{
	return spsc_queue_pop(&r->queue, out);
}

bool event_ring_idle(struct event_ring *r)
{
	atomic_store_explicit(&r->main_idle, true, memory_order_relaxed);
	/* pairs with the fence in post(): either it sees main_idle, or we see its event */
	atomic_thread_fence(memory_order_seq_cst);
	if (spsc_queue_count(&r->queue) == 0)
		return true;
	atomic_store_explicit(&r->main_idle, false, memory_order_relaxed);
	return false;
}

/* ---- the input thread's side ------------------------------------------------ */

static bool posting(const struct input_thread *t)
{
	return t->events && !t->events->pending &&
	       atomic_load_explicit(&t->events->active, memory_order_relaxed);
}

static void post(struct input_thread *t, const struct ring_event *ev)
{
	struct event_ring *r = t->events;
	if (!spsc_queue_push(&r->queue, ev)) {
		/* the main thread is behind: what it misses comes back with a sync */
		atomic_fetch_add_explicit(&r->lost, 1, memory_order_relaxed);
		r->pending = true;
	}
	atomic_thread_fence(memory_order_seq_cst); /* pairs with event_ring_idle */
	if (atomic_load_explicit(&r->main_idle, memory_order_relaxed) &&
	    atomic_exchange_explicit(&r->main_idle, false, memory_order_relaxed))
		t->wake_main = true;
}

static void note_event(struct ring_event *ev, int kind, int output, uint32_t generation,
		       const struct engine_note_info *n)
{
	memset(ev, 0, sizeof *ev);
	ev->kind = (uint8_t)kind;
	ev->output = (uint8_t)output;
	ev->source = n->source;
	ev->channel = n->in_channel;
	ev->key = n->in_key;
	ev->preset = (int16_t)n->preset;
	ev->tone = (int16_t)n->tone;
	ev->period = (int16_t)n->period;
	ev->note = n->started;
	ev->generation = generation;
}

void event_ring_watch(void *context, bool sounding, const struct engine_note_info *note)
{
	struct input_output *o = context;
	struct input_thread *t = o->owner;
	if (!posting(t))
		return;
	/* a note keeps the generation it began in: a note-off needs only its id */
	struct ring_event ev;
	note_event(&ev, sounding ? RING_NOTE_ON : RING_NOTE_OFF, o->index, t->reloads, note);
	post(t, &ev);
}

static void tuning_event(const struct input_thread *t, struct ring_event *ev)
{
	const struct engine *e = &t->outputs[0].engine;
	memset(ev, 0, sizeof *ev);
	ev->kind = RING_TUNING;
	ev->preset = (int16_t)engine_preset(e);
	ev->root = (int16_t)engine_root(e);
	ev->presets = (uint16_t)t->tunings->engine.count;
	ev->generation = t->reloads;
	snprintf(ev->preset_name, sizeof ev->preset_name, "%s", engine_current_preset(e)->name);
	input_control_root_label(e, ev->root_label, sizeof ev->root_label);
}

void event_ring_tuning_changed(struct input_thread *t)
{
	if (!posting(t) || t->output_count == 0)
		return;
	struct ring_event ev;
	tuning_event(t, &ev);
	post(t, &ev);
}

void event_ring_reloaded(struct input_thread *t)
{
	if (!posting(t) || t->output_count == 0)
		return;
	struct ring_event ev = {.kind = RING_RELOAD, .generation = t->reloads,
				.presets = (uint16_t)t->tunings->engine.count};
	post(t, &ev);
	event_ring_tuning_changed(t);
}

/* Slots a sync needs now: begin, the listed notes, the tuning, end. */
static size_t sync_size(const struct input_thread *t)
{
	size_t n = 3;
	for (int k = 0; k < t->output_count; k++) {
		int notes = engine_note_count(&t->outputs[k].engine);
		n += (size_t)(notes < EVENT_SYNC_NOTES ? notes : EVENT_SYNC_NOTES);
	}
	return n;
}

static struct ring_event *slot(struct event_ring *r, size_t *used)
{
	return spsc_queue_slot_ahead(&r->queue, (*used)++);
}

/* Reloads swapped in before a note of output k began: each kept old set
 * whose swap came after the note's start takes one off (input_thread.c). */
static uint32_t generation_of(const struct input_thread *t, int k, uint32_t started)
{
	uint32_t g = t->reloads;
	for (int i = t->retired_count - 1; i >= 0 && started <= t->retired[i].serial[k]; i--)
		g--;
	return g;
}

/* Writes the whole sync into free slots, then publishes it at once. */
static void post_sync(struct input_thread *t)
{
	struct event_ring *r = t->events;
	size_t used = 0;
	struct ring_event *ev = slot(r, &used);
	memset(ev, 0, sizeof *ev);
	ev->kind = RING_SYNC_BEGIN;
	ev->generation = t->reloads;
	ev->lost = atomic_load_explicit(&r->lost, memory_order_relaxed);
	for (int k = 0; k < t->output_count; k++) {
		struct engine_note_info n;
		for (int i = 0; i < EVENT_SYNC_NOTES && engine_note_at(&t->outputs[k].engine, i, &n); i++)
			note_event(slot(r, &used), RING_NOTE_ON, k, generation_of(t, k, n.started), &n);
	}
	if (t->output_count > 0)
		tuning_event(t, slot(r, &used));
	ev = slot(r, &used);
	memset(ev, 0, sizeof *ev);
	ev->kind = RING_SYNC_END;
	ev->generation = t->reloads;
	spsc_queue_publish(&r->queue, used);
	t->wake_main = true;
}

void event_ring_service(struct input_thread *t)
{
	struct event_ring *r = t->events;
	if (!r || !atomic_load_explicit(&r->active, memory_order_relaxed))
		return;
	if (atomic_exchange_explicit(&r->sync_asked, false, memory_order_acquire))
		r->pending = true;
	if (!r->pending || spsc_queue_room(&r->queue) < sync_size(t))
		return; /* tried again next time round; the main thread wakes us as it drains */
	r->pending = false;
	post_sync(t);
}
