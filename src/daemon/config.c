/*
 * config: reads latticed.conf into a struct config.
 *
 * config_ini turns the text into entries; this file walks them: each
 * [output NAME] and [preset NAME] header makes its output or preset, each
 * key is looked up in the key table and read into the field its row
 * names, in the struct of its section, and the line it came from is kept
 * beside it.  Defaults are the table's default texts read the same way.
 * [preset NAME] entries are applied last, on a copy of the main tuning,
 * so a preset may come before the keys it inherits.  Checks that need
 * several keys at once come after all entries are in.
 */
#include "config.h"

#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "config_control.h"
#include "config_ini.h"
#include "midi_io.h"

_Static_assert(CONFIG_MAX_PATTERNS == MIDI_IO_MAX_PATTERNS, "connect lists fill midi_io specs");
_Static_assert(CONFIG_PATTERN_MAX == MIDI_IO_NAME_MAX, "patterns fill midi_io specs");
_Static_assert(CONFIG_MAX_OUTPUTS == MIDI_IO_MAX_OUTPUTS, "one port per output");

struct interp {
	const char *path;
	struct config *cfg;
	const struct config_entries *entries;
	struct config_report *report;
	int errors;
	int outputs_refused, presets_refused;    /* sections beyond the limit */
	int output_refused_line, preset_refused_line;
};

static void fail(struct interp *in, int line, const char *fmt, ...)
	__attribute__((format(printf, 3, 4)));

static void fail(struct interp *in, int line, const char *fmt, ...)
{
	char body[CONFIG_WHY_MAX];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(body, sizeof body, fmt, ap);
	va_end(ap);
	config_report_add(in->report, true, in->path, line, "%s", body);
	in->errors++;
}

/* ---- defaults ------------------------------------------------------------- */

static void output_defaults(struct output_config *out, const char *name)
{
	memset(out, 0, sizeof *out);
	config_keys_defaults("output", out);
	text_copy(out->name, sizeof out->name, name);
}

void config_defaults(struct config *out)
{
	memset(out, 0, sizeof *out);
	text_copy(out->path, sizeof out->path, CONFIG_BUILTIN_NAME);
	out->preset_count = 1;
	text_copy(out->presets[0].name, sizeof out->presets[0].name, "main");
	config_keys_defaults("preset", &out->presets[0]);
	config_keys_defaults("input", &out->input);
	config_keys_defaults("control", &out->control);
	config_keys_defaults("daemon", &out->daemon);
	out->output_count = 1;
	output_defaults(&out->outputs[0], "synth");
}

int config_line_of(const struct config_lines *lines, const char *family, const char *name)
{
	int k = config_key_find(family, name);
	return k >= 0 ? lines->line[k] : 0;
}

/* ---- [output NAME] and [preset NAME] -------------------------------------- */

static bool valid_name(const char *name)
{
	if (name[0] == '\0' || strlen(name) >= CONFIG_NAME_MAX)
		return false;
	for (const char *p = name; *p; p++) {
		char ch = *p;
		if (!((ch >= 'a' && ch <= 'z') || (ch >= 'A' && ch <= 'Z') ||
		      (ch >= '0' && ch <= '9') || ch == '-' || ch == '_'))
			return false;
	}
	return true;
}

/* The family of an entry's section; inih may keep spaces our header check
 * trimmed ("[ output a ]"), and such a section then has no keys. */
static const char *family_of(const char *section)
{
	const char *family = config_section_family(section);
	return family ? family : section;
}

static void name_of_section(const char *section, const char *kind, char *name, size_t size)
{
	text_copy(name, size, section + strlen(kind));
	text_trim(name);
}

/* The NAME of "[output NAME]" / "[preset NAME]", checked; reported once, at
 * the header (a key of a bad section returns false silently). */
