/* test_numfmt.c — the machine formats' numbers: exact, shortest, valid JSON.
 *
 * References: glibc's strtod (correctly rounded, so a text reads back to the
 * one double nearest it) and glibc's printf "%.*e" (the correctly rounded
 * decimal of p digits): the text of ls_num_shortest must read back to the
 * same double, and no text of fewer significant digits may (the shortest
 * round-trip property).  The layout follows the JSON number grammar of
 * RFC 8259, section 6.  The whole text is compared byte for byte with that of
 * Debian's double-conversion in the same layout (dconv_ref.cc: an outside
 * implementation of the shortest digits, the one the reports used before).  The
 * digits are also compared with Python's repr, which prints the same shortest
 * text, in tests/output/test_json_all.py and tests/output/report_repr.py. */
#include "base/fmt.h"
#include "base/numfmt.h"

#include "../../cu_run.h"
#include <float.h>
#include <math.h>
#include <regex.h>
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

static regex_t json_number; /* RFC 8259 section 6 */
static long checked, failed;

/* double-conversion's text of v (dconv_ref.cc); its length, or -1 */
int ref_dconv_shortest(char *buf, int size, double v);

/* Significant digits of a number's text (leading zeros and the exponent not counted). */
static int sig_digits(const char *s)
{
    int n = 0, lead = 1, zeros = 0;
    for (; *s && *s != 'e'; s++) {
        if (*s < '0' || *s > '9')
            continue;
        if (lead && *s == '0')
            continue;
        lead = 0;
        n++;
        zeros = *s == '0' ? zeros + 1 : 0;
    }
    return n - zeros ? n - zeros : 1; /* trailing zeros of an integer are not significant */
}

/* One value: reads back exactly, is the shortest such text, is a JSON number. */
static void check(double v)
{
    if (!isfinite(v))
        return;
    char got[LS_NUM_MAX + 8];
    memset(got, 'x', sizeof got);
    size_t len = ls_num_shortest(got, v);
    checked++;
    bool ok = len == strlen(got) && len < LS_NUM_MAX;
    double back = strtod(got, NULL); /* the reference reader: glibc */
    ok &= back == v && (v != 0 || !signbit(back)); /* -0 is written 0 */
    ok &= regexec(&json_number, got, 0, NULL, 0) == 0;
    char ref[64];
    int rn = ref_dconv_shortest(ref, (int)sizeof ref, v);
    ok &= rn == (int)len && memcmp(ref, got, len) == 0;
    int d = sig_digits(got);
    if (d > 1) { /* one digit fewer, correctly rounded by printf, must not read back */
        char shorter[64];
        snprintf(shorter, sizeof shorter, "%.*e", d - 2, v);
        ok &= strtod(shorter, NULL) != v;
    }
    if (!ok && failed++ < 20)
        printf("\n  %a: ls_num_shortest '%s' (reads back %a, %d digits; double-conversion '%s')", v, got, back, d,
               rn >= 0 ? ref : "?");
}

static void start(void)
{
    checked = failed = 0;
}

static void finish(void)
{
    CU_ASSERT(failed == 0);
    CU_ASSERT(checked > 0);
}

static void test_random_bits(void)
{
    start();
    for (long i = 0; i < 600000; i++)
        check(from_bits(next64()));
    finish();
}

/* Values like a report's: voltages, currents, powers and ratios of every
 * magnitude, and the neighbours of round numbers. */
static void test_report_like(void)
{
    start();
    for (long i = 0; i < 100000; i++) {
        double u = (double)(next64() >> 11) * 0x1p-53;
        check(u * pow(10, (int)(next64() % 40) - 20));
        double r = round(u * 1e4) / 1e4; /* a few digits: short texts */
        check(r);
        check(nextafter(r, 2));
    }
    static const double edge[] = {0, 1, 0.1, 0.2, 0.3, 1.0 / 3, 5, 1e-6, 9.99999e-7, 1e-7, 1e20, 1e21,
                                  123456789012345680000.0, DBL_MAX, DBL_MIN, 4.9406564584124654e-324,
                                  2.2250738585072009e-308, 0.000001234567890123456};
    for (size_t i = 0; i < sizeof edge / sizeof *edge; i++) {
        check(edge[i]);
        check(-edge[i]);
        check(nextafter(edge[i], INFINITY));
        check(nextafter(edge[i], -INFINITY));
    }
    finish();
}

