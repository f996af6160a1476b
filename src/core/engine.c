/*
 * engine: the common part of the retuning stage (model and promises in
 * engine.h).  It owns the notes, the pedals' hold on them, the tunings and
 * the message dispatch; what differs between bend, mts and mpe comes from
 * the method table below (contract in engine_method.h), controllers and
 * the wheel from engine_controls.c, and the wire from engine_synth.c.
 *
 * Pedals are forwarded to the synth, so the synth does its own sustain and
 * sostenuto, and every note-off is sent the moment the key goes up.  What
 * the engine adds is bookkeeping: a note released under a pedal stays
 * "ringing" and keeps its channel (and, for MTS, its key) until the pedal
 * lets it go, so no other note is bent or retuned underneath it.
 */
#include <string.h>

#include "engine_method.h"
#include "latticed/pitch.h"

static const struct engine_method *const methods[] = {
	[RETUNE_BEND] = &engine_method_bend,
	[RETUNE_MTS] = &engine_method_mts,
	[RETUNE_MPE] = &engine_method_mpe,
};
#define METHOD_COUNT (sizeof methods / sizeof methods[0])

static const struct engine_method *method_of(enum retune_method id)
{
	return (unsigned)id < METHOD_COUNT ? methods[id] : NULL;
}

const char *retune_method_name(enum retune_method method)
{
	const struct engine_method *m = method_of(method);
	return m ? m->name : "?";
}

bool retune_method_bends_notes(enum retune_method method)
{
	const struct engine_method *m = method_of(method);
	return m && m->bend_carries_retune;
}

uint16_t engine_note_channels(const struct engine_spec *spec)
{
	const struct engine_method *m = method_of(spec->output.method);
	struct engine_channels plan;
	struct core_error err;
	memset(&plan, 0, sizeof plan);
	return m && m->plan(spec, &plan, &err) ? plan.pool : 0;
}

/* ---- the tuning table ---------------------------------------------------- */

static const struct engine_preset *current_preset(const struct engine *e)
{
	return &e->tunings->presets[e->preset];
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
	engine_steer_refresh(e); /* the runs of reserved keys follow the tunings */
}

static void tuning_changed(struct engine *e)
{
	rebuild_table(e);
	if (e->method->tuning_changed)
		e->method->tuning_changed(e);
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

bool engine_resume_at(struct engine *e, int preset, int slot)
{
	if (preset < 0 || preset >= e->tunings->count || slot < 0 ||
	    slot > e->tunings->presets[preset].lattice->tone_count)
		return false;
	e->preset = preset;
	e->root_slot = slot;
	rebuild_table(e);
	return true;
}

enum engine_kept engine_replace_tunings(struct engine *e, const struct engine_tunings *tunings)
{
	const struct engine_preset *was = current_preset(e);
	int keep = -1;
	for (int i = 0; i < tunings->count && keep < 0; i++)
		if (strcmp(tunings->presets[i].name, was->name) == 0)
			keep = i;
	int slot = 0;
	if (keep >= 0 && e->root_slot > 0) {
		/* the old set is still whole: it is retired, not freed, until its notes end */
		char label[LATTICE_LABEL_MAX];
		const struct lattice *old = was->lattice;
		lattice_label(&old->spec, old->tones[e->root_slot - 1].seeds, label, sizeof label);
		slot = lattice_find_tone(tunings->presets[keep].lattice, label) + 1;
	}
	enum engine_kept kept = keep < 0 ? ENGINE_KEPT_NOTHING
			      : slot > 0 || e->root_slot == 0 ? ENGINE_KEPT_PRESET_AND_ROOT
			      : ENGINE_KEPT_PRESET;
	e->tunings = tunings;
	e->preset = keep < 0 ? 0 : keep;
	e->root_slot = slot;
	tuning_changed(e);
	return kept;
}

/* ---- set-up --------------------------------------------------------------- */

static bool check_spec(const struct engine_spec *spec, const struct engine_tunings *tunings,
		       engine_emit_fn emit_fn, struct core_error *err)
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
	if (!method_of(o->method))
		return core_fail(err, "method", "unknown retuning method %d", (int)o->method);
	return true;
}

static bool check_input(const struct engine_spec *spec, struct core_error *err)
{
	if (spec->input.channels == 0)
		return core_fail(err, "channels", "no input channel is retuned");
	int cc = spec->control.channel;
	if (cc >= 0 && ((spec->input.channels >> cc) & 1))
		return core_fail(err, "channel",
				 "the control channel %d is also a retuned input channel", cc + 1);
	return true;
}

