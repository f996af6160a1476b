/*
 * smf: Standard MIDI Files (format 0, 1 and 2) read from and written to
 * memory buffers.  No I/O: the caller loads and saves the bytes.
 *
 * Reading is lenient where real files are known to bend the rules, strict
 * where going on would mean guessing:
 *   - the MThd length field is honoured (extra header bytes skipped);
 *     unknown chunks are skipped; bytes after the last declared track are
 *     ignored;
 *   - running status is kept across meta and SysEx events (the SMF text
 *     says they cancel it, but files in the wild rely on it persisting);
 *   - a missing end-of-track event is tolerated (has_end_of_track false),
 *     bytes after an end-of-track inside its chunk are ignored;
 *   - events are kept as written: a Note On with velocity 0 stays a Note On;
 *   - errors: no MThd first, a chunk running past the end of the file, a
 *     track ending inside an event, a delta time or length of more than
 *     four bytes, a data byte with no running status, a status byte that
 *     does not belong in a file (F1..F6, F8..FE), fewer MTrk chunks than
 *     the header declares, an unknown format, a zero division.
 * Every error names the byte offset in the file and what was expected.
 * smf_read allocates (an offline path, at load time); struct smf owns a
 * copy of the file, and every payload pointer points into that copy.  A
 * whole file can also be read in place, one event at a time, with an
 * index of its tracks and a cursor per track (smf_index_read,
 * smf_cursor_next): nothing is held but the caller's bytes.
 *
 * Writing is strict: MThd length 6, exact chunk lengths, running status only
 * between channel messages (never across meta or SysEx), SysEx as
 * F0 <length> <bytes after F0 including F7>, escapes as F7 <length> <bytes>,
 * ticks non-decreasing within a track, exactly one end-of-track per track.
 */
#ifndef LATTICED_SMF_H
#define LATTICED_SMF_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/midi_msg.h"

/* meta event types (SMF 1.0) */
enum {
	SMF_META_SEQUENCE_NUMBER = 0x00,
	SMF_META_TEXT = 0x01,
	SMF_META_COPYRIGHT = 0x02,
	SMF_META_TRACK_NAME = 0x03,
	SMF_META_INSTRUMENT = 0x04,
	SMF_META_LYRIC = 0x05,
	SMF_META_MARKER = 0x06,
	SMF_META_CUE = 0x07,
	SMF_META_CHANNEL_PREFIX = 0x20,
	SMF_META_END_OF_TRACK = 0x2F,
	SMF_META_TEMPO = 0x51,
	SMF_META_SMPTE_OFFSET = 0x54,
	SMF_META_TIME_SIGNATURE = 0x58,
	SMF_META_KEY_SIGNATURE = 0x59,
	SMF_META_SEQUENCER = 0x7F,
};

/* 120 bpm, assumed until the first tempo event (from memory). */
#define SMF_DEFAULT_TEMPO_USEC 500000u

enum smf_event_kind {
	SMF_EVENT_MIDI,     /* a channel message */
	SMF_EVENT_SYSEX,    /* F0 <len> <bytes>: a SysEx message or its first packet */
	SMF_EVENT_ESCAPE,   /* F7 <len> <bytes>: a continuation packet or bytes sent as they are */
	SMF_EVENT_META,     /* FF <type> <len> <data> */
};

struct smf_event {
	uint32_t tick;             /* absolute, from the start of the track */
	enum smf_event_kind kind;
	uint8_t meta_type;         /* META only */
	/* MIDI: the channel message as written (velocity 0 kept).
	 * SYSEX whose bytes are data bytes ending with F7 and fit 65535
	 * bytes: the complete message F0 ... F7 (in struct smf's own
	 * buffer), usable as is.  Otherwise status 0. */
	struct midi_msg msg;
	/* The payload inside struct smf's copy of the file: MIDI: the data
	 * bytes; SYSEX: the bytes after the length (normally ending in F7);
	 * ESCAPE: the raw bytes; META: the meta data. */
	const uint8_t *data;
	uint32_t length;
	size_t offset;             /* file offset of the event's delta time */
};

struct smf_track {
	struct smf_event *events;  /* the end-of-track meta, when present, is the last one */
	size_t event_count;
	bool has_end_of_track;
	uint32_t end_tick;         /* tick of end-of-track, else of the last event (0 if none) */
	size_t offset;             /* file offset of the MTrk chunk */
};

struct smf {
	uint16_t format;           /* 0, 1 or 2 */
	uint16_t division;         /* raw; see smf_division_* */
	struct smf_track *tracks;
	size_t track_count;        /* as declared in MThd */
	uint8_t *bytes;            /* copy of the file */
	size_t length;
	uint8_t *sysex_messages;   /* backing store of SYSEX events' msg */
};

