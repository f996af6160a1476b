/*
 * table_cmd: `latticed table`, what the config's tuning plays, without a
 * daemon: the text table, --json, --keys (one keyboard period for a
 * player) or --syx FILE (an MTS file for a synth to keep).
 *
 * --preset and --root pick the tuning as `latticed preset` and `latticed
 * root` would on a running daemon, so every form previews what the daemon
 * plays after them: the key map is built for the preset, then every
 * sounding key moved by the root's shift (keymap_shift), which is what
 * the engine's retune table does.
 */
#include "table_cmd.h"

#include <getopt.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli_common.h"
#include "config_values.h"
#include "latticed/retune_table.h"
#include "table_keys.h"
#include "table_print.h"
#include "table_syx.h"

enum table_form { FORM_TEXT, FORM_JSON, FORM_KEYS, FORM_SYX };

struct table_options {
	const char *config_path, *preset, *root;
	enum table_form form;
	int forms_given;
	bool syx_option_given;         /* --single-note, --device, --program */
	struct table_syx syx;
};

static void usage(FILE *f, const char *default_config)
{
	fprintf(f,
		"Usage: latticed table [--config FILE] [--preset NAME|N] [--root N|LABEL|home]\n"
		"                      [--json | --keys | --syx FILE [--single-note] [--device N|all]\n"
		"                      [--program N]]\n"
		"Print the lattice (tones, chords) and what every key plays, or write it as MTS.\n"
		"\n"
		"  -c, --config FILE     read FILE instead of %s\n"
		"  -p, --preset NAME|N   show preset NAME, or number N (0 is the main tuning)\n"
		"  -r, --root ROOT       as after 'latticed root ROOT': N makes tone N-1 the 1/1,\n"
		"                        a LABEL (e.g. 1.5) that tone; home (or 0): no change\n"
		"  -j, --json            one JSON object instead of the text table\n"
		"  -k, --keys            one keyboard period, key by key, and the keys of each chord\n"
		"  -s, --syx FILE        write the tuning as an MTS bulk tuning dump, a .syx file\n"
		"                        (replaced whole; a FIFO or device written to; '-': stdout)\n"
		"      --single-note     --syx: single-note tuning changes instead of a bulk dump\n"
		"      --device N|all    --syx: the SysEx device ID, 0 to 126, or all (default all)\n"
		"      --program N       --syx: the tuning program, 0 to 127 (default 0)\n"
		"  -h, --help            show this help\n",
		default_config);
}

enum { OPT_SINGLE = 256, OPT_DEVICE, OPT_PROGRAM };

/* --device and --program; false after saying what was expected. */
static bool read_number(int opt, const char *arg, struct table_syx *syx)
{
	long n;
	if (opt == OPT_DEVICE && strcmp(arg, "all") == 0) {
		syx->device = TUNING_DUMP_ALL_DEVICES;
		return true;
	}
	if (opt == OPT_DEVICE && value_whole(arg, 0, 126, &n)) {
		syx->device = (uint8_t)n;
		return true;
	}
	if (opt == OPT_PROGRAM && value_whole(arg, 0, 127, &n)) {
		syx->program = (uint8_t)n;
		return true;
	}
	fprintf(stderr, "latticed table: %s is '%s', expected %s\n",
		opt == OPT_DEVICE ? "--device" : "--program", arg,
		opt == OPT_DEVICE ? "a device ID from 0 to 126, or all" : "a tuning program from 0 to 127");
	return false;
}

static int bad_usage(const char *why)
{
	if (why)
		fprintf(stderr, "latticed table: %s\n", why);
	fprintf(stderr, "Try 'latticed table --help'.\n");
	return EXIT_USAGE;
}

