/*
 * engine: the retuning stage (model and promises in engine.h).
 *
 * Pedals are forwarded to the synth, so the synth does its own sustain and
 * sostenuto, and every note-off is sent the moment the key goes up.  What
 * the engine adds is bookkeeping: a note released under a pedal stays
 * "ringing" and keeps its channel (and, for MTS, its key) until the pedal
 * lets it go, so no other note is bent or retuned underneath it.
 *
 * A stolen channel is ended with note-offs and then all-sound-off on that
 * channel alone: its release tail would otherwise glide to the new note's
 * bend.  A click is the lesser evil on stage.
 */
#include "latticed/engine.h"

#include <math.h>
#include <string.h>

#include "latticed/mts.h"
#include "latticed/pitch.h"
#include "latticed/rpn.h"

#define NO_NOTE (-1)
#define MTS_SEARCH_SPAN 6
#define RETUNE_EQUAL_CENTS 1e-6

static bool bit_get(const uint8_t *bits, int i)
{
	return (bits[i >> 3] >> (i & 7)) & 1;
}

static void bit_put(uint8_t *bits, int i, bool on)
{
	if (on)
		bits[i >> 3] = (uint8_t)(bits[i >> 3] | (1u << (i & 7)));
	else
		bits[i >> 3] = (uint8_t)(bits[i >> 3] & ~(1u << (i & 7)));
}

const char *retune_method_name(enum retune_method method)
{
	switch (method) {
	case RETUNE_BEND:
		return "bend";
	case RETUNE_MTS:
		return "mts";
	case RETUNE_MPE:
		return "mpe";
	}
	return "?";
}

/* ---- emitting ----------------------------------------------------------- */

static void emit(struct engine *e, const struct midi_msg *m)
{
	e->stats.messages_out++;
	e->emit(e->context, m);
}

static void emit_for(void *engine, const struct midi_msg *m)
{
	emit(engine, m);
}

static void emit3(struct engine *e, uint8_t status, uint8_t d1, uint8_t d2)
{
	struct midi_msg m = {0};
	m.status = status;
	m.data[0] = d1 & 0x7F;
	m.data[1] = d2 & 0x7F;
	emit(e, &m);
}

static void notice(struct engine *e, uint32_t flag)
{
	e->notices |= flag;
}

/* A controller to an output channel, remembered as what the synth has. */
static void send_cc(struct engine *e, int ch, int cc, uint8_t value, bool force)
{
	struct engine_out_channel *o = &e->out[ch];
	if (!force && bit_get(o->cc_known, cc) && o->cc[cc] == value)
		return;
	emit3(e, (uint8_t)(MIDI_CONTROL | ch), (uint8_t)cc, value);
	o->cc[cc] = value;
	bit_put(o->cc_known, cc, true);
}

static void send_rpn(struct engine *e, int ch, enum rpn_param param, uint8_t value)
{
	struct midi_msg seq[RPN_SEQUENCE_LENGTH];
	rpn_build((uint8_t)ch, param, value, seq);
	for (int i = 0; i < RPN_SEQUENCE_LENGTH; i++)
		emit(e, &seq[i]);
	/* the data-entry and selection controllers now hold known values */
	struct engine_out_channel *o = &e->out[ch];
	o->cc[6] = value;
	o->cc[100] = o->cc[101] = 127;
	bit_put(o->cc_known, 6, true);
	bit_put(o->cc_known, 100, true);
	bit_put(o->cc_known, 101, true);
}

static void send_program(struct engine *e, int ch, uint8_t program)
{
	struct engine_out_channel *o = &e->out[ch];
	if (o->program_known && o->program == program)
		return;
	struct midi_msg m = {0};
	m.status = (uint8_t)(MIDI_PROGRAM | ch);
	m.data[0] = program & 0x7F;
	emit(e, &m);
	o->program = program;
	o->program_known = true;
}

static void send_pressure(struct engine *e, int ch, uint8_t value)
{
	struct engine_out_channel *o = &e->out[ch];
	if (o->pressure_known && o->pressure == value)
		return;
	struct midi_msg m = {0};
	m.status = (uint8_t)(MIDI_CHANNEL_PRESSURE | ch);
	m.data[0] = value & 0x7F;
	emit(e, &m);
	o->pressure = value;
	o->pressure_known = true;
}

static void send_bend(struct engine *e, int ch, uint16_t value)
{
	struct engine_out_channel *o = &e->out[ch];
	if (o->bend_known && o->bend == value)
		return;
	emit3(e, (uint8_t)(MIDI_PITCH_BEND | ch), (uint8_t)(value & 0x7F),
	      (uint8_t)(value >> 7));
	o->bend = value;
	o->bend_known = true;
}

/* ---- channel roles ------------------------------------------------------ */

static uint8_t input_master(const struct engine *e)
{
	return e->spec.input.mpe_zone == MPE_ZONE_LOWER ? 0 : 15;
}

static bool is_retuned(const struct engine *e, int ch)
{
	return (e->spec.input.channels >> ch) & 1;
}

static bool is_mpe_member(const struct engine *e, int ch)
{
	return e->spec.input.mpe && is_retuned(e, ch) && ch != input_master(e);
}

/* The input channel whose wheel and controllers apply to notes of ch. */
static int global_of(const struct engine *e, int ch)
{
	return is_mpe_member(e, ch) ? input_master(e) : ch;
}

