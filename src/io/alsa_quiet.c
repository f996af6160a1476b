/*
 * alsa_quiet: alsa-lib's error lines silenced (see alsa_quiet.h).
 */
#include "alsa_quiet.h"

#include <alsa/asoundlib.h>

static void ignore(const char *file, int line, const char *function, int err, const char *fmt, ...)
{
	(void)file;
	(void)line;
	(void)function;
	(void)err;
	(void)fmt;
}

void alsa_quiet_lib_errors(void)
{
	snd_lib_error_set_handler(ignore);
}
