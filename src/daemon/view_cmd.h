/*
 * view_cmd: `latticed view`, the live page (view.h).
 */
#ifndef LATTICED_VIEW_CMD_H
#define LATTICED_VIEW_CMD_H

/* Runs the command with its own argv (argv[0] = "latticed view"); the exit status. */
int view_cmd_run(int argc, char **argv, const char *default_config);

#endif
