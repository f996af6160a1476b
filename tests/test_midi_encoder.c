/*
 * Tests for midi_encoder and its running-status tracker (the rule the
 * output thread applies to a raw port), and the parser and encoder against
 * each other: parse(encode(x)) == x on seeded random streams, with and
 * without running status, with real-time bytes injected anywhere.  Byte layouts from the
 * MIDI 1.0 Detailed Specification [M1] (status table, running status, real-time
 * messages), alsa-lib [AL]; the MPE configuration message from MPE 1.0 [MPE].
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <cmocka.h>

#include "latticed/midi_encoder.h"
#include "latticed/midi_parser.h"
#include "test_rng.h"

static void expect_bytes(const uint8_t *got, size_t n, const uint8_t *want, size_t wn)
{
	assert_int_equal(n, wn);
	assert_memory_equal(got, want, wn);
}

#define WANT(got, n, ...)                                                  \
	do {                                                               \
		static const uint8_t w_[] = { __VA_ARGS__ };               \
		expect_bytes((got), (n), w_, sizeof w_);                   \
	} while (0)

/* Appends m to a stream the way a running-status writer does: encoded in
 * full, its status byte left out when the tracker says so. */
static size_t put_running(struct midi_running_status *rs, bool running, const struct midi_msg *m,
			  uint8_t *out, size_t capacity)
{
	uint8_t full[64];
	size_t n = midi_msg_encode(m, full, sizeof full);
	if (n == 0)
		return 0;
	size_t skip = running ? midi_running_status_skip(rs, full) : 0;
	if (n - skip > capacity)
		return 0;
	memcpy(out, full + skip, n - skip);
	midi_running_status_sent(rs, full[0]);
	return n - skip;
}

static void test_encode_full_status(void **state)
{
	(void)state;
	uint8_t b[8];
	struct midi_msg m = midi_msg_note_on(2, 60, 100);
	/* [M1]: 9n key velocity */
	WANT(b, midi_msg_encode(&m, b, sizeof b), 0x92, 60, 100);
	m = midi_msg_program(15, 7);
	WANT(b, midi_msg_encode(&m, b, sizeof b), 0xCF, 7);
	/* [AL], [M1]: bend centre 8192 = En 00 40, 16383 = En 7F 7F */
	m = midi_msg_pitch_bend(0, 8192);
	WANT(b, midi_msg_encode(&m, b, sizeof b), 0xE0, 0x00, 0x40);
	m = midi_msg_pitch_bend(1, 16383);
	WANT(b, midi_msg_encode(&m, b, sizeof b), 0xE1, 0x7F, 0x7F);
	m = midi_msg_make(MIDI_SONG_POSITION, 1, 2);
	WANT(b, midi_msg_encode(&m, b, sizeof b), 0xF2, 1, 2);
	m = midi_msg_make(MIDI_CLOCK, 0, 0);
	WANT(b, midi_msg_encode(&m, b, sizeof b), 0xF8);
	/* MPE 1.0 [MPE] section 2.1: the MCM is RPN 6 (CC101 0, CC100 6) on the
	 * master channel, CC6 the member count; lower zone with 7 members */
	struct midi_running_status rs;
	midi_running_status_reset(&rs);
	uint8_t mcm[16];
	size_t n = 0;
	struct midi_msg seq[] = { midi_msg_control(0, 100, 6), midi_msg_control(0, 101, 0),
				  midi_msg_control(0, 6, 7) };
	for (int i = 0; i < 3; i++)
		n += midi_msg_encode(&seq[i], mcm + n, sizeof mcm - n);
	WANT(mcm, n, 0xB0, 0x64, 0x06, 0xB0, 0x65, 0x00, 0xB0, 0x06, 0x07);
	/* same bytes with running status drop the repeated B0 [M1 running status] */
	n = 0;
	for (int i = 0; i < 3; i++)
		n += put_running(&rs, true, &seq[i], mcm + n, sizeof mcm - n);
	WANT(mcm, n, 0xB0, 0x64, 0x06, 0x65, 0x00, 0x06, 0x07);
}

