/*
 * Tests for the parts of the I/O layer that need no MIDI system: port
 * name patterns (midi_io_matches), source numbers (source_ids), PortMidi's
 * event words (pm_bytes) and the backend table.
 * Sources: POSIX fnmatch(3) for the pattern syntax; portmidi.h (PortMidi
 * 217) for the packing of a PmEvent: first byte in the low byte, SysEx four
 * bytes a word, a real-time message always in a word of its own, the
 * Pm_Message macro; MIDI 1.0 [M1] for status bytes and data lengths.
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <cmocka.h>

#include "midi_io.h"
#include "pm_bytes.h"
#include "source_ids.h"
#ifdef HAVE_PORTMIDI_H
#include <portmidi.h>
#endif

static struct midi_io_port_spec spec_of(int n, const char *const *patterns)
{
	struct midi_io_port_spec p;
	memset(&p, 0, sizeof p);
	strcpy(p.name, "in");
	for (int i = 0; i < n; i++)
		strcpy(p.connect[i], patterns[i]);
	p.connect_count = n;
	return p;
}

/* A pattern may match "client:port", the client alone or the port alone. */
static void test_matches(void **state)
{
	(void)state;
	const char *one[] = { "USB Keys:USB Keys MIDI 1" };
	struct midi_io_port_spec p = spec_of(1, one);
	assert_true(midi_io_matches(&p, "USB Keys", "USB Keys MIDI 1"));
	assert_false(midi_io_matches(&p, "USB Keys", "USB Keys MIDI 2"));

	const char *client[] = { "Player" };
	p = spec_of(1, client);
	assert_true(midi_io_matches(&p, "Player", "out"));
	assert_false(midi_io_matches(&p, "Player 2", "out"));
	assert_false(midi_io_matches(&p, "player", "out")); /* fnmatch is case-sensitive */

	const char *port[] = { "VirMIDI 0-?" };
	p = spec_of(1, port);
	assert_true(midi_io_matches(&p, "Virtual Raw MIDI 0-0", "VirMIDI 0-3"));
	assert_false(midi_io_matches(&p, "Virtual Raw MIDI 0-0", "VirMIDI 0-10"));

	const char *star[] = { "Midi Through*" };
	p = spec_of(1, star);
	assert_true(midi_io_matches(&p, "Midi Through", "Midi Through Port-0"));
	assert_true(midi_io_matches(&p, "Midi Through Port-0", NULL)); /* PortMidi: device name only */
	assert_false(midi_io_matches(&p, "FLUID Synth (123)", "Synth input port (123:0)"));

	const char *whole[] = { "FLUID Synth*:*" };
	p = spec_of(1, whole);
	assert_true(midi_io_matches(&p, "FLUID Synth (4242)", "Synth input port (4242:0)"));

	const char *brackets[] = { "Keys [AB]:*" };
	p = spec_of(1, brackets);
	assert_true(midi_io_matches(&p, "Keys A", "out"));
	assert_false(midi_io_matches(&p, "Keys C", "out"));

	const char *several[] = { "Nothing*", "Recorder:in" };
	p = spec_of(2, several);
	assert_true(midi_io_matches(&p, "Recorder", "in"));
	assert_false(midi_io_matches(&p, "Recorder", "out"));

	p = spec_of(0, NULL);
	assert_false(midi_io_matches(&p, "Midi Through", "Midi Through Port-0"));
}

static void test_source_ids(void **state)
{
	(void)state;
	struct source_ids s;
	source_ids_init(&s);
	assert_int_equal(source_ids_find(&s, 0x8000), -1);
	assert_int_equal(source_ids_add(&s, 0x8000, "Keys:out"), 0);
	assert_int_equal(source_ids_add(&s, 0x8100, "Pads:out"), 1);
	assert_int_equal(source_ids_add(&s, 0x1400, "Midi Through:Midi Through Port-0"), 2);
	assert_int_equal(source_ids_find(&s, 0x8100), 1);
	assert_string_equal(s.name[1], "Pads:out");
	assert_int_equal(source_ids_count(&s), 3);

	/* the lowest free number is reused */
	assert_true(source_ids_remove(&s, 0));
	assert_false(source_ids_remove(&s, 0));
	assert_int_equal(source_ids_find(&s, 0x8000), -1);
	assert_int_equal(source_ids_add(&s, 0x8000, "Keys:out"), 0); /* back under its old number */
	assert_true(source_ids_remove(&s, 1));
	assert_int_equal(source_ids_add(&s, 0x9000, "New:out"), 1);

	/* sixteen at most */
	for (int i = 3; i < MIDI_IO_MAX_SOURCES; i++)
		assert_int_equal(source_ids_add(&s, 0xA000u + (uint32_t)i, "x"), i);
	assert_int_equal(source_ids_count(&s), MIDI_IO_MAX_SOURCES);
	assert_int_equal(source_ids_add(&s, 0xB000, "seventeenth"), -1);
	assert_true(source_ids_remove(&s, 7));
	assert_int_equal(source_ids_add(&s, 0xB000, "seventeenth"), 7);
	assert_false(source_ids_remove(&s, -1));
	assert_false(source_ids_remove(&s, MIDI_IO_MAX_SOURCES));

	/* a long name is cut, not overrun */
	char longname[300];
	memset(longname, 'n', sizeof longname - 1);
	longname[sizeof longname - 1] = '\0';
	assert_true(source_ids_remove(&s, 3));
	assert_int_equal(source_ids_add(&s, 0xC000, longname), 3);
	assert_int_equal(strlen(s.name[3]), SOURCE_NAME_MAX - 1);
}

