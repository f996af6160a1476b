/*
 * render_out: see render_out.h for the model.  The scratch file's pieces
 * are appended in spill order, so each track's pieces lie in order, and
 * the bytes still buffered follow its last piece.
 */
#include "render_out.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

bool render_out_init(struct render_out *o, size_t track_count)
{
	*o = (struct render_out){ .track_count = track_count, .failed_track = SIZE_MAX,
				  .scratch = { .fd = -1 } };
	o->tracks = calloc(track_count ? track_count : 1, sizeof *o->tracks);
	if (!o->tracks)
		return false;
	for (size_t t = 0; t < track_count; t++)
		smf_track_writer_init(&o->tracks[t].w, (uint16_t)(t + 1), &o->writer_error);
	return true;
}

void render_out_free(struct render_out *o)
{
	for (size_t t = 0; o->tracks && t < o->track_count; t++) {
		smf_track_writer_free(&o->tracks[t].w);
		free(o->tracks[t].pieces);
	}
	free(o->tracks);
	o->tracks = NULL;
	smf_scratch_close(&o->scratch);
}

static void stop_spilling(struct render_out *o, const struct core_error *why)
{
	o->in_memory = true;
	snprintf(o->in_memory_why, sizeof o->in_memory_why, "%s", why->text);
}

static bool add_piece(struct render_out_track *t, uint64_t at, uint64_t length)
{
	if (t->piece_count == t->piece_capacity) {
		size_t cap = t->piece_capacity ? 2 * t->piece_capacity : 8;
		struct render_piece *p = realloc(t->pieces, cap * sizeof *p);
		if (!p)
			return false;
		t->pieces = p;
		t->piece_capacity = cap;
	}
	t->pieces[t->piece_count++] = (struct render_piece){ .at = at, .length = length };
	return true;
}

/* Every track's buffered bytes into the scratch file. */
static void spill(struct render_out *o)
{
	struct core_error why;
	if (o->scratch.fd < 0 && !smf_scratch_open(&o->scratch, &why)) {
		stop_spilling(o, &why);
		return;
	}
	for (size_t i = 0; i < o->track_count; i++) {
		struct render_out_track *t = &o->tracks[i];
		if (t->w.length == 0)
			continue;
		uint64_t at = o->scratch.length;
		if (!smf_scratch_append(&o->scratch, t->w.bytes, t->w.length, &why)) {
			stop_spilling(o, &why);
			return;
		}
		if (!add_piece(t, at, t->w.length)) {
			core_fail(&why, "", "out of memory for the list of what went there");
			stop_spilling(o, &why);
			return;
		}
		smf_track_writer_take(&t->w);
	}
	o->buffered = 0;
}

/* After a call on a track's writer: the bytes it buffered, its failure. */
static void wrote(struct render_out *o, size_t track, size_t length_before, bool failed_before)
{
	const struct render_out_track *t = &o->tracks[track];
	o->buffered += t->w.length - length_before;
	if (t->w.failed && !failed_before && track < o->failed_track) {
		o->failed_track = track;
		o->first_error = o->writer_error;
	}
	if (o->buffered > RENDER_OUT_BUFFER_BYTES && !o->in_memory)
		spill(o);
}

void render_out_midi(struct render_out *o, size_t track, uint32_t tick, const struct midi_msg *m)
{
	struct render_out_track *t = &o->tracks[track];
	size_t before = t->w.length;
	bool failed = t->w.failed;
	(void)smf_track_writer_midi(&t->w, tick, m);
	t->last_tick = tick;
	o->events++;
	wrote(o, track, before, failed);
}

void render_out_event(struct render_out *o, size_t track, const struct smf_event *ev)
{
	struct render_out_track *t = &o->tracks[track];
	size_t before = t->w.length;
	bool failed = t->w.failed;
	(void)smf_track_writer_event(&t->w, ev);
	t->last_tick = ev->tick;
	o->events++;
	wrote(o, track, before, failed);
}

void render_out_end(struct render_out *o, const struct smf_index *in)
{
	for (size_t i = 0; i < o->track_count; i++) {
		struct render_out_track *t = &o->tracks[i];
		uint32_t end = in->tracks[i].end_tick;
		if (t->last_tick > end)
			end = t->last_tick;
		size_t before = t->w.length;
		bool failed = t->w.failed;
		(void)smf_track_writer_end(&t->w, end);
		wrote(o, i, before, failed);
	}
}

bool render_out_check(const struct render_out *o, uint16_t format, uint16_t division,
		      struct core_error *err)
{
	struct smf_error header;
	if (!smf_header_check(format, division, &header))
		return core_fail(err, "", "cannot build the output file: %s", header.text);
	if (o->failed_track != SIZE_MAX)
		return core_fail(err, "", "cannot build the output file: %s", o->first_error.text);
	return true;
}

struct file {
	struct render_out *out;
	uint16_t format, division;
};

static bool fill(void *context, struct smf_sink *sink)
{
	const struct file *f = context;
	struct render_out *o = f->out;
	uint8_t head[SMF_HEADER_BYTES];
	smf_header_encode(head, f->format, (uint16_t)o->track_count, f->division);
	if (!smf_sink_put(sink, head, sizeof head))
		return false;
	for (size_t i = 0; i < o->track_count; i++) {
		const struct render_out_track *t = &o->tracks[i];
		uint8_t chunk[SMF_CHUNK_HEADER_BYTES];
		smf_chunk_header_encode(chunk, (uint32_t)t->w.size);
		if (!smf_sink_put(sink, chunk, sizeof chunk))
			return false;
		for (size_t k = 0; k < t->piece_count; k++)
			if (!smf_scratch_copy(&o->scratch, t->pieces[k].at, t->pieces[k].length, sink))
				return false;
		if (!smf_sink_put(sink, t->w.bytes, t->w.length))
			return false;
	}
	return true;
}

bool render_out_write(struct render_out *o, const char *path, uint16_t format, uint16_t division,
		      struct core_error *err)
{
	struct file f = { o, format, division };
	return smf_file_write_with(path, fill, &f, err);
}
