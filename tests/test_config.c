/*
 * Tests of the config reader: every kind of mistake is reported as
 * FILE:LINE with what was expected, and leaves the caller's config as it
 * was; continuation lines; tuning build errors point at the right line.
 * (The key table itself: test_config_keys.c.)
 * (Behaviour of our own interface: no outside source applies beyond INI
 * conventions as implemented by inih.)
 */
#include <unistd.h>

#include "config_fixture.h"
#include "midi_io.h"

static void examples_build(void **state)
{
	(void)state;
	const char *names[] = {"eikosany.conf", "tritave.conf", "white-keys.conf"};
	for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
		char path[512];
		snprintf(path, sizeof path, "%s/config/examples/%s", LATTICED_SOURCE_DIR, names[i]);
		if (!config_load(path, &cfg, &report) || !tuning_build(&cfg, 0, &tuning, &report))
			fail_msg("%s: %s", path, report.text);
		assert_int_equal(report.warning_count, 0);
	}
}

static void values_are_read(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 5 7 9 11 ; six\nchoose = 3\nperiod = 3/1\n"
			  "unison = 1.3.5\n[pitch]\nroot_key=48\nroot_hz = 130.8128\n"
			  "[keys]\nlayout = nearest\ntranspose = -12\n"
			  "[output a]\nmethod = mts\nchannels = 1,3,5-8\nbend_range = 12\n"
			  "[output b]\n"));
	assert_int_equal(report.error_count, 0);
	assert_int_equal(cfg.presets[0].lattice.seed_count, 6);
	assert_string_equal(cfg.presets[0].lattice.seed_text[5], "11");
	assert_int_equal(cfg.presets[0].lattice.choose, 3);
	assert_int_equal(cfg.presets[0].lattice.period.num, 3);
	assert_string_equal(cfg.presets[0].unison_text, "1.3.5");
	assert_int_equal(cfg.presets[0].keys.root_key, 48);
	assert_true(cfg.presets[0].keys.root_hz > 130.81 && cfg.presets[0].keys.root_hz < 130.82);
	assert_int_equal(cfg.presets[0].keys.layout, KEY_LAYOUT_NEAREST);
	assert_int_equal(cfg.presets[0].keys.transpose, -12);
	assert_int_equal(cfg.output_count, 2);
	assert_string_equal(cfg.outputs[0].name, "a");
	assert_int_equal(cfg.outputs[0].engine.method, RETUNE_MTS);
	assert_int_equal(cfg.outputs[0].engine.channels, 0x1 | 0x4 | 0xF0);
	assert_int_equal(cfg.outputs[0].engine.bend_range, 12);
	/* an empty [output b] still exists, with the defaults */
	assert_string_equal(cfg.outputs[1].name, "b");
	assert_int_equal(cfg.outputs[1].engine.method, RETUNE_BEND);
	assert_int_equal(cfg.outputs[1].engine.bend_range, 2);
}

static void channel_ranges_skip_ten(void **state)
{
	(void)state;
	char buf[64];
	assert_true(parse("[output s]\nchannels = 2-16\n"));
	/* GM reserves channel 10 for drums (General MIDI, common practice) */
	assert_string_equal(config_format_channels(cfg.outputs[0].engine.channels, buf, sizeof buf),
			    "2-9,11-16");
	assert_true(parse("[output s]\nchannels = 2-9 10 11-16\n"));
	assert_string_equal(config_format_channels(cfg.outputs[0].engine.channels, buf, sizeof buf), "2-16");
	/* no output section at all: one bend output "synth" on 2-9,11-16 */
	assert_true(parse("[lattice]\nseeds = 1 3 5 7\n"));
	assert_int_equal(cfg.output_count, 1);
	assert_string_equal(cfg.outputs[0].name, "synth");
	assert_string_equal(config_format_channels(cfg.outputs[0].engine.channels, buf, sizeof buf),
			    "2-9,11-16");
}

