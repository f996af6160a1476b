/*
 * input_thread: see input_thread.h for the model.
 *
 * Retired tunings: a reload swaps the engines to a new tuning set between
 * two messages.  Notes already sounding keep their channel, key and bend
 * (the engine's promise) and need nothing from the old set to end; only
 * status wants their tone labels.  So the old set is kept, with each
 * engine's note serial at the swap, until no note started before the swap
 * is still sounding, and then posted back to the main thread to be freed.
 * If reloads come faster than notes end, the oldest is freed early and
 * its notes show no label (tuning_known = false).
 */
#include "input_thread.h"

#include <errno.h>
#include <poll.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/timerfd.h>
#include <time.h>
#include <unistd.h>

#include "input_control.h"
#include "input_feed.h"
#include "input_status.h"
#include "clock.h"
#include "event_ring.h"
#include "latticed/midi_encoder.h"
#include "latticed/passthrough.h"
#include "notice_text.h"
#include "output_thread.h"
#include "snapshot.h"

#define SHUTDOWN_WAIT_MS 2000
#define COMMAND_SLOTS 40             /* a preset, root or tuning change: an MTS bulk dump */
#define DROP_LOG_INTERVAL_MS 1000
#define RETIRED_CHECK_MS 200

static void post_reply(struct input_thread *t, const struct reply *r);

/* ---- messages out --------------------------------------------------------- */

static void note_queue_drop(struct input_thread *t, struct input_output *o)
{
	o->queue_drops++;
	int64_t now = monotonic_ms();
	if (o->drops_logged && now - o->drop_logged_ms < DROP_LOG_INTERVAL_MS)
		return;
	log_ring_post(&t->log, LOG_LEVEL_ERROR,
		      "output %s: a message found its queue full after room was checked (%llu so far; "
		      "a latticed bug, please report it)", o->name, (unsigned long long)o->queue_drops);
	o->drops_logged = o->queue_drops;
	o->drop_logged_ms = now;
	t->wake_main = true;
}

/* Sends at once when nothing waits in o's ring (so all before it was sent)
 * and the output thread is idle: no hand-over on the way of a live note. */
static bool send_directly(struct input_thread *t, struct input_output *o, size_t length)
{
	/* no output thread (a test driving the engines alone): queue */
	if (t->output == NULL || msg_queue_fill(t->messages, o->index) != 0)
		return false;
	if (!t->borrowed && !output_thread_borrow(t->output))
		return false;
	t->borrowed = true;
	return output_thread_send_borrowed(t->output, o->index, t->encode_buffer, length);
}

/* The output side goes back to the output thread before the input thread
 * sleeps or waits: it then flushes what was sent directly. */
static void give_back(struct input_thread *t)
{
	if (!t->borrowed)
		return;
	t->borrowed = false;
	output_thread_give_back(t->output);
}

/* The engine's callback: one message for output o.  Room was checked
 * before the engine got the message that made it (input_feed.c). */
static void emit(void *context, const struct midi_msg *m)
{
	struct input_output *o = context;
	struct input_thread *t = o->owner;
	if (o->cut_off)
		return; /* its recovery ends every note and sends the set-up again */
	size_t n = midi_msg_encode(m, t->encode_buffer, sizeof t->encode_buffer);
	if (n == 0)
		return; /* the engine only makes valid messages; nothing to send */
	if (send_directly(t, o, n)) {
		o->queued++;
		return;
	}
	if (!msg_queue_push(t->messages, o->index, t->encode_buffer, n)) {
		note_queue_drop(t, o);
		feed_cut_off(t, o, "a message found no room in its queue");
		return;
	}
	o->queued++;
	t->wake_output = true;
}

static void wake_others(struct input_thread *t)
{
	give_back(t);
	if (t->wake_output) {
		t->wake_output = false;
		wake_fd_signal(t->output_wake_fd);
	}
	if (t->wake_main) {
		t->wake_main = false;
		wake_fd_signal(t->main_wake_fd);
	}
}

/* ---- backend callbacks ---------------------------------------------------- */

static void on_input(void *context, uint8_t source, const uint8_t *bytes, size_t length)
{
	struct input_thread *t = context;
	if (source >= MIDI_IO_MAX_SOURCES)
		source = MIDI_IO_MAX_SOURCES - 1;
	feed_input(t, source, bytes, length);
	/* queued messages go before the parser reads on; what went straight to
	 * the backend is flushed at the end of the batch (on_input_done), and
	 * the main thread is woken then too, once the notes are out */
	if (t->wake_output)
		wake_others(t);
}

static void on_input_done(void *context)
{
	wake_others(context);
}

