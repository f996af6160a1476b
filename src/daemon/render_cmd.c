/*
 * render_cmd: `latticed render` (model in render_cmd.h).
 *
 * The output is built per track in memory first, because the writer emits
 * one track after another while the engine's messages arrive in the merged
 * order of all tracks.  Each output event is small: a channel message is
 * kept inline, a SysEx the engine sent (its buffer is reused at once) is
 * copied into one growing arena, an input event copied unchanged is a
 * pointer to the parsed input, which lives until the file is written.
 *
 * Hanging notes are released through the engine as the player would
 * release them: a note-off for every key still down (retuned or passed
 * through), in the track its note-on came from, then pedal-up for every
 * pedal still down, in the track that last moved it; engine_panic only if
 * something still sounds after that (it should not).  A track whose last
 * event lies more than one delta time (SMF_DELTA_MAX ticks, SMF 1.0) before
 * the end gets its releases as late as a delta reaches instead, reported.
 */
#include "render_cmd.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "latticed/midi_msg.h"
#include "notice_text.h"
#include "smf_file.h"

#define CC_SUSTAIN 64
#define CC_SOSTENUTO 66

enum out_kind { OUT_INPUT, OUT_MIDI, OUT_SYSEX };

/* 16 bytes: a 1 MB file makes half a million of them */
struct out_event {
	uint32_t tick;
	uint8_t kind;              /* enum out_kind */
	uint8_t status, data[2];   /* OUT_MIDI */
	union {
		const struct smf_event *input;          /* OUT_INPUT */
		struct { uint32_t at, length; } sysex;  /* OUT_SYSEX: in the arena */
	} u;
};

struct out_track {
	struct out_event *events;
	size_t count, capacity;
	uint32_t end_tick;
	bool release_set;          /* release_tick is chosen */
	uint32_t release_tick;     /* where what hangs in this track is released */
};

/* One input event in the merged order. */
struct merged {
	uint32_t tick;
	uint32_t track;
	size_t index;
};

struct render {
	const struct smf *in;
	struct out_track *tracks;
	uint8_t *arena;
	size_t arena_length, arena_capacity;
	bool out_of_memory;
	/* where the engine's messages go now */
	size_t track;
	uint32_t tick;
	uint32_t release_end;             /* the tick hanging notes are released at */
	/* for releasing what the input left hanging */
	uint32_t key_track[16][128];
	uint32_t pedal_track[16];
	struct engine *engine;
	struct render_report *report;
};

static bool grow(void **p, size_t *capacity, size_t need, size_t item)
{
	if (need <= *capacity)
		return true;
	size_t cap = *capacity ? *capacity : 64;
	while (cap < need) {
		if (cap > SIZE_MAX / 2 / item)
			return false;
		cap *= 2;
	}
	void *q = realloc(*p, cap * item);
	if (!q)
		return false;
	*p = q;
	*capacity = cap;
	return true;
}

static void push(struct render *r, size_t track, const struct out_event *ev)
{
	struct out_track *t = &r->tracks[track];
	if (!grow((void **)&t->events, &t->capacity, t->count + 1, sizeof *t->events)) {
		r->out_of_memory = true;
		return;
	}
	t->events[t->count++] = *ev;
	r->report->events_out++;
}

static void on_emit(void *context, const struct midi_msg *m)
{
	struct render *r = context;
	struct out_event ev = { .tick = r->tick };
	if (m->status == MIDI_SYSEX) {
		if (r->arena_length + m->sysex_length > UINT32_MAX ||
		    !grow((void **)&r->arena, &r->arena_capacity,
			  r->arena_length + m->sysex_length, 1)) {
			r->out_of_memory = true;
			return;
		}
		memcpy(r->arena + r->arena_length, m->sysex, m->sysex_length);
		ev.kind = OUT_SYSEX;
		ev.u.sysex.at = (uint32_t)r->arena_length;
		ev.u.sysex.length = m->sysex_length;
		r->arena_length += m->sysex_length;
	} else {
		ev.kind = OUT_MIDI;
		ev.status = m->status;
		ev.data[0] = m->data[0];
		ev.data[1] = m->data[1];
	}
	push(r, r->track, &ev);
}

static int merged_compare(const void *a, const void *b)
{
	const struct merged *x = a, *y = b;
	if (x->tick != y->tick)
		return x->tick < y->tick ? -1 : 1;
	if (x->track != y->track)
		return x->track < y->track ? -1 : 1;
	return x->index < y->index ? -1 : (x->index > y->index ? 1 : 0);
}

/* ---- what a strict file cannot hold ---------------------------------------- */

