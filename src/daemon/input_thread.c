/*
 * input_thread: see input_thread.h for the model.
 *
 * Retired tunings: a reload swaps the engines to a new tuning set between
 * two messages.  Notes already sounding keep their channel, key and bend
 * (the engine's promise) and need nothing from the old set to end; only
 * status wants their tone labels.  So the old set is kept, with each
 * engine's note serial at the swap, until no note started before the swap
 * is still sounding, and then posted back to the main thread to be freed.
 * If reloads come faster than notes end, the oldest is freed early and
 * its notes show no label (tuning_known = false).
 */
#include "input_thread.h"

#include <errno.h>
#include <poll.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "clock.h"
#include "latticed/midi_encoder.h"
#include "output_thread.h"
#include "snapshot.h"

#define SHUTDOWN_WAIT_MS 2000
#define DROP_LOG_INTERVAL_MS 1000
#define RETIRED_CHECK_MS 200

static void post_reply(struct input_thread *t, const struct reply *r);

/* ---- messages out --------------------------------------------------------- */

static void note_queue_drop(struct input_thread *t, struct input_output *o)
{
	o->queue_drops++;
	int64_t now = monotonic_ms();
	if (o->drops_logged && now - o->drop_logged_ms < DROP_LOG_INTERVAL_MS)
		return;
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "output %s: the output queue was full, %llu message(s) dropped so far",
		      o->name, (unsigned long long)o->queue_drops);
	o->drops_logged = o->queue_drops;
	o->drop_logged_ms = now;
	t->wake_main = true;
}

/* The engine's callback: one message for output o. */
static void emit(void *context, const struct midi_msg *m)
{
	struct input_output *o = context;
	struct input_thread *t = o->owner;
	size_t n = midi_msg_encode(m, t->encode_buffer, sizeof t->encode_buffer);
	if (n == 0)
		return; /* the engine only makes valid messages; nothing to send */
	if (!msg_queue_push(t->messages, o->index, t->encode_buffer, n)) {
		if (t->shutting_down) {
			/* the last note-offs: worth a short wait */
			int64_t give_up = monotonic_ms() + SHUTDOWN_WAIT_MS;
			const struct timespec pause = {0, 1000000};
			wake_fd_signal(t->output_wake_fd);
			while (!msg_queue_push(t->messages, o->index, t->encode_buffer, n)) {
				if (monotonic_ms() > give_up) {
					note_queue_drop(t, o);
					return;
				}
				nanosleep(&pause, NULL);
			}
		} else {
			note_queue_drop(t, o);
			return;
		}
	}
	o->queued++;
	t->wake_output = true;
}

static void wake_others(struct input_thread *t)
{
	if (t->wake_output) {
		t->wake_output = false;
		wake_fd_signal(t->output_wake_fd);
	}
	if (t->wake_main) {
		t->wake_main = false;
		wake_fd_signal(t->main_wake_fd);
	}
}

/* ---- backend callbacks ---------------------------------------------------- */

static void on_input(void *context, uint8_t source, const uint8_t *bytes, size_t length)
{
	struct input_thread *t = context;
	if (source >= MIDI_IO_MAX_SOURCES)
		source = MIDI_IO_MAX_SOURCES - 1;
	struct input_source *s = &t->sources[source];
	s->seen = true;
	for (size_t i = 0; i < length; i++) {
		struct midi_msg m;
		if (!midi_parser_feed(&s->parser, bytes[i], &m))
			continue;
		s->messages++;
		for (int k = 0; k < t->output_count; k++)
			engine_handle(&t->outputs[k].engine, source, &m);
	}
	wake_others(t); /* the first note of a chord goes before the parser reads on */
}

/*
 * The backend lost input events (a queue overflowed: we did not read in
 * time).  Any of them may have been a note-off or a pedal let go, so the
 * notes of the sources concerned are ended, as if their device had gone,
 * rather than left to hang until a panic.  Keys still down sound again
 * when pressed again.
 */
