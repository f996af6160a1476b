/*
 * engine_synth: the engine's side of the wire.  Every message leaves
 * through engine_emit; the send functions remember, per output channel,
 * what the synth was last told (bend, controllers, program, pressure) and
 * send nothing it already has.  engine_sync_channel brings an idle channel
 * up to date just before a note starts on it ("lazy sync", engine.h).
 */
#include <string.h>

#include "engine_method.h"
#include "latticed/pitch.h"

void engine_emit(struct engine *e, const struct midi_msg *m)
{
	e->stats.messages_out++;
	e->emit(e->context, m);
}

void engine_emit3(struct engine *e, uint8_t status, uint8_t d1, uint8_t d2)
{
	struct midi_msg m = {0};
	m.status = status;
	m.data[0] = d1 & 0x7F;
	m.data[1] = d2 & 0x7F;
	engine_emit(e, &m);
}

void engine_write_cc(struct engine *e, int ch, int cc, uint8_t value)
{
	struct engine_out_channel *o = &e->out[ch];
	engine_emit3(e, (uint8_t)(MIDI_CONTROL | ch), (uint8_t)cc, value);
	o->cc[cc] = value;
	engine_bit_put(o->cc_known, cc, true);
}

void engine_send_rpn(struct engine *e, int ch, enum rpn_param param, uint8_t value)
{
	struct midi_msg seq[RPN_SEQUENCE_LENGTH];
	rpn_build((uint8_t)ch, param, value, seq);
	for (int i = 0; i < RPN_SEQUENCE_LENGTH; i++)
		engine_emit(e, &seq[i]);
	/* the data-entry and selection controllers now hold known values */
	struct engine_out_channel *o = &e->out[ch];
	o->cc[6] = value;
	o->cc[100] = o->cc[101] = 127;
	engine_bit_put(o->cc_known, 6, true);
	engine_bit_put(o->cc_known, 100, true);
	engine_bit_put(o->cc_known, 101, true);
}

void engine_send_program(struct engine *e, int ch, uint8_t program)
{
	struct engine_out_channel *o = &e->out[ch];
	if (o->program_known && o->program == program)
		return;
	struct midi_msg m = {0};
	m.status = (uint8_t)(MIDI_PROGRAM | ch);
	m.data[0] = program & 0x7F;
	engine_emit(e, &m);
	o->program = program;
	o->program_known = true;
}

void engine_send_pressure(struct engine *e, int ch, uint8_t value)
{
	struct engine_out_channel *o = &e->out[ch];
	if (o->pressure_known && o->pressure == value)
		return;
	struct midi_msg m = {0};
	m.status = (uint8_t)(MIDI_CHANNEL_PRESSURE | ch);
	m.data[0] = value & 0x7F;
	engine_emit(e, &m);
	o->pressure = value;
	o->pressure_known = true;
}

void engine_send_bend(struct engine *e, int ch, uint16_t value)
{
	struct engine_out_channel *o = &e->out[ch];
	if (o->bend_known && o->bend == value)
		return;
	engine_emit3(e, (uint8_t)(MIDI_PITCH_BEND | ch), (uint8_t)(value & 0x7F),
		     (uint8_t)(value >> 7));
	o->bend = value;
	o->bend_known = true;
}

void engine_send_note_off(struct engine *e, const struct engine_note *n, uint8_t velocity)
{
	engine_emit3(e, (uint8_t)(MIDI_NOTE_OFF | n->out_channel), n->out_key, velocity);
}

uint16_t engine_bend_value(struct engine *e, double cents, int range)
{
	bool clamped;
	uint16_t value = pitch_bend_value(cents, range, e->spec.output.bend_played, &clamped);
	if (clamped) {
		e->stats.bends_clamped++;
		engine_notice(e, NOTICE_BEND_CLAMPED);
	}
	return value;
}

void engine_forget_synth(struct engine *e)
{
	for (int ch = 0; ch < 16; ch++) {
		struct engine_out_channel *o = &e->out[ch];
		o->bend_known = o->program_known = o->pressure_known = false;
		memset(o->cc_known, 0, sizeof o->cc_known);
	}
	memset(e->mts.held_known, 0, sizeof e->mts.held_known);
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

#define BIT(n) ((uint64_t)1 << (n))

/* The controllers the sync walks: 1 to 119 but the bank LSB (it goes with
 * the bank MSB, before the program) and the RPN/NRPN machinery. */
static const uint64_t synced_ccs[2] = {
	~BIT(0) & ~BIT(6) & ~BIT(32) & ~BIT(38),
	(BIT(120 - 64) - 1) & ~(BIT(96 - 64) | BIT(97 - 64) | BIT(98 - 64) | BIT(99 - 64) |
				BIT(100 - 64) | BIT(101 - 64)),
};

/*
 * A channel may have served another input channel before (or been
 * stolen): whatever it was told then and the new owner never set goes
 * back to its default, so no pedal or controller of the previous owner
 * lingers.  With a global channel (MPE output) the player's global state
 * lives there, not on the note channels.  Only controllers somebody set,
 * or the synth was told, can need a message: the walk visits just those,
 * in ascending order.
 */
void engine_sync_channel(struct engine *e, int ch, int in_ch)
{
	const struct engine_in_channel *m = engine_is_member(e, in_ch) ? &e->in[in_ch] : NULL;
	const struct engine_in_channel *global =
		e->global_channel == NO_CHANNEL ? &e->in[e->global_of[in_ch]] : NULL;
	struct engine_out_channel *o = &e->out[ch];

	if (global) {
		/* bank select before the program change that applies it */
		bool bank_changed = false;
		for (int cc = 0; cc <= 32; cc += 32) {
			if (engine_bit(global->cc_set, cc) &&
			    !(engine_bit(o->cc_known, cc) && o->cc[cc] == global->cc[cc])) {
				engine_send_cc(e, ch, cc, global->cc[cc], false);
				bank_changed = true;
			}
		}
		if (global->program_set) {
			if (bank_changed)
				o->program_known = false;
			engine_send_program(e, ch, global->program);
		}
	}
	for (int w = 0; w < 2; w++) {
		uint64_t member_set = m ? m->cc_set[w] : 0;
		uint64_t global_set = global ? global->cc_set[w] : 0;
		uint64_t todo = (member_set | global_set | o->cc_known[w]) & synced_ccs[w];
		while (todo) {
			int bit = __builtin_ctzll(todo);
			int cc = 64 * w + bit;
			todo &= todo - 1;
			if ((member_set >> bit) & 1)
				engine_send_cc(e, ch, cc, m->cc[cc], false);
			else if ((global_set >> bit) & 1)
				engine_send_cc(e, ch, cc, global->cc[cc], false);
			else
				engine_send_cc(e, ch, cc, cc_default(cc), false);
		}
	}
	if (m && m->pressure_set)
		engine_send_pressure(e, ch, m->pressure);
	else if (global && global->pressure_set)
		engine_send_pressure(e, ch, global->pressure);
	else if (o->pressure_known)
		engine_send_pressure(e, ch, 0);
}
