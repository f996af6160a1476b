/*
 * control_server: see control_server.h.  A client id is slot + 32 *
 * generation, so a late reply to a client that left (its slot reused)
 * is recognised and dropped.
 */
#include "control_server.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/stat.h>
#include <sys/un.h>
#include <unistd.h>

#define ID_SLOTS 32

void control_server_init(struct control_server *s)
{
	memset(s, 0, sizeof *s);
	s->listen_fd = -1;
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		s->clients[i].fd = -1;
}

static bool make_directory(const char *path, char *err, size_t err_size)
{
	char dir[CONTROL_PATH_MAX];
	snprintf(dir, sizeof dir, "%s", path);
	char *slash = strrchr(dir, '/');
	if (!slash || slash == dir)
		return true;
	*slash = '\0';
	struct stat st;
	if (stat(dir, &st) == 0)
		return true;
	if (mkdir(dir, 0750) == 0 || errno == EEXIST)
		return true;
	snprintf(err, err_size,
		 "cannot create the control socket directory %s: %s (set control_socket in [daemon] to a writable place, or none)",
		 dir, strerror(errno));
	return false;
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
	if (!make_directory(path, err, err_size))
		return false;
	int fd = socket(AF_UNIX, SOCK_STREAM | SOCK_NONBLOCK | SOCK_CLOEXEC, 0);
	if (fd < 0) {
		snprintf(err, err_size, "cannot make the control socket: %s", strerror(errno));
		return false;
	}
	int rc = bind(fd, (struct sockaddr *)&addr, sizeof addr);
	if (rc != 0 && errno == EADDRINUSE) {
		/* a daemon that answers there is alive; a socket nobody answers is stale */
		int probe = socket(AF_UNIX, SOCK_STREAM | SOCK_CLOEXEC, 0);
		bool alive = probe >= 0 && connect(probe, (struct sockaddr *)&addr, sizeof addr) == 0;
		if (probe >= 0)
			close(probe);
		if (alive) {
			close(fd);
			snprintf(err, err_size, "another latticed is already running: its control socket %s answers",
				 path);
			return false;
		}
		unlink(path);
		rc = bind(fd, (struct sockaddr *)&addr, sizeof addr);
	}
	if (rc != 0) {
		snprintf(err, err_size, "cannot create the control socket %s: %s (set control_socket in [daemon], or none)",
			 path, strerror(errno));
		close(fd);
		return false;
	}
	if (chmod(path, 0660) != 0 || listen(fd, 8) != 0) {
		snprintf(err, err_size, "cannot set up the control socket %s: %s", path, strerror(errno));
		close(fd);
		unlink(path);
		return false;
	}
	s->listen_fd = fd;
	snprintf(s->path, sizeof s->path, "%s", path);
	return true;
}

int control_server_pollfds(const struct control_server *s, struct pollfd *fds, int max)
{
	int n = 0;
	if (s->listen_fd < 0 || max < 1)
		return 0;
	fds[n++] = (struct pollfd){.fd = s->listen_fd, .events = POLLIN};
	for (int i = 0; i < CONTROL_CLIENTS_MAX && n < max; i++) {
		const struct control_client *c = &s->clients[i];
		if (c->fd < 0)
			continue;
		short events = c->closing ? 0 : POLLIN;
		if (c->out_sent < c->out_length)
			events |= POLLOUT;
		fds[n++] = (struct pollfd){.fd = c->fd, .events = events};
	}
	return n;
}

static void drop_client(struct control_client *c)
{
	close(c->fd);
	c->fd = -1;
	free(c->out);
	c->out = NULL;
	c->out_length = c->out_sent = c->in_length = 0;
	c->waiting = 0;
	c->closing = false;
	c->generation++;
}

static void write_out(struct control_client *c)
{
	while (c->out_sent < c->out_length) {
		ssize_t n = send(c->fd, c->out + c->out_sent, c->out_length - c->out_sent, MSG_NOSIGNAL);
		if (n > 0) {
			c->out_sent += (size_t)n;
			continue;
		}
		if (n < 0 && errno == EINTR)
			continue;
		if (n < 0 && (errno == EAGAIN || errno == EWOULDBLOCK))
			return;
		drop_client(c);
		return;
	}
	if (c->closing && c->waiting == 0)
		drop_client(c);
}

