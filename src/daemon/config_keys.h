/*
 * config_keys: the table of every config key.
 *
 * Model: one row per key says everything about it: its section, name and
 * value type, its default (as text, read by the same code as the file, so
 * the documented and the applied default cannot drift apart), the range
 * of a number, the words it takes, where its value goes (offset and size
 * of a field in the section's struct: the engine's own spec structs for
 * what the engine uses), and the help text every error about it ends in.
 * Reading a value, checking it, the "FILE:LINE: key is 'x', expected ..."
 * message, the defaults and the test that keeps config/latticed.conf in
 * step all come from the row.  Adding a key is one row here plus its
 * documented line in config/latticed.conf.
 *
 * Sections: [lattice], [pitch], [keys], [input], [control], [daemon] once
 * each, and any number of [output NAME] and [preset NAME].  A family is
 * the section's first word; the preset family takes the keys of lattice,
 * pitch and keys.  Key names are unique within a family.
 */
#ifndef LATTICED_CONFIG_KEYS_H
#define LATTICED_CONFIG_KEYS_H

#include <stdbool.h>
#include <stddef.h>

#define CONFIG_KEY_MAX 64          /* rows the table may grow to */
#define CONFIG_WHY_MAX 384         /* one message body */

enum config_type {
	CONFIG_WHOLE,              /* a whole number in [lo, hi], or one of words */
	CONFIG_CHANNEL,            /* a MIDI channel lo..hi (1..16), kept as 0..15; or one of words */
	CONFIG_DECIMAL,            /* a decimal number in [lo, hi] */
	CONFIG_FACTOR,             /* a ratio or a decimal in [lo, hi] */
	CONFIG_SEMITONES,          /* semitones in [lo, hi], or cents with a c; kept as cents */
	CONFIG_CHOICE,             /* one of words, kept as its value */
	CONFIG_CHOICE_TEXT,        /* one of words, kept as text */
	CONFIG_YES_NO,             /* yes or no (true/false, on/off, 1/0) */
	CONFIG_CHANNELS,           /* channels lo..hi as numbers and ranges, a mask */
	CONFIG_POOL,               /* the same, where a range skips channel 10 */
	CONFIG_INTERVAL,           /* a ratio above 1 */
	CONFIG_CONNECT,            /* none, or port name patterns separated by commas */
	CONFIG_OWN,                /* read by the row's own function */
};

struct config_word {
	const char *text;
	int value;
};

struct config_key {
	const char *section;       /* lattice, pitch, keys, input, output, control, daemon */
	const char *name;
	enum config_type type;
	const char *default_text;
	double lo, hi;             /* a number's range (own types: a count or a length) */
	const struct config_word *words; /* ends with {NULL, 0}; may be NULL */
	size_t offset, size;       /* the field in the section's struct */
	/* CONFIG_OWN: reads text into field; on failure may write why (else the
	 * usual "key is 'x', expected ..." is used) */
	bool (*read)(const struct config_key *key, const char *text, void *field,
		     char *why, size_t why_size);
	const char *expected;      /* what a valid value looks like */
};

int config_key_count(void);
const struct config_key *config_key_at(int index);

/* Index of key `name` in `family` ("output", "preset", "lattice", ...), or -1. */
int config_key_find(const char *family, const char *name);
bool config_key_in_family(const struct config_key *key, const char *family);

/*
 * Reads text into the key's field of `base` (the section's struct).  On
 * failure leaves base unchanged where it can, writes one message body
 * (without FILE:LINE) into why and returns false.
 */
bool config_key_read(const struct config_key *key, const char *text, void *base,
		     char *why, size_t why_size);

/* Applies the default of every key of `family` to base. */
void config_keys_defaults(const char *family, void *base);

/* "seeds, choose, period, unison" */
void config_keys_list(const char *family, char *buf, size_t size);

/* The family of a section header ("output" for "output synth"), or NULL
 * when there is no such section. */
const char *config_section_family(const char *header);

/* "[lattice], [pitch], ..., [output NAME] or [preset NAME]" */
void config_section_list(char *buf, size_t size);

/* Where a key may be set, e.g. "[input] or [output NAME]"; "" if nowhere. */
void config_key_sections(const char *name, char *buf, size_t size);

#endif