static bool section_name(struct interp *in, const struct config_entry *e, const char *kind,
			 char *name, size_t size)
{
	name_of_section(e->section, kind, name, size);
	bool at_header = e->key[0] == '\0';
	if (name[0] == '\0') {
		if (at_header)
			fail(in, e->line, "[%s] has no name, expected [%s NAME], e.g. [%s %s]",
			     kind, kind, kind, strcmp(kind, "output") ? "bright" : "synth");
		return false;
	}
	if (!valid_name(name)) {
		if (at_header)
			fail(in, e->line, "%s name '%s' is not usable%s, expected 1 to %d letters, digits, '-' or '_'",
			     kind, name, strcmp(kind, "output") ? "" : " as a port name",
			     CONFIG_NAME_MAX - 1);
		return false;
	}
	return true;
}

/* Counts a section header beyond the limit once per name; the total is
 * reported once, at the first of them (refusals_report). */
static void refuse_section(struct interp *in, const struct config_entry *e, const char *kind,
			   const char *name, int *refused, int *first_line)
{
	if (e->key[0] != '\0')
		return;
	for (const struct config_entry *p = in->entries->entry; p < e; p++) {
		char other[CONFIG_SECTION_TEXT_MAX];
		if (p->key[0] != '\0' || !p->in_known_section || strcmp(family_of(p->section), kind) != 0)
			continue;
		name_of_section(p->section, kind, other, sizeof other);
		if (strcmp(other, name) == 0)
			return;
	}
	if ((*refused)++ == 0)
		*first_line = e->line;
}

/* The output an [output NAME] entry belongs to, created on first use. */
static struct output_config *output_for(struct interp *in, const struct config_entry *e)
{
	char name[CONFIG_SECTION_TEXT_MAX];
	if (!section_name(in, e, "output", name, sizeof name))
		return NULL;
	struct config *cfg = in->cfg;
	int i = config_find_output(cfg, name);
	if (i >= 0) {
		if (e->key[0] == '\0')
			fail(in, e->line, "[output %s] is already on line %d, expected each output once (all its keys in one section)",
			     name, cfg->outputs[i].line);
		return &cfg->outputs[i];
	}
	if (cfg->output_count >= CONFIG_MAX_OUTPUTS) {
		refuse_section(in, e, "output", name, &in->outputs_refused, &in->output_refused_line);
		return NULL;
	}
	struct output_config *o = &cfg->outputs[cfg->output_count++];
	output_defaults(o, name);
	o->line = e->line;
	return o;
}

/* The preset a [preset NAME] entry belongs to, created as a copy of main. */
static struct preset_config *preset_for(struct interp *in, const struct config_entry *e)
{
	char name[CONFIG_SECTION_TEXT_MAX];
	if (!section_name(in, e, "preset", name, sizeof name))
		return NULL;
	struct config *cfg = in->cfg;
	int i = config_find_preset(cfg, name);
	if (i == 0) {
		if (e->key[0] == '\0')
			fail(in, e->line, "[preset %s]: '%s' is the name of the main tuning ([lattice], [pitch] and [keys]), expected another name",
			     name, name);
		return NULL;
	}
	if (i > 0) {
		if (e->key[0] == '\0')
			fail(in, e->line, "[preset %s] is already on line %d, expected each preset once (all its keys in one section)",
			     name, cfg->presets[i].line);
		return &cfg->presets[i];
	}
	if (cfg->preset_count >= CONFIG_MAX_PRESETS) {
		refuse_section(in, e, "preset", name, &in->presets_refused, &in->preset_refused_line);
		return NULL;
	}
	struct preset_config *t = &cfg->presets[cfg->preset_count++];
	*t = cfg->presets[0];
	text_copy(t->name, sizeof t->name, name);
	t->line = e->line;
	return t;
}

static void refusals_report(struct interp *in)
{
	if (in->outputs_refused)
		fail(in, in->output_refused_line,
		     "%d outputs, expected at most %d [output NAME] sections (the %d from here on are left out)",
		     CONFIG_MAX_OUTPUTS + in->outputs_refused, CONFIG_MAX_OUTPUTS, in->outputs_refused);
	if (in->presets_refused)
		fail(in, in->preset_refused_line,
		     "%d presets, expected at most %d [preset NAME] sections (the %d from here on are left out)",
		     CONFIG_MAX_PRESETS - 1 + in->presets_refused, CONFIG_MAX_PRESETS - 1,
		     in->presets_refused);
}

