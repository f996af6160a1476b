/*
 * input_feed: the player's messages into the engines under load (model in
 * input_thread.h, classes in output_guard.h).
 *
 * A message goes to every engine or to none: each output's ring must have
 * room for what the message can make its engine send (MUST class), or the
 * message waits, whole, as held_msg.  Outputs decide the rest on their
 * own: one output leaving out a note-on does not keep it from another.
 *
 * While cut off, an output's engine is given only what keeps its state
 * true for later (control-channel commands, tunings); what it sends then is
 * thrown away (input_thread.c, emit), because recovery ends every note and
 * sends the set-up again (engine_start forgets what the synth was told), so
 * nothing thrown away can be missed.  Notes, note-offs and panics are not
 * given to it: its recovery panic ends the notes it held, and it sent
 * nothing new.
 */
#include "input_feed.h"

#include <stdio.h>
#include <string.h>

#include "clock.h"
#include "output_thread.h"

#define LOW_WATER (INPUT_HIGH_WATER - 512)   /* held-back values resume below this */
#define RECOVER_FILL (INPUT_HIGH_WATER / 2)  /* a cut-off output hears the input again below this */
#define WAIT_POLL_MS 5
#define LOAD_LOG_INTERVAL_MS 1000
#define MARKER_SLOTS 1
#define RESET_CONTROLS 3                     /* per channel, at a reconnection */

/* The reserve above the mark holds a System Reset's panic and set-up (the
 * largest MUST message) even after the largest message below the mark. */
_Static_assert(MSG_QUEUE_SLOTS - INPUT_HIGH_WATER - GUARD_EVENT_SLOTS >=
	       GUARD_END_SLOTS_MAX + GUARD_SETUP_SLOTS, "the reserve is too small");
_Static_assert(RECOVER_FILL + GUARD_END_SLOTS_MAX + GUARD_SETUP_SLOTS + 16 * RESET_CONTROLS <=
	       MSG_QUEUE_SLOTS,
	       "a recovering output's panic and set-up must fit");

static size_t fill_of(struct input_thread *t, const struct input_output *o)
{
	return msg_queue_fill(t->messages, o->index);
}

static bool below_high_water(struct input_thread *t, const struct input_output *o)
{
	return fill_of(t, o) < INPUT_HIGH_WATER;
}

static void want(struct input_output *o, size_t fill)
{
	if (fill > o->want)
		o->want = fill;
}

void feed_cut_off(struct input_thread *t, struct input_output *o, const char *why)
{
	if (o->cut_off)
		return;
	o->cut_off = true;
	o->cut_offs++;
	o->waiting_since_ms = 0;
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "output %s: %s (%zu slot(s) waiting); it gets no new input until it reads again, "
		      "then all its notes are ended and its set-up is sent again",
		      o->name, why, fill_of(t, o));
	want(o, RECOVER_FILL);
	t->wake_main = true;
}

/* Room in o's ring for `slots` now.  Otherwise o is waited for, and after
 * INPUT_CUT_OFF_MS of waiting it is cut off (it takes nothing more: room). */
static bool room_for(struct input_thread *t, struct input_output *o, int slots)
{
	if (o->cut_off)
		return true;
	if (slots > MSG_QUEUE_SLOTS)
		slots = MSG_QUEUE_SLOTS;
	if (msg_queue_room(t->messages, o->index) >= (size_t)slots) {
		o->waiting_since_ms = 0;
		return true;
	}
	int64_t now = monotonic_ms();
	if (t->forcing || (o->waiting_since_ms && now - o->waiting_since_ms >= INPUT_CUT_OFF_MS)) {
		feed_cut_off(t, o, t->forcing ? "the input could wait no longer"
					      : "its synth has taken nothing for a second while the input waited");
		return true;
	}
	if (!o->waiting_since_ms)
		o->waiting_since_ms = now;
	want(o, (size_t)(MSG_QUEUE_SLOTS - slots + 1));
	return false;
}

