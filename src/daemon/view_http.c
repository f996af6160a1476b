/*
 * view_http: see view_http.h.  libmicrohttpd runs a thread per connection
 * (MHD_USE_THREAD_PER_CONNECTION), so a control request may wait for the
 * daemon's answer, and an event stream (view_stream.c) for the next change.
 */
#include "view_http.h"

#include <arpa/inet.h>
#include <errno.h>
#include <json-c/json.h>
#include <microhttpd.h>
#include <poll.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/socket.h>
#include <time.h>
#include <unistd.h>

#include "clock.h"
#include "control_cmd.h"
#include "control_commands.h"
#include "draw_cmd.h"
#include "view_assets.h"
#include "view_response.h"
#include "view_stream.h"

#define CONTROL_REPLY_MAX 65536
#define CONTROL_WAIT_MS 5000


struct view_server {
	struct view *v;
	struct MHD_Daemon *daemon;
	struct MHD_Response *page, *script, *style;
	char *css;                   /* the page's style + the drawing's */
};

struct request {
	bool too_big;
	size_t length;
	char body[VIEW_BODY_MAX + 1];
};

/* ---- small things ----------------------------------------------------------------- */

bool view_token_matches(const char *given, const char *want, size_t want_length)
{
	size_t given_length = strnlen(given, VIEW_TOKEN_MAX);
	unsigned char diff = given_length != want_length;
	for (size_t i = 0; i < want_length; i++)
		diff |= (unsigned char)((i < given_length ? given[i] : 0) ^ want[i]);
	return diff == 0;
}

static struct view_log_limit http_messages = {PTHREAD_MUTEX_INITIALIZER, 0, 0};
static struct view_log_limit refusals = {PTHREAD_MUTEX_INITIALIZER, 0, 0};
static struct view_log_limit timeouts = {PTHREAD_MUTEX_INITIALIZER, 0, 0};

/* libmicrohttpd's own messages (a full table, a broken request). */
static void mhd_log(void *context, const char *fmt, va_list ap)
{
	(void)context;
	char text[256];
	vsnprintf(text, sizeof text, fmt, ap);
	view_log_limited(&http_messages, "view: http: %s", text);
}

/* A Host header naming this machine's loopback: 127.x.x.x, ::1 or localhost. */
static bool loopback_host(const char *host)
{
	char name[256];
	snprintf(name, sizeof name, "%s", host);
	if (name[0] == '[') {
		char *close = strchr(name, ']');
		if (!close)
			return false;
		*close = '\0';
		struct in6_addr a6;
		return inet_pton(AF_INET6, name + 1, &a6) == 1 && IN6_IS_ADDR_LOOPBACK(&a6);
	}
	name[strcspn(name, ":")] = '\0';
	struct in_addr a4;
	if (inet_pton(AF_INET, name, &a4) == 1)
		return (ntohl(a4.s_addr) >> 24) == 127;
	return strcasecmp(name, "localhost") == 0;
}

/* ---- what the view knows -------------------------------------------------------------- */

static enum MHD_Result serve_state(struct view_server *s, struct MHD_Connection *c)
{
	struct view *v = s->v;
	pthread_mutex_lock(&v->lock);
	char *page = v->page ? strdup(v->page) : NULL;
	pthread_mutex_unlock(&v->lock);
	if (!page)
		return view_send_text(c, MHD_HTTP_SERVICE_UNAVAILABLE, "starting");
	enum MHD_Result ok = view_send_copy(c, MHD_HTTP_OK, "application/json", view_page_policy, page, strlen(page));
	free(page);
	return ok;
}

static enum MHD_Result serve_drawing(struct view_server *s, struct MHD_Connection *c)
{
	struct view *v = s->v;
	pthread_mutex_lock(&v->lock);
	size_t length = v->svg_length;
	char *svg = v->svg ? malloc(length) : NULL;
	if (svg)
		memcpy(svg, v->svg, length);
	pthread_mutex_unlock(&v->lock);
	if (!svg)
		return view_send_text(c, MHD_HTTP_SERVICE_UNAVAILABLE, "no drawing yet: latticed is not followed");
	struct MHD_Response *r = MHD_create_response_from_buffer(length, svg, MHD_RESPMEM_MUST_FREE);
	if (!r) {
		free(svg);
		return MHD_NO;
	}
	return view_queue(c, MHD_HTTP_OK, r, "image/svg+xml", view_svg_policy);
}

