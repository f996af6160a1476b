/*
 * config_ini: the first pass over a config, INI syntax to entries.
 *
 * Model: inih reads the syntax; we feed it line by line through our own
 * reader, so every entry knows its line (Debian builds inih without
 * handler line numbers), section headers are seen even when the section
 * is empty (an [output NAME] with no keys still makes an output), and an
 * over-long line is refused instead of split.  An indented line that inih
 * reports as a repeat of the key above is joined to its value (a
 * continuation), which a true repeat is not, so the second pass can tell
 * the two apart.  Nothing is interpreted here beyond knowing which
 * section names exist.
 */
#ifndef LATTICED_CONFIG_INI_H
#define LATTICED_CONFIG_INI_H

#include <stdbool.h>
#include <stddef.h>

#include "config_report.h"

#define CONFIG_ENTRY_MAX 1024
#define CONFIG_VALUE_MAX 4096
#define CONFIG_SECTION_TEXT_MAX 64

struct config_entry {
	char section[CONFIG_SECTION_TEXT_MAX]; /* as written: "output synth"; "" before any header */
	char key[CONFIG_SECTION_TEXT_MAX];     /* "": the [section] header itself */
	char value[CONFIG_VALUE_MAX];
	int line;
	bool in_known_section;                 /* else the header was already reported */
};

struct config_entries {
	int count;
	struct config_entry *entry;            /* CONFIG_ENTRY_MAX of them, the caller's */
	int errors;                            /* reported while reading */
};

/* Reads `length` bytes of text named `path` in messages into `out`. */
void config_ini_read(const char *text, size_t length, const char *path,
		     struct config_entries *out, struct config_report *report);

#endif