/* The longest delta time a track event can carry (four VLQ bytes, SMF 1.0). */
#define SMF_DELTA_MAX 0x0FFFFFFFu

#define SMF_ERROR_TEXT_MAX 200

struct smf_error {
	size_t offset;             /* reader: file offset; writer: bytes written so far */
	char text[SMF_ERROR_TEXT_MAX];  /* reader: "byte 1234: track 2 of 3 ends inside ..." */
};

/* Division: bit 15 clear = ticks per quarter note; set = SMPTE, high byte
 * minus the frames per second (-24, -25, -29 = 30 drop-frame, -30), low
 * byte ticks per frame (SMF 1.0). */
static inline bool smf_division_is_smpte(uint16_t division)
{
	return (division & 0x8000) != 0;
}

/* 0 for SMPTE division. */
static inline unsigned smf_division_ticks_per_quarter(uint16_t division)
{
	return smf_division_is_smpte(division) ? 0 : division;
}

/* 24, 25, 29 (30 drop-frame) or 30; 0 for metrical division. */
static inline unsigned smf_division_frames_per_second(uint16_t division)
{
	if (!smf_division_is_smpte(division))
		return 0;
	return (unsigned)(256 - (division >> 8));
}

/* 0 for metrical division. */
static inline unsigned smf_division_ticks_per_frame(uint16_t division)
{
	return smf_division_is_smpte(division) ? (division & 0xFFu) : 0;
}

/* SMPTE division from frames per second (24, 25, 29 or 30) and ticks per frame. */
static inline uint16_t smf_division_smpte(unsigned frames_per_second, unsigned ticks_per_frame)
{
	return (uint16_t)(((256 - (frames_per_second & 0xFF)) << 8) | (ticks_per_frame & 0xFF));
}

/* Fills *out (which smf_free must release) or returns false with *err set
 * (*out then owns nothing). */
bool smf_read(const uint8_t *bytes, size_t length, struct smf *out, struct smf_error *err);
void smf_free(struct smf *s);

/* --- reading in place: an index of the tracks, a cursor per track ---------- */

struct smf_track_info {
	size_t offset;             /* file offset of the MTrk chunk */
	size_t start, end;         /* its body, [start, end) */
	size_t event_count;        /* its events, the end-of-track meta included */
	bool has_end_of_track;
	uint32_t end_tick;         /* as in struct smf_track */
};

struct smf_index {
	uint16_t format;
	uint16_t division;
	size_t track_count;        /* as declared in MThd */
	struct smf_track_info *tracks;
};

/* An event of track `track` (0-based), as a cursor gives it. */
typedef void (*smf_event_fn)(void *context, size_t track, const struct smf_event *ev);

/* Checks the whole file as smf_read does (the same errors, found in the
 * same order) and notes where each track lies, copying nothing: the bytes
 * must outlive the index and every cursor on it.  `each` (may be NULL)
 * sees every event of every track in file order on the way, the bad one
 * excepted.  smf_index_free releases *out. */
bool smf_index_read(const uint8_t *bytes, size_t length, struct smf_index *out, smf_event_fn each,
		    void *context, struct smf_error *err);
void smf_index_free(struct smf_index *x);

struct smf_cursor {
	/* private state */
	const uint8_t *file;
	size_t pos, end;
	size_t number, count;      /* 1-based track number, of count (for errors) */
	uint32_t tick;
	uint8_t running;
};

enum smf_cursor_result { SMF_CURSOR_EVENT, SMF_CURSOR_END, SMF_CURSOR_ERROR };

void smf_cursor_init(struct smf_cursor *c, const uint8_t *bytes, const struct smf_index *x, size_t track);
/* The track's next event, its end-of-track meta included, as smf_read
 * would hold it, except that a SYSEX event's msg is left empty (status 0:
 * see smf_event_is_complete_sysex); ERROR (with *err set) only on bytes
 * smf_index_read would refuse. */
enum smf_cursor_result smf_cursor_next(struct smf_cursor *c, struct smf_event *ev, struct smf_error *err);

/* A SYSEX event holding a whole message: data bytes and a final F7, fewer
 * than 65535 bytes (smf_read gives those a msg). */
bool smf_event_is_complete_sysex(const struct smf_event *ev);

/* The tempo of an FF 51 event in microseconds per quarter note; false if ev
 * is not a well-formed tempo event (length 3). */
bool smf_event_tempo(const struct smf_event *ev, uint32_t *usec_per_quarter);

/* --- writer -------------------------------------------------------------- */

#define SMF_HEADER_BYTES 14        /* MThd, its length, format, tracks, division */
#define SMF_CHUNK_HEADER_BYTES 8   /* MTrk and its length */

