/*
 * midi_msg: message lengths and checks shared by the parser, the encoder
 * and the file reader/writer.  The lengths are those of the MIDI 1.0 status
 * table; undefined status bytes count as taking no data.
 */
#include "latticed/midi_msg.h"

#include <string.h>

/* Data bytes of 8n..En (note off, note on, poly pressure, control,
 * program, channel pressure, pitch bend) and of F0..FF. */
static const int8_t channel_lengths[7] = {2, 2, 2, 2, 1, 1, 2};
static const int8_t system_lengths[16] = {
	[MIDI_MTC_QUARTER & 0x0F] = 1, [MIDI_SONG_POSITION & 0x0F] = 2, [MIDI_SONG_SELECT & 0x0F] = 1,
};

int midi_status_data_length(uint8_t status)
{
	if (status < 0x80)
		return -1;
	if (status < 0xF0)
		return channel_lengths[(status >> 4) - 8];
	return system_lengths[status & 0x0F];
}

static bool status_is_defined(uint8_t status)
{
	return status >= 0x80 && status != 0xF4 && status != 0xF5 && status != 0xF9 &&
	       status != 0xFD;
}

bool midi_msg_is_valid(const struct midi_msg *m)
{
	if (midi_msg_is_channel(m)) /* the common case */
		return !(m->data[0] & 0x80) &&
		       (midi_channel_data_length(m->status) < 2 || !(m->data[1] & 0x80));
	if (!status_is_defined(m->status))
		return false;
	if (m->status == MIDI_SYSEX) {
		if (!m->sysex || m->sysex_length < 2 || m->sysex[0] != MIDI_SYSEX ||
		    m->sysex[m->sysex_length - 1] != MIDI_SYSEX_END)
			return false;
		for (uint16_t i = 1; i + 1 < m->sysex_length; i++)
			if (m->sysex[i] & 0x80)
				return false;
		return true;
	}
	int n = midi_status_data_length(m->status);
	for (int i = 0; i < 2; i++) {
		if (i < n && (m->data[i] & 0x80))
			return false;
	}
	return true;
}

bool midi_msg_equal(const struct midi_msg *a, const struct midi_msg *b)
{
	if (a->status != b->status)
		return false;
	if (a->status == MIDI_SYSEX) {
		if (a->sysex_length != b->sysex_length)
			return false;
		if (a->sysex_length == 0)
			return true;
		if (!a->sysex || !b->sysex)
			return a->sysex == b->sysex;
		return memcmp(a->sysex, b->sysex, a->sysex_length) == 0;
	}
	return a->data[0] == b->data[0] && a->data[1] == b->data[1];
}
