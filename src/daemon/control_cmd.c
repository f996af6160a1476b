/*
 * control_cmd: the client commands `latticed status`, `panic`, `preset`,
 * `root` and `reload`, which talk to a running daemon over its control
 * socket (see control_server.h for the protocol), so they work the same
 * in a shell on the machine and over ssh.
 *
 * The socket is found from --socket, else from the config's
 * control_socket (--config, or the system config when it exists), whose
 * auto value makes the client try the places control_path lists.
 * Exit status: 0 the daemon did it, 1 it refused or cannot be reached,
 * 2 a bad command line.
 */
#include "control_cmd.h"

#include <errno.h>
#include <getopt.h>
#include <json-c/json.h>
#include <poll.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/socket.h>
#include <sys/time.h>
#include <sys/un.h>
#include <unistd.h>

#include "config.h"
#include "control_commands.h"
#include "control_path.h"
#include "latticed/note_name.h"

#define EXIT_USAGE 2
#define REPLY_MAX (4 << 20)

static void usage(FILE *f, const struct control_command *c, const char *default_config)
{
	bool is_status = c->kind == CONTROL_STATUS;
	fprintf(f, "Usage: latticed %s%s%s [--socket PATH] [--config FILE]%s\n%s.\n\n",
		c->name, c->arg ? " " : "", c->arg ? c->arg : "",
		is_status ? " [--json]" : "", c->help);
	fprintf(f,
		"  -s, --socket PATH  the daemon's control socket\n"
		"  -c, --config FILE  find the socket from FILE's control_socket (default %s)\n",
		default_config);
	if (is_status)
		fprintf(f, "  -j, --json         print the daemon's JSON reply\n");
	fprintf(f, "  -h, --help         show this help\n");
}

/* ---- talking to the daemon ------------------------------------------------ */

int control_connect(const char *path, int timeout_ms)
{
	struct sockaddr_un addr;
	memset(&addr, 0, sizeof addr);
	addr.sun_family = AF_UNIX;
	size_t length = strlen(path);
	if (length >= sizeof addr.sun_path) {
		errno = ENAMETOOLONG;
		return -1;
	}
	memcpy(addr.sun_path, path, length + 1);
	int fd = socket(AF_UNIX, SOCK_STREAM, 0);
	if (fd < 0)
		return -1;
	/* a daemon whose queue of waiting connections is full makes connect()
	 * wait; the send timeout bounds that wait (unix(7)), then EAGAIN */
	struct timeval wait = {timeout_ms / 1000, (timeout_ms % 1000) * 1000};
	(void)setsockopt(fd, SOL_SOCKET, SO_SNDTIMEO, &wait, sizeof wait);
	if (connect(fd, (struct sockaddr *)&addr, sizeof addr) != 0) {
		int saved = errno;
		close(fd);
		errno = saved;
		return -1;
	}
	return fd;
}

/* Connects to the first candidate that answers; prints why not otherwise. */
static int connect_daemon(char paths[][CONTROL_PATH_MAX], int count, const char **used,
			  int timeout_ms)
{
	for (int i = 0; i < count; i++) {
		int fd = control_connect(paths[i], timeout_ms);
		if (fd >= 0) {
			*used = paths[i];
			return fd;
		}
		if (errno == EAGAIN || errno == EWOULDBLOCK) {
			fprintf(stderr, "latticed: the daemon at %s took no new connection within %d s (too many clients waiting); try again\n",
				paths[i], timeout_ms / 1000);
			return -1;
		}
		if (errno != ENOENT && errno != ECONNREFUSED && errno != ENOTDIR) {
			fprintf(stderr, "latticed: cannot reach the daemon at %s: %s%s\n", paths[i],
				strerror(errno),
				errno == EACCES ? " (the socket is for its user and group: add yourself to that group, e.g. audio)" : "");
			return -1;
		}
	}
	char names[CONTROL_PATH_CANDIDATES * (CONTROL_PATH_MAX + 4)] = "";
	for (int i = 0; i < count; i++) {
		size_t used_length = strlen(names);
		snprintf(names + used_length, sizeof names - used_length, "%s%s",
			 i == 0 ? "" : i + 1 == count ? " or " : ", ", paths[i]);
	}
	fprintf(stderr, "latticed: no daemon at %s (is 'latticed run' running?)\n", names);
	return -1;
}

