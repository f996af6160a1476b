/*
 * main: the latticed command line.
 *
 * `latticed COMMAND [OPTIONS]`: each command is one function in the table
 * below with its own getopt_long options.  Exit status: 0 success,
 * 1 the work failed (bad config, unreadable file), 2 bad command line.
 * Errors go to stderr as "latticed: ..." lines; results go to stdout.
 */
#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli_common.h"
#include "config.h"
#include "control_cmd.h"
#include "connect_cmd.h"
#include "control_commands.h"
#include "daemon.h"
#include "draw_cmd.h"
#include "midi_io.h"
#include "render_cmd.h"
#include "table_cmd.h"
#include "tuning.h"
#ifdef LATTICED_HAVE_VIEW
#include "view_cmd.h"
#endif

static const char default_config_path[] = LATTICED_SYSCONFDIR "/latticed/latticed.conf";

static void draw_usage(FILE *f)
{
	fprintf(f,
		"Usage: latticed draw [--config FILE] [--preset NAME|N] [--what lattice|keys]\n"
		"                     [--periods 1|2] [-o FILE]\n"
		"Draw the lattice (tones, edges, chords) or a keyboard chart as an SVG file.\n"
		"\n"
		"  -c, --config FILE     read FILE instead of %s\n"
		"  -p, --preset NAME|N   draw preset NAME, or number N (0 is the main tuning)\n"
		"  -w, --what WHAT       lattice (default): every tone, edge and chord;\n"
		"                        keys: what each key plays and the keys of every chord\n"
		"  -n, --periods N       keys: show 1 or 2 keyboard periods (default 2)\n"
		"  -o, --out FILE        write FILE (replaced whole) instead of standard output\n"
		"  -h, --help            show this help\n",
		default_config_path);
}

/* Values of --what and --periods; false after saying what was expected. */
static bool parse_draw_option(int opt, const char *arg, struct draw_request *req)
{
	if (opt == 'w') {
		if (strcmp(arg, "lattice") == 0 || strcmp(arg, "keys") == 0) {
			req->what = strcmp(arg, "keys") == 0 ? DRAW_KEYS : DRAW_LATTICE;
			return true;
		}
		fprintf(stderr, "latticed draw: --what is '%s', expected lattice or keys\n", arg);
		return false;
	}
	if (strcmp(arg, "1") == 0 || strcmp(arg, "2") == 0) {
		req->periods = arg[0] - '0';
		return true;
	}
	fprintf(stderr, "latticed draw: --periods is '%s', expected 1 or 2\n", arg);
	return false;
}