static void left_out(struct render *r, const struct smf_event *ev, const char *why)
{
	struct render_report *rep = r->report;
	if (rep->left_out < RENDER_LEFT_OUT_SHOWN)
		snprintf(rep->left_out_text[rep->left_out], RENDER_LINE_MAX, "byte %zu: %s",
			 ev->offset, why);
	rep->left_out++;
}

/* True when the event can be written; otherwise notes why it is left out. */
static bool writable(struct render *r, const struct smf_event *ev)
{
	char why[RENDER_LINE_MAX - 32];
	if (ev->kind == SMF_EVENT_META) {
		uint32_t expected = 0;
		if (ev->meta_type & 0x80) {
			snprintf(why, sizeof why, "meta event type %02X, expected 00..7F; left out",
				 ev->meta_type);
			left_out(r, ev, why);
			return false;
		}
		if (!smf_meta_length_ok(ev->meta_type, ev->length, &expected)) {
			snprintf(why, sizeof why,
				 "meta event %02X with %u data bytes, expected %u; left out",
				 ev->meta_type, ev->length, expected);
			left_out(r, ev, why);
			return false;
		}
		uint32_t tempo;
		if (smf_event_tempo(ev, &tempo) && tempo == 0 && r->report->zero_tempos++ == 0)
			r->report->zero_tempo_offset = ev->offset;
		return true;
	}
	if (ev->kind == SMF_EVENT_SYSEX) {
		for (uint32_t i = 0; i < ev->length; i++) {
			uint8_t b = ev->data[i];
			if ((b & 0x80) && !(i + 1 == ev->length && b == MIDI_SYSEX_END)) {
				snprintf(why, sizeof why,
					 "SysEx byte %u is %02X, expected data bytes and a final F7; left out",
					 i + 1, b);
				left_out(r, ev, why);
				return false;
			}
		}
	}
	return true;
}

/* Channel messages and complete SysEx messages go to the engine. */
static bool engine_hears(const struct smf_event *ev)
{
	return ev->kind == SMF_EVENT_MIDI ||
	       (ev->kind == SMF_EVENT_SYSEX && ev->msg.status == MIDI_SYSEX);
}

static bool is_end_of_track(const struct smf_event *ev)
{
	return ev->kind == SMF_EVENT_META && ev->meta_type == SMF_META_END_OF_TRACK;
}

/* ---- one performance --------------------------------------------------------- */

static void feed(struct render *r, size_t track, const struct smf_event *ev)
{
	r->track = track;
	r->tick = ev->tick;
	if (!engine_hears(ev)) {
		struct out_event out = { .tick = ev->tick, .kind = OUT_INPUT, .u.input = ev };
		push(r, track, &out);
		return;
	}
	const struct midi_msg *m = &ev->msg;
	if (midi_msg_is_channel(m)) {
		int ch = midi_msg_channel(m);
		uint8_t type = midi_msg_type(m);
		if (type == MIDI_NOTE_ON && m->data[1] > 0)
			r->key_track[ch][m->data[0]] = (uint32_t)track;
		else if (type == MIDI_CONTROL &&
			 (m->data[0] == CC_SUSTAIN || m->data[0] == CC_SOSTENUTO))
			r->pedal_track[ch] = (uint32_t)track;
	}
	/* source 0 for every track: a note-off ends its note whatever track it is in */
	engine_handle(r->engine, 0, m);
}

/* From now on the engine's messages go to `track`, at the tick where what
 * hangs there is released: `end`, or as far as one delta time reaches
 * past the track's last event if the end lies beyond that. */
static void release_in(struct render *r, size_t track, uint32_t end)
{
	struct out_track *t = &r->tracks[track];
	if (!t->release_set) {
		uint32_t last = t->count ? t->events[t->count - 1].tick : 0;
		t->release_tick = end;
		if (end > last && end - last > SMF_DELTA_MAX) {
			t->release_tick = last + SMF_DELTA_MAX;
			r->report->early_tracks++;
			if (r->report->early_tick == 0 || t->release_tick < r->report->early_tick)
				r->report->early_tick = t->release_tick;
		}
		t->release_set = true;
	}
	r->track = track;
	r->tick = t->release_tick;
}

/* A key's release goes to the track of its note-on, a pedal's to the
 * track that last moved it, each at the tick release_in gives that track. */
static void route_release(void *context, const struct midi_msg *m)
{
	struct render *r = context;
	int ch = midi_msg_channel(m);
	if (midi_msg_type(m) == MIDI_NOTE_OFF)
		release_in(r, r->key_track[ch][m->data[0]], r->release_end);
	else
		release_in(r, r->pedal_track[ch], r->release_end);
}

