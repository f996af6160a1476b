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
 * Threads.  One handle, opened duplex and non-blocking, serves both MIDI
 * threads: the input side reads (snd_seq_event_input), connects and
 * queries (ioctls on the descriptor) on the input thread; the output side
 * writes (snd_seq_event_output into alsa-lib's output buffer,
 * snd_seq_drain_output) on whichever thread holds it (midi_io.h: the
 * output thread, or the input thread while the output thread is idle,
 * never both at once).  Input and output may run at the same time because
 * alsa-lib keeps the buffers of the two directions apart in the handle and
 * changes nothing else in it after open (src/seq/seq_local.h, from memory),
 * and the kernel serialises each read, write and ioctl on its own.  The
 * output side must therefore use only snd_seq_event_output,
 * snd_seq_drain_output and snd_seq_drop_output_buffer (not
 * snd_seq_event_output_direct, which borrows a scratch buffer of the
 * handle).  A read's last event (alsa-lib's buffer empty again)
 * calls input_done(), so what a read brought goes out in one write.  The
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
 * Sources, outputs and connections are in alsa_ports.c.
 */
#include <errno.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "alsa_connect.h"
#include "alsa_quiet.h"
#include "alsa_seq.h"
#include "seq_event_bytes.h"

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

/* ---- input ---------------------------------------------------------------- */

static void handle_event(struct midi_io *io, const snd_seq_event_t *ev)
{
	uint8_t buf[SEQ_EVENT_BYTES_MAX];
	const uint8_t *bytes = buf;
	size_t n;

	if (ev->source.client == SND_SEQ_CLIENT_SYSTEM) {
		alsa_handle_notice(io, ev);
		return;
	}
	if (!seq_event_sysex(ev, &bytes, &n)) {
		n = seq_event_to_bytes(ev, buf);
		bytes = buf;
	}
	if (n == 0)
		return;
	int id = alsa_source_for(io, ev->source, false);
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
		alsa_resync(io);
	/* Until alsa-lib's buffer is empty: events in it would not wake poll()
	 * again; what is still in the kernel does, so it is read on the next
	 * call (one read a call: no read that only finds nothing). */
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
			alsa_report(io, MIDI_IO_INPUT_LOST, -1, "");
			continue;
		}
		if (r < 0 || ev == NULL)
			break;
		handle_event(io, ev);
		if (snd_seq_event_input_pending(io->seq, 0) > 0)
			continue;
		/* the last event of what the read brought: its answer goes now */
		if (io->cb.input_done)
			io->cb.input_done(io->cb.context);
		break;
	}
	if (io->resync)
		alsa_resync(io);
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

/* ---- output (whichever thread holds the output side) ---------------------------------------------- */

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
	alsa_connect_everything(io);
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
