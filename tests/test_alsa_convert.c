/*
 * Tests for seq_event_bytes, the alsa backend's edge conversion, with no
 * sequencer: events are built in memory.
 * Sources: MIDI 1.0 [M1] (status bytes, data lengths, pitch bend LSB first
 * with 0x2000 as centre, RPN/NRPN controller numbers 101/100, 99/98, data
 * entry 6/38); alsa-lib include/seq_event.h [AL] (event types, the signed
 * bend value -8192..8191); and alsa-lib's own snd_midi_event coder, an
 * independent implementation of the same conversion, run here on the same
 * input (its decoder expands CONTROL14 and (N)RPN events; its encoder cuts
 * SysEx into chunks the way the kernel's rawmidi bridge does).
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <string.h>
#include <cmocka.h>

#include "seq_event_bytes.h"
#include "latticed/midi_parser.h"

static snd_seq_event_t event(snd_seq_event_type_t type)
{
	snd_seq_event_t ev;
	snd_seq_ev_clear(&ev);
	ev.type = type;
	return ev;
}

static snd_seq_event_t note(snd_seq_event_type_t type, int ch, int key, int vel)
{
	snd_seq_event_t ev = event(type);
	ev.data.note.channel = (unsigned char)ch;
	ev.data.note.note = (unsigned char)key;
	ev.data.note.velocity = (unsigned char)vel;
	return ev;
}

static snd_seq_event_t ctrl(snd_seq_event_type_t type, int ch, unsigned param, int value)
{
	snd_seq_event_t ev = event(type);
	ev.data.control.channel = (unsigned char)ch;
	ev.data.control.param = param;
	ev.data.control.value = value;
	return ev;
}

static void expect_bytes(const snd_seq_event_t *ev, const uint8_t *want, size_t n)
{
	uint8_t got[SEQ_EVENT_BYTES_MAX];
	size_t len = seq_event_to_bytes(ev, got);
	assert_int_equal(len, n);
	assert_memory_equal(got, want, n);
}

#define EXPECT(ev, ...)                                                    \
	do {                                                               \
		static const uint8_t want_[] = { __VA_ARGS__ };            \
		snd_seq_event_t ev_ = (ev);                                \
		expect_bytes(&ev_, want_, sizeof want_);                   \
	} while (0)

/* alsa-lib's decoder with running status off, so every message carries
 * its status byte as ours do. */
static size_t alsa_decode(const snd_seq_event_t *ev, uint8_t *out, size_t size)
{
	snd_midi_event_t *dev;
	assert_int_equal(snd_midi_event_new(256, &dev), 0);
	snd_midi_event_no_status(dev, 1);
	long n = snd_midi_event_decode(dev, out, (long)size, ev);
	snd_midi_event_free(dev);
	return n < 0 ? 0 : (size_t)n;
}

static void same_as_alsa(const snd_seq_event_t *ev)
{
	uint8_t ours[SEQ_EVENT_BYTES_MAX], theirs[64];
	size_t a = seq_event_to_bytes(ev, ours);
	size_t b = alsa_decode(ev, theirs, sizeof theirs);
	assert_int_equal(a, b);
	assert_memory_equal(ours, theirs, a);
}

/* [M1] channel messages; [AL] field names. */
static void test_channel_messages(void **state)
{
	(void)state;
	EXPECT(note(SND_SEQ_EVENT_NOTEON, 0, 60, 100), 0x90, 0x3C, 0x64);
	EXPECT(note(SND_SEQ_EVENT_NOTEOFF, 15, 60, 64), 0x8F, 0x3C, 0x40);
	EXPECT(note(SND_SEQ_EVENT_KEYPRESS, 3, 61, 32), 0xA3, 0x3D, 0x20);
	EXPECT(ctrl(SND_SEQ_EVENT_CONTROLLER, 1, 7, 100), 0xB1, 0x07, 0x64);
	EXPECT(ctrl(SND_SEQ_EVENT_PGMCHANGE, 2, 0, 5), 0xC2, 0x05);
	EXPECT(ctrl(SND_SEQ_EVENT_CHANPRESS, 4, 0, 48), 0xD4, 0x30);
}

