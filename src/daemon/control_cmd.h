/*
 * control_cmd: `latticed status | panic | preset NAME | root TONE | reload`,
 * the client side of the control socket.
 */
#ifndef LATTICED_CONTROL_CMD_H
#define LATTICED_CONTROL_CMD_H

#include "control_path.h"

struct control_command;

/* Runs client command c with its own argv (argv[0] = "latticed NAME");
 * returns the exit status. */
int control_cmd_run(const struct control_command *c, int argc, char **argv,
		    const char *default_config);

/* A blocking connection to the control socket at path; connect() waits at
 * most timeout_ms for a daemon whose queue is full.  -1 with errno. */
int control_connect(const char *path, int timeout_ms);

/* The socket paths to try from the control_socket of config_path (NULL:
 * default_config if it exists, else the built-in defaults), in order; 0
 * when there is none (the reason is printed: a bad config, or none). */
int control_socket_candidates(const char *config_path, const char *default_config,
			      char paths[][CONTROL_PATH_MAX]);

#endif
