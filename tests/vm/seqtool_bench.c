/*
 * seqtool_bench: the two commands of the latency benchmark (vm_latency).
 *
 *   seqtool forward [--name C] [--priority N] [--bend-before-notes]
 *   seqtool stream [OPTIONS] (--route NAME TO FROM | --direct NAME)...
 *
 * forward is the reference a live MIDI program is measured against: one
 * thread that reads an event and writes it, nothing else.  Client C
 * (default "forwarder") has a port "in" that anyone may write to and a port
 * "out" that anyone may read from; every event that reaches "in" goes out
 * of "out" at once (snd_seq_event_output_direct: one write per event, as a
 * plain forwarder does), events from client 0 (subscription notices)
 * excepted.  It runs at SCHED_FIFO priority N (default 40, latticed's
 * default) with its memory locked, like latticed, and says on stderr if it
 * may not; it stops on SIGTERM or SIGINT.  With --bend-before-notes it
 * also sends a pitch bend on the note's channel before every note-on (a
 * new value each time), both in one write: the least any program costs
 * that retunes by pitch bend, since MIDI 1.0 has a bend per channel and a
 * note whose channel was bent for another pitch needs a new one first.
 *
 * stream plays a stream of note events into one or more routes and times
 * each event out of the other end.  The events are scheduled on our own
 * queue at exact times, --rate per second, so the kernel sends them (its
 * queue timer ticks every millisecond: at 10 000/s they leave ten at a
 * time, as a USB MIDI device delivers them) and no wake-up of ours lies on
 * the path.  Each route NAME has a port "out-NAME" that sends to its
 * subscribers, our own "echo" and TO, and a port "in-NAME" subscribed to
 * FROM (--route NAME TO FROM), or joined to "out-NAME" directly (--direct
 * NAME).  "echo" and the "in" ports are stamped by the kernel with the same
 * queue, so for the k-th note event (on or off) that comes back,
 *   latency = stamp at "in-NAME" - stamp of its k-th note event at "echo":
 * the time through whatever lies between TO and FROM, in kernel time.  The
 * route may send other messages too (a pitch bend before each note, an MTS
 * tuning change); they are counted, not timed.
 *
 * Several routes take turns, --block events each (default 100), until
 * each has had --count (default 10 000, rounded up to even): whatever else
 * runs on the machine then weighs on all of them alike, and a route that
 * is not playing only sleeps.  The notes walk up the keys --keys LO-HI
 * (default 48-83, three octaves) on --channel (default 1) with --hold
 * notes sounding at once (default 4): --hold note-ons, then a note-off and
 * a note-on in turn, then the last note-offs, so every note ends; each
 * route has its own walk, carried on from one turn to the next.  We read
 * what came back every 2 ms, never waiting on a port, so our own wake-ups
 * stay off the routes' CPU, at SCHED_FIFO priority --priority (default 20:
 * below the routes' 40, above anything else, so a busy host cannot make
 * our own input queue overflow).  --cpu NAME PID prints how much CPU the
 * process took (all its threads, by the scheduler's clock) over the whole
 * stream, as a percentage of one core during its own turns.  --times DIR
 * writes DIR/NAME.txt: each note event's sending time (ms from the first)
 * and latency, one a line.
 *
 * Output: '#' comment lines, then for each route
 *   stream NAME RATE SENT BACK LOST MISMATCHED OTHER MEDIAN P99.9 MAX
 *   cpu NAME PID PERCENT
 * times in ms (p99.9 by nearest rank); LOST = note events that never came
 * back (within 1 s after the last was sent), MISMATCHED = a note-on that
 * came back as a note-off or the other way round.  Figures, not checks:
 * the exit status is 0 unless the sequencer itself fails.
 */
#include <dirent.h>
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
#define ROUTES_MAX 8
/* ---- forward -------------------------------------------------------------- */

static void go_realtime(const char *who, int priority)
{
	struct sched_param sp = { .sched_priority = priority };

	if (priority > 0 && sched_setscheduler(0, SCHED_FIFO, &sp) != 0)
		fprintf(stderr, "seqtool %s: SCHED_FIFO %d refused (%s); running at normal priority\n", who,
			priority, strerror(errno));
	if (mlockall(MCL_CURRENT | MCL_FUTURE) != 0)
		fprintf(stderr, "seqtool %s: memory not locked (%s)\n", who, strerror(errno));
}

