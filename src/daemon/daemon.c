/*
 * daemon: the main thread of `latticed run`.
 *
 * Start-up, in order (teardown is the reverse): config and tunings,
 * backend choice, the queues and eventfds, the engines, the backend's
 * ports, the control socket, where the state file says to resume
 * (daemon_state.c), memory locking, then the two MIDI threads
 * (signals blocked in them) at real-time priority, and READY=1.  Each
 * output's synth set-up goes out when the backend reports it connected
 * (the first service_input reports what open() connected), so a synth
 * gets it once per connection.  Any failure before the threads start is one line naming what
 * and how to fix it, and exit status 1.
 *
 * The loop sleeps in ppoll() on its eventfd (the MIDI threads write it
 * after posting log lines or replies) and the control socket, with
 * SIGTERM, SIGINT, SIGHUP and SIGUSR1 unblocked only inside ppoll, so a
 * signal is never missed between a check of the flags and the sleep.  The
 * handlers only set flags.  SIGUSR1 is the panic nothing can lock out (the
 * control socket can be busy): it is posted like `latticed panic`, and
 * posted again on the next turn if the request queue was full.  After the first SIGINT or SIGTERM the default action is
 * restored for SIGINT, so a second one ends the process at once even if
 * the orderly stop hangs.
 *
 * Reloads are in daemon_reload.c, control requests and the input
 * thread's replies in daemon_requests.c; the state they share is struct
 * daemon (daemon_private.h).
 */
/* ppoll(2), Linux: the race-free sleep with signals open only while asleep */
#define _GNU_SOURCE
#include "daemon_private.h"

#include <errno.h>
#include <poll.h>
#include <pthread.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/eventfd.h>
#include <time.h>
#include <unistd.h>

#include "clock.h"
#include "config.h"
#include "control_commands.h"
#include "control_path.h"
#include "control_server.h"
#include "input_thread.h"
#include "log_ring.h"
#include "msg_queue.h"
#include "notify.h"
#include "output_thread.h"
#include "realtime.h"
#include "snapshot.h"
#include "tuning.h"

#define THREAD_STACK (512 * 1024)
#define MAIN_POLL_MAX (CONTROL_CLIENTS_MAX + 2)
#define DEFAULT_HEARTBEAT_MS 1000

static volatile sig_atomic_t quit_requested;
static volatile sig_atomic_t reload_requested;
static volatile sig_atomic_t panic_requested;

static void on_signal(int sig)
{
	if (sig == SIGHUP)
		reload_requested = 1;
	else if (sig == SIGUSR1)
		panic_requested = 1;
	else
		quit_requested = sig;
}

void daemon_print_report_lines(const struct config_report *r, enum log_level errors)
{
	const char *p = r->text, *end = r->text + r->length;
	while (p < end) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		if (!nl)
			nl = end;
		bool warning = strstr(p, ": warning: ") && strstr(p, ": warning: ") < nl;
		log_print(warning ? LOG_LEVEL_WARNING : errors, "%.*s", (int)(nl - p), p);
		p = nl + 1;
	}
}


static const struct midi_io_backend *choose_backend(const char *name, char *err, size_t err_size)
{
	if (strcmp(name, "auto") == 0) {
		static const char *const order[] = {"alsa", "portmidi", "null"};
		for (size_t i = 0; i < sizeof order / sizeof order[0]; i++) {
			const struct midi_io_backend *b = midi_io_find(order[i]);
			if (b)
				return b;
		}
	}
	const struct midi_io_backend *b = midi_io_find(name);
	if (!b)
		snprintf(err, err_size, "backend '%s' is not in this build, expected one of: %s",
			 name, midi_io_available());
	return b;
}

/* ---- watchdog --------------------------------------------------------------- */

