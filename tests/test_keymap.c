/*
 * Tests of the key map: the three layouts, transposition, the pitch of
 * every key against the model's formula (root_hz * ratio * P^period,
 * computed here independently in double precision), nearest-key and
 * deviation against the 12-TET formula f = 440 * 2^((n-69)/12) (ISO 16 /
 * MTS key numbering), and out-of-range keys.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <string.h>

#include "latticed/keymap.h"

static struct lattice lat;
static struct keymap map;

static void build_lattice(const char *const *seeds, int n, int k)
{
	struct lattice_spec s;
	memset(&s, 0, sizeof s);
	s.seed_count = n;
	for (int i = 0; i < n; i++) {
		assert_true(ratio_parse(seeds[i], &s.seeds[i]));
		strcpy(s.seed_text[i], seeds[i]);
	}
	s.choose = k;
	s.period.num = 2;
	s.period.den = 1;
	struct core_error err;
	if (!lattice_build(&lat, &s, &err))
		fail_msg("%s", err.text);
}

static const char *const hexany[] = {"1", "3", "5", "7"};

static struct keymap_spec spec_of(enum key_layout layout, int root_key, double root_hz)
{
	struct keymap_spec s;
	memset(&s, 0, sizeof s);
	s.layout = layout;
	s.root_key = root_key;
	s.root_hz = root_hz;
	return s;
}

static void build_map(const struct keymap_spec *s)
{
	struct core_error err;
	if (!keymap_build(&map, &lat, s, &err))
		fail_msg("%s", err.text);
}

/* Independent check of one sounding key: Hz from the model, then the
 * nearest 12-TET key and the deviation from f = 440 * 2^((n-69)/12). */
static void check_key_pitch(int key, double root_hz)
{
	const struct key_pitch *k = &map.keys[key];
	assert_int_equal(k->state, KEY_SOUNDING);
	double hz = root_hz * ratio_to_double(lat.tones[k->tone].ratio) * pow(2.0, k->period);
	assert_true(fabs(k->hz - hz) < hz * 1e-12);
	double n = 69.0 + 12.0 * log2(hz / 440.0);
	long nearest = lround(n);
	if (nearest > 127)
		nearest = 127;
	assert_int_equal(k->out_key, nearest);
	double et = 440.0 * pow(2.0, (nearest - 69.0) / 12.0);
	assert_true(fabs(k->cents_off - 1200.0 * log2(hz / et)) < 1e-9);
}

static void sequential_layout(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	struct keymap_spec s = spec_of(KEY_LAYOUT_SEQUENTIAL, 57, 220.0);
	build_map(&s);
	/* key 57 plays tone 0 (35/32) in period 0: 220 * 35/32 = 240.625 Hz */
	assert_int_equal(map.keys[57].tone, 0);
	assert_int_equal(map.keys[57].period, 0);
	assert_true(fabs(map.keys[57].hz - 240.625) < 1e-9);
	/* key 60 plays 3/2: 330 Hz, nearest key 64 (329.63 Hz), +1.955 cents */
	assert_int_equal(map.keys[60].tone, 3);
	assert_true(fabs(map.keys[60].hz - 330.0) < 1e-9);
	assert_int_equal(map.keys[60].out_key, 64);
	assert_true(fabs(map.keys[60].cents_off - 1.955) < 0.0005);
	/* wrap into the next period and the one below */
	assert_int_equal(map.keys[63].tone, 0);
	assert_int_equal(map.keys[63].period, 1);
	assert_true(fabs(map.keys[63].hz - 481.25) < 1e-9);
	assert_int_equal(map.keys[56].tone, 5);
	assert_int_equal(map.keys[56].period, -1);
	assert_true(fabs(map.keys[56].hz - 206.25) < 1e-9);
	for (int key = 0; key < KEYMAP_KEYS; key++) {
		int i = key - 57;
		int period = (int)floor(i / 6.0);
		if (map.keys[key].state == KEY_SOUNDING) {
			assert_int_equal(map.keys[key].tone, i - 6 * period);
			assert_int_equal(map.keys[key].period, period);
			check_key_pitch(key, 220.0);
		}
	}
	/* keys 0-27 fall below key 0's 8.1758 Hz, keys 93-127 above the top
	 * MTS word (13289.6566 Hz): silent and counted */
	assert_int_equal(map.keys[27].state, KEY_OUT_OF_RANGE);
	assert_int_equal(map.keys[28].state, KEY_SOUNDING);
	assert_int_equal(map.keys[92].state, KEY_SOUNDING);
	assert_int_equal(map.keys[93].state, KEY_OUT_OF_RANGE);
	assert_int_equal(map.out_of_range_count, 28 + 35);
	assert_int_equal(map.sounding_count, 128 - 63);
}

