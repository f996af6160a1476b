/*
 * render_out: the output of a render, built track by track in bounded
 * memory.
 *
 * A file holds one track after another, while a render's messages come in
 * the merged order of all its tracks, so each track has a track writer
 * (smf.h) that turns its events into SMF bytes at once.  When the bytes
 * buffered over all tracks pass RENDER_OUT_BUFFER_BYTES, every buffer is
 * appended to an unnamed scratch file (smf_file.h) and emptied, each track
 * keeping the list of its pieces there.  Writing the file copies, track by
 * track, the pieces back out and then the rest from memory, through
 * smf_file_write_with (temporary file and rename, or a FIFO or device in
 * place).  Where no scratch file can be had, the output stays in memory
 * from then on and in_memory_why says why.  A writer's failure (an event
 * no file can hold) is kept, the first in track order, and reported once
 * the render is over, as a writer of the whole file in one piece would
 * have found it.
 */
#ifndef LATTICED_RENDER_OUT_H
#define LATTICED_RENDER_OUT_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/error.h"
#include "latticed/smf.h"
#include "smf_file.h"

#define RENDER_OUT_BUFFER_BYTES ((size_t)4 << 20)

struct render_piece {              /* a piece of a track's body in the scratch file */
	uint64_t at, length;
};

struct render_out_track {
	struct smf_track_writer w;
	struct render_piece *pieces;     /* in order, then w's buffer */
	size_t piece_count, piece_capacity;
	uint32_t last_tick;              /* of its last event so far (0: none) */
};

struct render_out {
	size_t track_count;
	struct render_out_track *tracks;
	size_t buffered;                 /* bytes in all the writers' buffers */
	struct smf_scratch scratch;      /* fd -1 until the first spill */
	bool in_memory;                  /* no more spilling: the rest stays in memory */
	char in_memory_why[CORE_ERROR_TEXT_MAX];
	struct smf_error writer_error;   /* the writers' */
	size_t failed_track;             /* the first that failed, in track order (SIZE_MAX: none) */
	struct smf_error first_error;    /* its reason */
	size_t events;                   /* events written */
};

/* False when memory runs out (nothing to free then). */
bool render_out_init(struct render_out *o, size_t track_count);
void render_out_free(struct render_out *o);

/* A message, or an input event copied as it is, into a track. */
void render_out_midi(struct render_out *o, size_t track, uint32_t tick, const struct midi_msg *m);
void render_out_event(struct render_out *o, size_t track, const struct smf_event *ev);
/* Each track's end-of-track, at its end or its last event if later. */
void render_out_end(struct render_out *o, const struct smf_index *in);

/* After render_out_end: false with err set when a track could not be
 * written, as "cannot build the output file: ...". */
bool render_out_check(const struct render_out *o, uint16_t format, uint16_t division,
		      struct core_error *err);
bool render_out_write(struct render_out *o, const char *path, uint16_t format, uint16_t division,
		      struct core_error *err);

#endif
