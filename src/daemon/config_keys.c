/*
 * config_keys: the key table and the one reader every row goes through.
 *
 * A row's field is named by offset and size in its section's struct
 * (struct preset_config for lattice, pitch and keys, struct input_config,
 * struct output_config, struct engine_control_spec, struct
 * daemon_config); numbers are stored by the field's size, so a row can
 * point at a uint8_t, a bool, a uint16_t mask, an int or an enum (all
 * checked below to be int-sized).  A row whose size does not fit its type
 * is refused with a message naming the key (test_config applies every
 * default, so such a row cannot ship).
 */
#include "config_keys.h"

#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "config.h"
#include "config_ini.h"
#include "latticed/ratio.h"

_Static_assert(sizeof(enum retune_method) == sizeof(int), "enums are stored as int");
_Static_assert(sizeof(enum polyphony_policy) == sizeof(int), "enums are stored as int");
_Static_assert(sizeof(enum mts_key_choice) == sizeof(int), "enums are stored as int");
_Static_assert(sizeof(enum mpe_zone) == sizeof(int), "enums are stored as int");
_Static_assert(sizeof(enum key_layout) == sizeof(int), "enums are stored as int");
_Static_assert(sizeof(bool) == sizeof(uint8_t), "bools are stored as one byte");

#define FIELD(type, member) .offset = offsetof(type, member), .size = sizeof(((type *)0)->member)
#define TUNING(member) FIELD(struct preset_config, member)
#define INPUT(member) FIELD(struct input_config, member)
#define OUTPUT(member) FIELD(struct output_config, member)
#define CONTROL(member) FIELD(struct engine_control_spec, member)
#define DAEMON(member) FIELD(struct daemon_config, member)

/* ---- the rows' own readers ------------------------------------------------ */

static bool read_seeds(const struct config_key *key, const char *text, void *field,
		       char *why, size_t why_size)
{
	struct lattice_spec *spec = field;
	char buf[CONFIG_VALUE_MAX];
	char *words[LATTICE_MAX_SEEDS + 1];
	text_copy(buf, sizeof buf, text);
	int n = text_words(buf, words, LATTICE_MAX_SEEDS);
	if (n < (int)key->lo || n > LATTICE_MAX_SEEDS) {
		snprintf(why, why_size, "seeds has %s%d values, expected %d to %d positive whole numbers or ratios, e.g. 1 3 5 7",
			 n > LATTICE_MAX_SEEDS ? "more than " : "",
			 n > LATTICE_MAX_SEEDS ? LATTICE_MAX_SEEDS : n, (int)key->lo, LATTICE_MAX_SEEDS);
		return false;
	}
	for (int i = 0; i < n; i++) {
		if (strlen(words[i]) >= LATTICE_SEED_TEXT_MAX || !ratio_parse(words[i], &spec->seeds[i])) {
			snprintf(why, why_size, "seed '%s' is not a positive whole number or ratio, expected e.g. 7 or 9/8",
				 words[i]);
			return false;
		}
		/* labels show the seed in lowest terms, as a whole number when it is one */
		if (spec->seeds[i].den == 1)
			snprintf(spec->seed_text[i], sizeof spec->seed_text[i], "%lld",
				 (long long)spec->seeds[i].num);
		else
			ratio_format(spec->seeds[i], spec->seed_text[i], sizeof spec->seed_text[i]);
	}
	spec->seed_count = n;
	return true;
}

/* none, or a label; whether it names a tone is known only once built */
static bool read_unison(const struct config_key *key, const char *text, void *field,
			char *why, size_t why_size)
{
	(void)why;
	(void)why_size;
	if (strlen(text) >= key->size)
		return false;
	text_copy(field, key->size, strcmp(text, "none") == 0 ? "" : text);
	return true;
}