/* Sends one request line and reads the one reply line (malloc'd) back. */
static char *exchange(int fd, const char *request, int timeout_ms, const char *path)
{
	size_t length = strlen(request);
	if (send(fd, request, length, MSG_NOSIGNAL) != (ssize_t)length ||
	    send(fd, "\n", 1, MSG_NOSIGNAL) != 1) {
		fprintf(stderr, "latticed: cannot send to the daemon at %s: %s\n", path, strerror(errno));
		return NULL;
	}
	size_t size = 4096, used = 0;
	char *buf = malloc(size);
	while (buf) {
		struct pollfd pfd = {.fd = fd, .events = POLLIN};
		int r = poll(&pfd, 1, timeout_ms);
		if (r == 0) {
			fprintf(stderr, "latticed: no answer from the daemon at %s within %d s\n", path,
				timeout_ms / 1000);
			break;
		}
		if (r < 0 && errno == EINTR)
			continue;
		ssize_t n = r < 0 ? -1 : recv(fd, buf + used, size - used - 1, 0);
		if (n <= 0) {
			fprintf(stderr, "latticed: the daemon at %s closed the connection without an answer\n", path);
			break;
		}
		used += (size_t)n;
		buf[used] = '\0';
		char *nl = memchr(buf, '\n', used);
		if (nl) {
			*nl = '\0';
			return buf;
		}
		if (used + 1 == size) {
			if (size >= REPLY_MAX) {
				fprintf(stderr, "latticed: the daemon's answer is too long\n");
				break;
			}
			char *bigger = realloc(buf, size * 2);
			if (!bigger)
				break;
			buf = bigger;
			size *= 2;
		}
	}
	free(buf);
	return NULL;
}

/* ---- printing the status ---------------------------------------------------- */

static const char *str(struct json_object *o, const char *key)
{
	struct json_object *v;
	if (!json_object_object_get_ex(o, key, &v) || !v)
		return "";
	return json_object_get_string(v);
}

static int64_t num(struct json_object *o, const char *key)
{
	struct json_object *v;
	return json_object_object_get_ex(o, key, &v) && v ? json_object_get_int64(v) : 0;
}

static struct json_object *member(struct json_object *o, const char *key)
{
	struct json_object *v = NULL;
	json_object_object_get_ex(o, key, &v);
	return v;
}

static void print_duration(double seconds)
{
	long s = (long)seconds;
	if (s < 60)
		printf("%ld s", s);
	else if (s < 3600)
		printf("%ld min %02ld s", s / 60, s % 60);
	else
		printf("%ld h %02ld min", s / 3600, (s / 60) % 60);
}

/* One output's traffic: sent, waiting, what load made it leave out. */
static void print_output_load(struct json_object *o)
{
	struct json_object *shed = member(o, "shed");
	printf("output %s (%s): %lld messages sent, %lld queue slots waiting%s\n",
	       str(o, "name"), str(o, "method"), (long long)num(o, "sent"),
	       (long long)num(o, "waiting"),
	       json_object_get_boolean(member(o, "cut_off")) ? ", cut off until its synth reads" : "");
	printf("  under load: %lld new notes and %lld system messages left out, %lld controller values merged; "
	       "the port refused %lld times (each retried)",
	       shed ? (long long)num(shed, "note_ons") : 0, shed ? (long long)num(shed, "system") : 0,
	       shed ? (long long)num(shed, "values_merged") : 0, (long long)num(o, "refused"));
	if (num(o, "cut_offs"))
		printf("; cut off %lld times (%lld messages left out meanwhile)", (long long)num(o, "cut_offs"),
		       shed ? (long long)num(shed, "while_cut_off") : 0);
	if (num(o, "queue_drops") || num(o, "send_drops"))
		printf("; lost: %lld (queue full), %lld (not taken at shutdown)",
		       (long long)num(o, "queue_drops"), (long long)num(o, "send_drops"));
	printf("\n");
}

/* One held note: where it came from, the preset and root it began under,
 * its tone and what it sounds at (a ratio to the home 1/1, and Hz), where
 * it went.  A note whose tuning was retired and freed shows '?'. */
static void print_note(struct json_object *note)
{
	char name[NOTE_NAME_MAX];
	struct json_object *sounds = member(note, "sounds"), *hz = sounds ? member(sounds, "hz") : NULL;
	bool known = member(note, "tone") != NULL;
	printf("    %3lld %2lld %3lld %-4s  %-12s %-9s %-10s %-9s %9s  ->  %2lld %3lld%s\n",
	       (long long)num(note, "source"), (long long)num(note, "in_channel"),
	       (long long)num(note, "in_key"), note_name((int)num(note, "in_key"), name, sizeof name),
	       known ? str(note, "preset") : "?", known ? str(note, "root") : "?",
	       known ? str(note, "tone") : "?", sounds && member(sounds, "ratio") ? str(sounds, "ratio") : "?",
	       hz ? json_object_get_string(hz) : "?",
	       (long long)num(note, "out_channel"), (long long)num(note, "out_key"),
	       json_object_get_boolean(member(note, "ringing")) ? " (pedal)" : "");
}