/* Controllers that carry the RPN/NRPN machinery or channel modes. */
static bool is_parameter_cc(int cc)
{
	return cc == 6 || cc == 38 || (cc >= 96 && cc <= 101);
}

static double in_bend_cents(const struct engine_in_channel *c)
{
	return ((double)c->bend - PITCH_BEND_CENTRE) / 8192.0 * c->range_cents;
}

/* Cents an output channel's bend adds to notes of input channel ch, beyond
 * their retune: the player's wheel (except in MPE, where it goes to the
 * master channel) and an MPE controller's per-note bend. */
static double extra_cents(const struct engine *e, int ch)
{
	double cents = 0.0;
	if (e->spec.output.method != RETUNE_MPE)
		cents += in_bend_cents(&e->in[global_of(e, ch)]);
	if (is_mpe_member(e, ch))
		cents += in_bend_cents(&e->in[ch]);
	return cents;
}

static uint16_t bend_for(struct engine *e, double cents, int range)
{
	struct bend b = pitch_bend_for_cents(cents, range, e->spec.output.bend_played);
	if (b.clamped) {
		e->stats.bends_clamped++;
		notice(e, NOTICE_BEND_CLAMPED);
	}
	return b.value;
}

static int master_range(const struct engine *e)
{
	int semis = (int)ceil(e->spec.input.wheel_range_cents / 100.0 - 1e-9);
	return semis < 2 ? 2 : (semis > 96 ? 96 : semis);
}

/* Output channels this engine writes to (pool, MPE master, MTS channels). */
static bool output_uses(const struct engine *e, int ch)
{
	if (e->out[ch].in_pool)
		return true;
	return e->spec.output.method == RETUNE_MPE && ch == e->master_channel;
}

/* ---- the tuning table ---------------------------------------------------- */

static const struct engine_preset *current_preset(const struct engine *e)
{
	return &e->tunings->presets[e->preset];
}

static int mts_key_users(const struct engine *e, int key)
{
	int users = 0;
	for (int ch = 0; ch < 16; ch++)
		users += bit_get(e->out[ch].keys_on, key);
	return users;
}

static void mts_send_bulk(struct engine *e)
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
		if (mts_key_users(e, k) > 0 && e->mts_held_known[k])
			memcpy(words[k], e->mts_held[k], 3);
	size_t n = mts_bulk_dump(e->spec.output.mts_device, e->spec.output.mts_program,
				 current_preset(e)->name, (const uint8_t (*)[3])words,
				 e->sysex, sizeof e->sysex);
	struct midi_msg m = {0};
	m.status = MIDI_SYSEX;
	m.sysex = e->sysex;
	m.sysex_length = (uint16_t)n;
	emit(e, &m);
	for (int k = 0; k < 128; k++) {
		memcpy(e->mts_held[k], words[k], 3);
		e->mts_held_known[k] = true;
	}
}

static void rebuild_table(struct engine *e)
{
	const struct engine_preset *p = current_preset(e);
	double shift = e->spec.output.cents_offset;
	if (e->root_slot > 0)
		shift += retune_root_shift(p->lattice, e->root_slot - 1);
	retune_table_build(&e->table, p->keymap, shift);
	int most = 0;
	for (int i = 0; i < e->tunings->count; i++)
		if (e->tunings->presets[i].lattice->tone_count > most)
			most = e->tunings->presets[i].lattice->tone_count;
	e->reserved_root_keys = most + 1;
}

static void tuning_changed(struct engine *e)
{
	rebuild_table(e);
	if (e->spec.output.method == RETUNE_MTS && e->spec.output.mts_bulk)
		mts_send_bulk(e);
}

bool engine_select_preset(struct engine *e, int preset)
{
	if (preset < 0 || preset >= e->tunings->count)
		return false;
	e->preset = preset;
	e->root_slot = 0;
	tuning_changed(e);
	return true;
}

bool engine_select_root(struct engine *e, int slot)
{
	if (slot < 0 || slot > current_preset(e)->lattice->tone_count)
		return false;
	e->root_slot = slot;
	tuning_changed(e);
	return true;
}

void engine_replace_tunings(struct engine *e, const struct engine_tunings *tunings)
{
	int keep = 0;
	for (int i = 0; i < tunings->count; i++)
		if (strcmp(tunings->presets[i].name, current_preset(e)->name) == 0)
			keep = i;
	e->tunings = tunings;
	e->preset = keep;
	e->root_slot = 0;
	tuning_changed(e);
}

/* ---- set-up --------------------------------------------------------------- */

