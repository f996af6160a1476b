/*
 * test_smf_file: whole-file reading and atomic writing (src/io/smf_file.c).
 *
 * Each test works in its own fresh directory under /tmp.  What is checked
 * is the POSIX behaviour the contract promises (open(2), rename(2) replaces
 * the target atomically, a symbolic link is followed): the bytes round
 * trip, a failure leaves no file and no temporary file, an existing file
 * keeps its mode, writing through a link replaces the file it points to.
 */
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <setjmp.h>
#include <cmocka.h>

#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "smf_file.h"

struct dir {
	char path[64];
};

static int dir_setup(void **state)
{
	struct dir *d = malloc(sizeof *d);
	assert_non_null(d);
	snprintf(d->path, sizeof d->path, "/tmp/test_smf_file.XXXXXX");
	assert_non_null(mkdtemp(d->path));
	*state = d;
	return 0;
}

static int entries(const char *path)
{
	DIR *dir = opendir(path);
	assert_non_null(dir);
	int n = 0;
	struct dirent *e;
	while ((e = readdir(dir)))
		n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
	closedir(dir);
	return n;
}

static int dir_teardown(void **state)
{
	struct dir *d = *state;
	char cmd[128];
	snprintf(cmd, sizeof cmd, "rm -rf '%s'", d->path);
	assert_int_equal(system(cmd), 0);
	free(d);
	return 0;
}

static void round_trip(void **state)
{
	struct dir *d = *state;
	char path[128];
	snprintf(path, sizeof path, "%s/a.mid", d->path);
	static const uint8_t bytes[] = { 'M', 'T', 'h', 'd', 0, 0, 0, 6, 0, 0, 0, 1, 0, 96 };
	struct core_error err;
	assert_true(smf_file_write(path, bytes, sizeof bytes, &err));
	uint8_t *back = NULL;
	size_t length = 0;
	assert_true(smf_file_read(path, &back, &length, &err));
	assert_int_equal(length, sizeof bytes);
	assert_memory_equal(back, bytes, sizeof bytes);
	free(back);
	assert_int_equal(entries(d->path), 1); /* no temporary file left */
}

static void missing_file(void **state)
{
	struct dir *d = *state;
	char path[128];
	snprintf(path, sizeof path, "%s/none.mid", d->path);
	struct core_error err;
	uint8_t *bytes = (uint8_t *)"x";
	size_t length = 1;
	assert_false(smf_file_read(path, &bytes, &length, &err));
	assert_null(bytes);
	assert_string_equal(err.text, "cannot open: No such file or directory");
	assert_false(smf_file_read(d->path, &bytes, &length, &err));
	assert_string_equal(err.text, "cannot read: it is a directory");
}

static void no_directory(void **state)
{
	struct dir *d = *state;
	char path[128];
	snprintf(path, sizeof path, "%s/sub/a.mid", d->path);
	struct core_error err;
	assert_false(smf_file_write(path, (const uint8_t *)"abc", 3, &err));
	assert_non_null(strstr(err.text, "cannot create a file in "));
	assert_non_null(strstr(err.text, "/sub: No such file or directory"));
	assert_int_equal(entries(d->path), 0);
	assert_false(smf_file_write(d->path, (const uint8_t *)"abc", 3, &err));
	assert_string_equal(err.text, "cannot write: it is a directory");
}

static void keeps_mode_and_follows_links(void **state)
{
	struct dir *d = *state;
	char path[128], link[128];
	snprintf(path, sizeof path, "%s/a.mid", d->path);
	snprintf(link, sizeof link, "%s/link.mid", d->path);
	struct core_error err;
	assert_true(smf_file_write(path, (const uint8_t *)"old", 3, &err));
	assert_int_equal(chmod(path, 0640), 0);
	assert_int_equal(symlink("a.mid", link), 0);
	assert_true(smf_file_write(link, (const uint8_t *)"newer", 5, &err));
	struct stat st;
	assert_int_equal(lstat(link, &st), 0);
	assert_true(S_ISLNK(st.st_mode));          /* the link is still a link */
	assert_int_equal(stat(path, &st), 0);
	assert_int_equal(st.st_mode & 07777, 0640); /* the file kept its mode */
	assert_int_equal(st.st_size, 5);
	assert_int_equal(entries(d->path), 2);
}

static void new_file_mode_follows_umask(void **state)
{
	struct dir *d = *state;
	char path[128];
	snprintf(path, sizeof path, "%s/b.mid", d->path);
	mode_t old = umask(022);
	struct core_error err;
	assert_true(smf_file_write(path, (const uint8_t *)"x", 1, &err));
	umask(old);
	struct stat st;
	assert_int_equal(stat(path, &st), 0);
	assert_int_equal(st.st_mode & 07777, 0644); /* 0666 less the umask, not mkstemp's 0600 */
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test_setup_teardown(round_trip, dir_setup, dir_teardown),
		cmocka_unit_test_setup_teardown(missing_file, dir_setup, dir_teardown),
		cmocka_unit_test_setup_teardown(no_directory, dir_setup, dir_teardown),
		cmocka_unit_test_setup_teardown(keeps_mode_and_follows_links, dir_setup, dir_teardown),
		cmocka_unit_test_setup_teardown(new_file_mode_follows_umask, dir_setup, dir_teardown),
	};
	return cmocka_run_group_tests(tests, NULL, NULL);
}