/* ---- pm_bytes ----------------------------------------------------------- */

static uint32_t word(uint8_t a, uint8_t b, uint8_t c, uint8_t d)
{
	return (uint32_t)a | (uint32_t)b << 8 | (uint32_t)c << 16 | (uint32_t)d << 24;
}

struct stream {
	uint8_t bytes[1024];
	size_t n;
};

static void feed(struct pm_bytes *c, struct stream *s, uint32_t w)
{
	uint8_t out[4];
	size_t n = pm_bytes_from_word(c, w, out);
	assert_true(n <= 4);
	memcpy(s->bytes + s->n, out, n);
	s->n += n;
}

#define EXPECT_STREAM(s, ...)                                              \
	do {                                                               \
		static const uint8_t want_[] = { __VA_ARGS__ };            \
		assert_int_equal((s).n, sizeof want_);                     \
		assert_memory_equal((s).bytes, want_, sizeof want_);       \
	} while (0)

static void test_pm_short_messages(void **state)
{
	(void)state;
	struct pm_bytes c;
	struct stream s = { .n = 0 };
	pm_bytes_init(&c);
	/* the unused high bytes of a short message are ignored */
	feed(&c, &s, word(0x90, 0x3C, 0x64, 0x55));
	feed(&c, &s, word(0x90, 0x3C, 0x00, 0)); /* velocity 0 stays a Note On */
	feed(&c, &s, word(0xC2, 0x05, 0x77, 0));
	feed(&c, &s, word(0xE0, 0x00, 0x00, 0));
	feed(&c, &s, word(0xE0, 0x7F, 0x7F, 0));
	feed(&c, &s, word(0xF8, 0x11, 0x22, 0x33));
	feed(&c, &s, word(0xF2, 0x34, 0x24, 0));
	feed(&c, &s, word(0xF6, 0x01, 0, 0));
	EXPECT_STREAM(s, 0x90, 0x3C, 0x64, 0x90, 0x3C, 0x00, 0xC2, 0x05, 0xE0, 0x00, 0x00, 0xE0, 0x7F, 0x7F,
		      0xF8, 0xF2, 0x34, 0x24, 0xF6);
}

static void test_pm_sysex_packing(void **state)
{
	(void)state;
	struct pm_bytes c;
	struct stream s = { .n = 0 };
	pm_bytes_init(&c);
	/* F0 7D 01 02 03 04 05 F7 over two words, then a Note On */
	feed(&c, &s, word(0xF0, 0x7D, 0x01, 0x02));
	feed(&c, &s, word(0x03, 0x04, 0x05, 0xF7));
	feed(&c, &s, word(0x90, 0x40, 0x50, 0));
	/* F0 7D 06 F7 in one word; the bytes after F7 mean nothing */
	feed(&c, &s, word(0xF0, 0x7D, 0x06, 0xF7));
	/* ends in the first byte of a word: F0 01 02 03 | F7 xx xx xx */
	feed(&c, &s, word(0xF0, 0x01, 0x02, 0x03));
	feed(&c, &s, word(0xF7, 0x12, 0x34, 0x56));
	EXPECT_STREAM(s, 0xF0, 0x7D, 0x01, 0x02, 0x03, 0x04, 0x05, 0xF7, 0x90, 0x40, 0x50, 0xF0, 0x7D, 0x06,
		      0xF7, 0xF0, 0x01, 0x02, 0x03, 0xF7);
	assert_false(c.in_sysex);
}

/* portmidi.h: "A real-time message can occur within a sysex message ...
 * will always occupy a full PmEvent". */
static void test_pm_realtime_inside_sysex(void **state)
{
	(void)state;
	struct pm_bytes c;
	struct stream s = { .n = 0 };
	pm_bytes_init(&c);
	feed(&c, &s, word(0xF0, 0x7D, 0x01, 0x02));
	feed(&c, &s, word(0xF8, 0, 0, 0)); /* clock between two SysEx words */
	feed(&c, &s, word(0xFE, 0, 0, 0)); /* active sensing */
	feed(&c, &s, word(0x03, 0x04, 0x05, 0x06));
	feed(&c, &s, word(0x07, 0xF7, 0, 0));
	EXPECT_STREAM(s, 0xF0, 0x7D, 0x01, 0x02, 0xF8, 0xFE, 0x03, 0x04, 0x05, 0x06, 0x07, 0xF7);

	/* one inside a packed word (PortMidi promises not to): passed on
	 * where it stands, the SysEx goes on */
	s.n = 0;
	feed(&c, &s, word(0xF0, 0x01, 0xF8, 0x02));
	feed(&c, &s, word(0xF7, 0, 0, 0));
	EXPECT_STREAM(s, 0xF0, 0x01, 0xF8, 0x02, 0xF7);
}

