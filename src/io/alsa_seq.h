/*
 * alsa_seq.h: the ALSA sequencer backend's own state, shared by its two
 * files (private to src/io): alsa_seq.c (open, input, output, reports)
 * and alsa_ports.c (sources, destinations, connections by pattern,
 * hotplug notices, the state rebuilt from the kernel).  The model is at
 * the top of alsa_seq.c.
 */
#ifndef LATTICED_ALSA_SEQ_H
#define LATTICED_ALSA_SEQ_H

#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>

#include <alsa/asoundlib.h>

#include "midi_io.h"
#include "source_ids.h"

#define SEQ_DEVICE "/dev/snd/seq"
#define MAX_DESTINATIONS 32
#define ADDR_NAME_MAX (2 * MIDI_IO_NAME_MAX + 2)
/* The kernel's largest per-client input pool (SNDRV_SEQ_MAX_CLIENT_EVENTS,
 * from memory); the next size down is what the kernel surely accepts. */
#define INPUT_POOL_EVENTS 2000
#define INPUT_POOL_FALLBACK 1000
/* A variable-length event must fit whole in the read buffer, or the kernel
 * puts it back and every later read fails on it again; no event can hold
 * more than the input pool, 2000 cells of 28 bytes. */
#define INPUT_BUFFER_BYTES (64 * 1024)
#define OUTPUT_BUFFER_BYTES (64 * 1024)
#define PORT_TYPE (SND_SEQ_PORT_TYPE_MIDI_GENERIC | SND_SEQ_PORT_TYPE_SOFTWARE | \
		   SND_SEQ_PORT_TYPE_APPLICATION)
#define CAN_READ (SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ)
#define CAN_WRITE (SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE)

struct destination {
	snd_seq_addr_t addr;
	char name[ADDR_NAME_MAX];
};

struct alsa_output {
	int port;
	/* input thread only */
	int count;
	struct destination dest[MAX_DESTINATIONS];
	/* written by the output thread, read by describe() */
	atomic_uint drops;
};

struct midi_io {
	snd_seq_t *seq;
	int client;
	int in_port;
	struct midi_io_spec spec;
	struct midi_io_callbacks cb;
	int output_count;
	struct alsa_output out[MIDI_IO_MAX_OUTPUTS];
	/* input thread only */
	struct source_ids sources;
	bool subscribed[MIDI_IO_MAX_SOURCES];
	snd_seq_client_info_t *cinfo;
	snd_seq_port_info_t *pinfo;
	snd_seq_query_subscribe_t *query;
	bool resync;
	unsigned overruns;
	int input_pool;           /* events the kernel holds for us */
	unsigned unplaced_events; /* from a source beyond the sixteenth */
	unsigned connect_failures;
	int last_connect_error;
};

/* The callbacks' event, when the daemon asked for them. */
void alsa_report(struct midi_io *io, enum midi_io_event kind, int index, const char *name);

/* The source number of a sender, added (and reported) when new; -1 when
 * all sixteen are taken. */
int alsa_source_for(struct midi_io *io, snd_seq_addr_t a, bool subscribed);
/* An announcement from the system client (0:1): subscriptions, clients and
 * ports that come and go; connects what the patterns ask for. */
void alsa_handle_notice(struct midi_io *io, const snd_seq_event_t *ev);
/* Sources and destinations read again from the kernel's subscription
 * lists (after an input overflow, or at start). */
void alsa_resync(struct midi_io *io);
/* Every port there is, connected where a pattern asks for it. */
void alsa_connect_everything(struct midi_io *io);

#endif
