/*
 * engine_mts: the mts method (MIDI Tuning Standard).
 *
 * Input channel n (in order) plays on the n-th listed output channel,
 * never two on one: a channel holds one wheel, one program and one set of
 * controllers, and a second player's would change the first one's
 * sounding notes.  Each key is tuned with a real-time single-note tuning
 * change just before its note-on when the synth does not hold that tuning
 * already; a key that sounds on any channel is never retuned (another key
 * nearby is used instead).  The tuning program is selected with RPN 3
 * (and RPN 4 for a bank); optionally a bulk dump of the whole table goes
 * out at start and on every tuning change.  The bend carries only the
 * player's wheel.
 */
#include <string.h>

#include "engine_method.h"
#include "mts.h"

#define MTS_SEARCH_SPAN 6

static bool mts_plan(const struct engine_spec *spec, struct engine_channels *plan,
		     struct core_error *err)
{
	const struct engine_output_spec *o = &spec->output;
	if (o->channels == 0)
		return core_fail(err, "channels", "the output has no channels");
	int listed[16], listed_count = 0, needed = 0, index = 0;
	for (int ch = 0; ch < 16; ch++) {
		if ((o->channels >> ch) & 1)
			listed[listed_count++] = ch;
		needed += (spec->input.channels >> ch) & 1;
	}
	if (needed > listed_count)
		return core_fail(err, "channels",
				 "method mts plays each retuned input channel on its own output channel: %d input channel%s, but only %d output channel%s",
				 needed, needed == 1 ? "" : "s", listed_count, listed_count == 1 ? "" : "s");
	plan->pool = 0;
	plan->global_channel = NO_CHANNEL;
	for (int ch = 0; ch < 16; ch++) {
		if (!((spec->input.channels >> ch) & 1))
			continue;
		plan->route[ch] = (uint8_t)listed[index++];
		plan->pool |= (uint16_t)(1u << plan->route[ch]);
	}
	return true;
}

/* Output channels on which `key` sounds now. */
static int key_users(const struct engine *e, int key)
{
	int users = 0;
	for (int ch = 0; ch < 16; ch++)
		users += engine_bit(e->out[ch].keys_on, key);
	return users;
}

static void send_sysex(struct engine *e, size_t length)
{
	struct midi_msg m = {0};
	m.status = MIDI_SYSEX;
	m.sysex = e->sysex;
	m.sysex_length = (uint16_t)length;
	engine_emit(e, &m);
}

static void send_bulk(struct engine *e)
{
	uint8_t words[128][3];
	bool claimed[128] = {false};
	for (int k = 0; k < 128; k++) {
		words[k][0] = (uint8_t)k;
		words[k][1] = words[k][2] = 0;
	}
	for (int key = 0; key < 128; key++) {
		const struct retune_key *rk = &e->table.keys[key];
		if (!rk->sounding)
			continue;
		int target = e->spec.output.mts_key == MTS_KEY_OWN ? key : rk->out_key;
		if (claimed[target])
			continue;
		claimed[target] = true;
		memcpy(words[target], rk->mts, 3);
	}
	/* a key that sounds keeps its tuning: synths may apply a dump at once */
	for (int k = 0; k < 128; k++)
		if (key_users(e, k) > 0 && e->mts.held_known[k])
			memcpy(words[k], e->mts.held[k], 3);
	send_sysex(e, mts_bulk_dump(e->spec.output.mts_device, e->spec.output.mts_program,
				    e->tunings->presets[e->preset].name,
				    (const uint8_t (*)[3])words, e->sysex, sizeof e->sysex));
	for (int k = 0; k < 128; k++) {
		memcpy(e->mts.held[k], words[k], 3);
		e->mts.held_known[k] = true;
	}
}

static void mts_start(struct engine *e)
{
	const struct engine_output_spec *o = &e->spec.output;
	for (int ch = 0; ch < 16; ch++) {
		if (!engine_in_pool(e, ch))
			continue;
		engine_send_rpn(e, ch, RPN_BEND_RANGE, (uint8_t)o->bend_range);
		/* a bank is stored until the program select that follows it */
		if (o->mts_bank >= 0)
			engine_send_rpn(e, ch, RPN_TUNING_BANK, (uint8_t)o->mts_bank);
		engine_send_rpn(e, ch, RPN_TUNING_PROGRAM, o->mts_program);
	}
	if (o->mts_bulk)
		send_bulk(e);
}

static void mts_tuning_changed(struct engine *e)
{
	if (e->spec.output.mts_bulk)
		send_bulk(e);
}

/* The key the note goes out on, tuned first if the synth does not hold
 * its word: a key holding it already, else a free one nearby; -1 if none. */
static int place_on_key(struct engine *e, int ch, int key, const struct retune_key *rk)
{
	int preferred = e->spec.output.mts_key == MTS_KEY_OWN ? key : rk->out_key;
	for (int pass = 0; pass < 2; pass++) {
		for (int step = 0; step <= 2 * MTS_SEARCH_SPAN; step++) {
			int k = preferred + (step & 1 ? (step + 1) / 2 : -(step / 2));
			if (k < 0 || k > 127 || engine_bit(e->out[ch].keys_on, k))
				continue;
			bool holds = e->mts.held_known[k] && memcmp(e->mts.held[k], rk->mts, 3) == 0;
			if (pass == 0 && !holds)
				continue;
			if (!holds) {
				/* retuning a key that sounds elsewhere would bend that note */
				if (key_users(e, k) > 0)
					continue;
				uint8_t kk = (uint8_t)k;
				send_sysex(e, mts_single_note_change(e->spec.output.mts_device,
								     e->spec.output.mts_program, 1, &kk,
								     (const uint8_t (*)[3])rk->mts,
								     e->sysex, sizeof e->sysex));
				memcpy(e->mts.held[k], rk->mts, 3);
				e->mts.held_known[k] = true;
				e->stats.tuning_changes++;
			}
			return k;
		}
	}
	return -1;
}

static bool mts_place(struct engine *e, int in_ch, int key, const struct retune_key *rk,
		      struct engine_place *at)
{
	int ch = e->route[in_ch];
	int out_key = place_on_key(e, ch, key, rk);
	if (out_key < 0)
		return false;
	engine_sync_channel(e, ch, in_ch);
	engine_send_bend(e, ch, engine_bend_value(e, engine_extra_cents(e, in_ch),
						  e->spec.output.bend_range));
	if (e->out[ch].note_count == 0)
		e->out[ch].source_channel = (uint8_t)in_ch;
	at->channel = ch;
	at->key = out_key;
	return true;
}

const struct engine_method engine_method_mts = {
	.id = RETUNE_MTS,
	.name = "mts",
	.plan = mts_plan,
	.start = mts_start,
	.place = mts_place,
	.tuning_changed = mts_tuning_changed,
	.bend_carries_retune = false,
	.pressure_per_channel = false,
};
