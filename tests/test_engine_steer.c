/*
 * Tests of the player's controls of the tuning (engine_steer.c): bindings
 * that step presets and roots, go home or panic, as a controller or as a
 * reserved key; momentary, latching and press-only switches; wrap or stop
 * at the ends; control messages that select nothing; control on the
 * playing channel; the steering classes the load guard reads; where a
 * restarted engine resumes and what a reload keeps.
 *
 * Sources: MIDI 1.0 for the messages (Bn cc vv, 9n kk vv with velocity 0
 * a note-off, Cn pp) and for switch controllers, whose values 0-63 mean
 * off and 64-127 on (MIDI 1.0 controller table; from memory).  A latching
 * footswitch stays down after a press and comes up at the next, so it
 * sends 127 and 0 on alternate presses, a momentary one 127 on the press
 * and 0 on the release (common practice).  What each binding then does is
 * our rule (engine.h, struct engine_control_spec), marked "(our rule)".
 * The presets are engine_test.h's: p0 a hexany (6 tones), p1 a dekany
 * (10 tones, published CPS count C(5,2) = 10).
 */
#include "engine_test.h"

static struct engine_binding cc(int number)
{
	return (struct engine_binding){ENGINE_BINDING_CC, number, false};
}

static struct engine_binding key(int number)
{
	return (struct engine_binding){ENGINE_BINDING_KEY, number, false};
}

/* The spec with a control channel 16 (0xBF) and nothing bound yet. */
static struct engine_spec control_spec(void)
{
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.control.channel = 15;
	return s;
}

static void expect_miss(enum engine_miss_kind kind, int number, uint32_t count)
{
	struct engine_control_miss miss;
	assert_true(engine_take_notices(&h.engine) & NOTICE_CONTROL_MISSED);
	assert_true(engine_take_control_miss(&h.engine, &miss));
	assert_int_equal(miss.kind, kind);
	assert_int_equal(miss.number, number);
	assert_int_equal(miss.count, count);
	assert_false(engine_take_control_miss(&h.engine, &miss));
}

static void expect_no_miss(void)
{
	struct engine_control_miss miss;
	assert_false(engine_take_notices(&h.engine) & NOTICE_CONTROL_MISSED);
	assert_false(engine_take_control_miss(&h.engine, &miss));
}

/* A momentary pedal: 127 on the press, 0 on the release (common practice);
 * the press steps, the release does nothing, and a step past the last
 * preset with wrap off stays and is a miss (our rule). */
static void momentary_pedal_steps_on_the_press(void **state)
{
	(void)state;
	struct engine_spec s = control_spec();
	s.control.actions[ENGINE_ACTION_PRESET_NEXT] = cc(64);
	s.control.actions[ENGINE_ACTION_PRESET_PREVIOUS] = cc(65);
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0xBF, 64, 127);
	assert_int_equal(engine_preset(&h.engine), 1);
	harness_send(&h, 0xBF, 64, 0);
	assert_int_equal(engine_preset(&h.engine), 1);
	expect_no_miss();
	harness_send(&h, 0xBF, 64, 127); /* already on the last of two */
	assert_int_equal(engine_preset(&h.engine), 1);
	expect_miss(ENGINE_MISS_STEP_END, 64, 1);
	harness_send(&h, 0xBF, 64, 0);
	harness_send(&h, 0xBF, 65, 127);
	harness_send(&h, 0xBF, 65, 0);
	assert_int_equal(engine_preset(&h.engine), 0);
	harness_send(&h, 0xBF, 65, 127); /* before the first */
	assert_int_equal(engine_preset(&h.engine), 0);
	expect_miss(ENGINE_MISS_STEP_END, 65, 1);
	expect_bytes(NULL, 0); /* the control channel never sounds */
}

/* A latching pedal bound as latching: every press flips its value, and
 * each flip steps; wrap goes round (our rule).  Bound as momentary, the
 * same pedal steps on every other press only: the documented reason for
 * `latching`. */
static void latching_pedal_steps_on_every_press(void **state)
{
	(void)state;
	struct engine_spec s = control_spec();
	s.control.actions[ENGINE_ACTION_PRESET_NEXT] = cc(64);
	s.control.actions[ENGINE_ACTION_PRESET_NEXT].latching = true;
	s.control.wrap = true;
	start(&s);
	static const uint8_t presses[] = {127, 0, 127, 0, 127};
	static const int preset_after[] = {1, 0, 1, 0, 1};
	for (int i = 0; i < 5; i++) {
		harness_send(&h, 0xBF, 64, presses[i]);
		assert_int_equal(engine_preset(&h.engine), preset_after[i]);
	}
	expect_no_miss();

	s.control.actions[ENGINE_ACTION_PRESET_NEXT].latching = false;
	start(&s);
	for (int i = 0; i < 4; i++)
		harness_send(&h, 0xBF, 64, presses[i]);
	assert_int_equal(engine_preset(&h.engine), 0); /* two steps: round to p0 */
}