/* ---- control ---------------------------------------------------------------------------- */

/* Reads one reply line from the daemon (malloc'd), or NULL. */
static char *daemon_reply(int fd)
{
	size_t used = 0;
	char *buf = malloc(CONTROL_REPLY_MAX);
	int64_t until = monotonic_ms() + CONTROL_WAIT_MS;
	while (buf && used < CONTROL_REPLY_MAX - 1) {
		struct pollfd p = {.fd = fd, .events = POLLIN};
		int64_t left = until - monotonic_ms();
		if (left <= 0 || poll(&p, 1, (int)left) <= 0)
			break;
		ssize_t n = recv(fd, buf + used, CONTROL_REPLY_MAX - 1 - used, 0);
		if (n <= 0)
			break;
		used += (size_t)n;
		buf[used] = '\0';
		char *nl = strchr(buf, '\n');
		if (nl) {
			*nl = '\0';
			return buf;
		}
	}
	free(buf);
	return NULL;
}

/* Asks the daemon; answers the browser with what it said, as JSON. */
static enum MHD_Result forward(struct view_server *s, struct MHD_Connection *c, const char *line)
{
	char path[CONTROL_PATH_MAX];
	pthread_mutex_lock(&s->v->lock);
	bool up = s->v->daemon_up;
	snprintf(path, sizeof path, "%s", s->v->socket_path);
	pthread_mutex_unlock(&s->v->lock);
	if (!up)
		return view_send_error_json(c, MHD_HTTP_SERVICE_UNAVAILABLE, "latticed is not running");
	int fd = control_connect(path, 2000);
	char *answer = NULL;
	if (fd >= 0) {
		size_t n = strlen(line);
		if (send(fd, line, n, MSG_NOSIGNAL) == (ssize_t)n && send(fd, "\n", 1, MSG_NOSIGNAL) == 1)
			answer = daemon_reply(fd);
		close(fd);
	}
	struct json_object *o = answer ? json_tokener_parse(answer) : NULL;
	free(answer);
	struct json_object *okv = NULL, *text = NULL;
	if (!json_object_is_type(o, json_type_object) || !json_object_object_get_ex(o, "ok", &okv)) {
		json_object_put(o);
		return view_send_error_json(c, MHD_HTTP_BAD_GATEWAY, "latticed gave no answer");
	}
	bool ok = json_object_get_boolean(okv);
	json_object_object_get_ex(o, ok ? "message" : "error", &text);
	struct json_object *out = json_object_new_object();
	json_object_object_add(out, "ok", json_object_new_boolean(ok));
	json_object_object_add(out, ok ? "message" : "error",
			       json_object_new_string(json_object_is_type(text, json_type_string)
						      ? json_object_get_string(text) : ""));
	const char *body = json_object_to_json_string_ext(out, JSON_C_TO_STRING_PLAIN);
	enum MHD_Result r = view_send_copy(c, ok ? MHD_HTTP_OK : MHD_HTTP_UNPROCESSABLE_CONTENT,
				      "application/json", view_page_policy, body, strlen(body));
	json_object_put(out);
	json_object_put(o);
	return r;
}

static void log_refusal(struct MHD_Connection *c, const char *why)
{
	char who[INET6_ADDRSTRLEN];
	view_client_address(c, who, sizeof who);
	view_log_limited(&refusals, "view: control request from %s refused: %s", who, why);
}

