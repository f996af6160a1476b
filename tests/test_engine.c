/*
 * Tests of the retuning engine.
 *
 * Hand-written cases check each rule with exact bytes; a randomized run
 * (seeded; LATTICED_ENGINE_EVENTS sets its length, default 10^6 events)
 * checks the four promises through the independent synth model in
 * synth_model.h (LATTICED_ENGINE_SEED shifts every scenario's seed, for
 * longer runs with fresh streams):
 *   1. every note-on is matched by exactly one note-off on the same
 *      channel and key;
 *   2. after the player releases every key and pedal nothing sounds;
 *   3. a channel's bend changes under a sounding note only while the
 *      player moves a wheel;
 *   4. every note sounds within half a bend (or MTS) step of its key's
 *      pitch from the key map, the wheel and the synth correction added.
 * Byte layouts are from MIDI 1.0 (status/data, bend LSB first, centre
 * 8192), the RPN sequence CC101/CC100/CC6 + RPN null (MIDI 1.0 RP-018
 * style, vendor charts), MTS single-note change F0 7F dd 08 02 tt ll kk
 * xx yy zz F7 (MMA MIDI Tuning) and the MPE Configuration Message RPN 6
 * (MPE 1.0).
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "engine_fixture.h"
#include "engine_harness.h"
#include "test_rng.h"
#include "synth_model.h"
#include "latticed/pitch.h"

/* ---- fixtures -------------------------------------------------------------- */

static struct lattice lattices[2];
static struct keymap keymaps[2];
static struct engine_tunings tunings;
static struct harness h;
static struct synth_model model;

static void build_preset(int i, const char *const *seeds, int n, int root_key, double root_hz)
{
	struct core_error err;
	char name[8];
	snprintf(name, sizeof name, "p%d", i);
	if (!fixture_preset(&lattices[i], &keymaps[i], &tunings.presets[i], name, seeds, n,
			    root_key, root_hz, &err))
		fail_msg("%s", err.text);
}

static int setup_tunings(void **state)
{
	(void)state;
	static const char *const hexany[] = {"1", "3", "5", "7"};
	static const char *const dekany[] = {"1", "3", "5", "7", "9"};
	build_preset(0, hexany, 4, 57, 220.0);
	build_preset(1, dekany, 5, 60, 261.6255653005986);
	tunings.count = 2;
	return 0;
}

static struct engine_spec default_spec(enum retune_method method)
{
	return fixture_spec(method);
}

static void start(const struct engine_spec *spec)
{
	memset(&h, 0, sizeof h);
	model_init(&model, spec->output.bend_played);
	h.tap = model_tap;
	h.tap_context = &model;
	struct core_error err;
	if (!engine_init(&h.engine, spec, &tunings, harness_emit, &h, &err))
		fail_msg("engine_init: %s", err.text);
	engine_start(&h.engine);
}

/* Expects the log to hold exactly these bytes, then clears it. */
static void expect_bytes(const uint8_t *want, size_t n)
{
	if (h.length != n || (n > 0 && memcmp(h.log, want, n) != 0)) {
		fprintf(stderr, "want:");
		for (size_t i = 0; i < n; i++)
			fprintf(stderr, " %02X", want[i]);
		fprintf(stderr, "\ngot: ");
		for (size_t i = 0; i < h.length; i++)
			fprintf(stderr, " %02X", h.log[i]);
		fprintf(stderr, "\n");
		fail();
	}
	harness_clear(&h);
}
#define EXPECT(...) do { const uint8_t w_[] = {__VA_ARGS__}; expect_bytes(w_, sizeof w_); } while (0)

/* Does the log hold this 3-byte message (at a message boundary or not)? */
static bool log_contains(uint8_t a, uint8_t b, uint8_t c)
{
	for (size_t i = 0; i + 2 < h.length; i++)
		if (h.log[i] == a && h.log[i + 1] == b && h.log[i + 2] == c)
			return true;
	return false;
}

static double key_note(int preset, int key)
{
	return keymaps[preset].keys[key].note;
}

/* ---- set-up messages ------------------------------------------------------- */

static void bend_setup_sends_rpn0(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0006; /* channels 2 and 3 */
	memset(&h, 0, sizeof h);
	struct core_error err;
	assert_true(engine_init(&h.engine, &s, &tunings, harness_emit, &h, &err));
	engine_start(&h.engine);
	/* RPN 0 = 2 semitones, then RPN null, on each pool channel */
	EXPECT(0xB1, 101, 0, 0xB1, 100, 0, 0xB1, 6, 2, 0xB1, 101, 127, 0xB1, 100, 127,
	       0xB2, 101, 0, 0xB2, 100, 0, 0xB2, 6, 2, 0xB2, 101, 127, 0xB2, 100, 127);
}

static void mpe_setup_sends_mcm_then_ranges(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MPE);
	s.output.mpe_members = 2;
	memset(&h, 0, sizeof h);
	struct core_error err;
	assert_true(engine_init(&h.engine, &s, &tunings, harness_emit, &h, &err));
	engine_start(&h.engine);
	/* MCM: RPN 6 on the master (channel 1) = 2 members; master range 2;
	 * members 2 and 3 get 48 (MPE 1.0 sections 2.1, 2.4) */
	EXPECT(0xB0, 101, 0, 0xB0, 100, 6, 0xB0, 6, 2, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB0, 101, 0, 0xB0, 100, 0, 0xB0, 6, 2, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB1, 101, 0, 0xB1, 100, 0, 0xB1, 6, 48, 0xB1, 101, 127, 0xB1, 100, 127,
	       0xB2, 101, 0, 0xB2, 100, 0, 0xB2, 6, 48, 0xB2, 101, 127, 0xB2, 100, 127);
}

static void mts_setup_selects_program(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	s.output.mts_program = 5;
	s.output.mts_bank = 1;
	memset(&h, 0, sizeof h);
	struct core_error err;
	assert_true(engine_init(&h.engine, &s, &tunings, harness_emit, &h, &err));
	engine_start(&h.engine);
	/* RPN 0 range, RPN 4 bank 1 (before the program it applies to), RPN 3 program 5 */
	EXPECT(0xB0, 101, 0, 0xB0, 100, 0, 0xB0, 6, 2, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB0, 101, 0, 0xB0, 100, 4, 0xB0, 6, 1, 0xB0, 101, 127, 0xB0, 100, 127,
	       0xB0, 101, 0, 0xB0, 100, 3, 0xB0, 6, 5, 0xB0, 101, 127, 0xB0, 100, 127);
}

