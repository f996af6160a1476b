/*
 * engine_method: the private contract between the common engine
 * (engine.c, engine_synth.c, engine_controls.c) and the retuning methods
 * (engine_bend.c, engine_mts.c, engine_mpe.c).
 *
 * The common engine keeps the notes, pedals, controllers, lazy sync,
 * presets and panic; it asks a method only the few things in which bend,
 * mts and mpe differ: which output channels it plays on (and whether one
 * of them carries the player's global state), what the synth must be told
 * at start, where a new note goes, whether the bend carries the retune,
 * and what a tuning change sends.  Everything else follows from the
 * channel roles engine_init derives once from the method's plan (see
 * struct engine: retuned, members, global_of, pool, used, global_channel).
 *
 * A fourth method is one more file defining a struct engine_method and one
 * more row in the table in engine.c.
 *
 * The functions after the struct are what the common engine offers a
 * method; they are private to src/core/engine*.c.
 */
#ifndef LATTICED_ENGINE_METHOD_H
#define LATTICED_ENGINE_METHOD_H

#include "latticed/engine.h"
#include "rpn.h"

#define NO_NOTE (-1)
#define NO_CHANNEL (-1)

/* The output channels a method plays on, planned from the spec alone. */
struct engine_channels {
	uint16_t pool;                /* channels notes go to */
	int global_channel;           /* the player's wheel, controllers, program and
	                               * pressure go here, or NO_CHANNEL: to every note channel */
	uint8_t route[16];            /* mts: input channel -> its output channel */
};

/* Where a new note goes. */
struct engine_place {
	int channel, key;
};

struct engine_method {
	enum retune_method id;
	const char *name;
	/* Plans the channels from the spec; false with err set if it cannot. */
	bool (*plan)(const struct engine_spec *spec, struct engine_channels *plan,
		     struct core_error *err);
	/* The synth set-up (the caller has forgotten what the synth held). */
	void (*start)(struct engine *e);
	/* Finds a channel and key for a new note of input channel in_ch, brings
	 * that channel up to date (engine_sync_channel) and sets its bend, all
	 * before the note-on the caller sends; false: nowhere to go. */
	bool (*place)(struct engine *e, int in_ch, int key, const struct retune_key *rk,
		      struct engine_place *at);
	/* After the preset or root changed and the table was rebuilt; NULL: nothing. */
	void (*tuning_changed)(struct engine *e);
	/* The bend carries each note's retune (else only the wheel). */
	bool bend_carries_retune;
	/* Poly pressure becomes the pressure of the note's own channel (MPE:
	 * one note per member channel). */
	bool pressure_per_channel;
};

extern const struct engine_method engine_method_bend;
extern const struct engine_method engine_method_mts;
extern const struct engine_method engine_method_mpe;

/* ---- roles ---------------------------------------------------------------- */

static inline bool engine_is_member(const struct engine *e, int in_ch)
{
	return (e->members >> in_ch) & 1;
}

static inline bool engine_in_pool(const struct engine *e, int out_ch)
{
	return (e->pool >> out_ch) & 1;
}

static inline bool engine_uses(const struct engine *e, int out_ch)
{
	return (e->used >> out_ch) & 1;
}

static inline void engine_notice(struct engine *e, uint32_t flag)
{
	e->notices |= flag;
}

/* Controllers that carry the RPN/NRPN machinery or channel modes. */
static inline bool engine_is_parameter_cc(int cc)
{
	return cc == 6 || cc == 38 || (cc >= 96 && cc <= 101);
}

/* Bit sets of keys or controllers (0..127) and of note slots, 64 to a word. */
static inline bool engine_bit(const uint64_t *bits, int i)
{
	return (bits[i >> 6] >> (i & 63)) & 1;
}

static inline void engine_bit_put(uint64_t *bits, int i, bool on)
{
	if (on)
		bits[i >> 6] |= (uint64_t)1 << (i & 63);
	else
		bits[i >> 6] &= ~((uint64_t)1 << (i & 63));
}

/* The first slot at or after `from` that holds a note, or NO_NOTE: the
 * notes in slot order without looking at the free slots. */
static inline int engine_next_note(const struct engine *e, int from)
{
	const int words = ENGINE_MAX_NOTES / 64;
	for (int w = from >> 6; w < words; w++) {
		uint64_t bits = e->note_used[w];
		if (w == from >> 6)
			bits &= ~(uint64_t)0 << (from & 63);
		if (bits)
			return 64 * w + __builtin_ctzll(bits);
	}
	return NO_NOTE;
}

