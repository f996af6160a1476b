/*
 * Heap allocations on the event path: none (our rule).
 *
 * engine.h, midi_parser.h and midi_encoder.h promise no allocation after
 * set-up.  This binary defines malloc, calloc, realloc, free and the
 * aligned variants itself (symbol interposition: the executable's
 * definitions come first for every library in the process, glibc's own
 * internal calls included) and forwards each to the next definition
 * (dlsym RTLD_NEXT: glibc's, or the sanitizer runtime's in an ASan build),
 * counting the calls made while a window is open.  Inside the window:
 * 10^5 events per method (bend, mts, mpe) as MIDI bytes through the
 * parser, the engine (with preset and root changes from a control channel,
 * pedals, wheel, controllers, an MPE controller's per-note bends, SysEx,
 * a reset and a panic) and the encoder.  A self-check first proves that
 * the counting sees a malloc made in the window.  Built only without
 * sanitizers (tests/CMakeLists.txt): the ASan runtime calls malloc before
 * its shadow memory exists, where this instrumented file cannot run.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <dlfcn.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "engine_fixture.h"
#include "test_rng.h"
#include "latticed/engine.h"
#include "latticed/midi_encoder.h"
#include "latticed/midi_parser.h"

/* ---- the counting allocator ------------------------------------------------ */

struct alloc_count {
	long malloc, calloc, realloc, free, aligned;
};

static struct alloc_count counted;
static volatile int window_open;

static void *(*next_malloc)(size_t);
static void *(*next_calloc)(size_t, size_t);
static void *(*next_realloc)(void *, size_t);
static void (*next_free)(void *);
static int (*next_posix_memalign)(void **, size_t, size_t);
static void *(*next_aligned_alloc)(size_t, size_t);
static void *(*next_memalign)(size_t, size_t);

/* dlsym may allocate before the real allocator is known: a small arena,
 * never freed, serves those calls. */
static _Alignas(max_align_t) unsigned char bootstrap[8192];
static size_t bootstrap_used;
static int resolving;

static void *bootstrap_alloc(size_t n)
{
	size_t at = (bootstrap_used + 15) & ~(size_t)15;
	if (at + n > sizeof bootstrap)
		return NULL;
	bootstrap_used = at + n;
	return bootstrap + at;
}

static int is_bootstrap(const void *p)
{
	return (const unsigned char *)p >= bootstrap &&
	       (const unsigned char *)p < bootstrap + sizeof bootstrap;
}

/* dlsym returns an object pointer; POSIX guarantees a function's address
 * converts, and copying the bytes keeps ISO C's pedantic mode quiet. */
#define RESOLVE(var, name) do { void *p_ = dlsym(RTLD_NEXT, name); memcpy(&(var), &p_, sizeof p_); } while (0)

static void resolve(void)
{
	if (next_malloc || resolving)
		return;
	resolving = 1;
	RESOLVE(next_calloc, "calloc");
	RESOLVE(next_realloc, "realloc");
	RESOLVE(next_free, "free");
	RESOLVE(next_posix_memalign, "posix_memalign");
	RESOLVE(next_aligned_alloc, "aligned_alloc");
	RESOLVE(next_memalign, "memalign");
	RESOLVE(next_malloc, "malloc");
	resolving = 0;
}

void *malloc(size_t n)
{
	resolve();
	if (!next_malloc)
		return bootstrap_alloc(n);
	if (window_open)
		counted.malloc++;
	return next_malloc(n);
}

void *calloc(size_t count, size_t size)
{
	resolve();
	if (!next_calloc) {
		if (size && count > SIZE_MAX / size)
			return NULL;
		return bootstrap_alloc(count * size); /* static: already zero */
	}
	if (window_open)
		counted.calloc++;
	return next_calloc(count, size);
}

void *realloc(void *p, size_t n)
{
	resolve();
	if (window_open)
		counted.realloc++;
	if (is_bootstrap(p)) {
		/* the block's size is not kept: copy what can lie behind it */
		size_t behind = (size_t)(bootstrap + sizeof bootstrap - (unsigned char *)p);
		void *q = malloc(n);
		if (q)
			memcpy(q, p, n < behind ? n : behind);
		return q;
	}
	return next_realloc(p, n);
}

void free(void *p)
{
	if (!p || is_bootstrap(p))
		return;
	resolve();
	if (window_open)
		counted.free++;
	next_free(p);
}