/* A button that sends only its press (127, 127, ...) steps each time; a
 * continuous pedal pushed down slowly (values rising past 64, falling
 * back) steps once (our rule). */
static void press_only_buttons_and_slow_pedals(void **state)
{
	(void)state;
	struct engine_spec s = control_spec();
	s.control.actions[ENGINE_ACTION_ROOT_NEXT] = cc(80);
	start(&s);
	for (int i = 0; i < 3; i++)
		harness_send(&h, 0xBF, 80, 127);
	assert_int_equal(engine_root(&h.engine), 3);
	static const uint8_t slow[] = {0, 30, 64, 90, 110, 127, 100, 40, 0};
	for (size_t i = 0; i < sizeof slow; i++)
		harness_send(&h, 0xBF, 80, slow[i]);
	assert_int_equal(engine_root(&h.engine), 4);
}

/* Root steps walk home, tone 0, ..., the last tone (as root_keys do);
 * with wrap the last goes home and home goes back to the last; home
 * goes home (our rule).  Bound to keys on the playing channel, they never
 * sound, and their note-offs send nothing. */
static void root_steps_by_keys_never_sound(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND); /* no control channel */
	s.control.actions[ENGINE_ACTION_ROOT_NEXT] = key(22);
	s.control.actions[ENGINE_ACTION_ROOT_PREVIOUS] = key(21);
	s.control.actions[ENGINE_ACTION_ROOT_HOME] = key(23);
	s.control.wrap = true;
	start(&s);
	harness_clear(&h);
	for (int i = 1; i <= 6; i++) {
		harness_send(&h, 0x90, 22, 100);
		harness_send(&h, 0x80, 22, 0);
		assert_int_equal(engine_root(&h.engine), i);
	}
	harness_send(&h, 0x90, 22, 100); /* past tone 5 of the hexany: home */
	harness_send(&h, 0x90, 22, 0);   /* velocity 0: a note-off (MIDI 1.0) */
	assert_int_equal(engine_root(&h.engine), 0);
	harness_send(&h, 0x90, 21, 100);
	assert_int_equal(engine_root(&h.engine), 6);
	harness_send(&h, 0x90, 23, 100);
	assert_int_equal(engine_root(&h.engine), 0);
	expect_bytes(NULL, 0);
	assert_int_equal(model.note_ons_seen, 0);

	s.control.wrap = false;
	start(&s);
	harness_send(&h, 0x90, 21, 100); /* before home */
	assert_int_equal(engine_root(&h.engine), 0);
	expect_miss(ENGINE_MISS_STEP_END, 21, 1);
}

/* The panic binding ends every note, pass-through ones too, and lets the
 * pedals up, as engine_panic does (our rule); a key still held then plays
 * nothing on its note-off. */