/* One track's MTrk body.  Its bytes collect in a buffer the owner may
 * empty whenever it likes (smf_track_writer_take, after copying
 * w->bytes[0..w->length) elsewhere); w->size counts the whole body. */
struct smf_track_writer {
	uint8_t *bytes;            /* the body not yet taken */
	size_t length, capacity;
	uint64_t size;             /* the whole body so far, taken bytes included */
	bool failed;
	/* private state */
	struct smf_error *error;   /* the owner's: why the first failing call
	                            * failed (offset: body bytes before it) */
	uint32_t last_tick;
	uint8_t running_status;
	uint16_t number;           /* 1-based, for messages */
	bool ended;
};

/* Each call returns false on error; the writer then refuses every further
 * call, and *error (given at init, the owner's; several writers may share
 * one) says what went wrong.  The calls are those of struct smf_writer
 * below, with the same rules and messages. */
void smf_track_writer_init(struct smf_track_writer *w, uint16_t number, struct smf_error *error);
bool smf_track_writer_midi(struct smf_track_writer *w, uint32_t tick, const struct midi_msg *m);
bool smf_track_writer_sysex(struct smf_track_writer *w, uint32_t tick, const uint8_t *bytes,
			    uint32_t length);
bool smf_track_writer_escape(struct smf_track_writer *w, uint32_t tick, const uint8_t *bytes,
			     uint32_t length);
bool smf_track_writer_meta(struct smf_track_writer *w, uint32_t tick, uint8_t type,
			   const uint8_t *data, uint32_t length);
bool smf_track_writer_tempo(struct smf_track_writer *w, uint32_t tick, uint32_t usec_per_quarter);
bool smf_track_writer_event(struct smf_track_writer *w, const struct smf_event *ev);
/* The end-of-track event; the body is then complete (w->size <= UINT32_MAX). */
bool smf_track_writer_end(struct smf_track_writer *w, uint32_t tick);
/* The buffered bytes were copied elsewhere: the buffer starts empty again. */
void smf_track_writer_take(struct smf_track_writer *w);
void smf_track_writer_free(struct smf_track_writer *w);

/* A file's header and a track's chunk header, for a writer of its own. */
bool smf_header_check(uint16_t format, uint16_t division, struct smf_error *err);
void smf_header_encode(uint8_t out[SMF_HEADER_BYTES], uint16_t format, uint16_t tracks, uint16_t division);
void smf_chunk_header_encode(uint8_t out[SMF_CHUNK_HEADER_BYTES], uint32_t length);

/* A whole file in one growing memory buffer. */
struct smf_writer {
	/* private state */
	uint8_t *bytes;
	size_t length, capacity;
	uint16_t format, division;
	uint16_t track_count;
	struct smf_track_writer track;   /* the open track */
	struct smf_error track_error;
	bool in_track;
	bool failed;
	struct smf_error error;    /* why the first failing call failed */
};

/* Each call returns false on error; the writer then refuses every further
 * call, w->error says what went wrong and smf_writer_discard frees it. */
bool smf_writer_begin(struct smf_writer *w, uint16_t format, uint16_t division);
bool smf_writer_track_begin(struct smf_writer *w);
/* A channel message; a SysEx message (status F0, complete F0 ... F7) is
 * written as a SysEx event.  System common and real-time messages do not
 * belong in a file and are refused. */
bool smf_writer_midi(struct smf_writer *w, uint32_t tick, const struct midi_msg *m);
/* bytes after F0, normally ending in F7 (without it: a first packet) */
bool smf_writer_sysex(struct smf_writer *w, uint32_t tick, const uint8_t *bytes, uint32_t length);
bool smf_writer_escape(struct smf_writer *w, uint32_t tick, const uint8_t *bytes, uint32_t length);
/* Any meta event but end-of-track (smf_writer_track_end writes that). */
bool smf_writer_meta(struct smf_writer *w, uint32_t tick, uint8_t type, const uint8_t *data,
		     uint32_t length);
/* False when a meta event of this type must have another length (SMF 1.0:
 * tempo 3, time signature 4, ...); *expected is then that length. */
bool smf_meta_length_ok(uint8_t type, uint32_t length, uint32_t *expected);
bool smf_writer_tempo(struct smf_writer *w, uint32_t tick, uint32_t usec_per_quarter);
/* Writes an event as read by smf_read (not an end-of-track). */
bool smf_writer_event(struct smf_writer *w, const struct smf_event *ev);
/* Writes the end-of-track event at `tick` (at or after the last event). */
bool smf_writer_track_end(struct smf_writer *w, uint32_t tick);
/* Hands over the finished file (free() it); the writer then owns nothing. */
bool smf_writer_finish(struct smf_writer *w, uint8_t **bytes, size_t *length);
void smf_writer_discard(struct smf_writer *w);

#endif