/* [M1]: a status byte other than real-time ends a SysEx. */
static void test_pm_sysex_cut_short(void **state)
{
	(void)state;
	struct pm_bytes c;
	struct stream s = { .n = 0 };
	pm_bytes_init(&c);
	feed(&c, &s, word(0xF0, 0x7D, 0x01, 0x02));
	feed(&c, &s, word(0x90, 0x3C, 0x64, 0)); /* a new message: the SysEx is over */
	feed(&c, &s, word(0x03, 0x04, 0x05, 0xF7)); /* so this is stray data */
	EXPECT_STREAM(s, 0xF0, 0x7D, 0x01, 0x02, 0x90, 0x3C, 0x64);
	assert_int_equal(c.dropped_words, 1);

	/* a status byte inside a packed word ends it too */
	s.n = 0;
	feed(&c, &s, word(0xF0, 0x01, 0x90, 0x3C));
	assert_false(c.in_sysex);
	EXPECT_STREAM(s, 0xF0, 0x01, 0x90);

	/* SysEx data with no F0 seen (the device was opened mid-message) */
	s.n = 0;
	pm_bytes_init(&c);
	feed(&c, &s, word(0x10, 0x11, 0x12, 0x13));
	feed(&c, &s, word(0x14, 0xF7, 0, 0));
	feed(&c, &s, word(0x80, 0x3C, 0x40, 0));
	EXPECT_STREAM(s, 0x80, 0x3C, 0x40);
	assert_int_equal(c.dropped_words, 2);
}

static void test_pm_to_word(void **state)
{
	(void)state;
	uint32_t w;
	assert_true(pm_bytes_to_word((const uint8_t[]){ 0x90, 0x3C, 0x64 }, 3, &w));
	assert_int_equal(w, 0x643C90);
	assert_true(pm_bytes_to_word((const uint8_t[]){ 0xC1, 0x05 }, 2, &w));
	assert_int_equal(w, 0x05C1);
	assert_true(pm_bytes_to_word((const uint8_t[]){ 0xF8 }, 1, &w));
	assert_int_equal(w, 0xF8);
#ifdef HAVE_PORTMIDI_H
	assert_true(pm_bytes_to_word((const uint8_t[]){ 0xE5, 0x7F, 0x7F }, 3, &w));
	assert_int_equal(w, (uint32_t)Pm_Message(0xE5, 0x7F, 0x7F));
	assert_true(pm_bytes_to_word((const uint8_t[]){ 0xB0, 0x07, 0x00 }, 3, &w));
	assert_int_equal(w, (uint32_t)Pm_Message(0xB0, 0x07, 0x00));
	assert_int_equal(Pm_MessageStatus(w), 0xB0);
	assert_int_equal(Pm_MessageData1(w), 0x07);
#endif
	assert_false(pm_bytes_to_word((const uint8_t[]){ 0xF0, 0x01, 0xF7 }, 3, &w)); /* SysEx: WriteSysEx */
	assert_false(pm_bytes_to_word((const uint8_t[]){ 0x90, 0x3C }, 2, &w));
	assert_false(pm_bytes_to_word((const uint8_t[]){ 0x3C, 0x64 }, 2, &w));
	assert_false(pm_bytes_to_word((const uint8_t[]){ 0x90, 0x3C, 0xFF }, 3, &w));
	assert_false(pm_bytes_to_word((const uint8_t[]){ 0x90 }, 0, &w));
}

static void test_backend_table(void **state)
{
	(void)state;
	assert_non_null(midi_io_find("null"));
	assert_null(midi_io_find("nonesuch"));
	const char *names = midi_io_available();
	assert_non_null(strstr(names, "null"));
#ifdef LATTICED_HAVE_ALSA
	assert_non_null(midi_io_find("alsa"));
	assert_non_null(strstr(names, "alsa"));
#endif
#ifdef LATTICED_HAVE_PORTMIDI
	assert_non_null(midi_io_find("portmidi"));
	assert_non_null(strstr(names, "portmidi"));
#endif
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_matches),
		cmocka_unit_test(test_source_ids),
		cmocka_unit_test(test_pm_short_messages),
		cmocka_unit_test(test_pm_sysex_packing),
		cmocka_unit_test(test_pm_realtime_inside_sysex),
		cmocka_unit_test(test_pm_sysex_cut_short),
		cmocka_unit_test(test_pm_to_word),
		cmocka_unit_test(test_backend_table),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
