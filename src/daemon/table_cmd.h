/*
 * table_cmd: the `latticed table` output, as text for people or JSON for
 * programs.  Both forms print the same facts for one preset: the tones,
 * the chords, the key map and each output's bend values.
 */
#ifndef LATTICED_TABLE_CMD_H
#define LATTICED_TABLE_CMD_H

#include <stdio.h>

#include "config.h"
#include "tuning.h"

void table_print_text(FILE *f, const struct config *cfg, int preset, const struct tuning *t);
/* Returns 0, or -1 if writing failed. */
int table_print_json(FILE *f, const struct config *cfg, int preset, const struct tuning *t);

#endif
