/*
 * Tests for midi_parser: hand-written byte streams, one rule each.
 * Sources (tags in DEVELOPERS.md): the MIDI 1.0 Detailed Specification
 * [M1]: its status byte table, running status, the System Real Time
 * messages and System Exclusive; alsa-lib seq_midi_event.c [AL], whose
 * byte coder follows the same rules.  Where the standard leaves the choice
 * to the receiver, the choice is ours and marked "(our rule)".
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <string.h>
#include <cmocka.h>

#include "latticed/midi_parser.h"

#define MAX_MSGS 64
#define STORE 4096

struct collected {
	struct midi_msg msgs[MAX_MSGS];
	int count;
	uint8_t store[STORE];   /* SysEx bytes copied out: parser's buffer is reused */
	size_t used;
};

static void feed_all(struct midi_parser *p, const uint8_t *bytes, size_t n, struct collected *c)
{
	for (size_t i = 0; i < n; i++) {
		struct midi_msg m;
		if (!midi_parser_feed(p, bytes[i], &m))
			continue;
		assert_true(c->count < MAX_MSGS);
		if (m.status == MIDI_SYSEX) {
			assert_true(c->used + m.sysex_length <= STORE);
			memcpy(c->store + c->used, m.sysex, m.sysex_length);
			m.sysex = c->store + c->used;
			c->used += m.sysex_length;
		}
		c->msgs[c->count++] = m;
	}
}

#define FEED(p, c, ...)                                                   \
	do {                                                              \
		static const uint8_t bytes_[] = { __VA_ARGS__ };          \
		feed_all((p), bytes_, sizeof bytes_, (c));                \
	} while (0)

static void expect(const struct collected *c, int i, uint8_t st, uint8_t d1, uint8_t d2)
{
	assert_true(i < c->count);
	assert_int_equal(c->msgs[i].status, st);
	assert_int_equal(c->msgs[i].data[0], d1);
	assert_int_equal(c->msgs[i].data[1], d2);
}

static uint8_t sysbuf[256];

static void setup_parser(struct midi_parser *p, struct collected *c)
{
	midi_parser_init(p, sysbuf, sizeof sysbuf);
	memset(c, 0, sizeof *c);
}

static void test_channel_messages(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* MIDI 1.0 [M1] status table: lengths 2,2,2,2,1,1,2 for 8n..En */
	FEED(&p, &c, 0x83, 60, 10, 0x94, 61, 100, 0xA5, 62, 7, 0xB6, 7, 99,
	     0xC7, 5, 0xD8, 33, 0xE9, 0x00, 0x40);
	assert_int_equal(c.count, 7);
	expect(&c, 0, 0x83, 60, 10);
	expect(&c, 1, 0x94, 61, 100);
	expect(&c, 2, 0xA5, 62, 7);
	expect(&c, 3, 0xB6, 7, 99);
	expect(&c, 4, 0xC7, 5, 0);
	expect(&c, 5, 0xD8, 33, 0);
	/* MIDI 1.0 [M1], [AL]: pitch bend LSB first, 00 40 = centre 8192 */
	expect(&c, 6, 0xE9, 0x00, 0x40);
	assert_int_equal(midi_msg_pitch_bend_value(&c.msgs[6]), 8192);
	assert_int_equal(midi_msg_type(&c.msgs[6]), MIDI_PITCH_BEND);
	assert_int_equal(midi_msg_channel(&c.msgs[6]), 9);
	assert_true(midi_msg_is_channel(&c.msgs[6]));
}

static void test_running_status(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* MIDI 1.0 [M1] running status: data bytes reuse the last channel status */
	FEED(&p, &c, 0x90, 60, 100, 62, 101, 64, 102, 0xC0, 3, 4, 5);
	assert_int_equal(c.count, 6);
	expect(&c, 0, 0x90, 60, 100);
	expect(&c, 1, 0x90, 62, 101);
	expect(&c, 2, 0x90, 64, 102);
	expect(&c, 3, 0xC0, 3, 0);
	expect(&c, 4, 0xC0, 4, 0);
	expect(&c, 5, 0xC0, 5, 0);
	assert_int_equal(p.stats.stray_data_bytes, 0);
}

