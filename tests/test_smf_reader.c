/*
 * Tests for smf_reader on hand-written files (byte arrays laid out by the
 * Standard MIDI File 1.0/1.1 text [SMF]: chunk = 4-char type + 32-bit
 * big-endian length; MThd = format, ntrks, division; MTrk = <delta VLQ>
 * <event>...) and on every malformation we promise to report with its
 * byte offset.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <cmocka.h>

#include "latticed/smf.h"

#define BYTES(name, ...) static const uint8_t name[] = { __VA_ARGS__ }

#define MTHD(fmt, ntrks, div_hi, div_lo)                                     \
	'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, fmt, 0, ntrks, div_hi, div_lo
#define MTRK(len) 'M', 'T', 'r', 'k', 0, 0, 0, len

static void expect_event(const struct smf_event *ev, uint32_t tick, enum smf_event_kind kind)
{
	assert_int_equal(ev->tick, tick);
	assert_int_equal(ev->kind, kind);
}

static void expect_midi(const struct smf_event *ev, uint32_t tick, uint8_t st, uint8_t d1,
			uint8_t d2)
{
	expect_event(ev, tick, SMF_EVENT_MIDI);
	assert_int_equal(ev->msg.status, st);
	assert_int_equal(ev->msg.data[0], d1);
	assert_int_equal(ev->msg.data[1], d2);
}

static void expect_payload(const struct smf_event *ev, const uint8_t *want, size_t n)
{
	assert_int_equal(ev->length, n);
	if (n)
		assert_memory_equal(ev->data, want, n);
}

/* Format 0: one track, 96 ticks per quarter, running status (also across a
 * SysEx, as real files do [reference §8.12]), a two-byte delta time. */
BYTES(format0,
      MTHD(0, 1, 0x00, 0x60),
      MTRK(41),
      0x00, 0xFF, 0x58, 0x04, 0x04, 0x02, 0x18, 0x08,   /* time signature 4/4 */
      0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20,         /* tempo 500000 us = 120 bpm */
      0x00, 0xC0, 0x05,                                 /* program 5 */
      0x00, 0x90, 0x3C, 0x40,                           /* note on 60 */
      0x60, 0x3E, 0x40,                                 /* +96, running status: note on 62 */
      0x00, 0xF0, 0x05, 0x7E, 0x7F, 0x09, 0x01, 0xF7,   /* GM System On SysEx */
      0x81, 0x40, 0x3C, 0x00,                           /* +192, running status kept, velocity 0 */
      0x00, 0xFF, 0x2F, 0x00);                          /* end of track */

