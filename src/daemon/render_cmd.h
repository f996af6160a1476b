/*
 * render_cmd: `latticed render`, a recorded performance retuned offline.
 *
 * Model: a Standard MIDI File is one performance, so every track of a
 * format 0 or 1 file is merged into one time-ordered stream (by tick, then
 * track, then place in the file) and played into ONE engine, exactly as if
 * the player were at the keyboard: the engine's channel choice, held notes
 * and pedals depend on everything before, across tracks and channels.
 * What the engine sends for an input event is written to that event's
 * track at its tick; meta events and escape packets are copied unchanged;
 * the tempo map, the division and the format stay as they were.  The
 * synth set-up (bend ranges, MPE zone, tuning program) goes at tick 0 in
 * the first track the engine hears from, after that track's leading meta
 * events (track name, sequence number) and before anything it sends.
 *
 * A format 2 file holds independent patterns, each starting at its own
 * tick 0 and played on its own: each track is a performance of its own,
 * with its own engine and set-up.
 *
 * Notes the input never released (a missing note-off, a pedal left down)
 * are released at the file's last tick and reported, so the output never
 * leaves a note sounding (earlier, where one delta time cannot reach the
 * last tick from their track's last event).  A tempo of 0 is copied as it
 * is, with a warning naming its byte: render changes pitch, never time, so
 * the output plays as the input does wherever it is played.  Input events a strict file cannot hold (a tempo
 * event of the wrong length, a SysEx with a status byte inside) are left
 * out and reported with their byte offset.
 */
#ifndef LATTICED_RENDER_CMD_H
#define LATTICED_RENDER_CMD_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "config.h"
#include "latticed/engine.h"
#include "latticed/error.h"
#include "latticed/smf.h"

#define RENDER_LEFT_OUT_SHOWN 8
#define RENDER_LINE_MAX 240

struct render_report {
	size_t events_in;            /* input events, end-of-track not counted */
	size_t events_out;
	size_t performances;         /* engines run: 1, or a format 2 file's tracks */
	size_t hanging_keys;         /* note-ons the input never ended */
	size_t hanging_pedal_notes;  /* released notes a pedal still held at the end */
	uint32_t hanging_tick;       /* where they were released */
	size_t early_tracks;         /* tracks whose releases came earlier (delta limit) */
	uint32_t early_tick;         /* the earliest of those releases */
	size_t zero_tempos;          /* tempo events of 0 us per quarter note */
	size_t zero_tempo_offset;    /* byte offset of the first */
	size_t left_out;             /* input events no strict file can hold */
	uint16_t format;             /* of the output: the input's, but a format 0
	                              * file with several tracks becomes format 1 */
	char left_out_text[RENDER_LEFT_OUT_SHOWN][RENDER_LINE_MAX]; /* "byte 12: ..." */
	struct engine_stats engine;  /* summed over the performances */
	uint32_t notices;            /* engine_notice flags, ORed */
	struct engine_control_miss miss; /* the last control message that selected nothing */
	uint32_t misses;             /* how many did */
};

/*
 * Retunes a parsed file into a new file in memory (*out, free() it).
 * False with err set when the engine refuses the spec or memory runs out.
 */
bool render_smf(const struct smf *in, const struct engine_spec *spec,
		const struct engine_tunings *tunings, uint8_t **out, size_t *out_length,
		struct render_report *report, struct core_error *err);

struct render_request {
	const struct config *cfg;
	int output;                  /* index into cfg->outputs */
	const struct engine_tunings *tunings;
	const char *in_path;         /* "-" = standard input */
	const char *out_path;        /* "-" = standard output */
	bool verbose;                /* a summary line on stderr */
};

/* Reads, renders, writes and reports on stderr; returns the exit status
 * (0 done, 1 failed, 2 a command-line problem). */
int render_run(const struct render_request *req);

#endif