static bool on_accepting(void *context)
{
	return feed_accepting(context);
}

static void on_event(void *context, enum midi_io_event kind, int index, const char *name)
{
	struct input_thread *t = context;
	const char *what = name ? name : "";
	if (kind == MIDI_IO_NOTICE) {
		log_ring_post(&t->log, LOG_LEVEL_NOTICE, "input: %s", what);
	} else if (kind == MIDI_IO_INPUT_LOST || kind == MIDI_IO_SOURCE_CONNECTED ||
		   kind == MIDI_IO_SOURCE_GONE) {
		feed_source_event(t, kind, index, what);
	} else if (index >= 0 && index < t->output_count) {
		struct input_output *o = &t->outputs[index];
		if (kind == MIDI_IO_OUTPUT_CONNECTED) {
			log_ring_post(&t->log, LOG_LEVEL_INFO,
				      "output %s: connected to %s; sending its set-up", o->name, what);
			feed_output_connected(t, o);
		} else {
			o->was_gone = true;
			log_ring_post(&t->log, LOG_LEVEL_NOTICE,
				      "output %s: %s went away; nothing listens now", o->name, what);
		}
	}
	t->wake_main = true;
	wake_others(t);
}

struct midi_io_callbacks input_thread_callbacks(struct input_thread *t)
{
	struct midi_io_callbacks cb = {.context = t, .input = on_input, .event = on_event,
				       .accepting = on_accepting, .input_done = on_input_done};
	return cb;
}

/* ---- set-up ---------------------------------------------------------------- */

bool input_thread_init(struct input_thread *t, const struct config *cfg,
		       struct tuning_set *tunings, char *err, size_t err_size)
{
	t->tunings = tunings;
	t->output_count = cfg->output_count;
	for (int i = 0; i < cfg->output_count; i++) {
		struct input_output *o = &t->outputs[i];
		struct engine_spec spec;
		struct core_error cerr;
		o->owner = t;
		o->index = (uint8_t)i;
		snprintf(o->name, sizeof o->name, "%s", cfg->outputs[i].name);
		config_engine_spec(cfg, i, &spec);
		o->bend_range = spec.output.bend_range;
		if (!engine_init(&o->engine, &spec, &tunings->engine, emit, o, &cerr)) {
			snprintf(err, err_size, "%s:%d: [output %s]: %s", cfg->path, cfg->outputs[i].line,
				 o->name, cerr.text);
			return false;
		}
		engine_watch_notes(&o->engine, event_ring_watch, o);
	}
	for (int s = 0; s < MIDI_IO_MAX_SOURCES; s++)
		midi_parser_init(&t->sources[s].parser, t->sources[s].sysex,
				 sizeof t->sources[s].sysex);
	(void)spsc_queue_init(&t->requests, t->request_slots, REQUEST_QUEUE_SLOTS,
			      sizeof t->request_slots[0]);
	(void)spsc_queue_init(&t->replies, t->reply_slots, REPLY_QUEUE_SLOTS,
			      sizeof t->reply_slots[0]);
	log_ring_init(&t->log);
	input_backlog_init(&t->backlog);
	atomic_init(&t->heartbeat, 0);
	t->borrowed = false;
	t->last_preset = 0;
	t->last_root = 0;
	t->inputs_lost = t->inputs_lost_logged = 0;
	t->input_lost_logged_ms = 0;
	return true;
}

/* ---- requests and replies -------------------------------------------------- */

bool input_thread_post(struct input_thread *t, const struct request *r)
{
	if (!spsc_queue_push(&t->requests, r))
		return false;
	wake_fd_signal(t->wake_fd);
	return true;
}

bool input_thread_take_reply(struct input_thread *t, struct reply *out)
{
	return spsc_queue_pop(&t->replies, out);
}

static void post_reply(struct input_thread *t, const struct reply *r)
{
	/* replies carrying memory must not be lost: keep them until there is room */
	if (t->outbox_count == 0 && spsc_queue_push(&t->replies, r)) {
		t->wake_main = true;
		return;
	}
	if (t->outbox_count < INPUT_OUTBOX_MAX)
		t->outbox[t->outbox_count++] = *r;
	else
		log_ring_post(&t->log, LOG_LEVEL_ERROR, "the reply queue is full; a reply was lost");
}

static void flush_outbox(struct input_thread *t)
{
	int sent = 0;
	while (sent < t->outbox_count && spsc_queue_push(&t->replies, &t->outbox[sent]))
		sent++;
	if (sent) {
		memmove(t->outbox, t->outbox + sent, (size_t)(t->outbox_count - sent) * sizeof t->outbox[0]);
		t->outbox_count -= sent;
		t->wake_main = true;
	}
}

