/*
 * alsa_seq: the ALSA sequencer backend.
 *
 * One client (spec->client_name) with one input port that any program or
 * device may write to and one port per output that others may read from.
 * Messages go out by direct dispatch to the subscribers of an output port,
 * which never waits: the kernel hands a direct event to each receiver's
 * input queue at once (a receiver that is full loses it, the sender is not
 * told).  The input port also receives the system announcements (client
 * 0:1), which drive hotplug: a port that appears and matches a pattern is
 * connected.
 *
 * Threads.  One handle, opened duplex and non-blocking, serves both
 * threads: the input thread reads (snd_seq_event_input), connects and
 * queries (ioctls on the descriptor); the output thread writes
 * (snd_seq_event_output into alsa-lib's output buffer, snd_seq_drain_output).
 * That is safe because alsa-lib keeps the buffers of the two directions
 * apart in the handle and changes nothing else in it after open
 * (src/seq/seq_local.h, from memory), and the kernel serialises each read,
 * write and ioctl on its own.  The output thread must therefore use only
 * snd_seq_event_output, snd_seq_drain_output and snd_seq_drop_output_buffer
 * (not snd_seq_event_output_direct, which borrows a scratch buffer).  The
 * VM test vm_backends reads and writes 10 000 events/s this way at once,
 * also under AddressSanitizer.
 *
 * Sources.  A source is a sender's client:port.  It appears when it is
 * subscribed to our input (by us or by anyone else: PORT_SUBSCRIBED) or
 * with its first event (a client may write to our port without a
 * subscription); it goes on PORT_UNSUBSCRIBED or when its port or client
 * exits.  The kernel queues these notices among the MIDI events in the
 * order things happened, so handling them in queue order gives a source's
 * last notes before its GONE.  The kernel tells both the owner of a port and
 * the announce subscribers about a subscription, so every notice may come
 * twice; handling is idempotent.  When our input queue overflows the kernel
 * empties it (-ENOSPC): that is reported (INPUT_LOST for every source, as
 * note-offs may be gone), and as notices may be lost too, the state is
 * rebuilt from the kernel's subscription lists.
 *
 * Outputs.  After any notice that concerns an output, its destinations are
 * read from the kernel and compared with the last list: each new one is
 * reported (OUTPUT_CONNECTED), the loss of the last one too (OUTPUT_GONE).
 */
#include <errno.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <alsa/asoundlib.h>

#include "alsa_connect.h"
#include "alsa_quiet.h"
#include "midi_io.h"
#include "seq_event_bytes.h"
#include "source_ids.h"

#define SEQ_DEVICE "/dev/snd/seq"
#define MAX_DESTINATIONS 32
#define ADDR_NAME_MAX (2 * MIDI_IO_NAME_MAX + 2)
/* The kernel's largest per-client input pool (SNDRV_SEQ_MAX_CLIENT_EVENTS,
 * from memory); the next size down is what the kernel surely accepts. */
#define INPUT_POOL_EVENTS 2000
#define INPUT_POOL_FALLBACK 1000
/* A variable-length event must fit whole in the read buffer, or the kernel
 * puts it back and every later read fails on it again; no event can hold
 * more than the input pool, 2000 cells of 28 bytes. */
#define INPUT_BUFFER_BYTES (64 * 1024)
#define OUTPUT_BUFFER_BYTES (64 * 1024)
#define PORT_TYPE (SND_SEQ_PORT_TYPE_MIDI_GENERIC | SND_SEQ_PORT_TYPE_SOFTWARE | \
		   SND_SEQ_PORT_TYPE_APPLICATION)
#define CAN_READ (SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ)
#define CAN_WRITE (SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE)

struct destination {
	snd_seq_addr_t addr;
	char name[ADDR_NAME_MAX];
};

struct alsa_output {
	int port;
	/* input thread only */
	int count;
	struct destination dest[MAX_DESTINATIONS];
	/* written by the output thread, read by describe() */
	atomic_uint drops;
};