/* A Note On with velocity 0 stays a Note On: [AL] seq_midi_event.c does
 * no conversion, and the daemon's parser releases the note itself. */
static void test_velocity_zero_note_on(void **state)
{
	(void)state;
	EXPECT(note(SND_SEQ_EVENT_NOTEON, 5, 64, 0), 0x95, 0x40, 0x00);
	snd_seq_event_t ev = note(SND_SEQ_EVENT_NOTEON, 5, 64, 0);
	same_as_alsa(&ev);
}

/* [AL] seq_event.h: the sequencer's bend is signed, 0 = centre; [M1] the
 * wire value is 14 bits, LSB first, 0x2000 = centre. */
static void test_bend_signedness(void **state)
{
	(void)state;
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 0, 0, -8192), 0xE0, 0x00, 0x00);
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 0, 0, 0), 0xE0, 0x00, 0x40);
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 0, 0, 8191), 0xE0, 0x7F, 0x7F);
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 9, 0, 1), 0xE9, 0x01, 0x40);
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 9, 0, -1), 0xE9, 0x7F, 0x3F);
	/* Out of range (only a faulty client sends it): clamped, where
	 * alsa-lib wraps (our rule: a wrapped bend jumps by two octaves). */
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 0, 0, 8192), 0xE0, 0x7F, 0x7F);
	EXPECT(ctrl(SND_SEQ_EVENT_PITCHBEND, 0, 0, -9000), 0xE0, 0x00, 0x00);
	for (int v = -8192; v <= 8191; v += 127) {
		snd_seq_event_t ev = ctrl(SND_SEQ_EVENT_PITCHBEND, v & 15, 0, v);
		same_as_alsa(&ev);
	}
}

/* [AL] extra_decode_ctrl14: below 32, CC n with the MSB then CC n+32 with
 * the LSB; from 32 up, one 7-bit CC.  [M1]: CC 0-31 MSB, 32-63 LSB. */
static void test_control14(void **state)
{
	(void)state;
	EXPECT(ctrl(SND_SEQ_EVENT_CONTROL14, 0, 7, 0x3FFF), 0xB0, 0x07, 0x7F, 0xB0, 0x27, 0x7F);
	EXPECT(ctrl(SND_SEQ_EVENT_CONTROL14, 2, 1, 0x2001), 0xB2, 0x01, 0x40, 0xB2, 0x21, 0x01);
	EXPECT(ctrl(SND_SEQ_EVENT_CONTROL14, 2, 64, 127), 0xB2, 0x40, 0x7F);
	const unsigned params[] = { 0, 1, 6, 31, 32, 64, 100, 127 };
	const int values[] = { 0, 1, 127, 128, 0x2000, 0x3FFF };
	for (size_t p = 0; p < sizeof params / sizeof params[0]; p++)
		for (size_t v = 0; v < sizeof values / sizeof values[0]; v++) {
			snd_seq_event_t ev = ctrl(SND_SEQ_EVENT_CONTROL14, (int)p, params[p],
						  params[p] < 32 ? values[v] : values[v] & 0x7F);
			same_as_alsa(&ev);
		}
}

/* [M1]/[AL] extra_decode_xrpn: RPN = CC 101 (MSB), 100 (LSB); NRPN = 99,
 * 98; then data entry 6 (MSB) and 38 (LSB). */
static void test_rpn_nrpn(void **state)
{
	(void)state;
	/* RPN 0,0 (bend sensitivity) = 12 semitones, 0 cents */
	EXPECT(ctrl(SND_SEQ_EVENT_REGPARAM, 1, 0x0000, 12 << 7), 0xB1, 101, 0, 0xB1, 100, 0, 0xB1, 6, 12, 0xB1,
	       38, 0);
	/* RPN 0,1 (fine tuning) at +50 cents: 0x3000 */
	EXPECT(ctrl(SND_SEQ_EVENT_REGPARAM, 0, 0x0001, 0x3000), 0xB0, 101, 0, 0xB0, 100, 1, 0xB0, 6, 0x60, 0xB0,
	       38, 0);
	EXPECT(ctrl(SND_SEQ_EVENT_NONREGPARAM, 15, (5 << 7) | 9, 0x3FFF), 0xBF, 99, 5, 0xBF, 98, 9, 0xBF, 6,
	       0x7F, 0xBF, 38, 0x7F);
	const unsigned params[] = { 0, 1, 5, 0x7F, 0x80, 0x3FFF };
	for (size_t p = 0; p < sizeof params / sizeof params[0]; p++) {
		snd_seq_event_t r = ctrl(SND_SEQ_EVENT_REGPARAM, 3, params[p], (int)(0x3FFF - params[p]));
		snd_seq_event_t n = ctrl(SND_SEQ_EVENT_NONREGPARAM, 4, params[p], (int)params[p]);
		same_as_alsa(&r);
		same_as_alsa(&n);
	}
}

