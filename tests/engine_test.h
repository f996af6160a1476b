/*
 * engine_test: what the engine's cmocka files share (test_engine.c for
 * the common promises, test_engine_bend.c, _mts.c, _mpe.c for each
 * method, test_engine_promises.c for the randomized run): two presets, a
 * harness whose every byte goes through the synth model, and checks on
 * the exact bytes sent.  The engine is read only through engine.h's
 * functions, never its fields.
 *
 * Byte layouts are from MIDI 1.0 (status/data, bend LSB first, centre
 * 8192), the RPN sequence CC101/CC100/CC6 + RPN null (MIDI 1.0 RP-018
 * style, vendor charts), MTS single-note change F0 7F dd 08 02 tt ll kk
 * xx yy zz F7 (MMA MIDI Tuning) and the MPE Configuration Message RPN 6
 * (MPE 1.0).
 */
#ifndef LATTICED_ENGINE_TEST_H
#define LATTICED_ENGINE_TEST_H

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
#include "synth_model.h"
#include "latticed/pitch.h"

/* ---- fixtures -------------------------------------------------------------- */

static struct lattice lattices[2];
static struct keymap keymaps[2];
static struct engine_tunings tunings;
static struct harness h;
static struct synth_model model;

static inline int setup_tunings(void **state)
{
	(void)state;
	struct core_error err;
	if (!fixture_two_presets(lattices, keymaps, &tunings, &err))
		fail_msg("%s", err.text);
	return 0;
}

static inline struct engine_spec default_spec(enum retune_method method)
{
	return fixture_spec(method);
}

static inline void start(const struct engine_spec *spec)
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
static inline void expect_bytes(const uint8_t *want, size_t n)
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
static inline bool log_contains(uint8_t a, uint8_t b, uint8_t c)
{
	for (size_t i = 0; i + 2 < h.length; i++)
		if (h.log[i] == a && h.log[i + 1] == b && h.log[i + 2] == c)
			return true;
	return false;
}

static inline double key_note(int preset, int key)
{
	return keymaps[preset].keys[key].note;
}

/* Notes sounding on output channel ch, as the engine reports them. */
static inline int notes_on_channel(int ch)
{
	struct engine_note_info n;
	int count = 0;
	for (int i = 0; engine_note_at(&h.engine, i, &n); i++)
		count += n.out_channel == ch;
	return count;
}

static inline const struct engine_stats *stats(void)
{
	return engine_stats(&h.engine);
}

#endif
