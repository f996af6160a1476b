/*
 * smf_file: the file backend of the I/O layer, whole files in and out.
 *
 * Model: a MIDI file is read in one piece into memory, and written in
 * one piece: from memory (smf_file_write), or by a fill function that puts
 * the bytes out in order (smf_file_write_with), so the whole output need
 * never be held; what does not fit a render's memory budget waits in an
 * unnamed scratch file meanwhile.  "-" means standard input or standard
 * output.  Writing never leaves a half-written file under the
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

/* Where a fill function puts the file's bytes, in order. */
struct smf_sink;
/* False when the bytes could not be written (errno says why). */
bool smf_sink_put(struct smf_sink *sink, const void *bytes, size_t length);
/* For a fill function's own failures: a sentence here, then return false. */
struct core_error *smf_sink_error(struct smf_sink *sink);

/* Writes all the file's bytes through smf_sink_put; false on failure. */
typedef bool (*smf_file_fill_fn)(void *context, struct smf_sink *sink);

/* smf_file_write with the bytes from fill, under the same rules: a failed
 * fill leaves the target as it was (a regular file; a FIFO or device has
 * taken what was written). */
bool smf_file_write_with(const char *path, smf_file_fill_fn fill, void *context,
			 struct core_error *err);

/* Scratch space on disk: an unnamed file in $TMPDIR (or /tmp), gone once
 * closed, whatever happens to the process.  Bytes are appended and copied
 * back out into a sink by position. */
struct smf_scratch {
	int fd;
	uint64_t length;           /* bytes appended so far */
};

bool smf_scratch_open(struct smf_scratch *s, struct core_error *err);
bool smf_scratch_append(struct smf_scratch *s, const uint8_t *bytes, size_t length, struct core_error *err);
/* The bytes [at, at + length) into the sink; false with the sink's error
 * set, or errno, like smf_sink_put. */
bool smf_scratch_copy(struct smf_scratch *s, uint64_t at, uint64_t length, struct smf_sink *sink);
void smf_scratch_close(struct smf_scratch *s);

#endif
