/*
 * seqtool_bench: the two commands of the latency benchmark (vm_latency).
 *
 *   seqtool forward [--name C] [--priority N]
 *   seqtool stream [OPTIONS] TO FROM | --direct
 *
 * forward is the reference a live MIDI program is measured against: one
 * thread that reads an event and writes it, nothing else.  Client C
 * (default "forwarder") has a port "in" that anyone may write to and a port
 * "out" that anyone may read from; every event that reaches "in" goes out
 * of "out" at once (snd_seq_event_output_direct: one write per event, as a
 * plain forwarder does), events from client 0 (subscription notices)
 * excepted.  It runs at SCHED_FIFO priority N (default 40, latticed's
 * default) with its memory locked, like latticed, and says on stderr if it
 * may not; it stops on SIGTERM or SIGINT.
 *
 * stream plays a stream of note events into TO and times each one out of
 * FROM.  The events are scheduled on our own queue at exact times, --rate
 * per second, so the kernel sends them (its queue timer ticks every
 * millisecond: at 10 000/s they leave ten at a time, as a USB MIDI device
 * delivers them) and no wake-up of ours lies on the path.  The port "out"
 * sends them to its subscribers, our own "echo" and TO; FROM is subscribed
 * to "in".  "echo" and "in" are stamped by the kernel with the same queue,
 * so for the k-th note event (on or off) that comes back,
 *   latency = stamp at "in" - stamp of the k-th note event at "echo":
 * the time through whatever lies between TO and FROM, in kernel time.  The
 * route may send other messages too (a pitch bend before each note, an MTS
 * tuning change); they are counted, not timed.  The notes walk up the keys
 * --keys LO-HI (default 48-83, three octaves) on --channel (default 1)
 * with --hold notes sounding at once (default 4): --hold note-ons, then a
 * note-off and a note-on in turn, then the last note-offs, so every note
 * ends.  --count note events in all (default 10 000, rounded up to even).
 * We read what came back every 2 ms, never waiting on the port, so our own
 * wake-ups stay off the route's CPU.  With --cpu PID (repeatable) it
 * prints each process's CPU use (user + system, /proc/PID/stat) over the
 * stream, as a percentage of one core.
 *
 * Output: '#' comment lines, then
 *   stream RATE SENT BACK LOST MISMATCHED OTHER MEDIAN P99.9 MAX
 *   cpu PID NAME PERCENT
 * times in ms (p99.9 by nearest rank); LOST = note events that never came
 * back (within 1 s after the last was sent), MISMATCHED = a note-on that
 * came back as a note-off or the other way round.  Figures, not checks:
 * the exit status is 0 unless the sequencer itself fails.
 */
#include <errno.h>
#include <math.h>
#include <poll.h>
#include <sched.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <time.h>
#include <unistd.h>

#include "seqtool.h"

#define STREAM_LEAD_MS 20          /* scheduled ahead of the queue's clock */
#define STREAM_START_MS 200        /* from subscribing to the first event */
#define STREAM_READ_MS 2           /* between two reads of what came back */
#define STREAM_GRACE_MS 1000       /* after the last event, for stragglers */
#define CPU_WATCH_MAX 8

/* ---- forward -------------------------------------------------------------- */

static void forward_realtime(int priority)
{
	struct sched_param sp = { .sched_priority = priority };

	if (priority > 0 && sched_setscheduler(0, SCHED_FIFO, &sp) != 0)
		fprintf(stderr, "seqtool forward: SCHED_FIFO %d refused (%s); running at normal priority\n",
			priority, strerror(errno));
	if (mlockall(MCL_CURRENT | MCL_FUTURE) != 0)
		fprintf(stderr, "seqtool forward: memory not locked (%s)\n", strerror(errno));
}

int cmd_forward(int argc, char **argv)
{
	const char *name = "forwarder";
	long priority = 40;

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--name") && i + 1 < argc)
			name = argv[++i];
		else if (!strcmp(argv[i], "--priority") && i + 1 < argc)
			priority = opt_long("--priority", argv[++i], 0, 99);
		else
			die(EXIT_USAGE, "usage: seqtool forward [--name C] [--priority N]");
	}
	catch_signals();
	snd_seq_t *seq = client_open(name);
	int in = port_create(seq, "in", SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE, -1);
	int out = port_create(seq, "out", SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ, -1);
	(void)in;
	check(snd_seq_nonblock(seq, 1), "cannot set non-blocking mode");
	int nfds = snd_seq_poll_descriptors_count(seq, POLLIN);
	struct pollfd *fds = calloc((size_t)nfds, sizeof *fds);
	if (!fds)
		die(EXIT_FAIL, "out of memory");
	snd_seq_poll_descriptors(seq, fds, (unsigned)nfds, POLLIN);
	forward_realtime((int)priority);
	unsigned long forwarded = 0;
	while (!stop_requested) {
		snd_seq_event_t *ev;
		int err = snd_seq_event_input(seq, &ev);
		if (err == -EAGAIN) {
			poll(fds, (nfds_t)nfds, -1);
			continue;
		}
		if (err == -ENOSPC || err == -EINTR)
			continue;
		check(err, "cannot read an event");
		if (ev->source.client == SND_SEQ_CLIENT_SYSTEM)
			continue;
		snd_seq_ev_set_source(ev, out);
		snd_seq_ev_set_subs(ev);
		snd_seq_ev_set_direct(ev);
		if (snd_seq_event_output_direct(seq, ev) >= 0)
			forwarded++;
	}
	fprintf(stderr, "seqtool forward: %lu events forwarded\n", forwarded);
	free(fds);
	snd_seq_close(seq);
	return 0;
}

