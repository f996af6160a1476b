/*
 * config_ini: our line reader in front of inih.
 *
 * inih asks for lines through read_line(); each line handed over is
 * counted, checked (length, NUL bytes) and looked at for a [section]
 * header before inih sees it.  A refused line is replaced by an empty one
 * so inih's own line numbers stay right for its syntax errors.
 */
#include "config_ini.h"

#include <ini.h>
#include <stdio.h>
#include <string.h>

#include "config_keys.h"
#include "config_values.h"

struct reader {
	const char *cursor, *end;
	const char *path;
	int line;                 /* of the line last handed to inih */
	bool line_indented;
	bool section_known;
	struct config_entries *out;
	struct config_report *report;
};

static struct config_entry *new_entry(struct reader *r)
{
	struct config_entries *out = r->out;
	if (out->count >= CONFIG_ENTRY_MAX) {
		config_report_add(r->report, true, r->path, r->line,
				  "more than %d settings, expected a config file", CONFIG_ENTRY_MAX);
		out->errors++;
		return NULL;
	}
	struct config_entry *e = &out->entry[out->count++];
	memset(e, 0, sizeof *e);
	e->line = r->line;
	return e;
}

/* Records a [section] header as an entry with an empty key, or reports an
 * unknown one (its keys are then skipped without more messages). */
static void inspect_section_line(struct reader *r, const char *line)
{
	const char *p = line;
	while (*p == ' ' || *p == '\t')
		p++;
	if (*p != '[')
		return;
	const char *close = strchr(p, ']');
	if (!close)
		return; /* inih reports the syntax error */
	char name[CONFIG_SECTION_TEXT_MAX];
	size_t len = (size_t)(close - p - 1);
	if (len >= sizeof name)
		len = sizeof name - 1;
	memcpy(name, p + 1, len);
	name[len] = '\0';
	text_trim(name);
	r->section_known = config_section_family(name) != NULL;
	if (!r->section_known) {
		char known[256];
		config_section_list(known, sizeof known);
		config_report_add(r->report, true, r->path, r->line,
				  "unknown section [%s], expected %s", name, known);
		r->out->errors++;
		return;
	}
	struct config_entry *e = new_entry(r);
	if (!e)
		return;
	text_copy(e->section, sizeof e->section, name);
	e->in_known_section = true;
}

/* inih's reader: one line of at most num - 1 bytes into str. */
static char *read_line(char *str, int num, void *stream)
{
	struct reader *r = stream;
	if (r->cursor >= r->end)
		return NULL;
	const char *nl = memchr(r->cursor, '\n', (size_t)(r->end - r->cursor));
	const char *stop = nl ? nl + 1 : r->end;
	size_t len = (size_t)(stop - r->cursor);
	r->line++;
	r->cursor = stop;
	r->line_indented = false;
	if (len > (size_t)num - 1) {
		config_report_add(r->report, true, r->path, r->line,
				  "line is %zu characters long, expected at most %d; continue a long value on indented lines",
				  len - (nl ? 1 : 0), num - 2);
		r->out->errors++;
		str[0] = '\n';
		str[1] = '\0';
		return str;
	}
	memcpy(str, stop - len, len);
	str[len] = '\0';
	if (memchr(str, '\0', len) != NULL) {
		config_report_add(r->report, true, r->path, r->line,
				  "line contains a NUL byte, expected text");
		r->out->errors++;
		str[0] = '\n';
		str[1] = '\0';
	}
	r->line_indented = (str[0] == ' ' || str[0] == '\t');
	inspect_section_line(r, str);
	return str;
}

/* inih's handler: a new entry, or the continuation of the one above. */
static int collect(void *user, const char *section, const char *name, const char *value)
{
	struct reader *r = user;
	struct config_entries *out = r->out;
	struct config_entry *prev = out->count > 0 ? &out->entry[out->count - 1] : NULL;
	if (r->line_indented && prev && strcmp(prev->key, name) == 0 &&
	    strcmp(prev->section, section) == 0) {
		size_t used = strlen(prev->value);
		if (used + 1 + strlen(value) >= sizeof prev->value) {
			config_report_add(r->report, true, r->path, r->line,
					  "value of '%s' is longer than %d characters",
					  name, CONFIG_VALUE_MAX - 1);
			out->errors++;
			return 1;
		}
		snprintf(prev->value + used, sizeof prev->value - used, " %s", value);
		return 1;
	}
	struct config_entry *e = new_entry(r);
	if (!e)
		return 1;
	text_copy(e->section, sizeof e->section, section);
	text_copy(e->key, sizeof e->key, name);
	text_copy(e->value, sizeof e->value, value);
	e->in_known_section = r->section_known;
	return 1;
}

void config_ini_read(const char *text, size_t length, const char *path,
		     struct config_entries *out, struct config_report *report)
{
	struct reader r = {
		.cursor = text, .end = text + length, .path = path,
		.section_known = true, .out = out, .report = report,
	};
	int syntax_line = ini_parse_stream(read_line, &r, collect, &r);
	if (syntax_line > 0)
		config_report_add(report, true, path, syntax_line,
				  "cannot read this line, expected '[section]', 'key = value' or a '; comment'");
	else if (syntax_line < 0)
		config_report_add(report, true, path, 0, "out of memory reading the config");
	if (syntax_line != 0)
		out->errors++;
}
