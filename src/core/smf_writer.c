/*
 * smf_writer: Standard MIDI File bytes from events.
 *
 * Two levels.  A track writer turns one track's events into the bytes of
 * its MTrk body (delta times, running status between channel messages,
 * packets) in a growing buffer that its owner may empty at any time
 * (smf_track_writer_take), so a render can keep many tracks going at once
 * and put their bytes wherever it likes; the body's size is counted
 * either way, for the chunk header.  The file writer holds one track
 * writer for the track it has open and copies each finished body, behind
 * its chunk header, into one buffer with the MThd header in front.
 *
 * Every check is made before the first byte of an event is appended, and
 * the first failure makes a writer refuse everything after it: a
 * half-written event can never reach a finished file.
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

static void set_error(struct smf_error *e, size_t offset, const char *fmt, va_list ap)
{
	e->offset = offset;
	vsnprintf(e->text, sizeof e->text, fmt, ap);
}

/* Grows *bytes so that `more` bytes fit after `length`, from `first` bytes. */
static bool reserve_bytes(uint8_t **bytes, size_t *capacity, size_t length, size_t more, size_t first,
			  size_t *tried)
{
	if (more <= *capacity - length)
		return true;
	size_t cap = *capacity ? *capacity : first;
	while (cap - length < more) {
		if (cap > SIZE_MAX / 2) {
			*tried = 0;
			return false;
		}
		cap *= 2;
	}
	uint8_t *b = realloc(*bytes, cap);
	if (!b) {
		*tried = cap;
		return false;
	}
	*bytes = b;
	*capacity = cap;
	return true;
}

/* ---- the track writer --------------------------------------------------------- */

static bool track_fail(struct smf_track_writer *w, const char *fmt, ...) SMF_PRINTF(2, 3);

static bool track_fail(struct smf_track_writer *w, const char *fmt, ...)
{
	if (w->failed)
		return false;
	w->failed = true;
	va_list ap;
	va_start(ap, fmt);
	set_error(w->error, (size_t)w->size, fmt, ap);
	va_end(ap);
	return false;
}

/* A track's buffer starts small: a render may keep thousands at once. */
#define TRACK_FIRST_BYTES 64

static bool track_reserve(struct smf_track_writer *w, size_t more)
{
	size_t tried;
	if (reserve_bytes(&w->bytes, &w->capacity, w->length, more, TRACK_FIRST_BYTES, &tried))
		return true;
	if (tried)
		return track_fail(w, "out of memory (%zu bytes)", tried);
	return track_fail(w, "out of memory");
}

static void track_put(struct smf_track_writer *w, const void *p, size_t n)
{
	const uint8_t *from = p;
	uint8_t *to = w->bytes + w->length;
	/* most pieces are a delta time or a channel message: 1 to 3 bytes,
	 * cheaper copied here than by a call */
	switch (n) {
	case 3:
		to[2] = from[2];
		/* fall through */
	case 2:
		to[1] = from[1];
		/* fall through */
	case 1:
		to[0] = from[0];
		/* fall through */
	case 0:
		break;
	default:
		memcpy(to, from, n);
	}
	w->length += n;
	w->size += n;
}

void smf_track_writer_init(struct smf_track_writer *w, uint16_t number, struct smf_error *error)
{
	*w = (struct smf_track_writer){ .number = number, .error = error };
}

void smf_track_writer_free(struct smf_track_writer *w)
{
	free(w->bytes);
	w->bytes = NULL;
	w->length = w->capacity = 0;
}

void smf_track_writer_take(struct smf_track_writer *w)
{
	w->length = 0;
}

static bool track_usable(struct smf_track_writer *w)
{
	if (w->failed)
		return false;
	if (w->ended)
		return track_fail(w, "track %u: an event after its end", w->number);
	return true;
}

/* Checks the tick and appends the delta time; `body` is the event size
 * that will follow, reserved here so the caller's put() cannot fail. */
static bool begin_event(struct smf_track_writer *w, uint32_t tick, size_t body)
{
	if (!track_usable(w))
		return false;
	if (tick < w->last_tick)
		return track_fail(w, "track %u, tick %u: ticks must not decrease within a track (previous event at tick %u)",
				  w->number, tick, w->last_tick);
	uint32_t delta = tick - w->last_tick;
	uint8_t v[VLQ_MAX_BYTES];
	size_t n = vlq_encode(delta, v);
	if (n == 0)
		return track_fail(w, "track %u, tick %u: %u ticks since the previous event, more than a delta time can hold (%u)",
				  w->number, tick, delta, VLQ_MAX_VALUE);
	if (!track_reserve(w, n + body))
		return false;
	track_put(w, v, n);
	w->last_tick = tick;
	return true;
}

