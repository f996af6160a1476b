/*
 * notice_text: the one table of words for the engine's notices
 * (engine_take_notices), used by the daemon's log and by render's
 * warnings, so both say the same thing the same way.
 *
 * A line says how many of what happened and why, e.g. "3 notes stolen:
 * more notes at once than the output has channels"; with advice on, the
 * setting that avoids it follows ("; more output channels avoid it").
 * Several notices may share one line (a note dropped for want of a channel
 * or of a note slot).
 */
#ifndef LATTICED_NOTICE_TEXT_H
#define LATTICED_NOTICE_TEXT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/engine.h"

typedef void (*notice_line_fn)(void *context, const char *line);

/* Calls line() once per line the notices in `notices` (NOTICE_ flags)
 * make, in a fixed order, counted from stats; bend_range names the range
 * a clamped bend went past. */
void notice_text_lines(uint32_t notices, const struct engine_stats *stats, int bend_range,
		       bool advice, notice_line_fn line, void *context);

/* One line for a control message that selected nothing (NOTICE_CONTROL_MISSED,
 * engine_take_control_miss): what came, why nothing, where it stayed; c
 * says what each controller and key is bound to.  The count is the
 * caller's to add. */
void notice_text_control_miss(const struct engine_control_miss *m,
			      const struct engine_control_spec *c, char *buf, size_t size);

#endif
