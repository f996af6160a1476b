/*
 * view_link: see view_link.h.
 */
#define _GNU_SOURCE /* ppoll */
#include "view_link.h"

#include <errno.h>
#include <json-c/json.h>
#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <time.h>
#include <unistd.h>

#include "clock.h"
#include "control_commands.h"
#include "control_cmd.h"
#include "log_ring.h"

volatile sig_atomic_t view_quit;

/* Sleeps ms (signals open); false if told to quit. */
static bool pause_ms(int ms, const sigset_t *run_mask)
{
	struct timespec t = {ms / 1000, (long)(ms % 1000) * 1000000L};
	if (!view_quit)
		(void)ppoll(NULL, 0, &t, run_mask);
	return !view_quit;
}

static void publish(struct view_link *l, struct view *v, bool new_svg, const char *path)
{
	char *page = view_model_page(&l->model, v->control);
	if (page)
		view_publish(v, page, l->model.svg, l->model.svg_length, new_svg, l->model.up, path);
}

/* Logs a reason the daemon cannot be reached or was lost, once per reason. */
static void trouble(struct view_link *l, struct view *v, const char *text)
{
	if (strcmp(l->last_trouble, text) != 0) {
		log_print(LOG_LEVEL_WARNING, "view: %s; trying again every %.1f s at most", text,
			  VIEW_RETRY_MAX_MS / 1000.0);
		snprintf(l->last_trouble, sizeof l->last_trouble, "%s", text);
	}
	char page_text[VIEW_TEXT_MAX];
	snprintf(page_text, sizeof page_text, "%s; trying again", text);
	view_model_down(&l->model, page_text);
	publish(l, v, false, "");
}

static int connect_first(struct view_link *l, const char **used, char *why, size_t why_size)
{
	for (int i = 0; i < l->path_count; i++) {
		int fd = control_connect(l->paths[i], 2000);
		if (fd >= 0) {
			*used = l->paths[i];
			return fd;
		}
		if (errno != ENOENT && errno != ECONNREFUSED && errno != ENOTDIR) {
			snprintf(why, why_size, "latticed cannot be reached at %s: %s", l->paths[i],
				 strerror(errno));
			return -1;
		}
	}
	snprintf(why, why_size, "latticed is not running: nothing answers at %s%s", l->paths[0],
		 l->path_count > 1 ? " (or the other places latticed status looks)" : "");
	return -1;
}

/* What a line looked like, for a log line: its first bytes, each one not
 * printable ASCII shown as '?'. */
static void sample(const char *line, size_t length, char *out, size_t size)
{
	size_t n = 0;
	for (; n < length && n < 60 && n + 4 < size; n++)
		out[n] = line[n] >= 0x20 && line[n] < 0x7F ? line[n] : '?';
	if (n < length && n + 4 < size) {
		memcpy(out + n, "...", 3);
		n += 3;
	}
	out[n] = '\0';
}

/* Takes each complete line in the buffer; false when the connection must end. */
static bool take_lines(struct view_link *l, const char *path, bool *ended, char *why,
		       size_t why_size)
{
	char *start = l->buf, *end = l->buf + l->length;
	bool ok = true;
	while (ok) {
		char *nl = memchr(start, '\n', (size_t)(end - start));
		if (!nl)
			break;
		*nl = '\0';
		enum json_tokener_error jerr;
		struct json_object *o = json_tokener_parse_verbose(start, &jerr);
		char err[300], shown[96];
		if (!o) {
			size_t length = (size_t)(nl - start);
			bool nul = memchr(start, '\0', length) != NULL;
			sample(start, length, shown, sizeof shown);
			snprintf(why, why_size, "the program at %s sent a line that is not JSON (%s): '%s'",
				 path, nul ? "it holds NUL bytes" : json_tokener_error_desc(jerr), shown);
			ok = false;
		} else if (!view_model_apply(&l->model, o, ended, err, sizeof err)) {
			snprintf(why, why_size, "the program at %s sent %s", path, err);
			ok = false;
		}
		json_object_put(o);
		start = nl + 1;
		if (*ended) {
			snprintf(why, why_size, "latticed stopped (it said so)");
			ok = false;
		}
	}
	l->length = (size_t)(end - start);
	memmove(l->buf, start, l->length);
	return ok;
}

