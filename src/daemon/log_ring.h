/*
 * log_ring: log lines from the real-time threads, and the one place that
 * writes log lines out.
 *
 * A thread on the event path must not block on stderr, so it formats its
 * line into a fixed record in its own spsc_queue (one ring per producing
 * thread) and the main thread writes the records out.  A full ring drops
 * the line and counts it; the next line that gets through carries the
 * count, printed as "(N log lines lost)".  Lines longer than a record are
 * cut short, never split.  Formatting is vsnprintf into the record: no
 * allocation and no lock for the formats used on the event path.
 *
 * Output: one line per event on stderr, "LEVEL: text".  Under journald
 * (JOURNAL_STREAM set) each line also starts with the syslog priority in
 * angle brackets (<3> error, <4> warning, <5> notice, <6> info), which the
 * journal turns into the entry's priority.
 */
#ifndef LATTICED_LOG_RING_H
#define LATTICED_LOG_RING_H

#include <stdarg.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "spsc_queue.h"

#define LOG_RECORD_TEXT 240
#define LOG_RING_RECORDS 256

enum log_level { LOG_LEVEL_ERROR, LOG_LEVEL_WARNING, LOG_LEVEL_NOTICE, LOG_LEVEL_INFO };

struct log_record {
	uint8_t level;
	uint32_t lost_before;            /* lines dropped just before this one */
	char text[LOG_RECORD_TEXT];
};

struct log_ring {
	struct spsc_queue ring;
	uint32_t lost;                   /* producer's: drops not yet reported */
	struct log_record records[LOG_RING_RECORDS];
};

void log_ring_init(struct log_ring *r);

/* Producer: formats one line into the ring; false if it was dropped. */
bool log_ring_post(struct log_ring *r, enum log_level level, const char *fmt, ...)
	__attribute__((format(printf, 3, 4)));

/* Consumer: writes out every waiting record; returns how many. */
int log_ring_drain(struct log_ring *r);

/* The main thread's own lines (and the drained ones) go out here. */
void log_print(enum log_level level, const char *fmt, ...)
	__attribute__((format(printf, 2, 3)));
void log_vprint(enum log_level level, const char *fmt, va_list ap);

/* Decides the line format once, before any thread starts: journal
 * priorities when stderr is the journal. */
void log_setup(void);

/* Where log_print writes: stderr unless a test says otherwise. */
void log_set_sink(void (*sink)(enum log_level level, const char *line, void *context),
		  void *context);

#endif