static void continuation_lines(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 5\n   7 9 11\nchoose = 3\n"));
	assert_int_equal(cfg.presets[0].lattice.seed_count, 6);
	assert_true(parse("[keys]\nlayout = table\nmap = 0 . 1 .\n  2 3 . 4\n  . 5 . .\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(tuning.keymap.keys[57 + 11].state, KEY_SILENT);
	assert_int_equal(tuning.keymap.keys[57 + 12].tone, 0);
	assert_int_equal(tuning.keymap.keys[57 + 12].period, 1);
}

static void errors_name_the_line(void **state)
{
	(void)state;
	expect_error("[lattice]\nseeds = 1 3 5 7\n[tuning]\nx = 1\n",
		     "t.conf:3: unknown section [tuning], expected [lattice], [pitch], [keys], [input], [control], [daemon], [output NAME] or [preset NAME]");
	expect_error("[lattice]\nseed = 1 3 5 7\n", "t.conf:2: unknown key 'seed' in [lattice], expected one of: seeds, choose, period, unison");
	expect_error("[lattice]\n\nchoose = two\n", "t.conf:3: choose is 'two', expected a whole number");
	expect_error("[pitch]\nroot_key = 128\n", "t.conf:2: root_key is '128', expected a key number from 0 to 127");
	expect_error("[pitch]\nroot_hz = -5\n", "t.conf:2: root_hz is '-5'");
	expect_error("[pitch]\nroot_hz = 440Hz\n", "t.conf:2: root_hz is '440Hz'");
	expect_error("[lattice]\nperiod = 1/2\n", "t.conf:2: period is '1/2', expected a ratio above 1");
	expect_error("[lattice]\nseeds = 1 3 0 7\n", "t.conf:2: seed '0' is not a positive whole number or ratio");
	expect_error("[lattice]\nseeds = 1\n", "t.conf:2: seeds has 1 values, expected 2 to 12");
	expect_error("[lattice]\nseeds = 1 2 3 4 5 6 7 8 9 10 11 12 13\n", "t.conf:2: seeds has more than 12 values");
	expect_error("[keys]\nlayout = spiral\n", "t.conf:2: layout is 'spiral', expected sequential, nearest or table");
	expect_error("[keys]\ntranspose = 1\n\ntranspose = 2\n", "t.conf:4: 'transpose' is already set on line 2");
	expect_error("[output synth]\nmethod = cv\n", "t.conf:2: method is 'cv', expected bend, mts or mpe");
	expect_error("[output synth]\nchannels = 0-3\n", "t.conf:2: channels is '0-3'");
	expect_error("[output synth]\nchannels = 16-2\n", "t.conf:2: channels is '16-2'");
	expect_error("[output synth]\nbend_range = 0\n", "t.conf:2: bend_range is '0', expected whole semitones from 1 to 96");
	expect_error("[output my synth]\nmethod = bend\n", "t.conf:1: output name 'my synth' is not usable as a port name");
	expect_error("[output]\n", "t.conf:1: [output] has no name");
	expect_error("[lattice]\nthis line has no equals sign\n", "t.conf:2: cannot read this line");
	char longline[400];
	snprintf(longline, sizeof longline, "[lattice]\n; %0300d\nseeds = 1 3 5 7\n", 0);
	expect_error(longline, "t.conf:2: line is 302 characters long, expected at most 198");
}

static void several_errors_each_on_a_line(void **state)
{
	(void)state;
	config_defaults(&cfg);
	assert_false(parse("[lattice]\nchoose = x\n[pitch]\nroot_key = -1\nroot_hz = 0\n"));
	assert_int_equal(report.error_count, 3);
	assert_non_null(strstr(report.text, "t.conf:2: "));
	assert_non_null(strstr(report.text, "\nt.conf:4: "));
	assert_non_null(strstr(report.text, "\nt.conf:5: "));
}

static void build_errors_name_the_line(void **state)
{
	(void)state;
	struct {
		const char *text, *want;
	} cases[] = {
		{"[lattice]\nseeds = 1 3 5 7\nchoose = 4\n",
		 "t.conf:3: choose is 4, expected a whole number from 1 to 3"},
		{"[lattice]\nseeds = 1 3 5 7\n\nunison = 1.9\n",
		 "t.conf:4: unison '1.9' names a seed that is not in seeds"},
		{"[lattice]\nseeds = 1 3 5 7\nunison = 1.3.5\n",
		 "t.conf:3: unison names 3 seeds, expected 2"},
		{"[keys]\nlayout = table\n", "t.conf:2: layout = table needs a map"},
		{"[keys]\nlayout = table\nmap = 0 1 2 9\n",
		 "t.conf:3: slot '9' names tone 9, expected a tone from 0 to 5"},
		{"[keys]\nlayout = table\nmap = 0 1 2 3.11\n",
		 "t.conf:3: slot '3.11' names no tone of the set"},
		{"[keys]\nlayout = table\nmap = 0 1+x\n", "t.conf:3: '1+x' has a bad period shift"},
		{"[lattice]\nseeds = 1 3 5 7 9 11\n[keys]\nlayout = nearest\n",
		 "t.conf:4: the nearest layout fits at most 12 tones per period"},
		{"[lattice]\nseeds = 1 3 8000000000000000001 7\n",
		 "t.conf:2: the product 3.8000000000000000001 overflows 64-bit exact arithmetic"},
	};
	for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
		if (!parse(cases[i].text))
			fail_msg("parse failed: %s", report.text);
		bool ok = tuning_build(&cfg, 0, &tuning, &report);
		if (ok || report.error_count != 1 || !strstr(report.text, cases[i].want))
			fail_msg("for\n%s\nwanted '%s', got:\n%s", cases[i].text, cases[i].want, report.text);
	}
}

static void map_slots_by_label(void **state)
{
	(void)state;
	assert_true(parse("[pitch]\nroot_key = 60\n[keys]\nlayout = table\nmap = 1.3 . 3.5-1 5.7+1\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(tuning.keymap.keys[60].tone, 3);      /* 1.3 = 3/2 */
	assert_int_equal(tuning.keymap.keys[61].state, KEY_SILENT);
	assert_int_equal(tuning.keymap.keys[62].tone, 5);      /* 3.5 = 15/8 */
	assert_int_equal(tuning.keymap.keys[62].period, -1);
	assert_int_equal(tuning.keymap.keys[63].tone, 0);      /* 5.7 = 35/32 */
	assert_int_equal(tuning.keymap.keys[63].period, 1);
	/* a map without layout = table is a warning, not an error */
	assert_true(parse("[keys]\nmap = 0 1\n"));
	assert_int_equal(report.warning_count, 1);
	assert_non_null(strstr(report.text, "t.conf:2: warning: map is set but layout is sequential"));
}

static void merge_warning(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 9 27\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(report.warning_count, 1);
	assert_non_null(strstr(report.text,
			       "t.conf:2: warning: products 1.27 and 3.9 are the same tone 27/16; merged into one"));
}

/* Equal seeds say why their products merge, once, at the seeds line (our
 * rule); the merges they explain are not listed one by one. */
static void equal_seeds_are_explained(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 3 7\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(report.warning_count, 1);
	assert_non_null(strstr(report.text, "t.conf:2: warning: seed 3 is given twice (seeds 2 and 3): "
				"every product with one is a product with the other, so 2 products merge "
				"and the set has 4 tones instead of 6"));
	/* a seed equal to the period is the same tone as a seed 1 */
	assert_true(parse("[lattice]\nseeds = 1 2 3 5\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(report.warning_count, 1);
	assert_non_null(strstr(report.text, "t.conf:2: warning: seeds 1 and 2 are one tone once reduced "
				"into the period 2/1 (a seed equal to the period is 1/1): "));
	assert_non_null(strstr(report.text, "so 2 products merge and the set has 4 tones instead of 6"));
	/* and seeds a period apart */
	assert_true(parse("[lattice]\nseeds = 3 5 6 7\nperiod = 2\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(report.warning_count, 1);
	assert_non_null(strstr(report.text, "seeds 3 and 6 are one tone once reduced into the period 2/1 (both 3/2)"));
	/* a merge of its own is still listed beside them */
	assert_true(parse("[lattice]\nseeds = 1 3 9 27 27\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_non_null(strstr(report.text, "seed 27 is given twice (seeds 4 and 5)"));
	assert_non_null(strstr(report.text, "warning: products 1.27 and 3.9 are the same tone 27/16"));
}

/* A unison written as a ratio names the tone of that ratio (our rule). */
static void unison_given_as_a_ratio(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 5 7\n\nunison = 21/16\n"));
	assert_false(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(report.error_count, 1);
	assert_non_null(strstr(report.text, "t.conf:4: unison is '21/16', a ratio, expected a tone named "
				"by its seeds: 21/16 is the tone 3.7 (unison = 3.7)"));
	/* reduced into the period first: 21/8 is the same tone */
	assert_true(parse("[lattice]\nunison = 21/8\n"));
	assert_false(tuning_build(&cfg, 0, &tuning, &report));
	assert_non_null(strstr(report.text, "21/8 is the tone 3.7"));
	assert_true(parse("[lattice]\nunison = 11/8\n"));
	assert_false(tuning_build(&cfg, 0, &tuning, &report));
	assert_non_null(strstr(report.text, "t.conf:2: unison is '11/8', a ratio that is no tone of the set, "
				"expected a tone named by its seeds, e.g. 5.7"));
	/* a ratio seed's tone by its label */
	assert_true(parse("[lattice]\nseeds = 1 9/8 5 7\nunison = 1.(9/8)\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_true(tuning.lattice.spec.has_unison);
}

/* A section given twice is an error at the second header (our rule), and
 * [preset main] cannot reopen the main tuning. */
static void sections_given_twice(void **state)
{
	(void)state;
	expect_error("[preset a]\nchoose = 3\n[lattice]\nseeds = 1 3 5 7\n[preset a]\nroot_hz = 440\n",
		     "t.conf:5: [preset a] is already on line 1, expected each preset once");
	expect_error("[output x]\nmethod = mts\n[output x]\nmts_program = 3\n",
		     "t.conf:3: [output x] is already on line 1, expected each output once");
	expect_error("[preset main]\nseeds = 1 3 5 9\n",
		     "t.conf:1: [preset main]: 'main' is the name of the main tuning");
	/* one header per name is fine */
	assert_true(parse("[preset a]\nchoose = 3\n[preset b]\nchoose = 1\n"));
	assert_int_equal(cfg.preset_count, 3);
}

/* More messages than the report holds: whole lines only, and a last line
 * that counts the rest (found by tests/fuzz/fuzz_config: the 924-tone set
 * over the odd seeds 1..23 merges 270 products). */
static void long_report_keeps_whole_lines(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 5 7 9 11 13 15 17 19 21 23\nchoose = 6\n"));
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_true(report.warning_count > 100);
	assert_int_equal(strlen(report.text), report.length);
	assert_int_equal(report.text[report.length - 1], '\n');
	int shown = 0;
	for (const char *p = report.text; (p = strstr(p, "warning: products")); p++)
		shown++;
	char last[64];
	snprintf(last, sizeof last, "t.conf: %d more message(s) left out\n",
		 report.warning_count - shown);
	assert_true(report.length > strlen(last));
	assert_string_equal(report.text + report.length - strlen(last), last);
	/* every line but the last is a whole warning */
	for (const char *p = report.text; *p; p = strchr(p, '\n') + 1)
		assert_true(strncmp(p, "t.conf:2: warning: products ", 28) == 0 ||
			    strcmp(p, last) == 0);
}

static void presets_inherit_the_main_tuning(void **state)
{
	(void)state;
	/* a preset may come before the main keys it inherits */
	assert_true(parse("[preset wide]\nseeds = 1 3 5 7 9\n"
			  "[preset high]\nroot_hz = 440\n"
			  "[pitch]\nroot_key = 60\nroot_hz = 261.6256\n"
			  "[lattice]\nchoose = 2\n"));
	assert_int_equal(cfg.preset_count, 3);
	assert_string_equal(cfg.presets[0].name, "main");
	assert_string_equal(cfg.presets[1].name, "wide");
	assert_int_equal(cfg.presets[1].lattice.seed_count, 5);
	assert_int_equal(cfg.presets[1].keys.root_key, 60);
	assert_true(cfg.presets[1].keys.root_hz > 261.6 && cfg.presets[1].keys.root_hz < 261.7);
	assert_int_equal(cfg.presets[2].lattice.seed_count, 4);
	assert_true(cfg.presets[2].keys.root_hz == 440.0);
	assert_int_equal(config_find_preset(&cfg, "high"), 2);
	assert_int_equal(config_find_preset(&cfg, "none"), -1);
	struct tuning_set set;
	assert_true(tuning_set_build(&cfg, &set, &report));
	assert_int_equal(set.count, 3);
	assert_int_equal(set.engine.count, 3);
	assert_int_equal(set.tunings[1].lattice.tone_count, 10);
	assert_string_equal(set.engine.presets[2].name, "high");
	tuning_set_free(&set);
	/* a preset key that is not a tuning key is named as unknown */
	expect_error("[preset a]\nmethod = mts\n", "t.conf:2: unknown key 'method' in [preset a], expected one of: seeds, choose");
	expect_error("[preset]\n", "t.conf:1: [preset] has no name");
	/* build errors in a preset point at the preset's line */
	assert_true(parse("[preset bad]\n\nchoose = 4\n"));
	assert_false(tuning_set_build(&cfg, &set, &report));
	assert_non_null(strstr(report.text, "t.conf:3: choose is 4"));
}

static void input_output_control_keys(void **state)
{
	(void)state;
	assert_true(parse("[input]\nchannels = 1-3\nwheel_range = 150c\n"
			  "[control]\nchannel = 16\nprogram_change = ignore\nroot_cc = 20\npreset_keys = 0\n"
			  "[output fs]\nmethod = mts\nbend_factor = 127/128\ncents_offset = -3.05\n"
			  "mts_program = 5\nmts_bank = 2\nmts_device = 16\nmts_bulk = yes\nmts_key = own\n"
			  "polyphony = steal\nrunning_status = yes\n"
			  "[output zone]\nmethod = mpe\nmpe_zone = upper\nmpe_members = 7\n"));
	assert_int_equal(cfg.input.engine.channels, 0x7);
	assert_true(cfg.input.engine.wheel_range_cents == 150.0);
	assert_int_equal(cfg.control.channel, 15);
	assert_false(cfg.control.program_selects_preset);
	assert_int_equal(cfg.control.root_cc, 20);
	assert_int_equal(cfg.control.preset_cc, -1);
	assert_int_equal(cfg.control.preset_keys, 0);
	const struct output_config *fs = &cfg.outputs[0], *zone = &cfg.outputs[1];
	assert_int_equal(fs->engine.method, RETUNE_MTS);
	assert_true(fs->engine.bend_played == 127.0 / 128.0);
	assert_true(fs->engine.cents_offset == -3.05);
	assert_int_equal(fs->engine.mts_program, 5);
	assert_int_equal(fs->engine.mts_bank, 2);
	assert_int_equal(fs->engine.mts_device, 16);
	assert_true(fs->engine.mts_bulk);
	assert_int_equal(fs->engine.mts_key, MTS_KEY_OWN);
	assert_int_equal(fs->engine.polyphony, POLY_STEAL);
	assert_true(fs->running_status);
	assert_int_equal(fs->engine.bend_range, 2);
	/* the MPE member range defaults to 48 semitones (MPE 1.0 section 2.4) */
	assert_int_equal(zone->engine.method, RETUNE_MPE);
	assert_int_equal(zone->engine.bend_range, 48);
	assert_int_equal(zone->engine.mpe_zone, MPE_ZONE_UPPER);
	assert_int_equal(zone->engine.mpe_members, 7);
	/* an mpe output's notes go to every member but 10 unless channels says
	 * otherwise, so a drum track on 10 passes through (our rule) */
	assert_int_equal(zone->engine.channels, 0xFDFF);
	assert_int_equal(fs->engine.channels, 0xFDFE);
	struct engine_spec spec;
	config_engine_spec(&cfg, 0, &spec);
	assert_int_equal(spec.output.method, RETUNE_MTS);
	assert_true(spec.output.bend_played == 127.0 / 128.0);
	assert_int_equal(spec.control.channel, 15);
	assert_int_equal(spec.input.channels, 0x7);

	/* an MPE controller plays on its whole zone unless told otherwise */
	assert_true(parse("[input]\nmpe = lower\n"));
	assert_int_equal(cfg.input.engine.channels, 0xFFFF);
	assert_true(cfg.input.engine.mpe);
	assert_int_equal(cfg.input.engine.mpe_bend_range, 48);

	expect_error("[input]\nwheel_range = 97\n", "t.conf:2: wheel_range is '97', expected semitones from 0 to 96");
	expect_error("[input]\nwheel_range = 12x\n", "t.conf:2: wheel_range is '12x'");
	expect_error("[input]\nmpe = yes\n", "t.conf:2: mpe is 'yes', expected no, lower");
	expect_error("[output s]\nbend_factor = 3\n", "t.conf:2: bend_factor is '3', expected the fraction");
	expect_error("[output s]\npolyphony = all\n", "t.conf:2: polyphony is 'all', expected share-then-steal, share or steal");
	expect_error("[output s]\nmts_bulk = maybe\n", "t.conf:2: mts_bulk is 'maybe', expected yes or no");
	expect_error("[output s]\nmts_device = 127\n", "t.conf:2: mts_device is '127', expected all, or a device ID");
	expect_error("[output s]\nmpe_members = 16\n", "t.conf:2: mpe_members is '16', expected member channels from 1 to 15");
	expect_error("[control]\nroot_cc = 120\n", "t.conf:2: root_cc is '120', expected none, or a controller number from 0 to 119");
	expect_error("[input]\nchannels = 1-2\n[control]\nchannel = 2\n",
		     "t.conf:4: the control channel 2 is also retuned in [input] channels");
}

static void mts_needs_a_channel_per_input(void **state)
{
	(void)state;
	expect_error("[input]\nchannels = 1-8\n[output tuned]\nmethod = mts\nchannels = 11-16\n",
		     "t.conf:3: [output tuned] method = mts has 6 channels for 8 retuned input channels, expected one output channel per input channel");
	/* an MPE controller plays on all 16 */
	expect_error("[input]\nmpe = lower\n[output z]\nmethod = mts\n",
		     "t.conf:3: [output z] method = mts has 14 channels for 16 retuned input channels");
	assert_true(parse("[input]\nchannels = 1-6\n[output tuned]\nmethod = mts\nchannels = 11-16\n"));
}

static void daemon_and_connect_keys(void **state)
{
	(void)state;
	/* the defaults of [daemon] and the connect keys */
	config_defaults(&cfg);
	assert_string_equal(cfg.daemon.backend, "auto");
	assert_string_equal(cfg.daemon.client_name, "latticed");
	assert_int_equal(cfg.daemon.realtime_priority, 40);
	assert_true(cfg.daemon.lock_memory);
	assert_string_equal(cfg.daemon.control_socket, "auto");
	assert_int_equal(cfg.input.connect.count, 0);
	assert_int_equal(cfg.outputs[0].connect.count, 0);

	assert_true(parse("[daemon]\nbackend = raw\nclient_name = Stage Left\nrealtime_priority = none\n"
			  "lock_memory = no\ncontrol_socket = /tmp/l/control\n"
			  "[input]\nconnect = USB Keys* ,  24:0,/tmp/in.fifo\n"
			  "[output fs]\nconnect = FLUID Synth*\n[output b]\n"));
	assert_string_equal(cfg.daemon.backend, "raw");
	assert_string_equal(cfg.daemon.client_name, "Stage Left");
	assert_int_equal(cfg.daemon.realtime_priority, -1);
	assert_false(cfg.daemon.lock_memory);
	assert_string_equal(cfg.daemon.control_socket, "/tmp/l/control");
	assert_int_equal(cfg.input.connect.count, 3);
	assert_string_equal(cfg.input.connect.patterns[0], "USB Keys*");
	assert_string_equal(cfg.input.connect.patterns[1], "24:0");
	assert_string_equal(cfg.input.connect.patterns[2], "/tmp/in.fifo");
	assert_int_equal(cfg.outputs[0].connect.count, 1);
	assert_string_equal(cfg.outputs[0].connect.patterns[0], "FLUID Synth*");
	assert_int_equal(cfg.outputs[1].connect.count, 0);

	/* what the backend is given: port "in", one port per output, in order */
	struct midi_io_spec io;
	config_io_spec(&cfg, &io);
	assert_string_equal(io.client_name, "Stage Left");
	assert_string_equal(io.input.name, "in");
	assert_int_equal(io.input.connect_count, 3);
	assert_string_equal(io.input.connect[1], "24:0");
	assert_int_equal(io.output_count, 2);
	assert_string_equal(io.outputs[0].name, "fs");
	assert_string_equal(io.outputs[0].connect[0], "FLUID Synth*");
	assert_string_equal(io.outputs[1].name, "b");
	assert_int_equal(io.outputs[1].connect_count, 0);

	assert_true(parse("[daemon]\nrealtime_priority = 99\ncontrol_socket = none\n"));
	assert_int_equal(cfg.daemon.realtime_priority, 99);
	assert_string_equal(cfg.daemon.control_socket, "none");

	expect_error("[daemon]\nbackend = jack\n", "t.conf:2: backend is 'jack', expected auto (alsa if built, else portmidi, else null), alsa, portmidi, raw or null");
	expect_error("[daemon]\nrealtime_priority = 0\n", "t.conf:2: realtime_priority is '0', expected none, or a SCHED_FIFO priority from 1 to 99");
	expect_error("[daemon]\nrealtime_priority = 100\n", "t.conf:2: realtime_priority is '100'");
	expect_error("[daemon]\nlock_memory = sometimes\n", "t.conf:2: lock_memory is 'sometimes', expected yes or no");
	expect_error("[daemon]\nclient_name = a:b\n", "t.conf:2: client_name is 'a:b', expected 1 to 63 characters without ':'");
	expect_error("[daemon]\ncontrol_socket = run/control\n", "t.conf:2: control_socket is 'run/control', expected auto, none, or an absolute path");
	expect_error("[daemon]\nport = 1\n", "t.conf:2: unknown key 'port' in [daemon], expected one of: backend, client_name, realtime_priority, lock_memory, control_socket");
	expect_error("[input]\nconnect = a,,b\n", "t.conf:2: connect has an empty pattern");
	expect_error("[input]\nconnect = a,b,c,d,e,f,g,h,i\n", "t.conf:2: connect has more than 8 patterns, expected at most 8");
	expect_error("[output s]\nconnect = 0123456789012345678901234567890123456789012345678901234567890123\n",
		     "t.conf:2: connect pattern '0123456789012345678901234567890123456789012345678901234567890123' is 64 characters long, expected at most 63");
	expect_error("[output in]\n", "t.conf:1: an output may not be called 'in'");
}

/* Issue 13, "Clearer errors": a period too close to 1/1 is named at its own
 * line, with why (our rule). */
static void period_overflow_names_the_period(void **state)
{
	(void)state;
	assert_true(parse("[lattice]\nseeds = 1 3 5 7\nperiod = 1000001/1000000\n"));
	assert_false(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(report.error_count, 1);
	assert_string_equal(report.text,
			    "t.conf:3: reducing the product 1.3 into the period 1000001/1000000 overflows 64-bit exact arithmetic, expected a period further from 1/1 (such as 2/1) or smaller seeds\n");
}

/* Issue 13: an oversized file says it is too large and what the limit is,
 * read whole (config_load) or given as text (config_parse) (our rule). */
static void oversized_file_names_the_limit(void **state)
{
	(void)state;
	char path[] = "/tmp/test_config_big_XXXXXX";
	int fd = mkstemp(path);
	assert_true(fd >= 0);
	FILE *f = fdopen(fd, "wb");
	assert_non_null(f);
	static char chunk[1000];
	memset(chunk, ';', sizeof chunk);
	for (int i = 0; i < 11000; i++)
		assert_int_equal(fwrite(chunk, 1, sizeof chunk, f), sizeof chunk);
	assert_int_equal(fclose(f), 0);
	assert_false(config_load(path, &cfg, &report));
	unlink(path);
	char want[512];
	snprintf(want, sizeof want,
		 "%s: file is too large (11000000 bytes), expected a config file of at most 1048576 bytes (1 MiB)\n",
		 path);
	assert_int_equal(report.error_count, 1);
	assert_string_equal(report.text, want);

	assert_false(config_parse(chunk, CONFIG_FILE_MAX + 1, "t.conf", &cfg, &report));
	assert_string_equal(report.text,
			    "t.conf: file is too large (1048577 bytes), expected a config file of at most 1048576 bytes (1 MiB)\n");
}

/* Issue 13: a key before any [section] says a header is needed first and
 * which (our rule). */
static void key_before_any_section(void **state)
{
	(void)state;
	expect_error("seeds = 1 3\n[lattice]\n",
		     "t.conf:1: 'seeds' comes before any section header, expected a section header first: seeds belongs in [lattice] or [preset NAME]\n");
	expect_error("; a comment\nconnect = a\n",
		     "t.conf:2: 'connect' comes before any section header, expected a section header first: connect belongs in [input] or [output NAME]\n");
	expect_error("backend = raw\n", "backend belongs in [daemon]\n");
	expect_error("volume = 3\n[daemon]\n",
		     "t.conf:1: 'volume' comes before any section header and is a key of no section, expected a section header first: [lattice], [pitch], [keys], [input], [control], [daemon], [output NAME] or [preset NAME]\n");
}

/* Issue 13: too many outputs or presets are one message, saying how many
 * are allowed (our rule). */
static void too_many_sections_said_once(void **state)
{
	(void)state;
	static char text[8192];
	size_t used = 0;
	for (int i = 0; i < 40; i++)
		used += (size_t)snprintf(text + used, sizeof text - used, "[output o%d]\nmethod = mts\n", i);
	/* a refused name given again is not counted again (a kept one given
	 * again is an error of its own: sections_given_twice) */
	used += (size_t)snprintf(text + used, sizeof text - used, "[output o20]\n");
	expect_error(text, "t.conf:17: 40 outputs, expected at most 8 [output NAME] sections (the 32 from here on are left out)\n");
	used = 0;
	for (int i = 0; i < 40; i++)
		used += (size_t)snprintf(text + used, sizeof text - used, "[preset p%d]\nroot_key = %d\n", i, i);
	expect_error(text, "t.conf:63: 40 presets, expected at most 31 [preset NAME] sections (the 9 from here on are left out)\n");
}

static void unreadable_file(void **state)
{
	(void)state;
	assert_false(config_load("/nonexistent/latticed.conf", &cfg, &report));
	assert_int_equal(report.error_count, 1);
	assert_non_null(strstr(report.text, "/nonexistent/latticed.conf: cannot open: No such file or directory"));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(examples_build),
		cmocka_unit_test(values_are_read),
		cmocka_unit_test(channel_ranges_skip_ten),
		cmocka_unit_test(continuation_lines),
		cmocka_unit_test(errors_name_the_line),
		cmocka_unit_test(several_errors_each_on_a_line),
		cmocka_unit_test(build_errors_name_the_line),
		cmocka_unit_test(map_slots_by_label),
		cmocka_unit_test(merge_warning),
		cmocka_unit_test(equal_seeds_are_explained),
		cmocka_unit_test(unison_given_as_a_ratio),
		cmocka_unit_test(sections_given_twice),
		cmocka_unit_test(long_report_keeps_whole_lines),
		cmocka_unit_test(presets_inherit_the_main_tuning),
		cmocka_unit_test(input_output_control_keys),
		cmocka_unit_test(mts_needs_a_channel_per_input),
		cmocka_unit_test(daemon_and_connect_keys),
		cmocka_unit_test(unreadable_file),
		cmocka_unit_test(period_overflow_names_the_period),
		cmocka_unit_test(oversized_file_names_the_limit),
		cmocka_unit_test(key_before_any_section),
		cmocka_unit_test(too_many_sections_said_once),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
