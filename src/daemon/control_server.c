/*
 * control_server: see control_server.h.  A client id is slot +
 * CONTROL_CLIENTS_MAX * generation, so a late reply to a client that left
 * (its slot reused) is recognised and dropped; the generation wraps
 * before the id could overflow an int.
 *
 * One service round: read what poll reported, hand out complete lines of
 * every client that has no request in flight, write what is queued,
 * accept new clients (serving the first line of each at once, so a
 * `latticed panic` that arrives while the table is full is not the one
 * evicted next), and only then close what is done, broken or idle.
 */
/* accept4, SO_PEERCRED and struct ucred are Linux interfaces */
#define _GNU_SOURCE
#include "control_server.h"

#include <errno.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <unistd.h>

#include "control_text.h"
#include "log_ring.h"

#define GENERATIONS (INT_MAX / CONTROL_CLIENTS_MAX)
#define OUT_KEEP 65536                   /* a larger reply buffer is freed once written */
#define CONTROL_WAIT_MS 70000            /* a request never answered (the reload client waits 60 s) */

/* ---- the socket ---------------------------------------------------------------- */

void control_server_init(struct control_server *s)
{
	memset(s, 0, sizeof *s);
	s->listen_fd = -1;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		s->clients[i].fd = -1;
		s->clients[i].pid = s->clients[i].uid = -1;
	}
}

/* A daemon that answers there is alive; a socket nobody answers is stale. */
static bool socket_answers(const struct sockaddr_un *addr)
{
	int probe = socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC | SOCK_NONBLOCK, 0);
	if (probe < 0)
		return false;
	/* EAGAIN: its queue of waiting connections is full, so it is alive */
	bool alive = connect(probe, (const struct sockaddr *)addr, sizeof *addr) == 0 ||
		     errno == EAGAIN;
	close(probe);
	return alive;
}

bool control_server_open(struct control_server *s, const char *path, char *err, size_t err_size)
{
	struct sockaddr_un addr;
	memset(&addr, 0, sizeof addr);
	addr.sun_family = AF_UNIX;
	if (path[0] == '\0' || strlen(path) >= sizeof addr.sun_path) {
		snprintf(err, err_size, "control socket path '%s' is empty or too long (at most %zu characters)",
			 path, sizeof addr.sun_path - 1);
		return false;
	}
	memcpy(addr.sun_path, path, strlen(path) + 1);
	enum control_path_state state = control_path_prepare(path, err, err_size);
	if (state == CONTROL_PATH_REFUSED)
		return false;
	if (state == CONTROL_PATH_SOCKET) {
		if (socket_answers(&addr)) {
			snprintf(err, err_size, "another latticed is already running: its control socket %s answers",
				 path);
			return false;
		}
		if (!control_path_remove_stale(path, err, err_size))
			return false;
	}
	int fd = socket(AF_UNIX, SOCK_STREAM | SOCK_NONBLOCK | SOCK_CLOEXEC, 0);
	if (fd < 0) {
		snprintf(err, err_size, "cannot make the control socket: %s", strerror(errno));
		return false;
	}
	if (bind(fd, (struct sockaddr *)&addr, sizeof addr) != 0) {
		snprintf(err, err_size, "cannot create the control socket %s: %s (set control_socket in [daemon], or none)",
			 path, strerror(errno));
		close(fd);
		return false;
	}
	struct stat st;
	if (lstat(path, &st) != 0 || chmod(path, 0660) != 0 || listen(fd, CONTROL_BACKLOG) != 0) {
		snprintf(err, err_size, "cannot set up the control socket %s: %s", path, strerror(errno));
		close(fd);
		unlink(path);
		return false;
	}
	s->listen_fd = fd;
	s->socket_dev = st.st_dev;
	s->socket_ino = st.st_ino;
	snprintf(s->path, sizeof s->path, "%s", path);
	return true;
}

/* ---- clients ------------------------------------------------------------------ */

static int client_id(const struct control_server *s, int slot)
{
	return slot + CONTROL_CLIENTS_MAX * (int)s->clients[slot].generation;
}

/* The client an id names, or NULL if it left (its slot free or reused). */
static struct control_client *client_of(struct control_server *s, int id)
{
	if (id < 0)
		return NULL;
	struct control_client *c = &s->clients[id % CONTROL_CLIENTS_MAX];
	if (c->fd < 0 || (unsigned)(id / CONTROL_CLIENTS_MAX) != c->generation)
		return NULL; /* it left */
	return c;
}

static bool has_output(const struct control_client *c)
{
	return c->out_sent < c->out_length;
}

static bool evictable(const struct control_client *c, int64_t now_ms)
{
	return !c->waiting && !c->subscriber && now_ms - c->last_active_ms >= CONTROL_EVICT_MS;
}

