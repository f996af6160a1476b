/*
 * control_cmd: `latticed status | panic | preset NAME | root TONE | reload`,
 * the client side of the control socket.
 */
#ifndef LATTICED_CONTROL_CMD_H
#define LATTICED_CONTROL_CMD_H

struct control_command;

/* Runs client command c with its own argv (argv[0] = "latticed NAME");
 * returns the exit status. */
int control_cmd_run(const struct control_command *c, int argc, char **argv,
		    const char *default_config);

#endif