bool feed_room_everywhere(struct input_thread *t, int slots)
{
	bool ok = true;
	for (int k = 0; k < t->output_count; k++) {
		struct input_output *o = &t->outputs[k];
		if (!room_for(t, o, slots < 0 ? guard_end_slots(&o->engine) : slots))
			ok = false;
	}
	return ok;
}

static void note_load(struct input_thread *t, struct input_output *o)
{
	const struct output_guard *g = &o->guard;
	uint64_t total = g->note_ons_shed + g->values_merged + g->system_shed;
	int64_t now = monotonic_ms();
	if (total == o->shed_logged || (o->shed_logged_ms && now - o->shed_logged_ms < LOAD_LOG_INTERVAL_MS))
		return;
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "output %s: its queue is more than half full (%zu of %d slots): so far %llu new note(s) "
		      "and %llu system message(s) left out, %llu controller value(s) merged; no note-off is "
		      "ever left out", o->name, fill_of(t, o), MSG_QUEUE_SLOTS,
		      (unsigned long long)g->note_ons_shed, (unsigned long long)g->system_shed,
		      (unsigned long long)g->values_merged);
	o->shed_logged = total;
	o->shed_logged_ms = now;
	t->wake_main = true;
}

/* Held-back values into the engine while the ring is below the mark. */
static void flush_store(struct input_thread *t, struct input_output *o)
{
	uint8_t source;
	struct midi_msg m;
	while (o->guard.store.count > 0 && below_high_water(t, o) &&
	       guard_store_take(&o->guard, &source, &m))
		engine_handle(&o->engine, source, &m);
	if (o->guard.store.count > 0)
		want(o, LOW_WATER);
}

/* A cut-off output keeps controller values and tuning commands, nothing
 * else.  It takes a MIDI panic too, so its bindings stay in step with the
 * other engines; what that panic ends is ended again for its synth when it
 * recovers (ended_while_cut_off: All Notes Off on all 16 channels). */
static void keep_while_cut_off(struct input_output *o, uint8_t source, const struct midi_msg *m)
{
	uint8_t type = midi_msg_type(m);
	enum engine_steer steer = engine_steers(&o->engine, m);
	if (steer != ENGINE_STEER_NONE) {
		o->ended_while_cut_off |= steer == ENGINE_STEER_PANIC;
		engine_handle(&o->engine, source, m);
		return;
	}
	bool value = midi_msg_is_channel(m) && type != MIDI_NOTE_ON && type != MIDI_NOTE_OFF &&
		     !(type == MIDI_CONTROL && (m->data[0] >= 120 || m->data[0] == 6 || m->data[0] == 38 ||
						(m->data[0] >= 96 && m->data[0] <= 101)));
	if (value) {
		guard_store_put(&o->guard, &o->engine, source, m);
		return;
	}
	guard_store_forget(&o->guard, &o->engine, m); /* a Reset All Controllers */
	o->guard.cut_off_dropped++;
}

static void give(struct input_thread *t, struct input_output *o, uint8_t source,
		 const struct midi_msg *m)
{
	if (o->cut_off) {
		keep_while_cut_off(o, source, m);
		return;
	}
	enum guard_class c = guard_classify(&o->engine, m);
	if (c == GUARD_MUST) {
		guard_store_forget(&o->guard, &o->engine, m);
		engine_handle(&o->engine, source, m);
		return;
	}
	flush_store(t, o);
	if (o->guard.store.count == 0 && below_high_water(t, o)) {
		engine_handle(&o->engine, source, m);
		return;
	}
	if (c == GUARD_MERGE)
		guard_store_put(&o->guard, &o->engine, source, m);
	else if (c == GUARD_NOTE_ON)
		o->guard.note_ons_shed++;
	else
		o->guard.system_shed++;
	want(o, LOW_WATER);
	note_load(t, o);
}

