/*
 * control_commands: the table, and the request line read into it.
 */
#include "control_commands.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define NUMBER_MAX 100000

const struct control_command control_commands[CONTROL_KIND_COUNT] = {
	[CONTROL_STATUS] = {CONTROL_STATUS, "status", NULL,
			    "show what the running daemon is doing",
			    "show what the running daemon is doing: ports, tuning, held notes, counters", 5000, NULL},
	[CONTROL_PANIC] = {CONTROL_PANIC, "panic", NULL,
			   "end every note on every output now",
			   "end every note on every output now", 5000, NULL},
	[CONTROL_PRESET] = {CONTROL_PRESET, "preset", "NAME",
			    "switch the running daemon to preset NAME for new notes",
			    "play new notes in preset NAME (a name, or its number: 0 is the main tuning)", 5000, NULL},
	[CONTROL_ROOT] = {CONTROL_ROOT, "root", "TONE",
			  "move the 1/1 of the running daemon: home, a tone label, or n = tone n-1",
			  "move the 1/1 for new notes: home (or 0), a tone label of the current preset (e.g. 1.5), or n: tone n-1 becomes the 1/1", 5000, NULL},
	[CONTROL_RELOAD] = {CONTROL_RELOAD, "reload", NULL,
			    "make the running daemon read its config again",
			    "read the config again and apply its tunings (SIGHUP does the same)", 60000, NULL},
	[CONTROL_SUBSCRIBE] = {CONTROL_SUBSCRIBE, "subscribe", NULL,
			       "follow what sounds: a JSON line per event",
			       "follow what sounds: the state first, then a JSON line per note, preset, root and reload "
			       "(with states: a fresh state per change, at most 50 a second)",
			       5000, "[" CONTROL_SUBSCRIBE_STATES "]"},
};

const struct control_command *control_command_find(const char *name)
{
	for (int i = 0; i < CONTROL_KIND_COUNT; i++)
		if (strcmp(control_commands[i].name, name) == 0)
			return &control_commands[i];
	return NULL;
}

char *control_command_list(char *list, size_t size)
{
	size_t used = 0;
	list[0] = '\0';
	for (int i = 0; i < CONTROL_KIND_COUNT; i++) {
		const struct control_command *c = &control_commands[i];
		const char *join = i == 0 ? "" : i + 1 == CONTROL_KIND_COUNT ? " or " : ", ";
		const char *arg = c->arg ? c->arg : c->optional;
		int n = snprintf(list + used, size - used, "%s%s%s%s", join, c->name,
				 arg ? " " : "", arg ? arg : "");
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
	}
	return list;
}

const struct control_command *control_command_parse(const char *line, char *arg, size_t arg_size)
{
	const char *p = line;
	while (*p == ' ' || *p == '\t')
		p++;
	size_t n = strcspn(p, " \t");
	const struct control_command *found = NULL;
	for (int i = 0; i < CONTROL_KIND_COUNT && !found; i++)
		if (strlen(control_commands[i].name) == n && strncmp(control_commands[i].name, p, n) == 0)
			found = &control_commands[i];
	p += n;
	while (*p == ' ' || *p == '\t')
		p++;
	snprintf(arg, arg_size, "%s", p);
	for (size_t len = strlen(arg); len > 0 && (arg[len - 1] == ' ' || arg[len - 1] == '\t');)
		arg[--len] = '\0';
	if (found && found->arg && !arg[0])
		return NULL;
	return found;
}

bool control_command_number(const char *arg, int *out)
{
	char *end;
	errno = 0;
	long v = strtol(arg, &end, 10);
	if (errno || end == arg || *end != '\0' || v < 0 || v > NUMBER_MAX)
		return false;
	*out = (int)v;
	return true;
}