/* status byte, length, payload: SysEx, escape (type unused) and meta */
static bool put_packet(struct smf_track_writer *w, uint32_t tick, uint8_t status, int meta_type,
		       const uint8_t *bytes, uint32_t length)
{
	uint8_t v[VLQ_MAX_BYTES];
	size_t n = vlq_encode(length, v);
	if (n == 0 && track_usable(w))
		return track_fail(w, "track %u, tick %u: %u bytes are more than a length can hold (%u)",
				  w->number, tick, length, VLQ_MAX_VALUE);
	if (length > 0 && !bytes && track_usable(w))
		return track_fail(w, "track %u, tick %u: no bytes given for a %u-byte event", w->number,
				  tick, length);
	if (!begin_event(w, tick, 2 + n + (size_t)length))
		return false;
	track_put(w, &status, 1);
	if (meta_type >= 0) {
		uint8_t t = (uint8_t)meta_type;
		track_put(w, &t, 1);
	}
	track_put(w, v, n);
	if (length)
		track_put(w, bytes, length);
	/* strict: running status only between channel messages */
	w->running_status = 0;
	return true;
}

bool smf_track_writer_sysex(struct smf_track_writer *w, uint32_t tick, const uint8_t *bytes,
			    uint32_t length)
{
	if (!track_usable(w))
		return false;
	for (uint32_t i = 0; bytes && i < length; i++) {
		bool last = i + 1 == length;
		if ((bytes[i] & 0x80) && !(last && bytes[i] == MIDI_SYSEX_END))
			return track_fail(w, "track %u, tick %u: SysEx byte %u is %02X, expected data bytes and a final F7",
					  w->number, tick, i, bytes[i]);
	}
	return put_packet(w, tick, MIDI_SYSEX, -1, bytes, length);
}

bool smf_track_writer_escape(struct smf_track_writer *w, uint32_t tick, const uint8_t *bytes,
			     uint32_t length)
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

bool smf_track_writer_meta(struct smf_track_writer *w, uint32_t tick, uint8_t type,
			   const uint8_t *data, uint32_t length)
{
	if (!track_usable(w))
		return false;
	if (type == SMF_META_END_OF_TRACK)
		return track_fail(w, "track %u, tick %u: end-of-track is written by smf_writer_track_end",
				  w->number, tick);
	if (type & 0x80)
		return track_fail(w, "track %u, tick %u: meta type %02X, expected 00..7F", w->number,
				  tick, type);
	uint32_t expected = 0;
	if (!smf_meta_length_ok(type, length, &expected))
		return track_fail(w, "track %u, tick %u: meta %02X has %u data bytes, expected %u",
				  w->number, tick, type, length, expected);
	return put_packet(w, tick, 0xFF, type, data, length);
}

bool smf_track_writer_tempo(struct smf_track_writer *w, uint32_t tick, uint32_t usec_per_quarter)
{
	if (!track_usable(w))
		return false;
	if (usec_per_quarter == 0 || usec_per_quarter > 0xFFFFFF)
		return track_fail(w, "track %u, tick %u: tempo %u us per quarter note, expected 1..16777215",
				  w->number, tick, usec_per_quarter);
	uint8_t d[3] = { (uint8_t)(usec_per_quarter >> 16), (uint8_t)(usec_per_quarter >> 8),
			 (uint8_t)usec_per_quarter };
	return smf_track_writer_meta(w, tick, SMF_META_TEMPO, d, 3);
}

bool smf_track_writer_midi(struct smf_track_writer *w, uint32_t tick, const struct midi_msg *m)
{
	if (!track_usable(w))
		return false;
	if (m->status == MIDI_SYSEX) {
		if (!midi_msg_is_valid(m))
			return track_fail(w, "track %u, tick %u: SysEx message is not F0 <data bytes> F7",
					  w->number, tick);
		return smf_track_writer_sysex(w, tick, m->sysex + 1, (uint32_t)m->sysex_length - 1);
	}
	if (!midi_msg_is_channel(m))
		return track_fail(w, "track %u, tick %u: status %02X does not belong in a file, expected a channel message or SysEx",
				  w->number, tick, m->status);
	if (!midi_msg_is_valid(m))
		return track_fail(w, "track %u, tick %u: message %02X %02X %02X has a data byte above 7F",
				  w->number, tick, m->status, m->data[0], m->data[1]);
	uint8_t bytes[3];
	size_t n = midi_msg_encode(m, bytes, sizeof bytes);
	size_t skip = m->status == w->running_status ? 1 : 0;
	if (!begin_event(w, tick, n))
		return false;
	track_put(w, bytes + skip, n - skip);
	w->running_status = m->status;
	return true;
}