/* To every engine, or false (to none) when an output lacks room for it. */
static bool deliver(struct input_thread *t, uint8_t source, const struct midi_msg *m)
{
	bool ready = true;
	for (int k = 0; k < t->output_count; k++) {
		struct input_output *o = &t->outputs[k];
		if (!o->cut_off && guard_classify(&o->engine, m) == GUARD_MUST &&
		    !room_for(t, o, guard_must_slots(&o->engine, m)))
			ready = false;
	}
	if (!ready)
		return false;
	t->sources[source].messages++;
	for (int k = 0; k < t->output_count; k++)
		give(t, &t->outputs[k], source, m);
	return true;
}

static void hold(struct input_thread *t, uint8_t source, const struct midi_msg *m)
{
	t->held = true;
	t->held_source = source;
	t->held_msg = *m;
	int64_t now = monotonic_ms();
	if (t->paused_since_ms)
		return;
	t->paused_since_ms = now;
	t->pauses++;
	if (t->pause_logged_ms && now - t->pause_logged_ms < LOAD_LOG_INTERVAL_MS)
		return;
	t->pause_logged_ms = now;
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "input: an output has no room for what a note-off or pedal release needs; the input "
		      "waits for it (in the system's buffers), %llu time(s) so far",
		      (unsigned long long)t->pauses);
	t->wake_main = true;
}

static void end_pause(struct input_thread *t)
{
	if (!t->paused_since_ms)
		return;
	t->paused_ms += (uint64_t)(monotonic_ms() - t->paused_since_ms);
	t->paused_since_ms = 0;
}

/* ---- source events ------------------------------------------------------------ */

static int end_source_notes(struct input_thread *t, int index)
{
	int ended = 0;
	for (int s = 0; s < MIDI_IO_MAX_SOURCES; s++) {
		if (index >= 0 && s != index)
			continue;
		for (int k = 0; k < t->output_count; k++) {
			struct engine *e = &t->outputs[k].engine;
			if (t->outputs[k].cut_off)
				continue; /* its recovery ends everything */
			int before = engine_held_notes(e);
			engine_end_source(e, (uint8_t)s);
			ended += before - engine_held_notes(e);
		}
	}
	return ended;
}

/*
 * The backend lost input events (a queue overflowed: we did not read in
 * time).  Any of them may have been a note-off or a pedal let go, so the
 * notes of the sources concerned are ended, as if their device had gone,
 * rather than left to hang until a panic.  Keys still down sound again
 * when pressed again.
 */
static void input_lost(struct input_thread *t, int index)
{
	for (int s = 0; s < MIDI_IO_MAX_SOURCES; s++)
		if (index < 0 || s == index)
			midi_parser_reset(&t->sources[s].parser); /* a SysEx may have lost its end */
	int ended = end_source_notes(t, index);
	t->inputs_lost++;
	int64_t now = monotonic_ms();
	if (t->inputs_lost_logged && now - t->input_lost_logged_ms < LOAD_LOG_INTERVAL_MS)
		return;
	char from[MIDI_IO_NAME_MAX * 2 + 8];
	if (index < 0 || !t->sources[index].name[0])
		snprintf(from, sizeof from, "every source");
	else
		snprintf(from, sizeof from, "%s", t->sources[index].name);
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "input: events from %s were lost (the input queue overflowed: latticed did not read in "
		      "time); %d held note(s) ended so that none hangs (%llu time(s) so far)",
		      from, ended, (unsigned long long)t->inputs_lost);
	t->inputs_lost_logged = t->inputs_lost;
	t->input_lost_logged_ms = now;
}

/* False: no room yet to end notes; ask again. */
static bool source_event(struct input_thread *t, int kind, int index)
{
	if (kind == MIDI_IO_SOURCE_CONNECTED) {
		struct input_source *s = &t->sources[index];
		midi_parser_reset(&s->parser);
		s->connected = true;
		log_ring_post(&t->log, LOG_LEVEL_INFO, "input: source %d connected: %s", index, s->name);
		return true;
	}
	if (!feed_room_everywhere(t, -1))
		return false;
	if (kind == MIDI_IO_INPUT_LOST) {
		input_lost(t, index);
		return true;
	}
	struct input_source *s = &t->sources[index];
	midi_parser_reset(&s->parser);
	s->connected = false;
	int ended = end_source_notes(t, index);
	log_ring_post(&t->log, LOG_LEVEL_NOTICE, "input: source %d gone: %s; its notes were ended (%d)",
		      index, s->name, ended);
	return true;
}

