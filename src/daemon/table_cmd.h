/*
 * table_cmd: the `latticed table` command line (see table_cmd.c).
 */
#ifndef LATTICED_TABLE_CMD_H
#define LATTICED_TABLE_CMD_H

/* Runs `latticed table` with argv[0] = "latticed table"; returns the exit
 * status (0, 1 the work failed, 2 a bad command line). */
int table_command(int argc, char **argv, const char *default_config);

#endif