static void watchdog_tick(struct daemon *d)
{
	if (!d->watchdog_usec)
		return;
	int64_t now = monotonic_ms();
	if (now - d->last_ping_ms < (int64_t)(d->watchdog_usec / 4000))
		return;
	uint64_t beat = atomic_load_explicit(&d->in->heartbeat, memory_order_relaxed);
	if (beat == d->last_heartbeat) {
		/* the MIDI thread is stuck: let systemd see it and restart us */
		if (!d->stall_logged)
			log_print(LOG_LEVEL_ERROR, "the MIDI input thread has not run for %lld ms; no watchdog ping",
				  (long long)(now - d->last_ping_ms));
		d->stall_logged = true;
		return;
	}
	d->last_heartbeat = beat;
	d->last_ping_ms = now;
	d->stall_logged = false;
	notify_watchdog();
}

/* ---- start-up and teardown ------------------------------------------------- */

static bool load_startup_config(struct daemon *d, struct config *cfg)
{
	const struct daemon_options *o = d->options;
	struct config_report *report = malloc(sizeof *report);
	if (!report)
		return false;
	const char *path;
	bool ok = config_load_or_defaults(o->config_path, o->default_config_path, cfg, report, &path);
	if (path)
		snprintf(d->config_path, sizeof d->config_path, "%s", path);
	else
		log_print(LOG_LEVEL_NOTICE, "no config at %s; using the built-in defaults",
			  o->default_config_path);
	daemon_print_report_lines(report, LOG_LEVEL_ERROR);
	free(report);
	return ok;
}

static bool build_startup_tunings(struct daemon *d)
{
	struct config_report *report = malloc(sizeof *report);
	d->tunings = malloc(sizeof *d->tunings);
	if (!report || !d->tunings) {
		free(report);
		return false;
	}
	bool ok = tuning_set_build(d->cfg, d->tunings, report);
	daemon_print_report_lines(report, LOG_LEVEL_ERROR);
	free(report);
	if (!ok) {
		free(d->tunings);
		d->tunings = NULL;
	}
	return ok;
}

static int make_eventfd(void)
{
	return eventfd(0, EFD_NONBLOCK | EFD_CLOEXEC);
}

static bool start_threads(struct daemon *d)
{
	pthread_attr_t attr;
	pthread_attr_init(&attr);
	pthread_attr_setstacksize(&attr, THREAD_STACK);
	int rc = pthread_create(&d->out->thread, &attr, output_thread_run, d->out);
	if (rc == 0) {
		rc = pthread_create(&d->in->thread, &attr, input_thread_run, d->in);
		if (rc != 0) {
			output_thread_stop(d->out);
			pthread_join(d->out->thread, NULL);
		}
	}
	pthread_attr_destroy(&attr);
	if (rc != 0) {
		log_print(LOG_LEVEL_ERROR, "cannot start the MIDI threads: %s", strerror(rc));
		return false;
	}
	d->threads_running = true;
	if (d->cfg->daemon.realtime_priority > 0) {
		pthread_t threads[2] = {d->in->thread, d->out->thread};
		if (realtime_promote(threads, 2, d->cfg->daemon.realtime_priority))
			log_print(LOG_LEVEL_INFO, "MIDI threads at real-time priority %d (SCHED_FIFO)",
				  d->cfg->daemon.realtime_priority);
	}
	return true;
}

static void stop_threads(struct daemon *d)
{
	if (!d->threads_running)
		return;
	struct request quit = {.kind = REQUEST_QUIT, .id = -1};
	const struct timespec pause = {0, 1000000};
	while (!input_thread_post(d->in, &quit)) {
		daemon_handle_replies(d);
		nanosleep(&pause, NULL);
	}
	pthread_join(d->in->thread, NULL);
	output_thread_stop(d->out);
	pthread_join(d->out->thread, NULL);
	d->threads_running = false;
	daemon_drain_logs(d);
	daemon_handle_replies(d);
	/* replies the thread could not queue are ours now that it has gone */
	for (int i = 0; i < d->in->outbox_count; i++) {
		struct reply *rep = &d->in->outbox[i];
		if (rep->kind == REPLY_RETIRED_TUNINGS) {
			tuning_set_free(rep->tunings);
			free(rep->tunings);
		} else if (rep->kind == REPLY_SNAPSHOT) {
			free(rep->snapshot);
		}
	}
	d->in->outbox_count = 0;
}

