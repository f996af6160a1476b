/*
 * synth_model: an independent model of what a synth does with a MIDI byte
 * stream, written for the tests from the standards, not from the engine.
 *
 * It parses raw bytes (status bytes, two or one data bytes, SysEx F0..F7;
 * MIDI 1.0) and keeps per channel: the pitch-bend value (14 bits, centre
 * 8192) and range (RPN 0 via CC101/100 then CC6; default 2 semitones, GM),
 * the MTS tuning program (RPN 3), sustain (CC64 >= 64) and sostenuto
 * (CC66: holds the notes that are down when it goes down), which notes
 * are on and which ring under a pedal after their note-off.  It also keeps
 * MTS tuning words from single-note changes (F0 7F dd 08 02 ...) and bulk
 * dumps (F0 7E dd 08 01 ...) (MMA MIDI Tuning Standard) and an MPE zone
 * from the MPE Configuration Message (RPN 6 on channel 1 or 16; MPE 1.0).
 *
 * Rule violations are counted with the first one described:
 *   - a note-on for a channel and key that already sounds;
 *   - a note-off with no note-on before it;
 *   - a bend change on a channel while a note sounds there, unless the
 *     test says the player is moving a wheel right now.
 */
#ifndef LATTICED_SYNTH_MODEL_H
#define LATTICED_SYNTH_MODEL_H

#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

struct model_channel {
	int bend;                 /* 0..16383 */
	int range;                /* semitones */
	int rpn_msb, rpn_lsb;
	int tuning_program;       /* -1: none selected */
	bool sustain, sostenuto;
	bool on[128];             /* note-on seen, note-off not yet */
	bool ringing[128];        /* off, but held by a pedal */
	bool latched[128];        /* held by sostenuto */
	uint32_t ons[128], offs[128];
	int cc[128];              /* last value, -1 unknown */
	int program, pressure;    /* -1 unknown */
};

struct synth_model {
	struct model_channel ch[16];
	uint8_t mts[128][128][3]; /* [program][key] */
	bool mts_set[128][128];
	int mpe_members;          /* lower zone member count; 0: no zone */
	int mpe_upper_members;
	double played;            /* fraction of a bend this synth plays */
	bool bend_change_allowed;
	int violations;
	char first[256];
	/* the last note-on seen, for the tests to look at */
	int last_on_channel, last_on_key;
	int note_ons_seen;
	/* byte parser */
	uint8_t status;
	uint8_t data[2];
	int count;
	uint8_t sysex[1024];
	size_t sysex_length;
	bool in_sysex;
};

static void model_violation(struct synth_model *s, const char *what, int ch, int key)
{
	if (s->violations++ == 0)
		snprintf(s->first, sizeof s->first, "%s (channel %d, key %d)", what, ch + 1, key);
}

static void model_init(struct synth_model *s, double played)
{
	memset(s, 0, sizeof *s);
	for (int c = 0; c < 16; c++) {
		s->ch[c].bend = 8192;
		s->ch[c].range = 2;
		s->ch[c].rpn_msb = s->ch[c].rpn_lsb = 127;
		s->ch[c].tuning_program = -1;
		s->ch[c].program = s->ch[c].pressure = -1;
		for (int k = 0; k < 128; k++)
			s->ch[c].cc[k] = -1;
	}
	s->played = played;
	s->last_on_channel = -1;
}

static bool model_sounds(const struct model_channel *c, int key)
{
	return c->on[key] || c->ringing[key];
}

static bool model_channel_sounds(const struct model_channel *c)
{
	for (int k = 0; k < 128; k++)
		if (model_sounds(c, k))
			return true;
	return false;
}

static inline int model_sounding_count(const struct synth_model *s)
{
	int n = 0;
	for (int c = 0; c < 16; c++)
		for (int k = 0; k < 128; k++)
			n += model_sounds(&s->ch[c], k);
	return n;
}

