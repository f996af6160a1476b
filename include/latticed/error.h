/*
 * error: how the core says what went wrong.
 *
 * The core never prints and never exits.  A function that can fail takes a
 * struct core_error and, on failure, writes one sentence into it: what is
 * wrong and what was expected, without a file name (the caller knows where
 * the value came from and prefixes FILE:LINE).  `field` names the spec
 * field at fault so the config layer can point at the right line.
 */
#ifndef LATTICED_ERROR_H
#define LATTICED_ERROR_H

#include <stdbool.h>

#define CORE_ERROR_TEXT_MAX 256

struct core_error {
	char field[32];
	char text[CORE_ERROR_TEXT_MAX];
};

#if defined(__GNUC__)
#define CORE_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define CORE_PRINTF(a, b)
#endif

/* Fills err (if not NULL) and returns false, so callers can `return core_fail(...)`. */
bool core_fail(struct core_error *err, const char *field, const char *fmt, ...)
	CORE_PRINTF(3, 4);

#endif