static void input_lost(struct input_thread *t, int index, const char *what)
{
	int ended = 0;
	for (int s = 0; s < MIDI_IO_MAX_SOURCES; s++) {
		if (index >= 0 && s != index)
			continue;
		midi_parser_reset(&t->sources[s].parser); /* a SysEx may have lost its end */
		for (int k = 0; k < t->output_count; k++) {
			ended += t->outputs[k].engine.note_count;
			engine_end_source(&t->outputs[k].engine, (uint8_t)s);
			ended -= t->outputs[k].engine.note_count;
		}
	}
	t->inputs_lost++;
	int64_t now = monotonic_ms();
	if (t->inputs_lost_logged && now - t->input_lost_logged_ms < DROP_LOG_INTERVAL_MS)
		return;
	char from[MIDI_IO_NAME_MAX * 2 + 8];
	if (index < 0 || !what[0])
		snprintf(from, sizeof from, "every source");
	else
		snprintf(from, sizeof from, "%s", what);
	log_ring_post(&t->log, LOG_LEVEL_WARNING,
		      "input: events from %s were lost (the input queue overflowed: latticed did not read in "
		      "time); %d held note(s) ended so that none hangs (%llu time(s) so far)",
		      from, ended, (unsigned long long)t->inputs_lost);
	t->inputs_lost_logged = t->inputs_lost;
	t->input_lost_logged_ms = now;
}

static void on_event(void *context, enum midi_io_event kind, int index, const char *name)
{
	struct input_thread *t = context;
	const char *what = name ? name : "";
	if (kind == MIDI_IO_INPUT_LOST) {
		if (index < MIDI_IO_MAX_SOURCES)
			input_lost(t, index, what);
	} else if (kind == MIDI_IO_SOURCE_CONNECTED || kind == MIDI_IO_SOURCE_GONE) {
		if (index < 0 || index >= MIDI_IO_MAX_SOURCES)
			return;
		struct input_source *s = &t->sources[index];
		midi_parser_reset(&s->parser);
		s->seen = true;
		snprintf(s->name, sizeof s->name, "%s", what);
		if (kind == MIDI_IO_SOURCE_CONNECTED) {
			s->connected = true;
			log_ring_post(&t->log, LOG_LEVEL_INFO, "input: source %d connected: %s", index, what);
		} else {
			s->connected = false;
			int ended = 0;
			for (int k = 0; k < t->output_count; k++) {
				ended += t->outputs[k].engine.note_count;
				engine_end_source(&t->outputs[k].engine, (uint8_t)index);
				ended -= t->outputs[k].engine.note_count;
			}
			log_ring_post(&t->log, LOG_LEVEL_NOTICE,
				      "input: source %d gone: %s; its notes were ended (%d)", index, what, ended);
		}
	} else if (index >= 0 && index < t->output_count) {
		struct input_output *o = &t->outputs[index];
		if (kind == MIDI_IO_OUTPUT_CONNECTED) {
			/* the new receiver knows no running status: tell the output thread first */
			uint8_t marker = 0;
			if (msg_queue_push(t->messages, (uint8_t)(MSG_OUTPUT_RECONNECTED | o->index), &marker, 1))
				t->wake_output = true;
			log_ring_post(&t->log, LOG_LEVEL_INFO,
				      "output %s: connected to %s; sending its set-up", o->name, what);
			engine_start(&o->engine);
		} else {
			log_ring_post(&t->log, LOG_LEVEL_NOTICE,
				      "output %s: %s went away; nothing listens now", o->name, what);
		}
	}
	t->wake_main = true;
	wake_others(t);
}

struct midi_io_callbacks input_thread_callbacks(struct input_thread *t)
{
	struct midi_io_callbacks cb = {.context = t, .input = on_input, .event = on_event};
	return cb;
}

/* ---- set-up ---------------------------------------------------------------- */

