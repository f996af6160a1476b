/*
 * engine_steer: the player's controls of the tuning (the model is in
 * engine.h, at struct engine_control_spec): what a message on the control
 * channel, a bound controller, a reserved key or a key binding does, and
 * the misses.
 *
 * One function reads what a message means (find) and two act on it: the
 * load guard asks engine_steers without changing anything, so it never
 * mistakes a steering message for a note it may leave out, and
 * engine_steer_message does it.  A control message that selects nothing
 * (a preset number past the last preset, a root past the preset's tones,
 * a step past an end with wrap off) is kept as the engine's miss for the
 * shell to log, never dropped without a word.
 *
 * Every engine of a daemon is given the same messages, so each steps the
 * same way: a step depends only on where the engine is and on the
 * binding's last value, which every engine has seen alike.
 */
#include <string.h>

#include "engine_method.h"

#define VALUE_NONE 0xFF
#define SWITCH_ON 64      /* MIDI 1.0: a switch controller reads 0-63 off, 64-127 on */

enum hit_kind {
	HIT_NONE,
	HIT_PROGRAM,
	HIT_PRESET_CC,
	HIT_ROOT_CC,
	HIT_PRESET_KEY,
	HIT_ROOT_KEY,
	HIT_ACTION,
};

struct hit {
	enum hit_kind kind;
	int action;          /* HIT_ACTION */
	bool by_cc;          /* HIT_ACTION: a controller (else a key) */
};

static bool on_control_channel(const struct engine *e, int ch)
{
	return e->spec.control.channel == ch;
}

static int bound_action(const struct engine_control_spec *c, int kind, int number)
{
	for (int a = 0; a < ENGINE_ACTION_COUNT; a++)
		if (c->actions[a].kind == kind && c->actions[a].number == number)
			return a;
	return -1;
}

static struct hit find_key(const struct engine *e, int key)
{
	const struct engine_control_spec *c = &e->spec.control;
	int a = bound_action(c, ENGINE_BINDING_KEY, key);
	if (a >= 0)
		return (struct hit){HIT_ACTION, a, false};
	if (c->preset_keys >= 0 && key >= c->preset_keys && key < c->preset_keys + e->tunings->count)
		return (struct hit){HIT_PRESET_KEY, 0, false};
	if (c->root_keys >= 0 && key >= c->root_keys && key < c->root_keys + e->reserved_root_keys)
		return (struct hit){HIT_ROOT_KEY, 0, false};
	return (struct hit){HIT_NONE, 0, false};
}

/* What m means for the tuning; HIT_NONE for a message that plays. */
static struct hit find(const struct engine *e, const struct midi_msg *m)
{
	const struct engine_control_spec *c = &e->spec.control;
	if (!engine_may_steer(e, m))
		return (struct hit){HIT_NONE, 0, false};
	switch (midi_msg_type(m)) {
	case MIDI_NOTE_ON:
		if (m->data[1] > 0)
			return find_key(e, m->data[0]);
		break;
	case MIDI_PROGRAM:
		if (c->program_selects_preset)
			return (struct hit){HIT_PROGRAM, 0, false};
		break;
	case MIDI_CONTROL: {
		int cc = m->data[0];
		int a = bound_action(c, ENGINE_BINDING_CC, cc);
		if (a >= 0)
			return (struct hit){HIT_ACTION, a, true};
		if (cc == c->preset_cc)
			return (struct hit){HIT_PRESET_CC, 0, false};
		if (cc == c->root_cc)
			return (struct hit){HIT_ROOT_CC, 0, false};
		break;
	}
	default:
		break;
	}
	return (struct hit){HIT_NONE, 0, false};
}

enum engine_steer engine_steers(const struct engine *e, const struct midi_msg *m)
{
	if (!midi_msg_is_channel(m))
		return ENGINE_STEER_NONE;
	struct hit h = find(e, m);
	if (h.kind == HIT_ACTION && h.action == ENGINE_ACTION_PANIC)
		return ENGINE_STEER_PANIC;
	if (h.kind != HIT_NONE || on_control_channel(e, midi_msg_channel(m)))
		return ENGINE_STEER_TUNING;
	return ENGINE_STEER_NONE;
}

/* ---- acting --------------------------------------------------------------- */

static void missed(struct engine *e, enum engine_miss_kind kind, enum engine_action action,
		   const struct midi_msg *m)
{
	uint32_t count = e->miss_pending ? e->miss.count + 1 : 1;
	const struct engine_preset *p = &e->tunings->presets[e->preset];
	e->miss = (struct engine_control_miss){
		.kind = kind, .action = action, .channel = (uint8_t)midi_msg_channel(m),
		.number = m->data[0], .value = m->data[1], .preset = e->preset,
		.root = e->root_slot, .presets = e->tunings->count,
		.tones = p->lattice->tone_count, .count = count,
	};
	memcpy(e->miss.preset_name, p->name, sizeof e->miss.preset_name);
	e->miss.preset_name[sizeof e->miss.preset_name - 1] = '\0';
	e->miss_pending = true;
	engine_notice(e, NOTICE_CONTROL_MISSED);
}