static void test_encoder_running_status_rules(void **state)
{
	(void)state;
	struct midi_running_status e;
	midi_running_status_reset(&e);
	uint8_t b[64];
	size_t n = 0;
	struct midi_msg on = midi_msg_note_on(0, 60, 100);
	struct midi_msg on2 = midi_msg_note_on(0, 62, 100);
	struct midi_msg clock = midi_msg_make(MIDI_CLOCK, 0, 0);
	struct midi_msg tune = midi_msg_make(MIDI_TUNE_REQUEST, 0, 0);
	static const uint8_t sx[] = { 0xF0, 0x7D, 0x00, 0xF7 };
	struct midi_msg sysex = midi_msg_sysex(sx, sizeof sx);
	struct midi_msg on_ch1 = midi_msg_note_on(1, 62, 100);

	n += put_running(&e, true, &on, b + n, sizeof b - n);
	n += put_running(&e, true, &clock, b + n, sizeof b - n);   /* [M1] real-time keeps it */
	n += put_running(&e, true, &on2, b + n, sizeof b - n);
	n += put_running(&e, true, &tune, b + n, sizeof b - n);    /* [M1] system common cancels */
	n += put_running(&e, true, &on2, b + n, sizeof b - n);
	n += put_running(&e, true, &sysex, b + n, sizeof b - n);   /* [M1] SysEx cancels */
	n += put_running(&e, true, &on, b + n, sizeof b - n);
	n += put_running(&e, true, &on_ch1, b + n, sizeof b - n);  /* other channel: new status */
	WANT(b, n, 0x90, 60, 100, 0xF8, 62, 100, 0xF6, 0x90, 62, 100, 0xF0, 0x7D, 0x00, 0xF7,
	     0x90, 60, 100, 0x91, 62, 100);

	/* reset (a reopened port, or a message that did not go out): status again */
	midi_running_status_reset(&e);
	n = put_running(&e, true, &on_ch1, b, sizeof b);
	WANT(b, n, 0x91, 62, 100);
	/* only a channel status byte can be left out */
	static const uint8_t clock_byte[] = { 0xF8 };
	assert_int_equal(midi_running_status_skip(&e, clock_byte), 0);
}

static void test_encoder_capacity_and_invalid(void **state)
{
	(void)state;
	uint8_t b[4] = { 0xAA, 0xAA, 0xAA, 0xAA };
	struct midi_msg on = midi_msg_note_on(0, 60, 100);
	assert_int_equal(midi_msg_encode(&on, b, 2), 0);
	assert_int_equal(b[0], 0xAA);               /* nothing written */
	assert_int_equal(midi_msg_encode(&on, b, 3), 3);
	assert_int_equal(midi_msg_encoded_length(&on), 3);

	static const uint8_t sx[] = { 0xF0, 1, 2, 3, 0xF7 };
	struct midi_msg sysex = midi_msg_sysex(sx, sizeof sx);
	assert_int_equal(midi_msg_encode(&sysex, b, sizeof b), 0);
	assert_int_equal(midi_msg_encoded_length(&sysex), 5);

	/* invalid messages are refused: they would corrupt the stream */
	struct midi_msg bad = { 0x90, { 0x80, 0 }, 0, NULL };
	assert_int_equal(midi_msg_encode(&bad, b, sizeof b), 0);
	bad = midi_msg_make(0xF5, 0, 0);
	assert_int_equal(midi_msg_encode(&bad, b, sizeof b), 0);
	bad = midi_msg_make(0xFD, 0, 0);
	assert_int_equal(midi_msg_encode(&bad, b, sizeof b), 0);
	bad = midi_msg_make(0x40, 0, 0);
	assert_int_equal(midi_msg_encode(&bad, b, sizeof b), 0);
	static const uint8_t sx_bad[] = { 0xF0, 0x80, 0xF7 };
	bad = midi_msg_sysex(sx_bad, 3);
	assert_int_equal(midi_msg_encode(&bad, b, sizeof b), 0);
}

/* --- randomized round trip ------------------------------------------------ */

static struct rng rng;

static uint32_t rnd(void)
{
	return rng_next(&rng);
}

static uint32_t below(uint32_t n)
{
	return rnd() % n;
}

#define MSGS 3000
#define POOL (MSGS * 40)
#define STREAM (MSGS * 64)

static const uint8_t realtime[] = { 0xF8, 0xFA, 0xFB, 0xFC, 0xFE, 0xFF };
static const uint8_t common[] = { 0xF1, 0xF2, 0xF3, 0xF6 };

struct run {
	struct midi_msg expected[MSGS * 8];
	size_t expected_count;
	uint8_t pool[POOL];          /* SysEx bodies of the generated messages */
	size_t pool_used;
	uint8_t stream[STREAM];
	size_t stream_length;
};

