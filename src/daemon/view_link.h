/*
 * view_link: `latticed view`'s connection to the daemon.
 *
 * Model: connect to the first control socket that answers (--socket, else
 * the places `latticed status` tries), send `subscribe`, and read its lines
 * into the view_model, publishing the page state after each read; when the
 * daemon goes (end of stream, shutdown event, a broken line) say so on the
 * page at once and try again, 250 ms after a connection that worked and
 * then doubling up to VIEW_RETRY_MAX_MS, for ever.  A peer that sends
 * something a latticed daemon would not (not JSON, a line longer than
 * VIEW_LINE_MAX, no state within VIEW_FIRST_LINE_MS) is logged once with
 * what it sent and treated like a daemon that went away.  Log lines come
 * on changes only (connected, lost, a new reason it cannot connect), not
 * on every retry.  The waits are ppoll()s with the run mask, so SIGTERM
 * and SIGINT end the loop at once.
 */
#ifndef LATTICED_VIEW_LINK_H
#define LATTICED_VIEW_LINK_H

#include <signal.h>
#include <stdbool.h>

#include "control_path.h"
#include "view.h"
#include "view_model.h"

#define VIEW_LINE_MAX (1 << 20)
#define VIEW_FIRST_LINE_MS 5000
#define VIEW_RETRY_MIN_MS 250
#define VIEW_RETRY_MAX_MS 2000

struct view_link {
	int path_count;
	char paths[CONTROL_PATH_CANDIDATES][CONTROL_PATH_MAX];
	struct view_model model;
	char *buf;                       /* a line being read, up to VIEW_LINE_MAX */
	size_t length, capacity;
	char last_trouble[VIEW_TEXT_MAX];/* the last reason logged, to log each once */
};

/* The flags the signal handlers set; the loop ends when quit is set. */
extern volatile sig_atomic_t view_quit;

/* Runs until view_quit; run_mask: the signal mask inside ppoll. */
void view_link_run(struct view_link *l, struct view *v, const sigset_t *run_mask);

#endif
