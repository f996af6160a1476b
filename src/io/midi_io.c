/*
 * midi_io: the table of backends built into this binary, and the name
 * matching they share.  Backends that need a library are compiled only
 * when CMake found it (LATTICED_HAVE_ALSA, LATTICED_HAVE_PORTMIDI).
 */
#include "midi_io.h"

#include <fnmatch.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>

extern const struct midi_io_backend midi_io_null;
#ifdef LATTICED_HAVE_RAW
extern const struct midi_io_backend midi_io_raw;
#endif
#ifdef LATTICED_HAVE_ALSA
extern const struct midi_io_backend midi_io_alsa;
#endif
#ifdef LATTICED_HAVE_PORTMIDI
extern const struct midi_io_backend midi_io_portmidi;
#endif

static const struct midi_io_backend *const backends[] = {
#ifdef LATTICED_HAVE_ALSA
	&midi_io_alsa,
#endif
#ifdef LATTICED_HAVE_PORTMIDI
	&midi_io_portmidi,
#endif
#ifdef LATTICED_HAVE_RAW
	&midi_io_raw,
#endif
	&midi_io_null,
};
#define BACKEND_COUNT (sizeof backends / sizeof backends[0])

const struct midi_io_backend *midi_io_find(const char *name)
{
	for (size_t i = 0; i < BACKEND_COUNT; i++)
		if (strcmp(backends[i]->name, name) == 0)
			return backends[i];
	return NULL;
}

const char *midi_io_available(void)
{
	static char names[128];
	if (names[0] == '\0') {
		size_t used = 0;
		for (size_t i = 0; i < BACKEND_COUNT; i++) {
			int n = snprintf(names + used, sizeof names - used, "%s%s",
					 i ? ", " : "", backends[i]->name);
			if (n < 0 || (size_t)n >= sizeof names - used)
				break;
			used += (size_t)n;
		}
	}
	return names;
}

bool midi_io_matches(const struct midi_io_port_spec *port, const char *client,
		     const char *port_name)
{
	char full[2 * MIDI_IO_NAME_MAX + 2];
	snprintf(full, sizeof full, "%s:%s", client, port_name ? port_name : "");
	for (int i = 0; i < port->connect_count; i++) {
		const char *p = port->connect[i];
		if (fnmatch(p, full, 0) == 0 || fnmatch(p, client, 0) == 0 ||
		    (port_name && fnmatch(p, port_name, 0) == 0))
			return true;
	}
	return false;
}

void midi_io_appendf(char *line, size_t size, const char *fmt, ...)
{
	size_t used = strlen(line);
	if (used + 1 >= size)
		return;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(line + used, size - used, fmt, ap);
	va_end(ap);
}

void midi_io_append_patterns(const struct midi_io_port_spec *port, char *line, size_t size)
{
	if (port->connect_count == 0) {
		midi_io_appendf(line, size, "; no connect patterns");
		return;
	}
	midi_io_appendf(line, size, "; connect");
	for (int i = 0; i < port->connect_count; i++)
		midi_io_appendf(line, size, " '%s'", port->connect[i]);
}
