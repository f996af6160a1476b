/*
 * fuzz_engine: arbitrary bytes through the MIDI parser into the engine,
 * every message the engine sends read back by the independent synth model
 * (tests/synth_model.h), abort() on the first broken promise.
 *
 * Input: 6 header bytes choose the engine spec (method, pool, polyphony,
 * input channels and MPE, control channel and its steering, synth
 * correction); the rest is a raw MIDI 1.0 byte stream.  Four bytes that
 * MIDI 1.0 leaves undefined, which the parser counts and drops, also steer
 * the harness:
 *   F4  the current source's device goes away (engine_end_source)
 *   F5  the following bytes come from the next of three sources, each with
 *       its own parser (three devices into one engine)
 *   F9  panic (engine_panic): nothing may sound afterwards
 *   FD  a config reload: engine_replace_tunings with the other tuning set
 *
 * Checked (the promises of include/latticed/engine.h):
 *   - every message sent is valid MIDI 1.0 (the encoder accepts it);
 *   - no note-on for a channel and key that already sounds, no note-off
 *     without a note-on (synth_model.h);
 *   - a channel's bend changes under a sounding note only while the
 *     player's message moves a wheel (pitch bend, RPN data entry, reset
 *     all controllers, which centres it);
 *   - pass-through: a channel message on a channel that is neither retuned
 *     nor the control channel comes out unchanged, alone, or not at all
 *     when the engine plays on that channel;
 *   - after a panic nothing sounds;
 *   - at the end, once every key the stream left down and every pedal is
 *     released, nothing sounds; after a final panic every note-on on every
 *     channel and key met exactly one note-off.
 * Byte layouts: MIDI 1.0 (status/data, running status, real-time bytes),
 * RPN via CC101/100/6 (MIDI 1.0), MTS SysEx (MMA MIDI Tuning), RPN 6 MCM
 * (MPE 1.0), all read by synth_model.h, not by the engine.
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "tuning.h"
/* the model's pitch helpers are for the unit tests; this target uses its parser */
#pragma GCC diagnostic push
#pragma GCC diagnostic ignored "-Wunused-function"
#include "synth_model.h"
#pragma GCC diagnostic pop
#include "latticed/engine.h"
#include "latticed/midi_encoder.h"
#include "latticed/midi_parser.h"

#define HEADER_BYTES 6
#define SOURCES 3
#define SYSEX_CAPACITY 1024

/* Two tuning sets of our own: the second renames and reorders presets so
 * a reload exercises "keep the preset by name". */
static const char tunings_text[] =
	"[lattice]\nseeds = 1 3 5 7\nchoose = 2\n[pitch]\nroot_key = 57\nroot_hz = 220\n"
	"[preset dekany]\nseeds = 1 3 5 7 9\nroot_key = 60\nroot_hz = 261.6256\n"
	"[preset white]\nroot_key = 60\nlayout = table\nmap = 0 . 1 . 2 3 . 4 . 5 . .\n"
	"[preset eikosany]\nseeds = 1 3 5 7 9 11\nchoose = 3\nroot_key = 30\nroot_hz = 3000\n";
static const char reload_text[] =
	"[lattice]\nseeds = 1 5 7 11\nperiod = 3/1\n[keys]\nlayout = nearest\n"
	"[preset white]\nseeds = 1 3 5 7\nperiod = 2/1\nroot_key = 48\nlayout = table\nmap = 5 . 4 . 3 2 . 1 . 0 . .\n"
	"[preset dekany]\nseeds = 1 3 5 7 9\nlayout = sequential\ntranspose = -7\n";

static struct tuning_set sets[2];

static void die(const char *what)
{
	fprintf(stderr, "fuzz_engine: %s\n", what);
	abort();
}

static void build_set(const char *text, struct tuning_set *set)
{
	static struct config cfg;
	static struct config_report report;
	if (!config_parse(text, strlen(text), "fuzz-tunings", &cfg, &report) ||
	    !tuning_set_build(&cfg, set, &report)) {
		fputs(report.text, stderr);
		die("the built-in tunings do not build");
	}
}

