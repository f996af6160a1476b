/*
 * config_report: the messages of reading a config, one per line.
 *
 * Model: a fixed buffer of whole lines "FILE:LINE: text\n" (or "FILE: text\n"
 * when no line applies), errors and warnings counted apart.  A line never
 * goes in cut short: when the buffer is full, one closing line says how
 * many messages were left out, rewritten as the count grows.  Fixed size,
 * so a report can be kept, copied and printed by any thread.
 */
#ifndef LATTICED_CONFIG_REPORT_H
#define LATTICED_CONFIG_REPORT_H

#include <stdbool.h>
#include <stddef.h>

#define CONFIG_REPORT_MAX 8192

struct config_report {
	int error_count;
	int warning_count;
	size_t length;
	char text[CONFIG_REPORT_MAX];
	int left_out;                  /* messages that did not fit (counted in the last line) */
	size_t closing_at;             /* where that last line starts */
};

/* Adds one message about `path` (line 0: the file as a whole); r may be NULL. */
void config_report_add(struct config_report *r, bool is_error, const char *path, int line,
		       const char *fmt, ...) __attribute__((format(printf, 5, 6)));

#endif
