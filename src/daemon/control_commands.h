/*
 * control_commands: what a running daemon can be asked, defined once.
 *
 * Model: five commands (status, panic, preset NAME, root TONE, reload), each
 * a request word on the control socket and a `latticed` command of the
 * same name, and one request with no command of its own: subscribe, which
 * turns the connection into a stream of events, or with `states` of states
 * (subscription.c; `latticed view` is its client).  The table holds the word, the form of its argument, the
 * help texts and how long a client waits; the CLI (main.c), the client
 * (control_cmd.c) and the daemon (daemon.c) all read it, so a command is
 * added or renamed in one place.  A request is one line: the word, then
 * the argument if the command takes one.
 */
#ifndef LATTICED_CONTROL_COMMANDS_H
#define LATTICED_CONTROL_COMMANDS_H

#include <stdbool.h>
#include <stddef.h>

enum control_kind {
	CONTROL_STATUS,
	CONTROL_PANIC,
	CONTROL_PRESET,
	CONTROL_ROOT,
	CONTROL_RELOAD,
	CONTROL_SUBSCRIBE,
	CONTROL_KIND_COUNT,
};

struct control_command {
	enum control_kind kind;
	const char *name;          /* the request word and the command name */
	const char *arg;           /* its argument in usage texts ("NAME"), or NULL */
	const char *summary;       /* one line for `latticed --help` */
	const char *help;          /* the first line of `latticed NAME --help` */
	int timeout_ms;            /* how long a client waits for the (first) answer */
	const char *optional;      /* an argument it may take, in usage texts ("[states]"), or NULL */
};

/* `subscribe states`: a fresh state per change instead of every event */
#define CONTROL_SUBSCRIBE_STATES "states"

/* Indexed by enum control_kind. */
extern const struct control_command control_commands[CONTROL_KIND_COUNT];

const struct control_command *control_command_find(const char *name);

/* "status, panic, preset NAME, root TONE, reload or subscribe [states]" into buf */
char *control_command_list(char *buf, size_t size);

/*
 * Splits a request line into its command and argument (spaces and tabs
 * around them dropped).  NULL for an unknown word, or for a command whose
 * argument is missing; arg is "" for a command that takes none.
 */
const struct control_command *control_command_parse(const char *line, char *arg, size_t arg_size);

/* A root or preset number: 0 to 100000. */
bool control_command_number(const char *arg, int *out);

#endif