/* Values whose exact binary value has few decimal digits, where two shortest
 * candidates can lie at the same distance (exact halves, large powers of two,
 * integers above 2^53, the smallest subnormals and their multiples): the
 * nearest-and-tie rule of the two implementations must agree there too. */
static void test_ties(void)
{
    start();
    for (int e = -1074; e <= 1023; e++) {
        double p2 = ldexp(1, e);
        check(p2);
        check(nextafter(p2, INFINITY));
        check(nextafter(p2, 0));
        for (int m = 3; m < 64; m += 2)
            check(ldexp(m, e));
    }
    for (long i = 1; i < 200000; i++) {
        check(ldexp((double)i, -1074));
        check((double)(i * 5) * 0x1p53);
        check((double)(uint64_t)(next64() >> (next64() % 64)));
    }
    for (int d = -30; d <= 30; d++)
        for (int s = 1; s < 1000; s++) {
            double v = s * pow(10, d) + 0.5 * pow(10, d - 16);
            check(v);
            check(nextafter(v, INFINITY));
        }
    finish();
}

/* The layout: fixed between 1e-6 and 1e21, an exponent with its sign outside,
 * -0 as 0, no trailing ".0". */
static void test_layout(void)
{
    static const struct { double v; const char *text; } cases[] = {
        {0.0, "0"}, {-0.0, "0"}, {1.0, "1"}, {-2.5, "-2.5"}, {0.1, "0.1"}, {1e-6, "0.000001"},
        {1e-7, "1e-7"}, {1.5e-7, "1.5e-7"}, {1e20, "100000000000000000000"}, {1e21, "1e+21"},
        {12345678.0, "12345678"}, {0.30000000000000004, "0.30000000000000004"},
        {5e-324, "5e-324"}, {1.7976931348623157e308, "1.7976931348623157e+308"},
    };
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        char b[LS_NUM_MAX];
        ls_num_shortest(b, cases[i].v);
        if (strcmp(b, cases[i].text) != 0)
            printf("\n  %a: '%s', expected '%s'", cases[i].v, b, cases[i].text);
        CU_ASSERT_STRING_EQUAL(b, cases[i].text);
    }
}

/* ls_fmt_num: null when not finite; short buffers cut as snprintf cuts;
 * ls_fmt_csv: empty when not finite. */
static void test_fmt_num(void)
{
    const double v[] = {0.94060638961510035, -1.3322676295501878e-16, 12345, -0.0, NAN, INFINITY};
    for (size_t i = 0; i < sizeof v / sizeof *v; i++) {
        char full[LS_NUM_MAX];
        if (isfinite(v[i]))
            ls_num_shortest(full, v[i]);
        else
            strcpy(full, "null");
        for (size_t n = 1; n < 40; n++) {
            char want[64], got[64];
            memset(want, 'x', sizeof want);
            memset(got, 'x', sizeof got);
            snprintf(want, n, "%s", full);
            ls_fmt_num(got, n, v[i]);
            CU_ASSERT(memcmp(want, got, sizeof want) == 0);
        }
        char c[LS_NUM_MAX];
        CU_ASSERT_STRING_EQUAL(ls_fmt_csv(c, sizeof c, v[i]), isfinite(v[i]) ? full : "");
    }
}

static int setup(void)
{
    return regcomp(&json_number, "^-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][+-]?[0-9]+)?$", REG_EXTENDED | REG_NOSUB);
}

static int teardown(void)
{
    regfree(&json_number);
    return 0;
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"random bit patterns", test_random_bits},
        {"report-like values and range ends", test_report_like},
        {"exact ties and integers", test_ties},
        {"layout", test_layout},
        {"null, empty and short buffers", test_fmt_num},
    };
    return ls_cu_run("numfmt: shortest exact numbers", setup, teardown, cases, LS_CU_COUNT(cases));
}
