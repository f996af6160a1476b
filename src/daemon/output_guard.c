/*
 * output_guard: the classes and the store (model in output_guard.h).
 *
 * Bank select (CC0/32) comes out of the store before the program change
 * it applies to, because controllers come first and in number order.
 */
#include "output_guard.h"

#include <string.h>


#define CC_SUSTAIN 64
#define CC_SOSTENUTO 66
/* the most output channels one player's controller reaches, plus one */
#define CHANNEL_FAN 17
/* a preset or root change from the control channel: an MTS bulk dump */
#define COMMAND_SLOTS 40

static bool bit(const uint8_t *bits, int i)
{
	return (bits[i >> 3] >> (i & 7)) & 1;
}

static void put(uint8_t *bits, int i, bool on)
{
	if (on)
		bits[i >> 3] = (uint8_t)(bits[i >> 3] | (1u << (i & 7)));
	else
		bits[i >> 3] = (uint8_t)(bits[i >> 3] & ~(1u << (i & 7)));
}

static bool is_parameter_cc(int cc)
{
	return cc == 6 || cc == 38 || (cc >= 96 && cc <= 101);
}

enum guard_class guard_classify(const struct engine *e, const struct midi_msg *m)
{
	if (!midi_msg_is_channel(m))
		return m->status == MIDI_RESET ? GUARD_MUST : GUARD_SHED;
	if (engine_steers(e, m) != ENGINE_STEER_NONE)
		return GUARD_MUST; /* every output must steer alike, and a panic must end notes */
	switch (midi_msg_type(m)) {
	case MIDI_NOTE_ON:
		return m->data[1] > 0 ? GUARD_NOTE_ON : GUARD_MUST;
	case MIDI_NOTE_OFF:
		return GUARD_MUST;
	case MIDI_CONTROL: {
		int cc = m->data[0];
		if (cc >= 120 || is_parameter_cc(cc))
			return GUARD_MUST;
		if ((cc == CC_SUSTAIN || cc == CC_SOSTENUTO) && m->data[1] < 64)
			return GUARD_MUST;
		return GUARD_MERGE;
	}
	default:
		return GUARD_MERGE;
	}
}

int guard_end_slots(const struct engine *e)
{
	return engine_end_size(e) + GUARD_END_CHANNEL_SLOTS;
}

int guard_must_slots(const struct engine *e, const struct midi_msg *m)
{
	if (!midi_msg_is_channel(m))
		return guard_end_slots(e) + GUARD_SETUP_SLOTS; /* System Reset: panic, set-up */
	enum engine_steer steer = engine_steers(e, m);
	if (steer == ENGINE_STEER_PANIC)
		return guard_end_slots(e);
	if (steer == ENGINE_STEER_TUNING)
		return COMMAND_SLOTS;
	if (midi_msg_type(m) != MIDI_CONTROL)
		return 2; /* a note-off */
	int cc = m->data[0];
	if (cc == 121)
		return 3 * CHANNEL_FAN;
	if (cc >= 120)
		return engine_note_count(e) + 2 * CHANNEL_FAN; /* the channel's notes end */
	return CHANNEL_FAN;
}

/* Pedals on an MPE controller's member channel hold the whole zone, so
 * they are kept as the master channel's (as the engine takes them). */
static int channel_of(const struct engine *e, const struct midi_msg *m)
{
	int ch = midi_msg_channel(m);
	const struct engine_input_spec *in = &engine_spec_of(e)->input;
	int master = in->mpe_zone == MPE_ZONE_LOWER ? 0 : 15;
	bool pedal = midi_msg_type(m) == MIDI_CONTROL &&
		     (m->data[0] == CC_SUSTAIN || m->data[0] == CC_SOSTENUTO);
	if (pedal && in->mpe && ((in->channels >> ch) & 1) && ch != master)
		return master;
	return ch;
}

