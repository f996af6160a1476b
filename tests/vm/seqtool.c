/*
 * seqtool: an ALSA sequencer client that the VM tests use to play into
 * latticed, record what comes out and measure the time in between.
 *
 *   seqtool list
 *   seqtool wait PORT [--seconds S] [--gone]
 *   seqtool play [OPTIONS] DEST|- FILE
 *   seqtool record [OPTIONS] SRC|- FILE
 *   seqtool compare [--time-tolerance MS] EXPECTED ACTUAL
 *   seqtool latency [OPTIONS] TO FROM | --direct
 *   seqtool forward [OPTIONS]                  (seqtool_bench.c)
 *   seqtool stream [OPTIONS] ROUTE...          (seqtool_bench.c)
 *
 * A port is named "client:port" with the names `list` prints (e.g.
 * "Midi Through:Midi Through Port-0", "latticed:in"), by a client name
 * alone (its first port) or by numbers ("14:0").  Numbers shift when other
 * modules or clients come and go, so tests use names.
 *
 * Performance files are our own text format; play reads them, record
 * writes them, compare reads both.  One step a line, '#' starts a comment:
 *   TIME BYTES...    raw MIDI bytes in hex ("90 3C 64" or "903C64")
 *   TIME vanish      close the client: its ports disappear mid-performance
 *   TIME reappear    open it again under the same names
 *   TIME mark FILE   once everything before is delivered, create FILE
 *   TIME await FILE  wait until FILE exists; the performance's clock
 *                    stands still meanwhile (later times are relative)
 * mark and await let a test script act at a known point of a performance
 * (send a signal while a chord is held) and let the player go on after.
 * TIME is in milliseconds from the start of the performance, or "+N" for N
 * after the step before.  A line holds whole messages; running status
 * carries over from the line before (MIDI 1.0 running status; cleared by
 * system common messages and by reappear).
 *
 * Sequencer events and MIDI bytes are converted by alsa-lib's snd_midi_event
 * coder in both directions: it keeps a Note On with velocity 0 a Note On,
 * and handles the sequencer's signed pitch bend (value - 8192).  SysEx longer
 * than the coder's buffer travels as several SYSEX events of which only the
 * last ends in F7; play sends such chunks (size --chunk, like a hardware
 * port's input) and record joins them again.
 *
 * Exit status: 0 success, 1 failure (missing port, mismatch, sequencer
 * error), 2 bad command line or unreadable performance file.
 */
#include <alsa/asoundlib.h>
#include <errno.h>
#include <math.h>
#include <poll.h>
#include <pthread.h>
#include <signal.h>
#include <stdarg.h>
#include <stdatomic.h>
#include <stdbool.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

#include "seqtool.h"

/* Chunk size of the kernel's rawmidi-to-sequencer bridge (sound/core/seq/seq_midi.c), from memory. */
#define DEFAULT_SYSEX_CHUNK 256
#define LINE_BYTES_MAX (1 << 20)
#define PLAY_LEAD_MS 50
/* How long `await FILE` waits before the player gives up. */
#define AWAIT_SECONDS 120

volatile sig_atomic_t stop_requested;

static void on_signal(int sig)
{
	(void)sig;
	stop_requested = 1;
}

void catch_signals(void)
{
	struct sigaction sa;

	memset(&sa, 0, sizeof(sa));
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	sigaction(SIGINT, &sa, NULL);
	sigaction(SIGTERM, &sa, NULL);
}

void die(int status, const char *fmt, ...)
{
	va_list ap;

	fflush(stdout);
	fputs("seqtool: ", stderr);
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fputc('\n', stderr);
	exit(status);
}

void check(int err, const char *what)
{
	if (err < 0)
		die(EXIT_FAIL, "%s: %s", what, snd_strerror(err));
}

static void *grow(void *p, size_t *cap, size_t need, size_t size)
{
	if (need <= *cap)
		return p;
	size_t n = *cap ? *cap : 16;
	while (n < need)
		n *= 2;
	p = realloc(p, n * size);
	if (!p)
		die(EXIT_FAIL, "out of memory");
	*cap = n;
	return p;
}

double now_ms(void)
{
	struct timespec t;

	clock_gettime(CLOCK_MONOTONIC, &t);
	return t.tv_sec * 1e3 + t.tv_nsec / 1e6;
}

void sleep_until_ms(double ms)
{
	struct timespec t;

	if (ms < 0)
		return;
	t.tv_sec = (time_t)(ms / 1e3);
	t.tv_nsec = (long)((ms - t.tv_sec * 1e3) * 1e6);
	if (t.tv_nsec >= 1000000000L)
		t.tv_nsec = 999999999L;
	while (!stop_requested && clock_nanosleep(CLOCK_MONOTONIC, TIMER_ABSTIME, &t, NULL) == EINTR)
		;
}

void pause_ms(double ms)
{
	sleep_until_ms(now_ms() + ms);
}

double real_ms(const snd_seq_real_time_t *t)
{
	return t->tv_sec * 1e3 + t->tv_nsec / 1e6;
}

static snd_seq_real_time_t ms_real(double ms)
{
	snd_seq_real_time_t t;

	if (ms < 0)
		ms = 0;
	t.tv_sec = (unsigned)(ms / 1e3);
	t.tv_nsec = (unsigned)((ms - t.tv_sec * 1e3) * 1e6);
	if (t.tv_nsec >= 1000000000u)
		t.tv_nsec = 999999999u;
	return t;
}

static bool parse_double(const char *s, double *out)
{
	char *end;

	errno = 0;
	*out = strtod(s, &end);
	return *s && !*end && !errno && isfinite(*out) && *out >= 0;
}

double opt_double(const char *opt, const char *s)
{
	double v;

	if (!parse_double(s, &v))
		die(EXIT_USAGE, "%s: expected a number >= 0, got '%s'", opt, s);
	return v;
}

long opt_long(const char *opt, const char *s, long min, long max)
{
	char *end;
	long v;

	errno = 0;
	v = strtol(s, &end, 10);
	if (!*s || *end || errno || v < min || v > max)
		die(EXIT_USAGE, "%s: expected a whole number from %ld to %ld, got '%s'", opt, min, max, s);
	return v;
}

/* ------------------------------------------------------------------------
 * MIDI messages: split a byte string into whole messages.
 */

/* Data bytes after a status byte; -1 SysEx; -2 not allowed here. */
static int midi_data_count(unsigned s)
{
	if (s < 0xF0)
		return (s & 0xE0) == 0xC0 ? 1 : 2; /* Cn, Dn: one data byte (MIDI 1.0) */
	switch (s) {
	case 0xF0: return -1;
	case 0xF1: case 0xF3: return 1;
	case 0xF2: return 2;
	case 0xF6: case 0xF8: case 0xFA: case 0xFB: case 0xFC: case 0xFE: case 0xFF: return 0;
	default: return -2; /* F4 F5 F9 FD undefined, F7 only ends a SysEx */
	}
}

struct splitter {
	unsigned running;       /* running status, 0 when none */
	unsigned char *msg;
	size_t len, cap;
	int need;               /* data bytes still due, -1 inside SysEx */
	bool busy;
};

typedef void emit_fn(void *ctx, const unsigned char *msg, size_t len);

static void msg_put(struct splitter *sp, unsigned char c)
{
	sp->msg = grow(sp->msg, &sp->cap, sp->len + 1, 1);
	sp->msg[sp->len++] = c;
}

/*
 * Feeds one line's bytes; emits each message complete.  Returns NULL, or a
 * description of the fault at byte *at.
 */
