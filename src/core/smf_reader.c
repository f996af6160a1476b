/*
 * smf_reader: Standard MIDI File bytes to struct smf.
 *
 * A cursor reads one track's events in place, one at a time, with no
 * allocation: smf_index_read walks the chunks once with it, checking every
 * event (and showing it to a caller that wants to see them) and noting
 * where each track lies, so that a render can then merge
 * the tracks with a cursor each, holding nothing but the file.  smf_read
 * decodes each checked track into an event array whose payload pointers
 * point into our own copy of the file, so the caller's buffer may go away
 * after it.  Complete SysEx packets are then copied once more, with their
 * F0 put back in front, into one block so that each can be handed to the
 * engine as an ordinary struct midi_msg.  All bounds are checked against
 * the end of the current chunk before a byte is read; errors name the
 * offset of the byte that could not be read or did not make sense.
 */
#include "latticed/smf.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "vlq.h"

#if defined(__GNUC__)
#define SMF_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define SMF_PRINTF(a, b)
#endif

static bool fail_at(struct smf_error *err, size_t offset, const char *fmt, ...) SMF_PRINTF(3, 4);

static bool fail_at(struct smf_error *err, size_t offset, const char *fmt, ...)
{
	if (!err)
		return false;
	err->offset = offset;
	int n = snprintf(err->text, sizeof err->text, "byte %zu: ", offset);
	if (n < 0 || (size_t)n >= sizeof err->text)
		return false;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(err->text + n, sizeof err->text - (size_t)n, fmt, ap);
	va_end(ap);
	return false;
}

static uint32_t be32(const uint8_t *p)
{
	return ((uint32_t)p[0] << 24) | ((uint32_t)p[1] << 16) | ((uint32_t)p[2] << 8) | p[3];
}

static uint16_t be16(const uint8_t *p)
{
	return (uint16_t)((p[0] << 8) | p[1]);
}

/* Chunk types are printed for the user; keep them printable. */
static void chunk_name(const uint8_t *p, char out[5])
{
	for (int i = 0; i < 4; i++)
		out[i] = (p[i] >= 0x20 && p[i] < 0x7F) ? (char)p[i] : '?';
	out[4] = '\0';
}

static bool ends_inside(struct smf_cursor *c, struct smf_error *err, size_t missing, const char *what)
{
	return fail_at(err, c->end, "track %zu of %zu ends inside an event, expected %zu more byte%s (%s)",
		       c->number, c->count, missing, missing == 1 ? "" : "s", what);
}

static bool read_vlq(struct smf_cursor *c, struct smf_error *err, uint32_t *value, const char *what)
{
	size_t used;
	switch (vlq_decode(c->file + c->pos, c->end - c->pos, value, &used)) {
	case VLQ_OK:
		c->pos += used;
		return true;
	case VLQ_TRUNCATED:
		return fail_at(err, c->end,
			       "track %zu of %zu ends inside an event, expected at least 1 more byte (%s)",
			       c->number, c->count, what);
	case VLQ_TOO_LONG:
		break;
	}
	return fail_at(err, c->pos, "track %zu of %zu: %s is longer than 4 bytes (bytes %02X %02X %02X %02X ...)",
		       c->number, c->count, what, c->file[c->pos], c->file[c->pos + 1],
		       c->file[c->pos + 2], c->file[c->pos + 3]);
}

/* Payload of `length` bytes at the current position. */
static bool take_payload(struct smf_cursor *c, struct smf_error *err, struct smf_event *ev,
			 uint32_t length, const char *what)
{
	size_t left = c->end - c->pos;
	if (length > left)
		return ends_inside(c, err, length - left, what);
	ev->data = c->file + c->pos;
	ev->length = length;
	c->pos += length;
	return true;
}

static bool read_channel_message(struct smf_cursor *c, struct smf_error *err, struct smf_event *ev,
				 uint8_t status)
{
	int n = midi_status_data_length(status);
	size_t left = c->end - c->pos;
	if ((size_t)n > left)
		return ends_inside(c, err, (size_t)n - left, "data bytes of a channel message");
	for (int i = 0; i < n; i++) {
		uint8_t b = c->file[c->pos + (size_t)i];
		if (b & 0x80)
			return fail_at(err, c->pos + (size_t)i,
				       "track %zu of %zu: expected data byte %d of %d for status %02X, found %02X",
				       c->number, c->count, i + 1, n, status, b);
	}
	ev->kind = SMF_EVENT_MIDI;
	ev->msg = midi_msg_make(status, n > 0 ? c->file[c->pos] : 0, n > 1 ? c->file[c->pos + 1] : 0);
	ev->data = c->file + c->pos;
	ev->length = (uint32_t)n;
	c->pos += (size_t)n;
	return true;
}

