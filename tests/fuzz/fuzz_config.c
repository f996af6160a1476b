/*
 * fuzz_config: the latticed.conf reader on arbitrary text, then the
 * tunings and one engine per output built from whatever it accepts.
 *
 * Checked, abort() on the first failure:
 *   - config_parse refuses with at least one error, and every line of its
 *     report starts with the file name ("fuzz.conf:LINE: ..." or
 *     "fuzz.conf: ...") and ends in a newline; the caller's config is left
 *     as it was on a refusal;
 *   - on success, tuning_set_build either builds every preset or
 *     refuses with an error line in the same form;
 *   - on success, every output's engine spec is one engine_init takes (the
 *     config reader checks every value an engine needs), and the engine
 *     starts; its messages are valid MIDI 1.0 (the encoder accepts them).
 */
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "tuning.h"
#include "latticed/engine.h"
#include "latticed/midi_encoder.h"

#define PATH "fuzz.conf"

static void die(const char *what)
{
	fprintf(stderr, "fuzz_config: %s\n", what);
	abort();
}

static void check_report(const struct config_report *r, bool want_error)
{
	if (want_error && r->error_count == 0)
		die("a refusal with no error in the report");
	if (r->length >= sizeof r->text || strlen(r->text) != r->length)
		die("the report's length is wrong");
	const char *p = r->text;
	while (*p) {
		const char *nl = strchr(p, '\n');
		if (!nl)
			die("a report line does not end in a newline");
		if (strncmp(p, PATH ":", strlen(PATH ":")) != 0) {
			fprintf(stderr, "%.*s\n", (int)(nl - p), p);
			die("a report line does not start with the file name");
		}
		p = nl + 1;
	}
}

static void emit(void *context, const struct midi_msg *m)
{
	(void)context;
	uint8_t bytes[ENGINE_SYSEX_MAX + 8];
	if (midi_msg_encode(m, bytes, sizeof bytes) == 0)
		die("the engine sent an invalid message at start");
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
	static struct config cfg, untouched;
	static struct config_report report;
	static struct engine engine;
	memset(&cfg, 0xA5, sizeof cfg);
	memcpy(&untouched, &cfg, sizeof cfg);
	if (!config_parse((const char *)data, size, PATH, &cfg, &report)) {
		check_report(&report, true);
		if (memcmp(&cfg, &untouched, sizeof cfg) != 0)
			die("a refused config changed the caller's struct");
		return 0;
	}
	check_report(&report, false);
	if (cfg.preset_count < 1 || cfg.preset_count > CONFIG_MAX_PRESETS ||
	    cfg.output_count < 1 || cfg.output_count > CONFIG_MAX_OUTPUTS)
		die("an accepted config has no preset or no output");

	struct tuning_set set;
	if (!tuning_set_build(&cfg, &set, &report)) {
		check_report(&report, true);
		return 0;
	}
	check_report(&report, false);
	for (int i = 0; i < cfg.output_count; i++) {
		struct engine_spec spec;
		struct core_error err;
		config_engine_spec(&cfg, i, &spec);
		if (!engine_init(&engine, &spec, &set.engine, emit, NULL, &err)) {
			fprintf(stderr, "output %s: %s\n", cfg.outputs[i].name, err.text);
			die("engine_init refused an accepted config");
		}
		engine_start(&engine);
	}
	tuning_set_free(&set);
	return 0;
}