static const char *split_line(struct splitter *sp, const unsigned char *b, size_t n, size_t *at,
			      emit_fn *emit, void *ctx)
{
	static char why[96];

	for (size_t i = 0; i < n; i++) {
		unsigned c = b[i];
		*at = i;
		if (c >= 0xF8) { /* real-time bytes may stand anywhere, even inside a message */
			if (midi_data_count(c) < 0)
				return snprintf(why, sizeof(why), "undefined status byte %02X", c), why;
			unsigned char one = (unsigned char)c;
			emit(ctx, &one, 1);
			continue;
		}
		if (sp->busy && sp->need < 0) { /* inside SysEx */
			if (c == 0xF7) {
				msg_put(sp, 0xF7);
				emit(ctx, sp->msg, sp->len);
				sp->busy = false;
			} else if (c & 0x80) {
				return snprintf(why, sizeof(why), "SysEx not ended by F7 before status byte %02X", c), why;
			} else {
				msg_put(sp, (unsigned char)c);
			}
			continue;
		}
		if (c & 0x80) {
			int count = midi_data_count(c);
			if (sp->busy)
				return snprintf(why, sizeof(why), "message %02X lacks %d data byte(s) before %02X",
						sp->msg[0], sp->need, c), why;
			if (count == -2)
				return snprintf(why, sizeof(why), c == 0xF7 ? "F7 without a SysEx before it" :
						"undefined status byte %02X", c), why;
			sp->len = 0;
			msg_put(sp, (unsigned char)c);
			sp->need = count;
			sp->running = c < 0xF0 ? c : 0; /* system common cancels running status */
		} else if (sp->busy) {
			msg_put(sp, (unsigned char)c);
			sp->need--;
		} else if (sp->running) {
			sp->len = 0;
			msg_put(sp, (unsigned char)sp->running);
			msg_put(sp, (unsigned char)c);
			sp->need = midi_data_count(sp->running) - 1;
		} else {
			return snprintf(why, sizeof(why), "data byte %02X without a status byte", c), why;
		}
		sp->busy = sp->need != 0;
		if (!sp->busy)
			emit(ctx, sp->msg, sp->len);
	}
	*at = n;
	if (sp->busy) {
		sp->busy = false;
		if (sp->need < 0)
			return "SysEx not ended by F7 on the same line";
		return snprintf(why, sizeof(why), "message %02X lacks %d data byte(s) at the end of the line",
				sp->msg[0], sp->need), why;
	}
	return NULL;
}

/* ------------------------------------------------------------------------
 * Performance files.
 */

enum step_kind { STEP_MIDI, STEP_VANISH, STEP_REAPPEAR, STEP_MARK, STEP_AWAIT };

struct step {
	enum step_kind kind;
	double ms;
	size_t off, len;        /* one message in perf.bytes; for mark/await the file name */
	unsigned line;
};

struct perf {
	const char *path;
	struct step *steps;
	size_t count, cap;
	unsigned char *bytes;
	size_t nbytes, bytecap;
	/* while parsing */
	double line_ms;
	unsigned line;
};

static struct step *perf_add(struct perf *p, enum step_kind kind)
{
	p->steps = grow(p->steps, &p->cap, p->count + 1, sizeof(*p->steps));
	struct step *s = &p->steps[p->count++];
	s->kind = kind;
	s->ms = p->line_ms;
	s->off = p->nbytes;
	s->len = 0;
	s->line = p->line;
	return s;
}

static void perf_emit(void *ctx, const unsigned char *msg, size_t len)
{
	struct perf *p = ctx;
	struct step *s = perf_add(p, STEP_MIDI);

	p->bytes = grow(p->bytes, &p->bytecap, p->nbytes + len, 1);
	memcpy(p->bytes + p->nbytes, msg, len);
	p->nbytes += len;
	s->len = len;
}

static int hexval(int c)
{
	if (c >= '0' && c <= '9')
		return c - '0';
	if (c >= 'a' && c <= 'f')
		return c - 'a' + 10;
	if (c >= 'A' && c <= 'F')
		return c - 'A' + 10;
	return -1;
}

static void perf_fault(const struct perf *p, const char *fmt, ...)
{
	va_list ap;

	fprintf(stderr, "seqtool: %s:%u: ", p->path, p->line);
	va_start(ap, fmt);
	vfprintf(stderr, fmt, ap);
	va_end(ap);
	fputc('\n', stderr);
	exit(EXIT_USAGE);
}

static void perf_load(struct perf *p, const char *path)
{
	FILE *f = strcmp(path, "-") ? fopen(path, "r") : stdin;
	struct splitter sp = { 0 };
	unsigned char *bytes = NULL;
	size_t bytecap = 0;
	char *line = NULL;
	size_t linecap = 0;
	double prev = 0;

	memset(p, 0, sizeof(*p));
	p->path = path;
	if (!f)
		die(EXIT_USAGE, "%s: %s", path, strerror(errno));
	while (getline(&line, &linecap, f) >= 0) {
		char *save = NULL, *tok;
		size_t n = 0;

		p->line++;
		char *hash = strchr(line, '#');
		if (hash)
			*hash = 0;
		tok = strtok_r(line, " \t\r\n", &save);
		if (!tok)
			continue;
		bool relative = *tok == '+';
		double t;
		if (!parse_double(tok + relative, &t))
			perf_fault(p, "expected a time in milliseconds, got '%s'", tok);
		if (relative)
			t += prev;
		else if (t < prev)
			perf_fault(p, "time %g is before the %g of the step before", t, prev);
		prev = p->line_ms = t;

		tok = strtok_r(NULL, " \t\r\n", &save);
		if (!tok)
			perf_fault(p, "expected MIDI bytes, 'vanish', 'reappear', 'mark' or 'await' after the time");
		if (!strcmp(tok, "mark") || !strcmp(tok, "await")) {
			bool mark = !strcmp(tok, "mark");
			char *file = strtok_r(NULL, " \t\r\n", &save);
			if (!file)
				perf_fault(p, "'%s' needs a file name", tok);
			if (strtok_r(NULL, " \t\r\n", &save))
				perf_fault(p, "nothing may follow '%s FILE'", tok);
			struct step *s = perf_add(p, mark ? STEP_MARK : STEP_AWAIT);
			size_t len = strlen(file) + 1;
			p->bytes = grow(p->bytes, &p->bytecap, p->nbytes + len, 1);
			memcpy(p->bytes + p->nbytes, file, len);
			p->nbytes += len;
			s->len = len;
			continue;
		}
		if (!strcmp(tok, "vanish") || !strcmp(tok, "reappear")) {
			bool vanish = !strcmp(tok, "vanish");
			if (strtok_r(NULL, " \t\r\n", &save))
				perf_fault(p, "nothing may follow '%s'", vanish ? "vanish" : "reappear");
			perf_add(p, vanish ? STEP_VANISH : STEP_REAPPEAR);
			if (!vanish)
				sp.running = 0; /* a new client starts without running status */
			continue;
		}
		for (; tok; tok = strtok_r(NULL, " \t\r\n", &save)) {
			size_t len = strlen(tok);
			if (len > 2 && len % 2)
				perf_fault(p, "'%s': hex bytes come in pairs of digits", tok);
			for (size_t i = 0; i < len; i += 2) {
				int hi = hexval(tok[i]), lo = len == 1 ? 0 : hexval(tok[i + 1]);
				if (len == 1) {
					lo = hi;
					hi = 0;
				}
				if (hi < 0 || lo < 0)
					perf_fault(p, "'%s' is not a hex byte", tok);
				if (n >= LINE_BYTES_MAX)
					perf_fault(p, "more than %d bytes on one line", LINE_BYTES_MAX);
				bytes = grow(bytes, &bytecap, n + 1, 1);
				bytes[n++] = (unsigned char)(hi << 4 | lo);
			}
		}
		size_t at;
		const char *why = split_line(&sp, bytes, n, &at, perf_emit, p);
		if (why && at >= n)
			perf_fault(p, "%s", why);
		if (why)
			perf_fault(p, "byte %zu: %s", at + 1, why);
	}
	if (ferror(f))
		die(EXIT_USAGE, "%s: read error: %s", path, strerror(errno));
	if (f != stdin)
		fclose(f);
	free(line);
	free(bytes);
	free(sp.msg);
}

