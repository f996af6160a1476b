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
#include <unistd.h>

#include "config.h"
#include "table_cmd.h"

#define EXIT_USAGE 2

static const char default_config_path[] = LATTICED_SYSCONFDIR "/latticed/latticed.conf";

static void print_report(const struct config_report *r)
{
	if (r->length)
		fprintf(stderr, "%.*s", (int)r->length, r->text);
}

/*
 * Loads --config FILE, or the system config when it exists, or the
 * built-in defaults (the same values as the shipped file).
 */
static int load_config(const char *path, struct config *cfg)
{
	struct config_report report;
	if (!path) {
		if (access(default_config_path, F_OK) != 0) {
			config_defaults(cfg);
			return 0;
		}
		path = default_config_path;
	}
	bool ok = config_load(path, cfg, &report);
	print_report(&report);
	return ok ? 0 : 1;
}

static int build_tuning(const struct config *cfg, int preset, struct tuning **out)
{
	struct config_report report = {0};
	struct tuning *t = malloc(sizeof *t);
	if (!t) {
		fprintf(stderr, "latticed: out of memory building the tuning\n");
		return 1;
	}
	bool ok = config_build_tuning(cfg, preset, t, &report);
	print_report(&report);
	if (!ok) {
		free(t);
		return 1;
	}
	*out = t;
	return 0;
}

static void table_usage(FILE *f)
{
	fprintf(f,
		"Usage: latticed table [--config FILE] [--preset NAME] [--json]\n"
		"Print the lattice (tones, chords) and what every key plays.\n"
		"\n"
		"  -c, --config FILE  read FILE instead of %s\n"
		"  -p, --preset NAME  show preset NAME instead of the main tuning\n"
		"  -j, --json         one JSON object instead of the text table\n"
		"  -h, --help         show this help\n",
		default_config_path);
}

static int command_table(int argc, char **argv)
{
	static const struct option options[] = {
		{"config", required_argument, NULL, 'c'},
		{"json", no_argument, NULL, 'j'},
		{"preset", required_argument, NULL, 'p'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	const char *config_path = NULL, *preset_name = NULL;
	bool json = false;
	int opt;
	while ((opt = getopt_long(argc, argv, "c:jp:h", options, NULL)) != -1) {
		switch (opt) {
		case 'c':
			config_path = optarg;
			break;
		case 'p':
			preset_name = optarg;
			break;
		case 'j':
			json = true;
			break;
		case 'h':
			table_usage(stdout);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed table --help'.\n");
			return EXIT_USAGE;
		}
	}
	if (optind < argc) {
		fprintf(stderr, "latticed table: unexpected argument '%s'\nTry 'latticed table --help'.\n",
			argv[optind]);
		return EXIT_USAGE;
	}

	struct config *cfg = malloc(sizeof *cfg);
	struct tuning *t = NULL;
	int rc = cfg ? load_config(config_path, cfg) : 1;
	int preset = 0;
	if (rc == 0 && preset_name) {
		preset = config_find_preset(cfg, preset_name);
		if (preset < 0) {
			fprintf(stderr, "latticed table: %s has no preset '%s'\n", cfg->path, preset_name);
			rc = 1;
		}
	}
	if (rc == 0)
		rc = build_tuning(cfg, preset, &t);
	if (rc == 0) {
		if (json)
			rc = table_print_json(stdout, cfg, preset, t) == 0 ? 0 : 1;
		else
			table_print_text(stdout, cfg, preset, t);
		if (fflush(stdout) != 0) {
			perror("latticed: writing the table");
			rc = 1;
		}
	}
	free(t);
	free(cfg);
	return rc;
}

struct command {
	const char *name;
	int (*run)(int argc, char **argv);
	const char *summary;
};

static const struct command commands[] = {
	{"table", command_table, "print the lattice, its chords and the key map"},
};
#define COMMAND_COUNT ((int)(sizeof commands / sizeof commands[0]))

static void usage(FILE *f)
{
	fprintf(f,
		"Usage: latticed COMMAND [OPTIONS]\n"
		"Retune MIDI to just-intonation lattices (combination product sets).\n"
		"\nCommands:\n");
	for (int i = 0; i < COMMAND_COUNT; i++)
		fprintf(f, "  %-8s %s\n", commands[i].name, commands[i].summary);
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
		printf("latticed %s\n", LATTICED_VERSION);
		return 0;
	}
	for (int i = 0; i < COMMAND_COUNT; i++) {
		if (strcmp(name, commands[i].name) == 0) {
			/* getopt names argv[0] in its messages: "latticed table: ..." */
			char program[64];
			snprintf(program, sizeof program, "latticed %s", name);
			argv[1] = program;
			return commands[i].run(argc - 1, argv + 1);
		}
	}
	if (name[0] == '-')
		fprintf(stderr, "latticed: unknown option '%s'\n", name);
	else
		fprintf(stderr, "latticed: unknown command '%s'\n", name);
	fprintf(stderr, "Try 'latticed --help'.\n");
	return EXIT_USAGE;
}
