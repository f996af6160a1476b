/*
 * pm_bytes: one flag of state, whether a SysEx is open, is all the packing
 * needs; everything else follows from the first byte of each word.
 */
#include "pm_bytes.h"

void pm_bytes_init(struct pm_bytes *c)
{
	c->in_sysex = false;
	c->dropped_words = 0;
}

int pm_bytes_data_length(uint8_t status)
{
	if (status < 0x80)
		return 0;
	if (status < 0xF0)
		return (status & 0xE0) == 0xC0 ? 1 : 2;
	if (status == 0xF2)
		return 2;
	if (status == 0xF1 || status == 0xF3)
		return 1;
	return 0;
}

/* SysEx bytes from b[start] on, up to and including F7. */
static size_t sysex_bytes(struct pm_bytes *c, const uint8_t b[4], int start, uint8_t out[4])
{
	size_t n = 0;
	for (int k = start; k < 4; k++) {
		uint8_t x = b[k];
		if (x >= 0xF8) {
			out[n++] = x;
			continue;
		}
		if ((x & 0x80) && x != 0xF7 && !(k == 0 && x == 0xF0)) {
			/* A status byte inside the packed data: the SysEx ends
			 * here, and what follows cannot be framed. */
			c->in_sysex = false;
			out[n++] = x;
			break;
		}
		out[n++] = x;
		if (x == 0xF7) {
			c->in_sysex = false;
			break;
		}
	}
	return n;
}

size_t pm_bytes_from_word(struct pm_bytes *c, uint32_t message, uint8_t out[4])
{
	const uint8_t b[4] = { (uint8_t)(message & 0xFF), (uint8_t)((message >> 8) & 0xFF),
			       (uint8_t)((message >> 16) & 0xFF), (uint8_t)((message >> 24) & 0xFF) };
	uint8_t s = b[0];

	if (s >= 0xF8) {
		out[0] = s;
		return 1;
	}
	if (c->in_sysex) {
		if (!(s & 0x80) || s == 0xF7)
			return sysex_bytes(c, b, 0, out);
		c->in_sysex = false; /* cut short by a new status byte */
	}
	if (s == 0xF0) {
		c->in_sysex = true;
		return sysex_bytes(c, b, 0, out);
	}
	if (!(s & 0x80)) {
		c->dropped_words++;
		return 0;
	}
	size_t n = 1 + (size_t)pm_bytes_data_length(s);
	for (size_t i = 0; i < n; i++)
		out[i] = b[i];
	return n;
}

bool pm_bytes_to_word(const uint8_t *bytes, size_t length, uint32_t *message)
{
	if (length == 0 || length > 3 || !(bytes[0] & 0x80) || bytes[0] == 0xF0 || bytes[0] == 0xF7)
		return false;
	if (length != 1 + (size_t)pm_bytes_data_length(bytes[0]))
		return false;
	uint32_t m = bytes[0];
	for (size_t i = 1; i < length; i++) {
		if (bytes[i] & 0x80)
			return false;
		m |= (uint32_t)bytes[i] << (8 * i);
	}
	*message = m;
	return true;
}