static void print_bytes(FILE *f, const unsigned char *b, size_t n, size_t limit)
{
	for (size_t i = 0; i < n && i < limit; i++)
		fprintf(f, "%s%02X", i ? " " : "", b[i]);
	if (n > limit)
		fprintf(f, " ... (%zu bytes)", n);
}

/* ------------------------------------------------------------------------
 * Sequencer helpers.
 */

snd_seq_t *client_open(const char *name)
{
	snd_seq_t *seq;

	check(snd_seq_open(&seq, "default", SND_SEQ_OPEN_DUPLEX, 0), "cannot open the ALSA sequencer");
	check(snd_seq_set_client_name(seq, name), "cannot name the client");
	return seq;
}

/* A port; when tsqueue >= 0 every event it receives is stamped with that queue's real time. */
int port_create(snd_seq_t *seq, const char *name, unsigned caps, int tsqueue)
{
	snd_seq_port_info_t *pi;
	int port;

	check(snd_seq_port_info_malloc(&pi), "port info");
	snd_seq_port_info_set_name(pi, name);
	snd_seq_port_info_set_capability(pi, caps);
	snd_seq_port_info_set_type(pi, SND_SEQ_PORT_TYPE_MIDI_GENERIC | SND_SEQ_PORT_TYPE_APPLICATION);
	if (tsqueue >= 0) {
		snd_seq_port_info_set_timestamping(pi, 1);
		snd_seq_port_info_set_timestamp_real(pi, 1);
		snd_seq_port_info_set_timestamp_queue(pi, tsqueue);
	}
	check(snd_seq_create_port(seq, pi), "cannot create a port");
	port = snd_seq_port_info_get_port(pi);
	snd_seq_port_info_free(pi);
	return port;
}

int queue_start(snd_seq_t *seq)
{
	int q = snd_seq_alloc_named_queue(seq, "seqtool");

	check(q, "cannot allocate a queue");
	check(snd_seq_start_queue(seq, q, NULL), "cannot start the queue");
	check(snd_seq_drain_output(seq), "cannot start the queue");
	return q;
}

double queue_now_ms(snd_seq_t *seq, int q)
{
	snd_seq_queue_status_t *st;
	double ms;

	check(snd_seq_queue_status_malloc(&st), "queue status");
	check(snd_seq_get_queue_status(seq, q, st), "cannot read the queue time");
	ms = real_ms(snd_seq_queue_status_get_real_time(st));
	snd_seq_queue_status_free(st);
	return ms;
}

/* Calls fn for every port; stops when fn returns true. */
typedef bool port_fn(void *ctx, snd_seq_client_info_t *ci, const snd_seq_port_info_t *pi);

static void ports_each(snd_seq_t *seq, port_fn *fn, void *ctx)
{
	snd_seq_client_info_t *ci;
	snd_seq_port_info_t *pi;

	check(snd_seq_client_info_malloc(&ci), "client info");
	check(snd_seq_port_info_malloc(&pi), "port info");
	snd_seq_client_info_set_client(ci, -1);
	while (snd_seq_query_next_client(seq, ci) >= 0) {
		snd_seq_port_info_set_client(pi, snd_seq_client_info_get_client(ci));
		snd_seq_port_info_set_port(pi, -1);
		while (snd_seq_query_next_port(seq, pi) >= 0)
			if (fn(ctx, ci, pi))
				goto done;
	}
done:
	snd_seq_port_info_free(pi);
	snd_seq_client_info_free(ci);
}

struct port_search {
	const char *spec;
	int client, port;       /* numeric form, or -1 */
	bool by_client;         /* second pass: the client's name alone */
	bool found;
	snd_seq_addr_t addr;
};

static bool port_match(void *ctx, snd_seq_client_info_t *ci, const snd_seq_port_info_t *pi)
{
	struct port_search *s = ctx;
	const snd_seq_addr_t *a = snd_seq_port_info_get_addr(pi);
	const char *cn = snd_seq_client_info_get_name(ci);
	size_t cl = strlen(cn);

	if (s->client >= 0)
		s->found = a->client == s->client && a->port == s->port;
	else if (s->by_client)
		s->found = !strcmp(s->spec, cn);
	else
		s->found = !strncmp(s->spec, cn, cl) && s->spec[cl] == ':' &&
			   !strcmp(s->spec + cl + 1, snd_seq_port_info_get_name(pi));
	if (s->found)
		s->addr = *a;
	return s->found;
}

static bool port_find(snd_seq_t *seq, const char *spec, snd_seq_addr_t *addr)
{
	struct port_search s = { .spec = spec, .client = -1, .port = -1 };
	int c, p, used = 0;

	if (sscanf(spec, "%d:%d%n", &c, &p, &used) == 2 && !spec[used] && c >= 0 && p >= 0) {
		s.client = c;
		s.port = p;
	}
	ports_each(seq, port_match, &s);
	if (!s.found && s.client < 0) {
		s.by_client = true;
		ports_each(seq, port_match, &s);
	}
	if (s.found)
		*addr = s.addr;
	return s.found;
}

static bool port_print(void *ctx, snd_seq_client_info_t *ci, const snd_seq_port_info_t *pi)
{
	FILE *f = ctx;
	const snd_seq_addr_t *a = snd_seq_port_info_get_addr(pi);
	unsigned caps = snd_seq_port_info_get_capability(pi);

	fprintf(f, "%d:%d\t%s\t%s\t%s%s\n", a->client, a->port, snd_seq_client_info_get_name(ci),
		snd_seq_port_info_get_name(pi),
		(caps & SND_SEQ_PORT_CAP_READ) ? "R" : "-", (caps & SND_SEQ_PORT_CAP_WRITE) ? "W" : "-");
	return false;
}

/* Waits up to `seconds` for the port to exist; dies naming the ports there are. */
snd_seq_addr_t port_await(snd_seq_t *seq, const char *spec, double seconds)
{
	double deadline = now_ms() + seconds * 1e3;
	snd_seq_addr_t a;

	while (!port_find(seq, spec, &a)) {
		if (now_ms() >= deadline || stop_requested) {
			fprintf(stderr, "seqtool: no port '%s' (waited %g s); the ports are:\n", spec, seconds);
			ports_each(seq, port_print, stderr);
			exit(EXIT_FAIL);
		}
		pause_ms(20);
	}
	return a;
}