int cmd_forward(int argc, char **argv)
{
	const char *name = "forwarder";
	long priority = 40;
	bool bend_before_notes = false;

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--name") && i + 1 < argc)
			name = argv[++i];
		else if (!strcmp(argv[i], "--priority") && i + 1 < argc)
			priority = opt_long("--priority", argv[++i], 0, 99);
		else if (!strcmp(argv[i], "--bend-before-notes"))
			bend_before_notes = true;
		else
			die(EXIT_USAGE, "usage: seqtool forward [--name C] [--priority N] [--bend-before-notes]");
	}
	catch_signals();
	/* before the ports appear: a caller that waits for them then finds the
	 * start-up (mlockall takes ~0.1 s of CPU under TCG) over */
	go_realtime("forward", (int)priority);
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
	unsigned long forwarded = 0, bends = 0;
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
		if (bend_before_notes && ev->type == SND_SEQ_EVENT_NOTEON && ev->data.note.velocity > 0) {
			snd_seq_event_t bend;
			snd_seq_ev_clear(&bend);
			snd_seq_ev_set_source(&bend, out);
			snd_seq_ev_set_subs(&bend);
			snd_seq_ev_set_direct(&bend);
			/* a new value each note, within +-1 semitone at a 12-semitone range */
			snd_seq_ev_set_pitchbend(&bend, ev->data.note.channel, (int)(bends % 1365) - 682);
			if (snd_seq_event_output(seq, &bend) >= 0)
				bends++;
			if (snd_seq_event_output(seq, ev) >= 0 && snd_seq_drain_output(seq) >= 0)
				forwarded++;
			continue;
		}
		if (snd_seq_event_output_direct(seq, ev) >= 0)
			forwarded++;
	}
	fprintf(stderr, "seqtool forward: %lu events forwarded, %lu bends added\n", forwarded, bends);
	free(fds);
	snd_seq_close(seq);
	return 0;
}

/* ---- stream ---------------------------------------------------------------- */

struct route {
	const char *name;
	const char *to, *from;     /* NULL: direct */
	int pid;                   /* --cpu, or 0 */
	int out, in;               /* our ports */
	double *sent, *back;       /* kernel stamps, by the note event's ordinal */
	unsigned char *sent_on, *back_on;
	long sent_n, back_n, other;
	unsigned long long cpu0;
};

struct stream_opts {
	long rate, count, hold, block, priority;
	int key_lo, key_hi, channel;
	double wait_s;
	const char *times;         /* --times DIR */
	int route_count;
	struct route routes[ROUTES_MAX];
};

struct note_event {
	unsigned char status, key, velocity;
};

struct stream {
	snd_seq_t *seq;
	int queue, echo;
	struct note_event *events; /* one route's walk; every route plays the same */
	long overruns;
};

/* hold note-ons, then a note-off and a note-on in turn, then the last note-offs */
static struct note_event *stream_notes(const struct stream_opts *o)
{
	struct note_event *ev = calloc((size_t)o->count, sizeof *ev);
	int keys = o->key_hi - o->key_lo + 1;
	long n_on = 0, n_off = 0;

	if (!ev)
		die(EXIT_FAIL, "out of memory");
	for (long i = 0; i < o->count; i++) {
		bool on = n_on < o->count / 2 && n_on - n_off < o->hold;
		long n = on ? n_on++ : n_off++;
		ev[i].status = (unsigned char)((on ? 0x90 : 0x80) | (o->channel - 1));
		ev[i].key = (unsigned char)(o->key_lo + n % keys);
		ev[i].velocity = on ? 100 : 64;
	}
	return ev;
}

/* The g-th event of the whole stream: whose turn, and which of its events. */
static const struct route *stream_slot(const struct stream_opts *o, long g, long *index)
{
	long turn = g / o->block, routes = o->route_count;
	*index = turn / routes * o->block + g % o->block;
	return &o->routes[turn % routes];
}