static void reply_done(struct input_thread *t, const struct request *r, bool ok,
		       const char *fmt, ...) __attribute__((format(printf, 4, 5)));

static void reply_done(struct input_thread *t, const struct request *r, bool ok,
		       const char *fmt, ...)
{
	struct reply rep;
	memset(&rep, 0, sizeof rep);
	rep.kind = REPLY_DONE;
	rep.request = r->kind;
	rep.id = r->id;
	rep.ok = ok;
	va_list ap;
	va_start(ap, fmt);
	vsnprintf(rep.text, sizeof rep.text, fmt, ap);
	va_end(ap);
	post_reply(t, &rep);
}

/* Tells the main thread (log line, systemd status) when the tuning moved. */
static void check_tuning_state(struct input_thread *t)
{
	if (t->output_count == 0)
		return;
	const struct engine *e = &t->outputs[0].engine;
	if (engine_preset(e) == t->last_preset && engine_root(e) == t->last_root)
		return;
	t->last_preset = engine_preset(e);
	t->last_root = engine_root(e);
	struct reply rep;
	memset(&rep, 0, sizeof rep);
	rep.kind = REPLY_TUNING_STATE;
	rep.ok = true;
	snprintf(rep.preset, sizeof rep.preset, "%s", engine_current_preset(e)->name);
	input_control_root_label(e, rep.root, sizeof rep.root);
	snprintf(rep.text, sizeof rep.text, "preset %s, root %.240s", rep.preset, rep.root);
	post_reply(t, &rep);
	event_ring_tuning_changed(t);
}

static int find_preset(const struct engine_tunings *tunings, const struct request *r)
{
	if (r->name[0])
		for (int i = 0; i < tunings->count; i++)
			if (strcmp(tunings->presets[i].name, r->name) == 0)
				return i;
	if (r->number >= 0 && r->number < tunings->count)
		return r->number;
	return -1;
}

/* Every output that hears the input; a cut-off one ends its notes when it
 * drains.  Writes the names of those into `later`. */
static void panic_all(struct input_thread *t, char *later, size_t size)
{
	later[0] = '\0';
	for (int k = 0; k < t->output_count; k++) {
		struct input_output *o = &t->outputs[k];
		if (!o->cut_off) {
			engine_panic(&o->engine);
			continue;
		}
		size_t used = strlen(later);
		snprintf(later + used, size - used, "%s%s", used ? ", " : "", o->name);
	}
}

/* The final panic: waits (at most SHUTDOWN_WAIT_MS) for room for it. */
static void shutdown_panic(struct input_thread *t)
{
	int64_t give_up = monotonic_ms() + SHUTDOWN_WAIT_MS;
	const struct timespec pause = {0, 1000000};
	give_back(t); /* the output thread drains the rings meanwhile */
	for (;;) {
		bool all = true;
		for (int k = 0; k < t->output_count; k++)
			all &= msg_queue_room(t->messages, k) >= (size_t)guard_end_slots(&t->outputs[k].engine);
		if (all || monotonic_ms() > give_up)
			break;
		wake_fd_signal(t->output_wake_fd);
		nanosleep(&pause, NULL);
	}
	for (int k = 0; k < t->output_count; k++) {
		struct input_output *o = &t->outputs[k];
		struct engine *e = &o->engine;
		if (msg_queue_room(t->messages, k) >= (size_t)guard_end_slots(e)) {
			o->cut_off = false;
			engine_panic(e);
		} else {
			log_ring_post(&t->log, LOG_LEVEL_ERROR,
				      "output %s: its synth took nothing for %d ms; %d note(s) could not be ended",
				      o->name, SHUTDOWN_WAIT_MS, engine_held_notes(e));
		}
	}
}

