/*
 * engine_bench: how fast the event path runs, as figures (never pass/fail).
 *
 * A fixed performance of our own, the same on every run: four-note chords
 * on input channel 1 over a hexany (1 3 5 7), held through the sustain
 * pedal, with a pitch-wheel gesture, mod-wheel and expression sweeps
 * between them, and a new chord released while the next one sounds.  It
 * goes as MIDI bytes through the whole path a live daemon runs: parser,
 * engine, encoder into an output buffer.  Each kind of message is played
 * by its own function (play_note_ons, play_note_offs, play_controls,
 * play_wheel), so a profiler such as callgrind can split the cost per kind
 * (bench/run.sh does).
 *
 *   engine_bench [--events N] [--method bend|mts|mpe]   events per second
 *   engine_bench --write-smf FILE [--events N]           the performance as a
 *                                                         format 1 SMF
 */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "engine_fixture.h"
#include "latticed/engine.h"
#include "latticed/midi_encoder.h"
#include "latticed/midi_parser.h"
#include "latticed/smf.h"

enum kind { NOTE_ON, NOTE_OFF, CONTROL, WHEEL, KINDS };

/* The performance: runs of messages of one kind, as bytes. */
struct segment {
	enum kind kind;
	size_t offset, length;
	long events;
	uint32_t tick;             /* for the SMF: when the run starts */
};

struct performance {
	uint8_t *bytes;
	size_t length, capacity;
	struct segment *segments;
	size_t segment_count, segment_capacity;
	long events[KINDS];
	long total;
};

static void *grow(void *p, size_t *capacity, size_t need, size_t size)
{
	if (need <= *capacity)
		return p;
	size_t cap = *capacity ? *capacity : 1024;
	while (cap < need)
		cap *= 2;
	void *q = realloc(p, cap * size);
	if (!q) {
		fprintf(stderr, "engine_bench: out of memory\n");
		exit(1);
	}
	*capacity = cap;
	return q;
}

static void begin_segment(struct performance *p, enum kind kind, uint32_t tick)
{
	p->segments = grow(p->segments, &p->segment_capacity, p->segment_count + 1,
			   sizeof *p->segments);
	struct segment *s = &p->segments[p->segment_count++];
	s->kind = kind;
	s->offset = p->length;
	s->length = 0;
	s->events = 0;
	s->tick = tick;
}

static void put(struct performance *p, uint8_t status, uint8_t d1, uint8_t d2)
{
	p->bytes = grow(p->bytes, &p->capacity, p->length + 3, 1);
	p->bytes[p->length++] = status;
	p->bytes[p->length++] = d1 & 0x7F;
	p->bytes[p->length++] = d2 & 0x7F;
	struct segment *s = &p->segments[p->segment_count - 1];
	s->length += 3;
	s->events++;
	p->events[s->kind]++;
	p->total++;
}

/* Chord shapes over the hexany's sequential keys (root key 57). */
static const uint8_t chords[4][4] = {
	{57, 60, 63, 66}, {58, 61, 64, 67}, {59, 62, 65, 68}, {56, 60, 64, 69},
};

static void make_performance(struct performance *p, long events)
{
	memset(p, 0, sizeof *p);
	uint32_t tick = 0;
	int bar = 0;
	const uint8_t *held = NULL;
	while (p->total < events) {
		const uint8_t *chord = chords[bar % 4];
		uint8_t velocity = (uint8_t)(70 + (bar * 13) % 50);
		begin_segment(p, NOTE_ON, tick);
		for (int i = 0; i < 4; i++)
			put(p, 0x90, chord[i], velocity);
		if (held) {
			/* the previous chord lets go once the new one sounds */
			begin_segment(p, NOTE_OFF, tick + 10);
			for (int i = 0; i < 4; i++)
				put(p, 0x80, held[i], 40);
		}
		begin_segment(p, CONTROL, tick + 20);
		put(p, 0xB0, 64, bar % 2 ? 127 : 0);          /* sustain, every other bar */
		for (int i = 0; i < 8; i++) {
			put(p, 0xB0, 1, (uint8_t)(i * 16));        /* mod wheel sweep */
			put(p, 0xB0, 11, (uint8_t)(127 - i * 8));  /* expression */
		}
		begin_segment(p, WHEEL, tick + 60);
		for (int i = 0; i < 16; i++) {
			unsigned v = 8192 + (unsigned)((i < 8 ? i : 16 - i) * 400);
			put(p, 0xE0, (uint8_t)(v & 0x7F), (uint8_t)(v >> 7));
		}
		held = chord;
		tick += 240;
		bar++;
	}
	begin_segment(p, NOTE_OFF, tick);
	for (int i = 0; held && i < 4; i++)
		put(p, 0x80, held[i], 40);
	begin_segment(p, CONTROL, tick + 10);
	put(p, 0xB0, 64, 0);
}

