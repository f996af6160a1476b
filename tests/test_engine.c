/*
 * Tests of the engine's common promises, whatever the method: pedals keep
 * a released note's channel, the wheel and the player's RPN 0, pressure,
 * the lazy controller sync, pass-through, presets and roots for new notes
 * only, reserved keys, panic, a vanished device, an MPE controller's
 * per-note bends, reset-all-controllers, the synth correction.  Exact bytes
 * are checked where the rule fixes them; the synth model (synth_model.h)
 * judges pitches and note pairs.  Byte layouts: engine_test.h.  The
 * methods' own rules are in test_engine_bend.c, _mts.c and _mpe.c, the
 * randomized promise run in test_engine_promises.c.
 */
#include "engine_test.h"

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
	assert_int_equal(notes_on_channel(1), 1);
	assert_int_equal(notes_on_channel(2), 0);
	harness_send(&h, 0xB0, 66, 0);
	assert_int_equal(notes_on_channel(1), 0);
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
	assert_true(stats()->bends_clamped > 0);
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
	assert_int_equal(stats()->passthrough_blocked, 1);
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
	assert_int_equal(engine_stats(&h.engine)->notes_dropped, 1);
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
	assert_int_equal(engine_preset(&h.engine), 1);
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
	assert_int_equal(engine_root(&h.engine), 0);
	harness_send(&h, 0xCF, 9, 0);  /* no preset 9: nothing changes */
	assert_int_equal(engine_preset(&h.engine), 1);
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
	assert_int_equal(engine_preset(&h.engine), 1);
	harness_send(&h, 0x90, 14, 100);
	harness_send(&h, 0x80, 14, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(engine_root(&h.engine), 2);
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
	/* another device's pedal is not touched: a note released under it rings */
	engine_handle(&h.engine, 3, &pedal);
	engine_end_source(&h.engine, 2);
	struct midi_msg on3 = midi_msg_note_on(0, 61, 90), off3 = midi_msg_note_off(0, 61, 0);
	engine_handle(&h.engine, 3, &on3);
	engine_handle(&h.engine, 3, &off3);
	struct engine_note_info n;
	assert_true(engine_note_at(&h.engine, 0, &n));
	assert_true(n.ringing);
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

/* What the engine tells about its notes (engine_note_at), and letting go
 * of what is held at the end of a recording (engine_release_held): a
 * note-off for each key still down, then the pedals up, each message shown
 * to the caller first (our rule: render puts it in the key's track). */
struct seen {
	int count;
	struct midi_msg msgs[8];
};

static void see(void *context, const struct midi_msg *m)
{
	struct seen *s = context;
	if (s->count < 8)
		s->msgs[s->count] = *m;
	s->count++;
}

static void notes_reported_and_released(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	harness_send(&h, 0xB0, 64, 127);
	harness_send(&h, 0x90, 60, 100); /* 3/2: channel 2, key 64 */
	harness_send(&h, 0x80, 60, 0);   /* rings under the pedal */
	harness_send(&h, 0x90, 61, 100); /* 7/4: channel 3, key 67, still down */
	struct engine_note_info n;
	assert_int_equal(engine_note_count(&h.engine), 2);
	assert_true(engine_note_at(&h.engine, 0, &n));
	assert_true(n.in_key == 60 && n.out_channel == 1 && n.out_key == 64 && n.ringing);
	assert_true(engine_note_at(&h.engine, 1, &n));
	assert_true(n.in_key == 61 && n.out_channel == 2 && n.out_key == 67 && !n.ringing);
	assert_true(n.pitch == key_note(0, 61) && n.preset == 0 && n.started == engine_serial(&h.engine));
	assert_false(engine_note_at(&h.engine, 2, &n));

	harness_clear(&h);
	struct seen seen = {0};
	struct engine_release r = engine_release_held(&h.engine, see, &seen);
	assert_int_equal(r.keys, 1);
	assert_int_equal(r.pedal_notes, 1);
	assert_int_equal(seen.count, 2);
	assert_true(seen.msgs[0].status == 0x80 && seen.msgs[0].data[0] == 61);
	assert_true(seen.msgs[1].status == 0xB0 && seen.msgs[1].data[0] == 64 && seen.msgs[1].data[1] == 0);
	EXPECT(0x82, 67, 64, 0xB1, 64, 0, 0xB2, 64, 0);
	assert_int_equal(engine_note_count(&h.engine), 0);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(model.violations, 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
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
		cmocka_unit_test(mpe_input_bends_follow_their_note),
		cmocka_unit_test(member_reset_lifts_zone_pedals),
		cmocka_unit_test(reset_all_controllers_keeps_the_retune),
		cmocka_unit_test(reused_channel_drops_the_old_owners_pedal),
		cmocka_unit_test(all_sound_off_stays_on_its_channel),
		cmocka_unit_test(synth_correction_factor_and_offset),
		cmocka_unit_test(notes_reported_and_released),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
