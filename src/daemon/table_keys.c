/*
 * table_keys: `latticed table --keys`, the short view for a player: one
 * keyboard period (key_chart.h: the keys over which the map runs once
 * through the lattice), key by key, and the keys that play each chord.
 *
 * A key shows its note name (key 60 = C4), the tone it plays, that tone's
 * exact ratio to the 1/1 of root_hz (its period and the root included, so
 * 35/64 is 35/32 an octave down), and the 12-TET note it sounds nearest
 * with the cents off it.  A chord shows its keys low to high, as
 * key_chart voices it.
 */
#include "table_keys.h"

#include <stdlib.h>

#include "latticed/key_chart.h"
#include "latticed/note_name.h"
#include "latticed/retune_table.h"

static void print_heading(FILE *f, const struct table_view *v, const struct key_chart *chart)
{
	const struct keymap_spec *keys = &v->tuning->keymap.spec;
	char root[LATTICE_LABEL_MAX], by[RATIO_TEXT_MAX], first[NOTE_NAME_MAX];
	table_root_text(v, root, sizeof root, by, sizeof by);
	fprintf(f, "config   %s\n", v->config_name);
	fprintf(f, "preset   %s, root %s", v->cfg->presets[v->preset].name, root);
	if (v->root > 0)
		fprintf(f, " (every pitch times %s)", by);
	fprintf(f, "; ratios are to 1/1 = %g Hz\n", keys->root_hz);
	fprintf(f, "keys     one keyboard period (layout %s): %d keys from %s (key %d)\n",
		key_layout_name(keys->layout), chart->key_count,
		note_name(chart->first_key, first, sizeof first), chart->first_key);
}

static void print_key_rows(FILE *f, const struct table_view *v, const struct key_chart *chart,
			   int label_width)
{
	const struct lattice *lat = &v->tuning->lattice;
	const struct keymap *map = &v->tuning->keymap;
	fprintf(f, "\n  %3s  %-4s  %4s  %-*s  %13s  %s\n", "key", "name", "tone", label_width,
		"seeds", "ratio", "sounds");
	for (int k = chart->first_key; k < chart->first_key + chart->key_count; k++) {
		const struct key_pitch *kp = &map->keys[k];
		char name[NOTE_NAME_MAX], near[NOTE_NAME_MAX];
		fprintf(f, "  %3d  %-4s", k, note_name(k, name, sizeof name));
		if (kp->state == KEY_SILENT) {
			fprintf(f, "  %4s  %-*s  %13s  silent\n", "-", label_width, "", "");
			continue;
		}
		char label[LATTICE_LABEL_MAX], text[RATIO_TEXT_MAX] = "(too large)";
		struct ratio r;
		if (retune_sounding_ratio(lat, kp->tone, kp->period, v->root, &r))
			ratio_format(r, text, sizeof text);
		fprintf(f, "  %4d  %-*s  %13s  ", kp->tone, label_width,
			lattice_label(&lat->spec, lat->tones[kp->tone].seeds, label, sizeof label), text);
		if (kp->state == KEY_OUT_OF_RANGE)
			fprintf(f, "silent: its pitch is outside MIDI\n");
		else
			fprintf(f, "%s %+.3f\n", note_name(kp->out_key, near, sizeof near), kp->cents_off);
	}
}

/* "57 61 64 (A3 C#4 E4)", or why there are none. */
static void print_chord_keys(FILE *f, const struct key_chart_chord *cc)
{
	if (!cc->playable) {
		fprintf(f, "not within one keyboard period");
		return;
	}
	for (int i = 0; i < cc->key_count; i++)
		fprintf(f, "%s%d", i ? " " : "", cc->keys[i]);
	fprintf(f, " (");
	for (int i = 0; i < cc->key_count; i++) {
		char name[NOTE_NAME_MAX];
		fprintf(f, "%s%s", i ? " " : "", note_name(cc->keys[i], name, sizeof name));
	}
	fprintf(f, ")%s", cc->inversion ? ", an inversion" : "");
}

static void print_chords(FILE *f, const struct lattice *lat, const struct key_chart *chart,
			 int label_width)
{
	fprintf(f, "\n  %-11s  %-*s  %-16s  %s\n", "chord", label_width + 2, "seeds", "proportion",
		"keys");
	for (int c = 0; c < lat->chord_count; c++) {
		const struct chord *ch = &lat->chords[c];
		char label[LATTICE_LABEL_MAX], proportion[16 * LATTICE_MAX_CHORD_TONES] = "";
		size_t used = 0;
		for (int i = 0; i < ch->tone_count && ch->proportion_ok && used < sizeof proportion; i++)
			used += (size_t)snprintf(proportion + used, sizeof proportion - used, "%s%lld",
						 i ? ":" : "", (long long)ch->proportion[i]);
		fprintf(f, "  %-11s  %-*s  %-16s  ", ch->kind == CHORD_HARMONIC ? "harmonic" : "subharmonic",
			label_width + 2, ch->seeds ? lattice_label(&lat->spec, ch->seeds, label, sizeof label) : "-",
			ch->proportion_ok ? proportion : "(too large)");
		print_chord_keys(f, &chart->chords[c]);
		fputc('\n', f);
	}
}

int table_print_keys(FILE *f, const struct table_view *v)
{
	const struct lattice *lat = &v->tuning->lattice;
	struct key_chart *chart = malloc(sizeof *chart);
	struct core_error err;
	if (!chart || !key_chart_build(chart, lat, &v->tuning->keymap, 1, &err)) {
		free(chart);
		return -1;
	}
	int label_width = table_label_width(lat);
	print_heading(f, v, chart);
	print_key_rows(f, v, chart, label_width);
	print_chords(f, lat, chart, label_width);
	free(chart);
	return 0;
}