int posix_memalign(void **out, size_t alignment, size_t n)
{
	resolve();
	if (window_open)
		counted.aligned++;
	return next_posix_memalign(out, alignment, n);
}

void *aligned_alloc(size_t alignment, size_t n)
{
	resolve();
	if (window_open)
		counted.aligned++;
	return next_aligned_alloc(alignment, n);
}

void *memalign(size_t alignment, size_t n)
{
	resolve();
	if (window_open)
		counted.aligned++;
	return next_memalign(alignment, n);
}

static void open_window(void)
{
	memset(&counted, 0, sizeof counted);
	window_open = 1;
}

static long close_window(void)
{
	window_open = 0;
	return counted.malloc + counted.calloc + counted.realloc + counted.free + counted.aligned;
}

/* ---- fixtures ---------------------------------------------------------------- */

static struct lattice lattices[2];
static struct keymap keymaps[2];
static struct engine_tunings tunings;

static int setup(void **state)
{
	(void)state;
	struct core_error err;
	assert_true(fixture_two_presets(lattices, keymaps, &tunings, &err));
	return 0;
}

/* What goes out: bytes into a fixed buffer, as an output backend would. */
struct sink {
	struct midi_running_status wire;
	uint8_t bytes[4096];
	size_t length;
	long messages, refused;
};

static void sink_emit(void *context, const struct midi_msg *m)
{
	struct sink *s = context;
	if (s->length > sizeof s->bytes - ENGINE_SYSEX_MAX - 8)
		s->length = 0;
	uint8_t *at = s->bytes + s->length;
	size_t n = midi_msg_encode(m, at, sizeof s->bytes - s->length);
	if (n == 0) {
		s->refused++;
	} else {
		/* with running status, as the output thread writes a raw port */
		uint8_t status = at[0];
		size_t skip = midi_running_status_skip(&s->wire, at);
		memmove(at, at + skip, n - skip);
		midi_running_status_sent(&s->wire, status);
		s->length += n - skip;
	}
	s->messages++;
}

/* ---- the performance ------------------------------------------------------------ */

#define EVENTS 100000
#define STREAM_MAX (EVENTS * 16)

static uint8_t stream[STREAM_MAX];

static size_t put3(size_t at, uint8_t status, uint8_t d1, uint8_t d2)
{
	stream[at] = status;
	stream[at + 1] = d1 & 0x7F;
	stream[at + 2] = d2 & 0x7F;
	return at + 3;
}

/* EVENTS messages as MIDI 1.0 bytes (no running status, so every message
 * is counted once): chords on input channel 1 (and on members 2-5 for an
 * MPE controller), pedals, wheel, controllers, pressure, programs, preset
 * and root changes on control channel 16, SysEx, a reset now and then. */
static size_t make_stream(uint64_t seed, bool mpe_input)
{
	struct rng g = {seed};
	bool down[16][128] = {{false}};
	size_t at = 0;
	for (long i = 0; i < EVENTS; i++) {
		uint8_t ch = mpe_input ? (uint8_t)(1 + rng_next(&g) % 4) : 0;
		uint8_t key = (uint8_t)(40 + rng_next(&g) % 48);
		uint32_t action = rng_next(&g) % 1000;
		if (action < 350) {
			if (down[ch][key])
				at = put3(at, (uint8_t)(0x80 | ch), key, 40);
			else
				at = put3(at, (uint8_t)(0x90 | ch), key, (uint8_t)(1 + rng_next(&g) % 127));
			down[ch][key] = !down[ch][key];
		} else if (action < 450) {
			unsigned v = rng_next(&g) % 16384;
			at = put3(at, (uint8_t)(0xE0 | ch), (uint8_t)(v & 0x7F), (uint8_t)(v >> 7));
		} else if (action < 550) {
			at = put3(at, 0xB0, 64, rng_next(&g) % 2 ? 127 : 0);
		} else if (action < 600) {
			at = put3(at, 0xB0, 66, rng_next(&g) % 2 ? 127 : 0);
		} else if (action < 750) {
			static const uint8_t ccs[] = {1, 7, 11, 74, 91};
			at = put3(at, (uint8_t)(0xB0 | ch), ccs[rng_next(&g) % 5], (uint8_t)(rng_next(&g) % 128));
		} else if (action < 800) {
			stream[at++] = (uint8_t)(0xD0 | ch);
			stream[at++] = (uint8_t)(rng_next(&g) % 128);
		} else if (action < 830) {
			at = put3(at, (uint8_t)(0xA0 | ch), key, (uint8_t)(rng_next(&g) % 128));
		} else if (action < 850) {
			stream[at++] = 0xC0;
			stream[at++] = (uint8_t)(rng_next(&g) % 128);
		} else if (action < 880) {
			stream[at++] = 0xCF;   /* preset on the control channel */
			stream[at++] = (uint8_t)(rng_next(&g) % 2);
		} else if (action < 910) {
			at = put3(at, 0xBF, 20, (uint8_t)(rng_next(&g) % 7)); /* the 1/1 moves */
		} else if (action < 930) {
			static const uint8_t sx[] = {0xF0, 0x7D, 0x10, 0x20, 0x30, 0xF7};
			memcpy(stream + at, sx, sizeof sx);
			at += sizeof sx;
		} else if (action < 932) {
			stream[at++] = 0xFF;   /* system reset: panic and set-up again */
		} else {
			stream[at++] = 0xF8;   /* clock */
		}
	}
	return at;
}