static bool port_has_subscriber(snd_seq_t *seq, int client, int port)
{
	snd_seq_query_subscribe_t *qs;
	snd_seq_addr_t root = { .client = (unsigned char)client, .port = (unsigned char)port };
	bool any;

	check(snd_seq_query_subscribe_malloc(&qs), "subscription query");
	snd_seq_query_subscribe_set_root(qs, &root);
	snd_seq_query_subscribe_set_type(qs, SND_SEQ_QUERY_SUBS_READ);
	snd_seq_query_subscribe_set_index(qs, 0);
	any = snd_seq_query_port_subscribers(seq, qs) >= 0;
	snd_seq_query_subscribe_free(qs);
	return any;
}

/* ------------------------------------------------------------------------
 * list, wait
 */

static int cmd_list(int argc, char **argv)
{
	snd_seq_t *seq;

	(void)argv;
	if (argc != 1)
		die(EXIT_USAGE, "usage: seqtool list");
	seq = client_open("seqtool");
	printf("# address\tclient\tport\tcaps (R: can be read from, W: can be written to)\n");
	ports_each(seq, port_print, stdout);
	snd_seq_close(seq);
	return 0;
}

static int cmd_wait(int argc, char **argv)
{
	const char *spec = NULL;
	double seconds = 5;
	bool gone = false;
	snd_seq_t *seq;
	snd_seq_addr_t a;

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--seconds") && i + 1 < argc)
			seconds = opt_double("--seconds", argv[++i]);
		else if (!strcmp(argv[i], "--gone"))
			gone = true;
		else if (argv[i][0] != '-' && !spec)
			spec = argv[i];
		else
			die(EXIT_USAGE, "usage: seqtool wait PORT [--seconds S] [--gone]");
	}
	if (!spec)
		die(EXIT_USAGE, "usage: seqtool wait PORT [--seconds S] [--gone]");
	seq = client_open("seqtool");
	if (!gone) {
		a = port_await(seq, spec, seconds);
		printf("%d:%d\n", a.client, a.port);
	} else {
		double deadline = now_ms() + seconds * 1e3;
		while (port_find(seq, spec, &a)) {
			if (now_ms() >= deadline)
				die(EXIT_FAIL, "port '%s' (%d:%d) still there after %g s", spec, a.client, a.port, seconds);
			pause_ms(20);
		}
	}
	snd_seq_close(seq);
	return 0;
}

/* ------------------------------------------------------------------------
 * play
 */

struct play_opts {
	const char *name, *port, *dest;
	double wait_s, subscriber_s;
	long chunk;
};

struct player {
	const struct play_opts *o;
	snd_seq_t *seq;
	snd_midi_event_t *coder;
	int port, queue;
	double queue_zero;      /* now_ms() at queue time 0 */
	double t0;              /* now_ms() at performance time 0 */
	unsigned long events;
};

static void player_open(struct player *p)
{
	const struct play_opts *o = p->o;

	p->seq = client_open(o->name);
	p->port = port_create(p->seq, o->port, SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ, -1);
	p->queue = queue_start(p->seq);
	p->queue_zero = now_ms() - queue_now_ms(p->seq, p->queue);
	check(snd_midi_event_new((size_t)o->chunk, &p->coder), "cannot create a MIDI coder");
	if (o->dest) {
		snd_seq_addr_t d = port_await(p->seq, o->dest, o->wait_s);
		check(snd_seq_connect_to(p->seq, p->port, d.client, d.port), "cannot connect to the destination");
	} else if (o->subscriber_s > 0) {
		double deadline = now_ms() + o->subscriber_s * 1e3;
		int me = snd_seq_client_id(p->seq);
		while (!port_has_subscriber(p->seq, me, p->port)) {
			if (now_ms() >= deadline || stop_requested)
				die(EXIT_FAIL, "nobody subscribed to %s:%s within %g s", o->name, o->port, o->subscriber_s);
			pause_ms(10);
		}
	}
}

/*
 * Waits until the kernel has delivered everything scheduled.  A signal ends
 * the wait (alsa-lib then returns poll's -1); what is left is dropped.
 */
static void player_sync(struct player *p)
{
	int err = snd_seq_drain_output(p->seq);

	if (err >= 0)
		err = snd_seq_sync_output_queue(p->seq);
	if (err < 0 && !stop_requested)
		check(err, "cannot wait for the kernel to deliver the events");
}

/* Closes the client once everything scheduled is delivered. */
static void player_close(struct player *p)
{
	player_sync(p);
	snd_midi_event_free(p->coder);
	snd_seq_close(p->seq);
	p->seq = NULL;
}

static void player_send(struct player *p, const struct step *s, const unsigned char *b)
{
	snd_seq_real_time_t when = ms_real(p->t0 + s->ms - p->queue_zero);
	snd_seq_event_t ev;

	snd_seq_ev_clear(&ev);
	for (size_t i = 0; i < s->len; i++) {
		int r = snd_midi_event_encode_byte(p->coder, b[i], &ev);
		check(r, "cannot encode MIDI bytes");
		if (r == 0)
			continue;
		/* The event may point into the coder's buffer: output it before the next byte. */
		snd_seq_ev_set_source(&ev, p->port);
		snd_seq_ev_set_subs(&ev);
		snd_seq_ev_schedule_real(&ev, p->queue, 0, &when);
		check(snd_seq_event_output(p->seq, &ev), "cannot send an event");
		p->events++;
		snd_seq_ev_clear(&ev);
	}
}

static int cmd_play(int argc, char **argv)
{
	struct play_opts o = { .name = "seqtool", .port = "out", .wait_s = 5, .chunk = DEFAULT_SYSEX_CHUNK };
	const char *args[2];
	int nargs = 0;
	const char *usage = "usage: seqtool play [--name CLIENT] [--port PORT] [--wait S] "
			    "[--await-subscriber S] [--chunk BYTES] DEST|- FILE";

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--name") && i + 1 < argc)
			o.name = argv[++i];
		else if (!strcmp(argv[i], "--port") && i + 1 < argc)
			o.port = argv[++i];
		else if (!strcmp(argv[i], "--wait") && i + 1 < argc)
			o.wait_s = opt_double("--wait", argv[++i]);
		else if (!strcmp(argv[i], "--await-subscriber") && i + 1 < argc)
			o.subscriber_s = opt_double("--await-subscriber", argv[++i]);
		else if (!strcmp(argv[i], "--chunk") && i + 1 < argc)
			o.chunk = opt_long("--chunk", argv[++i], 16, 65536);
		else if ((argv[i][0] != '-' || !strcmp(argv[i], "-")) && nargs < 2)
			args[nargs++] = argv[i];
		else
			die(EXIT_USAGE, "%s", usage);
	}
	if (nargs != 2)
		die(EXIT_USAGE, "%s", usage);
	o.dest = strcmp(args[0], "-") ? args[0] : NULL;

	struct perf perf;
	perf_load(&perf, args[1]);
	catch_signals();

	struct player p = { .o = &o };
	player_open(&p);
	/* Schedule even the first events ahead, so the kernel sends them on time
	 * instead of whenever our first, slowest pass through the loop ends. */
	p.t0 = now_ms() + PLAY_LEAD_MS;
	for (size_t i = 0; i < perf.count && !stop_requested; i++) {
		const struct step *s = &perf.steps[i];
		switch (s->kind) {
		case STEP_MIDI:
			if (!p.seq)
				die(EXIT_USAGE, "%s:%u: MIDI bytes after 'vanish' need a 'reappear' first", perf.path, s->line);
			/* Queue at most ~1 s ahead so the kernel's pool and a later vanish stay in step. */
			sleep_until_ms(p.t0 + s->ms - 1000);
			player_send(&p, s, perf.bytes + s->off);
			check(snd_seq_drain_output(p.seq), "cannot send");
			break;
		case STEP_VANISH:
			if (!p.seq)
				die(EXIT_USAGE, "%s:%u: 'vanish' while already gone", perf.path, s->line);
			player_sync(&p);
			sleep_until_ms(p.t0 + s->ms);
			player_close(&p);
			break;
		case STEP_REAPPEAR:
			if (p.seq)
				die(EXIT_USAGE, "%s:%u: 'reappear' without 'vanish' before it", perf.path, s->line);
			sleep_until_ms(p.t0 + s->ms);
			player_open(&p);
			break;
		case STEP_MARK: {
			const char *file = (const char *)perf.bytes + s->off;
			if (p.seq)
				player_sync(&p);
			sleep_until_ms(p.t0 + s->ms);
			FILE *f = fopen(file, "w");
			if (!f || fclose(f))
				die(EXIT_FAIL, "%s:%u: cannot create %s: %s", perf.path, s->line, file, strerror(errno));
			break;
		}
		case STEP_AWAIT: {
			const char *file = (const char *)perf.bytes + s->off;
			sleep_until_ms(p.t0 + s->ms);
			double deadline = now_ms() + AWAIT_SECONDS * 1e3;
			while (access(file, F_OK) != 0 && !stop_requested) {
				if (now_ms() >= deadline)
					die(EXIT_FAIL, "%s:%u: %s did not appear within %d s", perf.path, s->line, file,
					    AWAIT_SECONDS);
				pause_ms(10);
			}
			/* the clock stood still: later steps keep their distance from this one */
			double late = now_ms() - (p.t0 + s->ms);
			if (late > 0)
				p.t0 += late;
			break;
		}
		}
	}
	if (p.seq)
		player_close(&p);
	fprintf(stderr, "seqtool play: %lu events from %s%s\n", p.events, perf.path,
		stop_requested ? " (stopped by a signal)" : "");
	return 0;
}

