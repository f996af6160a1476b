/*
 * engine_golden: prints a fingerprint of what the engine sends for fixed,
 * seeded random performances, one line per scenario, so a change meant to
 * leave behaviour alone (a refactor, a speed-up) can be checked byte for
 * byte against tests/golden/engine-streams.txt.
 *
 * Each scenario feeds a random MIDI byte stream (notes, pedals, wheel,
 * controllers, programs, pressure, RPNs, the control channel, drums on
 * channel 10, running status and real-time bytes) through the project's
 * parser into one engine, with engine-level calls mixed in (root and
 * preset changes, a reload, a source going away, panic, a reconnect).
 * Every emitted message is encoded and hashed (FNV-1a 64, common
 * practice for fingerprints; not a correctness check of its own: the
 * promise tests in test_engine*.c are that).
 *
 *   engine_golden [EVENTS]     default 200000 input messages per scenario
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "engine_fixture.h"
#include "latticed/midi_encoder.h"
#include "latticed/midi_parser.h"
#include "test_rng.h"

struct fingerprint {
	uint64_t hash;
	unsigned long messages, bytes;
};

static void fnv_add(struct fingerprint *f, const uint8_t *b, size_t n)
{
	for (size_t i = 0; i < n; i++) {
		f->hash ^= b[i];
		f->hash *= 0x100000001B3ULL;
	}
	f->bytes += n;
}

static void on_emit(void *context, const struct midi_msg *m)
{
	struct fingerprint *f = context;
	uint8_t bytes[ENGINE_SYSEX_MAX + 8];
	size_t n = midi_msg_encode(m, bytes, sizeof bytes);
	if (n == 0) {
		fprintf(stderr, "engine_golden: the engine emitted an invalid message (status %02X)\n",
			m->status);
		exit(1);
	}
	fnv_add(f, bytes, n);
	f->messages++;
}

static struct lattice lattices[3];
static struct keymap keymaps[3];
static struct engine_tunings tunings, reloaded;
static struct engine engine;

static void build_tunings(void)
{
	static const char *const hexany[] = {"1", "3", "5", "7"};
	static const char *const dekany[] = {"1", "3", "5", "7", "9"};
	static const char *const ratios[] = {"1", "9/8", "5/4", "7/4"};
	struct core_error err;
	if (!fixture_preset(&lattices[0], &keymaps[0], &tunings.presets[0], "hexany", hexany, 4, 57,
			    220.0, &err) ||
	    !fixture_preset(&lattices[1], &keymaps[1], &tunings.presets[1], "dekany", dekany, 5, 48,
			    261.6256, &err) ||
	    !fixture_preset(&lattices[2], &keymaps[2], &reloaded.presets[1], "ratios", ratios, 4, 60,
			    196.0, &err)) {
		fprintf(stderr, "engine_golden: %s\n", err.text);
		exit(1);
	}
	tunings.count = 2;
	reloaded.count = 2;
	reloaded.presets[0] = tunings.presets[1]; /* the preset kept by name */
}