/* [M1] system common and real-time; [AL] event types. */
static void test_system_messages(void **state)
{
	(void)state;
	EXPECT(ctrl(SND_SEQ_EVENT_SONGPOS, 0, 0, 0x1234), 0xF2, 0x34, 0x24);
	EXPECT(ctrl(SND_SEQ_EVENT_SONGSEL, 0, 0, 9), 0xF3, 0x09);
	EXPECT(ctrl(SND_SEQ_EVENT_QFRAME, 0, 0, 0x25), 0xF1, 0x25);
	EXPECT(event(SND_SEQ_EVENT_TUNE_REQUEST), 0xF6);
	EXPECT(event(SND_SEQ_EVENT_CLOCK), 0xF8);
	EXPECT(event(SND_SEQ_EVENT_START), 0xFA);
	EXPECT(event(SND_SEQ_EVENT_CONTINUE), 0xFB);
	EXPECT(event(SND_SEQ_EVENT_STOP), 0xFC);
	EXPECT(event(SND_SEQ_EVENT_SENSING), 0xFE);
	EXPECT(event(SND_SEQ_EVENT_RESET), 0xFF);
	const snd_seq_event_type_t types[] = { SND_SEQ_EVENT_TUNE_REQUEST, SND_SEQ_EVENT_CLOCK,
					       SND_SEQ_EVENT_START,        SND_SEQ_EVENT_CONTINUE,
					       SND_SEQ_EVENT_STOP,         SND_SEQ_EVENT_SENSING,
					       SND_SEQ_EVENT_RESET };
	for (size_t i = 0; i < sizeof types / sizeof types[0]; i++) {
		snd_seq_event_t ev = event(types[i]);
		same_as_alsa(&ev);
	}
	snd_seq_event_t sp = ctrl(SND_SEQ_EVENT_SONGPOS, 0, 0, 0x1234);
	same_as_alsa(&sp);
}

/* Events that are no MIDI message give nothing. */
static void test_no_midi(void **state)
{
	(void)state;
	uint8_t out[SEQ_EVENT_BYTES_MAX];
	const snd_seq_event_type_t types[] = { SND_SEQ_EVENT_PORT_START, SND_SEQ_EVENT_PORT_SUBSCRIBED,
					       SND_SEQ_EVENT_CLIENT_EXIT, SND_SEQ_EVENT_ECHO,
					       SND_SEQ_EVENT_TEMPO,      SND_SEQ_EVENT_NONE };
	for (size_t i = 0; i < sizeof types / sizeof types[0]; i++) {
		snd_seq_event_t ev = event(types[i]);
		assert_int_equal(seq_event_to_bytes(&ev, out), 0);
	}
	snd_seq_event_t ev = event(SND_SEQ_EVENT_NOTEON);
	const uint8_t *b;
	size_t n;
	assert_false(seq_event_sysex(&ev, &b, &n));
}

/* A 300-byte SysEx cut into chunks by alsa-lib's encoder with a 256-byte
 * buffer, as the kernel's rawmidi bridge cuts a device's SysEx [AL
 * snd_midi_event_encode_byte]: the chunks are handed on in order, only the
 * first holds F0, only the last F7, and the daemon's per-source parser
 * (core midi_parser) joins them into the original message. */