/* the slots name tones, so they are read when the tuning is built */
static bool read_map(const struct config_key *key, const char *text, void *field,
		     char *why, size_t why_size)
{
	if (strlen(text) >= key->size) {
		snprintf(why, why_size, "map is longer than %zu characters, expected at most %d slots",
			 key->size - 1, KEYMAP_TABLE_MAX);
		return false;
	}
	text_copy(field, key->size, text);
	return true;
}

/* no, or the zone: two fields of the engine's input spec */
static bool read_input_mpe(const struct config_key *key, const char *text, void *field,
			   char *why, size_t why_size)
{
	(void)why;
	(void)why_size;
	struct engine_input_spec *input = field;
	for (const struct config_word *w = key->words; w->text; w++) {
		if (strcmp(text, w->text) == 0) {
			input->mpe = w->value >= 0;
			if (input->mpe)
				input->mpe_zone = (enum mpe_zone)w->value;
			return true;
		}
	}
	return false;
}

/* a port client name: other programs list it, and ':' separates client:port */
static bool read_client_name(const struct config_key *key, const char *text, void *field,
			     char *why, size_t why_size)
{
	(void)why;
	(void)why_size;
	size_t length = strlen(text);
	if (length < (size_t)key->lo || length > (size_t)key->hi || length >= key->size)
		return false;
	for (const char *p = text; *p; p++)
		if (*p == ':' || (unsigned char)*p < 0x20 || *p == 0x7F)
			return false;
	text_copy(field, key->size, text);
	return true;
}

/* auto, none or an absolute path of at most hi characters (for the
 * socket: sun_path holds 108 bytes on Linux, terminator included, unix(7)) */
static bool read_path(const struct config_key *key, const char *text, void *field,
			     char *why, size_t why_size)
{
	(void)why;
	(void)why_size;
	bool word = false;
	for (const struct config_word *w = key->words; w->text; w++)
		word = word || strcmp(text, w->text) == 0;
	if (!word && (text[0] != '/' || strlen(text) > (size_t)key->hi || strlen(text) >= key->size))
		return false;
	text_copy(field, key->size, text);
	return true;
}

/* none, "cc N" (optionally "latching") or "key N": one struct engine_binding */
static bool read_binding(const struct config_key *key, const char *text, void *field,
			 char *why, size_t why_size)
{
	(void)key;
	(void)why;
	(void)why_size;
	struct engine_binding b;
	memset(&b, 0, sizeof b); /* padding too: specs are compared with memcmp */
	b.kind = ENGINE_BINDING_NONE;
	b.number = -1;
	char buf[CONFIG_VALUE_MAX];
	char *words[4];
	text_copy(buf, sizeof buf, text);
	int n = text_words(buf, words, 3);
	long number;
	if (n == 1 && strcmp(words[0], "none") == 0) {
		memcpy(field, &b, sizeof b);
		return true;
	}
	if (n < 2 || n > 3)
		return false;
	bool is_cc = strcmp(words[0], "cc") == 0, is_key = strcmp(words[0], "key") == 0;
	if (!(is_cc || is_key) || !value_whole(words[1], 0, is_cc ? 119 : 127, &number))
		return false;
	if (n == 3 && !(is_cc && strcmp(words[2], "latching") == 0))
		return false;
	b.kind = is_cc ? ENGINE_BINDING_CC : ENGINE_BINDING_KEY;
	b.number = (int)number;
	b.latching = n == 3;
	memcpy(field, &b, sizeof b);
	return true;
}

/* ---- the table ------------------------------------------------------------ */

