/* test_numfmt.c — ls_num_g17 and ls_fmt_full against the C library's printf.
 *
 * Reference: glibc's snprintf(buf, n, "%.17g", v), which writes the exactly
 * rounded decimal value (round to nearest, ties to even, in the default
 * rounding mode).  Every check compares bytes with what it writes for the same
 * double: tens of millions of random bit patterns (every exponent, subnormals,
 * both signs), integers, powers of two and ten and their neighbours, the exact
 * halfway cases between two 17-digit results, and the places where %g switches
 * between fixed and exponent form. */
#include "fmt.h"
#include "numfmt.h"

#include "../cu_run.h"
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* splitmix64: a fixed seed, so a failure repeats */
static uint64_t seed = 0x6c6f616473746b31ULL;
static uint64_t next64(void)
{
    uint64_t z = (seed += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

static double from_bits(uint64_t u)
{
    double v;
    memcpy(&v, &u, sizeof v);
    return v;
}

static long checked, mismatched;

/* One value: ls_num_g17 (and ls_fmt_full) against glibc's "%.17g". */
static void check(double v)
{
    char want[64], got[LS_NUM_G17_MAX + 8], full[64];
    checked++;
    if (!isfinite(v)) {
        ls_fmt_full(full, sizeof full, v);
        if (strcmp(full, "null") != 0 && mismatched++ < 10)
            printf("\n  non-finite %a: ls_fmt_full wrote '%s', not null", v, full);
        return;
    }
    int n = snprintf(want, sizeof want, "%.17g", v); /* the reference: the C library's printf */
    size_t len = ls_num_g17(got, v);
    if ((strcmp(got, want) != 0 || (int)len != n) && mismatched++ < 10)
        printf("\n  %a: printf '%s', ls_num_g17 '%s' (length %zu)", v, want, got, len);
}

/* v and the doubles either side of it */
static void check_around(double v)
{
    check(v);
    check(nextafter(v, INFINITY));
    check(nextafter(v, -INFINITY));
    check(-v);
}

static void start(void)
{
    checked = mismatched = 0;
}

static void finish(void)
{
    if (mismatched)
        printf("\n  %ld of %ld differ from printf", mismatched, checked);
    CU_ASSERT_EQUAL(mismatched, 0);
}

/* Uniformly random 64-bit patterns: every exponent and sign; NaNs and
 * infinities must give "null" from ls_fmt_full. */
static void test_random_bits(void)
{
    start();
    for (long i = 0; i < 10000000; i++)
        check(from_bits(next64()));
    check(NAN);
    check(INFINITY);
    check(-INFINITY);
    finish();
}

/* Subnormals (biased exponent 0) and the smallest normals. */
static void test_subnormal(void)
{
    start();
    for (long i = 0; i < 1000000; i++) {
        uint64_t u = next64() & ((UINT64_C(1) << 52) - 1);
        u >>= next64() % 52; /* all lengths of fraction, not only long ones */
        check(from_bits(u | (next64() & (UINT64_C(1) << 63))));
        check(from_bits((u | (UINT64_C(1) << 52)) ^ (next64() & (UINT64_C(1) << 63))));
    }
    check_around(DBL_TRUE_MIN);
    check_around(DBL_MIN);
    check_around(DBL_MAX);
    check(0.0);
    check(-0.0);
    finish();
}

/* Integers: small ones, ones near 2^53 where spacing turns 2, and large ones
 * with 17 to 20 digits (rounded at the 17th). */
static void test_integers(void)
{
    start();
    for (int i = -100000; i <= 100000; i++)
        check((double)i);
    for (long i = 0; i < 1000000; i++) {
        check((double)(next64() >> (next64() % 64)));
        check((double)(int64_t)next64());
        check((double)((UINT64_C(1) << 53) + (next64() % 100000)) - 50000);
    }
    for (double x = 1; x < 1e21; x *= 10) { /* 99..9 and 10..0 around each power of ten */
        check_around(x - 1);
        check_around(x + 1);
    }
    finish();
}

/* Every power of two and of ten in range, with both neighbours. */
static void test_powers(void)
{
    start();
    for (int k = -1074; k <= 1023; k++)
        check_around(ldexp(1.0, k));
    for (int k = -323; k <= 308; k++) {
        char s[16];
        snprintf(s, sizeof s, "1e%d", k);
        double t = strtod(s, NULL);
        check_around(t);
        check_around(t * 5);
        check_around(t * 9.9999999999999998);
    }
    finish();
}

/* The exact halfway cases: |v| = m * 2^-k with m odd whose exact decimal value
 * has 18 significant digits, the last a 5.  printf rounds them to even. */
static void test_halfway(void)
{
    start();
    long made = 0;
    for (int k = 1; k <= 25; k++) {
        unsigned __int128 p5 = 1;
        for (int i = 0; i < k; i++)
            p5 *= 5;
        const uint64_t e17 = UINT64_C(100000000000000000);
        uint64_t lo = (uint64_t)((e17 + p5 - 1) / p5), hi = (uint64_t)((e17 * 10 - 1) / p5);
        if (hi >= UINT64_C(1) << 53)
            hi = (UINT64_C(1) << 53) - 1;
        if (lo > hi)
            continue;
        for (int j = 0; j < 120000; j++) {
            uint64_t m = (lo + next64() % (hi - lo + 1)) | 1;
            if (m > hi)
                continue;
            double v = ldexp((double)m, -k);
            check(next64() & 1 ? -v : v);
            made++;
        }
    }
    CU_ASSERT(made > 1000000); /* the generator does reach them */
    finish();
}

/* Doubles like those a report writes: node voltages, currents, powers over the
 * magnitudes a circuit has, and the fixed/exponent switch of %g at 1e-5 and
 * 1e17. */
static void test_report_like(void)
{
    start();
    for (long i = 0; i < 1200000; i++) {
        double u = (double)(next64() >> 11) * 0x1p-53;
        check(u);
        check(ldexp(u, (int)(next64() % 200) - 100));
        check(u * pow(10, (int)(next64() % 40) - 20));
    }
    static const double edge[] = {1e-4, 1e-5, 0.0001, 0.00001, 9.9999999999999995e-5, 1e16, 1e17,
                                  9.9999999999999998e16, 123456789012345678.0, 0.1, 0.2, 0.3, 1.0 / 3,
                                  2.0 / 3, 1, 10, 100, 0.5, 1.5, 2.5, 1e100, 1e-100, 1e300, 1e-300};
    for (size_t i = 0; i < sizeof edge / sizeof *edge; i++)
        check_around(edge[i]);
    finish();
}

/* ls_fmt_full into buffers too small for the text cuts it as snprintf would. */
static void test_full_cut(void)
{
    const double v[] = {0.94060638961510035, -1.3322676295501878e-16, 12345, -0.0, NAN};
    for (size_t i = 0; i < sizeof v / sizeof *v; i++) {
        for (size_t n = 1; n < 40; n++) {
            char want[64], got[64];
            memset(want, 'x', sizeof want);
            memset(got, 'x', sizeof got);
            if (isfinite(v[i]))
                snprintf(want, n, "%.17g", v[i]); /* the C library's printf */
            else
                snprintf(want, n, "null");
            ls_fmt_full(got, n, v[i]);
            CU_ASSERT(memcmp(want, got, sizeof want) == 0);
        }
    }
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"random bit patterns", test_random_bits},
        {"subnormals and range ends", test_subnormal},
        {"integers", test_integers},
        {"powers of two and ten", test_powers},
        {"halfway cases round to even", test_halfway},
        {"report-like values, form switches", test_report_like},
        {"short buffers", test_full_cut},
    };
    return ls_cu_run("numfmt: %.17g as printf writes it", NULL, NULL, cases, LS_CU_COUNT(cases));
}
