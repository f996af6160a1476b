/*
 * connect_cmd: `latticed connect [--disconnect] SRC DST`: connects a port
 * that sends (a keyboard, latticed's output) to one that receives (a
 * synth, latticed:in) by their names, patterns or client:port numbers,
 * without a daemon and whether or not latticed runs.  Only a backend with
 * connections of its own between programs has it (the ALSA sequencer);
 * what the daemon connects by itself is the config's connect lists.
 */
#include "connect_cmd.h"

#include <getopt.h>
#include <stdio.h>
#include <string.h>

#include "cli_common.h"
#include "midi_io.h"

static void usage(FILE *f)
{
	fprintf(f,
		"Usage: latticed connect [--disconnect] SRC DST\n"
		"Connect a MIDI port that sends (SRC) to one that receives (DST) on the ALSA\n"
		"sequencer. Each is a 'client:port' name, a client or a port name, a pattern\n"
		"with * and ? matching exactly one port, or a client:port number as\n"
		"'latticed ports' shows them. For example:\n"
		"  latticed connect latticed:synth 'FLUID Synth*'\n"
		"  latticed connect 'USB Keys*' latticed:in\n"
		"\n"
		"  -d, --disconnect  remove that connection instead\n"
		"  -h, --help        show this help\n");
}

static void print_line(void *context, const char *line)
{
	(void)context;
	printf("%s\n", line);
}

int connect_command(int argc, char **argv)
{
	static const struct option options[] = {
		{"disconnect", no_argument, NULL, 'd'},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	bool undo = false;
	int opt;
	while ((opt = getopt_long(argc, argv, "dh", options, NULL)) != -1) {
		switch (opt) {
		case 'd':
			undo = true;
			break;
		case 'h':
			usage(stdout);
			return 0;
		default:
			fprintf(stderr, "Try 'latticed connect --help'.\n");
			return EXIT_USAGE;
		}
	}
	if (argc - optind != 2) {
		if (argc - optind < 2)
			fprintf(stderr, "latticed connect: expected SRC and DST, the port that sends and the one that receives\n");
		else
			fprintf(stderr, "latticed connect: unexpected argument '%s'\n", argv[optind + 2]);
		fprintf(stderr, "Try 'latticed connect --help'.\n");
		return EXIT_USAGE;
	}
	const struct midi_io_backend *b = midi_io_find("alsa");
	if (!b || !b->connect) {
		fprintf(stderr, "latticed connect: this build has no ALSA sequencer backend (built with: %s);"
			" rebuild with libasound2-dev installed, or connect with the config's connect lists\n",
			midi_io_available());
		return 1;
	}
	char err[2048] = "";
	if (!b->connect(argv[optind], argv[optind + 1], undo, print_line, NULL, err, sizeof err)) {
		fprintf(stderr, "latticed connect: %s\n", err);
		return 1;
	}
	return fflush(stdout) == 0 ? 0 : 1;
}
