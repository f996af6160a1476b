/*
 * vlq: encoder and decoder.  The decoder refuses a fifth byte instead of
 * letting the value wrap, so a corrupt file is reported where it is corrupt.
 */
#include "vlq.h"

size_t vlq_length(uint32_t value)
{
	if (value > VLQ_MAX_VALUE)
		return 0;
	size_t n = 1;
	while (value >>= 7)
		n++;
	return n;
}

size_t vlq_encode(uint32_t value, uint8_t out[VLQ_MAX_BYTES])
{
	size_t n = vlq_length(value);
	for (size_t i = 0; i < n; i++) {
		uint8_t group = (uint8_t)((value >> (7 * (n - 1 - i))) & 0x7F);
		out[i] = i + 1 < n ? (uint8_t)(group | 0x80) : group;
	}
	return n;
}

enum vlq_result vlq_decode(const uint8_t *bytes, size_t available, uint32_t *value, size_t *used)
{
	uint32_t v = 0;
	for (size_t i = 0; i < VLQ_MAX_BYTES; i++) {
		if (i >= available)
			return VLQ_TRUNCATED;
		v = (v << 7) | (bytes[i] & 0x7Fu);
		if (!(bytes[i] & 0x80)) {
			*value = v;
			*used = i + 1;
			return VLQ_OK;
		}
	}
	return VLQ_TOO_LONG;
}
