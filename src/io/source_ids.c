/*
 * source_ids: a fixed table searched linearly; sixteen entries make
 * anything cleverer slower.
 */
#include "source_ids.h"

#include <stdio.h>
#include <string.h>

void source_ids_init(struct source_ids *s)
{
	memset(s, 0, sizeof *s);
}

int source_ids_find(const struct source_ids *s, uint32_t key)
{
	for (int i = 0; i < MIDI_IO_MAX_SOURCES; i++)
		if (s->used[i] && s->key[i] == key)
			return i;
	return -1;
}

int source_ids_add(struct source_ids *s, uint32_t key, const char *name)
{
	for (int i = 0; i < MIDI_IO_MAX_SOURCES; i++) {
		if (s->used[i])
			continue;
		s->used[i] = true;
		s->key[i] = key;
		snprintf(s->name[i], sizeof s->name[i], "%s", name ? name : "");
		return i;
	}
	return -1;
}

bool source_ids_remove(struct source_ids *s, int id)
{
	if (id < 0 || id >= MIDI_IO_MAX_SOURCES || !s->used[id])
		return false;
	s->used[id] = false;
	s->name[id][0] = '\0';
	return true;
}

int source_ids_count(const struct source_ids *s)
{
	int n = 0;
	for (int i = 0; i < MIDI_IO_MAX_SOURCES; i++)
		n += s->used[i];
	return n;
}
