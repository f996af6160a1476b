/*
 * input_status: what the input thread reports of itself in a status
 * snapshot (model in input_thread.h): each output's engine, counters and
 * load figures, its sounding notes with the tone each was started under
 * (from the current tuning set or a retired one still kept for them),
 * the sources and the backend's own lines.  Runs on the input thread,
 * between two messages.
 */
#include "input_status.h"

#include <stdio.h>
#include <string.h>

#include "clock.h"
#include "input_control.h"
#include "output_thread.h"

/* The tunings a note was started under, or NULL if they were freed. */
static const struct engine_tunings *tunings_of_note(const struct input_thread *t, int output,
						    const struct engine_note_info *n)
{
	if (n->started <= t->forgotten_serial[output])
		return NULL;
	for (int r = 0; r < t->retired_count; r++)
		if (n->started <= t->retired[r].serial[output])
			return &t->retired[r].set->engine;
	return &t->tunings->engine;
}

static void describe_line(void *context, const char *line)
{
	struct status_snapshot *s = context;
	int room = SNAPSHOT_DESCRIBE_MAX - s->describe_length;
	if (room <= 1)
		return;
	int n = snprintf(s->describe + s->describe_length, (size_t)room, "%s\n", line);
	if (n > 0)
		s->describe_length += n < room ? n : room - 1;
}

void input_status_fill(struct input_thread *t, struct status_snapshot *s)
{
	memset(s, 0, sizeof *s);
	s->output_count = t->output_count;
	for (int k = 0; k < t->output_count; k++) {
		const struct input_output *o = &t->outputs[k];
		const struct engine *e = &o->engine;
		struct snapshot_output *so = &s->outputs[k];
		snprintf(so->name, sizeof so->name, "%s", o->name);
		so->method = engine_method(e);
		so->preset = engine_preset(e);
		snprintf(so->preset_name, sizeof so->preset_name, "%s", engine_current_preset(e)->name);
		so->root_slot = engine_root(e);
		input_control_root_label(e, so->root_label, sizeof so->root_label);
		so->stats = *engine_stats(e);
		so->queued = o->queued;
		so->queue_drops = o->queue_drops;
		so->sent = atomic_load_explicit(&t->output->sent[k], memory_order_relaxed);
		so->send_drops = atomic_load_explicit(&t->output->send_drops[k], memory_order_relaxed);
		so->refused = atomic_load_explicit(&t->output->refused[k], memory_order_relaxed);
		so->waiting = msg_queue_fill(t->messages, k);
		so->note_ons_shed = o->guard.note_ons_shed;
		so->values_merged = o->guard.values_merged;
		so->system_shed = o->guard.system_shed;
		so->cut_off_dropped = o->guard.cut_off_dropped;
		so->cut_offs = o->cut_offs;
		so->cut_off = o->cut_off;
		so->passthrough_notes = engine_passthrough_notes(e);
		so->notes_held = engine_note_count(e);
		struct engine_note_info n;
		while (so->note_count < SNAPSHOT_NOTES_MAX && engine_note_at(e, so->note_count, &n)) {
			struct snapshot_note *sn = &so->notes[so->note_count++];
			sn->source = n.source;
			sn->in_channel = n.in_channel;
			sn->in_key = n.in_key;
			sn->out_channel = n.out_channel;
			sn->out_key = n.out_key;
			sn->ringing = n.ringing;
			sn->period = n.period;
			sn->pitch = n.pitch;
			const struct engine_tunings *tun = tunings_of_note(t, k, &n);
			if (tun && n.preset >= 0 && n.preset < tun->count) {
				const struct engine_preset *p = &tun->presets[n.preset];
				if (n.tone >= 0 && n.tone < p->lattice->tone_count) {
					const struct tone *tone = &p->lattice->tones[n.tone];
					sn->tuning_known = true;
					snprintf(sn->preset, sizeof sn->preset, "%s", p->name);
					lattice_label(&p->lattice->spec, tone->seeds, sn->label, sizeof sn->label);
					ratio_format(tone->ratio, sn->ratio, sizeof sn->ratio);
					sn->cents = tone->cents;
					snapshot_note_sounds(sn, p, &n);
				}
			}
		}
	}
	for (int i = 0; i < MIDI_IO_MAX_SOURCES; i++) {
		const struct input_source *src = &t->sources[i];
		if (src->seen)
			s->source_count = i + 1;
		s->sources[i].connected = src->connected;
		snprintf(s->sources[i].name, sizeof s->sources[i].name, "%s", src->name);
		s->sources[i].messages = src->messages;
		s->sources[i].parser = src->parser.stats;
	}
	const struct engine_tunings *tun = &t->tunings->engine;
	s->preset_count = tun->count;
	for (int i = 0; i < tun->count; i++)
		snprintf(s->presets[i], sizeof s->presets[i], "%s", tun->presets[i].name);
	s->heartbeat = atomic_load_explicit(&t->heartbeat, memory_order_relaxed);
	s->input_pauses = t->pauses;
	s->input_paused_ms = t->paused_ms +
			     (t->paused_since_ms ? (uint64_t)(monotonic_ms() - t->paused_since_ms) : 0);
	s->input_waiting = t->held || !input_backlog_empty(&t->backlog);
	s->reloads = t->reloads;
	s->retired_tunings = t->retired_count;
	t->backend->describe(t->io, describe_line, s);
}
