/*
 * smf_reader: Standard MIDI File bytes to struct smf.
 *
 * One pass over the chunks.  Each track is decoded into a growing event
 * array whose payload pointers point into our own copy of the file, so the
 * caller's buffer may go away after smf_read.  Complete SysEx packets are
 * then copied once more, with their F0 put back in front, into one block so
 * that each can be handed to the engine as an ordinary struct midi_msg.
 * All bounds are checked against the end of the current chunk before a byte
 * is read; errors name the offset of the byte that could not be read or did
 * not make sense.
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

struct track_reader {
	const uint8_t *file;
	size_t pos, end;           /* inside the chunk body */
	size_t number, count;      /* 1-based track number, of count */
	struct smf_track *track;
	size_t capacity;
	struct smf_error *err;
};

static bool ends_inside(struct track_reader *r, size_t missing, const char *what)
{
	return fail_at(r->err, r->end, "track %zu of %zu ends inside an event, expected %zu more byte%s (%s)",
		       r->number, r->count, missing, missing == 1 ? "" : "s", what);
}

static bool read_vlq(struct track_reader *r, uint32_t *value, const char *what)
{
	size_t used;
	switch (vlq_decode(r->file + r->pos, r->end - r->pos, value, &used)) {
	case VLQ_OK:
		r->pos += used;
		return true;
	case VLQ_TRUNCATED:
		return fail_at(r->err, r->end,
			       "track %zu of %zu ends inside an event, expected at least 1 more byte (%s)",
			       r->number, r->count, what);
	case VLQ_TOO_LONG:
		break;
	}
	return fail_at(r->err, r->pos, "track %zu of %zu: %s is longer than 4 bytes (bytes %02X %02X %02X %02X ...)",
		       r->number, r->count, what, r->file[r->pos], r->file[r->pos + 1],
		       r->file[r->pos + 2], r->file[r->pos + 3]);
}

static struct smf_event *new_event(struct track_reader *r)
{
	struct smf_track *t = r->track;
	if (t->event_count == r->capacity) {
		size_t cap = r->capacity ? r->capacity * 2 : 64;
		struct smf_event *ev = realloc(t->events, cap * sizeof *ev);
		if (!ev)
			return NULL;
		t->events = ev;
		r->capacity = cap;
	}
	struct smf_event *ev = &t->events[t->event_count++];
	memset(ev, 0, sizeof *ev);
	return ev;
}

/* Payload of `length` bytes at the current position. */
static bool take_payload(struct track_reader *r, struct smf_event *ev, uint32_t length,
			 const char *what)
{
	size_t left = r->end - r->pos;
	if (length > left)
		return ends_inside(r, length - left, what);
	ev->data = r->file + r->pos;
	ev->length = length;
	r->pos += length;
	return true;
}

static bool read_channel_message(struct track_reader *r, struct smf_event *ev, uint8_t status)
{
	int n = midi_status_data_length(status);
	size_t left = r->end - r->pos;
	if ((size_t)n > left)
		return ends_inside(r, (size_t)n - left, "data bytes of a channel message");
	for (int i = 0; i < n; i++) {
		uint8_t b = r->file[r->pos + (size_t)i];
		if (b & 0x80)
			return fail_at(r->err, r->pos + (size_t)i,
				       "track %zu of %zu: expected data byte %d of %d for status %02X, found %02X",
				       r->number, r->count, i + 1, n, status, b);
	}
	ev->kind = SMF_EVENT_MIDI;
	ev->msg = midi_msg_make(status, n > 0 ? r->file[r->pos] : 0, n > 1 ? r->file[r->pos + 1] : 0);
	ev->data = r->file + r->pos;
	ev->length = (uint32_t)n;
	r->pos += (size_t)n;
	return true;
}

static bool read_track(struct track_reader *r)
{
	uint8_t running = 0;
	uint32_t tick = 0;
	struct smf_track *t = r->track;

	while (r->pos < r->end) {
		size_t event_at = r->pos;
		uint32_t delta;
		if (!read_vlq(r, &delta, "delta time"))
			return false;
		if (delta > UINT32_MAX - tick)
			return fail_at(r->err, event_at, "track %zu of %zu: absolute time exceeds %u ticks",
				       r->number, r->count, UINT32_MAX);
		tick += delta;
		if (r->pos >= r->end)
			return ends_inside(r, 1, "status or data byte after a delta time");

		struct smf_event *ev = new_event(r);
		if (!ev)
			return fail_at(r->err, event_at, "out of memory reading track %zu", r->number);
		ev->tick = tick;
		ev->offset = event_at;

		size_t status_at = r->pos;
		uint8_t b = r->file[r->pos];
		if (b < 0x80) {
			if (!running)
				return fail_at(r->err, status_at,
					       "track %zu of %zu: data byte %02X with no running status, expected a status byte",
					       r->number, r->count, b);
			if (!read_channel_message(r, ev, running))
				return false;
			continue;
		}
		r->pos++;
		if (b < 0xF0) {
			running = b;
			if (!read_channel_message(r, ev, b))
				return false;
			continue;
		}
		uint32_t length;
		switch (b) {
		case 0xFF:
			if (r->pos >= r->end)
				return ends_inside(r, 1, "meta event type");
			ev->kind = SMF_EVENT_META;
			ev->meta_type = r->file[r->pos++];
			if (!read_vlq(r, &length, "meta event length") ||
			    !take_payload(r, ev, length, "meta event data"))
				return false;
			if (ev->meta_type == SMF_META_END_OF_TRACK) {
				t->has_end_of_track = true;
				t->end_tick = tick;
				r->pos = r->end;   /* whatever follows is not part of the track */
				return true;
			}
			break;
		case 0xF0:
		case 0xF7:
			ev->kind = b == 0xF0 ? SMF_EVENT_SYSEX : SMF_EVENT_ESCAPE;
			if (!read_vlq(r, &length, b == 0xF0 ? "SysEx length" : "escape length") ||
			    !take_payload(r, ev, length, b == 0xF0 ? "SysEx bytes" : "escape bytes"))
				return false;
			break;
		default:
			return fail_at(r->err, status_at,
				       "track %zu of %zu: status byte %02X does not belong in a file, expected a channel message, F0, F7 or FF",
				       r->number, r->count, b);
		}
	}
	t->end_tick = t->event_count ? t->events[t->event_count - 1].tick : 0;
	return true;
}