static void test_chunked_sysex(void **state)
{
	(void)state;
	uint8_t sysex[300];
	sysex[0] = 0xF0;
	sysex[1] = 0x7D; /* non-commercial ID [M1] */
	for (int i = 2; i < 299; i++)
		sysex[i] = (uint8_t)((i * 5) & 0x7F);
	sysex[299] = 0xF7;

	snd_midi_event_t *dev;
	assert_int_equal(snd_midi_event_new(256, &dev), 0);
	static uint8_t joined_raw[1024], parser_buf[1024];
	size_t joined = 0;
	int chunks = 0;
	struct midi_parser parser;
	midi_parser_init(&parser, parser_buf, sizeof parser_buf);
	int whole = 0;
	for (int i = 0; i < 300; i++) {
		snd_seq_event_t ev;
		snd_seq_ev_clear(&ev);
		if (snd_midi_event_encode_byte(dev, sysex[i], &ev) != 1)
			continue;
		const uint8_t *b;
		size_t n;
		assert_true(seq_event_sysex(&ev, &b, &n));
		assert_int_equal(b[0] == 0xF0, chunks == 0);
		chunks++;
		/* copy out: the coder reuses its buffer */
		memcpy(joined_raw + joined, b, n);
		for (size_t k = 0; k < n; k++) {
			struct midi_msg m;
			if (midi_parser_feed(&parser, b[k], &m)) {
				assert_int_equal(m.status, 0xF0);
				assert_int_equal(m.sysex_length, 300);
				assert_memory_equal(m.sysex, sysex, 300);
				whole++;
			}
		}
		joined += n;
	}
	snd_midi_event_free(dev);
	assert_int_equal(chunks, 2);
	assert_int_equal(joined, 300);
	assert_memory_equal(joined_raw, sysex, 300);
	assert_int_equal(whole, 1);
}

/* Bytes -> event, checked against alsa-lib's encoder on the same bytes. */
static void same_event_as_alsa(const uint8_t *bytes, size_t n)
{
	snd_seq_event_t ours, theirs;
	snd_seq_ev_clear(&ours);
	snd_seq_ev_clear(&theirs);
	assert_true(seq_event_from_bytes(&ours, bytes, n));
	snd_midi_event_t *dev;
	assert_int_equal(snd_midi_event_new(1024, &dev), 0);
	long used = snd_midi_event_encode(dev, bytes, (long)n, &theirs);
	assert_int_equal(used, (long)n);
	assert_int_equal(ours.type, theirs.type);
	assert_int_equal(ours.flags & SND_SEQ_EVENT_LENGTH_MASK, theirs.flags & SND_SEQ_EVENT_LENGTH_MASK);
	if (ours.type == SND_SEQ_EVENT_SYSEX) {
		assert_int_equal(ours.data.ext.len, theirs.data.ext.len);
		assert_memory_equal(ours.data.ext.ptr, theirs.data.ext.ptr, ours.data.ext.len);
	} else if (ours.type == SND_SEQ_EVENT_NOTEON || ours.type == SND_SEQ_EVENT_NOTEOFF ||
		   ours.type == SND_SEQ_EVENT_KEYPRESS) {
		assert_int_equal(ours.data.note.channel, theirs.data.note.channel);
		assert_int_equal(ours.data.note.note, theirs.data.note.note);
		assert_int_equal(ours.data.note.velocity, theirs.data.note.velocity);
	} else if (n > 1) {
		assert_int_equal(ours.data.control.channel, theirs.data.control.channel);
		assert_int_equal(ours.data.control.param, theirs.data.control.param);
		assert_int_equal(ours.data.control.value, theirs.data.control.value);
	}
	snd_midi_event_free(dev); /* theirs.data.ext.ptr pointed into its buffer */
}

#define SAME_EVENT(...)                                                    \
	do {                                                               \
		static const uint8_t b_[] = { __VA_ARGS__ };               \
		same_event_as_alsa(b_, sizeof b_);                         \
	} while (0)