static const struct config_word none_word[] = {{"none", -1}, {NULL, 0}};
static const struct config_word all_word[] = {{"all", 0x7F}, {NULL, 0}};
static const struct config_word layouts[] = {
	{"sequential", KEY_LAYOUT_SEQUENTIAL}, {"nearest", KEY_LAYOUT_NEAREST},
	{"table", KEY_LAYOUT_TABLE}, {NULL, 0},
};
static const struct config_word methods[] = {
	{"bend", RETUNE_BEND}, {"mts", RETUNE_MTS}, {"mpe", RETUNE_MPE}, {NULL, 0},
};
static const struct config_word policies[] = {
	{"share-then-steal", POLY_SHARE_THEN_STEAL}, {"share", POLY_SHARE},
	{"steal", POLY_STEAL}, {NULL, 0},
};
static const struct config_word mts_keys[] = {
	{"nearest", MTS_KEY_NEAREST}, {"own", MTS_KEY_OWN}, {NULL, 0},
};
static const struct config_word zones[] = {
	{"lower", MPE_ZONE_LOWER}, {"upper", MPE_ZONE_UPPER}, {NULL, 0},
};
static const struct config_word input_zones[] = {
	{"no", -1}, {"lower", MPE_ZONE_LOWER}, {"upper", MPE_ZONE_UPPER}, {NULL, 0},
};
static const struct config_word program_uses[] = {{"preset", 1}, {"ignore", 0}, {NULL, 0}};
static const struct config_word backends[] = {
	{"auto", 0}, {"alsa", 0}, {"portmidi", 0}, {"raw", 0}, {"null", 0}, {NULL, 0},
};
static const struct config_word socket_words[] = {{"auto", 0}, {"none", 0}, {NULL, 0}};
static const struct config_word control_channels[] = {
	{"none", ENGINE_CONTROL_NONE}, {"playing", ENGINE_CONTROL_PLAYING}, {NULL, 0},
};
static const struct config_word step_ends[] = {{"stop", 0}, {"wrap", 1}, {NULL, 0}};

/* a step, home or the panic: none, cc N [latching] or key N */
#define BINDING(key, action)                                                                       \
	{"control", key, CONFIG_OWN, "none", 0, 0, none_word, CONTROL(actions[action]), read_binding, \
	 "none, cc N (a controller from 0 to 119; cc N latching for a latching pedal) or key N (a key from 0 to 127)"}