/* ---- bend method ----------------------------------------------------------- */

static void bend_note_gets_its_bend_first(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_clear(&h);
	/* key 60 plays 3/2 over 220 Hz = 330 Hz: key 64 +1.955 cents, bend 8272
	 * (8192 + round(1.955/200 * 8192)) = bytes 50 40 */
	harness_send(&h, 0x90, 60, 100);
	EXPECT(0xE1, 0x50, 0x40, 0x91, 64, 100);
	harness_send(&h, 0x80, 60, 33); /* release velocity kept */
	EXPECT(0x81, 64, 33);
	/* note-on with velocity 0 is a note-off (MIDI 1.0) */
	harness_send(&h, 0x90, 61, 90);
	harness_clear(&h);
	harness_send(&h, 0x90, 61, 0);
	assert_int_equal(h.log[0] & 0xF0, 0x80);
	assert_int_equal(model.violations, 0);
}

static void free_channel_with_same_bend_first_then_lru(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x000E; /* 2, 3, 4 */
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100); /* 3/2 on channel 2 */
	harness_send(&h, 0x90, 61, 100); /* 7/4 on channel 3 */
	harness_send(&h, 0x90, 62, 100); /* 15/8 on channel 4 */
	harness_send(&h, 0x80, 61, 0);   /* channel 3 free first */
	harness_send(&h, 0x80, 60, 0);   /* then 2 */
	harness_send(&h, 0x80, 62, 0);   /* then 4 */
	harness_clear(&h);
	/* key 66 is 3/2 an octave up: the same bend as channel 2 has, so it
	 * takes channel 2 with no bend message, though 3 was freed earlier */
	harness_send(&h, 0x90, 66, 100);
	EXPECT(0x91, 76, 100);
	/* a new bend: the free channel released longest ago, channel 3 */
	harness_send(&h, 0x90, 58, 100); /* 5/4: 275 Hz, key 61 -13.686 c = 7631 */
	EXPECT(0xE2, 7631 & 0x7F, 7631 >> 7, 0x92, 61, 100);
}

static void share_then_steal(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0002; /* only channel 2 */
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	harness_send(&h, 0x90, 66, 100); /* same bend: shares channel 2 */
	EXPECT(0xE1, 0x50, 0x40, 0x91, 64, 100, 0x91, 76, 100);
	assert_int_equal(h.engine.stats.notes_shared, 1);
	/* a different bend: the channel is stolen, its notes ended cleanly
	 * (note-offs, then all-sound-off), then the new note */
	harness_send(&h, 0x90, 61, 100); /* 7/4: 385 Hz, key 67 -31.174 c = 6915 */
	EXPECT(0x81, 64, 64, 0x81, 76, 64, 0xB1, 120, 0, 0xE1, 6915 & 0x7F, 6915 >> 7, 0x91, 67, 100);
	assert_int_equal(h.engine.stats.notes_stolen, 1);
	/* the stolen keys' own note-offs are swallowed */
	harness_send(&h, 0x80, 60, 0);
	harness_send(&h, 0x80, 66, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(model.violations, 0);

	s.output.polyphony = POLY_SHARE;
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_clear(&h);
	harness_send(&h, 0x90, 61, 100); /* nowhere to go: dropped */
	expect_bytes(NULL, 0);
	assert_int_equal(h.engine.stats.notes_dropped, 1);
	assert_true(engine_take_notices(&h.engine) & NOTICE_NOTE_DROPPED);
	assert_false(engine_take_notices(&h.engine) & NOTICE_NOTE_DROPPED); /* once */

	s.output.polyphony = POLY_STEAL;
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_clear(&h);
	harness_send(&h, 0x90, 66, 100); /* same bend, but steal never shares */
	EXPECT(0x81, 64, 64, 0xB1, 120, 0, 0x91, 76, 100);
}

static void sustain_keeps_the_channel(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0006; /* 2, 3 */
	start(&s);
	harness_send(&h, 0xB0, 64, 127);
	harness_send(&h, 0x90, 60, 100); /* channel 2 */
	harness_clear(&h);
	harness_send(&h, 0x80, 60, 0);
	EXPECT(0x81, 64, 0); /* the note-off goes out; the synth sustains */
	/* 7/4 must not take channel 2, whose note still rings */
	harness_send(&h, 0x90, 61, 100);
	assert_int_equal(h.log[h.length - 3], 0x92);
	harness_send(&h, 0x80, 61, 0);
	harness_clear(&h);
	harness_send(&h, 0xB0, 64, 0); /* pedal up reaches both channels */
	EXPECT(0xB1, 64, 0, 0xB2, 64, 0);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(model.violations, 0);
}

static void sostenuto_holds_only_notes_down(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0006;
	start(&s);
	harness_send(&h, 0x90, 60, 100);     /* down when the pedal goes down */
	harness_send(&h, 0xB0, 66, 127);
	harness_send(&h, 0x80, 60, 0);       /* rings: channel 2 kept */
	harness_send(&h, 0x90, 61, 100);     /* channel 3 */
	harness_send(&h, 0x80, 61, 0);       /* not latched: channel 3 free */
	assert_int_equal(h.engine.out[1].note_count, 1);
	assert_int_equal(h.engine.out[2].note_count, 0);
	harness_send(&h, 0xB0, 66, 0);
	assert_int_equal(h.engine.out[1].note_count, 0);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(model.violations, 0);
}

static void wheel_moves_every_sounding_note(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_send(&h, 0x90, 60, 100); /* channel 2, +1.955 c */
	harness_send(&h, 0x90, 61, 100); /* channel 3, -31.174 c */
	harness_clear(&h);
	/* wheel +50 cents: 8192 + 2048 with a 2-semitone wheel */
	model.bend_change_allowed = true;
	harness_send(&h, 0xE0, (8192 + 2048) & 0x7F, (8192 + 2048) >> 7);
	model.bend_change_allowed = false;
	assert_int_equal(h.messages, 2);
	assert_true(fabs(model_pitch(&model, 1, 64) - (key_note(0, 60) + 0.5)) < 0.5 * 2.0 / 8192 + 1e-9);
	assert_true(fabs(model_pitch(&model, 2, 67) - (key_note(0, 61) + 0.5)) < 0.5 * 2.0 / 8192 + 1e-9);
	/* a new note starts with the wheel already applied */
	harness_send(&h, 0x90, 62, 100);
	assert_true(fabs(model_pitch(&model, model.last_on_channel, model.last_on_key) -
			 (key_note(0, 62) + 0.5)) < 0.5 * 2.0 / 8192 + 1e-9);
	/* full wheel on a -31 cent note goes past the 2-semitone bend: clamped, once */
	model.bend_change_allowed = true;
	harness_send(&h, 0xE0, 0, 0);
	model.bend_change_allowed = false;
	assert_true(engine_take_notices(&h.engine) & NOTICE_BEND_CLAMPED);
	assert_true(h.engine.stats.bends_clamped > 0);
	assert_int_equal(model.violations, 0);
}

static void player_rpn0_sets_wheel_range(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.bend_range = 12;
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_clear(&h);
	/* the player's RPN 0 = 12 semitones is not passed on (it would change
	 * our bend range); it sets what the wheel means */
	harness_send(&h, 0xB0, 101, 0);
	harness_send(&h, 0xB0, 100, 0);
	harness_send(&h, 0xB0, 6, 12);
	expect_bytes(NULL, 0);
	model.bend_change_allowed = true;
	harness_send(&h, 0xE0, 0x00, 0x60); /* 3/4 of the wheel up: +6 semitones */
	model.bend_change_allowed = false;
	double want = key_note(0, 60) + 6.0;
	assert_true(fabs(model_pitch(&model, 1, 64) - want) < 0.5 * 12.0 / 8192 + 1e-9);
	/* NRPNs are the synth's: sent to every pool channel */
	harness_clear(&h);
	harness_send(&h, 0xB0, 99, 1);
	harness_send(&h, 0xB0, 98, 8);
	harness_send(&h, 0xB0, 6, 64);
	assert_int_equal(h.messages, 3 * 14);
}

static void pressure_and_aftertouch(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_send(&h, 0x90, 60, 100); /* channel 2, key 64 */
	harness_send(&h, 0x90, 61, 100); /* channel 3, key 67 */
	harness_clear(&h);
	harness_send(&h, 0xD0, 77, 0);
	EXPECT(0xD1, 77, 0xD2, 77);
	harness_send(&h, 0xA0, 61, 55); /* poly pressure: the note's channel and key */
	EXPECT(0xA2, 67, 55);
}

static void controllers_sync_lazily(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0xB0, 7, 90);   /* nothing sounds: nothing sent yet */
	harness_send(&h, 0xB0, 0, 1);    /* bank */
	harness_send(&h, 0xC0, 12, 0);   /* program */
	expect_bytes(NULL, 0);
	harness_send(&h, 0x90, 60, 100);
	/* before the note: bank, program, volume, then bend and note */
	EXPECT(0xB1, 0, 1, 0xC1, 12, 0xB1, 7, 90, 0xE1, 0x50, 0x40, 0x91, 64, 100);
	harness_send(&h, 0xB0, 7, 91);   /* sounding channel gets it at once */
	EXPECT(0xB1, 7, 91);
	harness_send(&h, 0x80, 60, 0);
	harness_send(&h, 0x90, 60, 100); /* same channel: already up to date */
	EXPECT(0x81, 64, 0, 0x91, 64, 100);
}

