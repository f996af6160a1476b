/*
 * portmidi_io: the PortMidi backend, for systems where PortMidi is the
 * MIDI layer at hand.  On Linux PortMidi itself sits on the ALSA
 * sequencer, and the alsa backend does everything this one does, better.
 *
 * Devices are chosen by name: every input device that matches an input
 * pattern is opened and is a source; each output uses the first output
 * device that matches its patterns (two outputs may share one device).
 * Our ports carry PortMidi's names, not spec->client_name: PortMidi has no
 * way to name them.
 *
 * What PortMidi (217, Debian 12) allows, and what follows from it:
 *   - No descriptor to wait on: input_fds() returns none and a 1 ms tick,
 *     so input waits up to 1 ms (0.5 ms on average) before it is read, on
 *     top of the sequencer's own delay, and the input thread wakes 1000
 *     times a second even when nothing happens.
 *   - The device list is read once, by Pm_Initialize(); seeing a device
 *     that appeared later takes Pm_Terminate() and Pm_Initialize(), which
 *     closes every open stream.  Reopening an input loses whatever arrives
 *     in between, possibly a Note Off, so the list is read again (while a
 *     configured device is missing: every 2 s, after a minute every 10 s)
 *     only when no input is open.  Then missing outputs are found too, and an output whose device
 *     is no longer listed is reported gone.  Once an input is open, devices
 *     that appear later are not seen until latticed restarts.
 *   - A device that disappears is not reported by PortMidi: its stream
 *     stays open and simply stays silent (on ALSA PortMidi ignores the
 *     unsubscription notice).  Only a failing Pm_Read or write tells us;
 *     then the stream is closed and SOURCE_GONE / OUTPUT_GONE reported.
 *   - Output is opened with latency 0, so each message is handed to the
 *     system at once and flush() has nothing to do.  On ALSA, PortMidi opens
 *     the sequencer in blocking mode; its writes are direct dispatch, which
 *     the kernel never makes wait for a receiver, so in practice send()
 *     does not block, but PortMidi promises nothing about it.
 *   - PortMidi keeps process-wide state and says nothing about threads, so
 *     every PortMidi call here holds one lock.  The output thread may wait
 *     for it while the input thread reads (microseconds) or, with no input
 *     open, rescans the devices (about a millisecond).  Callbacks are never
 *     called with the lock held.
 * Only one PortMidi backend can be open per process.
 */
#include <pthread.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <portmidi.h>

#ifdef LATTICED_HAVE_ALSA
#include "alsa_quiet.h"
#endif
#include "clock.h"
#include "midi_io.h"
#include "pm_bytes.h"
#include "source_ids.h"

#define TICK_MS 1
/* Every rescan leaks PortMidi's copies of the device names (PortMidi 217
 * frees them nowhere, not even in Pm_Terminate: a few hundred bytes), so
 * after the first minute of waiting the rescans slow down. */
#define RESCAN_MS 2000
#define RESCAN_SLOW_MS 10000
#define RESCAN_FAST_FOR_MS 60000
#define INPUT_BUFFER_EVENTS 1024
#define READ_CHUNK 64
#define MAX_REPORTS 64

struct pm_input {
	PmDeviceID device;
	PortMidiStream *stream;
	int source;
	struct pm_bytes conv;
};

struct pm_output {
	PmDeviceID device;      /* -1: not open */
	PortMidiStream *stream; /* may be another output's stream (same device) */
	bool owner;
	char name[MIDI_IO_NAME_MAX + 1];
	atomic_bool failed;     /* set by the output thread, handled by the input thread */
	atomic_uint drops;
};

struct report {
	enum midi_io_event kind;
	int index;
	char name[MIDI_IO_NAME_MAX + 1];
};

struct midi_io {
	struct midi_io_spec spec;
	struct midi_io_callbacks cb;
	int input_count;
	struct pm_input in[MIDI_IO_MAX_SOURCES];
	int output_count;
	struct pm_output out[MIDI_IO_MAX_OUTPUTS];
	struct source_ids sources;
	int64_t next_scan_ms;
	int64_t missing_since_ms; /* 0: nothing missing at the last look */
	unsigned overruns;
	unsigned scans;
	char last_error[128];
	int report_count;
	struct report reports[MAX_REPORTS];
};

