/*
 * clock: clock_gettime(CLOCK_MONOTONIC), in milliseconds.
 */
#include "clock.h"

#include <time.h>

int64_t monotonic_ms(void)
{
	struct timespec ts;
	clock_gettime(CLOCK_MONOTONIC, &ts);
	return (int64_t)ts.tv_sec * 1000 + ts.tv_nsec / 1000000;
}
