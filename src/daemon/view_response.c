/*
 * view_response: see view_response.h.
 */
#include "view_response.h"

#include <arpa/inet.h>
#include <json-c/json.h>
#include <stdarg.h>
#include <stdbool.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "clock.h"
#include "log_ring.h"

#define LOG_EVERY_MS 10000

const char view_page_policy[] =
	"default-src 'none'; script-src 'self'; style-src 'self'; img-src 'self'; "
	"connect-src 'self'; base-uri 'none'; form-action 'none'; frame-ancestors 'none'";
const char view_svg_policy[] = "default-src 'none'; style-src 'unsafe-inline'; frame-ancestors 'none'";

void view_log_limited(struct view_log_limit *l, const char *fmt, ...)
{
	char text[300];
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(text, sizeof text, fmt, ap);
	va_end(ap);
	text[strcspn(text, "\n")] = '\0';
	pthread_mutex_lock(&l->lock);
	int64_t now = monotonic_ms();
	bool say = !l->last || now - l->last >= LOG_EVERY_MS;
	unsigned long skipped = l->skipped;
	if (say) {
		l->last = now;
		l->skipped = 0;
	} else {
		l->skipped++;
	}
	pthread_mutex_unlock(&l->lock);
	if (say && skipped)
		log_print(LOG_LEVEL_WARNING, "%s (and %lu more like it since the last such line)", text, skipped);
	else if (say)
		log_print(LOG_LEVEL_WARNING, "%s", text);
}

void view_add_headers(struct MHD_Response *r, const char *type, const char *policy)
{
	MHD_add_response_header(r, MHD_HTTP_HEADER_CONTENT_TYPE, type);
	MHD_add_response_header(r, MHD_HTTP_HEADER_CONTENT_SECURITY_POLICY, policy);
	MHD_add_response_header(r, "X-Content-Type-Options", "nosniff");
	MHD_add_response_header(r, "Referrer-Policy", "no-referrer");
	MHD_add_response_header(r, "X-Frame-Options", "DENY");
	MHD_add_response_header(r, MHD_HTTP_HEADER_CACHE_CONTROL, "no-store");
}

enum MHD_Result view_queue(struct MHD_Connection *c, unsigned status, struct MHD_Response *r,
			   const char *type, const char *policy)
{
	if (!r)
		return MHD_NO;
	view_add_headers(r, type, policy);
	enum MHD_Result ok = MHD_queue_response(c, status, r);
	MHD_destroy_response(r);
	return ok;
}

enum MHD_Result view_send_copy(struct MHD_Connection *c, unsigned status, const char *type,
			       const char *policy, const void *bytes, size_t length)
{
	struct MHD_Response *r = MHD_create_response_from_buffer(length, (void *)bytes,
								 MHD_RESPMEM_MUST_COPY);
	return view_queue(c, status, r, type, policy);
}

enum MHD_Result view_send_text(struct MHD_Connection *c, unsigned status, const char *text)
{
	char line[512];
	snprintf(line, sizeof line, "%s\n", text);
	return view_send_copy(c, status, "text/plain; charset=utf-8", view_page_policy, line, strlen(line));
}

/* {"ok":false,"error":text} with the status */
enum MHD_Result view_send_error_json(struct MHD_Connection *c, unsigned status, const char *text)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "ok", json_object_new_boolean(false));
	json_object_object_add(o, "error", json_object_new_string(text));
	const char *s = json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN);
	enum MHD_Result ok = view_send_copy(c, status, "application/json", view_page_policy, s, strlen(s));
	json_object_put(o);
	return ok;
}

void view_client_address(struct MHD_Connection *c, char *out, size_t size)
{
	const union MHD_ConnectionInfo *info = MHD_get_connection_info(c, MHD_CONNECTION_INFO_CLIENT_ADDRESS);
	snprintf(out, size, "?");
	if (!info || !info->client_addr)
		return;
	const struct sockaddr *a = info->client_addr;
	if (a->sa_family == AF_INET)
		inet_ntop(AF_INET, &((const struct sockaddr_in *)(const void *)a)->sin_addr, out, (socklen_t)size);
	else if (a->sa_family == AF_INET6)
		inet_ntop(AF_INET6, &((const struct sockaddr_in6 *)(const void *)a)->sin6_addr, out, (socklen_t)size);
}

