/*
 * config_fixture: what the config tests share: one config, report and
 * tuning (static: they are large), parsing from a string named t.conf,
 * and the check that a text is refused with exactly one error line.
 */
#ifndef LATTICED_CONFIG_FIXTURE_H
#define LATTICED_CONFIG_FIXTURE_H

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "tuning.h"

static struct config cfg;
static struct config_report report;
static struct tuning tuning;

static inline bool parse(const char *text)
{
	return config_parse(text, strlen(text), "t.conf", &cfg, &report);
}

/* Parses text expecting failure with exactly one error line containing want. */
static inline void expect_error(const char *text, const char *want)
{
	config_defaults(&cfg);
	struct config before = cfg;
	bool ok = parse(text);
	if (ok || report.error_count != 1 || !strstr(report.text, want))
		fail_msg("for\n%s\nwanted one error containing '%s', got (%d):\n%s", text, want,
			 report.error_count, report.text);
	assert_memory_equal(&before, &cfg, sizeof cfg); /* nothing half-applied */
	assert_non_null(strchr(report.text, '\n'));
	assert_ptr_equal(strchr(report.text, '\n'), report.text + report.length - 1);
}

#endif
