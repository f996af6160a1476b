/*
 * The input thread's side of the event ring (src/daemon/event_ring.c),
 * driven through real engines of an input_thread set up from a config
 * string, without a backend or threads: each check (our rule, event_ring.h)
 * looks at the events the ring holds.
 *   - nothing is posted while nobody subscribes;
 *   - a note-on and note-off for every note that starts and stops
 *     sounding, per output, with its tone, period, key and preset; a
 *     note held by the sustain pedal (CC 64, MIDI 1.0) stops only when
 *     the pedal comes up;
 *   - a ring that overflows counts every event it refused, posts nothing
 *     more until a sync fits, then one sync lists every sounding note and
 *     the tuning between a begin (with the count lost) and an end;
 *   - a preset change posts a tuning event with its name and root label;
 *     notes started before a reload keep their generation in a sync.
 * Tones are checked against the key map the tuning was built with
 * (keymap.h), the daemon's own source of what a key plays.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <stdlib.h>
#include <string.h>

#include "config.h"
#include "event_ring.h"
#include "input_thread.h"
#include "msg_queue.h"
#include "tuning.h"

static const char conf[] =
	"[lattice]\nseeds = 1 3 5 7\nchoose = 2\n"
	"[preset wide]\nseeds = 1 3 5 9\n"
	"[daemon]\nbackend = null\n"
	"[output a]\nchannels = 2-9\n"
	"[output b]\nchannels = 10-16\n";

static struct config cfg;
static struct config_report report;
static struct tuning_set tunings;
static struct input_thread thread;
static struct event_ring ring;
static struct msg_queue messages;    /* what the engines send, thrown away */

static int set_up(void **state)
{
	(void)state;
	char err[256];
	if (!config_parse(conf, strlen(conf), "t.conf", &cfg, &report) ||
	    !tuning_set_build(&cfg, &tunings, &report))
		fail_msg("%s", report.text);
	memset(&thread, 0, sizeof thread);
	if (!input_thread_init(&thread, &cfg, &tunings, err, sizeof err))
		fail_msg("%s", err);
	if (!event_ring_init(&ring))
		fail_msg("out of memory");
	thread.events = &ring;
	msg_queue_init(&messages);
	thread.messages = &messages;
	return 0;
}

static int tear_down(void **state)
{
	(void)state;
	event_ring_free(&ring);
	tuning_set_free(&tunings);
	return 0;
}

/* The MIDI 1.0 message to every output, as the input thread feeds it. */
static void play(uint8_t status, uint8_t a, uint8_t b)
{
	struct midi_msg m;
	memset(&m, 0, sizeof m);
	m.status = status;
	m.data[0] = a;
	m.data[1] = b;
	uint8_t buf[MSG_QUEUE_MESSAGE_MAX];
	enum msg_kind kind;
	for (int k = 0; k < thread.output_count; k++) {
		engine_handle(&thread.outputs[k].engine, 0, &m);
		while (msg_queue_peek(&messages, k, &kind, buf, sizeof buf))
			msg_queue_release(&messages, k);
	}
}

static int take_all(struct ring_event *out, int max)
{
	int n = 0;
	struct ring_event ev;
	while (event_ring_take(&ring, &ev))
		if (n < max)
			out[n++] = ev;
	return n;
}

static const struct keymap *keymap_of(int preset)
{
	return tunings.engine.presets[preset].keymap;
}

static void activate(void)
{
	atomic_store(&ring.active, true);
	ring.pending = false;
	atomic_store(&ring.sync_asked, false);
}

static void quiet_while_nobody_listens(void **state)
{
	(void)state;
	struct ring_event ev[8];
	atomic_store(&ring.active, false);
	play(0x90, 60, 100);
	play(0x80, 60, 0);
	event_ring_service(&thread);
	assert_int_equal(take_all(ev, 8), 0);
}

static void notes_on_and_off_per_output(void **state)
{
	(void)state;
	struct ring_event ev[16];
	activate();
	assert_true(event_ring_idle(&ring)); /* the main thread sleeps: the note wakes it */
	thread.wake_main = false;
	play(0x90, 62, 100);
	int n = take_all(ev, 16);
	assert_int_equal(n, 2); /* one per output */
	const struct key_pitch *kp = &keymap_of(0)->keys[62];
	for (int k = 0; k < 2; k++) {
		assert_int_equal(ev[k].kind, RING_NOTE_ON);
		assert_int_equal(ev[k].output, k);
		assert_int_equal(ev[k].key, 62);
		assert_int_equal(ev[k].tone, kp->tone);
		assert_int_equal(ev[k].period, kp->period);
		assert_int_equal(ev[k].preset, 0);
		assert_int_equal(ev[k].generation, 0);
	}
	uint32_t id0 = ev[0].note, id1 = ev[1].note;
	assert_true(thread.wake_main);
	/* sustain down, key up: the note rings, nothing stops */
	play(0xB0, 64, 127);
	play(0x80, 62, 0);
	assert_int_equal(take_all(ev, 16), 0);
	play(0xB0, 64, 0);
	n = take_all(ev, 16);
	assert_int_equal(n, 2);
	assert_int_equal(ev[0].kind, RING_NOTE_OFF);
	assert_int_equal(ev[0].note, id0);
	assert_int_equal(ev[1].kind, RING_NOTE_OFF);
	assert_int_equal(ev[1].note, id1);
}

/* Our rule (event_ring.h): the MIDI thread wakes the main thread once for
 * the first event after the main thread found the ring empty, never per
 * note, and an event that slips in while the main thread goes idle is not
 * stranded: event_ring_idle says so. */