bool engine_init(struct engine *e, const struct engine_spec *spec,
		 const struct engine_tunings *tunings, engine_emit_fn emit_fn,
		 void *context, struct core_error *err)
{
	const struct engine_output_spec *o = &spec->output;
	if (!tunings || tunings->count < 1 || tunings->count > ENGINE_MAX_PRESETS)
		return core_fail(err, "presets", "expected 1 to %d presets", ENGINE_MAX_PRESETS);
	if (!emit_fn)
		return core_fail(err, "", "no output callback");
	if (o->bend_range < 1 || o->bend_range > 96)
		return core_fail(err, "bend_range",
				 "bend_range is %d, expected whole semitones from 1 to 96", o->bend_range);
	if (!(o->bend_played > 0.5 && o->bend_played <= 2.0))
		return core_fail(err, "bend_factor",
				 "the bend factor must be between 0.5 and 2 (e.g. 127/128)");
	if (o->method == RETUNE_MPE && (o->mpe_members < 1 || o->mpe_members > 15))
		return core_fail(err, "mpe_members",
				 "mpe_members is %d, expected 1 to 15", o->mpe_members);
	if (o->method != RETUNE_MPE && o->channels == 0)
		return core_fail(err, "channels", "the output has no channels");
	if (spec->input.channels == 0)
		return core_fail(err, "channels", "no input channel is retuned");
	int cc = spec->control.channel;
	if (cc >= 0 && ((spec->input.channels >> cc) & 1))
		return core_fail(err, "channel",
				 "the control channel %d is also a retuned input channel", cc + 1);

	memset(e, 0, sizeof *e);
	e->spec = *spec;
	e->tunings = tunings;
	e->emit = emit_fn;
	e->context = context;
	for (int s = 0; s < ENGINE_MAX_SOURCES; s++)
		for (int ch = 0; ch < 16; ch++)
			for (int k = 0; k < 128; k++)
				e->key_down[s][ch][k] = NO_NOTE;

	if (o->method == RETUNE_MPE) {
		bool lower = o->mpe_zone == MPE_ZONE_LOWER;
		e->master_channel = lower ? 0 : 15;
		for (int i = 1; i <= o->mpe_members; i++)
			e->out[lower ? i : 15 - i].in_pool = true;
	} else if (o->method == RETUNE_BEND) {
		for (int ch = 0; ch < 16; ch++)
			e->out[ch].in_pool = (o->channels >> ch) & 1;
	} else {
		/* MTS: input channel n (in order) plays on the n-th listed
		 * channel.  Never two on one: a channel holds one wheel, one
		 * program and one set of controllers, and a second player's would
		 * change the first one's sounding notes. */
		int pool[16], pool_count = 0, needed = 0, index = 0;
		for (int ch = 0; ch < 16; ch++) {
			if ((o->channels >> ch) & 1)
				pool[pool_count++] = ch;
			needed += is_retuned(e, ch);
		}
		if (needed > pool_count)
			return core_fail(err, "channels",
					 "method mts plays each retuned input channel on its own output channel: %d input channel%s, but only %d output channel%s",
					 needed, needed == 1 ? "" : "s", pool_count, pool_count == 1 ? "" : "s");
		for (int ch = 0; ch < 16; ch++) {
			if (!is_retuned(e, ch))
				continue;
			e->mts_channel_of[ch] = (uint8_t)pool[index++];
			e->out[e->mts_channel_of[ch]].in_pool = true;
		}
	}
	for (int ch = 0; ch < 16; ch++) {
		e->in[ch].bend = PITCH_BEND_CENTRE;
		e->in[ch].param_msb = e->in[ch].param_lsb = 127;
		e->in[ch].range_cents = is_mpe_member(e, ch)
			? spec->input.mpe_bend_range * 100.0
			: spec->input.wheel_range_cents;
	}
	rebuild_table(e);
	return true;
}

static void forget_synth_state(struct engine *e)
{
	for (int ch = 0; ch < 16; ch++) {
		struct engine_out_channel *o = &e->out[ch];
		o->bend_known = o->program_known = o->pressure_known = false;
		memset(o->cc_known, 0, sizeof o->cc_known);
	}
	memset(e->mts_held_known, 0, sizeof e->mts_held_known);
}

void engine_start(struct engine *e)
{
	const struct engine_output_spec *o = &e->spec.output;
	forget_synth_state(e);
	switch (o->method) {
	case RETUNE_BEND:
		for (int ch = 0; ch < 16; ch++)
			if (e->out[ch].in_pool)
				send_rpn(e, ch, RPN_BEND_RANGE, (uint8_t)o->bend_range);
		break;
	case RETUNE_MPE:
		/* the MCM resets ranges to 48/2 on the receiver, so RPN 0 follows it */
		send_rpn(e, e->master_channel, RPN_MPE_CONFIGURATION, (uint8_t)o->mpe_members);
		send_rpn(e, e->master_channel, RPN_BEND_RANGE, (uint8_t)master_range(e));
		for (int ch = 0; ch < 16; ch++)
			if (e->out[ch].in_pool)
				send_rpn(e, ch, RPN_BEND_RANGE, (uint8_t)o->bend_range);
		break;
	case RETUNE_MTS:
		for (int ch = 0; ch < 16; ch++) {
			if (!e->out[ch].in_pool)
				continue;
			send_rpn(e, ch, RPN_BEND_RANGE, (uint8_t)o->bend_range);
			/* a bank is stored until the program select that follows it */
			if (o->mts_bank >= 0)
				send_rpn(e, ch, RPN_TUNING_BANK, (uint8_t)o->mts_bank);
			send_rpn(e, ch, RPN_TUNING_PROGRAM, o->mts_program);
		}
		if (o->mts_bulk)
			mts_send_bulk(e);
		break;
	}
}

/* ---- notes ---------------------------------------------------------------- */

static int alloc_note(struct engine *e)
{
	for (int i = 0; i < ENGINE_MAX_NOTES; i++)
		if (e->notes[i].phase == NOTE_FREE)
			return i;
	return NO_NOTE;
}

