/*
 * rpn: Registered Parameter Number sequences.
 *
 * A parameter is selected with CC101 (MSB) then CC100 (LSB), its value
 * sent with CC6 (data entry MSB), and the selection closed with RPN null
 * (CC101 = 127, CC100 = 127) so stray data-entry messages change nothing.
 * CC38 is never sent: many receivers ignore it and FluidSynth 2.3 adds it
 * as cents, so whole-semitone values are the portable choice.
 * Private to the core (the engine sends them).
 */
#ifndef LATTICED_CORE_RPN_H
#define LATTICED_CORE_RPN_H

#include <stdint.h>

#include "latticed/midi_msg.h"

#define RPN_SEQUENCE_LENGTH 5

enum rpn_param {
	RPN_BEND_RANGE = 0,          /* semitones */
	RPN_FINE_TUNING = 1,
	RPN_COARSE_TUNING = 2,
	RPN_TUNING_PROGRAM = 3,      /* MTS */
	RPN_TUNING_BANK = 4,         /* MTS */
	RPN_MPE_CONFIGURATION = 6,   /* member channel count */
};

/* Fills out[0..4] with select, data entry and null on `channel` (0..15). */
void rpn_build(uint8_t channel, enum rpn_param param, uint8_t value,
	       struct midi_msg out[RPN_SEQUENCE_LENGTH]);

#endif
