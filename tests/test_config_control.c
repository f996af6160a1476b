/*
 * Tests of the [control] keys read from a config (config_keys.c) and the
 * checks across them (config_control.c): every new key's values, and every
 * setting that can never act or clashes with another is an error at
 * FILE:LINE naming both lines.  (Our rules, documented in
 * config/latticed.conf and latticed.conf(5); no outside source applies.)
 */
#include "config_fixture.h"

/* Builds every preset of text; expects exactly one error containing want. */
static void expect_build_error(const char *text, const char *want)
{
	if (!parse(text))
		fail_msg("for\n%s\nthe config itself was refused:\n%s", text, report.text);
	static struct tuning_set set;
	bool ok = tuning_set_build(&cfg, &set, &report);
	if (ok)
		tuning_set_free(&set);
	if (ok || report.error_count != 1 || !strstr(report.text, want))
		fail_msg("for\n%s\nwanted one build error containing '%s', got (%d):\n%s", text, want,
			 report.error_count, report.text);
}

static void bindings_are_read(void **state)
{
	(void)state;
	assert_true(parse("[control]\nchannel = playing\npreset_next = cc 64\n"
			  "preset_previous = cc 65 latching\nroot_next = key 21\nroot_previous = key 22\n"
			  "root_home = none\npanic = cc 119\nstep_ends = wrap\n"
			  "[daemon]\nstate_file = /var/tmp/latticed-state.json\n"));
	const struct engine_control_spec *c = &cfg.control;
	assert_int_equal(c->channel, ENGINE_CONTROL_PLAYING);
	const struct engine_binding *a = c->actions;
	assert_int_equal(a[ENGINE_ACTION_PRESET_NEXT].kind, ENGINE_BINDING_CC);
	assert_int_equal(a[ENGINE_ACTION_PRESET_NEXT].number, 64);
	assert_false(a[ENGINE_ACTION_PRESET_NEXT].latching);
	assert_true(a[ENGINE_ACTION_PRESET_PREVIOUS].latching);
	assert_int_equal(a[ENGINE_ACTION_ROOT_NEXT].kind, ENGINE_BINDING_KEY);
	assert_int_equal(a[ENGINE_ACTION_ROOT_NEXT].number, 21);
	assert_int_equal(a[ENGINE_ACTION_ROOT_HOME].kind, ENGINE_BINDING_NONE);
	assert_int_equal(a[ENGINE_ACTION_PANIC].number, 119);
	assert_true(c->wrap);
	assert_string_equal(cfg.daemon.state_file, "/var/tmp/latticed-state.json");
	/* on the playing channel program changes go to the synth unless asked */
	assert_false(c->program_selects_preset);
	assert_true(parse("[control]\nchannel = playing\nprogram_change = preset\n"));
	assert_true(cfg.control.program_selects_preset);
	assert_true(parse("[control]\nchannel = 16\n"));
	assert_true(cfg.control.program_selects_preset);
	assert_false(cfg.control.wrap);
	assert_string_equal(cfg.daemon.state_file, "auto");
	assert_true(parse("[daemon]\nstate_file = none\n"));
	assert_string_equal(cfg.daemon.state_file, "none");

	expect_error("[control]\nchannel = 16\npreset_next = cc 120\n",
		     "t.conf:3: preset_next is 'cc 120', expected none, cc N (a controller from 0 to 119; cc N latching for a latching pedal) or key N (a key from 0 to 127)");
	expect_error("[control]\nroot_next = key 21 latching\n", "t.conf:2: root_next is 'key 21 latching'");
	expect_error("[control]\npanic = pedal 3\n", "t.conf:2: panic is 'pedal 3'");
	expect_error("[control]\npanic = cc\n", "t.conf:2: panic is 'cc'");
	expect_error("[control]\npanic = key 128\n", "t.conf:2: panic is 'key 128'");
	expect_error("[control]\nstep_ends = bounce\n",
		     "t.conf:2: step_ends is 'bounce', expected stop (a step past the last");
	expect_error("[control]\nchannel = everywhere\n",
		     "t.conf:2: channel is 'everywhere', expected none, playing (the channels the player plays on), or a MIDI channel from 1 to 16");
	expect_error("[daemon]\nstate_file = state.json\n",
		     "t.conf:2: state_file is 'state.json', expected auto, none, or an absolute path");
}

