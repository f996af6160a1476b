/*
 * cli_common: what the offline commands (table, draw, render) share on the
 * command line: loading the config (--config FILE, else the system config
 * when it exists, else the built-in defaults), building one preset, and
 * reading a --preset or --root argument, each failure said in one line on
 * stderr as "latticed COMMAND: ...".
 */
#ifndef LATTICED_CLI_COMMON_H
#define LATTICED_CLI_COMMON_H

#include "config.h"
#include "tuning.h"

#define EXIT_USAGE 2

/* Prints the report's lines (errors and warnings) to stderr. */
void cli_print_report(const struct config_report *r);

/* Loads path, or default_path when path is NULL and it exists, or the
 * built-in defaults; 0, or 1 after printing why not. */
int cli_load_config(const char *path, const char *default_path, struct config *cfg);

/* What `config` means in a heading: the file read, or that the built-in
 * defaults were used because default_path does not exist. */
void cli_config_name(const struct config *cfg, const char *default_path, char *buf, size_t size);

/* Builds preset number `preset` into a new tuning (*out, to free());
 * 0, or 1 after printing why not. */
int cli_build_tuning(const struct config *cfg, int preset, struct tuning **out);

/* The preset a --preset argument names (a name, or a number as `latticed
 * preset` takes it), or -1 after saying which names and numbers there are. */
int cli_find_preset(const char *command, const struct config *cfg, const char *text);

/* The root slot a --root argument names (home, a number n for tone n-1, or
 * a tone's label; see tuning_root_slot), or -1 after saying what was
 * expected. */
int cli_find_root(const char *command, const struct config *cfg, int preset,
		  const struct lattice *lat, const char *text);

#endif