bool smf_track_writer_event(struct smf_track_writer *w, const struct smf_event *ev)
{
	switch (ev->kind) {
	case SMF_EVENT_MIDI:
		return smf_track_writer_midi(w, ev->tick, &ev->msg);
	case SMF_EVENT_SYSEX:
		return smf_track_writer_sysex(w, ev->tick, ev->data, ev->length);
	case SMF_EVENT_ESCAPE:
		return smf_track_writer_escape(w, ev->tick, ev->data, ev->length);
	case SMF_EVENT_META:
		return smf_track_writer_meta(w, ev->tick, ev->meta_type, ev->data, ev->length);
	}
	return track_fail(w, "event kind %d unknown", (int)ev->kind);
}

bool smf_track_writer_end(struct smf_track_writer *w, uint32_t tick)
{
	static const uint8_t eot[3] = { 0xFF, SMF_META_END_OF_TRACK, 0x00 };
	if (!begin_event(w, tick, sizeof eot))
		return false;
	track_put(w, eot, sizeof eot);
	if (w->size > UINT32_MAX)
		return track_fail(w, "track %u: %llu bytes, more than a chunk can hold", w->number,
				  (unsigned long long)w->size);
	w->ended = true;
	return true;
}

/* ---- the file writer ------------------------------------------------------------- */

/* Bytes of the file so far, the open track's body included. */
static size_t written(const struct smf_writer *w)
{
	return w->length + (w->in_track ? (size_t)w->track.size : 0);
}

static bool fail(struct smf_writer *w, const char *fmt, ...) SMF_PRINTF(2, 3);

static bool fail(struct smf_writer *w, const char *fmt, ...)
{
	if (w->failed)
		return false;
	w->failed = true;
	va_list ap;
	va_start(ap, fmt);
	set_error(&w->error, written(w), fmt, ap);
	va_end(ap);
	return false;
}

/* After a call on the open track: its failure is the file's. */
static bool track_result(struct smf_writer *w, bool ok)
{
	if (ok || w->failed)
		return ok;
	w->failed = true;
	w->error = w->track_error;
	w->error.offset += w->length;
	return false;
}

static bool reserve(struct smf_writer *w, size_t more)
{
	size_t tried;
	if (reserve_bytes(&w->bytes, &w->capacity, w->length, more, 256, &tried))
		return true;
	if (tried)
		return fail(w, "out of memory (%zu bytes)", tried);
	return fail(w, "out of memory");
}

static void put(struct smf_writer *w, const void *p, size_t n)
{
	memcpy(w->bytes + w->length, p, n);
	w->length += n;
}

static bool header_fail(struct smf_error *err, const char *text)
{
	err->offset = 0;
	snprintf(err->text, sizeof err->text, "%s", text);
	return false;
}

bool smf_header_check(uint16_t format, uint16_t division, struct smf_error *err)
{
	if (format > 2) {
		err->offset = 0;
		snprintf(err->text, sizeof err->text, "format %u is unknown, expected 0, 1 or 2", format);
		return false;
	}
	if (division == 0)
		return header_fail(err, "division 0 ticks per quarter note, expected at least 1");
	if (smf_division_is_smpte(division)) {
		unsigned fps = smf_division_frames_per_second(division);
		if ((fps != 24 && fps != 25 && fps != 29 && fps != 30) ||
		    smf_division_ticks_per_frame(division) == 0) {
			err->offset = 0;
			snprintf(err->text, sizeof err->text,
				 "SMPTE division %04X invalid, expected -24, -25, -29 or -30 frames per second and at least 1 tick per frame",
				 division);
			return false;
		}
	}
	return true;
}

void smf_header_encode(uint8_t out[SMF_HEADER_BYTES], uint16_t format, uint16_t tracks, uint16_t division)
{
	static const uint8_t head[SMF_HEADER_BYTES] = { 'M', 'T', 'h', 'd', 0, 0, 0, 6 };
	memcpy(out, head, sizeof head);
	out[8] = (uint8_t)(format >> 8);
	out[9] = (uint8_t)format;
	out[10] = (uint8_t)(tracks >> 8);
	out[11] = (uint8_t)tracks;
	out[12] = (uint8_t)(division >> 8);
	out[13] = (uint8_t)division;
}