/* A free slot, else the one idle longest if idle long enough (*evict), else -1. */
static int slot_for_new(const struct control_server *s, int64_t now_ms, bool *evict)
{
	int best = -1;
	*evict = false;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		if (s->clients[i].fd < 0)
			return i;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		const struct control_client *c = &s->clients[i];
		if (evictable(c, now_ms) && (best < 0 || c->last_active_ms < s->clients[best].last_active_ms))
			best = i;
	}
	*evict = best >= 0;
	return best;
}

static void close_client(struct control_client *c)
{
	close(c->fd);
	free(c->out);
	unsigned generation = (c->generation + 1) % GENERATIONS;
	memset(c, 0, sizeof *c);
	c->fd = -1;
	c->pid = c->uid = -1;
	c->generation = generation;
}

static void log_closed(const struct control_client *c, const char *why)
{
	log_print(LOG_LEVEL_INFO, "control: client %lu (pid %ld, uid %ld) closed: %s", c->number,
		  c->pid, c->uid, why);
}

static void queue_line(struct control_client *c, const char *line, size_t length)
{
	size_t pending = c->out_length - c->out_sent;
	if (c->broken)
		return;
	if (pending > 0 && pending + length + 1 > CONTROL_OUT_MAX) {
		log_print(LOG_LEVEL_WARNING,
			  "control: %s %lu (pid %ld, uid %ld) dropped: %s (%zu bytes waiting, at most %d)",
			  c->subscriber ? "subscriber" : "client", c->number, c->pid, c->uid,
			  c->subscriber ? "it fell behind the events" : "it does not read its replies",
			  pending, CONTROL_OUT_MAX);
		c->broken = true;
		return;
	}
	if (c->out_sent > 0) {
		memmove(c->out, c->out + c->out_sent, pending);
		c->out_length = pending;
		c->out_sent = 0;
	}
	if (pending + length + 1 > c->out_capacity) {
		size_t capacity = c->out_capacity ? c->out_capacity : 4096;
		while (capacity < pending + length + 1)
			capacity *= 2;
		char *out = realloc(c->out, capacity);
		if (!out) {
			log_print(LOG_LEVEL_ERROR, "control: client %lu dropped: out of memory for its reply",
				  c->number);
			c->broken = true;
			return;
		}
		c->out = out;
		c->out_capacity = capacity;
	}
	memcpy(c->out + pending, line, length);
	control_text_scrub(c->out + pending, length);
	c->out[pending + length] = '\n';
	c->out_length = pending + length + 1;
}

static void write_out(struct control_client *c, int64_t now_ms)
{
	while (has_output(c)) {
		ssize_t n = send(c->fd, c->out + c->out_sent, c->out_length - c->out_sent, MSG_NOSIGNAL);
		if (n > 0) {
			c->out_sent += (size_t)n;
			c->last_active_ms = now_ms;
			continue;
		}
		if (n < 0 && errno == EINTR)
			continue;
		if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK))
			return;
		c->broken = true; /* it left */
		return;
	}
	c->out_length = c->out_sent = 0;
	if (c->out_capacity > OUT_KEEP) {
		free(c->out);
		c->out = NULL;
		c->out_capacity = 0;
	}
}

static void read_in(struct control_client *c)
{
	if (c->in_length == sizeof c->in)
		return; /* a line too long: take_lines answers it first */
	ssize_t n = recv(c->fd, c->in + c->in_length, sizeof c->in - c->in_length, 0);
	if (n == 0) {
		c->input_done = true;
		return;
	}
	if (n < 0) {
		if (errno != EAGAIN && errno != EWOULDBLOCK && errno != EINTR)
			c->broken = true;
		return;
	}
	if (c->skipping) {
		/* the rest of a line too long is dropped up to its newline */
		char *newline = memchr(c->in, '\n', (size_t)n);
		if (!newline)
			return;
		size_t rest = (size_t)n - (size_t)(newline + 1 - c->in);
		memmove(c->in, newline + 1, rest);
		c->in_length = rest;
		c->skipping = false;
		return;
	}
	c->in_length += (size_t)n;
}

/* Hands out the client's complete lines, one at a time: the next once the
 * previous has its reply (at once for the ones answered synchronously). */