static struct engine engine;
static struct midi_parser parser;
static uint8_t parser_sysex[512];
static struct sink sink;

static void run_method(const char *name, enum retune_method method, bool mpe_input)
{
	struct engine_spec s = fixture_spec(method);
	if (method == RETUNE_MTS)
		s.output.channels = 0x001F;
	if (mpe_input)
		s.output.bend_range = 48;
	s.output.mts_bulk = method == RETUNE_MTS;
	s.output.mpe_members = 8;
	s.input.channels = mpe_input ? 0x001F : 0x0001;
	s.input.mpe = mpe_input;
	s.control.channel = 15;
	s.control.program_selects_preset = true;
	s.control.root_cc = 20;

	size_t length = make_stream(1 + (uint64_t)method * 7 + mpe_input, mpe_input);
	memset(&sink, 0, sizeof sink);
	midi_running_status_reset(&sink.wire);
	struct core_error err;
	if (!engine_init(&engine, &s, &tunings, sink_emit, &sink, &err))
		fail_msg("engine_init: %s", err.text);
	engine_start(&engine);
	midi_parser_init(&parser, parser_sysex, sizeof parser_sysex);

	open_window();
	long delivered = 0;
	for (size_t i = 0; i < length; i++) {
		struct midi_msg m;
		if (midi_parser_feed(&parser, stream[i], &m)) {
			engine_handle(&engine, 0, &m);
			delivered++;
		}
	}
	engine_end_source(&engine, 0);
	engine_panic(&engine);
	(void)engine_take_notices(&engine);
	struct alloc_count c = counted;
	long total = close_window();

	printf("  %-24s %6ld events in, %7ld messages out: %ld malloc, %ld calloc, %ld realloc, %ld free, %ld aligned\n",
	       name, delivered, sink.messages, c.malloc, c.calloc, c.realloc, c.free, c.aligned);
	assert_int_equal(delivered, EVENTS);
	assert_int_equal(sink.refused, 0);
	assert_true(sink.messages > EVENTS / 2);
	assert_int_equal(total, 0);
}

/* ---- tests ---------------------------------------------------------------------- */

static void counting_sees_an_allocation(void **state)
{
	(void)state;
	/* through a volatile pointer, so the compiler cannot drop the pair */
	void *(*volatile alloc)(size_t) = malloc;
	void (*volatile release)(void *) = free;
	open_window();
	void *p = alloc(64);
	release(p);
	struct alloc_count c = counted;
	long total = close_window();
	assert_non_null(p);
	assert_int_equal(c.malloc, 1);
	assert_int_equal(c.free, 1);
	assert_int_equal(total, 2);
}

static void bend_allocates_nothing(void **state)
{
	(void)state;
	run_method("bend", RETUNE_BEND, false);
	run_method("bend, MPE controller", RETUNE_BEND, true);
}

static void mts_allocates_nothing(void **state)
{
	(void)state;
	run_method("mts, bulk dumps", RETUNE_MTS, false);
	run_method("mts, MPE controller", RETUNE_MTS, true);
}

static void mpe_allocates_nothing(void **state)
{
	(void)state;
	run_method("mpe", RETUNE_MPE, false);
	run_method("mpe, MPE controller", RETUNE_MPE, true);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(counting_sees_an_allocation),
		cmocka_unit_test(bend_allocates_nothing),
		cmocka_unit_test(mts_allocates_nothing),
		cmocka_unit_test(mpe_allocates_nothing),
	};
	return cmocka_run_group_tests(tests, setup, NULL);
}
