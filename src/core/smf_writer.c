/*
 * smf_writer: builds a Standard MIDI File in a growing memory buffer.
 *
 * The MThd track count and each MTrk length are written as placeholders and
 * patched when known (track_end, finish), so events stream straight into
 * the buffer.  Every check is made before the first byte of an event is
 * appended, and the first failure makes the writer refuse everything after
 * it: a half-written event can never reach a finished file.
 */
#include "latticed/smf.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/midi_encoder.h"
#include "vlq.h"

#if defined(__GNUC__)
#define SMF_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define SMF_PRINTF(a, b)
#endif

static bool fail(struct smf_writer *w, const char *fmt, ...) SMF_PRINTF(2, 3);

static bool fail(struct smf_writer *w, const char *fmt, ...)
{
	if (w->failed)
		return false;
	w->failed = true;
	w->error.offset = w->length;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(w->error.text, sizeof w->error.text, fmt, ap);
	va_end(ap);
	return false;
}

static bool reserve(struct smf_writer *w, size_t more)
{
	if (more <= w->capacity - w->length)
		return true;
	size_t cap = w->capacity ? w->capacity : 256;
	while (cap - w->length < more) {
		if (cap > SIZE_MAX / 2)
			return fail(w, "out of memory");
		cap *= 2;
	}
	uint8_t *b = realloc(w->bytes, cap);
	if (!b)
		return fail(w, "out of memory (%zu bytes)", cap);
	w->bytes = b;
	w->capacity = cap;
	return true;
}

static void put(struct smf_writer *w, const void *p, size_t n)
{
	memcpy(w->bytes + w->length, p, n);
	w->length += n;
}

static void put_be32_at(struct smf_writer *w, size_t at, uint32_t v)
{
	w->bytes[at] = (uint8_t)(v >> 24);
	w->bytes[at + 1] = (uint8_t)(v >> 16);
	w->bytes[at + 2] = (uint8_t)(v >> 8);
	w->bytes[at + 3] = (uint8_t)v;
}

bool smf_writer_begin(struct smf_writer *w, uint16_t format, uint16_t division)
{
	*w = (struct smf_writer){ 0 };
	if (format > 2)
		return fail(w, "format %u is unknown, expected 0, 1 or 2", format);
	if (division == 0)
		return fail(w, "division 0 ticks per quarter note, expected at least 1");
	if (smf_division_is_smpte(division)) {
		unsigned fps = smf_division_frames_per_second(division);
		if ((fps != 24 && fps != 25 && fps != 29 && fps != 30) ||
		    smf_division_ticks_per_frame(division) == 0)
			return fail(w, "SMPTE division %04X invalid, expected -24, -25, -29 or -30 frames per second and at least 1 tick per frame",
				    division);
	}
	w->format = format;
	w->division = division;
	static const uint8_t head[14] = { 'M', 'T', 'h', 'd', 0, 0, 0, 6 };
	if (!reserve(w, sizeof head))
		return false;
	put(w, head, sizeof head);
	w->bytes[8] = (uint8_t)(format >> 8);
	w->bytes[9] = (uint8_t)format;
	w->bytes[12] = (uint8_t)(division >> 8);
	w->bytes[13] = (uint8_t)division;
	return true;
}

static bool usable(struct smf_writer *w)
{
	if (w->failed)
		return false;
	if (!w->bytes)
		return fail(w, "smf_writer_begin was not called");
	return true;
}

bool smf_writer_track_begin(struct smf_writer *w)
{
	if (!usable(w))
		return false;
	if (w->in_track)
		return fail(w, "track %u: begun again before its end", w->track_count);
	if (w->format == 0 && w->track_count == 1)
		return fail(w, "format 0 holds exactly one track, a second was begun");
	if (w->track_count == UINT16_MAX)
		return fail(w, "more than %u tracks", UINT16_MAX);
	static const uint8_t head[8] = { 'M', 'T', 'r', 'k', 0, 0, 0, 0 };
	if (!reserve(w, sizeof head))
		return false;
	put(w, head, sizeof head);
	w->track_length_at = w->length - 4;
	w->track_count++;
	w->in_track = true;
	w->last_tick = 0;
	w->running_status = 0;
	return true;
}

/* Checks the tick and appends the delta time; `body` is the event size
 * that will follow, reserved here so the caller's put() cannot fail. */
