/*
 * control_server: the daemon's end of the control socket, a Unix stream
 * socket (mode 0660) served by the main thread.
 *
 * Protocol (documented in latticed(8)): a client sends one request per
 * line ("status", "panic", "preset NAME", "root N", "reload"); each gets
 * exactly one reply line, a JSON object with "ok": true or false.  Replies
 * come in request order; a client may send several requests on one
 * connection.  A reply may be given later (status needs the input
 * thread), so requests are handed to the caller with a client id to
 * answer through control_server_reply.  Nothing here blocks: sockets are
 * non-blocking and replies are written as the client reads them.
 */
#ifndef LATTICED_CONTROL_SERVER_H
#define LATTICED_CONTROL_SERVER_H

#include <poll.h>
#include <stdbool.h>
#include <stddef.h>

#include "control_path.h"

#define CONTROL_CLIENTS_MAX 16
#define CONTROL_LINE_MAX 1024

struct control_client {
	int fd;                          /* -1: free slot */
	unsigned generation;             /* tells a reused slot's ids apart */
	char in[CONTROL_LINE_MAX];
	size_t in_length;
	int waiting;                     /* requests not yet answered */
	char *out;                       /* replies not yet written (malloc) */
	size_t out_length, out_sent;
	bool closing;                    /* close once the replies are out */
};

struct control_server {
	int listen_fd;                   /* -1: no control socket */
	char path[CONTROL_PATH_MAX];
	struct control_client clients[CONTROL_CLIENTS_MAX];
};

/* id: pass to control_server_reply; line: the request without its newline. */
typedef void (*control_request_fn)(void *context, int id, const char *line);

void control_server_init(struct control_server *s);

/* Creates the socket at path (and its directory, one level, mode 0750).
 * False with one line in err (e.g. another daemon is answering there). */
bool control_server_open(struct control_server *s, const char *path, char *err, size_t err_size);

/* Descriptors to poll; returns how many were written (at most max). */
int control_server_pollfds(const struct control_server *s, struct pollfd *fds, int max);

/* Accepts, reads and writes what poll reported; calls fn for each request line. */
void control_server_service(struct control_server *s, const struct pollfd *fds, int count,
			    control_request_fn fn, void *context);

/* Queues one reply line (a newline is added) for the client; ignored if it left. */
void control_server_reply(struct control_server *s, int id, const char *line);

/* Closes every client and the socket, and removes the socket file. */
void control_server_close(struct control_server *s);

#endif
