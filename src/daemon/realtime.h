/*
 * realtime: asks for what keeps the MIDI threads on time: SCHED_FIFO at
 * the configured priority for the input and output threads, and all
 * memory locked in RAM.  Neither is required: without permission each
 * gives ONE warning line naming the fix, and the daemon runs on.
 * Main thread, at start-up.
 */
#ifndef LATTICED_REALTIME_H
#define LATTICED_REALTIME_H

#include <pthread.h>
#include <stdbool.h>

/* mlockall(MCL_CURRENT | MCL_FUTURE); warns on failure. */
void realtime_lock_memory(void);

/* SCHED_FIFO at priority for each thread; one warning if it fails.
 * Returns true if every thread got it. */
bool realtime_promote(const pthread_t *threads, int count, int priority);

#endif
