/* test_fmt.c — ls_fmt_eng against the original engineering-notation algorithm.
 *
 * The reference, old_fmt_eng below, is the implementation ls_fmt_eng replaced,
 * kept here unchanged: the decade from libm's log10, the scales from pow(10, k),
 * the digits from round(), and the mantissa written by the C library's printf
 * ("%.*f", "%.*e").  ls_fmt_eng must write the very same bytes for every input:
 * random doubles of every magnitude and sign, every digit count from
 * 1 to 17 (and past it, and below 1), every unit, both character sets, short
 * buffers, and the edge cases where rounding carries into the next decade or
 * prefix.  A few hundred thousand random inputs: enough to reach every branch,
 * a second or so of the suite. */
#include "base/fmt.h"
#include "base/numfmt.h"

#include "../../cu_run.h"
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- the reference: the original algorithm, unchanged ---------------------------------- */

static const char *old_prefix_for(int exp3, bool ascii)
{
    static const char *const pre[] = {"f", "p", "n", "u", "m", "", "k", "M", "G", "T"};
    int i = exp3 / 3 + 5;
    if (i < 0 || i > 9)
        return NULL;
    if (i == 3 && !ascii)
        return "\xC2\xB5"; /* µ */
    return pre[i];
}

static const char *old_unit_text(const char *unit, bool ascii)
{
    if (ascii && strcmp(unit, "\xCE\xA9") == 0)
        return "ohm";
    return unit;
}

static char *old_fmt_eng(char *buf, size_t n, double v, const char *unit, int sig, bool ascii)
{
    const char *u = old_unit_text(unit ? unit : "", ascii);
    const char *sep = u[0] ? " " : "";
    if (isnan(v)) {
        snprintf(buf, n, "undefined");
        return buf;
    }
    if (isinf(v)) {
        snprintf(buf, n, "%sunbounded", v < 0 ? "-" : "");
        return buf;
    }
    if (sig < 1)
        sig = 1;
    if (v == 0) {
        snprintf(buf, n, "0%s%s", sep, u);
        return buf;
    }
    double a = fabs(v);
    int e = (int)floor(log10(a));
    /* Round first so 999.95 becomes 1.000 k, not 1000 (one more digit). */
    double scale = pow(10.0, sig - 1 - e);
    double r = round(a * scale) / scale;
    if (r > 0)
        e = (int)floor(log10(r));
    int e3 = (int)(floor(e / 3.0) * 3);
    const char *p = old_prefix_for(e3, ascii);
    if (!p) {
        snprintf(buf, n, "%.*e%s%s", sig - 1, v, sep, u);
        return buf;
    }
    double m = r / pow(10.0, e3);
    int decimals = sig - 1 - (e - e3);
    if (decimals < 0)
        decimals = 0;
    snprintf(buf, n, "%s%.*f%s%s%s", v < 0 ? "-" : "", decimals, m, sep, p, u);
    return buf;
}

/* ---- the comparison ------------------------------------------------------------------------- */

