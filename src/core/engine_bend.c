/*
 * engine_bend: the bend method, and the channel rotation it shares with
 * mpe (engine_mpe.c).
 *
 * One note per channel of the pool, the channel's pitch bend set to the
 * note's retune (plus the player's wheel) before the note-on.  A free
 * channel that already has the right bend is taken first, else the free
 * channel released longest ago, so its release tail rings out undisturbed.
 * With more notes than channels the polyphony policy decides: share a
 * channel whose notes have the same bend and retune, or steal one.  A
 * stolen channel is ended with note-offs and then all-sound-off on that
 * channel alone: its release tail would otherwise glide to the new note's
 * bend.  A click is the lesser evil on stage.
 */
#include <math.h>

#include "engine_method.h"

#define RETUNE_EQUAL_CENTS 1e-6

static bool bend_plan(const struct engine_spec *spec, struct engine_channels *plan,
		      struct core_error *err)
{
	if (spec->output.channels == 0)
		return core_fail(err, "channels", "the output has no channels");
	plan->pool = spec->output.channels;
	plan->global_channel = NO_CHANNEL;
	return true;
}

static void bend_start(struct engine *e)
{
	for (int ch = 0; ch < 16; ch++)
		if (engine_in_pool(e, ch))
			engine_send_rpn(e, ch, RPN_BEND_RANGE, (uint8_t)e->spec.output.bend_range);
}

static int pick_free_channel(const struct engine *e, uint16_t want)
{
	int best = -1;
	bool best_matches = false;
	for (unsigned idle = e->pool & ~e->sounding; idle; idle &= idle - 1) {
		int ch = __builtin_ctz(idle);
		const struct engine_out_channel *o = &e->out[ch];
		bool matches = o->bend_known && o->bend == want;
		if (best < 0 || (matches && !best_matches) ||
		    (matches == best_matches && o->freed_at < e->out[best].freed_at)) {
			best = ch;
			best_matches = matches;
		}
	}
	return best;
}

static int pick_shared_channel(const struct engine *e, int in_ch, double retune,
			       uint16_t want, uint8_t out_key)
{
	if (engine_is_member(e, in_ch))
		return -1; /* per-note bends cannot share */
	for (unsigned busy = e->pool & e->sounding; busy; busy &= busy - 1) {
		int ch = __builtin_ctz(busy);
		const struct engine_out_channel *o = &e->out[ch];
		if (o->source_channel != in_ch ||
		    !o->bend_known || o->bend != want ||
		    fabs(o->retune_cents - retune) > RETUNE_EQUAL_CENTS ||
		    engine_bit(o->keys_on, out_key))
			continue;
		return ch;
	}
	return -1;
}

/* The channel to steal: ringing-only channels first, then the one holding
 * the oldest note. */
static int steal_victim(const struct engine *e)
{
	int best = -1;
	bool best_ringing = false;
	uint32_t best_age = 0;
	for (unsigned busy = e->pool & e->sounding; busy; busy &= busy - 1) {
		int ch = __builtin_ctz(busy);
		bool all_ringing = true;
		uint32_t newest = 0, oldest = UINT32_MAX;
		engine_for_each_note(e, i) {
			const struct engine_note *n = &e->notes[i];
			if (n->out_channel != ch)
				continue;
			if (n->phase == NOTE_DOWN)
				all_ringing = false;
			if (n->started > newest)
				newest = n->started;
			if (n->started < oldest)
				oldest = n->started;
		}
		uint32_t age = all_ringing ? newest : oldest;
		if (best < 0 || (all_ringing && !best_ringing) ||
		    (all_ringing == best_ringing && age < best_age)) {
			best = ch;
			best_ringing = all_ringing;
			best_age = age;
		}
	}
	return best;
}

static int steal_channel(struct engine *e)
{
	int victim = steal_victim(e);
	if (victim < 0)
		return -1;
	engine_for_each_note(e, i) {
		struct engine_note *n = &e->notes[i];
		if (n->out_channel != victim)
			continue;
		if (n->phase == NOTE_DOWN)
			engine_send_note_off(e, n, 64);
		engine_end_note(e, i);
	}
	engine_send_cc(e, victim, 120, 0, true);
	e->stats.notes_stolen++;
	engine_notice(e, NOTICE_NOTE_STOLEN);
	return victim;
}

bool engine_rotate_place(struct engine *e, int in_ch, int key, const struct retune_key *rk,
			 struct engine_place *at)
{
	(void)key;
	double retune = rk->cents;
	uint16_t want = engine_bend_value(e, retune + engine_extra_cents(e, in_ch),
					  e->spec.output.bend_range);
	enum polyphony_policy policy = e->spec.output.polyphony;
	int ch = pick_free_channel(e, want);
	if (ch < 0 && policy != POLY_STEAL) {
		ch = pick_shared_channel(e, in_ch, retune, want, rk->out_key);
		if (ch >= 0)
			e->stats.notes_shared++;
	}
	if (ch < 0 && policy != POLY_SHARE)
		ch = steal_channel(e);
	if (ch < 0)
		return false;
	struct engine_out_channel *o = &e->out[ch];
	if (o->note_count == 0) {
		o->source_channel = (uint8_t)in_ch;
		o->retune_cents = retune;
	}
	engine_sync_channel(e, ch, in_ch);
	engine_send_bend(e, ch, want);
	at->channel = ch;
	at->key = rk->out_key;
	return true;
}

const struct engine_method engine_method_bend = {
	.id = RETUNE_BEND,
	.name = "bend",
	.plan = bend_plan,
	.start = bend_start,
	.place = engine_rotate_place,
	.tuning_changed = NULL,
	.bend_carries_retune = true,
	.pressure_per_channel = false,
};