/* Who plays where, worked out once so the event path only looks it up. */
static void set_roles(struct engine *e, const struct engine_channels *plan)
{
	const struct engine_input_spec *in = &e->spec.input;
	int input_master = in->mpe_zone == MPE_ZONE_LOWER ? 0 : 15;
	e->retuned = in->channels;
	for (int ch = 0; ch < 16; ch++) {
		bool member = in->mpe && ((in->channels >> ch) & 1) && ch != input_master;
		if (member)
			e->members |= (uint16_t)(1u << ch);
		e->global_of[ch] = (uint8_t)(member ? input_master : ch);
	}
	e->pool = plan->pool;
	e->global_channel = plan->global_channel;
	e->used = plan->pool;
	if (plan->global_channel != NO_CHANNEL)
		e->used |= (uint16_t)(1u << plan->global_channel);
	memcpy(e->route, plan->route, sizeof e->route);
}

bool engine_init(struct engine *e, const struct engine_spec *spec,
		 const struct engine_tunings *tunings, engine_emit_fn emit_fn,
		 void *context, struct core_error *err)
{
	struct engine_channels plan;
	memset(&plan, 0, sizeof plan);
	if (!check_spec(spec, tunings, emit_fn, err) ||
	    !method_of(spec->output.method)->plan(spec, &plan, err) || !check_input(spec, err))
		return false;

	memset(e, 0, sizeof *e);
	e->spec = *spec;
	e->method = method_of(spec->output.method);
	e->tunings = tunings;
	e->emit = emit_fn;
	e->context = context;
	set_roles(e, &plan);
	memset(e->key_down, 0xFF, sizeof e->key_down); /* NO_NOTE: -1 in every int16_t */
	for (int ch = 0; ch < 16; ch++) {
		e->in[ch].bend = PITCH_BEND_CENTRE;
		e->in[ch].param_msb = e->in[ch].param_lsb = 127;
		e->in[ch].range_cents = engine_is_member(e, ch)
			? spec->input.mpe_bend_range * 100.0
			: spec->input.wheel_range_cents;
	}
	engine_steer_init(e);
	rebuild_table(e);
	return true;
}

void engine_start(struct engine *e)
{
	engine_forget_synth(e);
	e->method->start(e);
}

/* ---- notes ---------------------------------------------------------------- */

static void note_info(const struct engine_note *note, struct engine_note_info *out)
{
	out->source = note->source;
	out->in_channel = note->in_channel;
	out->in_key = note->in_key;
	out->out_channel = note->out_channel;
	out->out_key = note->out_key;
	out->ringing = note->phase == NOTE_RINGING;
	out->started = note->started;
	out->preset = note->preset;
	out->root = note->root;
	out->tone = note->tone;
	out->period = note->period;
	out->pitch = note->note;
}

static void tell_watch(struct engine *e, bool sounding, const struct engine_note *note)
{
	if (!e->note_watch)
		return;
	struct engine_note_info info;
	note_info(note, &info);
	e->note_watch(e->note_watch_context, sounding, &info);
}

void engine_watch_notes(struct engine *e, engine_note_watch_fn fn, void *context)
{
	e->note_watch = fn;
	e->note_watch_context = context;
}

/* The lowest free slot: which slot a note gets decides the order in
 * which panic and steal end notes, so it stays the lowest. */
static int alloc_note(struct engine *e)
{
	for (int w = 0; w < ENGINE_MAX_NOTES / 64; w++)
		if (~e->note_used[w])
			return 64 * w + __builtin_ctzll(~e->note_used[w]);
	return NO_NOTE;
}

void engine_end_note(struct engine *e, int index)
{
	struct engine_note *n = &e->notes[index];
	struct engine_out_channel *o = &e->out[n->out_channel];
	tell_watch(e, false, n);
	if (n->phase == NOTE_DOWN &&
	    e->key_down[n->source][n->in_channel][n->in_key] == index)
		e->key_down[n->source][n->in_channel][n->in_key] = NO_NOTE;
	engine_bit_put(o->keys_on, n->out_key, false);
	if (--o->note_count == 0) {
		o->freed_at = ++e->serial;
		e->sounding &= (uint16_t)~(1u << n->out_channel);
	}
	n->phase = NOTE_FREE;
	engine_bit_put(e->note_used, index, false);
	e->note_count--;
}

void engine_release_note(struct engine *e, int index, uint8_t velocity)
{
	struct engine_note *n = &e->notes[index];
	const struct engine_in_channel *g = &e->in[e->global_of[n->in_channel]];
	engine_send_note_off(e, n, velocity);
	e->key_down[n->source][n->in_channel][n->in_key] = NO_NOTE;
	if (g->sustain || (g->sostenuto && n->sostenuto_latched)) {
		n->phase = NOTE_RINGING;
		return;
	}
	engine_end_note(e, index);
}