struct midi_io {
	snd_seq_t *seq;
	int client;
	int in_port;
	struct midi_io_spec spec;
	struct midi_io_callbacks cb;
	int output_count;
	struct alsa_output out[MIDI_IO_MAX_OUTPUTS];
	/* input thread only */
	struct source_ids sources;
	bool subscribed[MIDI_IO_MAX_SOURCES];
	snd_seq_client_info_t *cinfo;
	snd_seq_port_info_t *pinfo;
	snd_seq_query_subscribe_t *query;
	bool resync;
	unsigned overruns;
	int input_pool;           /* events the kernel holds for us */
	unsigned unplaced_events; /* from a source beyond the sixteenth */
	unsigned connect_failures;
	int last_connect_error;
};

static uint32_t addr_key(snd_seq_addr_t a)
{
	return (uint32_t)a.client << 8 | a.port;
}

static bool addr_equal(snd_seq_addr_t a, snd_seq_addr_t b)
{
	return a.client == b.client && a.port == b.port;
}

/* "client:port" by names, or by numbers once the port has gone. */
static void addr_name(struct midi_io *io, snd_seq_addr_t a, char *name, size_t size)
{
	if (snd_seq_get_any_client_info(io->seq, a.client, io->cinfo) == 0 &&
	    snd_seq_get_any_port_info(io->seq, a.client, a.port, io->pinfo) == 0)
		snprintf(name, size, "%s:%s", snd_seq_client_info_get_name(io->cinfo),
			 snd_seq_port_info_get_name(io->pinfo));
	else
		snprintf(name, size, "%d:%d", a.client, a.port);
}

static void report(struct midi_io *io, enum midi_io_event kind, int index, const char *name)
{
	if (io->cb.event)
		io->cb.event(io->cb.context, kind, index, name);
}

/* ---- open errors ------------------------------------------------------ */

int alsa_seq_open(snd_seq_t **seq)
{
	alsa_quiet_lib_errors();
	return snd_seq_open(seq, "default", SND_SEQ_OPEN_DUPLEX, SND_SEQ_NONBLOCK);
}

void alsa_seq_open_error(int err, char *msg, size_t size)
{
	if (err == -ENOENT && access(SEQ_DEVICE, F_OK) != 0)
		snprintf(msg, size, "no ALSA sequencer: " SEQ_DEVICE " does not exist; load it with "
			 "'modprobe snd-seq' (or install a kernel with sound support)");
	else if (err == -EACCES || err == -EPERM)
		snprintf(msg, size, "no permission to open the ALSA sequencer " SEQ_DEVICE
			 "; add the user to the audio group ('usermod -aG audio USER', then log in again)");
	else
		snprintf(msg, size, "cannot open the ALSA sequencer: %s", snd_strerror(err));
}

/* ---- sources ------------------------------------------------------------ */

static int source_for(struct midi_io *io, snd_seq_addr_t a, bool subscribed)
{
	int id = source_ids_find(&io->sources, addr_key(a));
	if (id >= 0) {
		if (subscribed)
			io->subscribed[id] = true;
		return id;
	}
	char name[ADDR_NAME_MAX];
	addr_name(io, a, name, sizeof name);
	id = source_ids_add(&io->sources, addr_key(a), name);
	if (id < 0)
		return -1;
	io->subscribed[id] = subscribed;
	report(io, MIDI_IO_SOURCE_CONNECTED, id, name);
	return id;
}

static void source_gone(struct midi_io *io, int id)
{
	char name[SOURCE_NAME_MAX];
	snprintf(name, sizeof name, "%s", io->sources.name[id]);
	source_ids_remove(&io->sources, id);
	io->subscribed[id] = false;
	report(io, MIDI_IO_SOURCE_GONE, id, name);
}

/* Sources at this address (port < 0: anywhere in the client) are gone. */
static void sources_exit(struct midi_io *io, int client, int port)
{
	for (int id = 0; id < MIDI_IO_MAX_SOURCES; id++) {
		if (!io->sources.used[id])
			continue;
		uint32_t key = io->sources.key[id];
		if ((int)(key >> 8) == client && (port < 0 || (int)(key & 0xFF) == port))
			source_gone(io, id);
	}
}

/* ---- outputs ------------------------------------------------------------ */