static const struct config_key keys[] = {
	{"lattice", "seeds", CONFIG_OWN, "1 3 5 7", 2, LATTICE_MAX_SEEDS, NULL, TUNING(lattice), read_seeds,
	 "2 to 12 positive whole numbers or ratios separated by spaces, e.g. 1 3 5 7 or 1 9/8 5"},
	{"lattice", "choose", CONFIG_WHOLE, "2", 1, LATTICE_MAX_SEEDS - 1, NULL, TUNING(lattice.choose), NULL,
	 "a whole number from 1 to 11, and less than the number of seeds"},
	{"lattice", "period", CONFIG_INTERVAL, "2/1", 0, 0, NULL, TUNING(lattice.period), NULL,
	 "a ratio above 1, e.g. 2/1 (octave) or 3/1 (tritave)"},
	{"lattice", "unison", CONFIG_OWN, "none", 0, 0, none_word, TUNING(unison_text), read_unison,
	 "none, or a tone of the set named by its seeds, e.g. 1.3"},
	{"pitch", "root_key", CONFIG_WHOLE, "57", 0, 127, NULL, TUNING(keys.root_key), NULL,
	 "a key number from 0 to 127"},
	{"pitch", "root_hz", CONFIG_DECIMAL, "220", 1, 20000, NULL, TUNING(keys.root_hz), NULL,
	 "a frequency in Hz from 1 to 20000"},
	{"keys", "layout", CONFIG_CHOICE, "sequential", 0, 0, layouts, TUNING(keys.layout), NULL,
	 "sequential, nearest or table"},
	{"keys", "map", CONFIG_OWN, "", 0, 0, NULL, TUNING(map_text), read_map,
	 "slots separated by spaces: a tone index or label, optionally followed by +N or -N periods, or . for a silent key"},
	{"keys", "transpose", CONFIG_WHOLE, "0", -127, 127, NULL, TUNING(keys.transpose), NULL,
	 "whole keys from -127 to 127"},
	{"input", "channels", CONFIG_CHANNELS, "1", 1, 16, NULL, INPUT(engine.channels), NULL,
	 "MIDI channels 1 to 16 as numbers and ranges, e.g. 1 or 1-16"},
	{"input", "wheel_range", CONFIG_SEMITONES, "2", 0, 96, NULL, INPUT(engine.wheel_range_cents), NULL,
	 "semitones from 0 to 96 (e.g. 2), or cents with a c (e.g. 150c)"},
	{"input", "mpe", CONFIG_OWN, "no", 0, 0, input_zones, INPUT(engine), read_input_mpe,
	 "no, lower (master channel 1) or upper (master channel 16)"},
	{"input", "mpe_bend_range", CONFIG_WHOLE, "48", 1, 96, NULL, INPUT(engine.mpe_bend_range), NULL,
	 "whole semitones from 1 to 96"},
	{"input", "connect", CONFIG_CONNECT, "none", 0, 0, none_word, INPUT(connect), NULL,
	 "none, or up to 8 port name patterns separated by commas, each at most 63 characters, e.g. USB Keys*, 24:0"},
	{"output", "method", CONFIG_CHOICE, "bend", 0, 0, methods, OUTPUT(engine.method), NULL,
	 "bend, mts or mpe"},
	{"output", "channels", CONFIG_POOL, "2-16", 1, 16, NULL, OUTPUT(engine.channels), NULL,
	 "MIDI channels 1 to 16 as numbers and ranges, e.g. 2-16 or 1,3,5-8 (a range skips channel 10)"},
	{"output", "bend_range", CONFIG_WHOLE, "2", 1, 96, NULL, OUTPUT(engine.bend_range), NULL,
	 "whole semitones from 1 to 96 (default 2, or 48 for method = mpe)"},
	{"output", "bend_factor", CONFIG_FACTOR, "1", 0.5, 2, NULL, OUTPUT(engine.bend_played), NULL,
	 "the fraction of a bend the synth really plays, a ratio or decimal from 0.5 to 2, e.g. 127/128"},
	{"output", "cents_offset", CONFIG_DECIMAL, "0", -100, 100, NULL, OUTPUT(engine.cents_offset), NULL,
	 "cents from -100 to 100 added to every pitch"},
	{"output", "polyphony", CONFIG_CHOICE, "share-then-steal", 0, 0, policies, OUTPUT(engine.polyphony), NULL,
	 "share-then-steal, share or steal"},
	{"output", "mts_program", CONFIG_WHOLE, "0", 0, 127, NULL, OUTPUT(engine.mts_program), NULL,
	 "a tuning program from 0 to 127"},
	{"output", "mts_bank", CONFIG_WHOLE, "none", 0, 127, none_word, OUTPUT(engine.mts_bank), NULL,
	 "none, or a tuning bank from 0 to 127"},
	{"output", "mts_device", CONFIG_WHOLE, "all", 0, 126, all_word, OUTPUT(engine.mts_device), NULL,
	 "all, or a device ID from 0 to 126"},
	{"output", "mts_bulk", CONFIG_YES_NO, "no", 0, 0, NULL, OUTPUT(engine.mts_bulk), NULL,
	 "yes or no"},
	{"output", "mts_key", CONFIG_CHOICE, "nearest", 0, 0, mts_keys, OUTPUT(engine.mts_key), NULL,
	 "nearest or own"},
	{"output", "mpe_zone", CONFIG_CHOICE, "lower", 0, 0, zones, OUTPUT(engine.mpe_zone), NULL,
	 "lower (master channel 1) or upper (master channel 16)"},
	{"output", "mpe_members", CONFIG_WHOLE, "15", 1, 15, NULL, OUTPUT(engine.mpe_members), NULL,
	 "member channels from 1 to 15"},
	{"output", "running_status", CONFIG_YES_NO, "no", 0, 0, NULL, OUTPUT(running_status), NULL,
	 "yes or no"},
	{"output", "connect", CONFIG_CONNECT, "none", 0, 0, none_word, OUTPUT(connect), NULL,
	 "none, or up to 8 port name patterns separated by commas, each at most 63 characters, e.g. FLUID Synth*"},
	{"control", "channel", CONFIG_CHANNEL, "none", 1, 16, control_channels, CONTROL(channel), NULL,
	 "none, playing (the channels the player plays on), or a MIDI channel from 1 to 16 that is not retuned"},
	{"control", "program_change", CONFIG_CHOICE, "preset", 0, 0, program_uses,
	 CONTROL(program_selects_preset), NULL,
	 "preset (a program change on the control channel picks preset N) or ignore (default preset; ignore with channel = playing)"},
	{"control", "preset_cc", CONFIG_WHOLE, "none", 0, 119, none_word, CONTROL(preset_cc), NULL,
	 "none, or a controller number from 0 to 119"},
	{"control", "root_cc", CONFIG_WHOLE, "none", 0, 119, none_word, CONTROL(root_cc), NULL,
	 "none, or a controller number from 0 to 119"},
	{"control", "preset_keys", CONFIG_WHOLE, "none", 0, 127, none_word, CONTROL(preset_keys), NULL,
	 "none, or the first of the keys that pick presets, 0 to 127"},
	{"control", "root_keys", CONFIG_WHOLE, "none", 0, 127, none_word, CONTROL(root_keys), NULL,
	 "none, or the first of the keys that move the 1/1, 0 to 127"},
	BINDING("preset_next", ENGINE_ACTION_PRESET_NEXT),
	BINDING("preset_previous", ENGINE_ACTION_PRESET_PREVIOUS),
	BINDING("root_next", ENGINE_ACTION_ROOT_NEXT),
	BINDING("root_previous", ENGINE_ACTION_ROOT_PREVIOUS),
	BINDING("root_home", ENGINE_ACTION_ROOT_HOME),
	BINDING("panic", ENGINE_ACTION_PANIC),
	{"control", "step_ends", CONFIG_CHOICE, "stop", 0, 0, step_ends, CONTROL(wrap), NULL,
	 "stop (a step past the last or before the first preset or root stays there) or wrap (it goes round)"},
	{"daemon", "backend", CONFIG_CHOICE_TEXT, "auto", 0, 0, backends, DAEMON(backend), NULL,
	 "auto (alsa if built, else portmidi, else null), alsa, portmidi, raw or null"},
	{"daemon", "client_name", CONFIG_OWN, "latticed", 1, 63, NULL, DAEMON(client_name), read_client_name,
	 "1 to 63 characters without ':' or control characters"},
	{"daemon", "realtime_priority", CONFIG_WHOLE, "40", 1, 99, none_word, DAEMON(realtime_priority), NULL,
	 "none, or a SCHED_FIFO priority from 1 to 99"},
	{"daemon", "lock_memory", CONFIG_YES_NO, "yes", 0, 0, NULL, DAEMON(lock_memory), NULL,
	 "yes or no"},
	{"daemon", "control_socket", CONFIG_OWN, "auto", 1, 107, socket_words, DAEMON(control_socket),
	 read_path, "auto, none, or an absolute path of at most 107 characters"},
	{"daemon", "state_file", CONFIG_OWN, "auto", 1, CONFIG_PATH_MAX - 1, socket_words, DAEMON(state_file),
	 read_path, "auto, none, or an absolute path of at most 511 characters"},
};
#define KEY_COUNT ((int)(sizeof keys / sizeof keys[0]))
_Static_assert(sizeof keys / sizeof keys[0] <= CONFIG_KEY_MAX, "raise CONFIG_KEY_MAX");

