/*
 * table_print: prints a built tuning for people (aligned text) or programs
 * (one JSON object, written with json-c).
 *
 * The text form is read on a laptop before a show: what each key plays,
 * how far it sits from the 12-TET key it goes out on, and the bend or MTS
 * word each output will send.  Keys that play nothing are summarised as
 * ranges instead of filling the screen.
 */
#include "table_print.h"

#include <json-c/json.h>
#include <stdio.h>
#include <string.h>

#include "latticed/note_name.h"
#include "latticed/pitch.h"
#include "latticed/retune_table.h"

static bool output_uses_bend(const struct output_config *o)
{
	return retune_method_bends_notes(o->engine.method);
}

/* Each output's view of the key map (its cents offset applied), built once
 * per print: what the engine will hold for it. */
static struct retune_table output_tables[CONFIG_MAX_OUTPUTS]; /* single-threaded command */

static void build_output_tables(const struct config *cfg, const struct keymap *map)
{
	for (int o = 0; o < cfg->output_count; o++)
		retune_table_build(&output_tables[o], map, cfg->outputs[o].engine.cents_offset);
}

/* The bend output number o sends for a key: its own offset, range and factor. */
static struct bend output_bend(const struct config *cfg, int o, int key)
{
	const struct output_config *out = &cfg->outputs[o];
	const struct retune_key *rk = &output_tables[o].keys[key];
	return pitch_bend_for_cents(rk->cents, out->engine.bend_range, out->engine.bend_played);
}

static void print_seeds(FILE *f, const struct lattice_spec *spec)
{
	for (int i = 0; i < spec->seed_count; i++)
		fprintf(f, "%s%s", i ? " " : "", spec->seed_text[i]);
}

static void print_key_ranges(FILE *f, const struct keymap *map,
			     enum key_state state, const char *what)
{
	int printed = 0;
	for (int k = 0; k < KEYMAP_KEYS; k++) {
		if (map->keys[k].state != state)
			continue;
		int last = k;
		while (last + 1 < KEYMAP_KEYS && map->keys[last + 1].state == state)
			last++;
		if (printed == 0)
			fprintf(f, "  %s: ", what);
		if (last == k)
			fprintf(f, "%s%d", printed ? ", " : "", k);
		else
			fprintf(f, "%s%d-%d", printed ? ", " : "", k, last);
		printed++;
		k = last;
	}
	if (printed)
		fputc('\n', f);
}

void table_root_text(const struct table_view *v, char *label, size_t label_size,
		     char *ratio, size_t ratio_size)
{
	const struct lattice *lat = &v->tuning->lattice;
	struct ratio r;
	if (!retune_root_ratio(lat, v->root - 1, &r))
		r = (struct ratio){1, 1};
	ratio_format(r, ratio, ratio_size);
	if (v->root == 0)
		snprintf(label, label_size, "home");
	else
		lattice_label(&lat->spec, lat->tones[v->root - 1].seeds, label, label_size);
}

static void print_lattice(FILE *f, const struct table_view *v)
{
	const struct config *cfg = v->cfg;
	const struct lattice *lat = &v->tuning->lattice;
	int preset = v->preset;
	const struct lattice_spec *spec = &lat->spec;
	char label[LATTICE_LABEL_MAX], text[RATIO_TEXT_MAX];
	fprintf(f, "config   %s\n", v->config_name);
	if (cfg->preset_count > 1) {
		fprintf(f, "presets ");
		for (int i = 0; i < cfg->preset_count; i++)
			fprintf(f, " %s%s%s", i == preset ? "[" : "", cfg->presets[i].name,
				i == preset ? "]" : "");
		fprintf(f, "  (shown in brackets; --preset NAME shows another)\n");
	}
	if (v->root > 0) {
		char root[LATTICE_LABEL_MAX], by[RATIO_TEXT_MAX];
		table_root_text(v, root, sizeof root, by, sizeof by);
		fprintf(f, "root     %d: tone %d (%s) is 1/1, every pitch times %s (as after `latticed root %d`)\n",
			v->root, v->root - 1, root, by, v->root);
	}
	fprintf(f, "lattice  %d of %d seeds (", spec->choose, spec->seed_count);
	print_seeds(f, spec);
	fprintf(f, "), period %s, ", ratio_format(spec->period, text, sizeof text));
	if (spec->has_unison)
		fprintf(f, "%s is 1/1\n", lattice_label(spec, spec->unison_seeds, label, sizeof label));
	else
		fprintf(f, "1/1 is the reference pitch\n");
	fprintf(f, "         %d tones, %d harmonic and %d subharmonic chords\n",
		lat->tone_count, lat->harmonic_count,
		lat->chord_count - lat->harmonic_count);
}