#define engine_for_each_note(e, i) \
	for (int i = engine_next_note((e), 0); i != NO_NOTE; i = engine_next_note((e), i + 1))

/* ---- to the synth (engine_synth.c) ---------------------------------------- */

void engine_emit(struct engine *e, const struct midi_msg *m);
void engine_emit3(struct engine *e, uint8_t status, uint8_t d1, uint8_t d2);
/* A controller to output channel ch, remembered as what the synth has. */
void engine_write_cc(struct engine *e, int ch, int cc, uint8_t value);

/* Each of these remembers what the synth now holds and sends nothing it
 * already has (engine_send_cc with force: always). */
static inline void engine_send_cc(struct engine *e, int ch, int cc, uint8_t value, bool force)
{
	const struct engine_out_channel *o = &e->out[ch];
	if (force || !engine_bit(o->cc_known, cc) || o->cc[cc] != value)
		engine_write_cc(e, ch, cc, value);
}

void engine_send_rpn(struct engine *e, int ch, enum rpn_param param, uint8_t value);
void engine_send_program(struct engine *e, int ch, uint8_t program);
void engine_send_pressure(struct engine *e, int ch, uint8_t value);
void engine_send_bend(struct engine *e, int ch, uint16_t value);
void engine_send_note_off(struct engine *e, const struct engine_note *n, uint8_t velocity);
/* The bend value for cents at a range of `range` semitones; counts a clamp. */
uint16_t engine_bend_value(struct engine *e, double cents, int range);
/* Brings output channel ch up to what notes of input channel in_ch should hear. */
void engine_sync_channel(struct engine *e, int ch, int in_ch);
void engine_forget_synth(struct engine *e);

/* ---- the player's controls (engine_controls.c) ------------------------------ */

/* Cents a channel's bend adds to notes of input channel in_ch beyond their retune. */
double engine_extra_cents(const struct engine *e, int in_ch);
/* The bend range of the global channel: the player's wheel range, 2..96. */
int engine_global_range(const struct engine *e);
void engine_control_change(struct engine *e, uint8_t source, int ch, int cc, int value);
void engine_pitch_wheel(struct engine *e, int ch, uint16_t value);
void engine_poly_pressure(struct engine *e, uint8_t source, int ch, int key, uint8_t value);
void engine_program_change(struct engine *e, int ch, uint8_t program);
void engine_channel_pressure(struct engine *e, int ch, uint8_t value);

/* ---- notes (engine.c) -------------------------------------------------------- */

/* The note leaves its channel (and key) for good. */
void engine_end_note(struct engine *e, int index);
/* Key up: the note-off goes out now; a pedal may keep the note ringing. */
void engine_release_note(struct engine *e, int index, uint8_t velocity);
/* Ends the ringing notes of global input channel g that no pedal holds now. */
void engine_settle_ringing(struct engine *e, int g);

/* ---- the player's controls of the tuning (engine_steer.c) ------------------- */

void engine_steer_init(struct engine *e);
/* Works out again which keys and controllers steer (the tunings changed). */
void engine_steer_refresh(struct engine *e);
/* Acts on m if it steers (true: taken, it plays nothing); every message on
 * the control channel is taken. */
bool engine_steer_message(struct engine *e, const struct midi_msg *m);

/* Could channel message m steer?  The quick look every message gets (most
 * of them play): anything on the control channel; on a retuned channel a
 * note-on of a key in steer_keys, a controller in steer_ccs, a program
 * change when those steer.  False means it certainly plays. */
static inline bool engine_may_steer(const struct engine *e, const struct midi_msg *m)
{
	int ch = m->status & 0x0F;
	if (ch == e->spec.control.channel)
		return true;
	if (!((e->retuned >> ch) & 1))
		return false;
	switch (m->status & 0xF0) {
	case MIDI_NOTE_ON:
		return m->data[1] > 0 && engine_bit(e->steer_keys, m->data[0]);
	case MIDI_PROGRAM:
		return e->steer_program;
	case MIDI_CONTROL:
		return engine_bit(e->steer_ccs, m->data[0]);
	default:
		return false;
	}
}

/* ---- the methods' shared parts -------------------------------------------------- */

/* Bend and mpe: a free channel with the right bend, else the one freed
 * longest ago; else share or steal as the polyphony policy says (engine_bend.c). */
bool engine_rotate_place(struct engine *e, int in_ch, int key, const struct retune_key *rk,
			 struct engine_place *at);

#endif
