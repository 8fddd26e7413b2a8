/* splitmix.h — the unit tests' generator of test inputs: splitmix64 from a
 * fixed seed, so a failure repeats.  Each test keeps its own state. */
#ifndef LS_TEST_SPLITMIX_H
#define LS_TEST_SPLITMIX_H

#include <stdint.h>

/* The next 64 random bits of the sequence whose state is *s. */
static inline uint64_t ls_test_next64(uint64_t *s)
{
    uint64_t z = (*s += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

#endif
