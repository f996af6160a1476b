/*
 * clock: the one time source of the MIDI threads and the daemon.
 *
 * Model: milliseconds on CLOCK_MONOTONIC, which never jumps when the wall
 * clock is set (NTP at boot on a Raspberry Pi without a real-time clock),
 * so timeouts, rate limits and uptimes stay right.  Safe from any thread;
 * no allocation, no lock.
 */
#ifndef LATTICED_CLOCK_H
#define LATTICED_CLOCK_H

#include <stdint.h>

int64_t monotonic_ms(void);

#endif