static void panic_binding_ends_every_note(void **state)
{
	(void)state;
	struct engine_spec s = control_spec();
	s.control.actions[ENGINE_ACTION_PANIC] = cc(119);
	start(&s);
	harness_send(&h, 0xB0, 64, 127);  /* sustain down */
	harness_send(&h, 0x90, 60, 100);
	harness_send(&h, 0x90, 62, 100);
	harness_send(&h, 0x80, 62, 0);    /* ringing under the pedal */
	harness_send(&h, 0x99, 36, 100);  /* a drum passed through */
	assert_true(model_sounding_count(&model) >= 3);
	harness_send(&h, 0xBF, 119, 127);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(engine_note_count(&h.engine), 0);
	assert_int_equal(engine_passthrough_notes(&h.engine), 0);
	assert_int_equal(engine_stats(&h.engine)->control_panics, 1);
	harness_send(&h, 0xBF, 119, 0);   /* the release does nothing */
	assert_int_equal(engine_stats(&h.engine)->control_panics, 1);
	harness_clear(&h);
	harness_send(&h, 0x80, 60, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(model.violations, 0);

	/* the same as a key on the playing channel */
	s = default_spec(RETUNE_BEND);
	s.control.actions[ENGINE_ACTION_PANIC] = key(108);
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_send(&h, 0x90, 108, 100);
	assert_int_equal(model_sounding_count(&model), 0);
	assert_int_equal(engine_stats(&h.engine)->control_panics, 1);
}

/* A program, preset_cc or root_cc value, or a reserved root key, that
 * selects nothing changes nothing and is a miss, raised every time and
 * counted until taken (our rule: never silently ignored). */
static void values_that_select_nothing_are_misses(void **state)
{
	(void)state;
	struct engine_spec s = control_spec();
	s.control.program_selects_preset = true;
	s.control.preset_cc = 21;
	s.control.root_cc = 20;
	s.control.root_keys = 40; /* 40 home, 41..50: up to the dekany's 10 tones */
	start(&s);
	harness_send(&h, 0xCF, 9, 0);      /* 2 presets: 0 and 1 */
	assert_int_equal(engine_preset(&h.engine), 0);
	expect_miss(ENGINE_MISS_PROGRAM, 9, 1);
	harness_send(&h, 0xBF, 21, 2);
	harness_send(&h, 0xBF, 21, 5);
	struct engine_control_miss miss;
	assert_true(engine_take_control_miss(&h.engine, &miss));
	assert_int_equal(miss.kind, ENGINE_MISS_PRESET_CC);
	assert_int_equal(miss.value, 5);    /* the latest */
	assert_int_equal(miss.count, 2);    /* both counted */
	assert_int_equal(miss.channel, 15);
	assert_true(engine_take_notices(&h.engine) & NOTICE_CONTROL_MISSED);
	harness_send(&h, 0xBF, 20, 7);     /* the hexany: home and 6 tones, 0..6 */
	assert_int_equal(engine_root(&h.engine), 0);
	expect_miss(ENGINE_MISS_ROOT_CC, 20, 1);
	harness_send(&h, 0x90, 48, 100);   /* slot 8: a dekany tone, not a hexany one */
	assert_int_equal(engine_root(&h.engine), 0);
	expect_miss(ENGINE_MISS_ROOT_KEY, 48, 1);
	assert_int_equal(model.note_ons_seen, 0); /* a reserved key never sounds */
	harness_send(&h, 0xBF, 21, 1);     /* in range: no miss */
	harness_send(&h, 0x90, 48, 100);
	assert_int_equal(engine_root(&h.engine), 8);
	expect_no_miss();
}

/* channel = playing: the bound controllers on the playing channel are
 * taken, not passed on; other controllers play; program changes reach
 * the synth unless they select presets; reserved keys never sound (our
 * rule). */
static void control_on_the_playing_channel(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.control.channel = ENGINE_CONTROL_PLAYING;
	s.control.actions[ENGINE_ACTION_PRESET_NEXT] = cc(80);
	s.control.preset_keys = 0;
	start(&s);
	harness_send(&h, 0x90, 60, 100);   /* sounds on channel 2 */
	harness_clear(&h);
	harness_send(&h, 0xB0, 80, 127);
	expect_bytes(NULL, 0);
	assert_int_equal(engine_preset(&h.engine), 1);
	harness_send(&h, 0xB0, 1, 50);     /* modulation plays */
	EXPECT(0xB1, 1, 50);
	harness_send(&h, 0xC0, 7, 0);      /* program_change = ignore: to the synth */
	EXPECT(0xC1, 7);
	harness_send(&h, 0x90, 0, 100);    /* preset key 0 */
	harness_send(&h, 0x80, 0, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(engine_preset(&h.engine), 0);

	s.control.program_selects_preset = true;
	start(&s);
	harness_clear(&h);
	harness_send(&h, 0xC0, 1, 0);
	expect_bytes(NULL, 0);
	assert_int_equal(engine_preset(&h.engine), 1);

	/* with a control channel of its own, CC 80 on the playing channel plays */
	s = control_spec();
	s.control.actions[ENGINE_ACTION_PRESET_NEXT] = cc(80);
	start(&s);
	harness_send(&h, 0x90, 60, 100);
	harness_clear(&h);
	harness_send(&h, 0xB0, 80, 127);
	EXPECT(0xB1, 80, 127);
	assert_int_equal(engine_preset(&h.engine), 0);
}

/* What the load guard reads: a steering message is never a note it may
 * leave out, and the panic is told apart so room for a whole panic is
 * found first (our rule). */
static void steering_messages_are_classed(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	s.control.channel = ENGINE_CONTROL_PLAYING;
	s.control.actions[ENGINE_ACTION_PANIC] = cc(119);
	s.control.actions[ENGINE_ACTION_ROOT_NEXT] = key(21);
	s.control.root_keys = 100;
	start(&s);
	struct midi_msg m = midi_msg_control(0, 119, 127);
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_PANIC);
	m = midi_msg_control(0, 1, 127);
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_NONE);
	m = midi_msg_note_on(0, 21, 90);
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_TUNING);
	m = midi_msg_note_on(0, 101, 90);
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_TUNING);
	m = midi_msg_note_on(0, 60, 90);
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_NONE);
	m = midi_msg_control(9, 119, 127); /* a channel passed through */
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_NONE);

	s = control_spec();
	start(&s);
	m = midi_msg_control(15, 7, 100);  /* anything on a control channel of its own */
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_TUNING);
	m = midi_msg_control(0, 119, 127);
	assert_int_equal(engine_steers(&h.engine, &m), ENGINE_STEER_NONE);
}