/* The note leaves its channel (and key) for good. */
static void end_note(struct engine *e, int index)
{
	struct engine_note *n = &e->notes[index];
	struct engine_out_channel *o = &e->out[n->out_channel];
	if (n->phase == NOTE_DOWN &&
	    e->key_down[n->source][n->in_channel][n->in_key] == index)
		e->key_down[n->source][n->in_channel][n->in_key] = NO_NOTE;
	bit_put(o->keys_on, n->out_key, false);
	if (--o->note_count == 0)
		o->freed_at = ++e->serial;
	n->phase = NOTE_FREE;
	e->note_count--;
}

static void send_note_off(struct engine *e, const struct engine_note *n, uint8_t velocity)
{
	emit3(e, (uint8_t)(MIDI_NOTE_OFF | n->out_channel), n->out_key, velocity);
}

/* Key up: the note-off goes out now; a pedal may keep the note ringing. */
static void release_note(struct engine *e, int index, uint8_t velocity)
{
	struct engine_note *n = &e->notes[index];
	const struct engine_in_channel *g = &e->in[global_of(e, n->in_channel)];
	send_note_off(e, n, velocity);
	e->key_down[n->source][n->in_channel][n->in_key] = NO_NOTE;
	if (g->sustain || (g->sostenuto && n->sostenuto_latched)) {
		n->phase = NOTE_RINGING;
		return;
	}
	end_note(e, index);
}

/* What a controller is when nobody has set it: the reset values of
 * General MIDI receivers (volume 100, pan and balance centred, expression
 * full, everything else 0; common practice, GM / RP-015). */
static uint8_t cc_default(int cc)
{
	switch (cc) {
	case 7:
		return 100;
	case 8:
	case 10:
		return 64;
	case 11:
		return 127;
	default:
		return 0;
	}
}

/*
 * Brings an output channel up to what the notes of input channel in_ch
 * should hear, just before one starts.  A channel may have served another
 * input channel before (or been stolen): whatever it was told then and the
 * new owner never set goes back to its default, so no pedal or controller
 * of the previous owner lingers.
 */
static void sync_channel(struct engine *e, int ch, int in_ch)
{
	const struct engine_in_channel *g = &e->in[global_of(e, in_ch)];
	const struct engine_in_channel *m = is_mpe_member(e, in_ch) ? &e->in[in_ch] : NULL;
	struct engine_out_channel *o = &e->out[ch];
	bool mpe_out = e->spec.output.method == RETUNE_MPE;
	/* MPE output: the global state lives on the master channel */
	const struct engine_in_channel *global = mpe_out ? NULL : g;

	if (global) {
		/* bank select before the program change that applies it */
		bool bank_changed = false;
		for (int cc = 0; cc <= 32; cc += 32) {
			if (bit_get(global->cc_set, cc) &&
			    !(bit_get(o->cc_known, cc) && o->cc[cc] == global->cc[cc])) {
				send_cc(e, ch, cc, global->cc[cc], false);
				bank_changed = true;
			}
		}
		if (global->program_set) {
			if (bank_changed)
				o->program_known = false;
			send_program(e, ch, global->program);
		}
	}
	for (int cc = 1; cc < 120; cc++) {
		if (cc == 32 || is_parameter_cc(cc))
			continue;
		if (m && bit_get(m->cc_set, cc))
			send_cc(e, ch, cc, m->cc[cc], false);
		else if (global && bit_get(global->cc_set, cc))
			send_cc(e, ch, cc, global->cc[cc], false);
		else if (bit_get(o->cc_known, cc))
			send_cc(e, ch, cc, cc_default(cc), false);
	}
	if (m && m->pressure_set)
		send_pressure(e, ch, m->pressure);
	else if (global && global->pressure_set)
		send_pressure(e, ch, global->pressure);
	else if (o->pressure_known)
		send_pressure(e, ch, 0);
}