/* A controller binding's press (the rule in engine.h); remembers the value. */
static bool pressed(struct engine *e, int action, uint8_t value)
{
	uint8_t last = e->action_value[action];
	e->action_value[action] = value;
	bool on = value >= SWITCH_ON;
	if (last == VALUE_NONE)
		return on || e->spec.control.actions[action].latching;
	if (e->spec.control.actions[action].latching)
		return (last >= SWITCH_ON) != on;
	return on && (last < SWITCH_ON || last == value);
}

/* One step of the preset or the root, or stays at an end (a miss). */
static void step(struct engine *e, enum engine_action a, const struct midi_msg *m)
{
	bool presets = a == ENGINE_ACTION_PRESET_NEXT || a == ENGINE_ACTION_PRESET_PREVIOUS;
	bool forward = a == ENGINE_ACTION_PRESET_NEXT || a == ENGINE_ACTION_ROOT_NEXT;
	int count = presets ? e->tunings->count
			    : e->tunings->presets[e->preset].lattice->tone_count + 1;
	int to = (presets ? e->preset : e->root_slot) + (forward ? 1 : -1);
	if (to < 0 || to >= count) {
		if (!e->spec.control.wrap) {
			missed(e, ENGINE_MISS_STEP_END, a, m);
			return;
		}
		to = (to + count) % count;
	}
	if (presets)
		(void)engine_select_preset(e, to);
	else
		(void)engine_select_root(e, to);
}

static void act(struct engine *e, enum engine_action a, const struct midi_msg *m)
{
	switch (a) {
	case ENGINE_ACTION_ROOT_HOME:
		(void)engine_select_root(e, 0);
		break;
	case ENGINE_ACTION_PANIC:
		e->stats.control_panics++;
		engine_panic(e);
		break;
	default:
		step(e, a, m);
		break;
	}
}

bool engine_steer_message(struct engine *e, const struct midi_msg *m)
{
	const struct engine_control_spec *c = &e->spec.control;
	struct hit h = find(e, m);
	uint8_t d0 = m->data[0], d1 = m->data[1];
	switch (h.kind) {
	case HIT_NONE:
		break;
	case HIT_PROGRAM:
		if (!engine_select_preset(e, d0))
			missed(e, ENGINE_MISS_PROGRAM, 0, m);
		break;
	case HIT_PRESET_CC:
		if (!engine_select_preset(e, d1))
			missed(e, ENGINE_MISS_PRESET_CC, 0, m);
		break;
	case HIT_ROOT_CC:
		if (!engine_select_root(e, d1))
			missed(e, ENGINE_MISS_ROOT_CC, 0, m);
		break;
	case HIT_PRESET_KEY:
		(void)engine_select_preset(e, d0 - c->preset_keys);
		break;
	case HIT_ROOT_KEY:
		if (!engine_select_root(e, d0 - c->root_keys))
			missed(e, ENGINE_MISS_ROOT_KEY, 0, m);
		break;
	case HIT_ACTION:
		if (!h.by_cc || pressed(e, h.action, d1))
			act(e, (enum engine_action)h.action, m);
		break;
	}
	/* the control channel never sounds: what steers nothing is dropped there */
	return h.kind != HIT_NONE || on_control_channel(e, midi_msg_channel(m));
}

void engine_steer_init(struct engine *e)
{
	memset(e->action_value, VALUE_NONE, sizeof e->action_value);
	e->miss_pending = false;
}

static void mark_run(uint64_t *bits, int first, int count)
{
	for (int k = first; first >= 0 && k < first + count && k < 128; k++)
		engine_bit_put(bits, k, true);
}

void engine_steer_refresh(struct engine *e)
{
	const struct engine_control_spec *c = &e->spec.control;
	bool playing = c->channel == ENGINE_CONTROL_PLAYING;
	memset(e->steer_keys, 0, sizeof e->steer_keys);
	memset(e->steer_ccs, 0, sizeof e->steer_ccs);
	mark_run(e->steer_keys, c->preset_keys, e->tunings->count);
	mark_run(e->steer_keys, c->root_keys, e->reserved_root_keys);
	for (int a = 0; a < ENGINE_ACTION_COUNT; a++) {
		const struct engine_binding *b = &c->actions[a];
		if (b->kind == ENGINE_BINDING_KEY)
			mark_run(e->steer_keys, b->number, 1);
		else if (b->kind == ENGINE_BINDING_CC && playing)
			mark_run(e->steer_ccs, b->number, 1);
	}
	if (playing) {
		mark_run(e->steer_ccs, c->preset_cc, 1);
		mark_run(e->steer_ccs, c->root_cc, 1);
	}
	e->steer_program = playing && c->program_selects_preset;
}

bool engine_take_control_miss(struct engine *e, struct engine_control_miss *out)
{
	if (!e->miss_pending)
		return false;
	*out = e->miss;
	e->miss_pending = false;
	return true;
}
