/*
 * state_file: locating, reading and writing the state (model in
 * state_file.h).
 */
#include "state_file.h"

#include <errno.h>
#include <json-c/json.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "smf_file.h"

#define STATE_NAME "state.json"

bool state_file_locate(const char *setting, char *path, size_t size, bool *make_parents,
		       char *why, size_t why_size)
{
	why[0] = '\0';
	*make_parents = false;
	if (strcmp(setting, "none") == 0)
		return false;
	if (strcmp(setting, "auto") != 0) {
		snprintf(path, size, "%s", setting);
		return true;
	}
	const char *systemd = getenv("STATE_DIRECTORY");
	const char *xdg = getenv("XDG_STATE_HOME");
	const char *home = getenv("HOME");
	int n;
	if (systemd && systemd[0] == '/') {
		n = snprintf(path, size, "%.*s/" STATE_NAME, (int)strcspn(systemd, ":"), systemd);
	} else if (xdg && xdg[0] == '/') {
		n = snprintf(path, size, "%s/latticed/" STATE_NAME, xdg);
		*make_parents = true;
	} else if (home && home[0] == '/') {
		n = snprintf(path, size, "%s/.local/state/latticed/" STATE_NAME, home);
		*make_parents = true;
	} else {
		snprintf(why, why_size, "no state directory: neither STATE_DIRECTORY, XDG_STATE_HOME nor HOME is set; set state_file to a path in [daemon]");
		return false;
	}
	if (n < 0 || (size_t)n >= size) {
		snprintf(why, why_size, "the state directory's path is too long; set state_file to a shorter path in [daemon]");
		return false;
	}
	return true;
}

/* A string member of o no longer than size - 1, copied into out. */
static bool member_text(struct json_object *o, const char *key, char *out, size_t size)
{
	struct json_object *v;
	if (!json_object_object_get_ex(o, key, &v) || !json_object_is_type(v, json_type_string))
		return false;
	const char *text = json_object_get_string(v);
	size_t length = (size_t)json_object_get_string_len(v);
	if (length >= size || strlen(text) != length)
		return false;
	memcpy(out, text, length + 1);
	return true;
}

static enum state_read parse(const char *text, size_t length, struct state *out, char *why,
			     size_t why_size)
{
	while (length > 0 && (text[length - 1] == '\n' || text[length - 1] == ' ' ||
			      text[length - 1] == '\t' || text[length - 1] == '\r'))
		length--;
	struct json_tokener *tok = json_tokener_new();
	if (!tok) {
		snprintf(why, why_size, "out of memory reading it");
		return STATE_BAD;
	}
	struct json_object *o = json_tokener_parse_ex(tok, text, (int)length);
	bool whole = o && json_tokener_get_error(tok) == json_tokener_success &&
		     json_tokener_get_parse_end(tok) == length;
	json_tokener_free(tok);
	enum state_read result = STATE_BAD;
	struct json_object *format;
	if (!whole || !json_object_is_type(o, json_type_object))
		snprintf(why, why_size, "it is not a JSON object (corrupt)");
	else if (!json_object_object_get_ex(o, "format", &format) ||
		 !json_object_is_type(format, json_type_int) || json_object_get_int(format) != STATE_FORMAT)
		snprintf(why, why_size, "its format is not %d", STATE_FORMAT);
	else if (!member_text(o, "config", out->config, sizeof out->config) ||
		 !member_text(o, "preset", out->preset, sizeof out->preset) ||
		 !member_text(o, "root", out->root, sizeof out->root) || !out->preset[0] || !out->root[0])
		snprintf(why, why_size, "config, preset or root is missing or not a usable string (corrupt)");
	else
		result = STATE_READ;
	json_object_put(o);
	return result;
}

enum state_read state_file_read(const char *path, struct state *out, char *why, size_t why_size)
{
	memset(out, 0, sizeof *out);
	struct stat st;
	if (stat(path, &st) != 0) {
		if (errno == ENOENT)
			return STATE_ABSENT;
		snprintf(why, why_size, "cannot read it: %s", strerror(errno));
		return STATE_BAD;
	}
	if (!S_ISREG(st.st_mode) || st.st_size > STATE_FILE_MAX) {
		snprintf(why, why_size, "it is %s", S_ISREG(st.st_mode) ? "larger than 4 KiB (corrupt)"
									 : "not a regular file");
		return STATE_BAD;
	}
	uint8_t *bytes = NULL;
	size_t length = 0;
	struct core_error err;
	if (!smf_file_read(path, &bytes, &length, &err)) {
		snprintf(why, why_size, "%s", err.text);
		return STATE_BAD;
	}
	enum state_read result = length > STATE_FILE_MAX
		? (snprintf(why, why_size, "it is larger than 4 KiB (corrupt)"), STATE_BAD)
		: parse((const char *)bytes, length, out, why, why_size);
	free(bytes);
	return result;
}

/* Makes the missing directories above path, each 0700. */
static bool make_directories(const char *path, char *why, size_t why_size)
{
	char dir[CONFIG_PATH_MAX];
	snprintf(dir, sizeof dir, "%s", path);
	for (char *p = dir + 1; (p = strchr(p, '/')) != NULL; p++) {
		*p = '\0';
		if (mkdir(dir, 0700) != 0 && errno != EEXIST) {
			snprintf(why, why_size, "cannot make %s: %s", dir, strerror(errno));
			return false;
		}
		*p = '/';
	}
	return true;
}

bool state_file_write(const char *path, bool make_parents, const struct state *s,
		      char *why, size_t why_size)
{
	if (make_parents && !make_directories(path, why, why_size))
		return false;
	struct json_object *o = json_object_new_object();
	json_object_object_add(o, "format", json_object_new_int(STATE_FORMAT));
	json_object_object_add(o, "config", json_object_new_string(s->config));
	json_object_object_add(o, "preset", json_object_new_string(s->preset));
	json_object_object_add(o, "root", json_object_new_string(s->root));
	const char *text = json_object_to_json_string_ext(o, JSON_C_TO_STRING_PRETTY);
	char line[STATE_FILE_MAX];
	int n = snprintf(line, sizeof line, "%s\n", text);
	json_object_put(o);
	struct core_error err;
	if (n < 0 || (size_t)n >= sizeof line) {
		snprintf(why, why_size, "the state is too long to write");
		return false;
	}
	if (!smf_file_write(path, (const uint8_t *)line, (size_t)n, &err)) {
		snprintf(why, why_size, "%s", err.text);
		return false;
	}
	return true;
}