static void passthrough_and_system(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x99, 36, 100); /* drums on channel 10 pass unchanged */
	EXPECT(0x99, 36, 100);
	harness_send(&h, 0x92, 60, 100); /* channel 3 is in the pool: blocked */
	expect_bytes(NULL, 0);
	assert_int_equal(h.engine.stats.passthrough_blocked, 1);
	assert_true(engine_take_notices(&h.engine) & NOTICE_PASSTHROUGH_BLOCKED);
	struct midi_msg clock = midi_msg_make(MIDI_CLOCK, 0, 0);
	engine_handle(&h.engine, 0, &clock);
	const uint8_t sx[] = {0xF0, 0x7D, 0x01, 0x02, 0xF7};
	struct midi_msg sysex = midi_msg_sysex(sx, sizeof sx);
	engine_handle(&h.engine, 0, &sysex);
	EXPECT(0xF8, 0xF0, 0x7D, 0x01, 0x02, 0xF7);
}

/* Pass-through notes end like retuned ones (our rule): a source that goes
 * takes its own notes and pedals with it, a panic ends the rest. */
static void passthrough_notes_end_with_their_source_and_at_a_panic(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x01FE; /* 2-9: channels 10 and 12 pass through */
	start(&s);
	struct midi_msg kick = midi_msg_note_on(9, 36, 100), pedal = midi_msg_control(9, 64, 127);
	struct midi_msg bass = midi_msg_note_on(11, 40, 90), hat = midi_msg_note_on(9, 42, 80);
	struct midi_msg hat_up = midi_msg_note_off(9, 42, 0);
	engine_handle(&h.engine, 0, &kick);
	engine_handle(&h.engine, 1, &pedal);
	engine_handle(&h.engine, 1, &bass);
	engine_handle(&h.engine, 1, &hat);
	engine_handle(&h.engine, 1, &hat_up); /* rings on under the pedal */
	harness_send(&h, 0x90, 60, 100);      /* a retuned note of source 0 */
	harness_clear(&h);
	engine_end_source(&h.engine, 1);
	EXPECT(0x8B, 40, 64, 0xB9, 64, 0);    /* source 1's bass, then its pedal */
	assert_int_equal(model_sounding_count(&model), 2);
	engine_panic(&h.engine);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_true(log_contains(0x89, 36, 64));
	harness_clear(&h);
	engine_panic(&h.engine);              /* nothing left to end on 10 and 12 */
	assert_false(log_contains(0x89, 36, 64));
	assert_int_equal(model.violations, 0);
}

/* A table of held pass-through notes is bounded like the engine's own:
 * a note-on beyond it is dropped and counted, not passed on unended. */
static void passthrough_notes_beyond_the_table_are_dropped(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	for (int i = 0; i < PASSTHROUGH_MAX_NOTES; i++) {
		struct midi_msg on = midi_msg_note_on(9, (uint8_t)(i % 128), 100);
		engine_handle(&h.engine, (uint8_t)(i / 128), &on);
	}
	harness_clear(&h);
	struct midi_msg one_more = midi_msg_note_on(9, 0, 100);
	engine_handle(&h.engine, 15, &one_more);
	expect_bytes(NULL, 0);
	assert_int_equal(h.engine.stats.notes_dropped, 1);
	assert_true(engine_take_notices(&h.engine) & NOTICE_NOTES_FULL);
	engine_panic(&h.engine);
	assert_int_equal(model_sounding_count(&model), 0);
}

