/*
 * config: reads latticed.conf into a struct config.
 *
 * inih does the INI syntax.  It is fed through our own line reader so we
 * know the line of every value (Debian builds inih without handler line
 * numbers), can see section headers (to reject unknown ones even when
 * empty) and can refuse over-long lines instead of letting inih split
 * them.  Values are collected first and interpreted afterwards, so an
 * indented continuation line (which inih reports as a repeat of the same
 * key) can be joined to its value, and a repeated key can be told apart
 * from a continuation.
 *
 * Defaults are written as text in the key table and parsed by the same
 * code as the file, so the documented default and the applied default
 * cannot drift apart.  [preset NAME] entries are applied last, on a copy
 * of the main tuning, so a preset may come before the keys it inherits.
 */
#include "config.h"

#include <errno.h>
#include <ini.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/ratio.h"
#include "midi_io.h"

_Static_assert(CONFIG_MAX_PATTERNS == MIDI_IO_MAX_PATTERNS, "connect lists fill midi_io specs");
_Static_assert(CONFIG_PATTERN_MAX == MIDI_IO_NAME_MAX, "patterns fill midi_io specs");
_Static_assert(CONFIG_MAX_OUTPUTS == MIDI_IO_MAX_OUTPUTS, "one port per output");

#define CONFIG_FILE_MAX (1 << 20)
#define ENTRY_VALUE_MAX 4096
#define ENTRY_MAX 1024

enum key_kind {
	K_SEEDS, K_CHOOSE, K_PERIOD, K_UNISON,
	K_ROOT_KEY, K_ROOT_HZ,
	K_LAYOUT, K_MAP, K_TRANSPOSE,
	K_IN_CHANNELS, K_WHEEL_RANGE, K_IN_MPE, K_IN_MPE_BEND_RANGE,
	K_METHOD, K_CHANNELS, K_BEND_RANGE, K_BEND_FACTOR, K_CENTS_OFFSET,
	K_POLYPHONY, K_MTS_PROGRAM, K_MTS_BANK, K_MTS_DEVICE, K_MTS_BULK,
	K_MTS_KEY, K_MPE_ZONE, K_MPE_MEMBERS, K_RUNNING_STATUS,
	K_CTL_CHANNEL, K_CTL_PROGRAM, K_CTL_PRESET_CC, K_CTL_ROOT_CC,
	K_CTL_PRESET_KEYS, K_CTL_ROOT_KEYS,
	K_IN_CONNECT, K_OUT_CONNECT,
	K_BACKEND, K_CLIENT_NAME, K_RT_PRIORITY, K_LOCK_MEMORY, K_CONTROL_SOCKET,
};

struct key_def {
	struct config_key_info info;
	enum key_kind kind;
};

/* Key names are unique within a section family; [preset NAME] takes the
 * keys of lattice, pitch and keys. */
static const struct key_def key_table[] = {
	{{"lattice", "seeds", "1 3 5 7",
	  "2 to 12 positive whole numbers or ratios separated by spaces, e.g. 1 3 5 7 or 1 9/8 5"}, K_SEEDS},
	{{"lattice", "choose", "2",
	  "a whole number from 1 to one less than the number of seeds"}, K_CHOOSE},
	{{"lattice", "period", "2/1",
	  "a ratio above 1, e.g. 2/1 (octave) or 3/1 (tritave)"}, K_PERIOD},
	{{"lattice", "unison", "none",
	  "none, or a tone of the set named by its seeds, e.g. 1.3"}, K_UNISON},
	{{"pitch", "root_key", "57",
	  "a key number from 0 to 127"}, K_ROOT_KEY},
	{{"pitch", "root_hz", "220",
	  "a frequency in Hz from 1 to 20000"}, K_ROOT_HZ},
	{{"keys", "layout", "sequential",
	  "sequential, nearest or table"}, K_LAYOUT},
	{{"keys", "map", "",
	  "slots separated by spaces: a tone index or label, optionally followed by +N or -N periods, or . for a silent key"}, K_MAP},
	{{"keys", "transpose", "0",
	  "whole keys from -127 to 127"}, K_TRANSPOSE},
	{{"input", "channels", "1",
	  "MIDI channels 1 to 16 as numbers and ranges, e.g. 1 or 1-16"}, K_IN_CHANNELS},
	{{"input", "wheel_range", "2",
	  "semitones from 0 to 96 (e.g. 2), or cents with a c (e.g. 150c)"}, K_WHEEL_RANGE},
	{{"input", "mpe", "no",
	  "no, lower (master channel 1) or upper (master channel 16)"}, K_IN_MPE},
	{{"input", "mpe_bend_range", "48",
	  "whole semitones from 1 to 96"}, K_IN_MPE_BEND_RANGE},
	{{"input", "connect", "none",
	  "none, or up to 8 port name patterns separated by commas, each at most 63 characters, e.g. USB Keys*, 24:0"}, K_IN_CONNECT},
	{{"output", "method", "bend",
	  "bend, mts or mpe"}, K_METHOD},
	{{"output", "channels", "2-16",
	  "MIDI channels 1 to 16 as numbers and ranges, e.g. 2-16 or 1,3,5-8 (a range skips channel 10)"}, K_CHANNELS},
	{{"output", "bend_range", "2",
	  "whole semitones from 1 to 96 (default 2, or 48 for method = mpe)"}, K_BEND_RANGE},
	{{"output", "bend_factor", "1",
	  "the fraction of a bend the synth really plays, a ratio or decimal from 0.5 to 2, e.g. 127/128"}, K_BEND_FACTOR},
	{{"output", "cents_offset", "0",
	  "cents from -100 to 100 added to every pitch"}, K_CENTS_OFFSET},
	{{"output", "polyphony", "share-then-steal",
	  "share-then-steal, share or steal"}, K_POLYPHONY},
	{{"output", "mts_program", "0",
	  "a tuning program from 0 to 127"}, K_MTS_PROGRAM},
	{{"output", "mts_bank", "none",
	  "none, or a tuning bank from 0 to 127"}, K_MTS_BANK},
	{{"output", "mts_device", "all",
	  "all, or a device ID from 0 to 126"}, K_MTS_DEVICE},
	{{"output", "mts_bulk", "no",
	  "yes or no"}, K_MTS_BULK},
	{{"output", "mts_key", "nearest",
	  "nearest or own"}, K_MTS_KEY},
	{{"output", "mpe_zone", "lower",
	  "lower (master channel 1) or upper (master channel 16)"}, K_MPE_ZONE},
	{{"output", "mpe_members", "15",
	  "member channels from 1 to 15"}, K_MPE_MEMBERS},
	{{"output", "running_status", "no",
	  "yes or no"}, K_RUNNING_STATUS},
	{{"output", "connect", "none",
	  "none, or up to 8 port name patterns separated by commas, each at most 63 characters, e.g. FLUID Synth*"}, K_OUT_CONNECT},
	{{"control", "channel", "none",
	  "none, or a MIDI channel from 1 to 16 that is not retuned"}, K_CTL_CHANNEL},
	{{"control", "program_change", "preset",
	  "preset (a program change on the control channel picks preset N) or ignore"}, K_CTL_PROGRAM},
	{{"control", "preset_cc", "none",
	  "none, or a controller number from 0 to 119"}, K_CTL_PRESET_CC},
	{{"control", "root_cc", "none",
	  "none, or a controller number from 0 to 119"}, K_CTL_ROOT_CC},
	{{"control", "preset_keys", "none",
	  "none, or the first of the keys that pick presets, 0 to 127"}, K_CTL_PRESET_KEYS},
	{{"control", "root_keys", "none",
	  "none, or the first of the keys that move the 1/1, 0 to 127"}, K_CTL_ROOT_KEYS},
	{{"daemon", "backend", "auto",
	  "auto (alsa if built, else portmidi, else null), alsa, portmidi, raw or null"}, K_BACKEND},
	{{"daemon", "client_name", "latticed",
	  "1 to 63 characters without ':' or control characters"}, K_CLIENT_NAME},
	{{"daemon", "realtime_priority", "40",
	  "none, or a SCHED_FIFO priority from 1 to 99"}, K_RT_PRIORITY},
	{{"daemon", "lock_memory", "yes",
	  "yes or no"}, K_LOCK_MEMORY},
	{{"daemon", "control_socket", "auto",
	  "auto, none, or an absolute path of at most 107 characters"}, K_CONTROL_SOCKET},
};
#define KEY_COUNT ((int)(sizeof key_table / sizeof key_table[0]))