static void read_in(struct control_server *s, int slot, control_request_fn fn, void *context)
{
	struct control_client *c = &s->clients[slot];
	for (;;) {
		if (c->in_length == sizeof c->in) {
			c->in_length = 0;
			c->closing = true;
			c->waiting++;
			control_server_reply(s, slot + ID_SLOTS * (int)c->generation,
					     "{\"ok\":false,\"error\":\"request line too long\"}");
			return;
		}
		ssize_t n = recv(c->fd, c->in + c->in_length, sizeof c->in - c->in_length, 0);
		if (n == 0) {
			/* the client is done sending: finish its replies, then close */
			c->closing = true;
			if (c->waiting == 0 && c->out_sent == c->out_length)
				drop_client(c);
			return;
		}
		if (n < 0) {
			if (errno == EINTR)
				continue;
			if (errno != EAGAIN && errno != EWOULDBLOCK)
				drop_client(c);
			return;
		}
		c->in_length += (size_t)n;
		char *newline;
		while (c->fd >= 0 && (newline = memchr(c->in, '\n', c->in_length))) {
			*newline = '\0';
			if (newline > c->in && newline[-1] == '\r')
				newline[-1] = '\0';
			c->waiting++;
			fn(context, slot + ID_SLOTS * (int)c->generation, c->in);
			size_t used = (size_t)(newline - c->in) + 1;
			memmove(c->in, newline + 1, c->in_length - used);
			c->in_length -= used;
		}
		if (c->fd < 0)
			return;
	}
}

void control_server_service(struct control_server *s, const struct pollfd *fds, int count,
			    control_request_fn fn, void *context)
{
	for (int k = 0; k < count; k++) {
		if (!fds[k].revents)
			continue;
		if (fds[k].fd == s->listen_fd) {
			int fd;
			while ((fd = accept(s->listen_fd, NULL, NULL)) >= 0) {
				(void)fcntl(fd, F_SETFL, O_NONBLOCK);
				(void)fcntl(fd, F_SETFD, FD_CLOEXEC);
				int slot = -1;
				for (int i = 0; i < CONTROL_CLIENTS_MAX && slot < 0; i++)
					if (s->clients[i].fd < 0)
						slot = i;
				if (slot < 0) {
					static const char busy[] = "{\"ok\":false,\"error\":\"too many control clients at once\"}\n";
					(void)!send(fd, busy, sizeof busy - 1, MSG_NOSIGNAL);
					close(fd);
					continue;
				}
				s->clients[slot].fd = fd;
			}
			continue;
		}
		for (int i = 0; i < CONTROL_CLIENTS_MAX; i++) {
			struct control_client *c = &s->clients[i];
			if (c->fd != fds[k].fd)
				continue;
			if (fds[k].revents & (POLLIN | POLLHUP | POLLERR))
				read_in(s, i, fn, context);
			if (c->fd >= 0 && (fds[k].revents & POLLOUT))
				write_out(c);
			break;
		}
	}
}

void control_server_reply(struct control_server *s, int id, const char *line)
{
	int slot = id % ID_SLOTS;
	if (id < 0 || slot >= CONTROL_CLIENTS_MAX)
		return;
	struct control_client *c = &s->clients[slot];
	if (c->fd < 0 || (unsigned)(id / ID_SLOTS) != c->generation)
		return; /* it left */
	size_t length = strlen(line);
	size_t pending = c->out_length - c->out_sent;
	char *out = malloc(pending + length + 1);
	if (!out) {
		drop_client(c);
		return;
	}
	if (pending)
		memcpy(out, c->out + c->out_sent, pending);
	memcpy(out + pending, line, length);
	out[pending + length] = '\n';
	free(c->out);
	c->out = out;
	c->out_length = pending + length + 1;
	c->out_sent = 0;
	if (c->waiting > 0)
		c->waiting--;
	write_out(c);
}

void control_server_close(struct control_server *s)
{
	for (int i = 0; i < CONTROL_CLIENTS_MAX; i++)
		if (s->clients[i].fd >= 0)
			drop_client(&s->clients[i]);
	if (s->listen_fd >= 0) {
		close(s->listen_fd);
		s->listen_fd = -1;
		unlink(s->path);
	}
}
