/*
 * render_cmd: `latticed render` (model in render_cmd.h).
 *
 * Memory.  The file is read into memory once and never copied: an index
 * of its tracks (smf_index_read, which checks every event first, so a
 * broken file fails before anything is rendered, with the reader's own
 * message) and a cursor per track merge the tracks as they are read; the
 * output is built per track in bounded memory (render_out.c).
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
#include "latticed/smf.h"
#include "notice_text.h"
#include "render_out.h"
#include "smf_file.h"

#define CC_SUSTAIN 64
#define CC_SOSTENUTO 66
#define SYSEX_MESSAGE_MAX (1 + UINT16_MAX)

/* What a track needs for releasing what hangs there. */
struct release_point {
	bool set;                  /* tick is chosen */
	uint32_t tick;             /* where what hangs in this track is released */
};

struct render {
	const uint8_t *bytes;             /* the input file */
	const struct smf_index *in;
	struct render_out out;
	struct release_point *release;    /* per track */
	uint8_t *sysex;                   /* F0 and a SysEx packet, for the engine */
	/* where the engine's messages go now */
	size_t track;
	uint32_t tick;
	uint32_t release_end;             /* the tick hanging notes are released at */
	/* for releasing what the input left hanging */
	uint32_t key_track[16][128];
	uint32_t pedal_track[16];
	struct engine *engine;
	struct render_report *report;
	uint8_t hears[(UINT16_MAX + 1) / 8]; /* the track holds an event the engine hears */
};

static void on_emit(void *context, const struct midi_msg *m)
{
	struct render *r = context;
	render_out_midi(&r->out, r->track, r->tick, m);
}

/* ---- what a strict file cannot hold ---------------------------------------- */

/* NULL when the event can be written, else why not (in why). */
static const char *unwritable(const struct smf_event *ev, char *why, size_t size)
{
	if (ev->kind == SMF_EVENT_META) {
		uint32_t expected = 0;
		if (ev->meta_type & 0x80) {
			snprintf(why, size, "meta event type %02X, expected 00..7F; left out", ev->meta_type);
			return why;
		}
		if (!smf_meta_length_ok(ev->meta_type, ev->length, &expected)) {
			snprintf(why, size, "meta event %02X with %u data bytes, expected %u; left out",
				 ev->meta_type, ev->length, expected);
			return why;
		}
		return NULL;
	}
	if (ev->kind == SMF_EVENT_SYSEX) {
		for (uint32_t i = 0; i < ev->length; i++) {
			uint8_t b = ev->data[i];
			if ((b & 0x80) && !(i + 1 == ev->length && b == MIDI_SYSEX_END)) {
				snprintf(why, size,
					 "SysEx byte %u is %02X, expected data bytes and a final F7; left out",
					 i + 1, b);
				return why;
			}
		}
	}
	return NULL;
}

/* As unwritable(), but noting it in the report (the survey, in file order). */
static bool writable(struct render *r, const struct smf_event *ev)
{
	struct render_report *rep = r->report;
	char why[RENDER_LINE_MAX - 32];
	if (unwritable(ev, why, sizeof why)) {
		if (rep->left_out < RENDER_LEFT_OUT_SHOWN)
			snprintf(rep->left_out_text[rep->left_out], RENDER_LINE_MAX, "byte %zu: %s",
				 ev->offset, why);
		rep->left_out++;
		return false;
	}
	uint32_t tempo;
	if (smf_event_tempo(ev, &tempo) && tempo == 0 && rep->zero_tempos++ == 0)
		rep->zero_tempo_offset = ev->offset;
	return true;
}

/* Channel messages and complete SysEx messages go to the engine. */
static bool engine_hears(const struct smf_event *ev)
{
	return ev->kind == SMF_EVENT_MIDI || smf_event_is_complete_sysex(ev);
}

static bool is_end_of_track(const struct smf_event *ev)
{
	return ev->kind == SMF_EVENT_META && ev->meta_type == SMF_META_END_OF_TRACK;
}

/* Each event as the index is read, in file order: what is left out, and
 * which tracks hold something the engine hears. */
static void survey(void *context, size_t track, const struct smf_event *ev)
{
	struct render *r = context;
	if (is_end_of_track(ev))
		return;
	r->report->events_in++;
	if (writable(r, ev) && engine_hears(ev))
		r->hears[track / 8] |= (uint8_t)(1u << (track % 8));
}

static bool track_hears(const struct render *r, size_t track)
{
	return r->hears[track / 8] & (1u << (track % 8));
}

/* ---- merging the tracks ------------------------------------------------------- */

struct head {
	struct smf_cursor cursor;
	struct smf_event ev;       /* its next event in the merge */
	size_t track;
};

/* The track's next event that is merged: not its end, writable. */
static bool advance(struct head *h)
{
	char why[8];
	while (smf_cursor_next(&h->cursor, &h->ev, NULL) == SMF_CURSOR_EVENT)
		if (!is_end_of_track(&h->ev) && !unwritable(&h->ev, why, sizeof why))
			return true;
	return false;
}