int config_key_count(void)
{
	return KEY_COUNT;
}

const struct config_key_info *config_key_at(int index)
{
	return index >= 0 && index < KEY_COUNT ? &key_table[index].info : NULL;
}

/* Copies src into dst (size bytes), cutting it short if it does not fit. */
static void copy_text(char *dst, size_t size, const char *src)
{
	size_t len = strlen(src);
	if (len >= size)
		len = size - 1;
	memcpy(dst, src, len);
	dst[len] = '\0';
}

/* ---- report ------------------------------------------------------------ */

static void report_add(struct config_report *r, bool is_error,
		       const char *path, int line, const char *fmt, ...)
	__attribute__((format(printf, 5, 6)));

static void report_add(struct config_report *r, bool is_error,
		       const char *path, int line, const char *fmt, ...)
{
	if (!r)
		return;
	if (is_error)
		r->error_count++;
	else
		r->warning_count++;
	char body[CORE_ERROR_TEXT_MAX + 256];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(body, sizeof body, fmt, ap);
	va_end(ap);
	/* Whole lines only: a line cut in half would run into whatever the
	 * caller prints next.  Room is kept for one closing line that says
	 * how many messages did not fit. */
	static const char more[] = "%s: %d more message(s) left out\n";
	char text[CONFIG_PATH_MAX + sizeof body + 64];
	int n = line > 0
		? snprintf(text, sizeof text, "%s:%d: %s%s\n", path, line,
			   is_error ? "" : "warning: ", body)
		: snprintf(text, sizeof text, "%s: %s%s\n", path,
			   is_error ? "" : "warning: ", body);
	if (n < 0)
		return;
	size_t len = (size_t)n;
	if (len >= sizeof text) {
		len = sizeof text - 1;
		text[len - 1] = '\n';
	}
	size_t closing = strlen(path) + sizeof more + 16;
	if (r->left_out == 0 && r->length + len + closing < sizeof r->text) {
		memcpy(r->text + r->length, text, len + 1);
		r->length += len;
		return;
	}
	/* rewrite the closing line with the new count */
	if (r->left_out == 0)
		r->closing_at = r->length;
	r->left_out++;
	n = snprintf(r->text + r->closing_at, sizeof r->text - r->closing_at, more, path,
		     r->left_out);
	if (n > 0 && r->closing_at + (size_t)n < sizeof r->text)
		r->length = r->closing_at + (size_t)n;
	else
		r->text[r->length = r->closing_at] = '\0';
}

/* ---- pass 1: collect entries through inih ------------------------------ */

struct entry {
	char section[64];
	char key[64];
	char value[ENTRY_VALUE_MAX];
	int line;
	bool in_known_section;
};

struct collector {
	const char *cursor, *end;
	const char *path;
	int line;                 /* line number of the line last handed to inih */
	bool line_indented;
	bool section_known;
	int entry_count;
	struct entry *entries;
	struct config_report *report;
	int errors;
};

/* "output synth" -> true for prefix "output" */
static bool section_has_prefix(const char *name, const char *prefix)
{
	size_t n = strlen(prefix);
	return strncmp(name, prefix, n) == 0 &&
	       (name[n] == '\0' || name[n] == ' ' || name[n] == '\t');
}

static bool section_is_known(const char *name)
{
	static const char *const plain[] = {"lattice", "pitch", "keys", "input", "control", "daemon"};
	for (size_t i = 0; i < sizeof plain / sizeof plain[0]; i++)
		if (strcmp(name, plain[i]) == 0)
			return true;
	return section_has_prefix(name, "output") || section_has_prefix(name, "preset");
}

static void trim(char *s)
{
	size_t len = strlen(s);
	while (len > 0 && (s[len - 1] == ' ' || s[len - 1] == '\t' ||
			   s[len - 1] == '\r' || s[len - 1] == '\n'))
		s[--len] = '\0';
	size_t start = 0;
	while (s[start] == ' ' || s[start] == '\t')
		start++;
	if (start)
		memmove(s, s + start, len - start + 1);
}

