/*
 * fuzz_smf: the Standard MIDI File reader on arbitrary bytes, and the
 * writer on whatever the reader accepts.
 *
 * Checked, abort() on the first failure:
 *   - smf_read either succeeds or fails with a message that names a byte
 *     offset inside the file ("byte N: ...");
 *   - on success, writing every track back with the SMF writer (events as
 *     read, end-of-track at the track's end tick) succeeds exactly when
 *     every event is one the strict writer takes (smf.h: a format 0 file
 *     holds one track; meta types 00..7F with the lengths SMF 1.0 fixes;
 *     SysEx bytes after F0 are data bytes with at most a final F7); a
 *     refusal carries a message;
 *   - the written file reads back, and equals the first reading: format,
 *     division, tracks, and per track every event (tick, kind, meta type,
 *     message, payload) and the end tick; the rewrite always ends each
 *     track with an end-of-track.
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/smf.h"

static void die(const char *what)
{
	fprintf(stderr, "fuzz_smf: %s\n", what);
	abort();
}

/* Lengths fixed by SMF 1.0 for the meta events that have one. */
static bool meta_writable(const struct smf_event *ev)
{
	if (ev->meta_type & 0x80)
		return false;
	switch (ev->meta_type) {
	case SMF_META_SEQUENCE_NUMBER:
		return ev->length == 0 || ev->length == 2;
	case SMF_META_CHANNEL_PREFIX:
		return ev->length == 1;
	case SMF_META_TEMPO:
		return ev->length == 3;
	case SMF_META_SMPTE_OFFSET:
		return ev->length == 5;
	case SMF_META_TIME_SIGNATURE:
		return ev->length == 4;
	case SMF_META_KEY_SIGNATURE:
		return ev->length == 2;
	default:
		return true;
	}
}

static bool sysex_writable(const struct smf_event *ev)
{
	for (uint32_t i = 0; i < ev->length; i++)
		if ((ev->data[i] & 0x80) && !(i + 1 == ev->length && ev->data[i] == 0xF7))
			return false;
	return true;
}

static bool is_end_of_track(const struct smf_event *ev)
{
	return ev->kind == SMF_EVENT_META && ev->meta_type == SMF_META_END_OF_TRACK;
}

static bool writable(const struct smf *s)
{
	if (s->format == 0 && s->track_count != 1)
		return false;
	for (size_t t = 0; t < s->track_count; t++) {
		const struct smf_track *tr = &s->tracks[t];
		for (size_t i = 0; i < tr->event_count; i++) {
			const struct smf_event *ev = &tr->events[i];
			if (is_end_of_track(ev))
				continue;
			if (ev->kind == SMF_EVENT_META && !meta_writable(ev))
				return false;
			if (ev->kind == SMF_EVENT_SYSEX && !sysex_writable(ev))
				return false;
		}
	}
	return true;
}

static bool rewrite(const struct smf *s, uint8_t **bytes, size_t *length, struct smf_writer *w)
{
	if (!smf_writer_begin(w, s->format, s->division))
		return false;
	for (size_t t = 0; t < s->track_count; t++) {
		const struct smf_track *tr = &s->tracks[t];
		if (!smf_writer_track_begin(w))
			return false;
		for (size_t i = 0; i < tr->event_count; i++)
			if (!is_end_of_track(&tr->events[i]) && !smf_writer_event(w, &tr->events[i]))
				return false;
		if (!smf_writer_track_end(w, tr->end_tick))
			return false;
	}
	return smf_writer_finish(w, bytes, length);
}

static bool same_event(const struct smf_event *a, const struct smf_event *b)
{
	if (a->tick != b->tick || a->kind != b->kind || a->length != b->length)
		return false;
	if (a->length && memcmp(a->data, b->data, a->length) != 0)
		return false;
	switch (a->kind) {
	case SMF_EVENT_META:
		return a->meta_type == b->meta_type;
	case SMF_EVENT_MIDI:
	case SMF_EVENT_SYSEX:
		return a->msg.status == b->msg.status &&
		       (a->msg.status == 0 || midi_msg_equal(&a->msg, &b->msg));
	case SMF_EVENT_ESCAPE:
		return true;
	}
	return false;
}

static void compare(const struct smf *a, const struct smf *b)
{
	if (a->format != b->format || a->division != b->division || a->track_count != b->track_count)
		die("the rewritten file has another header");
	for (size_t t = 0; t < a->track_count; t++) {
		const struct smf_track *x = &a->tracks[t], *y = &b->tracks[t];
		size_t nx = x->event_count - (x->has_end_of_track ? 1 : 0);
		if (!y->has_end_of_track)
			die("a rewritten track has no end-of-track");
		if (y->event_count - 1 != nx)
			die("a rewritten track has another number of events");
		if (x->end_tick != y->end_tick)
			die("a rewritten track ends at another tick");
		for (size_t i = 0; i < nx; i++)
			if (!same_event(&x->events[i], &y->events[i])) {
				fprintf(stderr, "track %zu event %zu differs\n", t, i);
				die("a rewritten event differs");
			}
	}
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	struct smf s;
	struct smf_error err = {0};
	if (!smf_read(data, size, &s, &err)) {
		if (strncmp(err.text, "byte ", 5) != 0 || err.offset > size)
			die("a refusal without a byte offset in the file");
		if (s.tracks || s.bytes || s.sysex_messages)
			die("a refused file left memory behind");
		return 0;
	}
	for (size_t t = 0; t < s.track_count; t++) {
		const struct smf_track *tr = &s.tracks[t];
		for (size_t i = 0; i < tr->event_count; i++) {
			const struct smf_event *ev = &tr->events[i];
			if (ev->kind == SMF_EVENT_MIDI && !midi_msg_is_valid(&ev->msg))
				die("the reader made an invalid channel message");
			/* a SysEx handed out as a message goes to a synth as it is */
			if (ev->kind == SMF_EVENT_SYSEX && ev->msg.status && !midi_msg_is_valid(&ev->msg))
				die("the reader made an invalid SysEx message");
			if (i > 0 && ev->tick < tr->events[i - 1].tick)
				die("ticks went backwards");
		}
	}

	struct smf_writer w;
	uint8_t *bytes = NULL;
	size_t length = 0;
	bool expected = writable(&s);
	bool written = rewrite(&s, &bytes, &length, &w);
	if (written != expected) {
		fprintf(stderr, "writer: %s\n", written ? "accepted" : w.error.text);
		die(written ? "the writer took an event it must refuse" : "the writer refused a writable file");
	}
	if (!written) {
		if (!w.error.text[0])
			die("the writer refused without a message");
		smf_writer_discard(&w);
		smf_free(&s);
		return 0;
	}
	struct smf back;
	if (!smf_read(bytes, length, &back, &err)) {
		fprintf(stderr, "reading back: %s\n", err.text);
		die("the rewritten file does not read back");
	}
	compare(&s, &back);
	smf_free(&back);
	free(bytes);
	smf_free(&s);
	return 0;
}