bool input_thread_init(struct input_thread *t, const struct config *cfg,
		       struct tuning_set *tunings, char *err, size_t err_size)
{
	t->tunings = tunings;
	t->output_count = cfg->output_count;
	for (int i = 0; i < cfg->output_count; i++) {
		struct input_output *o = &t->outputs[i];
		struct engine_spec spec;
		struct core_error cerr;
		o->owner = t;
		o->index = (uint8_t)i;
		snprintf(o->name, sizeof o->name, "%s", cfg->outputs[i].name);
		config_engine_spec(cfg, i, &spec);
		if (!engine_init(&o->engine, &spec, &tunings->engine, emit, o, &cerr)) {
			snprintf(err, err_size, "%s:%d: [output %s]: %s", cfg->path, cfg->outputs[i].line,
				 o->name, cerr.text);
			return false;
		}
	}
	for (int s = 0; s < MIDI_IO_MAX_SOURCES; s++)
		midi_parser_init(&t->sources[s].parser, t->sources[s].sysex,
				 sizeof t->sources[s].sysex);
	(void)spsc_queue_init(&t->requests, t->request_slots, REQUEST_QUEUE_SLOTS,
			      sizeof t->request_slots[0]);
	(void)spsc_queue_init(&t->replies, t->reply_slots, REPLY_QUEUE_SLOTS,
			      sizeof t->reply_slots[0]);
	log_ring_init(&t->log);
	atomic_init(&t->heartbeat, 0);
	t->last_preset = 0;
	t->last_root = 0;
	t->inputs_lost = t->inputs_lost_logged = 0;
	t->input_lost_logged_ms = 0;
	return true;
}

/* ---- requests and replies -------------------------------------------------- */

bool input_thread_post(struct input_thread *t, const struct request *r)
{
	if (!spsc_queue_push(&t->requests, r))
		return false;
	wake_fd_signal(t->wake_fd);
	return true;
}

bool input_thread_take_reply(struct input_thread *t, struct reply *out)
{
	return spsc_queue_pop(&t->replies, out);
}

static void post_reply(struct input_thread *t, const struct reply *r)
{
	/* replies carrying memory must not be lost: keep them until there is room */
	if (t->outbox_count == 0 && spsc_queue_push(&t->replies, r)) {
		t->wake_main = true;
		return;
	}
	if (t->outbox_count < INPUT_OUTBOX_MAX)
		t->outbox[t->outbox_count++] = *r;
	else
		log_ring_post(&t->log, LOG_LEVEL_ERROR, "the reply queue is full; a reply was lost");
}

static void flush_outbox(struct input_thread *t)
{
	int sent = 0;
	while (sent < t->outbox_count && spsc_queue_push(&t->replies, &t->outbox[sent]))
		sent++;
	if (sent) {
		memmove(t->outbox, t->outbox + sent, (size_t)(t->outbox_count - sent) * sizeof t->outbox[0]);
		t->outbox_count -= sent;
		t->wake_main = true;
	}
}

static void reply_done(struct input_thread *t, const struct request *r, bool ok,
		       const char *fmt, ...) __attribute__((format(printf, 4, 5)));

static void reply_done(struct input_thread *t, const struct request *r, bool ok,
		       const char *fmt, ...)
{
	struct reply rep;
	memset(&rep, 0, sizeof rep);
	rep.kind = REPLY_DONE;
	rep.request = r->kind;
	rep.id = r->id;
	rep.ok = ok;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(rep.text, sizeof rep.text, fmt, ap);
	va_end(ap);
	post_reply(t, &rep);
}

static const struct engine_preset *current_preset_of(const struct engine *e)
{
	return &e->tunings->presets[e->preset];
}

static void root_label(const struct engine *e, char *buf, size_t size)
{
	if (e->root_slot == 0) {
		snprintf(buf, size, "home");
		return;
	}
	const struct lattice *lat = current_preset_of(e)->lattice;
	lattice_label(&lat->spec, lat->tones[e->root_slot - 1].seeds, buf, size);
}