/* Reads what is there; false when the connection must end (why says so). */
static bool read_some(struct view_link *l, int fd, const char *path, bool *ended, char *why,
		      size_t why_size)
{
	if (l->capacity - l->length < 65536 && l->capacity < VIEW_LINE_MAX + 1) {
		size_t bigger = l->capacity ? l->capacity * 2 : 65536;
		char *b = realloc(l->buf, bigger > VIEW_LINE_MAX + 1 ? VIEW_LINE_MAX + 1 : bigger);
		if (!b) {
			snprintf(why, why_size, "out of memory reading from %s", path);
			return false;
		}
		l->buf = b;
		l->capacity = bigger > VIEW_LINE_MAX + 1 ? VIEW_LINE_MAX + 1 : bigger;
	}
	ssize_t n = recv(fd, l->buf + l->length, l->capacity - l->length - 1, 0);
	if (n < 0 && (errno == EINTR || errno == EAGAIN))
		return true;
	if (n <= 0) {
		snprintf(why, why_size, "latticed at %s went away%s%s", path, n < 0 ? ": " : "",
			 n < 0 ? strerror(errno) : "");
		return false;
	}
	l->length += (size_t)n;
	if (!take_lines(l, path, ended, why, why_size))
		return false;
	if (l->length >= VIEW_LINE_MAX) {
		snprintf(why, why_size, "the program at %s sent a line longer than %d bytes (not latticed?)",
			 path, VIEW_LINE_MAX);
		return false;
	}
	return true;
}

/* One connection, from subscribe to its end; why says how it ended. */
static void follow(struct view_link *l, struct view *v, int fd, const char *path,
		   const sigset_t *run_mask, char *why, size_t why_size)
{
	/* the picture, not every event: at most 50 states a second (subscription.h) */
	static const char request[] = "subscribe " CONTROL_SUBSCRIBE_STATES "\n";
	l->length = 0;
	if (send(fd, request, sizeof request - 1, MSG_NOSIGNAL) != (ssize_t)(sizeof request - 1)) {
		snprintf(why, why_size, "latticed at %s took no request: %s", path, strerror(errno));
		return;
	}
	int64_t deadline = monotonic_ms() + VIEW_FIRST_LINE_MS;
	bool ended = false;
	while (!view_quit) {
		struct pollfd p = {.fd = fd, .events = POLLIN};
		int64_t left = deadline - monotonic_ms();
		struct timespec t = {left / 1000, (long)(left % 1000) * 1000000L};
		if (!l->model.up && left <= 0) {
			snprintf(why, why_size, "the program at %s sent no state within %d s (not latticed?)",
				 path, VIEW_FIRST_LINE_MS / 1000);
			return;
		}
		if (ppoll(&p, 1, l->model.up ? NULL : &t, run_mask) <= 0)
			continue;
		bool was_up = l->model.up;
		if (!read_some(l, fd, path, &ended, why, why_size))
			return;
		if (l->model.up && !was_up) {
			log_print(LOG_LEVEL_NOTICE, "view: following latticed at %s (preset %s, root %s)",
				  path, l->model.preset_name, l->model.root_label);
			l->last_trouble[0] = '\0';
		}
		bool new_svg = view_model_redraw(&l->model);
		if (new_svg && l->model.drawing_error[0])
			log_print(LOG_LEVEL_WARNING, "view: %s", l->model.drawing_error);
		publish(l, v, new_svg, path);
	}
	snprintf(why, why_size, "stopping");
}

void view_link_run(struct view_link *l, struct view *v, const sigset_t *run_mask)
{
	int retry = VIEW_RETRY_MIN_MS;
	char why[VIEW_TEXT_MAX - 40];
	publish(l, v, false, "");
	while (!view_quit) {
		const char *path = NULL;
		int fd = connect_first(l, &path, why, sizeof why);
		if (fd >= 0) {
			follow(l, v, fd, path, run_mask, why, sizeof why);
			close(fd);
			if (l->model.up)
				retry = VIEW_RETRY_MIN_MS; /* it worked: come back quickly */
		}
		if (view_quit)
			break;
		trouble(l, v, why);
		if (!pause_ms(retry, run_mask))
			break;
		retry = retry * 2 > VIEW_RETRY_MAX_MS ? VIEW_RETRY_MAX_MS : retry * 2;
	}
	free(l->buf);
	l->buf = NULL;
}
