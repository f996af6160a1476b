/*
 * table_syx: the shown tuning (preset and root) as MTS messages in a .syx
 * file: the raw SysEx bytes one after another, F0 ... F7, the form SysEx
 * librarians read and send.  The bytes come from the core's tuning_dump;
 * the file is written like every file latticed writes (smf_file_write:
 * a temporary file renamed into place, or a FIFO or a raw MIDI device such
 * as /dev/snd/midiC1D0 written directly, which sends the tuning at once).
 *
 * A bulk dump carries a name: the preset's, with the root's label after
 * an '@' when it is not home ("dekany@1.5"), cut to 16 characters.
 */
#include "table_syx.h"

#include <stdio.h>
#include <string.h>

#include "smf_file.h"

static void dump_name(const struct table_view *v, char *buf, size_t size)
{
	char root[LATTICE_LABEL_MAX], ratio[RATIO_TEXT_MAX];
	table_root_text(v, root, sizeof root, ratio, sizeof ratio);
	if (v->root == 0)
		snprintf(buf, size, "%s", v->cfg->presets[v->preset].name);
	else
		snprintf(buf, size, "%s@%s", v->cfg->presets[v->preset].name, root);
}

int table_write_syx(const struct table_view *v, const struct table_syx *syx)
{
	char name[ENGINE_NAME_MAX + LATTICE_LABEL_MAX + 2];
	dump_name(v, name, sizeof name);
	uint8_t bytes[TUNING_DUMP_MAX];
	size_t length = tuning_dump_build(syx->form, &v->tuning->keymap, syx->device, syx->program,
					  name, bytes, sizeof bytes);
	struct core_error err;
	if (length == 0 || !smf_file_write(syx->path, bytes, length, &err)) {
		fprintf(stderr, "latticed table: %s: %s\n",
			smf_file_is_stdio(syx->path) ? "standard output" : syx->path,
			length == 0 ? "the tuning does not fit the MTS messages" : err.text);
		return 1;
	}
	if (smf_file_is_stdio(syx->path))
		return 0;
	char device[16] = "all devices";
	if (syx->device != TUNING_DUMP_ALL_DEVICES)
		snprintf(device, sizeof device, "device %u", syx->device);
	char root[LATTICE_LABEL_MAX], ratio[RATIO_TEXT_MAX];
	table_root_text(v, root, sizeof root, ratio, sizeof ratio);
	printf("%s: %s, tuning program %u, %s, %zu bytes; preset %s, root %s, %d keys retuned, the others 12-TET\n",
	       syx->path,
	       syx->form == TUNING_DUMP_BULK ? "MTS bulk tuning dump" : "MTS single-note tuning changes (2 messages)",
	       syx->program, device, length, v->cfg->presets[v->preset].name, root,
	       v->tuning->keymap.sounding_count);
	if (syx->form == TUNING_DUMP_BULK && strlen(name) > TUNING_DUMP_NAME_MAX)
		printf("  name cut to 16 characters: '%.16s'\n", name);
	return fflush(stdout) == 0 ? 0 : 1;
}