/* Reads the command line into o; -1 to go on, else the exit status. */
static int read_options(int argc, char **argv, const char *default_config, struct table_options *o)
{
	static const struct option options[] = {
		{"config", required_argument, NULL, 'c'},
		{"preset", required_argument, NULL, 'p'},
		{"root", required_argument, NULL, 'r'},
		{"json", no_argument, NULL, 'j'},
		{"keys", no_argument, NULL, 'k'},
		{"syx", required_argument, NULL, 's'},
		{"single-note", no_argument, NULL, OPT_SINGLE},
		{"device", required_argument, NULL, OPT_DEVICE},
		{"program", required_argument, NULL, OPT_PROGRAM},
		{"help", no_argument, NULL, 'h'},
		{NULL, 0, NULL, 0},
	};
	int opt;
	while ((opt = getopt_long(argc, argv, "c:p:r:jks:h", options, NULL)) != -1) {
		switch (opt) {
		case 'c':
			o->config_path = optarg;
			break;
		case 'p':
			o->preset = optarg;
			break;
		case 'r':
			o->root = optarg;
			break;
		case 'j':
		case 'k':
		case 's':
			o->form = opt == 'j' ? FORM_JSON : opt == 'k' ? FORM_KEYS : FORM_SYX;
			o->forms_given++;
			if (opt == 's')
				o->syx.path = optarg;
			break;
		case OPT_SINGLE:
			o->syx.form = TUNING_DUMP_SINGLE;
			o->syx_option_given = true;
			break;
		case OPT_DEVICE:
		case OPT_PROGRAM:
			o->syx_option_given = true;
			if (!read_number(opt, optarg, &o->syx))
				return EXIT_USAGE;
			break;
		case 'h':
			usage(stdout, default_config);
			return 0;
		default:
			return bad_usage(NULL);
		}
	}
	if (optind < argc) {
		fprintf(stderr, "latticed table: unexpected argument '%s'\n", argv[optind]);
		return bad_usage(NULL);
	}
	if (o->forms_given > 1)
		return bad_usage("--json, --keys and --syx each choose what to print, expected one of them");
	if (o->syx_option_given && o->form != FORM_SYX)
		return bad_usage("--single-note, --device and --program are for --syx FILE, expected --syx with them");
	return -1;
}

static int show(const struct table_view *v, const struct table_options *o)
{
	int rc = 0;
	switch (o->form) {
	case FORM_SYX:
		return table_write_syx(v, &o->syx);
	case FORM_JSON:
		rc = table_print_json(stdout, v);
		break;
	case FORM_KEYS:
		rc = table_print_keys(stdout, v);
		break;
	case FORM_TEXT:
		table_print_text(stdout, v);
		break;
	}
	if (fflush(stdout) != 0 || rc != 0) {
		perror("latticed table: writing the table");
		return 1;
	}
	return 0;
}

int table_command(int argc, char **argv, const char *default_config)
{
	struct table_options o = {.syx = {.device = TUNING_DUMP_ALL_DEVICES}};
	int rc = read_options(argc, argv, default_config, &o);
	if (rc >= 0)
		return rc;
	struct config *cfg = malloc(sizeof *cfg);
	struct tuning *t = NULL;
	struct table_view v = {.cfg = cfg};
	rc = cfg ? cli_load_config(o.config_path, default_config, cfg) : 1;
	if (rc == 0 && o.preset && (v.preset = cli_find_preset("table", cfg, o.preset)) < 0)
		rc = 1;
	if (rc == 0)
		rc = cli_build_tuning(cfg, v.preset, &t);
	if (rc == 0 && o.root &&
	    (v.root = cli_find_root("table", cfg, v.preset, &t->lattice, o.root)) < 0)
		rc = 1;
	if (rc == 0) {
		char name[CONFIG_PATH_MAX + 64];
		cli_config_name(cfg, default_config, name, sizeof name);
		if (v.root > 0)
			keymap_shift(&t->keymap, retune_root_shift(&t->lattice, v.root - 1));
		v.config_name = name;
		v.tuning = t;
		rc = show(&v, &o);
	}
	free(t);
	free(cfg);
	return rc;
}
