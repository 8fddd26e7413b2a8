/* test_doubtful.c — the doubtful-digit test (ls_acc_doubtful, accuracy.c): is
 * an error bound more than half a unit of the last printed digit?
 *
 * References: the definition itself, computed the plain way (the unit from
 * log10 and pow of the C library), which the fast rejection in accuracy.c
 * must agree with on every input; and glibc's printf "%.*e", whose exponent
 * says where the last of `digits` significant digits falls: a bound just
 * under half that digit's unit is not doubtful, one just over it is. */
#include "../../cu_run.h"
#include "../splitmix.h"
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "analysis/accuracy.h"

static uint64_t seed = 0x646f756274667531ULL;
static uint64_t next64(void)
{
    return ls_test_next64(&seed);
}

static double unit01(void)
{
    return (double)(next64() >> 11) * 0x1p-53;
}

/* The definition, the plain way. */
static bool plain(double value, double bound, int digits, double scale)
{
    if (isnan(bound) || !isfinite(value))
        return false;
    if (isinf(bound))
        return true;
    if (value == 0)
        return bound > 1e-12 * scale;
    double unit = pow(10, floor(log10(fabs(value))) - (digits - 1));
    return bound > 0.5 * unit;
}

/* Random values of every magnitude (and the neighbours of powers of ten),
 * bounds around the last digit's unit and far below it. */
static void test_same_as_plain(void)
{
    long differ = 0, doubtful = 0, n = 0;
    for (long i = 0; i < 400000; i++) {
        int e = (int)(next64() % 60) - 30;
        double v = (unit01() * 9 + 1) * pow(10, e);
        switch (next64() % 4) {
        case 0: v = pow(10, e); break;
        case 1: v = nextafter(pow(10, e), 0); break;
        case 2: v = -v; break;
        default: break;
        }
        int digits = (int)(next64() % 20);   /* 0 and 18, 19: outside the fast path's table */
        double bound = fabs(v) * pow(10, -(double)digits - 3 + 4 * unit01()) * (next64() % 2 ? 1 : 0.5);
        if (next64() % 8 == 0)
            bound = fabs(v) * 1e-16 * unit01();   /* the common case: near double precision */
        bool want = plain(v, bound, digits, 1), got = ls_acc_doubtful(v, bound, digits, 1);
        n++;
        doubtful += want;
        if (want != got && differ++ < 10)
            printf("\n  value %a bound %a digits %d: plain %d, fast %d", v, bound, digits, want, got);
    }
    static const double special[][2] = {{0, 0}, {0, 1e-11}, {0, 1e-13}, {1, NAN}, {1, INFINITY}, {NAN, 1}, {INFINITY, 0}};
    for (size_t i = 0; i < sizeof special / sizeof *special; i++) {
        bool want = plain(special[i][0], special[i][1], 4, 1), got = ls_acc_doubtful(special[i][0], special[i][1], 4, 1);
        differ += want != got;
    }
    CU_ASSERT(differ == 0);
    CU_ASSERT(doubtful > n / 10 && doubtful < n - n / 10);   /* both answers well exercised */
}

/* Against printf: the exponent of v printed to `digits` significant digits
 * places the last digit; half its unit is the line. */
static void test_against_printf(void)
{
    long checked = 0, wrong = 0;
    for (long i = 0; i < 100000; i++) {
        int e = (int)(next64() % 40) - 20, digits = 1 + (int)(next64() % 8);
        double v = (unit01() * 8.4 + 1.05) * pow(10, e);   /* clear of the decade's ends, even rounded to one digit */
        char b[64];
        snprintf(b, sizeof b, "%.*e", digits - 1, v);
        int pe = atoi(strchr(b, 'e') + 1);
        double half = 0.5 * pow(10, pe - (digits - 1));
        checked++;
        if (ls_acc_doubtful(v, half * 0.999, digits, 1) || !ls_acc_doubtful(v, half * 1.001, digits, 1))
            if (wrong++ < 10)
                printf("\n  %s (%d digits): half unit %g", b, digits, half);
    }
    CU_ASSERT(wrong == 0);
    CU_ASSERT(checked == 100000);
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"the fast rejection agrees with the plain definition", test_same_as_plain},
        {"half the last printed digit's unit, as printf places it", test_against_printf},
    };
    return ls_cu_run("doubtful digits", NULL, NULL, cases, LS_CU_COUNT(cases));
}
