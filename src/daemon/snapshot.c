/*
 * snapshot: the status reply as JSON (json-c).  Channels are numbered 1
 * to 16 here, as players and synth manuals count them; keys 0 to 127.
 */
#include "snapshot.h"

#include <json-c/json.h>
#include <stdio.h>

#include "latticed/retune_table.h"

void snapshot_note_sounds(struct snapshot_note *sn, const struct engine_preset *p,
			  const struct engine_note_info *n)
{
	const struct lattice *lat = p->lattice;
	if (n->root > 0 && n->root <= lat->tone_count)
		lattice_label(&lat->spec, lat->tones[n->root - 1].seeds, sn->root, sizeof sn->root);
	else
		snprintf(sn->root, sizeof sn->root, "home");
	struct ratio r;
	if (!retune_sounding_ratio(lat, n->tone, n->period, n->root, &r))
		return;
	ratio_format(r, sn->sounds, sizeof sn->sounds);
	sn->hz = p->keymap->spec.root_hz * ratio_to_double(r);
}

static struct json_object *fixed(double value, int decimals)
{
	char buf[64];
	snprintf(buf, sizeof buf, "%.*f", decimals, value);
	return json_object_new_double_s(value, buf);
}

static struct json_object *u64(uint64_t value)
{
	return json_object_new_int64((int64_t)value);
}

static struct json_object *stats_json(const struct engine_stats *s)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "notes_on", u64(s->notes_on));
	json_object_object_add(o, "notes_shared", u64(s->notes_shared));
	json_object_object_add(o, "notes_stolen", u64(s->notes_stolen));
	json_object_object_add(o, "notes_dropped", u64(s->notes_dropped));
	json_object_object_add(o, "silent_keys", u64(s->silent_keys));
	json_object_object_add(o, "bends_clamped", u64(s->bends_clamped));
	json_object_object_add(o, "passthrough_blocked", u64(s->passthrough_blocked));
	json_object_object_add(o, "tuning_changes", u64(s->tuning_changes));
	json_object_object_add(o, "messages_out", u64(s->messages_out));
	return o;
}

static struct json_object *note_json(const struct snapshot_note *n)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "source", json_object_new_int(n->source));
	json_object_object_add(o, "in_channel", json_object_new_int(n->in_channel + 1));
	json_object_object_add(o, "in_key", json_object_new_int(n->in_key));
	if (n->tuning_known) {
		json_object_object_add(o, "preset", json_object_new_string(n->preset));
		json_object_object_add(o, "tone", json_object_new_string(n->label));
		json_object_object_add(o, "ratio", json_object_new_string(n->ratio));
		json_object_object_add(o, "cents", fixed(n->cents, 3));
		json_object_object_add(o, "root", json_object_new_string(n->root));
		struct json_object *sounds = json_object_new_object();
		json_object_object_add(sounds, "ratio", n->sounds[0] ? json_object_new_string(n->sounds) : NULL);
		json_object_object_add(sounds, "hz", n->hz > 0 ? fixed(n->hz, 3) : NULL);
		json_object_object_add(o, "sounds", sounds);
	} else {
		json_object_object_add(o, "tone", NULL);
	}
	json_object_object_add(o, "period", json_object_new_int(n->period));
	json_object_object_add(o, "pitch", fixed(n->pitch, 4));
	json_object_object_add(o, "out_channel", json_object_new_int(n->out_channel + 1));
	json_object_object_add(o, "out_key", json_object_new_int(n->out_key));
	json_object_object_add(o, "ringing", json_object_new_boolean(n->ringing));
	return o;
}

static struct json_object *output_json(const struct snapshot_output *so)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "name", json_object_new_string(so->name));
	json_object_object_add(o, "method", json_object_new_string(retune_method_name(so->method)));
	json_object_object_add(o, "preset", json_object_new_string(so->preset_name));
	json_object_object_add(o, "root", json_object_new_string(so->root_label));
	json_object_object_add(o, "queued", u64(so->queued));
	json_object_object_add(o, "sent", u64(so->sent));
	json_object_object_add(o, "queue_drops", u64(so->queue_drops));
	json_object_object_add(o, "send_drops", u64(so->send_drops));
	json_object_object_add(o, "refused", u64(so->refused));
	json_object_object_add(o, "waiting", u64(so->waiting));
	struct json_object *shed = json_object_new_object();
	json_object_object_add(shed, "note_ons", u64(so->note_ons_shed));
	json_object_object_add(shed, "values_merged", u64(so->values_merged));
	json_object_object_add(shed, "system", u64(so->system_shed));
	json_object_object_add(shed, "while_cut_off", u64(so->cut_off_dropped));
	json_object_object_add(o, "shed", shed);
	json_object_object_add(o, "cut_offs", u64(so->cut_offs));
	json_object_object_add(o, "cut_off", json_object_new_boolean(so->cut_off));
	json_object_object_add(o, "passthrough_notes", json_object_new_int(so->passthrough_notes));
	json_object_object_add(o, "stats", stats_json(&so->stats));
	json_object_object_add(o, "notes_held", json_object_new_int(so->notes_held));
	struct json_object *notes = json_object_new_array();
	for (int i = 0; i < so->note_count; i++)
		json_object_array_add(notes, note_json(&so->notes[i]));
	json_object_object_add(o, "notes", notes);
	return o;
}

