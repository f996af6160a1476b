/*
 * view_model: what `latticed view` knows of the daemon, from the lines of
 * its subscription (subscription.h), and what the page is told.
 *
 * Model: the daemon's picture rebuilt from its lines (the state, then
 * note_on, note_off, tuning, reload, shutdown; anything else with an
 * "event" member is skipped, so a newer daemon can add events), plus the
 * drawing of the preset it plays: the config it names (or the built-in
 * defaults when it runs without one) is read and built here and drawn with
 * `latticed draw`'s lattice code, again whenever the preset, the
 * generation (a reload) or the config path changes.  A line that is not a
 * JSON object with an "event", or that lacks what its event needs, makes
 * the whole connection suspect: view_model_apply says so and the link
 * starts again.
 *
 * The page state is one JSON object: whether the daemon is there (and a
 * sentence saying what is wrong if not), preset and root with their
 * labels, the drawing's version, the tones lit (every note of the drawn
 * preset and generation that sounds on any output) and the chord they
 * make, if the lit tones are exactly one of the lattice's chords (its
 * kind, seeds and proportion).
 */
#ifndef LATTICED_VIEW_MODEL_H
#define LATTICED_VIEW_MODEL_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "config.h"
#include "latticed/engine.h"
#include "midi_io.h"
#include "tuning.h"

#define VIEW_NOTES_MAX (MIDI_IO_MAX_OUTPUTS * ENGINE_MAX_NOTES)
#define VIEW_TEXT_MAX 512

struct json_object;

struct view_note {
	int output;
	int64_t id;
	int64_t generation;
	int preset, tone;
};

struct view_model {
	bool up;                          /* a state came on the current connection */
	char message[VIEW_TEXT_MAX];      /* why it is not up; or a warning about the drawing */
	bool has_config;                  /* false: the daemon runs on the built-in defaults */
	char config_path[CONFIG_PATH_MAX];
	int preset, root, presets;
	int64_t generation;
	char preset_name[ENGINE_NAME_MAX];
	char root_label[VIEW_TEXT_MAX];
	int note_count;
	struct view_note notes[VIEW_NOTES_MAX];

	/* the drawing, and what it was made from */
	struct config *cfg;
	struct tuning *tuning;            /* NULL: nothing drawn (see drawing_error) */
	bool drawn;
	bool drawn_has_config;
	char drawn_config[CONFIG_PATH_MAX];
	int drawn_preset;
	int64_t drawn_generation;
	char drawing_error[CONFIG_PATH_MAX + VIEW_TEXT_MAX];
	char *svg;                        /* malloc'd, svg_length bytes */
	size_t svg_length;
	uint64_t drawing_version;
	uint64_t bad_values;              /* tones out of range, notes beyond the table */
};

/* Allocates the config and tuning the drawing needs; false if out of memory. */
bool view_model_init(struct view_model *m);
void view_model_free(struct view_model *m);

/* One line of the subscription, parsed.  False with a sentence in err when
 * it is not what a latticed daemon sends (the link then drops the
 * connection); *ended is set by a shutdown event. */
bool view_model_apply(struct view_model *m, struct json_object *line, bool *ended,
		      char *err, size_t err_size);

/* The daemon is gone (or not there yet): message says so, plainly. */
void view_model_down(struct view_model *m, const char *message);

/* Draws again if the preset, the generation or the config changed since
 * the last drawing; true if the drawing changed (or failed anew). */
bool view_model_redraw(struct view_model *m);

/* The page state (malloc'd JSON text), or NULL if out of memory; presets
 * lists the drawn config's preset names, control says whether the page
 * may offer its buttons. */
char *view_model_page(const struct view_model *m, bool control);

#endif
