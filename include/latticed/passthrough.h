/*
 * passthrough: what an engine passed on unchanged on the channels it does
 * not retune (drums on 10, a bass split on 12), kept so those notes end
 * like retuned ones: at a panic, when their source goes, at the end of a
 * render.
 *
 * Model (MIDI 1.0 receiver rules): a note sounds from its note-on until its
 * note-off (a note-on with velocity 0 is one), and after that for as long
 * as the channel's sustain pedal (CC64 >= 64) is down, or its sostenuto
 * (CC66) if the note was down when that went down.  Kept here: a bit per
 * (source, channel, key) for a note-on passed on whose note-off has not
 * been; per channel, each pedal that is down and the source that put it
 * down; per channel, the keys released while a pedal held them ("ringing").
 * All Sound Off (CC120) ends a channel's notes, All Notes Off and the mode
 * messages (CC123-127) release them, Reset All Controllers (CC121) lifts
 * its pedals.  Which source's note a note-off ends: only its own (a note-off
 * from another source for the same key ends the note on the synth too, so
 * the bit left behind only costs one note-off too many later).
 *
 * At most PASSTHROUGH_MAX_NOTES notes are held at once; a note-on beyond
 * that is refused (the engine drops it and counts it, as it does retuned
 * notes beyond its own table), so ending them all is bounded.  Fixed size,
 * no allocation; one owner, one thread.
 */
#ifndef LATTICED_PASSTHROUGH_H
#define LATTICED_PASSTHROUGH_H

#include <stdbool.h>
#include <stdint.h>

#include "latticed/midi_msg.h"

#define PASSTHROUGH_MAX_SOURCES 16
#define PASSTHROUGH_MAX_NOTES 512
#define PASSTHROUGH_ALL_SOURCES (-1)

struct passthrough {
	uint8_t down[PASSTHROUGH_MAX_SOURCES][16][16]; /* key bits per source and channel */
	uint8_t ringing[16][16];         /* key bits per channel: released, held by a pedal */
	uint8_t latched[16][16];         /* key bits per channel: down when sostenuto went down */
	uint16_t sustain, sostenuto;     /* channel bits: the pedal is down */
	uint8_t sustain_source[16], sostenuto_source[16];
	int held;                        /* bits set in down[] */
};

typedef void (*passthrough_emit_fn)(void *context, const struct midi_msg *m);

void passthrough_init(struct passthrough *p);

/* Takes note of a channel message passed on from `source`.  False for a
 * note-on that would exceed PASSTHROUGH_MAX_NOTES: do not pass it on. */
bool passthrough_record(struct passthrough *p, uint8_t source, const struct midi_msg *m);

/* Ends what `source` (or every source: PASSTHROUGH_ALL_SOURCES) left
 * sounding: a note-off for each of its notes, then pedal-up for each pedal
 * it put down, through emit.  Returns the number of messages emitted. */
int passthrough_end(struct passthrough *p, int source, passthrough_emit_fn emit, void *context);

/* Most messages passthrough_end(ALL) can emit now. */
int passthrough_end_size(const struct passthrough *p);

bool passthrough_holds(const struct passthrough *p, int source, int channel, int key);
/* cc: 64 (sustain) or 66 (sostenuto) */
bool passthrough_pedal_down(const struct passthrough *p, int channel, int cc);
/* Notes held by a key or a pedal: what a synth would still sound. */
int passthrough_held(const struct passthrough *p);
int passthrough_ringing(const struct passthrough *p);

#endif
