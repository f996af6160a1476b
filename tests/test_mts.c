/*
 * Tests of the MTS and RPN message builders against the byte layouts of
 * the MIDI Tuning Standard [MTS] (single-note change F0 7F dd 08 02 tt ll
 * [kk xx yy zz] F7, bulk dump F0 7E dd 08 01 tt name[16] [xx yy zz]x128
 * cs F7; its checksum the XOR of 7E, the device ID, 08 01, tt and the
 * data, masked to 7 bits: the spec's "388 bytes" do not match its own
 * 16 + 384, so every byte from 7E to the last data byte counts) and the
 * RPN sequence CC101, CC100, CC6, then RPN null 127/127 (MIDI 1.0 [M1]).
 * The MPE configuration message is RPN 6 with the member count, for a
 * lower zone of 7 members (MPE 1.0 [MPE] section 2.1), in our CC101-first
 * order (either order is allowed, [M1]).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <string.h>

#include "mts.h"
#include "rpn.h"

static void single_note_change_layout(void **state)
{
	(void)state;
	uint8_t out[64];
	const uint8_t keys[2] = {63, 64};
	const uint8_t words[2][3] = {{0x3F, 0x6E, 0x3E}, {0x40, 0x02, 0x40}};
	size_t n = mts_single_note_change(0x7F, 0, 2, keys, words, out, sizeof out);
	const uint8_t want[] = {0xF0, 0x7F, 0x7F, 0x08, 0x02, 0x00, 0x02,
				63, 0x3F, 0x6E, 0x3E, 64, 0x40, 0x02, 0x40, 0xF7};
	assert_int_equal(n, sizeof want);
	assert_int_equal(n, MTS_SINGLE_NOTE_LENGTH(2));
	assert_memory_equal(out, want, n);
	/* too small, or a bad count: nothing */
	assert_int_equal(mts_single_note_change(0x7F, 0, 2, keys, words, out, 15), 0);
	assert_int_equal(mts_single_note_change(0x7F, 0, 0, keys, words, out, sizeof out), 0);
}

static void bulk_dump_layout_and_checksum(void **state)
{
	(void)state;
	uint8_t words[128][3];
	for (int k = 0; k < 128; k++) {
		words[k][0] = (uint8_t)k;
		words[k][1] = (uint8_t)(k ^ 0x55) & 0x7F;
		words[k][2] = 0x10;
	}
	uint8_t out[MTS_BULK_DUMP_LENGTH];
	size_t n = mts_bulk_dump(0x7F, 3, "hexany \x80", (const uint8_t (*)[3])words, out, sizeof out);
	assert_int_equal(n, 408);
	assert_int_equal(out[0], 0xF0);
	assert_int_equal(out[1], 0x7E);
	assert_int_equal(out[2], 0x7F);
	assert_int_equal(out[3], 0x08);
	assert_int_equal(out[4], 0x01);
	assert_int_equal(out[5], 3);
	assert_memory_equal(out + 6, "hexany ?        ", 16); /* padded, 7-bit */
	assert_memory_equal(out + 22 + 3 * 100, words[100], 3);
	uint8_t sum = 0;
	for (int i = 1; i <= 405; i++)
		sum ^= out[i];
	assert_int_equal(out[406], sum & 0x7F);
	assert_int_equal(out[407], 0xF7);
	for (int i = 1; i < 407; i++)
		assert_true(out[i] < 0x80);
	assert_int_equal(mts_bulk_dump(0x7F, 3, "x", (const uint8_t (*)[3])words, out, 407), 0);
}

static void rpn_sequence(void **state)
{
	(void)state;
	struct midi_msg seq[RPN_SEQUENCE_LENGTH];
	rpn_build(0, RPN_MPE_CONFIGURATION, 7, seq);
	const uint8_t want[5][3] = {
		{0xB0, 101, 0}, {0xB0, 100, 6}, {0xB0, 6, 7}, {0xB0, 101, 127}, {0xB0, 100, 127},
	};
	for (int i = 0; i < 5; i++) {
		assert_int_equal(seq[i].status, want[i][0]);
		assert_int_equal(seq[i].data[0], want[i][1]);
		assert_int_equal(seq[i].data[1], want[i][2]);
	}
	rpn_build(9, RPN_BEND_RANGE, 48, seq);
	assert_int_equal(seq[2].status, 0xB9);
	assert_int_equal(seq[2].data[1], 48);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(single_note_change_layout),
		cmocka_unit_test(bulk_dump_layout_and_checksum),
		cmocka_unit_test(rpn_sequence),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
