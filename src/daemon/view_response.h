/*
 * view_response: what every answer of `latticed view` is made of: the
 * headers each one carries (type, Content-Security-Policy, nosniff, no
 * referrer, no framing, no caching; never a CORS header), small text and
 * JSON answers, the client's address for log lines, and log lines that
 * come at most once per 10 s per kind with a count of the rest, so no
 * client can flood the log.
 */
#ifndef LATTICED_VIEW_RESPONSE_H
#define LATTICED_VIEW_RESPONSE_H

#include <microhttpd.h>
#include <pthread.h>
#include <stddef.h>
#include <stdint.h>

/* The page's policy: its own script, style and connections, nothing else. */
extern const char view_page_policy[];
/* The drawing opened on its own: its own stylesheet, nothing else. */
extern const char view_svg_policy[];

void view_add_headers(struct MHD_Response *r, const char *type, const char *policy);

/* Adds the headers above to r, queues it with the status and lets go of
 * it: every answer ends here.  MHD_NO when r is NULL (no memory). */
enum MHD_Result view_queue(struct MHD_Connection *c, unsigned status, struct MHD_Response *r,
			   const char *type, const char *policy);
/* Queues a copy of bytes with the status and the headers above. */
enum MHD_Result view_send_copy(struct MHD_Connection *c, unsigned status, const char *type,
			       const char *policy, const void *bytes, size_t length);
/* One line of text. */
enum MHD_Result view_send_text(struct MHD_Connection *c, unsigned status, const char *text);
/* {"ok":false,"error":text} */
enum MHD_Result view_send_error_json(struct MHD_Connection *c, unsigned status, const char *text);

/* The client's IP address as text ("?" if unknown). */
void view_client_address(struct MHD_Connection *c, char *out, size_t size);

struct view_log_limit {
	pthread_mutex_t lock;
	int64_t last;
	unsigned long skipped;
};

/* A warning, unless one of this kind went out less than 10 s ago. */
void view_log_limited(struct view_log_limit *l, const char *fmt, ...)
	__attribute__((format(printf, 2, 3)));

#endif