static void test_format0(void **state)
{
	(void)state;
	struct smf s;
	struct smf_error err;
	assert_true(smf_read(format0, sizeof format0, &s, &err));
	/* [SMF] header fields */
	assert_int_equal(s.format, 0);
	assert_int_equal(s.division, 96);
	assert_false(smf_division_is_smpte(s.division));
	assert_int_equal(smf_division_ticks_per_quarter(s.division), 96);
	assert_int_equal(s.track_count, 1);
	const struct smf_track *t = &s.tracks[0];
	assert_int_equal(t->event_count, 8);
	assert_true(t->has_end_of_track);
	assert_int_equal(t->end_tick, 288);
	assert_int_equal(t->offset, 14);

	const struct smf_event *ev = t->events;
	expect_event(&ev[0], 0, SMF_EVENT_META);
	assert_int_equal(ev[0].meta_type, SMF_META_TIME_SIGNATURE);
	BYTES(ts, 0x04, 0x02, 0x18, 0x08);
	expect_payload(&ev[0], ts, 4);
	assert_int_equal(ev[0].offset, 22);

	expect_event(&ev[1], 0, SMF_EVENT_META);
	uint32_t tempo = 0;
	assert_true(smf_event_tempo(&ev[1], &tempo));
	assert_int_equal(tempo, 500000);   /* [SMF], Microsoft "Timing Information": 120 bpm */
	assert_false(smf_event_tempo(&ev[0], &tempo));

	expect_midi(&ev[2], 0, 0xC0, 5, 0);
	assert_int_equal(ev[2].length, 1);
	expect_midi(&ev[3], 0, 0x90, 60, 64);
	expect_midi(&ev[4], 96, 0x90, 62, 64);
	BYTES(rs, 0x3E, 0x40);
	expect_payload(&ev[4], rs, 2);   /* the data bytes as they are in the file */

	expect_event(&ev[5], 96, SMF_EVENT_SYSEX);
	BYTES(gm, 0x7E, 0x7F, 0x09, 0x01, 0xF7);
	expect_payload(&ev[5], gm, 5);
	/* complete SysEx also handed over as one F0 ... F7 message */
	BYTES(gm_msg, 0xF0, 0x7E, 0x7F, 0x09, 0x01, 0xF7);
	assert_int_equal(ev[5].msg.status, MIDI_SYSEX);
	assert_int_equal(ev[5].msg.sysex_length, 6);
	assert_memory_equal(ev[5].msg.sysex, gm_msg, 6);
	assert_true(midi_msg_is_valid(&ev[5].msg));

	/* lenient: running status survives the SysEx; velocity 0 kept as written */
	expect_midi(&ev[6], 288, 0x90, 60, 0);
	expect_event(&ev[7], 288, SMF_EVENT_META);
	assert_int_equal(ev[7].meta_type, SMF_META_END_OF_TRACK);
	assert_int_equal(ev[7].length, 0);
	smf_free(&s);
	assert_null(s.tracks);
	smf_free(&s);   /* twice is harmless */
}

/* Format 1: tempo track + one music track, 480 ticks per quarter, an
 * unknown chunk between them to skip [SMF 1.1: skip unknown chunk types],
 * an F7 escape event. */
BYTES(format1,
      MTHD(1, 2, 0x01, 0xE0),
      MTRK(28),
      0x00, 0xFF, 0x03, 0x05, 'T', 'e', 'm', 'p', 'o',  /* track name */
      0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20,         /* 500000 */
      0x83, 0x60, 0xFF, 0x51, 0x03, 0x0F, 0x42, 0x40,   /* +480: 1000000 */
      0x00, 0xFF, 0x2F, 0x00,
      'X', 'Y', 'Z', 'W', 0, 0, 0, 3, 0xAA, 0xBB, 0xCC,
      MTRK(27),
      0x00, 0xB1, 0x07, 0x64,                           /* volume 100, channel 2 */
      0x00, 0x91, 0x45, 0x50,                           /* note on 69 */
      0x00, 0xE1, 0x00, 0x40,                           /* bend centre */
      0x83, 0x60, 0x81, 0x45, 0x40,                     /* +480 note off 69 */
      0x00, 0xF7, 0x03, 0x01, 0x02, 0x03,               /* escape */
      0x00, 0xFF, 0x2F, 0x00);

static void test_format1(void **state)
{
	(void)state;
	struct smf s;
	struct smf_error err;
	assert_true(smf_read(format1, sizeof format1, &s, &err));
	assert_int_equal(s.format, 1);
	assert_int_equal(smf_division_ticks_per_quarter(s.division), 480);
	assert_int_equal(s.track_count, 2);

	const struct smf_track *t0 = &s.tracks[0], *t1 = &s.tracks[1];
	assert_int_equal(t0->event_count, 4);
	assert_int_equal(t0->events[0].meta_type, SMF_META_TRACK_NAME);
	expect_payload(&t0->events[0], (const uint8_t *)"Tempo", 5);
	uint32_t tempo;
	assert_true(smf_event_tempo(&t0->events[2], &tempo));
	assert_int_equal(tempo, 1000000);
	assert_int_equal(t0->events[2].tick, 480);
	assert_int_equal(t0->end_tick, 480);

	assert_int_equal(t1->offset, 14 + 8 + 28 + 11);
	assert_int_equal(t1->event_count, 6);
	expect_midi(&t1->events[0], 0, 0xB1, 7, 100);
	expect_midi(&t1->events[1], 0, 0x91, 69, 80);
	expect_midi(&t1->events[2], 0, 0xE1, 0x00, 0x40);
	assert_int_equal(midi_msg_pitch_bend_value(&t1->events[2].msg), 8192);
	expect_midi(&t1->events[3], 480, 0x81, 69, 64);
	expect_event(&t1->events[4], 480, SMF_EVENT_ESCAPE);
	BYTES(esc, 1, 2, 3);
	expect_payload(&t1->events[4], esc, 3);
	assert_int_equal(t1->events[4].msg.status, 0);
	assert_int_equal(t1->end_tick, 480);
	smf_free(&s);
}

