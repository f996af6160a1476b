/*
 * table_syx: `latticed table --syx FILE`, the shown tuning as a MIDI
 * Tuning Standard file for a synth to keep (see table_syx.c).
 */
#ifndef LATTICED_TABLE_SYX_H
#define LATTICED_TABLE_SYX_H

#include <stdint.h>

#include "latticed/tuning_dump.h"
#include "table_print.h"

struct table_syx {
	const char *path;              /* "-": standard output */
	enum tuning_dump_form form;
	uint8_t device;                /* TUNING_DUMP_ALL_DEVICES or 0..126 */
	uint8_t program;               /* tuning program 0..127 */
};

/* Writes the file (replaced whole, or written in place if it is a FIFO or
 * a device) and says what it holds on stdout unless it is stdout itself;
 * returns the exit status (0, or 1 after one line on stderr). */
int table_write_syx(const struct table_view *v, const struct table_syx *syx);

#endif