int table_label_width(const struct lattice *lat)
{
	char label[LATTICE_LABEL_MAX];
	int width = 5;
	for (int i = 0; i < lat->tone_count; i++) {
		int w = (int)strlen(lattice_label(&lat->spec, lat->tones[i].seeds, label, sizeof label));
		if (w > width)
			width = w;
	}
	return width;
}

static void print_tones(FILE *f, const struct lattice *lat, int label_width)
{
	char label[LATTICE_LABEL_MAX], text[RATIO_TEXT_MAX];
	fprintf(f, "\ntones\n  %4s  %-*s  %13s  %9s\n", "tone", label_width, "seeds",
		"ratio", "cents");
	for (int i = 0; i < lat->tone_count; i++) {
		const struct tone *tone = &lat->tones[i];
		fprintf(f, "  %4d  %-*s  %13s  %9.3f", i, label_width,
			lattice_label(&lat->spec, tone->seeds, label, sizeof label),
			ratio_format(tone->ratio, text, sizeof text), tone->cents);
		if (tone->merged_count)
			fprintf(f, "  (+%d merged)", tone->merged_count);
		fputc('\n', f);
	}
}

/* "1.3 1.5 3.5": the chord's tones by label. */
static void chord_tones(const struct lattice *lat, const struct chord *ch, char *tones, size_t size)
{
	size_t used = 0;
	tones[0] = '\0';
	for (int i = 0; i < ch->tone_count; i++) {
		char member[LATTICE_LABEL_MAX];
		int n = snprintf(tones + used, size - used, "%s%s", i ? " " : "",
				 lattice_label(&lat->spec, lat->tones[ch->tones[i]].seeds,
					       member, sizeof member));
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
	}
}

static void print_chords(FILE *f, const struct lattice *lat, int label_width)
{
	char label[LATTICE_LABEL_MAX];
	int widest_chord = 0;
	for (int c = 0; c < lat->chord_count; c++)
		if (lat->chords[c].tone_count > widest_chord)
			widest_chord = lat->chords[c].tone_count;
	int tones_width = widest_chord * (label_width + 1);
	fprintf(f, "\nchords\n  %-11s  %-*s  %-*s  %s\n", "kind", label_width + 2,
		"seeds", tones_width, "tones", "proportion");
	for (int c = 0; c < lat->chord_count; c++) {
		const struct chord *ch = &lat->chords[c];
		char tones[LATTICE_MAX_CHORD_TONES * (LATTICE_LABEL_MAX + 1)];
		chord_tones(lat, ch, tones, sizeof tones);
		const char *on = ch->seeds ? lattice_label(&lat->spec, ch->seeds, label, sizeof label) : "-";
		fprintf(f, "  %-11s  %-*s  %-*s  ",
			ch->kind == CHORD_HARMONIC ? "harmonic" : "subharmonic",
			label_width + 2, on, tones_width, tones);
		if (!ch->proportion_ok)
			fprintf(f, "(too large for 64-bit integers)");
		for (int i = 0; i < ch->tone_count && ch->proportion_ok; i++)
			fprintf(f, "%s%lld", i ? ":" : "", (long long)ch->proportion[i]);
		fputc('\n', f);
	}
}

/* The channels of output o: for mpe the members its channels name, which
 * notes go to; for bend and mts the list notes are given channels from. */
static uint16_t output_channels(const struct config *cfg, int o)
{
	if (cfg->outputs[o].engine.method != RETUNE_MPE)
		return cfg->outputs[o].engine.channels;
	struct engine_spec spec;
	config_engine_spec(cfg, o, &spec);
	return engine_note_channels(&spec);
}