/* ---- the path a daemon runs: parser -> engine -> encoder ---------------- */

struct output {
	uint8_t bytes[1 << 16];
	size_t length;
	unsigned long written;
};

static void emit(void *context, const struct midi_msg *m)
{
	struct output *o = context;
	if (o->length > sizeof o->bytes - ENGINE_SYSEX_MAX - 8) {
		o->written += o->length;
		o->length = 0;   /* a backend would have sent it */
	}
	o->length += midi_msg_encode(m, o->bytes + o->length, sizeof o->bytes - o->length);
}

struct path {
	long runs[KINDS];          /* runs played per kind (keeps the play_ functions distinct) */
	struct midi_parser parser;
	uint8_t sysex[512];
	struct engine engine;
	struct output output;
};

static void feed(struct path *p, const uint8_t *bytes, size_t n)
{
	for (size_t i = 0; i < n; i++) {
		struct midi_msg m;
		if (midi_parser_feed(&p->parser, bytes[i], &m))
			engine_handle(&p->engine, 0, &m);
	}
}

/* One function per kind, never inlined and never folded into one (each
 * counts its own runs), so a profiler can tell them apart. */
__attribute__((noinline)) static void play_note_ons(struct path *p, const uint8_t *b, size_t n)
{
	p->runs[NOTE_ON]++;
	feed(p, b, n);
}

__attribute__((noinline)) static void play_note_offs(struct path *p, const uint8_t *b, size_t n)
{
	p->runs[NOTE_OFF]++;
	feed(p, b, n);
}

__attribute__((noinline)) static void play_controls(struct path *p, const uint8_t *b, size_t n)
{
	p->runs[CONTROL]++;
	feed(p, b, n);
}

__attribute__((noinline)) static void play_wheel(struct path *p, const uint8_t *b, size_t n)
{
	p->runs[WHEEL]++;
	feed(p, b, n);
}

static void play(struct path *p, const struct performance *perf)
{
	for (size_t i = 0; i < perf->segment_count; i++) {
		const struct segment *s = &perf->segments[i];
		const uint8_t *b = perf->bytes + s->offset;
		switch (s->kind) {
		case NOTE_ON:
			play_note_ons(p, b, s->length);
			break;
		case NOTE_OFF:
			play_note_offs(p, b, s->length);
			break;
		case CONTROL:
			play_controls(p, b, s->length);
			break;
		case WHEEL:
			play_wheel(p, b, s->length);
			break;
		case KINDS:
			break;
		}
	}
}

/* ---- tunings and specs ------------------------------------------------------ */

static struct lattice lattice;
static struct keymap keymap;
static struct engine_tunings tunings;

static void build_tunings(void)
{
	static const char *const seeds[] = {"1", "3", "5", "7"};
	struct core_error err;
	if (!fixture_preset(&lattice, &keymap, &tunings.presets[0], "hexany", seeds, 4, 57, 220.0, &err)) {
		fprintf(stderr, "engine_bench: %s\n", err.text);
		exit(1);
	}
	tunings.count = 1;
}

static struct engine_spec spec_for(enum retune_method method)
{
	struct engine_spec s = fixture_spec(method);
	if (method == RETUNE_MTS)
		s.output.channels = 0x0001;
	return s;
}

static double now(void)
{
	struct timespec t;
	clock_gettime(CLOCK_MONOTONIC, &t);
	return (double)t.tv_sec + (double)t.tv_nsec * 1e-9;
}