static bool begin_event(struct smf_writer *w, uint32_t tick, size_t body)
{
	if (!usable(w))
		return false;
	if (!w->in_track)
		return fail(w, "tick %u: event outside a track (call smf_writer_track_begin)", tick);
	if (tick < w->last_tick)
		return fail(w, "track %u, tick %u: ticks must not decrease within a track (previous event at tick %u)",
			    w->track_count, tick, w->last_tick);
	uint32_t delta = tick - w->last_tick;
	uint8_t v[VLQ_MAX_BYTES];
	size_t n = vlq_encode(delta, v);
	if (n == 0)
		return fail(w, "track %u, tick %u: %u ticks since the previous event, more than a delta time can hold (%u)",
			    w->track_count, tick, delta, VLQ_MAX_VALUE);
	if (!reserve(w, n + body))
		return false;
	put(w, v, n);
	w->last_tick = tick;
	return true;
}

/* status byte, length, payload: SysEx, escape (type unused) and meta */
static bool put_packet(struct smf_writer *w, uint32_t tick, uint8_t status, int meta_type,
		       const uint8_t *bytes, uint32_t length)
{
	uint8_t v[VLQ_MAX_BYTES];
	size_t n = vlq_encode(length, v);
	if (n == 0 && usable(w))
		return fail(w, "track %u, tick %u: %u bytes are more than a length can hold (%u)",
			    w->track_count, tick, length, VLQ_MAX_VALUE);
	if (length > 0 && !bytes && usable(w))
		return fail(w, "track %u, tick %u: no bytes given for a %u-byte event", w->track_count,
			    tick, length);
	if (!begin_event(w, tick, 2 + n + (size_t)length))
		return false;
	put(w, &status, 1);
	if (meta_type >= 0) {
		uint8_t t = (uint8_t)meta_type;
		put(w, &t, 1);
	}
	put(w, v, n);
	if (length)
		put(w, bytes, length);
	/* strict: running status only between channel messages */
	w->running_status = 0;
	return true;
}

bool smf_writer_sysex(struct smf_writer *w, uint32_t tick, const uint8_t *bytes, uint32_t length)
{
	if (!usable(w))
		return false;
	for (uint32_t i = 0; bytes && i < length; i++) {
		bool last = i + 1 == length;
		if ((bytes[i] & 0x80) && !(last && bytes[i] == MIDI_SYSEX_END))
			return fail(w, "track %u, tick %u: SysEx byte %u is %02X, expected data bytes and a final F7",
				    w->track_count, tick, i, bytes[i]);
	}
	return put_packet(w, tick, MIDI_SYSEX, -1, bytes, length);
}

bool smf_writer_escape(struct smf_writer *w, uint32_t tick, const uint8_t *bytes, uint32_t length)
{
	return put_packet(w, tick, MIDI_SYSEX_END, -1, bytes, length);
}

bool smf_meta_length_ok(uint8_t type, uint32_t length, uint32_t *expected)
{
	switch (type) {
	case SMF_META_SEQUENCE_NUMBER:
		*expected = 2;
		return length == 0 || length == 2;
	case SMF_META_CHANNEL_PREFIX:
		*expected = 1;
		break;
	case SMF_META_TEMPO:
		*expected = 3;
		break;
	case SMF_META_SMPTE_OFFSET:
		*expected = 5;
		break;
	case SMF_META_TIME_SIGNATURE:
		*expected = 4;
		break;
	case SMF_META_KEY_SIGNATURE:
		*expected = 2;
		break;
	default:
		return true;
	}
	return length == *expected;
}

bool smf_writer_meta(struct smf_writer *w, uint32_t tick, uint8_t type, const uint8_t *data,
		     uint32_t length)
{
	if (!usable(w))
		return false;
	if (type == SMF_META_END_OF_TRACK)
		return fail(w, "track %u, tick %u: end-of-track is written by smf_writer_track_end",
			    w->track_count, tick);
	if (type & 0x80)
		return fail(w, "track %u, tick %u: meta type %02X, expected 00..7F", w->track_count,
			    tick, type);
	uint32_t expected = 0;
	if (!smf_meta_length_ok(type, length, &expected))
		return fail(w, "track %u, tick %u: meta %02X has %u data bytes, expected %u",
			    w->track_count, tick, type, length, expected);
	return put_packet(w, tick, 0xFF, type, data, length);
}

