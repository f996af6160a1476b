/*
 * control_text: the text rules of the control socket.  A request line is
 * taken only as plain UTF-8 (RFC 3629) without control characters; a
 * reply is scrubbed to one line of UTF-8 whatever a config file or a port
 * name put in it; a client's bytes quoted back in an error are copied
 * with every invalid byte as '?', never cut inside a character.
 */
#include "control_text.h"

#include <string.h>

/* Length of the valid UTF-8 character at p (RFC 3629: shortest form, no
 * surrogates, at most U+10FFFF), or 0 if the bytes there are not one. */
static size_t utf8_length(const unsigned char *p, size_t left)
{
	unsigned char c = p[0], lo = 0x80, hi = 0xBF;
	size_t n;
	if (c < 0x80)
		return 1;
	if (c >= 0xC2 && c <= 0xDF) {
		n = 2;
	} else if (c >= 0xE0 && c <= 0xEF) {
		n = 3;
		lo = c == 0xE0 ? 0xA0 : lo;
		hi = c == 0xED ? 0x9F : hi;
	} else if (c >= 0xF0 && c <= 0xF4) {
		n = 4;
		lo = c == 0xF0 ? 0x90 : lo;
		hi = c == 0xF4 ? 0x8F : hi;
	} else {
		return 0;
	}
	if (left < n || p[1] < lo || p[1] > hi)
		return 0;
	for (size_t i = 2; i < n; i++)
		if ((p[i] & 0xC0) != 0x80)
			return 0;
	return n;
}

static bool is_control(unsigned char c)
{
	return c < 0x20 || c == 0x7F;
}

/* A request line: UTF-8 text; tabs may separate words, nothing else below space. */
bool control_text_plain(const char *line, size_t length)
{
	const unsigned char *p = (const unsigned char *)line;
	for (size_t i = 0; i < length;) {
		size_t n = p[i] == '\t' ? 1 : is_control(p[i]) ? 0 : utf8_length(p + i, length - i);
		if (n == 0)
			return false;
		i += n;
	}
	return true;
}

char *control_text_copy(char *out, size_t size, const char *in, size_t max)
{
	const unsigned char *p = (const unsigned char *)in;
	size_t length = strlen(in), used = 0;
	if (size < 4) {
		if (size)
			out[0] = '\0';
		return out;
	}
	for (size_t i = 0; i < length;) {
		size_t n = is_control(p[i]) ? 0 : utf8_length(p + i, length - i);
		size_t take = n ? n : 1;
		if (i + take > max || used + take > size - 4) {
			memcpy(out + used, "...", 3);
			used += 3;
			break;
		}
		if (n)
			memcpy(out + used, p + i, n);
		else
			out[used] = p[i] == '\t' ? ' ' : '?';
		used += take;
		i += take;
	}
	out[used] = '\0';
	return out;
}

/* The last guard before bytes reach a client: a reply is one line of UTF-8,
 * whatever a name from a config file or a port held. */
void control_text_scrub(char *text, size_t length)
{
	unsigned char *p = (unsigned char *)text;
	for (size_t i = 0; i < length;) {
		size_t n = p[i] < 0x20 ? 0 : utf8_length(p + i, length - i);
		if (n == 0) {
			p[i++] = '?';
			continue;
		}
		i += n;
	}
}
