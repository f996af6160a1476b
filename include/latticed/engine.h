/*
 * engine: the retuning stage for one output.
 *
 * Model: a deterministic machine that takes the player's MIDI messages one
 * at a time and emits, through a callback, the messages one synth needs to
 * sound every key at its lattice pitch.  It keeps, in fixed tables:
 *   - the held notes: for each, where it came from (source, channel, key),
 *     where it went (output channel and key) and its retune in cents, so a
 *     note-off always reaches the note-on it ends, whatever changed since;
 *   - per output channel, what the synth was last told (bend, controllers,
 *     program, pressure), so nothing is re-sent that the synth already has;
 *   - per input channel, what the player has set (controllers, pedals,
 *     wheel), so an idle channel is brought up to date just before it next
 *     plays ("lazy sync": no 15-fold controller traffic on a DIN link).
 *
 * Methods (one file each, src/core/engine_bend.c, _mts.c, _mpe.c):
 *   bend  one note per channel of a pool, the pitch bend set before the
 *         note-on; a free channel that already has the right bend is taken
 *         first, else the free channel released longest ago (its release
 *         tail rings out undisturbed).  More notes than channels: share a
 *         channel whose bend is identical, or steal the oldest, or both.
 *   mts   notes stay on one channel per input channel (engine_init refuses
 *         fewer output channels than retuned input channels); each key is tuned
 *         with a real-time single-note tuning change just before its
 *         note-on when the synth does not hold that tuning already; the
 *         tuning program is selected with RPN 3 (and RPN 4 for a bank);
 *         optionally a bulk dump of the whole table at start and on every
 *         tuning change.
 *   mpe   an MPE zone: the configuration message (RPN 6) on the master
 *         channel, member bend range by RPN 0, notes rotated over members
 *         like `bend`, the player's wheel and global controllers on the
 *         master channel.
 *
 * Tuning changes (preset, root) apply to new notes only: a sounding note
 * keeps its channel, key and bend until it is released.  The promise
 * tested in tests/test_engine*.c: every note-on sent is matched by exactly
 * one note-off on the same channel and key; once the player has released
 * every key and pedal nothing sounds; a channel's bend changes while it
 * sounds only by the player's own wheel or per-note bend; every note
 * sounds within half a bend (or MTS) step of its key's exact pitch.
 *
 * No allocation, I/O or locking after engine_init; the callbacks (the
 * messages out, and a note watch if one is set) are the only way out.
 * Not thread-safe: one thread drives an engine.
 */
#ifndef LATTICED_ENGINE_H
#define LATTICED_ENGINE_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/error.h"
#include "latticed/keymap.h"
#include "latticed/lattice.h"
#include "latticed/midi_msg.h"
#include "latticed/passthrough.h"
#include "latticed/retune_table.h"

#define ENGINE_MAX_PRESETS 32
#define ENGINE_MAX_NOTES 512
#define ENGINE_MAX_SOURCES 16
#define ENGINE_NAME_MAX 32
#define ENGINE_SYSEX_MAX 512

enum retune_method { RETUNE_BEND, RETUNE_MTS, RETUNE_MPE };
enum polyphony_policy { POLY_SHARE_THEN_STEAL, POLY_SHARE, POLY_STEAL };
enum mts_key_choice { MTS_KEY_NEAREST, MTS_KEY_OWN };
enum mpe_zone { MPE_ZONE_LOWER, MPE_ZONE_UPPER };

struct engine_output_spec {
	enum retune_method method;
	uint16_t channels;           /* bend: rotation pool; mts: note channels */
	int bend_range;              /* semitones set with RPN 0 */
	double bend_played;          /* fraction of a bend the synth plays (1, 127/128) */
	double cents_offset;         /* added to every pitch */
	enum polyphony_policy polyphony;
	/* mts */
	uint8_t mts_device;          /* 0x7F = all devices */
	uint8_t mts_program;         /* tuning program 0..127 */
	int mts_bank;                /* -1: no RPN 4 */
	bool mts_bulk;               /* bulk dump at start and on tuning changes */
	enum mts_key_choice mts_key;
	/* mpe */
	enum mpe_zone mpe_zone;
	int mpe_members;             /* 1..15 */
};