bool smf_writer_tempo(struct smf_writer *w, uint32_t tick, uint32_t usec_per_quarter)
{
	if (!usable(w))
		return false;
	if (usec_per_quarter == 0 || usec_per_quarter > 0xFFFFFF)
		return fail(w, "track %u, tick %u: tempo %u us per quarter note, expected 1..16777215",
			    w->track_count, tick, usec_per_quarter);
	uint8_t d[3] = { (uint8_t)(usec_per_quarter >> 16), (uint8_t)(usec_per_quarter >> 8),
			 (uint8_t)usec_per_quarter };
	return smf_writer_meta(w, tick, SMF_META_TEMPO, d, 3);
}

bool smf_writer_midi(struct smf_writer *w, uint32_t tick, const struct midi_msg *m)
{
	if (!usable(w))
		return false;
	if (m->status == MIDI_SYSEX) {
		if (!midi_msg_is_valid(m))
			return fail(w, "track %u, tick %u: SysEx message is not F0 <data bytes> F7",
				    w->track_count, tick);
		return smf_writer_sysex(w, tick, m->sysex + 1, (uint32_t)m->sysex_length - 1);
	}
	if (!midi_msg_is_channel(m))
		return fail(w, "track %u, tick %u: status %02X does not belong in a file, expected a channel message or SysEx",
			    w->track_count, tick, m->status);
	if (!midi_msg_is_valid(m))
		return fail(w, "track %u, tick %u: message %02X %02X %02X has a data byte above 7F",
			    w->track_count, tick, m->status, m->data[0], m->data[1]);
	uint8_t bytes[3];
	size_t n = midi_msg_encode(m, bytes, sizeof bytes);
	size_t skip = m->status == w->running_status ? 1 : 0;
	if (!begin_event(w, tick, n))
		return false;
	put(w, bytes + skip, n - skip);
	w->running_status = m->status;
	return true;
}

bool smf_writer_event(struct smf_writer *w, const struct smf_event *ev)
{
	switch (ev->kind) {
	case SMF_EVENT_MIDI:
		return smf_writer_midi(w, ev->tick, &ev->msg);
	case SMF_EVENT_SYSEX:
		return smf_writer_sysex(w, ev->tick, ev->data, ev->length);
	case SMF_EVENT_ESCAPE:
		return smf_writer_escape(w, ev->tick, ev->data, ev->length);
	case SMF_EVENT_META:
		return smf_writer_meta(w, ev->tick, ev->meta_type, ev->data, ev->length);
	}
	return fail(w, "event kind %d unknown", (int)ev->kind);
}

bool smf_writer_track_end(struct smf_writer *w, uint32_t tick)
{
	if (!usable(w))
		return false;
	if (!w->in_track)
		return fail(w, "tick %u: end of a track that was not begun", tick);
	static const uint8_t eot[3] = { 0xFF, SMF_META_END_OF_TRACK, 0x00 };
	if (!begin_event(w, tick, sizeof eot))
		return false;
	put(w, eot, sizeof eot);
	size_t body = w->length - (w->track_length_at + 4);
	if (body > UINT32_MAX)
		return fail(w, "track %u: %zu bytes, more than a chunk can hold", w->track_count, body);
	put_be32_at(w, w->track_length_at, (uint32_t)body);
	w->in_track = false;
	return true;
}

bool smf_writer_finish(struct smf_writer *w, uint8_t **bytes, size_t *length)
{
	if (!usable(w))
		return false;
	if (w->in_track)
		return fail(w, "track %u was not ended (call smf_writer_track_end)", w->track_count);
	if (w->format == 0 && w->track_count != 1)
		return fail(w, "format 0 holds exactly one track, found %u", w->track_count);
	w->bytes[10] = (uint8_t)(w->track_count >> 8);
	w->bytes[11] = (uint8_t)w->track_count;
	*bytes = w->bytes;
	*length = w->length;
	w->bytes = NULL;
	w->length = w->capacity = 0;
	return true;
}

void smf_writer_discard(struct smf_writer *w)
{
	free(w->bytes);
	w->bytes = NULL;
	w->length = w->capacity = 0;
}