static void test_bytes_to_event(void **state)
{
	(void)state;
	SAME_EVENT(0x90, 0x3C, 0x64);
	SAME_EVENT(0x90, 0x3C, 0x00); /* stays a Note On */
	SAME_EVENT(0x8F, 0x3C, 0x40);
	SAME_EVENT(0xA3, 0x3D, 0x20);
	SAME_EVENT(0xB1, 0x07, 0x64);
	SAME_EVENT(0xC2, 0x05);
	SAME_EVENT(0xD4, 0x30);
	SAME_EVENT(0xE0, 0x00, 0x00);
	SAME_EVENT(0xE0, 0x00, 0x40);
	SAME_EVENT(0xE0, 0x7F, 0x7F);
	SAME_EVENT(0xF1, 0x25);
	SAME_EVENT(0xF2, 0x34, 0x24);
	SAME_EVENT(0xF3, 0x09);
	SAME_EVENT(0xF6);
	SAME_EVENT(0xF8);
	SAME_EVENT(0xFA);
	SAME_EVENT(0xFB);
	SAME_EVENT(0xFC);
	SAME_EVENT(0xFE);
	SAME_EVENT(0xFF);
	SAME_EVENT(0xF0, 0x7E, 0x7F, 0x09, 0x01, 0xF7); /* GM on [M1] */

	/* bend values directly, [AL] signed around 0 */
	snd_seq_event_t ev;
	snd_seq_ev_clear(&ev);
	assert_true(seq_event_from_bytes(&ev, (const uint8_t[]){ 0xE3, 0x00, 0x00 }, 3));
	assert_int_equal(ev.type, SND_SEQ_EVENT_PITCHBEND);
	assert_int_equal(ev.data.control.channel, 3);
	assert_int_equal(ev.data.control.value, -8192);
	assert_true(seq_event_from_bytes(&ev, (const uint8_t[]){ 0xE3, 0x7F, 0x7F }, 3));
	assert_int_equal(ev.data.control.value, 8191);
	assert_true(seq_event_from_bytes(&ev, (const uint8_t[]){ 0xE3, 0x00, 0x40 }, 3));
	assert_int_equal(ev.data.control.value, 0);

	/* a long SysEx is one event pointing at the caller's bytes: FluidSynth's
	 * ALSA driver takes each SYSEX event as a whole message (from memory) */
	static uint8_t big[1000];
	big[0] = 0xF0;
	memset(big + 1, 0x11, 998);
	big[999] = 0xF7;
	assert_true(seq_event_from_bytes(&ev, big, sizeof big));
	assert_int_equal(ev.type, SND_SEQ_EVENT_SYSEX);
	assert_int_equal(ev.data.ext.len, 1000);
	assert_ptr_equal(ev.data.ext.ptr, big);
}

static void refused(const uint8_t *b, size_t n)
{
	snd_seq_event_t ev;
	snd_seq_ev_clear(&ev);
	ev.type = SND_SEQ_EVENT_ECHO;
	assert_false(seq_event_from_bytes(&ev, b, n));
	assert_int_equal(ev.type, SND_SEQ_EVENT_ECHO); /* untouched */
}

#define REFUSED(...)                                                       \
	do {                                                               \
		static const uint8_t b_[] = { __VA_ARGS__ };               \
		refused(b_, sizeof b_);                                    \
	} while (0)

static void test_bytes_refused(void **state)
{
	(void)state;
	refused((const uint8_t *)"", 0);
	REFUSED(0x90, 0x3C);             /* too short */
	REFUSED(0x90, 0x3C, 0x64, 0x00); /* too long */
	REFUSED(0xC0, 0x05, 0x00);
	REFUSED(0x3C, 0x64);             /* no status (running status is not taken) */
	REFUSED(0x90, 0x3C, 0x80);       /* status byte as data */
	REFUSED(0xF4);                   /* undefined [M1] */
	REFUSED(0xF5);
	REFUSED(0xFD);
	REFUSED(0xF7);                   /* an end without a start */
	REFUSED(0xF0, 0x7D, 0x01);       /* SysEx without F7 */
	REFUSED(0xF0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_channel_messages), cmocka_unit_test(test_velocity_zero_note_on),
		cmocka_unit_test(test_bend_signedness),  cmocka_unit_test(test_control14),
		cmocka_unit_test(test_rpn_nrpn),         cmocka_unit_test(test_system_messages),
		cmocka_unit_test(test_no_midi),          cmocka_unit_test(test_chunked_sysex),
		cmocka_unit_test(test_bytes_to_event),   cmocka_unit_test(test_bytes_refused),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