/* By tick, then track: with each track in file order, the merged order. */
static bool before(const struct head *a, const struct head *b)
{
	return a->ev.tick != b->ev.tick ? a->ev.tick < b->ev.tick : a->track < b->track;
}

/* A binary min-heap of heads. */
struct merge {
	struct head *heads;
	struct head **heap;
	size_t count;
};

static void sift_down(struct merge *m, size_t i)
{
	for (;;) {
		size_t least = i, a = 2 * i + 1, b = a + 1;
		if (a < m->count && before(m->heap[a], m->heap[least]))
			least = a;
		if (b < m->count && before(m->heap[b], m->heap[least]))
			least = b;
		if (least == i)
			return;
		struct head *x = m->heap[i];
		m->heap[i] = m->heap[least];
		m->heap[least] = x;
		i = least;
	}
}

static bool merge_open(struct merge *m, const struct render *r, size_t first, size_t last)
{
	size_t n = last - first;
	m->heads = malloc((n ? n : 1) * sizeof *m->heads);
	m->heap = malloc((n ? n : 1) * sizeof *m->heap);
	m->count = 0;
	if (!m->heads || !m->heap)
		return false;
	for (size_t i = 0; i < n; i++) {
		struct head *h = &m->heads[i];
		h->track = first + i;
		smf_cursor_init(&h->cursor, r->bytes, r->in, h->track);
		if (advance(h))
			m->heap[m->count++] = h;
	}
	for (size_t i = m->count; i-- > 0;)
		sift_down(m, i);
	return true;
}

/* The earliest head was used: on to that track's next event. */
static void merge_next(struct merge *m)
{
	if (!advance(m->heap[0]))
		m->heap[0] = m->heap[--m->count];
	sift_down(m, 0);
}

static void merge_close(struct merge *m)
{
	free(m->heads);
	free(m->heap);
}

/* ---- one performance --------------------------------------------------------- */

static void feed(struct render *r, size_t track, const struct smf_event *ev)
{
	r->track = track;
	r->tick = ev->tick;
	if (!engine_hears(ev)) {
		render_out_event(&r->out, track, ev);
		return;
	}
	struct midi_msg m = ev->msg;
	if (ev->kind == SMF_EVENT_SYSEX) {
		r->sysex[0] = MIDI_SYSEX;
		memcpy(r->sysex + 1, ev->data, ev->length);
		m = midi_msg_sysex(r->sysex, (uint16_t)(ev->length + 1));
	} else {
		int ch = midi_msg_channel(&m);
		uint8_t type = midi_msg_type(&m);
		if (type == MIDI_NOTE_ON && m.data[1] > 0)
			r->key_track[ch][m.data[0]] = (uint32_t)track;
		else if (type == MIDI_CONTROL && (m.data[0] == CC_SUSTAIN || m.data[0] == CC_SOSTENUTO))
			r->pedal_track[ch] = (uint32_t)track;
	}
	/* source 0 for every track: a note-off ends its note whatever track it is in */
	engine_handle(r->engine, 0, &m);
}

/* From now on the engine's messages go to `track`, at the tick where what
 * hangs there is released: `end`, or as far as one delta time reaches
 * past the track's last event if the end lies beyond that. */
