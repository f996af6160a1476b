/*
 * config: the latticed.conf reader.
 *
 * Model: an INI file (read by inih) whose every key is declared once in a
 * table in config.c: section, name, kind, bounds, default and a one-line
 * meaning.  Parsing is two passes over a memory buffer: inih collects
 * (section, key, value, line) entries, joining indented continuation lines;
 * then each entry is checked against the table and stored.  Errors are
 * collected, one line each, as "FILE:LINE: what is wrong, what was
 * expected"; if there is any, the caller's config is left untouched.
 *
 * Building the tuning (lattice + key map) from a parsed config is a
 * separate step because some checks need the built set (a key table may
 * name tones by label); its errors also point at the config line.
 */
#ifndef LATTICED_CONFIG_H
#define LATTICED_CONFIG_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/keymap.h"
#include "latticed/lattice.h"

#define CONFIG_MAX_OUTPUTS 8
#define CONFIG_NAME_MAX 32
#define CONFIG_PATH_MAX 512
#define CONFIG_MAP_TEXT_MAX 2048
#define CONFIG_REPORT_MAX 8192

enum output_method { OUTPUT_BEND, OUTPUT_MTS, OUTPUT_MPE };

struct output_config {
	char name[CONFIG_NAME_MAX];
	int line;                  /* of the [output NAME] header */
	enum output_method method;
	uint16_t channels;         /* bit c = MIDI channel c+1 in the pool */
	int bend_range;            /* semitones, sent with RPN 0 */
};

/* Where each tuning key was set (0 = default), for error messages. */
struct tuning_lines {
	int section;
	int seeds, choose, period, unison;
	int root_key, root_hz;
	int layout, map, transpose;
};

struct tuning_config {
	struct lattice_spec lattice;
	struct keymap_spec keys;   /* table slots are resolved at build time */
	char unison_text[LATTICE_LABEL_MAX];
	char map_text[CONFIG_MAP_TEXT_MAX];
	struct tuning_lines lines;
};

struct config {
	char path[CONFIG_PATH_MAX];    /* as named in messages */
	struct tuning_config tuning;
	int output_count;
	struct output_config outputs[CONFIG_MAX_OUTPUTS];
};

/* Errors and warnings, one per line, each ending in '\n'. */
struct config_report {
	int error_count;
	int warning_count;
	size_t length;
	char text[CONFIG_REPORT_MAX];
};

/* A built tuning: large (about 0.5 MB), allocate it once. */
struct tuning {
	struct lattice lattice;
	struct keymap keymap;
};

/* The built-in defaults, identical to the shipped config/latticed.conf. */
void config_defaults(struct config *out);

/*
 * Parses text (not necessarily NUL-terminated) named `path` in messages.
 * On success fills *out and returns true; on any error leaves *out as it
 * was and returns false.  Warnings may be reported either way.
 */
bool config_parse(const char *text, size_t length, const char *path,
		  struct config *out, struct config_report *report);

/* Reads and parses a file; an unreadable file is one error line. */
bool config_load(const char *path, struct config *out,
		 struct config_report *report);

/* Builds lattice and key map; false with errors in report. */
bool config_build_tuning(const struct config *cfg, struct tuning *out,
			 struct config_report *report);

const char *output_method_name(enum output_method method);

/* Formats a channel mask as "2-9,11-16". */
char *config_format_channels(uint16_t channels, char *buf, size_t size);

/* One row per key of the table, for documentation and tests. */
struct config_key_info {
	const char *section;       /* "lattice", "pitch", "keys", "output" */
	const char *key;
	const char *default_text;
	const char *expected;      /* what a valid value looks like */
};
int config_key_count(void);
const struct config_key_info *config_key_at(int index);

#endif