static int command_draw(int argc, char **argv)
{
	static const struct option options[] = {
		{"config", required_argument, NULL, 'c'},
		{"preset", required_argument, NULL, 'p'},
		{"what", required_argument, NULL, 'w'},
		{"periods", required_argument, NULL, 'n'},
		{"out", required_argument, NULL, 'o'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	const char *config_path = NULL, *preset_name = NULL;
	struct draw_request req = {.what = DRAW_LATTICE, .periods = 2};
	bool periods_given = false;
	int opt;
	while ((opt = getopt_long(argc, argv, "c:p:w:n:o:h", options, NULL)) != -1) {
		switch (opt) {
		case 'c':
			config_path = optarg;
			break;
		case 'p':
			preset_name = optarg;
			break;
		case 'o':
			req.out_path = optarg;
			break;
		case 'n':
			periods_given = true;
			/* fall through */
		case 'w':
			if (!parse_draw_option(opt, optarg, &req))
				return EXIT_USAGE;
			break;
		case 'h':
			draw_usage(stdout);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed draw --help'.\n");
			return EXIT_USAGE;
		}
	}
	if (optind < argc) {
		fprintf(stderr, "latticed draw: unexpected argument '%s'\nTry 'latticed draw --help'.\n",
			argv[optind]);
		return EXIT_USAGE;
	}
	if (periods_given && req.what != DRAW_KEYS) {
		fprintf(stderr, "latticed draw: --periods is for --what keys, expected no --periods"
			" with the lattice\n");
		return EXIT_USAGE;
	}

	struct config *cfg = malloc(sizeof *cfg);
	struct tuning *t = NULL;
	int rc = cfg ? cli_load_config(config_path, default_config_path, cfg) : 1;
	if (rc == 0 && preset_name && (req.preset = cli_find_preset("draw", cfg, preset_name)) < 0)
		rc = 1;
	if (rc == 0)
		rc = cli_build_tuning(cfg, req.preset, &t);
	if (rc == 0) {
		req.cfg = cfg;
		req.tuning = t;
		rc = draw_run(&req);
	}
	free(t);
	free(cfg);
	return rc;
}

static void render_usage(FILE *f)
{
	fprintf(f,
		"Usage: latticed render [--config FILE] [--output NAME] [--verbose] IN.mid OUT.mid\n"
		"Retune a Standard MIDI File for one output; '-' is standard input or output.\n"
		"\n"
		"  -c, --config FILE  read FILE instead of %s\n"
		"  -o, --output NAME  retune for the [output NAME] section (default: the first)\n"
		"  -v, --verbose      print a summary (events, notes, steals) on stderr\n"
		"  -h, --help         show this help\n",
		default_config_path);
}

/* "NAME has no output 'x'; its outputs: 'synth', 'mpe'" on one line */
static void no_such_output(const struct config *cfg, const char *name)
{
	fprintf(stderr, "latticed render: %s has no output '%s'; its output%s:", cfg->path, name,
		cfg->output_count == 1 ? "" : "s");
	for (int i = 0; i < cfg->output_count; i++)
		fprintf(stderr, "%s '%s'", i ? "," : "", cfg->outputs[i].name);
	fputc('\n', stderr);
}

static int command_render(int argc, char **argv)
{
	static const struct option options[] = {
		{"config", required_argument, NULL, 'c'},
		{"output", required_argument, NULL, 'o'},
		{"verbose", no_argument, NULL, 'v'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	const char *config_path = NULL, *output_name = NULL;
	bool verbose = false;
	int opt;
	while ((opt = getopt_long(argc, argv, "c:o:vh", options, NULL)) != -1) {
		switch (opt) {
		case 'c':
			config_path = optarg;
			break;
		case 'o':
			output_name = optarg;
			break;
		case 'v':
			verbose = true;
			break;
		case 'h':
			render_usage(stdout);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed render --help'.\n");
			return EXIT_USAGE;
		}
	}
	if (argc - optind < 2) {
		fprintf(stderr, "latticed render: expected IN.mid and OUT.mid ('-' for standard input or output)\n"
			"Try 'latticed render --help'.\n");
		return EXIT_USAGE;
	}
	if (argc - optind > 2) {
		fprintf(stderr, "latticed render: unexpected argument '%s'\nTry 'latticed render --help'.\n",
			argv[optind + 2]);
		return EXIT_USAGE;
	}

	struct config *cfg = malloc(sizeof *cfg);
	struct tuning_set tunings = {0};
	bool built = false;
	int rc = cfg ? cli_load_config(config_path, default_config_path, cfg) : 1;
	int output = 0;
	if (rc == 0 && output_name) {
		output = config_find_output(cfg, output_name);
		if (output < 0) {
			no_such_output(cfg, output_name);
			rc = 1;
		}
	}
	if (rc == 0) {
		struct config_report report = {0};
		built = tuning_set_build(cfg, &tunings, &report);
		cli_print_report(&report);
		rc = built ? 0 : 1;
	}
	if (rc == 0) {
		struct render_request req = {
			.cfg = cfg,
			.output = output,
			.tunings = &tunings.engine,
			.in_path = argv[optind],
			.out_path = argv[optind + 1],
			.verbose = verbose,
		};
		rc = render_run(&req);
	}
	if (built)
		tuning_set_free(&tunings);
	free(cfg);
	return rc;
}

static void run_usage(FILE *f, const char *name)
{
	bool run = strcmp(name, "run") == 0;
	fprintf(f,
		"Usage: latticed %s [--config FILE] [--backend NAME]\n%s\n\n"
		"  -c, --config FILE   read FILE instead of %s\n"
		"  -b, --backend NAME  one of: %s (default: the config's backend)\n"
		"  -h, --help          show this help\n",
		name,
		run ? "Run the retuning daemon in the foreground; logs go to stderr.\n"
		      "Stop it with Ctrl-C (SIGINT) or SIGTERM; SIGHUP reloads the config."
		    : "List the MIDI ports latticed can connect to (no daemon needed).",
		default_config_path, midi_io_available());
}

/* `latticed run` and `latticed ports` share their options. */
static int daemon_command(int argc, char **argv, const char *name)
{
	static const struct option options[] = {
		{"config", required_argument, NULL, 'c'},
		{"backend", required_argument, NULL, 'b'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	struct daemon_options o = {
		.default_config_path = default_config_path,
		.version = LATTICED_VERSION,
	};
	int opt;
	while ((opt = getopt_long(argc, argv, "c:b:h", options, NULL)) != -1) {
		switch (opt) {
		case 'c':
			o.config_path = optarg;
			break;
		case 'b':
			o.backend = optarg;
			break;
		case 'h':
			run_usage(stdout, name);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed %s --help'.\n", name);
			return EXIT_USAGE;
		}
	}
	if (optind < argc) {
		fprintf(stderr, "latticed %s: unexpected argument '%s'\nTry 'latticed %s --help'.\n",
			name, argv[optind], name);
		return EXIT_USAGE;
	}
	if (o.backend && strcmp(o.backend, "auto") != 0 && !midi_io_find(o.backend)) {
		fprintf(stderr, "latticed %s: backend '%s' is not in this build, expected one of: %s\n",
			name, o.backend, midi_io_available());
		return EXIT_USAGE;
	}
	return strcmp(name, "run") == 0 ? daemon_run(&o) : daemon_list_ports(&o);
}

static int command_view(int argc, char **argv)
{
#ifdef LATTICED_HAVE_VIEW
	return view_cmd_run(argc, argv, default_config_path);
#else
	(void)argc;
	(void)argv;
	fprintf(stderr, "latticed view: this latticed was built without the live page; "
		"build it with libmicrohttpd-dev installed (cmake -DLATTICED_VIEW=ON)\n");
	return 1;
#endif
}

static int command_run(int argc, char **argv)
{
	return daemon_command(argc, argv, "run");
}

static int command_ports(int argc, char **argv)
{
	return daemon_command(argc, argv, "ports");
}

static int command_table(int argc, char **argv)
{
	return table_command(argc, argv, default_config_path);
}

/* A command of our own, or one of the control commands (control_commands.h),
 * whose name and summary come from there. */
struct command {
	const char *name;
	int (*run)(int argc, char **argv);
	const char *summary;
	const struct control_command *control;
};

static const struct command commands[] = {
	{"run", command_run, "run the retuning daemon in the foreground (Ctrl-C stops it)", NULL},
	{.control = &control_commands[CONTROL_STATUS]},
	{.control = &control_commands[CONTROL_PANIC]},
	{.control = &control_commands[CONTROL_PRESET]},
	{.control = &control_commands[CONTROL_ROOT]},
	{.control = &control_commands[CONTROL_RELOAD]},
	{"ports", command_ports, "list the MIDI ports latticed can connect to", NULL},
	{"connect", connect_command, "connect two MIDI ports by name (ALSA sequencer)", NULL},
	{"table", command_table, "print the lattice, its chords and the key map", NULL},
	{"render", command_render, "retune a MIDI file", NULL},
	{"draw", command_draw, "draw the lattice or a keyboard chart as SVG", NULL},
	{"view", command_view, "serve a live page of the running daemon (the lattice, lit)", NULL},
};
#define COMMAND_COUNT ((int)(sizeof commands / sizeof commands[0]))

static const char *command_name(const struct command *c)
{
	return c->control ? c->control->name : c->name;
}

static void usage(FILE *f)
{
	fprintf(f,
		"Usage: latticed COMMAND [OPTIONS]\n"
		"Retune MIDI to just-intonation lattices (combination product sets).\n"
		"\nCommands:\n");
	for (int i = 0; i < COMMAND_COUNT; i++)
		fprintf(f, "  %-8s %s\n", command_name(&commands[i]),
			commands[i].control ? commands[i].control->summary : commands[i].summary);
	fprintf(f,
		"\nOptions:\n"
		"  -h, --help     show this help ('latticed COMMAND --help' for a command)\n"
		"  -V, --version  show the version\n"
		"\nConfiguration: %s (see latticed.conf(5)).\n",
		default_config_path);
}

int main(int argc, char **argv)
{
	if (argc < 2) {
		usage(stderr);
		return EXIT_USAGE;
	}
	const char *name = argv[1];
	if (strcmp(name, "-h") == 0 || strcmp(name, "--help") == 0) {
		usage(stdout);
		return 0;
	}
	if (strcmp(name, "-V") == 0 || strcmp(name, "--version") == 0) {
		printf("latticed %s (backends: %s)\n", LATTICED_VERSION, midi_io_available());
		return 0;
	}
	for (int i = 0; i < COMMAND_COUNT; i++) {
		const struct command *c = &commands[i];
		if (strcmp(name, command_name(c)) == 0) {
			/* getopt names argv[0] in its messages: "latticed table: ..." */
			char program[64];
			snprintf(program, sizeof program, "latticed %s", name);
			argv[1] = program;
			if (c->control)
				return control_cmd_run(c->control, argc - 1, argv + 1, default_config_path);
			return c->run(argc - 1, argv + 1);
		}
	}
	if (name[0] == '-')
		fprintf(stderr, "latticed: unknown option '%s'\n", name);
	else
		fprintf(stderr, "latticed: unknown command '%s'\n", name);
	fprintf(stderr, "Try 'latticed --help'.\n");
	return EXIT_USAGE;
}