void smf_chunk_header_encode(uint8_t out[SMF_CHUNK_HEADER_BYTES], uint32_t length)
{
	memcpy(out, "MTrk", 4);
	out[4] = (uint8_t)(length >> 24);
	out[5] = (uint8_t)(length >> 16);
	out[6] = (uint8_t)(length >> 8);
	out[7] = (uint8_t)length;
}

bool smf_writer_begin(struct smf_writer *w, uint16_t format, uint16_t division)
{
	*w = (struct smf_writer){ 0 };
	struct smf_error e;
	if (!smf_header_check(format, division, &e))
		return fail(w, "%s", e.text);
	w->format = format;
	w->division = division;
	if (!reserve(w, SMF_HEADER_BYTES))
		return false;
	smf_header_encode(w->bytes, format, 0, division);
	w->length = SMF_HEADER_BYTES;
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
	if (!reserve(w, SMF_CHUNK_HEADER_BYTES))
		return false;
	smf_chunk_header_encode(w->bytes + w->length, 0);
	w->length += SMF_CHUNK_HEADER_BYTES;
	w->track_count++;
	w->in_track = true;
	uint8_t *keep = w->track.bytes;
	size_t capacity = w->track.capacity;
	smf_track_writer_init(&w->track, w->track_count, &w->track_error);
	w->track.bytes = keep;         /* the last track's buffer, reused */
	w->track.capacity = capacity;
	return true;
}

/* Events need an open track. */
static bool in_track(struct smf_writer *w, uint32_t tick)
{
	if (!usable(w))
		return false;
	if (!w->in_track)
		return fail(w, "tick %u: event outside a track (call smf_writer_track_begin)", tick);
	return true;
}

bool smf_writer_sysex(struct smf_writer *w, uint32_t tick, const uint8_t *bytes, uint32_t length)
{
	return in_track(w, tick) && track_result(w, smf_track_writer_sysex(&w->track, tick, bytes, length));
}

bool smf_writer_escape(struct smf_writer *w, uint32_t tick, const uint8_t *bytes, uint32_t length)
{
	return in_track(w, tick) && track_result(w, smf_track_writer_escape(&w->track, tick, bytes, length));
}

bool smf_writer_meta(struct smf_writer *w, uint32_t tick, uint8_t type, const uint8_t *data,
		     uint32_t length)
{
	return in_track(w, tick) && track_result(w, smf_track_writer_meta(&w->track, tick, type, data, length));
}

bool smf_writer_tempo(struct smf_writer *w, uint32_t tick, uint32_t usec_per_quarter)
{
	if (!usable(w))
		return false;
	if (usec_per_quarter == 0 || usec_per_quarter > 0xFFFFFF)
		return fail(w, "track %u, tick %u: tempo %u us per quarter note, expected 1..16777215",
			    w->track_count, tick, usec_per_quarter);
	return in_track(w, tick) && track_result(w, smf_track_writer_tempo(&w->track, tick, usec_per_quarter));
}

bool smf_writer_midi(struct smf_writer *w, uint32_t tick, const struct midi_msg *m)
{
	return in_track(w, tick) && track_result(w, smf_track_writer_midi(&w->track, tick, m));
}

bool smf_writer_event(struct smf_writer *w, const struct smf_event *ev)
{
	return in_track(w, ev->tick) && track_result(w, smf_track_writer_event(&w->track, ev));
}

bool smf_writer_track_end(struct smf_writer *w, uint32_t tick)
{
	if (!usable(w))
		return false;
	if (!w->in_track)
		return fail(w, "tick %u: end of a track that was not begun", tick);
	if (!track_result(w, smf_track_writer_end(&w->track, tick)) || !reserve(w, w->track.length))
		return false;
	put(w, w->track.bytes, w->track.length);
	size_t header = w->length - w->track.length - SMF_CHUNK_HEADER_BYTES;
	smf_chunk_header_encode(w->bytes + header, (uint32_t)w->track.size);
	smf_track_writer_take(&w->track);
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
	smf_track_writer_free(&w->track);
	return true;
}

void smf_writer_discard(struct smf_writer *w)
{
	free(w->bytes);
	w->bytes = NULL;
	w->length = w->capacity = 0;
	smf_track_writer_free(&w->track);
}
