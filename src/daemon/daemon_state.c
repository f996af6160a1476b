/*
 * daemon_state: the main thread's side of the state file (state_file.h):
 * where a restarted daemon resumes, and keeping the file up to date.
 *
 * At start, before the MIDI threads run, the file is read and every engine
 * is put in its preset and root (engine_resume_at: nothing is sent before
 * the synth's set-up).  A file that cannot be read, is corrupt, was
 * written for another config or names a preset this config no longer has
 * is ignored with one log line naming the file and why; a root that is no
 * longer a tone of its preset gives that preset at home, with a line too.
 *
 * Afterwards the input thread reports every change of preset or root
 * (REPLY_TUNING_STATE, from a control request or from MIDI alike) and the
 * main thread writes the file, never the MIDI threads: at once, unless it
 * was written less than STATE_WRITE_GAP_MS ago (a knob swept over root_cc
 * must not cost a hundred fsyncs on an SD card), then when that gap has
 * passed, and at the end of an orderly stop.
 */
/* realpath(3) is X/Open */
#define _XOPEN_SOURCE 700

#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "clock.h"
#include "daemon_private.h"
#include "tuning.h"

#define STATE_WRITE_GAP_MS 500

/* The config file a state belongs to, as one absolute name. */
static void config_identity(const struct daemon *d, char *out, size_t size)
{
	char resolved[PATH_MAX];
	if (!d->config_path[0])
		snprintf(out, size, "(built-in defaults)");
	else if (realpath(d->config_path, resolved))
		text_copy(out, size, resolved);
	else
		text_copy(out, size, d->config_path);
}

static void start_at_home(struct daemon *d, const char *why)
{
	log_print(LOG_LEVEL_WARNING, "state: %s ignored: %s; starting on preset %s, at home",
		  d->state_path, why, d->tunings->engine.presets[0].name);
}

/* Where the state says to resume; false (logged) when it cannot be used. */
static bool resume_point(struct daemon *d, const struct state *s, int *preset, int *slot)
{
	char why[CONFIG_PATH_MAX + 128];
	const struct engine_tunings *tunings = &d->tunings->engine;
	if (strcmp(s->config, d->state_config) != 0) {
		snprintf(why, sizeof why, "it was written for %.200s, not %.200s", s->config, d->state_config);
		start_at_home(d, why);
		return false;
	}
	*preset = -1;
	for (int i = 0; i < tunings->count && *preset < 0; i++)
		if (strcmp(tunings->presets[i].name, s->preset) == 0)
			*preset = i;
	if (*preset < 0) {
		snprintf(why, sizeof why, "preset '%s' is no longer in the config", s->preset);
		start_at_home(d, why);
		return false;
	}
	*slot = 0;
	if (strcmp(s->root, "home") != 0) {
		*slot = lattice_find_tone(tunings->presets[*preset].lattice, s->root) + 1;
		if (*slot == 0)
			log_print(LOG_LEVEL_WARNING,
				  "state: %s: root %.64s is no longer a tone of preset %s; starting on it at home",
				  d->state_path, s->root, s->preset);
	}
	return true;
}

void daemon_state_resume(struct daemon *d)
{
	char why[CONFIG_PATH_MAX + 128];
	d->state_dirty = false;
	d->state_written_ms = 0;
	config_identity(d, d->state_config, sizeof d->state_config);
	snprintf(d->state, sizeof d->state, "preset %s, root home", d->tunings->engine.presets[0].name);
	if (!state_file_locate(d->cfg->daemon.state_file, d->state_path, sizeof d->state_path,
			       &d->state_make_parents, why, sizeof why)) {
		d->state_path[0] = '\0';
		if (why[0])
			log_print(LOG_LEVEL_WARNING, "state: %s; the preset and root will not survive a restart", why);
		return;
	}
	struct state s;
	enum state_read got = state_file_read(d->state_path, &s, why, sizeof why);
	if (got == STATE_ABSENT)
		return;
	if (got == STATE_BAD) {
		start_at_home(d, why);
		return;
	}
	int preset, slot;
	if (!resume_point(d, &s, &preset, &slot))
		return;
	for (int k = 0; k < d->in->output_count; k++)
		(void)engine_resume_at(&d->in->outputs[k].engine, preset, slot);
	d->state_written = s; /* what the file holds already */
	snprintf(d->state, sizeof d->state, "preset %s, root %.64s", s.preset, slot ? s.root : "home");
	log_print(LOG_LEVEL_NOTICE, "state: resuming %s (from %s)", d->state, d->state_path);
}

void daemon_state_changed(struct daemon *d, const struct reply *rep)
{
	if (!d->state_path[0])
		return;
	snprintf(d->state_next.config, sizeof d->state_next.config, "%s", d->state_config);
	snprintf(d->state_next.preset, sizeof d->state_next.preset, "%s", rep->preset);
	snprintf(d->state_next.root, sizeof d->state_next.root, "%s", rep->root);
	d->state_dirty = memcmp(&d->state_next, &d->state_written, sizeof d->state_next) != 0;
	daemon_state_save(d, false);
}

void daemon_state_save(struct daemon *d, bool now)
{
	if (!d->state_dirty)
		return;
	int64_t t = monotonic_ms();
	if (!now && d->state_written_ms && t - d->state_written_ms < STATE_WRITE_GAP_MS)
		return;
	char why[256];
	d->state_written_ms = t;
	if (!state_file_write(d->state_path, d->state_make_parents, &d->state_next, why, sizeof why)) {
		/* tried again after the gap, logged once until it works */
		if (!d->state_error_logged)
			log_print(LOG_LEVEL_ERROR, "state: cannot write %s: %s; a restart would not come back to %s, root %.64s",
				  d->state_path, why, d->state_next.preset, d->state_next.root);
		d->state_error_logged = true;
		return;
	}
	if (d->state_error_logged)
		log_print(LOG_LEVEL_NOTICE, "state: %s written again", d->state_path);
	d->state_error_logged = false;
	d->state_dirty = false;
	d->state_written = d->state_next;
}

int daemon_state_timeout_ms(const struct daemon *d)
{
	if (!d->state_dirty)
		return -1;
	int64_t left = d->state_written_ms + STATE_WRITE_GAP_MS - monotonic_ms();
	return left > 0 ? (int)left : 0;
}