static void install_signals(struct daemon *d)
{
	struct sigaction sa;
	memset(&sa, 0, sizeof sa);
	sa.sa_handler = on_signal;
	sigemptyset(&sa.sa_mask);
	sigaction(SIGTERM, &sa, NULL);
	sigaction(SIGINT, &sa, NULL);
	sigaction(SIGHUP, &sa, NULL);
	sigaction(SIGUSR1, &sa, NULL);
	struct sigaction ignore;
	memset(&ignore, 0, sizeof ignore);
	ignore.sa_handler = SIG_IGN;
	sigaction(SIGPIPE, &ignore, NULL); /* a reader leaving a FIFO or socket is an error code */
	sigset_t block;
	sigemptyset(&block);
	sigaddset(&block, SIGTERM);
	sigaddset(&block, SIGINT);
	sigaddset(&block, SIGHUP);
	sigaddset(&block, SIGUSR1);
	/* blocked everywhere (the MIDI threads inherit it), open only inside ppoll */
	pthread_sigmask(SIG_BLOCK, &block, &d->run_mask);
	sigdelset(&d->run_mask, SIGTERM);
	sigdelset(&d->run_mask, SIGINT);
	sigdelset(&d->run_mask, SIGHUP);
	sigdelset(&d->run_mask, SIGUSR1);
}

/* SIGUSR1: every note off on every output, as `latticed panic` does. */
static void signal_panic(struct daemon *d)
{
	if (panic_requested) {
		panic_requested = 0;
		d->panic_pending = true;
		log_print(LOG_LEVEL_NOTICE, "SIGUSR1: ending every note on every output");
	}
	struct request r = {.kind = REQUEST_PANIC, .id = -1, .number = -1};
	if (d->panic_pending && input_thread_post(d->in, &r))
		d->panic_pending = false;
}

static void main_loop(struct daemon *d)
{
	struct pollfd fds[MAIN_POLL_MAX];
	while (!quit_requested) {
		fds[0] = (struct pollfd){.fd = d->main_wake_fd, .events = POLLIN};
		int n = 1 + control_server_pollfds(&d->control, fds + 1, MAIN_POLL_MAX - 1, monotonic_ms());
		int timeout_ms = DEFAULT_HEARTBEAT_MS;
		if (d->watchdog_usec && (int)(d->watchdog_usec / 4000) < timeout_ms)
			timeout_ms = (int)(d->watchdog_usec / 4000);
		int control_ms = control_server_timeout_ms(&d->control, monotonic_ms());
		if (control_ms >= 0 && control_ms < timeout_ms)
			timeout_ms = control_ms;
		int state_ms = daemon_state_timeout_ms(d);
		if (state_ms >= 0 && state_ms < timeout_ms)
			timeout_ms = state_ms;
		int events_ms = subscription_timeout_ms(d, monotonic_ms());
		if (events_ms >= 0 && events_ms < timeout_ms)
			timeout_ms = events_ms;
		if (d->panic_pending)
			timeout_ms = 1; /* the request queue was full: try again soon */
		struct timespec timeout = {timeout_ms / 1000, (long)(timeout_ms % 1000) * 1000000L};
		int ready = ppoll(fds, (nfds_t)n, &timeout, &d->run_mask);
		if (ready > 0 && (fds[0].revents & POLLIN))
			wake_fd_clear(d->main_wake_fd);
		signal_panic(d);
		daemon_drain_logs(d);
		daemon_handle_replies(d);
		subscription_service(d);
		/* every turn, polled or not: it also writes the replies just queued and closes idle clients */
		control_server_service(&d->control, fds + 1, n - 1, daemon_on_request, d, monotonic_ms());
		if (reload_requested) {
			reload_requested = 0;
			log_print(LOG_LEVEL_INFO, "SIGHUP: reloading");
			daemon_start_reload(d, -1);
		}
		daemon_state_save(d, false);
		watchdog_tick(d);
	}
}