static void transposition(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	struct keymap_spec s = spec_of(KEY_LAYOUT_SEQUENTIAL, 57, 220.0);
	build_map(&s);
	struct keymap plain = map;
	s.transpose = 5;
	build_map(&s);
	for (int key = 5; key < KEYMAP_KEYS; key++) {
		assert_int_equal(map.keys[key].state, plain.keys[key - 5].state);
		if (map.keys[key].state == KEY_SOUNDING) {
			assert_int_equal(map.keys[key].tone, plain.keys[key - 5].tone);
			assert_true(map.keys[key].hz == plain.keys[key - 5].hz);
		}
	}
}

static void nearest_layout(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	struct keymap_spec s = spec_of(KEY_LAYOUT_NEAREST, 0, 220.0);
	build_map(&s);
	/* period 0 of the hexany on 1/1 = 220 Hz: 240.625 Hz -> key 59 (note
	 * 58.55), 275 -> 61, 288.75 -> 62, 330 -> 64, 385 -> 67, 412.5 -> 68 */
	const int keys[6] = {59, 61, 62, 64, 67, 68};
	for (int t = 0; t < 6; t++) {
		assert_int_equal(map.keys[keys[t]].tone, t);
		assert_int_equal(map.keys[keys[t]].period, 0);
		check_key_pitch(keys[t], 220.0);
		assert_true(fabs(map.keys[keys[t]].cents_off) <= 50.0);
	}
	const int silent[] = {60, 63, 65, 66};
	for (size_t i = 0; i < sizeof silent / sizeof silent[0]; i++)
		assert_int_equal(map.keys[silent[i]].state, KEY_SILENT);
	/* transposition moves the finished map */
	s.transpose = -2;
	build_map(&s);
	assert_int_equal(map.keys[57].tone, 0);
	assert_int_equal(map.keys[58].state, KEY_SILENT);
}

/* Two tones nearest one key share the free keys beside it (our rule): the
 * free key below is used when that keeps both nearer their pitches, and
 * the keys stay in pitch order.  Pitches from f = 440 * 2^((n-69)/12). */
static void nearest_collision_takes_the_nearer_free_key(void **state)
{
	(void)state;
	/* 1 3 5 7 9, 2 of 5 (dekany) on 1/1 = C4: 35/32 (note 61.55) and 9/8
	 * (62.04) both round to key 62; key 61 is free.  35/32 moves down to
	 * 61 (0.55 away) and 9/8 keeps 62 (0.04): 0.59 in all, where 9/8 on 63
	 * would leave it 0.96 away and key 61 silent. */
	const char *const seeds[] = {"1", "3", "5", "7", "9"};
	build_lattice(seeds, 5, 2);
	struct keymap_spec s = spec_of(KEY_LAYOUT_NEAREST, 0, 440.0 * pow(2.0, -9.0 / 12.0));
	build_map(&s);
	assert_int_equal(lat.tones[0].ratio.num, 35);
	assert_int_equal(lat.tones[1].ratio.num, 9);
	assert_int_equal(map.keys[61].tone, 0);
	assert_int_equal(map.keys[62].tone, 1);
	assert_int_equal(map.keys[63].state, KEY_SILENT);
	assert_int_equal(map.keys[64].tone, 2); /* 5/4, note 63.86 */
	check_key_pitch(61, s.root_hz);
	check_key_pitch(62, s.root_hz);
	/* the input key moved, the pitch did not: 35/32 still goes out on 62 */
	assert_int_equal(map.keys[61].out_key, 62);
	assert_true(fabs(map.keys[61].cents_off - (155.140 - 200.0)) < 0.0005); /* 35/32 = 155.140 c */
	/* every period the same way: no key sounds lower than the key below it */
	for (int k = 1; k < KEYMAP_KEYS; k++)
		for (int j = 0; j < k; j++)
			if (map.keys[k].state == KEY_SOUNDING && map.keys[j].state == KEY_SOUNDING)
				assert_true(map.keys[j].note < map.keys[k].note);
}

/* Moving lower tones down must pay for itself (our rule): the dekany's
 * 35/32 and 9/8 on 1/1 = C4 raised by d semitones, so both round to key 62
 * with key 61 free. */