static void print_outputs(FILE *f, const struct config *cfg, const struct keymap_spec *keys)
{
	fprintf(f, "\nkeys     layout %s", key_layout_name(keys->layout));
	if (keys->layout != KEY_LAYOUT_NEAREST)
		fprintf(f, ", tone 0 on key %d", keys->root_key);
	if (keys->transpose)
		fprintf(f, ", transposed %+d", keys->transpose);
	fprintf(f, ", 1/1 = %g Hz, key 60 = C4\n", keys->root_hz);
	for (int o = 0; o < cfg->output_count; o++) {
		const struct output_config *out = &cfg->outputs[o];
		char chans[64];
		fprintf(f, "output   %s: %s on channels %s", out->name,
			retune_method_name(out->engine.method),
			config_format_channels(output_channels(cfg, o), chans, sizeof chans));
		if (out->engine.method == RETUNE_MPE)
			fprintf(f, ", %s zone of %d members (master channel %d)",
				out->engine.mpe_zone == MPE_ZONE_LOWER ? "lower" : "upper",
				out->engine.mpe_members, out->engine.mpe_zone == MPE_ZONE_LOWER ? 1 : 16);
		if (output_uses_bend(out))
			fprintf(f, ", bend range +-%d semitones", out->engine.bend_range);
		if (out->engine.method == RETUNE_MTS)
			fprintf(f, ", tuning program %d", out->engine.mts_program);
		if (out->engine.bend_played != 1.0)
			fprintf(f, ", synth plays %.7g of a bend", out->engine.bend_played);
		if (out->engine.cents_offset != 0.0)
			fprintf(f, ", %+g cents", out->engine.cents_offset);
		fputc('\n', f);
	}
}

static void print_keys(FILE *f, const struct config *cfg, const struct tuning *t, int label_width)
{
	const struct lattice *lat = &t->lattice;
	const struct keymap *map = &t->keymap;
	char label[LATTICE_LABEL_MAX], name[NOTE_NAME_MAX];
	fprintf(f, "\n  %3s  %-4s  %4s  %-*s  %6s  %10s  %3s  %8s", "key", "name",
		"tone", label_width, "seeds", "period", "Hz", "out", "cents");
	for (int o = 0; o < cfg->output_count; o++)
		if (output_uses_bend(&cfg->outputs[o]))
			fprintf(f, "  %6s %7s", "bend", "error");
	fprintf(f, "  %s\n", "MTS word");
	for (int k = 0; k < KEYMAP_KEYS; k++) {
		const struct key_pitch *kp = &map->keys[k];
		if (kp->state != KEY_SOUNDING)
			continue;
		fprintf(f, "  %3d  %-4s  %4d  %-*s  %6d  %10.3f  %3d  %+8.3f", k,
			note_name(k, name, sizeof name), kp->tone, label_width,
			lattice_label(&lat->spec, lat->tones[kp->tone].seeds, label, sizeof label),
			kp->period, kp->hz, kp->out_key, kp->cents_off);
		for (int o = 0; o < cfg->output_count; o++) {
			if (!output_uses_bend(&cfg->outputs[o]))
				continue;
			struct bend b = output_bend(cfg, o, k);
			fprintf(f, "  %6u %+7.3f", b.value, b.error_cents);
		}
		fprintf(f, "  %02X %02X %02X\n", kp->mts[0], kp->mts[1], kp->mts[2]);
	}
	if (cfg->output_count > 1) {
		fprintf(f, "  (bend columns in output order:");
		for (int o = 0; o < cfg->output_count; o++)
			if (output_uses_bend(&cfg->outputs[o]))
				fprintf(f, " %s", cfg->outputs[o].name);
		fprintf(f, ")\n");
	}
	print_key_ranges(f, map, KEY_SILENT, "silent keys");
	print_key_ranges(f, map, KEY_OUT_OF_RANGE,
			 "silent, pitch outside MIDI (below key 0 or above MTS 7F 7F 7E)");
}

void table_print_text(FILE *f, const struct table_view *v)
{
	const struct config *cfg = v->cfg;
	const struct tuning *t = v->tuning;
	int preset = v->preset;
	build_output_tables(cfg, &t->keymap);
	int label_width = table_label_width(&t->lattice);
	print_lattice(f, v);
	print_tones(f, &t->lattice, label_width);
	print_chords(f, &t->lattice, label_width);
	print_outputs(f, cfg, &cfg->presets[preset].keys);
	print_keys(f, cfg, t, label_width);
}

static struct json_object *fixed(double value, int decimals)
{
	char buf[64];
	snprintf(buf, sizeof buf, "%.*f", decimals, value);
	return json_object_new_double_s(value, buf);
}

static struct json_object *key_list(const struct keymap *map, enum key_state state)
{
	struct json_object *list = json_object_new_array();
	for (int k = 0; k < KEYMAP_KEYS; k++)
		if (map->keys[k].state == state)
			json_object_array_add(list, json_object_new_int(k));
	return list;
}