int config_key_count(void)
{
	return KEY_COUNT;
}

const struct config_key *config_key_at(int index)
{
	return index >= 0 && index < KEY_COUNT ? &keys[index] : NULL;
}

/* ---- sections ------------------------------------------------------------- */

struct section {
	const char *name;
	bool named;                /* [output NAME]: any number, each with a name */
};

static const struct section sections[] = {
	{"lattice", false}, {"pitch", false}, {"keys", false}, {"input", false},
	{"control", false}, {"daemon", false}, {"output", true}, {"preset", true},
};
#define SECTION_COUNT (sizeof sections / sizeof sections[0])

const char *config_section_family(const char *header)
{
	for (size_t i = 0; i < SECTION_COUNT; i++) {
		size_t n = strlen(sections[i].name);
		if (strncmp(header, sections[i].name, n) != 0)
			continue;
		if (header[n] == '\0' || (sections[i].named && (header[n] == ' ' || header[n] == '\t')))
			return sections[i].name;
	}
	return NULL;
}

void config_section_list(char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (size_t i = 0; i < SECTION_COUNT; i++) {
		const char *join = i == 0 ? "" : i + 1 == SECTION_COUNT ? " or " : ", ";
		int n = snprintf(buf + used, size - used, "%s[%s%s]", join, sections[i].name,
				 sections[i].named ? " NAME" : "");
		if (n < 0 || (size_t)n >= size - used)
			return;
		used += (size_t)n;
	}
}