/* The queues, eventfds and both threads' state, wired to each other. */
static bool set_up_plumbing(struct daemon *d, char *err, size_t err_size)
{
	d->messages = malloc(sizeof *d->messages);
	d->in = calloc(1, sizeof *d->in);
	d->out = calloc(1, sizeof *d->out);
	d->subs = malloc(sizeof *d->subs);
	d->main_wake_fd = make_eventfd();
	if (d->subs && !subscription_init(d->subs, d->cfg)) {
		subscription_free(d->subs);
		free(d->subs);
		d->subs = NULL;
	}
	if (!d->messages || !d->in || !d->out || !d->subs || d->main_wake_fd < 0) {
		snprintf(err, err_size, "cannot set up: %s", strerror(errno ? errno : ENOMEM));
		return false;
	}
	msg_queue_init(d->messages);
	output_thread_init(d->out);
	d->in->wake_fd = make_eventfd();
	d->out->wake_fd = make_eventfd();
	if (d->in->wake_fd < 0 || d->out->wake_fd < 0) {
		snprintf(err, err_size, "cannot make eventfds: %s", strerror(errno));
		return false;
	}
	if (!input_thread_init(d->in, d->cfg, d->tunings, err, err_size))
		return false;
	d->watchdog_usec = notify_watchdog_usec();
	d->in->heartbeat_ms = DEFAULT_HEARTBEAT_MS;
	/* pings go every quarter period, each needing a fresh heartbeat: beat twice as often */
	if (d->watchdog_usec && d->watchdog_usec / 8000 < (uint64_t)d->in->heartbeat_ms)
		d->in->heartbeat_ms = (int)(d->watchdog_usec / 8000) > 0 ? (int)(d->watchdog_usec / 8000) : 1;
	d->in->messages = d->messages;
	d->in->events = &d->subs->ring;
	d->in->output = d->out;
	d->in->output_wake_fd = d->out->wake_fd;
	d->in->main_wake_fd = d->main_wake_fd;
	d->out->messages = d->messages;
	d->out->main_wake_fd = d->main_wake_fd;
	d->out->input_wake_fd = d->in->wake_fd;
	d->out->output_count = d->cfg->output_count;
	for (int i = 0; i < d->cfg->output_count; i++) {
		snprintf(d->out->names[i], sizeof d->out->names[i], "%s", d->cfg->outputs[i].name);
		d->out->running_status[i] = d->cfg->outputs[i].running_status && d->backend->byte_stream;
	}
	return true;
}

/* Opens the backend's ports with the input thread's callbacks. */
static bool open_ports(struct daemon *d, char *err, size_t err_size)
{
	struct midi_io_spec spec;
	config_io_spec(d->cfg, &spec);
	struct midi_io_callbacks callbacks = input_thread_callbacks(d->in);
	d->io = d->backend->open(&spec, &callbacks, err, err_size);
	if (!d->io) {
		if (!err[0])
			snprintf(err, err_size, "the MIDI backend did not open");
		return false;
	}
	d->in->backend = d->out->backend = d->backend;
	d->in->io = d->out->io = d->io;
	return true;
}

static bool open_control(struct daemon *d, char *err, size_t err_size)
{
	char path[CONTROL_PATH_MAX];
	return !control_path_for_daemon(d->cfg->daemon.control_socket, path, sizeof path) ||
	       control_server_open(&d->control, path, err, err_size);
}

static void announce_running(struct daemon *d)
{
	char ports[256] = "";
	for (int i = 0; i < d->cfg->output_count; i++) {
		size_t used = strlen(ports);
		snprintf(ports + used, sizeof ports - used, "%s%s", i ? ", " : "", d->cfg->outputs[i].name);
	}
	log_print(LOG_LEVEL_NOTICE, "running: backend %s, config %s, outputs %s, control %s",
		  d->backend->name, d->config_path[0] ? d->config_path : "(built-in defaults)", ports,
		  d->control.listen_fd >= 0 ? d->control.path : "none");
	notify_ready();
	notify_status("Running: backend %s, outputs %s, %s", d->backend->name, ports, d->state);
}

