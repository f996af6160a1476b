/*
 * engine_harness: drives an engine in tests and records what it sends.
 *
 * Every message the engine emits is encoded to bytes with the project's
 * encoder and appended to a byte log, so the checks read the stream as a
 * synth would: through the test's own decoder (synth_model.h), not
 * through the engine's structures.
 */
#ifndef LATTICED_ENGINE_HARNESS_H
#define LATTICED_ENGINE_HARNESS_H

#include <stdint.h>
#include <string.h>

#include "latticed/engine.h"
#include "latticed/midi_encoder.h"

#define HARNESS_LOG_MAX (1 << 16)

struct harness {
	struct engine engine;
	uint8_t log[HARNESS_LOG_MAX];
	size_t length;
	int messages;
	/* a callback run on every emitted message's bytes (for models) */
	void (*tap)(void *context, const uint8_t *bytes, size_t n);
	void *tap_context;
};

static void harness_emit(void *context, const struct midi_msg *m)
{
	struct harness *h = context;
	uint8_t bytes[ENGINE_SYSEX_MAX + 8];
	size_t n = midi_msg_encode(m, bytes, sizeof bytes);
	if (n == 0) {
		fprintf(stderr, "engine emitted an invalid message (status %02X)\n", m->status);
		abort();
	}
	if (h->tap)
		h->tap(h->tap_context, bytes, n);
	if (h->length + n > sizeof h->log)
		h->length = 0; /* long runs only use the tap */
	memcpy(h->log + h->length, bytes, n);
	h->length += n;
	h->messages++;
}

static void harness_clear(struct harness *h)
{
	h->length = 0;
	h->messages = 0;
}

static void harness_send(struct harness *h, uint8_t status, uint8_t d1, uint8_t d2)
{
	struct midi_msg m = midi_msg_make(status, d1, d2);
	engine_handle(&h->engine, 0, &m);
}

#endif