/* A restarted engine resumes where it was without sending anything before
 * its set-up; new notes then sound in that preset and root (our rule). */
static void resume_sends_nothing_until_started(void **state)
{
	(void)state;
	struct engine_spec s = default_spec(RETUNE_BEND);
	memset(&h, 0, sizeof h);
	model_init(&model, s.output.bend_played);
	h.tap = model_tap;
	h.tap_context = &model;
	struct core_error err;
	assert_true(engine_init(&h.engine, &s, &tunings, harness_emit, &h, &err));
	assert_false(engine_resume_at(&h.engine, 2, 0));
	assert_false(engine_resume_at(&h.engine, 0, 7));  /* the hexany: slots 0..6 */
	assert_true(engine_resume_at(&h.engine, 1, 3));
	expect_bytes(NULL, 0);
	engine_start(&h.engine);
	assert_int_equal(engine_preset(&h.engine), 1);
	assert_int_equal(engine_root(&h.engine), 3);
	harness_send(&h, 0x90, 64, 100);
	double shift = retune_root_shift(&lattices[1], 2) / 100.0;
	assert_true(fabs(model_pitch(&model, model.last_on_channel, model.last_on_key) -
			 (key_note(1, 64) + shift)) < 0.5 * 2.0 / 8192 + 1e-9);
}

/* A reload keeps the preset by name and the root by its tone's label;
 * a root whose tone is gone goes home; a preset that is gone gives the
 * first preset, at home; each says which (our rule). */
static void reload_keeps_the_root_by_its_label(void **state)
{
	(void)state;
	static struct lattice other_lat;
	static struct keymap other_map;
	static struct engine_tunings reloaded, renamed, other;
	struct core_error err;
	static const char *const seeds[] = {"1", "3", "5", "11"};
	other.count = 2;
	other.presets[0] = tunings.presets[0];
	if (!fixture_preset(&other_lat, &other_map, &other.presets[1], "p1", seeds, 4, 60, 261.6, &err))
		fail_msg("%s", err.text);
	reloaded.count = 2; /* the same presets in the other order */
	reloaded.presets[0] = tunings.presets[1];
	reloaded.presets[1] = tunings.presets[0];
	renamed = tunings;
	snprintf(renamed.presets[1].name, sizeof renamed.presets[1].name, "q1");

	struct engine_spec s = default_spec(RETUNE_BEND);
	start(&s);
	/* the root on the first dekany tone with a 9 among its seeds */
	char before[LATTICE_LABEL_MAX], after[LATTICE_LABEL_MAX];
	int tone = 0;
	while (lattice_label(&lattices[1].spec, lattices[1].tones[tone].seeds, before, sizeof before),
	       !strchr(before, '9'))
		tone++;
	assert_true(engine_select_preset(&h.engine, 1));
	assert_true(engine_select_root(&h.engine, tone + 1));
	assert_int_equal(engine_replace_tunings(&h.engine, &reloaded), ENGINE_KEPT_PRESET_AND_ROOT);
	assert_int_equal(engine_preset(&h.engine), 0);
	const struct lattice *lat = engine_current_preset(&h.engine)->lattice;
	lattice_label(&lat->spec, lat->tones[engine_root(&h.engine) - 1].seeds, after, sizeof after);
	assert_string_equal(before, after);

	/* p1 as 1 3 5 11: no tone of it has a 9 */
	assert_int_equal(engine_replace_tunings(&h.engine, &other), ENGINE_KEPT_PRESET);
	assert_int_equal(engine_preset(&h.engine), 1);
	assert_int_equal(engine_root(&h.engine), 0);

	assert_true(engine_select_root(&h.engine, 2));
	assert_int_equal(engine_replace_tunings(&h.engine, &renamed), ENGINE_KEPT_NOTHING);
	assert_int_equal(engine_preset(&h.engine), 0);
	assert_int_equal(engine_root(&h.engine), 0);
	assert_int_equal(engine_replace_tunings(&h.engine, &tunings), ENGINE_KEPT_PRESET_AND_ROOT);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(momentary_pedal_steps_on_the_press),
		cmocka_unit_test(latching_pedal_steps_on_every_press),
		cmocka_unit_test(press_only_buttons_and_slow_pedals),
		cmocka_unit_test(root_steps_by_keys_never_sound),
		cmocka_unit_test(panic_binding_ends_every_note),
		cmocka_unit_test(values_that_select_nothing_are_misses),
		cmocka_unit_test(control_on_the_playing_channel),
		cmocka_unit_test(steering_messages_are_classed),
		cmocka_unit_test(resume_sends_nothing_until_started),
		cmocka_unit_test(reload_keeps_the_root_by_its_label),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
