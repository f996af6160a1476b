/*
 * table_print: the `latticed table` output, as text for people or JSON for
 * programs.  Both forms print the same facts for one preset: the tones,
 * the chords, the key map and each output's bend values.
 */
#ifndef LATTICED_TABLE_PRINT_H
#define LATTICED_TABLE_PRINT_H

#include <stdio.h>

#include "config.h"
#include "tuning.h"

/* What one `latticed table` shows: a preset of cfg, built, under a root
 * (its key map already moved there by keymap_shift). */
struct table_view {
	const struct config *cfg;
	const char *config_name;   /* the file read, or why the defaults (cli_config_name) */
	int preset;
	int root;                  /* 0 = home, t + 1 = tone t is 1/1 */
	const struct tuning *tuning;
};

void table_print_text(FILE *f, const struct table_view *v);
/* Returns 0, or -1 if writing failed. */
int table_print_json(FILE *f, const struct table_view *v);

/* The widest tone label, at least as wide as a "seeds" column's title. */
int table_label_width(const struct lattice *lat);

/* "home", or the root tone's label; and the ratio it moves every pitch by. */
void table_root_text(const struct table_view *v, char *label, size_t label_size,
		     char *ratio, size_t ratio_size);

#endif
