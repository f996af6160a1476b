/*
 * alsa_connect: connections made on request between two sequencer ports
 * (the backend's connect(), see midi_io.h and alsa_connect.c), and the
 * sequencer opening it shares with alsa_seq.c.  Private to src/io.
 */
#ifndef LATTICED_ALSA_CONNECT_H
#define LATTICED_ALSA_CONNECT_H

#include <stdbool.h>
#include <stddef.h>

#include <alsa/asoundlib.h>

#include "midi_io.h"

/* Does one of spec's patterns name this port: by client:port number
 * ("24:0"), or by name as midi_io_matches reads it? */
bool alsa_port_matches(const struct midi_io_port_spec *spec, snd_seq_addr_t addr,
		       const char *client, const char *port);

bool alsa_connect(const char *from, const char *to, bool undo, midi_io_line_fn line,
		  void *context, char *err, size_t err_size);

/* Opens the sequencer (duplex, non-blocking) with alsa-lib's own error
 * lines silenced; snd_seq_open's result. */
int alsa_seq_open(snd_seq_t **seq);
/* One line for a failed open, with the fix (no device, no permission). */
void alsa_seq_open_error(int err, char *msg, size_t size);

#endif