/* A packet that is a whole SysEx message as MIDI 1.0 defines it: data
 * bytes and a final F7.  One with a status byte inside is kept as an event
 * but never handed out as a message (a synth would read it as two). */
static bool is_complete_sysex(const struct smf_event *ev)
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
			if (is_complete_sysex(&s->tracks[i].events[k]))
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
			if (!is_complete_sysex(ev))
				continue;
			p[0] = MIDI_SYSEX;
			memcpy(p + 1, ev->data, ev->length);
			ev->msg = midi_msg_sysex(p, (uint16_t)(ev->length + 1));
			p += 1 + ev->length;
		}
	}
	return true;
}

static bool read_header(struct smf *s, const uint8_t *bytes, size_t length, size_t *pos,
			uint16_t *ntracks, struct smf_error *err)
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
	s->format = be16(bytes + 8);
	*ntracks = be16(bytes + 10);
	s->division = be16(bytes + 12);
	if (s->format > 2)
		return fail_at(err, 8, "format %u is unknown, expected 0, 1 or 2", s->format);
	if (smf_division_is_smpte(s->division)) {
		unsigned fps = smf_division_frames_per_second(s->division);
		if (fps != 24 && fps != 25 && fps != 29 && fps != 30)
			return fail_at(err, 12, "SMPTE division byte %02X is not -24, -25, -29 or -30 frames per second",
				       s->division >> 8);
		if (smf_division_ticks_per_frame(s->division) == 0)
			return fail_at(err, 13, "SMPTE division has 0 ticks per frame, expected at least 1");
	} else if (s->division == 0) {
		return fail_at(err, 12, "division is 0 ticks per quarter note, expected at least 1");
	}
	*pos = 8 + (size_t)hlen;
	return true;
}

bool smf_read(const uint8_t *bytes, size_t length, struct smf *out, struct smf_error *err)
{
	struct smf s = { 0 };
	uint16_t ntracks = 0;
	size_t pos = 0;
	*out = s;
	if (!read_header(&s, bytes, length, &pos, &ntracks, err))
		return false;

	s.bytes = malloc(length);
	s.tracks = calloc(ntracks ? ntracks : 1, sizeof *s.tracks);
	if (!s.bytes || !s.tracks) {
		smf_free(&s);
		return fail_at(err, 0, "out of memory for a file of %zu bytes", length);
	}
	memcpy(s.bytes, bytes, length);
	s.length = length;

	while (s.track_count < ntracks) {
		size_t left = length - pos;
		if (left == 0) {
			fail_at(err, pos, "file ends after %zu of %u tracks, expected another MTrk chunk",
				s.track_count, ntracks);
			goto fail;
		}
		if (left < 8) {
			fail_at(err, pos, "file ends inside a chunk header, expected %zu more bytes",
				8 - left);
			goto fail;
		}
		char name[5];
		chunk_name(s.bytes + pos, name);
		uint32_t clen = be32(s.bytes + pos + 4);
		if (clen > left - 8) {
			fail_at(err, pos + 4, "%s chunk length %u runs past the end of the file, expected %zu more bytes",
				name, clen, (size_t)clen - (left - 8));
			goto fail;
		}
		if (memcmp(s.bytes + pos, "MTrk", 4) == 0) {
			struct track_reader r = {
				.file = s.bytes,
				.pos = pos + 8,
				.end = pos + 8 + clen,
				.number = s.track_count + 1,
				.count = ntracks,
				.track = &s.tracks[s.track_count],
				.err = err,
			};
			r.track->offset = pos;
			s.track_count++;
			if (!read_track(&r))
				goto fail;
		}
		pos += 8 + (size_t)clen;
	}
	if (!build_sysex_messages(&s)) {
		fail_at(err, 0, "out of memory for SysEx messages");
		goto fail;
	}
	*out = s;
	return true;
fail:
	smf_free(&s);
	return false;
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