static struct json_object *json_lattice(const struct lattice_spec *spec)
{
	char label[LATTICE_LABEL_MAX], text[RATIO_TEXT_MAX];
	struct json_object *jl = json_object_new_object();
	struct json_object *seeds = json_object_new_array();
	for (int i = 0; i < spec->seed_count; i++)
		json_object_array_add(seeds, json_object_new_string(spec->seed_text[i]));
	json_object_object_add(jl, "seeds", seeds);
	json_object_object_add(jl, "choose", json_object_new_int(spec->choose));
	json_object_object_add(jl, "period",
			       json_object_new_string(ratio_format(spec->period, text, sizeof text)));
	json_object_object_add(jl, "unison", spec->has_unison
			       ? json_object_new_string(lattice_label(spec, spec->unison_seeds, label, sizeof label))
			       : NULL);
	return jl;
}

static struct json_object *json_tones(const struct lattice *lat)
{
	const struct lattice_spec *spec = &lat->spec;
	char label[LATTICE_LABEL_MAX], text[RATIO_TEXT_MAX];
	struct json_object *tones = json_object_new_array();
	for (int i = 0; i < lat->tone_count; i++) {
		const struct tone *tone = &lat->tones[i];
		struct json_object *jt = json_object_new_object();
		json_object_object_add(jt, "index", json_object_new_int(i));
		json_object_object_add(jt, "label",
				       json_object_new_string(lattice_label(spec, tone->seeds, label, sizeof label)));
		json_object_object_add(jt, "ratio",
				       json_object_new_string(ratio_format(tone->ratio, text, sizeof text)));
		json_object_object_add(jt, "cents", fixed(tone->cents, 6));
		struct json_object *merged = json_object_new_array();
		for (int m = 0; m < lat->merge_count; m++)
			if (lat->merges[m].tone == i)
				json_object_array_add(merged, json_object_new_string(
					lattice_label(spec, lat->merges[m].seeds, label, sizeof label)));
		json_object_object_add(jt, "merged", merged);
		json_object_array_add(tones, jt);
	}
	return tones;
}

static struct json_object *json_chords(const struct lattice *lat)
{
	char label[LATTICE_LABEL_MAX];
	struct json_object *chords = json_object_new_array();
	for (int c = 0; c < lat->chord_count; c++) {
		const struct chord *ch = &lat->chords[c];
		struct json_object *jc = json_object_new_object();
		json_object_object_add(jc, "kind", json_object_new_string(
			ch->kind == CHORD_HARMONIC ? "harmonic" : "subharmonic"));
		json_object_object_add(jc, "seeds", json_object_new_string(
			lattice_label(&lat->spec, ch->seeds, label, sizeof label)));
		struct json_object *members = json_object_new_array();
		struct json_object *prop = json_object_new_array();
		for (int i = 0; i < ch->tone_count; i++) {
			json_object_array_add(members, json_object_new_int(ch->tones[i]));
			if (ch->proportion_ok)
				json_object_array_add(prop, json_object_new_int64(ch->proportion[i]));
		}
		json_object_object_add(jc, "tones", members);
		json_object_object_add(jc, "proportion", ch->proportion_ok ? prop : NULL);
		if (!ch->proportion_ok)
			json_object_put(prop);
		json_object_array_add(chords, jc);
	}
	return chords;
}

static struct json_object *json_outputs(const struct config *cfg)
{
	struct json_object *outputs = json_object_new_array();
	for (int o = 0; o < cfg->output_count; o++) {
		const struct output_config *out = &cfg->outputs[o];
		struct json_object *jo = json_object_new_object();
		json_object_object_add(jo, "name", json_object_new_string(out->name));
		json_object_object_add(jo, "method", json_object_new_string(retune_method_name(out->engine.method)));
		struct json_object *chans = json_object_new_array();
		uint16_t used = output_channels(cfg, o);
		for (int ch = 0; ch < 16; ch++)
			if (used & (1u << ch))
				json_object_array_add(chans, json_object_new_int(ch + 1));
		json_object_object_add(jo, "channels", chans);
		json_object_object_add(jo, "bend_range", json_object_new_int(out->engine.bend_range));
		json_object_object_add(jo, "bend_factor", fixed(out->engine.bend_played, 9));
		json_object_object_add(jo, "cents_offset", fixed(out->engine.cents_offset, 6));
		json_object_array_add(outputs, jo);
	}
	return outputs;
}