static struct entry *new_entry(struct collector *c)
{
	if (c->entry_count >= ENTRY_MAX) {
		report_add(c->report, true, c->path, c->line,
			   "more than %d settings, expected a config file", ENTRY_MAX);
		c->errors++;
		return NULL;
	}
	struct entry *e = &c->entries[c->entry_count++];
	memset(e, 0, sizeof *e);
	e->line = c->line;
	return e;
}

/*
 * Looks at a raw line before inih does, to check [section] headers and
 * record them as entries with an empty key (so an [output NAME] section
 * with no keys still creates its output).
 */
static void inspect_section_line(struct collector *c, const char *line)
{
	const char *p = line;
	while (*p == ' ' || *p == '\t')
		p++;
	if (*p != '[')
		return;
	const char *close = strchr(p, ']');
	if (!close)
		return; /* inih reports the syntax error */
	char name[64];
	size_t len = (size_t)(close - p - 1);
	if (len >= sizeof name)
		len = sizeof name - 1;
	memcpy(name, p + 1, len);
	name[len] = '\0';
	trim(name);
	c->section_known = section_is_known(name);
	if (!c->section_known) {
		report_add(c->report, true, c->path, c->line,
			   "unknown section [%s], expected [lattice], [pitch], [keys], [input], [control], [daemon], [output NAME] or [preset NAME]",
			   name);
		c->errors++;
		return;
	}
	struct entry *e = new_entry(c);
	if (!e)
		return;
	copy_text(e->section, sizeof e->section, name);
	e->in_known_section = true;
}

static char *read_line(char *str, int num, void *stream)
{
	struct collector *c = stream;
	if (c->cursor >= c->end)
		return NULL;
	const char *nl = memchr(c->cursor, '\n', (size_t)(c->end - c->cursor));
	const char *stop = nl ? nl + 1 : c->end;
	size_t len = (size_t)(stop - c->cursor);
	c->line++;
	if (len > (size_t)num - 1) {
		report_add(c->report, true, c->path, c->line,
			   "line is %zu characters long, expected at most %d; continue a long value on indented lines",
			   len - (nl ? 1 : 0), num - 2);
		c->errors++;
		/* hand inih an empty line in its place so numbering stays right */
		str[0] = '\n';
		str[1] = '\0';
		c->cursor = stop;
		c->line_indented = false;
		return str;
	}
	memcpy(str, c->cursor, len);
	str[len] = '\0';
	if (memchr(str, '\0', len) != NULL) {
		report_add(c->report, true, c->path, c->line,
			   "line contains a NUL byte, expected text");
		c->errors++;
		str[0] = '\n';
		str[1] = '\0';
	}
	c->cursor = stop;
	c->line_indented = (str[0] == ' ' || str[0] == '\t');
	inspect_section_line(c, str);
	return str;
}

static int collect(void *user, const char *section, const char *name,
		   const char *value)
{
	struct collector *c = user;
	struct entry *prev = c->entry_count > 0 ? &c->entries[c->entry_count - 1] : NULL;
	if (c->line_indented && prev && strcmp(prev->key, name) == 0 &&
	    strcmp(prev->section, section) == 0) {
		size_t used = strlen(prev->value);
		if (used + 1 + strlen(value) >= sizeof prev->value) {
			report_add(c->report, true, c->path, c->line,
				   "value of '%s' is longer than %d characters",
				   name, ENTRY_VALUE_MAX - 1);
			c->errors++;
			return 1;
		}
		snprintf(prev->value + used, sizeof prev->value - used, " %s", value);
		return 1;
	}
	struct entry *e = new_entry(c);
	if (!e)
		return 1;
	copy_text(e->section, sizeof e->section, section);
	copy_text(e->key, sizeof e->key, name);
	copy_text(e->value, sizeof e->value, value);
	e->in_known_section = c->section_known;
	return 1;
}

/* ---- pass 2: interpret values ------------------------------------------ */

struct interp {
	const char *path;
	struct config *cfg;
	struct config_report *report;
	int errors;
	int input_channels_line, control_channel_line;
};

/* What an entry writes into: the tuning of its section, or its output. */
struct target {
	struct tuning_config *tuning;
	struct output_config *output;
};

static void fail(struct interp *in, int line, const char *fmt, ...)
	__attribute__((format(printf, 3, 4)));

static void fail(struct interp *in, int line, const char *fmt, ...)
{
	char body[CORE_ERROR_TEXT_MAX + 128];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(body, sizeof body, fmt, ap);
	va_end(ap);
	report_add(in->report, true, in->path, line, "%s", body);
	in->errors++;
}

static bool parse_int(const char *text, long lo, long hi, long *out)
{
	char *end;
	errno = 0;
	long v = strtol(text, &end, 10);
	if (errno || end == text || *end != '\0' || v < lo || v > hi)
		return false;
	*out = v;
	return true;
}

static bool parse_real(const char *text, double lo, double hi, double *out)
{
	char *end;
	errno = 0;
	double v = strtod(text, &end);
	if (errno || end == text || *end != '\0' || !isfinite(v) || v < lo || v > hi)
		return false;
	*out = v;
	return true;
}

/* Splits on spaces, tabs and commas; returns the number of words. */
static int split_words(char *text, char **words, int max)
{
	int n = 0;
	char *save = NULL;
	for (char *w = strtok_r(text, " \t,", &save); w; w = strtok_r(NULL, " \t,", &save)) {
		if (n == max)
			return max + 1;
		words[n++] = w;
	}
	return n;
}

static bool parse_seeds(struct interp *in, const struct entry *e,
			struct lattice_spec *spec)
{
	char buf[ENTRY_VALUE_MAX];
	char *words[LATTICE_MAX_SEEDS + 1];
	copy_text(buf, sizeof buf, e->value);
	int n = split_words(buf, words, LATTICE_MAX_SEEDS);
	if (n < 2 || n > LATTICE_MAX_SEEDS) {
		fail(in, e->line, "seeds has %s%d values, expected 2 to %d positive whole numbers or ratios, e.g. 1 3 5 7",
		     n > LATTICE_MAX_SEEDS ? "more than " : "",
		     n > LATTICE_MAX_SEEDS ? LATTICE_MAX_SEEDS : n, LATTICE_MAX_SEEDS);
		return false;
	}
	for (int i = 0; i < n; i++) {
		if (strlen(words[i]) >= LATTICE_SEED_TEXT_MAX ||
		    !ratio_parse(words[i], &spec->seeds[i])) {
			fail(in, e->line, "seed '%s' is not a positive whole number or ratio, expected e.g. 7 or 9/8",
			     words[i]);
			return false;
		}
		/* labels show the seed in lowest terms, as a whole number when it is one */
		if (spec->seeds[i].den == 1)
			snprintf(spec->seed_text[i], sizeof spec->seed_text[i], "%lld",
				 (long long)spec->seeds[i].num);
		else
			ratio_format(spec->seeds[i], spec->seed_text[i],
				     sizeof spec->seed_text[i]);
	}
	spec->seed_count = n;
	return true;
}

