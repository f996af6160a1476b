/*
 * test_rng: the seeded pseudo-random stream every randomized test uses,
 * so a seed names the same stream in every test.  xorshift64* (Vigna,
 * "An experimental exploration of Marsaglia's xorshift generators"),
 * common practice for test streams; not for anything else.
 */
#ifndef LATTICED_TEST_RNG_H
#define LATTICED_TEST_RNG_H

#include <stdint.h>

struct rng {
	uint64_t state; /* never 0 */
};

static inline uint32_t rng_next(struct rng *r)
{
	r->state ^= r->state >> 12;
	r->state ^= r->state << 25;
	r->state ^= r->state >> 27;
	return (uint32_t)((r->state * 0x2545F4914F6CDD1DULL) >> 32);
}

static inline int rng_below(struct rng *r, int n)
{
	return (int)(rng_next(r) % (uint32_t)n);
}

#endif
