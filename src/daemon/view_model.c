/*
 * view_model: see view_model.h.  Every member a line needs is checked for
 * its JSON type and range before anything changes, so a line that fails
 * leaves the picture as it was.
 */
#include "view_model.h"

#include <json-c/json.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config_report.h"
#include "draw_cmd.h"
#include "midi_io.h"

bool view_model_init(struct view_model *m)
{
	memset(m, 0, sizeof *m);
	m->cfg = malloc(sizeof *m->cfg);
	m->tuning = NULL;
	snprintf(m->message, sizeof m->message, "connecting to latticed");
	return m->cfg != NULL;
}

void view_model_free(struct view_model *m)
{
	free(m->cfg);
	free(m->tuning);
	free(m->svg);
	m->cfg = NULL;
	m->tuning = NULL;
	m->svg = NULL;
}

void view_model_down(struct view_model *m, const char *message)
{
	m->up = false;
	m->note_count = 0;
	m->drawn = false; /* a daemon started again may read a changed config: draw anew */
	snprintf(m->message, sizeof m->message, "%s", message);
}

/* ---- reading lines ------------------------------------------------------------ */

static struct json_object *member(struct json_object *o, const char *key)
{
	struct json_object *v = NULL;
	if (!json_object_is_type(o, json_type_object) || !json_object_object_get_ex(o, key, &v))
		return NULL;
	return v;
}

/* An integer member within [lo, hi]; false (err says which) otherwise. */
static bool integer(struct json_object *o, const char *key, int64_t lo, int64_t hi, int64_t *out,
		    char *err, size_t err_size)
{
	struct json_object *v = member(o, key);
	if (!v || !json_object_is_type(v, json_type_int)) {
		snprintf(err, err_size, "\"%s\" is missing or not a whole number", key);
		return false;
	}
	int64_t x = json_object_get_int64(v);
	if (x < lo || x > hi) {
		snprintf(err, err_size, "\"%s\" is %lld, expected %lld to %lld", key, (long long)x,
			 (long long)lo, (long long)hi);
		return false;
	}
	*out = x;
	return true;
}

static bool text(struct json_object *o, const char *key, char *out, size_t size, char *err,
		 size_t err_size)
{
	struct json_object *v = member(o, key);
	if (!v || !json_object_is_type(v, json_type_string)) {
		snprintf(err, err_size, "\"%s\" is missing or not a string", key);
		return false;
	}
	snprintf(out, size, "%s", json_object_get_string(v));
	return true;
}

struct tuning_line {
	int64_t generation, presets, preset, root;
	char preset_name[ENGINE_NAME_MAX];
	char root_label[VIEW_TEXT_MAX];
};

static bool read_tuning(struct json_object *o, struct tuning_line *t, char *err, size_t err_size)
{
	struct json_object *p = member(o, "preset"), *r = member(o, "root");
	return integer(o, "generation", 0, UINT32_MAX, &t->generation, err, err_size) &&
	       integer(o, "presets", 1, ENGINE_MAX_PRESETS, &t->presets, err, err_size) &&
	       integer(p, "index", 0, t->presets - 1, &t->preset, err, err_size) &&
	       text(p, "name", t->preset_name, sizeof t->preset_name, err, err_size) &&
	       integer(r, "slot", 0, 100000, &t->root, err, err_size) &&
	       text(r, "label", t->root_label, sizeof t->root_label, err, err_size);
}

static void take_tuning(struct view_model *m, const struct tuning_line *t)
{
	m->generation = t->generation;
	m->presets = (int)t->presets;
	m->preset = (int)t->preset;
	m->root = (int)t->root;
	snprintf(m->preset_name, sizeof m->preset_name, "%s", t->preset_name);
	snprintf(m->root_label, sizeof m->root_label, "%s", t->root_label);
}

static bool read_note(struct json_object *o, int64_t output, struct view_note *n, char *err,
		      size_t err_size)
{
	int64_t id, tone, preset, generation;
	if (!integer(o, "id", 0, UINT32_MAX, &id, err, err_size) ||
	    !integer(o, "tone", -1, LATTICE_MAX_TONES, &tone, err, err_size) ||
	    !integer(o, "preset", 0, ENGINE_MAX_PRESETS - 1, &preset, err, err_size) ||
	    !integer(o, "generation", 0, UINT32_MAX, &generation, err, err_size))
		return false;
	*n = (struct view_note){.output = (int)output, .id = id, .generation = generation,
				.preset = (int)preset, .tone = (int)tone};
	return true;
}