static void release_in(struct render *r, size_t track, uint32_t end)
{
	struct release_point *p = &r->release[track];
	if (!p->set) {
		uint32_t last = r->out.tracks[track].last_tick;
		p->tick = end;
		if (end > last && end - last > SMF_DELTA_MAX) {
			p->tick = last + SMF_DELTA_MAX;
			r->report->early_tracks++;
			if (r->report->early_tick == 0 || p->tick < r->report->early_tick)
				r->report->early_tick = p->tick;
		}
		p->set = true;
	}
	r->track = track;
	r->tick = p->tick;
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

static void add_stats(struct render *r)
{
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
}

static void start_engine(struct render *r, size_t setup_track)
{
	r->track = setup_track;
	r->tick = 0;
	engine_start(r->engine);
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
	size_t setup_track = first;
	for (size_t t = last; t-- > first;)
		if (track_hears(r, t))
			setup_track = t;
	struct merge m;
	if (!merge_open(&m, r, first, last)) {
		merge_close(&m);
		return core_fail(err, "", "out of memory merging %zu tracks", last - first);
	}
	if (!engine_init(r->engine, spec, tunings, on_emit, r, err)) {
		merge_close(&m);
		return false;
	}
	for (int ch = 0; ch < 16; ch++) {
		r->pedal_track[ch] = (uint32_t)setup_track;
		for (int key = 0; key < 128; key++)
			r->key_track[ch][key] = (uint32_t)setup_track;
	}
	bool set_up = false;
	for (; m.count > 0; merge_next(&m)) {
		const struct head *h = m.heap[0];
		if (!set_up && (h->ev.tick > 0 || h->track > setup_track ||
				(h->track == setup_track && h->ev.kind != SMF_EVENT_META))) {
			start_engine(r, setup_track);
			set_up = true;
		}
		feed(r, h->track, &h->ev);
	}
	merge_close(&m);
	if (!set_up)
		start_engine(r, setup_track);
	release_hanging(r, setup_track, end_tick);
	add_stats(r);
	return true;
}

/* ---- writing ---------------------------------------------------------------- */

static bool render_tracks(struct render *r, const struct engine_spec *spec,
			  const struct engine_tunings *tunings, struct core_error *err)
{
	const struct smf_index *in = r->in;
	uint32_t last_tick = 0;
	for (size_t t = 0; t < in->track_count; t++)
		if (in->tracks[t].end_tick > last_tick)
			last_tick = in->tracks[t].end_tick;
	bool ok = true;
	if (in->format == 2) {
		for (size_t t = 0; ok && t < in->track_count; t++)
			ok = perform(r, spec, tunings, t, t + 1, in->tracks[t].end_tick, err);
	} else if (in->track_count > 0) {
		ok = perform(r, spec, tunings, 0, in->track_count, last_tick, err);
	}
	if (!ok)
		return false;
	render_out_end(&r->out, in);
	r->report->events_out = r->out.events;
	if (r->out.in_memory)
		snprintf(r->report->in_memory_why, sizeof r->report->in_memory_why, "%s", r->out.in_memory_why);
	return render_out_check(&r->out, r->report->format, in->division, err);
}

static void render_free(struct render *r)
{
	render_out_free(&r->out);
	free(r->release);
	free(r->sysex);
	free(r->engine);
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

static void print_warnings(const char *in_name, const struct smf_index *in,
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
	if (rep->in_memory_why[0])
		fprintf(stderr, "latticed render: %s: warning: %s; the rest of the output was kept in memory\n",
			in_name, rep->in_memory_why);
}

static void print_summary(const char *in_name, const char *out_name,
			  const struct render_request *req, const struct smf_index *in,
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

/* What can fail, and who is to blame: the input, the config, the output. */
enum render_fault { FAULT_NONE, FAULT_INPUT, FAULT_OUTPUT };

/* Reads, renders and writes the file; on failure *fault says whose. */
static bool render_file(struct render *r, const uint8_t *bytes, size_t length,
			const struct render_request *req, const char *in_name, struct core_error *err,
			enum render_fault *fault)
{
	struct smf_index in;
	struct smf_error serr;
	*fault = FAULT_INPUT;
	if (!smf_index_read(bytes, length, &in, survey, r, &serr)) {
		core_fail(err, "", "%s", serr.text);
		return false;
	}
	struct render_report *report = r->report;
	struct engine_spec spec;
	config_engine_spec(req->cfg, req->output, &spec);
	r->in = &in;
	report->format = in.format;
	bool ok = true;
	if (in.format == 0 && in.track_count == 0)
		ok = core_fail(err, "", "byte 10: a format 0 file without a track, nothing to retune");
	if (in.format == 0 && in.track_count > 1)
		report->format = 1; /* the tracks are kept; only format 1 may hold them */
	r->engine = malloc(sizeof *r->engine);
	r->release = calloc(in.track_count ? in.track_count : 1, sizeof *r->release);
	r->sysex = malloc(SYSEX_MESSAGE_MAX);
	bool out = render_out_init(&r->out, in.track_count);
	if (ok && !(r->engine && r->release && r->sysex && out))
		ok = core_fail(err, "", "out of memory");
	ok = ok && render_tracks(r, &spec, req->tunings, err);
	if (ok) {
		*fault = FAULT_OUTPUT;
		print_warnings(in_name, &in, report, &spec);
		ok = render_out_write(&r->out, req->out_path, report->format, in.division, err);
		if (ok && req->verbose)
			print_summary(in_name, display_name(req->out_path, "standard output"), req, &in, report);
	}
	render_free(r);
	smf_index_free(&in);
	return ok;
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
	struct render_report *rep = calloc(1, sizeof *rep);
	struct render *r = calloc(1, sizeof *r);
	int rc = 0;
	enum render_fault fault = FAULT_NONE;
	if (!rep || !r) {
		fprintf(stderr, "latticed render: out of memory\n");
		rc = 1;
	} else {
		*r = (struct render){ .bytes = bytes, .report = rep, .out = { .scratch = { .fd = -1 } } };
		if (!render_file(r, bytes, length, req, in_name, &err, &fault)) {
			const struct output_config *o = &req->cfg->outputs[req->output];
			if (fault == FAULT_OUTPUT)
				fprintf(stderr, "latticed render: %s: %s\n", out_name, err.text);
			else if (err.field[0])
				fprintf(stderr, "latticed render: %s: output '%s': %s\n", req->cfg->path,
					o->name, err.text);
			else
				fprintf(stderr, "latticed render: %s: %s\n", in_name, err.text);
			rc = 1;
		}
	}
	free(r);
	free(rep);
	free(bytes);
	return rc;
}