/* ------------------------------------------------------------------------
 * record
 */

struct recorder {
	FILE *out;
	const char *path;
	snd_midi_event_t *coder;
	unsigned char *sysex;   /* a SysEx whose end has not arrived yet */
	size_t sysex_len, sysex_cap;
	double sysex_ms;
	unsigned long messages, events, chunks, sysexes, other, broken, overruns;
};

static void rec_line(struct recorder *r, double ms, const unsigned char *b, size_t n)
{
	fprintf(r->out, "%.3f", ms);
	for (size_t i = 0; i < n; i++)
		fprintf(r->out, " %02X", b[i]);
	fputc('\n', r->out);
	fflush(r->out);
	r->messages++;
}

static void rec_drop_sysex(struct recorder *r, const char *why)
{
	if (!r->sysex_len)
		return;
	fprintf(r->out, "# %.3f broken SysEx (%s): ", r->sysex_ms, why);
	print_bytes(r->out, r->sysex, r->sysex_len, 32);
	fputc('\n', r->out);
	r->broken++;
	r->sysex_len = 0;
}

static void rec_event(struct recorder *r, snd_seq_t *seq, int queue, const snd_seq_event_t *ev)
{
	double ms;
	unsigned char buf[64];

	if (ev->source.client == SND_SEQ_CLIENT_SYSTEM)
		return; /* (un)subscription and announce notices, not music */
	r->events++;
	if ((ev->flags & SND_SEQ_TIME_STAMP_MASK) == SND_SEQ_TIME_STAMP_REAL && ev->queue == queue)
		ms = real_ms(&ev->time.time);
	else
		ms = queue_now_ms(seq, queue);

	if (ev->type == SND_SEQ_EVENT_SYSEX) {
		const unsigned char *d = ev->data.ext.ptr;
		size_t n = ev->data.ext.len;
		r->chunks++;
		if (n && d[0] == 0xF0) {
			rec_drop_sysex(r, "a new SysEx began");
			r->sysex_ms = ms;
		} else if (!r->sysex_len) {
			r->sysex_ms = ms;
		}
		r->sysex = grow(r->sysex, &r->sysex_cap, r->sysex_len + n, 1);
		memcpy(r->sysex + r->sysex_len, d, n);
		r->sysex_len += n;
		if (n && d[n - 1] == 0xF7) {
			if (r->sysex[0] == 0xF0) {
				rec_line(r, r->sysex_ms, r->sysex, r->sysex_len);
				r->sysexes++;
				r->sysex_len = 0;
			} else {
				rec_drop_sysex(r, "no F0 at its start");
			}
		}
		return;
	}
	long n = snd_midi_event_decode(r->coder, buf, sizeof(buf), ev);
	if (n <= 0) {
		fprintf(r->out, "# %.3f event type %d from %d:%d is not a MIDI message\n", ms, ev->type,
			ev->source.client, ev->source.port);
		r->other++;
		return;
	}
	if (buf[0] < 0xF8)
		rec_drop_sysex(r, "cut by another message");
	rec_line(r, ms, buf, (size_t)n);
}

static int cmd_record(int argc, char **argv)
{
	const char *name = "seqtool", *portname = "in", *ready = NULL;
	const char *args[2];
	int nargs = 0;
	double seconds = 60, idle = 0, wait_s = 5;
	long count = 0;
	const char *usage = "usage: seqtool record [--name CLIENT] [--port PORT] [--wait S] [--seconds S] "
			    "[--idle S] [--count N] [--ready FILE] SRC|- FILE";

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--name") && i + 1 < argc)
			name = argv[++i];
		else if (!strcmp(argv[i], "--port") && i + 1 < argc)
			portname = argv[++i];
		else if (!strcmp(argv[i], "--wait") && i + 1 < argc)
			wait_s = opt_double("--wait", argv[++i]);
		else if (!strcmp(argv[i], "--seconds") && i + 1 < argc)
			seconds = opt_double("--seconds", argv[++i]);
		else if (!strcmp(argv[i], "--idle") && i + 1 < argc)
			idle = opt_double("--idle", argv[++i]);
		else if (!strcmp(argv[i], "--count") && i + 1 < argc)
			count = opt_long("--count", argv[++i], 1, 100000000);
		else if (!strcmp(argv[i], "--ready") && i + 1 < argc)
			ready = argv[++i];
		else if ((argv[i][0] != '-' || !strcmp(argv[i], "-")) && nargs < 2)
			args[nargs++] = argv[i];
		else
			die(EXIT_USAGE, "%s", usage);
	}
	if (nargs != 2)
		die(EXIT_USAGE, "%s", usage);

	struct recorder r = { .path = args[1] };
	r.out = strcmp(r.path, "-") ? fopen(r.path, "w") : stdout;
	if (!r.out)
		die(EXIT_FAIL, "%s: %s", r.path, strerror(errno));
	catch_signals();

	snd_seq_t *seq = client_open(name);
	int queue = queue_start(seq);
	/* Before the port exists: resizing the input pool empties it, and a
	 * program that connects to a port the moment it appears (latticed)
	 * may already have sent something. */
	check(snd_seq_set_client_pool_input(seq, 1000), "cannot enlarge the input pool");
	check(snd_seq_set_input_buffer_size(seq, 1 << 16), "cannot enlarge the input buffer");
	int port = port_create(seq, portname, SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE, queue);
	check(snd_midi_event_new(16, &r.coder), "cannot create a MIDI coder");
	snd_midi_event_no_status(r.coder, 1); /* every message with its status byte */
	if (strcmp(args[0], "-")) {
		snd_seq_addr_t src = port_await(seq, args[0], wait_s);
		check(snd_seq_connect_from(seq, port, src.client, src.port), "cannot subscribe to the source");
		fprintf(r.out, "# recording %s (%d:%d)\n", args[0], src.client, src.port);
	} else {
		fprintf(r.out, "# recording what is sent to %s:%s\n", name, portname);
	}
	fflush(r.out);
	if (ready) {
		FILE *f = fopen(ready, "w");
		if (!f)
			die(EXIT_FAIL, "%s: %s", ready, strerror(errno));
		fclose(f);
	}

	check(snd_seq_nonblock(seq, 1), "cannot set non-blocking mode");
	int nfds = snd_seq_poll_descriptors_count(seq, POLLIN);
	struct pollfd *fds = calloc((size_t)nfds, sizeof(*fds));
	if (!fds)
		die(EXIT_FAIL, "out of memory");
	snd_seq_poll_descriptors(seq, fds, (unsigned)nfds, POLLIN);
	double start = now_ms(), last = start;
	while (!stop_requested) {
		double t = now_ms();
		if (t - start >= seconds * 1e3)
			break;
		if (idle > 0 && r.events && t - last >= idle * 1e3)
			break;
		if (count && (long)r.messages >= count)
			break;
		if (poll(fds, (nfds_t)nfds, 20) <= 0)
			continue;
		for (;;) {
			snd_seq_event_t *ev;
			int err = snd_seq_event_input(seq, &ev);
			if (err == -EAGAIN)
				break;
			if (err == -ENOSPC) {
				fprintf(r.out, "# %.3f input overrun: events were lost\n", queue_now_ms(seq, queue));
				r.overruns++;
				continue;
			}
			check(err, "cannot read an event");
			rec_event(&r, seq, queue, ev);
			last = now_ms();
		}
	}
	rec_drop_sysex(&r, "recording ended before its F7");
	fprintf(stderr, "seqtool record: %lu messages (%lu SysEx in %lu chunks) from %lu events, "
		"%lu not MIDI, %lu broken SysEx, %lu overruns -> %s\n",
		r.messages, r.sysexes, r.chunks, r.events, r.other, r.broken, r.overruns, r.path);
	if (r.out != stdout)
		fclose(r.out);
	snd_midi_event_free(r.coder);
	snd_seq_close(seq);
	free(fds);
	free(r.sysex);
	return r.overruns || r.broken ? EXIT_FAIL : 0;
}

