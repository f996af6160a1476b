/*
 * control_path: see control_path.h.  The directory checks follow the
 * kernel's own trust model for shared directories: root and the daemon's
 * user are trusted, a directory others may write into is safe only when
 * sticky (they can add names there but not remove or rename ours).
 */
/* S_ISVTX, the sticky bit, is an X/Open interface */
#define _XOPEN_SOURCE 700
#include "control_path.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static const char system_path[] = "/run/latticed/control";

/* Writes `dir` + `tail` into out; false if it does not fit or dir is unset. */
static bool join(char *out, size_t size, const char *dir, size_t dir_length, const char *tail)
{
	if (!dir || dir_length == 0)
		return false;
	int n = snprintf(out, size, "%.*s%s", (int)dir_length, dir, tail);
	return n > 0 && (size_t)n < size;
}

static int auto_paths(char out[][CONTROL_PATH_MAX])
{
	int count = 0;
	const char *runtime = getenv("RUNTIME_DIRECTORY");
	if (runtime && join(out[count], CONTROL_PATH_MAX, runtime, strcspn(runtime, ":"), "/control"))
		count++;
	const char *xdg = getenv("XDG_RUNTIME_DIR");
	if (xdg && join(out[count], CONTROL_PATH_MAX, xdg, strlen(xdg), "/latticed/control"))
		count++;
	snprintf(out[count++], CONTROL_PATH_MAX, "%s", system_path);
	return count;
}

bool control_path_for_daemon(const char *setting, char *out, size_t size)
{
	if (strcmp(setting, "none") == 0)
		return false;
	if (strcmp(setting, "auto") != 0) {
		int n = snprintf(out, size, "%s", setting);
		if (n < 0 || (size_t)n >= size)
			out[0] = '\0';
		return true;
	}
	char paths[CONTROL_PATH_CANDIDATES][CONTROL_PATH_MAX];
	auto_paths(paths);
	snprintf(out, size, "%s", paths[0]);
	return true;
}

int control_path_candidates(const char *setting, char out[][CONTROL_PATH_MAX])
{
	if (strcmp(setting, "auto") != 0 && strcmp(setting, "none") != 0) {
		snprintf(out[0], CONTROL_PATH_MAX, "%s", setting);
		return 1;
	}
	int count = auto_paths(out);
	/* the same place twice (XDG_RUNTIME_DIR=/run, say) is tried once */
	for (int i = count - 1; i > 0; i--)
		for (int j = 0; j < i; j++)
			if (strcmp(out[i], out[j]) == 0) {
				memmove(out[i], out[i + 1], (size_t)(count - i - 1) * CONTROL_PATH_MAX);
				count--;
				break;
			}
	return count;
}

/* ---- is the place safe? ------------------------------------------------------ */

static const char *kind_of(mode_t mode)
{
	if (S_ISREG(mode))
		return "a regular file";
	if (S_ISDIR(mode))
		return "a directory";
	if (S_ISLNK(mode))
		return "a symbolic link";
	if (S_ISFIFO(mode))
		return "a FIFO";
	if (S_ISCHR(mode) || S_ISBLK(mode))
		return "a device";
	return "not a regular file";
}

static bool trusted(uid_t uid)
{
	return uid == 0 || uid == geteuid();
}

static bool check_directory(const char *dir, const struct stat *st, char *err, size_t size)
{
	mode_t mode = st->st_mode;
	if (!S_ISDIR(mode)) {
		snprintf(err, size,
			 "the control socket path goes through %s, which is %s, not a directory (set control_socket in [daemon] to another path)",
			 dir, kind_of(mode));
		return false;
	}
	if (!trusted(st->st_uid)) {
		snprintf(err, size,
			 "the control socket directory %s belongs to uid %ld, not to root or to latticed's user (uid %ld), who could replace the socket: chown it, or set control_socket in [daemon] to a directory of your own",
			 dir, (long)st->st_uid, (long)geteuid());
		return false;
	}
	if ((mode & (S_IWGRP | S_IWOTH)) && !(mode & S_ISVTX)) {
		snprintf(err, size,
			 "the control socket directory %s is writable by %s (mode %04o) and not sticky, so another user could replace the socket: run 'chmod go-w %s' (or 'chmod +t'), or set control_socket in [daemon] to a directory of your own",
			 dir, (mode & S_IWOTH) ? "everyone" : "its group", (unsigned)(mode & 07777), dir);
		return false;
	}
	return true;
}