static void add_note(struct view_model *m, const struct view_note *n)
{
	if (m->note_count == VIEW_NOTES_MAX) {
		m->bad_values++;
		return;
	}
	m->notes[m->note_count++] = *n;
}

static void remove_note(struct view_model *m, int output, int64_t id)
{
	for (int i = 0; i < m->note_count; i++) {
		if (m->notes[i].output == output && m->notes[i].id == id) {
			m->notes[i] = m->notes[--m->note_count];
			return;
		}
	}
}

/* The whole picture: every member checked first, then taken at once. */
static bool apply_state(struct view_model *m, struct json_object *o, char *err, size_t err_size)
{
	struct tuning_line t;
	struct json_object *config = member(o, "config"), *outputs = member(o, "outputs");
	if (!read_tuning(o, &t, err, err_size))
		return false;
	if (config && !json_object_is_type(config, json_type_string)) {
		snprintf(err, err_size, "\"config\" is neither a path nor null");
		return false;
	}
	if (!json_object_is_type(outputs, json_type_array) ||
	    json_object_array_length(outputs) > MIDI_IO_MAX_OUTPUTS) {
		snprintf(err, err_size, "\"outputs\" is missing or not a list of at most %d", MIDI_IO_MAX_OUTPUTS);
		return false;
	}
	static struct view_note notes[VIEW_NOTES_MAX];
	int count = 0;
	for (size_t k = 0; k < json_object_array_length(outputs); k++) {
		struct json_object *out = json_object_array_get_idx(outputs, k), *list = member(out, "notes");
		int64_t index;
		if (!integer(out, "index", 0, MIDI_IO_MAX_OUTPUTS - 1, &index, err, err_size))
			return false;
		if (!json_object_is_type(list, json_type_array)) {
			snprintf(err, err_size, "output %lld: \"notes\" is not a list", (long long)index);
			return false;
		}
		for (size_t i = 0; i < json_object_array_length(list) && count < VIEW_NOTES_MAX; i++)
			if (!read_note(json_object_array_get_idx(list, i), index, &notes[count++], err, err_size))
				return false;
	}
	take_tuning(m, &t);
	m->has_config = config != NULL;
	snprintf(m->config_path, sizeof m->config_path, "%s", config ? json_object_get_string(config) : "");
	m->note_count = count;
	memcpy(m->notes, notes, (size_t)count * sizeof notes[0]);
	m->up = true;
	m->message[0] = '\0';
	return true;
}

static bool apply_event(struct view_model *m, const char *event, struct json_object *o,
			bool *ended, char *err, size_t err_size)
{
	int64_t output;
	struct view_note n;
	struct tuning_line t;
	if (strcmp(event, "note_on") == 0) {
		if (!integer(o, "output", 0, MIDI_IO_MAX_OUTPUTS - 1, &output, err, err_size) ||
		    !read_note(o, output, &n, err, err_size))
			return false;
		add_note(m, &n);
	} else if (strcmp(event, "note_off") == 0) {
		int64_t id;
		if (!integer(o, "output", 0, MIDI_IO_MAX_OUTPUTS - 1, &output, err, err_size) ||
		    !integer(o, "id", 0, UINT32_MAX, &id, err, err_size))
			return false;
		remove_note(m, (int)output, id);
	} else if (strcmp(event, "tuning") == 0) {
		if (!read_tuning(o, &t, err, err_size))
			return false;
		take_tuning(m, &t);
	} else if (strcmp(event, "reload") == 0) {
		int64_t generation;
		if (!integer(o, "generation", 0, UINT32_MAX, &generation, err, err_size))
			return false;
		m->generation = generation; /* its tuning event follows */
	} else if (strcmp(event, "shutdown") == 0) {
		*ended = true;
	}
	/* any other event is a newer daemon's: skipped */
	return true;
}