struct run {
	struct engine engine;
	struct engine_spec spec;
	struct synth_model model;
	struct synth_model passed_model; /* what the synth hears on pass-through channels */
	struct midi_parser parsers[SOURCES];
	uint8_t sysex[SOURCES][SYSEX_CAPACITY];
	bool down[SOURCES][16][128];    /* keys the stream holds down */
	bool engine_channel[16];        /* channels the engine itself sent on */
	bool engine_noted[16];          /* ... and sent a note-on on */
	/* the message being handled */
	bool passthrough;
	const struct midi_msg *input;
	int passed;                     /* messages sent during a pass-through */
	bool passed_other;              /* one of them was not the input */
	char why[320];
};

static struct run run;
static bool trace;   /* FUZZ_TRACE=1: print every message in and out */

static void trace_msg(const char *dir, const uint8_t *bytes, size_t n)
{
	fprintf(stderr, "%s", dir);
	for (size_t i = 0; i < n && i < 16; i++)
		fprintf(stderr, " %02X", bytes[i]);
	fprintf(stderr, n > 16 ? " ...\n" : "\n");
}

static void check_model(const char *when)
{
	if (run.model.violations) {
		snprintf(run.why, sizeof run.why, "%s: %s", when, run.model.first);
		die(run.why);
	}
}

static void emit(void *context, const struct midi_msg *m)
{
	struct run *r = context;
	uint8_t bytes[SYSEX_CAPACITY + 8];
	size_t n = midi_msg_encode(m, bytes, sizeof bytes);
	if (n == 0) {
		snprintf(r->why, sizeof r->why, "the engine sent an invalid message (status %02X %02X %02X)",
			 m->status, m->data[0], m->data[1]);
		die(r->why);
	}
	if (trace)
		trace_msg(r->passthrough && midi_msg_is_channel(m) ? "    passed" : "    out", bytes, n);
	if (r->passthrough && midi_msg_is_channel(m)) {
		r->passed++;
		if (!midi_msg_equal(m, r->input))
			r->passed_other = true;
		/* the player's own stream: its pairing is not the engine's promise,
		 * only that what it leaves sounding ends at a panic (our rule) */
		r->passed_model.bend_change_allowed = true;
		model_feed(&r->passed_model, bytes, n);
		return;
	}
	if (midi_msg_is_channel(m)) {
		int ch = midi_msg_channel(m);
		uint8_t type = midi_msg_type(m);
		bool pedal_up = type == MIDI_CONTROL && (m->data[0] == 64 || m->data[0] == 66) &&
				m->data[1] < 64;
		if (!r->engine_noted[ch] && (type == MIDI_NOTE_OFF || pedal_up)) {
			/* the engine ending pass-through notes (a panic, a source gone);
			 * a pedal-up is harmless to either model */
			model_feed(&r->passed_model, bytes, n);
			if (type == MIDI_NOTE_OFF)
				return;
		} else {
			r->engine_channel[ch] = true;
			if (type == MIDI_NOTE_ON && m->data[1] > 0)
				r->engine_noted[ch] = true;
		}
	}
	model_feed(&r->model, bytes, n);
}

static bool is_retuned(int ch)
{
	return (run.spec.input.channels >> ch) & 1;
}

/* One parsed message from `source` into the engine, with its checks. */
static void handle(uint8_t source, const struct midi_msg *m)
{
	int ch = midi_msg_channel(m);
	uint8_t type = midi_msg_type(m);
	bool channel = midi_msg_is_channel(m);
	run.passthrough = channel && !is_retuned(ch) && ch != run.spec.control.channel;
	run.input = m;
	run.passed = 0;
	run.passed_other = false;
	/* the player's wheel moves, and what its range means changes, by these */
	run.model.bend_change_allowed = channel && is_retuned(ch) &&
		(type == MIDI_PITCH_BEND ||
		 (type == MIDI_CONTROL && (m->data[0] == 6 || m->data[0] == 38 ||
					   m->data[0] == 121)));
	bool engine_plays_here = run.passthrough && run.engine_channel[ch];
	if (trace) {
		uint8_t bytes[SYSEX_CAPACITY + 8];
		fprintf(stderr, "source %u", source);
		trace_msg(" in", bytes, midi_msg_encode(m, bytes, sizeof bytes));
	}

	engine_handle(&run.engine, source, m);

	run.model.bend_change_allowed = false;
	if (run.passthrough) {
		if (run.passed_other)
			die("a pass-through message came out changed, or with other messages");
		if (engine_plays_here && run.passed)
			die("a pass-through message reached a channel the engine plays on");
		if (!engine_plays_here && run.passed != 1)
			die("a pass-through message on a free channel was dropped");
	}
	run.passthrough = false;
	check_model("after a message");

	if (channel && (type == MIDI_NOTE_ON || type == MIDI_NOTE_OFF))
		run.down[source][ch][m->data[0]] = type == MIDI_NOTE_ON && m->data[1] > 0;
}

