/*
 * daemon_requests: what control clients ask (one request line each, see
 * control_commands.h for the vocabulary) and what the input thread
 * answers.  Requests that touch MIDI state go to the input thread through
 * its request queue and are answered when its reply comes back; a full
 * queue is answered at once ("busy"), never waited for.
 */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "clock.h"
#include "control_commands.h"
#include "daemon_private.h"
#include "notify.h"
#include "snapshot.h"
#include "tuning.h"

void daemon_reply_json(struct daemon *d, int id, struct json_object *o)
{
	if (id >= 0)
		control_server_reply(&d->control, id,
				     json_object_to_json_string_ext(o, JSON_C_TO_STRING_PLAIN));
	json_object_put(o);
}

void daemon_reply_simple(struct daemon *d, int id, bool ok, const char *text)
{
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "ok", json_object_new_boolean(ok));
	json_object_object_add(o, ok ? "message" : "error", json_object_new_string(text));
	daemon_reply_json(d, id, o);
}

/* ---- control requests ---------------------------------------------------- */

static void post_or_fail(struct daemon *d, int id, const struct request *r)
{
	if (!input_thread_post(d->in, r))
		daemon_reply_simple(d, id, false, "the MIDI thread is busy; try again");
}

void daemon_on_request(void *context, int id, const char *line)
{
	struct daemon *d = context;
	char arg[CONTROL_LINE_MAX] = "";
	const struct control_command *c = control_command_parse(line, arg, sizeof arg);
	enum control_kind kind = c ? c->kind : CONTROL_KIND_COUNT;

	struct request r = {.id = id, .number = -1};
	if (kind == CONTROL_STATUS) {
		struct status_snapshot *s = malloc(sizeof *s);
		if (!s) {
			daemon_reply_simple(d, id, false, "out of memory");
			return;
		}
		r.kind = REQUEST_SNAPSHOT;
		r.snapshot = s;
		if (!input_thread_post(d->in, &r)) {
			free(s);
			daemon_reply_simple(d, id, false, "the MIDI thread is busy; try again");
		}
	} else if (kind == CONTROL_PANIC) {
		log_print(LOG_LEVEL_NOTICE, "panic requested over the control socket");
		r.kind = REQUEST_PANIC;
		post_or_fail(d, id, &r);
	} else if (kind == CONTROL_PRESET) {
		r.kind = REQUEST_PRESET;
		size_t len = strlen(arg);
		if (len >= sizeof r.name) {
			daemon_reply_simple(d, id, false, "no preset has a name that long");
			return;
		}
		memcpy(r.name, arg, len + 1);
		if (!control_command_number(arg, &r.number))
			r.number = -1;
		post_or_fail(d, id, &r);
	} else if (kind == CONTROL_ROOT) {
		/* home, a number or a tone label: only the input thread knows the preset */
		if (strlen(arg) >= sizeof r.text) {
			daemon_reply_simple(d, id, false, "no tone has a label that long; expected home, a number or a tone label such as 1.5");
			return;
		}
		memcpy(r.text, arg, strlen(arg) + 1);
		r.kind = REQUEST_ROOT;
		post_or_fail(d, id, &r);
	} else if (kind == CONTROL_RELOAD) {
		daemon_start_reload(d, id);
	} else if (kind == CONTROL_SUBSCRIBE) {
		if (arg[0] && strcmp(arg, CONTROL_SUBSCRIBE_STATES) != 0) {
			char quoted[80], text[sizeof quoted + 96];
			snprintf(text, sizeof text, "subscribe takes no word or '" CONTROL_SUBSCRIBE_STATES "', not '%s'",
				 control_text_copy(quoted, sizeof quoted, arg, 64));
			daemon_reply_simple(d, id, false, text);
			return;
		}
		subscription_request(d, id, arg[0] != '\0');
	} else {
		char quoted[80], text[sizeof quoted + 224], known[128];
		snprintf(text, sizeof text, "unknown request '%s', expected %s",
			 control_text_copy(quoted, sizeof quoted, line, 64),
			 control_command_list(known, sizeof known));
		daemon_reply_simple(d, id, false, text);
	}
}

/* ---- replies from the input thread ---------------------------------------- */

static void send_status(struct daemon *d, const struct reply *rep)
{
	struct snapshot_extra extra = {
		.version = d->options->version,
		.pid = (int)getpid(),
		.uptime_seconds = (double)(monotonic_ms() - d->started_ms) / 1000.0,
		.config = d->config_path[0] ? d->config_path : "(built-in defaults)",
		.default_config = d->options->default_config_path,
		.backend = d->backend->name,
		.control_socket = d->control.path,
	};
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "ok", json_object_new_boolean(true));
	json_object_object_add(o, "status", snapshot_json(rep->snapshot, &extra));
	daemon_reply_json(d, rep->id, o);
	free(rep->snapshot);
}

void daemon_handle_replies(struct daemon *d)
{
	struct reply rep;
	while (input_thread_take_reply(d->in, &rep)) {
		switch (rep.kind) {
		case REPLY_DONE:
			if (rep.request == REQUEST_TUNINGS) {
				daemon_finish_reload(d, &rep);
				break;
			}
			if (rep.ok && rep.request != REQUEST_PANIC)
				log_print(LOG_LEVEL_INFO, "control: %s", rep.text);
			daemon_reply_simple(d, rep.id, rep.ok, rep.text);
			break;
		case REPLY_SNAPSHOT:
			send_status(d, &rep);
			break;
		case REPLY_RETIRED_TUNINGS:
			tuning_set_free(rep.tunings);
			free(rep.tunings);
			break;
		case REPLY_TUNING_STATE:
			snprintf(d->state, sizeof d->state, "%s", rep.text);
			log_print(LOG_LEVEL_INFO, "now playing %s", rep.text);
			notify_status("Running: %s", rep.text);
			daemon_state_changed(d, &rep);
			break;
		}
	}
}

void daemon_drain_logs(struct daemon *d)
{
	log_ring_drain(&d->in->log);
	log_ring_drain(&d->out->log);
}