static void presets_and_roots_apply_to_new_notes(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	s.control.root_cc = 20;
	start(&s);
	harness_send(&h, 0x90, 60, 100); /* hexany key 60 */
	int ch0 = model.last_on_channel, key0 = model.last_on_key;
	double before = model_pitch(&model, ch0, key0);
	harness_send(&h, 0xCF, 1, 0); /* preset 1: the dekany on C4 */
	assert_int_equal(h.engine.preset, 1);
	assert_true(model_pitch(&model, ch0, key0) == before); /* unchanged */
	harness_send(&h, 0x90, 62, 100);
	assert_true(fabs(model_pitch(&model, model.last_on_channel, model.last_on_key) -
			 key_note(1, 62)) < 0.5 * 2.0 / 8192 + 1e-9);
	harness_clear(&h);
	harness_send(&h, 0x80, 60, 0); /* the old note ends where it started */
	EXPECT(0x80 | ch0, key0, 0);
	/* root cc value 1 moves the 1/1 to tone 0 (35/32 of the dekany is tone
	 * 0? the dekany's lowest is 35/32): pitches rise by its cents */
	harness_send(&h, 0xBF, 20, 1);
	harness_send(&h, 0x90, 64, 100);
	double shift = lattices[1].tones[0].cents / 100.0;
	assert_true(fabs(model_pitch(&model, model.last_on_channel, model.last_on_key) -
			 (key_note(1, 64) + shift)) < 0.5 * 2.0 / 8192 + 1e-9);
	harness_send(&h, 0xBF, 20, 0); /* home */
	assert_int_equal(h.engine.root_slot, 0);
	harness_send(&h, 0xCF, 9, 0);  /* no preset 9: nothing changes */
	assert_int_equal(h.engine.preset, 1);
	assert_int_equal(model.violations, 0);
}

static void reserved_keys_steer(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.control.preset_keys = 0;  /* keys 0, 1 pick presets */
	s.control.root_keys = 12;   /* 12 = home, 13 = tone 0, ... */
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 1, 100);
	harness_send(&h, 0x80, 1, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(h.engine.preset, 1);
	harness_send(&h, 0x90, 14, 100);
	harness_send(&h, 0x80, 14, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(h.engine.root_slot, 2);
}

static void panic_and_vanished_source(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0006;
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	struct midi_msg on = midi_msg_note_on(0, 61, 100);
	engine_handle(&h.engine, 3, &on); /* from another device */
	harness_clear(&h);
	engine_end_source(&h.engine, 3);
	EXPECT(0x82, 67, 64);
	engine_panic(&h.engine);
	EXPECT(0x81, 64, 64,
	       0xB1, 64, 0, 0xB1, 66, 0, 0xB1, 120, 0, 0xB1, 123, 0,
	       0xB2, 64, 0, 0xB2, 66, 0, 0xB2, 120, 0, 0xB2, 123, 0);
	harness_send(&h, 0x80, 60, 0); /* the key still held: nothing */
	expect_bytes(NULL, 0);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(model.violations, 0);
}

static void vanished_device_lets_its_pedal_go(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	struct midi_msg pedal = midi_msg_control(0, 64, 127), on = midi_msg_note_on(0, 60, 90);
	engine_handle(&h.engine, 2, &pedal);
	engine_handle(&h.engine, 2, &on);
	harness_clear(&h);
	engine_end_source(&h.engine, 2); /* the keyboard was unplugged */
	/* its note ends and its pedal comes up: nothing left sustaining */
	EXPECT(0x81, 64, 64, 0xB1, 64, 0);
	assert_int_equal(model_sounding_count(&model), 0);
	/* another device's pedal is not touched */
	engine_handle(&h.engine, 3, &pedal);
	engine_end_source(&h.engine, 2);
	assert_true(h.engine.in[0].sustain);
}

/* ---- mts and mpe ----------------------------------------------------------- */

static void mts_tunes_a_key_before_its_note(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	const uint8_t *w = keymaps[0].keys[60].mts;
	/* 330 Hz goes out on key 64, tuned to the exact word first */
	EXPECT(0xF0, 0x7F, 0x7F, 0x08, 0x02, 0x00, 0x01, 64, w[0], w[1], w[2], 0xF7,
	       0xE0, 0x00, 0x40, 0x90, 64, 100);
	harness_send(&h, 0x80, 60, 0);
	harness_send(&h, 0x90, 60, 100); /* the synth holds it now: no SysEx */
	EXPECT(0x80, 64, 0, 0x90, 64, 100);
	assert_true(fabs(model_pitch(&model, 0, 64) - key_note(0, 60)) <= 0.5 / 16384 + 1e-12);

	/* own: the note goes out on the key pressed */
	s.output.mts_key = MTS_KEY_OWN;
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	assert_int_equal(h.log[7], 60);
	assert_int_equal(model.last_on_key, 60);
	assert_true(fabs(model_pitch(&model, 0, 60) - key_note(0, 60)) <= 0.5 / 16384 + 1e-12);
}

static void mts_never_retunes_a_sounding_key(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	start(&s);
	harness_send(&h, 0x90, 60, 100); /* key 64 holds 330 Hz */
	harness_send(&h, 0xCF, 1, 0);    /* the dekany */
	/* a dekany key whose pitch is nearest 64 must use another key while
	 * 64 sounds */
	int key = -1;
	for (int k = 0; k < 128 && key < 0; k++)
		if (keymaps[1].keys[k].state == KEY_SOUNDING && lround(keymaps[1].keys[k].note) == 64)
			key = k;
	assert_true(key >= 0);
	harness_send(&h, 0x90, key, 100);
	assert_int_not_equal(model.last_on_key, 64);
	assert_true(fabs(model_pitch(&model, 0, model.last_on_key) - key_note(1, key)) <= 0.5 / 16384 + 1e-12);
	assert_true(fabs(model_pitch(&model, 0, 64) - key_note(0, 60)) <= 0.5 / 16384 + 1e-12);
	assert_int_equal(model.violations, 0);
}

/* Two players' wheels on one MTS channel would bend each other's sounding
 * notes (found by tests/fuzz/fuzz_engine): each input channel gets its own
 * output channel, and too few output channels are refused. */
static void mts_one_output_channel_per_input(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.input.channels = 0x0003;
	s.output.channels = 0x0001;
	struct core_error err;
	memset(&h, 0, sizeof h);
	assert_false(engine_init(&h.engine, &s, &tunings, harness_emit, &h, &err));
	assert_string_equal(err.field, "channels");
	assert_non_null(strstr(err.text, "2 input channels, but only 1 output channel"));

	s.output.channels = 0x0006;
	start(&s);
	harness_send(&h, 0x90, 60, 100);           /* input 1 plays on channel 2 */
	harness_send(&h, 0xE1, 0x00, 0x50);        /* input 2's wheel, nothing sounds there */
	harness_clear(&h);
	harness_send(&h, 0x91, 62, 100);           /* input 2 plays on channel 3, bent */
	assert_int_equal(model.last_on_channel, 2);
	assert_int_equal(model.ch[2].bend, 0x2800);
	assert_int_equal(model.ch[1].bend, 8192);  /* channel 2's note is left alone */
	assert_int_equal(model.violations, 0);
}

static void mts_bulk_dump_with_checksum(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MTS);
	s.output.channels = 0x0001;
	s.output.mts_bulk = true;
	s.output.mts_key = MTS_KEY_OWN;
	start(&s);
	/* the dump is the last thing set-up sends: 408 bytes */
	assert_true(h.length >= 408);
	const uint8_t *d = h.log + h.length - 408;
	assert_int_equal(d[0], 0xF0);
	assert_int_equal(d[1], 0x7E);
	assert_int_equal(d[4], 0x01);
	assert_int_equal(d[407], 0xF7);
	uint8_t sum = 0;
	for (int i = 1; i < 406; i++) /* 7E through the last data byte */
		sum ^= d[i];
	assert_int_equal(d[406], sum & 0x7F);
	assert_int_equal(memcmp(d + 22 + 3 * 60, keymaps[0].keys[60].mts, 3), 0);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100); /* already held: no single-note change */
	EXPECT(0xE0, 0x00, 0x40, 0x90, 60, 100);
}