bool config_key_in_family(const struct config_key *key, const char *family)
{
	if (strcmp(family, "preset") == 0)
		return !strcmp(key->section, "lattice") || !strcmp(key->section, "pitch") ||
		       !strcmp(key->section, "keys");
	return strcmp(key->section, family) == 0;
}

int config_key_find(const char *family, const char *name)
{
	for (int i = 0; i < KEY_COUNT; i++)
		if (config_key_in_family(&keys[i], family) && strcmp(keys[i].name, name) == 0)
			return i;
	return -1;
}

/* appends "[section]" (once) to "[a] or [b]" */
static void list_add(char *buf, size_t size, int *count, const char *section, bool named)
{
	char part[32];
	snprintf(part, sizeof part, "[%s%s]", section, named ? " NAME" : "");
	if (strstr(buf, part))
		return;
	size_t used = strlen(buf);
	snprintf(buf + used, size - used, "%s%s", *count ? " or " : "", part);
	(*count)++;
}

static bool section_is_named(const char *name)
{
	for (size_t i = 0; i < SECTION_COUNT; i++)
		if (strcmp(sections[i].name, name) == 0)
			return sections[i].named;
	return false;
}

void config_key_sections(const char *name, char *buf, size_t size)
{
	int count = 0;
	buf[0] = '\0';
	for (int i = 0; i < KEY_COUNT; i++)
		if (strcmp(keys[i].name, name) == 0)
			list_add(buf, size, &count, keys[i].section, section_is_named(keys[i].section));
	if (count && config_key_find("preset", name) >= 0)
		list_add(buf, size, &count, "preset", true);
}

void config_keys_list(const char *family, char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (int i = 0; i < KEY_COUNT; i++) {
		if (!config_key_in_family(&keys[i], family))
			continue;
		int n = snprintf(buf + used, size - used, "%s%s", used ? ", " : "", keys[i].name);
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
	}
}

/* ---- reading a value ------------------------------------------------------ */

static bool store_number(void *field, size_t size, long value)
{
	if (size == sizeof(uint8_t)) {
		uint8_t v = (uint8_t)value;
		memcpy(field, &v, sizeof v);
	} else if (size == sizeof(uint16_t)) {
		uint16_t v = (uint16_t)value;
		memcpy(field, &v, sizeof v);
	} else if (size == sizeof(int)) {
		int v = (int)value;
		memcpy(field, &v, sizeof v);
	} else {
		return false;
	}
	return true;
}