static int query_subscribers(struct midi_io *io, int port, snd_seq_query_subs_type_t type,
			     snd_seq_addr_t *addrs, int max)
{
	snd_seq_addr_t root = { .client = (unsigned char)io->client, .port = (unsigned char)port };
	int n = 0;
	snd_seq_query_subscribe_set_root(io->query, &root);
	snd_seq_query_subscribe_set_type(io->query, type);
	snd_seq_query_subscribe_set_index(io->query, 0);
	while (n < max && snd_seq_query_port_subscribers(io->seq, io->query) >= 0) {
		addrs[n++] = *snd_seq_query_subscribe_get_addr(io->query);
		snd_seq_query_subscribe_set_index(io->query, snd_seq_query_subscribe_get_index(io->query) + 1);
	}
	return n;
}

static void output_refresh(struct midi_io *io, int index)
{
	struct alsa_output *o = &io->out[index];
	snd_seq_addr_t now[MAX_DESTINATIONS];
	struct destination next[MAX_DESTINATIONS];
	bool fresh[MAX_DESTINATIONS];
	int n = query_subscribers(io, o->port, SND_SEQ_QUERY_SUBS_READ, now, MAX_DESTINATIONS);

	for (int i = 0; i < n; i++) {
		next[i].addr = now[i];
		fresh[i] = true;
		for (int k = 0; k < o->count; k++) {
			if (addr_equal(o->dest[k].addr, now[i])) {
				memcpy(next[i].name, o->dest[k].name, sizeof next[i].name);
				fresh[i] = false;
				break;
			}
		}
		if (fresh[i])
			addr_name(io, now[i], next[i].name, sizeof next[i].name);
	}
	char last[ADDR_NAME_MAX] = "";
	bool had = o->count > 0;
	if (had)
		memcpy(last, o->dest[o->count - 1].name, sizeof last);
	memcpy(o->dest, next, sizeof next[0] * (size_t)n);
	o->count = n;
	for (int i = 0; i < n; i++)
		if (fresh[i])
			report(io, MIDI_IO_OUTPUT_CONNECTED, index, next[i].name);
	if (had && n == 0)
		report(io, MIDI_IO_OUTPUT_GONE, index, last);
}

static bool output_has_client(const struct alsa_output *o, int client, int port)
{
	for (int k = 0; k < o->count; k++)
		if (o->dest[k].addr.client == client && (port < 0 || o->dest[k].addr.port == port))
			return true;
	return false;
}

static int output_of_port(struct midi_io *io, int port)
{
	for (int i = 0; i < io->output_count; i++)
		if (io->out[i].port == port)
			return i;
	return -1;
}

/* ---- connections by pattern ------------------------------------------ */

static void try_connect(struct midi_io *io, int err)
{
	if (err < 0 && err != -EBUSY) {
		io->connect_failures++;
		io->last_connect_error = err;
	}
}

/* Connects the port described by io->pinfo (of the client named
 * client_name) wherever a pattern asks for it. */
static void connect_port(struct midi_io *io, const char *client_name)
{
	int client = snd_seq_port_info_get_client(io->pinfo);
	int port = snd_seq_port_info_get_port(io->pinfo);
	unsigned caps = snd_seq_port_info_get_capability(io->pinfo);
	const char *port_name = snd_seq_port_info_get_name(io->pinfo);

	snd_seq_addr_t addr = {.client = (unsigned char)client, .port = (unsigned char)port};
	if (client == SND_SEQ_CLIENT_SYSTEM || client == io->client)
		return;
	if ((caps & CAN_READ) == CAN_READ &&
	    alsa_port_matches(&io->spec.input, addr, client_name, port_name))
		try_connect(io, snd_seq_connect_from(io->seq, io->in_port, client, port));
	for (int i = 0; i < io->output_count; i++)
		if ((caps & CAN_WRITE) == CAN_WRITE &&
		    alsa_port_matches(&io->spec.outputs[i], addr, client_name, port_name))
			try_connect(io, snd_seq_connect_to(io->seq, io->out[i].port, client, port));
}

/* Every port of the client, or just one (port >= 0). */
static void connect_client(struct midi_io *io, int client, int port)
{
	char client_name[MIDI_IO_NAME_MAX + 1];

	if (client == SND_SEQ_CLIENT_SYSTEM || client == io->client)
		return;
	if (snd_seq_get_any_client_info(io->seq, client, io->cinfo) < 0)
		return;
	snprintf(client_name, sizeof client_name, "%s", snd_seq_client_info_get_name(io->cinfo));
	if (port >= 0) {
		if (snd_seq_get_any_port_info(io->seq, client, port, io->pinfo) == 0)
			connect_port(io, client_name);
		return;
	}
	snd_seq_port_info_set_client(io->pinfo, client);
	snd_seq_port_info_set_port(io->pinfo, -1);
	while (snd_seq_query_next_port(io->seq, io->pinfo) >= 0)
		connect_port(io, client_name);
}