/* Guards every PortMidi call and `initialized`, `open_instance`. */
static pthread_mutex_t pm_lock = PTHREAD_MUTEX_INITIALIZER;
static bool initialized;
static struct midi_io *open_instance;

static PmTimestamp time_proc(void *info)
{
	(void)info;
	return (PmTimestamp)monotonic_ms();
}

static PmError initialize(void)
{
#ifdef LATTICED_HAVE_ALSA
	alsa_quiet_lib_errors(); /* PortMidi on Linux goes through alsa-lib */
#endif
	return Pm_Initialize();
}

static void set_error(struct midi_io *io, const char *what, PmError e)
{
	char host[96] = "";
	if (e == pmHostError)
		Pm_GetHostErrorText(host, sizeof host);
	snprintf(io->last_error, sizeof io->last_error, "%s: %s", what, host[0] ? host : Pm_GetErrorText(e));
}

/* Queued under the lock, delivered after it is released. */
static void queue_report(struct midi_io *io, enum midi_io_event kind, int index, const char *name)
{
	if (io->report_count == MAX_REPORTS)
		return;
	struct report *r = &io->reports[io->report_count++];
	r->kind = kind;
	r->index = index;
	size_t len = name ? strnlen(name, sizeof r->name - 1) : 0;
	memmove(r->name, name ? name : "", len);
	r->name[len] = '\0';
}

static void deliver_reports(struct midi_io *io, struct report *copy, int count)
{
	for (int i = 0; i < count; i++)
		if (io->cb.event)
			io->cb.event(io->cb.context, copy[i].kind, copy[i].index, copy[i].name);
}

static bool device_is_input(struct midi_io *io, PmDeviceID id)
{
	for (int i = 0; i < io->input_count; i++)
		if (io->in[i].device == id)
			return true;
	return false;
}

static void open_inputs(struct midi_io *io)
{
	int n = Pm_CountDevices();
	for (PmDeviceID id = 0; id < n && io->input_count < MIDI_IO_MAX_SOURCES; id++) {
		const PmDeviceInfo *d = Pm_GetDeviceInfo(id);
		if (!d || !d->input || device_is_input(io, id) || !midi_io_matches(&io->spec.input, d->name, NULL))
			continue;
		PortMidiStream *s = NULL;
		PmError e = Pm_OpenInput(&s, id, NULL, INPUT_BUFFER_EVENTS, time_proc, NULL);
		if (e < 0) {
			set_error(io, d->name, e);
			continue;
		}
		Pm_SetFilter(s, 0); /* everything: the daemon decides what to ignore */
		int source = source_ids_add(&io->sources, (uint32_t)id, d->name);
		struct pm_input *in = &io->in[io->input_count++];
		in->device = id;
		in->stream = s;
		in->source = source;
		pm_bytes_init(&in->conv);
		queue_report(io, MIDI_IO_SOURCE_CONNECTED, source, d->name);
	}
}

static void close_input(struct midi_io *io, int i, bool report)
{
	struct pm_input *in = &io->in[i];
	Pm_Close(in->stream);
	if (report)
		queue_report(io, MIDI_IO_SOURCE_GONE, in->source, io->sources.name[in->source]);
	source_ids_remove(&io->sources, in->source);
	io->in[i] = io->in[--io->input_count];
}

static PmDeviceID find_output(struct midi_io *io, int index)
{
	int n = Pm_CountDevices();
	/* The device used before, if it is still there, */
	if (io->out[index].name[0])
		for (PmDeviceID id = 0; id < n; id++) {
			const PmDeviceInfo *d = Pm_GetDeviceInfo(id);
			if (d && d->output && strcmp(d->name, io->out[index].name) == 0)
				return id;
		}
	/* else the first that matches. */
	for (PmDeviceID id = 0; id < n; id++) {
		const PmDeviceInfo *d = Pm_GetDeviceInfo(id);
		if (d && d->output && midi_io_matches(&io->spec.outputs[index], d->name, NULL))
			return id;
	}
	return -1;
}

/* Opens every output whose device is listed; reports the ones that are
 * new, or back. */