static void print_status(struct json_object *st)
{
	printf("latticed %s, pid %lld, up ", str(st, "version"), (long long)num(st, "pid"));
	struct json_object *up = member(st, "uptime_seconds");
	print_duration(up ? json_object_get_double(up) : 0);
	printf(", backend %s\n", str(st, "backend"));
	if (strcmp(str(st, "config"), CONFIG_BUILTIN_NAME) == 0 && *str(st, "default_config"))
		printf("config:  (built-in defaults: there is no %s)\n", str(st, "default_config"));
	else
		printf("config:  %s\n", str(st, "config"));
	printf("control: %s\n", str(st, "control_socket"));
	struct json_object *preset = member(st, "preset"), *root = member(st, "root");
	struct json_object *presets = member(st, "presets");
	printf("tuning:  preset %s, root %s", preset ? str(preset, "name") : "?",
	       root ? str(root, "label") : "?");
	size_t count = presets ? json_object_array_length(presets) : 0;
	printf(" (presets:");
	for (size_t i = 0; i < count; i++)
		printf(" %zu=%s", i, json_object_get_string(json_object_array_get_idx(presets, i)));
	printf("; %lld reload(s))\n", (long long)num(st, "reloads"));

	struct json_object *ports = member(st, "ports");
	printf("ports:\n");
	for (size_t i = 0; ports && i < json_object_array_length(ports); i++)
		printf("  %s\n", json_object_get_string(json_object_array_get_idx(ports, i)));
	struct json_object *sources = member(st, "sources");
	if (sources && json_object_array_length(sources)) {
		printf("sources:\n");
		for (size_t i = 0; i < json_object_array_length(sources); i++) {
			struct json_object *s = json_object_array_get_idx(sources, i);
			printf("  %lld %s: %s, %lld messages", (long long)num(s, "index"), str(s, "name"),
			       json_object_get_boolean(member(s, "connected")) ? "connected" : "not connected",
			       (long long)num(s, "messages"));
			if (num(s, "bytes_dropped") || num(s, "messages_dropped"))
				printf(", %lld bad bytes and %lld broken messages dropped",
				       (long long)num(s, "bytes_dropped"), (long long)num(s, "messages_dropped"));
			printf("\n");
		}
	}
	struct json_object *input = member(st, "input");
	if (input && num(input, "pauses"))
		printf("input: waited %lld times for room on an output, %lld ms in all%s\n",
		       (long long)num(input, "pauses"), (long long)num(input, "paused_ms"),
		       json_object_get_boolean(member(input, "waiting")) ? " (waiting now)" : "");
	struct json_object *outputs = member(st, "outputs");
	for (size_t i = 0; outputs && i < json_object_array_length(outputs); i++) {
		struct json_object *o = json_object_array_get_idx(outputs, i);
		struct json_object *stats = member(o, "stats");
		print_output_load(o);
		if (stats)
			printf("  notes: %lld played, %lld shared a channel, %lld stolen, %lld dropped, %lld on silent keys; %lld bends clamped\n",
			       (long long)num(stats, "notes_on"), (long long)num(stats, "notes_shared"),
			       (long long)num(stats, "notes_stolen"), (long long)num(stats, "notes_dropped"),
			       (long long)num(stats, "silent_keys"), (long long)num(stats, "bends_clamped"));
		struct json_object *notes = member(o, "notes");
		size_t n = notes ? json_object_array_length(notes) : 0;
		printf("  held notes: %lld", (long long)num(o, "notes_held"));
		if (num(o, "passthrough_notes"))
			printf(", and %lld on pass-through channels", (long long)num(o, "passthrough_notes"));
		printf("\n");
		if (n)
			printf("    src ch key name  preset       root      tone       sounds        Hz  ->  ch key\n");
		for (size_t k = 0; k < n; k++)
			print_note(json_object_array_get_idx(notes, k));
	}
}

/* ---- the commands ----------------------------------------------------------- */

int control_socket_candidates(const char *config_path, const char *default_config,
			      char paths[][CONTROL_PATH_MAX])
{
	struct config *cfg = malloc(sizeof *cfg);
	struct config_report *report = malloc(sizeof *report);
	const char *path = NULL;
	int count = 0;
	bool ok = cfg && report &&
		  config_load_or_defaults(config_path, default_config, cfg, report, &path);
	if (!ok && report)
		fprintf(stderr, "%.*s", (int)report->length, report->text);
	if (ok && strcmp(cfg->daemon.control_socket, "none") == 0)
		fprintf(stderr, "latticed: %s has control_socket = none: the daemon takes no commands\n",
			path ? path : "the config");
	else if (ok)
		count = control_path_candidates(cfg->daemon.control_socket, paths);
	free(cfg);
	free(report);
	return count;
}