struct engine_input_spec {
	uint16_t channels;           /* channels retuned; the rest pass through */
	double wheel_range_cents;    /* what the player's full wheel means */
	bool mpe;                    /* the player is an MPE controller */
	enum mpe_zone mpe_zone;      /* its zone: master 1 (lower) or 16 (upper) */
	int mpe_bend_range;          /* semitones of its per-note bend */
};

/*
 * The player's controls of the tuning (engine_steer.c).  They come from the
 * control channel: a channel of its own, whose every message steers and
 * none sounds; or the playing channels themselves (ENGINE_CONTROL_PLAYING),
 * where only the bound controllers (and, if asked, program changes) steer
 * and everything else plays.  Reserved keys and key bindings steer on the
 * playing channels and on a control channel of its own, and never sound.
 *
 * A binding is a controller or a key.  A key acts on its note-on.  A
 * controller acts on a press: MIDI 1.0 reads a switch controller's 0-63 as
 * off and 64-127 as on, so a press is a value of 64 or more after one
 * below 64 (the release, which does nothing), after nothing yet, or the
 * same value again (a button that sends only its press).  A latching pedal
 * stays down after one press and comes up at the next, so each press flips
 * it: with `latching` every change between off and on is a press.
 */
#define ENGINE_CONTROL_NONE (-1)     /* no control channel */
#define ENGINE_CONTROL_PLAYING (-2)  /* the retuned input channels */

enum engine_action {
	ENGINE_ACTION_PRESET_NEXT,
	ENGINE_ACTION_PRESET_PREVIOUS,
	ENGINE_ACTION_ROOT_NEXT,     /* home, tone 0, tone 1, ... as root_keys */
	ENGINE_ACTION_ROOT_PREVIOUS,
	ENGINE_ACTION_ROOT_HOME,
	ENGINE_ACTION_PANIC,         /* engine_panic */
	ENGINE_ACTION_COUNT,
};

enum engine_binding_kind { ENGINE_BINDING_NONE, ENGINE_BINDING_CC, ENGINE_BINDING_KEY };

struct engine_binding {
	int kind;                    /* enum engine_binding_kind */
	int number;                  /* controller 0..119 or key 0..127 */
	bool latching;               /* a controller from a latching pedal */
};

struct engine_control_spec {
	int channel;                 /* 0..15, ENGINE_CONTROL_NONE or ENGINE_CONTROL_PLAYING */
	bool program_selects_preset; /* program change on that channel */
	int preset_cc;               /* CC number on that channel, -1 none */
	int root_cc;                 /* value 0 = home, n = tone n-1 becomes 1/1 */
	int preset_keys;             /* first reserved key, -1 none */
	int root_keys;               /* first reserved key: home, tone 0, tone 1, ... */
	struct engine_binding actions[ENGINE_ACTION_COUNT];
	bool wrap;                   /* a step past either end goes round (else it stays) */
};

struct engine_spec {
	struct engine_output_spec output;
	struct engine_input_spec input;
	struct engine_control_spec control;
};

struct engine_preset {
	char name[ENGINE_NAME_MAX];
	const struct lattice *lattice;
	const struct keymap *keymap;
};

/* Owned by the caller; must stay unchanged while an engine uses it. */
struct engine_tunings {
	int count;
	struct engine_preset presets[ENGINE_MAX_PRESETS];
};

typedef void (*engine_emit_fn)(void *context, const struct midi_msg *msg);

/* One-shot warnings for the shell to log (engine_take_notices). */
enum engine_notice {
	NOTICE_BEND_CLAMPED = 1u << 0,       /* retune + wheel beyond the bend range */
	NOTICE_NOTE_DROPPED = 1u << 1,       /* no channel or key free for a note */
	NOTICE_NOTE_STOLEN = 1u << 2,
	NOTICE_PASSTHROUGH_BLOCKED = 1u << 3,/* a pass-through channel is one we retune on */
	NOTICE_NOTES_FULL = 1u << 4,
	/* a control message selected nothing (engine_take_control_miss); raised
	 * again every time, for the shell to rate-limit */
	NOTICE_CONTROL_MISSED = 1u << 5,
};