/* Releases what the input left sounding, at `tick`. */
static void release_hanging(struct render *r, size_t setup_track, uint32_t tick)
{
	struct engine *e = r->engine;
	if (!engine_sounds(e))
		return;
	r->report->hanging_tick = tick > r->report->hanging_tick ? tick : r->report->hanging_tick;
	r->release_end = tick;
	struct engine_release released = engine_release_held(e, route_release, r);
	r->report->hanging_keys += (size_t)released.keys;
	r->report->hanging_pedal_notes += (size_t)released.pedal_notes;
	if (engine_sounds(e)) {
		release_in(r, setup_track, tick);
		engine_panic(e);
	}
}

/*
 * Plays tracks [first, last) as one performance.  The set-up is sent just
 * before the first event that is not a leading tick-0 meta event of the
 * set-up track (tracks before it hold no event the engine hears).
 */
static bool perform(struct render *r, const struct engine_spec *spec,
		    const struct engine_tunings *tunings, size_t first, size_t last,
		    uint32_t end_tick, struct core_error *err)
{
	const struct smf *in = r->in;
	size_t total = 0;
	for (size_t t = first; t < last; t++)
		total += in->tracks[t].event_count;
	struct merged *order = malloc((total ? total : 1) * sizeof *order);
	if (!order)
		return core_fail(err, "", "out of memory merging %zu events", total);

	size_t count = 0, setup_track = SIZE_MAX;
	for (size_t t = first; t < last; t++) {
		const struct smf_track *tr = &in->tracks[t];
		for (size_t i = 0; i < tr->event_count; i++) {
			const struct smf_event *ev = &tr->events[i];
			if (is_end_of_track(ev))
				continue;
			r->report->events_in++;
			if (!writable(r, ev))
				continue;
			if (setup_track == SIZE_MAX && engine_hears(ev))
				setup_track = t;
			order[count++] = (struct merged){ ev->tick, (uint32_t)t, i };
		}
	}
	if (setup_track == SIZE_MAX)
		setup_track = first;
	qsort(order, count, sizeof *order, merged_compare);

	if (!engine_init(r->engine, spec, tunings, on_emit, r, err)) {
		free(order);
		return false;
	}
	for (int ch = 0; ch < 16; ch++) {
		r->pedal_track[ch] = (uint32_t)setup_track;
		for (int key = 0; key < 128; key++)
			r->key_track[ch][key] = (uint32_t)setup_track;
	}

	bool set_up = false;
	for (size_t i = 0; i < count && !r->out_of_memory; i++) {
		const struct smf_event *ev = &in->tracks[order[i].track].events[order[i].index];
		if (!set_up && (ev->tick > 0 || order[i].track > setup_track ||
				(order[i].track == setup_track && ev->kind != SMF_EVENT_META))) {
			r->track = setup_track;
			r->tick = 0;
			engine_start(r->engine);
			set_up = true;
		}
		feed(r, order[i].track, ev);
	}
	free(order);
	if (!set_up) {
		r->track = setup_track;
		r->tick = 0;
		engine_start(r->engine);
	}
	release_hanging(r, setup_track, end_tick);

	struct engine_stats *sum = &r->report->engine;
	const struct engine_stats *s = engine_stats(r->engine);
	sum->notes_on += s->notes_on;
	sum->notes_shared += s->notes_shared;
	sum->notes_stolen += s->notes_stolen;
	sum->notes_dropped += s->notes_dropped;
	sum->silent_keys += s->silent_keys;
	sum->bends_clamped += s->bends_clamped;
	sum->passthrough_blocked += s->passthrough_blocked;
	sum->tuning_changes += s->tuning_changes;
	sum->messages_out += s->messages_out;
	r->report->notices |= engine_take_notices(r->engine);
	struct engine_control_miss miss;
	if (engine_take_control_miss(r->engine, &miss)) {
		r->report->miss = miss;
		r->report->misses += miss.count;
	}
	r->report->performances++;
	if (r->out_of_memory)
		return core_fail(err, "", "out of memory building the output");
	return true;
}

/* ---- writing ---------------------------------------------------------------- */

static bool write_event(struct smf_writer *w, const struct render *r, const struct out_event *ev)
{
	switch (ev->kind) {
	case OUT_INPUT:
		return smf_writer_event(w, ev->u.input);
	case OUT_SYSEX: {
		struct midi_msg m = midi_msg_sysex(r->arena + ev->u.sysex.at,
						   (uint16_t)ev->u.sysex.length);
		return smf_writer_midi(w, ev->tick, &m);
	}
	default: {
		struct midi_msg m = midi_msg_make(ev->status, ev->data[0], ev->data[1]);
		return smf_writer_midi(w, ev->tick, &m);
	}
	}
}