void engine_settle_ringing(struct engine *e, int g)
{
	const struct engine_in_channel *c = &e->in[g];
	engine_for_each_note(e, i) {
		struct engine_note *n = &e->notes[i];
		if (n->phase != NOTE_RINGING || e->global_of[n->in_channel] != g)
			continue;
		if (c->sustain || (c->sostenuto && n->sostenuto_latched))
			continue;
		engine_end_note(e, i);
	}
}

static void note_on(struct engine *e, uint8_t source, int ch, int key, uint8_t velocity)
{
	int previous = e->key_down[source][ch][key];
	if (previous != NO_NOTE)
		engine_release_note(e, previous, 64); /* a second note-on ends the first */
	const struct retune_key *rk = &e->table.keys[key];
	if (!rk->sounding) {
		e->stats.silent_keys++;
		return;
	}
	int index = alloc_note(e);
	if (index == NO_NOTE) {
		e->stats.notes_dropped++;
		engine_notice(e, NOTICE_NOTES_FULL);
		return;
	}
	struct engine_place at;
	if (!e->method->place(e, ch, key, rk, &at)) {
		e->stats.notes_dropped++;
		engine_notice(e, NOTICE_NOTE_DROPPED);
		return;
	}
	engine_emit3(e, (uint8_t)(MIDI_NOTE_ON | at.channel), (uint8_t)at.key, velocity);
	struct engine_note *n = &e->notes[index];
	memset(n, 0, sizeof *n);
	n->phase = NOTE_DOWN;
	n->source = source;
	n->in_channel = (uint8_t)ch;
	n->in_key = (uint8_t)key;
	n->out_channel = (uint8_t)at.channel;
	n->out_key = (uint8_t)at.key;
	n->started = ++e->serial;
	n->note = rk->note;
	n->preset = (int16_t)e->preset;
	n->root = (int16_t)e->root_slot;
	n->tone = rk->tone;
	n->period = rk->period;
	engine_bit_put(e->note_used, index, true);
	e->note_count++;
	e->out[at.channel].note_count++;
	e->sounding |= (uint16_t)(1u << at.channel);
	engine_bit_put(e->out[at.channel].keys_on, at.key, true);
	e->key_down[source][ch][key] = (int16_t)index;
	e->stats.notes_on++;
	tell_watch(e, true, n);
}

static void note_off(struct engine *e, uint8_t source, int ch, int key, uint8_t velocity)
{
	int index = e->key_down[source][ch][key];
	if (index == NO_NOTE)
		return; /* silent, reserved, stolen or silenced by a panic */
	engine_release_note(e, index, velocity);
}

/* ---- messages ------------------------------------------------------------------ */

static void channel_message(struct engine *e, uint8_t source, const struct midi_msg *m)
{
	int ch = midi_msg_channel(m);
	uint8_t type = midi_msg_type(m);
	if (engine_may_steer(e, m) && engine_steer_message(e, m))
		return; /* the control channel, a reserved key, a bound controller */
	if (!((e->retuned >> ch) & 1)) {
		if (engine_uses(e, ch)) {
			e->stats.passthrough_blocked++;
			engine_notice(e, NOTICE_PASSTHROUGH_BLOCKED);
			return;
		}
		if (!passthrough_record(&e->passthrough, source, m)) {
			e->stats.notes_dropped++;
			engine_notice(e, NOTICE_NOTES_FULL);
			return;
		}
		engine_emit(e, m);
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
		engine_poly_pressure(e, source, ch, m->data[0], m->data[1]);
		break;
	case MIDI_CONTROL:
		engine_control_change(e, source, ch, m->data[0], m->data[1]);
		break;
	case MIDI_PROGRAM:
		engine_program_change(e, ch, m->data[0]);
		break;
	case MIDI_CHANNEL_PRESSURE:
		engine_channel_pressure(e, ch, m->data[0]);
		break;
	case MIDI_PITCH_BEND:
		engine_pitch_wheel(e, ch, (uint16_t)(m->data[0] | (m->data[1] << 7)));
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
		engine_emit(e, m);
		engine_start(e);
		return;
	}
	engine_emit(e, m); /* SysEx, clock, transport, song position: unchanged */
}

/* passthrough's callback: its messages go out like every other */
static void emit_for(void *engine, const struct midi_msg *m)
{
	engine_emit(engine, m);
}

void engine_end_source(struct engine *e, uint8_t source)
{
	if (source >= ENGINE_MAX_SOURCES)
		return;
	engine_for_each_note(e, i) {
		struct engine_note *n = &e->notes[i];
		if (n->phase == NOTE_DOWN && n->source == source)
			engine_release_note(e, i, 64);
	}
	/* a pedal held down by the device that went away is let go, as if its
	 * foot came off: otherwise the synth would sustain forever */
	for (int ch = 0; ch < 16; ch++) {
		struct engine_in_channel *c = &e->in[ch];
		if (c->sustain && c->sustain_source == source)
			engine_control_change(e, source, ch, 64, 0);
		if (c->sostenuto && c->sostenuto_source == source)
			engine_control_change(e, source, ch, 66, 0);
	}
	passthrough_end(&e->passthrough, source, emit_for, e);
}