static void stream_schedule(struct stream *s, const struct route *r, long i, double at_ms)
{
	snd_seq_event_t ev;
	snd_seq_real_time_t t = { .tv_sec = (unsigned)(at_ms / 1e3) };
	const struct note_event *n = &s->events[i];

	t.tv_nsec = (unsigned)((at_ms - t.tv_sec * 1e3) * 1e6);
	snd_seq_ev_clear(&ev);
	if ((n->status & 0xF0) == 0x90)
		snd_seq_ev_set_noteon(&ev, n->status & 0x0F, n->key, n->velocity);
	else
		snd_seq_ev_set_noteoff(&ev, n->status & 0x0F, n->key, n->velocity);
	snd_seq_ev_set_source(&ev, r->out);
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

static void stream_take(struct stream_opts *o, struct stream *s, const snd_seq_event_t *ev)
{
	int kind = note_kind(ev);
	double stamp = real_ms(&ev->time.time);

	for (int k = 0; k < o->route_count; k++) {
		struct route *r = &o->routes[k];
		if (ev->dest.port == s->echo && ev->source.port == r->out && kind >= 0 && r->sent_n < o->count) {
			r->sent_on[r->sent_n] = (unsigned char)kind;
			r->sent[r->sent_n++] = stamp;
		} else if (ev->dest.port == r->in && kind < 0) {
			r->other++;
		} else if (ev->dest.port == r->in && r->back_n < o->count) {
			r->back_on[r->back_n] = (unsigned char)kind;
			r->back[r->back_n++] = stamp;
		}
	}
}

static void stream_read(struct stream_opts *o, struct stream *s)
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
			stream_take(o, s, ev);
	}
}

static bool stream_all_back(const struct stream_opts *o)
{
	for (int k = 0; k < o->route_count; k++)
		if (o->routes[k].back_n < o->count)
			return false;
	return true;
}

/* Nanoseconds on a CPU of every thread of the process so far (the
 * scheduler's own clock, /proc/PID/task/TID/schedstat: exact, where the
 * tick-sampled times of /proc/PID/stat miss or double what a short wake-up
 * costs). */
static unsigned long long cpu_ns(int pid)
{
	char path[64];
	unsigned long long total = 0;

	snprintf(path, sizeof path, "/proc/%d/task", pid);
	DIR *d = opendir(path);
	if (!d)
		return 0;
	struct dirent *e;
	while ((e = readdir(d)) != NULL) {
		char file[300];
		unsigned long long ns;
		if (e->d_name[0] == '.')
			continue;
		snprintf(file, sizeof file, "/proc/%d/task/%s/schedstat", pid, e->d_name);
		FILE *f = fopen(file, "r");
		if (f && fscanf(f, "%llu", &ns) == 1)
			total += ns;
		if (f)
			fclose(f);
	}
	closedir(d);
	return total;
}

/* Sends every note event at its time and collects what comes back. */
static void stream_run(struct stream_opts *o, struct stream *s)
{
	double period = 1e3 / (double)o->rate;
	long total = o->count * o->route_count;
	double start = queue_now_ms(s->seq, s->queue) + STREAM_START_MS;
	double end = start + (double)total * period + STREAM_GRACE_MS;
	long next = 0;

	for (;;) {
		double now = queue_now_ms(s->seq, s->queue);
		for (; next < total && start + (double)next * period <= now + STREAM_LEAD_MS; next++) {
			long index;
			const struct route *r = stream_slot(o, next, &index);
			stream_schedule(s, r, index, start + (double)next * period);
		}
		check(snd_seq_drain_output(s->seq), "cannot send the note events");
		stream_read(o, s);
		if (stop_requested || now > end || (next == total && stream_all_back(o)))
			break;
		pause_ms(STREAM_READ_MS);
	}
	pause_ms(50);
	stream_read(o, s);
}

static void write_times(const struct stream_opts *o, const struct route *r, const double *lat, long n)
{
	char path[512];

	snprintf(path, sizeof path, "%s/%s.txt", o->times, r->name);
	FILE *f = fopen(path, "w");
	if (!f)
		die(EXIT_FAIL, "cannot write %s: %s", path, strerror(errno));
	for (long i = 0; i < n; i++)
		fprintf(f, "%.4f %.4f\n", r->sent[i] - r->sent[0], lat[i]);
	fclose(f);
}

