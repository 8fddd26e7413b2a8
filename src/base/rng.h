/* rng.h — PCG32 random numbers for Monte Carlo trials.
 *
 * The generator is M. E. O'Neill's pcg32 (PCG-XSH-RR, 64-bit state, 32-bit
 * output), seeded exactly like the reference pcg32_srandom_r(initstate,
 * initseq), so its first outputs can be checked against the published demo.
 * pcg32 streams that share a seed and differ only in the stream number are
 * related (their first outputs are too evenly spread), so a Monte Carlo run
 * seeds trial i with ls_rng_seed_trial, which mixes i into the seed: every
 * trial's numbers depend only on the run's seed and the trial index, whatever
 * the number of threads. */
#ifndef LS_RNG_H
#define LS_RNG_H

#include <stdbool.h>
#include <stdint.h>

/* Plain state, owned by the caller (stack or struct member); no heap. */
typedef struct ls_rng {
    uint64_t state;
    uint64_t inc;       /* stream selector, always odd */
    double spare;       /* second Box–Muller deviate, valid when has_spare */
    bool has_spare;
} ls_rng;

/* Seed r for sequence `stream` of the generator seeded with `seed`. */
void ls_rng_seed(ls_rng *r, uint64_t seed, uint64_t stream);

/* Seed r for trial `trial` of a run seeded with `seed`: stream `trial`, with
 * the seed mixed by SplitMix64 so that neighbouring trials are unrelated. */
void ls_rng_seed_trial(ls_rng *r, uint64_t seed, uint64_t trial);

/* Next 32-bit output of pcg32. */
uint32_t ls_rng_u32(ls_rng *r);

/* Uniform in [0, 1) with 53 random bits (two outputs). */
double ls_rng_uniform(ls_rng *r);

/* Uniform in [-1, 1) (a subset of [-1, 1]; 1 itself never occurs): 2u − 1. */
double ls_rng_uniform_pm1(ls_rng *r);

/* Standard normal (mean 0, σ 1) by the Box–Muller transform; the second value of
 * each pair is kept in r, so the sequence depends only on r's seed. */
double ls_rng_normal(ls_rng *r);

#endif
