/*
 * smf_file: whole-file reading and atomic writing (contract in smf_file.h).
 *
 * What is at the output name decides how it is written.  Nothing, or a
 * regular file: replaced atomically.  The temporary file is
 * ".NAME.XXXXXX" beside the target (created with O_EXCL and O_NOFOLLOW,
 * so it is never an existing file or a planted link), so the rename never
 * crosses a file system.  It gets the mode (and, where permitted, the
 * owner) the target already has, or the mode a newly created file would
 * get (0666 less the umask): a render must not leave a file only its owner
 * can read where the user expected an ordinary one.  The directory is
 * synced after the rename so the new name survives a power cut, which
 * matters on a Raspberry Pi whose SD card is pulled after a session.
 *
 * A FIFO or a character device (a synth's port, /dev/null) is opened and
 * written as it is: replacing it would destroy it.  A symbolic link is
 * followed by the kernel, never resolved by hand first: a link to a
 * regular file replaces that file (beside it, under the name the kernel
 * reached), a link to a FIFO or device (/proc/self/fd/1) is written
 * through.  A link owned by another user in a sticky directory anyone may
 * write to (/tmp) is refused, whatever fs.protected_symlinks says: that is
 * how one user makes another overwrite a file of their choice.
 */
/* O_PATH and mkostemp() are Linux / GNU interfaces; realpath() X/Open */
#define _GNU_SOURCE

#include "smf_file.h"

#include <errno.h>
#include <fcntl.h>
#include <limits.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define READ_CHUNK 65536

bool smf_file_is_stdio(const char *path)
{
	return strcmp(path, "-") == 0;
}

static bool read_fd(int fd, uint8_t **bytes, size_t *length, struct core_error *err)
{
	uint8_t *buf = NULL;
	size_t used = 0, capacity = 0;
	for (;;) {
		if (capacity - used < READ_CHUNK) {
			size_t bigger = capacity ? capacity * 2 : READ_CHUNK * 4;
			if (bigger > SMF_FILE_MAX + READ_CHUNK)
				bigger = SMF_FILE_MAX + READ_CHUNK;
			uint8_t *b = realloc(buf, bigger);
			if (!b) {
				free(buf);
				return core_fail(err, "", "out of memory reading %zu bytes", used);
			}
			buf = b;
			capacity = bigger;
		}
		ssize_t n = read(fd, buf + used, capacity - used);
		if (n < 0 && errno == EINTR)
			continue;
		if (n < 0) {
			int saved = errno;
			free(buf);
			return core_fail(err, "", "cannot read: %s", strerror(saved));
		}
		if (n == 0)
			break;
		used += (size_t)n;
		if (used > SMF_FILE_MAX) {
			free(buf);
			return core_fail(err, "", "larger than %zu MB, not a MIDI file we can hold",
					 SMF_FILE_MAX >> 20);
		}
	}
	*bytes = buf;
	*length = used;
	return true;
}

bool smf_file_read(const char *path, uint8_t **bytes, size_t *length, struct core_error *err)
{
	*bytes = NULL;
	*length = 0;
	if (smf_file_is_stdio(path))
		return read_fd(STDIN_FILENO, bytes, length, err);
	int fd = open(path, O_RDONLY);
	if (fd < 0)
		return core_fail(err, "", "cannot open: %s", strerror(errno));
	struct stat st;
	if (fstat(fd, &st) == 0 && S_ISDIR(st.st_mode)) {
		close(fd);
		return core_fail(err, "", "cannot read: it is a directory");
	}
	bool ok = read_fd(fd, bytes, length, err);
	close(fd);
	return ok;
}

static bool write_all(int fd, const uint8_t *bytes, size_t length)
{
	while (length > 0) {
		ssize_t n = write(fd, bytes, length);
		if (n < 0 && errno == EINTR)
			continue;
		if (n < 0)
			return false;
		bytes += n;
		length -= (size_t)n;
	}
	return true;
}

struct smf_sink {
	int fd;
	struct core_error *err;    /* the fill's own failures */
};

