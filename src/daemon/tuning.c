/*
 * tuning: lattice_build and keymap_build over a preset of the config.
 *
 * The core names the spec field at fault (struct core_error.field), which
 * is also the name of the config key that set it; the key's line comes
 * from the preset's lines.  A choose or period left at its default has no
 * line of its own: what it is wrong for are the seeds, so their line is
 * named.
 */
#include "tuning.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config_control.h"
#include "latticed/ratio.h"

/* The line to blame for spec field `field` of preset t. */
static int line_of_field(const struct preset_config *t, const char *field)
{
	int line = config_line_of(&t->lines, "preset", field);
	if (line == 0 && (strcmp(field, "choose") == 0 || strcmp(field, "period") == 0))
		line = config_line_of(&t->lines, "preset", "seeds");
	return line;
}

/* One map slot: ".", "-", a tone index or label, optionally "+N"/"-N". */
static bool parse_slot(const struct lattice *lat, const char *word,
		       struct keymap_slot *slot, char *why, size_t why_size)
{
	if (strcmp(word, ".") == 0 || strcmp(word, "-") == 0) {
		slot->tone = KEYMAP_SLOT_SILENT;
		slot->period_shift = 0;
		return true;
	}
	char name[LATTICE_LABEL_MAX];
	text_copy(name, sizeof name, word);
	long shift = 0;
	char *sign = strpbrk(name, "+-");
	if (sign) {
		char *end;
		errno = 0;
		shift = strtol(sign, &end, 10);
		if (errno || *end != '\0' || end == sign + 1 || shift < -64 || shift > 64) {
			snprintf(why, why_size, "'%s' has a bad period shift, expected e.g. 3+1 or 1.5-1", word);
			return false;
		}
		*sign = '\0';
	}
	long index;
	if (value_whole(name, 0, 32767, &index)) {
		if (index >= lat->tone_count) {
			snprintf(why, why_size, "slot '%s' names tone %ld, expected a tone from 0 to %d",
				 word, index, lat->tone_count - 1);
			return false;
		}
	} else {
		index = lattice_find_tone(lat, name);
		if (index < 0) {
			snprintf(why, why_size, "slot '%s' names no tone of the set, expected a tone index, a label such as 1.3, or . for silence",
				 word);
			return false;
		}
	}
	slot->tone = (int16_t)index;
	slot->period_shift = (int16_t)shift;
	return true;
}

static bool build_lattice(const struct config *cfg, const struct preset_config *t,
			  struct lattice *out, struct config_report *report)
{
	struct lattice_spec spec = t->lattice;
	struct core_error err;
	if (t->unison_text[0]) {
		if (!lattice_parse_label(&spec, t->unison_text, &spec.unison_seeds)) {
			config_report_add(report, true, cfg->path, line_of_field(t, "unison"),
					  "unison '%s' names a seed that is not in seeds, expected %d seeds joined by '.', e.g. 1.3",
					  t->unison_text, spec.choose);
			return false;
		}
		spec.has_unison = true;
	}
	if (!lattice_build(out, &spec, &err)) {
		config_report_add(report, true, cfg->path, line_of_field(t, err.field), "%s", err.text);
		return false;
	}
	char a[LATTICE_LABEL_MAX], b[LATTICE_LABEL_MAX], rt[RATIO_TEXT_MAX];
	for (int i = 0; i < out->merge_count; i++) {
		const struct lattice_merge *m = &out->merges[i];
		const struct tone *tone = &out->tones[m->tone];
		config_report_add(report, false, cfg->path, config_line_of(&t->lines, "preset", "seeds"),
				  "products %s and %s are the same tone %s; merged into one",
				  lattice_label(&spec, tone->seeds, a, sizeof a),
				  lattice_label(&spec, m->seeds, b, sizeof b),
				  ratio_format(tone->ratio, rt, sizeof rt));
	}
	return true;
}

/* The map text into keys->table, slot by slot. */
static bool read_map(const struct config *cfg, const struct preset_config *t,
		     const struct lattice *lat, struct keymap_spec *keys, struct config_report *report)
{
	int map_line = config_line_of(&t->lines, "keys", "map");
	if (!t->map_text[0]) {
		config_report_add(report, true, cfg->path, config_line_of(&t->lines, "keys", "layout"),
				  "layout = table needs a map in [keys], expected e.g. map = 0 1 . 2 3 4 5");
		return false;
	}
	char buf[CONFIG_MAP_TEXT_MAX];
	char *words[KEYMAP_TABLE_MAX + 1];
	text_copy(buf, sizeof buf, t->map_text);
	int n = text_words(buf, words, KEYMAP_TABLE_MAX);
	if (n > KEYMAP_TABLE_MAX) {
		config_report_add(report, true, cfg->path, map_line,
				  "map has more than %d slots, expected at most %d",
				  KEYMAP_TABLE_MAX, KEYMAP_TABLE_MAX);
		return false;
	}
	for (int i = 0; i < n; i++) {
		char why[CORE_ERROR_TEXT_MAX];
		if (!parse_slot(lat, words[i], &keys->table[i], why, sizeof why)) {
			config_report_add(report, true, cfg->path, map_line, "%s", why);
			return false;
		}
	}
	keys->table_length = n;
	return true;
}

bool tuning_build(const struct config *cfg, int preset, struct tuning *out,
		  struct config_report *report)
{
	const struct preset_config *t = &cfg->presets[preset];
	if (!build_lattice(cfg, t, &out->lattice, report))
		return false;
	struct keymap_spec keys = t->keys;
	if (keys.layout == KEY_LAYOUT_TABLE && !read_map(cfg, t, &out->lattice, &keys, report))
		return false;
	struct core_error err;
	if (!keymap_build(&out->keymap, &out->lattice, &keys, &err)) {
		config_report_add(report, true, cfg->path, line_of_field(t, err.field), "%s", err.text);
		return false;
	}
	return true;
}

bool tuning_set_build(const struct config *cfg, struct tuning_set *out,
		      struct config_report *report)
{
	if (report)
		memset(report, 0, sizeof *report);
	memset(out, 0, sizeof *out);
	out->tunings = calloc((size_t)cfg->preset_count, sizeof *out->tunings);
	if (!out->tunings) {
		config_report_add(report, true, cfg->path, 0, "out of memory building the tunings");
		return false;
	}
	bool ok = true;
	for (int i = 0; i < cfg->preset_count; i++) {
		struct tuning *t = &out->tunings[i];
		if (!tuning_build(cfg, i, t, report)) {
			ok = false;
			continue;
		}
		struct engine_preset *p = &out->engine.presets[i];
		text_copy(p->name, sizeof p->name, cfg->presets[i].name);
		p->lattice = &t->lattice;
		p->keymap = &t->keymap;
	}
	out->count = out->engine.count = cfg->preset_count;
	if (ok) {
		/* the reserved keys' runs are known now: home and the largest preset's tones */
		int most = 0;
		for (int i = 0; i < out->count; i++)
			if (out->tunings[i].lattice.tone_count > most)
				most = out->tunings[i].lattice.tone_count;
		ok = config_control_check_keys(cfg, out->count, most, report) == 0;
	}
	if (!ok)
		tuning_set_free(out);
	return ok;
}

void tuning_set_free(struct tuning_set *set)
{
	free(set->tunings);
	memset(set, 0, sizeof *set);
}