static int pick_free_channel(const struct engine *e, uint16_t want)
{
	int best = -1;
	bool best_matches = false;
	for (int ch = 0; ch < 16; ch++) {
		const struct engine_out_channel *o = &e->out[ch];
		if (!o->in_pool || o->note_count > 0)
			continue;
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
	if (is_mpe_member(e, in_ch))
		return -1; /* per-note bends cannot share */
	for (int ch = 0; ch < 16; ch++) {
		const struct engine_out_channel *o = &e->out[ch];
		if (!o->in_pool || o->note_count == 0 || o->source_channel != in_ch ||
		    !o->bend_known || o->bend != want ||
		    fabs(o->retune_cents - retune) > RETUNE_EQUAL_CENTS ||
		    bit_get(o->keys_on, out_key))
			continue;
		return ch;
	}
	return -1;
}

/* Ends the notes of one channel: ringing-only channels first, then the
 * channel holding the oldest note. */
static int steal_channel(struct engine *e)
{
	int best = -1;
	bool best_ringing = false;
	uint32_t best_age = 0;
	for (int ch = 0; ch < 16; ch++) {
		const struct engine_out_channel *o = &e->out[ch];
		if (!o->in_pool || o->note_count == 0)
			continue;
		bool all_ringing = true;
		uint32_t newest = 0, oldest = UINT32_MAX;
		for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
			const struct engine_note *n = &e->notes[i];
			if (n->phase == NOTE_FREE || n->out_channel != ch)
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
	if (best < 0)
		return -1;
	for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
		struct engine_note *n = &e->notes[i];
		if (n->phase == NOTE_FREE || n->out_channel != best)
			continue;
		if (n->phase == NOTE_DOWN)
			send_note_off(e, n, 64);
		end_note(e, i);
	}
	send_cc(e, best, 120, 0, true);
	e->stats.notes_stolen++;
	notice(e, NOTICE_NOTE_STOLEN);
	return best;
}

static int place_on_channel(struct engine *e, int in_ch, const struct retune_key *rk,
			    double *retune_out)
{
	double retune = rk->cents;
	uint16_t want = bend_for(e, retune + extra_cents(e, in_ch), e->spec.output.bend_range);
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
		return -1;
	struct engine_out_channel *o = &e->out[ch];
	if (o->note_count == 0) {
		o->source_channel = (uint8_t)in_ch;
		o->retune_cents = retune;
	}
	sync_channel(e, ch, in_ch);
	send_bend(e, ch, want);
	*retune_out = retune;
	return ch;
}

/* MTS: the key the note goes out on, tuned if the synth does not hold it. */
static int place_on_key(struct engine *e, int ch, int key, const struct retune_key *rk)
{
	int preferred = e->spec.output.mts_key == MTS_KEY_OWN ? key : rk->out_key;
	for (int pass = 0; pass < 2; pass++) {
		for (int step = 0; step <= 2 * MTS_SEARCH_SPAN; step++) {
			int k = preferred + (step & 1 ? (step + 1) / 2 : -(step / 2));
			if (k < 0 || k > 127 || bit_get(e->out[ch].keys_on, k))
				continue;
			bool holds = e->mts_held_known[k] && memcmp(e->mts_held[k], rk->mts, 3) == 0;
			if (pass == 0 && !holds)
				continue;
			if (!holds) {
				/* retuning a key that sounds elsewhere would bend that note */
				if (mts_key_users(e, k) > 0)
					continue;
				uint8_t kk = (uint8_t)k;
				size_t n = mts_single_note_change(e->spec.output.mts_device,
								  e->spec.output.mts_program, 1, &kk,
								  (const uint8_t (*)[3])rk->mts,
								  e->sysex, sizeof e->sysex);
				struct midi_msg m = {0};
				m.status = MIDI_SYSEX;
				m.sysex = e->sysex;
				m.sysex_length = (uint16_t)n;
				emit(e, &m);
				memcpy(e->mts_held[k], rk->mts, 3);
				e->mts_held_known[k] = true;
				e->stats.tuning_changes++;
			}
			return k;
		}
	}
	return -1;
}

static bool handle_reserved_key(struct engine *e, int key)
{
	const struct engine_control_spec *c = &e->spec.control;
	if (c->preset_keys >= 0 && key >= c->preset_keys &&
	    key < c->preset_keys + e->tunings->count) {
		engine_select_preset(e, key - c->preset_keys);
		return true;
	}
	if (c->root_keys >= 0 && key >= c->root_keys &&
	    key < c->root_keys + e->reserved_root_keys) {
		engine_select_root(e, key - c->root_keys);
		return true;
	}
	return false;
}

static void note_on(struct engine *e, uint8_t source, int ch, int key, uint8_t velocity)
{
	if (handle_reserved_key(e, key))
		return;
	int previous = e->key_down[source][ch][key];
	if (previous != NO_NOTE)
		release_note(e, previous, 64); /* a second note-on ends the first */
	const struct retune_key *rk = &e->table.keys[key];
	if (!rk->sounding) {
		e->stats.silent_keys++;
		return;
	}
	int index = alloc_note(e);
	if (index == NO_NOTE) {
		e->stats.notes_dropped++;
		notice(e, NOTICE_NOTES_FULL);
		return;
	}
	int out_ch, out_key;
	double retune = 0.0;
	if (e->spec.output.method == RETUNE_MTS) {
		out_ch = e->mts_channel_of[ch];
		out_key = place_on_key(e, out_ch, key, rk);
		if (out_key >= 0) {
			sync_channel(e, out_ch, ch);
			send_bend(e, out_ch, bend_for(e, extra_cents(e, ch), e->spec.output.bend_range));
			if (e->out[out_ch].note_count == 0)
				e->out[out_ch].source_channel = (uint8_t)ch;
		}
	} else {
		out_ch = place_on_channel(e, ch, rk, &retune);
		out_key = rk->out_key;
	}
	if (out_ch < 0 || out_key < 0) {
		e->stats.notes_dropped++;
		notice(e, NOTICE_NOTE_DROPPED);
		return;
	}
	emit3(e, (uint8_t)(MIDI_NOTE_ON | out_ch), (uint8_t)out_key, velocity);
	struct engine_note *n = &e->notes[index];
	memset(n, 0, sizeof *n);
	n->phase = NOTE_DOWN;
	n->source = source;
	n->in_channel = (uint8_t)ch;
	n->in_key = (uint8_t)key;
	n->out_channel = (uint8_t)out_ch;
	n->out_key = (uint8_t)out_key;
	n->started = ++e->serial;
	n->retune_cents = retune;
	n->note = rk->note;
	n->preset = (int16_t)e->preset;
	n->tone = rk->tone;
	n->period = rk->period;
	e->note_count++;
	e->out[out_ch].note_count++;
	bit_put(e->out[out_ch].keys_on, out_key, true);
	e->key_down[source][ch][key] = (int16_t)index;
	e->stats.notes_on++;
}

static void note_off(struct engine *e, uint8_t source, int ch, int key, uint8_t velocity)
{
	int index = e->key_down[source][ch][key];
	if (index == NO_NOTE)
		return; /* silent, reserved, stolen or silenced by a panic */
	release_note(e, index, velocity);
}

/* Pedal let go (or a ringing note's latch released): end what it held. */
static void settle_ringing(struct engine *e, int global_ch)
{
	const struct engine_in_channel *g = &e->in[global_ch];
	for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
		struct engine_note *n = &e->notes[i];
		if (n->phase != NOTE_RINGING || global_of(e, n->in_channel) != global_ch)
			continue;
		if (g->sustain || (g->sostenuto && n->sostenuto_latched))
			continue;
		end_note(e, i);
	}
}