static void test_header_variants(void **state)
{
	(void)state;
	struct smf s;
	struct smf_error err;
	/* [SMF], somascape: honour a longer MThd length, skip the extra bytes */
	BYTES(long_header, 'M', 'T', 'h', 'd', 0, 0, 0, 10, 0, 2, 0, 1, 0x00, 0x78,
	      0xDE, 0xAD, 0xBE, 0xEF,
	      MTRK(4), 0x00, 0xFF, 0x2F, 0x00);
	assert_true(smf_read(long_header, sizeof long_header, &s, &err));
	assert_int_equal(s.format, 2);
	assert_int_equal(s.division, 120);
	assert_int_equal(s.tracks[0].event_count, 1);
	smf_free(&s);

	/* [SMF], Microsoft "Timing Information": E7 28 = -25 fps, 40 ticks per frame (1 ms) */
	BYTES(smpte, MTHD(0, 1, 0xE7, 0x28), MTRK(4), 0x00, 0xFF, 0x2F, 0x00);
	assert_true(smf_read(smpte, sizeof smpte, &s, &err));
	assert_true(smf_division_is_smpte(s.division));
	assert_int_equal(smf_division_frames_per_second(s.division), 25);
	assert_int_equal(smf_division_ticks_per_frame(s.division), 40);
	assert_int_equal(smf_division_ticks_per_quarter(s.division), 0);
	assert_int_equal(smf_division_smpte(25, 40), 0xE728);
	smf_free(&s);
	/* [SMF]: -24, -29 (30 drop-frame), -30 two's complement = E8, E3, E2 */
	assert_int_equal(smf_division_frames_per_second(0xE804), 24);
	assert_int_equal(smf_division_frames_per_second(0xE350), 29);
	assert_int_equal(smf_division_frames_per_second(0xE250), 30);
	assert_int_equal(smf_division_frames_per_second(0x0060), 0);
	assert_int_equal(smf_division_smpte(29, 80), 0xE350);

	/* lenient: no end-of-track; bytes after the declared tracks ignored */
	BYTES(no_eot, MTHD(0, 1, 0, 96), MTRK(8), 0x00, 0x90, 60, 100, 0x10, 0x80, 60, 0,
	      0x01, 0x02, 0x03);
	assert_true(smf_read(no_eot, sizeof no_eot, &s, &err));
	assert_false(s.tracks[0].has_end_of_track);
	assert_int_equal(s.tracks[0].event_count, 2);
	assert_int_equal(s.tracks[0].end_tick, 16);
	smf_free(&s);

	/* lenient: bytes after end-of-track inside the chunk are ignored */
	BYTES(after_eot, MTHD(0, 1, 0, 96), MTRK(7), 0x00, 0xFF, 0x2F, 0x00, 0x00, 0x90, 60);
	assert_true(smf_read(after_eot, sizeof after_eot, &s, &err));
	assert_int_equal(s.tracks[0].event_count, 1);
	smf_free(&s);

	/* running status kept across a meta event too (reference §8.12, lenient) */
	BYTES(rs_meta, MTHD(0, 1, 0, 96), MTRK(11), 0x00, 0x90, 60, 100, 0x00, 0xFF, 0x01, 0x00,
	      0x00, 61, 100);
	assert_true(smf_read(rs_meta, sizeof rs_meta, &s, &err));
	assert_int_equal(s.tracks[0].event_count, 3);
	expect_midi(&s.tracks[0].events[2], 0, 0x90, 61, 100);
	smf_free(&s);

	/* an empty track and zero tracks are both readable */
	BYTES(empty, MTHD(1, 2, 0, 96), MTRK(0), MTRK(0));
	assert_true(smf_read(empty, sizeof empty, &s, &err));
	assert_int_equal(s.track_count, 2);
	assert_int_equal(s.tracks[1].event_count, 0);
	smf_free(&s);
	BYTES(none, MTHD(1, 0, 0, 96));
	assert_true(smf_read(none, sizeof none, &s, &err));
	assert_int_equal(s.track_count, 0);
	smf_free(&s);

	/* a SysEx without F7 (first packet of a divided message) is not a message */
	BYTES(packet, MTHD(0, 1, 0, 96), MTRK(10), 0x00, 0xF0, 0x02, 0x43, 0x12, 0x10, 0xF7,
	      0x02, 0x00, 0xF7);
	assert_true(smf_read(packet, sizeof packet, &s, &err));
	assert_int_equal(s.tracks[0].events[0].kind, SMF_EVENT_SYSEX);
	assert_int_equal(s.tracks[0].events[0].msg.status, 0);
	assert_int_equal(s.tracks[0].events[1].kind, SMF_EVENT_ESCAPE);
	assert_int_equal(s.tracks[0].events[1].tick, 16);
	smf_free(&s);
}