void feed_source_event(struct input_thread *t, int kind, int index, const char *name)
{
	if (index >= MIDI_IO_MAX_SOURCES || (index < 0 && kind != MIDI_IO_INPUT_LOST))
		return;
	if (index >= 0 && kind != MIDI_IO_INPUT_LOST) {
		t->sources[index].seen = true;
		snprintf(t->sources[index].name, sizeof t->sources[index].name, "%s", name);
	}
	t->wake_main = true;
	if (!t->held && input_backlog_empty(&t->backlog) && source_event(t, kind, index))
		return;
	if (!input_backlog_put_event(&t->backlog, kind, index)) {
		/* cannot happen while the backend honours accepting(): handle it now */
		t->forcing = true;
		(void)source_event(t, kind, index);
		t->forcing = false;
	}
}

/* ---- input bytes ---------------------------------------------------------------- */

static void parse(struct input_thread *t, uint8_t source, const uint8_t *bytes, size_t length);

/* The backend delivered more than the backlog holds (it did not honour
 * accepting()): outputs without room are cut off and everything goes. */
static void overflow(struct input_thread *t, uint8_t source, const uint8_t *bytes, size_t length)
{
	if (!t->overflow_logged)
		log_ring_post(&t->log, LOG_LEVEL_ERROR,
			      "input: the backend delivered more input than latticed can hold while an output "
			      "had no room; outputs without room are cut off (their notes are ended later)");
	t->overflow_logged = true;
	t->forcing = true;
	feed_resume(t);
	parse(t, source, bytes, length);
	t->forcing = false;
}

static void keep(struct input_thread *t, uint8_t source, const uint8_t *bytes, size_t length)
{
	if (length && !input_backlog_put_bytes(&t->backlog, source, bytes, length))
		overflow(t, source, bytes, length);
}

static void parse(struct input_thread *t, uint8_t source, const uint8_t *bytes, size_t length)
{
	struct input_source *s = &t->sources[source];
	for (size_t i = 0; i < length; i++) {
		struct midi_msg m;
		if (!midi_parser_feed(&s->parser, bytes[i], &m))
			continue;
		if (deliver(t, source, &m))
			continue;
		hold(t, source, &m);
		keep(t, source, bytes + i + 1, length - i - 1);
		return;
	}
}

void feed_input(struct input_thread *t, uint8_t source, const uint8_t *bytes, size_t length)
{
	t->sources[source].seen = true;
	if (t->held || !input_backlog_empty(&t->backlog))
		keep(t, source, bytes, length);
	else
		parse(t, source, bytes, length);
}

bool feed_accepting(struct input_thread *t)
{
	return !t->held && input_backlog_empty(&t->backlog);
}

/* The held message, then the backlog in order; false if something waits again. */
static bool drain_backlog(struct input_thread *t)
{
	if (t->held) {
		if (!deliver(t, t->held_source, &t->held_msg))
			return false;
		t->held = false;
	}
	struct backlog_unit u;
	while (input_backlog_peek(&t->backlog, &u)) {
		if (u.is_event) {
			if (!source_event(t, u.kind, u.index))
				return false;
			input_backlog_drop(&t->backlog);
			continue;
		}
		input_backlog_drop(&t->backlog);
		struct midi_msg m;
		if (!midi_parser_feed(&t->sources[u.source].parser, u.byte, &m))
			continue;
		if (!deliver(t, u.source, &m)) {
			hold(t, u.source, &m);
			return false;
		}
	}
	end_pause(t);
	return true;
}