static void connect_everything(struct midi_io *io)
{
	/* io->cinfo is reused by connect_client, so walk with our own. */
	snd_seq_client_info_t *walk;
	if (snd_seq_client_info_malloc(&walk) < 0)
		return;
	snd_seq_client_info_set_client(walk, -1);
	while (snd_seq_query_next_client(io->seq, walk) >= 0)
		connect_client(io, snd_seq_client_info_get_client(walk), -1);
	snd_seq_client_info_free(walk);
}

/* ---- state rebuilt from the kernel -------------------------------------- */

static void resync(struct midi_io *io)
{
	snd_seq_addr_t senders[256];
	int n = query_subscribers(io, io->in_port, SND_SEQ_QUERY_SUBS_WRITE, senders,
				  (int)(sizeof senders / sizeof senders[0]));

	for (int id = 0; id < MIDI_IO_MAX_SOURCES; id++) {
		if (!io->sources.used[id])
			continue;
		uint32_t key = io->sources.key[id];
		bool still = false;
		for (int i = 0; i < n; i++)
			still |= addr_key(senders[i]) == key;
		if (still)
			continue;
		/* Not subscribed (any more): keep it only while it is an
		 * unsubscribed writer whose port still exists. */
		if (io->subscribed[id] ||
		    snd_seq_get_any_port_info(io->seq, (int)(key >> 8), (int)(key & 0xFF), io->pinfo) < 0)
			source_gone(io, id);
	}
	for (int i = 0; i < n; i++)
		if (senders[i].client != SND_SEQ_CLIENT_SYSTEM)
			source_for(io, senders[i], true);
	for (int i = 0; i < io->output_count; i++)
		output_refresh(io, i);
	io->resync = false;
}

/* ---- input ---------------------------------------------------------------- */

static bool is_our_input(struct midi_io *io, snd_seq_addr_t a)
{
	return a.client == io->client && a.port == io->in_port;
}

static void subscription_notice(struct midi_io *io, const snd_seq_connect_t *c, bool subscribed)
{
	if (is_our_input(io, c->dest) && c->sender.client != SND_SEQ_CLIENT_SYSTEM) {
		if (subscribed) {
			source_for(io, c->sender, true);
		} else {
			int id = source_ids_find(&io->sources, addr_key(c->sender));
			if (id >= 0)
				source_gone(io, id);
		}
	}
	if (c->sender.client == io->client) {
		int i = output_of_port(io, c->sender.port);
		if (i >= 0)
			output_refresh(io, i);
	}
}

static void exit_notice(struct midi_io *io, int client, int port)
{
	sources_exit(io, client, port);
	for (int i = 0; i < io->output_count; i++)
		if (output_has_client(&io->out[i], client, port))
			output_refresh(io, i);
}

static void handle_notice(struct midi_io *io, const snd_seq_event_t *ev)
{
	const snd_seq_addr_t *a = &ev->data.addr;

	switch (ev->type) {
	case SND_SEQ_EVENT_PORT_SUBSCRIBED:
		subscription_notice(io, &ev->data.connect, true);
		break;
	case SND_SEQ_EVENT_PORT_UNSUBSCRIBED:
		subscription_notice(io, &ev->data.connect, false);
		break;
	case SND_SEQ_EVENT_CLIENT_START:
	case SND_SEQ_EVENT_CLIENT_CHANGE:
		/* A client usually gets its name after it starts and its
		 * ports after that; each step may make a pattern match. */
		connect_client(io, a->client, -1);
		break;
	case SND_SEQ_EVENT_PORT_START:
	case SND_SEQ_EVENT_PORT_CHANGE:
		connect_client(io, a->client, a->port);
		break;
	case SND_SEQ_EVENT_PORT_EXIT:
		exit_notice(io, a->client, a->port);
		break;
	case SND_SEQ_EVENT_CLIENT_EXIT:
		exit_notice(io, a->client, -1);
		break;
	default:
		break;
	}
}

