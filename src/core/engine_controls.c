/*
 * engine_controls: what the player does besides notes.  Controllers,
 * program, pressure and the wheel are remembered per input channel (the
 * lazy sync of an idle channel reads them later) and sent at once to the
 * output channels sounding that input channel's notes; with a global
 * channel (MPE output) the player's global state goes there instead.
 * The player's own RPN 0 sets what its wheel spans and is not passed on;
 * pedals are tracked so a released note keeps its channel while held.
 */
#include <math.h>
#include <string.h>

#include "engine_method.h"
#include "latticed/pitch.h"

static double in_bend_cents(const struct engine_in_channel *c)
{
	return ((double)c->bend - PITCH_BEND_CENTRE) / 8192.0 * c->range_cents;
}

/* The player's wheel (except with a global channel, where it goes) and an
 * MPE controller's per-note bend. */
double engine_extra_cents(const struct engine *e, int in_ch)
{
	double cents = 0.0;
	if (e->global_channel == NO_CHANNEL)
		cents += in_bend_cents(&e->in[e->global_of[in_ch]]);
	if (engine_is_member(e, in_ch))
		cents += in_bend_cents(&e->in[in_ch]);
	return cents;
}

int engine_global_range(const struct engine *e)
{
	int semis = (int)ceil(e->spec.input.wheel_range_cents / 100.0 - 1e-9);
	return semis < 2 ? 2 : (semis > 96 ? 96 : semis);
}

/* Sends fn to every output channel that sounds notes of input channel ch
 * (the global channel's notes, or one member's). */
static void for_sounding_channels(struct engine *e, int ch, bool member,
				  void (*fn)(struct engine *, int out_ch, int a, int b),
				  int a, int b)
{
	for (unsigned busy = e->pool & e->sounding; busy; busy &= busy - 1) {
		int out_ch = __builtin_ctz(busy);
		const struct engine_out_channel *o = &e->out[out_ch];
		bool ours = member ? o->source_channel == ch : e->global_of[o->source_channel] == ch;
		if (ours)
			fn(e, out_ch, a, b);
	}
}

static void do_cc(struct engine *e, int out_ch, int cc, int value)
{
	engine_send_cc(e, out_ch, cc, (uint8_t)value, false);
}

static void do_pressure(struct engine *e, int out_ch, int value, int unused)
{
	(void)unused;
	engine_send_pressure(e, out_ch, (uint8_t)value);
}

static void do_program(struct engine *e, int out_ch, int value, int unused)
{
	(void)unused;
	engine_send_program(e, out_ch, (uint8_t)value);
}

static void do_rebend(struct engine *e, int out_ch, int unused_a, int unused_b)
{
	(void)unused_a;
	(void)unused_b;
	const struct engine_out_channel *o = &e->out[out_ch];
	double retune = e->method->bend_carries_retune ? o->retune_cents : 0.0;
	engine_send_bend(e, out_ch,
			 engine_bend_value(e, retune + engine_extra_cents(e, o->source_channel),
					   e->spec.output.bend_range));
}

static void broadcast_cc(struct engine *e, int cc, int value)
{
	if (e->global_channel != NO_CHANNEL) {
		engine_send_cc(e, e->global_channel, cc, (uint8_t)value, true);
		return;
	}
	for (int ch = 0; ch < 16; ch++)
		if (engine_in_pool(e, ch))
			engine_send_cc(e, ch, cc, (uint8_t)value, true);
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
	for_sounding_channels(e, ch, engine_is_member(e, ch), do_rebend, 0, 0);
}

/* With a global channel: the player's wheel on input channel ch bends the whole zone. */
static void global_bend(struct engine *e, int ch)
{
	engine_send_bend(e, e->global_channel,
			 engine_bend_value(e, in_bend_cents(&e->in[ch]), engine_global_range(e)));
}

/* Reset all controllers: pedals up, wheel centred, values forgotten. */
static void reset_controllers(struct engine *e, int ch)
{
	struct engine_in_channel *c = &e->in[ch];
	static const int kept[] = {0, 32, 7, 10, 91, 93};
	uint64_t keep[2] = {0, 0};
	for (size_t i = 0; i < sizeof kept / sizeof kept[0]; i++)
		engine_bit_put(keep, kept[i], engine_bit(c->cc_set, kept[i]));
	memcpy(c->cc_set, keep, sizeof keep);
	c->pressure_set = false;
	c->bend = PITCH_BEND_CENTRE;
	/* The reset goes to every output channel of the zone (below), so
	 * the synth lifts the pedals there: so must we, on the channel the
	 * pedals belong to (an MPE controller's master), or a later
	 * press would find them "already down" and latch nothing. */
	int global = e->global_of[ch];
	struct engine_in_channel *g = &e->in[global];
	g->sustain = g->sostenuto = false;
	engine_bit_put(g->cc_set, 64, false);
	engine_bit_put(g->cc_set, 66, false);
	engine_for_each_note(e, i)
		if (e->notes[i].phase == NOTE_DOWN && e->global_of[e->notes[i].in_channel] == global)
			e->notes[i].sostenuto_latched = false;
	for (int out_ch = 0; out_ch < 16; out_ch++) {
		if (!engine_uses(e, out_ch))
			continue;
		struct engine_out_channel *o = &e->out[out_ch];
		if (o->note_count > 0 && e->global_of[o->source_channel] != global)
			continue;
		engine_emit3(e, (uint8_t)(MIDI_CONTROL | out_ch), 121, 0);
		o->cc_known[0] &= keep[0];
		o->cc_known[1] &= keep[1];
		o->bend_known = o->pressure_known = false;
		/* the synth centred this channel's bend: sounding notes get
		 * their retune (and whatever wheel is left) back at once */
		if (out_ch == e->global_channel)
			global_bend(e, global);
		else if (o->note_count > 0)
			do_rebend(e, out_ch, 0, 0);
	}
	engine_settle_ringing(e, global);
}

