/*
 * midi_parser: a small state machine over one byte at a time.
 *
 * `status` is what the next data byte belongs to: a channel status stays
 * there after its message completes (that is running status), a system
 * common status is cleared once its data has arrived.  `partial` tells a
 * message that has begun (status byte or some data seen) from running
 * status merely waiting, so that a status byte arriving next can count the
 * first case as a truncated message and not the second.  Real-time bytes
 * are handled before anything touches this state, which is what lets them
 * sit anywhere in the stream.
 */
#include "latticed/midi_parser.h"

void midi_parser_init(struct midi_parser *p, uint8_t *sysex_buffer, size_t sysex_capacity)
{
	*p = (struct midi_parser){ 0 };
	p->sysex_buffer = sysex_buffer;
	p->sysex_capacity = sysex_buffer ? sysex_capacity : 0;
	if (p->sysex_capacity > UINT16_MAX)
		p->sysex_capacity = UINT16_MAX;
}

void midi_parser_reset(struct midi_parser *p)
{
	p->status = 0;
	p->data_count = 0;
	p->data_needed = 0;
	p->partial = false;
	p->in_sysex = false;
	p->sysex_overflowed = false;
	p->sysex_length = 0;
}

static void sysex_append(struct midi_parser *p, uint8_t byte)
{
	if (p->sysex_length < p->sysex_capacity)
		p->sysex_buffer[p->sysex_length++] = byte;
	else
		p->sysex_overflowed = true;
}

/* A status byte other than F7 arrived while SysEx was being collected. */
static void sysex_abandon(struct midi_parser *p)
{
	if (p->sysex_overflowed)
		p->stats.sysex_overflows++;
	else
		p->stats.sysex_interrupted++;
	p->in_sysex = false;
	p->sysex_overflowed = false;
	p->sysex_length = 0;
}

static bool sysex_finish(struct midi_parser *p, struct midi_msg *out)
{
	sysex_append(p, MIDI_SYSEX_END);
	p->in_sysex = false;
	if (p->sysex_overflowed) {
		p->stats.sysex_overflows++;
		p->sysex_overflowed = false;
		p->sysex_length = 0;
		return false;
	}
	*out = midi_msg_sysex(p->sysex_buffer, (uint16_t)p->sysex_length);
	p->sysex_length = 0;
	return true;
}

static bool deliver(struct midi_parser *p, struct midi_msg *out)
{
	uint8_t st = p->status;
	*out = midi_msg_make(st, p->data[0], p->data[1]);
	if ((st & 0xF0) == MIDI_NOTE_ON && p->data[1] == 0) {
		/* MIDI 1.0: velocity 0 means Note Off */
		out->status = (uint8_t)(MIDI_NOTE_OFF | (st & 0x0F));
		out->data[1] = MIDI_DEFAULT_VELOCITY;
	}
	p->data_count = 0;
	p->data[0] = p->data[1] = 0;
	p->partial = false;
	if (st >= 0xF0)
		p->status = 0;   /* system common: no running status */
	return true;
}

static bool feed_status(struct midi_parser *p, uint8_t byte, struct midi_msg *out)
{
	if (p->in_sysex) {
		if (byte == MIDI_SYSEX_END)
			return sysex_finish(p, out);
		sysex_abandon(p);
	} else if (p->partial) {
		p->stats.truncated_messages++;
	}
	p->partial = false;
	p->data_count = 0;
	p->data[0] = p->data[1] = 0;

	if (byte < 0xF0) {
		p->status = byte;
		p->data_needed = (uint8_t)midi_status_data_length(byte);
		p->partial = true;
		return false;
	}

	/* every system common byte and SysEx cancels running status */
	p->status = 0;
	switch (byte) {
	case MIDI_SYSEX:
		p->in_sysex = true;
		p->sysex_overflowed = false;
		p->sysex_length = 0;
		sysex_append(p, MIDI_SYSEX);
		return false;
	case MIDI_SYSEX_END:
		p->stats.stray_sysex_ends++;
		return false;
	case MIDI_TUNE_REQUEST:
		*out = midi_msg_make(byte, 0, 0);
		return true;
	case MIDI_MTC_QUARTER:
	case MIDI_SONG_POSITION:
	case MIDI_SONG_SELECT:
		p->status = byte;
		p->data_needed = (uint8_t)midi_status_data_length(byte);
		p->partial = true;
		return false;
	default:   /* F4, F5 */
		p->stats.undefined_bytes++;
		return false;
	}
}

bool midi_parser_feed(struct midi_parser *p, uint8_t byte, struct midi_msg *out)
{
	if (byte >= 0xF8) {
		if (byte == 0xF9 || byte == 0xFD) {
			p->stats.undefined_bytes++;
			return false;
		}
		*out = midi_msg_make(byte, 0, 0);
		return true;
	}
	if (byte & 0x80)
		return feed_status(p, byte, out);

	if (p->in_sysex) {
		sysex_append(p, byte);
		return false;
	}
	if (p->status == 0) {
		p->stats.stray_data_bytes++;
		return false;
	}
	p->data[p->data_count++] = byte;
	p->partial = true;
	if (p->data_count < p->data_needed)
		return false;
	return deliver(p, out);
}
