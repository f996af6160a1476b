/*
 * log_ring: see log_ring.h.  The sink is a plain function pointer set
 * before threads start; only the main thread calls log_print (the other
 * threads post to their rings), so writing to stderr needs no lock.
 */
#include "log_ring.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static bool journal_priorities;
static void (*log_sink)(enum log_level, const char *, void *);
static void *log_sink_context;

static const char *const level_names[] = {"error", "warning", "notice", "info"};
static const int syslog_priorities[] = {3, 4, 5, 6}; /* syslog(3) LOG_ERR .. LOG_INFO */

void log_setup(void)
{
	journal_priorities = getenv("JOURNAL_STREAM") != NULL;
}

void log_set_sink(void (*sink)(enum log_level, const char *, void *), void *context)
{
	log_sink = sink;
	log_sink_context = context;
}

static void emit_line(enum log_level level, const char *text)
{
	if ((unsigned)level > LOG_LEVEL_INFO)
		level = LOG_LEVEL_INFO;
	if (log_sink) {
		log_sink(level, text, log_sink_context);
		return;
	}
	if (journal_priorities)
		fprintf(stderr, "<%d>%s: %s\n", syslog_priorities[level], level_names[level], text);
	else
		fprintf(stderr, "%s: %s\n", level_names[level], text);
	fflush(stderr);
}

void log_vprint(enum log_level level, const char *fmt, va_list ap)
{
	char text[1024];
	vsnprintf(text, sizeof text, fmt, ap);
	/* one event, one line: a stray newline would split it */
	for (char *p = text; *p; p++)
		if (*p == '\n' || *p == '\r')
			*p = ' ';
	emit_line(level, text);
}

void log_print(enum log_level level, const char *fmt, ...)
{
	va_list ap;
	va_start(ap, fmt);
	log_vprint(level, fmt, ap);
	va_end(ap);
}

void log_ring_init(struct log_ring *r)
{
	r->lost = 0;
	(void)spsc_queue_init(&r->ring, r->records, LOG_RING_RECORDS, sizeof r->records[0]);
}

bool log_ring_post(struct log_ring *r, enum log_level level, const char *fmt, ...)
{
	if (spsc_queue_room(&r->ring) == 0) {
		r->lost++;
		return false;
	}
	struct log_record *rec = spsc_queue_slot_ahead(&r->ring, 0);
	rec->level = (uint8_t)level;
	rec->lost_before = r->lost;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(rec->text, sizeof rec->text, fmt, ap);
	va_end(ap);
	spsc_queue_publish(&r->ring, 1);
	r->lost = 0;
	return true;
}

int log_ring_drain(struct log_ring *r)
{
	int count = 0;
	const struct log_record *rec;
	while ((rec = spsc_queue_peek(&r->ring))) {
		if (rec->lost_before)
			log_print(LOG_LEVEL_WARNING, "(%u log lines lost: the log ring was full)",
				  (unsigned)rec->lost_before);
		log_print((enum log_level)rec->level, "%s", rec->text);
		spsc_queue_release(&r->ring);
		count++;
	}
	return count;
}
