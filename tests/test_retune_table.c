/*
 * Tests of re-rooting (src/core/retune_table.c) and of the key map moved
 * to a root (keymap_shift), which `latticed table --root` shows and the
 * engine plays: the root's shift and its exact ratio, what a note sounds
 * at under a root, and that the shifted key map and the engine's retune
 * table agree key for key.  Pitches are checked against f = 440 *
 * 2^((n-69)/12) (ISO 16 / MTS key numbering) and exact products of the
 * hexany 1 3 5 7 (its tones 35/32 5/4 21/16 3/2 7/4 15/8: common practice).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <string.h>

#include "latticed/keymap.h"
#include "latticed/retune_table.h"

static struct lattice lat;
static struct keymap map;
static struct retune_table table;

static void build_hexany(enum key_layout layout)
{
	static const char *const seeds[] = {"1", "3", "5", "7"};
	struct lattice_spec s;
	memset(&s, 0, sizeof s);
	s.seed_count = 4;
	for (int i = 0; i < 4; i++) {
		assert_true(ratio_parse(seeds[i], &s.seeds[i]));
		strcpy(s.seed_text[i], seeds[i]);
	}
	s.choose = 2;
	s.period = (struct ratio){2, 1};
	struct core_error err;
	assert_true(lattice_build(&lat, &s, &err));
	struct keymap_spec k;
	memset(&k, 0, sizeof k);
	k.layout = layout;
	k.root_key = 57;
	k.root_hz = 220.0;
	assert_true(keymap_build(&map, &lat, &k, &err));
}

static void assert_ratio(struct ratio r, int64_t num, int64_t den)
{
	assert_int_equal(r.num, num);
	assert_int_equal(r.den, den);
}

/* A tone above half the period moves the 1/1 down (our rule): 3/2 of the
 * octave becomes 3/4, 5/4 stays 5/4. */
static void root_ratio_folds_above_half_the_period(void **state)
{
	(void)state;
	build_hexany(KEY_LAYOUT_SEQUENTIAL);
	struct ratio r;
	assert_true(retune_root_ratio(&lat, 1, &r));   /* 5/4 */
	assert_ratio(r, 5, 4);
	assert_true(retune_root_ratio(&lat, 3, &r));   /* 3/2 */
	assert_ratio(r, 3, 4);
	assert_true(retune_root_ratio(&lat, -1, &r));  /* home */
	assert_ratio(r, 1, 1);
	for (int t = 0; t < lat.tone_count; t++) {
		assert_true(retune_root_ratio(&lat, t, &r));
		assert_true(fabs(ratio_cents(r) - retune_root_shift(&lat, t)) < 1e-9);
	}
}

/* 5.7 (35/32) under root 2 (tone 1, 5/4) of the
 * hexany sounds 175/128 above 1/1, and an octave lower in period -1. */
static void a_note_sounds_its_tone_times_the_root(void **state)
{
	(void)state;
	build_hexany(KEY_LAYOUT_SEQUENTIAL);
	struct ratio r;
	assert_true(retune_sounding_ratio(&lat, 0, 0, 2, &r));
	assert_ratio(r, 175, 128);
	assert_true(retune_sounding_ratio(&lat, 0, -1, 2, &r));
	assert_ratio(r, 175, 256);
	assert_true(retune_sounding_ratio(&lat, 4, 1, 0, &r));  /* 7/4 an octave up, home */
	assert_ratio(r, 7, 2);
	assert_true(retune_sounding_ratio(&lat, 1, 0, 4, &r));  /* 5/4 under 3/2, folded: 15/16 */
	assert_ratio(r, 15, 16);
	assert_false(retune_sounding_ratio(&lat, 6, 0, 0, &r));
}

/* keymap_shift gives every key the pitch the engine's table gives it. */
static void shifted_map_agrees_with_the_retune_table(void **state)
{
	(void)state;
	for (int layout = 0; layout < 2; layout++) {
		build_hexany(layout ? KEY_LAYOUT_NEAREST : KEY_LAYOUT_SEQUENTIAL);
		for (int tone = 0; tone < lat.tone_count; tone++) {
			double shift = retune_root_shift(&lat, tone);
			retune_table_build(&table, &map, shift);
			struct keymap moved = map;
			keymap_shift(&moved, shift);
			int sounding = 0;
			for (int k = 0; k < KEYMAP_KEYS; k++) {
				const struct key_pitch *kp = &moved.keys[k];
				assert_int_equal(kp->state == KEY_SOUNDING, table.keys[k].sounding);
				assert_int_equal(kp->tone, map.keys[k].tone);
				if (kp->state != KEY_SOUNDING)
					continue;
				sounding++;
				assert_true(fabs(kp->note - table.keys[k].note) < 1e-12);
				assert_int_equal(kp->out_key, table.keys[k].out_key);
				assert_memory_equal(kp->mts, table.keys[k].mts, 3);
				double hz = 440.0 * pow(2.0, (kp->note - 69.0) / 12.0);
				assert_true(fabs(kp->hz - hz) < 1e-9 * hz);
				/* exact: root_hz * ratio(tone) * 2^period * root ratio */
				struct ratio r;
				assert_true(retune_sounding_ratio(&lat, kp->tone, kp->period, tone + 1, &r));
				assert_true(fabs(kp->hz - 220.0 * ratio_to_double(r)) < 1e-9 * kp->hz);
			}
			assert_int_equal(moved.sounding_count, sounding);
			assert_int_equal(moved.sounding_count + moved.out_of_range_count,
					 map.sounding_count + map.out_of_range_count);
		}
	}
}

/* A key pushed out of MIDI's range goes silent; one silent at home stays
 * silent (our rule: the engine never retunes what it could not play). */
static void keys_leaving_the_range_go_silent(void **state)
{
	(void)state;
	build_hexany(KEY_LAYOUT_SEQUENTIAL);
	int top = -1;
	for (int k = 0; k < KEYMAP_KEYS; k++)
		if (map.keys[k].state == KEY_SOUNDING)
			top = k;
	assert_true(top > 0);
	struct keymap moved = map;
	keymap_shift(&moved, 1200.0 * 3);
	assert_int_equal(moved.keys[top].state, KEY_OUT_OF_RANGE);
	moved = map;
	keymap_shift(&moved, -1200.0 * 3);
	for (int k = 0; k < KEYMAP_KEYS; k++)
		if (map.keys[k].state != KEY_SOUNDING)
			assert_int_not_equal(moved.keys[k].state, KEY_SOUNDING);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(root_ratio_folds_above_half_the_period),
		cmocka_unit_test(a_note_sounds_its_tone_times_the_root),
		cmocka_unit_test(shifted_map_agrees_with_the_retune_table),
		cmocka_unit_test(keys_leaving_the_range_go_silent),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
