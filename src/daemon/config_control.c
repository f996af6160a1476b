/*
 * config_control: the checks across the [control] keys (model in
 * config_control.h).  Each clash is reported once, at the later of the
 * two lines, naming the earlier one, so the message points at what was
 * added last and says where the other half is.
 */
#include "config_control.h"

#include <stdio.h>
#include <string.h>

/* The key of each action, in enum engine_action order (the rows in config_keys.c). */
static const char *const action_keys[ENGINE_ACTION_COUNT] = {
	"preset_next", "preset_previous", "root_next", "root_previous", "root_home", "panic",
};

const char *config_action_key(int action)
{
	return action >= 0 && action < ENGINE_ACTION_COUNT ? action_keys[action] : "?";
}

/* One setting that takes a controller or a run of keys. */
struct claim {
	const char *key;
	char text[64];       /* "preset_next = cc 64", "root_keys = 36 (keys 36 to 42)" */
	int number, count;   /* the controller, or the first key and how many */
	int line;
};

static int line_of(const struct config *cfg, const char *key)
{
	return config_line_of(&cfg->lines, "control", key);
}

static void add(struct claim *list, int *n, const struct config *cfg, const char *key,
		int number, int count, const char *what)
{
	struct claim *c = &list[(*n)++];
	c->key = key;
	if (count > 1)
		snprintf(c->text, sizeof c->text, "%s = %d (keys %d to %d)", key, number, number,
			 number + count - 1);
	else
		snprintf(c->text, sizeof c->text, "%s = %s%d", key, what, number);
	c->number = number;
	c->count = count;
	c->line = line_of(cfg, key);
}

/* The controllers bound: preset_cc, root_cc and the actions bound to one. */
static int controllers(const struct config *cfg, struct claim *list)
{
	const struct engine_control_spec *c = &cfg->control;
	int n = 0;
	if (c->preset_cc >= 0)
		add(list, &n, cfg, "preset_cc", c->preset_cc, 1, "");
	if (c->root_cc >= 0)
		add(list, &n, cfg, "root_cc", c->root_cc, 1, "");
	for (int a = 0; a < ENGINE_ACTION_COUNT; a++)
		if (c->actions[a].kind == ENGINE_BINDING_CC)
			add(list, &n, cfg, action_keys[a], c->actions[a].number, 1, "cc ");
	return n;
}

static const char *where(int line, char *buf, size_t size)
{
	if (line > 0)
		snprintf(buf, size, "line %d", line);
	else
		snprintf(buf, size, "its default");
	return buf;
}

/* Reports each pair of claims that overlap, at the later line. */
static int clashes(const char *path, const struct claim *list, int n, const char *unit,
		   struct config_report *report)
{
	int errors = 0;
	for (int j = 0; j < n; j++) {
		for (int i = 0; i < n; i++) {
			const struct claim *a = &list[i], *b = &list[j];
			bool earlier = a->line < b->line || (a->line == b->line && i < j);
			if (!earlier || a->number >= b->number + b->count || b->number >= a->number + a->count)
				continue;
			int shared = a->number > b->number ? a->number : b->number;
			config_report_add(report, true, path, b->line,
					  "%s: %s %d is already taken by %s on line %d, expected %s",
					  b->text, unit, shared, a->text, a->line,
					  strcmp(unit, "key") ? "each controller bound once" : "runs of keys set apart");
			errors++;
			break;
		}
	}
	return errors;
}

int config_control_check(struct config *cfg, struct config_report *report)
{
	struct engine_control_spec *c = &cfg->control;
	int channel_line = line_of(cfg, "channel");
	char at[32];
	/* on the playing channel a program change picks the synth's sound, unless asked */
	if (c->channel == ENGINE_CONTROL_PLAYING && line_of(cfg, "program_change") == 0)
		c->program_selects_preset = false;
	if (c->channel == ENGINE_CONTROL_NONE && c->program_selects_preset &&
	    line_of(cfg, "program_change") > 0)
		config_report_add(report, false, cfg->path, line_of(cfg, "program_change"),
				  "program_change = preset does nothing while [control] channel is none (%s); program changes go to the synth",
				  where(channel_line, at, sizeof at));
	struct claim list[2 + ENGINE_ACTION_COUNT];
	int n = controllers(cfg, list);
	int errors = 0;
	if (c->channel == ENGINE_CONTROL_NONE) {
		for (int i = 0; i < n; i++)
			config_report_add(report, true, cfg->path, list[i].line,
					  "%s can never act: [control] channel is none (%s), expected channel = a channel 1 to 16 of its own, or channel = playing",
					  list[i].text, where(channel_line, at, sizeof at));
		return n;
	}
	errors += clashes(cfg->path, list, n, "controller", report);
	return errors;
}

int config_control_check_keys(const struct config *cfg, int presets, int most_tones,
			      struct config_report *report)
{
	const struct engine_control_spec *c = &cfg->control;
	struct claim list[2 + ENGINE_ACTION_COUNT];
	int n = 0;
	if (c->preset_keys >= 0)
		add(list, &n, cfg, "preset_keys", c->preset_keys, presets, "");
	if (c->root_keys >= 0)
		add(list, &n, cfg, "root_keys", c->root_keys, most_tones + 1, "");
	for (int a = 0; a < ENGINE_ACTION_COUNT; a++)
		if (c->actions[a].kind == ENGINE_BINDING_KEY)
			add(list, &n, cfg, action_keys[a], c->actions[a].number, 1, "key ");
	int errors = 0;
	for (int i = 0; i < n; i++) {
		int last = list[i].number + list[i].count - 1;
		if (last <= 127)
			continue;
		config_report_add(report, true, cfg->path, list[i].line,
				  "%s runs past key 127: %s needs keys %d to %d, expected a first key of at most %d",
				  list[i].text,
				  strcmp(list[i].key, "preset_keys") ? "home and every tone of the largest preset"
								     : "one key per preset",
				  list[i].number, last, 128 - list[i].count);
		errors++;
	}
	return errors + clashes(cfg->path, list, n, "key", report);
}
