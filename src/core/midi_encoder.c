/*
 * midi_encoder: message to bytes, and running status on a byte stream
 * (model in midi_encoder.h).  Length and validity are decided before a
 * single byte is written, so a refused message leaves the buffer untouched.
 */
#include "latticed/midi_encoder.h"

#include <string.h>

size_t midi_msg_encoded_length(const struct midi_msg *m)
{
	if (!midi_msg_is_valid(m))
		return 0;
	if (midi_msg_is_channel(m))
		return 1 + (size_t)midi_channel_data_length(m->status);
	if (m->status == MIDI_SYSEX)
		return m->sysex_length;
	return 1 + (size_t)midi_status_data_length(m->status);
}

size_t midi_msg_encode(const struct midi_msg *m, uint8_t *out, size_t capacity)
{
	size_t n = midi_msg_encoded_length(m);
	if (n == 0 || n > capacity)
		return 0;
	if (m->status == MIDI_SYSEX) {
		memcpy(out, m->sysex, n);
		return n;
	}
	out[0] = m->status;
	for (size_t d = 0; d + 1 < n; d++)
		out[1 + d] = m->data[d];
	return n;
}

static bool is_channel_status(uint8_t b)
{
	return b >= 0x80 && b < 0xF0;
}

void midi_running_status_reset(struct midi_running_status *rs)
{
	rs->status = 0;
}

size_t midi_running_status_skip(const struct midi_running_status *rs, const uint8_t *bytes)
{
	return is_channel_status(bytes[0]) && bytes[0] == rs->status ? 1 : 0;
}

void midi_running_status_sent(struct midi_running_status *rs, uint8_t status)
{
	if (is_channel_status(status))
		rs->status = status;
	else if (!midi_status_is_realtime(status))
		rs->status = 0; /* system common and SysEx cancel it */
}
