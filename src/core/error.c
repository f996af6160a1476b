/*
 * error: fills a struct core_error.  Kept apart so every core module can
 * report without depending on another.
 */
#include "latticed/error.h"

#include <stdarg.h>
#include <stdio.h>

bool core_fail(struct core_error *err, const char *field, const char *fmt, ...)
{
	if (err) {
		va_list ap;
		va_start(ap, fmt);
		vsnprintf(err->text, sizeof err->text, fmt, ap);
		va_end(ap);
		snprintf(err->field, sizeof err->field, "%s", field ? field : "");
	}
	return false;
}