static void swap_tunings(struct input_thread *t, const struct request *r)
{
	if (t->retired_count == INPUT_RETIRED_MAX) {
		/* reloads faster than notes end: let the oldest go now */
		struct reply rep = {.kind = REPLY_RETIRED_TUNINGS, .tunings = t->retired[0].set};
		for (int k = 0; k < t->output_count; k++)
			t->forgotten_serial[k] = t->retired[0].serial[k];
		post_reply(t, &rep);
		memmove(t->retired, t->retired + 1, (INPUT_RETIRED_MAX - 1) * sizeof t->retired[0]);
		t->retired_count--;
	}
	struct retired_tunings *old = &t->retired[t->retired_count++];
	old->set = t->tunings;
	const struct engine *first = &t->outputs[0].engine;
	char was_preset[ENGINE_NAME_MAX], was_root[LATTICE_LABEL_MAX], kept_text[REPLY_TEXT_MAX];
	snprintf(was_preset, sizeof was_preset, "%s", engine_current_preset(first)->name);
	input_control_root_label(first, was_root, sizeof was_root);
	enum engine_kept kept = ENGINE_KEPT_PRESET_AND_ROOT;
	for (int k = 0; k < t->output_count; k++) {
		old->serial[k] = engine_serial(&t->outputs[k].engine);
		kept = engine_replace_tunings(&t->outputs[k].engine, &r->tunings->engine);
	}
	t->tunings = r->tunings;
	t->reloads++;
	event_ring_reloaded(t);
	t->last_preset = -1; /* the same numbers may name another preset or tone now */
	input_control_kept_text(kept, was_preset, was_root, first, kept_text, sizeof kept_text);
	reply_done(t, r, true, "%d preset(s), %s", t->tunings->engine.count, kept_text);
}

/* Posts back retired sets whose notes have all ended. */
static void release_retired(struct input_thread *t)
{
	while (t->retired_count > 0) {
		const struct retired_tunings *old = &t->retired[0];
		bool in_use = false;
		for (int k = 0; k < t->output_count && !in_use; k++) {
			const struct engine *e = &t->outputs[k].engine;
			struct engine_note_info n;
			for (int i = 0; engine_note_at(e, i, &n) && !in_use; i++)
				in_use = n.started <= old->serial[k];
		}
		if (in_use)
			return;
		struct reply rep = {.kind = REPLY_RETIRED_TUNINGS, .tunings = old->set};
		post_reply(t, &rep);
		memmove(t->retired, t->retired + 1, (size_t)(t->retired_count - 1) * sizeof t->retired[0]);
		t->retired_count--;
	}
}

/* False: an output has no room yet for what the request sends; ask again. */
static bool handle_request(struct input_thread *t, const struct request *r)
{
	const struct engine *first = &t->outputs[0].engine;
	const struct engine_tunings *tunings = &t->tunings->engine;
	switch (r->kind) {
	case REQUEST_PANIC: {
		if (!feed_room_everywhere(t, -1))
			return false;
		char later[MIDI_IO_MAX_OUTPUTS * (ENGINE_NAME_MAX + 2)];
		panic_all(t, later, sizeof later);
		if (later[0])
			reply_done(t, r, true, "all notes off on every output (%s: once its synth reads again)",
				   later);
		else
			reply_done(t, r, true, "all notes off on every output");
		break;
	}
	case REQUEST_PRESET: {
		int p = find_preset(tunings, r);
		if (p < 0) {
			reply_done(t, r, false, "no preset '%s'; there are %d (see latticed status)",
				   r->name, tunings->count);
			break;
		}
		if (!feed_room_everywhere(t, COMMAND_SLOTS))
			return false;
		for (int k = 0; k < t->output_count; k++)
			(void)engine_select_preset(&t->outputs[k].engine, p);
		reply_done(t, r, true, "preset %s (for new notes)", engine_current_preset(first)->name);
		break;
	}
	case REQUEST_ROOT: {
		int slot;
		char why[REPLY_TEXT_MAX];
		if (!input_control_root_slot(first, r, &slot, why, sizeof why)) {
			reply_done(t, r, false, "%s", why);
			break;
		}
		if (!feed_room_everywhere(t, COMMAND_SLOTS))
			return false;
		for (int k = 0; k < t->output_count; k++)
			(void)engine_select_root(&t->outputs[k].engine, slot);
		char label[SNAPSHOT_LABEL_MAX];
		input_control_root_label(first, label, sizeof label);
		reply_done(t, r, true, "root %s (for new notes)", label);
		break;
	}
	case REQUEST_TUNINGS:
		if (!feed_room_everywhere(t, COMMAND_SLOTS))
			return false;
		swap_tunings(t, r);
		break;
	case REQUEST_SNAPSHOT: {
		input_status_fill(t, r->snapshot);
		struct reply rep = {.kind = REPLY_SNAPSHOT, .request = r->kind, .id = r->id,
				    .ok = true, .snapshot = r->snapshot};
		post_reply(t, &rep);
		break;
	}
	case REQUEST_QUIT:
		t->shutting_down = true;
		shutdown_panic(t);
		t->quit = true;
		break;
	}
	return true;
}

/* The held request first, then the queue in order, until one must wait. */
static void take_requests(struct input_thread *t)
{
	if (t->request_held && handle_request(t, &t->held_request))
		t->request_held = false;
	struct request r;
	while (!t->quit && !t->request_held && spsc_queue_pop(&t->requests, &r)) {
		if (!handle_request(t, &r)) {
			t->held_request = r;
			t->request_held = true;
		}
	}
}

