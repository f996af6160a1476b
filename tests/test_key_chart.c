/*
 * Tests of the key chart (src/core/key_chart.c): which keys of one or two
 * keyboard periods play each tone and which keys to press for each chord.
 *
 * Sources: the 1 3 5 7 hexany's tones 35/32 5/4 21/16 3/2 7/4 15/8 and its
 * harmonic triad 4:5:6 on 7/4 (7/4 35/16 21/8; Wikipedia "Hexany", common
 * practice).  Which key plays what is the key map's rule (our rule); the
 * chord's pitches are checked against its proportion from the tones'
 * exact ratios, computed here.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <string.h>

#include "latticed/key_chart.h"

static struct lattice lat;
static struct keymap map;
static struct key_chart chart;
static struct keymap_spec spec;

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
	s.period = (struct ratio){2, 1};
	struct core_error err;
	if (!lattice_build(&lat, &s, &err))
		fail_msg("%s", err.text);
}

static const char *const hexany[] = {"1", "3", "5", "7"};

static void build_chart(enum key_layout layout, int root_key, int periods)
{
	memset(&spec, 0, sizeof spec);
	spec.layout = layout;
	spec.root_key = root_key;
	spec.root_hz = 220.0;
	struct core_error err;
	if (!keymap_build(&map, &lat, &spec, &err))
		fail_msg("%s", err.text);
	if (!key_chart_build(&chart, &lat, &map, periods, &err))
		fail_msg("%s", err.text);
}

static int chord_on(enum chord_kind kind, const char *seeds)
{
	uint16_t mask;
	assert_true(lattice_parse_label(&lat.spec, seeds, &mask));
	for (int c = 0; c < lat.chord_count; c++)
		if (lat.chords[c].kind == kind && lat.chords[c].seeds == mask)
			return c;
	fail_msg("no chord on %s", seeds);
	return -1;
}

static void sequential_hexany(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	build_chart(KEY_LAYOUT_SEQUENTIAL, 57, 2);
	assert_int_equal(chart.period_keys, 6);
	assert_int_equal(chart.first_key, 57);
	assert_int_equal(chart.key_count, 12);
	for (int t = 0; t < 6; t++) {
		assert_int_equal(key_chart_tone_key_count(&chart, t), 2);
		assert_true(key_chart_tone_on_key(&chart, t, 57 + t));
		assert_true(key_chart_tone_on_key(&chart, t, 63 + t));
		assert_false(key_chart_tone_on_key(&chart, t, 69 + t)); /* past the chart */
	}
	/* 4:5:6 is 7/4 (tone 4) 35/16 (tone 0 up a period) 21/8 (tone 2 up) */
	int c = chord_on(CHORD_HARMONIC, "7");
	const struct key_chart_chord *kc = &chart.chords[c];
	assert_true(kc->playable);
	assert_int_equal(kc->inversion, 0);
	assert_int_equal(kc->key_count, 3);
	assert_int_equal(kc->keys[0], 61);
	assert_int_equal(kc->keys[1], 63);
	assert_int_equal(kc->keys[2], 65);
	/* the pitches stand 4:5:6: 5/4 and 6/4 above the lowest, in cents */
	double base = map.keys[61].note;
	assert_true(fabs((map.keys[63].note - base) * 100.0 - 1200.0 * log2(5.0 / 4.0)) < 1e-6);
	assert_true(fabs((map.keys[65].note - base) * 100.0 - 1200.0 * log2(6.0 / 4.0)) < 1e-6);
}

static void one_period_takes_an_inversion(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	build_chart(KEY_LAYOUT_SEQUENTIAL, 57, 1);
	assert_int_equal(chart.key_count, 6);
	/* 4:5:6 cannot climb from 7/4 within one period: from 35/32 it can */
	const struct key_chart_chord *kc = &chart.chords[chord_on(CHORD_HARMONIC, "7")];
	assert_true(kc->playable);
	assert_int_equal(kc->inversion, 1);
	assert_int_equal(kc->keys[0], 57);
	assert_int_equal(kc->keys[1], 59);
	assert_int_equal(kc->keys[2], 61);
}

/* Every chord, every layout: keys inside the chart, rising in pitch, each
 * playing the chord's tones in the order of its inversion. */
