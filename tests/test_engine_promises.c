/*
 * The engine's four promises (our rules: engine.h, README) on long seeded
 * random performances, for
 * every method (LATTICED_ENGINE_EVENTS sets the length, default 10^6
 * events; LATTICED_ENGINE_SEED shifts every scenario's seed, for longer
 * runs with fresh streams), judged by the independent synth model in
 * synth_model.h:
 *   1. every note-on is matched by exactly one note-off on the same
 *      channel and key;
 *   2. after the player releases every key and pedal nothing sounds;
 *   3. a channel's bend changes under a sounding note only while the
 *      player moves a wheel;
 *   4. every note sounds within half a bend (or MTS) step of its key's
 *      pitch from the key map, the wheel and the synth correction added.
 * Besides, (our rule) the note watch (engine_watch_notes) reports exactly
 * the notes that sound: after every event the notes it was told of are the
 * engine's own list (engine_note_at), and each of them whose key is still
 * down sounds in the synth model on its output channel and key (a note
 * the engine keeps ringing under sostenuto may already be off there).
 * Each scenario prints its figures (events, pitches checked, worst error,
 * notes stolen, shared, dropped).
 */
#include "engine_test.h"
#include "test_rng.h"

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

/* ---- the note watch --------------------------------------------------------- */

/* What the watch said sounds, by the note's start serial (unique per engine). */
static struct watched {
	int count;
	struct engine_note_info notes[ENGINE_MAX_NOTES];
	long long starts, stops;
} watched;

static void watch_note(void *context, bool sounding, const struct engine_note_info *note)
{
	(void)context;
	if (sounding) {
		for (int i = 0; i < watched.count; i++)
			if (watched.notes[i].started == note->started)
				fail_msg("the watch reported note %u starting twice", note->started);
		if (watched.count == ENGINE_MAX_NOTES)
			fail_msg("the watch reported more than %d notes sounding", ENGINE_MAX_NOTES);
		watched.notes[watched.count++] = *note;
		watched.starts++;
		return;
	}
	for (int i = 0; i < watched.count; i++) {
		if (watched.notes[i].started != note->started)
			continue;
		watched.notes[i] = watched.notes[--watched.count];
		watched.stops++;
		return;
	}
	fail_msg("the watch reported note %u stopping, never started", note->started);
}

static void check_watched(long events)
{
	struct engine_note_info n;
	int count = 0;
	for (; engine_note_at(&h.engine, count, &n); count++) {
		bool seen = false;
		for (int i = 0; i < watched.count && !seen; i++)
			seen = watched.notes[i].started == n.started && watched.notes[i].tone == n.tone &&
			       watched.notes[i].preset == n.preset && watched.notes[i].in_key == n.in_key;
		if (!seen)
			fail_msg("note %u (key %d) sounds, the watch never reported it (%ld events in)",
				 n.started, n.in_key, events);
		/* a note still down must sound; one the engine keeps ringing may
		 * already be silent in the model (sostenuto, see check_watched) */
		if (!n.ringing && !model.ch[n.out_channel].on[n.out_key])
			fail_msg("the watch reports channel %d key %d down, the synth model has it off",
				 n.out_channel + 1, n.out_key);
	}
	if (count != watched.count)
		fail_msg("the watch says %d notes sound, the engine lists %d (%ld events in)",
			 watched.count, count, events);
}

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

