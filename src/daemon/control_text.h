/*
 * control_text: what the control socket takes and sends as text (see
 * control_text.c).  No state; any thread.
 */
#ifndef LATTICED_CONTROL_TEXT_H
#define LATTICED_CONTROL_TEXT_H

#include <stdbool.h>
#include <stddef.h>

/* True if the length bytes at line are UTF-8 without control characters. */
bool control_text_plain(const char *line, size_t length);

/* Replaces in place every byte of text that is not part of a valid UTF-8
 * character, and every control character, with '?'. */
void control_text_scrub(char *text, size_t length);

/* Copies in into out (size bytes) as valid UTF-8 without control characters:
 * whatever is not becomes '?', and a character is never cut in two.  At most
 * max bytes of in are taken; "..." marks a cut.  Returns out. */
char *control_text_copy(char *out, size_t size, const char *in, size_t max);

#endif
