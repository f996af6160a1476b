/*
 * source_ids: the small numbers (0..MIDI_IO_MAX_SOURCES-1) a backend gives
 * the devices that feed its input.  A source keeps its number while it is
 * there; a newcomer gets the lowest free number, so a keyboard unplugged and
 * plugged back in (with nothing else arriving meanwhile) gets its old number
 * again.  The key is the backend's own address of the device (an ALSA
 * client:port, a PortMidi device id); the name is kept for reports, since a
 * device that has gone can no longer be asked for it.
 */
#ifndef LATTICED_SOURCE_IDS_H
#define LATTICED_SOURCE_IDS_H

#include <stdbool.h>
#include <stdint.h>

#include "midi_io.h"

#define SOURCE_NAME_MAX (2 * MIDI_IO_NAME_MAX + 2)

struct source_ids {
	bool used[MIDI_IO_MAX_SOURCES];
	uint32_t key[MIDI_IO_MAX_SOURCES];
	char name[MIDI_IO_MAX_SOURCES][SOURCE_NAME_MAX];
};

void source_ids_init(struct source_ids *s);

/* The id of the source with this key, or -1. */
int source_ids_find(const struct source_ids *s, uint32_t key);

/* A new id for key (lowest free), or -1 when all are taken.  The caller
 * checks source_ids_find() first: adding a key twice gives it two ids. */
int source_ids_add(struct source_ids *s, uint32_t key, const char *name);

/* Frees id; false if it was not in use. */
bool source_ids_remove(struct source_ids *s, int id);

int source_ids_count(const struct source_ids *s);

#endif
