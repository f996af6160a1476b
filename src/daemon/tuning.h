/*
 * tuning: the presets of a config, built.
 *
 * Model: a tuning is one preset's lattice and key map, built from its
 * spec in the config; a tuning set is every preset of a config, plus the
 * view of them an engine takes (names and pointers, no copies).  Building
 * is where the checks that need the built set happen (a map slot named by
 * a tone's label, a unison that must be a tone), and each error points at
 * the config line of the key at fault.
 */
#ifndef LATTICED_TUNING_H
#define LATTICED_TUNING_H

#include <stdbool.h>

#include "config.h"
#include "latticed/engine.h"
#include "latticed/keymap.h"
#include "latticed/lattice.h"

/* A built tuning: large (about 0.5 MB), allocate it once. */
struct tuning {
	struct lattice lattice;
	struct keymap keymap;
};

/* Every preset built, and the view of them an engine takes. */
struct tuning_set {
	int count;
	struct tuning *tunings;        /* count of them */
	struct engine_tunings engine;
};

/* Builds preset number `preset` of cfg; false with errors in report. */
bool tuning_build(const struct config *cfg, int preset, struct tuning *out,
		  struct config_report *report);

/* A root as `latticed root` takes it: "home" or 0, a number n (tone n-1
 * becomes 1/1), or a tone's label; the root slot (0 = home, t + 1 = tone t),
 * or -1 if the text names none of them. */
int tuning_root_slot(const struct lattice *lat, const char *text);

/* Builds every preset (allocates) and checks the runs of reserved keys
 * against them (config_control.h); false with errors in report. */
bool tuning_set_build(const struct config *cfg, struct tuning_set *out,
		      struct config_report *report);
void tuning_set_free(struct tuning_set *set);

#endif