/* ------------------------------------------------------------------------
 * compare
 */

static void show_step(const char *label, const struct perf *p, const struct step *s, double t0)
{
	fprintf(stderr, "  %s %s:%u at %.3f ms: ", label, p->path, s->line, s->ms - t0);
	print_bytes(stderr, p->bytes + s->off, s->len, 24);
	fputc('\n', stderr);
}

static size_t midi_steps(const struct perf *p, const struct step ***out)
{
	const struct step **v = malloc((p->count + 1) * sizeof(*v));
	size_t n = 0;

	if (!v)
		die(EXIT_FAIL, "out of memory");
	for (size_t i = 0; i < p->count; i++)
		if (p->steps[i].kind == STEP_MIDI)
			v[n++] = &p->steps[i];
	*out = v;
	return n;
}

static int cmd_compare(int argc, char **argv)
{
	const char *args[2];
	int nargs = 0;
	double tolerance = -1;
	const char *usage = "usage: seqtool compare [--time-tolerance MS] EXPECTED ACTUAL";

	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--time-tolerance") && i + 1 < argc)
			tolerance = opt_double("--time-tolerance", argv[++i]);
		else if (argv[i][0] != '-' && nargs < 2)
			args[nargs++] = argv[i];
		else
			die(EXIT_USAGE, "%s", usage);
	}
	if (nargs != 2)
		die(EXIT_USAGE, "%s", usage);

	struct perf a, b;
	const struct step **va, **vb;
	perf_load(&a, args[0]);
	perf_load(&b, args[1]);
	size_t na = midi_steps(&a, &va), nb = midi_steps(&b, &vb);
	double a0 = na ? va[0]->ms : 0, b0 = nb ? vb[0]->ms : 0, worst = 0;
	size_t worst_at = 0;

	for (size_t i = 0; i < na && i < nb; i++) {
		const struct step *x = va[i], *y = vb[i];
		if (x->len != y->len || memcmp(a.bytes + x->off, b.bytes + y->off, x->len)) {
			fprintf(stderr, "seqtool compare: message %zu differs:\n", i + 1);
			show_step("expected", &a, x, a0);
			show_step("actual  ", &b, y, b0);
			return EXIT_FAIL;
		}
		double d = fabs((y->ms - b0) - (x->ms - a0));
		if (d > worst) {
			worst = d;
			worst_at = i + 1;
		}
		if (tolerance >= 0 && d > tolerance) {
			fprintf(stderr, "seqtool compare: message %zu is %.3f ms off its time (tolerance %g ms):\n",
				i + 1, d, tolerance);
			show_step("expected", &a, x, a0);
			show_step("actual  ", &b, y, b0);
			return EXIT_FAIL;
		}
	}
	if (na != nb) {
		fprintf(stderr, "seqtool compare: %zu messages expected, %zu recorded; the first %s one:\n", na, nb,
			na > nb ? "missing" : "extra");
		if (na > nb)
			show_step("expected", &a, va[nb], a0);
		else
			show_step("actual  ", &b, vb[na], b0);
		return EXIT_FAIL;
	}
	printf("seqtool compare: %zu messages match; largest time difference %.3f ms at message %zu "
	       "(times relative to the first message)\n", na, worst, worst_at);
	return 0;
}

/* ------------------------------------------------------------------------
 * latency
 *
 * One client with three ports: probe-out sends a probe (a Note On) direct to
 * its subscribers, which are our own probe-echo and the route under test
 * (TO); the route's output (FROM) is subscribed to probe-in.  Both receiving
 * ports are stamped by the kernel with the same queue, so
 *   path = stamp at probe-in - stamp at probe-echo
 * is the time through the route, free of our own scheduling, and
 *   read = queue time once our thread holds the event - stamp at probe-echo
 * adds the wake-up of a receiving program.  One probe is in flight at a time.
 * A filler thread (its own client) can send other messages into TO meanwhile.
 */

struct lat_opts {
	const char *to, *from;
	bool direct;
	long count;
	double interval_ms;
	long filler_rate;
	unsigned char probe[3], release[3], filler[3];
	const char *phases;
	double wait_s;
	double max_s;           /* a phase ends after this long, measured or not */
};

struct filler {
	const struct lat_opts *o;
	snd_seq_addr_t dest;
	atomic_bool stop;
	atomic_bool ready;
	unsigned long sent, refused;
	double seconds;
};