static void test_note_on_velocity_zero(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* MIDI 1.0 [M1]: Note On velocity 0 = Note Off; release velocity 64 for
	 * devices without velocity sensing (from memory); works under running status */
	FEED(&p, &c, 0x9F, 60, 90, 60, 0, 0x95, 70, 0);
	assert_int_equal(c.count, 3);
	expect(&c, 0, 0x9F, 60, 90);
	expect(&c, 1, 0x8F, 60, 64);
	expect(&c, 2, 0x85, 70, 64);
	/* running status is still Note On, not Note Off */
	FEED(&p, &c, 71, 80);
	expect(&c, 3, 0x95, 71, 80);
	/* a real Note Off keeps its release velocity */
	FEED(&p, &c, 0x80, 60, 0);
	expect(&c, 4, 0x80, 60, 0);
}

static void test_realtime_inside_note(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* MIDI 1.0 [M1], System Real Time messages: they may sit between the
	 * data bytes of a Note On; delivered at once, the note continues */
	FEED(&p, &c, 0x91, 0xF8, 60, 0xFE, 100, 0xFA, 62, 0xFC, 0xFB, 101, 0xFF);
	assert_int_equal(c.count, 8);
	expect(&c, 0, 0xF8, 0, 0);
	expect(&c, 1, 0xFE, 0, 0);
	expect(&c, 2, 0x91, 60, 100);
	expect(&c, 3, 0xFA, 0, 0);
	expect(&c, 4, 0xFC, 0, 0);
	expect(&c, 5, 0xFB, 0, 0);
	/* [AL]: real-time never changes running status */
	expect(&c, 6, 0x91, 62, 101);
	expect(&c, 7, 0xFF, 0, 0);
	assert_false(midi_msg_is_channel(&c.msgs[7]));
	assert_int_equal(midi_msg_type(&c.msgs[7]), MIDI_RESET);
	assert_int_equal(p.stats.stray_data_bytes, 0);
	assert_int_equal(p.stats.truncated_messages, 0);
}

static void test_system_common_cancels_running_status(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* MIDI 1.0 [M1 "Guide"], [AL ST_INVALID]: system common cancels running
	 * status; a following bare data byte is dropped */
	FEED(&p, &c, 0x90, 60, 100, 0xF3, 5, 61, 100);
	assert_int_equal(c.count, 2);
	expect(&c, 0, 0x90, 60, 100);
	expect(&c, 1, 0xF3, 5, 0);
	assert_int_equal(p.stats.stray_data_bytes, 2);

	FEED(&p, &c, 0x90, 60, 100, 0xF6, 61, 100);
	assert_int_equal(c.count, 4);
	expect(&c, 3, 0xF6, 0, 0);
	assert_int_equal(p.stats.stray_data_bytes, 4);

	/* [M1] lengths: F1 one byte, F2 two bytes LSB first [AL songpos_event] */
	FEED(&p, &c, 0xF1, 0x23, 0xF2, 0x01, 0x02, 0x7F);
	assert_int_equal(c.count, 6);
	expect(&c, 4, 0xF1, 0x23, 0);
	expect(&c, 5, 0xF2, 0x01, 0x02);
	assert_int_equal(midi_msg_pitch_bend_value(&c.msgs[5]), 0x101);
	assert_int_equal(p.stats.stray_data_bytes, 5);

	/* real-time inside a system common message does not disturb it */
	FEED(&p, &c, 0xF2, 0x05, 0xF8, 0x06);
	assert_int_equal(c.count, 8);
	expect(&c, 6, 0xF8, 0, 0);
	expect(&c, 7, 0xF2, 0x05, 0x06);
}

static void test_sysex_cancels_running_status(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* [M1], [AL]: SysEx cancels running status */
	FEED(&p, &c, 0xB0, 7, 100, 0xF0, 0x7D, 0x01, 0xF7, 7, 90);
	assert_int_equal(c.count, 2);
	expect(&c, 0, 0xB0, 7, 100);
	assert_int_equal(c.msgs[1].status, MIDI_SYSEX);
	assert_int_equal(c.msgs[1].sysex_length, 4);
	static const uint8_t want[] = { 0xF0, 0x7D, 0x01, 0xF7 };
	assert_memory_equal(c.msgs[1].sysex, want, 4);
	assert_int_equal(p.stats.stray_data_bytes, 2);
}

static void test_sysex_with_realtime(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* [M1]: real-time bytes inside SysEx are delivered and do not end it */
	FEED(&p, &c, 0xF0, 0x7E, 0xF8, 0x7F, 0x08, 0xFE, 0x00, 0xF7);
	assert_int_equal(c.count, 3);
	expect(&c, 0, 0xF8, 0, 0);
	expect(&c, 1, 0xFE, 0, 0);
	static const uint8_t want[] = { 0xF0, 0x7E, 0x7F, 0x08, 0x00, 0xF7 };
	assert_int_equal(c.msgs[2].status, MIDI_SYSEX);
	assert_int_equal(c.msgs[2].sysex_length, sizeof want);
	assert_memory_equal(c.msgs[2].sysex, want, sizeof want);
	assert_int_equal(p.stats.sysex_interrupted, 0);
}

