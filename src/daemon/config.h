/*
 * config: the latticed.conf reader.
 *
 * Model: an INI file whose every key is one row of the key table
 * (config_keys.h): section, name, type, default, range, the field it
 * fills and its help text.  Reading is two passes over a memory buffer:
 * config_ini collects (section, key, value, line) entries, joining
 * indented continuation lines; then each entry is checked against the
 * table and stored.  Errors are collected, one line each, as
 * "FILE:LINE: what is wrong, what was expected"; if there is any, the
 * caller's config is left untouched.
 *
 * What the engine uses is read straight into the engine's own spec
 * structs (struct engine_output_spec, engine_input_spec,
 * engine_control_spec); the config adds only what the shell alone needs
 * (names, connect patterns, running status, the line of every key).
 *
 * Tunings: [lattice], [pitch] and [keys] make the main preset; each
 * [preset NAME] section starts as a copy of it and overrides any of
 * those keys.  Building them (tuning.h) is a separate step because some
 * checks need the built set; its errors also point at the config line.
 */
#ifndef LATTICED_CONFIG_H
#define LATTICED_CONFIG_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "config_keys.h"
#include "config_report.h"
#include "config_values.h"
#include "latticed/engine.h"
#include "latticed/keymap.h"
#include "latticed/lattice.h"

#define CONFIG_MAX_OUTPUTS 8
#define CONFIG_MAX_PRESETS ENGINE_MAX_PRESETS
#define CONFIG_NAME_MAX ENGINE_NAME_MAX
#define CONFIG_PATH_MAX 512
/* The path a config read from no file carries (config_defaults). */
#define CONFIG_BUILTIN_NAME "(built-in defaults)"
#define CONFIG_MAP_TEXT_MAX 2048
#define CONFIG_BACKEND_MAX 16
#define CONFIG_FILE_MAX (1 << 20)

/* The line each key of the table was set on (0: its default), by key index. */
struct config_lines {
	int line[CONFIG_KEY_MAX];
};

/* [lattice], [pitch] and [keys], or a [preset NAME] built on them. */
struct preset_config {
	char name[CONFIG_NAME_MAX];
	int line;                  /* of the [preset NAME] header; 0 for main */
	struct lattice_spec lattice;
	struct keymap_spec keys;   /* table slots are resolved at build time */
	char unison_text[LATTICE_LABEL_MAX];
	char map_text[CONFIG_MAP_TEXT_MAX];
	struct config_lines lines;
};

/* [input]: what the engine reads, and where the notes come from. */
struct input_config {
	struct engine_input_spec engine;
	struct connect_list connect;
};

/* [output NAME]: the engine's spec for it, and its port. */
struct output_config {
	struct engine_output_spec engine;
	char name[CONFIG_NAME_MAX];
	int line;                  /* of the [output NAME] header */
	bool running_status;       /* leave out repeated status bytes (DIN links) */
	struct connect_list connect;
	struct config_lines lines;
};

/* [daemon]: how `latticed run` meets the system. */
struct daemon_config {
	char backend[CONFIG_BACKEND_MAX]; /* auto, alsa, portmidi, raw or null */
	char client_name[CONFIG_PATTERN_MAX];
	int realtime_priority;     /* 1..99, or -1: none */
	bool lock_memory;
	char control_socket[CONFIG_PATH_MAX]; /* "auto", "none" or a path */
	char state_file[CONFIG_PATH_MAX];     /* "auto", "none" or a path */
};

struct config {
	char path[CONFIG_PATH_MAX];    /* as named in messages */
	int preset_count;              /* presets[0] is the main tuning */
	struct preset_config presets[CONFIG_MAX_PRESETS];
	struct input_config input;
	struct engine_control_spec control;
	struct daemon_config daemon;
	struct config_lines lines;     /* of the [input], [control] and [daemon] keys */
	int output_count;
	struct output_config outputs[CONFIG_MAX_OUTPUTS];
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

/* Reads and parses a file; an unreadable or oversized file is one error line. */
bool config_load(const char *path, struct config *out,
		 struct config_report *report);

/*
 * Loads `path`; with path NULL, the file at default_path when there is
 * one, else the built-in defaults.  *used (may be NULL) is the file read,
 * or NULL when the defaults were taken.
 */
bool config_load_or_defaults(const char *path, const char *default_path, struct config *out,
			     struct config_report *report, const char **used);

/* The line key `name` of `family` was set on in `lines`, 0 for its default. */
int config_line_of(const struct config_lines *lines, const char *family, const char *name);

/* The engine's view of output number `output`: its spec structs as read. */
void config_engine_spec(const struct config *cfg, int output, struct engine_spec *out);

/* The backend's view: client name, the input port "in" and one output
 * port per [output NAME], each with its connect patterns. */
struct midi_io_spec;
void config_io_spec(const struct config *cfg, struct midi_io_spec *out);

/* Index of the output or preset with this name, or -1. */
int config_find_output(const struct config *cfg, const char *name);
int config_find_preset(const struct config *cfg, const char *name);
/* A preset by name, or by number (0 is the main tuning), as `latticed
 * preset` takes it; -1 if neither. */
int config_find_preset_or_number(const struct config *cfg, const char *text);

#endif
