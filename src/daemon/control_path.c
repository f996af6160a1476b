/*
 * control_path: see control_path.h.
 */
#include "control_path.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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