void guard_store_put(struct output_guard *g, const struct engine *e, uint8_t source,
		     const struct midi_msg *m)
{
	struct guard_store *s = &g->store;
	int ch = channel_of(e, m);
	uint16_t chbit = (uint16_t)(1u << ch);
	bool replaced = false;
	switch (midi_msg_type(m)) {
	case MIDI_CONTROL: {
		int cc = m->data[0];
		replaced = bit(s->cc_pending[ch], cc);
		put(s->cc_pending[ch], cc, true);
		s->cc[ch][cc] = m->data[1];
		s->cc_source[ch][cc] = source;
		break;
	}
	case MIDI_POLY_PRESSURE: {
		int key = m->data[0];
		replaced = bit(s->poly_pending[ch], key);
		put(s->poly_pending[ch], key, true);
		s->poly[ch][key] = m->data[1];
		s->poly_source[ch][key] = source;
		break;
	}
	case MIDI_PITCH_BEND:
		replaced = s->bend_pending & chbit;
		s->bend_pending |= chbit;
		s->bend[ch] = (uint16_t)midi_msg_pitch_bend_value(m);
		s->bend_source[ch] = source;
		break;
	case MIDI_PROGRAM:
		replaced = s->program_pending & chbit;
		s->program_pending |= chbit;
		s->program[ch] = m->data[0];
		s->program_source[ch] = source;
		break;
	case MIDI_CHANNEL_PRESSURE:
		replaced = s->pressure_pending & chbit;
		s->pressure_pending |= chbit;
		s->pressure[ch] = m->data[0];
		s->pressure_source[ch] = source;
		break;
	default:
		return;
	}
	if (replaced)
		g->values_merged++;
	else
		s->count++;
}

static void forget_cc(struct guard_store *s, int ch, int cc)
{
	if (!bit(s->cc_pending[ch], cc))
		return;
	put(s->cc_pending[ch], cc, false);
	s->count--;
}

static void forget_channel(struct guard_store *s, int ch)
{
	uint16_t chbit = (uint16_t)(1u << ch);
	for (int i = 0; i < 128; i++) {
		forget_cc(s, ch, i);
		if (bit(s->poly_pending[ch], i)) {
			put(s->poly_pending[ch], i, false);
			s->count--;
		}
	}
	uint16_t *pending[3] = {&s->bend_pending, &s->program_pending, &s->pressure_pending};
	for (int i = 0; i < 3; i++) {
		if (*pending[i] & chbit) {
			*pending[i] = (uint16_t)(*pending[i] & ~chbit);
			s->count--;
		}
	}
}

void guard_store_forget(struct output_guard *g, const struct engine *e, const struct midi_msg *m)
{
	struct guard_store *s = &g->store;
	if (s->count == 0 || midi_msg_type(m) != MIDI_CONTROL)
		return;
	int ch = channel_of(e, m), cc = m->data[0];
	if (cc == 121)
		forget_channel(s, ch);
	else if (cc < 120)
		forget_cc(s, ch, cc);
}

static bool take_bits(uint8_t *bits, int *index)
{
	for (int i = 0; i < 16; i++) {
		if (!bits[i])
			continue;
		int low = __builtin_ctz(bits[i]);
		bits[i] = (uint8_t)(bits[i] & ~(1u << low));
		*index = i * 8 + low;
		return true;
	}
	return false;
}

bool guard_store_take(struct output_guard *g, uint8_t *source, struct midi_msg *m)
{
	struct guard_store *s = &g->store;
	if (s->count == 0)
		return false;
	for (int ch = 0; ch < 16; ch++) {
		uint16_t chbit = (uint16_t)(1u << ch);
		int i;
		if (take_bits(s->cc_pending[ch], &i)) {
			*m = midi_msg_control((uint8_t)ch, (uint8_t)i, s->cc[ch][i]);
			*source = s->cc_source[ch][i];
		} else if (s->program_pending & chbit) {
			s->program_pending = (uint16_t)(s->program_pending & ~chbit);
			*m = midi_msg_program((uint8_t)ch, s->program[ch]);
			*source = s->program_source[ch];
		} else if (s->pressure_pending & chbit) {
			s->pressure_pending = (uint16_t)(s->pressure_pending & ~chbit);
			*m = midi_msg_channel_pressure((uint8_t)ch, s->pressure[ch]);
			*source = s->pressure_source[ch];
		} else if (take_bits(s->poly_pending[ch], &i)) {
			*m = midi_msg_poly_pressure((uint8_t)ch, (uint8_t)i, s->poly[ch][i]);
			*source = s->poly_source[ch][i];
		} else if (s->bend_pending & chbit) {
			s->bend_pending = (uint16_t)(s->bend_pending & ~chbit);
			*m = midi_msg_pitch_bend((uint8_t)ch, s->bend[ch]);
			*source = s->bend_source[ch];
		} else {
			continue;
		}
		s->count--;
		return true;
	}
	s->count = 0; /* cannot happen: count and bits agree */
	return false;
}

void guard_store_clear(struct output_guard *g)
{
	memset(&g->store, 0, sizeof g->store);
}