static void handle_event(struct midi_io *io, const snd_seq_event_t *ev)
{
	uint8_t buf[SEQ_EVENT_BYTES_MAX];
	const uint8_t *bytes = buf;
	size_t n;

	if (ev->source.client == SND_SEQ_CLIENT_SYSTEM) {
		handle_notice(io, ev);
		return;
	}
	if (!seq_event_sysex(ev, &bytes, &n)) {
		n = seq_event_to_bytes(ev, buf);
		bytes = buf;
	}
	if (n == 0)
		return;
	int id = source_for(io, ev->source, false);
	if (id < 0) {
		io->unplaced_events++;
		return;
	}
	if (io->cb.input)
		io->cb.input(io->cb.context, (uint8_t)id, bytes, n);
}

static void alsa_service_input(struct midi_io *io)
{
	if (io->resync)
		resync(io);
	/* Until the kernel has nothing more: events already in alsa-lib's
	 * buffer would not wake poll() again. */
	for (;;) {
		/* backpressure: the rest waits in the sequencer's queue (which
		 * may then overflow: INPUT_LOST ends the notes, none hangs) */
		if (io->cb.accepting && !io->cb.accepting(io->cb.context))
			break;
		snd_seq_event_t *ev = NULL;
		int r = snd_seq_event_input(io->seq, &ev);
		if (r == -EAGAIN)
			break;
		if (r == -ENOSPC) {
			/* the kernel emptied our whole queue: from every source */
			io->overruns++;
			io->resync = true;
			report(io, MIDI_IO_INPUT_LOST, -1, "");
			continue;
		}
		if (r < 0 || ev == NULL)
			break;
		handle_event(io, ev);
	}
	if (io->resync)
		resync(io);
}

static int alsa_input_fds(struct midi_io *io, struct pollfd *fds, int max, int *tick_ms)
{
	*tick_ms = -1;
	int n = snd_seq_poll_descriptors_count(io->seq, POLLIN);
	if (n > max)
		n = max;
	if (n <= 0)
		return 0;
	return snd_seq_poll_descriptors(io->seq, fds, (unsigned)n, POLLIN);
}

/* ---- output (output thread) ---------------------------------------------- */

static bool alsa_send(struct midi_io *io, int output, const uint8_t *bytes, size_t length)
{
	if (output < 0 || output >= io->output_count)
		return false;
	struct alsa_output *o = &io->out[output];
	snd_seq_event_t ev;
	snd_seq_ev_clear(&ev);
	if (length + sizeof ev >= OUTPUT_BUFFER_BYTES || !seq_event_from_bytes(&ev, bytes, length)) {
		atomic_fetch_add_explicit(&o->drops, 1, memory_order_relaxed);
		return false;
	}
	snd_seq_ev_set_source(&ev, o->port);
	snd_seq_ev_set_subs(&ev);
	snd_seq_ev_set_direct(&ev);
	/* Copies the event into alsa-lib's buffer; drains it first when full. */
	if (snd_seq_event_output(io->seq, &ev) < 0) {
		atomic_fetch_add_explicit(&o->drops, 1, memory_order_relaxed);
		return false;
	}
	return true;
}

static bool alsa_flush(struct midi_io *io)
{
	int r = snd_seq_drain_output(io->seq);
	/* -EAGAIN: the kernel took part of it; the rest goes with the next
	 * flush.  Any other error would stay at the head of the buffer and
	 * block everything behind it, so the buffer is dropped. */
	if (r < 0 && r != -EAGAIN) {
		snd_seq_drop_output_buffer(io->seq);
		if (io->output_count > 0)
			atomic_fetch_add_explicit(&io->out[0].drops, 1, memory_order_relaxed);
	}
	return r == 0 || (r < 0 && r != -EAGAIN);
}

/* ---- open / close ----------------------------------------------------------- */

static void alsa_close(struct midi_io *io)
{
	if (!io)
		return;
	if (io->seq)
		snd_seq_close(io->seq);
	if (io->cinfo)
		snd_seq_client_info_free(io->cinfo);
	if (io->pinfo)
		snd_seq_port_info_free(io->pinfo);
	if (io->query)
		snd_seq_query_subscribe_free(io->query);
	free(io);
}

static int make_port(struct midi_io *io, const char *name, unsigned caps, char *err, size_t err_size)
{
	int port = snd_seq_create_simple_port(io->seq, name, caps, PORT_TYPE);
	if (port < 0)
		snprintf(err, err_size, "cannot create the ALSA sequencer port '%s': %s", name,
			 snd_strerror(port));
	return port;
}