/* Bytes of one random message for input channel ch, into out; returns the count. */
static size_t random_message(struct rng *g, const struct engine_spec *spec, int ch, uint8_t *out,
			     bool *running)
{
	int action = rng_below(g, 1000);
	uint8_t status;
	size_t n = 0;
	if (action < 330) {
		status = (uint8_t)(0x90 | ch);
		out[n++] = status;
		out[n++] = (uint8_t)(30 + rng_below(g, 70));
		out[n++] = (uint8_t)(rng_below(g, 4) ? 1 + rng_below(g, 127) : 0);
	} else if (action < 560) {
		status = (uint8_t)(0x80 | ch);
		out[n++] = status;
		out[n++] = (uint8_t)(30 + rng_below(g, 70));
		out[n++] = (uint8_t)rng_below(g, 128);
	} else if (action < 660) {
		int v = rng_below(g, 16384);
		out[n++] = (uint8_t)(0xE0 | ch);
		out[n++] = (uint8_t)(v & 0x7F);
		out[n++] = (uint8_t)(v >> 7);
	} else if (action < 720) {
		static const uint8_t pedals[] = {64, 66, 64};
		out[n++] = (uint8_t)(0xB0 | ch);
		out[n++] = pedals[rng_below(g, 3)];
		out[n++] = rng_below(g, 2) ? 127 : 0;
	} else if (action < 790) {
		static const uint8_t ccs[] = {1, 7, 11, 74, 0, 32, 91, 10, 2};
		out[n++] = (uint8_t)(0xB0 | ch);
		out[n++] = ccs[rng_below(g, 9)];
		out[n++] = (uint8_t)rng_below(g, 128);
	} else if (action < 800) {
		/* the player's RPN 0 (wheel range), or an NRPN for the synth */
		bool nrpn = rng_below(g, 3) == 0;
		uint8_t b = (uint8_t)(0xB0 | ch);
		uint8_t seq[] = {b, nrpn ? 99 : 101, 0, b, nrpn ? 98 : 100, nrpn ? 5 : 0,
				 b, 6, (uint8_t)(1 + rng_below(g, 12)), b, 38, (uint8_t)rng_below(g, 100)};
		memcpy(out, seq, sizeof seq);
		n = sizeof seq;
	} else if (action < 815) {
		out[n++] = (uint8_t)(0xC0 | ch);
		out[n++] = (uint8_t)rng_below(g, 128);
	} else if (action < 840) {
		out[n++] = (uint8_t)(0xD0 | ch);
		out[n++] = (uint8_t)rng_below(g, 128);
	} else if (action < 860) {
		out[n++] = (uint8_t)(0xA0 | ch);
		out[n++] = (uint8_t)(30 + rng_below(g, 70));
		out[n++] = (uint8_t)rng_below(g, 128);
	} else if (action < 885 && spec->control.channel >= 0) {
		int c = spec->control.channel;
		int kind = rng_below(g, 3);
		if (kind == 0) {
			out[n++] = (uint8_t)(0xC0 | c);
			out[n++] = (uint8_t)rng_below(g, 3);
		} else {
			out[n++] = (uint8_t)(0xB0 | c);
			out[n++] = kind == 1 ? 20 : 21;
			out[n++] = (uint8_t)rng_below(g, 12);
		}
	} else if (action < 910) {
		uint8_t key = (uint8_t)(35 + rng_below(g, 47));
		out[n++] = 0x99;
		out[n++] = key;
		out[n++] = (uint8_t)(1 + rng_below(g, 127));
		out[n++] = 0x89;
		out[n++] = key;
		out[n++] = 0;
	} else if (action < 914) {
		static const uint8_t modes[] = {120, 121, 123};
		out[n++] = (uint8_t)(0xB0 | ch);
		out[n++] = modes[rng_below(g, 3)];
		out[n++] = 0;
	} else if (action < 920) {
		static const uint8_t sysex[] = {0xF0, 0x7E, 0x7F, 0x09, 0x01, 0xF7};
		memcpy(out, sysex, sizeof sysex);
		n = sizeof sysex;
	} else if (action < 930) {
		out[n++] = 0xF8; /* clock */
	} else {
		status = (uint8_t)(0x90 | ch);
		out[n++] = status;
		out[n++] = (uint8_t)(40 + rng_below(g, 40));
		out[n++] = (uint8_t)(1 + rng_below(g, 127));
	}
	/* running status: leave out a repeated channel status byte now and then */
	if (*running && n == 3 && out[0] >= 0x80 && out[0] < 0xF0 && rng_below(g, 3) == 0) {
		out[0] = out[1];
		out[1] = out[2];
		n = 2;
	}
	*running = out[0] >= 0x80 && out[0] < 0xF0;
	return n;
}