/* ---- stream ---------------------------------------------------------------- */

struct stream_opts {
	const char *to, *from;
	bool direct;
	long rate, count, hold;
	int key_lo, key_hi, channel;
	double wait_s;
	int cpu_pids[CPU_WATCH_MAX];
	int cpu_count;
};

struct note_event {
	unsigned char status, key, velocity;
};

struct stream {
	snd_seq_t *seq;
	int queue, out, echo, in;
	struct note_event *events;
	double *sent, *back;       /* kernel stamps, by the note event's ordinal */
	long count, sent_n, back_n, mismatched, other, overruns;
	unsigned char *sent_on, *back_on;
};

/* hold note-ons, then a note-off and a note-on in turn, then the last note-offs */
static struct note_event *stream_notes(const struct stream_opts *o, long count)
{
	struct note_event *ev = calloc((size_t)count, sizeof *ev);
	int keys = o->key_hi - o->key_lo + 1;
	long n_on = 0, n_off = 0;

	if (!ev)
		die(EXIT_FAIL, "out of memory");
	for (long i = 0; i < count; i++) {
		bool on = n_on < count / 2 && n_on - n_off < o->hold;
		long n = on ? n_on++ : n_off++;
		ev[i].status = (unsigned char)((on ? 0x90 : 0x80) | (o->channel - 1));
		ev[i].key = (unsigned char)(o->key_lo + n % keys);
		ev[i].velocity = on ? 100 : 64;
	}
	return ev;
}

static void stream_schedule(struct stream *s, long i, double at_ms)
{
	snd_seq_event_t ev;
	snd_seq_real_time_t t = { .tv_sec = (unsigned)(at_ms / 1e3) };

	t.tv_nsec = (unsigned)((at_ms - t.tv_sec * 1e3) * 1e6);
	snd_seq_ev_clear(&ev);
	if ((s->events[i].status & 0xF0) == 0x90)
		snd_seq_ev_set_noteon(&ev, s->events[i].status & 0x0F, s->events[i].key, s->events[i].velocity);
	else
		snd_seq_ev_set_noteoff(&ev, s->events[i].status & 0x0F, s->events[i].key, s->events[i].velocity);
	snd_seq_ev_set_source(&ev, s->out);
	snd_seq_ev_set_subs(&ev);
	snd_seq_ev_schedule_real(&ev, s->queue, 0, &t);
	int err;
	while ((err = snd_seq_event_output(s->seq, &ev)) == -EAGAIN) {
		(void)snd_seq_drain_output(s->seq);
		pause_ms(0.5);
	}
	check(err, "cannot schedule a note event");
}

/* Note on (1) or off (0) for a note event, -1 for anything else. */
static int note_kind(const snd_seq_event_t *ev)
{
	if (ev->type == SND_SEQ_EVENT_NOTEON)
		return ev->data.note.velocity > 0;
	if (ev->type == SND_SEQ_EVENT_NOTEOFF)
		return 0;
	return -1;
}

static void stream_take(struct stream *s, const snd_seq_event_t *ev)
{
	int kind = note_kind(ev);
	double stamp = real_ms(&ev->time.time);

	if (ev->dest.port == s->echo && kind >= 0 && s->sent_n < s->count) {
		s->sent_on[s->sent_n] = (unsigned char)kind;
		s->sent[s->sent_n++] = stamp;
	} else if (ev->dest.port == s->in && kind < 0) {
		s->other++;
	} else if (ev->dest.port == s->in && s->back_n < s->count) {
		s->back_on[s->back_n] = (unsigned char)kind;
		s->back[s->back_n++] = stamp;
	}
}

static void stream_read(struct stream *s)
{
	for (;;) {
		snd_seq_event_t *ev;
		int err = snd_seq_event_input(s->seq, &ev);
		if (err == -EAGAIN)
			return;
		if (err == -ENOSPC) {
			s->overruns++;
			continue;
		}
		check(err, "cannot read an event");
		if (ev->source.client != SND_SEQ_CLIENT_SYSTEM)
			stream_take(s, ev);
	}
}