/* A meta, SysEx or escape event after its status byte b. */
static bool read_packet(struct smf_cursor *c, struct smf_error *err, struct smf_event *ev, uint8_t b)
{
	uint32_t length;
	if (b == 0xFF) {
		if (c->pos >= c->end)
			return ends_inside(c, err, 1, "meta event type");
		ev->kind = SMF_EVENT_META;
		ev->meta_type = c->file[c->pos++];
		if (!read_vlq(c, err, &length, "meta event length") ||
		    !take_payload(c, err, ev, length, "meta event data"))
			return false;
		if (ev->meta_type == SMF_META_END_OF_TRACK)
			c->pos = c->end;   /* whatever follows is not part of the track */
		return true;
	}
	ev->kind = b == 0xF0 ? SMF_EVENT_SYSEX : SMF_EVENT_ESCAPE;
	return read_vlq(c, err, &length, b == 0xF0 ? "SysEx length" : "escape length") &&
	       take_payload(c, err, ev, length, b == 0xF0 ? "SysEx bytes" : "escape bytes");
}

/* The event at the cursor (its delta time read); false with err set. */
static bool read_event(struct smf_cursor *c, struct smf_error *err, struct smf_event *ev)
{
	size_t status_at = c->pos;
	uint8_t b = c->file[c->pos];
	if (b < 0x80) {
		if (!c->running)
			return fail_at(err, status_at,
				       "track %zu of %zu: data byte %02X with no running status, expected a status byte",
				       c->number, c->count, b);
		return read_channel_message(c, err, ev, c->running);
	}
	c->pos++;
	if (b < 0xF0) {
		c->running = b;
		return read_channel_message(c, err, ev, b);
	}
	if (b == 0xFF || b == 0xF0 || b == 0xF7)
		return read_packet(c, err, ev, b);
	return fail_at(err, status_at,
		       "track %zu of %zu: status byte %02X does not belong in a file, expected a channel message, F0, F7 or FF",
		       c->number, c->count, b);
}

void smf_cursor_init(struct smf_cursor *c, const uint8_t *bytes, const struct smf_index *x, size_t track)
{
	const struct smf_track_info *t = &x->tracks[track];
	*c = (struct smf_cursor){ .file = bytes, .pos = t->start, .end = t->end, .number = track + 1,
				  .count = x->track_count };
}

enum smf_cursor_result smf_cursor_next(struct smf_cursor *c, struct smf_event *ev, struct smf_error *err)
{
	if (c->pos >= c->end)
		return SMF_CURSOR_END;
	size_t event_at = c->pos;
	uint32_t delta;
	if (!read_vlq(c, err, &delta, "delta time"))
		return SMF_CURSOR_ERROR;
	if (delta > UINT32_MAX - c->tick) {
		fail_at(err, event_at, "track %zu of %zu: absolute time exceeds %u ticks", c->number,
			c->count, UINT32_MAX);
		return SMF_CURSOR_ERROR;
	}
	c->tick += delta;
	if (c->pos >= c->end) {
		ends_inside(c, err, 1, "status or data byte after a delta time");
		return SMF_CURSOR_ERROR;
	}
	*ev = (struct smf_event){ .tick = c->tick, .offset = event_at };
	return read_event(c, err, ev) ? SMF_CURSOR_EVENT : SMF_CURSOR_ERROR;
}

/* Every event of one track, shown to `each`; fills in what the index keeps. */
static bool check_track(struct smf_cursor *c, struct smf_track_info *t, smf_event_fn each, void *context,
			struct smf_error *err)
{
	struct smf_event ev;
	enum smf_cursor_result r;
	uint32_t last = 0;
	while ((r = smf_cursor_next(c, &ev, err)) == SMF_CURSOR_EVENT) {
		t->event_count++;
		last = ev.tick;
		if (each)
			each(context, c->number - 1, &ev);
		if (ev.kind == SMF_EVENT_META && ev.meta_type == SMF_META_END_OF_TRACK)
			t->has_end_of_track = true;
	}
	t->end_tick = last;
	return r == SMF_CURSOR_END;
}