static void test_sysex_exactly_fits_and_overflow(void **state)
{
	(void)state;
	uint8_t small[8];
	struct midi_parser p;
	struct collected c;
	memset(&c, 0, sizeof c);
	midi_parser_init(&p, small, sizeof small);
	/* 8 bytes including F0 and F7: fits exactly */
	FEED(&p, &c, 0xF0, 1, 2, 3, 4, 5, 6, 0xF7);
	assert_int_equal(c.count, 1);
	assert_int_equal(c.msgs[0].sysex_length, 8);
	/* (our rule) 9 bytes do not fit: dropped whole, counted, not delivered truncated */
	FEED(&p, &c, 0xF0, 1, 2, 3, 4, 5, 6, 7, 0xF7);
	assert_int_equal(c.count, 1);
	assert_int_equal(p.stats.sysex_overflows, 1);
	/* the parser is fine afterwards; running status was cancelled by SysEx */
	FEED(&p, &c, 60, 0x90, 60, 1);
	assert_int_equal(c.count, 2);
	expect(&c, 1, 0x90, 60, 1);
	assert_int_equal(p.stats.stray_data_bytes, 1);
	/* a long overflow that is then cut short is counted once, as overflow */
	FEED(&p, &c, 0xF0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 0x80, 1, 2);
	assert_int_equal(c.count, 3);
	expect(&c, 2, 0x80, 1, 2);
	assert_int_equal(p.stats.sysex_overflows, 2);
	assert_int_equal(p.stats.sysex_interrupted, 0);
}

static void test_sysex_long(void **state)
{
	(void)state;
	/* SysEx of any length: a 408-byte MTS bulk dump size [MTS] in a big buffer */
	static uint8_t big[1000];
	uint8_t msg[408];
	msg[0] = 0xF0;
	for (size_t i = 1; i + 1 < sizeof msg; i++)
		msg[i] = (uint8_t)(i & 0x7F);
	msg[sizeof msg - 1] = 0xF7;
	struct midi_parser p;
	struct collected c;
	memset(&c, 0, sizeof c);
	midi_parser_init(&p, big, sizeof big);
	feed_all(&p, msg, sizeof msg, &c);
	assert_int_equal(c.count, 1);
	assert_int_equal(c.msgs[0].sysex_length, sizeof msg);
	assert_memory_equal(c.msgs[0].sysex, msg, sizeof msg);
}

static void test_sysex_no_buffer(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	memset(&c, 0, sizeof c);
	midi_parser_init(&p, NULL, 0);
	FEED(&p, &c, 0xF0, 0xF7, 0x90, 1, 2);
	assert_int_equal(c.count, 1);
	expect(&c, 0, 0x90, 1, 2);
	assert_int_equal(p.stats.sysex_overflows, 1);
}

static void test_sysex_interrupted(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* [M1]: any non-real-time status byte ends SysEx; (our rule) we drop it
	 * (we cannot know it was complete), the new status byte starts its message */
	FEED(&p, &c, 0xF0, 0x7E, 0x01, 0x92, 64, 90);
	assert_int_equal(c.count, 1);
	expect(&c, 0, 0x92, 64, 90);
	assert_int_equal(p.stats.sysex_interrupted, 1);
	/* cut by a system common byte, and by another F0 */
	FEED(&p, &c, 0xF0, 0x01, 0xF3, 9, 0xF0, 0x02, 0xF0, 0x03, 0xF7);
	assert_int_equal(c.count, 3);
	expect(&c, 1, 0xF3, 9, 0);
	static const uint8_t want[] = { 0xF0, 0x03, 0xF7 };
	assert_int_equal(c.msgs[2].sysex_length, 3);
	assert_memory_equal(c.msgs[2].sysex, want, 3);
	assert_int_equal(p.stats.sysex_interrupted, 3);
}

static void test_stray_data(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* [M1]: data bytes with no status are dropped (counted) */
	FEED(&p, &c, 1, 2, 3, 0xF8, 4, 0x90, 5, 6);
	assert_int_equal(c.count, 2);
	expect(&c, 0, 0xF8, 0, 0);
	expect(&c, 1, 0x90, 5, 6);
	assert_int_equal(p.stats.stray_data_bytes, 4);
}

