/*
 * Tests for smf_writer: exact bytes for a small file laid out by the
 * Standard MIDI File text [SMF] (strict: MThd length 6, running status only
 * between channel messages, SysEx as F0 <len> <bytes incl. F7>), every
 * refusal, and read(write(x)) == x on seeded random multi-track content.
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

static void test_exact_bytes(void **state)
{
	(void)state;
	struct smf_writer w;
	assert_true(smf_writer_begin(&w, 0, 96));
	assert_true(smf_writer_track_begin(&w));
	BYTES(ts, 0x04, 0x02, 0x18, 0x08);
	assert_true(smf_writer_meta(&w, 0, SMF_META_TIME_SIGNATURE, ts, 4));
	assert_true(smf_writer_tempo(&w, 0, 500000));
	struct midi_msg m = midi_msg_program(0, 5);
	assert_true(smf_writer_midi(&w, 0, &m));
	m = midi_msg_note_on(0, 60, 64);
	assert_true(smf_writer_midi(&w, 0, &m));
	m = midi_msg_note_on(0, 62, 64);
	assert_true(smf_writer_midi(&w, 96, &m));
	BYTES(gm, 0xF0, 0x7E, 0x7F, 0x09, 0x01, 0xF7);
	m = midi_msg_sysex(gm, sizeof gm);
	assert_true(smf_writer_midi(&w, 96, &m));
	m = midi_msg_note_on(0, 60, 0);   /* written as given, velocity 0 */
	assert_true(smf_writer_midi(&w, 288, &m));
	assert_true(smf_writer_track_end(&w, 288));
	uint8_t *out = NULL;
	size_t n = 0;
	assert_true(smf_writer_finish(&w, &out, &n));

	BYTES(want,
	      'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 0, 0, 1, 0x00, 0x60,
	      'M', 'T', 'r', 'k', 0, 0, 0, 42,
	      0x00, 0xFF, 0x58, 0x04, 0x04, 0x02, 0x18, 0x08,
	      0x00, 0xFF, 0x51, 0x03, 0x07, 0xA1, 0x20,
	      0x00, 0xC0, 0x05,
	      0x00, 0x90, 0x3C, 0x40,
	      0x60, 0x3E, 0x40,                               /* running status */
	      0x00, 0xF0, 0x05, 0x7E, 0x7F, 0x09, 0x01, 0xF7,
	      0x81, 0x40, 0x90, 0x3C, 0x00,                   /* status again after SysEx */
	      0x00, 0xFF, 0x2F, 0x00);
	assert_int_equal(n, sizeof want);
	assert_memory_equal(out, want, sizeof want);
	free(out);
	smf_writer_discard(&w);   /* harmless after finish */
}

static void test_meta_cancels_running_status(void **state)
{
	(void)state;
	/* [SMF]: meta and SysEx cancel running status; strict writing restates */
	struct smf_writer w;
	assert_true(smf_writer_begin(&w, 1, 480));
	assert_true(smf_writer_track_begin(&w));
	struct midi_msg m = midi_msg_control(3, 7, 100);
	assert_true(smf_writer_midi(&w, 0, &m));
	assert_true(smf_writer_meta(&w, 0, SMF_META_MARKER, (const uint8_t *)"A", 1));
	m = midi_msg_control(3, 10, 64);
	assert_true(smf_writer_midi(&w, 0, &m));
	BYTES(esc, 0xF8);
	assert_true(smf_writer_escape(&w, 10, esc, 1));
	m = midi_msg_control(3, 11, 127);
	assert_true(smf_writer_midi(&w, 10, &m));
	m = midi_msg_control(3, 1, 0);
	assert_true(smf_writer_midi(&w, 10, &m));
	/* end of track later than the last event */
	assert_true(smf_writer_track_end(&w, 1000));
	/* a second, empty track */
	assert_true(smf_writer_track_begin(&w));
	assert_true(smf_writer_track_end(&w, 0));
	uint8_t *out;
	size_t n;
	assert_true(smf_writer_finish(&w, &out, &n));
	BYTES(want,
	      'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 1, 0, 2, 0x01, 0xE0,
	      'M', 'T', 'r', 'k', 0, 0, 0, 29,
	      0x00, 0xB3, 0x07, 0x64,
	      0x00, 0xFF, 0x06, 0x01, 'A',
	      0x00, 0xB3, 0x0A, 0x40,
	      0x0A, 0xF7, 0x01, 0xF8,
	      0x00, 0xB3, 0x0B, 0x7F,
	      0x00, 0x01, 0x00,
	      0x87, 0x5E, 0xFF, 0x2F, 0x00,                   /* +990 */
	      'M', 'T', 'r', 'k', 0, 0, 0, 4,
	      0x00, 0xFF, 0x2F, 0x00);
	assert_int_equal(n, sizeof want);
	assert_memory_equal(out, want, sizeof want);
	free(out);
}