/* ---- controllers and the rest --------------------------------------------- */

/* Sends fn to every output channel that sounds notes of input channel ch
 * (the global channel's notes, or one member's). */
static void for_sounding_channels(struct engine *e, int ch, bool member,
				  void (*fn)(struct engine *, int out_ch, int a, int b),
				  int a, int b)
{
	for (int out_ch = 0; out_ch < 16; out_ch++) {
		const struct engine_out_channel *o = &e->out[out_ch];
		if (!o->in_pool || o->note_count == 0)
			continue;
		bool ours = member ? o->source_channel == ch
				   : global_of(e, o->source_channel) == ch;
		if (e->spec.output.method == RETUNE_MTS) {
			/* MTS channels mix notes: check the notes themselves */
			ours = false;
			for (int i = 0; i < ENGINE_MAX_NOTES && !ours; i++) {
				const struct engine_note *n = &e->notes[i];
				ours = n->phase != NOTE_FREE && n->out_channel == out_ch &&
				       (member ? n->in_channel == ch : global_of(e, n->in_channel) == ch);
			}
		}
		if (ours)
			fn(e, out_ch, a, b);
	}
}

static void do_cc(struct engine *e, int out_ch, int cc, int value)
{
	send_cc(e, out_ch, cc, (uint8_t)value, false);
}

static void do_pressure(struct engine *e, int out_ch, int value, int unused)
{
	(void)unused;
	send_pressure(e, out_ch, (uint8_t)value);
}

static void do_program(struct engine *e, int out_ch, int value, int unused)
{
	(void)unused;
	send_program(e, out_ch, (uint8_t)value);
}

static void do_rebend(struct engine *e, int out_ch, int unused_a, int unused_b)
{
	(void)unused_a;
	(void)unused_b;
	const struct engine_out_channel *o = &e->out[out_ch];
	double retune = e->spec.output.method == RETUNE_MTS ? 0.0 : o->retune_cents;
	send_bend(e, out_ch, bend_for(e, retune + extra_cents(e, o->source_channel),
				      e->spec.output.bend_range));
}

static void broadcast_cc(struct engine *e, int cc, int value)
{
	if (e->spec.output.method == RETUNE_MPE) {
		send_cc(e, e->master_channel, cc, (uint8_t)value, true);
		return;
	}
	for (int ch = 0; ch < 16; ch++)
		if (e->out[ch].in_pool)
			send_cc(e, ch, cc, (uint8_t)value, true);
}

/* RPN 0 from the player sets what its wheel spans; NRPNs are the synth's
 * business and go to every channel; other RPNs would undo our set-up. */
static void parameter_cc(struct engine *e, int ch, int cc, int value)
{
	struct engine_in_channel *c = &e->in[ch];
	switch (cc) {
	case 101:
	case 100:
		c->param_is_nrpn = false;
		if (cc == 101)
			c->param_msb = (uint8_t)value;
		else
			c->param_lsb = (uint8_t)value;
		return;
	case 99:
	case 98:
		c->param_is_nrpn = true;
		if (cc == 99)
			c->param_msb = (uint8_t)value;
		else
			c->param_lsb = (uint8_t)value;
		broadcast_cc(e, cc, value);
		return;
	default:
		break;
	}
	if (c->param_is_nrpn) {
		broadcast_cc(e, cc, value);
		return;
	}
	if (c->param_msb != 0 || c->param_lsb != 0)
		return;
	if (cc == 6)
		c->data_msb = (uint8_t)value, c->data_lsb = 0;
	else if (cc == 38)
		c->data_lsb = (uint8_t)value;
	else
		return;
	c->range_cents = c->data_msb * 100.0 + c->data_lsb;
	for_sounding_channels(e, ch, is_mpe_member(e, ch), do_rebend, 0, 0);
}

/* MPE output: the player's wheel on input channel ch bends the whole zone. */
static void master_bend(struct engine *e, int ch)
{
	send_bend(e, e->master_channel,
		  bend_for(e, in_bend_cents(&e->in[ch]), master_range(e)));
}