/* A control message that selected nothing, as engine_take_control_miss
 * reports it (the shell words it). */
enum engine_miss_kind {
	ENGINE_MISS_PROGRAM,         /* program change `number` >= the preset count */
	ENGINE_MISS_PRESET_CC,       /* preset_cc `number` with `value` >= the preset count */
	ENGINE_MISS_ROOT_CC,         /* root_cc `number` with `value` beyond the preset's tones */
	ENGINE_MISS_ROOT_KEY,        /* reserved key `number` beyond the preset's tones */
	ENGINE_MISS_STEP_END,        /* `action` at an end, with wrap off */
};

struct engine_control_miss {
	enum engine_miss_kind kind;
	enum engine_action action;   /* ENGINE_MISS_STEP_END */
	uint8_t channel;             /* 0..15, where it came from */
	uint8_t number, value;       /* controller, key or program; the controller's value */
	int preset, root;            /* where the engine stayed */
	char preset_name[ENGINE_NAME_MAX];
	int presets, tones;          /* how many presets, and tones in that preset */
	uint32_t count;              /* misses since the last take, this one among them */
};

struct engine_stats {
	uint32_t notes_on;
	uint32_t notes_shared;
	uint32_t notes_stolen;
	uint32_t notes_dropped;
	uint32_t silent_keys;            /* note-ons on keys that play nothing */
	uint32_t bends_clamped;
	uint32_t passthrough_blocked;
	uint32_t tuning_changes;         /* MTS single-note changes sent */
	uint32_t messages_out;
	uint32_t control_panics;         /* panics from the panic binding */
};

/* What engine_replace_tunings kept. */
enum engine_kept {
	ENGINE_KEPT_PRESET_AND_ROOT,     /* the preset by name, the root by its tone's label */
	ENGINE_KEPT_PRESET,              /* the root's tone is gone from the preset: home */
	ENGINE_KEPT_NOTHING,             /* the preset is gone: the first one, at home */
};

/* One sounding note as the shell sees it (engine_note_at). */
struct engine_note_info {
	uint8_t source, in_channel, in_key;  /* where it came from; channels 0..15 */
	uint8_t out_channel, out_key;        /* where it went */
	bool ringing;                        /* released, held by a pedal */
	uint32_t started;                    /* engine_serial() just after it began */
	int preset;                          /* index into the tunings it began under */
	int root;                            /* the root slot it began under (0 = home) */
	int tone, period;                    /* its tone of that preset's lattice */
	double pitch;                        /* exact pitch as a note number */
};

/* A note began to sound (sounding = true: just after its note-on) or
 * stopped (false: its slot is freed, after its note-off and any pedal that
 * held it, or a panic, a steal, its source going).  engine_watch_notes. */
typedef void (*engine_note_watch_fn)(void *context, bool sounding,
				     const struct engine_note_info *note);

/* What engine_release_held let go. */
struct engine_release {
	int keys;                            /* note-offs for keys still down */
	int pedal_notes;                     /* notes that were ringing under a pedal */
};

/*
 * ---- private --------------------------------------------------------------
 * The engine's state is declared here only so a caller can embed a struct
 * engine without allocating.  Nothing outside src/core/engine*.c reads or
 * writes these fields: use the functions further down.  The layout changes
 * without notice.
 */

enum note_phase { NOTE_FREE, NOTE_DOWN, NOTE_RINGING };

struct engine_note {
	enum note_phase phase;
	uint8_t source, in_channel, in_key;
	uint8_t out_channel, out_key;
	bool sostenuto_latched;
	uint32_t started;
	double note;                     /* exact pitch as a note number */
	int16_t preset, root, tone, period;
};

struct engine_out_channel {
	int note_count;                  /* notes down or ringing on it */
	uint8_t source_channel;          /* input channel of those notes */
	uint32_t freed_at;               /* serial of its last release (LRU) */
	bool bend_known;
	uint16_t bend;
	double retune_cents;             /* of the notes on it (bend, mpe) */
	uint8_t cc[128];
	uint64_t cc_known[2];            /* bit set: cc[] holds what the synth has */
	bool program_known, pressure_known;
	uint8_t program, pressure;
	uint64_t keys_on[2];             /* out keys sounding on it */
};