/* Tells the main thread (log line, systemd status) when the tuning moved. */
static void check_tuning_state(struct input_thread *t)
{
	if (t->output_count == 0)
		return;
	const struct engine *e = &t->outputs[0].engine;
	if (e->preset == t->last_preset && e->root_slot == t->last_root)
		return;
	t->last_preset = e->preset;
	t->last_root = e->root_slot;
	struct reply rep;
	memset(&rep, 0, sizeof rep);
	rep.kind = REPLY_TUNING_STATE;
	rep.ok = true;
	char label[SNAPSHOT_LABEL_MAX];
	root_label(e, label, sizeof label);
	snprintf(rep.text, sizeof rep.text, "preset %s, root %s", current_preset_of(e)->name, label);
	post_reply(t, &rep);
}

static int find_preset(const struct engine_tunings *tunings, const struct request *r)
{
	if (r->name[0])
		for (int i = 0; i < tunings->count; i++)
			if (strcmp(tunings->presets[i].name, r->name) == 0)
				return i;
	if (r->number >= 0 && r->number < tunings->count)
		return r->number;
	return -1;
}

static void panic_all(struct input_thread *t)
{
	for (int k = 0; k < t->output_count; k++)
		engine_panic(&t->outputs[k].engine);
}

static void swap_tunings(struct input_thread *t, const struct request *r)
{
	if (t->retired_count == INPUT_RETIRED_MAX) {
		/* reloads faster than notes end: let the oldest go now */
		struct reply rep = {.kind = REPLY_RETIRED_TUNINGS, .tunings = t->retired[0].set};
		for (int k = 0; k < t->output_count; k++)
			t->forgotten_serial[k] = t->retired[0].serial[k];
		post_reply(t, &rep);
		memmove(t->retired, t->retired + 1, (INPUT_RETIRED_MAX - 1) * sizeof t->retired[0]);
		t->retired_count--;
	}
	struct retired_tunings *old = &t->retired[t->retired_count++];
	old->set = t->tunings;
	for (int k = 0; k < t->output_count; k++) {
		old->serial[k] = t->outputs[k].engine.serial;
		engine_replace_tunings(&t->outputs[k].engine, &r->tunings->engine);
	}
	t->tunings = r->tunings;
	t->reloads++;
	const struct engine *e = &t->outputs[0].engine;
	reply_done(t, r, true, "%d preset(s), now on preset %s", e->tunings->count,
		   current_preset_of(e)->name);
}

/* Posts back retired sets whose notes have all ended. */
static void release_retired(struct input_thread *t)
{
	while (t->retired_count > 0) {
		const struct retired_tunings *old = &t->retired[0];
		bool in_use = false;
		for (int k = 0; k < t->output_count && !in_use; k++) {
			const struct engine *e = &t->outputs[k].engine;
			for (int i = 0; i < ENGINE_MAX_NOTES; i++)
				if (e->notes[i].phase != NOTE_FREE && e->notes[i].started <= old->serial[k]) {
					in_use = true;
					break;
				}
		}
		if (in_use)
			return;
		struct reply rep = {.kind = REPLY_RETIRED_TUNINGS, .tunings = old->set};
		post_reply(t, &rep);
		memmove(t->retired, t->retired + 1, (size_t)(t->retired_count - 1) * sizeof t->retired[0]);
		t->retired_count--;
	}
}

/* ---- status ---------------------------------------------------------------- */

/* The tunings a note was started under, or NULL if they were freed. */
static const struct engine_tunings *tunings_of_note(const struct input_thread *t, int output,
						    const struct engine_note *n)
{
	if (n->started <= t->forgotten_serial[output])
		return NULL;
	for (int r = 0; r < t->retired_count; r++)
		if (n->started <= t->retired[r].serial[output])
			return &t->retired[r].set->engine;
	return &t->tunings->engine;
}

static void describe_line(void *context, const char *line)
{
	struct status_snapshot *s = context;
	int room = SNAPSHOT_DESCRIBE_MAX - s->describe_length;
	if (room <= 1)
		return;
	int n = snprintf(s->describe + s->describe_length, (size_t)room, "%s\n", line);
	if (n > 0)
		s->describe_length += n < room ? n : room - 1;
}