static struct midi_io *alsa_open(const struct midi_io_spec *spec, const struct midi_io_callbacks *callbacks,
				 char *err, size_t err_size)
{
	struct midi_io *io = calloc(1, sizeof *io);
	if (!io) {
		snprintf(err, err_size, "out of memory");
		return NULL;
	}
	io->spec = *spec;
	if (callbacks)
		io->cb = *callbacks;
	source_ids_init(&io->sources);
	if (snd_seq_client_info_malloc(&io->cinfo) < 0 || snd_seq_port_info_malloc(&io->pinfo) < 0 ||
	    snd_seq_query_subscribe_malloc(&io->query) < 0) {
		snprintf(err, err_size, "out of memory");
		alsa_close(io);
		return NULL;
	}
	int r = alsa_seq_open(&io->seq);
	if (r < 0) {
		io->seq = NULL;
		alsa_seq_open_error(r, err, err_size);
		alsa_close(io);
		return NULL;
	}
	io->client = snd_seq_client_id(io->seq);
	snd_seq_set_client_name(io->seq, spec->client_name[0] ? spec->client_name : "latticed");
	if (snd_seq_set_client_pool_input(io->seq, INPUT_POOL_EVENTS) < 0)
		snd_seq_set_client_pool_input(io->seq, INPUT_POOL_FALLBACK);
	snd_seq_client_pool_t *pool;
	if (snd_seq_client_pool_malloc(&pool) == 0) {
		if (snd_seq_get_client_pool(io->seq, pool) == 0)
			io->input_pool = (int)snd_seq_client_pool_get_input_pool(pool);
		snd_seq_client_pool_free(pool);
	}
	snd_seq_set_input_buffer_size(io->seq, INPUT_BUFFER_BYTES);
	snd_seq_set_output_buffer_size(io->seq, OUTPUT_BUFFER_BYTES);

	io->in_port = make_port(io, spec->input.name[0] ? spec->input.name : "in", CAN_WRITE, err, err_size);
	if (io->in_port < 0) {
		alsa_close(io);
		return NULL;
	}
	io->output_count = spec->output_count < 0 ? 0 :
			   spec->output_count > MIDI_IO_MAX_OUTPUTS ? MIDI_IO_MAX_OUTPUTS : spec->output_count;
	for (int i = 0; i < io->output_count; i++) {
		io->out[i].port = make_port(io, spec->outputs[i].name[0] ? spec->outputs[i].name : "out",
					    CAN_READ, err, err_size);
		atomic_init(&io->out[i].drops, 0);
		if (io->out[i].port < 0) {
			alsa_close(io);
			return NULL;
		}
	}
	/* Announcements first, so that no port appearing from now on is
	 * missed; our own connections below are reported through them. */
	r = snd_seq_connect_from(io->seq, io->in_port, SND_SEQ_CLIENT_SYSTEM, SND_SEQ_PORT_SYSTEM_ANNOUNCE);
	if (r < 0) {
		snprintf(err, err_size, "cannot follow the ALSA sequencer's announcements (0:1): %s",
			 snd_strerror(r));
		alsa_close(io);
		return NULL;
	}
	connect_everything(io);
	/* Anything connected between creating the ports and following the
	 * announcements is picked up on the first service_input(). */
	io->resync = true;
	return io;
}

/* ---- reports ---------------------------------------------------------------- */