/* One directory on the way; `last` is the socket's own (created if missing). */
static bool check_step(const char *dir, bool last, char *err, size_t size)
{
	struct stat st;
	if (lstat(dir, &st) != 0 && last && errno == ENOENT && mkdir(dir, 0750) != 0 && errno != EEXIST) {
		snprintf(err, size,
			 "cannot create the control socket directory %s: %s (set control_socket in [daemon] to a writable place, or none)",
			 dir, strerror(errno));
		return false;
	}
	if (lstat(dir, &st) != 0) {
		snprintf(err, size,
			 "cannot use the control socket directory %s: %s (set control_socket in [daemon] to a writable place, or none)",
			 dir, strerror(errno));
		return false;
	}
	if (S_ISLNK(st.st_mode)) {
		if (last) {
			snprintf(err, size,
				 "the control socket directory %s is a symbolic link; latticed does not follow it (whoever changes the link would choose where the socket goes): name the real directory in control_socket in [daemon]",
				 dir);
			return false;
		}
		if (!trusted(st.st_uid)) {
			snprintf(err, size,
				 "the control socket path goes through %s, a symbolic link owned by uid %ld, not by root or latticed's user: name the real directory in control_socket in [daemon]",
				 dir, (long)st.st_uid);
			return false;
		}
		if (stat(dir, &st) != 0) {
			snprintf(err, size, "cannot use the control socket directory %s: %s", dir, strerror(errno));
			return false;
		}
	}
	return check_directory(dir, &st, err, size);
}

/* Every directory from the root (or the working directory) down to dir. */
static bool check_directories(const char *dir, char *err, size_t size)
{
	char step[CONTROL_PATH_MAX];
	size_t length = strlen(dir);
	if (!check_step(dir[0] == '/' ? "/" : ".", length == 1 && dir[0] == '/', err, size))
		return false;
	for (size_t end = 1; end <= length; end++) {
		if (end < length && dir[end] != '/')
			continue;
		if (dir[end - 1] == '/')
			continue; /* "//" or a trailing slash */
		memcpy(step, dir, end);
		step[end] = '\0';
		if (!check_step(step, end == length, err, size))
			return false;
	}
	return true;
}

enum control_path_state control_path_prepare(const char *path, char *err, size_t err_size)
{
	char dir[CONTROL_PATH_MAX];
	snprintf(dir, sizeof dir, "%s", path);
	char *slash = strrchr(dir, '/');
	if (!slash)
		snprintf(dir, sizeof dir, ".");
	else if (slash == dir)
		dir[1] = '\0';
	else
		*slash = '\0';
	if (!check_directories(dir, err, err_size))
		return CONTROL_PATH_REFUSED;
	struct stat st;
	if (lstat(path, &st) != 0) {
		if (errno == ENOENT)
			return CONTROL_PATH_FREE;
		snprintf(err, err_size, "cannot use the control socket %s: %s", path, strerror(errno));
		return CONTROL_PATH_REFUSED;
	}
	if (S_ISSOCK(st.st_mode))
		return CONTROL_PATH_SOCKET;
	snprintf(err, err_size,
		 "%s is %s, not a socket, and latticed will not remove it: move it away, or set control_socket in [daemon] to another path",
		 path, kind_of(st.st_mode));
	return CONTROL_PATH_REFUSED;
}

bool control_path_remove_stale(const char *path, char *err, size_t err_size)
{
	struct stat st;
	if (lstat(path, &st) == 0 && !S_ISSOCK(st.st_mode)) {
		snprintf(err, err_size, "%s is %s, not a socket, and latticed will not remove it", path,
			 kind_of(st.st_mode));
		return false;
	}
	if (unlink(path) != 0 && errno != ENOENT) {
		snprintf(err, err_size, "cannot remove the stale control socket %s: %s", path, strerror(errno));
		return false;
	}
	return true;
}