static void fill_snapshot(struct input_thread *t, struct status_snapshot *s)
{
	memset(s, 0, sizeof *s);
	s->output_count = t->output_count;
	for (int k = 0; k < t->output_count; k++) {
		const struct input_output *o = &t->outputs[k];
		const struct engine *e = &o->engine;
		struct snapshot_output *so = &s->outputs[k];
		snprintf(so->name, sizeof so->name, "%s", o->name);
		so->method = e->spec.output.method;
		so->preset = e->preset;
		snprintf(so->preset_name, sizeof so->preset_name, "%s", current_preset_of(e)->name);
		so->root_slot = e->root_slot;
		root_label(e, so->root_label, sizeof so->root_label);
		so->stats = e->stats;
		so->queued = o->queued;
		so->queue_drops = o->queue_drops;
		so->sent = atomic_load_explicit(&t->output->sent[k], memory_order_relaxed);
		so->send_drops = atomic_load_explicit(&t->output->send_drops[k], memory_order_relaxed);
		so->notes_held = e->note_count;
		for (int i = 0; i < ENGINE_MAX_NOTES && so->note_count < SNAPSHOT_NOTES_MAX; i++) {
			const struct engine_note *n = &e->notes[i];
			if (n->phase == NOTE_FREE)
				continue;
			struct snapshot_note *sn = &so->notes[so->note_count++];
			sn->source = n->source;
			sn->in_channel = n->in_channel;
			sn->in_key = n->in_key;
			sn->out_channel = n->out_channel;
			sn->out_key = n->out_key;
			sn->ringing = n->phase == NOTE_RINGING;
			sn->period = n->period;
			sn->pitch = n->note;
			const struct engine_tunings *tun = tunings_of_note(t, k, n);
			if (tun && n->preset >= 0 && n->preset < tun->count) {
				const struct engine_preset *p = &tun->presets[n->preset];
				if (n->tone >= 0 && n->tone < p->lattice->tone_count) {
					const struct tone *tone = &p->lattice->tones[n->tone];
					sn->tuning_known = true;
					snprintf(sn->preset, sizeof sn->preset, "%s", p->name);
					lattice_label(&p->lattice->spec, tone->seeds, sn->label, sizeof sn->label);
					ratio_format(tone->ratio, sn->ratio, sizeof sn->ratio);
					sn->cents = tone->cents;
				}
			}
		}
	}
	for (int i = 0; i < MIDI_IO_MAX_SOURCES; i++) {
		const struct input_source *src = &t->sources[i];
		if (src->seen)
			s->source_count = i + 1;
		s->sources[i].connected = src->connected;
		snprintf(s->sources[i].name, sizeof s->sources[i].name, "%s", src->name);
		s->sources[i].messages = src->messages;
		s->sources[i].parser = src->parser.stats;
	}
	const struct engine_tunings *tun = &t->tunings->engine;
	s->preset_count = tun->count;
	for (int i = 0; i < tun->count; i++)
		snprintf(s->presets[i], sizeof s->presets[i], "%s", tun->presets[i].name);
	s->heartbeat = atomic_load_explicit(&t->heartbeat, memory_order_relaxed);
	s->reloads = t->reloads;
	s->retired_tunings = t->retired_count;
	t->backend->describe(t->io, describe_line, s);
}

static void handle_request(struct input_thread *t, const struct request *r)
{
	const struct engine *first = &t->outputs[0].engine;
	switch (r->kind) {
	case REQUEST_PANIC:
		panic_all(t);
		reply_done(t, r, true, "all notes off on every output");
		break;
	case REQUEST_PRESET: {
		int p = find_preset(first->tunings, r);
		if (p < 0) {
			reply_done(t, r, false, "no preset '%s'; there are %d (see latticed status)",
				   r->name, first->tunings->count);
			break;
		}
		for (int k = 0; k < t->output_count; k++)
			(void)engine_select_preset(&t->outputs[k].engine, p);
		reply_done(t, r, true, "preset %s (for new notes)", current_preset_of(first)->name);
		break;
	}
	case REQUEST_ROOT: {
		int tones = current_preset_of(first)->lattice->tone_count;
		if (r->number < 0 || r->number > tones) {
			reply_done(t, r, false, "root %d is out of range, expected 0 (home) to %d: preset %s has %d tones",
				   r->number, tones, current_preset_of(first)->name, tones);
			break;
		}
		for (int k = 0; k < t->output_count; k++)
			(void)engine_select_root(&t->outputs[k].engine, r->number);
		char label[SNAPSHOT_LABEL_MAX];
		root_label(first, label, sizeof label);
		reply_done(t, r, true, "root %s (for new notes)", label);
		break;
	}
	case REQUEST_TUNINGS:
		swap_tunings(t, r);
		break;
	case REQUEST_SNAPSHOT: {
		fill_snapshot(t, r->snapshot);
		struct reply rep = {.kind = REPLY_SNAPSHOT, .request = r->kind, .id = r->id,
				    .ok = true, .snapshot = r->snapshot};
		post_reply(t, &rep);
		break;
	}
	case REQUEST_QUIT:
		t->shutting_down = true;
		panic_all(t);
		t->quit = true;
		break;
	}
}

