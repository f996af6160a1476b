/*
 * daemon: `latticed run` and `latticed ports`.
 *
 * The main thread of a running daemon owns the signals, the config (and
 * its reloads), the control socket, the log output and systemd
 * notification; the input and output threads own the MIDI.  See
 * DEVELOPERS.md, "Threads", for the whole model.
 */
#ifndef LATTICED_DAEMON_H
#define LATTICED_DAEMON_H

struct daemon_options {
	const char *config_path;         /* NULL: default_config_path if it exists, else built-in */
	const char *default_config_path;
	const char *backend;             /* NULL: the config's */
	const char *version;
};

/* Runs in the foreground until SIGTERM or SIGINT; returns the exit status
 * (0 after a clean stop, 1 if it could not start). */
int daemon_run(const struct daemon_options *options);

/* Prints the backend's connectable ports; returns the exit status. */
int daemon_list_ports(const struct daemon_options *options);

#endif