bool smf_sink_put(struct smf_sink *sink, const void *bytes, size_t length)
{
	return write_all(sink->fd, bytes, length);
}

struct core_error *smf_sink_error(struct smf_sink *sink)
{
	return sink->err;
}

/* What goes into the file, and where its own failures are told. */
struct source {
	smf_file_fill_fn fill;
	void *context;
	struct core_error *err;
};

/* Writes the source's bytes to fd; false with *why set ("cannot write" and
 * errno in *saved, or the fill's own sentence already in err). */
static bool fill_fd(int fd, const struct source *src, const char **why, int *saved)
{
	struct smf_sink sink = { .fd = fd, .err = src->err };
	src->err->text[0] = '\0';
	errno = 0;
	if (src->fill(src->context, &sink))
		return true;
	*saved = errno;
	*why = src->err->text[0] ? NULL : "cannot write";
	return false;
}

/* The failure of a fill: its own sentence, or `why` with the errno. */
static bool fill_failed(struct core_error *err, const char *why, int saved)
{
	if (!why)
		return false; /* err holds the fill's own sentence */
	if (saved)
		return core_fail(err, "", "%s: %s", why, strerror(saved));
	return core_fail(err, "", "%s", why);
}

static mode_t new_file_mode(void)
{
	mode_t mask = umask(0);
	umask(mask);
	return 0666 & ~mask;
}

/* Best effort: a directory that cannot be synced still holds the file. */
static void sync_directory(const char *dir)
{
	int fd = open(dir, O_RDONLY | O_CLOEXEC);
	if (fd < 0)
		return;
	fsync(fd);
	close(fd);
}

/* The directory part of path ("." when there is none). */
static void directory_of(const char *path, char *dir, size_t size)
{
	const char *slash = strrchr(path, '/');
	if (!slash)
		snprintf(dir, size, ".");
	else if (slash == path)
		snprintf(dir, size, "/");
	else
		snprintf(dir, size, "%.*s", (int)(slash - path), path);
}

/* Writes a new regular file at path through a temporary file and rename;
 * `old` is what is there now (NULL: nothing). */
static bool replace(const char *path, const struct stat *old, const struct source *src,
		    struct core_error *err)
{
	char dir[PATH_MAX], temp[PATH_MAX];
	directory_of(path, dir, sizeof dir);
	const char *slash = strrchr(path, '/');
	int n = snprintf(temp, sizeof temp, "%s/.%s.XXXXXX", dir, slash ? slash + 1 : path);
	if (n < 0 || (size_t)n >= sizeof temp)
		return core_fail(err, "", "cannot write: the path is too long");
	int fd = mkostemp(temp, O_NOFOLLOW | O_CLOEXEC);
	if (fd < 0)
		return core_fail(err, "", "cannot create a file in %s: %s", dir, strerror(errno));
	const char *failed = NULL;
	int saved = 0;
	bool filled = true;
	/* the file stays its owner's when root renders over it (chown clears
	 * set-id bits, so the mode is set after) */
	if (old && (old->st_uid != geteuid() || old->st_gid != getegid()))
		(void)!fchown(fd, old->st_uid, old->st_gid);
	if (!fill_fd(fd, src, &failed, &saved))
		filled = false;
	else if (fchmod(fd, old ? old->st_mode & 07777 : new_file_mode()) != 0)
		failed = "cannot set the file mode";
	else if (fsync(fd) != 0)
		failed = "cannot write (fsync)";
	if (filled && failed)
		saved = errno;
	if (close(fd) != 0 && filled && !failed) {
		failed = "cannot write (close)";
		saved = errno;
	}
	if (filled && !failed && rename(temp, path) != 0) {
		failed = "cannot rename the finished file into place";
		saved = errno;
	}
	if (!filled || failed) {
		unlink(temp);
		return fill_failed(err, failed, saved);
	}
	sync_directory(dir);
	return true;
}

/* A FIFO, a device, or a regular file that has no name to replace: written
 * where it is.  `st` says what the caller found there; open_flags add
 * O_NOFOLLOW when path itself was that thing and not a link to it. */