static void *filler_run(void *arg)
{
	struct filler *f = arg;
	snd_seq_t *seq = client_open("seqtool-filler");
	int port = port_create(seq, "out", SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ, -1);
	snd_midi_event_t *coder;
	snd_seq_event_t ev;
	double start, next, owed = 0;
	unsigned value = 0;

	check(snd_seq_connect_to(seq, port, f->dest.client, f->dest.port), "filler cannot connect");
	check(snd_midi_event_new(16, &coder), "cannot create a MIDI coder");
	atomic_store(&f->ready, true);
	start = next = now_ms();
	while (!atomic_load(&f->stop)) {
		/* Every millisecond, the events owed at the rate so far. */
		owed += f->o->filler_rate / 1000.0;
		for (; owed >= 1; owed -= 1) {
			unsigned char msg[3] = { f->o->filler[0], f->o->filler[1], (unsigned char)(value++ & 0x7F) };
			snd_seq_ev_clear(&ev);
			snd_midi_event_reset_encode(coder);
			if (snd_midi_event_encode(coder, msg, 3, &ev) <= 0 || ev.type == SND_SEQ_EVENT_NONE)
				die(EXIT_FAIL, "cannot encode the filler message");
			snd_seq_ev_set_source(&ev, port);
			snd_seq_ev_set_subs(&ev);
			snd_seq_ev_set_direct(&ev);
			/* -EAGAIN: the receiver's input pool is full, it has fallen
			 * behind; that is a result, not a failure of the tool */
			int err = snd_seq_event_output(seq, &ev);
			if (err == -EAGAIN) {
				f->refused++;
				continue;
			}
			check(err, "filler cannot send");
			f->sent++;
		}
		int err = snd_seq_drain_output(seq);
		if (err != -EAGAIN)
			check(err, "filler cannot send");
		next += 1;
		sleep_until_ms(next);
	}
	f->seconds = (now_ms() - start) / 1e3;
	snd_midi_event_free(coder);
	snd_seq_close(seq);
	return NULL;
}

int cmp_double(const void *a, const void *b)
{
	double x = *(const double *)a, y = *(const double *)b;
	return (x > y) - (x < y);
}

/* Nearest-rank percentile of a sorted array. */
double percentile(const double *v, size_t n, double pct)
{
	/* the epsilon keeps 99.9 % of 1000 at rank 999, not 1000 */
	size_t rank = (size_t)ceil(pct / 100.0 * (double)n - 1e-9);

	if (!n)
		return NAN;
	if (rank < 1)
		rank = 1;
	return v[rank - 1];
}

struct lat_client {
	snd_seq_t *seq;
	snd_midi_event_t *coder;
	int queue, out, echo, in;
	struct pollfd *fds;
	int nfds;
	unsigned long overruns;
};

static void lat_send(struct lat_client *c, const unsigned char msg[3])
{
	snd_seq_event_t ev;

	snd_seq_ev_clear(&ev);
	snd_midi_event_reset_encode(c->coder);
	if (snd_midi_event_encode(c->coder, msg, 3, &ev) <= 0 || ev.type == SND_SEQ_EVENT_NONE)
		die(EXIT_FAIL, "cannot encode %02X %02X %02X", msg[0], msg[1], msg[2]);
	snd_seq_ev_set_source(&ev, c->out);
	snd_seq_ev_set_subs(&ev);
	snd_seq_ev_set_direct(&ev);
	int err;
	while ((err = snd_seq_event_output_direct(c->seq, &ev)) == -EAGAIN)
		pause_ms(0.1);
	check(err, "cannot send a probe");
}

static bool is_probe(const snd_seq_event_t *ev)
{
	return ev->type == SND_SEQ_EVENT_NOTEON && ev->data.note.velocity > 0;
}

/*
 * Reads whatever is pending for up to `ms`; returns true once a probe came
 * back through the route (with *path and *read set), discarding the rest.
 */
static bool lat_collect(struct lat_client *c, double ms, double *sent, double *path, double *read)
{
	double deadline = now_ms() + ms;

	for (;;) {
		snd_seq_event_t *ev;
		int err = snd_seq_event_input(c->seq, &ev);
		if (err == -EAGAIN) {
			double left = deadline - now_ms();
			if (left <= 0)
				return false;
			poll(c->fds, (nfds_t)c->nfds, (int)ceil(left));
			continue;
		}
		if (err == -ENOSPC) {
			c->overruns++;
			continue;
		}
		check(err, "cannot read an event");
		if (ev->source.client == SND_SEQ_CLIENT_SYSTEM || !is_probe(ev))
			continue;
		double stamp = real_ms(&ev->time.time);
		if (ev->dest.port == c->echo) {
			*sent = stamp;
		} else if (ev->dest.port == c->in && *sent >= 0) {
			*path = stamp - *sent;
			*read = queue_now_ms(c->seq, c->queue) - *sent;
			return true;
		}
	}
}

static void lat_phase(struct lat_client *c, const struct lat_opts *o, snd_seq_addr_t filler_dest, bool loaded)
{
	double *path = malloc((size_t)o->count * sizeof(double));
	double *read = malloc((size_t)o->count * sizeof(double));
	struct filler f = { .o = o, .dest = filler_dest };
	pthread_t thread;
	size_t got = 0;
	long lost = 0;
	double dummy;

	if (!path || !read)
		die(EXIT_FAIL, "out of memory");
	if (loaded) {
		if (pthread_create(&thread, NULL, filler_run, &f))
			die(EXIT_FAIL, "cannot start the filler thread");
		while (!atomic_load(&f.ready))
			pause_ms(1);
		lat_collect(c, 200, &dummy, &dummy, &dummy); /* let the load settle */
	}
	c->overruns = 0;
	double next = now_ms();
	double give_up = next + o->max_s * 1e3;
	long tried = 0;
	for (long i = 0; i < o->count && !stop_requested && now_ms() < give_up; i++, tried++) {
		double sent = -1, p, r;
		while (now_ms() < next) {
			double unused = -1;
			lat_collect(c, next - now_ms(), &unused, &dummy, &dummy);
		}
		lat_send(c, o->probe);
		if (lat_collect(c, 1000, &sent, &p, &r)) {
			path[got] = p;
			read[got] = r;
			got++;
		} else {
			lost++;
		}
		lat_send(c, o->release);
		next += o->interval_ms;
	}
	if (loaded) {
		atomic_store(&f.stop, true);
		pthread_join(thread, NULL);
	}
	lat_collect(c, 50, &dummy, &dummy, &dummy);
	qsort(path, got, sizeof(double), cmp_double);
	qsort(read, got, sizeof(double), cmp_double);
	printf("%-7s %7zu %5ld %9.0f %11.4f %10.4f %8.3f %11.4f %10.4f %8.3f %8lu\n", loaded ? "loaded" : "idle",
	       got, lost, loaded && f.seconds > 0 ? f.sent / f.seconds : 0.0,
	       percentile(path, got, 50), percentile(path, got, 99.9), got ? path[got - 1] : NAN,
	       percentile(read, got, 50), percentile(read, got, 99.9), got ? read[got - 1] : NAN, c->overruns);
	if (f.refused)
		printf("# %s: the route refused %lu filler events (its receiver fell behind)\n",
		       loaded ? "loaded" : "idle", f.refused);
	if (tried < o->count && !stop_requested)
		printf("# %s: stopped after %g s with %ld of %ld probes sent\n", loaded ? "loaded" : "idle",
		       o->max_s, tried, o->count);
	fflush(stdout);
	free(path);
	free(read);
}

static void parse_msg3(const char *opt, const char *s, unsigned char out[3])
{
	unsigned v[3];
	int used = 0;

	if (sscanf(s, "%2x %2x %2x%n", &v[0], &v[1], &v[2], &used) != 3 || s[used] || v[0] < 0x80 || v[0] >= 0xF0 ||
	    v[1] > 0x7F || v[2] > 0x7F)
		die(EXIT_USAGE, "%s: expected a three-byte channel message in hex like \"90 3C 64\", got '%s'", opt, s);
	for (int i = 0; i < 3; i++)
		out[i] = (unsigned char)v[i];
}