/* ---- entries ---------------------------------------------------------------- */

/* Where an entry's value goes: the struct of its section, and its lines. */
struct target {
	void *base;
	struct config_lines *lines;
};

static bool target_of(struct interp *in, const struct config_entry *e, const char *family,
		      struct target *to)
{
	struct config *cfg = in->cfg;
	if (strcmp(family, "output") == 0) {
		struct output_config *o = output_for(in, e);
		*to = (struct target){o, o ? &o->lines : NULL};
	} else if (strcmp(family, "preset") == 0) {
		struct preset_config *t = preset_for(in, e);
		*to = (struct target){t, t ? &t->lines : NULL};
	} else if (strcmp(family, "input") == 0) {
		*to = (struct target){&cfg->input, &cfg->lines};
	} else if (strcmp(family, "control") == 0) {
		*to = (struct target){&cfg->control, &cfg->lines};
	} else if (strcmp(family, "daemon") == 0) {
		*to = (struct target){&cfg->daemon, &cfg->lines};
	} else {
		*to = (struct target){&cfg->presets[0], &cfg->presets[0].lines};
	}
	return to->base != NULL;
}

/* A key above the first [section] header. */
static void before_any_section(struct interp *in, const struct config_entry *e)
{
	char where[128], known[256];
	config_key_sections(e->key, where, sizeof where);
	if (where[0]) {
		fail(in, e->line, "'%s' comes before any section header, expected a section header first: %s belongs in %s",
		     e->key, e->key, where);
		return;
	}
	config_section_list(known, sizeof known);
	fail(in, e->line, "'%s' comes before any section header and is a key of no section, expected a section header first: %s",
	     e->key, known);
}

static bool already_set(struct interp *in, const struct config_entry *e)
{
	for (const struct config_entry *p = in->entries->entry; p < e; p++) {
		if (strcmp(p->key, e->key) == 0 && strcmp(p->section, e->section) == 0) {
			fail(in, e->line, "'%s' is already set on line %d, expected each key once per section",
			     e->key, p->line);
			return true;
		}
	}
	return false;
}

/* Interprets entry `index`; presets are done in a later pass (want_presets). */
static void interpret(struct interp *in, int index, bool want_presets)
{
	const struct config_entry *e = &in->entries->entry[index];
	if (!e->in_known_section)
		return; /* the section header was already reported */
	if (e->section[0] == '\0') {
		if (!want_presets)
			before_any_section(in, e);
		return;
	}
	const char *family = family_of(e->section);
	bool is_preset = strcmp(family, "preset") == 0;
	if (is_preset != want_presets)
		return;
	if (e->key[0] == '\0') {
		if (strcmp(family, "output") == 0)
			(void)output_for(in, e);
		else if (is_preset)
			(void)preset_for(in, e);
		return;
	}
	int k = config_key_find(family, e->key);
	if (k < 0) {
		char known[768];
		config_keys_list(family, known, sizeof known);
		fail(in, e->line, "unknown key '%s' in [%s], expected one of: %s",
		     e->key, e->section, known);
		return;
	}
	struct target to;
	if (already_set(in, e) || !target_of(in, e, family, &to))
		return;
	char why[CONFIG_WHY_MAX];
	if (!config_key_read(config_key_at(k), e->value, to.base, why, sizeof why)) {
		fail(in, e->line, "%s", why);
		return;
	}
	to.lines->line[k] = e->line;
}

/* ---- checks across keys ---------------------------------------------------- */