static bool write_in_place(const char *path, const struct stat *st, int open_flags,
			   const struct source *src, struct core_error *err)
{
	if (S_ISDIR(st->st_mode))
		return core_fail(err, "", "cannot write: it is a directory");
	if (S_ISBLK(st->st_mode))
		return core_fail(err, "", "cannot write: it is a block device (a disk); name a file");
	if (!S_ISFIFO(st->st_mode) && !S_ISCHR(st->st_mode) && !S_ISREG(st->st_mode))
		return core_fail(err, "", "cannot write: it is not a file, a FIFO or a character device");
	/* a FIFO open waits for its reader, as a shell's > does; a device open must not wait */
	int flags = O_WRONLY | O_NOCTTY | O_CLOEXEC | open_flags;
	flags |= S_ISFIFO(st->st_mode) ? 0 : O_NONBLOCK;
	flags |= S_ISREG(st->st_mode) ? O_TRUNC : 0;
	int fd = open(path, flags);
	if (fd < 0)
		return core_fail(err, "", "cannot open for writing: %s", strerror(errno));
	struct stat now;
	const char *failed = NULL;
	int saved = 0;
	bool filled = true;
	if (fstat(fd, &now) != 0 || (now.st_mode & S_IFMT) != (st->st_mode & S_IFMT)) {
		failed = "cannot write: it changed while being opened";
	} else if (isatty(fd)) {
		failed = "refusing to write a MIDI file to a terminal";
	} else if (fcntl(fd, F_SETFL, fcntl(fd, F_GETFL) & ~O_NONBLOCK) != 0) {
		failed = "cannot write";
		saved = errno;
	} else {
		filled = fill_fd(fd, src, &failed, &saved);
	}
	if (close(fd) != 0 && filled && !failed) {
		failed = "cannot write (close)";
		saved = errno;
	}
	if (filled && !failed)
		return true;
	return fill_failed(err, failed, saved);
}

/* The kernel's protected_symlinks rule (proc(5), fs.protected_symlinks):
 * a link in a sticky world-writable directory is followed only by its
 * owner, or when the directory's owner owns it. */
static bool link_may_be_followed(const char *path, const struct stat *link, struct core_error *err)
{
	char dir[PATH_MAX];
	struct stat d;
	directory_of(path, dir, sizeof dir);
	if (stat(dir, &d) != 0)
		return core_fail(err, "", "cannot look at the directory %s: %s", dir, strerror(errno));
	bool shared = (d.st_mode & (S_ISVTX | S_IWOTH)) == (S_ISVTX | S_IWOTH);
	if (shared && link->st_uid != geteuid() && link->st_uid != d.st_uid)
		return core_fail(err, "",
				 "refusing to follow a symbolic link of another user (uid %ld) in a sticky directory anyone can write to, as the kernel's protected_symlinks rule does: remove the link, or name the file itself",
				 (long)link->st_uid);
	return true;
}

static bool write_through_link(const char *path, const struct stat *link, const struct source *src,
			       struct core_error *err)
{
	if (!link_may_be_followed(path, link, err))
		return false;
	/* the kernel follows the link (and applies its own rules on the way) */
	int fd = open(path, O_PATH | O_CLOEXEC);
	if (fd < 0 && errno == ENOENT)
		return core_fail(err, "", "cannot write: it is a symbolic link to nothing (a missing file); create the file it names, or remove the link");
	if (fd < 0)
		return core_fail(err, "", "cannot follow the symbolic link: %s", strerror(errno));
	struct stat target;
	int rc = fstat(fd, &target);
	close(fd);
	if (rc != 0)
		return core_fail(err, "", "cannot follow the symbolic link: %s", strerror(errno));
	if (!S_ISREG(target.st_mode))
		return write_in_place(path, &target, 0, src, err);
	/* a regular file is replaced under the name the kernel reached, if it has one */
	char resolved[PATH_MAX];
	struct stat check;
	if (realpath(path, resolved) && lstat(resolved, &check) == 0 && S_ISREG(check.st_mode) &&
	    check.st_dev == target.st_dev && check.st_ino == target.st_ino)
		return replace(resolved, &check, src, err);
	return write_in_place(path, &target, 0, src, err);
}