/* The orderly stop; a second SIGINT from now on ends the process at once. */
static void stop_after_signal(struct daemon *d)
{
	struct sigaction dfl;
	memset(&dfl, 0, sizeof dfl);
	dfl.sa_handler = SIG_DFL;
	sigaction(SIGINT, &dfl, NULL);
	sigset_t intr;
	sigemptyset(&intr);
	sigaddset(&intr, SIGINT);
	pthread_sigmask(SIG_UNBLOCK, &intr, NULL);
	notify_stopping();
	log_print(LOG_LEVEL_NOTICE, "%s: ending every note and stopping",
		  quit_requested == SIGINT ? "SIGINT" : "SIGTERM");
	subscription_shutdown(d);
	stop_threads(d);
	daemon_state_save(d, true);
	log_print(LOG_LEVEL_NOTICE, "stopped");
}

/* Frees what set_up_plumbing made; the current tunings are ours again. */
static void free_plumbing(struct daemon *d)
{
	if (d->in && d->in->wake_fd > 0)
		close(d->in->wake_fd);
	if (d->out && d->out->wake_fd > 0)
		close(d->out->wake_fd);
	if (d->main_wake_fd >= 0)
		close(d->main_wake_fd);
	free(d->messages);
	/* the input thread gave back every retired set */
	if (d->in && d->in->tunings)
		d->tunings = d->in->tunings;
	free(d->in);
	free(d->out);
	if (d->subs)
		subscription_free(d->subs);
	free(d->subs);
}

int daemon_run(const struct daemon_options *options)
{
	struct daemon d;
	memset(&d, 0, sizeof d);
	d.options = options;
	d.main_wake_fd = -1;
	d.reload_client = -1;
	d.started_ms = monotonic_ms();
	control_server_init(&d.control);
	log_setup();
	int status = 1;
	char err[512] = "";

	d.cfg = malloc(sizeof *d.cfg);
	if (!d.cfg || !load_startup_config(&d, d.cfg) || !build_startup_tunings(&d))
		goto out_config;
	const char *backend_name = options->backend ? options->backend : d.cfg->daemon.backend;
	d.backend = choose_backend(backend_name, err, sizeof err);
	if (!d.backend || !set_up_plumbing(&d, err, sizeof err)) {
		log_print(LOG_LEVEL_ERROR, "%s", err);
		goto out_plumbing;
	}
	if (!open_ports(&d, err, sizeof err)) {
		log_print(LOG_LEVEL_ERROR, "%s", err);
		goto out_plumbing;
	}
	if (!open_control(&d, err, sizeof err)) {
		log_print(LOG_LEVEL_ERROR, "%s", err);
		goto out_backend;
	}
	daemon_state_resume(&d); /* the engines are made, nothing has been sent */
	if (d.cfg->daemon.lock_memory)
		realtime_lock_memory();
	install_signals(&d);
	if (!start_threads(&d))
		goto out_control;
	daemon_drain_logs(&d);
	announce_running(&d);
	main_loop(&d);
	stop_after_signal(&d);
	status = 0;

out_control:
	control_server_close(&d.control);
out_backend:
	if (d.threads_running)
		stop_threads(&d);
	d.backend->close(d.io);
out_plumbing:
	free_plumbing(&d);
	if (d.tunings) {
		tuning_set_free(d.tunings);
		free(d.tunings);
	}
out_config:
	free(d.cfg);
	return status;
}

static void print_line(void *context, const char *line)
{
	(void)context;
	printf("%s\n", line);
}

int daemon_list_ports(const struct daemon_options *options)
{
	struct daemon d;
	memset(&d, 0, sizeof d);
	d.options = options;
	char err[512] = "";
	const char *name = options->backend;
	struct config *cfg = NULL;
	if (!name) {
		cfg = malloc(sizeof *cfg);
		if (!cfg || !load_startup_config(&d, cfg)) {
			free(cfg);
			return 1;
		}
		name = cfg->daemon.backend;
	}
	const struct midi_io_backend *b = choose_backend(name, err, sizeof err);
	int status = 1;
	if (!b) {
		fprintf(stderr, "latticed: %s\n", err);
	} else if (!b->list(print_line, NULL, err, sizeof err)) {
		fprintf(stderr, "latticed: %s\n", err);
	} else {
		status = fflush(stdout) == 0 ? 0 : 1;
	}
	free(cfg);
	return status;
}
