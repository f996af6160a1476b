/*
 * daemon_private: the main thread's state, shared by the files of
 * `latticed run`'s main thread (daemon.c: start-up, the loop, teardown;
 * daemon_reload.c: reloads; daemon_requests.c: control requests and the
 * input thread's replies; subscription.c: subscribers).  One owner: the main thread.
 */
#ifndef LATTICED_DAEMON_PRIVATE_H
#define LATTICED_DAEMON_PRIVATE_H

#include <json-c/json.h>
#include <signal.h>
#include <stdbool.h>
#include <stdint.h>

#include "config.h"
#include "control_server.h"
#include "daemon.h"
#include "input_thread.h"
#include "log_ring.h"
#include "output_thread.h"
#include "request.h"
#include "state_file.h"
#include "subscription.h"

struct daemon {
	const struct daemon_options *options;
	char config_path[CONFIG_PATH_MAX];   /* empty: built-in defaults */
	struct config *cfg;                  /* as started: ports and engines */
	struct tuning_set *tunings;          /* current, owned by the input thread while it runs */
	const struct midi_io_backend *backend;
	struct midi_io *io;
	struct msg_queue *messages;
	struct input_thread *in;
	struct output_thread *out;
	struct control_server control;
	struct subscription *subs;           /* subscribers' picture and event ring */
	int main_wake_fd;
	bool threads_running;
	int64_t started_ms;
	uint64_t watchdog_usec;
	uint64_t last_heartbeat;
	int64_t last_ping_ms;
	bool stall_logged;
	bool reload_in_flight;
	bool panic_pending;                  /* SIGUSR1 not yet taken by the input thread */
	int reload_client;                   /* -1: SIGHUP */
	char reload_notes[512];              /* what needs a restart */
	char state[REPLY_TEXT_MAX];          /* current preset and root */
	sigset_t run_mask;                   /* signals unblocked inside ppoll */
	/* the state file (daemon_state.c) */
	char state_path[CONFIG_PATH_MAX];    /* empty: none is kept */
	bool state_make_parents;
	char state_config[CONFIG_PATH_MAX];  /* the config a state belongs to */
	struct state state_next, state_written;
	bool state_dirty, state_error_logged;
	int64_t state_written_ms;
};

/* Logs a config report line by line; warnings as warnings, the rest at `errors`. */
void daemon_print_report_lines(const struct config_report *r, enum log_level errors);

/* Replies to control client `id` (-1: nobody asked); takes o. */
void daemon_reply_json(struct daemon *d, int id, struct json_object *o);
void daemon_reply_simple(struct daemon *d, int id, bool ok, const char *text);

/* A control request line from client id (control_request_fn). */
void daemon_on_request(void *context, int id, const char *line);
/* Everything the input thread has answered. */
void daemon_handle_replies(struct daemon *d);
/* Writes out the MIDI threads' log lines. */
void daemon_drain_logs(struct daemon *d);

/* The state file: resume before the MIDI threads start; each change of
 * preset or root from the input thread; the write when due (now: at once);
 * how long the loop may sleep before one is due (-1: none waits). */
void daemon_state_resume(struct daemon *d);
void daemon_state_changed(struct daemon *d, const struct reply *rep);
void daemon_state_save(struct daemon *d, bool now);
int daemon_state_timeout_ms(const struct daemon *d);

/* Reload for client id (-1: SIGHUP): read and build here, swap in the input thread. */
void daemon_start_reload(struct daemon *d, int id);
void daemon_finish_reload(struct daemon *d, const struct reply *rep);

#endif