static void mode_cc(struct engine *e, int ch, int cc)
{
	struct engine_in_channel *c = &e->in[ch];
	if (cc == 121) {
		/* reset all controllers: pedals up, wheel centred, values forgotten */
		static const int kept[] = {0, 32, 7, 10, 91, 93};
		uint8_t keep[16] = {0};
		for (size_t i = 0; i < sizeof kept / sizeof kept[0]; i++)
			bit_put(keep, kept[i], bit_get(c->cc_set, kept[i]));
		memcpy(c->cc_set, keep, sizeof keep);
		c->pressure_set = false;
		c->bend = PITCH_BEND_CENTRE;
		/* The reset goes to every output channel of the zone (below), so
		 * the synth lifts the pedals there: so must we, on the channel the
		 * pedals belong to (an MPE controller's master), or a later
		 * press would find them "already down" and latch nothing. */
		int global = global_of(e, ch);
		struct engine_in_channel *g = &e->in[global];
		g->sustain = g->sostenuto = false;
		bit_put(g->cc_set, 64, false);
		bit_put(g->cc_set, 66, false);
		for (int i = 0; i < ENGINE_MAX_NOTES; i++)
			if (e->notes[i].phase == NOTE_DOWN &&
			    global_of(e, e->notes[i].in_channel) == global)
				e->notes[i].sostenuto_latched = false;
		for (int out_ch = 0; out_ch < 16; out_ch++) {
			if (!output_uses(e, out_ch))
				continue;
			struct engine_out_channel *o = &e->out[out_ch];
			if (o->note_count > 0 && global_of(e, o->source_channel) != global_of(e, ch))
				continue;
			emit3(e, (uint8_t)(MIDI_CONTROL | out_ch), 121, 0);
			for (int k = 0; k < 128; k++)
				if (!bit_get(keep, k))
					bit_put(o->cc_known, k, false);
			o->bend_known = o->pressure_known = false;
			/* the synth centred this channel's bend: sounding notes get
			 * their retune (and whatever wheel is left) back at once */
			if (e->spec.output.method == RETUNE_MPE && out_ch == e->master_channel)
				master_bend(e, global);
			else if (o->note_count > 0)
				do_rebend(e, out_ch, 0, 0);
		}
		settle_ringing(e, global_of(e, ch));
		return;
	}
	if (cc == 120 || cc >= 123) {
		/* all sound off / all notes off / mode changes: end this channel's
		 * notes ourselves (the mode changes would break the rotation) */
		for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
			struct engine_note *n = &e->notes[i];
			if (n->phase != NOTE_DOWN || global_of(e, n->in_channel) != global_of(e, ch))
				continue;
			release_note(e, i, 64);
		}
		if (cc == 120) {
			/* silence this channel's notes, not another input channel's */
			for (int out_ch = 0; out_ch < 16; out_ch++) {
				const struct engine_out_channel *o = &e->out[out_ch];
				if (!output_uses(e, out_ch) ||
				    (o->note_count > 0 && global_of(e, o->source_channel) != global_of(e, ch)))
					continue;
				send_cc(e, out_ch, 120, 0, true);
			}
		}
	}
}

static void control_change(struct engine *e, uint8_t source, int ch, int cc, int value)
{
	/* pedals hold the whole zone of an MPE controller, wherever they arrive */
	if ((cc == 64 || cc == 66) && is_mpe_member(e, ch))
		ch = input_master(e);
	struct engine_in_channel *c = &e->in[ch];
	if (cc >= 120) {
		mode_cc(e, ch, cc);
		return;
	}
	if (is_parameter_cc(cc)) {
		parameter_cc(e, ch, cc, value);
		return;
	}
	c->cc[cc] = (uint8_t)value;
	bit_put(c->cc_set, cc, true);
	bool member = is_mpe_member(e, ch);
	if (!member && e->spec.output.method == RETUNE_MPE)
		send_cc(e, e->master_channel, cc, (uint8_t)value, false);
	else
		for_sounding_channels(e, ch, member, do_cc, cc, value);

	if (cc == 64 || cc == 66) {
		int g = global_of(e, ch);
		bool down = value >= 64;
		if (cc == 64) {
			e->in[g].sustain = down;
			e->in[g].sustain_source = source;
		} else {
			e->in[g].sostenuto_source = source;
			if (down && !e->in[g].sostenuto) {
				/* sostenuto holds the notes that are down right now */
				for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
					struct engine_note *n = &e->notes[i];
					if (n->phase == NOTE_DOWN && global_of(e, n->in_channel) == g)
						n->sostenuto_latched = true;
				}
			}
			e->in[g].sostenuto = down;
			if (!down)
				for (int i = 0; i < ENGINE_MAX_NOTES; i++)
					if (e->notes[i].phase == NOTE_DOWN &&
					    global_of(e, e->notes[i].in_channel) == g)
						e->notes[i].sostenuto_latched = false;
		}
		if (!down)
			settle_ringing(e, g);
	}
}

static void pitch_wheel(struct engine *e, int ch, uint16_t value)
{
	e->in[ch].bend = value;
	bool member = is_mpe_member(e, ch);
	if (!member && e->spec.output.method == RETUNE_MPE) {
		master_bend(e, ch);
		return;
	}
	for_sounding_channels(e, ch, member, do_rebend, 0, 0);
}

static void poly_pressure(struct engine *e, uint8_t source, int ch, int key, uint8_t value)
{
	int index = e->key_down[source][ch][key];
	if (index == NO_NOTE)
		return;
	const struct engine_note *n = &e->notes[index];
	if (e->spec.output.method == RETUNE_MPE)
		send_pressure(e, n->out_channel, value); /* per-note pressure in MPE */
	else
		emit3(e, (uint8_t)(MIDI_POLY_PRESSURE | n->out_channel), n->out_key, value);
}

