/*
 * control_cmd: `latticed status | panic | preset NAME | root N | reload`,
 * the client side of the control socket.
 */
#ifndef LATTICED_CONTROL_CMD_H
#define LATTICED_CONTROL_CMD_H

/* Runs client command `name` ("status", ...) with its own argv
 * (argv[0] = "latticed NAME"); returns the exit status. */
int control_cmd_run(const char *name, int argc, char **argv, const char *default_config);

/* One line for `latticed --help`. */
const char *control_cmd_summary(const char *name);

#endif