static void take_lines(struct control_server *s, int slot, control_request_fn fn, void *context,
		       int64_t now_ms)
{
	struct control_client *c = &s->clients[slot];
	if (c->subscriber) {
		c->in_length = 0; /* it only listens: what it sends is dropped */
		c->skipping = false;
		return;
	}
	while (!c->waiting && !c->broken) {
		char *newline = memchr(c->in, '\n', c->in_length);
		size_t length;
		if (newline) {
			length = (size_t)(newline - c->in);
		} else if (c->in_length == sizeof c->in) {
			char text[96];
			snprintf(text, sizeof text,
				 "{\"ok\":false,\"error\":\"request line longer than %d bytes; skipped\"}",
				 CONTROL_LINE_MAX - 1);
			queue_line(c, text, strlen(text));
			c->in_length = 0;
			c->skipping = true;
			continue;
		} else if (c->input_done && c->in_length > 0) {
			length = c->in_length; /* the last line, without its newline */
		} else {
			return;
		}
		size_t used = newline ? length + 1 : length;
		c->in[length] = '\0';
		if (length > 0 && c->in[length - 1] == '\r')
			c->in[--length] = '\0';
		c->last_active_ms = now_ms;
		if (!control_text_plain(c->in, length)) {
			static const char bad[] =
				"{\"ok\":false,\"error\":\"request line is not UTF-8 text (or holds control characters)\"}";
			queue_line(c, bad, sizeof bad - 1);
		} else {
			c->waiting = true;
			fn(context, client_id(s, slot), c->in);
		}
		memmove(c->in, c->in + used, c->in_length - used);
		c->in_length -= used;
		if (c->subscriber)
			c->in_length = 0; /* it just subscribed: the rest is dropped */
	}
}

static void accept_clients(struct control_server *s, control_request_fn fn, void *context,
			   int64_t now_ms)
{
	for (int k = 0; k < CONTROL_CLIENTS_MAX; k++) {
		bool evict;
		int slot = slot_for_new(s, now_ms, &evict);
		if (slot < 0)
			return;
		int fd = accept4(s->listen_fd, NULL, NULL, SOCK_NONBLOCK | SOCK_CLOEXEC);
		if (fd < 0)
			return;
		struct control_client *c = &s->clients[slot];
		if (evict) {
			static const char bye[] =
				"{\"ok\":false,\"error\":\"closed: idle while other clients waited\"}\n";
			if (!has_output(c))
				(void)!send(c->fd, bye, sizeof bye - 1, MSG_NOSIGNAL | MSG_DONTWAIT);
			log_closed(c, "idle while the client table was full");
			close_client(c);
		}
		c->fd = fd;
		c->number = ++s->connections;
		c->last_active_ms = now_ms;
		struct ucred cred;
		socklen_t length = sizeof cred;
		if (getsockopt(fd, SOL_SOCKET, SO_PEERCRED, &cred, &length) == 0) {
			c->pid = (long)cred.pid;
			c->uid = (long)cred.uid;
		}
		read_in(c);
		take_lines(s, slot, fn, context, now_ms);
	}
}

/* The one place clients are closed (besides control_server_close). */
static void settle(struct control_server *s, int64_t now_ms)
{
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		struct control_client *c = &s->clients[i];
		if (c->fd < 0)
			continue;
		int64_t quiet = now_ms - c->last_active_ms;
		if (c->broken) {
			close_client(c);
		} else if (c->subscriber && c->input_done) {
			log_closed(c, "the subscriber hung up");
			close_client(c);
		} else if (c->input_done && !c->waiting && !has_output(c)) {
			close_client(c);
		} else if (c->subscriber) {
			continue; /* no idle limit: it listens */
		} else if (!c->waiting && quiet >= CONTROL_IDLE_MS) {
			log_closed(c, has_output(c) ? "it stopped reading its replies" : "no request for 10 s");
			close_client(c);
		} else if (c->waiting && quiet >= CONTROL_WAIT_MS) {
			log_closed(c, "its request got no reply from the MIDI thread");
			close_client(c);
		}
	}
}

int control_server_pollfds(const struct control_server *s, struct pollfd *fds, int max,
			   int64_t now_ms)
{
	int n = 0;
	bool evict;
	if (s->listen_fd < 0)
		return 0;
	if (n < max && slot_for_new(s, now_ms, &evict) >= 0)
		fds[n++] = (struct pollfd){.fd = s->listen_fd, .events = POLLIN};
	for (int i = 0; i < CONTROL_CLIENTS_MAX && n < max; i++) {
		const struct control_client *c = &s->clients[i];
		if (c->fd < 0)
			continue;
		/* no POLLIN while a request is in flight or after the end: a hung-up
		 * peer would wake poll at once, again and again */
		short events = c->input_done || c->waiting || c->broken ? 0 : POLLIN;
		if (has_output(c))
			events |= POLLOUT;
		if (events)
			fds[n++] = (struct pollfd){.fd = c->fd, .events = events};
	}
	return n;
}