static bool write_output(const struct render *r, uint8_t **out, size_t *out_length,
			 struct core_error *err)
{
	const struct smf *in = r->in;
	struct smf_writer w;
	bool ok = smf_writer_begin(&w, r->report->format, in->division);
	for (size_t t = 0; ok && t < in->track_count; t++) {
		const struct out_track *tr = &r->tracks[t];
		ok = smf_writer_track_begin(&w);
		for (size_t i = 0; ok && i < tr->count; i++)
			ok = write_event(&w, r, &tr->events[i]);
		uint32_t end = tr->end_tick;
		if (tr->count > 0 && tr->events[tr->count - 1].tick > end)
			end = tr->events[tr->count - 1].tick;
		ok = ok && smf_writer_track_end(&w, end);
	}
	ok = ok && smf_writer_finish(&w, out, out_length);
	if (!ok) {
		core_fail(err, "", "cannot build the output file: %s", w.error.text);
		smf_writer_discard(&w);
	}
	return ok;
}

bool render_smf(const struct smf *in, const struct engine_spec *spec,
		const struct engine_tunings *tunings, uint8_t **out, size_t *out_length,
		struct render_report *report, struct core_error *err)
{
	memset(report, 0, sizeof *report);
	*out = NULL;
	*out_length = 0;
	struct render r = { .in = in, .report = report };
	report->format = in->format;
	if (in->format == 0 && in->track_count == 0)
		return core_fail(err, "", "byte 10: a format 0 file without a track, nothing to retune");
	if (in->format == 0 && in->track_count > 1)
		report->format = 1; /* the tracks are kept; only format 1 may hold them */
	r.engine = malloc(sizeof *r.engine);
	r.tracks = calloc(in->track_count ? in->track_count : 1, sizeof *r.tracks);
	bool ok = r.engine && r.tracks;
	if (!ok)
		core_fail(err, "", "out of memory");

	uint32_t last_tick = 0;
	for (size_t t = 0; ok && t < in->track_count; t++) {
		r.tracks[t].end_tick = in->tracks[t].end_tick;
		if (in->tracks[t].end_tick > last_tick)
			last_tick = in->tracks[t].end_tick;
	}
	if (ok && in->format == 2) {
		for (size_t t = 0; ok && t < in->track_count; t++)
			ok = perform(&r, spec, tunings, t, t + 1, in->tracks[t].end_tick, err);
	} else if (ok && in->track_count > 0) {
		ok = perform(&r, spec, tunings, 0, in->track_count, last_tick, err);
	}
	ok = ok && write_output(&r, out, out_length, err);

	for (size_t t = 0; r.tracks && t < in->track_count; t++)
		free(r.tracks[t].events);
	free(r.tracks);
	free(r.arena);
	free(r.engine);
	return ok;
}

/* ---- the command ------------------------------------------------------------ */

static const char *display_name(const char *path, const char *stdio_name)
{
	return smf_file_is_stdio(path) ? stdio_name : path;
}

static void print_notice(void *context, const char *line)
{
	fprintf(stderr, "latticed render: %s: warning: %s\n", (const char *)context, line);
}