static void expect_refused(struct smf_writer *w, bool ok, const char *words)
{
	assert_false(ok);
	assert_true(w->failed);
	if (!strstr(w->error.text, words))
		fprintf(stderr, "got \"%s\", want \"%s\"\n", w->error.text, words);
	assert_non_null(strstr(w->error.text, words));
	/* sticky: nothing more is accepted, the first reason is kept */
	char first[SMF_ERROR_TEXT_MAX];
	memcpy(first, w->error.text, sizeof first);
	assert_false(smf_writer_tempo(w, 0x7FFFFFFF, 500000));
	uint8_t *out = NULL;
	size_t n = 0;
	assert_false(smf_writer_finish(w, &out, &n));
	assert_null(out);
	assert_string_equal(w->error.text, first);
	smf_writer_discard(w);
}

static void open_track(struct smf_writer *w, uint16_t format)
{
	assert_true(smf_writer_begin(w, format, 96));
	assert_true(smf_writer_track_begin(w));
}

static void test_refusals(void **state)
{
	(void)state;
	struct smf_writer w;
	struct midi_msg m = midi_msg_note_on(0, 60, 100);

	open_track(&w, 1);
	assert_true(smf_writer_midi(&w, 100, &m));
	expect_refused(&w, smf_writer_midi(&w, 99, &m),
		       "track 1, tick 99: ticks must not decrease within a track (previous event at tick 100)");

	open_track(&w, 1);
	assert_true(smf_writer_midi(&w, 100, &m));
	expect_refused(&w, smf_writer_track_end(&w, 50), "ticks must not decrease");

	open_track(&w, 1);
	expect_refused(&w, smf_writer_midi(&w, 0x10000000, &m), "more than a delta time can hold");

	open_track(&w, 0);
	assert_true(smf_writer_track_end(&w, 0));
	expect_refused(&w, smf_writer_track_begin(&w), "format 0 holds exactly one track");

	assert_true(smf_writer_begin(&w, 0, 96));
	expect_refused(&w, smf_writer_finish(&w, &(uint8_t *){ NULL }, &(size_t){ 0 }),
		       "format 0 holds exactly one track, found 0");

	assert_true(smf_writer_begin(&w, 1, 96));
	expect_refused(&w, smf_writer_midi(&w, 0, &m), "outside a track");

	open_track(&w, 1);
	expect_refused(&w, smf_writer_track_begin(&w), "begun again");

	open_track(&w, 1);
	expect_refused(&w, smf_writer_finish(&w, &(uint8_t *){ NULL }, &(size_t){ 0 }),
		       "track 1 was not ended");

	open_track(&w, 1);
	expect_refused(&w, smf_writer_meta(&w, 0, SMF_META_END_OF_TRACK, NULL, 0),
		       "end-of-track is written by smf_writer_track_end");

	/* [SMF] fixed meta lengths: tempo 3, time signature 4, key signature 2 */
	open_track(&w, 1);
	expect_refused(&w, smf_writer_meta(&w, 0, SMF_META_TEMPO, (const uint8_t *)"ab", 2),
		       "meta 51 has 2 data bytes, expected 3");
	open_track(&w, 1);
	expect_refused(&w, smf_writer_meta(&w, 0, SMF_META_KEY_SIGNATURE, (const uint8_t *)"a", 1),
		       "expected 2");
	open_track(&w, 1);
	expect_refused(&w, smf_writer_meta(&w, 0, 0x80, NULL, 0), "meta type 80");
	open_track(&w, 1);
	expect_refused(&w, smf_writer_tempo(&w, 0, 0x1000000), "tempo");

	/* [SMF]: system common and real-time messages do not belong in a file */
	open_track(&w, 1);
	struct midi_msg clock = midi_msg_make(MIDI_CLOCK, 0, 0);
	expect_refused(&w, smf_writer_midi(&w, 0, &clock), "status F8 does not belong in a file");
	open_track(&w, 1);
	struct midi_msg spp = midi_msg_make(MIDI_SONG_POSITION, 1, 2);
	expect_refused(&w, smf_writer_midi(&w, 0, &spp), "status F2");
	open_track(&w, 1);
	struct midi_msg bad = { 0x90, { 0x80, 0 }, 0, NULL };
	expect_refused(&w, smf_writer_midi(&w, 0, &bad), "data byte above 7F");

	open_track(&w, 1);
	BYTES(sx_bad, 0x7E, 0x90, 0xF7);
	expect_refused(&w, smf_writer_sysex(&w, 0, sx_bad, 3), "SysEx byte 1 is 90");
	open_track(&w, 1);
	BYTES(sx_open, 0xF0, 0x7E, 0x01);
	struct midi_msg open = midi_msg_sysex(sx_open, 3);
	expect_refused(&w, smf_writer_midi(&w, 0, &open), "SysEx message is not F0");
	open_track(&w, 1);
	expect_refused(&w, smf_writer_escape(&w, 0, NULL, 3), "no bytes given");

	expect_refused(&w, smf_writer_begin(&w, 3, 96), "format 3");
	expect_refused(&w, smf_writer_begin(&w, 1, 0), "division 0");
	expect_refused(&w, smf_writer_begin(&w, 1, 0xE600 | 40), "SMPTE division");

	/* SMPTE division is carried */
	assert_true(smf_writer_begin(&w, 0, smf_division_smpte(25, 40)));
	assert_true(smf_writer_track_begin(&w));
	assert_true(smf_writer_track_end(&w, 0));
	uint8_t *out;
	size_t n;
	assert_true(smf_writer_finish(&w, &out, &n));
	assert_int_equal(out[12], 0xE7);
	assert_int_equal(out[13], 40);
	free(out);
}

