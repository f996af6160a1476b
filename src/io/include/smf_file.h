/*
 * smf_file: the file backend of the I/O layer, whole files in and out.
 *
 * Model: a MIDI file is small enough to hold in memory, so it is read in
 * one piece and written in one piece.  "-" means standard input or
 * standard output.  Writing never leaves a half-written file under the
 * name asked for: the bytes go to a temporary file in the same directory,
 * are flushed to the disk (fsync), and only then renamed over the target,
 * which is atomic on POSIX file systems; on any failure the temporary file
 * is removed and the target is left as it was.  Only regular files are
 * replaced that way: a FIFO or a device is written to as it is.
 *
 * Errors are one sentence in err->text without the path ("cannot open: No
 * such file or directory"); the caller puts the path in front.
 */
#ifndef LATTICED_SMF_FILE_H
#define LATTICED_SMF_FILE_H

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "latticed/error.h"

/* Larger files are refused rather than read into memory (256 MB). */
#define SMF_FILE_MAX ((size_t)256 << 20)

/* True when path names standard input or output. */
bool smf_file_is_stdio(const char *path);

/* Reads the whole file (or stdin) into *bytes, which the caller free()s. */
bool smf_file_read(const char *path, uint8_t **bytes, size_t *length, struct core_error *err);

/* Replaces path with exactly these bytes (or writes them to stdout).  A
 * FIFO or character device at path, or behind a symbolic link there, is
 * written in place instead; a link of another user in a sticky directory
 * anyone can write to is refused (see smf_file.c). */
bool smf_file_write(const char *path, const uint8_t *bytes, size_t length,
		    struct core_error *err);

#endif
