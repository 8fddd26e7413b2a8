/* test_numahead.c — numbers formatted ahead on a second thread
 * (src/report/numahead.c) give exactly the text formatted in place.
 *
 * Reference: the same JSON written with every number formatted where it
 * stands (ls_num_shortest, itself checked against double-conversion and
 * Python's repr in test_numfmt.c and tests/bench/grid_numbers.py): the two
 * outputs must be equal byte for byte, whatever the writer does that the
 * sequence did not foresee: numbers of its own between the sequence's, a
 * sequence number it leaves out, values that are not finite, records the
 * sequence skips, runs of skipped records longer than a chunk, a value that
 * happens to equal the next expected one.  And the fast path must be taken
 * where the sequence is right (most numbers from the helper). */
#include "../../cu_run.h"
#include "../splitmix.h"
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "base/numfmt.h"
#include "report/jsonw.h"
#include "report/numahead.h"

static uint64_t seed = 0x6168656164746573ULL;
static uint64_t next64(void)
{
    return ls_test_next64(&seed);
}

#define NREC 20000

typedef struct data {
    double f[3][NREC];
    unsigned char skip[NREC];   /* records the writer leaves out (ports) */
} data;

static bool want(const void *ctx, int r)
{
    return !((const data *)ctx)->skip[r];
}

/* Values like a report's, with zeros, repeats, NaN and infinities. */
static double value(void)
{
    switch (next64() % 16) {
    case 0: return 0;
    case 1: return NAN;
    case 2: return INFINITY;
    case 3: return 1;
    default: return ((double)(next64() >> 11) * 0x1p-53 - 0.3) * pow(10, (int)(next64() % 30) - 20);
    }
}

/* Write the records' members as a report would, with `ahead` or without;
 * mode picks what the writer does besides the sequence.  The text (malloc'd). */
static char *write_all(const data *d, int mode, bool use_ahead)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    ls_jw w;
    ls_jw_init(&w, f, 2);
    ls_jw_obj(&w, NULL);
    ls_jw_obj(&w, "parts");
    ls_ahead_seq seq = {.nrec = NREC, .field = {d->f[0], d->f[1], d->f[2]}, .want = want, .ctx = d};
    ls_numahead *a = use_ahead ? ls_numahead_start(&seq) : NULL;
    CU_ASSERT(!use_ahead || a != NULL);
    w.ahead = a;
    for (int r = 0; r < NREC; r++) {
        if (d->skip[r])
            continue;
        ls_jw_obj(&w, "p");
        ls_jw_num(&w, "current", d->f[0][r]);
        if (!(mode == 1 && r % 97 == 5))   /* mode 1: a sequence number left out now and then */
            ls_jw_num(&w, "voltage", d->f[1][r]);
        if (mode == 2 && r % 13 == 0)      /* mode 2: numbers of the writer's own between */
            ls_jw_num(&w, "extra", ldexp((double)((unsigned)r * 2654435761u % 1000003u), -(r % 40)));
        if (mode == 3 && r % 7 == 0)       /* mode 3: one that equals the next expected */
            ls_jw_num(&w, "echo", d->f[2][r]);
        ls_jw_num(&w, "power", d->f[2][r]);
        ls_jw_end(&w);
    }
    w.ahead = NULL;
    ls_numahead_stop(a);
    ls_jw_finish(&w);
    fclose(f);
    return buf;
}

/* Count the numbers a run takes from the helper (a second pass with the
 * same sequence, taking directly). */
static long count_taken(const data *d)
{
    ls_ahead_seq seq = {.nrec = NREC, .field = {d->f[0], d->f[1], d->f[2]}, .want = want, .ctx = d};
    ls_numahead *a = ls_numahead_start(&seq);
    long taken = 0, finite = 0;
    for (int r = 0; r < NREC; r++) {
        if (d->skip[r])
            continue;
        for (int k = 0; k < 3; k++) {
            double v = d->f[k][r];
            if (!isfinite(v))
                continue;
            finite++;
            size_t n;
            char ref[LS_NUM_MAX];
            const char *t = ls_numahead_take(a, v, &n);
            ls_num_shortest(ref, v);
            if (t) {
                taken++;
                CU_ASSERT(n == strlen(ref) && memcmp(t, ref, n) == 0);
            }
        }
    }
    ls_numahead_stop(a);
    return finite - taken;   /* numbers not taken */
}

static void fill(data *d, int skipmode)
{
    for (int r = 0; r < NREC; r++) {
        for (int k = 0; k < 3; k++)
            d->f[k][r] = value();
        d->skip[r] = skipmode == 1 ? next64() % 5 == 0 : skipmode == 2 ? (r / 3000) % 2 == 1 : 0;
    }
}

static void test_same_bytes(void)
{
    static data d;
    for (int skipmode = 0; skipmode < 3; skipmode++) {
        fill(&d, skipmode);
        for (int mode = 0; mode < 4; mode++) {
            char *plain = write_all(&d, mode, false), *fast = write_all(&d, mode, true);
            bool same = strcmp(plain, fast) == 0;
            if (!same)
                printf("\n  skip mode %d, writer mode %d: the texts differ", skipmode, mode);
            CU_ASSERT(same);
            CU_ASSERT(strlen(plain) > 100000);
            free(plain);
            free(fast);
        }
    }
}

/* Where the writer follows the sequence, every number comes from the helper. */
static void test_taken(void)
{
    static data d;
    for (int skipmode = 0; skipmode < 3; skipmode++) {
        fill(&d, skipmode);
        CU_ASSERT_EQUAL(count_taken(&d), 0);
    }
}

/* A short sequence is not worth a thread: NULL, and take of NULL is NULL. */
static void test_short(void)
{
    double v[10] = {1, 2, 3};
    ls_ahead_seq seq = {.nrec = 10, .field = {v}};
    CU_ASSERT_PTR_NULL(ls_numahead_start(&seq));
    size_t n;
    CU_ASSERT_PTR_NULL(ls_numahead_take(NULL, 1.0, &n));
    ls_numahead_stop(NULL);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"the same bytes as formatting in place", test_same_bytes},
        {"a followed sequence is taken whole", test_taken},
        {"short sequences and NULL", test_short},
    };
    return ls_cu_run("numbers formatted ahead", NULL, NULL, cases, LS_CU_COUNT(cases));
}