/* A packet that is a whole SysEx message as MIDI 1.0 defines it: data
 * bytes and a final F7.  One with a status byte inside is kept as an event
 * but never handed out as a message (a synth would read it as two). */
bool smf_event_is_complete_sysex(const struct smf_event *ev)
{
	if (ev->kind != SMF_EVENT_SYSEX || ev->length < 1 || ev->length >= UINT16_MAX ||
	    ev->data[ev->length - 1] != MIDI_SYSEX_END)
		return false;
	for (uint32_t i = 0; i + 1 < ev->length; i++)
		if (ev->data[i] & 0x80)
			return false;
	return true;
}

/* Gives each complete SysEx packet a contiguous F0 ... F7 copy. */
static bool build_sysex_messages(struct smf *s)
{
	size_t total = 0;
	for (size_t i = 0; i < s->track_count; i++)
		for (size_t k = 0; k < s->tracks[i].event_count; k++)
			if (smf_event_is_complete_sysex(&s->tracks[i].events[k]))
				total += 1 + s->tracks[i].events[k].length;
	if (total == 0)
		return true;
	s->sysex_messages = malloc(total);
	if (!s->sysex_messages)
		return false;
	uint8_t *p = s->sysex_messages;
	for (size_t i = 0; i < s->track_count; i++) {
		for (size_t k = 0; k < s->tracks[i].event_count; k++) {
			struct smf_event *ev = &s->tracks[i].events[k];
			if (!smf_event_is_complete_sysex(ev))
				continue;
			p[0] = MIDI_SYSEX;
			memcpy(p + 1, ev->data, ev->length);
			ev->msg = midi_msg_sysex(p, (uint16_t)(ev->length + 1));
			p += 1 + ev->length;
		}
	}
	return true;
}

static bool read_header(struct smf_index *x, const uint8_t *bytes, size_t length, size_t *pos,
			struct smf_error *err)
{
	if (length < 4 || memcmp(bytes, "MThd", 4) != 0)
		return fail_at(err, 0, "not a Standard MIDI File: expected the chunk type \"MThd\" at the start");
	if (length < 8)
		return fail_at(err, 4, "file ends inside the MThd chunk header, expected %zu more bytes (chunk length)",
			       8 - length);
	uint32_t hlen = be32(bytes + 4);
	if (hlen < 6)
		return fail_at(err, 4, "MThd length is %u, expected at least 6", hlen);
	if (hlen > length - 8)
		return fail_at(err, 4, "MThd length %u runs past the end of the file, expected %zu more bytes",
			       hlen, (size_t)hlen - (length - 8));
	x->format = be16(bytes + 8);
	x->track_count = be16(bytes + 10);
	x->division = be16(bytes + 12);
	if (x->format > 2)
		return fail_at(err, 8, "format %u is unknown, expected 0, 1 or 2", x->format);
	if (smf_division_is_smpte(x->division)) {
		unsigned fps = smf_division_frames_per_second(x->division);
		if (fps != 24 && fps != 25 && fps != 29 && fps != 30)
			return fail_at(err, 12, "SMPTE division byte %02X is not -24, -25, -29 or -30 frames per second",
				       x->division >> 8);
		if (smf_division_ticks_per_frame(x->division) == 0)
			return fail_at(err, 13, "SMPTE division has 0 ticks per frame, expected at least 1");
	} else if (x->division == 0) {
		return fail_at(err, 12, "division is 0 ticks per quarter note, expected at least 1");
	}
	*pos = 8 + (size_t)hlen;
	return true;
}

/* The chunk header at pos: false with err set, or its length in *clen. */
static bool read_chunk_header(const uint8_t *bytes, size_t length, size_t pos, size_t found,
			      size_t declared, uint32_t *clen, struct smf_error *err)
{
	size_t left = length - pos;
	if (left == 0)
		return fail_at(err, pos, "file ends after %zu of %zu tracks, expected another MTrk chunk",
			       found, declared);
	if (left < 8)
		return fail_at(err, pos, "file ends inside a chunk header, expected %zu more bytes", 8 - left);
	char name[5];
	chunk_name(bytes + pos, name);
	*clen = be32(bytes + pos + 4);
	if (*clen > left - 8)
		return fail_at(err, pos + 4, "%s chunk length %u runs past the end of the file, expected %zu more bytes",
			       name, *clen, (size_t)*clen - (left - 8));
	return true;
}