static void open_outputs(struct midi_io *io)
{
	for (int i = 0; i < io->output_count; i++) {
		struct pm_output *o = &io->out[i];
		if (o->stream)
			continue;
		PmDeviceID id = find_output(io, i);
		if (id < 0)
			continue;
		const PmDeviceInfo *d = Pm_GetDeviceInfo(id);
		bool same = strcmp(o->name, d->name) == 0 && o->device == -2;
		for (int k = 0; k < io->output_count; k++) {
			if (k != i && io->out[k].stream && io->out[k].device == id) {
				o->stream = io->out[k].stream;
				o->owner = false;
				break;
			}
		}
		if (!o->stream) {
			PmError e = Pm_OpenOutput(&o->stream, id, NULL, 0, time_proc, NULL, 0);
			if (e < 0) {
				o->stream = NULL;
				set_error(io, d->name, e);
				continue;
			}
			o->owner = true;
		}
		o->device = id;
		snprintf(o->name, sizeof o->name, "%s", d->name);
		atomic_store(&o->failed, false);
		if (!same)
			queue_report(io, MIDI_IO_OUTPUT_CONNECTED, i, d->name);
	}
}

static void close_output(struct midi_io *io, int i)
{
	struct pm_output *o = &io->out[i];
	if (!o->stream)
		return;
	if (o->owner) {
		/* A sharer takes the stream over. */
		for (int k = 0; k < io->output_count; k++) {
			if (k != i && io->out[k].stream == o->stream) {
				io->out[k].owner = true;
				o->stream = NULL;
				o->device = -1;
				return;
			}
		}
		Pm_Close(o->stream);
	}
	o->stream = NULL;
	o->device = -1;
}

static bool something_missing(struct midi_io *io)
{
	for (int i = 0; i < io->output_count; i++)
		if (!io->out[i].stream && io->spec.outputs[i].connect_count > 0)
			return true;
	return io->input_count == 0 && io->spec.input.connect_count > 0;
}

/* Re-reads the device list; only called with no input open (see top).
 * Outputs are closed and opened again by name; -2 marks "was open", so
 * that one found again under its name is not reported as new. */
static void rescan(struct midi_io *io)
{
	bool was_open[MIDI_IO_MAX_OUTPUTS];
	for (int i = 0; i < io->output_count; i++) {
		was_open[i] = io->out[i].stream != NULL;
		if (io->out[i].owner && io->out[i].stream)
			Pm_Close(io->out[i].stream);
		io->out[i].stream = NULL;
		io->out[i].owner = false;
		io->out[i].device = was_open[i] ? -2 : -1;
	}
	Pm_Terminate();
	initialize();
	io->scans++;
	open_outputs(io);
	for (int i = 0; i < io->output_count; i++) {
		struct pm_output *o = &io->out[i];
		if (was_open[i] && !o->stream) {
			queue_report(io, MIDI_IO_OUTPUT_GONE, i, o->name);
			o->name[0] = '\0';
			o->device = -1;
		}
	}
	open_inputs(io);
}

static struct midi_io *pm_open(const struct midi_io_spec *spec, const struct midi_io_callbacks *callbacks,
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
	io->output_count = spec->output_count < 0 ? 0 :
			   spec->output_count > MIDI_IO_MAX_OUTPUTS ? MIDI_IO_MAX_OUTPUTS : spec->output_count;
	for (int i = 0; i < io->output_count; i++) {
		io->out[i].device = -1;
		atomic_init(&io->out[i].failed, false);
		atomic_init(&io->out[i].drops, 0);
	}

	pthread_mutex_lock(&pm_lock);
	if (open_instance) {
		pthread_mutex_unlock(&pm_lock);
		snprintf(err, err_size, "the PortMidi backend is already open in this process");
		free(io);
		return NULL;
	}
	PmError e = initialize();
	if (e < 0) {
		pthread_mutex_unlock(&pm_lock);
		snprintf(err, err_size, "cannot start PortMidi: %s", Pm_GetErrorText(e));
		free(io);
		return NULL;
	}
	initialized = true;
#ifdef __linux__
	if (Pm_CountDevices() == 0 && access("/dev/snd/seq", F_OK) != 0) {
		Pm_Terminate();
		initialized = false;
		pthread_mutex_unlock(&pm_lock);
		snprintf(err, err_size, "no ALSA sequencer for PortMidi: /dev/snd/seq does not exist; load it with "
			 "'modprobe snd-seq' (or install a kernel with sound support)");
		free(io);
		return NULL;
	}
#endif
	open_instance = io;
	open_outputs(io);
	open_inputs(io);
	io->next_scan_ms = monotonic_ms() + RESCAN_MS;
	pthread_mutex_unlock(&pm_lock);
	return io;
}

