/*
 * mts: builds MIDI Tuning Standard SysEx messages into caller buffers
 * (layouts in mts.h).  Every byte is masked to 7 bits so a bad word can
 * never put a status byte inside the SysEx.
 */
#include "mts.h"

uint8_t mts_checksum(const uint8_t *bytes, size_t length)
{
	uint8_t sum = 0;
	for (size_t i = 0; i < length; i++)
		sum ^= bytes[i];
	return sum & 0x7F;
}

size_t mts_single_note_change(uint8_t device, uint8_t program, int count,
			      const uint8_t *keys, const uint8_t (*words)[3],
			      uint8_t *out, size_t cap)
{
	if (count < 1 || count > 127 || cap < (size_t)MTS_SINGLE_NOTE_LENGTH(count))
		return 0;
	size_t n = 0;
	out[n++] = 0xF0;
	out[n++] = 0x7F;
	out[n++] = device & 0x7F;
	out[n++] = 0x08;
	out[n++] = 0x02;
	out[n++] = program & 0x7F;
	out[n++] = (uint8_t)count;
	for (int i = 0; i < count; i++) {
		out[n++] = keys[i] & 0x7F;
		out[n++] = words[i][0] & 0x7F;
		out[n++] = words[i][1] & 0x7F;
		out[n++] = words[i][2] & 0x7F;
	}
	out[n++] = 0xF7;
	return n;
}

size_t mts_bulk_dump(uint8_t device, uint8_t program, const char *name,
		     const uint8_t (*words)[3], uint8_t *out, size_t cap)
{
	if (cap < MTS_BULK_DUMP_LENGTH)
		return 0;
	size_t n = 0;
	out[n++] = 0xF0;
	out[n++] = 0x7E;
	out[n++] = device & 0x7F;
	out[n++] = 0x08;
	out[n++] = 0x01;
	out[n++] = program & 0x7F;
	bool ended = false;
	for (int i = 0; i < 16; i++) {
		char c = ended || !name ? '\0' : name[i];
		if (c == '\0')
			ended = true;
		out[n++] = ended ? ' ' : (c >= 0x20 && c < 0x7F ? (uint8_t)c : '?');
	}
	for (int key = 0; key < 128; key++) {
		out[n++] = words[key][0] & 0x7F;
		out[n++] = words[key][1] & 0x7F;
		out[n++] = words[key][2] & 0x7F;
	}
	out[n] = mts_checksum(out + 1, n - 1);
	n++;
	out[n++] = 0xF7;
	return n;
}