/* skip_ten: a range leaves out channel 10 (GM drums) unless named alone */
static bool parse_channels(const char *text, bool skip_ten, uint16_t *out)
{
	char buf[ENTRY_VALUE_MAX];
	char *words[64];
	copy_text(buf, sizeof buf, text);
	int n = split_words(buf, words, 63);
	if (n < 1 || n > 63)
		return false;
	uint16_t mask = 0;
	for (int i = 0; i < n; i++) {
		char *dash = strchr(words[i], '-');
		long lo, hi;
		if (dash) {
			*dash = '\0';
			if (!parse_int(words[i], 1, 16, &lo) ||
			    !parse_int(dash + 1, 1, 16, &hi) || hi < lo)
				return false;
			for (long ch = lo; ch <= hi; ch++)
				if (!skip_ten || ch != 10)
					mask |= (uint16_t)(1u << (ch - 1));
		} else {
			if (!parse_int(words[i], 1, 16, &lo))
				return false;
			mask |= (uint16_t)(1u << (lo - 1));
		}
	}
	if (mask == 0)
		return false;
	*out = mask;
	return true;
}

char *config_format_channels(uint16_t channels, char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (int ch = 1; ch <= 16; ch++) {
		if (!(channels & (1u << (ch - 1))))
			continue;
		int last = ch;
		while (last < 16 && (channels & (1u << last)))
			last++;
		int n = last == ch ? snprintf(buf + used, size - used, "%s%d",
					       used ? "," : "", ch)
				   : snprintf(buf + used, size - used, "%s%d-%d",
					       used ? "," : "", ch, last);
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
		ch = last;
	}
	return buf;
}

static bool parse_bool(const char *v, bool *out)
{
	if (!strcmp(v, "yes") || !strcmp(v, "true") || !strcmp(v, "on") || !strcmp(v, "1"))
		*out = true;
	else if (!strcmp(v, "no") || !strcmp(v, "false") || !strcmp(v, "off") || !strcmp(v, "0"))
		*out = false;
	else
		return false;
	return true;
}

/* "none" -> -1, else a whole number in [lo, hi]. */
static bool parse_optional_int(const char *v, long lo, long hi, int *out)
{
	long n;
	if (!strcmp(v, "none")) {
		*out = -1;
		return true;
	}
	if (!parse_int(v, lo, hi, &n))
		return false;
	*out = (int)n;
	return true;
}

/* A ratio such as 127/128 or a decimal such as 0.9921875. */
static bool parse_factor(const char *v, double lo, double hi, double *out)
{
	struct ratio r;
	if (ratio_parse(v, &r)) {
		*out = ratio_to_double(r);
		return *out >= lo && *out <= hi;
	}
	return parse_real(v, lo, hi, out);
}

/* "none" or patterns separated by commas; why says what is wrong. */
static bool parse_connect(const char *v, struct connect_list *out, char *why, size_t why_size)
{
	struct connect_list list;
	memset(&list, 0, sizeof list);
	if (strcmp(v, "none") == 0) {
		*out = list;
		return true;
	}
	const char *p = v;
	for (;;) {
		const char *comma = strchr(p, ',');
		size_t len = comma ? (size_t)(comma - p) : strlen(p);
		while (len > 0 && (*p == ' ' || *p == '\t')) {
			p++;
			len--;
		}
		while (len > 0 && (p[len - 1] == ' ' || p[len - 1] == '\t'))
			len--;
		if (len == 0) {
			snprintf(why, why_size, "connect has an empty pattern, expected %s",
				 "none, or patterns separated by commas");
			return false;
		}
		if (len >= CONFIG_PATTERN_MAX) {
			snprintf(why, why_size, "connect pattern '%.*s' is %zu characters long, expected at most %d",
				 (int)len, p, len, CONFIG_PATTERN_MAX - 1);
			return false;
		}
		if (list.count >= CONFIG_MAX_PATTERNS) {
			snprintf(why, why_size, "connect has more than %d patterns, expected at most %d",
				 CONFIG_MAX_PATTERNS, CONFIG_MAX_PATTERNS);
			return false;
		}
		memcpy(list.patterns[list.count], p, len);
		list.patterns[list.count][len] = '\0';
		list.count++;
		if (!comma)
			break;
		p = comma + 1;
	}
	*out = list;
	return true;
}

static bool parse_zone(const char *v, enum mpe_zone *out)
{
	if (!strcmp(v, "lower"))
		*out = MPE_ZONE_LOWER;
	else if (!strcmp(v, "upper"))
		*out = MPE_ZONE_UPPER;
	else
		return false;
	return true;
}