bool view_model_apply(struct view_model *m, struct json_object *line, bool *ended, char *err,
		      size_t err_size)
{
	char detail[160] = "";
	struct json_object *event = member(line, "event"), *ok = member(line, "ok");
	*ended = false;
	if (!json_object_is_type(line, json_type_object)) {
		snprintf(err, err_size, "a line that is not a JSON object");
		return false;
	}
	if (ok && json_object_is_type(ok, json_type_boolean) && !json_object_get_boolean(ok)) {
		struct json_object *e = member(line, "error");
		snprintf(err, err_size, "it refused the subscription: %s",
			 json_object_is_type(e, json_type_string) ? json_object_get_string(e) : "(no reason)");
		return false;
	}
	if (!json_object_is_type(event, json_type_string)) {
		snprintf(err, err_size, "a line without an \"event\"");
		return false;
	}
	const char *name = json_object_get_string(event);
	bool done = false;
	if (strcmp(name, "state") == 0)
		done = apply_state(m, line, detail, sizeof detail);
	else if (m->up)
		done = apply_event(m, name, line, ended, detail, sizeof detail);
	else
		snprintf(detail, sizeof detail, "it came before the state");
	if (!done) {
		char shown[40];
		snprintf(shown, sizeof shown, "%.32s", name);
		snprintf(err, err_size, "a \"%s\" line that does not fit: %s", shown, detail);
	}
	return done;
}

/* ---- the drawing ----------------------------------------------------------------- */

static void drawing_failed(struct view_model *m, const char *fmt, const char *a, const char *b)
{
	snprintf(m->drawing_error, sizeof m->drawing_error, fmt, a, b);
	free(m->tuning);
	m->tuning = NULL;
	free(m->svg);
	m->svg = NULL;
	m->svg_length = 0;
}

/* The first line of a config report, without its newline. */
static const char *first_line(struct config_report *r, char *buf, size_t size)
{
	size_t n = strcspn(r->text, "\n");
	snprintf(buf, size, "%.*s", (int)(n < size ? n : size - 1), r->text);
	return buf;
}

static bool load_config(struct view_model *m, struct config_report *report)
{
	if (!m->has_config) {
		config_defaults(m->cfg);
		return true;
	}
	return config_load(m->config_path, m->cfg, report);
}

static void draw(struct view_model *m)
{
	static struct config_report report;
	char line[256], number[16];
	const char *name = m->has_config ? m->config_path : "the built-in defaults";
	memset(&report, 0, sizeof report);
	m->drawing_error[0] = '\0';
	if (!load_config(m, &report)) {
		drawing_failed(m, "cannot draw the lattice: %s", first_line(&report, line, sizeof line), "");
		return;
	}
	if (m->preset >= m->cfg->preset_count) {
		snprintf(number, sizeof number, "%d", m->preset);
		drawing_failed(m, "%s has fewer presets than the daemon (it plays number %s): reload latticed",
			       name, number);
		return;
	}
	if (strcmp(m->cfg->presets[m->preset].name, m->preset_name) != 0)
		snprintf(m->drawing_error, sizeof m->drawing_error,
			 "%s changed since latticed read it: the drawing may not match (reload latticed)", name);
	struct tuning *t = m->tuning ? m->tuning : malloc(sizeof *t);
	m->tuning = NULL;
	if (!t || !tuning_build(m->cfg, m->preset, t, &report)) {
		free(t);
		drawing_failed(m, "cannot draw the lattice: %s",
			       t ? first_line(&report, line, sizeof line) : "out of memory", "");
		return;
	}
	char *bytes = NULL;
	size_t length = 0;
	FILE *f = open_memstream(&bytes, &length);
	int rc = f ? draw_lattice_svg(f, m->cfg, m->preset, t) : -1;
	if (f && fclose(f) != 0)
		rc = -1;
	if (rc != 0) {
		free(bytes);
		free(t);
		drawing_failed(m, "cannot draw the lattice: out of memory", "", "");
		return;
	}
	free(m->svg);
	m->svg = bytes;
	m->svg_length = length;
	m->tuning = t;
}

bool view_model_redraw(struct view_model *m)
{
	if (!m->up)
		return false;
	if (m->drawn && m->drawn_preset == m->preset && m->drawn_generation == m->generation &&
	    m->drawn_has_config == m->has_config && strcmp(m->drawn_config, m->config_path) == 0)
		return false;
	draw(m);
	m->drawn = true;
	m->drawn_preset = m->preset;
	m->drawn_generation = m->generation;
	m->drawn_has_config = m->has_config;
	snprintf(m->drawn_config, sizeof m->drawn_config, "%s", m->config_path);
	m->drawing_version++;
	return true;
}

/* ---- the page state ----------------------------------------------------------------- */