bool smf_file_write_with(const char *path, smf_file_fill_fn fill, void *context,
			 struct core_error *err)
{
	struct source src = { fill, context, err };
	if (smf_file_is_stdio(path)) {
		const char *why = NULL;
		int saved = 0;
		return fill_fd(STDOUT_FILENO, &src, &why, &saved) || fill_failed(err, why, saved);
	}
	if (path[0] == '\0')
		return core_fail(err, "", "the file name is empty: name a file, or - for standard output");
	struct stat st;
	if (lstat(path, &st) != 0) {
		if (errno != ENOENT)
			return core_fail(err, "", "cannot write: %s", strerror(errno));
		return replace(path, NULL, &src, err);
	}
	if (S_ISREG(st.st_mode))
		return replace(path, &st, &src, err);
	if (S_ISLNK(st.st_mode))
		return write_through_link(path, &st, &src, err);
	return write_in_place(path, &st, O_NOFOLLOW, &src, err);
}

struct bytes {
	const uint8_t *bytes;
	size_t length;
};

static bool put_bytes(void *context, struct smf_sink *sink)
{
	const struct bytes *b = context;
	return smf_sink_put(sink, b->bytes, b->length);
}

bool smf_file_write(const char *path, const uint8_t *bytes, size_t length,
		    struct core_error *err)
{
	struct bytes b = { bytes, length };
	return smf_file_write_with(path, put_bytes, &b, err);
}

/* ---- scratch space ---------------------------------------------------------------- */

static const char *scratch_directory(void)
{
	const char *dir = getenv("TMPDIR");
	return dir && dir[0] == '/' ? dir : "/tmp";
}

bool smf_scratch_open(struct smf_scratch *s, struct core_error *err)
{
	const char *dir = scratch_directory();
	s->length = 0;
	/* unnamed: nothing to clean up, whatever happens to the process */
	s->fd = open(dir, O_TMPFILE | O_RDWR | O_CLOEXEC, 0600);
	if (s->fd >= 0)
		return true;
	char name[PATH_MAX];
	int n = snprintf(name, sizeof name, "%s/latticed-render.XXXXXX", dir);
	if (n > 0 && (size_t)n < sizeof name)
		s->fd = mkostemp(name, O_CLOEXEC);
	if (s->fd >= 0) {
		unlink(name);
		return true;
	}
	return core_fail(err, "", "cannot make a temporary file in %s for the output: %s (set TMPDIR to a directory with room)",
			 dir, strerror(errno));
}

bool smf_scratch_append(struct smf_scratch *s, const uint8_t *bytes, size_t length, struct core_error *err)
{
	if (!write_all(s->fd, bytes, length))
		return core_fail(err, "", "cannot write the temporary file in %s: %s", scratch_directory(),
				 strerror(errno));
	s->length += length;
	return true;
}

bool smf_scratch_copy(struct smf_scratch *s, uint64_t at, uint64_t length, struct smf_sink *sink)
{
	uint8_t buf[READ_CHUNK];
	while (length > 0) {
		size_t part = length < sizeof buf ? (size_t)length : sizeof buf;
		ssize_t n = pread(s->fd, buf, part, (off_t)at);
		if (n < 0 && errno == EINTR)
			continue;
		if (n <= 0)
			return core_fail(sink->err, "", "cannot read the temporary file back: %s",
					 n < 0 ? strerror(errno) : "it is shorter than written");
		if (!smf_sink_put(sink, buf, (size_t)n))
			return false;
		at += (uint64_t)n;
		length -= (uint64_t)n;
	}
	return true;
}

void smf_scratch_close(struct smf_scratch *s)
{
	if (s->fd >= 0)
		close(s->fd);
	s->fd = -1;
}