/* One random event of the player (or a panic) on input channel in_ch. */
static void random_action(struct random_run *r, struct rng *g, int in_ch, int *max_down,
			  const char *name)
{
	const struct engine_spec *spec = &r->spec;
	int action = rng_below(g, 1000);
	int held = 0;
	for (int k = 0; k < 128; k++)
		held += r->down[in_ch][k];
	if (action < 300 && held < *max_down) {
		random_note_on(r, g, in_ch);
	} else if (action < 600) {
		int key = 30 + rng_below(g, 60);
		if (r->down[in_ch][key]) {
			harness_send(&h, (uint8_t)((rng_below(g, 2) ? 0x80 : 0x90) | in_ch),
				     (uint8_t)key, 0);
			r->down[in_ch][key] = false;
			sync_owners(r);
		}
	} else if (action < 700) {
		int v = rng_below(g, 16384);
		r->wheel[in_ch] = v;
		model.bend_change_allowed = true;
		harness_send(&h, (uint8_t)(0xE0 | in_ch), (uint8_t)(v & 0x7F), (uint8_t)(v >> 7));
		model.bend_change_allowed = false;
		for (int c = 0; c < 16; c++)
			for (int k = 0; k < 128; k++)
				if (r->owner[c][k].used && model.ch[c].on[k])
					check_note_pitch(r, c, k);
	} else if (action < 760) {
		harness_send(&h, (uint8_t)(0xB0 | in_ch), 64, rng_below(g, 2) ? 127 : 0);
		sync_owners(r);
	} else if (action < 790) {
		harness_send(&h, (uint8_t)(0xB0 | in_ch), 66, rng_below(g, 2) ? 127 : 0);
		sync_owners(r);
	} else if (action < 850) {
		static const uint8_t ccs[] = {1, 7, 11, 74, 0, 32, 91};
		harness_send(&h, (uint8_t)(0xB0 | in_ch), ccs[rng_below(g, 7)], (uint8_t)rng_below(g, 128));
	} else if (action < 870) {
		harness_send(&h, (uint8_t)(0xC0 | in_ch), (uint8_t)rng_below(g, 128), 0);
	} else if (action < 900) {
		harness_send(&h, (uint8_t)(0xD0 | in_ch), (uint8_t)rng_below(g, 128), 0);
	} else if (action < 920) {
		harness_send(&h, (uint8_t)(0xA0 | in_ch), (uint8_t)(30 + rng_below(g, 60)),
			     (uint8_t)rng_below(g, 128));
	} else if (action < 935 && spec->control.channel >= 0) {
		r->preset = rng_below(g, 2);
		r->root_slot = 0;
		harness_send(&h, (uint8_t)(0xC0 | spec->control.channel), (uint8_t)r->preset, 0);
	} else if (action < 950 && spec->control.channel >= 0 && spec->control.root_cc == 20) {
		r->root_slot = rng_below(g, lattices[r->preset].tone_count + 1);
		harness_send(&h, (uint8_t)(0xB0 | spec->control.channel), 20, (uint8_t)r->root_slot);
	} else if (action < 950 && spec->control.channel == ENGINE_CONTROL_PLAYING) {
		/* momentary footswitches on the playing channel (press, release):
		 * the next preset, the next root (both wrap), now and then the panic
		 * (our rule, engine.h) */
		int which = rng_below(g, 32);
		uint8_t cc = which == 0 ? 82 : which < 12 ? 80 : 81;
		harness_send(&h, (uint8_t)(0xB0 | in_ch), cc, 127);
		harness_send(&h, (uint8_t)(0xB0 | in_ch), cc, 0);
		if (cc == 80) {
			r->preset = (r->preset + 1) % 2;
			r->root_slot = 0;
		} else if (cc == 81) {
			r->root_slot = (r->root_slot + 1) % (lattices[r->preset].tone_count + 1);
		} else {
			memset(r->down, 0, sizeof r->down);
			sync_owners(r);
			if (model_sounding_count(&model) != 0)
				fail_msg("%s: notes sound after the panic binding", name);
		}
		if (engine_preset(&h.engine) != r->preset || engine_root(&h.engine) != r->root_slot)
			fail_msg("%s: a footswitch left preset %d root %d, expected %d and %d", name,
				 engine_preset(&h.engine), engine_root(&h.engine), r->preset, r->root_slot);
	} else if (action < 960) {
		/* drums on channel 10 pass through: a hit and its release,
		 * or (when 10 is not retuned) a hit held until its release,
		 * a panic or the end, which must end it */
		uint8_t key = (uint8_t)rng_below(g, 128);
		bool passes = !((spec->input.channels >> 9) & 1);
		if (passes && r->down[9][key]) {
			harness_send(&h, 0x89, key, 0);
			r->down[9][key] = false;
		} else if (passes && rng_below(g, 2)) {
			harness_send(&h, 0x99, key, (uint8_t)(1 + rng_below(g, 127)));
			r->down[9][key] = true;
		} else {
			harness_send(&h, 0x99, key, (uint8_t)(1 + rng_below(g, 127)));
			harness_send(&h, 0x89, key, 0);
		}
	} else if (action < 962) {
		/* the player's own all-notes-off */
		harness_send(&h, (uint8_t)(0xB0 | in_ch), 123, 0);
		memset(r->down[in_ch], 0, sizeof r->down[in_ch]);
		sync_owners(r);
	} else if (action < 964) {
		engine_panic(&h.engine);
		memset(r->down, 0, sizeof r->down);
		sync_owners(r);
		if (model_sounding_count(&model) != 0)
			fail_msg("%s: notes sound after a panic", name);
	} else if (action < 990) {
		release_everything(r);
		*max_down = 2 + rng_below(g, 10);
	}
}

static void run_random(const char *name, struct engine_spec spec, uint64_t seed, long events)
{
	static struct random_run r;
	memset(&r, 0, sizeof r);
	r.spec = spec;
	start(&spec);
	memset(&watched, 0, sizeof watched);
	engine_watch_notes(&h.engine, watch_note, NULL);
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
		random_action(&r, &g, in_ch, &max_down, name);
		check_watched(r.events);
		if (model.violations)
			fail_msg("%s (seed %llu) after %ld events: %s", name,
				 (unsigned long long)seed, r.events, model.first);
	}
	release_everything(&r);
	engine_panic(&h.engine);
	check_watched(r.events);
	if (watched.count != 0 || watched.starts != (long long)stats()->notes_on)
		fail_msg("%s: the watch saw %lld notes start for %u note-ons, %d left sounding", name,
			 watched.starts, stats()->notes_on, watched.count);
	/* promise 1: every note-on met exactly one note-off */
	for (int c = 0; c < 16; c++)
		for (int k = 0; k < 128; k++)
			if (model.ch[c].ons[k] != model.ch[c].offs[k])
				fail_msg("%s: channel %d key %d had %u note-ons and %u note-offs", name,
					 c + 1, k, model.ch[c].ons[k], model.ch[c].offs[k]);
	assert_int_equal(model.violations, 0);
	printf("  %-26s %8ld events, %7ld pitches checked, worst %.3f step, %u stolen, %u shared, %u dropped\n",
	       name, r.events, r.checked_pitches, r.worst_error, stats()->notes_stolen,
	       stats()->notes_shared, stats()->notes_dropped);
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

	s = default_spec(RETUNE_MPE);
	s.control.channel = ENGINE_CONTROL_PLAYING;
	s.control.wrap = true;
	s.control.actions[ENGINE_ACTION_PRESET_NEXT] = (struct engine_binding){ENGINE_BINDING_CC, 80, false};
	s.control.actions[ENGINE_ACTION_ROOT_NEXT] = (struct engine_binding){ENGINE_BINDING_CC, 81, false};
	s.control.actions[ENGINE_ACTION_PANIC] = (struct engine_binding){ENGINE_BINDING_CC, 82, false};
	run_random("mpe, footswitches played", s, 10, each / 2);

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
		cmocka_unit_test(randomized_promises),
	};
	return cmocka_run_group_tests(tests, setup_tunings, NULL);
}
