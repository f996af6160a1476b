/*
 * view_http: the page of `latticed view` over HTTP, with libmicrohttpd.
 *
 * Resources (GET and HEAD): / the page, /view.js, /view.css (the page's
 * style and the lattice drawing's own), /lattice.svg the drawing of the
 * preset the daemon plays, /state the page state as JSON, /events the page
 * state as Server-Sent Events (a message now, then one per change, a
 * comment every VIEW_KEEPALIVE_S so proxies and phones keep the stream).
 * POST /control with `panic`, `preset NAME` or `root N` as the body (text,
 * at most VIEW_BODY_MAX bytes) and the token in the X-Latticed-Token
 * header, only with --control: the request goes to the daemon's control
 * socket and its answer comes back as JSON.
 *
 * Limits: VIEW_CLIENTS_MAX connections at once (libmicrohttpd takes no
 * more until one ends), of which at most VIEW_STREAMS_MAX event streams (a
 * page more gets 503 and its script tries again), so open pages cannot
 * keep a page load out; request headers within VIEW_HEADERS_MAX bytes, bodies
 * within VIEW_BODY_MAX (413 otherwise), a connection quiet for
 * VIEW_IDLE_S closed, an event stream whose browser takes nothing for
 * VIEW_STREAM_IDLE_S too.
 * Every answer carries a Content-Security-Policy that allows only this
 * server's own script, style and connections, no framing, no referrer;
 * there is no CORS header at all, so other sites' pages cannot read it or
 * send the token header.  Listening on a loopback address, a request whose
 * Host is not a loopback name is refused (421), so a web page elsewhere
 * cannot reach it by rebinding its DNS name to 127.0.0.1.  A wrong token
 * is refused (403) with a log line at most every 10 s.
 */
#ifndef LATTICED_VIEW_HTTP_H
#define LATTICED_VIEW_HTTP_H

#include <stdbool.h>
#include <stddef.h>
#include <sys/socket.h>

#include "view.h"

#define VIEW_BODY_MAX 256
#define VIEW_HEADERS_MAX 16384
#define VIEW_IDLE_S 10               /* a connection with nothing to do */
#define VIEW_STREAM_IDLE_S 30        /* an event stream whose browser takes nothing */
#define VIEW_KEEPALIVE_S 15

struct view_server;

/* Listens at addr and serves v from libmicrohttpd's threads; NULL with
 * one line in err (e.g. the port is taken). */
struct view_server *view_http_start(struct view *v, const struct sockaddr *addr, char *err,
				    size_t err_size);
void view_http_stop(struct view_server *s);

/* Compares a token in time that does not depend on where they differ. */
bool view_token_matches(const char *given, const char *want, size_t want_length);

#endif
