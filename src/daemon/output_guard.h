/*
 * output_guard: which of the player's messages one output takes when its
 * queue fills, and the latest controller values it holds back meanwhile.
 *
 * Model: every message from the player is one of four kinds for an output
 * (guard_classify, which looks at the message and at that output's engine):
 *   - MUST: it can end a sound or steers what ends one: note-offs (a note-on
 *     with velocity 0 is one), pedal releases, the RPN/NRPN machinery,
 *     channel mode messages, anything that steers the tuning (engine_steers:
 *     all of the control channel, a bound controller or key, a reserved key,
 *     so every output steps alike; the panic binding needs room for a whole
 *     panic), System Reset.  Never left out.  guard_must_slots says how many queue slots
 *     the engine can need for it at most, from what the engine holds now.
 *   - NOTE_ON: a new note.  Left out when the queue is above its high-water
 *     mark: the engine never sees it, so its note-off later finds no note
 *     and sends nothing.
 *   - MERGE: continuous data (pitch wheel, channel and key pressure,
 *     program changes, controllers other than the above, pedals going
 *     down).  When it cannot go now, the latest value per channel and
 *     controller (per key for key pressure) is kept in a guard_store and
 *     given to the engine when the queue has room again, before any newer
 *     message: a wheel that came back to the centre always gets there.
 *   - SHED: system messages (SysEx, clock, song position, ...): left out
 *     above the high-water mark.
 * The store also drops what a later MUST message overrides (a pending pedal
 * press when its release goes first, everything of a channel at Reset All
 * Controllers), so what it delivers later is never older than what went.
 *
 * Fixed size, no allocation: the input thread owns one guard per output.
 */
#ifndef LATTICED_OUTPUT_GUARD_H
#define LATTICED_OUTPUT_GUARD_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/engine.h"
#include "latticed/midi_msg.h"
#include "latticed/passthrough.h"

/* Slots one NOTE_ON, MERGE or SHED message can take at most: a note-on's
 * channel brought up to date (about 120 controllers), a stolen channel's
 * notes ended, its bend, an MTS change and the note; or a SysEx passed on
 * (MSG_QUEUE_MESSAGE_MAX bytes). */
#define GUARD_EVENT_SLOTS 320
/* The synth set-up (engine_start): RPNs on every channel, a bulk dump. */
#define GUARD_SETUP_SLOTS 320
/* panic and source ends beyond the notes: pedals, all-sound-off and
 * all-notes-off on every channel */
#define GUARD_END_CHANNEL_SLOTS (16 * 4 + 16)
/* The most engine_panic can send: every note, every pass-through note and
 * pedal (guard_end_slots is never more). */
#define GUARD_END_SLOTS_MAX (ENGINE_MAX_NOTES + PASSTHROUGH_MAX_NOTES + 32 + GUARD_END_CHANNEL_SLOTS)

enum guard_class { GUARD_MUST, GUARD_NOTE_ON, GUARD_MERGE, GUARD_SHED };

struct guard_store {
	uint8_t cc_pending[16][16];          /* bits per channel */
	uint8_t cc[16][128], cc_source[16][128];
	uint8_t poly_pending[16][16];
	uint8_t poly[16][128], poly_source[16][128];
	uint16_t bend_pending, program_pending, pressure_pending; /* channel bits */
	uint16_t bend[16];
	uint8_t program[16], pressure[16];
	uint8_t bend_source[16], program_source[16], pressure_source[16];
	int count;                           /* values held */
};

struct output_guard {
	struct guard_store store;
	uint64_t note_ons_shed;              /* new notes left out */
	uint64_t values_merged;              /* held values replaced by newer ones */
	uint64_t system_shed;                /* system messages left out */
	uint64_t cut_off_dropped;            /* messages left out while cut off */
};

enum guard_class guard_classify(const struct engine *e, const struct midi_msg *m);

/* Slots the engine may need for a MUST message now. */
int guard_must_slots(const struct engine *e, const struct midi_msg *m);
/* Slots engine_panic or engine_end_source may need now. */
int guard_end_slots(const struct engine *e);

/* Keeps m (MERGE) as the latest value of its controller; e says which
 * channel a pedal belongs to (an MPE controller's pedals hold its zone). */
void guard_store_put(struct output_guard *g, const struct engine *e, uint8_t source,
		     const struct midi_msg *m);
/* Drops held values that the MUST message m overrides. */
void guard_store_forget(struct output_guard *g, const struct engine *e, const struct midi_msg *m);
/* The next held value, channel by channel (controllers in number order,
 * then program, pressure, key pressure, the wheel last); false if none. */
bool guard_store_take(struct output_guard *g, uint8_t *source, struct midi_msg *m);
void guard_store_clear(struct output_guard *g);

#endif