/* Stores one value; line 0 means a default being applied. */
static void apply(struct interp *in, const struct key_def *def,
		  const struct entry *e, struct target to)
{
	struct tuning_config *t = to.tuning;
	struct output_config *out = to.output;
	struct input_config *input = &in->cfg->input;
	struct control_config *control = &in->cfg->control;
	struct daemon_config *daemon = &in->cfg->daemon;
	const char *v = e->value;
	const char *key = def->info.key;
	long n;
	double x;
	struct ratio r;
	bool ok = true;
	switch (def->kind) {
	case K_SEEDS:
		if (parse_seeds(in, e, &t->lattice))
			t->lines.seeds = e->line;
		return;
	case K_CHOOSE:
		if ((ok = parse_int(v, 1, LATTICE_MAX_SEEDS - 1, &n))) {
			t->lattice.choose = (int)n;
			t->lines.choose = e->line;
		}
		break;
	case K_PERIOD:
		if ((ok = ratio_parse(v, &r) && r.num > r.den)) {
			t->lattice.period = r;
			t->lines.period = e->line;
		}
		break;
	case K_UNISON:
		if ((ok = strlen(v) < sizeof t->unison_text)) {
			copy_text(t->unison_text, sizeof t->unison_text,
				  strcmp(v, "none") == 0 ? "" : v);
			t->lines.unison = e->line;
		}
		break;
	case K_ROOT_KEY:
		if ((ok = parse_int(v, 0, 127, &n))) {
			t->keys.root_key = (int)n;
			t->lines.root_key = e->line;
		}
		break;
	case K_ROOT_HZ:
		if ((ok = parse_real(v, 1.0, 20000.0, &x))) {
			t->keys.root_hz = x;
			t->lines.root_hz = e->line;
		}
		break;
	case K_LAYOUT:
		if (!strcmp(v, "sequential"))
			t->keys.layout = KEY_LAYOUT_SEQUENTIAL;
		else if (!strcmp(v, "nearest"))
			t->keys.layout = KEY_LAYOUT_NEAREST;
		else if (!strcmp(v, "table"))
			t->keys.layout = KEY_LAYOUT_TABLE;
		else
			ok = false;
		if (ok)
			t->lines.layout = e->line;
		break;
	case K_MAP:
		if (strlen(v) >= sizeof t->map_text) {
			fail(in, e->line, "map is longer than %d characters, expected at most %d slots",
			     CONFIG_MAP_TEXT_MAX - 1, KEYMAP_TABLE_MAX);
			return;
		}
		copy_text(t->map_text, sizeof t->map_text, v);
		t->lines.map = e->line;
		return;
	case K_TRANSPOSE:
		if ((ok = parse_int(v, -127, 127, &n))) {
			t->keys.transpose = (int)n;
			t->lines.transpose = e->line;
		}
		break;
	case K_IN_CHANNELS:
		if ((ok = parse_channels(v, false, &input->channels)))
			in->input_channels_line = e->line;
		break;
	case K_WHEEL_RANGE: {
		size_t len = strlen(v);
		char number[64];
		bool cents = len > 1 && len < sizeof number && v[len - 1] == 'c';
		copy_text(number, sizeof number, v);
		if (cents)
			number[len - 1] = '\0';
		if ((ok = parse_real(number, 0.0, cents ? 9600.0 : 96.0, &x)))
			input->wheel_range_cents = cents ? x : x * 100.0;
		break;
	}
	case K_IN_MPE:
		if (!strcmp(v, "no"))
			input->mpe = false;
		else if ((ok = parse_zone(v, &input->mpe_zone)))
			input->mpe = true;
		break;
	case K_IN_MPE_BEND_RANGE:
		if ((ok = parse_int(v, 1, 96, &n)))
			input->mpe_bend_range = (int)n;
		break;
	case K_METHOD:
		if (!strcmp(v, "bend"))
			out->method = RETUNE_BEND;
		else if (!strcmp(v, "mts"))
			out->method = RETUNE_MTS;
		else if (!strcmp(v, "mpe"))
			out->method = RETUNE_MPE;
		else
			ok = false;
		break;
	case K_CHANNELS:
		ok = parse_channels(v, true, &out->channels);
		break;
	case K_BEND_RANGE:
		if ((ok = parse_int(v, 1, 96, &n))) {
			out->bend_range = (int)n;
			out->bend_range_set = e->line > 0;
		}
		break;
	case K_BEND_FACTOR:
		ok = parse_factor(v, 0.5, 2.0, &out->bend_factor);
		break;
	case K_CENTS_OFFSET:
		ok = parse_real(v, -100.0, 100.0, &out->cents_offset);
		break;
	case K_POLYPHONY:
		if (!strcmp(v, "share-then-steal"))
			out->polyphony = POLY_SHARE_THEN_STEAL;
		else if (!strcmp(v, "share"))
			out->polyphony = POLY_SHARE;
		else if (!strcmp(v, "steal"))
			out->polyphony = POLY_STEAL;
		else
			ok = false;
		break;
	case K_MTS_PROGRAM:
		if ((ok = parse_int(v, 0, 127, &n)))
			out->mts_program = (int)n;
		break;
	case K_MTS_BANK:
		ok = parse_optional_int(v, 0, 127, &out->mts_bank);
		break;
	case K_MTS_DEVICE:
		if (!strcmp(v, "all"))
			out->mts_device = 0x7F;
		else if ((ok = parse_int(v, 0, 126, &n)))
			out->mts_device = (int)n;
		break;
	case K_MTS_BULK:
		ok = parse_bool(v, &out->mts_bulk);
		break;
	case K_MTS_KEY:
		if (!strcmp(v, "nearest"))
			out->mts_key = MTS_KEY_NEAREST;
		else if (!strcmp(v, "own"))
			out->mts_key = MTS_KEY_OWN;
		else
			ok = false;
		break;
	case K_MPE_ZONE:
		ok = parse_zone(v, &out->mpe_zone);
		break;
	case K_MPE_MEMBERS:
		if ((ok = parse_int(v, 1, 15, &n)))
			out->mpe_members = (int)n;
		break;
	case K_RUNNING_STATUS:
		ok = parse_bool(v, &out->running_status);
		break;
	case K_CTL_CHANNEL:
		if ((ok = parse_optional_int(v, 1, 16, &control->channel))) {
			if (control->channel > 0)
				control->channel--;
			in->control_channel_line = e->line;
		}
		break;
	case K_CTL_PROGRAM:
		if (!strcmp(v, "preset"))
			control->program_selects_preset = true;
		else if (!strcmp(v, "ignore"))
			control->program_selects_preset = false;
		else
			ok = false;
		break;
	case K_CTL_PRESET_CC:
		ok = parse_optional_int(v, 0, 119, &control->preset_cc);
		break;
	case K_CTL_ROOT_CC:
		ok = parse_optional_int(v, 0, 119, &control->root_cc);
		break;
	case K_CTL_PRESET_KEYS:
		ok = parse_optional_int(v, 0, 127, &control->preset_keys);
		break;
	case K_CTL_ROOT_KEYS:
		ok = parse_optional_int(v, 0, 127, &control->root_keys);
		break;
	case K_IN_CONNECT:
	case K_OUT_CONNECT: {
		char why[CORE_ERROR_TEXT_MAX];
		struct connect_list *list = def->kind == K_IN_CONNECT ? &input->connect : &out->connect;
		if (!parse_connect(v, list, why, sizeof why))
			fail(in, e->line, "%s", why);
		return;
	}
	case K_BACKEND:
		if ((ok = !strcmp(v, "auto") || !strcmp(v, "alsa") || !strcmp(v, "portmidi") ||
			  !strcmp(v, "raw") || !strcmp(v, "null")))
			copy_text(daemon->backend, sizeof daemon->backend, v);
		break;
	case K_CLIENT_NAME:
		ok = v[0] != '\0' && strlen(v) < sizeof daemon->client_name;
		for (const char *p = v; ok && *p; p++)
			ok = *p != ':' && (unsigned char)*p >= 0x20 && *p != 0x7F;
		if (ok)
			copy_text(daemon->client_name, sizeof daemon->client_name, v);
		break;
	case K_RT_PRIORITY:
		ok = parse_optional_int(v, 1, 99, &daemon->realtime_priority);
		break;
	case K_LOCK_MEMORY:
		ok = parse_bool(v, &daemon->lock_memory);
		break;
	case K_CONTROL_SOCKET:
		/* sun_path holds 108 bytes on Linux, terminator included (unix(7)) */
		if ((ok = !strcmp(v, "auto") || !strcmp(v, "none") ||
			  (v[0] == '/' && strlen(v) <= 107)))
			copy_text(daemon->control_socket, sizeof daemon->control_socket, v);
		break;
	}
	if (!ok)
		fail(in, e->line, "%s is '%s', expected %s", key, v, def->info.expected);
}

