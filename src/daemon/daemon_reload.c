/*
 * daemon_reload: `latticed reload` and SIGHUP.  The file is read and the
 * tunings built on the main thread; any error is logged line by line, the
 * reply carries the lines, and the running state is kept.  Only the
 * tunings are applied, by the input thread between two MIDI messages,
 * without cutting a sounding note; settings that would need new ports or
 * engines are compared with those the daemon started with and each is
 * reported as needing a restart.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "daemon_private.h"
#include "notify.h"
#include "tuning.h"

static void note_restart(struct daemon *d, const char *what)
{
	size_t used = strlen(d->reload_notes);
	snprintf(d->reload_notes + used, sizeof d->reload_notes - used, "%s%s",
		 used ? "; " : "", what);
	log_print(LOG_LEVEL_NOTICE, "reload: %s changed; this needs a restart (not applied)", what);
}

static bool same_connect(const struct connect_list *a, const struct connect_list *b)
{
	if (a->count != b->count)
		return false;
	for (int i = 0; i < a->count; i++)
		if (strcmp(a->patterns[i], b->patterns[i]) != 0)
			return false;
	return true;
}

/* Lists (and logs) what a reload cannot apply without a restart. */
static void compare_for_restart(struct daemon *d, const struct config *now)
{
	const struct config *was = d->cfg;
	char what[128];
	d->reload_notes[0] = '\0';
	const struct daemon_config *a = &was->daemon, *b = &now->daemon;
	if (strcmp(a->backend, b->backend) || strcmp(a->client_name, b->client_name) ||
	    a->realtime_priority != b->realtime_priority || a->lock_memory != b->lock_memory ||
	    strcmp(a->control_socket, b->control_socket) || strcmp(a->state_file, b->state_file))
		note_restart(d, "[daemon]");
	if (!same_connect(&was->input.connect, &now->input.connect))
		note_restart(d, "[input] connect");
	bool outputs_same = was->output_count == now->output_count;
	for (int i = 0; outputs_same && i < was->output_count; i++)
		outputs_same = strcmp(was->outputs[i].name, now->outputs[i].name) == 0;
	if (!outputs_same) {
		note_restart(d, "the list of [output] sections");
	} else {
		for (int i = 0; i < was->output_count; i++) {
			struct engine_spec sa, sb;
			config_engine_spec(was, i, &sa);
			config_engine_spec(now, i, &sb);
			/* the input and control parts are the same for every output: report once */
			if (i == 0 && (memcmp(&sa.input, &sb.input, sizeof sa.input) ||
				       memcmp(&sa.control, &sb.control, sizeof sa.control)))
				note_restart(d, "[input] or [control]");
			if (memcmp(&sa.output, &sb.output, sizeof sa.output) ||
			    was->outputs[i].running_status != now->outputs[i].running_status) {
				snprintf(what, sizeof what, "[output %s] retuning settings", was->outputs[i].name);
				note_restart(d, what);
			}
			if (!same_connect(&was->outputs[i].connect, &now->outputs[i].connect)) {
				snprintf(what, sizeof what, "[output %s] connect", was->outputs[i].name);
				note_restart(d, what);
			}
		}
	}
}

static void reload_failed(struct daemon *d, int id, const struct config_report *report)
{
	daemon_print_report_lines(report, LOG_LEVEL_ERROR);
	log_print(LOG_LEVEL_ERROR, "reload of %s failed; still running the previous configuration",
		  d->config_path);
	notify_ready();
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "ok", json_object_new_boolean(false));
	char text[CONFIG_PATH_MAX + 64];
	snprintf(text, sizeof text, "reload of %s failed; still running the previous configuration",
		 d->config_path);
	json_object_object_add(o, "error", json_object_new_string(text));
	struct json_object *lines = json_object_new_array();
	const char *p = report->text, *end = report->text + report->length;
	while (p < end) {
		const char *nl = memchr(p, '\n', (size_t)(end - p));
		if (!nl)
			nl = end;
		json_object_array_add(lines, json_object_new_string_len(p, (int)(nl - p)));
		p = nl + 1;
	}
	json_object_object_add(o, "details", lines);
	daemon_reply_json(d, id, o);
}

void daemon_start_reload(struct daemon *d, int id)
{
	if (!d->config_path[0]) {
		log_print(LOG_LEVEL_WARNING, "reload: started on the built-in defaults, there is no file to read");
		daemon_reply_simple(d, id, false, "started on the built-in defaults: there is no config file to reload");
		return;
	}
	if (d->reload_in_flight) {
		daemon_reply_simple(d, id, false, "a reload is already in progress");
		return;
	}
	notify_reloading();
	log_print(LOG_LEVEL_INFO, "reload: reading %s", d->config_path);
	struct config *cfg = malloc(sizeof *cfg);
	struct tuning_set *set = malloc(sizeof *set);
	struct config_report *report = malloc(sizeof *report);
	if (!cfg || !set || !report) {
		free(cfg);
		free(set);
		free(report);
		log_print(LOG_LEVEL_ERROR, "reload: out of memory; still running the previous configuration");
		daemon_reply_simple(d, id, false, "out of memory");
		notify_ready();
		return;
	}
	if (!config_load(d->config_path, cfg, report) ||
	    (daemon_print_report_lines(report, LOG_LEVEL_WARNING), !tuning_set_build(cfg, set, report))) {
		reload_failed(d, id, report);
		free(cfg);
		free(set);
		free(report);
		return;
	}
	daemon_print_report_lines(report, LOG_LEVEL_WARNING);
	compare_for_restart(d, cfg);
	free(cfg);
	free(report);
	struct request r = {.kind = REQUEST_TUNINGS, .id = id, .tunings = set};
	if (!input_thread_post(d->in, &r)) {
		tuning_set_free(set);
		free(set);
		daemon_reply_simple(d, id, false, "the MIDI thread is not taking requests");
		notify_ready();
		return;
	}
	d->reload_in_flight = true;
	d->reload_client = id;
}

void daemon_finish_reload(struct daemon *d, const struct reply *rep)
{
	d->reload_in_flight = false;
	log_print(LOG_LEVEL_NOTICE, "reloaded %s: %s (sounding notes keep their tuning)",
		  d->config_path, rep->text);
	notify_ready();
	notify_status("Reloaded: %s", rep->text);
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "ok", json_object_new_boolean(true));
	char text[REPLY_TEXT_MAX + 64];
	snprintf(text, sizeof text, "reloaded: %s", rep->text);
	json_object_object_add(o, "message", json_object_new_string(text));
	if (d->reload_notes[0]) {
		char notes[sizeof d->reload_notes + 64];
		snprintf(notes, sizeof notes, "not applied, needs a restart: %s", d->reload_notes);
		json_object_object_add(o, "restart_needed", json_object_new_string(notes));
	}
	daemon_reply_json(d, d->reload_client, o);
}