static void mpe_notes_rotate_wheel_on_master(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_MPE);
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0x90, 60, 100);
	/* member channel 2, bend for +1.955 cents at 48 semitones: 8195 */
	EXPECT(0xE1, 8195 & 0x7F, 8195 >> 7, 0x91, 64, 100);
	model.bend_change_allowed = true;
	harness_send(&h, 0xE0, 0x00, 0x50); /* the wheel goes to the master channel */
	model.bend_change_allowed = false;
	EXPECT(0xE0, 0x00, 0x50);
	harness_send(&h, 0xD0, 40, 0); /* global pressure: master */
	EXPECT(0xD0, 40);
	harness_send(&h, 0xA0, 60, 70); /* poly pressure becomes the member's pressure */
	EXPECT(0xD1, 70);
	double wheel = (0x2800 - 8192) / 8192.0 * 2.0;
	assert_true(fabs(model_pitch(&model, 1, 64) - (key_note(0, 60) + wheel)) <
		    0.5 * 48.0 / 8192 + 0.5 * 2.0 / 8192 + 1e-9);
}

static void mpe_input_bends_follow_their_note(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.input.mpe = true;
	s.input.mpe_zone = MPE_ZONE_LOWER;
	s.input.channels = 0xFFFF;
	s.output.bend_range = 48;
	start(&s);
	harness_send(&h, 0x91, 60, 100); /* member channel 2 */
	harness_send(&h, 0x92, 61, 100); /* member channel 3 */
	int c60 = -1, c61 = -1;
	for (int c = 0; c < 16; c++) {
		if (model.ch[c].on[64])
			c60 = c;
		if (model.ch[c].on[67])
			c61 = c;
	}
	assert_true(c60 >= 0 && c61 >= 0 && c60 != c61);
	/* +1 semitone of per-note bend on member 2 (48-semitone range) moves only its note */
	unsigned v = 8192 + 8192 / 48;
	model.bend_change_allowed = true;
	harness_send(&h, 0xE1, v & 0x7F, v >> 7);
	model.bend_change_allowed = false;
	double moved = (v - 8192) / 8192.0 * 48.0;
	assert_true(fabs(model_pitch(&model, c60, 64) - (key_note(0, 60) + moved)) < 0.5 * 48.0 / 8192 + 1e-9);
	assert_true(fabs(model_pitch(&model, c61, 67) - key_note(0, 61)) < 0.5 * 48.0 / 8192 + 1e-9);
	/* CC74 on a member goes to its note's channel only */
	harness_clear(&h);
	harness_send(&h, 0xB2, 74, 99);
	EXPECT(0xB0 | c61, 74, 99);
}

/* Reset all controllers on a member channel lifts the zone's pedals at the
 * synth, so the engine must lift them too: a second sostenuto press would
 * otherwise latch the note at the synth only, and it would ring for ever
 * (found by tests/fuzz/fuzz_engine).  What 121 resets: MIDI 1.0 RP-015
 * (from memory: pedals up, bend centred). */
/* Reset all controllers centres the synth's bend (MIDI 1.0 RP-015, from
 * memory): a sounding note gets its retune back at once, or it would go on
 * in 12-TET (found by tests/fuzz/fuzz_engine). */
static void reset_all_controllers_keeps_the_retune(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.channels = 0x0002;
	start(&s);
	harness_send(&h, 0x90, 60, 100);   /* channel 2, bend 8272 */
	model.bend_change_allowed = true;  /* the player's reset centres the wheel */
	harness_send(&h, 0xE0, 0x00, 0x50);
	harness_clear(&h);
	harness_send(&h, 0xB0, 121, 0);
	model.bend_change_allowed = false;
	EXPECT(0xB1, 121, 0, 0xE1, 0x50, 0x40);
	assert_true(fabs(model_pitch(&model, 1, 64) - key_note(0, 60)) < 0.5 * 2.0 / 8192 + 1e-9);
}

