/*
 * subscription: see subscription.h.  Channels are numbered 1 to 16 in the
 * lines, as in `latticed status`; keys 0 to 127.
 */
/* realpath(3): in glibc only with XSI or the GNU extensions */
#define _GNU_SOURCE
#include "subscription.h"

#include <json-c/json.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "clock.h"
#include "config.h"
#include "daemon_private.h"

#define STATE_NOTES_MAX EVENT_SYNC_NOTES     /* listed per output in a state */

bool subscription_init(struct subscription *s, const struct config *cfg)
{
	memset(s, 0, sizeof *s);
	s->output_count = cfg->output_count;
	for (int i = 0; i < cfg->output_count; i++)
		snprintf(s->outputs[i].name, sizeof s->outputs[i].name, "%s", cfg->outputs[i].name);
	return event_ring_init(&s->ring);
}

void subscription_free(struct subscription *s)
{
	event_ring_free(&s->ring);
}

/* ---- lines ------------------------------------------------------------------ */

static void publish(struct daemon *d, struct json_object *o, bool state)
{
	const char *line = json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN | JSON_C_TO_STRING_NOSLASHESCAPE);
	if (state) {
		control_server_publish_state(&d->control, line, true);
		/* the subscribers of states have it too */
		d->subs->changed = false;
		d->subs->state_sent_ms = monotonic_ms();
	} else {
		control_server_publish(&d->control, line);
	}
	json_object_put(o);
}

static struct json_object *event_object(const char *name)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "event", json_object_new_string(name));
	return o;
}

static void add_note_fields(struct json_object *o, const struct subscription_note *n)
{
	json_object_object_add(o, "id", json_object_new_int64(n->id));
	json_object_object_add(o, "tone", json_object_new_int(n->tone));
	json_object_object_add(o, "period", json_object_new_int(n->period));
	json_object_object_add(o, "key", json_object_new_int(n->key));
	json_object_object_add(o, "preset", json_object_new_int(n->preset));
	json_object_object_add(o, "generation", json_object_new_int64(n->generation));
	json_object_object_add(o, "source", json_object_new_int(n->source));
	json_object_object_add(o, "channel", json_object_new_int(n->channel + 1));
}

static void add_tuning_fields(struct json_object *o, const struct subscription_tuning *t)
{
	json_object_object_add(o, "generation", json_object_new_int64(t->generation));
	json_object_object_add(o, "presets", json_object_new_int(t->presets));
	struct json_object *p = json_object_new_object();
	json_object_object_add(p, "index", json_object_new_int(t->preset));
	json_object_object_add(p, "name", json_object_new_string(t->preset_name));
	json_object_object_add(o, "preset", p);
	struct json_object *r = json_object_new_object();
	json_object_object_add(r, "slot", json_object_new_int(t->root));
	json_object_object_add(r, "label", json_object_new_string(t->root_label));
	json_object_object_add(o, "root", r);
}

/* The config's full path (a subscriber may run elsewhere: latticed view),
 * looked up once per path rather than for every state. */
static const char *full_config_path(const struct daemon *d)
{
	struct subscription *s = d->subs;
	if (strcmp(s->config_from, d->config_path) != 0) {
		char *full = realpath(d->config_path, NULL);
		snprintf(s->config_full, sizeof s->config_full, "%s", full ? full : d->config_path);
		snprintf(s->config_from, sizeof s->config_from, "%s", d->config_path);
		free(full);
	}
	return s->config_full;
}

/* The whole picture: the first line a subscriber gets, and every resync. */
static struct json_object *state_object(const struct daemon *d, const char *why, uint64_t lost)
{
	const struct subscription *s = d->subs;
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "ok", json_object_new_boolean(true));
	json_object_object_add(o, "event", json_object_new_string("state"));
	json_object_object_add(o, "why", json_object_new_string(why));
	json_object_object_add(o, "events_lost", json_object_new_int64((int64_t)lost));
	json_object_object_add(o, "config", !d->config_path[0] ? NULL
			       : json_object_new_string(full_config_path(d)));
	add_tuning_fields(o, &s->tuning);
	struct json_object *outputs = json_object_new_array();
	for (int k = 0; k < s->output_count; k++) {
		const struct subscription_output *so = &s->outputs[k];
		struct json_object *out = json_object_new_object();
		json_object_object_add(out, "index", json_object_new_int(k));
		json_object_object_add(out, "name", json_object_new_string(so->name));
		json_object_object_add(out, "notes_held", json_object_new_int(so->count));
		struct json_object *notes = json_object_new_array();
		for (int i = 0; i < so->count && i < STATE_NOTES_MAX; i++) {
			struct json_object *n = json_object_new_object();
			add_note_fields(n, &so->notes[i]);
			json_object_array_add(notes, n);
		}
		json_object_object_add(out, "notes", notes);
		json_object_array_add(outputs, out);
	}
	json_object_object_add(o, "outputs", outputs);
	return o;
}

