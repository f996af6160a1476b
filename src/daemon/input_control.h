/*
 * input_control: what the input thread says about the player's controls:
 * control messages that selected nothing and panics from the instrument
 * (log lines, a miss at most once a second), the root a `root` request
 * names (a number, a tone label of the current preset, or home), and what
 * a reload kept.  Runs on the input thread; nothing here allocates.
 */
#ifndef LATTICED_INPUT_CONTROL_H
#define LATTICED_INPUT_CONTROL_H

#include <stdbool.h>
#include <stddef.h>

#include "input_thread.h"

/* Each loop: logs a waiting miss when one is due, and new panics. */
void input_control_report(struct input_thread *t);

/* The root new notes use: "home" or its tone's label. */
void input_control_root_label(const struct engine *e, char *buf, size_t size);

/* The root slot r->text names in e's current preset; false with why
 * saying what was expected (home, the numbers, the preset's labels). */
bool input_control_root_slot(const struct engine *e, const struct request *r, int *slot,
			     char *why, size_t why_size);

/* What a reload kept, after engine_replace_tunings said `kept`; old_preset
 * and old_root are where the engine was before it. */
void input_control_kept_text(enum engine_kept kept, const char *old_preset, const char *old_root,
			     const struct engine *e, char *buf, size_t size);

#endif
