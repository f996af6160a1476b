/*
 * smf_file: whole-file reading and atomic writing (contract in smf_file.h).
 *
 * The temporary file is ".NAME.XXXXXX" beside the target, so the rename
 * never crosses a file system.  It gets the mode the target already has,
 * or the mode a newly created file would get (0666 less the umask): a
 * render must not leave a file only its owner can read where the user
 * expected an ordinary one.  The directory is synced after the rename so
 * the new name survives a power cut, which matters on a Raspberry Pi
 * whose SD card is pulled after a session.
 */
/* realpath() is an X/Open interface */
#define _XOPEN_SOURCE 700

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

static mode_t new_file_mode(void)
{
	mode_t mask = umask(0);
	umask(mask);
	return 0666 & ~mask;
}

/* Best effort: a directory that cannot be synced still holds the file. */
static void sync_directory(const char *dir)
{
	int fd = open(dir, O_RDONLY);
	if (fd < 0)
		return;
	fsync(fd);
	close(fd);
}

bool smf_file_write(const char *path, const uint8_t *bytes, size_t length,
		    struct core_error *err)
{
	if (smf_file_is_stdio(path)) {
		if (!write_all(STDOUT_FILENO, bytes, length))
			return core_fail(err, "", "cannot write: %s", strerror(errno));
		return true;
	}

	/* Through a symbolic link, replace the file it points to, not the link. */
	char resolved[PATH_MAX];
	struct stat st;
	bool exists = false;
	mode_t mode = 0;
	if (lstat(path, &st) == 0 && S_ISLNK(st.st_mode) && realpath(path, resolved))
		path = resolved;
	if (stat(path, &st) == 0) {
		if (S_ISDIR(st.st_mode))
			return core_fail(err, "", "cannot write: it is a directory");
		exists = true;
		mode = st.st_mode & 07777;
	}
	if (!exists)
		mode = new_file_mode();

	const char *slash = strrchr(path, '/');
	size_t dir_length = slash ? (size_t)(slash - path) : 0;
	const char *base = slash ? slash + 1 : path;
	char dir[PATH_MAX], temp[PATH_MAX];
	if (slash && dir_length == 0)
		snprintf(dir, sizeof dir, "/");
	else if (slash)
		snprintf(dir, sizeof dir, "%.*s", (int)dir_length, path);
	else
		snprintf(dir, sizeof dir, ".");
	int n = snprintf(temp, sizeof temp, "%s/.%s.XXXXXX", dir, base);
	if (n < 0 || (size_t)n >= sizeof temp)
		return core_fail(err, "", "cannot write: the path is too long");

	int fd = mkstemp(temp);
	if (fd < 0)
		return core_fail(err, "", "cannot create a file in %s: %s", dir, strerror(errno));
	const char *failed = NULL;
	int saved = 0;
	if (!write_all(fd, bytes, length))
		failed = "cannot write";
	else if (fchmod(fd, mode) != 0)
		failed = "cannot set the file mode";
	else if (fsync(fd) != 0)
		failed = "cannot write (fsync)";
	if (failed)
		saved = errno;
	if (close(fd) != 0 && !failed) {
		failed = "cannot write (close)";
		saved = errno;
	}
	if (!failed && rename(temp, path) != 0) {
		failed = "cannot rename the finished file into place";
		saved = errno;
	}
	if (failed) {
		unlink(temp);
		return core_fail(err, "", "%s: %s", failed, strerror(saved));
	}
	sync_directory(dir);
	return true;
}
