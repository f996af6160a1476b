/*
 * engine_fixture: the tunings and engine specs the engine's tests and
 * benchmark share.  A preset is a 2-of-n set over whole-number seeds in
 * the octave, laid out sequentially from root_key; the spec is the
 * engine's documented defaults for one method (pool 2-9,11-16, bend range
 * 2, or 48 for MPE members; player on channel 1 with a 2-semitone wheel).
 */
#ifndef LATTICED_ENGINE_FIXTURE_H
#define LATTICED_ENGINE_FIXTURE_H

#include <stdio.h>
#include <string.h>

#include "latticed/engine.h"

/* Builds preset `name` into lat/map/preset; false with err filled. */
static bool fixture_preset(struct lattice *lat, struct keymap *map, struct engine_preset *preset,
			   const char *name, const char *const *seeds, int n, int root_key,
			   double root_hz, struct core_error *err)
{
	struct lattice_spec s;
	memset(&s, 0, sizeof s);
	s.seed_count = n;
	for (int j = 0; j < n; j++) {
		if (!ratio_parse(seeds[j], &s.seeds[j]))
			return core_fail(err, "seeds", "bad seed %s", seeds[j]);
		snprintf(s.seed_text[j], sizeof s.seed_text[j], "%s", seeds[j]);
	}
	s.choose = 2;
	s.period.num = 2;
	s.period.den = 1;
	if (!lattice_build(lat, &s, err))
		return false;
	struct keymap_spec k;
	memset(&k, 0, sizeof k);
	k.layout = KEY_LAYOUT_SEQUENTIAL;
	k.root_key = root_key;
	k.root_hz = root_hz;
	if (!keymap_build(map, lat, &k, err))
		return false;
	snprintf(preset->name, sizeof preset->name, "%s", name);
	preset->lattice = lat;
	preset->keymap = map;
	return true;
}

/* The two presets the engine's tests share: p0, a hexany (1 3 5 7) laid
 * out from key 57 at 220 Hz; p1, a dekany (1 3 5 7 9) from key 60 at
 * middle C (261.626 Hz, 12-TET from A4 = 440 Hz). */
static inline bool fixture_two_presets(struct lattice lat[2], struct keymap map[2],
				       struct engine_tunings *tunings, struct core_error *err)
{
	static const char *const hexany[] = {"1", "3", "5", "7"};
	static const char *const dekany[] = {"1", "3", "5", "7", "9"};
	tunings->count = 2;
	return fixture_preset(&lat[0], &map[0], &tunings->presets[0], "p0", hexany, 4, 57, 220.0,
			      err) &&
	       fixture_preset(&lat[1], &map[1], &tunings->presets[1], "p1", dekany, 5, 60,
			      261.6255653005986, err);
}

static struct engine_spec fixture_spec(enum retune_method method)
{
	struct engine_spec s;
	memset(&s, 0, sizeof s);
	s.output.method = method;
	s.output.channels = 0xFDFE; /* 2-9, 11-16 */
	s.output.bend_range = method == RETUNE_MPE ? 48 : 2;
	s.output.bend_played = 1.0;
	s.output.polyphony = POLY_SHARE_THEN_STEAL;
	s.output.mts_device = 0x7F;
	s.output.mts_bank = -1;
	s.output.mpe_members = 15;
	s.input.channels = 0x1;
	s.input.wheel_range_cents = 200.0;
	s.input.mpe_bend_range = 48;
	s.control.channel = -1;
	s.control.preset_cc = s.control.root_cc = -1;
	s.control.preset_keys = s.control.root_keys = -1;
	return s;
}

#endif