/* Tones of the drawn preset sounding now, as flags; how many. */
static int lit_tones(const struct view_model *m, bool *lit)
{
	const struct lattice *lat = &m->tuning->lattice;
	int count = 0;
	memset(lit, 0, (size_t)lat->tone_count * sizeof *lit);
	for (int i = 0; i < m->note_count; i++) {
		const struct view_note *n = &m->notes[i];
		if (n->preset != m->drawn_preset || n->generation != m->drawn_generation ||
		    n->tone < 0 || n->tone >= lat->tone_count || lit[n->tone])
			continue;
		lit[n->tone] = true;
		count++;
	}
	return count;
}

/* The chord whose tones are exactly the lit ones, or -1. */
static int held_chord(const struct lattice *lat, const bool *lit, int count)
{
	for (int c = 0; c < lat->chord_count && count > 1; c++) {
		const struct chord *ch = &lat->chords[c];
		bool all = ch->tone_count == count;
		for (int i = 0; i < ch->tone_count && all; i++)
			all = lit[ch->tones[i]];
		if (all)
			return c;
	}
	return -1;
}

static struct json_object *chord_json(const struct lattice *lat, int c)
{
	const struct chord *ch = &lat->chords[c];
	char label[LATTICE_LABEL_MAX], proportion[LATTICE_MAX_CHORD_TONES * 21] = "";
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "index", json_object_new_int(c));
	json_object_object_add(o, "kind", json_object_new_string(ch->kind == CHORD_HARMONIC ? "harmonic" : "subharmonic"));
	json_object_object_add(o, "seeds", json_object_new_string(ch->seeds ? lattice_label(&lat->spec, ch->seeds, label, sizeof label) : ""));
	for (int i = 0; i < ch->tone_count && ch->proportion_ok; i++) {
		size_t used = strlen(proportion);
		snprintf(proportion + used, sizeof proportion - used, "%s%lld", i ? ":" : "",
			 (long long)ch->proportion[i]);
	}
	json_object_object_add(o, "proportion", json_object_new_string(proportion));
	struct json_object *tones = json_object_new_array();
	for (int i = 0; i < ch->tone_count; i++)
		json_object_array_add(tones, json_object_new_int(ch->tones[i]));
	json_object_object_add(o, "tones", tones);
	return o;
}

static void add_lit(const struct view_model *m, struct json_object *o)
{
	struct json_object *lit_list = json_object_new_array();
	struct json_object *chord = NULL;
	if (m->up && m->tuning) {
		static bool lit[LATTICE_MAX_TONES];
		int count = lit_tones(m, lit);
		for (int t = 0; t < m->tuning->lattice.tone_count; t++)
			if (lit[t])
				json_object_array_add(lit_list, json_object_new_int(t));
		int c = held_chord(&m->tuning->lattice, lit, count);
		if (c >= 0)
			chord = chord_json(&m->tuning->lattice, c);
	}
	json_object_object_add(o, "lit", lit_list);
	json_object_object_add(o, "chord", chord);
}

char *view_model_page(const struct view_model *m, bool control)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "daemon", json_object_new_string(m->up ? "up" : "down"));
	json_object_object_add(o, "message", json_object_new_string(m->up ? m->drawing_error : m->message));
	json_object_object_add(o, "control", json_object_new_boolean(control));
	if (m->up) {
		struct json_object *p = json_object_new_object(), *r = json_object_new_object();
		json_object_object_add(p, "index", json_object_new_int(m->preset));
		json_object_object_add(p, "name", json_object_new_string(m->preset_name));
		json_object_object_add(o, "preset", p);
		json_object_object_add(r, "slot", json_object_new_int(m->root));
		json_object_object_add(r, "label", json_object_new_string(m->root_label));
		json_object_object_add(o, "root", r);
		json_object_object_add(o, "sounding", json_object_new_int(m->note_count));
	}
	struct json_object *names = json_object_new_array();
	for (int i = 0; m->up && m->tuning && i < m->cfg->preset_count; i++)
		json_object_array_add(names, json_object_new_string(m->cfg->presets[i].name));
	json_object_object_add(o, "presets", names);
	json_object_object_add(o, "tones", json_object_new_int(m->up && m->tuning ? m->tuning->lattice.tone_count : 0));
	json_object_object_add(o, "drawing", json_object_new_int64((int64_t)(m->svg ? m->drawing_version : 0)));
	add_lit(m, o);
	char *page = strdup(json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN |
								 JSON_C_TO_STRING_NOSLASHESCAPE));
	json_object_put(o);
	return page;
}
