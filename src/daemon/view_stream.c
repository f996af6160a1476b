/*
 * view_stream: see view_stream.h.  libmicrohttpd runs a thread per
 * connection (MHD_USE_THREAD_PER_CONNECTION), so an event stream's reader
 * may block: it waits on the view's condition for a new page state, half a
 * second at a time, looking in between whether the browser hung up, so a
 * closed tab frees its connection within a second rather than at the next
 * message.
 */
#define _GNU_SOURCE /* POLLRDHUP */
#include "view_stream.h"

#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <time.h>

#include "clock.h"
#include "view_http.h"
#include "view_response.h"

#define STREAM_WAIT_MS 500
#define STREAM_SNDBUF 16384

struct stream {
	struct view *v;
	int fd;                      /* the browser's socket, to see it hang up */
	uint64_t sent;               /* version of the page state it has */
	int64_t last_ms;             /* when something last went out */
	bool first;
	char *out;                   /* a message not yet all handed over */
	size_t out_length, out_sent;
};

static bool hung_up(int fd)
{
	struct pollfd p = {.fd = fd, .events = POLLRDHUP};
	return fd >= 0 && poll(&p, 1, 0) > 0 && (p.revents & (POLLRDHUP | POLLHUP | POLLERR));
}

static void wait_a_little(struct view *v)
{
	struct timespec until;
	clock_gettime(CLOCK_MONOTONIC, &until);
	until.tv_nsec += STREAM_WAIT_MS * 1000000L;
	until.tv_sec += until.tv_nsec / 1000000000L;
	until.tv_nsec %= 1000000000L;
	pthread_cond_timedwait(&v->changed, &v->lock, &until);
}

/* The next message: the page state when it changed, else a keep-alive
 * comment when one is due; NULL to end the stream. */
static char *next_message(struct stream *st)
{
	struct view *v = st->v;
	char *msg = NULL;
	pthread_mutex_lock(&v->lock);
	for (;;) {
		if (v->stopping)
			break;
		if (v->page && (st->first || v->version != st->sent)) {
			size_t n = strlen(v->page) + 32;
			msg = malloc(n);
			if (msg)
				snprintf(msg, n, "%sdata: %s\n\n", st->first ? "retry: 1000\n" : "", v->page);
			st->sent = v->version;
			st->first = false;
			break;
		}
		if (monotonic_ms() - st->last_ms >= VIEW_KEEPALIVE_S * 1000) {
			msg = strdup(": still here\n\n");
			break;
		}
		wait_a_little(v);
		if (hung_up(st->fd))
			break;
	}
	pthread_mutex_unlock(&v->lock);
	return msg;
}

static ssize_t stream_read(void *context, uint64_t pos, char *buf, size_t max)
{
	struct stream *st = context;
	(void)pos;
	if (!st->out) {
		st->out = next_message(st);
		if (!st->out)
			return MHD_CONTENT_READER_END_OF_STREAM;
		st->out_length = strlen(st->out);
		st->out_sent = 0;
	}
	size_t n = st->out_length - st->out_sent < max ? st->out_length - st->out_sent : max;
	memcpy(buf, st->out + st->out_sent, n);
	st->out_sent += n;
	if (st->out_sent == st->out_length) {
		free(st->out);
		st->out = NULL;
	}
	st->last_ms = monotonic_ms();
	return (ssize_t)n;
}

static void stream_free_place(struct view *v)
{
	pthread_mutex_lock(&v->lock);
	v->streams--;
	pthread_mutex_unlock(&v->lock);
}

static void stream_free(void *context)
{
	struct stream *st = context;
	stream_free_place(st->v);
	free(st->out);
	free(st);
}

/* A place for one more event stream; false when VIEW_STREAMS_MAX are open. */
static bool take_stream(struct view *v)
{
	pthread_mutex_lock(&v->lock);
	bool room = v->streams < VIEW_STREAMS_MAX;
	v->streams += room;
	pthread_mutex_unlock(&v->lock);
	return room;
}

enum MHD_Result view_stream_serve(struct view *v, struct MHD_Connection *c)
{
	if (!take_stream(v)) {
		struct MHD_Response *busy = MHD_create_response_from_buffer(
			0, (void *)"", MHD_RESPMEM_PERSISTENT);
		if (busy) {
			MHD_add_response_header(busy, MHD_HTTP_HEADER_CONNECTION, "close"); /* free the place now */
			MHD_add_response_header(busy, MHD_HTTP_HEADER_RETRY_AFTER, "2");
		}
		return view_queue(c, MHD_HTTP_SERVICE_UNAVAILABLE, busy, "text/plain", view_page_policy);
	}
	/* a stream is quiet up to VIEW_KEEPALIVE_S between messages */
	MHD_set_connection_option(c, MHD_CONNECTION_OPTION_TIMEOUT, (unsigned)VIEW_STREAM_IDLE_S);
	struct stream *st = calloc(1, sizeof *st);
	if (!st) {
		stream_free_place(v);
		return MHD_NO;
	}
	const union MHD_ConnectionInfo *info = MHD_get_connection_info(c, MHD_CONNECTION_INFO_CONNECTION_FD);
	st->v = v;
	st->fd = info ? info->connect_fd : -1;
	/* a small send buffer: a browser that takes nothing is found out (and
	 * closed) after kilobytes, not after the megabytes the kernel allows */
	int sndbuf = STREAM_SNDBUF;
	if (st->fd >= 0)
		(void)setsockopt(st->fd, SOL_SOCKET, SO_SNDBUF, &sndbuf, sizeof sndbuf);
	st->first = true;
	st->last_ms = monotonic_ms();
	struct MHD_Response *r = MHD_create_response_from_callback(MHD_SIZE_UNKNOWN, 4096, stream_read,
								   st, stream_free);
	if (!r) {
		stream_free(st);
		return MHD_NO;
	}
	return view_queue(c, MHD_HTTP_OK, r, "text/event-stream; charset=utf-8", view_page_policy);
}