/* --- read(write(x)) == x ---------------------------------------------------- */

static uint64_t rng_state;

static uint32_t rnd(void)
{
	rng_state ^= rng_state >> 12;
	rng_state ^= rng_state << 25;
	rng_state ^= rng_state >> 27;
	return (uint32_t)((rng_state * 2685821657736338717ULL) >> 32);
}

static uint32_t below(uint32_t n)
{
	return rnd() % n;
}

#define MAX_EVENTS 600
#define MAX_TRACKS 6

struct want_event {
	uint32_t tick;
	enum smf_event_kind kind;
	uint8_t meta_type;
	struct midi_msg msg;
	uint8_t payload[40];
	uint32_t length;
};

struct content {
	uint16_t format, division;
	size_t track_count;
	size_t counts[MAX_TRACKS];
	uint32_t end_ticks[MAX_TRACKS];
	struct want_event events[MAX_TRACKS][MAX_EVENTS];
};

static void random_event(struct want_event *e, uint32_t tick)
{
	memset(e, 0, sizeof *e);
	e->tick = tick;
	uint32_t k = below(100);
	if (k < 75) {
		static const uint8_t types[] = { 0x80, 0x90, 0x90, 0xA0, 0xB0, 0xC0, 0xD0, 0xE0 };
		uint8_t type = types[below(sizeof types)];
		e->kind = SMF_EVENT_MIDI;
		e->msg = midi_msg_channel_make(type, (uint8_t)below(2), (uint8_t)below(128),
					       (uint8_t)below(128));
		int n = midi_status_data_length(e->msg.status);
		if (n == 1)
			e->msg.data[1] = 0;
		e->length = (uint32_t)n;
		memcpy(e->payload, e->msg.data, (size_t)n);
	} else if (k < 85) {
		/* meta types with fixed lengths, and free text ones */
		static const struct {
			uint8_t type;
			uint8_t length;
		} metas[] = { { 0x00, 2 }, { 0x01, 0 }, { 0x03, 7 }, { 0x06, 3 }, { 0x20, 1 },
			      { 0x51, 3 }, { 0x54, 5 }, { 0x58, 4 }, { 0x59, 2 }, { 0x7F, 33 },
			      { 0x60, 5 } };
		size_t i = below(sizeof metas / sizeof metas[0]);
		e->kind = SMF_EVENT_META;
		e->meta_type = metas[i].type;
		e->length = metas[i].length;
		for (uint32_t b = 0; b < e->length; b++)
			e->payload[b] = (uint8_t)below(256);   /* meta data may be any byte */
	} else if (k < 95) {
		e->kind = SMF_EVENT_SYSEX;
		e->length = 1 + below(39);
		for (uint32_t b = 0; b + 1 < e->length; b++)
			e->payload[b] = (uint8_t)below(128);
		/* mostly complete messages, sometimes a first packet (no F7) */
		e->payload[e->length - 1] = below(4) ? 0xF7 : (uint8_t)below(128);
	} else {
		e->kind = SMF_EVENT_ESCAPE;
		e->length = below(40);
		for (uint32_t b = 0; b < e->length; b++)
			e->payload[b] = (uint8_t)below(256);
	}
}