static const struct {
	uint32_t flag;
	const char *text;
} notice_texts[] = {
	{NOTICE_BEND_CLAMPED, "a retune plus the player's wheel went past the bend range and was clamped; a larger bend_range avoids it"},
	{NOTICE_NOTE_DROPPED, "a note found no free channel (or key) and was dropped; more channels, or polyphony = share-then-steal, avoid it"},
	{NOTICE_NOTE_STOLEN, "more notes than channels: the oldest note was ended to make room"},
	{NOTICE_PASSTHROUGH_BLOCKED, "a message on a pass-through channel was blocked because this output retunes on that channel"},
	{NOTICE_NOTES_FULL, "too many notes held at once; new notes were dropped"},
};

static void report_notices(struct input_thread *t)
{
	for (int k = 0; k < t->output_count; k++) {
		uint32_t fresh = engine_take_notices(&t->outputs[k].engine);
		if (!fresh)
			continue;
		for (size_t i = 0; i < sizeof notice_texts / sizeof notice_texts[0]; i++)
			if (fresh & notice_texts[i].flag)
				log_ring_post(&t->log, LOG_LEVEL_WARNING, "output %s: %s (reported once)",
					      t->outputs[k].name, notice_texts[i].text);
		t->wake_main = true;
	}
}

/* ---- the loop --------------------------------------------------------------- */

#define POLL_MAX (MIDI_IO_MAX_SOURCES + 8)

void *input_thread_run(void *arg)
{
	struct input_thread *t = arg;
	struct pollfd fds[POLL_MAX];
	while (!t->quit) {
		fds[0].fd = t->wake_fd;
		fds[0].events = POLLIN;
		fds[0].revents = 0;
		int tick = -1;
		int n = t->backend->input_fds(t->io, fds + 1, POLL_MAX - 1, &tick);
		if (n < 0)
			n = 0;
		int timeout = t->heartbeat_ms;
		if (tick > 0 && tick < timeout)
			timeout = tick;
		int ready = poll(fds, (nfds_t)(n + 1), timeout);
		atomic_fetch_add_explicit(&t->heartbeat, 1, memory_order_relaxed);
		if (ready < 0 && errno != EINTR)
			log_ring_post(&t->log, LOG_LEVEL_ERROR, "input: poll failed: %s", strerror(errno));
		if (fds[0].revents & POLLIN)
			wake_fd_clear(t->wake_fd);
		t->backend->service_input(t->io);

		struct request r;
		while (!t->quit && spsc_queue_pop(&t->requests, &r))
			handle_request(t, &r);

		report_notices(t);
		check_tuning_state(t);
		int64_t now = monotonic_ms();
		if (t->retired_count && now - t->retired_checked_ms >= RETIRED_CHECK_MS) {
			t->retired_checked_ms = now;
			release_retired(t);
		}
		flush_outbox(t);
		if (spsc_queue_count(&t->log.ring))
			t->wake_main = true;
		wake_others(t);
	}
	/* the last replies (retired sets among them) wait for the main thread */
	release_retired(t);
	flush_outbox(t);
	t->wake_main = true;
	wake_others(t);
	return NULL;
}
