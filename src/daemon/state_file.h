/*
 * state_file: the preset and root the daemon plays in, kept on disk so a
 * restart (a crash, the watchdog, a power cut) comes back where it was.
 *
 * Model: one small JSON object,
 *     {"format": 1, "config": "/etc/latticed/latticed.conf",
 *      "preset": "dekany", "root": "1.5"}
 * the root being a tone label or "home", and the config the file it was
 * written for (a state is only resumed with the same config).  It is
 * written whole and atomically (a temporary file beside it, fsync, rename,
 * fsync of the directory: smf_file_write), so a power cut leaves the old
 * state or the new one, never half of one.  Reading refuses anything else:
 * not JSON, another format, a field missing, of the wrong type or too
 * long, a file over 4 KiB.
 *
 * Where: `state_file = auto` is state.json in $STATE_DIRECTORY (set by
 * systemd for StateDirectory=; the first of a colon-separated list), else
 * in $XDG_STATE_HOME/latticed, else in $HOME/.local/state/latticed; the
 * last two are made (mode 0700) when first written, as the XDG base
 * directory rules ask.  An absolute path is used as it is; its directory
 * must exist.  `none` keeps no state.
 */
#ifndef LATTICED_STATE_FILE_H
#define LATTICED_STATE_FILE_H

#include <stdbool.h>
#include <stddef.h>

#include "config.h"

#define STATE_FILE_MAX 4096
#define STATE_FORMAT 1

struct state {
	char config[CONFIG_PATH_MAX];   /* the config file it was written for */
	char preset[CONFIG_NAME_MAX];
	char root[LATTICE_LABEL_MAX];   /* a tone label, or "home" */
};

enum state_read { STATE_ABSENT, STATE_READ, STATE_BAD };

/*
 * The file for a state_file setting ("auto", "none" or a path).  False
 * when there is none: the setting is none (why empty), or auto finds no
 * directory (why says so).  *make_parents: the directories may be made.
 */
bool state_file_locate(const char *setting, char *path, size_t size, bool *make_parents,
		       char *why, size_t why_size);

/* STATE_ABSENT: no file there; STATE_BAD: why says what is wrong with it. */
enum state_read state_file_read(const char *path, struct state *out, char *why, size_t why_size);

/* Replaces the file; false with why (without the path). */
bool state_file_write(const char *path, bool make_parents, const struct state *s,
		      char *why, size_t why_size);

#endif