struct engine_in_channel {
	uint8_t cc[128];
	uint64_t cc_set[2];              /* bit set: the player set cc[] */
	bool program_set, pressure_set;
	uint8_t program, pressure;
	uint16_t bend;                   /* raw wheel / per-note bend, 8192 centre */
	double range_cents;              /* what its full bend means */
	bool sustain, sostenuto;
	uint8_t sustain_source;          /* the device that put each pedal down */
	uint8_t sostenuto_source;
	uint8_t param_msb, param_lsb;    /* current RPN/NRPN selection */
	bool param_is_nrpn;
	uint8_t data_msb, data_lsb;
};

/* What the synth holds for MTS (engine_mts.c). */
struct engine_mts_state {
	uint8_t held[128][3];            /* words the synth holds per key */
	bool held_known[128];
};

struct engine_method;

struct engine {
	struct engine_spec spec;
	const struct engine_method *method;
	const struct engine_tunings *tunings;
	engine_emit_fn emit;
	void *context;
	engine_note_watch_fn note_watch; /* NULL: nobody watches */
	void *note_watch_context;

	int preset;
	int root_slot;                   /* 0 = home, t+1 = tone t is 1/1 */
	struct retune_table table;
	int reserved_root_keys;

	/* channel roles, fixed by engine_init */
	uint16_t retuned;                /* input channels retuned */
	uint16_t members;                /* input channels that are MPE members */
	uint8_t global_of[16];           /* input channel whose wheel, pedals and controllers apply */
	uint16_t pool;                   /* output channels notes go to */
	uint16_t used;                   /* output channels written: the pool and the global channel */
	int global_channel;              /* output channel of the player's global state, or -1 */
	uint8_t route[16];               /* input -> output channel where fixed (mts) */
	uint16_t sounding;               /* output channels with notes down or ringing */

	uint32_t serial;
	struct engine_note notes[ENGINE_MAX_NOTES];
	uint64_t note_used[ENGINE_MAX_NOTES / 64];  /* bit set: that slot's note sounds */
	int note_count;
	int16_t key_down[ENGINE_MAX_SOURCES][16][128];
	struct engine_out_channel out[16];
	struct engine_in_channel in[16];
	struct engine_mts_state mts;
	struct passthrough passthrough;  /* notes on channels not retuned */

	uint8_t action_value[ENGINE_ACTION_COUNT]; /* a bound controller's last value, 0xFF none */
	uint64_t steer_keys[2];          /* keys that steer on a playing channel */
	uint64_t steer_ccs[2];           /* controllers that steer there (channel = playing) */
	bool steer_program;              /* program changes steer there */
	struct engine_control_miss miss;
	bool miss_pending;

	uint32_t notices;
	uint32_t notices_reported;
	struct engine_stats stats;
	uint8_t sysex[ENGINE_SYSEX_MAX];
};

/* ---- driving the engine ------------------------------------------------- */

/* Checks the spec and prepares the engine; emits nothing yet. */
bool engine_init(struct engine *e, const struct engine_spec *spec,
		 const struct engine_tunings *tunings, engine_emit_fn emit,
		 void *context, struct core_error *err);

/* Sends the synth set-up (bend ranges, MPE zone, MTS program and tables);
 * call at start and whenever the output reconnects. */
void engine_start(struct engine *e);

/* Handles one message from input `source` (0..ENGINE_MAX_SOURCES-1). */
void engine_handle(struct engine *e, uint8_t source, const struct midi_msg *m);

/* Ends every note that `source` started (its device went away), the
 * pass-through ones too, and lets go of the pedals it put down. */
void engine_end_source(struct engine *e, uint8_t source);

/* Note-off for every note, then all-sound-off and all-notes-off on every
 * channel the output uses, then a note-off for every pass-through note and
 * pedal-up for every pass-through pedal.  Keys still held play nothing
 * until pressed again. */
