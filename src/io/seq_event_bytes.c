/*
 * seq_event_bytes: the conversion written out by hand rather than through
 * alsa-lib's snd_midi_event coder, because the coder is stateful (running
 * status, SysEx buffering) and one would be needed per direction and per
 * thread; a pure function of one event needs neither.  The tests check
 * every case against the coder itself.
 *
 * Status bytes and data lengths: MIDI 1.0.  Event types and their fields:
 * alsa-lib include/seq_event.h.
 */
#include "seq_event_bytes.h"

#define BEND_CENTRE 8192

static size_t put3(uint8_t *out, unsigned status, unsigned a, unsigned b)
{
	out[0] = (uint8_t)status;
	out[1] = (uint8_t)(a & 0x7F);
	out[2] = (uint8_t)(b & 0x7F);
	return 3;
}

static size_t put2(uint8_t *out, unsigned status, unsigned a)
{
	out[0] = (uint8_t)status;
	out[1] = (uint8_t)(a & 0x7F);
	return 2;
}

static size_t put1(uint8_t *out, unsigned status)
{
	out[0] = (uint8_t)status;
	return 1;
}

/* Four CCs: parameter number MSB and LSB, data entry MSB (6) and LSB (38). */
static size_t put_parameter(uint8_t *out, unsigned cc_status, unsigned number_msb_cc,
			    unsigned number_lsb_cc, unsigned param, int value)
{
	unsigned v = (unsigned)value;
	size_t n = 0;
	n += put3(out + n, cc_status, number_msb_cc, param >> 7);
	n += put3(out + n, cc_status, number_lsb_cc, param);
	n += put3(out + n, cc_status, 6, v >> 7);
	n += put3(out + n, cc_status, 38, v);
	return n;
}

size_t seq_event_to_bytes(const snd_seq_event_t *ev, uint8_t out[SEQ_EVENT_BYTES_MAX])
{
	const snd_seq_ev_note_t *note = &ev->data.note;
	const snd_seq_ev_ctrl_t *ctrl = &ev->data.control;
	unsigned note_ch = note->channel & 0x0F;
	unsigned ctrl_ch = ctrl->channel & 0x0F;

	switch (ev->type) {
	case SND_SEQ_EVENT_NOTEON:
		return put3(out, 0x90 | note_ch, note->note, note->velocity);
	case SND_SEQ_EVENT_NOTEOFF:
		return put3(out, 0x80 | note_ch, note->note, note->velocity);
	case SND_SEQ_EVENT_KEYPRESS:
		return put3(out, 0xA0 | note_ch, note->note, note->velocity);
	case SND_SEQ_EVENT_CONTROLLER:
		return put3(out, 0xB0 | ctrl_ch, ctrl->param, (unsigned)ctrl->value);
	case SND_SEQ_EVENT_PGMCHANGE:
		return put2(out, 0xC0 | ctrl_ch, (unsigned)ctrl->value);
	case SND_SEQ_EVENT_CHANPRESS:
		return put2(out, 0xD0 | ctrl_ch, (unsigned)ctrl->value);
	case SND_SEQ_EVENT_PITCHBEND: {
		int v = ctrl->value + BEND_CENTRE;
		if (v < 0)
			v = 0;
		if (v > 16383)
			v = 16383;
		return put3(out, 0xE0 | ctrl_ch, (unsigned)v, (unsigned)v >> 7);
	}
	case SND_SEQ_EVENT_CONTROL14:
		if (ctrl->param < 32) {
			size_t n = put3(out, 0xB0 | ctrl_ch, ctrl->param, (unsigned)ctrl->value >> 7);
			return n + put3(out + n, 0xB0 | ctrl_ch, ctrl->param + 32, (unsigned)ctrl->value);
		}
		return put3(out, 0xB0 | ctrl_ch, ctrl->param, (unsigned)ctrl->value);
	case SND_SEQ_EVENT_REGPARAM:
		return put_parameter(out, 0xB0 | ctrl_ch, 101, 100, ctrl->param, ctrl->value);
	case SND_SEQ_EVENT_NONREGPARAM:
		return put_parameter(out, 0xB0 | ctrl_ch, 99, 98, ctrl->param, ctrl->value);
	case SND_SEQ_EVENT_QFRAME:
		return put2(out, 0xF1, (unsigned)ctrl->value);
	case SND_SEQ_EVENT_SONGPOS:
		return put3(out, 0xF2, (unsigned)ctrl->value, (unsigned)ctrl->value >> 7);
	case SND_SEQ_EVENT_SONGSEL:
		return put2(out, 0xF3, (unsigned)ctrl->value);
	case SND_SEQ_EVENT_TUNE_REQUEST:
		return put1(out, 0xF6);
	case SND_SEQ_EVENT_CLOCK:
		return put1(out, 0xF8);
	case SND_SEQ_EVENT_TICK:
		return put1(out, 0xF9);
	case SND_SEQ_EVENT_START:
		return put1(out, 0xFA);
	case SND_SEQ_EVENT_CONTINUE:
		return put1(out, 0xFB);
	case SND_SEQ_EVENT_STOP:
		return put1(out, 0xFC);
	case SND_SEQ_EVENT_SENSING:
		return put1(out, 0xFE);
	case SND_SEQ_EVENT_RESET:
		return put1(out, 0xFF);
	default:
		return 0;
	}
}