static int cmd_latency(int argc, char **argv)
{
	struct lat_opts o = { .count = 2000, .interval_ms = 2, .filler_rate = 10000, .phases = "both", .wait_s = 5,
			      .max_s = -1 };
	const char *args[2];
	int nargs = 0;
	const char *usage = "usage: seqtool latency [--count N] [--interval MS] [--filler-rate N] [--phases idle|loaded|both]\n"
			    "       [--probe HEX3] [--release HEX3] [--filler HEX3] [--wait S] [--max-seconds S]\n"
			    "       TO FROM | --direct";

	parse_msg3("--probe", "90 3C 64", o.probe);
	parse_msg3("--release", "80 3C 40", o.release);
	parse_msg3("--filler", "B0 01 00", o.filler);
	for (int i = 1; i < argc; i++) {
		if (!strcmp(argv[i], "--count") && i + 1 < argc)
			o.count = opt_long("--count", argv[++i], 1, 10000000);
		else if (!strcmp(argv[i], "--interval") && i + 1 < argc)
			o.interval_ms = opt_double("--interval", argv[++i]);
		else if (!strcmp(argv[i], "--filler-rate") && i + 1 < argc)
			o.filler_rate = opt_long("--filler-rate", argv[++i], 0, 1000000);
		else if (!strcmp(argv[i], "--phases") && i + 1 < argc)
			o.phases = argv[++i];
		else if (!strcmp(argv[i], "--probe") && i + 1 < argc)
			parse_msg3("--probe", argv[++i], o.probe);
		else if (!strcmp(argv[i], "--release") && i + 1 < argc)
			parse_msg3("--release", argv[++i], o.release);
		else if (!strcmp(argv[i], "--filler") && i + 1 < argc)
			parse_msg3("--filler", argv[++i], o.filler);
		else if (!strcmp(argv[i], "--wait") && i + 1 < argc)
			o.wait_s = opt_double("--wait", argv[++i]);
		else if (!strcmp(argv[i], "--max-seconds") && i + 1 < argc)
			o.max_s = opt_double("--max-seconds", argv[++i]);
		else if (!strcmp(argv[i], "--direct"))
			o.direct = true;
		else if (argv[i][0] != '-' && nargs < 2)
			args[nargs++] = argv[i];
		else
			die(EXIT_USAGE, "%s", usage);
	}
	if (o.direct ? nargs != 0 : nargs != 2)
		die(EXIT_USAGE, "%s", usage);
	/* A route that cannot keep up loses probes, each waited for 1 s: the
	 * phase still ends, by default after five times its planned length. */
	if (o.max_s <= 0)
		o.max_s = fmax(10, 5 * o.count * o.interval_ms / 1e3);
	if ((o.probe[0] & 0xF0) != 0x90 || o.probe[2] == 0)
		die(EXIT_USAGE, "--probe must be a Note On with a velocity above 0");
	if ((o.filler[0] & 0xF0) == 0x90)
		die(EXIT_USAGE, "--filler must not be a Note On (Note Ons are the probes)");
	bool idle = !strcmp(o.phases, "idle") || !strcmp(o.phases, "both");
	bool loaded = !strcmp(o.phases, "loaded") || !strcmp(o.phases, "both");
	if (!idle && !loaded)
		die(EXIT_USAGE, "--phases: expected idle, loaded or both, got '%s'", o.phases);
	if (loaded && !o.filler_rate)
		loaded = false;
	catch_signals();

	struct lat_client c = { 0 };
	c.seq = client_open("seqtool-latency");
	c.queue = queue_start(c.seq);
	c.out = port_create(c.seq, "probe-out", SND_SEQ_PORT_CAP_READ | SND_SEQ_PORT_CAP_SUBS_READ, -1);
	c.echo = port_create(c.seq, "probe-echo", SND_SEQ_PORT_CAP_WRITE, c.queue);
	c.in = port_create(c.seq, "probe-in", SND_SEQ_PORT_CAP_WRITE | SND_SEQ_PORT_CAP_SUBS_WRITE, c.queue);
	check(snd_seq_set_client_pool_input(c.seq, 1000), "cannot enlarge the input pool");
	check(snd_seq_set_input_buffer_size(c.seq, 1 << 16), "cannot enlarge the input buffer");
	check(snd_midi_event_new(16, &c.coder), "cannot create a MIDI coder");
	int me = snd_seq_client_id(c.seq);
	check(snd_seq_connect_to(c.seq, c.out, me, c.echo), "cannot connect the echo port");
	snd_seq_addr_t filler_dest = { .client = (unsigned char)me, .port = (unsigned char)c.in };
	if (o.direct) {
		check(snd_seq_connect_to(c.seq, c.out, me, c.in), "cannot connect the ports");
	} else {
		snd_seq_addr_t to = port_await(c.seq, args[0], o.wait_s);
		snd_seq_addr_t from = port_await(c.seq, args[1], o.wait_s);
		check(snd_seq_connect_to(c.seq, c.out, to.client, to.port), "cannot connect to TO");
		check(snd_seq_connect_from(c.seq, c.in, from.client, from.port), "cannot subscribe to FROM");
		filler_dest = to;
	}
	check(snd_seq_nonblock(c.seq, 1), "cannot set non-blocking mode");
	c.nfds = snd_seq_poll_descriptors_count(c.seq, POLLIN);
	c.fds = calloc((size_t)c.nfds, sizeof(*c.fds));
	if (!c.fds)
		die(EXIT_FAIL, "out of memory");
	snd_seq_poll_descriptors(c.seq, c.fds, (unsigned)c.nfds, POLLIN);

	printf("# latency %s, %ld probes %02X %02X %02X every %g ms; filler %02X %02X xx at %ld/s\n",
	       o.direct ? "of a direct subscription" : "through the route", o.count, o.probe[0], o.probe[1],
	       o.probe[2], o.interval_ms, o.filler[0], o.filler[1], o.filler_rate);
	if (!o.direct)
		printf("# route: %s -> ... -> %s\n", args[0], args[1]);
	printf("# path: kernel stamp at arrival minus kernel stamp at sending; read: until our thread holds it\n");
	printf("# percentiles by nearest rank; all times in ms\n");
	printf("%-7s %7s %5s %9s %11s %10s %8s %11s %10s %8s %8s\n", "phase", "probes", "lost", "filler/s",
	       "path-median", "path-p99.9", "path-max", "read-median", "read-p99.9", "read-max", "overruns");
	if (idle)
		lat_phase(&c, &o, filler_dest, false);
	if (loaded)
		lat_phase(&c, &o, filler_dest, true);
	snd_midi_event_free(c.coder);
	snd_seq_close(c.seq);
	free(c.fds);
	return 0;
}

/* ------------------------------------------------------------------------ */

int main(int argc, char **argv)
{
	static const struct {
		const char *name;
		int (*run)(int argc, char **argv);
	} commands[] = {
		{ "list", cmd_list },       { "wait", cmd_wait },       { "play", cmd_play },
		{ "record", cmd_record },   { "compare", cmd_compare }, { "latency", cmd_latency },
		{ "forward", cmd_forward }, { "stream", cmd_stream },
	};

	setvbuf(stdout, NULL, _IOLBF, 0);
	if (argc >= 2)
		for (size_t i = 0; i < sizeof(commands) / sizeof(commands[0]); i++)
			if (!strcmp(argv[1], commands[i].name))
				return commands[i].run(argc - 1, argv + 1);
	fprintf(stderr, "usage: seqtool list | wait | play | record | compare | latency | forward | stream\n"
			"(see the top of seqtool.c and seqtool_bench.c)\n");
	return EXIT_USAGE;
}
