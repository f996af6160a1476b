/*
 * notice_text: the notices' words (model in notice_text.h).
 */
#include "notice_text.h"

#include <stdio.h>

#define STRINGIFY(x) #x
#define TEXT_OF(x) STRINGIFY(x)

struct notice_row {
	uint32_t flags;              /* the notices this line reports */
	size_t count;                /* offset of its counter in struct engine_stats */
	const char *one, *many;      /* what is counted */
	const char *what;            /* what happened and why */
	bool names_bend_range;       /* "... of N semitones" */
	uint32_t detail_flag;        /* when this notice is among them, detail follows */
	const char *detail;
	const char *advice;          /* the setting that avoids it */
};

static const struct notice_row rows[] = {
	{NOTICE_BEND_CLAMPED, offsetof(struct engine_stats, bends_clamped), "bend", "bends",
	 "clamped: retune plus wheel went beyond the bend range", true, 0, NULL,
	 "a larger bend_range avoids it"},
	{NOTICE_NOTE_STOLEN, offsetof(struct engine_stats, notes_stolen), "note", "notes",
	 "stolen: more notes at once than the output has channels", false, 0, NULL,
	 "more output channels avoid it"},
	{NOTICE_NOTE_DROPPED | NOTICE_NOTES_FULL, offsetof(struct engine_stats, notes_dropped),
	 "note", "notes", "dropped: no channel or key was free", false, NOTICE_NOTES_FULL,
	 " (more than " TEXT_OF(ENGINE_MAX_NOTES) " notes at once)",
	 "more channels, or polyphony = share-then-steal, avoid it"},
	{NOTICE_PASSTHROUGH_BLOCKED, offsetof(struct engine_stats, passthrough_blocked),
	 "message", "messages", "dropped: on channels not retuned but used by the output", false, 0,
	 NULL, "a pass-through channel must not be one of the output's channels"},
};

void notice_text_lines(uint32_t notices, const struct engine_stats *stats, int bend_range,
		       bool advice, notice_line_fn line, void *context)
{
	for (size_t i = 0; i < sizeof rows / sizeof rows[0]; i++) {
		const struct notice_row *r = &rows[i];
		if (!(notices & r->flags))
			continue;
		uint32_t count = *(const uint32_t *)(const void *)((const char *)stats + r->count);
		char range[32] = "";
		if (r->names_bend_range)
			snprintf(range, sizeof range, " of %d semitones", bend_range);
		char text[256];
		snprintf(text, sizeof text, "%u %s %s%s%s%s%s", count, count == 1 ? r->one : r->many,
			 r->what, range, (notices & r->detail_flag) ? r->detail : "",
			 advice ? "; " : "", advice ? r->advice : "");
		line(context, text);
	}
}