bool seq_event_sysex(const snd_seq_event_t *ev, const uint8_t **bytes, size_t *length)
{
	if (ev->type != SND_SEQ_EVENT_SYSEX ||
	    (ev->flags & SND_SEQ_EVENT_LENGTH_MASK) != SND_SEQ_EVENT_LENGTH_VARIABLE ||
	    ev->data.ext.len == 0 || ev->data.ext.ptr == NULL)
		return false;
	*bytes = ev->data.ext.ptr;
	*length = ev->data.ext.len;
	return true;
}

/* Data bytes after a status byte (MIDI 1.0); -1 for F0, F7 and the
 * undefined F4, F5, FD, which are handled apart or refused. */
static int data_length(uint8_t status)
{
	if (status < 0xF0)
		return (status & 0xE0) == 0xC0 ? 1 : 2;
	switch (status) {
	case 0xF1:
	case 0xF3:
		return 1;
	case 0xF2:
		return 2;
	case 0xF6:
	case 0xF8:
	case 0xF9:
	case 0xFA:
	case 0xFB:
	case 0xFC:
	case 0xFE:
	case 0xFF:
		return 0;
	default:
		return -1;
	}
}

static void set_system(snd_seq_event_t *ev, snd_seq_event_type_t type, int value)
{
	ev->type = type;
	snd_seq_ev_set_fixed(ev);
	ev->data.control.value = value;
}

/* A system common or real-time status (one or two data bytes in a, b)
 * as its sequencer event; false for a status the sequencer has none for. */
static bool system_from_bytes(snd_seq_event_t *ev, uint8_t s, unsigned a, unsigned b)
{
	switch (s) {
	case 0xF1:
		set_system(ev, SND_SEQ_EVENT_QFRAME, (int)a);
		return true;
	case 0xF2:
		set_system(ev, SND_SEQ_EVENT_SONGPOS, (int)(a | b << 7));
		return true;
	case 0xF3:
		set_system(ev, SND_SEQ_EVENT_SONGSEL, (int)a);
		return true;
	case 0xF6:
		set_system(ev, SND_SEQ_EVENT_TUNE_REQUEST, 0);
		return true;
	case 0xF8:
		set_system(ev, SND_SEQ_EVENT_CLOCK, 0);
		return true;
	case 0xF9:
		set_system(ev, SND_SEQ_EVENT_TICK, 0);
		return true;
	case 0xFA:
		set_system(ev, SND_SEQ_EVENT_START, 0);
		return true;
	case 0xFB:
		set_system(ev, SND_SEQ_EVENT_CONTINUE, 0);
		return true;
	case 0xFC:
		set_system(ev, SND_SEQ_EVENT_STOP, 0);
		return true;
	case 0xFE:
		set_system(ev, SND_SEQ_EVENT_SENSING, 0);
		return true;
	case 0xFF:
		set_system(ev, SND_SEQ_EVENT_RESET, 0);
		return true;
	default:
		return false;
	}
}

bool seq_event_from_bytes(snd_seq_event_t *ev, const uint8_t *bytes, size_t length)
{
	if (length == 0)
		return false;
	uint8_t s = bytes[0];
	if (s == 0xF0) {
		if (length < 2 || bytes[length - 1] != 0xF7)
			return false;
		snd_seq_ev_set_sysex(ev, (unsigned)length, (void *)bytes);
		return true;
	}
	int need = data_length(s);
	if (!(s & 0x80) || need < 0 || length != (size_t)need + 1)
		return false;
	for (size_t i = 1; i < length; i++)
		if (bytes[i] & 0x80)
			return false;
	unsigned ch = s & 0x0F;
	unsigned a = length > 1 ? bytes[1] : 0, b = length > 2 ? bytes[2] : 0;

	switch (s & 0xF0) {
	case 0x80:
		snd_seq_ev_set_noteoff(ev, ch, a, b);
		return true;
	case 0x90:
		snd_seq_ev_set_noteon(ev, ch, a, b);
		return true;
	case 0xA0:
		snd_seq_ev_set_keypress(ev, ch, a, b);
		return true;
	case 0xB0:
		snd_seq_ev_set_controller(ev, ch, a, b);
		return true;
	case 0xC0:
		snd_seq_ev_set_pgmchange(ev, ch, a);
		return true;
	case 0xD0:
		snd_seq_ev_set_chanpress(ev, ch, a);
		return true;
	case 0xE0:
		snd_seq_ev_set_pitchbend(ev, ch, (int)(a | b << 7) - BEND_CENTRE);
		return true;
	default:
		return system_from_bytes(ev, s, a, b);
	}
}