static void panic_and_check(const char *when)
{
	engine_panic(&run.engine);
	check_model(when);
	if (model_sounding_count(&run.model) != 0) {
		snprintf(run.why, sizeof run.why, "%s: %d notes sound after a panic", when,
			 model_sounding_count(&run.model));
		die(run.why);
	}
	if (model_sounding_count(&run.passed_model) != 0) {
		snprintf(run.why, sizeof run.why, "%s: %d pass-through notes sound after a panic", when,
			 model_sounding_count(&run.passed_model));
		die(run.why);
	}
}

static void release_everything(void)
{
	for (int s = 0; s < SOURCES; s++)
		for (int ch = 0; ch < 16; ch++)
			for (int k = 0; k < 128; k++)
				if (run.down[s][ch][k]) {
					struct midi_msg off = midi_msg_note_off((uint8_t)ch, (uint8_t)k, 0);
					handle((uint8_t)s, &off);
				}
	for (int ch = 0; ch < 16; ch++) {
		if (!is_retuned(ch))
			continue;
		struct midi_msg up = midi_msg_control((uint8_t)ch, 64, 0);
		handle(0, &up);
		up = midi_msg_control((uint8_t)ch, 66, 0);
		handle(0, &up);
	}
	if (model_sounding_count(&run.model) != 0) {
		for (int c = 0; c < 16; c++)
			for (int k = 0; k < 128; k++)
				if (model_sounds(&run.model.ch[c], k))
					fprintf(stderr, "sounding: channel %d key %d (on %d ringing %d)\n",
						c + 1, k, run.model.ch[c].on[k], run.model.ch[c].ringing[k]);
		die("notes still sound after every key and pedal was released");
	}
}

/* ---- the spec from the header --------------------------------------------- */

static void spec_from_header(const uint8_t *h, struct engine_spec *s)
{
	static const uint16_t pools[8] = {
		0xFDFE, 0x000E, 0x0002, 0x0001, 0xFFFE, 0x00FE, 0x8001, 0x7F00,
	};
	static const uint16_t inputs[8] = {
		0x0001, 0x0003, 0xFFFF, 0x3FFF, 0x0200, 0x0101, 0x8000, 0x00FF,
	};
	static const double played[4] = {1.0, 127.0 / 128.0, 0.75, 2.0};
	static const double offsets[4] = {0.0, 7.5, -50.0, 100.0};
	static const double wheels[4] = {200.0, 0.0, 1250.0, 9600.0};
	static const int mpe_ranges[4] = {48, 24, 96, 1};
	static const int bend_ranges[4] = {2, 48, 12, 96};

	memset(s, 0, sizeof *s);
	struct engine_output_spec *o = &s->output;
	o->method = (h[0] & 3) == 1 ? RETUNE_MTS : (h[0] & 3) == 2 ? RETUNE_MPE : RETUNE_BEND;
	o->polyphony = (h[0] >> 2 & 3) == 1 ? POLY_SHARE : (h[0] >> 2 & 3) == 2 ? POLY_STEAL
		     : POLY_SHARE_THEN_STEAL;
	o->mts_bulk = h[0] >> 4 & 1;
	o->mts_key = h[0] >> 5 & 1 ? MTS_KEY_OWN : MTS_KEY_NEAREST;
	o->mpe_zone = h[0] >> 6 & 1 ? MPE_ZONE_UPPER : MPE_ZONE_LOWER;
	o->channels = pools[h[1] & 7];
	o->mpe_members = (h[1] >> 3 & 15) ? (h[1] >> 3 & 15) : 15;
	o->bend_range = bend_ranges[h[5] & 3];
	if (o->method == RETUNE_MPE && !(h[1] & 0x80))
		o->bend_range = 48;
	o->bend_played = played[h[2] >> 4 & 3];
	o->cents_offset = offsets[h[2] >> 6 & 3];
	o->mts_device = h[5] & 4 ? 0x7F : 0x10;
	o->mts_program = (uint8_t)(h[5] >> 3 & 3);
	o->mts_bank = h[5] & 0x20 ? 1 : -1;

	struct engine_input_spec *in = &s->input;
	in->mpe = h[2] & 1;
	in->mpe_zone = h[2] >> 1 & 1 ? MPE_ZONE_UPPER : MPE_ZONE_LOWER;
	in->channels = inputs[h[2] >> 2 & 3 ? (h[2] >> 2 & 3) + (h[5] >> 6 & 1) * 4 : 0];
	in->wheel_range_cents = wheels[h[4] & 3];
	in->mpe_bend_range = mpe_ranges[h[4] >> 2 & 3];

	struct engine_control_spec *c = &s->control;
	c->channel = -1;
	c->preset_cc = c->root_cc = -1;
	c->preset_keys = c->root_keys = -1;
	if (h[0] & 0x80) {
		c->channel = h[3] & 15;
		c->program_selects_preset = h[3] >> 4 & 1;
		c->preset_cc = h[3] & 0x20 ? 21 : -1;
		c->root_cc = h[3] & 0x40 ? 20 : -1;
		in->channels &= (uint16_t)~(1u << c->channel);
		if (in->channels == 0)
			in->channels = c->channel == 0 ? 0x0002 : 0x0001;
	}
	/* mts needs an output channel per retuned input channel (engine.h) */
	if (o->method == RETUNE_MTS &&
	    __builtin_popcount(o->channels) < __builtin_popcount(in->channels))
		o->channels = 0xFFFF;
	if (h[3] & 0x80) {
		c->preset_keys = h[4] & 0x10 ? 0 : 120;
		c->root_keys = h[4] & 0x20 ? 100 : 12;
	}
}

