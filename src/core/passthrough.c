/*
 * passthrough: pass-through notes and pedals (model in passthrough.h).
 *
 * Ringing keys are kept per channel, not per source: a pedal holds a
 * channel on the synth whoever pressed it.  After a pedal moves, the keys
 * still ringing are those the remaining pedal holds: every released key
 * under sustain, the latched ones under sostenuto alone.
 */
#include "latticed/passthrough.h"

#include <string.h>

#define CC_SUSTAIN 64
#define CC_SOSTENUTO 66

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

static bool pedal(uint16_t pedals, int ch)
{
	return (pedals >> ch) & 1;
}

void passthrough_init(struct passthrough *p)
{
	memset(p, 0, sizeof *p);
}

/* What still rings on ch once its pedals are as they are now. */
static void settle(struct passthrough *p, int ch)
{
	if (pedal(p->sustain, ch))
		return;
	for (int i = 0; i < 16; i++)
		p->ringing[ch][i] = pedal(p->sostenuto, ch) ? p->ringing[ch][i] & p->latched[ch][i] : 0;
}

static void key_up(struct passthrough *p, int source, int ch, int key)
{
	if (!bit(p->down[source][ch], key))
		return;
	put(p->down[source][ch], key, false);
	p->held--;
	bool kept = pedal(p->sustain, ch) || (pedal(p->sostenuto, ch) && bit(p->latched[ch], key));
	if (kept)
		put(p->ringing[ch], key, true);
}

/* All Notes Off: every key of ch up, pedals still holding what they hold. */
static void release_channel(struct passthrough *p, int ch)
{
	for (int s = 0; s < PASSTHROUGH_MAX_SOURCES; s++)
		for (int key = 0; key < 128; key++)
			key_up(p, s, ch, key);
}

static void set_pedal(struct passthrough *p, uint8_t source, int ch, int cc, bool down)
{
	uint16_t *pedals = cc == CC_SUSTAIN ? &p->sustain : &p->sostenuto;
	if (cc == CC_SOSTENUTO && down && !pedal(p->sostenuto, ch)) {
		memset(p->latched[ch], 0, sizeof p->latched[ch]);
		for (int s = 0; s < PASSTHROUGH_MAX_SOURCES; s++)
			for (int i = 0; i < 16; i++)
				p->latched[ch][i] |= p->down[s][ch][i];
	}
	if (down) {
		*pedals = (uint16_t)(*pedals | (1u << ch));
		(cc == CC_SUSTAIN ? p->sustain_source : p->sostenuto_source)[ch] = source;
	} else {
		*pedals = (uint16_t)(*pedals & ~(1u << ch));
	}
	settle(p, ch);
}

static void control(struct passthrough *p, uint8_t source, int ch, int cc, int value)
{
	if (cc == CC_SUSTAIN || cc == CC_SOSTENUTO) {
		set_pedal(p, source, ch, cc, value >= 64);
	} else if (cc == 120) {
		for (int s = 0; s < PASSTHROUGH_MAX_SOURCES; s++)
			for (int key = 0; key < 128; key++)
				if (bit(p->down[s][ch], key)) {
					put(p->down[s][ch], key, false);
					p->held--;
				}
		memset(p->ringing[ch], 0, sizeof p->ringing[ch]);
	} else if (cc == 121) {
		set_pedal(p, source, ch, CC_SUSTAIN, false);
		set_pedal(p, source, ch, CC_SOSTENUTO, false);
	} else if (cc >= 123) {
		release_channel(p, ch);
	}
}

bool passthrough_record(struct passthrough *p, uint8_t source, const struct midi_msg *m)
{
	if (!midi_msg_is_channel(m))
		return true;
	if (source >= PASSTHROUGH_MAX_SOURCES)
		source = PASSTHROUGH_MAX_SOURCES - 1;
	int ch = midi_msg_channel(m), key = m->data[0];
	switch (midi_msg_type(m)) {
	case MIDI_NOTE_ON:
		if (m->data[1] == 0) {
			key_up(p, source, ch, key);
			break;
		}
		if (!bit(p->down[source][ch], key)) {
			if (p->held >= PASSTHROUGH_MAX_NOTES)
				return false;
			put(p->down[source][ch], key, true);
			p->held++;
		}
		put(p->ringing[ch], key, false);
		break;
	case MIDI_NOTE_OFF:
		key_up(p, source, ch, key);
		break;
	case MIDI_CONTROL:
		control(p, source, ch, m->data[0], m->data[1]);
		break;
	default:
		break;
	}
	return true;
}

int passthrough_end(struct passthrough *p, int source, passthrough_emit_fn emit, void *context)
{
	int sent = 0;
	for (int s = 0; s < PASSTHROUGH_MAX_SOURCES; s++) {
		if (source != PASSTHROUGH_ALL_SOURCES && s != source)
			continue;
		for (int ch = 0; ch < 16; ch++)
			for (int key = 0; key < 128; key++) {
				if (!bit(p->down[s][ch], key))
					continue;
				struct midi_msg off = midi_msg_note_off((uint8_t)ch, (uint8_t)key,
									 MIDI_DEFAULT_VELOCITY);
				emit(context, &off);
				sent++;
				key_up(p, s, ch, key);
			}
	}
	for (int ch = 0; ch < 16; ch++) {
		static const int pedals[2] = {CC_SUSTAIN, CC_SOSTENUTO};
		for (int i = 0; i < 2; i++) {
			int cc = pedals[i];
			bool down = pedal(cc == CC_SUSTAIN ? p->sustain : p->sostenuto, ch);
			const uint8_t *who = cc == CC_SUSTAIN ? p->sustain_source : p->sostenuto_source;
			if (!down || (source != PASSTHROUGH_ALL_SOURCES && who[ch] != source))
				continue;
			struct midi_msg up = midi_msg_control((uint8_t)ch, (uint8_t)cc, 0);
			emit(context, &up);
			sent++;
			set_pedal(p, who[ch], ch, cc, false);
		}
	}
	return sent;
}

int passthrough_end_size(const struct passthrough *p)
{
	int pedals = 0;
	for (int ch = 0; ch < 16; ch++)
		pedals += pedal(p->sustain, ch) + pedal(p->sostenuto, ch);
	return p->held + pedals;
}

bool passthrough_holds(const struct passthrough *p, int source, int channel, int key)
{
	return source >= 0 && source < PASSTHROUGH_MAX_SOURCES && channel >= 0 && channel < 16 &&
	       key >= 0 && key < 128 && bit(p->down[source][channel], key);
}

bool passthrough_pedal_down(const struct passthrough *p, int channel, int cc)
{
	if (channel < 0 || channel >= 16)
		return false;
	return pedal(cc == CC_SUSTAIN ? p->sustain : p->sostenuto, channel);
}

int passthrough_held(const struct passthrough *p)
{
	return p->held;
}

int passthrough_ringing(const struct passthrough *p)
{
	int n = 0;
	for (int ch = 0; ch < 16; ch++)
		for (int i = 0; i < 16; i++)
			n += __builtin_popcount(p->ringing[ch][i]);
	return n;
}