static void test_undefined_bytes(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* [M1 table], [AL no event]: F9, FD undefined real-time: ignored, the
	 * note around them completes */
	FEED(&p, &c, 0x90, 60, 0xF9, 100, 0xFD, 61, 101);
	assert_int_equal(c.count, 2);
	expect(&c, 0, 0x90, 60, 100);
	expect(&c, 1, 0x90, 61, 101);
	assert_int_equal(p.stats.undefined_bytes, 2);
	/* F4, F5 undefined system common: counted; (our rule) as status bytes in
	 * the system common range they cancel running status like F1..F7 */
	FEED(&p, &c, 0xF4, 62, 102, 0x90, 63, 0xF5, 103);
	assert_int_equal(c.count, 2);
	assert_int_equal(p.stats.undefined_bytes, 4);
	assert_int_equal(p.stats.truncated_messages, 1);
	assert_int_equal(p.stats.stray_data_bytes, 3);
	/* inside SysEx, F9 is ignored and the SysEx survives */
	FEED(&p, &c, 0xF0, 0x10, 0xF9, 0x11, 0xF7);
	assert_int_equal(c.count, 3);
	assert_int_equal(c.msgs[2].sysex_length, 4);
	assert_int_equal(p.stats.undefined_bytes, 5);
}

static void test_stray_sysex_end(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* (our rule) F7 with no SysEx in progress is ignored and counted; as a
	 * system common byte [M1] it also cancels running status */
	FEED(&p, &c, 0xF7, 0x90, 1, 2, 0xF7, 3, 4);
	assert_int_equal(c.count, 1);
	expect(&c, 0, 0x90, 1, 2);
	assert_int_equal(p.stats.stray_sysex_ends, 2);
	assert_int_equal(p.stats.stray_data_bytes, 2);
}

static void test_truncated_message(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	/* a Note On cut after its key by a new status: dropped, counted (our rule) */
	FEED(&p, &c, 0x90, 60, 0xB0, 64, 127);
	assert_int_equal(c.count, 1);
	expect(&c, 0, 0xB0, 64, 127);
	assert_int_equal(p.stats.truncated_messages, 1);
	/* a lone status byte followed by another status also counts */
	FEED(&p, &c, 0xE0, 0xC0, 1);
	assert_int_equal(c.count, 2);
	expect(&c, 1, 0xC0, 1, 0);
	assert_int_equal(p.stats.truncated_messages, 2);
	/* running status merely waiting is not a truncated message */
	FEED(&p, &c, 0x90, 1, 2);
	assert_int_equal(p.stats.truncated_messages, 2);
}

static void test_reset(void **state)
{
	(void)state;
	struct midi_parser p;
	struct collected c;
	setup_parser(&p, &c);
	FEED(&p, &c, 0x90, 60, 100, 61);
	midi_parser_reset(&p);
	/* running status forgotten and the half note too */
	FEED(&p, &c, 100, 62, 100);
	assert_int_equal(c.count, 1);
	assert_int_equal(p.stats.stray_data_bytes, 3);
	/* a SysEx in progress is forgotten without counting */
	FEED(&p, &c, 0xF0, 1, 2);
	midi_parser_reset(&p);
	FEED(&p, &c, 3, 0xF7);
	assert_int_equal(c.count, 1);
	assert_int_equal(p.stats.sysex_interrupted, 0);
	assert_int_equal(p.stats.stray_sysex_ends, 1);
}

static void test_status_lengths(void **state)
{
	(void)state;
	/* MIDI 1.0 [M1] status byte table; alsa-lib [AL] status_event[] agrees */
	static const struct {
		uint8_t status;
		int length;
	} table[] = {
		{ 0x80, 2 }, { 0x8F, 2 }, { 0x90, 2 }, { 0xA3, 2 }, { 0xB0, 2 },
		{ 0xC0, 1 }, { 0xCF, 1 }, { 0xD0, 1 }, { 0xE0, 2 }, { 0xEF, 2 },
		{ 0xF0, 0 }, { 0xF1, 1 }, { 0xF2, 2 }, { 0xF3, 1 }, { 0xF4, 0 },
		{ 0xF5, 0 }, { 0xF6, 0 }, { 0xF7, 0 }, { 0xF8, 0 }, { 0xF9, 0 },
		{ 0xFA, 0 }, { 0xFB, 0 }, { 0xFC, 0 }, { 0xFD, 0 }, { 0xFE, 0 },
		{ 0xFF, 0 }, { 0x00, -1 }, { 0x7F, -1 },
	};
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++)
		assert_int_equal(midi_status_data_length(table[i].status), table[i].length);
}