static unsigned long long cpu_ticks(int pid)
{
	char path[64], line[1024];
	unsigned long long utime = 0, stime = 0;

	snprintf(path, sizeof path, "/proc/%d/stat", pid);
	FILE *f = fopen(path, "r");
	if (!f)
		return 0;
	if (fgets(line, sizeof line, f)) {
		const char *p = strrchr(line, ')'); /* the name may hold spaces */
		if (p && sscanf(p + 2, "%*c %*d %*d %*d %*d %*d %*u %*u %*u %*u %*u %llu %llu", &utime, &stime) != 2)
			utime = stime = 0;
	}
	fclose(f);
	return utime + stime;
}

static void cpu_name(int pid, char *name, size_t size)
{
	char path[64];

	snprintf(path, sizeof path, "/proc/%d/comm", pid);
	FILE *f = fopen(path, "r");
	if (!f || !fgets(name, (int)size, f))
		snprintf(name, size, "?");
	name[strcspn(name, "\n ")] = '\0';
	if (f)
		fclose(f);
}

/* Sends every note event at its time and collects what comes back. */
static void stream_run(struct stream *s, const struct stream_opts *o)
{
	double period = 1e3 / (double)o->rate;
	double start = queue_now_ms(s->seq, s->queue) + STREAM_START_MS;
	double end = start + (double)s->count * period + STREAM_GRACE_MS;
	long next = 0;

	for (;;) {
		double now = queue_now_ms(s->seq, s->queue);
		for (; next < s->count && start + (double)next * period <= now + STREAM_LEAD_MS; next++)
			stream_schedule(s, next, start + (double)next * period);
		check(snd_seq_drain_output(s->seq), "cannot send the note events");
		stream_read(s);
		if (stop_requested || now > end || (next == s->count && s->back_n == s->count))
			break;
		pause_ms(STREAM_READ_MS);
	}
	pause_ms(50);
	stream_read(s);
}

static void stream_report(const struct stream *s, const struct stream_opts *o, const unsigned long long *cpu0,
			  double seconds)
{
	long n = s->back_n < s->sent_n ? s->back_n : s->sent_n;
	long mismatched = 0;
	double *lat = malloc(((size_t)n + 1) * sizeof *lat);

	if (!lat)
		die(EXIT_FAIL, "out of memory");
	for (long i = 0; i < n; i++) {
		lat[i] = s->back[i] - s->sent[i];
		mismatched += s->back_on[i] != s->sent_on[i];
	}
	qsort(lat, (size_t)n, sizeof *lat, cmp_double);
	printf("# columns: stream RATE SENT BACK LOST MISMATCHED OTHER MEDIAN P99.9 MAX (ms)\n");
	printf("stream %ld %ld %ld %ld %ld %ld %.4f %.4f %.4f\n", o->rate, s->sent_n, s->back_n,
	       s->count - s->back_n, mismatched, s->other, percentile(lat, (size_t)n, 50),
	       percentile(lat, (size_t)n, 99.9), n ? lat[n - 1] : NAN);
	if (s->overruns)
		printf("# our input queue overflowed %ld time(s): figures incomplete\n", s->overruns);
	long hz = sysconf(_SC_CLK_TCK);
	for (int i = 0; i < o->cpu_count; i++) {
		char name[64];
		cpu_name(o->cpu_pids[i], name, sizeof name);
		double used = (double)(cpu_ticks(o->cpu_pids[i]) - cpu0[i]) / (double)(hz > 0 ? hz : 100);
		printf("cpu %d %s %.1f\n", o->cpu_pids[i], name, seconds > 0 ? 100 * used / seconds : 0.0);
	}
	free(lat);
}

static void stream_open(struct stream *s, const struct stream_opts *o)
{
	s->seq = client_open("seqtool-stream");
	s->queue = queue_start(s->seq);
	s->out = port_create(s->seq, "out", SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ, -1);
	s->echo = port_create(s->seq, "echo", SND_SEQ_PORT_CAP_WRITE, s->queue);
	s->in = port_create(s->seq, "in", SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE, s->queue);
	check(snd_seq_set_client_pool_output(s->seq, 1000), "cannot enlarge the output pool");
	check(snd_seq_set_client_pool_input(s->seq, 2000), "cannot enlarge the input pool");
	check(snd_seq_set_input_buffer_size(s->seq, 1 << 16), "cannot enlarge the input buffer");
	int me = snd_seq_client_id(s->seq);
	check(snd_seq_connect_to(s->seq, s->out, me, s->echo), "cannot connect the echo port");
	if (o->direct) {
		check(snd_seq_connect_to(s->seq, s->out, me, s->in), "cannot connect the ports");
	} else {
		snd_seq_addr_t to = port_await(s->seq, o->to, o->wait_s);
		snd_seq_addr_t from = port_await(s->seq, o->from, o->wait_s);
		check(snd_seq_connect_to(s->seq, s->out, to.client, to.port), "cannot connect to TO");
		check(snd_seq_connect_from(s->seq, s->in, from.client, from.port), "cannot subscribe to FROM");
	}
	check(snd_seq_nonblock(s->seq, 1), "cannot set non-blocking mode");
	s->sent = calloc((size_t)s->count, sizeof *s->sent);
	s->back = calloc((size_t)s->count, sizeof *s->back);
	s->sent_on = calloc((size_t)s->count, 1);
	s->back_on = calloc((size_t)s->count, 1);
	if (!s->sent || !s->back || !s->sent_on || !s->back_on)
		die(EXIT_FAIL, "out of memory");
}