static void route_report(const struct stream_opts *o, const struct route *r)
{
	long n = r->back_n < r->sent_n ? r->back_n : r->sent_n;
	long mismatched = 0;
	double *lat = malloc(((size_t)n + 1) * sizeof *lat);

	if (!lat)
		die(EXIT_FAIL, "out of memory");
	for (long i = 0; i < n; i++) {
		lat[i] = r->back[i] - r->sent[i];
		mismatched += r->back_on[i] != r->sent_on[i];
	}
	if (o->times)
		write_times(o, r, lat, n);
	qsort(lat, (size_t)n, sizeof *lat, cmp_double);
	printf("stream %s %ld %ld %ld %ld %ld %ld %.4f %.4f %.4f\n", r->name, o->rate, r->sent_n, r->back_n,
	       o->count - r->back_n, mismatched, r->other, percentile(lat, (size_t)n, 50),
	       percentile(lat, (size_t)n, 99.9), n ? lat[n - 1] : NAN);
	if (r->pid) {
		double used = (double)(cpu_ns(r->pid) - r->cpu0) / 1e9;
		printf("cpu %s %d %.1f\n", r->name, r->pid, 100 * used / ((double)o->count / (double)o->rate));
	}
	free(lat);
}

static void route_open(struct stream *s, const struct stream_opts *o, struct route *r)
{
	char name[80];
	int me = snd_seq_client_id(s->seq);

	snprintf(name, sizeof name, "out-%s", r->name);
	r->out = port_create(s->seq, name, SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ, -1);
	snprintf(name, sizeof name, "in-%s", r->name);
	r->in = port_create(s->seq, name, SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE, s->queue);
	check(snd_seq_connect_to(s->seq, r->out, me, s->echo), "cannot connect the echo port");
	if (!r->to) {
		check(snd_seq_connect_to(s->seq, r->out, me, r->in), "cannot connect the ports");
	} else {
		snd_seq_addr_t to = port_await(s->seq, r->to, o->wait_s);
		snd_seq_addr_t from = port_await(s->seq, r->from, o->wait_s);
		check(snd_seq_connect_to(s->seq, r->out, to.client, to.port), "cannot connect to TO");
		check(snd_seq_connect_from(s->seq, r->in, from.client, from.port), "cannot subscribe to FROM");
	}
	r->sent = calloc((size_t)o->count, sizeof *r->sent);
	r->back = calloc((size_t)o->count, sizeof *r->back);
	r->sent_on = calloc((size_t)o->count, 1);
	r->back_on = calloc((size_t)o->count, 1);
	if (!r->sent || !r->back || !r->sent_on || !r->back_on)
		die(EXIT_FAIL, "out of memory");
}

static void stream_open(struct stream *s, struct stream_opts *o)
{
	s->seq = client_open("seqtool-stream");
	s->queue = queue_start(s->seq);
	s->echo = port_create(s->seq, "echo", SND_SEQ_PORT_CAP_WRITE, s->queue);
	check(snd_seq_set_client_pool_output(s->seq, 1000), "cannot enlarge the output pool");
	check(snd_seq_set_client_pool_input(s->seq, 2000), "cannot enlarge the input pool");
	check(snd_seq_set_input_buffer_size(s->seq, 1 << 16), "cannot enlarge the input buffer");
	for (int k = 0; k < o->route_count; k++)
		route_open(s, o, &o->routes[k]);
	check(snd_seq_nonblock(s->seq, 1), "cannot set non-blocking mode");
}

static void parse_keys(const char *s, struct stream_opts *o)
{
	int lo, hi, used = 0;

	if (sscanf(s, "%d-%d%n", &lo, &hi, &used) != 2 || s[used] || lo < 0 || lo > hi || hi > 127)
		die(EXIT_USAGE, "--keys: expected LO-HI, two keys from 0 to 127, got '%s'", s);
	o->key_lo = lo;
	o->key_hi = hi;
}

static struct route *add_route(struct stream_opts *o, const char *name)
{
	if (o->route_count == ROUTES_MAX)
		die(EXIT_USAGE, "at most %d routes", ROUTES_MAX);
	struct route *r = &o->routes[o->route_count++];
	*r = (struct route){ .name = name };
	return r;
}

static void cpu_of(struct stream_opts *o, const char *name, const char *pid)
{
	for (int k = 0; k < o->route_count; k++)
		if (!strcmp(o->routes[k].name, name)) {
			o->routes[k].pid = (int)opt_long("--cpu", pid, 1, 1 << 22);
			return;
		}
	die(EXIT_USAGE, "--cpu %s: no route of that name (give --route or --direct first)", name);
}

