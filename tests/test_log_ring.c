/*
 * Tests of the log ring: lines posted by a real-time thread come out in
 * order, one line each, with their level; a full ring drops lines and the
 * next line that gets through reports how many; over-long lines are cut
 * short within the record; newlines never split an event into two lines.
 * (Our rules, for our own interface: no outside source applies.)
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <pthread.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

#include "log_ring.h"

#define CAPTURE_MAX 1024

struct capture {
	int count;
	enum log_level levels[CAPTURE_MAX];
	char lines[CAPTURE_MAX][LOG_RECORD_TEXT + 64];
};

static struct capture cap;

static void capture_line(enum log_level level, const char *line, void *context)
{
	struct capture *c = context;
	if (c->count < CAPTURE_MAX) {
		c->levels[c->count] = level;
		snprintf(c->lines[c->count], sizeof c->lines[0], "%s", line);
		c->count++;
	}
}

static int setup(void **state)
{
	(void)state;
	memset(&cap, 0, sizeof cap);
	log_set_sink(capture_line, &cap);
	return 0;
}

static struct log_ring ring;

static void lines_come_out_in_order(void **state)
{
	(void)state;
	log_ring_init(&ring);
	assert_int_equal(log_ring_drain(&ring), 0);
	assert_true(log_ring_post(&ring, LOG_LEVEL_WARNING, "output %s: %d messages dropped", "synth", 3));
	assert_true(log_ring_post(&ring, LOG_LEVEL_INFO, "source %d connected", 2));
	assert_int_equal(log_ring_drain(&ring), 2);
	assert_int_equal(cap.count, 2);
	assert_int_equal(cap.levels[0], LOG_LEVEL_WARNING);
	assert_string_equal(cap.lines[0], "output synth: 3 messages dropped");
	assert_int_equal(cap.levels[1], LOG_LEVEL_INFO);
	assert_string_equal(cap.lines[1], "source 2 connected");
}

static void full_ring_counts_lost_lines(void **state)
{
	(void)state;
	log_ring_init(&ring);
	for (int i = 0; i < LOG_RING_RECORDS; i++)
		assert_true(log_ring_post(&ring, LOG_LEVEL_INFO, "line %d", i));
	for (int i = 0; i < 5; i++)
		assert_false(log_ring_post(&ring, LOG_LEVEL_INFO, "lost %d", i));
	assert_int_equal(log_ring_drain(&ring), LOG_RING_RECORDS);
	assert_true(log_ring_post(&ring, LOG_LEVEL_ERROR, "after"));
	assert_int_equal(log_ring_drain(&ring), 1);
	assert_int_equal(cap.count, LOG_RING_RECORDS + 2);
	assert_string_equal(cap.lines[LOG_RING_RECORDS - 1], "line 255");
	assert_string_equal(cap.lines[LOG_RING_RECORDS], "(5 log lines lost: the log ring was full)");
	assert_int_equal(cap.levels[LOG_RING_RECORDS], LOG_LEVEL_WARNING);
	assert_string_equal(cap.lines[LOG_RING_RECORDS + 1], "after");
	/* the count is reported once */
	assert_true(log_ring_post(&ring, LOG_LEVEL_INFO, "next"));
	assert_int_equal(log_ring_drain(&ring), 1);
	assert_string_equal(cap.lines[LOG_RING_RECORDS + 2], "next");
}

static void long_lines_are_cut_and_newlines_joined(void **state)
{
	(void)state;
	log_ring_init(&ring);
	char longer[600];
	memset(longer, 'x', sizeof longer - 1);
	longer[sizeof longer - 1] = '\0';
	assert_true(log_ring_post(&ring, LOG_LEVEL_INFO, "%s", longer));
	assert_true(log_ring_post(&ring, LOG_LEVEL_INFO, "port name with\na newline"));
	assert_int_equal(log_ring_drain(&ring), 2);
	assert_int_equal(strlen(cap.lines[0]), LOG_RECORD_TEXT - 1);
	assert_string_equal(cap.lines[1], "port name with a newline");
}

struct poster {
	struct log_ring *ring;
	int posted, dropped;         /* read by main only after the join */
	atomic_bool done;
};

static void *post_many(void *arg)
{
	struct poster *p = arg;
	for (int i = 0; i < 100000; i++) {
		if (log_ring_post(p->ring, LOG_LEVEL_INFO, "%d", i))
			p->posted++;
		else
			p->dropped++;
	}
	atomic_store(&p->done, true);
	return NULL;
}

/* From another thread: everything posted is printed once, in order, and
 * the lost counts add up to what the producer dropped. */
static void a_thread_posts_while_main_drains(void **state)
{
	(void)state;
	log_ring_init(&ring);
	struct poster p = {.ring = &ring};
	atomic_init(&p.done, false);
	pthread_t t;
	assert_int_equal(pthread_create(&t, NULL, post_many, &p), 0);
	int drained = 0, last = -1;
	unsigned lost = 0;
	bool running = true;
	while (running) {
		running = !atomic_load(&p.done); /* one more pass after it is done */
		const struct log_record *rec;
		while ((rec = spsc_queue_peek(&ring.ring))) {
			int value = 0;
			sscanf(rec->text, "%d", &value);
			assert_true(value > last);
			lost += rec->lost_before;
			last = value;
			drained++;
			spsc_queue_release(&ring.ring);
		}
	}
	assert_int_equal(pthread_join(t, NULL), 0);
	const struct log_record *rec;
	while ((rec = spsc_queue_peek(&ring.ring))) {
		lost += rec->lost_before;
		drained++;
		spsc_queue_release(&ring.ring);
	}
	assert_int_equal(drained, p.posted);
	/* drops after the last successful post are still pending in ring.lost */
	assert_int_equal(lost + ring.lost, (unsigned)p.dropped);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup(lines_come_out_in_order, setup),
		cmocka_unit_test_setup(full_ring_counts_lost_lines, setup),
		cmocka_unit_test_setup(long_lines_are_cut_and_newlines_joined, setup),
		cmocka_unit_test_setup(a_thread_posts_while_main_drains, setup),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
