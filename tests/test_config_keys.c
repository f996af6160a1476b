/*
 * Tests of the key table (config_keys.c) against itself and the shipped
 * config/latticed.conf: the file is the built-in defaults and documents
 * every key with its default, range and words; every key reads its
 * default, takes its range and words and refuses the rest with the
 * message its row makes, at the line it was set on.  (Our rules: the
 * table is the one place a key is defined.)
 */
#include "config_fixture.h"

static char *read_file(const char *path, size_t *length)
{
	FILE *f = fopen(path, "rb");
	assert_non_null(f);
	char *buf = malloc(1 << 20);
	assert_non_null(buf);
	*length = fread(buf, 1, (1 << 20) - 1, f);
	buf[*length] = '\0';
	fclose(f);
	return buf;
}

/* Everything the line of a key or section changes, cleared. */
static void clear_lines(struct config *c)
{
	memset(&c->lines, 0, sizeof c->lines);
	memset(c->path, 0, sizeof c->path);
	for (int i = 0; i < c->preset_count; i++)
		memset(&c->presets[i].lines, 0, sizeof c->presets[i].lines);
	for (int i = 0; i < c->output_count; i++) {
		memset(&c->outputs[i].lines, 0, sizeof c->outputs[i].lines);
		c->outputs[i].line = 0;
	}
}

/* The shipped file sets every key to its default: reading it gives the
 * built-in defaults, field for field (our rule). */
static void shipped_file_is_the_defaults(void **state)
{
	(void)state;
	static struct config defaults;
	config_defaults(&defaults);
	const char *path = LATTICED_SOURCE_DIR "/config/latticed.conf";
	assert_true(config_load(path, &cfg, &report));
	assert_int_equal(report.error_count + report.warning_count, 0);
	clear_lines(&cfg);
	clear_lines(&defaults);
	assert_memory_equal(&cfg, &defaults, sizeof cfg);
	/* the default hexany builds: 6 tones, 8 chords (a published count: the
	 * hexany of 4 seeds taken 2 at a time has C(4,2) = 6 tones) */
	assert_true(tuning_build(&cfg, 0, &tuning, &report));
	assert_int_equal(tuning.lattice.tone_count, 6);
	assert_int_equal(tuning.lattice.chord_count, 8);
}

/* The section header a key of this row is tried under. */
static const char *header_of(const struct config_key *k)
{
	return strcmp(k->section, "output") == 0 ? "output synth" : k->section;
}

/* The comment block of key k in the shipped file: from "; NAME:" in its
 * section to the line that sets it, joined into one line ("; " dropped). */
static bool comment_block(const char *text, const struct config_key *k, char *out, size_t size,
			  const char **setting)
{
	char header[64], start[64];
	snprintf(header, sizeof header, "\n[%s]", header_of(k));
	snprintf(start, sizeof start, "\n; %s:", k->name);
	const char *section = strstr(text, header);
	const char *p = section ? strstr(section + 1, start) : NULL;
	const char *next = section ? strstr(section + 1, "\n[") : NULL;
	if (!p || (next && p > next))
		return false;
	size_t used = 0;
	out[0] = '\0';
	*setting = NULL;
	for (p++; *p == ';'; p = strchr(p, '\n') + 1) {
		const char *nl = strchr(p, '\n');
		if (p[1] != ' ' && p[1] != '\n') {   /* ";bend_range = 2": the setting, left unset */
			*setting = p;
			break;
		}
		int n = snprintf(out + used, size - used, "%s%.*s", used ? " " : "",
				 (int)(nl - p - (p[1] ? 2 : 1)), p + (p[1] == ' ' ? 2 : 1));
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
	}
	if (!*setting)
		*setting = p;
	return true;
}

static bool has_range(const struct config_key *k)
{
	return k->type != CONFIG_OWN && k->lo < k->hi;
}

static void range_text(const struct config_key *k, char *buf, size_t size)
{
	snprintf(buf, size, "%g to %g", k->lo, k->hi);
}

/* config/latticed.conf explains every key of the table: its default line,
 * "Default: ...", the range of a number and every word the key takes;
 * and each key's help text (the end of its error messages) states the
 * same range and words (our rule). */