/* All sound off / all notes off / mode changes: end this channel's notes
 * ourselves (the mode changes would break the rotation). */
static void end_channel_notes(struct engine *e, int ch, int cc)
{
	int global = e->global_of[ch];
	engine_for_each_note(e, i) {
		struct engine_note *n = &e->notes[i];
		if (n->phase != NOTE_DOWN || e->global_of[n->in_channel] != global)
			continue;
		engine_release_note(e, i, 64);
	}
	if (cc != 120)
		return;
	/* silence this channel's notes, not another input channel's */
	for (int out_ch = 0; out_ch < 16; out_ch++) {
		const struct engine_out_channel *o = &e->out[out_ch];
		if (!engine_uses(e, out_ch) ||
		    (o->note_count > 0 && e->global_of[o->source_channel] != global))
			continue;
		engine_send_cc(e, out_ch, 120, 0, true);
	}
}

/* A pedal moved on global input channel g. */
static void pedal(struct engine *e, uint8_t source, int g, int cc, bool down)
{
	struct engine_in_channel *c = &e->in[g];
	if (cc == 64) {
		c->sustain = down;
		c->sustain_source = source;
	} else {
		c->sostenuto_source = source;
		/* sostenuto holds the notes that are down right now */
		bool latch = down && !c->sostenuto;
		if (latch || !down)
			engine_for_each_note(e, i) {
				struct engine_note *n = &e->notes[i];
				if (n->phase == NOTE_DOWN && e->global_of[n->in_channel] == g)
					n->sostenuto_latched = latch;
			}
		c->sostenuto = down;
	}
	if (!down)
		engine_settle_ringing(e, g);
}

void engine_control_change(struct engine *e, uint8_t source, int ch, int cc, int value)
{
	/* pedals hold the whole zone of an MPE controller, wherever they arrive */
	if (cc == 64 || cc == 66)
		ch = e->global_of[ch];
	if (cc >= 120) {
		if (cc == 121)
			reset_controllers(e, ch);
		else if (cc == 120 || cc >= 123)
			end_channel_notes(e, ch, cc);
		return;
	}
	if (engine_is_parameter_cc(cc)) {
		parameter_cc(e, ch, cc, value);
		return;
	}
	struct engine_in_channel *c = &e->in[ch];
	c->cc[cc] = (uint8_t)value;
	engine_bit_put(c->cc_set, cc, true);
	bool member = engine_is_member(e, ch);
	if (!member && e->global_channel != NO_CHANNEL)
		engine_send_cc(e, e->global_channel, cc, (uint8_t)value, false);
	else
		for_sounding_channels(e, ch, member, do_cc, cc, value);
	if (cc == 64 || cc == 66)
		pedal(e, source, e->global_of[ch], cc, value >= 64);
}

void engine_pitch_wheel(struct engine *e, int ch, uint16_t value)
{
	e->in[ch].bend = value;
	bool member = engine_is_member(e, ch);
	if (!member && e->global_channel != NO_CHANNEL) {
		global_bend(e, ch);
		return;
	}
	for_sounding_channels(e, ch, member, do_rebend, 0, 0);
}

void engine_poly_pressure(struct engine *e, uint8_t source, int ch, int key, uint8_t value)
{
	int index = e->key_down[source][ch][key];
	if (index == NO_NOTE)
		return;
	const struct engine_note *n = &e->notes[index];
	if (e->method->pressure_per_channel)
		engine_send_pressure(e, n->out_channel, value);
	else
		engine_emit3(e, (uint8_t)(MIDI_POLY_PRESSURE | n->out_channel), n->out_key, value);
}

void engine_program_change(struct engine *e, int ch, uint8_t program)
{
	e->in[ch].program = program;
	e->in[ch].program_set = true;
	bool member = engine_is_member(e, ch);
	if (!member && e->global_channel != NO_CHANNEL)
		engine_send_program(e, e->global_channel, program);
	else
		for_sounding_channels(e, ch, member, do_program, program, 0);
}

void engine_channel_pressure(struct engine *e, int ch, uint8_t value)
{
	e->in[ch].pressure = value;
	e->in[ch].pressure_set = true;
	bool member = engine_is_member(e, ch);
	if (!member && e->global_channel != NO_CHANNEL)
		engine_send_pressure(e, e->global_channel, value);
	else
		for_sounding_channels(e, ch, member, do_pressure, value, 0);
}
