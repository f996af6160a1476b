/*
 * Tests of the state file (state_file.c): where `state_file = auto` puts
 * it (systemd.exec(5): StateDirectory= sets $STATE_DIRECTORY, a colon-
 * separated list; the XDG Base Directory Specification: $XDG_STATE_HOME,
 * by default $HOME/.local/state, directories made 0700), the round trip
 * through json-c, and every way a file is refused.  The format itself is
 * our rule (state_file.h).
 */
#define _XOPEN_SOURCE 700 /* mkdtemp, setenv */

#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "state_file.h"

static char dir[64];

static int make_dir(void **state)
{
	(void)state;
	snprintf(dir, sizeof dir, "/tmp/latticed-state-XXXXXX");
	return mkdtemp(dir) ? 0 : -1;
}

static int remove_dir(void **state)
{
	(void)state;
	static const char *const names[] = {"bad.json", "good.json", "a/b/state.json", "a/b", "a", ""};
	for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) {
		char path[CONFIG_PATH_MAX];
		snprintf(path, sizeof path, "%s/%s", dir, names[i]);
		if (remove(path) != 0 && names[i][0] == '\0')
			return -1;
	}
	return 0;
}

static void locate(const char *setting, const char *systemd, const char *xdg, const char *home,
		   const char *want, bool parents)
{
	char path[CONFIG_PATH_MAX], why[256];
	bool make = !parents;
	systemd ? setenv("STATE_DIRECTORY", systemd, 1) : unsetenv("STATE_DIRECTORY");
	xdg ? setenv("XDG_STATE_HOME", xdg, 1) : unsetenv("XDG_STATE_HOME");
	home ? setenv("HOME", home, 1) : unsetenv("HOME");
	bool found = state_file_locate(setting, path, sizeof path, &make, why, sizeof why);
	if (!want) {
		assert_false(found);
		return;
	}
	if (!found)
		fail_msg("%s: %s", setting, why);
	assert_string_equal(path, want);
	assert_int_equal(make, parents);
}

static void auto_finds_the_state_directory(void **state)
{
	(void)state;
	locate("auto", "/var/lib/latticed", "/x", "/home/p", "/var/lib/latticed/state.json", false);
	locate("auto", "/var/lib/latticed:/var/lib/other", NULL, NULL, "/var/lib/latticed/state.json", false);
	locate("auto", NULL, "/home/p/.state", "/home/p", "/home/p/.state/latticed/state.json", true);
	locate("auto", NULL, NULL, "/home/p", "/home/p/.local/state/latticed/state.json", true);
	locate("auto", NULL, "relative", "/home/p", "/home/p/.local/state/latticed/state.json", true);
	locate("/srv/show/state.json", NULL, NULL, NULL, "/srv/show/state.json", false);
	locate("none", "/var/lib/latticed", NULL, NULL, NULL, false);
	char path[CONFIG_PATH_MAX], why[256];
	bool make;
	unsetenv("STATE_DIRECTORY");
	unsetenv("XDG_STATE_HOME");
	unsetenv("HOME");
	assert_false(state_file_locate("auto", path, sizeof path, &make, why, sizeof why));
	assert_non_null(strstr(why, "set state_file to a path in [daemon]"));
	assert_false(state_file_locate("none", path, sizeof path, &make, why, sizeof why));
	assert_string_equal(why, "");
}

static void written_then_read_back(void **state)
{
	(void)state;
	char path[CONFIG_PATH_MAX], why[256];
	snprintf(path, sizeof path, "%s/a/b/state.json", dir);
	struct state s = {.config = "/etc/latticed/latticed.conf", .preset = "dekany", .root = "3.7"}, back;
	assert_int_equal(state_file_read(path, &back, why, sizeof why), STATE_ABSENT);
	assert_false(state_file_write(path, false, &s, why, sizeof why)); /* a/b missing */
	assert_true(state_file_write(path, true, &s, why, sizeof why));
	char sub[CONFIG_PATH_MAX];
	snprintf(sub, sizeof sub, "%s/a/b", dir);
	struct stat st;
	assert_int_equal(stat(sub, &st), 0);
	assert_int_equal(st.st_mode & 0777, 0700);
	assert_int_equal(state_file_read(path, &back, why, sizeof why), STATE_READ);
	assert_string_equal(back.config, s.config);
	assert_string_equal(back.preset, "dekany");
	assert_string_equal(back.root, "3.7");
	snprintf(s.root, sizeof s.root, "home");
	assert_true(state_file_write(path, true, &s, why, sizeof why)); /* replaced */
	assert_int_equal(state_file_read(path, &back, why, sizeof why), STATE_READ);
	assert_string_equal(back.root, "home");
}

static void refused(const char *text, const char *want)
{
	char path[CONFIG_PATH_MAX], why[256];
	snprintf(path, sizeof path, "%s/bad.json", dir);
	FILE *f = fopen(path, "w");
	assert_non_null(f);
	fputs(text, f);
	fclose(f);
	struct state back;
	assert_int_equal(state_file_read(path, &back, why, sizeof why), STATE_BAD);
	if (!strstr(why, want))
		fail_msg("for %s: wanted '%s', got '%s'", text, want, why);
}

static void bad_files_are_refused(void **state)
{
	(void)state;
	refused("", "not a JSON object");
	refused("{\"format\": 1, \"preset\": \"dek", "not a JSON object");
	refused("[1, 2]", "not a JSON object");
	refused("{\"format\": 1, \"config\": \"/c\", \"preset\": \"a\", \"root\": \"home\"} {}", "not a JSON object");
	refused("{\"format\": 2, \"config\": \"/c\", \"preset\": \"a\", \"root\": \"home\"}", "format is not 1");
	refused("{\"format\": 1, \"config\": \"/c\", \"root\": \"home\"}", "missing");
	refused("{\"format\": 1, \"config\": \"/c\", \"preset\": 3, \"root\": \"home\"}", "missing");
	refused("{\"format\": 1, \"config\": \"/c\", \"preset\": \"\", \"root\": \"home\"}", "missing");
	refused("{\"format\": 1, \"config\": \"/c\", \"preset\": \"a\\u0000b\", \"root\": \"home\"}", "missing");
	refused("{\"format\": 1, \"config\": \"/c\", \"preset\": \"a-name-much-longer-than-31-characters\", \"root\": \"home\"}",
		"missing");
	char big[STATE_FILE_MAX + 64];
	memset(big, ' ', sizeof big - 1);
	big[sizeof big - 1] = '\0';
	refused(big, "larger than 4 KiB");
	/* a well-formed file with spaces and a newline after it is fine */
	char path[CONFIG_PATH_MAX], why[256];
	snprintf(path, sizeof path, "%s/good.json", dir);
	FILE *f = fopen(path, "w");
	fputs("{\"format\": 1, \"config\": \"/c\", \"preset\": \"a\", \"root\": \"1.3\"}  \n\n", f);
	fclose(f);
	struct state back;
	assert_int_equal(state_file_read(path, &back, why, sizeof why), STATE_READ);
	assert_int_equal(state_file_read(dir, &back, why, sizeof why), STATE_BAD);
	assert_non_null(strstr(why, "not a regular file"));
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(auto_finds_the_state_directory),
		cmocka_unit_test(written_then_read_back),
		cmocka_unit_test(bad_files_are_refused),
	};
	return cmocka_run_group_tests(tests, make_dir, remove_dir);
}
