/*
 * view_model (src/daemon/view_model.c): the lines of a subscription into
 * the page state, with the built-in defaults' hexany (seeds 1 3 5 7, 2 of
 * 4) drawn.  Checks:
 *   - the tones lit are those of notes of the drawn preset and generation,
 *     on any output, each once (our rule, view_model.h);
 *   - the chord is named only when the lit tones are exactly one of the
 *     lattice's chords: the tones 1.3, 1.5, 1.7 are the harmonic triad
 *     sharing seed 1, 5/4 3/2 7/4 in closest position, 5:6:7 (common
 *     practice for the 1-3-5-7 hexany; the products 3, 5, 7 folded into the
 *     octave);
 *   - a line that is not what the daemon sends is refused with a sentence
 *     and changes nothing; an event of a newer daemon is skipped;
 *   - the drawing is made again only when the preset, the generation or
 *     the config changes.
 */
#include <setjmp.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdint.h>
#include <cmocka.h>
#include <json-c/json.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "view_model.h"

static struct view_model m;

static int set_up(void **state)
{
	(void)state;
	if (!view_model_init(&m))
		fail_msg("out of memory");
	return 0;
}

static int tear_down(void **state)
{
	(void)state;
	view_model_free(&m);
	return 0;
}

static bool feed(const char *line, char *err, size_t size)
{
	struct json_object *o = json_tokener_parse(line);
	bool ended = false;
	bool ok = view_model_apply(&m, o, &ended, err, size);
	json_object_put(o);
	return ok;
}

static void must(const char *line)
{
	char err[300];
	if (!feed(line, err, sizeof err))
		fail_msg("refused %s: %s", line, err);
}

static void refused(const char *line, const char *want)
{
	char err[300] = "";
	int before = m.note_count;
	if (feed(line, err, sizeof err))
		fail_msg("took %s", line);
	if (!strstr(err, want))
		fail_msg("for %s wanted '%s', got '%s'", line, want, err);
	assert_int_equal(m.note_count, before);
}

static const char state[] =
	"{\"ok\":true,\"event\":\"state\",\"why\":\"subscribed\",\"events_lost\":0,\"config\":null,"
	"\"generation\":0,\"presets\":1,\"preset\":{\"index\":0,\"name\":\"main\"},"
	"\"root\":{\"slot\":0,\"label\":\"home\"},\"outputs\":[{\"index\":0,\"name\":\"a\",\"notes\":[]},"
	"{\"index\":1,\"name\":\"b\",\"notes\":[]}]}";

/* The tone index of the defaults' lattice whose label is text. */
static int tone(const char *text)
{
	char label[LATTICE_LABEL_MAX];
	const struct lattice *lat = &m.tuning->lattice;
	for (int t = 0; t < lat->tone_count; t++)
		if (strcmp(lattice_label(&lat->spec, lat->tones[t].seeds, label, sizeof label), text) == 0)
			return t;
	fail_msg("no tone %s", text);
	return -1;
}

static void note_on(int output, int id, int t, int preset, int generation)
{
	char line[256];
	snprintf(line, sizeof line, "{\"event\":\"note_on\",\"output\":%d,\"id\":%d,\"tone\":%d,\"period\":0,"
		 "\"key\":60,\"preset\":%d,\"generation\":%d,\"source\":0,\"channel\":1}", output, id, t,
		 preset, generation);
	must(line);
}

static void note_off(int output, int id)
{
	char line[128];
	snprintf(line, sizeof line, "{\"event\":\"note_off\",\"output\":%d,\"id\":%d}", output, id);
	must(line);
}

static struct json_object *page(void)
{
	char *text = view_model_page(&m, false);
	struct json_object *o = json_tokener_parse(text);
	free(text);
	assert_non_null(o);
	return o;
}

static struct json_object *get(struct json_object *o, const char *key)
{
	struct json_object *v = NULL;
	json_object_object_get_ex(o, key, &v);
	return v;
}

static void lit_and_chord(void **unused)
{
	(void)unused;
	must(state);
	assert_true(view_model_redraw(&m));
	assert_non_null(m.svg);
	int a = tone("1.3"), b = tone("1.5"), c = tone("1.7");
	note_on(0, 1, a, 0, 0);
	note_on(0, 2, b, 0, 0);
	note_on(1, 7, b, 0, 0); /* the same tone on the other output: lit once */
	struct json_object *p = page();
	assert_int_equal(json_object_array_length(get(p, "lit")), 2);
	assert_null(get(p, "chord"));
	json_object_put(p);
	note_on(1, 8, c, 0, 0);
	p = page();
	struct json_object *chord = get(p, "chord");
	assert_non_null(chord);
	assert_string_equal(json_object_get_string(get(chord, "kind")), "harmonic");
	assert_string_equal(json_object_get_string(get(chord, "seeds")), "1");
	assert_string_equal(json_object_get_string(get(chord, "proportion")), "5:6:7");
	assert_string_equal(json_object_get_string(get(p, "daemon")), "up");
	json_object_put(p);
	/* one tone more: no longer exactly a chord */
	note_on(0, 3, tone("3.5"), 0, 0);
	p = page();
	assert_int_equal(json_object_array_length(get(p, "lit")), 4);
	assert_null(get(p, "chord"));
	json_object_put(p);
	note_off(0, 3);
	/* a note of another preset or of the tunings before a reload lights nothing */
	note_on(0, 4, tone("3.7"), 0, 5);
	note_on(0, 5, tone("5.7"), 1, 0);
	p = page();
	assert_int_equal(json_object_array_length(get(p, "lit")), 3);
	assert_non_null(get(p, "chord"));
	json_object_put(p);
	note_off(0, 4);
	note_off(0, 5);
	note_off(0, 1);
	note_off(0, 2);
	note_off(1, 7);
	note_off(1, 8);
	note_off(1, 99); /* a note it never heard of: nothing happens */
	assert_int_equal(m.note_count, 0);
}