static struct midi_msg random_msg(struct run *r)
{
	uint32_t kind = below(100);
	if (kind < 70) {
		/* channel messages, weighted to few statuses so running status is used */
		static const uint8_t types[] = { 0x80, 0x90, 0x90, 0x90, 0xA0, 0xB0, 0xB0,
						 0xC0, 0xD0, 0xE0, 0xE0 };
		uint8_t type = types[below(sizeof types)];
		uint8_t ch = (uint8_t)below(3);
		uint8_t d2 = (uint8_t)below(128);
		if (type == 0x90 && below(4) == 0)
			d2 = 0;   /* velocity 0, a Note Off in disguise */
		struct midi_msg m = midi_msg_channel_make(type, ch, (uint8_t)below(128), d2);
		if (midi_status_data_length(m.status) == 1)
			m.data[1] = 0;
		return m;
	}
	if (kind < 80) {
		uint8_t st = common[below(sizeof common)];
		struct midi_msg m = midi_msg_make(st, (uint8_t)below(128), (uint8_t)below(128));
		int n = midi_status_data_length(st);
		if (n < 2)
			m.data[1] = 0;
		if (n < 1)
			m.data[0] = 0;
		return m;
	}
	if (kind < 90)
		return midi_msg_make(realtime[below(sizeof realtime)], 0, 0);
	uint16_t len = (uint16_t)(2 + below(30));
	assert_true(r->pool_used + len <= POOL);
	uint8_t *p = r->pool + r->pool_used;
	p[0] = 0xF0;
	for (uint16_t i = 1; i + 1 < len; i++)
		p[i] = (uint8_t)below(128);
	p[len - 1] = 0xF7;
	r->pool_used += len;
	return midi_msg_sysex(p, len);
}

/* What the parser is specified to deliver for m. */
static struct midi_msg as_parsed(struct midi_msg m)
{
	if ((m.status & 0xF0) == MIDI_NOTE_ON && m.data[1] == 0) {
		m.status = (uint8_t)(MIDI_NOTE_OFF | (m.status & 0x0F));
		m.data[1] = MIDI_DEFAULT_VELOCITY;
	}
	return m;
}

static void put_byte(struct run *r, uint8_t b, bool inject)
{
	if (inject && below(8) == 0) {
		uint8_t rt = realtime[below(sizeof realtime)];
		assert_true(r->stream_length < STREAM);
		r->stream[r->stream_length++] = rt;
		r->expected[r->expected_count++] = midi_msg_make(rt, 0, 0);
	}
	assert_true(r->stream_length < STREAM);
	r->stream[r->stream_length++] = b;
}

static void round_trip(uint64_t seed, bool running, bool inject)
{
	static struct run r;
	memset(&r, 0, sizeof r);
	rng.state = seed;
	struct midi_running_status e;
	midi_running_status_reset(&e);
	size_t saved = 0;

	for (int i = 0; i < MSGS; i++) {
		struct midi_msg m = random_msg(&r);
		uint8_t bytes[64];
		size_t n = put_running(&e, running, &m, bytes, sizeof bytes);
		assert_true(n > 0);
		saved += midi_msg_encoded_length(&m) - n;
		for (size_t k = 0; k < n; k++)
			put_byte(&r, bytes[k], inject);
		r.expected[r.expected_count++] = as_parsed(m);
	}
	if (running)
		assert_true(saved > 0);   /* the random stream did exercise running status */
	else
		assert_int_equal(saved, 0);

	static uint8_t sysbuf[64];
	struct midi_parser p;
	midi_parser_init(&p, sysbuf, sizeof sysbuf);
	size_t got = 0;
	for (size_t i = 0; i < r.stream_length; i++) {
		struct midi_msg m;
		if (!midi_parser_feed(&p, r.stream[i], &m))
			continue;
		assert_true(got < r.expected_count);
		if (!midi_msg_equal(&m, &r.expected[got])) {
			fprintf(stderr, "seed %llu message %zu: got %02X %02X %02X, want %02X %02X %02X\n",
				(unsigned long long)seed, got, m.status, m.data[0], m.data[1],
				r.expected[got].status, r.expected[got].data[0],
				r.expected[got].data[1]);
			fail();
		}
		got++;
	}
	assert_int_equal(got, r.expected_count);
	struct midi_parser_stats zero = { 0 };
	assert_memory_equal(&p.stats, &zero, sizeof zero);
}

static void test_round_trip_full_status(void **state)
{
	(void)state;
	for (uint64_t seed = 1; seed <= 5; seed++)
		round_trip(seed * 0x9E3779B97F4A7C15ULL, false, false);
}

static void test_round_trip_running_status(void **state)
{
	(void)state;
	for (uint64_t seed = 1; seed <= 5; seed++)
		round_trip(seed * 0x9E3779B97F4A7C15ULL + 7, true, false);
}

static void test_round_trip_realtime_injected(void **state)
{
	(void)state;
	for (uint64_t seed = 1; seed <= 5; seed++) {
		round_trip(seed * 0x2545F4914F6CDD1DULL, false, true);
		round_trip(seed * 0x2545F4914F6CDD1DULL + 3, true, true);
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_encode_full_status),
		cmocka_unit_test(test_encoder_running_status_rules),
		cmocka_unit_test(test_encoder_capacity_and_invalid),
		cmocka_unit_test(test_round_trip_full_status),
		cmocka_unit_test(test_round_trip_running_status),
		cmocka_unit_test(test_round_trip_realtime_injected),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