/* Expects smf_read to fail at `offset` with a message containing `words`. */
static void expect_error(const uint8_t *bytes, size_t n, size_t offset, const char *words)
{
	struct smf s;
	struct smf_error err = { 0 };
	bool ok = smf_read(bytes, n, &s, &err);
	if (ok)
		smf_free(&s);
	assert_false(ok);
	if (err.offset != offset || !strstr(err.text, words))
		fprintf(stderr, "got \"%s\" (offset %zu), want offset %zu and \"%s\"\n", err.text,
			err.offset, offset, words);
	assert_int_equal(err.offset, offset);
	assert_non_null(strstr(err.text, words));
	char prefix[32];
	snprintf(prefix, sizeof prefix, "byte %zu: ", offset);
	assert_int_equal(strncmp(err.text, prefix, strlen(prefix)), 0);
	assert_null(s.tracks);
	assert_null(s.bytes);
}

#define EXPECT_ERROR(offset, words, ...)                                     \
	do {                                                                 \
		BYTES(f_, __VA_ARGS__);                                      \
		expect_error(f_, sizeof f_, (offset), (words));              \
	} while (0)

static void test_malformations(void **state)
{
	(void)state;
	/* no MThd */
	EXPECT_ERROR(0, "expected the chunk type \"MThd\"", 'R', 'I', 'F', 'F', 0, 0, 0, 4, 'R',
		     'M', 'I', 'D');
	EXPECT_ERROR(0, "MThd", 'M', 'T');
	expect_error(NULL, 0, 0, "MThd");
	/* truncated header */
	EXPECT_ERROR(4, "expected 2 more bytes", 'M', 'T', 'h', 'd', 0, 0);
	EXPECT_ERROR(4, "MThd length 6 runs past the end of the file, expected 2 more bytes",
		     'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 0, 0, 1);
	EXPECT_ERROR(4, "MThd length is 4, expected at least 6", 'M', 'T', 'h', 'd', 0, 0, 0, 4,
		     0, 0, 0, 1);
	/* [SMF] format 0, 1 or 2 */
	EXPECT_ERROR(8, "format 3 is unknown", MTHD(3, 1, 0, 96), MTRK(0));
	/* division */
	EXPECT_ERROR(12, "division is 0", MTHD(0, 1, 0, 0), MTRK(0));
	EXPECT_ERROR(12, "SMPTE division byte E6", MTHD(0, 1, 0xE6, 0x28), MTRK(0));
	EXPECT_ERROR(13, "0 ticks per frame", MTHD(0, 1, 0xE7, 0x00), MTRK(0));
	/* truncated track: chunk length past the end of the file, offset of the length field */
	EXPECT_ERROR(18, "MTrk chunk length 32 runs past the end of the file, expected 28 more bytes",
		     MTHD(0, 1, 0, 96), MTRK(32), 0x00, 0xFF, 0x2F, 0x00);
	/* an unknown chunk that claims too much */
	EXPECT_ERROR(18, "ABCD chunk length 255", MTHD(0, 1, 0, 96), 'A', 'B', 'C', 'D', 0, 0,
		     0, 0xFF, 1, 2);
	/* truncated chunk header */
	EXPECT_ERROR(14, "file ends inside a chunk header, expected 3 more bytes",
		     MTHD(0, 1, 0, 96), 'M', 'T', 'r', 'k', 0);
	/* fewer tracks than declared */
	EXPECT_ERROR(26, "file ends after 1 of 2 tracks", MTHD(1, 2, 0, 96), MTRK(4), 0x00, 0xFF,
		     0x2F, 0x00);
	/* track ends inside an event: missing data byte */
	EXPECT_ERROR(25, "track 1 of 1 ends inside an event, expected 1 more byte", MTHD(0, 1, 0, 96),
		     MTRK(3), 0x00, 0x90, 0x3C);
	/* ... inside a meta event's data */
	EXPECT_ERROR(28, "expected 3 more bytes (meta event data)", MTHD(0, 1, 0, 96), MTRK(6),
		     0x00, 0xFF, 0x01, 0x05, 'a', 'b');
	/* ... after a delta time */
	EXPECT_ERROR(23, "status or data byte after a delta time", MTHD(0, 1, 0, 96), MTRK(1),
		     0x00);
	/* ... inside a delta time */
	EXPECT_ERROR(24, "expected at least 1 more byte (delta time)", MTHD(0, 1, 0, 96), MTRK(2),
		     0x81, 0x80);
	/* ... in the second track, named as such */
	EXPECT_ERROR(37, "track 2 of 2 ends inside an event, expected 17 more bytes (SysEx bytes)",
		     MTHD(1, 2, 0, 96), MTRK(0), MTRK(7), 0x00, 0xF0, 0x15, 0x7E, 0x7F, 0x09, 0x01);
	/* bad VLQ: five bytes [SMF: at most four] */
	EXPECT_ERROR(22, "delta time is longer than 4 bytes", MTHD(0, 1, 0, 96), MTRK(8), 0x81,
		     0x80, 0x80, 0x80, 0x00, 0x90, 0x3C, 0x40);
	EXPECT_ERROR(25, "meta event length is longer than 4 bytes", MTHD(0, 1, 0, 96), MTRK(8),
		     0x00, 0xFF, 0x01, 0xFF, 0xFF, 0xFF, 0xFF, 0x7F);
	/* data byte with no running status */
	EXPECT_ERROR(23, "data byte 3C with no running status", MTHD(0, 1, 0, 96), MTRK(7), 0x00,
		     0x3C, 0x40, 0x00, 0xFF, 0x2F, 0x00);
	/* a status byte where a data byte belongs */
	EXPECT_ERROR(25, "expected data byte 2 of 2 for status 90, found 80", MTHD(0, 1, 0, 96),
		     MTRK(8), 0x00, 0x90, 0x3C, 0x80, 0x3C, 0x40, 0x00, 0x00);
	/* [SMF]: system common and real-time status bytes do not belong in a file */
	EXPECT_ERROR(23, "status byte F8 does not belong in a file", MTHD(0, 1, 0, 96), MTRK(4),
		     0x00, 0xF8, 0x00, 0x00);
	EXPECT_ERROR(23, "status byte F2", MTHD(0, 1, 0, 96), MTRK(4), 0x00, 0xF2, 0x00, 0x00);
}

static void test_tick_overflow(void **state)
{
	(void)state;
	/* 17 deltas of 0x0FFFFFFF (largest VLQ [SMF]) pass 2^32 - 1 */
	uint8_t f[14 + 8 + 17 * 7];
	BYTES(head, MTHD(0, 1, 0, 96), 'M', 'T', 'r', 'k', 0, 0, 0, 17 * 7);
	memcpy(f, head, sizeof head);
	for (int i = 0; i < 17; i++) {
		uint8_t *e = f + 22 + i * 7;
		e[0] = 0xFF, e[1] = 0xFF, e[2] = 0xFF, e[3] = 0x7F;
		e[4] = 0xFF, e[5] = 0x01, e[6] = 0x00;   /* empty text meta */
	}
	expect_error(f, sizeof f, 22 + 16 * 7, "absolute time exceeds");
	/* 16 of them still fit */
	f[21] = 16 * 7;
	struct smf s;
	struct smf_error err;
	assert_true(smf_read(f, 22 + 16 * 7, &s, &err));
	assert_int_equal(s.tracks[0].end_tick, 16u * 0x0FFFFFFFu);
	smf_free(&s);
}

static void test_copy_owned(void **state)
{
	(void)state;
	/* payloads point into the reader's own copy: the caller's buffer may go */
	uint8_t *copy = malloc(sizeof format0);
	assert_non_null(copy);
	memcpy(copy, format0, sizeof format0);
	struct smf s;
	struct smf_error err;
	assert_true(smf_read(copy, sizeof format0, &s, &err));
	memset(copy, 0, sizeof format0);
	free(copy);
	BYTES(ts, 0x04, 0x02, 0x18, 0x08);
	expect_payload(&s.tracks[0].events[0], ts, 4);
	assert_int_equal(s.length, sizeof format0);
	assert_memory_equal(s.bytes, format0, sizeof format0);
	smf_free(&s);
}

static void check_outcome(const uint8_t *bytes, size_t n)
{
	struct smf s;
	struct smf_error err = { .offset = (size_t)-1 };
	if (smf_read(bytes, n, &s, &err)) {
		for (size_t t = 0; t < s.track_count; t++)
			for (size_t i = 0; i < s.tracks[t].event_count; i++) {
				const struct smf_event *ev = &s.tracks[t].events[i];
				assert_true(ev->data >= s.bytes || ev->length == 0);
				assert_true(ev->length == 0 || ev->data + ev->length <= s.bytes + s.length);
			}
		smf_free(&s);
		return;
	}
	/* every failure names a byte inside (or just past) the file */
	assert_true(err.offset <= n);
	assert_int_equal(strncmp(err.text, "byte ", 5), 0);
}

static void test_truncations_and_corruption(void **state)
{
	(void)state;
	/* every strict prefix of a valid file is refused (a chunk always runs
	 * past the end), never read as a shorter file */
	for (size_t n = 0; n < sizeof format1; n++) {
		struct smf s;
		struct smf_error err;
		bool ok = smf_read(format1, n, &s, &err);
		if (ok)
			smf_free(&s);
		assert_false(ok);
		assert_true(err.offset <= n);
	}
	/* seeded random corruption: no crash, a clear outcome (run under ASan) */
	uint8_t f[sizeof format1];
	uint32_t x = 12345;
	for (int round = 0; round < 20000; round++) {
		memcpy(f, format1, sizeof f);
		int flips = 1 + round % 4;
		for (int k = 0; k < flips; k++) {
			x = x * 1664525u + 1013904223u;
			size_t at = (x >> 8) % sizeof f;
			x = x * 1664525u + 1013904223u;
			f[at] = (uint8_t)(x >> 24);
		}
		check_outcome(f, sizeof f);
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_format0),
		cmocka_unit_test(test_format1),
		cmocka_unit_test(test_header_variants),
		cmocka_unit_test(test_malformations),
		cmocka_unit_test(test_tick_overflow),
		cmocka_unit_test(test_copy_owned),
		cmocka_unit_test(test_truncations_and_corruption),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
