/*
 * alsa_quiet: alsa-lib prints a line of its own for every failure (e.g.
 * "ALSA lib seq_hw.c:466:(snd_seq_hw_open) open /dev/snd/seq failed");
 * latticed says what went wrong once, with the fix, instead.  The ALSA
 * sequencer backend and PortMidi (which goes through alsa-lib on Linux)
 * call this before they open anything.  Private to src/io.
 */
#ifndef LATTICED_ALSA_QUIET_H
#define LATTICED_ALSA_QUIET_H

void alsa_quiet_lib_errors(void);

#endif