static bool in_family(const struct key_def *def, const char *family)
{
	if (strcmp(family, "preset") == 0)
		return !strcmp(def->info.section, "lattice") ||
		       !strcmp(def->info.section, "pitch") ||
		       !strcmp(def->info.section, "keys");
	return strcmp(def->info.section, family) == 0;
}

static void apply_default(struct interp *in, const char *family, struct target to)
{
	for (int i = 0; i < KEY_COUNT; i++) {
		const struct key_def *def = &key_table[i];
		if (!in_family(def, family) || def->kind == K_MAP)
			continue;
		struct entry e;
		memset(&e, 0, sizeof e);
		copy_text(e.value, sizeof e.value, def->info.default_text);
		apply(in, def, &e, to);
	}
}

static void output_defaults(struct interp *in, struct output_config *out)
{
	memset(out, 0, sizeof *out);
	apply_default(in, "output", (struct target){.output = out});
}

void config_defaults(struct config *out)
{
	struct interp in = {.path = "(defaults)", .cfg = out};
	memset(out, 0, sizeof *out);
	copy_text(out->path, sizeof out->path, "(built-in defaults)");
	out->preset_count = 1;
	copy_text(out->presets[0].name, sizeof out->presets[0].name, "main");
	apply_default(&in, "preset", (struct target){.tuning = &out->presets[0]});
	apply_default(&in, "input", (struct target){0});
	apply_default(&in, "control", (struct target){0});
	apply_default(&in, "daemon", (struct target){0});
	out->output_count = 1;
	output_defaults(&in, &out->outputs[0]);
	copy_text(out->outputs[0].name, sizeof out->outputs[0].name, "synth");
}

static struct output_config *output_named(struct config *cfg, const char *name)
{
	for (int i = 0; i < cfg->output_count; i++)
		if (strcmp(cfg->outputs[i].name, name) == 0)
			return &cfg->outputs[i];
	return NULL;
}

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

/* The NAME of "[output NAME]" / "[preset NAME]", checked; reported once, at
 * the header (a key of a bad section returns false silently). */