static void print_warnings(const char *in_name, const struct smf *in,
			   const struct render_report *rep, const struct engine_spec *spec)
{
	for (size_t i = 0; i < rep->left_out && i < RENDER_LEFT_OUT_SHOWN; i++)
		fprintf(stderr, "latticed render: %s: %s\n", in_name, rep->left_out_text[i]);
	if (rep->left_out > RENDER_LEFT_OUT_SHOWN)
		fprintf(stderr, "latticed render: %s: %zu more events left out\n", in_name,
			rep->left_out - RENDER_LEFT_OUT_SHOWN);
	if (rep->format != in->format)
		fprintf(stderr,
			"latticed render: %s: warning: a format %u file with %zu tracks (format 0 holds one); written as format %u\n",
			in_name, in->format, in->track_count, rep->format);
	size_t hanging = rep->hanging_keys + rep->hanging_pedal_notes;
	if (hanging)
		fprintf(stderr,
			"latticed render: %s: warning: %zu note%s left hanging at the end of the input (%zu without a note-off, %zu held by a pedal), released at tick %u\n",
			in_name, hanging, hanging == 1 ? "" : "s", rep->hanging_keys,
			rep->hanging_pedal_notes, rep->hanging_tick);
	if (rep->early_tracks)
		fprintf(stderr,
			"latticed render: %s: warning: hanging notes released from tick %u instead of %u in %zu track%s: the end lies more than %u ticks (the longest delta time, SMF 1.0) after the track's last event\n",
			in_name, rep->early_tick, rep->hanging_tick, rep->early_tracks,
			rep->early_tracks == 1 ? "" : "s", SMF_DELTA_MAX);
	if (rep->zero_tempos)
		fprintf(stderr,
			"latticed render: %s: warning: byte %zu: tempo 0 microseconds per quarter note, which no player can keep (expected 1 to 16777215); copied unchanged%s\n",
			in_name, rep->zero_tempo_offset,
			rep->zero_tempos > 1 ? ", as are the other tempo 0 events" : "");
	notice_text_lines(rep->notices, &rep->engine, spec->output.bend_range, false, print_notice,
			  (void *)in_name);
	if (rep->misses) {
		char line[320];
		notice_text_control_miss(&rep->miss, &spec->control, line, sizeof line);
		fprintf(stderr, "latticed render: %s: warning: %s (%u such message%s in the file)\n", in_name,
			line, rep->misses, rep->misses == 1 ? "" : "s");
	}
}

static void print_summary(const char *in_name, const char *out_name,
			  const struct render_request *req, const struct smf *in,
			  const struct render_report *rep)
{
	const struct output_config *o = &req->cfg->outputs[req->output];
	const struct engine_stats *s = &rep->engine;
	fprintf(stderr,
		"latticed render: %s -> %s: format %u, %zu track%s, output '%s' (%s): %zu events in, %zu out; %u notes (%u shared, %u stolen, %u dropped, %u on silent keys), %u tuning changes\n",
		in_name, out_name, in->format, in->track_count, in->track_count == 1 ? "" : "s",
		o->name, retune_method_name(o->engine.method), rep->events_in, rep->events_out,
		s->notes_on, s->notes_shared, s->notes_stolen, s->notes_dropped, s->silent_keys,
		s->tuning_changes);
}

int render_run(const struct render_request *req)
{
	const char *in_name = display_name(req->in_path, "standard input");
	const char *out_name = display_name(req->out_path, "standard output");
	if (!req->in_path[0] || !req->out_path[0]) {
		fprintf(stderr, "latticed render: the %s file name is empty; name a file, or - for standard %s\n",
			req->in_path[0] ? "output" : "input", req->in_path[0] ? "output" : "input");
		return 2;
	}
	if (smf_file_is_stdio(req->out_path) && isatty(STDOUT_FILENO)) {
		fprintf(stderr,
			"latticed render: refusing to write a MIDI file to a terminal; name a file or redirect standard output\n");
		return 2;
	}

	struct core_error err = { { 0 }, { 0 } };
	uint8_t *bytes = NULL;
	size_t length = 0;
	if (!smf_file_read(req->in_path, &bytes, &length, &err)) {
		fprintf(stderr, "latticed render: %s: %s\n", in_name, err.text);
		return 1;
	}
	struct smf in;
	struct smf_error serr;
	bool ok = smf_read(bytes, length, &in, &serr);
	free(bytes);
	if (!ok) {
		fprintf(stderr, "latticed render: %s: %s\n", in_name, serr.text);
		return 1;
	}

	struct engine_spec spec;
	config_engine_spec(req->cfg, req->output, &spec);
	struct render_report *rep = malloc(sizeof *rep);
	uint8_t *out = NULL;
	size_t out_length = 0;
	int rc = 0;
	if (!rep) {
		fprintf(stderr, "latticed render: out of memory\n");
		rc = 1;
	} else if (!render_smf(&in, &spec, req->tunings, &out, &out_length, rep, &err)) {
		const struct output_config *o = &req->cfg->outputs[req->output];
		if (err.field[0])
			fprintf(stderr, "latticed render: %s: output '%s': %s\n", req->cfg->path,
				o->name, err.text);
		else
			fprintf(stderr, "latticed render: %s: %s\n", in_name, err.text);
		rc = 1;
	} else {
		print_warnings(in_name, &in, rep, &spec);
		if (!smf_file_write(req->out_path, out, out_length, &err)) {
			fprintf(stderr, "latticed render: %s: %s\n", out_name, err.text);
			rc = 1;
		} else if (req->verbose) {
			print_summary(in_name, out_name, req, &in, rep);
		}
	}
	free(out);
	free(rep);
	smf_free(&in);
	return rc;
}
