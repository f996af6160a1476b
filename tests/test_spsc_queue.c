/*
 * Tests of the lock-free queues between the daemon's threads: one
 * producer thread and one consumer thread pass 10^6 items through small
 * queues (so they wrap and fill thousands of times) and every item must
 * arrive once, in order; a full queue refuses a push without changing
 * anything; multi-slot messages arrive whole or not at all.
 * (Our rules, for our own interface; the property checked is the single-producer /
 * single-consumer FIFO contract, common practice.)
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "msg_queue.h"
#include "spsc_queue.h"

#define ITEMS 1000000u

struct item {
	uint32_t serial;
	uint32_t check;              /* a function of serial: torn copies show */
	uint8_t pad[24];
};

static uint32_t check_of(uint32_t serial)
{
	return serial * 2654435761u ^ 0x5bd1e995u;
}

struct shared {
	struct spsc_queue q;
	struct item storage[64];
	uint32_t full_seen;          /* producer's count of refused pushes */
};

static void *produce(void *arg)
{
	struct shared *s = arg;
	for (uint32_t i = 0; i < ITEMS;) {
		struct item it = {.serial = i, .check = check_of(i)};
		memset(it.pad, (int)(i & 0xFF), sizeof it.pad);
		if (spsc_queue_push(&s->q, &it))
			i++;
		else
			s->full_seen++;
	}
	return NULL;
}

static void threads_keep_order_and_lose_nothing(void **state)
{
	(void)state;
	static struct shared s;
	memset(&s, 0, sizeof s);
	assert_true(spsc_queue_init(&s.q, s.storage, 64, sizeof s.storage[0]));
	pthread_t producer;
	assert_int_equal(pthread_create(&producer, NULL, produce, &s), 0);
	uint32_t expected = 0;
	while (expected < ITEMS) {
		struct item it;
		if (!spsc_queue_pop(&s.q, &it))
			continue;
		if (it.serial != expected || it.check != check_of(expected) ||
		    it.pad[0] != (uint8_t)expected || it.pad[23] != (uint8_t)expected)
			fail_msg("item %u arrived as serial %u check %08x", expected, it.serial, it.check);
		expected++;
	}
	assert_int_equal(pthread_join(producer, NULL), 0);
	struct item extra;
	assert_false(spsc_queue_pop(&s.q, &extra)); /* nothing beyond what was sent */
	print_message("producer found the queue full %u times\n", s.full_seen);
}

static void full_queue_refuses_and_keeps_items(void **state)
{
	(void)state;
	uint32_t storage[8], v;
	struct spsc_queue q;
	assert_false(spsc_queue_init(&q, storage, 6, sizeof storage[0])); /* not a power of two */
	assert_false(spsc_queue_init(&q, storage, 1, sizeof storage[0]));
	assert_true(spsc_queue_init(&q, storage, 8, sizeof storage[0]));
	assert_int_equal(spsc_queue_room(&q), 8);
	assert_null(spsc_queue_peek(&q));
	for (uint32_t i = 0; i < 8; i++) {
		assert_true(spsc_queue_push(&q, &i));
	}
	assert_int_equal(spsc_queue_room(&q), 0);
	v = 99;
	assert_false(spsc_queue_push(&q, &v));
	assert_int_equal(spsc_queue_count(&q), 8);
	/* one out makes room for exactly one */
	assert_true(spsc_queue_pop(&q, &v));
	assert_int_equal(v, 0);
	v = 8;
	assert_true(spsc_queue_push(&q, &v));
	assert_false(spsc_queue_push(&q, &v));
	for (uint32_t i = 1; i <= 8; i++) {
		assert_true(spsc_queue_pop(&q, &v));
		assert_int_equal(v, i);
	}
	assert_false(spsc_queue_pop(&q, &v));
	assert_int_equal(spsc_queue_room(&q), 8);
}

static void indices_wrap_around(void **state)
{
	(void)state;
	uint32_t storage[4], v;
	struct spsc_queue q;
	assert_true(spsc_queue_init(&q, storage, 4, sizeof storage[0]));
	/* start the free-running indices just below SIZE_MAX */
	atomic_store(&q.head, SIZE_MAX - 2);
	atomic_store(&q.tail, SIZE_MAX - 2);
	q.head_seen = q.tail_seen = SIZE_MAX - 2;
	for (uint32_t round = 0; round < 5; round++) {
		for (uint32_t i = 0; i < 4; i++) {
			v = round * 10 + i;
			assert_true(spsc_queue_push(&q, &v));
		}
		assert_false(spsc_queue_push(&q, &v));
		for (uint32_t i = 0; i < 4; i++) {
			assert_true(spsc_queue_pop(&q, &v));
			assert_int_equal(v, round * 10 + i);
		}
	}
}

/* ---- msg_queue: whole messages over several slots, a ring per output ----- */

static struct msg_queue mq;

static size_t peek(int output, enum msg_kind *kind, uint8_t *buf)
{
	return msg_queue_peek(&mq, output, kind, buf, MSG_QUEUE_MESSAGE_MAX);
}