bool smf_index_read(const uint8_t *bytes, size_t length, struct smf_index *out, smf_event_fn each,
		    void *context, struct smf_error *err)
{
	struct smf_index x = { 0 };
	size_t pos = 0, found = 0;
	*out = x;
	if (!read_header(&x, bytes, length, &pos, err))
		return false;
	x.tracks = calloc(x.track_count ? x.track_count : 1, sizeof *x.tracks);
	if (!x.tracks)
		return fail_at(err, 0, "out of memory for %zu tracks", x.track_count);
	while (found < x.track_count) {
		uint32_t clen = 0;
		if (!read_chunk_header(bytes, length, pos, found, x.track_count, &clen, err))
			goto fail;
		if (memcmp(bytes + pos, "MTrk", 4) == 0) {
			struct smf_track_info *t = &x.tracks[found];
			*t = (struct smf_track_info){ .offset = pos, .start = pos + 8, .end = pos + 8 + clen };
			struct smf_cursor c;
			smf_cursor_init(&c, bytes, &x, found++);
			if (!check_track(&c, t, each, context, err))
				goto fail;
		}
		pos += 8 + (size_t)clen;
	}
	*out = x;
	return true;
fail:
	smf_index_free(&x);
	return false;
}

void smf_index_free(struct smf_index *x)
{
	free(x->tracks);
	*x = (struct smf_index){ 0 };
}

/* Decodes a track the index has checked into its event array. */
static bool load_track(struct smf *s, const struct smf_index *x, size_t track, struct smf_error *err)
{
	struct smf_track *t = &s->tracks[track];
	const struct smf_track_info *info = &x->tracks[track];
	t->offset = info->offset;
	t->has_end_of_track = info->has_end_of_track;
	t->end_tick = info->end_tick;
	t->events = malloc((info->event_count ? info->event_count : 1) * sizeof *t->events);
	if (!t->events)
		return fail_at(err, info->offset, "out of memory reading track %zu", track + 1);
	struct smf_cursor c;
	smf_cursor_init(&c, s->bytes, x, track);
	while (t->event_count < info->event_count &&
	       smf_cursor_next(&c, &t->events[t->event_count], err) == SMF_CURSOR_EVENT)
		t->event_count++;
	return true;
}

bool smf_read(const uint8_t *bytes, size_t length, struct smf *out, struct smf_error *err)
{
	struct smf s = { 0 };
	struct smf_index x;
	*out = s;
	if (!smf_index_read(bytes, length, &x, NULL, NULL, err))
		return false;
	s.format = x.format;
	s.division = x.division;
	s.bytes = malloc(length ? length : 1);
	s.tracks = calloc(x.track_count ? x.track_count : 1, sizeof *s.tracks);
	if (!s.bytes || !s.tracks) {
		smf_index_free(&x);
		smf_free(&s);
		return fail_at(err, 0, "out of memory for a file of %zu bytes", length);
	}
	memcpy(s.bytes, bytes, length);
	s.length = length;
	bool ok = true;
	for (; ok && s.track_count < x.track_count; s.track_count++)
		ok = load_track(&s, &x, s.track_count, err);
	smf_index_free(&x);
	if (ok && !build_sysex_messages(&s))
		ok = fail_at(err, 0, "out of memory for SysEx messages");
	if (!ok) {
		smf_free(&s);
		return false;
	}
	*out = s;
	return true;
}

void smf_free(struct smf *s)
{
	if (s->tracks)
		for (size_t i = 0; i < s->track_count; i++)
			free(s->tracks[i].events);
	free(s->tracks);
	free(s->bytes);
	free(s->sysex_messages);
	*s = (struct smf){ 0 };
}

bool smf_event_tempo(const struct smf_event *ev, uint32_t *usec_per_quarter)
{
	if (ev->kind != SMF_EVENT_META || ev->meta_type != SMF_META_TEMPO || ev->length != 3)
		return false;
	*usec_per_quarter = ((uint32_t)ev->data[0] << 16) | ((uint32_t)ev->data[1] << 8) | ev->data[2];
	return true;
}