static bool section_name(struct interp *in, const struct entry *e, const char *kind,
			 char *name, size_t size)
{
	copy_text(name, size, e->section + strlen(kind));
	trim(name);
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

/* The output an [output NAME] entry belongs to, created on first use. */
static struct output_config *output_for(struct interp *in, const struct entry *e)
{
	char name[64];
	if (!section_name(in, e, "output", name, sizeof name))
		return NULL;
	struct output_config *o = output_named(in->cfg, name);
	if (o)
		return o;
	if (in->cfg->output_count >= CONFIG_MAX_OUTPUTS) {
		if (e->key[0] == '\0')
			fail(in, e->line, "more than %d outputs, expected at most %d [output NAME] sections",
			     CONFIG_MAX_OUTPUTS, CONFIG_MAX_OUTPUTS);
		return NULL;
	}
	o = &in->cfg->outputs[in->cfg->output_count++];
	output_defaults(in, o);
	copy_text(o->name, sizeof o->name, name);
	o->line = e->line;
	return o;
}

/* The preset a [preset NAME] entry belongs to, created as a copy of main. */
static struct tuning_config *preset_for(struct interp *in, const struct entry *e)
{
	char name[64];
	if (!section_name(in, e, "preset", name, sizeof name))
		return NULL;
	struct config *cfg = in->cfg;
	for (int i = 0; i < cfg->preset_count; i++)
		if (strcmp(cfg->presets[i].name, name) == 0)
			return &cfg->presets[i];
	if (cfg->preset_count >= CONFIG_MAX_PRESETS) {
		if (e->key[0] == '\0')
			fail(in, e->line, "more than %d presets, expected at most %d [preset NAME] sections",
			     CONFIG_MAX_PRESETS - 1, CONFIG_MAX_PRESETS - 1);
		return NULL;
	}
	struct tuning_config *t = &cfg->presets[cfg->preset_count++];
	*t = cfg->presets[0];
	copy_text(t->name, sizeof t->name, name);
	t->lines.section = e->line;
	return t;
}

static const char *family_of(const char *section)
{
	if (section_has_prefix(section, "output"))
		return "output";
	if (section_has_prefix(section, "preset"))
		return "preset";
	return section;
}

static const struct key_def *find_key(const char *family, const char *key)
{
	for (int i = 0; i < KEY_COUNT; i++)
		if (in_family(&key_table[i], family) && strcmp(key_table[i].info.key, key) == 0)
			return &key_table[i];
	return NULL;
}

static void list_keys_of(const char *family, char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (int i = 0; i < KEY_COUNT; i++) {
		if (!in_family(&key_table[i], family))
			continue;
		int n = snprintf(buf + used, size - used, "%s%s", used ? ", " : "",
				 key_table[i].info.key);
		if (n < 0 || (size_t)n >= size - used)
			break;
		used += (size_t)n;
	}
}

/* Interprets entry `index`; presets are done in a later pass (want_presets). */
static void interpret(struct interp *in, const struct entry *entries, int index,
		      bool want_presets)
{
	const struct entry *e = &entries[index];
	if (!e->in_known_section)
		return; /* the section header was already reported */
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
	const struct key_def *def = find_key(family, e->key);
	if (!def) {
		char known[768];
		list_keys_of(family, known, sizeof known);
		fail(in, e->line, "unknown key '%s' in [%s], expected one of: %s",
		     e->key, e->section, known);
		return;
	}
	for (int j = 0; j < index; j++) {
		if (strcmp(entries[j].key, e->key) == 0 &&
		    strcmp(entries[j].section, e->section) == 0) {
			fail(in, e->line, "'%s' is already set on line %d, expected each key once per section",
			     e->key, entries[j].line);
			return;
		}
	}
	struct target to = {0};
	if (strcmp(family, "output") == 0) {
		if (!(to.output = output_for(in, e)))
			return;
	} else if (is_preset) {
		if (!(to.tuning = preset_for(in, e)))
			return;
	} else {
		to.tuning = &in->cfg->presets[0];
	}
	apply(in, def, e, to);
}

/* Checks that need several keys at once. */
static void cross_check(struct interp *in)
{
	struct config *cfg = in->cfg;
	struct input_config *input = &cfg->input;
	if (input->mpe && in->input_channels_line == 0)
		input->channels = 0xFFFF; /* an MPE controller plays on its whole zone */
	int ctl = cfg->control.channel;
	if (ctl >= 0 && ((input->channels >> ctl) & 1))
		fail(in, in->control_channel_line,
		     "the control channel %d is also retuned in [input] channels, expected a channel the player does not play on",
		     ctl + 1);
	int inputs = __builtin_popcount(input->channels);
	for (int i = 0; i < cfg->output_count; i++) {
		struct output_config *o = &cfg->outputs[i];
		if (strcmp(o->name, "in") == 0)
			fail(in, o->line, "an output may not be called 'in', the name of latticed's input port; expected another name");
		if (!o->bend_range_set)
			o->bend_range = o->method == RETUNE_MPE ? 48 : 2;
		int outputs = __builtin_popcount(o->channels);
		if (o->method == RETUNE_MTS && outputs < inputs)
			fail(in, o->line,
			     "[output %s] method = mts has %d channel%s for %d retuned input channel%s, expected one output channel per input channel (more channels, or fewer in [input] channels)",
			     o->name, outputs, outputs == 1 ? "" : "s", inputs, inputs == 1 ? "" : "s");
	}
}

bool config_parse(const char *text, size_t length, const char *path,
		  struct config *out, struct config_report *report)
{
	if (report)
		memset(report, 0, sizeof *report);
	if (length > CONFIG_FILE_MAX) {
		report_add(report, true, path, 0,
			   "file is %zu bytes, expected a config of at most %d bytes",
			   length, CONFIG_FILE_MAX);
		return false;
	}
	struct config *cfg = malloc(sizeof *cfg);
	struct entry *entries = calloc(ENTRY_MAX, sizeof *entries);
	if (!cfg || !entries) {
		free(cfg);
		free(entries);
		report_add(report, true, path, 0, "out of memory reading the config");
		return false;
	}

	struct collector col = {
		.cursor = text, .end = text + length, .path = path,
		.section_known = true, .entries = entries, .report = report,
	};
	int syntax_line = ini_parse_stream(read_line, &col, collect, &col);
	if (syntax_line > 0)
		report_add(report, true, path, syntax_line,
			   "cannot read this line, expected '[section]', 'key = value' or a '; comment'");
	else if (syntax_line < 0)
		report_add(report, true, path, 0, "out of memory reading the config");

	config_defaults(cfg);
	copy_text(cfg->path, sizeof cfg->path, path);
	cfg->output_count = 0;

	struct interp in = {.path = path, .cfg = cfg, .report = report};
	for (int pass = 0; pass < 2; pass++)
		for (int i = 0; i < col.entry_count; i++)
			interpret(&in, entries, i, pass == 1);

	if (cfg->output_count == 0) {
		/* no [output] section: one bend output named "synth" */
		cfg->output_count = 1;
		output_defaults(&in, &cfg->outputs[0]);
		copy_text(cfg->outputs[0].name, sizeof cfg->outputs[0].name, "synth");
	}
	cross_check(&in);
	for (int i = 0; i < cfg->preset_count; i++) {
		const struct tuning_config *t = &cfg->presets[i];
		if (t->lines.map && t->keys.layout != KEY_LAYOUT_TABLE &&
		    (i == 0 || t->lines.map != cfg->presets[0].lines.map))
			report_add(report, false, path, t->lines.map,
				   "map is set but layout is %s; the map is used only with layout = table",
				   key_layout_name(t->keys.layout));
	}

	bool ok = col.errors == 0 && in.errors == 0 && syntax_line == 0;
	if (ok)
		*out = *cfg;
	free(entries);
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
		report_add(report, true, path, 0, "cannot open: %s", strerror(errno));
		return false;
	}
	char *buf = malloc(CONFIG_FILE_MAX + 1);
	if (!buf) {
		fclose(f);
		report_add(report, true, path, 0, "out of memory reading the config");
		return false;
	}
	size_t n = fread(buf, 1, CONFIG_FILE_MAX + 1, f);
	bool read_error = ferror(f);
	int saved = errno;
	fclose(f);
	if (read_error) {
		free(buf);
		report_add(report, true, path, 0, "cannot read: %s", strerror(saved));
		return false;
	}
	bool ok = config_parse(buf, n, path, out, report);
	free(buf);
	return ok;
}

/* ---- building the tuning ----------------------------------------------- */