/* ---- the picture ---------------------------------------------------------------- */

/* Adds or removes a note; false if there was nothing to change (a full
 * table, or a note-off for a note the picture never listed). */
static bool apply_note(struct subscription *s, const struct ring_event *ev,
		       struct subscription_note *out)
{
	if (ev->output >= s->output_count)
		return false;
	struct subscription_output *so = &s->outputs[ev->output];
	if (ev->kind == RING_NOTE_ON) {
		if (so->count == ENGINE_MAX_NOTES)
			return false;
		struct subscription_note *n = &so->notes[so->count++];
		*n = (struct subscription_note){.id = ev->note, .generation = ev->generation,
						.preset = ev->preset, .tone = ev->tone,
						.period = ev->period, .source = ev->source,
						.channel = ev->channel, .key = ev->key};
		*out = *n;
		return true;
	}
	for (int i = 0; i < so->count; i++) {
		if (so->notes[i].id != ev->note)
			continue;
		*out = so->notes[i];
		/* keep the order notes began in: a state lists the oldest first */
		memmove(&so->notes[i], &so->notes[i + 1], (size_t)(so->count - i - 1) * sizeof so->notes[0]);
		so->count--;
		return true;
	}
	return false;
}

static void apply_tuning(struct subscription *s, const struct ring_event *ev)
{
	struct subscription_tuning *t = &s->tuning;
	t->preset = ev->preset;
	t->root = ev->root;
	t->presets = ev->presets;
	t->generation = ev->generation;
	snprintf(t->preset_name, sizeof t->preset_name, "%s", ev->preset_name);
	snprintf(t->root_label, sizeof t->root_label, "%s", ev->root_label);
}

static void sync_ended(struct daemon *d)
{
	struct subscription *s = d->subs;
	s->in_sync = false;
	bool first = !s->known;
	s->known = true;
	uint64_t lost = atomic_load_explicit(&s->ring.lost, memory_order_relaxed);
	const char *why = first ? "subscribed" : lost > s->lost_seen ? "events lost" : "catching up";
	if (!first && lost > s->lost_seen)
		log_print(LOG_LEVEL_WARNING,
			  "subscribers: %llu event(s) found the event ring full (%llu in all); they get a fresh state",
			  (unsigned long long)(lost - s->lost_seen), (unsigned long long)lost);
	s->lost_seen = lost;
	s->stated = true;
	publish(d, state_object(d, why, lost), true);
}

/* One event into the picture; the line for it, if it makes one (quiet: none). */
static void apply(struct daemon *d, const struct ring_event *ev, bool quiet)
{
	struct subscription *s = d->subs;
	if (ev->kind == RING_SYNC_BEGIN) {
		for (int k = 0; k < s->output_count; k++)
			s->outputs[k].count = 0;
		s->in_sync = true;
		return;
	}
	if (ev->kind == RING_SYNC_END) {
		sync_ended(d);
		return;
	}
	if (!s->known && !s->in_sync)
		return; /* from before the first sync: the sync will say it */
	s->changed = true;
	quiet = quiet || s->in_sync;
	struct subscription_note n;
	struct json_object *o = NULL;
	if (ev->kind == RING_NOTE_ON || ev->kind == RING_NOTE_OFF) {
		if (!apply_note(s, ev, &n) || quiet)
			return;
		o = event_object(ev->kind == RING_NOTE_ON ? "note_on" : "note_off");
		json_object_object_add(o, "output", json_object_new_int(ev->output));
		add_note_fields(o, &n);
	} else if (ev->kind == RING_TUNING) {
		apply_tuning(s, ev);
		if (quiet)
			return;
		o = event_object("tuning");
		add_tuning_fields(o, &s->tuning);
	} else if (ev->kind == RING_RELOAD) {
		if (quiet)
			return;
		o = event_object("reload");
		json_object_object_add(o, "generation", json_object_new_int64(ev->generation));
		json_object_object_add(o, "presets", json_object_new_int(ev->presets));
	}
	if (o)
		publish(d, o, false);
}

/* ---- the main thread's calls --------------------------------------------------- */

void subscription_request(struct daemon *d, int id, bool states_only)
{
	struct subscription *s = d->subs;
	if (!s || !control_server_subscribe(&d->control, id, states_only)) {
		char text[96];
		snprintf(text, sizeof text, "no room for another subscriber (at most %d)",
			 CONTROL_SUBSCRIBERS_MAX);
		daemon_reply_simple(d, id, false, text);
		return;
	}
	if (!s->active) {
		s->active = true;
		s->known = false;
		s->in_sync = false;
		event_ring_activate(&s->ring, true, d->in->wake_fd);
		return; /* the state goes out when the input thread's sync comes */
	}
	if (s->known && !s->in_sync) {
		struct json_object *o = state_object(d, "subscribed",
						     atomic_load_explicit(&s->ring.lost, memory_order_relaxed));
		const char *line = json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN | JSON_C_TO_STRING_NOSLASHESCAPE);
		control_server_publish_state(&d->control, line, false);
		json_object_put(o);
	}
}