/* splitmix64: a fixed seed, so a failure repeats */
static uint64_t seed = 0x656e67666d743031ULL;
static uint64_t next64(void)
{
    uint64_t z = (seed += 0x9E3779B97F4A7C15ULL);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

static const char *const units[] = {"", "V", "A", "W", "\xCE\xA9", "F", "degC", NULL};
#define NUNITS (sizeof units / sizeof *units)

static long checked, mismatched;

static void check_n(double v, const char *unit, int sig, bool ascii, size_t n)
{
    char want[160], got[160];
    memset(want, '#', sizeof want);
    memset(got, '#', sizeof got);
    old_fmt_eng(want, n, v, unit, sig, ascii);
    char *r = ls_fmt_eng(got, n, v, unit, sig, ascii);
    checked++;
    if ((memcmp(want, got, sizeof want) != 0 || r != got) && mismatched++ < 10)
        printf("\n  %a (%.17g) sig %d unit '%s' ascii %d n %zu: reference '%.*s', ls_fmt_eng '%.*s'", v, v,
               sig, unit ? unit : "(null)", ascii, n, (int)(n ? n : 1), want, (int)(n ? n : 1), got);
}

static void check(double v, const char *unit, int sig, bool ascii)
{
    check_n(v, unit, sig, ascii, 64);
}

/* every digit count, unit and character set for one value */
static void check_all(double v)
{
    for (int sig = 1; sig <= 17; sig++)
        for (size_t u = 0; u < NUNITS; u++) {
            check(v, units[u], sig, false);
            check(v, units[u], sig, true);
        }
}

static void check_around(double v)
{
    check_all(v);
    check_all(-v);
    check_all(nextafter(v, INFINITY));
    check_all(nextafter(v, 0));
}

static void start(void)
{
    checked = mismatched = 0;
}

static void finish(void)
{
    if (mismatched)
        printf("\n  %ld of %ld differ from the reference", mismatched, checked);
    CU_ASSERT_EQUAL(mismatched, 0);
}

static double from_bits(uint64_t u)
{
    double v;
    memcpy(&v, &u, sizeof v);
    return v;
}

static int rand_sig(void)
{
    return 1 + (int)(next64() % 17);
}

/* Random doubles over the magnitudes that get a prefix (log-uniform over
 * 1e-20..1e20), with random digit counts, units and character sets. */
static void test_random_prefixed(void)
{
    start();
    for (long i = 0; i < 200000; i++) {
        double u = (double)(next64() >> 11) * 0x1p-53;
        double v = pow(10, -20 + 40 * u);
        if (next64() & 1)
            v = -v;
        check(v, units[next64() % NUNITS], rand_sig(), next64() & 1);
    }
    finish();
}

/* Values rounded to a few digits, as a circuit's parts often are (4.7 k,
 * 12.5 m): the digits of the text then sit near a rounding boundary. */
static void test_random_short(void)
{
    start();
    for (long i = 0; i < 100000; i++) {
        double mant = (double)(next64() % 100000) / 1000; /* 0.000 .. 99.999 */
        int k = (int)(next64() % 36) - 18;
        double v = mant * pow(10, k);
        check(next64() & 1 ? v : -v, units[next64() % NUNITS], rand_sig(), next64() & 1);
        double w = (double)(next64() % 20000 + 1) / 2 * pow(10, k); /* halves: x.5 */
        check(w, units[next64() % NUNITS], rand_sig(), next64() & 1);
    }
    finish();
}

/* Uniformly random bit patterns: every exponent, subnormals, NaN, infinities. */
static void test_random_bits(void)
{
    start();
    for (long i = 0; i < 100000; i++)
        check(from_bits(next64()), units[next64() % NUNITS], rand_sig(), next64() & 1);
    finish();
}

/* Rounding that carries into the next decade or prefix, powers of ten and their
 * neighbours, the range ends, subnormals, zeros, infinities and NaN. */
static void test_edges(void)
{
    start();
    static const double edge[] = {999.95, 999.949999999, 999.5, 999.4999, 0.0009999, 0.00099995, 0.00099994999,
                                  9.9995, 99.995, 9999.5, 999950, 999999.5, 0.99995, 1.0005, 4.7e3, 12.3e-3,
                                  2.5, 0.125, 1.0625e3, 1e-15, 999.9999e-18, 1e15, 999.9999e12, 1e-18, 1e18,
                                  1e-20, 1e20, DBL_MIN, DBL_MAX, DBL_TRUE_MIN, 5e-324, 1e-310, 1e308};
    for (size_t i = 0; i < sizeof edge / sizeof *edge; i++)
        check_around(edge[i]);
    for (int k = -30; k <= 30; k++) {
        char s[16];
        snprintf(s, sizeof s, "1e%d", k);
        double t = strtod(s, NULL);
        check_around(t);
        check_around(t * 0.9995); /* 999.5 of the decade below */
        check_around(t * 0.99995);
        check_around(t * 999.95);
        check_around(t * 1.5);
    }
    const double special[] = {0.0, -0.0, INFINITY, -INFINITY, NAN, -NAN};
    for (size_t i = 0; i < sizeof special / sizeof *special; i++)
        check_all(special[i]);
    finish();
}

/* Digit counts beyond 1..17, and buffers too short for the text. */
static void test_sig_and_cut(void)
{
    start();
    const double v[] = {4.7e3, -12.345678e-6, 999.95, 1e-17, 3.3e20, 0.0, NAN, -INFINITY};
    for (size_t i = 0; i < sizeof v / sizeof *v; i++) {
        for (int sig = -3; sig <= 30; sig++)
            for (size_t u = 0; u < NUNITS; u++)
                check(v[i], units[u], sig, u & 1);
        for (size_t n = 0; n < 24; n++)
            for (size_t u = 0; u < NUNITS; u++)
                check_n(v[i], units[u], 4, !(u & 1), n);
        char long_unit[300]; /* longer than ls_fmt_eng's own block */
        memset(long_unit, 'V', sizeof long_unit - 1);
        long_unit[sizeof long_unit - 1] = '\0';
        for (size_t n = 0; n < 160; n += 17)
            check_n(v[i], long_unit, 4, false, n);
    }
    finish();
}

/* ---- ls_num_fixed against the C library's printf "%.*f" ------------------------------------- */

/* Is x exactly half way between two numbers of d decimals?  (Its exact
 * decimal expansion, printed by printf, is a 5 after the d-th decimal and
 * zeros after that.) */
static bool is_tie(double x, int d)
{
    char e[400];
    snprintf(e, sizeof e, "%.200f", x);
    const char *p = strchr(e, '.') + 1 + d;
    if (*p++ != '5')
        return false;
    while (*p == '0')
        p++;
    return *p == '\0';
}

static void check_fixed(double x, int d)
{
    char want[400], got[64];
    if (is_tie(x, d))
        return;
    snprintf(want, sizeof want, "%.*f", d, x); /* the reference: glibc's printf */
    int n = ls_num_fixed(got, x, d);
    checked++;
    got[n > 0 ? n : 0] = '\0';
    if ((n == 0 || strcmp(want, got) != 0) && mismatched++ < 10)
        printf("\n  %a with %d decimals: printf '%s', ls_num_fixed '%s'", x, d, want, got);
}

/* Random values of the mantissa's range with every decimal count ls_fmt_eng
 * asks for.  An exact tie (x = (2j + 1) / 2^s with d = s - 1) is the one
 * documented difference: the library rounds it away from zero, printf to
 * even; ls_fmt_eng never hands it one (see fmt.c). */
static void test_fixed(void)
{
    start();
    for (long i = 0; i < 100000; i++) {
        double u = (double)(next64() >> 11) * 0x1p-53;
        check_fixed(1000 * u, (int)(next64() % 17));
        check_fixed(ldexp(u, (int)(next64() % 40) - 10), (int)(next64() % 19));
    }
    for (int d = 0; d <= 18; d++)
        for (double x = 0.5; x < 1e4; x = x * 1.7 + 0.1)
            check_fixed(x, d);
    finish();
    char b[64];
    int n = ls_num_fixed(b, 0.125, 2); /* a tie: 0.13 here, 0.12 from printf */
    CU_ASSERT(n == 4 && memcmp(b, "0.13", 4) == 0);
    CU_ASSERT(ls_num_fixed(b, -1, 2) == 0);
    CU_ASSERT(ls_num_fixed(b, 1e22, 2) == 0);
}

/* Worked examples of the notation, written out by hand: 4 significant digits,
 * the SI prefixes of the BIPM's SI brochure, rounding that carries to the next
 * prefix. */
static void test_examples(void)
{
    static const struct { double v; const char *unit; bool ascii; const char *text; } ex[] = {
        {4700, "\xCE\xA9", false, "4.700 k\xCE\xA9"}, {4700, "\xCE\xA9", true, "4.700 kohm"},
        {-0.0123, "V", false, "-12.30 mV"}, {0, "V", false, "0 V"}, {999.96, "V", false, "1.000 kV"},
        {2.2e-6, "A", false, "2.200 \xC2\xB5" "A"}, {2.2e-6, "A", true, "2.200 uA"},
        {1.5e13, "W", false, "15.00 TW"}, {INFINITY, "V", false, "unbounded"}, {NAN, "V", false, "undefined"},
    };
    for (size_t i = 0; i < sizeof ex / sizeof *ex; i++) {
        char b[64];
        ls_fmt_eng(b, sizeof b, ex[i].v, ex[i].unit, 4, ex[i].ascii);
        if (strcmp(b, ex[i].text) != 0)
            printf("\n  %g: '%s', expected '%s'", ex[i].v, b, ex[i].text);
        CU_ASSERT_STRING_EQUAL(b, ex[i].text);
    }
}

int main(void)
{
    static const ls_cu_case cases[] = {
        {"random prefixed magnitudes", test_random_prefixed},
        {"random short values and halves", test_random_short},
        {"random bit patterns", test_random_bits},
        {"carries, powers of ten, range ends", test_edges},
        {"digit counts and short buffers", test_sig_and_cut},
        {"fixed decimals against printf", test_fixed},
        {"worked examples", test_examples},
    };
    return ls_cu_run("fmt: engineering notation as the original algorithm writes it", NULL, NULL, cases, LS_CU_COUNT(cases));
}