/* A controller binding with no channel to come from can never act. */
static void controllers_need_a_channel(void **state)
{
	(void)state;
	expect_error("[control]\npreset_next = cc 64\n",
		     "t.conf:2: preset_next = cc 64 can never act: [control] channel is none (its default), expected channel = a channel 1 to 16 of its own, or channel = playing\n");
	expect_error("[control]\nchannel = none\n\nroot_cc = 20\n",
		     "t.conf:4: root_cc = 20 can never act: [control] channel is none (line 2)");
	expect_error("[control]\npreset_cc = 21\n", "t.conf:2: preset_cc = 21 can never act");
	/* keys need no channel: they come from the keyboard */
	assert_true(parse("[control]\npanic = key 108\nroot_keys = 36\n"));
	assert_int_equal(report.error_count + report.warning_count, 0);
	/* program_change = preset is the default; said outright, it is only a warning */
	assert_true(parse("[control]\nprogram_change = preset\n"));
	assert_int_equal(report.warning_count, 1);
	assert_non_null(strstr(report.text,
			       "t.conf:2: warning: program_change = preset does nothing while [control] channel is none (its default)"));
}

/* A controller bound twice: the later line is the error, naming the first. */
static void a_controller_bound_twice(void **state)
{
	(void)state;
	expect_error("[control]\nchannel = 16\npreset_cc = 20\nroot_next = cc 20\n",
		     "t.conf:4: root_next = cc 20: controller 20 is already taken by preset_cc = 20 on line 3, expected each controller bound once\n");
	expect_error("[control]\nchannel = playing\npanic = cc 64\nroot_cc = 5\npreset_next = cc 64 latching\n",
		     "t.conf:5: preset_next = cc 64: controller 64 is already taken by panic = cc 64 on line 3");
	/* the same number as a controller and as a key is no clash */
	assert_true(parse("[control]\nchannel = 16\npreset_next = cc 21\nroot_next = key 21\n"));
}

/* Runs of reserved keys and bound keys that overlap, or run past key 127,
 * found when the tunings are built (the runs need the lattices' sizes). */
static void key_runs_that_overlap(void **state)
{
	(void)state;
	/* two presets: preset_keys 36, 37; the hexany: root_keys home + 6 tones */
	expect_build_error("[preset b]\nroot_hz = 110\n[control]\npreset_keys = 36\nroot_keys = 37\n",
			   "t.conf:5: root_keys = 37 (keys 37 to 43): key 37 is already taken by preset_keys = 36 (keys 36 to 37) on line 4, expected runs of keys set apart\n");
	expect_build_error("[control]\nroot_keys = 40\n\npanic = key 46\n",
			   "t.conf:4: panic = key 46: key 46 is already taken by root_keys = 40 (keys 40 to 46) on line 2");
	expect_build_error("[control]\nroot_next = key 30\nroot_previous = key 30\n",
			   "t.conf:3: root_previous = key 30: key 30 is already taken by root_next = key 30 on line 2");
	expect_build_error("[control]\nroot_keys = 122\n",
			   "t.conf:2: root_keys = 122 (keys 122 to 128) runs past key 127: home and every tone of the largest preset needs keys 122 to 128, expected a first key of at most 121\n");
	/* the largest preset counts: a dekany's 10 tones need home and 10 keys */
	expect_build_error("[preset d]\nseeds = 1 3 5 7 9\n[control]\nroot_keys = 20\npreset_previous = key 30\n",
			   "t.conf:5: preset_previous = key 30: key 30 is already taken by root_keys = 20 (keys 20 to 30) on line 4");
	/* apart: fine */
	assert_true(parse("[control]\npreset_keys = 0\nroot_keys = 12\npanic = key 108\n"));
	static struct tuning_set set;
	assert_true(tuning_set_build(&cfg, &set, &report));
	tuning_set_free(&set);
	/* the main tuning alone builds as before */
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(bindings_are_read),
		cmocka_unit_test(controllers_need_a_channel),
		cmocka_unit_test(a_controller_bound_twice),
		cmocka_unit_test(key_runs_that_overlap),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