static int line_of_field(const struct tuning_lines *lines, const char *field)
{
	if (strcmp(field, "seeds") == 0)
		return lines->seeds;
	if (strcmp(field, "choose") == 0)
		return lines->choose ? lines->choose : lines->seeds;
	if (strcmp(field, "period") == 0)
		return lines->period;
	if (strcmp(field, "unison") == 0)
		return lines->unison;
	if (strcmp(field, "root_key") == 0)
		return lines->root_key;
	if (strcmp(field, "root_hz") == 0)
		return lines->root_hz;
	if (strcmp(field, "layout") == 0)
		return lines->layout;
	if (strcmp(field, "map") == 0)
		return lines->map;
	return 0;
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
	copy_text(name, sizeof name, word);
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
	if (parse_int(name, 0, 32767, &index)) {
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

bool config_build_tuning(const struct config *cfg, int preset, struct tuning *out,
			 struct config_report *report)
{
	const struct tuning_config *t = &cfg->presets[preset];
	struct lattice_spec spec = t->lattice;
	struct core_error err;

	if (t->unison_text[0]) {
		if (!lattice_parse_label(&spec, t->unison_text, &spec.unison_seeds)) {
			report_add(report, true, cfg->path, t->lines.unison,
				   "unison '%s' names a seed that is not in seeds, expected %d seeds joined by '.', e.g. 1.3",
				   t->unison_text, spec.choose);
			return false;
		}
		spec.has_unison = true;
	}
	if (!lattice_build(&out->lattice, &spec, &err)) {
		report_add(report, true, cfg->path, line_of_field(&t->lines, err.field),
			   "%s", err.text);
		return false;
	}
	char a[LATTICE_LABEL_MAX], b[LATTICE_LABEL_MAX], rt[RATIO_TEXT_MAX];
	for (int i = 0; i < out->lattice.merge_count; i++) {
		const struct lattice_merge *m = &out->lattice.merges[i];
		const struct tone *tone = &out->lattice.tones[m->tone];
		report_add(report, false, cfg->path, t->lines.seeds,
			   "products %s and %s are the same tone %s; merged into one",
			   lattice_label(&spec, tone->seeds, a, sizeof a),
			   lattice_label(&spec, m->seeds, b, sizeof b),
			   ratio_format(tone->ratio, rt, sizeof rt));
	}

	struct keymap_spec keys = t->keys;
	if (keys.layout == KEY_LAYOUT_TABLE) {
		if (!t->map_text[0]) {
			report_add(report, true, cfg->path, t->lines.layout,
				   "layout = table needs a map in [keys], expected e.g. map = 0 1 . 2 3 4 5");
			return false;
		}
		char buf[CONFIG_MAP_TEXT_MAX];
		char *words[KEYMAP_TABLE_MAX + 1];
		copy_text(buf, sizeof buf, t->map_text);
		int n = split_words(buf, words, KEYMAP_TABLE_MAX);
		if (n > KEYMAP_TABLE_MAX) {
			report_add(report, true, cfg->path, t->lines.map,
				   "map has more than %d slots, expected at most %d",
				   KEYMAP_TABLE_MAX, KEYMAP_TABLE_MAX);
			return false;
		}
		for (int i = 0; i < n; i++) {
			char why[CORE_ERROR_TEXT_MAX];
			if (!parse_slot(&out->lattice, words[i], &keys.table[i], why, sizeof why)) {
				report_add(report, true, cfg->path, t->lines.map, "%s", why);
				return false;
			}
		}
		keys.table_length = n;
	}
	if (!keymap_build(&out->keymap, &out->lattice, &keys, &err)) {
		report_add(report, true, cfg->path, line_of_field(&t->lines, err.field),
			   "%s", err.text);
		return false;
	}
	return true;
}

bool config_build_tunings(const struct config *cfg, struct tuning_set *out,
			  struct config_report *report)
{
	if (report)
		memset(report, 0, sizeof *report);
	memset(out, 0, sizeof *out);
	out->tunings = calloc((size_t)cfg->preset_count, sizeof *out->tunings);
	if (!out->tunings) {
		report_add(report, true, cfg->path, 0, "out of memory building the tunings");
		return false;
	}
	bool ok = true;
	for (int i = 0; i < cfg->preset_count; i++) {
		struct tuning *t = &out->tunings[i];
		if (!config_build_tuning(cfg, i, t, report)) {
			ok = false;
			continue;
		}
		struct engine_preset *p = &out->engine.presets[i];
		copy_text(p->name, sizeof p->name, cfg->presets[i].name);
		p->lattice = &t->lattice;
		p->keymap = &t->keymap;
	}
	out->count = out->engine.count = cfg->preset_count;
	if (!ok)
		tuning_set_free(out);
	return ok;
}

void tuning_set_free(struct tuning_set *set)
{
	free(set->tunings);
	memset(set, 0, sizeof *set);
}

void config_engine_spec(const struct config *cfg, int output, struct engine_spec *out)
{
	const struct output_config *o = &cfg->outputs[output];
	memset(out, 0, sizeof *out);
	out->output.method = o->method;
	out->output.channels = o->channels;
	out->output.bend_range = output_bend_range(o);
	out->output.bend_played = o->bend_factor;
	out->output.cents_offset = o->cents_offset;
	out->output.polyphony = o->polyphony;
	out->output.mts_device = (uint8_t)o->mts_device;
	out->output.mts_program = (uint8_t)o->mts_program;
	out->output.mts_bank = o->mts_bank;
	out->output.mts_bulk = o->mts_bulk;
	out->output.mts_key = o->mts_key;
	out->output.mpe_zone = o->mpe_zone;
	out->output.mpe_members = o->mpe_members;
	out->input.channels = cfg->input.channels;
	out->input.wheel_range_cents = cfg->input.wheel_range_cents;
	out->input.mpe = cfg->input.mpe;
	out->input.mpe_zone = cfg->input.mpe_zone;
	out->input.mpe_bend_range = cfg->input.mpe_bend_range;
	out->control.channel = cfg->control.channel;
	out->control.program_selects_preset = cfg->control.program_selects_preset;
	out->control.preset_cc = cfg->control.preset_cc;
	out->control.root_cc = cfg->control.root_cc;
	out->control.preset_keys = cfg->control.preset_keys;
	out->control.root_keys = cfg->control.root_keys;
}

int output_bend_range(const struct output_config *out)
{
	return out->bend_range;
}

static void port_spec(struct midi_io_port_spec *port, const char *name,
		      const struct connect_list *connect)
{
	memset(port, 0, sizeof *port);
	copy_text(port->name, sizeof port->name, name);
	port->connect_count = connect->count;
	for (int i = 0; i < connect->count; i++)
		copy_text(port->connect[i], sizeof port->connect[i], connect->patterns[i]);
}

void config_io_spec(const struct config *cfg, struct midi_io_spec *out)
{
	memset(out, 0, sizeof *out);
	copy_text(out->client_name, sizeof out->client_name, cfg->daemon.client_name);
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