/* Every output's bend for key k into jk; the first also at top level. */
static void json_key_bends(struct json_object *jk, const struct config *cfg, int k)
{
	struct json_object *bends = json_object_new_object();
	for (int o = 0; o < cfg->output_count; o++) {
		struct bend b = output_bend(cfg, o, k);
		if (o == 0) {
			/* the first output's bend, at top level for quick use */
			json_object_object_add(jk, "bend", json_object_new_int(b.value));
			json_object_object_add(jk, "bend_error_cents", fixed(b.error_cents, 6));
		}
		struct json_object *jb = json_object_new_object();
		json_object_object_add(jb, "value", json_object_new_int(b.value));
		json_object_object_add(jb, "error_cents", fixed(b.error_cents, 6));
		json_object_object_add(bends, cfg->outputs[o].name, jb);
	}
	json_object_object_add(jk, "bends", bends);
}

static struct json_object *json_keys(const struct config *cfg, const struct tuning *t)
{
	const struct lattice *lat = &t->lattice;
	const struct keymap *map = &t->keymap;
	char label[LATTICE_LABEL_MAX];
	struct json_object *jkeys = json_object_new_array();
	for (int k = 0; k < KEYMAP_KEYS; k++) {
		const struct key_pitch *kp = &map->keys[k];
		if (kp->state != KEY_SOUNDING)
			continue;
		struct json_object *jk = json_object_new_object();
		json_object_object_add(jk, "key", json_object_new_int(k));
		json_object_object_add(jk, "tone", json_object_new_int(kp->tone));
		json_object_object_add(jk, "label", json_object_new_string(
			lattice_label(&lat->spec, lat->tones[kp->tone].seeds, label, sizeof label)));
		json_object_object_add(jk, "period", json_object_new_int(kp->period));
		json_object_object_add(jk, "hz", fixed(kp->hz, 6));
		json_object_object_add(jk, "out_key", json_object_new_int(kp->out_key));
		json_object_object_add(jk, "cents_off", fixed(kp->cents_off, 6));
		json_key_bends(jk, cfg, k);
		struct json_object *mts = json_object_new_array();
		for (int i = 0; i < 3; i++)
			json_object_array_add(mts, json_object_new_int(kp->mts[i]));
		json_object_object_add(jk, "mts", mts);
		json_object_array_add(jkeys, jk);
	}
	return jkeys;
}

static struct json_object *json_root(const struct table_view *v)
{
	char label[LATTICE_LABEL_MAX], ratio[RATIO_TEXT_MAX];
	table_root_text(v, label, sizeof label, ratio, sizeof ratio);
	struct json_object *jr = json_object_new_object();
	json_object_object_add(jr, "slot", json_object_new_int(v->root));
	json_object_object_add(jr, "tone", v->root ? json_object_new_int(v->root - 1) : NULL);
	json_object_object_add(jr, "label", json_object_new_string(label));
	json_object_object_add(jr, "ratio", json_object_new_string(ratio));
	return jr;
}

int table_print_json(FILE *f, const struct table_view *v)
{
	const struct config *cfg = v->cfg;
	const struct tuning *t = v->tuning;
	int preset = v->preset;
	const struct keymap *map = &t->keymap;
	build_output_tables(cfg, map);
	struct json_object *root = json_object_new_object();
	json_object_object_add(root, "config", json_object_new_string(v->config_name));
	json_object_object_add(root, "preset", json_object_new_string(cfg->presets[preset].name));
	json_object_object_add(root, "root", json_root(v));
	struct json_object *presets = json_object_new_array();
	for (int i = 0; i < cfg->preset_count; i++)
		json_object_array_add(presets, json_object_new_string(cfg->presets[i].name));
	json_object_object_add(root, "presets", presets);
	json_object_object_add(root, "lattice", json_lattice(&t->lattice.spec));
	json_object_object_add(root, "tones", json_tones(&t->lattice));
	json_object_object_add(root, "chords", json_chords(&t->lattice));
	json_object_object_add(root, "outputs", json_outputs(cfg));
	json_object_object_add(root, "keys", json_keys(cfg, t));
	json_object_object_add(root, "silent_keys", key_list(map, KEY_SILENT));
	json_object_object_add(root, "out_of_range_keys", key_list(map, KEY_OUT_OF_RANGE));

	const char *s = json_object_to_json_string_ext(
		root, JSON_C_TO_STRING_PRETTY | JSON_C_TO_STRING_NOSLASHESCAPE);
	int rc = fputs(s, f) < 0 || fputc('\n', f) == EOF ? -1 : 0;
	json_object_put(root);
	return rc;
}