static void control_channel_message(struct engine *e, const struct midi_msg *m)
{
	const struct engine_control_spec *c = &e->spec.control;
	uint8_t type = midi_msg_type(m);
	if (type == MIDI_PROGRAM && c->program_selects_preset)
		engine_select_preset(e, m->data[0]);
	else if (type == MIDI_CONTROL && m->data[0] == c->preset_cc)
		engine_select_preset(e, m->data[1]);
	else if (type == MIDI_CONTROL && m->data[0] == c->root_cc)
		engine_select_root(e, m->data[1]);
	else if (type == MIDI_NOTE_ON && m->data[1] > 0)
		handle_reserved_key(e, m->data[0]);
}

static void channel_message(struct engine *e, uint8_t source, const struct midi_msg *m)
{
	int ch = midi_msg_channel(m);
	uint8_t type = midi_msg_type(m);
	if (ch == e->spec.control.channel) {
		control_channel_message(e, m);
		return;
	}
	if (!is_retuned(e, ch)) {
		if (output_uses(e, ch)) {
			e->stats.passthrough_blocked++;
			notice(e, NOTICE_PASSTHROUGH_BLOCKED);
			return;
		}
		if (!passthrough_record(&e->passthrough, source, m)) {
			e->stats.notes_dropped++;
			notice(e, NOTICE_NOTES_FULL);
			return;
		}
		emit(e, m);
		return;
	}
	switch (type) {
	case MIDI_NOTE_ON:
		if (m->data[1] == 0)
			note_off(e, source, ch, m->data[0], 64);
		else
			note_on(e, source, ch, m->data[0], m->data[1]);
		break;
	case MIDI_NOTE_OFF:
		note_off(e, source, ch, m->data[0], m->data[1]);
		break;
	case MIDI_POLY_PRESSURE:
		poly_pressure(e, source, ch, m->data[0], m->data[1]);
		break;
	case MIDI_CONTROL:
		control_change(e, source, ch, m->data[0], m->data[1]);
		break;
	case MIDI_PROGRAM:
		e->in[ch].program = m->data[0];
		e->in[ch].program_set = true;
		if (e->spec.output.method == RETUNE_MPE && !is_mpe_member(e, ch))
			send_program(e, e->master_channel, m->data[0]);
		else
			for_sounding_channels(e, ch, is_mpe_member(e, ch), do_program, m->data[0], 0);
		break;
	case MIDI_CHANNEL_PRESSURE:
		e->in[ch].pressure = m->data[0];
		e->in[ch].pressure_set = true;
		if (e->spec.output.method == RETUNE_MPE && !is_mpe_member(e, ch))
			send_pressure(e, e->master_channel, m->data[0]);
		else
			for_sounding_channels(e, ch, is_mpe_member(e, ch), do_pressure, m->data[0], 0);
		break;
	case MIDI_PITCH_BEND:
		pitch_wheel(e, ch, (uint16_t)(m->data[0] | (m->data[1] << 7)));
		break;
	default:
		break;
	}
}

void engine_handle(struct engine *e, uint8_t source, const struct midi_msg *m)
{
	if (source >= ENGINE_MAX_SOURCES)
		source = ENGINE_MAX_SOURCES - 1;
	if (midi_msg_is_channel(m)) {
		channel_message(e, source, m);
		return;
	}
	if (m->status == MIDI_RESET) {
		/* the synth forgets our set-up on a reset: end notes, pass it, set up again */
		engine_panic(e);
		emit(e, m);
		engine_start(e);
		return;
	}
	emit(e, m); /* SysEx, clock, transport, song position: unchanged */
}

void engine_end_source(struct engine *e, uint8_t source)
{
	if (source >= ENGINE_MAX_SOURCES)
		return;
	for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
		struct engine_note *n = &e->notes[i];
		if (n->phase == NOTE_DOWN && n->source == source)
			release_note(e, i, 64);
	}
	/* a pedal held down by the device that went away is let go, as if its
	 * foot came off: otherwise the synth would sustain forever */
	for (int ch = 0; ch < 16; ch++) {
		struct engine_in_channel *c = &e->in[ch];
		if (c->sustain && c->sustain_source == source)
			control_change(e, source, ch, 64, 0);
		if (c->sostenuto && c->sostenuto_source == source)
			control_change(e, source, ch, 66, 0);
	}
	passthrough_end(&e->passthrough, source, emit_for, e);
}

void engine_panic(struct engine *e)
{
	for (int i = 0; i < ENGINE_MAX_NOTES; i++) {
		struct engine_note *n = &e->notes[i];
		if (n->phase == NOTE_FREE)
			continue;
		if (n->phase == NOTE_DOWN)
			send_note_off(e, n, 64);
		end_note(e, i);
	}
	for (int s = 0; s < ENGINE_MAX_SOURCES; s++)
		for (int ch = 0; ch < 16; ch++)
			for (int k = 0; k < 128; k++)
				e->key_down[s][ch][k] = NO_NOTE;
	for (int ch = 0; ch < 16; ch++) {
		if (!output_uses(e, ch))
			continue;
		send_cc(e, ch, 64, 0, true);
		send_cc(e, ch, 66, 0, true);
		send_cc(e, ch, 120, 0, true);
		send_cc(e, ch, 123, 0, true);
	}
	passthrough_end(&e->passthrough, PASSTHROUGH_ALL_SOURCES, emit_for, e);
}

uint32_t engine_take_notices(struct engine *e)
{
	uint32_t fresh = e->notices & ~e->notices_reported;
	e->notices_reported |= e->notices;
	e->notices = 0;
	return fresh;
}
