/*
 * Tests for vlq against the example table of the Standard MIDI File
 * specification [SMF 1.0, as reproduced on liquisearch "Variable-length
 * quantity"], both ways, and the four-byte limit [SMF; FS errors on a 5th byte].
 */
#include <stdarg.h>
#include <stddef.h>
#include <setjmp.h>
#include <stdint.h>
#include <cmocka.h>

#include "vlq.h"

static const struct {
	uint32_t value;
	uint8_t bytes[4];
	size_t length;
} table[] = {
	{ 0x00000000, { 0x00 }, 1 },
	{ 0x00000040, { 0x40 }, 1 },                     /* from memory (SMF table row) */
	{ 0x0000007F, { 0x7F }, 1 },
	{ 0x00000080, { 0x81, 0x00 }, 2 },
	{ 0x00002000, { 0xC0, 0x00 }, 2 },
	{ 0x00003FFF, { 0xFF, 0x7F }, 2 },
	{ 0x00004000, { 0x81, 0x80, 0x00 }, 3 },
	{ 0x00100000, { 0xC0, 0x80, 0x00 }, 3 },         /* from memory (SMF table row) */
	{ 0x001FFFFF, { 0xFF, 0xFF, 0x7F }, 3 },
	{ 0x00200000, { 0x81, 0x80, 0x80, 0x00 }, 4 },
	{ 0x08000000, { 0xC0, 0x80, 0x80, 0x00 }, 4 },
	{ 0x0FFFFFFF, { 0xFF, 0xFF, 0xFF, 0x7F }, 4 },
};

static void test_encode_table(void **state)
{
	(void)state;
	/* [SMF] example table */
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++) {
		uint8_t out[VLQ_MAX_BYTES] = { 0 };
		size_t n = vlq_encode(table[i].value, out);
		assert_int_equal(n, table[i].length);
		assert_int_equal(vlq_length(table[i].value), table[i].length);
		assert_memory_equal(out, table[i].bytes, n);
	}
}

static void test_decode_table(void **state)
{
	(void)state;
	/* [SMF] example table, read back; a trailing byte must not be consumed */
	for (size_t i = 0; i < sizeof table / sizeof table[0]; i++) {
		uint8_t in[5] = { 0 };
		for (size_t k = 0; k < table[i].length; k++)
			in[k] = table[i].bytes[k];
		in[table[i].length] = 0x55;
		uint32_t v = 12345;
		size_t used = 99;
		assert_int_equal(vlq_decode(in, table[i].length + 1, &v, &used), VLQ_OK);
		assert_int_equal(v, table[i].value);
		assert_int_equal(used, table[i].length);
	}
}

static void test_limits(void **state)
{
	(void)state;
	uint8_t out[VLQ_MAX_BYTES];
	/* [SMF]: largest value 0x0FFFFFFF */
	assert_int_equal(vlq_encode(0x10000000, out), 0);
	assert_int_equal(vlq_length(0xFFFFFFFF), 0);
	/* [SMF]: a number takes at most four bytes, so a fifth is an error */
	static const uint8_t five[] = { 0x81, 0x80, 0x80, 0x80, 0x00 };
	uint32_t v;
	size_t used;
	assert_int_equal(vlq_decode(five, sizeof five, &v, &used), VLQ_TOO_LONG);
	static const uint8_t four_open[] = { 0xFF, 0xFF, 0xFF, 0xFF };
	assert_int_equal(vlq_decode(four_open, 4, &v, &used), VLQ_TOO_LONG);
	static const uint8_t cut[] = { 0x81, 0x80 };
	assert_int_equal(vlq_decode(cut, sizeof cut, &v, &used), VLQ_TRUNCATED);
	assert_int_equal(vlq_decode(cut, 0, &v, &used), VLQ_TRUNCATED);
	/* leading 80 bytes are legal padding: 80 80 00 = 0 (computed from the rule) */
	static const uint8_t padded[] = { 0x80, 0x80, 0x00 };
	assert_int_equal(vlq_decode(padded, 3, &v, &used), VLQ_OK);
	assert_int_equal(v, 0);
	assert_int_equal(used, 3);
}

static void test_every_length_boundary(void **state)
{
	(void)state;
	/* computed from the rule: 2^(7k) - 1 needs k bytes, 2^(7k) needs k + 1 */
	for (unsigned k = 1; k <= 4; k++) {
		uint32_t top = (uint32_t)((1ull << (7 * k)) - 1);
		uint8_t out[VLQ_MAX_BYTES];
		assert_int_equal(vlq_encode(top, out), k);
		uint32_t v;
		size_t used;
		assert_int_equal(vlq_decode(out, k, &v, &used), VLQ_OK);
		assert_int_equal(v, top);
		if (k < 4)
			assert_int_equal(vlq_encode(top + 1, out), k + 1);
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(test_encode_table),
		cmocka_unit_test(test_decode_table),
		cmocka_unit_test(test_limits),
		cmocka_unit_test(test_every_length_boundary),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
