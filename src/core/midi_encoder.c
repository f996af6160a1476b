/*
 * midi_encoder: message to bytes.  Length and validity are decided before a
 * single byte is written so a refused message leaves buffer and running
 * status untouched.
 */
#include "latticed/midi_encoder.h"

#include <string.h>

void midi_encoder_init(struct midi_encoder *e, bool use_running_status)
{
	e->running_status = 0;
	e->use_running_status = use_running_status;
}

void midi_encoder_reset(struct midi_encoder *e)
{
	e->running_status = 0;
}

size_t midi_msg_encoded_length(const struct midi_msg *m)
{
	if (!midi_msg_is_valid(m))
		return 0;
	if (m->status == MIDI_SYSEX)
		return m->sysex_length;
	return 1 + (size_t)midi_status_data_length(m->status);
}

static size_t encode(const struct midi_msg *m, bool omit_status, uint8_t *out, size_t capacity)
{
	size_t full = midi_msg_encoded_length(m);
	if (full == 0)
		return 0;
	size_t n = omit_status ? full - 1 : full;
	if (n > capacity)
		return 0;
	if (m->status == MIDI_SYSEX) {
		memcpy(out, m->sysex, n);
		return n;
	}
	size_t i = 0;
	if (!omit_status)
		out[i++] = m->status;
	for (size_t d = 0; d + 1 < full; d++)
		out[i++] = m->data[d];
	return n;
}

size_t midi_msg_encode(const struct midi_msg *m, uint8_t *out, size_t capacity)
{
	return encode(m, false, out, capacity);
}

size_t midi_encoder_write(struct midi_encoder *e, const struct midi_msg *m, uint8_t *out,
			  size_t capacity)
{
	bool channel = midi_msg_is_channel(m);
	bool omit = channel && e->use_running_status && m->status == e->running_status;
	size_t n = encode(m, omit, out, capacity);
	if (n == 0)
		return 0;
	if (channel)
		e->running_status = m->status;
	else if (!midi_status_is_realtime(m->status))
		e->running_status = 0;
	return n;
}