static int run_method(enum retune_method method, const struct performance *perf)
{
	static struct path path;
	memset(&path, 0, sizeof path);
	struct engine_spec spec = spec_for(method);
	struct core_error err;
	if (!engine_init(&path.engine, &spec, &tunings, emit, &path.output, &err)) {
		fprintf(stderr, "engine_bench: %s\n", err.text);
		return 1;
	}
	midi_parser_init(&path.parser, path.sysex, sizeof path.sysex);
	engine_start(&path.engine);
	double start = now();
	play(&path, perf);
	double seconds = now() - start;
	engine_panic(&path.engine);
	unsigned long out = path.output.written + path.output.length;
	printf("%-5s %9ld events %8.3f s %12.0f events/s %10lu bytes out  (%ld note-on, %ld note-off, %ld CC, %ld bend)\n",
	       retune_method_name(method), perf->total, seconds, (double)perf->total / seconds, out,
	       perf->events[NOTE_ON], perf->events[NOTE_OFF], perf->events[CONTROL],
	       perf->events[WHEEL]);
	return 0;
}

/* ---- the performance as a Standard MIDI File ------------------------------ */

static int write_smf(const char *path, const struct performance *perf)
{
	struct smf_writer w;
	bool ok = smf_writer_begin(&w, 1, 480) && smf_writer_track_begin(&w) &&
		  smf_writer_tempo(&w, 0, 500000) &&
		  smf_writer_meta(&w, 0, SMF_META_TRACK_NAME, (const uint8_t *)"bench", 5);
	for (size_t i = 0; ok && i < perf->segment_count; i++) {
		const struct segment *s = &perf->segments[i];
		for (long e = 0; ok && e < s->events; e++) {
			const uint8_t *b = perf->bytes + s->offset + 3 * (size_t)e;
			struct midi_msg m = midi_msg_make(b[0], b[1], b[2]);
			ok = smf_writer_midi(&w, s->tick + (uint32_t)e, &m);
		}
	}
	uint32_t end = perf->segment_count ? perf->segments[perf->segment_count - 1].tick + 480 : 0;
	uint8_t *bytes = NULL;
	size_t length = 0;
	ok = ok && smf_writer_track_end(&w, end) && smf_writer_finish(&w, &bytes, &length);
	if (!ok) {
		fprintf(stderr, "engine_bench: %s\n", w.error.text);
		smf_writer_discard(&w);
		return 1;
	}
	FILE *f = fopen(path, "wb");
	if (!f || fwrite(bytes, 1, length, f) != length || fclose(f) != 0) {
		fprintf(stderr, "engine_bench: %s: %s\n", path, strerror(errno));
		free(bytes);
		return 1;
	}
	printf("%s: %zu bytes, %ld events\n", path, length, perf->total);
	free(bytes);
	return 0;
}

static int usage(void)
{
	fprintf(stderr, "usage: engine_bench [--events N] [--method bend|mts|mpe]\n"
			"       engine_bench --write-smf FILE [--events N]\n");
	return 2;
}

int main(int argc, char **argv)
{
	long events = 1000000;
	const char *method = NULL, *smf_path = NULL;
	for (int i = 1; i < argc; i++) {
		if (strcmp(argv[i], "--events") == 0 && i + 1 < argc) {
			char *end;
			events = strtol(argv[++i], &end, 10);
			if (*end || events < 1)
				return usage();
		} else if (strcmp(argv[i], "--method") == 0 && i + 1 < argc) {
			method = argv[++i];
		} else if (strcmp(argv[i], "--write-smf") == 0 && i + 1 < argc) {
			smf_path = argv[++i];
		} else {
			return usage();
		}
	}
	struct performance perf;
	make_performance(&perf, events);
	if (smf_path)
		return write_smf(smf_path, &perf);
	build_tunings();
	static const enum retune_method methods[] = {RETUNE_BEND, RETUNE_MTS, RETUNE_MPE};
	int status = 0, ran = 0;
	for (int i = 0; i < 3; i++) {
		if (method && strcmp(method, retune_method_name(methods[i])) != 0)
			continue;
		status |= run_method(methods[i], &perf);
		ran++;
	}
	free(perf.bytes);
	free(perf.segments);
	if (!ran)
		return usage();
	return status;
}