/* ---- the target ------------------------------------------------------------ */

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	if (!sets[0].count) {
		trace = getenv("FUZZ_TRACE") != NULL;
		build_set(tunings_text, &sets[0]);
		build_set(reload_text, &sets[1]);
	}
	if (size < HEADER_BYTES)
		return 0;
	memset(&run, 0, sizeof run);
	spec_from_header(data, &run.spec);
	model_init(&run.model, run.spec.output.bend_played);
	model_init(&run.passed_model, 1.0);
	struct core_error err;
	if (!engine_init(&run.engine, &run.spec, &sets[0].engine, emit, &run, &err)) {
		snprintf(run.why, sizeof run.why, "engine_init refused a spec the harness built: %s",
			 err.text);
		die(run.why);
	}
	engine_start(&run.engine);
	check_model("set-up");
	for (int s = 0; s < SOURCES; s++)
		midi_parser_init(&run.parsers[s], run.sysex[s], sizeof run.sysex[s]);

	int set = 0;
	uint8_t source = 0;
	for (size_t i = HEADER_BYTES; i < size; i++) {
		uint8_t b = data[i];
		struct midi_msg m;
		if (midi_parser_feed(&run.parsers[source], b, &m)) {
			if (!midi_msg_is_valid(&m))
				die("the parser delivered an invalid message");
			handle(source, &m);
		}
		switch (b) {
		case 0xF4:
			engine_end_source(&run.engine, source);
			check_model("after a source went away");
			break;
		case 0xF5:
			source = (uint8_t)((source + 1) % SOURCES);
			break;
		case 0xF9:
			panic_and_check("panic");
			break;
		case 0xFD:
			set ^= 1;
			engine_replace_tunings(&run.engine, &sets[set].engine);
			check_model("after a reload");
			break;
		default:
			break;
		}
	}
	(void)engine_take_notices(&run.engine);
	release_everything();
	panic_and_check("final panic");
	for (int c = 0; c < 16; c++)
		for (int k = 0; k < 128; k++)
			if (run.model.ch[c].ons[k] != run.model.ch[c].offs[k]) {
				snprintf(run.why, sizeof run.why,
					 "channel %d key %d had %u note-ons and %u note-offs", c + 1, k,
					 run.model.ch[c].ons[k], run.model.ch[c].offs[k]);
				die(run.why);
			}
	return 0;
}