static void shipped_file_documents_every_key(void **state)
{
	(void)state;
	size_t length;
	char *text = read_file(LATTICED_SOURCE_DIR "/config/latticed.conf", &length);
	for (int i = 0; i < config_key_count(); i++) {
		const struct config_key *k = config_key_at(i);
		char block[4096], want[256];
		const char *setting = NULL;
		if (!comment_block(text, k, block, sizeof block, &setting))
			fail_msg("config/latticed.conf does not explain '%s' in [%s] (a comment '; %s: ...')",
				 k->name, header_of(k), k->name);
		snprintf(want, sizeof want, "%s = %s\n", k->name, k->default_text);
		if (k->default_text[0] && strncmp(setting, want, strlen(want)) != 0 &&
		    !(setting[0] == ';' && strncmp(setting + 1, want, strlen(want)) == 0))
			fail_msg("config/latticed.conf: the comment on '%s' is not followed by '%s'",
				 k->name, want);
		snprintf(want, sizeof want, "Default: %s", k->default_text[0] ? k->default_text : "empty");
		if (!strstr(block, want))
			fail_msg("config/latticed.conf: '%s' does not say '%s'", k->name, want);
		if (has_range(k)) {
			range_text(k, want, sizeof want);
			if (!strstr(block, want) || !strstr(k->expected, want))
				fail_msg("'%s': the comment or the help text does not say '%s'", k->name, want);
		}
		for (const struct config_word *w = k->words; w && w->text; w++)
			if (!strstr(block, w->text) || !strstr(k->expected, w->text))
				fail_msg("'%s': the comment or the help text does not name '%s'", k->name, w->text);
	}
	free(text);
}

/* Every key's default, read from its row, is what the built-in defaults
 * hold, and setting a key records its line (our rule). */
static void every_key_reads_its_default(void **state)
{
	(void)state;
	static struct config plain;
	assert_true(config_parse("", 0, "t.conf", &plain, &report));
	clear_lines(&plain);
	for (int i = 0; i < config_key_count(); i++) {
		const struct config_key *k = config_key_at(i);
		char text[256];
		snprintf(text, sizeof text, "[%s]\n\n%s = %s\n", header_of(k), k->name, k->default_text);
		if (!parse(text) || report.error_count)
			fail_msg("the default of '%s' is refused: %s", k->name, report.text);
		const struct config_lines *lines = config_key_in_family(k, "preset") ? &cfg.presets[0].lines
			: strcmp(k->section, "output") == 0 ? &cfg.outputs[0].lines : &cfg.lines;
		if (lines->line[i] != 3)
			fail_msg("'%s' set on line 3 is recorded at line %d", k->name, lines->line[i]);
		clear_lines(&cfg);
		if (memcmp(&cfg, &plain, sizeof cfg) != 0)
			fail_msg("'%s = %s' reads differently from the built-in default", k->name,
				 k->default_text);
	}
}

/* A text with key k set to value on line 3; [input] uses channel 5 so a
 * control channel or an MTS output stays valid, and [control] keys have
 * a control channel (16) to act on. */
static bool parse_value(const struct config_key *k, const char *value)
{
	char text[512];
	bool control = strcmp(k->section, "control") == 0 && strcmp(k->name, "channel") != 0;
	snprintf(text, sizeof text, "[%s]\n\n%s = %s\n%s%s", header_of(k), k->name, value,
		 control ? "channel = 16\n" : "",
		 strcmp(k->section, "input") ? "[input]\nchannels = 5\n" : "");
	return parse(text);
}

static void expect_refused(const struct config_key *k, const char *value)
{
	char want[1024];
	snprintf(want, sizeof want, "t.conf:3: %s is '%s', expected %s\n", k->name, value, k->expected);
	if (parse_value(k, value) || report.error_count != 1 || strcmp(report.text, want) != 0)
		fail_msg("'%s = %s': wanted\n%sgot:\n%s", k->name, value, want, report.text);
}

/* Each key takes its range and its words and refuses what lies outside,
 * with the message its row makes (our rule). */
static void every_key_checks_its_range(void **state)
{
	(void)state;
	for (int i = 0; i < config_key_count(); i++) {
		const struct config_key *k = config_key_at(i);
		char value[64];
		if (has_range(k)) {
			double ends[] = {k->lo, k->hi};
			for (int e = 0; e < 2; e++) {
				snprintf(value, sizeof value, "%g", ends[e]);
				if (!parse_value(k, value))
					fail_msg("'%s = %s' is refused: %s", k->name, value, report.text);
			}
			snprintf(value, sizeof value, "%g", k->lo - 1);
			expect_refused(k, value);
			snprintf(value, sizeof value, "%g", k->hi + 1);
			expect_refused(k, value);
		}
		for (const struct config_word *w = k->words; w && w->text; w++)
			if (!parse_value(k, w->text))
				fail_msg("'%s = %s' is refused: %s", k->name, w->text, report.text);
		if (k->type != CONFIG_OWN && k->type != CONFIG_CONNECT)
			expect_refused(k, "?");
	}
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(shipped_file_is_the_defaults),
		cmocka_unit_test(shipped_file_documents_every_key),
		cmocka_unit_test(every_key_reads_its_default),
		cmocka_unit_test(every_key_checks_its_range),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
