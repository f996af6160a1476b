/*
 * view_stream: /events, the page state of `latticed view` as Server-Sent
 * Events: the current state at once (with a retry time of 1 s for the
 * browser), then one message per change, and a comment every
 * VIEW_KEEPALIVE_S when nothing changes.  At most VIEW_STREAMS_MAX streams
 * are open; one more is answered 503 and closed, so open pages never keep
 * a page load out.  A stream's socket gets a small send buffer, so a
 * browser that takes nothing is found out after kilobytes and closed by
 * libmicrohttpd after VIEW_STREAM_IDLE_S.
 */
#ifndef LATTICED_VIEW_STREAM_H
#define LATTICED_VIEW_STREAM_H

#include <microhttpd.h>

#include "view.h"

enum MHD_Result view_stream_serve(struct view *v, struct MHD_Connection *c);

#endif