static void test_msg_helpers(void **state)
{
	(void)state;
	struct midi_msg m = midi_msg_note_on(17, 200, 64);
	assert_int_equal(m.status, 0x91);   /* channel masked to 4 bits */
	assert_int_equal(m.data[0], 200 & 0x7F);
	/* [AL pitchbend encode], computed: 16383 -> 7F 7F, 0 -> 00 00 */
	m = midi_msg_pitch_bend(3, 16383);
	assert_int_equal(m.status, 0xE3);
	assert_int_equal(m.data[0], 0x7F);
	assert_int_equal(m.data[1], 0x7F);
	m = midi_msg_pitch_bend(3, 99999);
	assert_int_equal(midi_msg_pitch_bend_value(&m), 16383);
	m = midi_msg_pitch_bend(3, 0);
	assert_int_equal(midi_msg_pitch_bend_value(&m), 0);

	struct midi_msg bad = midi_msg_make(0xF4, 0, 0);
	assert_false(midi_msg_is_valid(&bad));
	bad = midi_msg_make(0x12, 0, 0);
	assert_false(midi_msg_is_valid(&bad));
	bad = (struct midi_msg){ 0x90, { 0x80, 1 }, 0, NULL };
	assert_false(midi_msg_is_valid(&bad));
	static const uint8_t sx_ok[] = { 0xF0, 0x7E, 0xF7 };
	static const uint8_t sx_bad[] = { 0xF0, 0x90, 0xF7 };
	static const uint8_t sx_open[] = { 0xF0, 0x7E, 0x01 };
	struct midi_msg sx = midi_msg_sysex(sx_ok, 3);
	assert_true(midi_msg_is_valid(&sx));
	sx = midi_msg_sysex(sx_bad, 3);
	assert_false(midi_msg_is_valid(&sx));
	sx = midi_msg_sysex(sx_open, 3);
	assert_false(midi_msg_is_valid(&sx));
	sx = midi_msg_sysex(NULL, 0);
	assert_false(midi_msg_is_valid(&sx));

	struct midi_msg a = midi_msg_sysex(sx_ok, 3), b = midi_msg_sysex(sx_bad, 3);
	assert_false(midi_msg_equal(&a, &b));
	uint8_t copy[3];
	memcpy(copy, sx_ok, 3);
	b = midi_msg_sysex(copy, 3);
	assert_true(midi_msg_equal(&a, &b));
}

static void test_garbage_never_delivers_invalid(void **state)
{
	(void)state;
	/* whatever arrives, every delivered message is valid MIDI [M1 status
	 * table]: a status byte, the right number of data bytes, a SysEx framed
	 * by F0/F7 that fits the buffer */
	uint8_t buf[32];
	struct midi_parser p;
	midi_parser_init(&p, buf, sizeof buf);
	uint32_t x = 99;
	unsigned delivered = 0;
	for (int i = 0; i < 200000; i++) {
		x = x * 1664525u + 1013904223u;
		uint8_t b = (uint8_t)(x >> 24);
		if ((x & 0x300) == 0)
			b = 0xF7;   /* make SysEx ends common enough */
		struct midi_msg m;
		if (!midi_parser_feed(&p, b, &m))
			continue;
		delivered++;
		assert_true(midi_msg_is_valid(&m));
		if (m.status == MIDI_SYSEX)
			assert_true(m.sysex_length <= sizeof buf);
		if ((m.status & 0xF0) == MIDI_NOTE_ON)
			assert_int_not_equal(m.data[1], 0);
	}
	assert_true(delivered > 1000);
	assert_true(p.stats.stray_data_bytes > 0);
	assert_true(p.stats.sysex_overflows + p.stats.sysex_interrupted > 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_channel_messages),
		cmocka_unit_test(test_running_status),
		cmocka_unit_test(test_note_on_velocity_zero),
		cmocka_unit_test(test_realtime_inside_note),
		cmocka_unit_test(test_system_common_cancels_running_status),
		cmocka_unit_test(test_sysex_cancels_running_status),
		cmocka_unit_test(test_sysex_with_realtime),
		cmocka_unit_test(test_sysex_exactly_fits_and_overflow),
		cmocka_unit_test(test_sysex_long),
		cmocka_unit_test(test_sysex_no_buffer),
		cmocka_unit_test(test_sysex_interrupted),
		cmocka_unit_test(test_stray_data),
		cmocka_unit_test(test_undefined_bytes),
		cmocka_unit_test(test_stray_sysex_end),
		cmocka_unit_test(test_truncated_message),
		cmocka_unit_test(test_reset),
		cmocka_unit_test(test_status_lengths),
		cmocka_unit_test(test_msg_helpers),
		cmocka_unit_test(test_garbage_never_delivers_invalid),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
