/*
 * draw_cmd: `latticed draw` after its options are read: the drawing goes
 * into memory first and out in one piece, so a failure never leaves half
 * an SVG.  A file is replaced atomically (temporary file beside it, then
 * rename, through smf_file_write, which does that for any bytes); a
 * target that exists and is not a regular file (a FIFO, a terminal,
 * /dev/stdout) is written directly, since renaming over it would replace
 * the device or pipe by a file.
 */
#include "draw_cmd.h"

#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "smf_file.h"

/* Wilson's names for the sets that have one. */
static const char *set_name(int n, int k)
{
	if (n == 4 && k == 2)
		return "hexany";
	if (n == 5 && (k == 2 || k == 3))
		return "dekany";
	if (n == 6 && (k == 2 || k == 4))
		return "pentadekany";
	if (n == 6 && k == 3)
		return "eikosany";
	return NULL;
}

void draw_heading(char *buf, size_t size, const struct lattice *lat)
{
	const struct lattice_spec *spec = &lat->spec;
	const char *name = set_name(spec->seed_count, spec->choose);
	int used = snprintf(buf, size, "%s%s%d of %d seeds", name ? name : "", name ? ": " : "",
			    spec->choose, spec->seed_count);
	for (int i = 0; i < spec->seed_count && used >= 0 && (size_t)used < size; i++)
		used += snprintf(buf + used, size - (size_t)used, " %s", spec->seed_text[i]);
}

void draw_subheading(char *buf, size_t size, const struct config *cfg, int preset,
		     const struct lattice *lat)
{
	char period[RATIO_TEXT_MAX], unison[LATTICE_LABEL_MAX];
	ratio_format(lat->spec.period, period, sizeof period);
	if (lat->spec.has_unison)
		lattice_label(&lat->spec, lat->spec.unison_seeds, unison, sizeof unison);
	snprintf(buf, size, "preset %s, period %s, %s%s", cfg->presets[preset].name, period,
		 lat->spec.has_unison ? unison : "1/1 is the reference pitch",
		 lat->spec.has_unison ? " is 1/1" : "");
}

static int write_output(const char *path, const char *bytes, size_t length)
{
	struct stat st;
	bool direct = !path || strcmp(path, "-") == 0 ||
		      (stat(path, &st) == 0 && !S_ISREG(st.st_mode) && !S_ISDIR(st.st_mode));
	if (direct) {
		const char *name = path && strcmp(path, "-") != 0 ? path : "standard output";
		FILE *f = path && strcmp(path, "-") != 0 ? fopen(path, "w") : stdout;
		if (!f) {
			fprintf(stderr, "latticed draw: %s: cannot open: %s\n", name, strerror(errno));
			return 1;
		}
		bool ok = fwrite(bytes, 1, length, f) == length;
		ok = (f == stdout ? fflush(f) : fclose(f)) == 0 && ok;
		if (!ok) {
			fprintf(stderr, "latticed draw: %s: cannot write: %s\n", name, strerror(errno));
			return 1;
		}
		return 0;
	}
	struct core_error err;
	if (!smf_file_write(path, (const uint8_t *)bytes, length, &err)) {
		fprintf(stderr, "latticed draw: %s: %s\n", path, err.text);
		return 1;
	}
	return 0;
}

int draw_run(const struct draw_request *req)
{
	char *bytes = NULL;
	size_t length = 0;
	FILE *f = open_memstream(&bytes, &length);
	if (!f) {
		fprintf(stderr, "latticed draw: out of memory for the drawing\n");
		return 1;
	}
	int rc = req->what == DRAW_KEYS
		 ? draw_keys_svg(f, req->cfg, req->preset, req->tuning, req->periods)
		 : draw_lattice_svg(f, req->cfg, req->preset, req->tuning);
	if (ferror(f))
		rc = -1;
	if (fclose(f) != 0)
		rc = -1;
	if (rc != 0) {
		fprintf(stderr, "latticed draw: out of memory for the drawing\n");
		free(bytes);
		return 1;
	}
	rc = write_output(req->out_path, bytes, length);
	free(bytes);
	return rc;
}
