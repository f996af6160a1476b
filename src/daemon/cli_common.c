/*
 * cli_common: config loading and argument reading for the offline commands
 * (see cli_common.h).  The lists in the messages (presets by number and
 * name, the first tones by label) are what a player needs to retype the
 * command right.
 */
#include "cli_common.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

void cli_print_report(const struct config_report *r)
{
	if (r->length)
		fprintf(stderr, "%.*s", (int)r->length, r->text);
}

int cli_load_config(const char *path, const char *default_path, struct config *cfg)
{
	struct config_report report;
	bool ok = config_load_or_defaults(path, default_path, cfg, &report, NULL);
	cli_print_report(&report);
	return ok ? 0 : 1;
}

void cli_config_name(const struct config *cfg, const char *default_path, char *buf, size_t size)
{
	bool defaults = strcmp(cfg->path, CONFIG_BUILTIN_NAME) == 0;
	if (defaults && access(default_path, F_OK) != 0)
		snprintf(buf, size, "(built-in defaults: there is no %s)", default_path);
	else
		snprintf(buf, size, "%s", cfg->path);
}

int cli_build_tuning(const struct config *cfg, int preset, struct tuning **out)
{
	struct config_report report = {0};
	struct tuning *t = malloc(sizeof *t);
	if (!t) {
		fprintf(stderr, "latticed: out of memory building the tuning\n");
		return 1;
	}
	bool ok = tuning_build(cfg, preset, t, &report);
	cli_print_report(&report);
	if (!ok) {
		free(t);
		return 1;
	}
	*out = t;
	return 0;
}

int cli_find_preset(const char *command, const struct config *cfg, const char *text)
{
	int preset = config_find_preset_or_number(cfg, text);
	if (preset >= 0)
		return preset;
	fprintf(stderr, "latticed %s: %s has no preset '%s', expected a number from 0 to %d or a name:",
		command, cfg->path, text, cfg->preset_count - 1);
	for (int i = 0; i < cfg->preset_count; i++)
		fprintf(stderr, "%s %d=%s", i ? "," : "", i, cfg->presets[i].name);
	fputc('\n', stderr);
	return -1;
}

int cli_find_root(const char *command, const struct config *cfg, int preset,
		  const struct lattice *lat, const char *text)
{
	int slot = tuning_root_slot(lat, text);
	if (slot >= 0)
		return slot;
	char label[LATTICE_LABEL_MAX];
	fprintf(stderr, "latticed %s: preset %s has no root '%s', expected home, a number from 0 to %d"
		" (n: tone n-1 becomes 1/1) or a tone's label such as %s\n",
		command, cfg->presets[preset].name, text, lat->tone_count,
		lattice_label(&lat->spec, lat->tones[0].seeds, label, sizeof label));
	return -1;
}