static void cross_check(struct interp *in)
{
	struct config *cfg = in->cfg;
	struct engine_input_spec *input = &cfg->input.engine;
	if (input->mpe && config_line_of(&cfg->lines, "input", "channels") == 0)
		input->channels = 0xFFFF; /* an MPE controller plays on its whole zone */
	int ctl = cfg->control.channel;
	if (ctl >= 0 && ((input->channels >> ctl) & 1))
		fail(in, config_line_of(&cfg->lines, "control", "channel"),
		     "the control channel %d is also retuned in [input] channels, expected a channel the player does not play on",
		     ctl + 1);
	in->errors += config_control_check(cfg, in->report);
	int inputs = __builtin_popcount(input->channels);
	for (int i = 0; i < cfg->output_count; i++) {
		struct output_config *o = &cfg->outputs[i];
		struct engine_output_spec *spec = &o->engine;
		if (strcmp(o->name, "in") == 0)
			fail(in, o->line, "an output may not be called 'in', the name of latticed's input port; expected another name");
		/* the default follows the method: MPE 1.0 section 2.4 says 48 for members */
		if (config_line_of(&o->lines, "output", "bend_range") == 0)
			spec->bend_range = spec->method == RETUNE_MPE ? 48 : 2;
		/* every member of the zone but 10, which stays free for a drum
		 * track passed through, as the bend pool's 2-16 leaves it */
		if (spec->method == RETUNE_MPE && config_line_of(&o->lines, "output", "channels") == 0)
			spec->channels = (uint16_t)(0xFFFFu & ~(1u << 9));
		int outputs = __builtin_popcount(spec->channels);
		if (spec->method == RETUNE_MTS && outputs < inputs)
			fail(in, o->line,
			     "[output %s] method = mts has %d channel%s for %d retuned input channel%s, expected one output channel per input channel (more channels, or fewer in [input] channels)",
			     o->name, outputs, outputs == 1 ? "" : "s", inputs, inputs == 1 ? "" : "s");
	}
}

static void map_warnings(struct interp *in)
{
	const struct config *cfg = in->cfg;
	int main_map = config_line_of(&cfg->presets[0].lines, "keys", "map");
	for (int i = 0; i < cfg->preset_count; i++) {
		const struct preset_config *t = &cfg->presets[i];
		int map = config_line_of(&t->lines, "keys", "map");
		if (map && t->keys.layout != KEY_LAYOUT_TABLE && (i == 0 || map != main_map))
			config_report_add(in->report, false, in->path, map,
					  "map is set but layout is %s; the map is used only with layout = table",
					  key_layout_name(t->keys.layout));
	}
}

/* ---- reading a file -------------------------------------------------------- */

static void too_large(struct config_report *report, const char *path, long long size)
{
	if (size > 0)
		config_report_add(report, true, path, 0,
				  "file is too large (%lld bytes), expected a config file of at most %d bytes (1 MiB)",
				  size, CONFIG_FILE_MAX);
	else
		config_report_add(report, true, path, 0,
				  "file is too large (more than %d bytes), expected a config file of at most %d bytes (1 MiB)",
				  CONFIG_FILE_MAX, CONFIG_FILE_MAX);
}

bool config_parse(const char *text, size_t length, const char *path,
		  struct config *out, struct config_report *report)
{
	if (report)
		memset(report, 0, sizeof *report);
	if (length > CONFIG_FILE_MAX) {
		too_large(report, path, (long long)length);
		return false;
	}
	struct config *cfg = malloc(sizeof *cfg);
	struct config_entries entries = {.entry = calloc(CONFIG_ENTRY_MAX, sizeof *entries.entry)};
	if (!cfg || !entries.entry) {
		free(cfg);
		free(entries.entry);
		config_report_add(report, true, path, 0, "out of memory reading the config");
		return false;
	}
	config_ini_read(text, length, path, &entries, report);

	config_defaults(cfg);
	text_copy(cfg->path, sizeof cfg->path, path);
	cfg->output_count = 0;
	struct interp in = {.path = path, .cfg = cfg, .entries = &entries, .report = report};
	for (int pass = 0; pass < 2; pass++)
		for (int i = 0; i < entries.count; i++)
			interpret(&in, i, pass == 1);
	refusals_report(&in);
	if (cfg->output_count == 0) {
		/* no [output] section: one bend output named "synth" */
		cfg->output_count = 1;
		output_defaults(&cfg->outputs[0], "synth");
	}
	cross_check(&in);
	map_warnings(&in);

