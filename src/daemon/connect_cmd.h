/*
 * connect_cmd: `latticed connect SRC DST`, two MIDI ports connected by
 * name through the backend's connect() (see connect_cmd.c).
 */
#ifndef LATTICED_CONNECT_CMD_H
#define LATTICED_CONNECT_CMD_H

/* Runs the command with argv[0] = "latticed connect"; returns the exit
 * status (0 connected, 1 refused, 2 a bad command line). */
int connect_command(int argc, char **argv);

#endif