void engine_panic(struct engine *e)
{
	engine_for_each_note(e, i) {
		struct engine_note *n = &e->notes[i];
		if (n->phase == NOTE_DOWN)
			engine_send_note_off(e, n, 64);
		engine_end_note(e, i);
	}
	memset(e->key_down, 0xFF, sizeof e->key_down);
	for (int ch = 0; ch < 16; ch++) {
		if (!engine_uses(e, ch))
			continue;
		engine_send_cc(e, ch, 64, 0, true);
		engine_send_cc(e, ch, 66, 0, true);
		engine_send_cc(e, ch, 120, 0, true);
		engine_send_cc(e, ch, 123, 0, true);
	}
	passthrough_end(&e->passthrough, PASSTHROUGH_ALL_SOURCES, emit_for, e);
}

struct engine_release engine_release_held(struct engine *e,
					  void (*before)(void *context, const struct midi_msg *m),
					  void *context)
{
	struct engine_release r = {0, 0};
	/* released notes a pedal holds; counted before the keys join them */
	engine_for_each_note(e, i)
		r.pedal_notes += e->notes[i].phase == NOTE_RINGING;
	r.pedal_notes += passthrough_ringing(&e->passthrough);
	for (int s = 0; s < ENGINE_MAX_SOURCES; s++)
		for (int ch = 0; ch < 16; ch++)
			for (int key = 0; key < 128; key++) {
				if (e->key_down[s][ch][key] == NO_NOTE &&
				    !passthrough_holds(&e->passthrough, s, ch, key))
					continue;
				struct midi_msg off = midi_msg_note_off((uint8_t)ch, (uint8_t)key,
									MIDI_DEFAULT_VELOCITY);
				if (before)
					before(context, &off);
				engine_handle(e, (uint8_t)s, &off);
				r.keys++;
			}
	for (int ch = 0; ch < 16 && engine_sounds(e); ch++) {
		static const uint8_t pedals[] = {64, 66};
		const struct passthrough *pass = &e->passthrough;
		for (int p = 0; p < 2; p++) {
			const struct engine_in_channel *c = &e->in[ch];
			bool passed = !((e->retuned >> ch) & 1) && passthrough_pedal_down(pass, ch, pedals[p]);
			if (!(p == 0 ? c->sustain : c->sostenuto) && !passed)
				continue;
			struct midi_msg up = midi_msg_control((uint8_t)ch, pedals[p], 0);
			if (before)
				before(context, &up);
			uint8_t source = passed ? (p == 0 ? pass->sustain_source[ch] : pass->sostenuto_source[ch])
					       : (p == 0 ? c->sustain_source : c->sostenuto_source);
			engine_handle(e, source, &up);
		}
	}
	return r;
}

uint32_t engine_take_notices(struct engine *e)
{
	uint32_t fresh = e->notices & ~e->notices_reported;
	e->notices_reported |= e->notices & ~(uint32_t)NOTICE_CONTROL_MISSED;
	e->notices = 0;
	return fresh;
}

/* ---- reading ---------------------------------------------------------------- */

enum retune_method engine_method(const struct engine *e)
{
	return e->method->id;
}

int engine_preset(const struct engine *e)
{
	return e->preset;
}

const struct engine_preset *engine_current_preset(const struct engine *e)
{
	return current_preset(e);
}

int engine_root(const struct engine *e)
{
	return e->root_slot;
}

const struct engine_spec *engine_spec_of(const struct engine *e)
{
	return &e->spec;
}

int engine_held_notes(const struct engine *e)
{
	return e->note_count + passthrough_held(&e->passthrough);
}

int engine_end_size(const struct engine *e)
{
	return e->note_count + passthrough_end_size(&e->passthrough);
}

int engine_passthrough_notes(const struct engine *e)
{
	return passthrough_held(&e->passthrough);
}

bool engine_sounds(const struct engine *e)
{
	return e->note_count > 0 || passthrough_held(&e->passthrough) > 0 ||
	       passthrough_ringing(&e->passthrough) > 0;
}

int engine_note_count(const struct engine *e)
{
	return e->note_count;
}

bool engine_note_at(const struct engine *e, int n, struct engine_note_info *out)
{
	if (n < 0 || n >= e->note_count)
		return false;
	engine_for_each_note(e, i) {
		const struct engine_note *note = &e->notes[i];
		if (n-- > 0)
			continue;
		note_info(note, out);
		return true;
	}
	return false;
}

uint32_t engine_serial(const struct engine *e)
{
	return e->serial;
}

const struct engine_stats *engine_stats(const struct engine *e)
{
	return &e->stats;
}
