/*
 * control_server: the daemon's end of the control socket, a Unix stream
 * socket (mode 0660) served by the main thread.
 *
 * Protocol (documented in latticed(8)): a client sends one request per
 * line ("status", "panic", "preset NAME", "root TONE", "reload"); each gets
 * exactly one reply line, a JSON object with "ok": true or false.  Replies
 * come in request order; a client may send several requests on one
 * connection, and they are taken one at a time: the next line is handed
 * out once the previous one has its reply.  A reply may be given later
 * (status needs the input thread), so requests are handed to the caller
 * with a client id to answer through control_server_reply.  Nothing here
 * blocks: sockets are non-blocking and replies are written as the client
 * reads them.
 *
 * Client lifetime: a slot is closed in one place only, at the end of
 * control_server_service (and by control_server_close).  A request
 * callback or a reply never closes anything; a failed write or a client
 * that falls behind is only marked, so no code ever works on a slot that
 * a reply path freed under it.
 *
 * Limits (each one a constant below, documented in latticed(8)): a
 * request line of CONTROL_LINE_MAX bytes (a longer one gets an error
 * reply and is skipped to its newline); CONTROL_OUT_MAX bytes of replies
 * waiting for a client that does not read them (beyond that it is
 * dropped, with one log line naming it); a client with nothing in
 * progress is closed after CONTROL_IDLE_MS without a request, and when
 * the table is full a client idle for CONTROL_EVICT_MS makes room for a
 * new one, so idle connections cannot keep `latticed panic` out.
 *
 * Subscribers (`subscribe`, subscription.c): a client the daemon made a
 * subscriber gets no more replies, only the lines published to it; what
 * it sends afterwards is read and dropped, and closing its end ends the
 * subscription.  It is exempt from the idle timeout and never evicted, so
 * at most CONTROL_SUBSCRIBERS_MAX clients may subscribe and the rest of
 * the table stays free for commands; one that lets CONTROL_OUT_MAX bytes
 * pile up is dropped with one log line, like any client that stops reading.
 */
#ifndef LATTICED_CONTROL_SERVER_H
#define LATTICED_CONTROL_SERVER_H

#include <poll.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <sys/types.h>

#include "control_path.h"
#include "control_text.h"

#define CONTROL_CLIENTS_MAX 32
#define CONTROL_LINE_MAX 1024
#define CONTROL_OUT_MAX (256 * 1024)
#define CONTROL_IDLE_MS 10000
#define CONTROL_EVICT_MS 500
#define CONTROL_SUBSCRIBERS_MAX 8
/* connections waiting to be accepted; the kernel caps it at net.core.somaxconn */
#define CONTROL_BACKLOG 4096

struct control_client {
	int fd;                          /* -1: free slot */
	unsigned generation;             /* tells a reused slot's ids apart */
	unsigned long number;            /* the connection's number, for log lines */
	long pid, uid;                   /* the peer (SO_PEERCRED), -1 if unknown */
	char in[CONTROL_LINE_MAX];
	size_t in_length;
	bool skipping;                   /* inside a line too long: drop it to its newline */
	bool input_done;                 /* end of file: no more requests */
	bool waiting;                    /* a request handed out, its reply not yet queued */
	bool broken;                     /* to be closed at the end of this service round */
	bool subscriber;                 /* takes published lines, no replies */
	bool fed;                        /* a subscriber that has had its first state */
	bool states_only;                /* `subscribe states`: a state per change, no events */
	char *out;                       /* replies not yet written (malloc) */
	size_t out_length, out_sent, out_capacity;
	int64_t last_active_ms;          /* connect, last request taken, last reply byte out */
};

struct control_server {
	int listen_fd;                   /* -1: no control socket */
	char path[CONTROL_PATH_MAX];
	dev_t socket_dev;                /* the socket file made here, removed only if still ours */
	ino_t socket_ino;
	unsigned long connections;
	struct control_client clients[CONTROL_CLIENTS_MAX];
};

/* id: pass to control_server_reply; line: the request without its newline. */
typedef void (*control_request_fn)(void *context, int id, const char *line);

void control_server_init(struct control_server *s);

/* Creates the socket at path after checking its directories (control_path_prepare).
 * False with one line in err (e.g. another daemon is answering there). */
bool control_server_open(struct control_server *s, const char *path, char *err, size_t err_size);

/* Descriptors to poll now; returns how many were written (at most max). */
int control_server_pollfds(const struct control_server *s, struct pollfd *fds, int max,
			   int64_t now_ms);

/* Milliseconds until the next idle deadline (for the poll timeout), or -1 if none. */
int control_server_timeout_ms(const struct control_server *s, int64_t now_ms);

/* Accepts, reads and writes what poll reported (revents may all be zero),
 * hands out request lines to fn, writes queued replies and closes the
 * clients that are done, broken or idle.  Call it after every poll. */
void control_server_service(struct control_server *s, const struct pollfd *fds, int count,
			    control_request_fn fn, void *context, int64_t now_ms);

/* Queues one reply line (a newline is added) for the client; ignored if it left.
 * The bytes go out in the next control_server_service. */
void control_server_reply(struct control_server *s, int id, const char *line);

/* Makes client id a subscriber (its request is answered by the lines
 * published from now on), of every event or (states_only) of a fresh state
 * whenever what sounds changed; false if it left or CONTROL_SUBSCRIBERS_MAX
 * clients subscribe already. */
bool control_server_subscribe(struct control_server *s, int id, bool states_only);

/* Subscribers in all, and those of each kind. */
int control_server_subscribers(const struct control_server *s);
int control_server_subscribers_of(const struct control_server *s, bool states_only);

/* Queues an event line for every subscriber of events that has had its state. */
void control_server_publish(struct control_server *s, const char *line);

/* Queues a state line for the subscribers of states that have had their
 * first one (what sounds changed). */
void control_server_publish_change(struct control_server *s, const char *line);

/* Queues a state line for the subscribers that have had none yet (every
 * subscriber of either kind if everyone), which then take the published lines. */
void control_server_publish_state(struct control_server *s, const char *line, bool everyone);

/* Writes what is queued for every client once, without waiting (shutdown). */
void control_server_flush(struct control_server *s);

/* Closes every client and the socket, and removes the socket file if it is still ours. */
void control_server_close(struct control_server *s);

#endif
