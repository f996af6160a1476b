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

enum control_path_state {
	CONTROL_PATH_REFUSED,            /* err says why and what to do */
	CONTROL_PATH_FREE,               /* nothing there: bind may make the socket */
	CONTROL_PATH_SOCKET,             /* a socket is there: alive or stale, ask it */
};

/*
 * Makes sure the daemon may put its socket at path.  Every directory on the
 * way must belong to root or to the daemon's user and must not be writable
 * by group or others unless it is sticky (as /tmp is), or another user could
 * swap the socket for one of their own; the socket's own directory must not
 * be a symbolic link (one higher up must belong to root or the daemon's
 * user).  A missing last directory is created (mode 0750).  Whatever is at
 * path itself that is not a socket (a regular file, a directory, a link)
 * is never removed: that is refused.
 */
enum control_path_state control_path_prepare(const char *path, char *err, size_t err_size);

/* Removes a stale socket at path, and nothing else; false with err if it cannot. */
bool control_path_remove_stale(const char *path, char *err, size_t err_size);

/* The daemon's socket for a control_socket setting; false for "none".
 * A path that does not fit is cut short to an empty string (checked by the config). */
bool control_path_for_daemon(const char *setting, char *out, size_t size);

/* The paths a client tries, in order; returns how many (at least 1). */
int control_path_candidates(const char *setting, char out[][CONTROL_PATH_MAX]);

#endif
