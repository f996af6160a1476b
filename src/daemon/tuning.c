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

/*
 * Seeds that are one tone once reduced into the period (3 and 3; 1 and 2
 * with period 2/1): every product with one is a product with the other.
 * class_of[i] is the first seed equal to seed i that way.
 */
static void seed_classes(const struct lattice_spec *spec, int *class_of)
{
	struct ratio reduced[LATTICE_MAX_SEEDS];
	for (int i = 0; i < spec->seed_count; i++) {
		if (!ratio_reduce_into(spec->seeds[i], spec->period, &reduced[i], NULL))
			reduced[i] = spec->seeds[i];
		class_of[i] = i;
		for (int j = 0; j < i; j++) {
			if (ratio_equal(reduced[j], reduced[i])) {
				class_of[i] = class_of[j];
				break;
			}
		}
	}
}

/* Do products a and b take the same seeds up to equal seeds? */
static bool same_up_to_equal_seeds(const int *class_of, int n, uint16_t a, uint16_t b)
{
	int count[LATTICE_MAX_SEEDS] = {0};
	for (int i = 0; i < n; i++) {
		count[class_of[i]] += (a >> i & 1) - (b >> i & 1);
	}
	for (int i = 0; i < n; i++)
		if (count[i])
			return false;
	return true;
}

/* One warning per pair of equal seeds, saying what it does to the set. */
static void report_equal_seeds(const struct config *cfg, const struct preset_config *t,
			       const struct lattice *lat, const int *class_of,
			       struct config_report *report)
{
	const struct lattice_spec *spec = &lat->spec;
	int line = config_line_of(&t->lines, "preset", "seeds");
	char period[RATIO_TEXT_MAX], reduced[RATIO_TEXT_MAX];
	ratio_format(spec->period, period, sizeof period);
	for (int j = 0; j < spec->seed_count; j++) {
		int i = class_of[j];
		if (i == j)
			continue;
		int merged = 0;
		for (int m = 0; m < lat->merge_count; m++) {
			uint16_t a = lat->tones[lat->merges[m].tone].seeds, b = lat->merges[m].seeds;
			if ((((a >> i) & 1) != ((b >> i) & 1) || ((a >> j) & 1) != ((b >> j) & 1)) &&
			    same_up_to_equal_seeds(class_of, spec->seed_count, a, b))
				merged++;
		}
		char why[2 * LATTICE_SEED_TEXT_MAX + 2 * RATIO_TEXT_MAX + 96];
		if (ratio_equal(spec->seeds[i], spec->seeds[j])) {
			snprintf(why, sizeof why, "seed %s is given twice (seeds %d and %d)",
				 spec->seed_text[i], i + 1, j + 1);
		} else {
			struct ratio r;
			if (!ratio_reduce_into(spec->seeds[j], spec->period, &r, NULL))
				r = spec->seeds[j];
			ratio_format(r, reduced, sizeof reduced);
			bool is_period = ratio_equal(spec->seeds[i], spec->period) ||
					 ratio_equal(spec->seeds[j], spec->period);
			snprintf(why, sizeof why, "seeds %s and %s are one tone once reduced into the period %s (%s%s)",
				 spec->seed_text[i], spec->seed_text[j], period,
				 is_period ? "a seed equal to the period is 1/1" : "both ",
				 is_period ? "" : reduced);
		}
		config_report_add(report, false, cfg->path, line,
				  "%s: every product with one is a product with the other, so %d product%s merge%s and the set has %d tones instead of %lld; expected seeds that differ within the period",
				  why, merged, merged == 1 ? "" : "s", merged == 1 ? "s" : "",
				  lat->tone_count, (long long)binomial(spec->seed_count, spec->choose));
	}
}

static void report_merges(const struct config *cfg, const struct preset_config *t,
			  const struct lattice *lat, struct config_report *report)
{
	int class_of[LATTICE_MAX_SEEDS];
	seed_classes(&lat->spec, class_of);
	report_equal_seeds(cfg, t, lat, class_of, report);
	char a[LATTICE_LABEL_MAX], b[LATTICE_LABEL_MAX], rt[RATIO_TEXT_MAX];
	for (int i = 0; i < lat->merge_count; i++) {
		const struct lattice_merge *m = &lat->merges[i];
		const struct tone *tone = &lat->tones[m->tone];
		if (same_up_to_equal_seeds(class_of, lat->spec.seed_count, tone->seeds, m->seeds))
			continue; /* said above */
		config_report_add(report, false, cfg->path, config_line_of(&t->lines, "preset", "seeds"),
				  "products %s and %s are the same tone %s; merged into one",
				  lattice_label(&lat->spec, tone->seeds, a, sizeof a),
				  lattice_label(&lat->spec, m->seeds, b, sizeof b),
				  ratio_format(tone->ratio, rt, sizeof rt));
	}
}

/* A unison written as a ratio (21/16) instead of a tone's seeds: name the
 * tone of that ratio when the set has one. */
static void unison_is_a_ratio(const struct config *cfg, const struct preset_config *t,
			      const struct lattice_spec *spec, struct ratio value,
			      struct config_report *report)
{
	int line = line_of_field(t, "unison");
	struct lattice_spec plain = *spec;
	plain.has_unison = false;
	struct lattice *lat = malloc(sizeof *lat);
	struct core_error err;
	struct ratio r;
	int found = -1;
	if (lat && lattice_build(lat, &plain, &err) && ratio_reduce_into(value, spec->period, &r, NULL))
		for (int i = 0; i < lat->tone_count && found < 0; i++)
			if (ratio_equal(lat->tones[i].ratio, r))
				found = i;
	char label[LATTICE_LABEL_MAX];
	if (found >= 0)
		config_report_add(report, true, cfg->path, line,
				  "unison is '%s', a ratio, expected a tone named by its seeds: %s is the tone %s (unison = %s)",
				  t->unison_text, t->unison_text,
				  lattice_label(spec, lat->tones[found].seeds, label, sizeof label), label);
	else
		config_report_add(report, true, cfg->path, line,
				  "unison is '%s', a ratio that is no tone of the set, expected a tone named by its seeds, e.g. %s",
				  t->unison_text,
				  lat && lat->tone_count ? lattice_label(spec, lat->tones[0].seeds, label, sizeof label) : "1.3");
	free(lat);
}

static bool build_lattice(const struct config *cfg, const struct preset_config *t,
			  struct lattice *out, struct config_report *report)
{
	struct lattice_spec spec = t->lattice;
	struct core_error err;
	if (t->unison_text[0]) {
		if (!lattice_parse_label(&spec, t->unison_text, &spec.unison_seeds)) {
			struct ratio value;
			if (strchr(t->unison_text, '/') && ratio_parse(t->unison_text, &value))
				unison_is_a_ratio(cfg, t, &spec, value, report);
			else
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
	report_merges(cfg, t, out, report);
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

int tuning_root_slot(const struct lattice *lat, const char *text)
{
	if (strcmp(text, "home") == 0)
		return 0;
	long n;
	if (value_whole(text, 0, LATTICE_MAX_TONES, &n))
		return n <= lat->tone_count ? (int)n : -1;
	int tone = lattice_find_tone(lat, text);
	return tone >= 0 ? tone + 1 : -1;
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