static void random_content(struct content *c)
{
	c->format = (uint16_t)(below(3) == 0 ? 0 : 1 + below(2));
	c->division = below(4) == 0 ? smf_division_smpte(25, 40) : (uint16_t)(1 + below(0x7FFF));
	c->track_count = c->format == 0 ? 1 : 1 + below(MAX_TRACKS);
	for (size_t t = 0; t < c->track_count; t++) {
		uint32_t tick = 0;
		c->counts[t] = below(MAX_EVENTS);
		for (size_t i = 0; i < c->counts[t]; i++) {
			/* deltas of every VLQ length, mostly short ones */
			uint32_t r = below(100);
			if (r < 40)
				tick += 0;
			else if (r < 80)
				tick += below(128);
			else if (r < 95)
				tick += below(16384);
			else if (r < 99)
				tick += below(1u << 21);
			else
				tick += below(1u << 24);
			random_event(&c->events[t][i], tick);
		}
		c->end_ticks[t] = tick + (below(2) ? 0 : below(1000));
	}
}

static void write_content(const struct content *c, uint8_t **out, size_t *n)
{
	struct smf_writer w;
	assert_true(smf_writer_begin(&w, c->format, c->division));
	for (size_t t = 0; t < c->track_count; t++) {
		assert_true(smf_writer_track_begin(&w));
		for (size_t i = 0; i < c->counts[t]; i++) {
			const struct want_event *e = &c->events[t][i];
			bool ok = false;
			switch (e->kind) {
			case SMF_EVENT_MIDI:
				ok = smf_writer_midi(&w, e->tick, &e->msg);
				break;
			case SMF_EVENT_META:
				ok = smf_writer_meta(&w, e->tick, e->meta_type, e->payload, e->length);
				break;
			case SMF_EVENT_SYSEX:
				ok = smf_writer_sysex(&w, e->tick, e->payload, e->length);
				break;
			case SMF_EVENT_ESCAPE:
				ok = smf_writer_escape(&w, e->tick, e->payload, e->length);
				break;
			}
			if (!ok)
				fprintf(stderr, "writer: %s\n", w.error.text);
			assert_true(ok);
		}
		assert_true(smf_writer_track_end(&w, c->end_ticks[t]));
	}
	assert_true(smf_writer_finish(&w, out, n));
}

