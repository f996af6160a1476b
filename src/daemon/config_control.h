/*
 * config_control: the checks across the [control] keys, where a setting
 * alone is fine but two together cannot work.
 *
 * Model: every controller binding (preset_cc, root_cc, a step, home or
 * panic bound to a cc) needs a channel to come from, so with channel =
 * none it can never act; a controller bound twice, or two runs of keys
 * that overlap (preset_keys, root_keys, the keys bound to steps, home or
 * panic), cannot all do what they say.  Each is an error at the line of
 * the later setting, naming the other's line.  The controller checks run
 * when the file is read (config_parse); the key runs need the size of
 * every preset's lattice, so they run when the tunings are built
 * (tuning_set_build, for `latticed run` and reloads).
 */
#ifndef LATTICED_CONFIG_CONTROL_H
#define LATTICED_CONFIG_CONTROL_H

#include "config.h"

/* The config key that binds an action (enum engine_action): "preset_next", ... */
const char *config_action_key(int action);

/* Checks the controllers; also sets program_change's default for
 * channel = playing (ignore, so program changes still reach the synth).
 * Returns the number of errors reported. */
int config_control_check(struct config *cfg, struct config_report *report);

/* Checks the runs of keys, with `presets` presets whose largest lattice
 * has `most_tones` tones.  Returns the number of errors reported. */
int config_control_check_keys(const struct config *cfg, int presets, int most_tones,
			      struct config_report *report);

#endif