int control_server_timeout_ms(const struct control_server *s, int64_t now_ms)
{
	int64_t next = -1;
	bool full = true;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		full = full && s->clients[i].fd >= 0;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		const struct control_client *c = &s->clients[i];
		if (c->fd < 0 || c->subscriber)
			continue;
		int64_t at = c->last_active_ms + (c->waiting ? CONTROL_WAIT_MS : CONTROL_IDLE_MS);
		/* once it can be evicted the listening socket is polled: no timer then */
		int64_t evict_at = c->last_active_ms + CONTROL_EVICT_MS;
		if (full && !c->waiting && evict_at > now_ms && evict_at < at)
			at = evict_at;
		if (next < 0 || at < next)
			next = at;
	}
	if (next < 0)
		return -1;
	return next <= now_ms ? 0 : next - now_ms > INT_MAX ? INT_MAX : (int)(next - now_ms);
}

void control_server_service(struct control_server *s, const struct pollfd *fds, int count,
			    control_request_fn fn, void *context, int64_t now_ms)
{
	bool listen_ready = false;
	for (int k = 0; k < count; k++) {
		if (!fds[k].revents)
			continue;
		if (fds[k].fd == s->listen_fd) {
			listen_ready = true;
			continue;
		}
		for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
			struct control_client *c = &s->clients[i];
			if (c->fd != fds[k].fd)
				continue;
			if ((fds[k].revents & (POLLIN | POLLHUP | POLLERR)) && !c->input_done && !c->waiting)
				read_in(c);
			break;
		}
	}
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		struct control_client *c = &s->clients[i];
		if (c->fd < 0 || c->broken)
			continue;
		take_lines(s, i, fn, context, now_ms);
		if (has_output(c))
			write_out(c, now_ms);
	}
	/* after the clients' own descriptors: an eviction may free an fd number */
	if (listen_ready)
		accept_clients(s, fn, context, now_ms);
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		if (s->clients[i].fd >= 0 && has_output(&s->clients[i]) && !s->clients[i].broken)
			write_out(&s->clients[i], now_ms);
	settle(s, now_ms);
}

void control_server_reply(struct control_server *s, int id, const char *line)
{
	struct control_client *c = client_of(s, id);
	if (!c)
		return; /* it left */
	c->waiting = false;
	queue_line(c, line, strlen(line));
}

/* ---- subscribers ---------------------------------------------------------- */

bool control_server_subscribe(struct control_server *s, int id, bool states_only)
{
	struct control_client *c = client_of(s, id);
	if (!c || control_server_subscribers(s) >= CONTROL_SUBSCRIBERS_MAX)
		return false;
	c->subscriber = true;
	c->states_only = states_only;
	c->fed = false;
	c->waiting = false; /* answered by what is published */
	log_print(LOG_LEVEL_INFO, "control: client %lu (pid %ld, uid %ld) subscribed%s", c->number,
		  c->pid, c->uid, states_only ? " to states" : "");
	return true;
}

int control_server_subscribers(const struct control_server *s)
{
	return control_server_subscribers_of(s, false) + control_server_subscribers_of(s, true);
}

int control_server_subscribers_of(const struct control_server *s, bool states_only)
{
	int n = 0;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		n += s->clients[i].fd >= 0 && s->clients[i].subscriber &&
		     s->clients[i].states_only == states_only;
	return n;
}

static void publish_to(struct control_server *s, const char *line, bool states_only)
{
	size_t length = strlen(line);
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		struct control_client *c = &s->clients[i];
		if (c->fd >= 0 && c->subscriber && c->fed && c->states_only == states_only)
			queue_line(c, line, length);
	}
}

void control_server_publish(struct control_server *s, const char *line)
{
	publish_to(s, line, false);
}

void control_server_publish_change(struct control_server *s, const char *line)
{
	publish_to(s, line, true);
}

void control_server_publish_state(struct control_server *s, const char *line, bool everyone)
{
	size_t length = strlen(line);
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
		struct control_client *c = &s->clients[i];
		if (c->fd < 0 || !c->subscriber || (c->fed && !everyone))
			continue;
		queue_line(c, line, length);
		c->fed = true;
	}
}

void control_server_flush(struct control_server *s)
{
	int64_t now = 0;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		if (s->clients[i].fd >= 0 && has_output(&s->clients[i]) && !s->clients[i].broken)
			write_out(&s->clients[i], now);
}

void control_server_close(struct control_server *s)
{
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		if (s->clients[i].fd >= 0)
			close_client(&s->clients[i]);
	if (s->listen_fd >= 0) {
		close(s->listen_fd);
		s->listen_fd = -1;
		/* what is at the path now may not be ours: another daemon's socket, a file */
		struct stat st;
		if (lstat(s->path, &st) == 0 && S_ISSOCK(st.st_mode) && st.st_dev == s->socket_dev &&
		    st.st_ino == s->socket_ino)
			unlink(s->path);
	}
}