static enum MHD_Result serve_control(struct view_server *s, struct MHD_Connection *c,
				     struct request *req)
{
	struct view *v = s->v;
	if (!v->control)
		return view_send_error_json(c, MHD_HTTP_FORBIDDEN,
				       "control is off: this page is read-only (start latticed view with --control)");
	const char *token = MHD_lookup_connection_value(c, MHD_HEADER_KIND, "X-Latticed-Token");
	if (!token || !view_token_matches(token, v->token, v->token_length)) {
		log_refusal(c, token ? "wrong token" : "no token");
		return view_send_error_json(c, MHD_HTTP_FORBIDDEN, "wrong or missing token");
	}
	if (req->too_big)
		return view_send_error_json(c, MHD_HTTP_CONTENT_TOO_LARGE, "request too long");
	req->body[req->length] = '\0';
	char arg[VIEW_BODY_MAX + 1];
	const struct control_command *cmd = control_command_parse(req->body, arg, sizeof arg);
	bool allowed = cmd && (cmd->kind == CONTROL_PANIC || cmd->kind == CONTROL_PRESET ||
			       cmd->kind == CONTROL_ROOT);
	if (!allowed || strchr(req->body, '\n') || strchr(req->body, '\r'))
		return view_send_error_json(c, MHD_HTTP_BAD_REQUEST, "expected panic, preset NAME or root N");
	return forward(s, c, req->body);
}

/* ---- routing -------------------------------------------------------------------------------- */

static enum MHD_Result route_get(struct view_server *s, struct MHD_Connection *c, const char *url)
{
	if (strcmp(url, "/") == 0 || strcmp(url, "/index.html") == 0)
		return MHD_queue_response(c, MHD_HTTP_OK, s->page);
	if (strcmp(url, "/view.js") == 0)
		return MHD_queue_response(c, MHD_HTTP_OK, s->script);
	if (strcmp(url, "/view.css") == 0)
		return MHD_queue_response(c, MHD_HTTP_OK, s->style);
	if (strcmp(url, "/lattice.svg") == 0)
		return serve_drawing(s, c);
	if (strcmp(url, "/state") == 0)
		return serve_state(s, c);
	if (strcmp(url, "/events") == 0)
		return view_stream_serve(s->v, c);
	if (strcmp(url, "/favicon.ico") == 0)
		return view_send_copy(c, MHD_HTTP_NO_CONTENT, "image/x-icon", view_page_policy, "", 0);
	return view_send_text(c, MHD_HTTP_NOT_FOUND, "not here: the page is at /");
}

/* The body of a POST, kept up to VIEW_BODY_MAX bytes; the rest is read and dropped. */
static void take_body(struct request *req, const char *data, size_t *size)
{
	size_t room = VIEW_BODY_MAX - req->length;
	if (*size > room)
		req->too_big = true;
	size_t n = *size < room ? *size : room;
	memcpy(req->body + req->length, data, n);
	req->length += n;
	*size = 0;
}

static enum MHD_Result on_request(void *context, struct MHD_Connection *c, const char *url,
				  const char *method, const char *version, const char *data,
				  size_t *size, void **request_context)
{
	struct view_server *s = context;
	struct request *req = *request_context;
	(void)version;
	if (!req) {
		req = calloc(1, sizeof *req);
		if (!req)
			return MHD_NO;
		*request_context = req;
		const char *length = MHD_lookup_connection_value(c, MHD_HEADER_KIND, "Content-Length");
		if (length && strtoull(length, NULL, 10) > VIEW_BODY_MAX)
			return view_send_error_json(c, MHD_HTTP_CONTENT_TOO_LARGE, "request too long");
		return MHD_YES;
	}
	if (*size) {
		take_body(req, data, size);
		return MHD_YES;
	}
	const char *host = MHD_lookup_connection_value(c, MHD_HEADER_KIND, "Host");
	if (s->v->loopback && host && !loopback_host(host))
		return view_send_text(c, MHD_HTTP_MISDIRECTED_REQUEST,
				 "this view listens on the loopback address only; open it as http://127.0.0.1:PORT/");
	bool get = strcmp(method, "GET") == 0 || strcmp(method, "HEAD") == 0;
	if (strcmp(method, "POST") == 0 && strcmp(url, "/control") == 0) {
		const char *origin = MHD_lookup_connection_value(c, MHD_HEADER_KIND, "Origin");
		char own[300];
		snprintf(own, sizeof own, "http://%s", host ? host : "");
		if (origin && strcmp(origin, own) != 0)
			return view_send_error_json(c, MHD_HTTP_FORBIDDEN, "a page from elsewhere may not control latticed");
		return serve_control(s, c, req);
	}
	if (!get) {
		struct MHD_Response *r = MHD_create_response_from_buffer(0, (void *)"", MHD_RESPMEM_PERSISTENT);
		if (r)
			MHD_add_response_header(r, MHD_HTTP_HEADER_ALLOW, "GET, HEAD, POST");
		return view_queue(c, MHD_HTTP_METHOD_NOT_ALLOWED, r, "text/plain", view_page_policy);
	}
	return route_get(s, c, url);
}