static void run(const char *name, struct engine_spec spec, uint64_t seed, long events)
{
	static struct fingerprint f;
	memset(&f, 0, sizeof f);
	f.hash = 0xCBF29CE484222325ULL;
	struct core_error err;
	if (!engine_init(&engine, &spec, &tunings, on_emit, &f, &err)) {
		fprintf(stderr, "engine_golden: %s: %s\n", name, err.text);
		exit(1);
	}
	engine_start(&engine);
	struct rng g = {seed};
	static uint8_t sysex[2][512];
	struct midi_parser parsers[2];
	for (int s = 0; s < 2; s++)
		midi_parser_init(&parsers[s], sysex[s], sizeof sysex[s]);
	int inputs[16], input_count = 0;
	for (int c = 0; c < 16; c++)
		if ((spec.input.channels >> c) & 1)
			inputs[input_count++] = c;
	bool running[2] = {false, false};
	for (long i = 0; i < events; i++) {
		int source = rng_below(&g, 8) == 0 ? 1 : 0;
		int ch = inputs[rng_below(&g, input_count)];
		int special = rng_below(&g, 4000);
		if (special == 0) {
			engine_panic(&engine);
			continue;
		}
		if (special == 1) {
			engine_end_source(&engine, (uint8_t)source);
			midi_parser_reset(&parsers[source]);
			running[source] = false;
			continue;
		}
		if (special == 2) {
			(void)engine_select_root(&engine, rng_below(&g, 8));
			continue;
		}
		if (special == 3) {
			(void)engine_select_preset(&engine, rng_below(&g, 2));
			continue;
		}
		if (special == 4) {
			engine_replace_tunings(&engine, rng_below(&g, 2) ? &reloaded : &tunings);
			continue;
		}
		if (special == 5) {
			engine_start(&engine); /* the synth reconnected */
			continue;
		}
		uint8_t bytes[32];
		size_t n = random_message(&g, &spec, ch, bytes, &running[source]);
		for (size_t k = 0; k < n; k++) {
			struct midi_msg m;
			if (rng_below(&g, 50) == 0) {
				/* a real-time byte in the middle of a message */
				static const uint8_t clock = 0xF8;
				if (midi_parser_feed(&parsers[source], clock, &m))
					engine_handle(&engine, (uint8_t)source, &m);
			}
			if (midi_parser_feed(&parsers[source], bytes[k], &m))
				engine_handle(&engine, (uint8_t)source, &m);
		}
	}
	engine_panic(&engine);
	const struct engine_stats *st = engine_stats(&engine);
	printf("%-28s %016llx messages %lu bytes %lu on %u shared %u stolen %u dropped %u silent %u clamped %u mts %u\n",
	       name, (unsigned long long)f.hash, f.messages, f.bytes, st->notes_on, st->notes_shared,
	       st->notes_stolen, st->notes_dropped, st->silent_keys, st->bends_clamped,
	       st->tuning_changes);
}

int main(int argc, char **argv)
{
	long events = argc > 1 ? strtol(argv[1], NULL, 10) : 200000;
	if (events <= 0) {
		fprintf(stderr, "usage: engine_golden [EVENTS]\n");
		return 2;
	}
	build_tunings();
	struct engine_spec s;

	s = fixture_spec(RETUNE_BEND);
	run("bend 14 channels", s, 11, events);
	s.output.channels = 0x000E;
	s.output.polyphony = POLY_STEAL;
	run("bend 3 channels steal", s, 12, events);
	s.output.polyphony = POLY_SHARE;
	s.output.bend_played = 127.0 / 128.0;
	s.output.cents_offset = -3.5;
	run("bend 3 channels share", s, 13, events);
	s = fixture_spec(RETUNE_BEND);
	s.input.channels = 0x0003;
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	s.control.preset_cc = 21;
	s.control.root_cc = 20;
	s.control.preset_keys = 24;
	s.control.root_keys = 100;
	run("bend two inputs, control", s, 14, events);

	s = fixture_spec(RETUNE_MTS);
	run("mts nearest", s, 21, events);
	s.output.mts_key = MTS_KEY_OWN;
	s.output.mts_bulk = true;
	s.output.mts_bank = 3;
	s.output.mts_program = 5;
	s.control.channel = 15;
	s.control.root_cc = 20;
	s.control.preset_cc = 21;
	run("mts own key bulk", s, 22, events);

	s = fixture_spec(RETUNE_MPE);
	run("mpe 15 members", s, 31, events);
	s.output.mpe_members = 4;
	s.output.mpe_zone = MPE_ZONE_UPPER;
	s.output.polyphony = POLY_STEAL;
	run("mpe upper 4 members", s, 32, events);

	s = fixture_spec(RETUNE_BEND);
	s.input.mpe = true;
	s.input.channels = 0x00FF;
	run("bend from mpe controller", s, 41, events);
	s = fixture_spec(RETUNE_MPE);
	s.input.mpe = true;
	s.input.channels = 0x00FF;
	run("mpe from mpe controller", s, 42, events);
	return 0;
}
