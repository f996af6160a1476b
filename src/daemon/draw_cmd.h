/*
 * draw_cmd: `latticed draw`, the lattice and the keyboard as standalone SVG
 * files (no script, nothing loaded from elsewhere) for print, for reading
 * on a screen, and for the live page to embed.
 *
 * The SVG is meant to be lit from outside: every tone is a group with
 * id "tone-N" and class "tone", every chord a polygon with id "chord-N"
 * and classes "chord harmonic" or "chord subharmonic", N being the index
 * `latticed table` prints; data attributes carry the tone's seeds, ratio
 * and cents, the chord's kind, tones and proportion.  Adding the class
 * "lit" to either lights it (the file's own stylesheet says how).
 *
 * The same config, preset and options give the same bytes: numbers are
 * written in fixed point, nothing depends on the clock or the locale.
 */
#ifndef LATTICED_DRAW_CMD_H
#define LATTICED_DRAW_CMD_H

#include <stddef.h>
#include <stdio.h>

#include "config.h"
#include "tuning.h"

enum draw_what { DRAW_LATTICE, DRAW_KEYS };

struct draw_request {
	const struct config *cfg;
	int preset;
	const struct tuning *tuning;
	enum draw_what what;
	int periods;               /* keys: keyboard periods, 1 or 2 */
	const char *out_path;      /* NULL or "-": standard output */
};

/* Writes the drawing; returns the exit status (0, or 1 with a message). */
int draw_run(const struct draw_request *req);

/* The heading both drawings share: "hexany: 2 of 4 seeds 1 3 5 7". */
void draw_heading(char *buf, size_t size, const struct lattice *lat);
/* "preset main, period 2/1, 1/1 is the reference pitch" */
void draw_subheading(char *buf, size_t size, const struct config *cfg, int preset,
		     const struct lattice *lat);

/* The lattice drawing's stylesheet (rules scoped to .latticed-lattice), for
 * a page that shows the drawing inline and serves the style itself. */
const char *draw_lattice_style(void);

/* The writers; 0, or -1 when memory ran out.  Output goes to f. */
int draw_lattice_svg(FILE *f, const struct config *cfg, int preset, const struct tuning *t);
int draw_keys_svg(FILE *f, const struct config *cfg, int preset, const struct tuning *t,
		  int periods);

#endif
