/*
 * config_report: whole lines only, and a last line that counts the rest.
 *
 * A line cut in half would run into whatever the caller prints next, so
 * room is kept for one closing line ("FILE: N more message(s) left out");
 * once a message does not fit, every later one only raises that count.
 */
#include "config_report.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "latticed/error.h"

#define PATH_ROOM 512

void config_report_add(struct config_report *r, bool is_error, const char *path, int line,
		       const char *fmt, ...)
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
	static const char more[] = "%s: %d more message(s) left out\n";
	char text[PATH_ROOM + sizeof body + 64];
	const char *kind = is_error ? "" : "warning: ";
	int n = line > 0 ? snprintf(text, sizeof text, "%s:%d: %s%s\n", path, line, kind, body)
			 : snprintf(text, sizeof text, "%s: %s%s\n", path, kind, body);
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
