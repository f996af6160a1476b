/*
 * control_path: where the control socket lives.
 *
 * control_socket = auto means, for the daemon: $RUNTIME_DIRECTORY/control
 * when systemd made a runtime directory (RuntimeDirectory=latticed; the
 * first one if it lists several), else $XDG_RUNTIME_DIR/latticed/control
 * (a desktop session), else /run/latticed/control.  A client cannot know
 * which of these a daemon used (a system service and an ssh session have
 * different environments), so it tries the same places in the same order
 * plus /run/latticed/control, and takes the first socket that exists.
 */
#ifndef LATTICED_CONTROL_PATH_H
#define LATTICED_CONTROL_PATH_H

#include <stdbool.h>
#include <stddef.h>

#define CONTROL_PATH_MAX 108             /* sun_path, terminator included (unix(7)) */
#define CONTROL_PATH_CANDIDATES 3

/* The daemon's socket for a control_socket setting; false for "none".
 * A path that does not fit is cut short to an empty string (checked by the config). */
bool control_path_for_daemon(const char *setting, char *out, size_t size);

/* The paths a client tries, in order; returns how many (at least 1). */
int control_path_candidates(const char *setting, char out[][CONTROL_PATH_MAX]);

#endif