static void chords_rise_and_play_their_tones(void **state)
{
	(void)state;
	const char *const seeds[] = {"1", "3", "5", "7", "9", "11"};
	const enum key_layout layouts[] = {KEY_LAYOUT_SEQUENTIAL, KEY_LAYOUT_NEAREST};
	const int k_of[] = {3, 2};
	for (int l = 0; l < 2; l++) {
		build_lattice(seeds, layouts[l] == KEY_LAYOUT_NEAREST ? 4 : 6, k_of[l]);
		for (int periods = 1; periods <= 2; periods++) {
			build_chart(layouts[l], 36, periods);
			int playable = 0;
			for (int c = 0; c < lat.chord_count; c++) {
				const struct chord *ch = &lat.chords[c];
				const struct key_chart_chord *kc = &chart.chords[c];
				if (!kc->playable)
					continue;
				playable++;
				assert_int_equal(kc->key_count, ch->tone_count);
				for (int i = 0; i < kc->key_count; i++) {
					int key = kc->keys[i];
					assert_true(key >= chart.first_key && key < chart.first_key + chart.key_count);
					assert_int_equal(map.keys[key].tone, ch->tones[(kc->inversion + i) % ch->tone_count]);
					if (i > 0)
						assert_true(map.keys[key].note > map.keys[kc->keys[i - 1]].note);
				}
			}
			/* two periods hold every chord in closest position */
			if (periods == 2)
				assert_int_equal(playable, lat.chord_count);
		}
	}
}

static void nearest_period_is_twelve_keys(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	build_chart(KEY_LAYOUT_NEAREST, 57, 2);
	assert_int_equal(chart.period_keys, 12);
	assert_int_equal(chart.key_count, 24);
	/* tone 0, 35/32 above 220 Hz (A3 = 57): 155.1 cents, nearest key 59 */
	assert_int_equal(chart.first_key, 59);
	assert_int_equal(map.keys[59].tone, 0);
	for (int t = 0; t < 6; t++)
		assert_int_equal(key_chart_tone_key_count(&chart, t), 2);
}

static void table_with_silent_slots(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	memset(&spec, 0, sizeof spec);
	spec.layout = KEY_LAYOUT_TABLE;
	spec.root_key = 60;
	spec.root_hz = 220.0;
	spec.table_length = 12;
	/* tones 0..4 only, every other key: tone 5 (15/8) is on no key */
	for (int i = 0; i < 12; i++)
		spec.table[i].tone = KEYMAP_SLOT_SILENT;
	for (int t = 0; t < 5; t++)
		spec.table[2 * t].tone = (int16_t)t;
	struct core_error err;
	assert_true(keymap_build(&map, &lat, &spec, &err));
	assert_true(key_chart_build(&chart, &lat, &map, 1, &err));
	assert_int_equal(chart.period_keys, 12);
	assert_int_equal(chart.key_count, 12);
	assert_int_equal(key_chart_tone_key_count(&chart, 5), 0);
	assert_true(key_chart_tone_on_key(&chart, 2, 64));
	assert_false(key_chart_tone_on_key(&chart, 2, 65));
	/* chords holding tone 5 have no keys; the others do */
	for (int c = 0; c < lat.chord_count; c++) {
		bool has5 = false;
		for (int i = 0; i < lat.chords[c].tone_count; i++)
			has5 = has5 || lat.chords[c].tones[i] == 5;
		assert_true(chart.chords[c].playable == !has5);
		if (has5)
			assert_int_equal(chart.chords[c].key_count, 0);
	}
}

static void clipped_at_the_top(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	build_chart(KEY_LAYOUT_SEQUENTIAL, 125, 2);
	assert_int_equal(chart.first_key, 125);
	assert_int_equal(chart.key_count, 3);
	assert_false(key_chart_tone_on_key(&chart, 3, 128));
}

static void bad_period_count(void **state)
{
	(void)state;
	build_lattice(hexany, 4, 2);
	memset(&spec, 0, sizeof spec);
	spec.root_key = 60;
	spec.root_hz = 220.0;
	struct core_error err;
	assert_true(keymap_build(&map, &lat, &spec, &err));
	assert_false(key_chart_build(&chart, &lat, &map, 0, &err));
	assert_string_equal(err.field, "periods");
	assert_false(key_chart_build(&chart, &lat, &map, KEY_CHART_MAX_PERIODS + 1, &err));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(sequential_hexany),
		cmocka_unit_test(one_period_takes_an_inversion),
		cmocka_unit_test(chords_rise_and_play_their_tones),
		cmocka_unit_test(nearest_period_is_twelve_keys),
		cmocka_unit_test(table_with_silent_slots),
		cmocka_unit_test(clipped_at_the_top),
		cmocka_unit_test(bad_period_count),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