static void alsa_describe(struct midi_io *io, midi_io_line_fn line, void *context)
{
	char text[1024];

	snprintf(text, sizeof text, "%s (%d:%d): ", io->spec.input.name[0] ? io->spec.input.name : "in",
		 io->client, io->in_port);
	if (source_ids_count(&io->sources) == 0)
		midi_io_appendf(text, sizeof text, "no source");
	for (int id = 0, k = 0; id < MIDI_IO_MAX_SOURCES; id++) {
		if (!io->sources.used[id])
			continue;
		uint32_t key = io->sources.key[id];
		midi_io_appendf(text, sizeof text, "%ssource %d %s (%u:%u)", k++ ? ", " : "", id, io->sources.name[id],
			key >> 8, key & 0xFF);
	}
	midi_io_append_patterns(&io->spec.input, text, sizeof text);
	if (io->overruns)
		midi_io_appendf(text, sizeof text, "; input overruns: %u (events lost; queue of %d events)", io->overruns,
			io->input_pool);
	if (io->unplaced_events)
		midi_io_appendf(text, sizeof text, "; %u events dropped from sources beyond %d", io->unplaced_events,
			MIDI_IO_MAX_SOURCES);
	if (io->connect_failures)
		midi_io_appendf(text, sizeof text, "; %u connections failed (last: %s)", io->connect_failures,
			snd_strerror(io->last_connect_error));
	line(context, text);

	for (int i = 0; i < io->output_count; i++) {
		const struct alsa_output *o = &io->out[i];
		snprintf(text, sizeof text, "%s (%d:%d): ",
			 io->spec.outputs[i].name[0] ? io->spec.outputs[i].name : "out", io->client, o->port);
		if (o->count == 0)
			midi_io_appendf(text, sizeof text, "not connected");
		for (int k = 0; k < o->count; k++)
			midi_io_appendf(text, sizeof text, "%s%s (%d:%d)", k ? ", " : "to ", o->dest[k].name,
				o->dest[k].addr.client, o->dest[k].addr.port);
		midi_io_append_patterns(&io->spec.outputs[i], text, sizeof text);
		unsigned drops = atomic_load_explicit(&o->drops, memory_order_relaxed);
		if (drops)
			midi_io_appendf(text, sizeof text, "; %u messages dropped", drops);
		line(context, text);
	}
}

static bool alsa_list(midi_io_line_fn line, void *context, char *err, size_t err_size)
{
	snd_seq_t *seq;
	snd_seq_client_info_t *cinfo;
	snd_seq_port_info_t *pinfo;
	int r = alsa_seq_open(&seq);
	if (r < 0) {
		alsa_seq_open_error(r, err, err_size);
		return false;
	}
	if (snd_seq_client_info_malloc(&cinfo) < 0) {
		snd_seq_close(seq);
		snprintf(err, err_size, "out of memory");
		return false;
	}
	if (snd_seq_port_info_malloc(&pinfo) < 0) {
		snd_seq_client_info_free(cinfo);
		snd_seq_close(seq);
		snprintf(err, err_size, "out of memory");
		return false;
	}
	int self = snd_seq_client_id(seq), shown = 0;
	line(context, "ALSA sequencer ports (input: can play into latticed; output: latticed can play to it)");
	snd_seq_client_info_set_client(cinfo, -1);
	while (snd_seq_query_next_client(seq, cinfo) >= 0) {
		int client = snd_seq_client_info_get_client(cinfo);
		if (client == SND_SEQ_CLIENT_SYSTEM || client == self)
			continue;
		snd_seq_port_info_set_client(pinfo, client);
		snd_seq_port_info_set_port(pinfo, -1);
		while (snd_seq_query_next_port(seq, pinfo) >= 0) {
			unsigned caps = snd_seq_port_info_get_capability(pinfo);
			bool in = (caps & CAN_READ) == CAN_READ, out = (caps & CAN_WRITE) == CAN_WRITE;
			if (!in && !out)
				continue;
			char text[3 * MIDI_IO_NAME_MAX];
			snprintf(text, sizeof text, "%4d:%-3d  %-6s  %s:%s", client, snd_seq_port_info_get_port(pinfo),
				 in && out ? "both" : in ? "input" : "output", snd_seq_client_info_get_name(cinfo),
				 snd_seq_port_info_get_name(pinfo));
			line(context, text);
			shown++;
		}
	}
	if (shown == 0)
		line(context, "  (none: no MIDI device or program offers a port)");
	else
		line(context, "Connect two: latticed connect SRC DST (names, patterns or these numbers;"
			      " aconnect needs the numbers)");
	snd_seq_port_info_free(pinfo);
	snd_seq_client_info_free(cinfo);
	snd_seq_close(seq);
	return true;
}

const struct midi_io_backend midi_io_alsa = {
	.name = "alsa",
	.open = alsa_open,
	.input_fds = alsa_input_fds,
	.service_input = alsa_service_input,
	.send = alsa_send,
	.flush = alsa_flush,
	.describe = alsa_describe,
	.list = alsa_list,
	.connect = alsa_connect,
	.close = alsa_close,
};