void engine_panic(struct engine *e);

/*
 * Lets go of what the player still holds, as the player would: a note-off
 * for every key still down (every source, channel by channel), then, while
 * anything sounds, pedal-up for every pedal still down.  `before` (may be
 * NULL) sees each of those messages just before the engine handles it, so
 * a caller can place what it causes (render: in the track the key came from).
 */
struct engine_release engine_release_held(struct engine *e,
					  void (*before)(void *context, const struct midi_msg *m),
					  void *context);

/* Tuning changes for new notes.  Return false if out of range. */
bool engine_select_preset(struct engine *e, int preset);
bool engine_select_root(struct engine *e, int slot);
/* Before engine_start: begin in this preset and root slot (where a
 * restarted daemon left off); sends nothing, since engine_start sends
 * the set-up for them.  False if out of range. */
bool engine_resume_at(struct engine *e, int preset, int slot);
/*
 * Takes new tunings (a reload).  Keeps the preset by name if it still
 * exists, and then the root by its tone's label if that preset still has
 * the tone (a reload mid-song must not move the player's 1/1); else the
 * first preset, at home.  Says which.
 */
enum engine_kept engine_replace_tunings(struct engine *e, const struct engine_tunings *tunings);

/* Reports every note that starts or stops sounding to fn (NULL: no more),
 * so a shell can show what sounds without scanning the notes.  fn runs
 * inside engine_handle and friends: it must not call into this engine. */
void engine_watch_notes(struct engine *e, engine_note_watch_fn fn, void *context);

/* Does message m steer (a control, not a note), and is it the panic? */
enum engine_steer { ENGINE_STEER_NONE, ENGINE_STEER_TUNING, ENGINE_STEER_PANIC };
enum engine_steer engine_steers(const struct engine *e, const struct midi_msg *m);

/* Warnings raised since the last call, each reported once per engine
 * (NOTICE_CONTROL_MISSED: every time). */
uint32_t engine_take_notices(struct engine *e);
/* The latest control message that selected nothing, with the count since
 * the last call; false if there was none.  A miss not taken stays, and
 * later ones are counted into it. */
bool engine_take_control_miss(struct engine *e, struct engine_control_miss *out);

/* ---- reading the engine ------------------------------------------------- */

enum retune_method engine_method(const struct engine *e);
/* The preset new notes use (an index into the engine's tunings) and its root slot. */
int engine_preset(const struct engine *e);
const struct engine_preset *engine_current_preset(const struct engine *e);
int engine_root(const struct engine *e);               /* 0 = home, t+1 = tone t is 1/1 */
/* Notes sounding (down or ringing). */
/* Something still sounds: a retuned note, or one passed through (held by
 * its key or a pedal). */
bool engine_sounds(const struct engine *e);
/* The spec the engine was set up with. */
const struct engine_spec *engine_spec_of(const struct engine *e);
/* Notes whose key is down or that ring on: retuned and passed through. */
int engine_held_notes(const struct engine *e);
/* The most note-offs and pedal-ups a panic of this engine sends for its notes. */
int engine_end_size(const struct engine *e);
/* Notes passed through on channels not retuned whose key is still down. */
int engine_passthrough_notes(const struct engine *e);
int engine_note_count(const struct engine *e);
/* The n-th sounding note (0 <= n < engine_note_count), oldest slot first;
 * false when there is none. */
bool engine_note_at(const struct engine *e, int n, struct engine_note_info *out);
/* Grows whenever a note starts or a channel falls free: a note with
 * started <= a serial read earlier began before that read. */
uint32_t engine_serial(const struct engine *e);
const struct engine_stats *engine_stats(const struct engine *e);

/* The output channels notes go to under this spec (the bend pool, the mts
 * channels, the mpe members the channels name); 0 if the spec is refused. */
uint16_t engine_note_channels(const struct engine_spec *spec);

const char *retune_method_name(enum retune_method method);
/* Does the method's pitch bend carry each note's retune (bend, mpe), or
 * only the player's wheel (mts: the tuning is in the synth's table)? */
bool retune_method_bends_notes(enum retune_method method);

#endif
