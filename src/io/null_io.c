/*
 * null_io: a backend with no MIDI at all.  It accepts every message and
 * delivers none, so the daemon can run (and be tested) where no MIDI
 * system exists; serviced on a slow tick because it has no descriptor.
 */
#include <stdlib.h>

#include "midi_io.h"

struct midi_io {
	int unused;
};

static struct midi_io *null_open(const struct midi_io_spec *spec,
				 const struct midi_io_callbacks *callbacks,
				 char *err, size_t err_size)
{
	(void)spec;
	(void)callbacks;
	(void)err;
	(void)err_size;
	return calloc(1, sizeof(struct midi_io));
}

static int null_input_fds(struct midi_io *io, struct pollfd *fds, int max, int *tick_ms)
{
	(void)io;
	(void)fds;
	(void)max;
	*tick_ms = 1000;
	return 0;
}

static void null_service_input(struct midi_io *io)
{
	(void)io;
}

static bool null_send(struct midi_io *io, int output, const uint8_t *bytes, size_t length)
{
	(void)io;
	(void)output;
	(void)bytes;
	(void)length;
	return true;
}

static bool null_flush(struct midi_io *io)
{
	(void)io;
	return true;
}

static void null_describe(struct midi_io *io, midi_io_line_fn line, void *context)
{
	(void)io;
	line(context, "null backend: no MIDI ports");
}

static bool null_list(midi_io_line_fn line, void *context, char *err, size_t err_size)
{
	(void)err;
	(void)err_size;
	line(context, "null backend: no MIDI ports");
	return true;
}

static void null_close(struct midi_io *io)
{
	free(io);
}

const struct midi_io_backend midi_io_null = {
	.name = "null",
	.open = null_open,
	.input_fds = null_input_fds,
	.service_input = null_service_input,
	.send = null_send,
	.flush = null_flush,
	.describe = null_describe,
	.list = null_list,
	.close = null_close,
};