/* When the events waiting since waiting_since_ms are to be taken: after
 * SUBSCRIPTION_DELAY_MS, and while only subscribers of states listen, not
 * before their next state is due either (one wake-up per state, not one
 * per few notes). */
static int64_t events_due_ms(const struct daemon *d)
{
	const struct subscription *s = d->subs;
	int64_t due = s->waiting_since_ms + SUBSCRIPTION_DELAY_MS;
	if (s->known && !s->in_sync && control_server_subscribers_of(&d->control, false) == 0 &&
	    s->state_sent_ms + SUBSCRIPTION_STATE_MS > due)
		due = s->state_sent_ms + SUBSCRIPTION_STATE_MS;
	return due;
}

/* The events due in the ring into the picture, and their lines to the
 * subscribers of events (none are made while nobody takes them). */
static void take_events(struct daemon *d, int64_t now)
{
	struct subscription *s = d->subs;
	struct ring_event ev;
	size_t waiting = spsc_queue_count(&s->ring.queue);
	if (waiting && !s->waiting_since_ms)
		s->waiting_since_ms = now;
	if (waiting && now < events_due_ms(d) && waiting < EVENT_RING_SLOTS / 2)
		return; /* not yet: the note is on its way out now (subscription.h) */
	s->waiting_since_ms = 0;
	/* a flood says itself more briefly as one fresh state */
	bool coalesce = s->known && waiting > SUBSCRIPTION_LINES_MAX;
	bool quiet = coalesce || control_server_subscribers_of(&d->control, false) == 0;
	s->stated = false;
	while (event_ring_take(&s->ring, &ev))
		apply(d, &ev, quiet);
	if (coalesce && !s->stated && s->known && !s->in_sync)
		publish(d, state_object(d, "catching up",
					atomic_load_explicit(&s->ring.lost, memory_order_relaxed)), true);
	/* a sync the input thread owes comes sooner if it is woken now the ring is empty */
	if (!s->known || atomic_load_explicit(&s->ring.lost, memory_order_relaxed) > s->lost_seen)
		wake_fd_signal(d->in->wake_fd);
	/* the next event wakes us; one that came meanwhile waits its delay */
	if (!event_ring_idle(&s->ring))
		s->waiting_since_ms = now;
}

/* Whether a state is owed to the subscribers of states. */
static bool change_owed(const struct daemon *d)
{
	const struct subscription *s = d->subs;
	return s->changed && s->known && !s->in_sync && control_server_subscribers_of(&d->control, true) > 0;
}

void subscription_service(struct daemon *d)
{
	struct subscription *s = d->subs;
	if (!s)
		return;
	struct ring_event ev;
	if (s->active && control_server_subscribers(&d->control) == 0) {
		s->active = s->known = s->in_sync = false;
		event_ring_activate(&s->ring, false, d->in->wake_fd);
	}
	if (!s->active) {
		while (event_ring_take(&s->ring, &ev))
			; /* posted before it went off */
		s->waiting_since_ms = 0;
		s->changed = false;
		return;
	}
	int64_t now = monotonic_ms();
	take_events(d, now);
	if (change_owed(d) && now - s->state_sent_ms >= SUBSCRIPTION_STATE_MS) {
		struct json_object *o = state_object(d, "changed",
						     atomic_load_explicit(&s->ring.lost, memory_order_relaxed));
		const char *line = json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN | JSON_C_TO_STRING_NOSLASHESCAPE);
		control_server_publish_change(&d->control, line);
		json_object_put(o);
		s->changed = false;
		s->state_sent_ms = now;
	}
}

int subscription_timeout_ms(const struct daemon *d, int64_t now_ms)
{
	const struct subscription *s = d->subs;
	if (!s)
		return -1;
	int64_t due = -1;
	if (s->waiting_since_ms)
		due = events_due_ms(d);
	if (change_owed(d) && (due < 0 || s->state_sent_ms + SUBSCRIPTION_STATE_MS < due))
		due = s->state_sent_ms + SUBSCRIPTION_STATE_MS;
	if (due < 0)
		return -1;
	return due > now_ms ? (int)(due - now_ms) : 0;
}

void subscription_shutdown(struct daemon *d)
{
	if (!d->subs || !d->subs->active)
		return;
	struct json_object *o = event_object("shutdown");
	const char *line = json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN | JSON_C_TO_STRING_NOSLASHESCAPE);
	control_server_publish(&d->control, line);
	control_server_publish_change(&d->control, line);
	control_server_publish_state(&d->control, line, false); /* those still waiting for a state too */
	json_object_put(o);
	control_server_flush(&d->control);
}