static void messages_whole_or_not_at_all(void **state)
{
	(void)state;
	msg_queue_init(&mq);
	static uint8_t buf[MSG_QUEUE_MESSAGE_MAX];
	enum msg_kind kind;
	assert_int_equal(peek(2, &kind, buf), 0);
	/* a note-on, then a SysEx of 100 bytes (4 slots), then a clock */
	uint8_t note[3] = {0x91, 60, 100}, sysex[100], clock = 0xF8;
	sysex[0] = 0xF0;
	for (int i = 1; i < 99; i++)
		sysex[i] = (uint8_t)i;
	sysex[99] = 0xF7;
	assert_true(msg_queue_push(&mq, 2, note, 3));
	assert_true(msg_queue_push(&mq, 2, sysex, sizeof sysex));
	assert_true(msg_queue_push(&mq, 2, &clock, 1));
	assert_int_equal(msg_queue_fill(&mq, 2), 6);
	assert_int_equal(peek(2, &kind, buf), 3);
	assert_int_equal(kind, MSG_MIDI);
	assert_memory_equal(buf, note, 3);
	/* not taken until released: a refused message is there again */
	assert_int_equal(peek(2, &kind, buf), 3);
	msg_queue_release(&mq, 2);
	assert_int_equal(peek(2, &kind, buf), 100);
	assert_memory_equal(buf, sysex, 100);
	msg_queue_release(&mq, 2);
	assert_int_equal(peek(2, &kind, buf), 1);
	assert_int_equal(buf[0], 0xF8);
	msg_queue_release(&mq, 2);
	assert_int_equal(peek(2, &kind, buf), 0);
	assert_int_equal(msg_queue_fill(&mq, 2), 0);

	/* fill to the last slot: a 2-slot message no longer fits, a 1-slot one does */
	size_t pushed = 0;
	uint8_t big[3 * MSG_QUEUE_SLOT_BYTES] = {0xF0};
	big[sizeof big - 1] = 0xF7;
	while (msg_queue_room(&mq, 1) >= 3) {
		assert_true(msg_queue_push(&mq, 1, big, sizeof big));
		pushed++;
	}
	assert_int_equal(pushed, MSG_QUEUE_SLOTS / 3);
	size_t left = MSG_QUEUE_SLOTS - pushed * 3; /* 4096 = 3*1365 + 1 */
	assert_int_equal(left, 1);
	assert_false(msg_queue_push(&mq, 1, big, 2 * MSG_QUEUE_SLOT_BYTES));
	assert_true(msg_queue_push(&mq, 1, note, 3));
	assert_false(msg_queue_push(&mq, 1, note, 3));
	/* the other rings are not touched by a full one */
	assert_int_equal(msg_queue_room(&mq, 0), MSG_QUEUE_SLOTS);
	assert_true(msg_queue_push(&mq, 0, note, 3));
	/* too long or empty never fits */
	static uint8_t huge[MSG_QUEUE_MESSAGE_MAX + 1];
	assert_false(msg_queue_push(&mq, 3, huge, sizeof huge));
	assert_false(msg_queue_push(&mq, 3, note, 0));
	assert_int_equal(msg_queue_fill(&mq, 3), 0);
}

static void a_marker_takes_one_slot(void **state)
{
	(void)state;
	msg_queue_init(&mq);
	static uint8_t buf[MSG_QUEUE_MESSAGE_MAX];
	enum msg_kind kind;
	uint8_t note[3] = {0x90, 60, 100};
	assert_true(msg_queue_push_marker(&mq, 4, MSG_RECONNECTED));
	assert_true(msg_queue_push(&mq, 4, note, 3));
	assert_int_equal(msg_queue_fill(&mq, 4), 2);
	assert_int_equal(peek(4, &kind, buf), 1);
	assert_int_equal(kind, MSG_RECONNECTED);
	msg_queue_release(&mq, 4);
	assert_int_equal(peek(4, &kind, buf), 3);
	assert_int_equal(kind, MSG_MIDI);
}

struct mq_shared {
	struct msg_queue q;
	uint32_t refused;
};

/* message i: output i % 8, length 1 + i % 300, bytes derived from i */
static size_t message_of(uint32_t i, uint8_t *buf)
{
	size_t length = 1 + i % 300;
	for (size_t k = 0; k < length; k++)
		buf[k] = (uint8_t)(i * 31 + k);
	return length;
}

static void *mq_produce(void *arg)
{
	struct mq_shared *s = arg;
	uint8_t buf[400];
	for (uint32_t i = 0; i < ITEMS / 4;) {
		size_t length = message_of(i, buf);
		if (msg_queue_push(&s->q, (int)(i % 8), buf, length))
			i++;
		else
			s->refused++;
	}
	return NULL;
}

static void message_threads_keep_order(void **state)
{
	(void)state;
	static struct mq_shared s;
	memset(&s, 0, sizeof s);
	msg_queue_init(&s.q);
	pthread_t producer;
	assert_int_equal(pthread_create(&producer, NULL, mq_produce, &s), 0);
	static uint8_t got[MSG_QUEUE_MESSAGE_MAX];
	uint8_t want[400];
	enum msg_kind kind;
	uint32_t next[8] = {0, 1, 2, 3, 4, 5, 6, 7}; /* the next message expected per output */
	uint32_t done = 0;
	while (done < ITEMS / 4) {
		for (int k = 0; k < 8; k++) {
			size_t n = msg_queue_peek(&s.q, k, &kind, got, sizeof got);
			if (n == 0)
				continue;
			uint32_t i = next[k];
			size_t length = message_of(i, want);
			if (n != length || kind != MSG_MIDI || memcmp(got, want, length) != 0)
				fail_msg("output %d: message %u has %zu bytes, wanted %zu", k, i, n, length);
			msg_queue_release(&s.q, k);
			next[k] += 8;
			done++;
		}
	}
	assert_int_equal(pthread_join(producer, NULL), 0);
	for (int k = 0; k < 8; k++)
		assert_int_equal(msg_queue_peek(&s.q, k, &kind, got, sizeof got), 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(threads_keep_order_and_lose_nothing),
		cmocka_unit_test(full_queue_refuses_and_keeps_items),
		cmocka_unit_test(indices_wrap_around),
		cmocka_unit_test(messages_whole_or_not_at_all),
		cmocka_unit_test(a_marker_takes_one_slot),
		cmocka_unit_test(message_threads_keep_order),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
