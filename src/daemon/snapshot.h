/*
 * snapshot: what `latticed status` shows, filled in by the input thread
 * (which owns the engines) into a struct the main thread allocated and
 * passed over by pointer, then handed back the same way.  Fixed size, so
 * the input thread writes it without allocating.  The main thread adds
 * what it knows itself (uptime, config, socket) and renders it as JSON.
 */
#ifndef LATTICED_SNAPSHOT_H
#define LATTICED_SNAPSHOT_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/engine.h"
#include "latticed/midi_parser.h"
#include "midi_io.h"

#define SNAPSHOT_NOTES_MAX 128       /* listed per output; notes_held counts all */
#define SNAPSHOT_LABEL_MAX 64
#define SNAPSHOT_DESCRIBE_MAX 4096

struct snapshot_note {
	uint8_t source, in_channel, in_key;   /* channels 0..15 */
	uint8_t out_channel, out_key;
	bool ringing;                         /* released, held by a pedal */
	bool tuning_known;                    /* false: its tuning was retired and freed */
	char preset[ENGINE_NAME_MAX];
	char label[SNAPSHOT_LABEL_MAX];       /* the tone's seeds, e.g. 1.3 */
	char ratio[RATIO_TEXT_MAX];
	double cents;                         /* the tone above 1/1, within the period */
	char root[SNAPSHOT_LABEL_MAX];        /* the root it began under: "home" or a label */
	char sounds[RATIO_TEXT_MAX];          /* what it sounds at: ratio to the home 1/1 */
	double hz;                            /* ... and in Hz (no output offset); 0 unknown */
	int period;
	double pitch;                         /* exact pitch as a note number */
};

struct snapshot_output {
	char name[ENGINE_NAME_MAX];
	enum retune_method method;
	int preset;
	char preset_name[ENGINE_NAME_MAX];
	int root_slot;                        /* 0 = home, n = tone n-1 is 1/1 */
	char root_label[SNAPSHOT_LABEL_MAX];
	struct engine_stats stats;
	uint64_t queued;                      /* messages put in the output queue */
	uint64_t queue_drops;                 /* queue full after all (never expected) */
	uint64_t sent;                        /* accepted by the backend */
	uint64_t send_drops;                  /* given up at shutdown: the synth never read */
	uint64_t refused;                     /* times the backend refused (each retried) */
	size_t waiting;                       /* queue slots in use */
	uint64_t note_ons_shed, values_merged, system_shed; /* under load (output_guard.h) */
	uint64_t cut_offs, cut_off_dropped;
	bool cut_off;                         /* now */
	int passthrough_notes;                /* held on channels not retuned */
	int notes_held;
	int note_count;                       /* listed below */
	struct snapshot_note notes[SNAPSHOT_NOTES_MAX];
};

struct snapshot_source {
	bool connected;
	char name[MIDI_IO_NAME_MAX * 2];
	uint64_t messages;
	struct midi_parser_stats parser;
};

struct status_snapshot {
	int output_count;
	struct snapshot_output outputs[MIDI_IO_MAX_OUTPUTS];
	int source_count;                     /* sources ever seen */
	struct snapshot_source sources[MIDI_IO_MAX_SOURCES];
	int preset_count;
	char presets[ENGINE_MAX_PRESETS][ENGINE_NAME_MAX];
	uint64_t heartbeat;                   /* input thread wake-ups */
	uint64_t input_pauses, input_paused_ms; /* backpressure: the input waited */
	bool input_waiting;                   /* now */
	uint32_t reloads;                     /* tunings swapped in */
	int retired_tunings;                  /* old sets kept for sounding notes */
	int describe_length;
	char describe[SNAPSHOT_DESCRIBE_MAX]; /* backend lines, '\n' after each */
};

/* What the main thread adds to a snapshot in the status reply. */
struct snapshot_extra {
	const char *version;
	int pid;
	double uptime_seconds;
	const char *config;
	const char *default_config;   /* the file read when none is given */
	const char *backend;
	const char *control_socket;
};

/* Fills the note's root, sounds and hz from the preset it began under
 * (input thread; no allocation). */
void snapshot_note_sounds(struct snapshot_note *sn, const struct engine_preset *p,
			  const struct engine_note_info *n);

struct json_object;

/* The "status" member of a control reply (json-c; the caller puts it). */
struct json_object *snapshot_json(const struct status_snapshot *s, const struct snapshot_extra *x);

#endif