static void main_woken_once_per_idle_spell(void **state)
{
	(void)state;
	struct ring_event ev[16];
	activate();
	take_all(ev, 16);
	assert_true(event_ring_idle(&ring));
	thread.wake_main = false;
	play(0x90, 60, 100);
	assert_true(thread.wake_main);
	thread.wake_main = false;
	play(0x90, 64, 100);
	play(0x80, 60, 0);
	assert_false(thread.wake_main); /* the main thread has its timer by now */
	assert_int_equal(take_all(ev, 16), 6);
	assert_true(event_ring_idle(&ring));
	play(0x80, 64, 0);
	assert_true(thread.wake_main);
	/* an event already there when the main thread would go idle */
	thread.wake_main = false;
	assert_false(event_ring_idle(&ring));
	play(0x90, 67, 100);
	assert_false(thread.wake_main);
	assert_int_equal(take_all(ev, 16), 4);
	play(0x80, 67, 0);
	take_all(ev, 16);
}

static void overflow_then_one_sync(void **state)
{
	(void)state;
	static struct ring_event ev[EVENT_RING_SLOTS + 8];
	activate();
	uint64_t lost_before = atomic_load(&ring.lost);
	/* a full ring: fill it with notes that start and stop */
	int pairs = 0;
	while (spsc_queue_room(&ring.queue) > 0) {
		play(0x90, 40, 100);
		play(0x80, 40, 0);
		pairs++;
	}
	assert_int_equal(pairs, EVENT_RING_SLOTS / 4); /* 4 events a pair: 2 outputs */
	assert_false(ring.pending);
	play(0x90, 64, 100); /* output a's note-on is refused; b's not even tried */
	assert_true(ring.pending);
	assert_int_equal(atomic_load(&ring.lost), lost_before + 1);
	play(0x90, 67, 100); /* nothing more is even tried while a sync is owed */
	assert_int_equal(atomic_load(&ring.lost), lost_before + 1);
	event_ring_service(&thread); /* no room for it yet */
	assert_true(ring.pending);
	assert_int_equal(take_all(ev, EVENT_RING_SLOTS + 8), EVENT_RING_SLOTS);
	event_ring_service(&thread);
	assert_false(ring.pending);
	int n = take_all(ev, EVENT_RING_SLOTS + 8);
	/* begin, 2 notes on each of 2 outputs, tuning, end */
	assert_int_equal(n, 7);
	assert_int_equal(ev[0].kind, RING_SYNC_BEGIN);
	assert_int_equal(ev[0].lost, lost_before + 1);
	int keys = 0;
	for (int i = 1; i <= 4; i++) {
		assert_int_equal(ev[i].kind, RING_NOTE_ON);
		assert_int_equal(ev[i].output, (i - 1) / 2);
		assert_int_equal(ev[i].tone, keymap_of(0)->keys[ev[i].key].tone);
		keys |= ev[i].key == 64 ? 1 : ev[i].key == 67 ? 2 : 4;
	}
	assert_int_equal(keys, 3);
	assert_int_equal(ev[5].kind, RING_TUNING);
	assert_string_equal(ev[5].preset_name, "main");
	assert_string_equal(ev[5].root_label, "home");
	assert_int_equal(ev[5].presets, 2);
	assert_int_equal(ev[6].kind, RING_SYNC_END);
	play(0x80, 64, 0);
	play(0x80, 67, 0);
	assert_int_equal(take_all(ev, 8), 4);
}

static void asked_sync_and_tuning(void **state)
{
	(void)state;
	struct ring_event ev[16];
	activate();
	play(0x90, 60, 100);
	take_all(ev, 16);
	event_ring_activate(&ring, true, -1); /* a new first subscriber */
	event_ring_service(&thread);
	int n = take_all(ev, 16);
	assert_int_equal(n, 5);
	assert_int_equal(ev[0].kind, RING_SYNC_BEGIN);
	assert_int_equal(ev[1].key, 60);
	for (int k = 0; k < thread.output_count; k++)
		assert_true(engine_select_preset(&thread.outputs[k].engine, 1));
	event_ring_tuning_changed(&thread);
	assert_int_equal(take_all(ev, 16), 1);
	assert_int_equal(ev[0].kind, RING_TUNING);
	assert_int_equal(ev[0].preset, 1);
	assert_string_equal(ev[0].preset_name, "wide");
	/* a reload: the held note began under generation 0 (input_thread.c's retired sets) */
	thread.retired_count = 1;
	for (int k = 0; k < thread.output_count; k++)
		thread.retired[0].serial[k] = engine_serial(&thread.outputs[k].engine);
	thread.reloads = 1;
	event_ring_reloaded(&thread);
	n = take_all(ev, 16);
	assert_int_equal(n, 2);
	assert_int_equal(ev[0].kind, RING_RELOAD);
	assert_int_equal(ev[0].generation, 1);
	assert_int_equal(ev[1].kind, RING_TUNING);
	play(0x90, 72, 100);
	event_ring_activate(&ring, true, -1);
	event_ring_service(&thread);
	n = take_all(ev, 16);
	assert_int_equal(n, 2 + 7); /* two note-ons, then the sync of 2 x 2 notes */
	for (int i = 3; i <= 6; i++)
		assert_int_equal(ev[i].generation, ev[i].key == 60 ? 0u : 1u);
	thread.retired_count = 0;
	thread.reloads = 0;
	play(0x80, 60, 0);
	play(0x80, 72, 0);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(quiet_while_nobody_listens),
		cmocka_unit_test(notes_on_and_off_per_output),
		cmocka_unit_test(main_woken_once_per_idle_spell),
		cmocka_unit_test(overflow_then_one_sync),
		cmocka_unit_test(asked_sync_and_tuning),
	};
	return cmocka_run_group_tests(tests, set_up, tear_down);
}