static void parse_keys(const char *s, struct stream_opts *o)
{
	int lo, hi, used = 0;

	if (sscanf(s, "%d-%d%n", &lo, &hi, &used) != 2 || s[used] || lo < 0 || lo > hi || hi > 127)
		die(EXIT_USAGE, "--keys: expected LO-HI, two keys from 0 to 127, got '%s'", s);
	o->key_lo = lo;
	o->key_hi = hi;
}

static void stream_options(int argc, char **argv, struct stream_opts *o)
{
	const char *usage = "usage: seqtool stream [--rate N] [--count N] [--keys LO-HI] [--hold N] [--channel C]\n"
			    "       [--wait S] [--cpu PID]... TO FROM | --direct";
	const char *args[2];
	int nargs = 0;

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--rate") && i + 1 < argc)
			o->rate = opt_long("--rate", argv[++i], 1, 100000);
		else if (!strcmp(argv[i], "--count") && i + 1 < argc)
			o->count = opt_long("--count", argv[++i], 2, 10000000);
		else if (!strcmp(argv[i], "--hold") && i + 1 < argc)
			o->hold = opt_long("--hold", argv[++i], 1, 64);
		else if (!strcmp(argv[i], "--channel") && i + 1 < argc)
			o->channel = (int)opt_long("--channel", argv[++i], 1, 16);
		else if (!strcmp(argv[i], "--wait") && i + 1 < argc)
			o->wait_s = opt_double("--wait", argv[++i]);
		else if (!strcmp(argv[i], "--cpu") && i + 1 < argc && o->cpu_count < CPU_WATCH_MAX)
			o->cpu_pids[o->cpu_count++] = (int)opt_long("--cpu", argv[++i], 1, 1 << 22);
		else if (!strcmp(argv[i], "--keys") && i + 1 < argc)
			parse_keys(argv[++i], o);
		else if (!strcmp(argv[i], "--direct"))
			o->direct = true;
		else if (argv[i][0] != '-' && nargs < 2)
			args[nargs++] = argv[i];
		else
			die(EXIT_USAGE, "%s", usage);
	}
	if (o->direct ? nargs != 0 : nargs != 2)
		die(EXIT_USAGE, "%s", usage);
	if (o->key_hi - o->key_lo + 1 < o->hold)
		die(EXIT_USAGE, "--keys: %d keys cannot hold %ld notes at once", o->key_hi - o->key_lo + 1, o->hold);
	o->count += o->count % 2;
	if (!o->direct) {
		o->to = args[0];
		o->from = args[1];
	}
}

int cmd_stream(int argc, char **argv)
{
	struct stream_opts o = { .rate = 1000, .count = 10000, .hold = 4, .key_lo = 48, .key_hi = 83,
				 .channel = 1, .wait_s = 5 };
	struct stream s = { 0 };
	unsigned long long cpu0[CPU_WATCH_MAX];

	stream_options(argc, argv, &o);
	catch_signals();
	s.count = o.count;
	s.events = stream_notes(&o, o.count);
	stream_open(&s, &o);
	printf("# %ld note events (on and off, %ld held at once) at %ld/s, keys %d-%d, channel %d, %s\n", o.count,
	       o.hold, o.rate, o.key_lo, o.key_hi, o.channel, o.direct ? "by direct subscription" : "through the route");
	if (!o.direct)
		printf("# route: %s -> ... -> %s\n", o.to, o.from);
	for (int i = 0; i < o.cpu_count; i++)
		cpu0[i] = cpu_ticks(o.cpu_pids[i]);
	double t0 = now_ms();
	stream_run(&s, &o);
	stream_report(&s, &o, cpu0, (now_ms() - t0) / 1e3);
	snd_seq_close(s.seq);
	free(s.events);
	free(s.sent);
	free(s.back);
	free(s.sent_on);
	free(s.back_on);
	return 0;
}