/* Pitch of key on channel c as a note number: tuning word or 12-TET key,
 * plus the bend, plus the zone's master bend for MPE members. */
static inline double model_pitch(const struct synth_model *s, int c, int key)
{
	const struct model_channel *m = &s->ch[c];
	double note = key;
	if (m->tuning_program >= 0 && s->mts_set[m->tuning_program][key]) {
		const uint8_t *w = s->mts[m->tuning_program][key];
		note = w[0] + ((w[1] << 7) | w[2]) / 16384.0;
	}
	note += (m->bend - 8192) / 8192.0 * m->range * s->played;
	int master = -1;
	if (s->mpe_members > 0 && c >= 1 && c <= s->mpe_members)
		master = 0;
	if (s->mpe_upper_members > 0 && c <= 14 && c >= 15 - s->mpe_upper_members)
		master = 15;
	if (master >= 0) {
		const struct model_channel *mc = &s->ch[master];
		note += (mc->bend - 8192) / 8192.0 * mc->range * s->played;
	}
	return note;
}

static void model_end_ringing(struct model_channel *c)
{
	for (int k = 0; k < 128; k++)
		if (c->ringing[k] && !c->sustain && !(c->sostenuto && c->latched[k]))
			c->ringing[k] = false;
}

static void model_note_off(struct synth_model *s, int ch, int key)
{
	struct model_channel *c = &s->ch[ch];
	if (!c->on[key]) {
		model_violation(s, "note-off without a note-on", ch, key);
		return;
	}
	c->on[key] = false;
	c->offs[key]++;
	if (c->sustain || (c->sostenuto && c->latched[key]))
		c->ringing[key] = true;
}

static void model_rpn_data(struct synth_model *s, int ch, int value)
{
	struct model_channel *c = &s->ch[ch];
	if (c->rpn_msb != 0)
		return;
	switch (c->rpn_lsb) {
	case 0:
		c->range = value;
		break;
	case 3:
		c->tuning_program = value;
		break;
	case 6:
		/* MPE configuration: channel 1 = lower zone, 16 = upper; the
		 * receiver then sets member ranges to 48, master to 2 (MPE 1.0) */
		if (ch == 0)
			s->mpe_members = value;
		else if (ch == 15)
			s->mpe_upper_members = value;
		for (int m = 0; m < 16; m++)
			s->ch[m].range = 48;
		s->ch[ch].range = 2;
		break;
	default:
		break;
	}
}

