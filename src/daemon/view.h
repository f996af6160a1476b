/*
 * view: `latticed view`, the live page, as a process of its own beside the
 * daemon (the daemon's unit keeps its network shut).
 *
 * Threads: the main thread is the link (view_link.c): it subscribes on the
 * daemon's control socket, keeps the view_model from its lines, draws the
 * lattice, and publishes the page state into struct view; libmicrohttpd's
 * threads (view_http.c, one per connection, at most VIEW_CLIENTS_MAX) serve
 * the page and push each new page state to the browsers as Server-Sent
 * Events.  They share only struct view's `lock` part: the page state
 * text, the drawing, the daemon's socket path and a version number, with a
 * condition variable that wakes the event streams.
 *
 * Control (preset, root, panic from the page) is off unless --control, and
 * then needs the token on every request (view_http.c).
 */
#ifndef LATTICED_VIEW_H
#define LATTICED_VIEW_H

#include <pthread.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "control_path.h"

#define VIEW_DEFAULT_PORT 7316
#define VIEW_CLIENTS_MAX 32          /* HTTP connections at once, event streams included */
#define VIEW_STREAMS_MAX 24          /* event streams (open pages) among them */
#define VIEW_TOKEN_MAX 128
#define VIEW_TOKEN_MIN 16

struct view {
	/* fixed before the server starts */
	bool control;
	char token[VIEW_TOKEN_MAX];
	size_t token_length;
	bool loopback;                   /* listening on a loopback address only */

	pthread_mutex_t lock;            /* guards what follows */
	pthread_cond_t changed;          /* on CLOCK_MONOTONIC; broadcast on every publish */
	bool stopping;
	uint64_t version;                /* of the page state */
	char *page;                      /* the page state (view_model_page), malloc'd */
	char *svg;                       /* the drawing, malloc'd, or NULL */
	size_t svg_length;
	bool daemon_up;
	int streams;                     /* event streams open */
	char socket_path[CONTROL_PATH_MAX]; /* where the daemon answered last */
};

/* Sets up the lock and the condition; false if pthread refuses. */
bool view_init(struct view *v);
void view_destroy(struct view *v);

/* The link publishes: takes page (malloc'd); svg is copied when given. */
void view_publish(struct view *v, char *page, const char *svg, size_t svg_length, bool new_svg,
		  bool daemon_up, const char *socket_path);

/* Wakes every event stream to end (shutdown). */
void view_stop_streams(struct view *v);

#endif