/* What the command line asked for. */
struct client_options {
	const char *socket_path, *config_path;
	bool json;
	char request[CONFIG_PATH_MAX];
};

/* Reads the options and the argument into o; -1 to go on, else the exit status. */
static int read_options(const struct control_command *c, int argc, char **argv,
			const char *default_config, struct client_options *o)
{
	static const struct option options[] = {
		{"socket", required_argument, NULL, 's'},
		{"config", required_argument, NULL, 'c'},
		{"json", no_argument, NULL, 'j'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	bool is_status = c->kind == CONTROL_STATUS;
	int opt;
	while ((opt = getopt_long(argc, argv, is_status ? "s:c:jh" : "s:c:h", options, NULL)) != -1) {
		switch (opt) {
		case 's':
			o->socket_path = optarg;
			break;
		case 'c':
			o->config_path = optarg;
			break;
		case 'j':
			if (!is_status) {
				fprintf(stderr, "latticed %s: --json is for status only\n", c->name);
				return EXIT_USAGE;
			}
			o->json = true;
			break;
		case 'h':
			usage(stdout, c, default_config);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed %s --help'.\n", c->name);
			return EXIT_USAGE;
		}
	}
	int wanted = c->arg ? 1 : 0;
	if (argc - optind != wanted) {
		if (argc - optind < wanted)
			fprintf(stderr, "latticed %s: missing %s\n", c->name, c->arg);
		else
			fprintf(stderr, "latticed %s: unexpected argument '%s'\n", c->name, argv[optind + wanted]);
		fprintf(stderr, "Try 'latticed %s --help'.\n", c->name);
		return EXIT_USAGE;
	}
	if (!wanted) {
		snprintf(o->request, sizeof o->request, "%s", c->name);
		return -1;
	}
	const char *arg = argv[optind];
	if (strchr(arg, '\n') || strlen(arg) > 200) {
		fprintf(stderr, "latticed %s: '%s' is not a usable %s\n", c->name, arg, c->arg);
		return EXIT_USAGE;
	}
	snprintf(o->request, sizeof o->request, "%s %s", c->name, arg);
	return -1;
}

/* Prints the daemon's answer; returns the exit status. */
static int print_reply(const struct control_command *c, const struct client_options *o,
		       const char *answer, const char *used)
{
	struct json_object *reply = json_tokener_parse(answer);
	if (!reply || !json_object_is_type(reply, json_type_object)) {
		fprintf(stderr, "latticed: the daemon at %s gave an answer that is not JSON: %.80s\n", used,
			answer);
		json_object_put(reply);
		return 1;
	}
	bool ok = json_object_get_boolean(member(reply, "ok"));
	int status = ok ? 0 : 1;
	if (!ok) {
		struct json_object *details = member(reply, "details");
		for (size_t i = 0; details && i < json_object_array_length(details); i++)
			fprintf(stderr, "%s\n", json_object_get_string(json_object_array_get_idx(details, i)));
		fprintf(stderr, "latticed %s: %s\n", c->name, str(reply, "error"));
	} else if (c->kind == CONTROL_STATUS) {
		struct json_object *st = member(reply, "status");
		if (o->json)
			printf("%s\n", json_object_to_json_string_ext(st, JSON_C_TO_STRING_PRETTY |
									 JSON_C_TO_STRING_SPACED));
		else
			print_status(st);
	} else {
		printf("%s\n", str(reply, "message"));
		if (member(reply, "restart_needed"))
			printf("%s\n", str(reply, "restart_needed"));
	}
	if (fflush(stdout) != 0)
		status = 1;
	json_object_put(reply);
	return status;
}

int control_cmd_run(const struct control_command *c, int argc, char **argv,
		    const char *default_config)
{
	struct client_options o = {0};
	int status = read_options(c, argc, argv, default_config, &o);
	if (status >= 0)
		return status;
	char paths[CONTROL_PATH_CANDIDATES][CONTROL_PATH_MAX];
	int count = 1;
	if (o.socket_path)
		snprintf(paths[0], CONTROL_PATH_MAX, "%s", o.socket_path);
	else if ((count = control_socket_candidates(o.config_path, default_config, paths)) == 0)
		return 1;
	const char *used = paths[0];
	int fd = connect_daemon(paths, count, &used, c->timeout_ms);
	if (fd < 0)
		return 1;
	char *answer = exchange(fd, o.request, c->timeout_ms, used);
	close(fd);
	if (!answer)
		return 1;
	status = print_reply(c, &o, answer, used);
	free(answer);
	return status;
}