static void model_message(struct synth_model *s, uint8_t status, const uint8_t *d)
{
	int ch = status & 0x0F;
	struct model_channel *c = &s->ch[ch];
	switch (status & 0xF0) {
	case 0x90:
		if (d[1] == 0) {
			model_note_off(s, ch, d[0]);
			break;
		}
		if (model_sounds(c, d[0]))
			model_violation(s, "note-on for a key that already sounds", ch, d[0]);
		c->on[d[0]] = true;
		c->ringing[d[0]] = false;
		c->latched[d[0]] = false;
		c->ons[d[0]]++;
		s->last_on_channel = ch;
		s->last_on_key = d[0];
		s->note_ons_seen++;
		break;
	case 0x80:
		model_note_off(s, ch, d[0]);
		break;
	case 0xE0: {
		int value = d[0] | (d[1] << 7);
		if (value != c->bend && model_channel_sounds(c) && !s->bend_change_allowed)
			model_violation(s, "bend changed under a sounding note", ch, -1);
		/* an MPE master bend moves every member's pitch: also a wheel */
		c->bend = value;
		break;
	}
	case 0xB0:
		c->cc[d[0]] = d[1];
		switch (d[0]) {
		case 101:
			c->rpn_msb = d[1];
			break;
		case 100:
			c->rpn_lsb = d[1];
			break;
		case 6:
			model_rpn_data(s, ch, d[1]);
			break;
		case 64:
			c->sustain = d[1] >= 64;
			model_end_ringing(c);
			break;
		case 66:
			if (d[1] >= 64 && !c->sostenuto)
				for (int k = 0; k < 128; k++)
					c->latched[k] = c->on[k];
			c->sostenuto = d[1] >= 64;
			if (!c->sostenuto)
				memset(c->latched, 0, sizeof c->latched);
			model_end_ringing(c);
			break;
		case 120: /* all sound off: silence now, pedals or not (MIDI 1.0, channel mode messages) */
			memset(c->ringing, 0, sizeof c->ringing);
			for (int k = 0; k < 128; k++)
				if (c->on[k])
					model_violation(s, "all-sound-off over a note never turned off", ch, k);
			/* the synth is silent either way: a pass-through source may send it */
			memset(c->on, 0, sizeof c->on);
			break;
		case 121: /* reset all controllers: pedals up, bend centred */
			c->sustain = c->sostenuto = false;
			c->bend = 8192;
			model_end_ringing(c);
			break;
		case 123: /* all notes off: a note-off for every key, the pedals still hold (MIDI 1.0) */
		case 124: /* omni off, omni on, mono, poly: each also ends every note (MIDI 1.0) */
		case 125:
		case 126:
		case 127:
			for (int k = 0; k < 128; k++)
				if (c->on[k]) {
					model_violation(s, "all-notes-off over a note never turned off", ch, k);
					model_note_off(s, ch, k);
				}
			break;
		default:
			break;
		}
		break;
	case 0xC0:
		c->program = d[0];
		break;
	case 0xD0:
		c->pressure = d[0];
		break;
	default:
		break;
	}
}

static void model_sysex(struct synth_model *s)
{
	const uint8_t *x = s->sysex;
	size_t n = s->sysex_length;
	if (n >= 12 && x[1] == 0x7F && x[3] == 0x08 && x[4] == 0x02) {
		int program = x[5], count = x[6];
		if (n != (size_t)(8 + 4 * count))
			return;
		for (int i = 0; i < count; i++) {
			const uint8_t *p = x + 7 + 4 * i;
			if (p[1] == 0x7F && p[2] == 0x7F && p[3] == 0x7F)
				continue; /* "no change" */
			memcpy(s->mts[program][p[0]], p + 1, 3);
			s->mts_set[program][p[0]] = true;
		}
	} else if (n == 408 && x[1] == 0x7E && x[3] == 0x08 && x[4] == 0x01) {
		int program = x[5];
		for (int k = 0; k < 128; k++) {
			memcpy(s->mts[program][k], x + 22 + 3 * k, 3);
			s->mts_set[program][k] = true;
		}
	}
}

/* Feeds raw bytes (no running status needed, but it is honoured). */
static void model_feed(struct synth_model *s, const uint8_t *bytes, size_t n)
{
	for (size_t i = 0; i < n; i++) {
		uint8_t b = bytes[i];
		if (b >= 0xF8)
			continue;
		if (s->in_sysex) {
			if (s->sysex_length < sizeof s->sysex)
				s->sysex[s->sysex_length++] = b;
			if (b == 0xF7) {
				s->in_sysex = false;
				model_sysex(s);
			}
			continue;
		}
		if (b == 0xF0) {
			s->in_sysex = true;
			s->sysex_length = 0;
			s->sysex[s->sysex_length++] = b;
			continue;
		}
		if (b & 0x80) {
			s->status = b >= 0xF0 ? 0 : b;
			s->count = 0;
			continue;
		}
		if (!s->status)
			continue;
		s->data[s->count++] = b;
		int need = (s->status & 0xF0) == 0xC0 || (s->status & 0xF0) == 0xD0 ? 1 : 2;
		if (s->count == need) {
			model_message(s, s->status, s->data);
			s->count = 0;
		}
	}
}

static void model_tap(void *context, const uint8_t *bytes, size_t n)
{
	model_feed(context, bytes, n);
}

#endif