static void stream_options(int argc, char **argv, struct stream_opts *o)
{
	const char *usage = "usage: seqtool stream [--rate N] [--count N] [--block N] [--keys LO-HI] [--hold N]\n"
			    "       [--channel C] [--priority N] [--wait S] [--times DIR]\n"
			    "       (--route NAME TO FROM | --direct NAME)... [--cpu NAME PID]...";

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--rate") && i + 1 < argc)
			o->rate = opt_long("--rate", argv[++i], 1, 100000);
		else if (!strcmp(argv[i], "--count") && i + 1 < argc)
			o->count = opt_long("--count", argv[++i], 2, 10000000);
		else if (!strcmp(argv[i], "--block") && i + 1 < argc)
			o->block = opt_long("--block", argv[++i], 1, 10000000);
		else if (!strcmp(argv[i], "--hold") && i + 1 < argc)
			o->hold = opt_long("--hold", argv[++i], 1, 64);
		else if (!strcmp(argv[i], "--priority") && i + 1 < argc)
			o->priority = opt_long("--priority", argv[++i], 0, 99);
		else if (!strcmp(argv[i], "--channel") && i + 1 < argc)
			o->channel = (int)opt_long("--channel", argv[++i], 1, 16);
		else if (!strcmp(argv[i], "--wait") && i + 1 < argc)
			o->wait_s = opt_double("--wait", argv[++i]);
		else if (!strcmp(argv[i], "--times") && i + 1 < argc)
			o->times = argv[++i];
		else if (!strcmp(argv[i], "--keys") && i + 1 < argc)
			parse_keys(argv[++i], o);
		else if (!strcmp(argv[i], "--route") && i + 3 < argc) {
			struct route *r = add_route(o, argv[i + 1]);
			r->to = argv[i + 2];
			r->from = argv[i + 3];
			i += 3;
		} else if (!strcmp(argv[i], "--direct") && i + 1 < argc)
			add_route(o, argv[++i]);
		else if (!strcmp(argv[i], "--cpu") && i + 2 < argc) {
			cpu_of(o, argv[i + 1], argv[i + 2]);
			i += 2;
		} else
			die(EXIT_USAGE, "%s", usage);
	}
	if (o->route_count == 0)
		die(EXIT_USAGE, "%s", usage);
	if (o->key_hi - o->key_lo + 1 < o->hold)
		die(EXIT_USAGE, "--keys: %d keys cannot hold %ld notes at once", o->key_hi - o->key_lo + 1, o->hold);
	o->count += o->count % 2;
}

int cmd_stream(int argc, char **argv)
{
	struct stream_opts o = { .rate = 1000, .count = 10000, .hold = 4, .block = 100, .priority = 20,
				 .key_lo = 48, .key_hi = 83, .channel = 1, .wait_s = 5 };
	struct stream s = { 0 };

	stream_options(argc, argv, &o);
	catch_signals();
	s.events = stream_notes(&o);
	stream_open(&s, &o);
	go_realtime("stream", (int)o.priority);
	printf("# %ld note events per route (on and off, %ld held at once) at %ld/s, keys %d-%d, channel %d,\n",
	       o.count, o.hold, o.rate, o.key_lo, o.key_hi, o.channel);
	printf("# the routes taking turns, %ld events each:", o.block);
	for (int k = 0; k < o.route_count; k++)
		printf(" %s (%s%s%s)", o.routes[k].name, o.routes[k].to ? o.routes[k].to : "direct",
		       o.routes[k].to ? " -> ... -> " : "", o.routes[k].to ? o.routes[k].from : "");
	printf("\n# columns: stream NAME RATE SENT BACK LOST MISMATCHED OTHER MEDIAN P99.9 MAX (ms); cpu NAME PID %%\n");
	for (int k = 0; k < o.route_count; k++)
		if (o.routes[k].pid)
			o.routes[k].cpu0 = cpu_ns(o.routes[k].pid);
	stream_run(&o, &s);
	for (int k = 0; k < o.route_count; k++)
		route_report(&o, &o.routes[k]);
	if (s.overruns)
		printf("# our input queue overflowed %ld time(s): figures incomplete\n", s.overruns);
	snd_seq_close(s.seq);
	free(s.events);
	for (int k = 0; k < o.route_count; k++) {
		free(o.routes[k].sent);
		free(o.routes[k].back);
		free(o.routes[k].sent_on);
		free(o.routes[k].back_on);
	}
	return 0;
}