static void compare(const struct content *c, const struct smf *s)
{
	assert_int_equal(s->format, c->format);
	assert_int_equal(s->division, c->division);
	assert_int_equal(s->track_count, c->track_count);
	for (size_t t = 0; t < c->track_count; t++) {
		const struct smf_track *tr = &s->tracks[t];
		assert_true(tr->has_end_of_track);
		assert_int_equal(tr->end_tick, c->end_ticks[t]);
		assert_int_equal(tr->event_count, c->counts[t] + 1);
		for (size_t i = 0; i < c->counts[t]; i++) {
			const struct want_event *e = &c->events[t][i];
			const struct smf_event *g = &tr->events[i];
			assert_int_equal(g->tick, e->tick);
			assert_int_equal(g->kind, e->kind);
			assert_int_equal(g->length, e->length);
			if (e->length)
				assert_memory_equal(g->data, e->payload, e->length);
			if (e->kind == SMF_EVENT_MIDI)
				assert_true(midi_msg_equal(&g->msg, &e->msg));
			if (e->kind == SMF_EVENT_META)
				assert_int_equal(g->meta_type, e->meta_type);
			if (e->kind == SMF_EVENT_SYSEX && e->payload[e->length - 1] == 0xF7) {
				assert_int_equal(g->msg.status, MIDI_SYSEX);
				assert_int_equal(g->msg.sysex_length, e->length + 1);
				assert_int_equal(g->msg.sysex[0], 0xF0);
				assert_memory_equal(g->msg.sysex + 1, e->payload, e->length);
			}
		}
		const struct smf_event *eot = &tr->events[c->counts[t]];
		assert_int_equal(eot->kind, SMF_EVENT_META);
		assert_int_equal(eot->meta_type, SMF_META_END_OF_TRACK);
	}
}

static void test_round_trip(void **state)
{
	(void)state;
	static struct content c;
	size_t total_events = 0, total_bytes = 0;
	for (uint64_t seed = 1; seed <= 40; seed++) {
		rng_state = seed * 0x9E3779B97F4A7C15ULL;
		memset(&c, 0, sizeof c);
		random_content(&c);
		uint8_t *bytes;
		size_t n;
		write_content(&c, &bytes, &n);
		struct smf s;
		struct smf_error err;
		bool ok = smf_read(bytes, n, &s, &err);
		if (!ok)
			fprintf(stderr, "seed %llu: %s\n", (unsigned long long)seed, err.text);
		assert_true(ok);
		compare(&c, &s);

		/* writing what was read gives the same bytes back */
		struct smf_writer w;
		assert_true(smf_writer_begin(&w, s.format, s.division));
		for (size_t t = 0; t < s.track_count; t++) {
			assert_true(smf_writer_track_begin(&w));
			for (size_t i = 0; i + 1 < s.tracks[t].event_count; i++)
				assert_true(smf_writer_event(&w, &s.tracks[t].events[i]));
			assert_true(smf_writer_track_end(&w, s.tracks[t].end_tick));
			total_events += s.tracks[t].event_count;
		}
		uint8_t *again;
		size_t again_n;
		assert_true(smf_writer_finish(&w, &again, &again_n));
		assert_int_equal(again_n, n);
		assert_memory_equal(again, bytes, n);
		total_bytes += n;
		free(again);
		smf_free(&s);
		free(bytes);
	}
	assert_true(total_events > 1000);
	printf("round trip: %zu events, %zu bytes in 40 files\n", total_events, total_bytes);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_exact_bytes),
		cmocka_unit_test(test_meta_cancels_running_status),
		cmocka_unit_test(test_refusals),
		cmocka_unit_test(test_round_trip),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