static void nearest_collision_goes_up_when_that_is_nearer(void **state)
{
	(void)state;
	const char *const seeds[] = {"1", "3", "5", "7", "9"};
	build_lattice(seeds, 5, 2);
	/* d = +0.10: 35/32 at 61.65 and 9/8 at 62.14 both round to 62; moving
	 * 35/32 down to 61 costs 0.65 - 0.35 = 0.30 more, and 9/8 then sits
	 * 0.14 away: 0.44 in all, against 0.86 for 9/8 on 63 */
	double hz = 440.0 * pow(2.0, (-9.0 + 0.10) / 12.0);
	struct keymap_spec s = spec_of(KEY_LAYOUT_NEAREST, 0, hz);
	build_map(&s);
	assert_int_equal(map.keys[61].tone, 0);
	assert_int_equal(map.keys[62].tone, 1);
	/* d = +0.40: 35/32 at 61.95 and 9/8 at 62.44 round to 62; down costs
	 * 0.95 - 0.05 = 0.90 more plus 0.44, up leaves 9/8 0.56 from 63 */
	hz = 440.0 * pow(2.0, (-9.0 + 0.40) / 12.0);
	s = spec_of(KEY_LAYOUT_NEAREST, 0, hz);
	build_map(&s);
	assert_int_equal(map.keys[62].tone, 0);
	assert_int_equal(map.keys[63].tone, 1);
	assert_int_equal(map.keys[61].state, KEY_SILENT);
	check_key_pitch(63, hz);
}

static void nearest_refuses_dense_sets(void **state)
{
	(void)state;
	/* 2 of 6 = 15 tones per octave, more than 12 keys */
	const char *const seeds[] = {"1", "3", "5", "7", "9", "11"};
	build_lattice(seeds, 6, 2);
	struct keymap_spec s = spec_of(KEY_LAYOUT_NEAREST, 0, 220.0);
	struct core_error err;
	assert_false(keymap_build(&map, &lat, &s, &err));
	assert_string_equal(err.field, "layout");
}

static void table_layout(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	struct keymap_spec s = spec_of(KEY_LAYOUT_TABLE, 60, 261.6255653005986);
	/* 12 slots: 0 . 1 . 2 3 . 4 . 5 . 0+1 */
	const int tones[12] = {0, -1, 1, -1, 2, 3, -1, 4, -1, 5, -1, 0};
	s.table_length = 12;
	for (int i = 0; i < 12; i++) {
		s.table[i].tone = (int16_t)tones[i];
		s.table[i].period_shift = 0;
	}
	s.table[11].period_shift = 1;
	build_map(&s);
	assert_int_equal(map.keys[60].tone, 0);
	assert_int_equal(map.keys[60].period, 0);
	assert_int_equal(map.keys[61].state, KEY_SILENT);
	assert_int_equal(map.keys[62].tone, 1);
	assert_int_equal(map.keys[71].tone, 0);
	assert_int_equal(map.keys[71].period, 1);
	assert_int_equal(map.keys[72].tone, 0);  /* next keyboard period */
	assert_int_equal(map.keys[72].period, 1);
	assert_int_equal(map.keys[57].tone, 5);  /* slot 9 one keyboard period down */
	assert_int_equal(map.keys[57].period, -1);
	assert_int_equal(map.keys[59].tone, 0);  /* slot 11: 0+1 in period -1 */
	assert_int_equal(map.keys[59].period, 0);
	for (int key = 0; key < KEYMAP_KEYS; key++)
		if (map.keys[key].state == KEY_SOUNDING)
			check_key_pitch(key, s.root_hz);

	s.table[3].tone = 6; /* no tone 6 in a hexany */
	struct core_error err;
	assert_false(keymap_build(&map, &lat, &s, &err));
	assert_string_equal(err.field, "map");
}

static void bad_pitch_reference(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	struct core_error err;
	struct keymap_spec s = spec_of(KEY_LAYOUT_SEQUENTIAL, 128, 220.0);
	assert_false(keymap_build(&map, &lat, &s, &err));
	assert_string_equal(err.field, "root_key");
	s = spec_of(KEY_LAYOUT_SEQUENTIAL, 60, 0.0);
	assert_false(keymap_build(&map, &lat, &s, &err));
	assert_string_equal(err.field, "root_hz");
	s = spec_of(KEY_LAYOUT_SEQUENTIAL, 60, NAN);
	assert_false(keymap_build(&map, &lat, &s, &err));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(sequential_layout),
		cmocka_unit_test(transposition),
		cmocka_unit_test(nearest_layout),
		cmocka_unit_test(nearest_collision_takes_the_nearer_free_key),
		cmocka_unit_test(nearest_collision_goes_up_when_that_is_nearer),
		cmocka_unit_test(nearest_refuses_dense_sets),
		cmocka_unit_test(table_layout),
		cmocka_unit_test(bad_pitch_reference),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
