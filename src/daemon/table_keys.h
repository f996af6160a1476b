/*
 * table_keys: `latticed table --keys`, one keyboard period key by key and
 * the keys of every chord, for a player (see table_keys.c).
 */
#ifndef LATTICED_TABLE_KEYS_H
#define LATTICED_TABLE_KEYS_H

#include <stdio.h>

#include "table_print.h"

/* Returns 0, or -1 when out of memory. */
int table_print_keys(FILE *f, const struct table_view *v);

#endif