static void member_reset_lifts_zone_pedals(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.input.mpe = true;
	s.input.mpe_zone = MPE_ZONE_LOWER;
	s.input.channels = 0xFFFF;
	s.output.bend_range = 48;
	start(&s);
	harness_send(&h, 0xB1, 66, 127);  /* sostenuto down (the zone's, on a member) */
	harness_send(&h, 0x91, 60, 100);  /* pressed after it: not held */
	model.bend_change_allowed = true;  /* it centres the wheel, too */
	harness_send(&h, 0xB1, 121, 0);   /* the synth lifts every pedal of the zone */
	model.bend_change_allowed = false;
	harness_send(&h, 0xB1, 66, 127);  /* a new press holds the note */
	harness_send(&h, 0x81, 60, 0);
	assert_int_equal(model_sounding_count(&model), 1);
	harness_send(&h, 0xB1, 66, 0);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(model.violations, 0);
}

static void reused_channel_drops_the_old_owners_pedal(void **state)
{
	(void)state;
	/* input channels 1 and 2 share output channels 2 and 3 */
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.input.channels = 0x0003;
	s.output.channels = 0x0006;
	start(&s);
	harness_send(&h, 0xB0, 64, 127);   /* player 1 holds the pedal */
	harness_send(&h, 0x90, 60, 80);    /* channel 2, pedal sent there */
	harness_send(&h, 0x80, 60, 0);     /* rings under the pedal */
	harness_send(&h, 0x90, 62, 81);    /* channel 3 */
	harness_send(&h, 0x80, 62, 0);
	harness_clear(&h);
	harness_send(&h, 0x91, 64, 82);    /* player 2: steals a ringing channel */
	/* the new owner has no pedal down: the channel's sustain goes off
	 * before its note, so nothing it plays is held by player 1's pedal */
	assert_true(log_contains(0xB1, 0x40, 0x00));
	harness_send(&h, 0x81, 64, 0);
	harness_send(&h, 0xB0, 64, 0);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(model.violations, 0);
}

static void all_sound_off_stays_on_its_channel(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.input.channels = 0x0003;
	start(&s);
	harness_send(&h, 0x90, 58, 80);    /* player 1: output channel 2 */
	harness_send(&h, 0x91, 62, 81);    /* player 2: output channel 3 */
	harness_clear(&h);
	harness_send(&h, 0xB0, 120, 0);    /* player 1's all-sound-off */
	assert_false(log_contains(0xB2, 0x78, 0x00));
	assert_true(model.ch[2].on[68]);   /* player 2's 15/8 still sounds */
	assert_int_equal(model.violations, 0);
}

static void synth_correction_factor_and_offset(void **state)
{
	(void)state;
	/* a synth playing 127/128 of each bend (FluidSynth 2.3, measured) at a
	 * 48-semitone range: a 7/4's -31.174 cents needs the scaled value */
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.output.bend_range = 48;
	s.output.bend_played = 127.0 / 128.0;
	s.output.cents_offset = -3.05;
	start(&s);
	harness_send(&h, 0x90, 61, 100);
	double want = key_note(0, 61) - 0.0305;
	double got = model_pitch(&model, model.last_on_channel, model.last_on_key);
	assert_true(fabs(got - want) <= 0.5 * 48.0 * (127.0 / 128.0) / 8192 + 1e-9);
}

/* ---- randomized promises ----------------------------------------------------- */

/* The test's own record of each sounding output note. */
struct owner {
	bool used;
	int in_channel, in_key;
	double base;          /* key-map pitch + root + offset, no wheel */
	bool clamped;
};

struct random_run {
	struct engine_spec spec;
	struct owner owner[16][128];
	bool down[16][128];
	int wheel[16];        /* raw 14-bit per input channel */
	double range_cents[16];
	int preset, root_slot;
	long events, checked_pitches;
	double worst_error;   /* in steps */
};

static double step_of(const struct random_run *r)
{
	/* MTS notes: the word's step; others: one bend step */
	return r->spec.output.method == RETUNE_MTS ? 1.0 / 16384.0
		: r->spec.output.bend_range * r->spec.output.bend_played / 8192.0;
}

static double root_shift(int preset, int slot)
{
	if (slot == 0)
		return 0.0;
	/* the 1/1 moves to tone slot-1: up by its cents, folded by one period
	 * if that is more than half a period (our documented re-root rule) */
	double c = lattices[preset].tones[slot - 1].cents;
	return (c > 600.0 ? c - 1200.0 : c) / 100.0;
}

static double wheel_notes(const struct random_run *r, int ch)
{
	/* MIDI 1.0 bend: centre 8192, full scale = the wheel range */
	return (r->wheel[ch] - 8192) / 8192.0 * r->range_cents[ch] / 100.0;
}

static double extra_notes(const struct random_run *r, int in_ch)
{
	bool member = r->spec.input.mpe && in_ch != 0;
	double e = wheel_notes(r, member ? 0 : in_ch);
	if (member)
		e += wheel_notes(r, in_ch);
	return e;
}

static void check_note_pitch(struct random_run *r, int ch, int key)
{
	const struct owner *o = &r->owner[ch][key];
	if (!o->used || o->clamped)
		return;
	double want = o->base + extra_notes(r, o->in_channel);
	/* what the output channel's own bend must carry, in semitones */
	enum retune_method method = r->spec.output.method;
	bool member = r->spec.input.mpe && o->in_channel != 0;
	double channel_part = method == RETUNE_MTS ? extra_notes(r, o->in_channel)
			    : method == RETUNE_MPE ? o->base - key + (member ? wheel_notes(r, o->in_channel) : 0.0)
			    : want - key;
	if (fabs(channel_part) > r->spec.output.bend_range * r->spec.output.bend_played - 0.01)
		return; /* beyond the bend range: the engine clamps and says so */
	double got = model_pitch(&model, ch, key);
	double bend_step = r->spec.output.bend_range * r->spec.output.bend_played / 8192.0;
	double tolerance = 0.5 * step_of(r) + 1e-9;
	if (method != RETUNE_BEND)
		tolerance += 0.5 * bend_step + 0.5 * 2.0 / 8192.0; /* the wheel's own step */
	double err = fabs(got - want);
	if (err / step_of(r) > r->worst_error)
		r->worst_error = err / step_of(r);
	r->checked_pitches++;
	if (err > tolerance)
		fail_msg("pitch of channel %d key %d (input key %d): %.6f, want %.6f (%ld events in)",
			 ch + 1, key, o->in_key, got, want, r->events);
}