struct notice_log {
	struct input_thread *thread;
	const char *output;
};

static void log_notice(void *context, const char *line)
{
	const struct notice_log *l = context;
	log_ring_post(&l->thread->log, LOG_LEVEL_WARNING, "output %s: %s (reported once)", l->output,
		      line);
}

static void report_notices(struct input_thread *t)
{
	for (int k = 0; k < t->output_count; k++) {
		const struct engine *e = &t->outputs[k].engine;
		uint32_t fresh = engine_take_notices(&t->outputs[k].engine);
		if (!fresh)
			continue;
		struct notice_log l = {t, t->outputs[k].name};
		notice_text_lines(fresh, engine_stats(e), t->outputs[k].bend_range, true, log_notice, &l);
		t->wake_main = true;
	}
}

/* ---- the loop --------------------------------------------------------------- */

#define POLL_MAX (MIDI_IO_MAX_SOURCES + 8)

/*
 * The heartbeat's beat: a periodic timer of its own, so that the loop
 * sleeps with no timeout of its own when nothing else needs one.  A poll()
 * timeout is a kernel timer armed before each sleep and cancelled at each
 * wake-up, on the way of every note (measured in the test VM, where that
 * cost 70-80 us a wake-up); this one is armed once.  -1 when the system
 * has no timerfd: the loop then beats by its poll() timeout.
 */
static int heartbeat_timer_open(int period_ms)
{
	int fd = timerfd_create(CLOCK_MONOTONIC, TFD_NONBLOCK | TFD_CLOEXEC);
	if (fd < 0)
		return -1;
	struct timespec period = {period_ms / 1000, (long)(period_ms % 1000) * 1000000L};
	struct itimerspec spec = {period, period};
	if (timerfd_settime(fd, 0, &spec, NULL) != 0) {
		close(fd);
		return -1;
	}
	return fd;
}

/* The wake-up descriptors (ours, the heartbeat's) and the backend's, in fds. */
static int poll_set(struct input_thread *t, struct pollfd *fds, int timer_fd, int *tick)
{
	fds[0] = (struct pollfd){.fd = t->wake_fd, .events = POLLIN};
	fds[1] = (struct pollfd){.fd = timer_fd, .events = POLLIN}; /* -1: left out by poll() */
	*tick = -1;
	int n = t->backend->input_fds(t->io, fds + 2, POLL_MAX - 2, tick);
	if (n < 0 || !feed_accepting(t))
		n = 0; /* the input waits: its descriptors would only say it is there */
	return n + 2;
}

void *input_thread_run(void *arg)
{
	struct input_thread *t = arg;
	struct pollfd fds[POLL_MAX];
	int feed_timeout = -1;
	int timer_fd = heartbeat_timer_open(t->heartbeat_ms);
	while (!t->quit) {
		int tick;
		int n = poll_set(t, fds, timer_fd, &tick);
		int timeout = timer_fd >= 0 ? -1 : t->heartbeat_ms;
		if (tick > 0 && (timeout < 0 || tick < timeout))
			timeout = tick;
		if (feed_timeout >= 0 && (timeout < 0 || feed_timeout < timeout))
			timeout = feed_timeout;
		int ready = poll(fds, (nfds_t)n, timeout);
		atomic_fetch_add_explicit(&t->heartbeat, 1, memory_order_relaxed);
		if (ready < 0 && errno != EINTR)
			log_ring_post(&t->log, LOG_LEVEL_ERROR, "input: poll failed: %s", strerror(errno));
		if (fds[0].revents & POLLIN)
			wake_fd_clear(t->wake_fd);
		if (fds[1].revents & POLLIN)
			wake_fd_clear(timer_fd); /* a timerfd reads as the expirations' count */
		feed_resume(t);
		t->backend->service_input(t->io);
		take_requests(t);

		report_notices(t);
		input_control_report(t);
		check_tuning_state(t);
		event_ring_service(t);
		int64_t now = monotonic_ms();
		if (t->retired_count && now - t->retired_checked_ms >= RETIRED_CHECK_MS) {
			t->retired_checked_ms = now;
			release_retired(t);
		}
		flush_outbox(t);
		feed_timeout = feed_arrange_wakeups(t);
		if (spsc_queue_count(&t->log.ring))
			t->wake_main = true;
		wake_others(t);
	}
	if (timer_fd >= 0)
		close(timer_fd);
	/* the last replies (retired sets among them) wait for the main thread */
	release_retired(t);
	flush_outbox(t);
	t->wake_main = true;
	wake_others(t);
	return NULL;
}
