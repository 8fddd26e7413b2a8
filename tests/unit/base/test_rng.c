/* test_rng.c — pcg32 against its published output, and the deviates' moments
 * against their closed forms. */
#include "base/rng.h"

#include "../../cu_run.h"
#include <math.h>
#include <stdint.h>

#define N 1000000

/* Reference: pcg32-demo.c of O'Neill's pcg-c-basic (pcg-random.org), "Round 1"
 * after pcg32_srandom_r(&rng, 42u, 54u).  Quoted from memory, and the same six
 * words appear in several independent published copies of that demo's output. */
static void test_reference_vector(void)
{
    static const uint32_t want[6] = {0xa15c02b7u, 0x7b47f409u, 0xba1d3330u,
                                     0x83d2f293u, 0xbfa4784bu, 0xcbed606eu};
    ls_rng r;
    ls_rng_seed(&r, 42, 54);
    for (int i = 0; i < 6; i++)
        CU_ASSERT_EQUAL(ls_rng_u32(&r), want[i]);
}

/* Same (seed, stream) repeats exactly (normal's cached spare is reset too);
 * another stream or seed differs. */
static void test_streams(void)
{
    ls_rng a, b, c, d;
    ls_rng_seed(&a, 1, 7);
    (void)ls_rng_normal(&a); /* leaves a spare behind: reseeding must drop it */
    ls_rng_seed(&a, 1, 7);
    ls_rng_seed(&b, 1, 7);
    ls_rng_seed(&c, 1, 8);
    ls_rng_seed(&d, 2, 7);
    int same_c = 0, same_d = 0;
    for (int i = 0; i < 1000; i++) {
        double x = ls_rng_normal(&a);
        CU_ASSERT_EQUAL(x, ls_rng_normal(&b));
        same_c += x == ls_rng_normal(&c);
        same_d += x == ls_rng_normal(&d);
    }
    CU_ASSERT_EQUAL(same_c, 0);
    CU_ASSERT_EQUAL(same_d, 0);
}

/* Neighbouring streams (trial i and i+1) are uncorrelated: for independent
 * uniforms the sample correlation has standard error 1/sqrt(n). */
static void test_stream_correlation(void)
{
    ls_rng a, b;
    ls_rng_seed(&a, 1, 100);
    ls_rng_seed(&b, 1, 101);
    double sa = 0, sb = 0, sab = 0, saa = 0, sbb = 0;
    for (int i = 0; i < N; i++) {
        double x = ls_rng_uniform(&a), y = ls_rng_uniform(&b);
        sa += x; sb += y; sab += x * y; saa += x * x; sbb += y * y;
    }
    double cov = sab / N - (sa / N) * (sb / N);
    double rho = cov / sqrt((saa / N - (sa / N) * (sa / N)) * (sbb / N - (sb / N) * (sb / N)));
    CU_ASSERT(fabs(rho) < 5.0 / sqrt(N));
}

/* U[0,1): mean 1/2, variance 1/12 (closed form); the variance estimate's
 * standard error is sqrt((1/80 − 1/144)/n) from the fourth central moment 1/80.
 * Every value is a multiple of 2^-53 and some use the lowest bit. */
static void test_uniform(void)
{
    ls_rng r;
    ls_rng_seed(&r, 12345, 0);
    double s = 0, s2 = 0, lo = 1, hi = 0;
    int odd = 0;
    for (int i = 0; i < N; i++) {
        double u = ls_rng_uniform(&r);
        s += u; s2 += u * u;
        lo = fmin(lo, u); hi = fmax(hi, u);
        double k = u * 9007199254740992.0;
        CU_ASSERT_FATAL(k == floor(k));
        odd += fmod(k, 2.0) == 1.0;
    }
    double mean = s / N, var = s2 / N - mean * mean;
    CU_ASSERT(lo >= 0.0 && hi < 1.0);
    CU_ASSERT(fabs(mean - 0.5) < 5 * sqrt(1.0 / 12 / N));
    CU_ASSERT(fabs(var - 1.0 / 12) < 5 * sqrt((1.0 / 80 - 1.0 / 144) / N));
    CU_ASSERT(odd > N / 2 - 5 * 500 && odd < N / 2 + 5 * 500); /* binomial, σ = 500 */
}

/* U[-1,1): mean 0, variance 1/3, fourth central moment 1/5. */
static void test_uniform_pm1(void)
{
    ls_rng r;
    ls_rng_seed(&r, 99, 3);
    double s = 0, s2 = 0, lo = 1, hi = -1;
    for (int i = 0; i < N; i++) {
        double u = ls_rng_uniform_pm1(&r);
        s += u; s2 += u * u;
        lo = fmin(lo, u); hi = fmax(hi, u);
    }
    double mean = s / N, var = s2 / N - mean * mean;
    CU_ASSERT(lo >= -1.0 && hi < 1.0);
    CU_ASSERT(lo < -0.999 && hi > 0.999);
    CU_ASSERT(fabs(mean) < 5 * sqrt(1.0 / 3 / N));
    CU_ASSERT(fabs(var - 1.0 / 3) < 5 * sqrt((1.0 / 5 - 1.0 / 9) / N));
}

/* N(0,1): mean 0, variance 1 (SE sqrt(2/n)), and P(X < 1) = Φ(1) =
 * erfc(−1/√2)/2 with binomial standard error; P(|X| > 3) likewise. */
static void test_normal(void)
{
    ls_rng r;
    ls_rng_seed(&r, 2024, 11);
    double s = 0, s2 = 0;
    long below1 = 0, beyond3 = 0;
    for (int i = 0; i < N; i++) {
        double x = ls_rng_normal(&r);
        s += x; s2 += x * x;
        below1 += x < 1.0;
        beyond3 += fabs(x) > 3.0;
    }
    double mean = s / N, var = s2 / N - mean * mean;
    CU_ASSERT(fabs(mean) < 5 * sqrt(1.0 / N));
    CU_ASSERT(fabs(var - 1.0) < 5 * sqrt(2.0 / N));
    double p1 = 0.5 * erfc(-1.0 / sqrt(2.0));
    CU_ASSERT(fabs((double)below1 / N - p1) < 5 * sqrt(p1 * (1 - p1) / N));
    double p3 = erfc(3.0 / sqrt(2.0));
    CU_ASSERT(fabs((double)beyond3 / N - p3) < 5 * sqrt(p3 * (1 - p3) / N));
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"pcg32 reference output", test_reference_vector},
        {"seed and stream", test_streams},
        {"neighbouring streams uncorrelated", test_stream_correlation},
        {"uniform [0,1) moments", test_uniform},
        {"uniform [-1,1) moments", test_uniform_pm1},
        {"normal moments and tails", test_normal},
    };
    return ls_cu_run("rng", NULL, NULL, cases, LS_CU_COUNT(cases));
}
