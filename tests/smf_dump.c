/*
 * smf_dump: test helper (not installed) that shows a Standard MIDI File as
 * our reader sees it, so an independent library can be checked against it.
 *
 *   smf_dump FILE              one line per event
 *   smf_dump --rewrite IN OUT  read IN with our reader, write OUT with our writer
 *
 * Output: a header line "header FORMAT TRACKS DIVISION", then per event
 * "TRACK TICK KIND HEX..." with TRACK counted from 0, TICK absolute and
 * KIND one of
 *   midi    status byte and data bytes (status restated even where the file
 *           used running status)
 *   sysex   F0 and the bytes after the length
 *   escape  the bytes after the length
 *   meta    the type byte and the data
 * Bytes are lower-case hex, separated by spaces.
 */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "latticed/smf.h"

static uint8_t *load(const char *path, size_t *length)
{
	FILE *f = fopen(path, "rb");
	if (!f) {
		fprintf(stderr, "smf_dump: %s: %s\n", path, strerror(errno));
		return NULL;
	}
	size_t cap = 4096, n = 0;
	uint8_t *buf = malloc(cap);
	while (buf) {
		n += fread(buf + n, 1, cap - n, f);
		if (n < cap)
			break;
		uint8_t *bigger = realloc(buf, cap * 2);
		if (!bigger) {
			free(buf);
			buf = NULL;
			break;
		}
		buf = bigger;
		cap *= 2;
	}
	bool bad = ferror(f);
	fclose(f);
	if (!buf || bad) {
		fprintf(stderr, "smf_dump: %s: cannot read the file\n", path);
		free(buf);
		return NULL;
	}
	*length = n;
	return buf;
}

static bool read_file(const char *path, struct smf *s)
{
	size_t n = 0;
	uint8_t *bytes = load(path, &n);
	if (!bytes)
		return false;
	struct smf_error err;
	bool ok = smf_read(bytes, n, s, &err);
	free(bytes);
	if (!ok)
		fprintf(stderr, "smf_dump: %s: %s\n", path, err.text);
	return ok;
}

static void hex(const uint8_t *p, size_t n)
{
	for (size_t i = 0; i < n; i++)
		printf(" %02x", p[i]);
}

static int dump(const char *path)
{
	struct smf s;
	if (!read_file(path, &s))
		return 1;
	printf("header %u %zu %u\n", s.format, s.track_count, s.division);
	for (size_t t = 0; t < s.track_count; t++) {
		for (size_t i = 0; i < s.tracks[t].event_count; i++) {
			const struct smf_event *ev = &s.tracks[t].events[i];
			printf("%zu %u", t, ev->tick);
			switch (ev->kind) {
			case SMF_EVENT_MIDI:
				printf(" midi %02x", ev->msg.status);
				hex(ev->data, ev->length);
				break;
			case SMF_EVENT_SYSEX:
				printf(" sysex f0");
				hex(ev->data, ev->length);
				break;
			case SMF_EVENT_ESCAPE:
				printf(" escape");
				hex(ev->data, ev->length);
				break;
			case SMF_EVENT_META:
				printf(" meta %02x", ev->meta_type);
				hex(ev->data, ev->length);
				break;
			}
			printf("\n");
		}
	}
	smf_free(&s);
	return 0;
}

static int rewrite(const char *in, const char *out)
{
	struct smf s;
	if (!read_file(in, &s))
		return 1;
	struct smf_writer w;
	bool ok = smf_writer_begin(&w, s.format, s.division);
	for (size_t t = 0; ok && t < s.track_count; t++) {
		const struct smf_track *tr = &s.tracks[t];
		size_t n = tr->event_count - (tr->has_end_of_track ? 1 : 0);
		ok = smf_writer_track_begin(&w);
		for (size_t i = 0; ok && i < n; i++)
			ok = smf_writer_event(&w, &tr->events[i]);
		ok = ok && smf_writer_track_end(&w, tr->end_tick);
	}
	uint8_t *bytes = NULL;
	size_t length = 0;
	ok = ok && smf_writer_finish(&w, &bytes, &length);
	smf_free(&s);
	if (!ok) {
		fprintf(stderr, "smf_dump: writing %s: %s\n", out, w.error.text);
		smf_writer_discard(&w);
		return 1;
	}
	FILE *f = fopen(out, "wb");
	bool written = f && fwrite(bytes, 1, length, f) == length;
	if (f && fclose(f) != 0)
		written = false;
	free(bytes);
	if (!written) {
		fprintf(stderr, "smf_dump: %s: cannot write: %s\n", out, strerror(errno));
		return 1;
	}
	return 0;
}

int main(int argc, char **argv)
{
	if (argc == 2 && argv[1][0] != '-')
		return dump(argv[1]);
	if (argc == 4 && strcmp(argv[1], "--rewrite") == 0)
		return rewrite(argv[2], argv[3]);
	fprintf(stderr, "usage: smf_dump FILE\n       smf_dump --rewrite IN OUT\n");
	return 2;
}