static void bad_lines(void **unused)
{
	(void)unused;
	must(state);
	note_on(0, 1, 0, 0, 0);
	refused("[1,2,3]", "not a JSON object");
	refused("{\"ok\":true}", "without an \"event\"");
	refused("{\"ok\":false,\"error\":\"no room for another subscriber (at most 8)\"}", "at most 8");
	refused("{\"event\":\"note_on\",\"output\":0,\"id\":2,\"tone\":\"x\",\"preset\":0,\"generation\":0}",
		"\"tone\" is missing or not a whole number");
	refused("{\"event\":\"note_on\",\"output\":9,\"id\":2,\"tone\":1,\"preset\":0,\"generation\":0}",
		"\"output\" is 9");
	refused("{\"event\":\"note_on\",\"output\":0,\"id\":-4,\"tone\":1,\"preset\":0,\"generation\":0}",
		"\"id\" is -4");
	refused("{\"event\":\"tuning\",\"generation\":0,\"presets\":2,\"preset\":{\"index\":2,\"name\":\"x\"},"
		"\"root\":{\"slot\":0,\"label\":\"home\"}}", "\"index\" is 2");
	refused("{\"ok\":true,\"event\":\"state\",\"config\":7,\"generation\":0,\"presets\":1,"
		"\"preset\":{\"index\":0,\"name\":\"main\"},\"root\":{\"slot\":0,\"label\":\"home\"},\"outputs\":[]}",
		"neither a path nor null");
	assert_int_equal(m.note_count, 1);
	must("{\"event\":\"a_newer_event\",\"whatever\":1}");
	char err[300];
	bool ended = false;
	struct json_object *o = json_tokener_parse("{\"event\":\"shutdown\"}");
	assert_true(view_model_apply(&m, o, &ended, err, sizeof err));
	assert_true(ended);
	json_object_put(o);
	view_model_down(&m, "latticed stopped");
	refused("{\"event\":\"note_on\",\"output\":0,\"id\":2,\"tone\":1,\"preset\":0,\"generation\":0}",
		"before the state");
	struct json_object *p = page();
	assert_string_equal(json_object_get_string(get(p, "daemon")), "down");
	assert_string_equal(json_object_get_string(get(p, "message")), "latticed stopped");
	assert_int_equal(json_object_array_length(get(p, "lit")), 0);
	json_object_put(p);
}

static void drawing_follows(void **unused)
{
	(void)unused;
	must(state);
	(void)view_model_redraw(&m);
	uint64_t v = m.drawing_version;
	assert_false(view_model_redraw(&m));
	must("{\"event\":\"reload\",\"generation\":1,\"presets\":1}");
	must("{\"event\":\"tuning\",\"generation\":1,\"presets\":1,\"preset\":{\"index\":0,\"name\":\"main\"},"
	     "\"root\":{\"slot\":2,\"label\":\"1.5\"}}");
	assert_true(view_model_redraw(&m));
	assert_int_equal(m.drawing_version, v + 1);
	assert_string_equal(m.drawing_error, "");
	/* a preset the built-in defaults do not have */
	must("{\"event\":\"tuning\",\"generation\":1,\"presets\":3,\"preset\":{\"index\":2,\"name\":\"far\"},"
	     "\"root\":{\"slot\":0,\"label\":\"home\"}}");
	assert_true(view_model_redraw(&m));
	assert_non_null(strstr(m.drawing_error, "fewer presets than the daemon"));
	assert_null(m.svg);
	struct json_object *p = page();
	assert_non_null(strstr(json_object_get_string(get(p, "message")), "reload latticed"));
	assert_int_equal(json_object_get_int(get(p, "drawing")), 0);
	json_object_put(p);
}

int main(void)
{
	const struct CMUnitTest tests[] = {
		cmocka_unit_test(lit_and_chord),
		cmocka_unit_test(bad_lines),
		cmocka_unit_test(drawing_follows),
	};
	return cmocka_run_group_tests(tests, set_up, tear_down);
}
