/*
 * config: the latticed.conf reader.
 *
 * Model: an INI file (read by inih) whose every key is declared once in a
 * table in config.c: section, name, kind, default and what a valid value
 * looks like.  Parsing is two passes over a memory buffer: inih collects
 * (section, key, value, line) entries, joining indented continuation lines;
 * then each entry is checked against the table and stored.  Errors are
 * collected, one line each, as "FILE:LINE: what is wrong, what was
 * expected"; if there is any, the caller's config is left untouched.
 *
 * Tunings: [lattice], [pitch] and [keys] make the main preset; each
 * [preset NAME] section starts as a copy of it and overrides any of
 * those keys.  Building the tunings (lattice + key map per preset) is a
 * separate step because some checks need the built set (a key table may
 * name tones by label); its errors also point at the config line.
 */
#ifndef LATTICED_CONFIG_H
#define LATTICED_CONFIG_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/engine.h"
#include "latticed/keymap.h"
#include "latticed/lattice.h"

#define CONFIG_MAX_OUTPUTS 8
#define CONFIG_MAX_PRESETS ENGINE_MAX_PRESETS
#define CONFIG_NAME_MAX ENGINE_NAME_MAX
#define CONFIG_PATH_MAX 512
#define CONFIG_MAP_TEXT_MAX 2048
#define CONFIG_REPORT_MAX 8192
#define CONFIG_MAX_PATTERNS 8      /* = MIDI_IO_MAX_PATTERNS */
#define CONFIG_PATTERN_MAX 64      /* = MIDI_IO_NAME_MAX, terminator included */
#define CONFIG_BACKEND_MAX 16

/* A connect = list: port name patterns (or paths, for the raw backend). */
struct connect_list {
	int count;
	char patterns[CONFIG_MAX_PATTERNS][CONFIG_PATTERN_MAX];
};

struct output_config {
	char name[CONFIG_NAME_MAX];
	int line;                  /* of the [output NAME] header */
	enum retune_method method;
	uint16_t channels;         /* bit c = MIDI channel c+1 */
	int bend_range;            /* semitones, sent with RPN 0 */
	double bend_factor;        /* fraction of a bend the synth plays */
	double cents_offset;
	enum polyphony_policy polyphony;
	int mts_program, mts_bank, mts_device; /* bank -1: none */
	bool mts_bulk;
	enum mts_key_choice mts_key;
	enum mpe_zone mpe_zone;
	int mpe_members;
	bool running_status;       /* leave out repeated status bytes (DIN links) */
	bool bend_range_set;       /* else the method's default: 2, or 48 for mpe */
	struct connect_list connect;
};

struct input_config {
	uint16_t channels;
	double wheel_range_cents;
	enum mpe_zone mpe_zone;
	bool mpe;
	int mpe_bend_range;
	struct connect_list connect;
};

/* [daemon]: how `latticed run` meets the system. */
struct daemon_config {
	char backend[CONFIG_BACKEND_MAX]; /* auto, alsa, portmidi, raw or null */
	char client_name[CONFIG_PATTERN_MAX];
	int realtime_priority;     /* 1..99, or -1: none */
	bool lock_memory;
	char control_socket[CONFIG_PATH_MAX]; /* "auto", "none" or a path */
};

struct control_config {
	int channel;               /* 0..15 or -1 */
	bool program_selects_preset;
	int preset_cc, root_cc;    /* -1 = none */
	int preset_keys, root_keys;
};

/* Where each tuning key was set (0 = default), for error messages. */
struct tuning_lines {
	int section;
	int seeds, choose, period, unison;
	int root_key, root_hz;
	int layout, map, transpose;
};

struct tuning_config {
	char name[CONFIG_NAME_MAX];
	struct lattice_spec lattice;
	struct keymap_spec keys;   /* table slots are resolved at build time */
	char unison_text[LATTICE_LABEL_MAX];
	char map_text[CONFIG_MAP_TEXT_MAX];
	struct tuning_lines lines;
};

struct config {
	char path[CONFIG_PATH_MAX];    /* as named in messages */
	int preset_count;              /* presets[0] is the main tuning */
	struct tuning_config presets[CONFIG_MAX_PRESETS];
	struct input_config input;
	struct control_config control;
	struct daemon_config daemon;
	int output_count;
	struct output_config outputs[CONFIG_MAX_OUTPUTS];
};

/* Errors and warnings, one per line, each ending in '\n'; whole lines only,
 * and when they do not all fit the last line says how many were left out. */
struct config_report {
	int error_count;
	int warning_count;
	size_t length;
	char text[CONFIG_REPORT_MAX];
	int left_out;                  /* messages that did not fit (counted in the last line) */
	size_t closing_at;             /* where that last line starts */
};

/* A built tuning: large (about 0.5 MB), allocate it once. */
struct tuning {
	struct lattice lattice;
	struct keymap keymap;
};

/* Every preset built, and the view of them an engine takes. */
struct tuning_set {
	int count;
	struct tuning *tunings;        /* count of them */
	struct engine_tunings engine;
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

/* Builds one preset's lattice and key map; false with errors in report. */
bool config_build_tuning(const struct config *cfg, int preset, struct tuning *out,
			 struct config_report *report);

/* Builds every preset (allocates); false with errors in report. */
bool config_build_tunings(const struct config *cfg, struct tuning_set *out,
			  struct config_report *report);
void tuning_set_free(struct tuning_set *set);

/* The engine's view of output number `output`. */
void config_engine_spec(const struct config *cfg, int output, struct engine_spec *out);

/* The backend's view: client name, the input port "in" and one output
 * port per [output NAME], each with its connect patterns. */
struct midi_io_spec;
void config_io_spec(const struct config *cfg, struct midi_io_spec *out);

/* Index of the output or preset with this name, or -1. */
int config_find_output(const struct config *cfg, const char *name);
int config_find_preset(const struct config *cfg, const char *name);

/* The bend range an output really uses (its own, or its method's default). */
int output_bend_range(const struct output_config *out);

/* Formats a channel mask as "2-9,11-16". */
char *config_format_channels(uint16_t channels, char *buf, size_t size);

/* One row per key of the table, for documentation and tests. */
struct config_key_info {
	const char *section;       /* "lattice", "pitch", "keys", "input", "output", "control", "daemon" */
	const char *key;
	const char *default_text;
	const char *expected;      /* what a valid value looks like */
};
int config_key_count(void);
const struct config_key_info *config_key_at(int index);

#endif