/* ---- outputs: recovery and connections -------------------------------------------- */

/* After a synth went away, or a panic while its output was cut off:
 * sustain and sostenuto up and All Notes Off on all 16 channels, for what
 * it may still sound from before (the engine ends only what it knows of,
 * on the channels it uses). */
static void all_notes_off_everywhere(struct input_thread *t, struct input_output *o)
{
	static const uint8_t controls[RESET_CONTROLS][2] = {{64, 0}, {66, 0}, {123, 0}};
	for (int ch = 0; ch < 16; ch++)
		for (int i = 0; i < RESET_CONTROLS; i++) {
			uint8_t bytes[3] = {(uint8_t)(MIDI_CONTROL | ch), controls[i][0], controls[i][1]};
			if (msg_queue_push(t->messages, o->index, bytes, sizeof bytes))
				o->queued++;
		}
	t->wake_output = true;
}

static void recover(struct input_thread *t, struct input_output *o)
{
	if (fill_of(t, o) >= RECOVER_FILL) {
		want(o, RECOVER_FILL);
		return;
	}
	int ended = engine_held_notes(&o->engine);
	o->cut_off = false;
	engine_panic(&o->engine);
	if (o->ended_while_cut_off)
		all_notes_off_everywhere(t, o); /* what the MIDI panic ended unheard */
	o->ended_while_cut_off = false;
	engine_start(&o->engine);
	log_ring_post(&t->log, LOG_LEVEL_NOTICE,
		      "output %s: its synth reads again; %d note(s) ended and its set-up sent again, "
		      "and it hears the input again", o->name, ended);
	t->wake_main = true;
	flush_store(t, o);
}

static void reconnect(struct input_thread *t, struct input_output *o)
{
	if (!o->reconnect_pending || o->cut_off)
		return;
	int slots = MARKER_SLOTS + GUARD_SETUP_SLOTS +
		    (o->was_gone ? guard_end_slots(&o->engine) + 16 * RESET_CONTROLS : 0);
	if (!room_for(t, o, slots) || o->cut_off)
		return;
	/* the new receiver knows no running status: tell the output thread first */
	if (msg_queue_push_marker(t->messages, o->index, MSG_RECONNECTED))
		t->wake_output = true;
	if (o->was_gone) {
		/* whatever the old connection left sounding (a synth only unsubscribed) */
		log_ring_post(&t->log, LOG_LEVEL_INFO,
			      "output %s: ending every note first (%d held), in case the synth kept some",
			      o->name, engine_held_notes(&o->engine));
		engine_panic(&o->engine);
		all_notes_off_everywhere(t, o);
	}
	engine_start(&o->engine);
	o->reconnect_pending = false;
	o->was_gone = false;
}

void feed_output_connected(struct input_thread *t, struct input_output *o)
{
	o->reconnect_pending = true;
	reconnect(t, o);
}

void feed_resume(struct input_thread *t)
{
	for (int k = 0; k < t->output_count; k++)
		t->outputs[k].want = 0;
	t->again = false;
	for (int k = 0; k < t->output_count; k++) {
		struct input_output *o = &t->outputs[k];
		if (o->cut_off)
			recover(t, o);
		reconnect(t, o);
	}
	if (t->held || !input_backlog_empty(&t->backlog))
		(void)drain_backlog(t);
	for (int k = 0; k < t->output_count; k++)
		if (!t->outputs[k].cut_off)
			flush_store(t, &t->outputs[k]);
}

int feed_arrange_wakeups(struct input_thread *t)
{
	bool waiting = t->held || t->request_held;
	for (int k = 0; k < t->output_count; k++) {
		struct input_output *o = &t->outputs[k];
		waiting |= o->waiting_since_ms != 0 || o->reconnect_pending;
		output_thread_want_room(t->output, o->index, o->want);
		if (o->want && fill_of(t, o) < o->want)
			t->again = true;
	}
	if (t->again)
		return 0;
	return waiting ? WAIT_POLL_MS : -1;
}