static bool store_double(void *field, size_t size, double value)
{
	if (size != sizeof value)
		return false;
	memcpy(field, &value, sizeof value);
	return true;
}

static const struct config_word *find_word(const struct config_key *key, const char *text)
{
	for (const struct config_word *w = key->words; w && w->text; w++)
		if (strcmp(text, w->text) == 0)
			return w;
	return NULL;
}

/* semitones, or cents with a trailing c; the field holds cents */
static bool read_semitones(const struct config_key *key, const char *text, void *field)
{
	size_t len = strlen(text);
	char number[64];
	bool cents = len > 1 && len < sizeof number && text[len - 1] == 'c';
	text_copy(number, sizeof number, text);
	if (cents)
		number[len - 1] = '\0';
	double x;
	double scale = cents ? 1.0 : 100.0;
	if (!value_decimal(number, key->lo * (cents ? 100.0 : 1.0), key->hi * (cents ? 100.0 : 1.0), &x))
		return false;
	return store_double(field, key->size, x * scale);
}

/* Reads the value of every type but CONFIG_OWN and CONFIG_CONNECT. */
static bool read_plain(const struct config_key *key, const char *text, void *field)
{
	const struct config_word *word = find_word(key, text);
	long n;
	double x;
	bool yes;
	uint16_t mask;
	struct ratio r;
	switch (key->type) {
	case CONFIG_WHOLE:
		if (word)
			return store_number(field, key->size, word->value);
		return value_whole(text, (long)key->lo, (long)key->hi, &n) && store_number(field, key->size, n);
	case CONFIG_CHANNEL:
		if (word)
			return store_number(field, key->size, word->value);
		return value_whole(text, (long)key->lo, (long)key->hi, &n) &&
		       store_number(field, key->size, n - 1);
	case CONFIG_DECIMAL:
		return value_decimal(text, key->lo, key->hi, &x) && store_double(field, key->size, x);
	case CONFIG_FACTOR:
		return value_factor(text, key->lo, key->hi, &x) && store_double(field, key->size, x);
	case CONFIG_SEMITONES:
		return read_semitones(key, text, field);
	case CONFIG_CHOICE:
		return word && store_number(field, key->size, word->value);
	case CONFIG_CHOICE_TEXT:
		if (!word || strlen(text) >= key->size)
			return false;
		text_copy(field, key->size, text);
		return true;
	case CONFIG_YES_NO:
		return value_yes_no(text, &yes) && store_number(field, key->size, yes);
	case CONFIG_CHANNELS:
	case CONFIG_POOL:
		return value_channels(text, key->type == CONFIG_POOL, &mask) &&
		       store_number(field, key->size, mask);
	case CONFIG_INTERVAL:
		if (!ratio_parse(text, &r) || r.num <= r.den || key->size != sizeof r)
			return false;
		memcpy(field, &r, sizeof r);
		return true;
	case CONFIG_CONNECT:
	case CONFIG_OWN:
		break;
	}
	return false;
}

bool config_key_read(const struct config_key *key, const char *text, void *base,
		     char *why, size_t why_size)
{
	void *field = (char *)base + key->offset;
	why[0] = '\0';
	bool ok;
	if (key->type == CONFIG_OWN)
		ok = key->read(key, text, field, why, why_size);
	else if (key->type == CONFIG_CONNECT)
		ok = key->size == sizeof(struct connect_list) &&
		     value_connect(text, field, why, why_size);
	else
		ok = read_plain(key, text, field);
	if (!ok && !why[0])
		snprintf(why, why_size, "%s is '%s', expected %s", key->name, text, key->expected);
	return ok;
}

void config_keys_defaults(const char *family, void *base)
{
	char why[CONFIG_WHY_MAX];
	for (int i = 0; i < KEY_COUNT; i++)
		if (config_key_in_family(&keys[i], family))
			(void)config_key_read(&keys[i], keys[i].default_text, base, why, sizeof why);
}