	bool ok = entries.errors == 0 && in.errors == 0;
	if (ok)
		memcpy(out, cfg, sizeof *out);
	free(entries.entry);
	free(cfg);
	return ok;
}

bool config_load(const char *path, struct config *out,
		 struct config_report *report)
{
	if (report)
		memset(report, 0, sizeof *report);
	FILE *f = fopen(path, "rb");
	if (!f) {
		config_report_add(report, true, path, 0, "cannot open: %s", strerror(errno));
		return false;
	}
	struct stat st;
	if (fstat(fileno(f), &st) == 0 && S_ISREG(st.st_mode) && st.st_size > CONFIG_FILE_MAX) {
		fclose(f);
		too_large(report, path, (long long)st.st_size);
		return false;
	}
	char *buf = malloc(CONFIG_FILE_MAX + 1);
	if (!buf) {
		fclose(f);
		config_report_add(report, true, path, 0, "out of memory reading the config");
		return false;
	}
	size_t n = fread(buf, 1, CONFIG_FILE_MAX + 1, f);
	bool read_error = ferror(f);
	int saved = errno;
	fclose(f);
	bool ok = false;
	if (read_error)
		config_report_add(report, true, path, 0, "cannot read: %s", strerror(saved));
	else if (n > CONFIG_FILE_MAX)
		too_large(report, path, -1); /* a pipe or a device: its size is unknown */
	else
		ok = config_parse(buf, n, path, out, report);
	free(buf);
	return ok;
}

bool config_load_or_defaults(const char *path, const char *default_path, struct config *out,
			     struct config_report *report, const char **used)
{
	if (report)
		memset(report, 0, sizeof *report);
	if (!path && access(default_path, F_OK) == 0)
		path = default_path;
	if (used)
		*used = path;
	if (path)
		return config_load(path, out, report);
	config_defaults(out);
	return true;
}

/* ---- views for the engine and the backend ---------------------------------- */

void config_engine_spec(const struct config *cfg, int output, struct engine_spec *out)
{
	/* whole structs, padding included, so two specs compare with memcmp */
	memset(out, 0, sizeof *out);
	memcpy(&out->output, &cfg->outputs[output].engine, sizeof out->output);
	memcpy(&out->input, &cfg->input.engine, sizeof out->input);
	memcpy(&out->control, &cfg->control, sizeof out->control);
}

static void port_spec(struct midi_io_port_spec *port, const char *name,
		      const struct connect_list *connect)
{
	memset(port, 0, sizeof *port);
	text_copy(port->name, sizeof port->name, name);
	port->connect_count = connect->count;
	for (int i = 0; i < connect->count; i++)
		text_copy(port->connect[i], sizeof port->connect[i], connect->patterns[i]);
}

void config_io_spec(const struct config *cfg, struct midi_io_spec *out)
{
	memset(out, 0, sizeof *out);
	text_copy(out->client_name, sizeof out->client_name, cfg->daemon.client_name);
	port_spec(&out->input, "in", &cfg->input.connect);
	out->output_count = cfg->output_count;
	for (int i = 0; i < cfg->output_count; i++)
		port_spec(&out->outputs[i], cfg->outputs[i].name, &cfg->outputs[i].connect);
}

int config_find_output(const struct config *cfg, const char *name)
{
	for (int i = 0; i < cfg->output_count; i++)
		if (strcmp(cfg->outputs[i].name, name) == 0)
			return i;
	return -1;
}

int config_find_preset(const struct config *cfg, const char *name)
{
	for (int i = 0; i < cfg->preset_count; i++)
		if (strcmp(cfg->presets[i].name, name) == 0)
			return i;
	return -1;
}

int config_find_preset_or_number(const struct config *cfg, const char *text)
{
	int by_name = config_find_preset(cfg, text);
	if (by_name >= 0)
		return by_name;
	long n;
	if (!value_whole(text, 0, CONFIG_MAX_PRESETS, &n))
		return -1;
	return n < cfg->preset_count ? (int)n : -1;
}
