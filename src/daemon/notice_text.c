/*
 * notice_text: the notices' words (model in notice_text.h).
 */
#include "notice_text.h"

#include <stdio.h>

#include "config_control.h"

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

/* ---- control misses ---------------------------------------------------------- */

/* "CC 21 value 9 on channel 16" or "key 48 on channel 1" */
static void what_came(const struct engine_control_miss *m, bool is_cc, char *buf, size_t size)
{
	if (m->kind == ENGINE_MISS_PROGRAM)
		snprintf(buf, size, "program change %u on channel %u", m->number, m->channel + 1u);
	else if (is_cc)
		snprintf(buf, size, "CC %u value %u on channel %u", m->number, m->value, m->channel + 1u);
	else
		snprintf(buf, size, "key %u on channel %u", m->number, m->channel + 1u);
}

void notice_text_control_miss(const struct engine_control_miss *m,
			      const struct engine_control_spec *c, char *buf, size_t size)
{
	char came[64], why[160];
	bool is_cc = m->kind == ENGINE_MISS_PRESET_CC || m->kind == ENGINE_MISS_ROOT_CC ||
		     (m->kind == ENGINE_MISS_STEP_END && (unsigned)m->action < ENGINE_ACTION_COUNT &&
		      c->actions[m->action].kind == ENGINE_BINDING_CC);
	what_came(m, is_cc, came, sizeof came);
	const char *by = "";
	switch (m->kind) {
	case ENGINE_MISS_PROGRAM:
	case ENGINE_MISS_PRESET_CC:
		by = m->kind == ENGINE_MISS_PROGRAM ? "program_change" : "preset_cc";
		snprintf(why, sizeof why, "there %s %d preset%s, 0 to %d; still on preset %s",
			 m->presets == 1 ? "is" : "are", m->presets, m->presets == 1 ? "" : "s",
			 m->presets - 1, m->preset_name);
		break;
	case ENGINE_MISS_ROOT_CC:
	case ENGINE_MISS_ROOT_KEY: {
		bool key = m->kind == ENGINE_MISS_ROOT_KEY;
		by = key ? "root_keys" : "root_cc";
		int first = key ? c->root_keys : 0;
		snprintf(why, sizeof why, "preset %s has %d tones, %s %d (home) to %d; the root stays",
			 m->preset_name, m->tones, key ? "keys" : "values", first, first + m->tones);
		break;
	}
	case ENGINE_MISS_STEP_END: {
		bool presets = m->action == ENGINE_ACTION_PRESET_NEXT ||
			       m->action == ENGINE_ACTION_PRESET_PREVIOUS;
		bool forward = m->action == ENGINE_ACTION_PRESET_NEXT || m->action == ENGINE_ACTION_ROOT_NEXT;
		by = config_action_key(m->action);
		if (presets)
			snprintf(why, sizeof why, "already on the %s preset (%s, %d of %d) and step_ends = stop",
				 forward ? "last" : "first", m->preset_name, m->preset + 1, m->presets);
		else
			snprintf(why, sizeof why, "already %s of preset %s and step_ends = stop",
				 forward ? "at its last tone" : "at home", m->preset_name);
		break;
	}
	}
	snprintf(buf, size, "control: %s (%s) selects nothing: %s", came, by, why);
}
