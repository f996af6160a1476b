/*
 * input_control: what the input thread says about the player's controls
 * (model in input_control.h).
 *
 * Every engine is given the same steering messages and so misses, steps
 * and panics alike; the first output's engine speaks for all of them and
 * the others' misses are only cleared.  A miss is logged at most once a
 * second: one not yet due stays in the engine, which counts the later ones
 * into it, so the line that comes says how many there were.  The loop
 * wakes at least once a heartbeat, so a waiting miss is logged within
 * about two seconds.
 */
#include "input_control.h"

#include <stdio.h>
#include <string.h>

#include "clock.h"
#include "control_commands.h"
#include "notice_text.h"
#include "tuning.h"

#define MISS_LOG_INTERVAL_MS 1000

void input_control_report(struct input_thread *t)
{
	if (t->output_count == 0)
		return;
	struct engine *first = &t->outputs[0].engine;
	for (int k = 1; k < t->output_count; k++) {
		struct engine_control_miss ignored;
		(void)engine_take_control_miss(&t->outputs[k].engine, &ignored);
	}
	uint32_t panics = engine_stats(first)->control_panics;
	if (panics != t->control_panics_logged) {
		log_ring_post(&t->log, LOG_LEVEL_NOTICE,
			      "control: panic from the instrument: every note on every output ended (%u so far)",
			      panics);
		t->control_panics_logged = panics;
		t->wake_main = true;
	}
	int64_t now = monotonic_ms();
	if (t->miss_logged_ms && now - t->miss_logged_ms < MISS_LOG_INTERVAL_MS)
		return;
	struct engine_control_miss miss;
	if (!engine_take_control_miss(first, &miss))
		return;
	char line[LOG_RECORD_TEXT];
	notice_text_control_miss(&miss, &engine_spec_of(first)->control, line, sizeof line);
	if (miss.count > 1)
		log_ring_post(&t->log, LOG_LEVEL_WARNING, "%s (%u times since the last such line)", line,
			      miss.count);
	else
		log_ring_post(&t->log, LOG_LEVEL_WARNING, "%s", line);
	t->miss_logged_ms = now;
	t->wake_main = true;
}

void input_control_root_label(const struct engine *e, char *buf, size_t size)
{
	int root = engine_root(e);
	if (root == 0) {
		snprintf(buf, size, "home");
		return;
	}
	const struct lattice *lat = engine_current_preset(e)->lattice;
	lattice_label(&lat->spec, lat->tones[root - 1].seeds, buf, size);
}

/* "1.3, 1.5, 1.7, ..." as far as it fits, then how many more. */
static void list_labels(const struct lattice *lat, char *buf, size_t size)
{
	size_t used = 0;
	buf[0] = '\0';
	for (int i = 0; i < lat->tone_count; i++) {
		char label[LATTICE_LABEL_MAX];
		lattice_label(&lat->spec, lat->tones[i].seeds, label, sizeof label);
		if (used + strlen(label) + 24 > size) {
			snprintf(buf + used, size - used, "%sand %d more", used ? ", " : "", lat->tone_count - i);
			return;
		}
		used += (size_t)snprintf(buf + used, size - used, "%s%s", used ? ", " : "", label);
	}
}

bool input_control_root_slot(const struct engine *e, const struct request *r, int *slot,
			     char *why, size_t why_size)
{
	const struct engine_preset *p = engine_current_preset(e);
	const struct lattice *lat = p->lattice;
	int tones = lat->tone_count;
	int found = tuning_root_slot(lat, r->text);
	if (found >= 0) {
		*slot = found;
		return true;
	}
	int number;
	if (control_command_number(r->text, &number)) {
		snprintf(why, why_size, "root %d is out of range, expected home, 0 (home) to %d, or a tone label: preset %s has %d tones",
			 number, tones, p->name, tones);
		return false;
	}
	char labels[160];
	list_labels(lat, labels, sizeof labels);
	snprintf(why, why_size, "root '%.40s' is not a tone of preset %s, expected home, a number from 0 (home) to %d, or one of its tone labels: %s",
		 r->text, p->name, tones, labels);
	return false;
}

void input_control_kept_text(enum engine_kept kept, const char *old_preset, const char *old_root,
			     const struct engine *e, char *buf, size_t size)
{
	char root[LATTICE_LABEL_MAX];
	input_control_root_label(e, root, sizeof root);
	const char *now = engine_current_preset(e)->name;
	switch (kept) {
	case ENGINE_KEPT_PRESET_AND_ROOT:
		snprintf(buf, size, "still on preset %s, root %s", now, root);
		break;
	case ENGINE_KEPT_PRESET:
		snprintf(buf, size, "still on preset %s; root reset to home: %.40s is no longer a tone of %s",
			 now, old_root, now);
		break;
	case ENGINE_KEPT_NOTHING:
		snprintf(buf, size, "preset %s is gone: now on preset %s, root home%s%.40s%s", old_preset, now,
			 strcmp(old_root, "home") ? " (was " : "", strcmp(old_root, "home") ? old_root : "",
			 strcmp(old_root, "home") ? ")" : "");
		break;
	}
}