static void on_completed(void *context, struct MHD_Connection *c, void **request_context,
			 enum MHD_RequestTerminationCode why)
{
	(void)context;
	if (why == MHD_REQUEST_TERMINATED_TIMEOUT_REACHED) {
		char who[INET6_ADDRSTRLEN];
		view_client_address(c, who, sizeof who);
		view_log_limited(&timeouts, "view: closed a connection from %s that took nothing for its time limit", who);
	}
	free(*request_context);
	*request_context = NULL;
}

/* ---- start and stop --------------------------------------------------------------------------- */

static struct MHD_Response *asset(const void *bytes, size_t length, const char *type)
{
	struct MHD_Response *r = MHD_create_response_from_buffer(length, (void *)bytes,
								 MHD_RESPMEM_PERSISTENT);
	if (r)
		view_add_headers(r, type, view_page_policy);
	return r;
}

struct view_server *view_http_start(struct view *v, const struct sockaddr *addr, char *err,
				    size_t err_size)
{
	struct view_server *s = calloc(1, sizeof *s);
	const char *lattice_css = draw_lattice_style();
	size_t css_length = view_asset_view_css_length + strlen(lattice_css);
	if (s)
		s->css = malloc(css_length);
	if (!s || !s->css) {
		snprintf(err, err_size, "out of memory");
		free(s);
		return NULL;
	}
	s->v = v;
	memcpy(s->css, lattice_css, strlen(lattice_css));
	memcpy(s->css + strlen(lattice_css), view_asset_view_css, view_asset_view_css_length);
	s->page = asset(view_asset_index_html, view_asset_index_html_length, "text/html; charset=utf-8");
	s->script = asset(view_asset_view_js, view_asset_view_js_length, "text/javascript; charset=utf-8");
	s->style = asset(s->css, css_length, "text/css; charset=utf-8");
	unsigned flags = MHD_USE_THREAD_PER_CONNECTION | MHD_USE_INTERNAL_POLLING_THREAD |
			 MHD_USE_ERROR_LOG | (addr->sa_family == AF_INET6 ? MHD_USE_IPv6 : 0);
	if (s->page && s->script && s->style)
		s->daemon = MHD_start_daemon(
			flags, 0, NULL, NULL, on_request, s,
			MHD_OPTION_EXTERNAL_LOGGER, mhd_log, NULL,
			MHD_OPTION_SOCK_ADDR, addr,
			MHD_OPTION_CONNECTION_LIMIT, (unsigned)VIEW_CLIENTS_MAX,
			MHD_OPTION_CONNECTION_TIMEOUT, (unsigned)VIEW_IDLE_S,
			MHD_OPTION_CONNECTION_MEMORY_LIMIT, (size_t)VIEW_HEADERS_MAX,
			MHD_OPTION_THREAD_STACK_SIZE, (size_t)(256 * 1024),
			MHD_OPTION_LISTEN_BACKLOG_SIZE, 128u,
			MHD_OPTION_NOTIFY_COMPLETED, on_completed, NULL,
			MHD_OPTION_END);
	if (!s->daemon) {
		snprintf(err, err_size, "cannot listen there: %s (another program on that port? choose one with --listen)",
			 errno ? strerror(errno) : "libmicrohttpd refused");
		view_http_stop(s);
		return NULL;
	}
	return s;
}

void view_http_stop(struct view_server *s)
{
	if (!s)
		return;
	if (s->daemon) {
		view_stop_streams(s->v);
		MHD_stop_daemon(s->daemon);
	}
	if (s->page)
		MHD_destroy_response(s->page);
	if (s->script)
		MHD_destroy_response(s->script);
	if (s->style)
		MHD_destroy_response(s->style);
	free(s->css);
	free(s);
}
