/* rng.c — pcg32 (PCG-XSH-RR 64/32) and the deviates built on it. */
#include "base/rng.h"

#include <math.h>

#define PCG_MULT UINT64_C(6364136223846793005)

/* Advance the LCG; returns the state before the step (the output uses it). */
static uint64_t step(ls_rng *r)
{
    uint64_t old = r->state;
    r->state = old * PCG_MULT + r->inc;
    return old;
}

/* Same procedure as the reference pcg32_srandom_r, so its test vectors hold. */
void ls_rng_seed(ls_rng *r, uint64_t seed, uint64_t stream)
{
    r->state = 0;
    r->inc = (stream << 1) | 1u;
    step(r);
    r->state += seed;
    step(r);
    r->spare = 0;
    r->has_spare = false;
}

/* SplitMix64's output function (Steele, Lea and Flood, "Fast splittable
 * pseudorandom number generators", OOPSLA 2014): a bijective 64-bit mix. */
static uint64_t splitmix64(uint64_t z)
{
    z += UINT64_C(0x9E3779B97F4A7C15);
    z = (z ^ (z >> 30)) * UINT64_C(0xBF58476D1CE4E5B9);
    z = (z ^ (z >> 27)) * UINT64_C(0x94D049BB133111EB);
    return z ^ (z >> 31);
}

void ls_rng_seed_trial(ls_rng *r, uint64_t seed, uint64_t trial)
{
    ls_rng_seed(r, splitmix64(seed ^ splitmix64(trial)), trial);
}

/* XSH-RR output: xorshift the high bits down, then rotate by the top 5 bits. */
uint32_t ls_rng_u32(ls_rng *r)
{
    uint64_t old = step(r);
    uint32_t x = (uint32_t)(((old >> 18) ^ old) >> 27);
    uint32_t rot = (uint32_t)(old >> 59);
    return (x >> rot) | (x << ((32u - rot) & 31u));
}

/* 27 + 26 bits from two outputs give every multiple of 2^-53 in [0, 1). */
double ls_rng_uniform(ls_rng *r)
{
    uint32_t a = ls_rng_u32(r) >> 5, b = ls_rng_u32(r) >> 6;
    return (a * 67108864.0 + b) * (1.0 / 9007199254740992.0);
}

/* Returns 2u − 1 for u uniform in [0, 1); exact in binary floating point. */
double ls_rng_uniform_pm1(ls_rng *r)
{
    return 2.0 * ls_rng_uniform(r) - 1.0;
}

/* Box–Muller: u1 is taken in (0, 1] so log(u1) is finite. */
double ls_rng_normal(ls_rng *r)
{
    if (r->has_spare) {
        r->has_spare = false;
        return r->spare;
    }
    double u1 = 1.0 - ls_rng_uniform(r);
    double u2 = ls_rng_uniform(r);
    double rad = sqrt(-2.0 * log(u1));
    double th = 6.283185307179586 * u2;
    r->spare = rad * sin(th);
    r->has_spare = true;
    return rad * cos(th);
}