/* Drops records of output notes the model no longer has on. */
static void sync_owners(struct random_run *r)
{
	for (int c = 0; c < 16; c++)
		for (int k = 0; k < 128; k++)
			if (r->owner[c][k].used && !model.ch[c].on[k])
				r->owner[c][k].used = false;
}

static void random_note_on(struct random_run *r, struct rng *g, int in_ch)
{
	int key = 30 + rng_below(g, 60);
	if (r->down[in_ch][key])
		return;
	int before = model.note_ons_seen;
	harness_send(&h, (uint8_t)(0x90 | in_ch), (uint8_t)key, (uint8_t)(1 + rng_below(g, 127)));
	r->down[in_ch][key] = true;
	sync_owners(r);
	if (model.note_ons_seen == before)
		return; /* silent key or no channel */
	const struct key_pitch *kp = &keymaps[r->preset].keys[key];
	struct owner *o = &r->owner[model.last_on_channel][model.last_on_key];
	o->used = true;
	o->in_channel = in_ch;
	o->in_key = key;
	o->base = kp->note + root_shift(r->preset, r->root_slot) + r->spec.output.cents_offset / 100.0;
	o->clamped = false;
	check_note_pitch(r, model.last_on_channel, model.last_on_key);
}

static void release_everything(struct random_run *r)
{
	for (int c = 0; c < 16; c++) {
		for (int k = 0; k < 128; k++) {
			if (r->down[c][k]) {
				harness_send(&h, (uint8_t)(0x80 | c), (uint8_t)k, 0);
				r->down[c][k] = false;
			}
		}
		if ((r->spec.input.channels >> c) & 1) {
			harness_send(&h, (uint8_t)(0xB0 | c), 64, 0);
			harness_send(&h, (uint8_t)(0xB0 | c), 66, 0);
		}
	}
	sync_owners(r);
	/* promise 2: nothing sounds once every key and pedal is up */
	if (model_sounding_count(&model) != 0 && getenv("ENGINE_DEBUG")) {
		for (int c = 0; c < 16; c++)
			for (int k = 0; k < 128; k++)
				if (model_sounds(&model.ch[c], k))
					fprintf(stderr, "ch %d key %d on %d ringing %d sustain %d sost %d latched %d\n",
						c + 1, k, model.ch[c].on[k], model.ch[c].ringing[k],
						model.ch[c].sustain, model.ch[c].sostenuto, model.ch[c].latched[k]);
	}
	if (model_sounding_count(&model) != 0)
		fail_msg("%d notes still sound after everything was released (%ld events in)",
			 model_sounding_count(&model), r->events);
}

static void run_random(const char *name, struct engine_spec spec, uint64_t seed, long events)
{
	static struct random_run r;
	memset(&r, 0, sizeof r);
	r.spec = spec;
	start(&spec);
	const char *shift = getenv("LATTICED_ENGINE_SEED");
	struct rng g = {seed + (shift ? strtoull(shift, NULL, 10) * 1000003ULL : 0)};
	int input[16], inputs = 0;
	for (int c = 0; c < 16; c++) {
		if ((spec.input.channels >> c) & 1)
			input[inputs++] = c;
		r.wheel[c] = 8192;
		bool member = spec.input.mpe && c != 0;
		r.range_cents[c] = member ? spec.input.mpe_bend_range * 100.0
					  : spec.input.wheel_range_cents;
	}
	int max_down = 2 + rng_below(&g, 10);
	for (r.events = 0; r.events < events; r.events++) {
		int in_ch = input[rng_below(&g, inputs)];
		int action = rng_below(&g, 1000);
		int held = 0;
		for (int k = 0; k < 128; k++)
			held += r.down[in_ch][k];
		if (action < 300 && held < max_down) {
			random_note_on(&r, &g, in_ch);
		} else if (action < 600) {
			int key = 30 + rng_below(&g, 60);
			if (r.down[in_ch][key]) {
				harness_send(&h, (uint8_t)((rng_below(&g, 2) ? 0x80 : 0x90) | in_ch),
					     (uint8_t)key, 0);
				r.down[in_ch][key] = false;
				sync_owners(&r);
			}
		} else if (action < 700) {
			int v = rng_below(&g, 16384);
			r.wheel[in_ch] = v;
			model.bend_change_allowed = true;
			harness_send(&h, (uint8_t)(0xE0 | in_ch), (uint8_t)(v & 0x7F), (uint8_t)(v >> 7));
			model.bend_change_allowed = false;
			for (int c = 0; c < 16; c++)
				for (int k = 0; k < 128; k++)
					if (r.owner[c][k].used && model.ch[c].on[k])
						check_note_pitch(&r, c, k);
		} else if (action < 760) {
			harness_send(&h, (uint8_t)(0xB0 | in_ch), 64, rng_below(&g, 2) ? 127 : 0);
			sync_owners(&r);
		} else if (action < 790) {
			harness_send(&h, (uint8_t)(0xB0 | in_ch), 66, rng_below(&g, 2) ? 127 : 0);
			sync_owners(&r);
		} else if (action < 850) {
			static const uint8_t ccs[] = {1, 7, 11, 74, 0, 32, 91};
			harness_send(&h, (uint8_t)(0xB0 | in_ch), ccs[rng_below(&g, 7)], (uint8_t)rng_below(&g, 128));
		} else if (action < 870) {
			harness_send(&h, (uint8_t)(0xC0 | in_ch), (uint8_t)rng_below(&g, 128), 0);
		} else if (action < 900) {
			harness_send(&h, (uint8_t)(0xD0 | in_ch), (uint8_t)rng_below(&g, 128), 0);
		} else if (action < 920) {
			harness_send(&h, (uint8_t)(0xA0 | in_ch), (uint8_t)(30 + rng_below(&g, 60)),
				     (uint8_t)rng_below(&g, 128));
		} else if (action < 935 && spec.control.channel >= 0) {
			r.preset = rng_below(&g, 2);
			r.root_slot = 0;
			harness_send(&h, (uint8_t)(0xC0 | spec.control.channel), (uint8_t)r.preset, 0);
		} else if (action < 950 && spec.control.channel >= 0 && spec.control.root_cc == 20) {
			r.root_slot = rng_below(&g, lattices[r.preset].tone_count + 1);
			harness_send(&h, (uint8_t)(0xB0 | spec.control.channel), 20, (uint8_t)r.root_slot);
		} else if (action < 960) {
			/* drums on channel 10 pass through: a hit and its release,
			 * or (when 10 is not retuned) a hit held until its release,
			 * a panic or the end, which must end it */
			uint8_t key = (uint8_t)rng_below(&g, 128);
			bool passes = !((spec.input.channels >> 9) & 1);
			if (passes && r.down[9][key]) {
				harness_send(&h, 0x89, key, 0);
				r.down[9][key] = false;
			} else if (passes && rng_below(&g, 2)) {
				harness_send(&h, 0x99, key, (uint8_t)(1 + rng_below(&g, 127)));
				r.down[9][key] = true;
			} else {
				harness_send(&h, 0x99, key, (uint8_t)(1 + rng_below(&g, 127)));
				harness_send(&h, 0x89, key, 0);
			}
		} else if (action < 962) {
			/* the player's own all-notes-off */
			harness_send(&h, (uint8_t)(0xB0 | in_ch), 123, 0);
			memset(r.down[in_ch], 0, sizeof r.down[in_ch]);
			sync_owners(&r);
		} else if (action < 964) {
			engine_panic(&h.engine);
			memset(r.down, 0, sizeof r.down);
			sync_owners(&r);
			if (model_sounding_count(&model) != 0)
				fail_msg("%s: notes sound after a panic", name);
		} else if (action < 990) {
			release_everything(&r);
			max_down = 2 + rng_below(&g, 10);
		}
		if (model.violations)
			fail_msg("%s (seed %llu) after %ld events: %s", name,
				 (unsigned long long)seed, r.events, model.first);
	}
	release_everything(&r);
	engine_panic(&h.engine);
	/* promise 1: every note-on met exactly one note-off */
	for (int c = 0; c < 16; c++)
		for (int k = 0; k < 128; k++)
			if (model.ch[c].ons[k] != model.ch[c].offs[k])
				fail_msg("%s: channel %d key %d had %u note-ons and %u note-offs", name,
					 c + 1, k, model.ch[c].ons[k], model.ch[c].offs[k]);
	assert_int_equal(model.violations, 0);
	printf("  %-26s %8ld events, %7ld pitches checked, worst %.3f step, %u stolen, %u shared, %u dropped\n",
	       name, r.events, r.checked_pitches, r.worst_error, h.engine.stats.notes_stolen,
	       h.engine.stats.notes_shared, h.engine.stats.notes_dropped);
}