struct json_object *snapshot_json(const struct status_snapshot *s, const struct snapshot_extra *x)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "version", json_object_new_string(x->version));
	json_object_object_add(o, "pid", json_object_new_int(x->pid));
	json_object_object_add(o, "uptime_seconds", fixed(x->uptime_seconds, 1));
	json_object_object_add(o, "config", json_object_new_string(x->config));
	json_object_object_add(o, "default_config",
			       x->default_config ? json_object_new_string(x->default_config) : NULL);
	json_object_object_add(o, "backend", json_object_new_string(x->backend));
	json_object_object_add(o, "control_socket", json_object_new_string(x->control_socket));
	if (s->output_count > 0) {
		const struct snapshot_output *first = &s->outputs[0];
		struct json_object *p = json_object_new_object();
		json_object_object_add(p, "index", json_object_new_int(first->preset));
		json_object_object_add(p, "name", json_object_new_string(first->preset_name));
		json_object_object_add(o, "preset", p);
		struct json_object *r = json_object_new_object();
		json_object_object_add(r, "slot", json_object_new_int(first->root_slot));
		json_object_object_add(r, "label", json_object_new_string(first->root_label));
		json_object_object_add(o, "root", r);
	}
	struct json_object *presets = json_object_new_array();
	for (int i = 0; i < s->preset_count; i++)
		json_object_array_add(presets, json_object_new_string(s->presets[i]));
	json_object_object_add(o, "presets", presets);
	json_object_object_add(o, "reloads", json_object_new_int((int)s->reloads));
	json_object_object_add(o, "retired_tunings", json_object_new_int(s->retired_tunings));
	struct json_object *input = json_object_new_object();
	json_object_object_add(input, "pauses", u64(s->input_pauses));
	json_object_object_add(input, "paused_ms", u64(s->input_paused_ms));
	json_object_object_add(input, "waiting", json_object_new_boolean(s->input_waiting));
	json_object_object_add(o, "input", input);
	struct json_object *ports = json_object_new_array();
	const char *line = s->describe;
	const char *end = s->describe + s->describe_length;
	while (line < end) {
		const char *nl = line;
		while (nl < end && *nl != '\n')
			nl++;
		json_object_array_add(ports, json_object_new_string_len(line, (int)(nl - line)));
		line = nl + 1;
	}
	json_object_object_add(o, "ports", ports);
	struct json_object *sources = json_object_new_array();
	for (int i = 0; i < s->source_count; i++) {
		const struct snapshot_source *src = &s->sources[i];
		struct json_object *so = json_object_new_object();
		json_object_object_add(so, "index", json_object_new_int(i));
		json_object_object_add(so, "name", json_object_new_string(src->name));
		json_object_object_add(so, "connected", json_object_new_boolean(src->connected));
		json_object_object_add(so, "messages", u64(src->messages));
		const struct midi_parser_stats *ps = &src->parser;
		json_object_object_add(so, "bytes_dropped",
				       u64((uint64_t)ps->stray_data_bytes + ps->undefined_bytes +
					   ps->stray_sysex_ends));
		json_object_object_add(so, "messages_dropped",
				       u64((uint64_t)ps->sysex_overflows + ps->sysex_interrupted +
					   ps->truncated_messages));
		json_object_array_add(sources, so);
	}
	json_object_object_add(o, "sources", sources);
	struct json_object *outputs = json_object_new_array();
	for (int i = 0; i < s->output_count; i++)
		json_object_array_add(outputs, output_json(&s->outputs[i]));
	json_object_object_add(o, "outputs", outputs);
	return o;
}