static void pm_close(struct midi_io *io)
{
	if (!io)
		return;
	pthread_mutex_lock(&pm_lock);
	while (io->input_count > 0)
		close_input(io, io->input_count - 1, false);
	for (int i = 0; i < io->output_count; i++)
		close_output(io, i);
	if (initialized) {
		Pm_Terminate();
		initialized = false;
	}
	open_instance = NULL;
	pthread_mutex_unlock(&pm_lock);
	free(io);
}

static int pm_input_fds(struct midi_io *io, struct pollfd *fds, int max, int *tick_ms)
{
	(void)io;
	(void)fds;
	(void)max;
	*tick_ms = TICK_MS;
	return 0;
}

struct pending_input {
	int source;
	int input;
	int count;
	PmEvent events[READ_CHUNK];
};

static void pm_service_input(struct midi_io *io)
{
	struct report reports[MAX_REPORTS];
	int report_count;

	/* Read under the lock, convert and deliver without it; each round
	 * takes one chunk from every input, so no input starves another. */
	/* backpressure: stop between rounds; the rest waits in PortMidi's buffer */
	for (bool more = true; more && (!io->cb.accepting || io->cb.accepting(io->cb.context));) {
		struct pending_input pending[MIDI_IO_MAX_SOURCES];
		int n = 0;
		more = false;
		pthread_mutex_lock(&pm_lock);
		for (int i = 0; i < io->output_count; i++) {
			if (atomic_load(&io->out[i].failed) && io->out[i].stream) {
				queue_report(io, MIDI_IO_OUTPUT_GONE, i, io->out[i].name);
				close_output(io, i);
				io->out[i].name[0] = '\0';
			}
		}
		for (int i = 0; i < io->input_count; i++) {
			struct pm_input *in = &io->in[i];
			if (Pm_Poll(in->stream) != pmGotData)
				continue;
			int got = Pm_Read(in->stream, pending[n].events, READ_CHUNK);
			if (got == pmBufferOverflow) {
				io->overruns++;
				queue_report(io, MIDI_IO_INPUT_LOST, in->source, io->sources.name[in->source]);
				more = true;
				continue;
			}
			if (got < 0) {
				set_error(io, io->sources.name[in->source], (PmError)got);
				close_input(io, i, true);
				i--;
				continue;
			}
			if (got == 0)
				continue;
			pending[n].source = in->source;
			pending[n].input = i;
			pending[n].count = got;
			n++;
			more |= got == READ_CHUNK;
		}
		if (!more && io->input_count == 0 && monotonic_ms() >= io->next_scan_ms) {
			int64_t t = monotonic_ms();
			if (something_missing(io)) {
				if (!io->missing_since_ms)
					io->missing_since_ms = t;
				rescan(io);
			} else {
				io->missing_since_ms = 0;
			}
			bool slow = io->missing_since_ms && t - io->missing_since_ms > RESCAN_FAST_FOR_MS;
			io->next_scan_ms = monotonic_ms() + (slow ? RESCAN_SLOW_MS : RESCAN_MS);
		}
		report_count = io->report_count;
		memcpy(reports, io->reports, sizeof reports[0] * (size_t)report_count);
		io->report_count = 0;
		pthread_mutex_unlock(&pm_lock);

		deliver_reports(io, reports, report_count);
		for (int p = 0; p < n; p++) {
			/* Only the input thread changes io->in, so the
			 * converter is still this input's. */
			struct pm_bytes *conv = &io->in[pending[p].input].conv;
			for (int k = 0; k < pending[p].count; k++) {
				uint8_t bytes[4];
				size_t len = pm_bytes_from_word(conv, (uint32_t)pending[p].events[k].message, bytes);
				if (len && io->cb.input)
					io->cb.input(io->cb.context, (uint8_t)pending[p].source, bytes, len);
			}
		}
	}
}