static long random_events(void)
{
	const char *env = getenv("LATTICED_ENGINE_EVENTS");
	long n = env ? atol(env) : 1000000;
	return n > 0 ? n : 1000000;
}

static void randomized_promises(void **state)
{
	(void)state;
	long total = random_events();
	long each = total / 8;
	struct engine_spec s;

	s = default_spec(RETUNE_BEND);
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	s.control.root_cc = 20;
	run_random("bend, 14 channels", s, 1, each);

	s.output.channels = 0x000E; /* 3 channels: share and steal often */
	run_random("bend, 3 channels", s, 2, each);
	s.output.polyphony = POLY_STEAL;
	run_random("bend, steal only", s, 3, each);
	s.output.polyphony = POLY_SHARE;
	s.output.bend_played = 127.0 / 128.0;
	s.output.cents_offset = 7.5;
	run_random("bend, share only, corrected", s, 4, each);

	s = default_spec(RETUNE_MTS);
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	s.control.root_cc = 20;
	s.output.channels = 0x0001;
	run_random("mts, nearest key", s, 5, each);
	s.output.mts_key = MTS_KEY_OWN;
	s.output.mts_bulk = true;
	run_random("mts, own key, bulk", s, 6, each);

	s = default_spec(RETUNE_MPE);
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	s.output.mpe_members = 4;
	run_random("mpe, 4 members", s, 7, each);

	s = default_spec(RETUNE_BEND);
	s.input.channels = 0x0003; /* two players share a 3-channel pool */
	s.output.channels = 0x000E;
	run_random("bend, two input channels", s, 9, each / 2);

	s = default_spec(RETUNE_BEND);
	s.input.mpe = true;
	s.input.channels = 0x3FFF; /* master 1, members 2-14 */
	s.output.bend_range = 48;
	s.output.channels = 0x00FE;
	run_random("bend from an MPE controller", s, 8, total - 7 * each - each / 2);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(bend_setup_sends_rpn0),
		cmocka_unit_test(mpe_setup_sends_mcm_then_ranges),
		cmocka_unit_test(mts_setup_selects_program),
		cmocka_unit_test(bend_note_gets_its_bend_first),
		cmocka_unit_test(free_channel_with_same_bend_first_then_lru),
		cmocka_unit_test(share_then_steal),
		cmocka_unit_test(sustain_keeps_the_channel),
		cmocka_unit_test(sostenuto_holds_only_notes_down),
		cmocka_unit_test(wheel_moves_every_sounding_note),
		cmocka_unit_test(player_rpn0_sets_wheel_range),
		cmocka_unit_test(pressure_and_aftertouch),
		cmocka_unit_test(controllers_sync_lazily),
		cmocka_unit_test(passthrough_and_system),
		cmocka_unit_test(passthrough_notes_end_with_their_source_and_at_a_panic),
		cmocka_unit_test(passthrough_notes_beyond_the_table_are_dropped),
		cmocka_unit_test(presets_and_roots_apply_to_new_notes),
		cmocka_unit_test(reserved_keys_steer),
		cmocka_unit_test(panic_and_vanished_source),
		cmocka_unit_test(vanished_device_lets_its_pedal_go),
		cmocka_unit_test(mts_tunes_a_key_before_its_note),
		cmocka_unit_test(mts_never_retunes_a_sounding_key),
		cmocka_unit_test(mts_one_output_channel_per_input),
		cmocka_unit_test(mts_bulk_dump_with_checksum),
		cmocka_unit_test(mpe_notes_rotate_wheel_on_master),
		cmocka_unit_test(mpe_input_bends_follow_their_note),
		cmocka_unit_test(reset_all_controllers_keeps_the_retune),
		cmocka_unit_test(member_reset_lifts_zone_pedals),
		cmocka_unit_test(reused_channel_drops_the_old_owners_pedal),
		cmocka_unit_test(all_sound_off_stays_on_its_channel),
		cmocka_unit_test(synth_correction_factor_and_offset),
		cmocka_unit_test(randomized_promises),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
