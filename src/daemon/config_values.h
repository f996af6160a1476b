/*
 * config_values: reading one config value from its text.
 *
 * Model: each function takes the value as written (already trimmed by the
 * INI reader) and either fills its result and returns true, or returns
 * false and leaves the result alone, so the caller can say what was
 * expected.  Nothing here knows a key's name or its line: the key table
 * (config_keys.c) puts that around the answer.
 */
#ifndef LATTICED_CONFIG_VALUES_H
#define LATTICED_CONFIG_VALUES_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define CONFIG_MAX_PATTERNS 8      /* = MIDI_IO_MAX_PATTERNS */
#define CONFIG_PATTERN_MAX 64      /* = MIDI_IO_NAME_MAX, terminator included */

/* A connect = list: port name patterns (or paths, for the raw backend). */
struct connect_list {
	int count;
	char patterns[CONFIG_MAX_PATTERNS][CONFIG_PATTERN_MAX];
};

/* Copies src into dst (size bytes), cutting it short if it does not fit. */
void text_copy(char *dst, size_t size, const char *src);

/* Removes spaces, tabs and line ends from both ends, in place. */
void text_trim(char *s);

/* Splits on spaces, tabs and commas, in place; returns the number of
 * words, or max + 1 when there are more than max. */
int text_words(char *text, char **words, int max);

/* A whole number (decimal) in [lo, hi]. */
bool value_whole(const char *text, long lo, long hi, long *out);

/* A decimal number in [lo, hi]. */
bool value_decimal(const char *text, double lo, double hi, double *out);

/* A ratio such as 127/128 or a decimal such as 0.9921875, in [lo, hi]. */
bool value_factor(const char *text, double lo, double hi, double *out);

/* yes/no, true/false, on/off, 1/0. */
bool value_yes_no(const char *text, bool *out);

/* MIDI channels 1 to 16 as numbers and ranges ("1,3,5-8") as a mask, bit c
 * for channel c+1.  skip_ten: a range leaves out channel 10 (GM drums),
 * which is taken only when named on its own. */
bool value_channels(const char *text, bool skip_ten, uint16_t *out);

/* "none" or patterns separated by commas; why says what is wrong. */
bool value_connect(const char *text, struct connect_list *out, char *why, size_t why_size);

/* Formats a channel mask as "2-9,11-16". */
char *config_format_channels(uint16_t channels, char *buf, size_t size);

#endif