static bool pm_send(struct midi_io *io, int output, const uint8_t *bytes, size_t length)
{
	if (output < 0 || output >= io->output_count || length == 0)
		return false;
	struct pm_output *o = &io->out[output];
	PmError e;
	uint32_t word;

	if (bytes[0] == 0xF0) {
		if (length < 2 || bytes[length - 1] != 0xF7)
			goto drop;
	} else if (!pm_bytes_to_word(bytes, length, &word)) {
		goto drop;
	}
	pthread_mutex_lock(&pm_lock);
	if (!o->stream || atomic_load(&o->failed)) {
		pthread_mutex_unlock(&pm_lock);
		goto drop;
	}
	if (bytes[0] == 0xF0)
		e = Pm_WriteSysEx(o->stream, 0, (unsigned char *)bytes);
	else
		e = Pm_WriteShort(o->stream, 0, (PmMessage)word);
	pthread_mutex_unlock(&pm_lock);
	if (e < 0) {
		if (e != pmBufferOverflow && e != pmBufferMaxSize)
			atomic_store(&o->failed, true);
		goto drop;
	}
	return true;
drop:
	atomic_fetch_add_explicit(&o->drops, 1, memory_order_relaxed);
	return false;
}

static bool pm_flush(struct midi_io *io)
{
	(void)io; /* latency 0: every write went out at once */
	return true;
}

static void pm_describe(struct midi_io *io, midi_io_line_fn line, void *context)
{
	char text[1024];

	pthread_mutex_lock(&pm_lock);
	snprintf(text, sizeof text, "%s (PortMidi): ", io->spec.input.name[0] ? io->spec.input.name : "in");
	if (io->input_count == 0)
		midi_io_appendf(text, sizeof text, "no source");
	for (int i = 0; i < io->input_count; i++)
		midi_io_appendf(text, sizeof text, "%ssource %d %s (device %d)", i ? ", " : "", io->in[i].source,
			io->sources.name[io->in[i].source], io->in[i].device);
	midi_io_append_patterns(&io->spec.input, text, sizeof text);
	if (io->overruns)
		midi_io_appendf(text, sizeof text, "; %u input overflows (events lost)", io->overruns);
	if (io->input_count > 0)
		midi_io_appendf(text, sizeof text, "; PortMidi sees no device come or go while an input is open");
	if (io->last_error[0])
		midi_io_appendf(text, sizeof text, "; last error: %s", io->last_error);
	line(context, text);
	for (int i = 0; i < io->output_count; i++) {
		const struct pm_output *o = &io->out[i];
		snprintf(text, sizeof text, "%s (PortMidi): ",
			 io->spec.outputs[i].name[0] ? io->spec.outputs[i].name : "out");
		if (o->stream)
			midi_io_appendf(text, sizeof text, "to %s (device %d)", o->name, o->device);
		else
			midi_io_appendf(text, sizeof text, "not connected");
		midi_io_append_patterns(&io->spec.outputs[i], text, sizeof text);
		unsigned drops = atomic_load_explicit(&o->drops, memory_order_relaxed);
		if (drops)
			midi_io_appendf(text, sizeof text, "; %u messages dropped", drops);
		line(context, text);
	}
	pthread_mutex_unlock(&pm_lock);
}

static bool pm_list(midi_io_line_fn line, void *context, char *err, size_t err_size)
{
	char text[3 * MIDI_IO_NAME_MAX];

	pthread_mutex_lock(&pm_lock);
	bool own = !initialized;
	if (own) {
		PmError e = initialize();
		if (e < 0) {
			pthread_mutex_unlock(&pm_lock);
			snprintf(err, err_size, "cannot start PortMidi: %s", Pm_GetErrorText(e));
			return false;
		}
	}
	int n = Pm_CountDevices();
	line(context, own ? "PortMidi devices (input: can play into latticed; output: latticed can play to it)"
			  : "PortMidi devices as of the last scan (input: can play into latticed; output: "
			    "latticed can play to it)");
	for (PmDeviceID id = 0; id < n; id++) {
		const PmDeviceInfo *d = Pm_GetDeviceInfo(id);
		if (!d)
			continue;
		snprintf(text, sizeof text, "%4d  %-6s  %s (%s)%s", id, d->input ? "input" : "output", d->name,
			 d->interf, d->opened ? ", open" : "");
		line(context, text);
	}
	if (n == 0)
		line(context, "  (none: PortMidi finds no MIDI device)");
	if (own)
		Pm_Terminate();
	pthread_mutex_unlock(&pm_lock);
	return true;
}

const struct midi_io_backend midi_io_portmidi = {
	.name = "portmidi",
	.open = pm_open,
	.input_fds = pm_input_fds,
	.service_input = pm_service_input,
	.send = pm_send,
	.flush = pm_flush,
	.describe = pm_describe,
	.list = pm_list,
	.close = pm_close,
};
