/*
 * rpn: builds RPN control-change sequences (see rpn.h for the order and
 * why CC38 is left out).
 */
#include "rpn.h"

void rpn_build(uint8_t channel, enum rpn_param param, uint8_t value,
	       struct midi_msg out[RPN_SEQUENCE_LENGTH])
{
	out[0] = midi_msg_control(channel, 101, 0);
	out[1] = midi_msg_control(channel, 100, (uint8_t)param);
	out[2] = midi_msg_control(channel, 6, value);
	out[3] = midi_msg_control(channel, 101, 127);
	out[4] = midi_msg_control(channel, 100, 127);
}
